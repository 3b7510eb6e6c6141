//! Core engine: sectors vs the dense oracle, sign conventions of the special lowest levels,
//! thread-count independence, and the precision near the rest energy.

mod common;

use common::*;
use ladderfan::matrix::{identity, pauli};
use ladderfan::models::{
    self, Chirality, Dirac2dParams, MassParams, PauliParams, RelativisticParams, Valley, WeylParams,
};
use ladderfan::sectors::Conservation;
use ladderfan::units::{ELECTRON_CRITICAL_FIELD_T, ELECTRON_REST_ENERGY_MEV};
use ladderfan::{FieldPoint, Model, Monomial, Settings, Spectrum};

fn all_builtins(charge: f64) -> Vec<Model> {
    vec![
        models::schrodinger(MassParams {
            mass_ratio: 0.067,
            charge,
        })
        .unwrap(),
        models::pauli(PauliParams {
            mass_ratio: 0.2,
            g_factor: -4.0,
            charge,
        })
        .unwrap(),
        models::dirac(RelativisticParams {
            charge,
            ..Default::default()
        })
        .unwrap(),
        models::klein_gordon(RelativisticParams {
            charge,
            ..Default::default()
        })
        .unwrap(),
        models::dirac2d(Dirac2dParams {
            mass_mev: 12.0,
            charge,
            ..Default::default()
        })
        .unwrap(),
        models::weyl(WeylParams {
            charge,
            ..Default::default()
        })
        .unwrap(),
    ]
}

fn point_for(model: &Model) -> FieldPoint {
    match model.units() {
        ladderfan::units::Units::Natural => FieldPoint {
            field: 0.3,
            kz: 0.4,
        },
        ladderfan::units::Units::Lab => FieldPoint {
            field: 7.0,
            kz: 0.05,
        },
    }
}

#[test]
fn split_spectrum_equals_the_dense_unsplit_one_for_every_builtin_and_both_charges() {
    for q in [-1.0, 1.0] {
        for m in all_builtins(q) {
            let p = point_for(&m);
            let (a, b) = split_and_unsplit(&m, p, 24);
            assert_eq!(a.len(), b.len(), "{}", m.name());
            let scale = a
                .iter()
                .chain(&b)
                .fold(0.0f64, |x, y| x.max(y.abs()))
                .max(1.0);
            for (x, y) in a.iter().zip(&b) {
                assert!(
                    (x - y).abs() <= 1e-11 * scale,
                    "{} q={q}: {x} vs {y}",
                    m.name()
                );
            }
        }
    }
}

#[test]
fn warping_term_is_detected_as_j_mod_3_and_its_sectors_reproduce_the_dense_spectrum() {
    let m = warped();
    let p = FieldPoint::field(3.0);
    let s = Spectrum::compute(&m, p, &Settings::with_cutoff(30)).unwrap();
    assert_eq!(s.symmetry.classes.len(), 1);
    assert_eq!(
        s.symmetry.classes[0].conservation,
        Conservation::Modulo(3),
        "{}",
        s.symmetry.describe()
    );
    let (a, b) = split_and_unsplit(&m, p, 30);
    let scale = b.iter().fold(0.0f64, |x, y| x.max(y.abs()));
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).abs() <= 1e-11 * scale);
    }
}

#[test]
fn dirac_3d_is_split_into_sectors_of_at_most_four_states() {
    let m = models::dirac(RelativisticParams::default()).unwrap();
    let s = Spectrum::compute(
        &m,
        FieldPoint {
            field: 0.1,
            kz: 0.3,
        },
        &Settings::with_cutoff(50),
    )
    .unwrap();
    assert!(s.symmetry.is_exact(), "{}", s.symmetry.describe());
    assert_eq!(s.symmetry.classes.len(), 1);
    // at kz = 0 the 4-component sectors decouple further into two classes of 2
    let s0 = Spectrum::compute(
        &m,
        FieldPoint {
            field: 0.1,
            kz: 0.0,
        },
        &Settings::with_cutoff(50),
    )
    .unwrap();
    assert_eq!(s0.symmetry.classes.len(), 2, "{}", s0.symmetry.describe());
}

/// The lowest converged level of massive 2D Dirac sits at tau sign(qB) Delta (the unpaired n = 0
/// level); derivation in src/models/dirac2d.rs, McClure (1956) for the massless limit.
#[test]
fn dirac2d_unpaired_level_follows_the_sign_of_qb_and_the_valley() {
    let delta = 15.0;
    for valley in [Valley::Plus, Valley::Minus] {
        for q in [-1.0, 1.0] {
            for b in [-2.0, 2.0] {
                let m = models::dirac2d(Dirac2dParams {
                    mass_mev: delta,
                    valley,
                    charge: q,
                    ..Default::default()
                })
                .unwrap();
                let s = Spectrum::compute(&m, FieldPoint::field(b), &Settings::with_cutoff(40))
                    .unwrap();
                let expected = valley.sign() * (q * b).signum() * delta;
                let inside: Vec<_> = s
                    .converged()
                    .filter(|l| l.energy.abs() < delta + 1.0)
                    .collect();
                assert_eq!(inside.len(), 1, "valley {valley:?} q {q} B {b}: {inside:?}");
                assert!((inside[0].energy - expected).abs() < 1e-9 * delta);
                assert_eq!(inside[0].orbital, 0);
                // the artefact at the opposite energy is present and flagged
                assert!(s
                    .levels
                    .iter()
                    .any(|l| !l.is_converged() && (l.energy + expected).abs() < 1e-6));
            }
        }
    }
}

/// Chiral level of a Weyl node: E_0 = chi sign(qB) hbar v kz (derivation in src/models/weyl.rs).
#[test]
fn weyl_chiral_level_follows_chirality_and_the_sign_of_qb() {
    let kz = 0.02;
    for chi in [Chirality::Plus, Chirality::Minus] {
        for q in [-1.0, 1.0] {
            for b in [-5.0, 5.0] {
                let m = models::weyl(WeylParams {
                    chirality: chi,
                    charge: q,
                    ..Default::default()
                })
                .unwrap();
                let hv = ladderfan::units::hbar_v_mev_nm(3.0e5);
                let s =
                    Spectrum::compute(&m, FieldPoint { field: b, kz }, &Settings::with_cutoff(40))
                        .unwrap();
                let expected = chi.sign() * (q * b).signum() * hv * kz;
                let chiral: Vec<_> = s
                    .converged()
                    .filter(|l| l.energy.abs() < hv * kz * 1.5)
                    .collect();
                assert_eq!(chiral.len(), 1, "chi {chi:?} q {q} B {b}");
                assert!((chiral[0].energy - expected).abs() < 1e-9 * hv * kz);
            }
        }
    }
}

/// Spin of the Dirac ground level: an electron (q < 0) in B > 0 has its nu = 0 level spin down
/// (moment along B), a positron spin up; flipping B flips it (Johnson & Lippmann 1949).
#[test]
fn dirac_ground_level_spin_flips_with_the_sign_of_qb() {
    for (q, b, spin_down) in [
        (-1.0, 0.2, true),
        (1.0, 0.2, false),
        (-1.0, -0.2, false),
        (1.0, -0.2, true),
    ] {
        let m = models::dirac(RelativisticParams {
            charge: q,
            ..Default::default()
        })
        .unwrap();
        let settings = Settings {
            weights: ladderfan::Weights::Compute,
            ..Settings::with_cutoff(30)
        };
        let s = Spectrum::compute(&m, FieldPoint::field(b), &settings).unwrap();
        let ground: Vec<_> = s.converged().filter(|l| l.energy.abs() < 1e-9).collect();
        assert_eq!(ground.len(), 1, "q {q} B {b}");
        let i = s.levels.iter().position(|l| l == ground[0]).unwrap();
        let w = s.weights_of(i);
        let down = w[1] + w[3];
        assert_eq!(down > 0.99, spin_down, "q {q} B {b} weights {w:?}");
    }
}

#[test]
fn results_are_identical_whatever_the_thread_count() {
    let m = models::dirac(RelativisticParams::default()).unwrap();
    let p = FieldPoint {
        field: 0.05,
        kz: 0.1,
    };
    let run = |threads| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| Spectrum::compute(&m, p, &Settings::with_cutoff(3000)).unwrap())
    };
    let (a, b) = (run(1), run(2));
    assert_eq!(a.energies(), b.energies());
    assert_eq!(a.levels, b.levels);
}

/// At B = 1 T the Dirac electron's levels minus m c^2 differ from the Pauli (g = 2) levels by the
/// leading relativistic correction -(nu hbar omega_c)^2 / (2 m c^2) (expansion of the
/// Johnson-Lippmann formula, common practice), to 1 %.
#[test]
fn dirac_minus_pauli_is_the_leading_relativistic_correction_at_one_tesla() {
    let b_nat = 1.0 / ELECTRON_CRITICAL_FIELD_T;
    let dirac = models::dirac(RelativisticParams::default()).unwrap();
    let d =
        Spectrum::compute(&dirac, FieldPoint::field(b_nat), &Settings::with_cutoff(60)).unwrap();
    let pauli = models::pauli(PauliParams {
        mass_ratio: 1.0,
        g_factor: 2.0,
        charge: -1.0,
    })
    .unwrap();
    let p = Spectrum::compute(&pauli, FieldPoint::field(1.0), &Settings::with_cutoff(60)).unwrap();
    let mc2 = ELECTRON_REST_ENERGY_MEV;
    // positive-energy converged Dirac levels in meV above m c^2, and converged Pauli levels
    let dl: Vec<f64> = d
        .converged()
        .filter(|l| l.energy > -0.5)
        .map(|l| l.energy * mc2)
        .collect();
    let pl: Vec<f64> = p.converged().map(|l| l.energy).collect();
    let hw = 2.0 * ladderfan::units::BOHR_MAGNETON_MEV_PER_T; // hbar omega_c at 1 T
    let mut checked = 0;
    for (i, (e_d, e_p)) in dl.iter().zip(&pl).enumerate().take(40) {
        let nu = (e_p / hw).round();
        assert!((e_p - nu * hw).abs() < 1e-12 * hw, "Pauli level {i}: {e_p}");
        if nu == 0.0 {
            assert!(e_d.abs() < 1e-13 * hw);
            continue;
        }
        let correction = -(nu * hw).powi(2) / (2.0 * mc2);
        let diff = e_d - e_p;
        assert!(
            ((diff - correction) / correction).abs() < 0.01,
            "nu {nu}: {diff:e} vs {correction:e}"
        );
        checked += 1;
    }
    assert!(checked >= 30);
}

#[test]
fn assembled_matrix_is_hermitian_and_truncation_is_a_principal_submatrix() {
    let m = warped();
    let h = ladderfan::hamiltonian::LadderHamiltonian::assemble(&m, FieldPoint::field(2.0), 0.0)
        .unwrap();
    let big = h.dense(20);
    let small = h.dense(15);
    assert!((&big - big.adjoint())
        .iter()
        .all(|z| z.norm() == 0.0 || z.norm() < 1e-13 * norm1(&big)));
    assert_eq!(big.view((0, 0), (30, 30)), small);
}

#[test]
fn klein_gordon_reduces_to_schrodinger_with_error_of_order_b_squared() {
    // E - m c^2 = (n + 1/2) b - ((n + 1/2) b)^2 / 2 + O(b^3) in natural units (expansion of
    // E^2 = 1 + (2n+1) b, common practice): the deviation from the Schrodinger value scales as b^2.
    let kg = models::klein_gordon(RelativisticParams::default()).unwrap();
    let mut ratios = Vec::new();
    for b in [1e-2, 1e-3, 1e-4] {
        let s = Spectrum::compute(&kg, FieldPoint::field(b), &Settings::with_cutoff(20)).unwrap();
        let lowest = s
            .levels
            .iter()
            .filter(|l| l.branch == ladderfan::levels::Root::Particle)
            .map(|l| l.energy)
            .fold(f64::INFINITY, f64::min);
        let dev = lowest - 0.5 * b;
        assert!(dev < 0.0);
        ratios.push(dev / (b * b));
    }
    for r in &ratios {
        assert!((r + 0.125).abs() < 0.01, "{ratios:?}");
    }
}

#[test]
fn identity_helpers_and_hermiticity_error_name_the_term() {
    let bad = Model::builder("bad", 2)
        .term("ok", 1.0, identity(2), Monomial::ONE)
        .term("half coupling", 1.0, pauli("+").unwrap(), Monomial::KX)
        .build();
    let msg = bad.unwrap_err().to_string();
    assert!(msg.contains("half coupling") && msg.contains("kx"), "{msg}");
}

/// Non-relativistic limit of 3+1 Dirac: E - m c^2 -> nu b (the Pauli g = 2 level nu hbar omega_c in
/// natural units) with an error of order b^2: (E - mc^2 - nu b)/b^2 -> -nu^2/2 (expansion of the
/// Johnson-Lippmann formula, common practice).
#[test]
fn dirac_approaches_pauli_with_an_error_of_order_b_squared() {
    let m = models::dirac(RelativisticParams::default()).unwrap();
    for b in [1e-2, 1e-3, 1e-4] {
        let s = Spectrum::compute(&m, FieldPoint::field(b), &Settings::with_cutoff(40)).unwrap();
        let positive: Vec<f64> = s
            .converged()
            .filter(|l| l.energy > -0.5)
            .map(|l| l.energy)
            .collect();
        // positive[0] is nu = 0, then pairs nu = 1, 1, 2, 2, ...
        for nu in 1..=5usize {
            let e = positive[2 * nu - 1];
            let ratio = (e - nu as f64 * b) / (b * b);
            let expected = -((nu * nu) as f64) / 2.0;
            // next order is +nu^3 b / 2, relative size nu b
            assert!(
                (ratio - expected).abs() <= 2.0 * nu as f64 * b * expected.abs() + 1e-6,
                "b {b} nu {nu}: {ratio}"
            );
        }
    }
}
