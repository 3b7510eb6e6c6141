//! The 3+1 Dirac model with an anomalous magnetic moment (Pauli term), natural units, and its
//! Landau levels.

use serde::{Deserialize, Serialize};

use super::dirac::dirac_builder;
use super::{finite, BuiltinModel, ModelInfo, Origin, ParamDoc, RelativisticParams};
use crate::closed_form::{check_point, lvl, rest_excess, sign, sign_label, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::pauli_const;
use crate::model::{Model, Monomial};
use crate::units::Units;

/// Parameters of the 3+1 Dirac model with an anomalous magnetic moment, natural units
/// (m c^2 = 1, hbar/(m c) = 1, B in B_c).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DiracAmmParams {
    /// Rest energy m c^2 in units of the reference particle's m c^2.
    pub mass: f64,
    /// Speed of light in units of c.
    pub speed: f64,
    /// Anomalous moment in Bohr magnetons: mu' = kappa mu_B (electron: a_e ≈ 1.16e-3).
    pub anomaly_kappa: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for DiracAmmParams {
    /// Invented illustration: a strongly enhanced anomaly kappa = 0.05 so that the splitting is
    /// visible, electron mass and charge.
    fn default() -> Self {
        DiracAmmParams {
            mass: 1.0,
            speed: 1.0,
            anomaly_kappa: 0.05,
            charge: -1.0,
        }
    }
}

/// 3+1 Dirac model with an anomalous magnetic moment (Pauli term), natural units, name
/// `dirac-amm`: H = c alpha . (hbar k) + beta m c^2 + kappa mu_B B beta Sigma_z, with the
/// matrices of [`super::dirac`](fn@super::dirac) and beta Sigma_z = sigma_z ⊗ sigma_z; mu_B = 1/2 in natural
/// units (see [`Units::bohr_magneton`]). Reference energy m c^2.
///
/// Sign convention: for q = -1 and kappa > 0 the non-relativistic limit of the upper
/// components has the Zeeman term +(1 + kappa) mu_B B sigma_z, i.e. g = 2 (1 + kappa) in the
/// crate's `+(g/2) mu_B B sigma_z` convention: kappa = a_e for the physical electron.
/// Levels in [`levels`].
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or speed or a non-finite kappa.
pub fn dirac_amm(p: DiracAmmParams) -> Result<Model> {
    finite("anomaly_kappa", p.anomaly_kappa)?;
    let base = RelativisticParams {
        mass: p.mass,
        speed: p.speed,
        charge: p.charge,
    };
    dirac_builder(Origin::DiracAmm(p), base)?
        .term(
            "kappa mu_B B beta Sigma_z",
            p.anomaly_kappa * Units::Natural.bohr_magneton(),
            pauli_const("z⊗z"),
            Monomial::B,
        )
        .build()
}

/// 3+1 Dirac levels with an anomalous magnetic moment (Pauli term), natural units.
///
/// Hamiltonian (see [`dirac_amm`]): H = c alpha . pi + beta m c^2 +
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
/// As [`super::schrodinger::levels`].
///
/// # References
/// I. M. Ternov, V. G. Bagrov & V. Ch. Zhukovskii (1966) (journal and volume from memory, not
/// confirmed); the formula above is re-derived here and checked against exact diagonalization
/// in tests/closed_forms.rs.
pub fn levels(p: DiracAmmParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c2 = p.speed * p.speed;
    let qb = (p.charge * point.field).abs();
    let s_qb = sign(p.charge * point.field);
    let mu_b = p.anomaly_kappa * Units::Natural.bohr_magneton() * point.field;
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

/// The `dirac-amm` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct DiracAmm;

static INFO: ModelInfo = ModelInfo {
    name: "dirac-amm",
    summary: "four components, 3+1 Dirac with an anomalous moment kappa mu_B B beta Sigma_z, natural units",
    units: Units::Natural,
    source: "I. M. Ternov, V. G. Bagrov & V. Ch. Zhukovskii (1966) (from memory, not confirmed)",
    params: &[
        ParamDoc {
            name: "mass",
            unit: "m_e",
            meaning: "rest mass",
        },
        ParamDoc {
            name: "speed",
            unit: "c",
            meaning: "speed of light",
        },
        ParamDoc {
            name: "anomaly_kappa",
            unit: "1",
            meaning: "anomalous moment kappa in mu_B (invented default)",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for DiracAmm {
    type Params = DiracAmmParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &DiracAmmParams) -> Result<Model> {
        dirac_amm(*p)
    }
    fn closed_form(
        p: &DiracAmmParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
    fn closed_form_reference(p: &DiracAmmParams) -> f64 {
        p.mass * p.speed * p.speed
    }
}
