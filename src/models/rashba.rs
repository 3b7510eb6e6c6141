//! The Rashba 2DEG with Zeeman term, two components, and its Landau levels (Bychkov & Rashba
//! 1984).

use serde::{Deserialize, Serialize};

use super::{finite, positive, BuiltinModel, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, cyclotron_energy_mev, lvl, sign, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, Monomial};
use crate::units::{Units, HBAR2_OVER_2ME_MEV_NM2};

/// Parameters of the Rashba 2DEG, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RashbaParams {
    /// Effective mass in units of the free electron mass.
    pub mass_ratio: f64,
    /// Rashba coefficient alpha in meV nm.
    pub rashba_mev_nm: f64,
    /// g-factor in the convention H_Z = +(g/2) mu_B B sigma_z.
    pub g_factor: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for RashbaParams {
    /// Invented illustration: m* = 0.05 m_e, alpha = 20 meV nm, g = -8.
    fn default() -> Self {
        RashbaParams {
            mass_ratio: 0.05,
            rashba_mev_nm: 20.0,
            g_factor: -8.0,
            charge: -1.0,
        }
    }
}

/// Rashba 2DEG with Zeeman term, name `rashba`, lab units, components (up, down):
/// H = hbar^2 k^2 / 2m* + alpha (ky sigma_x - kx sigma_y) + (g/2) mu_B B sigma_z.
///
/// Levels in [`levels`] (Bychkov & Rashba 1984).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or a non-finite alpha or g.
pub fn rashba(p: RashbaParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    finite("rashba_mev_nm", p.rashba_mev_nm)?;
    finite("g_factor", p.g_factor)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let i2 = identity(2);
    Origin::Rashba(p)
        .builder(2)
        .component_names(&["up", "down"])
        .term("hbar^2 kx^2/2m", c, i2.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, i2, Monomial::new(0, 2, 0))
        .term(
            "alpha ky sigma_x",
            p.rashba_mev_nm,
            pauli_const("x"),
            Monomial::KY,
        )
        .term(
            "-alpha kx sigma_y",
            -p.rashba_mev_nm,
            pauli_const("y"),
            Monomial::KX,
        )
        .term(
            "zeeman",
            0.5 * p.g_factor * Units::Lab.bohr_magneton(),
            pauli_const("z"),
            Monomial::B,
        )
        .build()
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
/// As [`super::schrodinger::levels`].
///
/// # References
/// Yu. A. Bychkov & E. I. Rashba, J. Phys. C 17, 6039 (1984) (the Landau levels; from memory,
/// not confirmed); their companion letter, Yu. A. Bychkov & E. I. Rashba, JETP Lett. 39, 78
/// (1984) [Pis'ma Zh. Eksp. Teor. Fiz. 39, 66], is confirmed by a published reference list.
pub fn levels(p: RashbaParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let z = 0.5 * p.g_factor * Units::Lab.bohr_magneton() * point.field;
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

/// The `rashba` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Rashba;

static INFO: ModelInfo = ModelInfo {
    name: "rashba",
    summary: "two components, H = hbar^2 k^2/(2 m*) + alpha (ky sigma_x - kx sigma_y) + (g/2) mu_B B sigma_z",
    units: Units::Lab,
    source: "Yu. A. Bychkov & E. I. Rashba, J. Phys. C 17, 6039 (1984) (from memory, not confirmed); companion letter JETP Lett. 39, 78 (1984) (confirmed)",
    params: &[
        ParamDoc {
            name: "mass_ratio",
            unit: "m_e",
            meaning: "effective mass m*/m_e (invented default)",
        },
        ParamDoc {
            name: "rashba_mev_nm",
            unit: "meV nm",
            meaning: "Rashba coefficient alpha",
        },
        ParamDoc {
            name: "g_factor",
            unit: "1",
            meaning: "g in +(g/2) mu_B B sigma_z",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Rashba {
    type Params = RashbaParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &RashbaParams) -> Result<Model> {
        rashba(*p)
    }
    fn closed_form(
        p: &RashbaParams,
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
    fn rashba_reduces_to_pauli_without_spin_orbit() {
        // alpha = 0: Rashba levels are the Pauli levels (both from Landau 1930 + Zeeman).
        let pr = RashbaParams {
            mass_ratio: 0.05,
            rashba_mev_nm: 0.0,
            g_factor: -8.0,
            charge: -1.0,
        };
        let pp = crate::models::PauliParams {
            mass_ratio: 0.05,
            g_factor: -8.0,
            charge: -1.0,
        };
        let pt = FieldPoint::field(3.0);
        let r = levels(pr, pt, 30).unwrap_or_default();
        let p = crate::models::pauli::levels(pp, pt, 30).unwrap_or_default();
        // compare the 20 lowest (both lists complete there)
        for (a, b) in r.iter().zip(&p).take(20) {
            assert!((a.energy - b.energy).abs() < 1e-12 * a.energy.abs().max(1.0));
        }
    }
}
