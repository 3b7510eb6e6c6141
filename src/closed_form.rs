//! What every closed form shares: the expected level ([`ExpectedLevel`]), the energy scales and
//! the cancellation-free helpers. The formulas themselves live with their models in
//! the models module, src/models/ (each model file's `levels`), kept apart from the solver so that they can
//! check it.
//!
//! Every function here evaluates a formula; none of them diagonalizes anything. The conventions
//! are exactly those of the model constructors in src/models/:
//! B is along +z and signed, the carrier charge q carries its sign, s = sign(qB) and
//! l_B = sqrt(hbar/|qB|) (see [`crate::ladder`]); Zeeman-like terms are `+(g/2) mu_B B sigma_z`.
//!
//! # What a level list contains
//! For Landau index 0..=max_n, every branch, sorted by energy. [`ExpectedLevel::multiplicity`]
//! counts the states of ONE orbital centre (one guiding-centre state of the Landau degeneracy)
//! that share the value within the model's components, e.g. 2 for the spin pair of a 3+1 Dirac
//! level with nu >= 1. Copies the model does not represent among its components (its
//! [`crate::model::Model::degeneracy`], e.g. the spin of the 2D Dirac model) are NOT counted.
//! Accidental coincidences between different (n, branch) labels are not merged.
//!
//! # Precision
//! Relativistic energies are returned relative to m c^2 without cancellation:
//! sqrt(m^2c^4 + X) - m c^2 is evaluated as X / (sqrt(m^2c^4 + X) + m c^2)
//! ([`rest_excess`]), so levels stay accurate to a few ulp of hbar omega_c even when
//! hbar omega_c ~ 1e-10 m c^2 (B ~ 1 T for the electron).

use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::units::{hbar_v_mev_nm, Units, HBAR2_OVER_2ME_MEV_NM2};

/// One expected Landau level from a closed form.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ExpectedLevel {
    /// E - reference energy, in the model's energy unit.
    pub energy: f64,
    /// How many states of one orbital centre share this value (spin pairs etc.; not the Landau
    /// degeneracy and not the model's extra [`crate::model::Model::degeneracy`]).
    pub multiplicity: u32,
    /// Landau index of the formula (nu for the 3+1 Dirac models, the pair index for the
    /// two-component models; see each model's `levels`).
    pub n: i64,
    /// Branch or spin label: +1 / -1 for the two branches (or the spin for `pauli`), 0 for an
    /// unpaired level (the n = 0 level of 2D Dirac, Weyl, Rashba, bilayer and BHZ models).
    pub s: i8,
    /// Human-readable label, e.g. `n=2 +` or `nu=0 -`.
    pub label: String,
}

pub(crate) fn lvl(energy: f64, multiplicity: u32, n: usize, s: i8, label: String) -> ExpectedLevel {
    ExpectedLevel {
        energy,
        multiplicity,
        n: n as i64,
        s,
        label,
    }
}

pub(crate) fn sorted(mut v: Vec<ExpectedLevel>) -> Vec<ExpectedLevel> {
    v.sort_by(|a, b| a.energy.total_cmp(&b.energy));
    v
}

pub(crate) fn check_point(point: FieldPoint) -> Result<()> {
    point.validate()
}

pub(crate) fn sign(x: f64) -> f64 {
    if x < 0.0 {
        -1.0
    } else {
        1.0
    }
}

pub(crate) fn sign_label(s: i8) -> &'static str {
    if s < 0 {
        "-"
    } else {
        "+"
    }
}

/// The kinetic excess sqrt(rest^2 + x) - rest, evaluated without cancellation.
///
/// # Formula
/// x / (sqrt(rest^2 + x) + rest); exact up to rounding for every x >= -rest^2 and rest > 0.
///
/// # Examples
/// ```
/// // 2 nu b for nu = 1 at B = 1 T (b = 1/4.414e9, CODATA 2018 B_c): the naive form loses 7 digits.
/// let b = 1.0 / 4.414e9;
/// let e = ladderfan::closed_form::rest_excess(1.0, 2.0 * b);
/// assert!((e / b - (1.0 - b / 2.0)).abs() < 1e-15);
/// ```
pub fn rest_excess(rest: f64, x: f64) -> f64 {
    x / ((rest * rest + x).sqrt() + rest)
}

/// Cyclotron energy hbar omega_c = hbar |qB| / m* in meV (lab units).
///
/// # Formula
/// hbar omega_c = hbar^2 / (m* l_B^2) = 2 (hbar^2 / 2 m_e) / (mass_ratio l_B^2), with
/// l_B = sqrt(hbar/|qB|) from [`Units::magnetic_length`]; 0.115 77 meV/T for the free electron.
///
/// # Examples
/// ```
/// let w = ladderfan::closed_form::cyclotron_energy_mev(1.0, 1.0, -1.0);
/// assert!((w - 0.115_768).abs() < 1e-6);
/// ```
pub fn cyclotron_energy_mev(mass_ratio: f64, field_t: f64, charge: f64) -> f64 {
    let lb = Units::Lab.magnetic_length(field_t, charge);
    2.0 * HBAR2_OVER_2ME_MEV_NM2 / (mass_ratio * lb * lb)
}

/// Dirac energy scale sqrt(2) hbar v / l_B in meV (lab units): the first Landau level of a
/// massless 2D Dirac cone.
///
/// # Formula
/// sqrt(2) hbar v / l_B = sqrt(2 hbar |qB|) v; 36.3 meV at 1 T for v = 1e6 m/s (common practice value).
///
/// # Examples
/// ```
/// let e1 = ladderfan::closed_form::dirac_energy_mev(1.0e6, 1.0, -1.0);
/// assert!((e1 - 36.28).abs() < 0.01);
/// ```
pub fn dirac_energy_mev(velocity_m_per_s: f64, field_t: f64, charge: f64) -> f64 {
    let lb = Units::Lab.magnetic_length(field_t, charge);
    std::f64::consts::SQRT_2 * hbar_v_mev_nm(velocity_m_per_s) / lb
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::{ELECTRON_CRITICAL_FIELD_T, ELECTRON_REST_ENERGY_MEV};

    #[test]
    fn graphene_like_first_level_is_36_3_mev_sqrt_tesla() {
        // Common practice: E_1 = sqrt(2 hbar e B) v = 36.3 meV sqrt(B/T) at v = 1e6 m/s.
        for b in [1.0, 4.0, 9.0] {
            let e1 = dirac_energy_mev(1.0e6, b, -1.0);
            assert!((e1 / f64::sqrt(b) - 36.3).abs() < 0.05, "{e1}");
        }
    }

    #[test]
    fn electron_cyclotron_energy_per_tesla_codata() {
        // CODATA 2018: hbar e / m_e = 2 mu_B = 0.115 768 meV/T, i.e. 0.1158 meV/T.
        let w = cyclotron_energy_mev(1.0, 1.0, -1.0);
        assert!((w - 0.1158).abs() < 5e-5, "{w}");
        assert!((w - 2.0 * 5.788_381_806_0e-2).abs() < 1e-10, "{w}");
    }

    #[test]
    fn critical_field_codata() {
        // CODATA 2018: B_c = m_e^2 c^2 / (e hbar) = 4.414 005e9 T.
        assert!((ELECTRON_CRITICAL_FIELD_T / 4.414e9 - 1.0).abs() < 1e-4);
        // and the natural-unit cyclotron energy at b = 1 is m c^2: hbar e B_c / m_e = m_e c^2
        let w = cyclotron_energy_mev(1.0, ELECTRON_CRITICAL_FIELD_T, -1.0);
        assert!((w / ELECTRON_REST_ENERGY_MEV - 1.0).abs() < 1e-12);
    }
}
