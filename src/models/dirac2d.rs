//! The 2D massive Dirac model, two components, and its Landau levels (McClure 1956).

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc, Valley};
use crate::closed_form::{check_point, dirac_energy_mev, lvl, sign, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::pauli_const;
use crate::model::{Model, Monomial};
use crate::units::Units;

/// Parameters of the 2D massive Dirac model, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Dirac2dParams {
    /// Velocity in m/s.
    pub velocity_m_per_s: f64,
    /// Mass term Delta in meV (the gap is 2 |Delta|).
    pub mass_mev: f64,
    /// Valley index tau (flips the sign of the kx term); +1 or -1 in `--set`.
    pub valley: Valley,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for Dirac2dParams {
    fn default() -> Self {
        Dirac2dParams {
            velocity_m_per_s: 1.0e6,
            mass_mev: 0.0,
            valley: Valley::Plus,
            charge: -1.0,
        }
    }
}

/// 2D massive Dirac model, two components (sublattice A, B), lab units:
/// H = hbar v (tau kx sigma_x + ky sigma_y) + Delta sigma_z.
///
/// Levels (McClure, Phys. Rev. 104, 666 (1956) for Delta = 0; [`levels`]): n >= 1:
/// E = ± sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2); the unpaired n = 0 level sits at
/// E_0 = tau sign(qB) Delta.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive velocity.
pub fn dirac2d(p: Dirac2dParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    let hv = crate::units::hbar_v_mev_nm(p.velocity_m_per_s);
    Origin::Dirac2d(p)
        .builder(2)
        .component_names(&["A", "B"])
        .term(
            "hbar v tau kx sigma_x",
            hv * p.valley.sign(),
            pauli_const("x"),
            Monomial::KX,
        )
        .term("hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .term("mass sigma_z", p.mass_mev, pauli_const("z"), Monomial::ONE)
        .degeneracy(2)
        .build()
}

/// 2D massive Dirac levels, H = hbar v (tau kx sigma_x + ky sigma_y) + Delta sigma_z:
/// n >= 1: E = ± sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2); n = 0: E_0 = tau sign(qB) Delta, once.
///
/// Quantum numbers: n, `s` = ±1 (n >= 1), `s` = 0 for the unpaired n = 0 level (it lives on
/// component A when tau sign(qB) = +1, on B otherwise). Multiplicity 1. Valid for both signs of
/// qB. Energies in meV relative to 0.
///
/// # Errors
/// As [`super::schrodinger::levels`].
///
/// # References
/// J. W. McClure, Phys. Rev. 104, 666 (1956) (massless case); the massive n = 0 level follows
/// from the same ladder algebra (common practice).
pub fn levels(p: Dirac2dParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let e1 = dirac_energy_mev(p.velocity_m_per_s, point.field, p.charge);
    let s_qb = sign(p.charge * point.field);
    let mut v = vec![lvl(
        p.valley.sign() * s_qb * p.mass_mev,
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

/// The `dirac2d` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Dirac2d;

static INFO: ModelInfo = ModelInfo {
    name: "dirac2d",
    summary: "two components, H = hbar v (tau kx sigma_x + ky sigma_y) + Delta sigma_z",
    units: Units::Lab,
    source: "J. W. McClure, Phys. Rev. 104, 666 (1956) (massless case)",
    params: &[
        ParamDoc {
            name: "velocity_m_per_s",
            unit: "m/s",
            meaning: "velocity v",
        },
        ParamDoc {
            name: "mass_mev",
            unit: "meV",
            meaning: "mass term Delta (gap 2|Delta|)",
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

impl BuiltinModel for Dirac2d {
    type Params = Dirac2dParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &Dirac2dParams) -> Result<Model> {
        dirac2d(*p)
    }
    fn closed_form(
        p: &Dirac2dParams,
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
    fn graphene_like_levels_scale_with_sqrt_field() {
        // Common practice: E_1 = sqrt(2 hbar e B) v = 36.3 meV sqrt(B/T) at v = 1e6 m/s.
        let l = levels(Dirac2dParams::default(), FieldPoint::field(4.0), 1).unwrap_or_default();
        assert!((l[2].energy - 2.0 * 36.28).abs() < 0.02, "{l:?}");
    }

    #[test]
    fn massive_2d_dirac_zero_level_follows_tau_sign_qb() {
        // E_0 = tau sign(qB) Delta (from the ladder algebra, common practice)
        for (tau, q, b, want) in [
            (Valley::Plus, -1.0, 1.0, -10.0),
            (Valley::Plus, 1.0, 1.0, 10.0),
            (Valley::Minus, -1.0, 1.0, 10.0),
            (Valley::Plus, -1.0, -1.0, 10.0),
        ] {
            let p = Dirac2dParams {
                velocity_m_per_s: 1.0e6,
                mass_mev: 10.0,
                valley: tau,
                charge: q,
            };
            let l = levels(p, FieldPoint::field(b), 3).unwrap_or_default();
            let z: Vec<_> = l.iter().filter(|x| x.s == 0).collect();
            assert_eq!(z.len(), 1);
            assert_eq!(z[0].energy, want);
        }
    }
}
