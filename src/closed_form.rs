//! Published closed-form Landau-level energies, kept apart from the solver so that they can
//! check it.
//!
//! Every function here evaluates a formula; none of them diagonalizes anything. The conventions
//! are exactly those of the model constructors in [`crate::builtin`] and [`crate::catalogue`]:
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

use crate::builtin::{
    bohr_magneton, Dirac2dParams, MassParams, PauliParams, RelativisticParams, WeylParams,
};
use crate::catalogue::{BhzParams, BilayerParams, DiracAmmParams, RashbaParams, TiltedDiracParams};
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::model::Model;
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
    /// two-component models; see each function).
    pub n: i64,
    /// Branch or spin label: +1 / -1 for the two branches (or the spin for `pauli`), 0 for an
    /// unpaired level (the n = 0 level of 2D Dirac, Weyl, Rashba, bilayer and BHZ models).
    pub s: i8,
    /// Human-readable label, e.g. `n=2 +` or `nu=0 -`.
    pub label: String,
}

fn lvl(energy: f64, multiplicity: u32, n: usize, s: i8, label: String) -> ExpectedLevel {
    ExpectedLevel {
        energy,
        multiplicity,
        n: n as i64,
        s,
        label,
    }
}

fn sorted(mut v: Vec<ExpectedLevel>) -> Vec<ExpectedLevel> {
    v.sort_by(|a, b| a.energy.total_cmp(&b.energy));
    v
}

fn check_point(point: FieldPoint) -> Result<()> {
    point.validate()
}

fn sign(x: f64) -> f64 {
    if x < 0.0 {
        -1.0
    } else {
        1.0
    }
}

fn sign_label(s: i8) -> &'static str {
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

/// Expected levels of `model` at `point`, relative to `reference_energy`, for Landau indices
/// 0..=max_n, sorted by energy.
///
/// Dispatches on [`Model::name`] and reads [`Model::params`] and [`Model::charge`], so it works
/// for the constructors of [`crate::builtin`] and [`crate::catalogue`] and for models rebuilt
/// from their names and parameters. It trusts the name: a model that reuses a name with other
/// terms gets the formula of the name.
///
/// Returns `None` for an unknown name, a missing or invalid parameter, a unit system other than
/// the constructor's, or a zero or non-finite field.
///
/// Known names: `schrodinger`, `pauli`, `dirac`, `klein-gordon`, `dirac2d`, `weyl`,
/// `dirac-amm`, `tilted-dirac2d`, `rashba`, `bilayer`, `bhz`.
///
/// # Examples
/// ```
/// use ladderfan::{builtin, closed_form, FieldPoint};
/// let m = builtin::dirac2d(builtin::Dirac2dParams::default())?;
/// let levels = closed_form::for_model(&m, FieldPoint::field(1.0), 0.0, 2).unwrap();
/// // massless: 0, ±36.3, ±51.3 meV at 1 T (common practice values for v = 1e6 m/s)
/// assert_eq!(levels.len(), 5);
/// assert!((levels[4].energy - 36.28 * 2f64.sqrt()).abs() < 0.02);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn for_model(
    model: &Model,
    point: FieldPoint,
    reference_energy: f64,
    max_n: usize,
) -> Option<Vec<ExpectedLevel>> {
    let p = |k: &str| model.param(k);
    let q = model.charge();
    let units = model.units();
    let need = |u: Units| if units == u { Some(()) } else { None };
    let as_sign = |x: f64| -> Option<i8> {
        if x == 1.0 {
            Some(1)
        } else if x == -1.0 {
            Some(-1)
        } else {
            None
        }
    };
    // (levels relative to the constructor's reference, that reference)
    let (levels, own_ref) = match model.name() {
        "schrodinger" => {
            need(Units::Lab)?;
            let params = MassParams {
                mass_ratio: p("mass_ratio")?,
                charge: q,
            };
            (schrodinger(params, point, max_n).ok()?, 0.0)
        }
        "pauli" => {
            need(Units::Lab)?;
            let params = PauliParams {
                mass_ratio: p("mass_ratio")?,
                g_factor: p("g")?,
                charge: q,
            };
            (pauli(params, point, max_n).ok()?, 0.0)
        }
        "dirac" | "klein-gordon" => {
            need(Units::Natural)?;
            let params = RelativisticParams {
                mass: p("mass")?,
                speed: p("speed")?,
                charge: q,
            };
            let mc2 = params.mass * params.speed * params.speed;
            let l = if model.name() == "dirac" {
                dirac(params, point, max_n)
            } else {
                klein_gordon(params, point, max_n)
            };
            (l.ok()?, mc2)
        }
        "dirac2d" => {
            need(Units::Lab)?;
            let params = Dirac2dParams {
                velocity_m_per_s: p("velocity")?,
                mass_mev: p("mass")?,
                valley: as_sign(p("valley")?)?,
                charge: q,
            };
            (dirac2d(params, point, max_n).ok()?, 0.0)
        }
        "weyl" => {
            need(Units::Lab)?;
            let params = WeylParams {
                velocity_m_per_s: p("velocity")?,
                chirality: as_sign(p("chirality")?)?,
                charge: q,
            };
            (weyl(params, point, max_n).ok()?, 0.0)
        }
        "dirac-amm" => {
            need(Units::Natural)?;
            let params = DiracAmmParams {
                mass: p("mass")?,
                speed: p("speed")?,
                anomaly_kappa: p("kappa")?,
                charge: q,
            };
            let mc2 = params.mass * params.speed * params.speed;
            (dirac_amm(params, point, max_n).ok()?, mc2)
        }
        "tilted-dirac2d" => {
            need(Units::Lab)?;
            let params = TiltedDiracParams {
                velocity_m_per_s: p("velocity")?,
                tilt_velocity_m_per_s: p("tilt_velocity")?,
                valley: as_sign(p("valley")?)?,
                charge: q,
            };
            (tilted_dirac2d(params, point, max_n).ok()?, 0.0)
        }
        "rashba" => {
            need(Units::Lab)?;
            let params = RashbaParams {
                mass_ratio: p("mass_ratio")?,
                rashba_mev_nm: p("alpha")?,
                g_factor: p("g")?,
                charge: q,
            };
            (rashba(params, point, max_n).ok()?, 0.0)
        }
        "bilayer" => {
            need(Units::Lab)?;
            let params = BilayerParams {
                mass_ratio: p("mass_ratio")?,
                valley: as_sign(p("valley")?)?,
                charge: q,
            };
            (bilayer(params, point, max_n).ok()?, 0.0)
        }
        "bhz" => {
            need(Units::Lab)?;
            let params = BhzParams {
                a_mev_nm: p("A")?,
                b_mev_nm2: p("B")?,
                c_mev: p("C")?,
                d_mev_nm2: p("D")?,
                m_mev: p("M")?,
                g_e: p("g_E")?,
                g_h: p("g_H")?,
                charge: q,
            };
            (bhz(params, point, max_n).ok()?, 0.0)
        }
        _ => return None,
    };
    let shift = own_ref - reference_energy;
    if !shift.is_finite() {
        return None;
    }
    Some(
        levels
            .into_iter()
            .map(|mut l| {
                l.energy += shift;
                l
            })
            .collect(),
    )
}

/// Schrodinger (effective-mass) levels (Landau 1930):
/// E = hbar omega_c (n + 1/2) + hbar^2 kz^2 / (2 m*), omega_c = |qB| / m*.
///
/// Quantum numbers: n >= 0; `s` = 0. Multiplicity 1 (the model's spin copy is its
/// [`crate::model::Model::degeneracy`], not counted). Energies relative to 0, in meV.
///
/// # Errors
/// [`Error::ZeroField`] for a zero or non-finite field, [`Error::BadNumber`] for a non-finite kz.
///
/// # References
/// L. Landau, Z. Phys. 64, 629 (1930) (journal details from memory).
pub fn schrodinger(p: MassParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let ez = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio * point.kz * point.kz;
    Ok((0..=max_n)
        .map(|n| lvl(w * (n as f64 + 0.5) + ez, 1, n, 0, format!("n={n}")))
        .collect())
}

/// Pauli levels: E = hbar omega_c (n + 1/2) + s (g/2) mu_B B + hbar^2 kz^2/(2 m*), s = ±1 the
/// spin along +z (component `up` is s = +1), B signed.
///
/// Quantum numbers: n >= 0, `s` = spin. Multiplicity 1 each; when g m*/m_e = 2 the levels
/// (n, s) and (n + 1, -s) coincide exactly and are listed separately.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// W. Pauli, Z. Phys. 43, 601 (1927) (spin term with g; journal details from memory); Landau
/// 1930 for the orbital part.
pub fn pauli(p: PauliParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let ez = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio * point.kz * point.kz;
    let z = 0.5 * p.g_factor * bohr_magneton(Units::Lab) * point.field;
    let mut v = Vec::new();
    for n in 0..=max_n {
        for s in [1i8, -1] {
            let e = w * (n as f64 + 0.5) + s as f64 * z + ez;
            let name = if s > 0 { "up" } else { "down" };
            v.push(lvl(e, 1, n, s, format!("n={n} {name}")));
        }
    }
    Ok(sorted(v))
}

/// 3+1 Dirac levels (Rabi 1928; Johnson & Lippmann 1949), natural units:
/// E = ± sqrt(m^2c^4 + c^2 hbar^2 kz^2 + 2 nu hbar c^2 |qB|), nu = 0, 1, 2, ...
///
/// Quantum numbers: nu = n + 1/2 + s_z sign(qB)/2 (`n` holds nu), `s` = branch ±1.
/// Multiplicity: nu = 0 once per branch (the spin is fixed by sign(qB)), nu >= 1 twice (spin).
/// Energies relative to m c^2 (the constructor's reference): the positive branch as
/// X / (sqrt(m^2c^4 + X) + m c^2) with X = c^2 (kz^2 + 2 nu |qb|) (hbar = 1), the negative branch
/// as -(sqrt(m^2c^4 + X) + m c^2).
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// I. I. Rabi, Z. Phys. 49, 507 (1928) (journal details from memory); M. H. Johnson &
/// B. A. Lippmann, Phys. Rev. 76, 828 (1949).
pub fn dirac(p: RelativisticParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c2 = p.speed * p.speed;
    let qb = (p.charge * point.field).abs();
    let mut v = Vec::new();
    for nu in 0..=max_n {
        let x = c2 * (point.kz * point.kz + 2.0 * nu as f64 * qb);
        let mult = if nu == 0 { 1 } else { 2 };
        let up = rest_excess(mc2, x);
        let down = -((mc2 * mc2 + x).sqrt() + mc2);
        v.push(lvl(up, mult, nu, 1, format!("nu={nu} +")));
        v.push(lvl(down, mult, nu, -1, format!("nu={nu} -")));
    }
    Ok(sorted(v))
}

/// Klein-Gordon levels, natural units, both branches:
/// E = ± sqrt(m^2c^4 + c^2 hbar^2 kz^2 + (2n + 1) hbar c^2 |qB|), n >= 0.
///
/// Quantum numbers: n, `s` = branch ±1; multiplicity 1. Relative to m c^2, cancellation-free as
/// in [`dirac`].
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// Landau quantization of the Klein-Gordon equation: the spinless analogue of Rabi 1928
/// (common practice).
pub fn klein_gordon(
    p: RelativisticParams,
    point: FieldPoint,
    max_n: usize,
) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c2 = p.speed * p.speed;
    let qb = (p.charge * point.field).abs();
    let mut v = Vec::new();
    for n in 0..=max_n {
        let x = c2 * (point.kz * point.kz + (2.0 * n as f64 + 1.0) * qb);
        v.push(lvl(rest_excess(mc2, x), 1, n, 1, format!("n={n} +")));
        v.push(lvl(
            -((mc2 * mc2 + x).sqrt() + mc2),
            1,
            n,
            -1,
            format!("n={n} -"),
        ));
    }
    Ok(sorted(v))
}

/// 2D massive Dirac levels, H = hbar v (tau kx sigma_x + ky sigma_y) + Delta sigma_z:
/// n >= 1: E = ± sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2); n = 0: E_0 = tau sign(qB) Delta, once.
///
/// Quantum numbers: n, `s` = ±1 (n >= 1), `s` = 0 for the unpaired n = 0 level (it lives on
/// component A when tau sign(qB) = +1, on B otherwise). Multiplicity 1. Valid for both signs of
/// qB. Energies in meV relative to 0.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// J. W. McClure, Phys. Rev. 104, 666 (1956) (massless case); the massive n = 0 level follows
/// from the same ladder algebra (common practice).
pub fn dirac2d(p: Dirac2dParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let e1 = dirac_energy_mev(p.velocity_m_per_s, point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let mut v = vec![lvl(
        p.valley as f64 * s_qb * p.mass_mev,
        1,
        0,
        0,
        "n=0".into(),
    )];
    for n in 1..=max_n {
        let e = (p.mass_mev * p.mass_mev + n as f64 * e1 * e1).sqrt();
        v.push(lvl(e, 1, n, 1, format!("n={n} +")));
        v.push(lvl(-e, 1, n, -1, format!("n={n} -")));
    }
    Ok(sorted(v))
}

/// 3D Weyl node levels, H = chi hbar v k . sigma:
/// n >= 1: E = ± hbar v sqrt(kz^2 + 2n / l_B^2); chiral n = 0 level E_0 = chi sign(qB) hbar v kz.
///
/// Quantum numbers: n, `s` = ±1 (n >= 1), 0 for the chiral level. Multiplicity 1. meV.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// H. B. Nielsen & M. Ninomiya, Phys. Lett. B 130, 389 (1983) (chiral level).
pub fn weyl(p: WeylParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let hv = hbar_v_mev_nm(p.velocity_m_per_s);
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let mut v = vec![lvl(
        p.chirality as f64 * s_qb * hv * point.kz,
        1,
        0,
        0,
        "n=0 chiral".into(),
    )];
    for n in 1..=max_n {
        let e = hv * (point.kz * point.kz + 2.0 * n as f64 / (lb * lb)).sqrt();
        v.push(lvl(e, 1, n, 1, format!("n={n} +")));
        v.push(lvl(-e, 1, n, -1, format!("n={n} -")));
    }
    Ok(sorted(v))
}

/// 3+1 Dirac levels with an anomalous magnetic moment (Pauli term), natural units.
///
/// Hamiltonian (see [`crate::catalogue::dirac_amm`]): H = c alpha . pi + beta m c^2 +
/// mu' B beta Sigma_z, mu' = kappa mu_B (kappa/2 in natural units), B signed.
///
/// # Formula (derived here; form of Ternov, Bagrov & Zhukovskii 1966)
/// nu >= 1, zeta = ±1:  E = ± sqrt(c^2 hbar^2 kz^2 + (sqrt(m^2c^4 + 2 nu hbar c^2 |qB|) + zeta mu' B)^2);
/// nu = 0 (one state per branch): E = ± sqrt(c^2 hbar^2 kz^2 + (m c^2 + sign(qB) mu' B)^2).
///
/// Derivation: in the sector (u_up |nu>, u_down |nu-1>, l_up |nu>, l_down |nu-1>) (qB > 0;
/// spins swapped for qB < 0) H_perp = [[M, P], [P, -M]] with M = diag(m + mu'B, m - mu'B) and
/// P = sqrt(2 nu |qB|) c sigma_x; its eigenvalues are ±sqrt(m^2 + 2 nu c^2|qB|) ± mu'B. alpha_z
/// anticommutes with H_perp (also with beta Sigma_z), so H^2 = H_perp^2 + c^2 kz^2 on each
/// pair and the kz dependence is as written. At nu = 0 only the spin with s_z = sign(qB)
/// exists and M = m + sign(qB) mu' B. Sign convention: with kappa > 0 and q = -1 the
/// non-relativistic limit is g = 2 (1 + kappa) in the `+(g/2) mu_B B sigma_z` convention, and
/// the nu = 0 level of an electron moves DOWN by kappa mu_B |B|.
///
/// Quantum numbers: `n` = nu, `s` = branch ±1, zeta in the label. Multiplicity 1 (the two
/// zeta levels split). Relative to m c^2 without cancellation:
/// E_+ - m c^2 = (c^2 kz^2 + delta (2 m c^2 + delta)) / (sqrt(c^2 kz^2 + (m c^2 + delta)^2) + m c^2),
/// delta = rest_excess(m c^2, 2 nu c^2 |qb|) + zeta mu' B.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// I. M. Ternov, V. G. Bagrov & V. Ch. Zhukovskii (1966) (journal and volume from memory, not
/// confirmed); the formula above is re-derived here and checked against exact diagonalization
/// in tests/closed_forms.rs.
pub fn dirac_amm(p: DiracAmmParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c2 = p.speed * p.speed;
    let qb = (p.charge * point.field).abs();
    let s_qb = sign(p.charge * point.field);
    let mu_b = p.anomaly_kappa * bohr_magneton(Units::Natural) * point.field;
    let k2 = c2 * point.kz * point.kz;
    let mut v = Vec::new();
    let mut push = |nu: usize, delta: f64, zeta: i8| {
        let r = mc2 + delta;
        let root = (k2 + r * r).sqrt();
        let up = (k2 + delta * (2.0 * mc2 + delta)) / (root + mc2);
        let down = -(root + mc2);
        let z = sign_label(zeta);
        v.push(lvl(up, 1, nu, 1, format!("nu={nu} zeta={z} +")));
        v.push(lvl(down, 1, nu, -1, format!("nu={nu} zeta={z} -")));
    };
    push(0, s_qb * mu_b, if s_qb > 0.0 { 1 } else { -1 });
    for nu in 1..=max_n {
        let base = rest_excess(mc2, 2.0 * nu as f64 * c2 * qb);
        push(nu, base + mu_b, 1);
        push(nu, base - mu_b, -1);
    }
    Ok(sorted(v))
}

/// Tilted massless 2D Dirac cone, tilt along x:
/// H = hbar w kx + hbar v (tau kx sigma_x + ky sigma_y), beta = w / v, |beta| < 1.
///
/// # Formula
/// E = ± (1 - beta^2)^(3/4) sqrt(2 n) hbar v / l_B, n >= 1, and one level E = 0 (n = 0).
/// Independent of tau and of the signs of beta and qB.
///
/// Quantum numbers: n, `s` = ±1, 0 for the zero level. Multiplicity 1. meV.
///
/// # Errors
/// As [`schrodinger`]; [`Error::BadNumber`] for |beta| >= 1 (overtilted cone: no Landau levels).
///
/// # References
/// M. O. Goerbig, J.-N. Fuchs, G. Montambaux & F. Piechon, Phys. Rev. B 78, 045415 (2008).
pub fn tilted_dirac2d(
    p: TiltedDiracParams,
    point: FieldPoint,
    max_n: usize,
) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let beta = p.tilt_velocity_m_per_s / p.velocity_m_per_s;
    if beta.is_nan() || beta.abs() >= 1.0 {
        return Err(Error::BadNumber {
            name: "tilt ratio w/v".into(),
            value: beta,
            fix: "the tilt velocity must be smaller in magnitude than the cone velocity".into(),
        });
    }
    let e1 = dirac_energy_mev(p.velocity_m_per_s, point.field, p.charge)
        * (1.0 - beta * beta).powf(0.75);
    let mut v = vec![lvl(0.0, 1, 0, 0, "n=0".into())];
    for n in 1..=max_n {
        let e = e1 * (n as f64).sqrt();
        v.push(lvl(e, 1, n, 1, format!("n={n} +")));
        v.push(lvl(-e, 1, n, -1, format!("n={n} -")));
    }
    Ok(sorted(v))
}

/// Rashba 2DEG with Zeeman term:
/// H = hbar^2 k^2 / 2m* + alpha (ky sigma_x - kx sigma_y) + (g/2) mu_B B sigma_z.
///
/// # Formula (derived with the ladder convention of [`crate::ladder`])
/// With hbar omega_c = hbar |qB|/m*, s = sign(qB) and Z = (g/2) mu_B B (B signed):
/// n >= 1: E = hbar omega_c n ± sqrt((hbar omega_c / 2 + s Z)^2 + 2 n alpha^2 / l_B^2);
/// unpaired lowest level E_0 = hbar omega_c / 2 + s Z (the state up|0> for s = +1, down|0> for
/// s = -1). The pairs are (up|n>, down|n-1>) for s = +1 and (up|n-1>, down|n>) for s = -1.
///
/// Quantum numbers: n, `s` = ±1, 0 for the unpaired level. Multiplicity 1. meV.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// Yu. A. Bychkov & E. I. Rashba, J. Phys. C 17, 6039 (1984) (the Landau levels; from memory,
/// not confirmed); their companion letter, Yu. A. Bychkov & E. I. Rashba, JETP Lett. 39, 78
/// (1984) [Pis'ma Zh. Eksp. Teor. Fiz. 39, 66], is confirmed by a published reference list.
pub fn rashba(p: RashbaParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let z = 0.5 * p.g_factor * bohr_magneton(Units::Lab) * point.field;
    let h = 0.5 * w + s_qb * z;
    let mut v = vec![lvl(h, 1, 0, 0, "n=0".into())];
    let a2 = 2.0 * p.rashba_mev_nm * p.rashba_mev_nm / (lb * lb);
    for n in 1..=max_n {
        let r = (h * h + n as f64 * a2).sqrt();
        let c = w * n as f64;
        v.push(lvl(c + r, 1, n, 1, format!("n={n} +")));
        v.push(lvl(c - r, 1, n, -1, format!("n={n} -")));
    }
    Ok(sorted(v))
}

/// Bilayer (chiral, quadratic) two-band model,
/// H = -(hbar^2 / 2m) [[0, (kx - i tau ky)^2], [(kx + i tau ky)^2, 0]].
///
/// # Formula
/// n >= 2: E = ± hbar omega_c sqrt(n (n - 1)), omega_c = |qB|/m; two zero-energy levels
/// (n = 0 and n = 1) per valley, both on one component.
///
/// Quantum numbers: n, `s` = ±1, 0 for the two zero levels. Multiplicity 1. meV.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// E. McCann & V. I. Fal'ko, Phys. Rev. Lett. 96, 086805 (2006).
pub fn bilayer(p: BilayerParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let mut v = Vec::new();
    for n in 0..=max_n {
        if n < 2 {
            v.push(lvl(0.0, 1, n, 0, format!("n={n} zero")));
        } else {
            let e = w * ((n * (n - 1)) as f64).sqrt();
            v.push(lvl(e, 1, n, 1, format!("n={n} +")));
            v.push(lvl(-e, 1, n, -1, format!("n={n} -")));
        }
    }
    Ok(sorted(v))
}

/// Four-band BHZ model, components (E1 up, H1 up, E1 down, H1 down); see
/// [`crate::catalogue::bhz`] for the Hamiltonian, with Zeeman terms
/// (mu_B B / 2) diag(g_E, g_H, -g_E, -g_H).
///
/// # Formula (derived with the ladder convention of [`crate::ladder`])
/// Let sigma = +1 (up block), -1 (down block), t = sigma sign(qB), and the diagonal energies
/// h_E(n) = C + M - (D + B)(2n + 1)/l_B^2 + sigma g_E mu_B B/2,
/// h_H(n) = C - M - (D - B)(2n + 1)/l_B^2 + sigma g_H mu_B B/2.
/// For t = +1 the pairs are (E|n-1>, H|n>), for t = -1 (E|n>, H|n-1>), n >= 1, and
/// E = (h_E + h_H)/2 ± sqrt(((h_E - h_H)/2)^2 + 2 n A^2 / l_B^2) over each pair.
/// One unpaired level per spin block: h_H(0) for t = +1, h_E(0) for t = -1.
/// Without Zeeman terms and for qB > 0 this is
/// E_up(n) = C - 2 D n / l_B^2 + B / l_B^2 ± sqrt(2 n A^2/l_B^2 + (M - 2 B n / l_B^2 + D / l_B^2)^2),
/// E_up(0) = C - M - (D - B)/l_B^2, E_down(0) = C + M - (D + B)/l_B^2, the form given by
/// Konig et al., J. Phys. Soc. Jpn. 77, 031007 (2008) (authors, title and DOI
/// 10.1143/JPSJ.77.031007 confirmed from the arXiv record 0801.0901; that the form is printed
/// there exactly as above is from memory; the tests check it against exact diagonalization).
///
/// Quantum numbers: n, `s` = ±1 (0 for the unpaired levels), the block in the label.
/// Multiplicity 1. meV.
///
/// # Errors
/// As [`schrodinger`].
///
/// # References
/// B. A. Bernevig, T. L. Hughes & S.-C. Zhang, Science 314, 1757 (2006) (DOI
/// 10.1126/science.1133734, PubMed 17170299); M. Konig, H. Buhmann, L. W. Molenkamp,
/// T. L. Hughes, C.-X. Liu, X.-L. Qi & S.-C. Zhang, "The Quantum Spin Hall Effect: Theory and
/// Experiment", J. Phys. Soc. Jpn. 77, 031007 (2008) (DOI 10.1143/JPSJ.77.031007, arXiv:0801.0901).
pub fn bhz(p: BhzParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let il2 = 1.0 / (lb * lb);
    let s_qb = sign(p.charge * point.field);
    let mu_b = bohr_magneton(Units::Lab) * point.field;
    let mut v = Vec::new();
    for (sigma, block) in [(1.0, "up"), (-1.0, "down")] {
        let h_e = |n: usize| {
            p.c_mev + p.m_mev - (p.d_mev_nm2 + p.b_mev_nm2) * (2.0 * n as f64 + 1.0) * il2
                + sigma * p.g_e * 0.5 * mu_b
        };
        let h_h = |n: usize| {
            p.c_mev - p.m_mev - (p.d_mev_nm2 - p.b_mev_nm2) * (2.0 * n as f64 + 1.0) * il2
                + sigma * p.g_h * 0.5 * mu_b
        };
        let t = sigma * s_qb;
        let e0 = if t > 0.0 { h_h(0) } else { h_e(0) };
        v.push(lvl(e0, 1, 0, 0, format!("{block} n=0")));
        for n in 1..=max_n {
            let (a, b) = if t > 0.0 {
                (h_e(n - 1), h_h(n))
            } else {
                (h_e(n), h_h(n - 1))
            };
            let mid = 0.5 * (a + b);
            let half = 0.5 * (a - b);
            let r = (half * half + 2.0 * n as f64 * p.a_mev_nm * p.a_mev_nm * il2).sqrt();
            v.push(lvl(mid + r, 1, n, 1, format!("{block} n={n} +")));
            v.push(lvl(mid - r, 1, n, -1, format!("{block} n={n} -")));
        }
    }
    Ok(sorted(v))
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
        let l = dirac2d(Dirac2dParams::default(), FieldPoint::field(4.0), 1).unwrap_or_default();
        assert!((l[2].energy - 2.0 * 36.28).abs() < 0.02, "{l:?}");
    }

    #[test]
    fn electron_cyclotron_energy_per_tesla_codata() {
        // CODATA 2018: hbar e / m_e = 2 mu_B = 0.115 768 meV/T, i.e. 0.1158 meV/T.
        let w = cyclotron_energy_mev(1.0, 1.0, -1.0);
        assert!((w - 0.1158).abs() < 5e-5, "{w}");
        assert!((w - 2.0 * 5.788_381_806_0e-2).abs() < 1e-10, "{w}");
        let l = schrodinger(MassParams::default(), FieldPoint::field(2.0), 3).unwrap_or_default();
        assert!((l[3].energy - 3.5 * 2.0 * w).abs() < 1e-12);
    }

    #[test]
    fn critical_field_codata() {
        // CODATA 2018: B_c = m_e^2 c^2 / (e hbar) = 4.414 005e9 T.
        assert!((ELECTRON_CRITICAL_FIELD_T / 4.414e9 - 1.0).abs() < 1e-4);
        // and the natural-unit cyclotron energy at b = 1 is m c^2: hbar e B_c / m_e = m_e c^2
        let w = cyclotron_energy_mev(1.0, ELECTRON_CRITICAL_FIELD_T, -1.0);
        assert!((w / ELECTRON_REST_ENERGY_MEV - 1.0).abs() < 1e-12);
    }

    #[test]
    fn dirac_levels_at_one_tesla_keep_full_precision() {
        // E - mc^2 = sqrt(1 + 2 nu b) - 1 = nu b (1 - nu b/2 + (nu b)^2/2 - ...), b = 1 T / B_c.
        // The third term is ~1e-19 relative: the two-term series is exact to 1e-12 here.
        let b = 1.0 / ELECTRON_CRITICAL_FIELD_T;
        let l = dirac(RelativisticParams::default(), FieldPoint::field(b), 5).unwrap_or_default();
        let pos: Vec<&ExpectedLevel> = l.iter().filter(|x| x.s > 0).collect();
        assert_eq!(pos.len(), 6);
        for x in pos {
            let nu = x.n as f64;
            if x.n == 0 {
                assert_eq!(x.energy, 0.0);
                continue;
            }
            let series = nu * b * (1.0 - nu * b / 2.0);
            assert!(
                ((x.energy - series) / series).abs() < 1e-12,
                "{}: {} vs {series}",
                x.label,
                x.energy
            );
            // 1e-13 relative to hbar omega_c = b
            assert!((x.energy - series).abs() < 1e-13 * b);
        }
    }

    #[test]
    fn dirac_multiplicities_and_negative_branch() {
        let b = 0.1;
        let l = dirac(
            RelativisticParams::default(),
            FieldPoint { field: b, kz: 0.0 },
            2,
        )
        .unwrap_or_default();
        // negative branch: -(sqrt(1 + 2 nu b) + 1) relative to m c^2
        let lowest = &l[0];
        assert_eq!((lowest.n, lowest.s, lowest.multiplicity), (2, -1, 2));
        assert!((lowest.energy + (1.0 + 4.0 * b).sqrt() + 1.0).abs() < 1e-15);
        let nu0: Vec<_> = l.iter().filter(|x| x.n == 0).collect();
        assert!(nu0.iter().all(|x| x.multiplicity == 1));
        assert!((nu0[0].energy + 2.0).abs() < 1e-15 && nu0[1].energy == 0.0);
    }

    #[test]
    fn massive_2d_dirac_zero_level_follows_tau_sign_qb() {
        for (tau, q, b, want) in [
            (1i8, -1.0, 1.0, -10.0),
            (1, 1.0, 1.0, 10.0),
            (-1, -1.0, 1.0, 10.0),
            (1, -1.0, -1.0, 10.0),
        ] {
            let p = Dirac2dParams {
                velocity_m_per_s: 1.0e6,
                mass_mev: 10.0,
                valley: tau,
                charge: q,
            };
            let l = dirac2d(p, FieldPoint::field(b), 3).unwrap_or_default();
            let z: Vec<_> = l.iter().filter(|x| x.s == 0).collect();
            assert_eq!(z.len(), 1);
            assert_eq!(z[0].energy, want);
        }
    }

    #[test]
    fn for_model_shifts_reference_and_rejects_unknown() {
        let m = match crate::builtin::dirac(RelativisticParams::default()) {
            Ok(m) => m,
            Err(e) => panic!("{e}"),
        };
        let pt = FieldPoint::field(0.2);
        let rel = for_model(&m, pt, 1.0, 3).unwrap_or_default();
        let abs = for_model(&m, pt, 0.0, 3).unwrap_or_default();
        assert_eq!(rel.len(), 8);
        for (r, a) in rel.iter().zip(&abs) {
            assert!((a.energy - r.energy - 1.0).abs() < 1e-15);
        }
        let other = Model::builder("no-such-model", 1)
            .term(
                "x",
                1.0,
                crate::matrix::identity(1),
                crate::model::Monomial::ONE,
            )
            .build();
        match other {
            Ok(o) => assert!(for_model(&o, pt, 0.0, 3).is_none()),
            Err(e) => panic!("{e}"),
        }
        assert!(for_model(&m, FieldPoint::field(0.0), 0.0, 3).is_none());
    }

    #[test]
    fn rashba_reduces_to_pauli_without_spin_orbit() {
        // alpha = 0: Rashba levels are the Pauli levels (both from Landau 1930 + Zeeman).
        let pr = RashbaParams {
            mass_ratio: 0.05,
            rashba_mev_nm: 0.0,
            g_factor: -8.0,
            charge: -1.0,
        };
        let pp = PauliParams {
            mass_ratio: 0.05,
            g_factor: -8.0,
            charge: -1.0,
        };
        let pt = FieldPoint::field(3.0);
        let r = rashba(pr, pt, 30).unwrap_or_default();
        let p = pauli(pp, pt, 30).unwrap_or_default();
        // compare the 20 lowest (both lists complete there)
        for (a, b) in r.iter().zip(&p).take(20) {
            assert!((a.energy - b.energy).abs() < 1e-12 * a.energy.abs().max(1.0));
        }
    }
}
