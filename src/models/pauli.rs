//! The Pauli model (effective mass plus Zeeman term), two components, and its Landau levels.

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, cyclotron_energy_mev, lvl, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, Monomial};
use crate::units::{Units, HBAR2_OVER_2ME_MEV_NM2};

/// Parameters of the Pauli model, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PauliParams {
    /// Effective mass in units of the free electron mass.
    pub mass_ratio: f64,
    /// g-factor in the convention H_Z = +(g/2) mu_B B sigma_z (free electron: +2.0023).
    pub g_factor: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for PauliParams {
    fn default() -> Self {
        PauliParams {
            mass_ratio: 1.0,
            g_factor: 2.0,
            charge: -1.0,
        }
    }
}

/// Pauli model, two components (spin up, spin down along +z):
/// H = hbar^2 k^2/(2 m*) + (g/2) mu_B B sigma_z.
///
/// Levels: hbar omega_c (n + 1/2) + s (g/2) mu_B B + hbar^2 kz^2/(2 m*), s = ±1 ([`levels`]).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass.
pub fn pauli(p: PauliParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let i2 = identity(2);
    Origin::Pauli(p)
        .builder(2)
        .component_names(&["up", "down"])
        .term("hbar^2 kx^2/2m", c, i2.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, i2.clone(), Monomial::new(0, 2, 0))
        .term("hbar^2 kz^2/2m", c, i2, Monomial::new(0, 0, 2))
        .term(
            "zeeman",
            0.5 * p.g_factor * Units::Lab.bohr_magneton(),
            pauli_const("z"),
            Monomial::B,
        )
        .build()
}

/// Pauli levels: E = hbar omega_c (n + 1/2) + s (g/2) mu_B B + hbar^2 kz^2/(2 m*), s = ±1 the
/// spin along +z (component `up` is s = +1), B signed.
///
/// Quantum numbers: n >= 0, `s` = spin. Multiplicity 1 each; when g m*/m_e = 2 the levels
/// (n, s) and (n + 1, -s) coincide exactly and are listed separately.
///
/// # Errors
/// As [`super::schrodinger::levels`].
///
/// # References
/// W. Pauli, Z. Phys. 43, 601 (1927) (spin term with g; journal details from memory); Landau
/// 1930 for the orbital part.
pub fn levels(p: PauliParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let w = cyclotron_energy_mev(p.mass_ratio, point.field, p.charge);
    let ez = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio * point.kz * point.kz;
    let z = 0.5 * p.g_factor * Units::Lab.bohr_magneton() * point.field;
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

/// The `pauli` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Pauli;

static INFO: ModelInfo = ModelInfo {
    name: "pauli",
    summary: "two components, H = hbar^2 k^2 / (2 m*) + (g/2) mu_B B sigma_z",
    units: Units::Lab,
    source: "Landau 1930 with the spin term of W. Pauli, Z. Phys. 43, 601 (1927) (journal details from memory)",
    params: &[
        ParamDoc {
            name: "mass_ratio",
            unit: "m_e",
            meaning: "effective mass m*/m_e",
        },
        ParamDoc {
            name: "g_factor",
            unit: "1",
            meaning: "g in H_Z = +(g/2) mu_B B sigma_z (free electron +2.0023)",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Pauli {
    type Params = PauliParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &PauliParams) -> Result<Model> {
        pauli(*p)
    }
    fn closed_form(
        p: &PauliParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}
