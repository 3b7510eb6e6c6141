//! The Klein-Gordon model in its squared form, one component, natural units, and its levels.

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc, RelativisticParams};
use crate::closed_form::{check_point, lvl, rest_excess, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::identity;
use crate::model::{Model, Monomial};
use crate::units::Units;

/// Klein-Gordon model in its squared form, one component, natural units.
///
/// The assembled operator is the Schrodinger-like O = c^2 (pi^2 + hbar^2 kz^2)/(2 m c^2) and the
/// energies are E = ± sqrt((m c^2)^2 + 2 m c^2 λ) for each eigenvalue λ of O (see
/// [`crate::model::SpectrumForm::KleinGordon`]), i.e. E^2 = m^2c^4 + c^2 hbar^2 kz^2 +
/// (2n + 1) hbar c^2 |qB| ([`levels`]). The reference energy is m c^2.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or speed.
pub fn klein_gordon(p: RelativisticParams) -> Result<Model> {
    positive("mass", p.mass)?;
    positive("speed", p.speed)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c = p.speed * p.speed / (2.0 * mc2);
    let one = identity(1);
    Origin::KleinGordon(p)
        .builder(1)
        .term("c^2 kx^2/2mc^2", c, one.clone(), Monomial::new(2, 0, 0))
        .term("c^2 ky^2/2mc^2", c, one.clone(), Monomial::new(0, 2, 0))
        .term("c^2 kz^2/2mc^2", c, one, Monomial::new(0, 0, 2))
        .klein_gordon(mc2)
        .reference_energy(mc2)
        .build()
}

/// Klein-Gordon levels, natural units, both branches:
/// E = ± sqrt(m^2c^4 + c^2 hbar^2 kz^2 + (2n + 1) hbar c^2 |qB|), n >= 0.
///
/// Quantum numbers: n, `s` = branch ±1; multiplicity 1. Relative to m c^2, cancellation-free as
/// in [`super::dirac::levels`].
///
/// # Errors
/// As [`super::schrodinger::levels`].
///
/// # References
/// Landau quantization of the Klein-Gordon equation: the spinless analogue of Rabi 1928
/// (common practice).
pub fn levels(
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

/// The `klein-gordon` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct KleinGordon;

static INFO: ModelInfo = ModelInfo {
    name: "klein-gordon",
    summary: "one component, squared form, E^2 = m^2c^4 + c^2 hbar^2 kz^2 + (2n+1) hbar c^2 |qB|",
    units: Units::Natural,
    source: "Landau quantization of the Klein-Gordon equation, the spinless analogue of Rabi 1928 (common practice)",
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
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for KleinGordon {
    type Params = RelativisticParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &RelativisticParams) -> Result<Model> {
        klein_gordon(*p)
    }
    fn closed_form(
        p: &RelativisticParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
    fn closed_form_reference(p: &RelativisticParams) -> f64 {
        p.mass * p.speed * p.speed
    }
}
