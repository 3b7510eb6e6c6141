//! The four-band BHZ quantum-well model with Zeeman terms and its Landau levels (Bernevig,
//! Hughes & Zhang 2006; Konig et al. 2008).

use serde::{Deserialize, Serialize};

use super::{finite, BuiltinModel, ModelInfo, Origin, ParamDoc};
use crate::closed_form::{check_point, lvl, sign, sorted, ExpectedLevel};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, Monomial};
use crate::units::Units;

/// Parameters of the four-band BHZ model, lab units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BhzParams {
    /// A in meV nm (linear coupling).
    pub a_mev_nm: f64,
    /// B in meV nm^2 (band-diagonal curvature of the mass term).
    pub b_mev_nm2: f64,
    /// C in meV (energy offset).
    pub c_mev: f64,
    /// D in meV nm^2 (particle-hole asymmetric curvature).
    pub d_mev_nm2: f64,
    /// M in meV (mass; M B > 0 is the inverted, quantum-spin-Hall regime).
    pub m_mev: f64,
    /// g-factor of the E1 band (Zeeman (g_E/2) mu_B B, sign flipped in the down block).
    pub g_e: f64,
    /// g-factor of the H1 band.
    pub g_h: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for BhzParams {
    /// Invented illustration of an inverted well: A = 365 meV nm, B = -700 meV nm^2, C = 0,
    /// D = -500 meV nm^2, M = -10 meV, g_E = 20, g_H = 2.
    fn default() -> Self {
        BhzParams {
            a_mev_nm: 365.0,
            b_mev_nm2: -700.0,
            c_mev: 0.0,
            d_mev_nm2: -500.0,
            m_mev: -10.0,
            g_e: 20.0,
            g_h: 2.0,
            charge: -1.0,
        }
    }
}

/// Four-band BHZ model, name `bhz`, lab units, components (E1 up, H1 up, E1 down, H1 down):
/// H = diag(h(k), h*(-k)) + (mu_B B / 2) diag(g_E, g_H, -g_E, -g_H), with
/// h(k) = C - D k^2 + A (kx sigma_x - ky sigma_y) + (M - B k^2) sigma_z,
/// h*(-k) = C - D k^2 - A (kx sigma_x + ky sigma_y) + (M - B k^2) sigma_z.
///
/// As Pauli strings (spin block ⊗ orbital): C 0⊗0, -D k^2 0⊗0, (M - B k^2) 0⊗z, A kx z⊗x,
/// -A ky 0⊗y, Zeeman (mu_B B/2)(g_E z⊗u + g_H z⊗d).
/// Levels in [`levels`].
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-finite parameter.
///
/// # References
/// B. A. Bernevig, T. L. Hughes & S.-C. Zhang, Science 314, 1757 (2006).
pub fn bhz(p: BhzParams) -> Result<Model> {
    for (name, v) in [
        ("a_mev_nm", p.a_mev_nm),
        ("b_mev_nm2", p.b_mev_nm2),
        ("c_mev", p.c_mev),
        ("d_mev_nm2", p.d_mev_nm2),
        ("m_mev", p.m_mev),
        ("g_e", p.g_e),
        ("g_h", p.g_h),
    ] {
        finite(name, v)?;
    }
    let mu = 0.5 * Units::Lab.bohr_magneton();
    let i4 = identity(4);
    let oz = pauli_const("0⊗z");
    Origin::Bhz(p)
        .builder(4)
        .component_names(&["E1_up", "H1_up", "E1_down", "H1_down"])
        .term("C", p.c_mev, i4.clone(), Monomial::ONE)
        .term("-D kx^2", -p.d_mev_nm2, i4.clone(), Monomial::new(2, 0, 0))
        .term("-D ky^2", -p.d_mev_nm2, i4, Monomial::new(0, 2, 0))
        .term("M sigma_z", p.m_mev, oz.clone(), Monomial::ONE)
        .term(
            "-B kx^2 sigma_z",
            -p.b_mev_nm2,
            oz.clone(),
            Monomial::new(2, 0, 0),
        )
        .term("-B ky^2 sigma_z", -p.b_mev_nm2, oz, Monomial::new(0, 2, 0))
        .term(
            "A kx tau_z sigma_x",
            p.a_mev_nm,
            pauli_const("z⊗x"),
            Monomial::KX,
        )
        .term(
            "-A ky sigma_y",
            -p.a_mev_nm,
            pauli_const("0⊗y"),
            Monomial::KY,
        )
        .term("zeeman E1", mu * p.g_e, pauli_const("z⊗u"), Monomial::B)
        .term("zeeman H1", mu * p.g_h, pauli_const("z⊗d"), Monomial::B)
        .build()
}

/// Four-band BHZ model, components (E1 up, H1 up, E1 down, H1 down); see
/// [`bhz`] for the Hamiltonian, with Zeeman terms
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
/// As [`super::schrodinger::levels`].
///
/// # References
/// B. A. Bernevig, T. L. Hughes & S.-C. Zhang, Science 314, 1757 (2006) (DOI
/// 10.1126/science.1133734, PubMed 17170299); M. Konig, H. Buhmann, L. W. Molenkamp,
/// T. L. Hughes, C.-X. Liu, X.-L. Qi & S.-C. Zhang, "The Quantum Spin Hall Effect: Theory and
/// Experiment", J. Phys. Soc. Jpn. 77, 031007 (2008) (DOI 10.1143/JPSJ.77.031007, arXiv:0801.0901).
pub fn levels(p: BhzParams, point: FieldPoint, max_n: usize) -> Result<Vec<ExpectedLevel>> {
    check_point(point)?;
    let lb = Units::Lab.magnetic_length(point.field, p.charge);
    let il2 = 1.0 / (lb * lb);
    let s_qb = sign(p.charge * point.field);
    let mu_b = Units::Lab.bohr_magneton() * point.field;
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

/// The `bhz` entry of the registry.
#[derive(Debug, Clone, Copy)]
pub struct Bhz;

static INFO: ModelInfo = ModelInfo {
    name: "bhz",
    summary:
        "four components (E1 up, H1 up, E1 down, H1 down), BHZ quantum-well model with Zeeman terms",
    units: Units::Lab,
    source: "B. A. Bernevig, T. L. Hughes & S.-C. Zhang, Science 314, 1757 (2006)",
    params: &[
        ParamDoc {
            name: "a_mev_nm",
            unit: "meV nm",
            meaning: "A, linear coupling (invented default)",
        },
        ParamDoc {
            name: "b_mev_nm2",
            unit: "meV nm^2",
            meaning: "B, curvature of the mass term",
        },
        ParamDoc {
            name: "c_mev",
            unit: "meV",
            meaning: "C, energy offset",
        },
        ParamDoc {
            name: "d_mev_nm2",
            unit: "meV nm^2",
            meaning: "D, particle-hole asymmetric curvature",
        },
        ParamDoc {
            name: "m_mev",
            unit: "meV",
            meaning: "M, mass (M B > 0: inverted)",
        },
        ParamDoc {
            name: "g_e",
            unit: "1",
            meaning: "g-factor of the E1 band",
        },
        ParamDoc {
            name: "g_h",
            unit: "1",
            meaning: "g-factor of the H1 band",
        },
        ParamDoc {
            name: "charge",
            unit: "e",
            meaning: "carrier charge, signed",
        },
    ],
};

impl BuiltinModel for Bhz {
    type Params = BhzParams;
    fn info() -> &'static ModelInfo {
        &INFO
    }
    fn build(p: &BhzParams) -> Result<Model> {
        bhz(*p)
    }
    fn closed_form(
        p: &BhzParams,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>> {
        Some(levels(*p, point, max_n))
    }
}
