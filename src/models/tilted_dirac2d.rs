//! The tilted massless 2D Dirac cone, two components, and its Landau levels (Goerbig et al.
//! 2008).

use serde::{Deserialize, Serialize};

use super::{finite, positive, BuiltinModel, ModelInfo, Origin, ParamDoc, Valley};
use crate::closed_form::{check_point, dirac_energy_mev, lvl, sorted, ExpectedLevel};
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, Monomial};
use crate::units::{hbar_v_mev_nm, Units};

/// Parameters of the tilted 2D Dirac cone, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TiltedDiracParams {
    /// Cone velocity v in m/s.
    pub velocity_m_per_s: f64,
    /// Tilt velocity w in m/s along x (|w| < v).
    pub tilt_velocity_m_per_s: f64,
    /// Valley index tau (sign of the kx sigma_x term); +1 or -1 in `--set`.
    pub valley: Valley,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for TiltedDiracParams {
    /// Invented illustration: v = 1e5 m/s, w = 0.4 v.
    fn default() -> Self {
        TiltedDiracParams {
            velocity_m_per_s: 1.0e5,
            tilt_velocity_m_per_s: 0.4e5,
            valley: Valley::Plus,
            charge: -1.0,
        }
    }
}

/// Tilted massless 2D Dirac cone, name `tilted-dirac2d`, lab units:
/// H = hbar w kx + hbar v (tau kx sigma_x + ky sigma_y), tilt along x, beta = w/v, |beta| < 1.
///
/// The tilt term couples orbitals n and n ± 1 of the same component, so no J = n + s_alpha is
/// conserved: the whole basis is one sector. Levels in [`levels`] (scaled by
/// (1 - beta^2)^(3/4)).
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive velocity or |w| >= v.
///
/// # Examples
/// ```
/// use ladderfan::{models, FieldPoint};
/// let m = models::tilted_dirac2d(models::TiltedDiracParams::default())?; // beta = 0.4
/// let l = models::expected_levels(&m, FieldPoint::field(1.0), 0.0, 1).unwrap();
/// let untilted = ladderfan::closed_form::dirac_energy_mev(1.0e5, 1.0, -1.0);
/// assert!((l[2].energy / untilted - 0.84f64.powf(0.75)).abs() < 1e-14);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn tilted_dirac2d(p: TiltedDiracParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    finite("tilt_velocity_m_per_s", p.tilt_velocity_m_per_s)?;
    if p.tilt_velocity_m_per_s.abs() >= p.velocity_m_per_s {
        return Err(Error::BadNumber {
            name: "tilt_velocity_m_per_s".into(),
            value: p.tilt_velocity_m_per_s,
            fix: format!(
                "an overtilted cone (|w| >= v = {}) has no Landau levels; use |w| < v",
                p.velocity_m_per_s
            ),
        });
    }
    let hv = hbar_v_mev_nm(p.velocity_m_per_s);
    let hw = hbar_v_mev_nm(p.tilt_velocity_m_per_s);
    Origin::TiltedDirac2d(p)
        .builder(2)
        .component_names(&["A", "B"])
        .term("hbar w kx", hw, identity(2), Monomial::KX)
        .term(
            "hbar v tau kx sigma_x",
            hv * p.valley.sign(),
            pauli_const("x"),
            Monomial::KX,
        )
        .term("hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .degeneracy(2)
        .build()
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
/// As [`super::schrodinger::levels`]; [`Error::BadNumber`] for |beta| >= 1 (overtilted cone: no
/// Landau levels).
///
/// # References
/// M. O. Goerbig, J.-N. Fuchs, G. Montambaux & F. Piechon, Phys. Rev. B 78, 045415 (2008).
pub fn levels(p: TiltedDiracParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
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

/// The `tilted-dirac2d` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct TiltedDirac2d;

static INFO: ModelInfo = ModelInfo {
    name: "tilted-dirac2d",
    summary: "two components, H = hbar w kx + hbar v (tau kx sigma_x + ky sigma_y), |w| < v",
    units: Units::Lab,
    source:
        "M. O. Goerbig, J.-N. Fuchs, G. Montambaux & F. Piechon, Phys. Rev. B 78, 045415 (2008)",
    params: &[
        ParamDoc {
            name: "velocity_m_per_s",
            unit: "m/s",
            meaning: "cone velocity v (invented default)",
        },
        ParamDoc {
            name: "tilt_velocity_m_per_s",
            unit: "m/s",
            meaning: "tilt velocity w along x",
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

impl BuiltinModel for TiltedDirac2d {
    type Params = TiltedDiracParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &TiltedDiracParams) -> Result<Model> {
        tilted_dirac2d(*p)
    }
    fn closed_form(
        p: &TiltedDiracParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}
