//! Shared helpers for the trust tests (tests/trust_artefacts.rs, tests/auto_cutoff.rs,
//! tests/convergence_study.rs): the models of the catalogue with invented parameters, their
//! closed-form levels from `ladderfan::closed_form` (published formulas, each with its source
//! there), never from the solver, the checks that bounds contain them and that artefacts are
//! flagged, and an anharmonic model without a closed form.

use ladderfan::matrix::identity;
use ladderfan::models::{
    self, BhzParams, BilayerParams, Dirac2dParams, DiracAmmParams, MassParams, PauliParams,
    RashbaParams, RelativisticParams, TiltedDiracParams, WeylParams,
};
use ladderfan::units::HBAR2_OVER_2ME_MEV_NM2;
use ladderfan::{FieldPoint, Model, Monomial, Settings, Spectrum, Splitting};

/// Rounding allowance for comparing a computed eigenvalue with a closed form evaluated in
/// double precision: the matrix elements themselves carry relative rounding of a few eps
/// (common practice: a small multiple of eps times the energy scale).
pub fn rounding(e: f64, scale: f64) -> f64 {
    64.0 * f64::EPSILON * (e.abs() + scale)
}

/// A closed-form level: energy relative to the reference energy and its Landau index n; for
/// every model of the catalogue except the tilted cone the eigenvector uses orbitals n and
/// n - 1 (n - 2) only, so it is exact in the truncated basis when n is below the cutoff.
#[derive(Debug, Clone, Copy)]
pub struct Exact {
    pub energy: f64,
    pub top_orbital: usize,
}

/// The models of the catalogue (all have closed forms in `ladderfan::closed_form`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kind {
    Schrodinger,
    Pauli,
    Dirac,
    KleinGordon,
    Dirac2dMassless,
    Dirac2dGapped,
    Weyl,
    DiracAmm,
    Tilted,
    Rashba,
    Bilayer,
    Bhz,
}

pub const ALL: [Kind; 12] = [
    Kind::Schrodinger,
    Kind::Pauli,
    Kind::Dirac,
    Kind::KleinGordon,
    Kind::Dirac2dMassless,
    Kind::Dirac2dGapped,
    Kind::Weyl,
    Kind::DiracAmm,
    Kind::Tilted,
    Kind::Rashba,
    Kind::Bilayer,
    Kind::Bhz,
];

/// Invented parameters for each kind (the constructors' invented defaults unless noted).
pub fn model(kind: Kind, charge: f64) -> Model {
    let r = match kind {
        Kind::Schrodinger => models::schrodinger(MassParams {
            mass_ratio: 0.067,
            charge,
        }),
        Kind::Pauli => models::pauli(PauliParams {
            mass_ratio: 0.2,
            g_factor: -0.44,
            charge,
        }),
        Kind::Dirac => models::dirac(RelativisticParams {
            charge,
            ..Default::default()
        }),
        Kind::KleinGordon => models::klein_gordon(RelativisticParams {
            charge,
            ..Default::default()
        }),
        Kind::Dirac2dMassless => models::dirac2d(Dirac2dParams {
            charge,
            ..Default::default()
        }),
        Kind::Dirac2dGapped => models::dirac2d(Dirac2dParams {
            mass_mev: 12.5,
            valley: ladderfan::models::Valley::Minus,
            charge,
            ..Default::default()
        }),
        Kind::Weyl => models::weyl(WeylParams {
            charge,
            ..Default::default()
        }),
        Kind::DiracAmm => models::dirac_amm(DiracAmmParams {
            charge,
            ..Default::default()
        }),
        Kind::Tilted => models::tilted_dirac2d(TiltedDiracParams {
            charge,
            ..Default::default()
        }),
        Kind::Rashba => models::rashba(RashbaParams {
            charge,
            ..Default::default()
        }),
        Kind::Bilayer => models::bilayer(BilayerParams {
            charge,
            ..Default::default()
        }),
        Kind::Bhz => models::bhz(BhzParams {
            charge,
            ..Default::default()
        }),
    };
    r.expect("invented parameters are valid")
}

/// Closed-form levels (relative to the model's reference energy) for Landau indices up to
/// `n_max`, each listed once per state (multiplicity), from `ladderfan::closed_form`.
pub fn exact_levels(_kind: Kind, m: &Model, p: FieldPoint, n_max: usize) -> Vec<Exact> {
    let list =
        models::expected_levels(m, p, m.reference_energy(), n_max).expect("closed form exists");
    let mut out = Vec::new();
    for l in list {
        for _ in 0..l.multiplicity {
            out.push(Exact {
                energy: l.energy,
                top_orbital: l.n.max(0) as usize,
            });
        }
    }
    out
}

/// Whether a closed-form level is exactly representable at this cutoff: its Landau index plus
/// 3 is below the cutoff, for the models whose eigenvectors are finite (exact J). Never for
/// the tilted cone, whose eigenvectors are squeezed states spread over all orbitals (Goerbig
/// et al., Phys. Rev. B 78, 045415 (2008)): its levels converge gradually, which the
/// automatic-cutoff test covers.
pub fn complete(kind: Kind, top_orbital: usize, cutoff: usize) -> bool {
    match kind {
        Kind::Tilted => false,
        _ => top_orbital + 3 <= cutoff,
    }
}

pub fn field_for(kind: Kind, magnitude: f64) -> f64 {
    match kind {
        // natural units: B in units of B_c
        Kind::Dirac | Kind::KleinGordon | Kind::DiracAmm => magnitude * 1e-2,
        _ => magnitude,
    }
}

pub fn kz_for(kind: Kind, x: f64) -> f64 {
    match kind {
        Kind::Dirac | Kind::KleinGordon | Kind::DiracAmm => 0.05 * x,
        Kind::Schrodinger | Kind::Pauli | Kind::Weyl => 0.02 * x,
        _ => 0.0,
    }
}

/// Every level is within its bound (and within its Kato-Temple bound, when reported) of the
/// nearest closed-form value; returns how many levels had a bound below the tolerance.
pub fn check_bounds_contain(spec: &Spectrum, exact: &[Exact]) -> usize {
    let mut converged = 0;
    for l in &spec.levels {
        let nearest = exact
            .iter()
            .map(|x| x.energy)
            .min_by(|a, b| (a - l.energy).abs().total_cmp(&(b - l.energy).abs()))
            .expect("closed-form list is non-empty");
        let err = (l.energy - nearest).abs();
        let slack = rounding(nearest, spec.energy_scale);
        assert!(
            err <= l.bound + slack,
            "level {:.15e} (sector {:?}, n {}) is {err:e} from the closed form {nearest:.15e}, outside its bound {:e}",
            l.energy,
            l.sector,
            l.orbital,
            l.bound
        );
        if let Some(kt) = l.kato_temple {
            assert!(
                err <= kt + slack,
                "level {:.15e}: error {err:e} exceeds its Kato-Temple bound {kt:e} (residual bound {:e})",
                l.energy,
                l.bound
            );
        }
        if l.is_converged() {
            converged += 1;
        }
    }
    converged
}

/// Artefacts flagged, genuine levels not: at every distinct closed-form energy there are at
/// most as many converged levels as its multiplicity (an artefact at a physical energy would
/// add one), and exactly as many when its states all live below orbital N - 2 (a flagged
/// genuine level would remove one).
pub fn check_flags(kind: Kind, spec: &Spectrum, exact: &[Exact]) {
    let n = spec.cutoff;
    let tol = |e: f64| 1e-7 * e.abs().max(spec.energy_scale);
    let mut done: Vec<f64> = Vec::new();
    for x in exact {
        if done.iter().any(|&d| (d - x.energy).abs() <= tol(x.energy)) {
            continue;
        }
        done.push(x.energy);
        let same: Vec<&Exact> = exact
            .iter()
            .filter(|y| (y.energy - x.energy).abs() <= tol(x.energy))
            .collect();
        let found: Vec<_> = spec
            .levels
            .iter()
            .filter(|l| l.is_converged() && (l.energy - x.energy).abs() <= tol(x.energy))
            .collect();
        // never more converged levels than physical states: an artefact at a physical energy
        // must be flagged
        assert!(
            found.len() <= same.len(),
            "{kind:?} cutoff {n}: energy {:.12e} has multiplicity {} but {} converged levels",
            x.energy,
            same.len(),
            found.len()
        );
        if same.iter().any(|y| !complete(kind, y.top_orbital, n)) {
            continue;
        }
        assert_eq!(
            found.len(),
            same.len(),
            "{kind:?} cutoff {n} splitting: energy {:.12e} has multiplicity {} but {} converged levels: {:?}",
            x.energy,
            same.len(),
            found.len(),
            spec.levels
                .iter()
                .filter(|l| (l.energy - x.energy).abs() <= tol(x.energy))
                .map(|l| (l.bound, l.leakage, l.orbital, l.top_weight))
                .collect::<Vec<_>>()
        );
    }
}

pub fn solve(
    kind: Kind,
    charge: f64,
    point: FieldPoint,
    cutoff: usize,
    split: Splitting,
) -> (Model, Spectrum) {
    let m = model(kind, charge);
    let settings = Settings {
        splitting: split,
        ..Settings::with_cutoff(cutoff)
    };
    let s = Spectrum::compute(&m, point, &settings).expect("solve succeeds");
    (m, s)
}

/// Schrodinger (m = 0.067 m_e) plus an invented cubic-anisotropy term lambda (kx^4 + ky^4),
/// lambda = 2e4 meV nm^4 (comparable to hbar omega_c l_B^4 at 5 T): no exact J, so levels
/// converge only gradually with the cutoff.
pub fn anharmonic() -> Model {
    let c = HBAR2_OVER_2ME_MEV_NM2 / 0.067;
    let one = identity(1);
    Model::builder("anharmonic-test", 1)
        .charge(-1.0)
        .term("kx^2", c, one.clone(), Monomial::new(2, 0, 0))
        .term("ky^2", c, one.clone(), Monomial::new(0, 2, 0))
        .term("kx^4", 2.0e4, one.clone(), Monomial::new(4, 0, 0))
        .term("ky^4", 2.0e4, one, Monomial::new(0, 4, 0))
        .build()
        .expect("valid model")
}
