//! The 3+1 Dirac model, four components, natural units, and its Landau levels (Rabi 1928).

use serde::{Deserialize, Serialize};

use super::{positive, BuiltinModel, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, lvl, rest_excess, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::pauli_const;
use crate::model::{Model, ModelBuilder, Monomial};
use crate::units::Units;

/// Parameters of the relativistic models ([`dirac`], [`super::klein_gordon`](fn@super::klein_gordon)), natural units
/// (m c^2 = 1, hbar/(m c) = 1, B in B_c).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RelativisticParams {
    /// Rest energy m c^2 in units of the reference particle's m c^2 (1 for the electron).
    pub mass: f64,
    /// Speed of light (or Fermi velocity) in units of c.
    pub speed: f64,
    /// Carrier charge in units of e, signed (electron -1, positron +1).
    pub charge: f64,
}

impl Default for RelativisticParams {
    fn default() -> Self {
        RelativisticParams {
            mass: 1.0,
            speed: 1.0,
            charge: -1.0,
        }
    }
}

/// 3+1 Dirac model, four components in the Dirac (standard) representation, natural units:
/// H = c alpha . (hbar k) + beta m c^2, alpha_i = sigma_x ⊗ sigma_i, beta = sigma_z ⊗ 1.
/// Components: (upper spin up, upper spin down, lower spin up, lower spin down).
///
/// Levels (Rabi 1928; Johnson & Lippmann, Phys. Rev. 76, 828 (1949); [`levels`]):
/// E = ± sqrt(m^2c^4 + c^2 hbar^2 kz^2 + 2 nu hbar c^2 |qB|), nu = 0, 1, 2, ...; nu = 0 once,
/// nu >= 1 twice (spin). The reference energy is m c^2.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or speed.
pub fn dirac(p: RelativisticParams) -> Result<Model> {
    dirac_builder(Origin::Dirac(p), p)?.build()
}

/// The 3+1 Dirac terms c alpha . hbar k + beta m c^2 (natural units, Dirac representation) on
/// the builder of `origin`, validated; shared by [`dirac`] and the variants that add terms.
pub(crate) fn dirac_builder(origin: Origin, p: RelativisticParams) -> Result<ModelBuilder> {
    positive("mass", p.mass)?;
    positive("speed", p.speed)?;
    let mc2 = p.mass * p.speed * p.speed;
    Ok(origin
        .builder(4)
        .component_names(&["u_up", "u_down", "l_up", "l_down"])
        .term("c alpha_x kx", p.speed, pauli_const("x⊗x"), Monomial::KX)
        .term("c alpha_y ky", p.speed, pauli_const("x⊗y"), Monomial::KY)
        .term("c alpha_z kz", p.speed, pauli_const("x⊗z"), Monomial::KZ)
        .term("beta m c^2", mc2, pauli_const("z⊗0"), Monomial::ONE)
        .reference_energy(mc2))
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
/// As [`super::schrodinger::levels`].
///
/// # References
/// I. I. Rabi, Z. Phys. 49, 507 (1928) (journal details from memory); M. H. Johnson &
/// B. A. Lippmann, Phys. Rev. 76, 828 (1949).
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

/// The `dirac` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Dirac;

static INFO: ModelInfo = ModelInfo {
    name: "dirac",
    summary: "four components (3+1 Dirac), H = c alpha.hbar k + beta m c^2, natural units",
    units: Units::Natural,
    source: "I. I. Rabi, Z. Phys. 49, 507 (1928) (from memory); M. H. Johnson & B. A. Lippmann, Phys. Rev. 76, 828 (1949)",
    params: &[
        ParamDoc {
            name: "mass",
            unit: "m_e",
            meaning: "rest mass",
        },
        ParamDoc {
            name: "speed",
            unit: "c",
            meaning: "speed of light (or velocity)",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Dirac {
    type Params = RelativisticParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &RelativisticParams) -> Result<Model> {
        dirac(*p)
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::ELECTRON_CRITICAL_FIELD_T;

    #[test]
    fn dirac_levels_at_one_tesla_keep_full_precision() {
        // E - mc^2 = sqrt(1 + 2 nu b) - 1 = nu b (1 - nu b/2 + (nu b)^2/2 - ...), b = 1 T / B_c.
        // The third term is ~1e-19 relative: the two-term series is exact to 1e-12 here.
        let b = 1.0 / ELECTRON_CRITICAL_FIELD_T;
        let l = levels(RelativisticParams::default(), FieldPoint::field(b), 5).unwrap_or_default();
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
        let l = levels(
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
}
