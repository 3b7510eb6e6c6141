//! The effective-mass (Schrodinger) model, one component, and its Landau levels (Landau 1930).

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, cyclotron_energy_mev, lvl, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::identity;
use crate::model::{Model, Monomial};
use crate::units::{Units, HBAR2_OVER_2ME_MEV_NM2};

/// Parameters of the effective-mass (Schrodinger) model, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MassParams {
    /// Effective mass in units of the free electron mass (> 0).
    pub mass_ratio: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for MassParams {
    fn default() -> Self {
        MassParams {
            mass_ratio: 1.0,
            charge: -1.0,
        }
    }
}

/// Schrodinger (effective-mass) model, one component:
/// H = hbar^2 (kx^2 + ky^2 + kz^2) / (2 m*).
///
/// Levels: hbar omega_c (n + 1/2) + hbar^2 kz^2/(2 m*), omega_c = |qB|/m* (Landau 1930;
/// [`levels`]).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass.
pub fn schrodinger(p: MassParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let one = identity(1);
    Origin::Schrodinger(p)
        .builder(1)
        .term("hbar^2 kx^2/2m", c, one.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, one.clone(), Monomial::new(0, 2, 0))
        .term("hbar^2 kz^2/2m", c, one, Monomial::new(0, 0, 2))
        .degeneracy(2)
        .build()
}

/// Schrodinger (effective-mass) levels (Landau 1930):
/// E = hbar omega_c (n + 1/2) + hbar^2 kz^2 / (2 m*), omega_c = |qB| / m*.
///
/// Quantum numbers: n >= 0; `s` = 0. Multiplicity 1 (the model's spin copy is its
/// [`crate::model::Model::degeneracy`], not counted). Energies relative to 0, in meV.
///
/// # Errors
/// [`crate::Error::ZeroField`] for a zero or non-finite field, [`crate::Error::BadNumber`] for a
/// non-finite kz.
///
/// # References
/// L. Landau, Z. Phys. 64, 629 (1930) (journal details from memory).
pub fn levels(p: MassParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let ez = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio * point.kz * point.kz;
    Ok((0..=max_n)
        .map(|n| lvl(w * (n as f64 + 0.5) + ez, 1, n, 0, format!("n={n}")))
        .collect())
}

/// The `schrodinger` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Schrodinger;

static INFO: ModelInfo = ModelInfo {
    name: "schrodinger",
    summary: "one component, H = hbar^2 k^2 / (2 m*)",
    units: Units::Lab,
    source: "L. Landau, Z. Phys. 64, 629 (1930) (journal details from memory)",
    params: &[
        ParamDoc {
            name: "mass_ratio",
            unit: "m_e",
            meaning: "effective mass m*/m_e",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Schrodinger {
    type Params = MassParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &MassParams) -> Result<Model> {
        schrodinger(*p)
    }
    fn closed_form(
        p: &MassParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_are_half_odd_multiples_of_the_cyclotron_energy() {
        // Landau 1930: E_n = hbar omega_c (n + 1/2); hbar omega_c = 0.1158 meV/T (CODATA 2018)
        let w = cyclotron_energy_mev(1.0, 2.0, -1.0);
        let l = levels(MassParams::default(), FieldPoint::field(2.0), 3).unwrap_or_default();
        assert!((l[3].energy - 3.5 * w).abs() < 1e-12);
        assert!((w - 2.0 * 0.1158).abs() < 1e-4);
    }
}
