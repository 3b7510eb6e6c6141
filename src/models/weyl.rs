//! A 3D Weyl node, two components, and its Landau levels with the chiral level.

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, Chirality, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, lvl, sign, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::pauli_const;
use crate::model::{Model, Monomial};
use crate::units::{hbar_v_mev_nm, Units};

/// Parameters of a 3D Weyl node, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct WeylParams {
    /// Velocity in m/s.
    pub velocity_m_per_s: f64,
    /// Chirality chi; +1 or -1 in `--set`.
    pub chirality: Chirality,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for WeylParams {
    fn default() -> Self {
        WeylParams {
            velocity_m_per_s: 3.0e5,
            chirality: Chirality::Plus,
            charge: -1.0,
        }
    }
}

/// 3D Weyl node, two components, lab units: H = chi hbar v (k . sigma).
///
/// Levels ([`levels`]): n >= 1: E = ± hbar v sqrt(kz^2 + 2n / l_B^2); the chiral n = 0 level is
/// E_0 = chi sign(qB) hbar v kz (Nielsen & Ninomiya, Phys. Lett. B 130, 389 (1983)).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive velocity.
pub fn weyl(p: WeylParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    let hv = hbar_v_mev_nm(p.velocity_m_per_s) * p.chirality.sign();
    Origin::Weyl(p)
        .builder(2)
        .component_names(&["up", "down"])
        .term("chi hbar v kx sigma_x", hv, pauli_const("x"), Monomial::KX)
        .term("chi hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .term("chi hbar v kz sigma_z", hv, pauli_const("z"), Monomial::KZ)
        .build()
}

/// 3D Weyl node levels, H = chi hbar v k . sigma:
/// n >= 1: E = ± hbar v sqrt(kz^2 + 2n / l_B^2); chiral n = 0 level E_0 = chi sign(qB) hbar v kz.
///
/// Quantum numbers: n, `s` = ±1 (n >= 1), 0 for the chiral level. Multiplicity 1. meV.
///
/// # Errors
/// As [`super::schrodinger::levels`].
///
/// # References
/// H. B. Nielsen & M. Ninomiya, Phys. Lett. B 130, 389 (1983) (chiral level).
pub fn levels(p: WeylParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let hv = hbar_v_mev_nm(p.velocity_m_per_s);
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let mut v = vec![lvl(
        p.chirality.sign() * s_qb * hv * point.kz,
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

/// The `weyl` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Weyl;

static INFO: ModelInfo = ModelInfo {
    name: "weyl",
    summary: "two components, H = chi hbar v k.sigma (3D Weyl node)",
    units: Units::Lab,
    source: "H. B. Nielsen & M. Ninomiya, Phys. Lett. B 130, 389 (1983) (chiral level)",
    params: &[
        ParamDoc {
            name: "velocity_m_per_s",
            unit: "m/s",
            meaning: "velocity v",
        },
        ParamDoc {
            name: "chirality",
            unit: "1",
            meaning: "chirality chi = +1 or -1",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Weyl {
    type Params = WeylParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &WeylParams) -> Result<Model> {
        weyl(*p)
    }
    fn closed_form(
        p: &WeylParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}
