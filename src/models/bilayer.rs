//! The chiral bilayer two-band model, two components, and its Landau levels (McCann & Fal'ko
//! 2006).

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc, Valley};
use crate::closed_form::{check_point, cyclotron_energy_mev, lvl, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::pauli_const;
use crate::model::{Model, Monomial};
use crate::units::{Units, HBAR2_OVER_2ME_MEV_NM2};

/// Parameters of the bilayer two-band model, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BilayerParams {
    /// Effective mass m in units of the free electron mass.
    pub mass_ratio: f64,
    /// Valley index tau; +1 or -1 in `--set`.
    pub valley: Valley,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for BilayerParams {
    /// Invented illustration: m = 0.035 m_e, valley +1, electron charge.
    fn default() -> Self {
        BilayerParams {
            mass_ratio: 0.035,
            valley: Valley::Plus,
            charge: -1.0,
        }
    }
}

/// Bilayer two-band model with quadratic off-diagonal terms, name `bilayer`, lab units,
/// components (A1, B2):
/// H = -(hbar^2 / 2m) [[0, (kx - i tau ky)^2], [(kx + i tau ky)^2, 0]]
///   = -(hbar^2 / 2m) [(kx^2 - ky^2) sigma_x + 2 tau kx ky sigma_y] (kx ky Weyl-ordered).
///
/// Levels in [`levels`] (McCann & Fal'ko 2006). Declared degeneracy 2 (spin).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass.
pub fn bilayer(p: BilayerParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    let c = -HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    Origin::Bilayer(p)
        .builder(2)
        .component_names(&["A1", "B2"])
        .term(
            "-hbar^2 kx^2/2m sigma_x",
            c,
            pauli_const("x"),
            Monomial::new(2, 0, 0),
        )
        .term(
            "+hbar^2 ky^2/2m sigma_x",
            -c,
            pauli_const("x"),
            Monomial::new(0, 2, 0),
        )
        .term(
            "-tau hbar^2 kx ky/m sigma_y",
            2.0 * c * p.valley.sign(),
            pauli_const("y"),
            Monomial::new(1, 1, 0),
        )
        .degeneracy(2)
        .build()
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
/// As [`super::schrodinger::levels`].
///
/// # References
/// E. McCann & V. I. Fal'ko, Phys. Rev. Lett. 96, 086805 (2006).
pub fn levels(p: BilayerParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
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

/// The `bilayer` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Bilayer;

static INFO: ModelInfo = ModelInfo {
    name: "bilayer",
    summary: "two components, chiral bilayer: H = -(hbar^2/2m) [(kx^2 - ky^2) sigma_x + 2 tau kx ky sigma_y]",
    units: Units::Lab,
    source: "E. McCann & V. I. Fal'ko, Phys. Rev. Lett. 96, 086805 (2006)",
    params: &[
        ParamDoc {
            name: "mass_ratio",
            unit: "m_e",
            meaning: "effective mass m/m_e (invented default)",
        },
        ParamDoc {
            name: "valley",
            unit: "1",
            meaning: "valley index tau = +1 or -1",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Bilayer {
    type Params = BilayerParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &BilayerParams) -> Result<Model> {
        bilayer(*p)
    }
    fn closed_form(
        p: &BilayerParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}
