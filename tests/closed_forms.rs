//! Closed forms (src/models/, each model file's formula with its source in its doc comment) against
//! exact diagonalization of the truncated ladder matrix, for every built-in and catalogue model,
//! at three fields, both charge signs and both field directions.
//!
//! Two numerical oracles:
//! 1. an independent one: the full dense matrix `LadderHamiltonian::dense(N)` diagonalized with
//!    nalgebra's `SymmetricEigen` (no sectors, no refinement); cutoff artefacts (states living on
//!    the top orbitals, e.g. the second zero level of the massless 2D Dirac model) are removed by
//!    counting, in every cluster of equal eigenvalues, the total weight on the top orbitals;
//! 2. the library's `Spectrum::compute`, keeping its converged levels.
//!
//! Inside a window of low levels (chosen from the closed-form list with Landau index <= n_win,
//! far below the cutoff) the multisets of energies must agree to 1e-10 of the level-spacing
//! scale of the model.

use ladderfan::closed_form::{cyclotron_energy_mev, dirac_energy_mev};
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::model::SpectrumForm;
use ladderfan::models::{
    self, BhzParams, BilayerParams, Chirality, Dirac2dParams, DiracAmmParams, MassParams,
    PauliParams, RashbaParams, RelativisticParams, Valley,
};
use ladderfan::units::Units;
use ladderfan::{FieldPoint, Model, Settings, Spectrum};
use nalgebra::SymmetricEigen;

/// Agreement required, relative to the level-spacing scale.
const TOL: f64 = 1e-10;

fn ok<T>(r: ladderfan::Result<T>) -> T {
    match r {
        Ok(v) => v,
        Err(e) => panic!("{e}"),
    }
}

/// Which energy scale the tolerance refers to.
#[derive(Clone, Copy)]
enum Scale {
    /// hbar omega_c = hbar |qB| / m* (lab units, parameter `mass_ratio`).
    Cyclotron,
    /// sqrt(2) hbar v / l_B (lab units, parameter `velocity_m_per_s`) times a factor.
    Dirac(f64),
    /// Natural units: hbar |qB| c^2 / (m c^2) = |q b| / mass.
    NaturalCyclotron,
    /// BHZ: 2 |B| / l_B^2.
    Bhz,
}

fn scale_of(model: &Model, point: FieldPoint, s: Scale) -> f64 {
    let q = model.charge();
    let p = |k: &str| model.param(k).unwrap_or(f64::NAN);
    match s {
        Scale::Cyclotron => cyclotron_energy_mev(p("mass_ratio"), point.field, q),
        Scale::Dirac(f) => f * dirac_energy_mev(p("velocity_m_per_s"), point.field, q),
        Scale::NaturalCyclotron => (q * point.field).abs() / p("mass"),
        Scale::Bhz => {
            let lb = Units::Lab.magnetic_length(point.field, q);
            2.0 * p("b_mev_nm2").abs() / (lb * lb)
        }
    }
}

/// Energies in the window [lo, hi] (relative to the model's reference energy) of the dense
/// truncated problem, with the cutoff artefacts removed: eigenvalues are grouped into clusters
/// closer than `merge`; a cluster of k values whose eigenvectors carry total weight w on the
/// top quarter of the orbitals holds k - w true levels (w must be an integer to 1e-6, otherwise
/// the test is ambiguous and fails).
fn dense_levels(
    model: &Model,
    point: FieldPoint,
    cutoff: usize,
    merge: f64,
    (lo, hi): (f64, f64),
) -> Vec<f64> {
    let (assembly_ref, kg) = match model.form() {
        SpectrumForm::Direct => (model.reference_energy(), None),
        SpectrumForm::KleinGordon { rest_energy } => (0.0, Some(rest_energy)),
    };
    let h = ok(LadderHamiltonian::assemble(model, point, assembly_ref));
    let d = h.dim;
    let eig = SymmetricEigen::new(h.dense(cutoff));
    let top = (cutoff / 4).max(2 * h.band + 1);
    let first_top = (cutoff - top) * d;
    let mut pairs: Vec<(f64, f64)> = Vec::new();
    for i in 0..eig.eigenvalues.len() {
        let v = eig.eigenvectors.column(i);
        let w: f64 = (first_top..v.len()).map(|r| v[r].norm_sqr()).sum();
        let lambda = eig.eigenvalues[i];
        match kg {
            None => pairs.push((lambda, w)),
            Some(m) => {
                // E = ± sqrt(M^2 + 2 M lambda) relative to M, both branches
                let root = (m * m + 2.0 * m * lambda).sqrt();
                pairs.push((2.0 * m * lambda / (root + m), w));
                pairs.push((-(root + m), w));
            }
        }
    }
    pairs.retain(|p| p.0 >= lo && p.0 <= hi);
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out = Vec::new();
    let mut i = 0;
    while i < pairs.len() {
        let mut j = i + 1;
        while j < pairs.len() && pairs[j].0 - pairs[j - 1].0 < merge {
            j += 1;
        }
        let w: f64 = pairs[i..j].iter().map(|p| p.1).sum();
        let spurious = w.round();
        assert!(
            (w - spurious).abs() < 1e-6,
            "{}: cluster at {} of {} values has fractional top weight {w}; raise the cutoff",
            model.name(),
            pairs[i].0,
            j - i
        );
        let keep = (j - i) - spurious as usize;
        let mean = pairs[i..j].iter().map(|p| p.0).sum::<f64>() / (j - i) as f64;
        out.extend(std::iter::repeat(mean).take(keep));
        i = j;
    }
    out
}

/// Converged levels of the library solver (relative to the model's reference energy).
fn solver_levels(model: &Model, point: FieldPoint, cutoff: usize) -> Vec<f64> {
    let spec = ok(Spectrum::compute(
        model,
        point,
        &Settings::with_cutoff(cutoff),
    ));
    let mut e: Vec<f64> = spec.converged().map(|l| l.energy).collect();
    e.sort_by(f64::total_cmp);
    e
}

struct Case {
    what: &'static str,
    model: Model,
    fields: [f64; 3],
    kz: f64,
    cutoff: usize,
    /// Levels with Landau index <= n_win define the window.
    n_win: i64,
    scale: Scale,
}

/// Run one case at all fields and charge/field signs; returns the largest deviation / scale.
fn run(case: &Case) -> f64 {
    let mut worst: f64 = 0.0;
    for field in case.fields {
        for (q, sb) in [(-1.0, 1.0), (1.0, 1.0), (-1.0, -1.0), (1.0, -1.0)] {
            let model = ok(case.model.with_charge(q * case.model.charge().abs()));
            let point = FieldPoint {
                field: sb * field,
                kz: case.kz,
            };
            let scale = scale_of(&model, point, case.scale);
            assert!(
                scale.is_finite() && scale > 0.0,
                "{}: scale {scale}",
                case.what
            );
            let max_n = case.cutoff / 2;
            let expected =
                match models::expected_levels(&model, point, model.reference_energy(), max_n) {
                    Some(l) => l,
                    None => panic!("{}: no closed form for {}", case.what, model.name()),
                };
            // window from the low levels, then moved off any closed-form value
            let low: Vec<f64> = expected
                .iter()
                .filter(|l| l.n <= case.n_win)
                .map(|l| l.energy)
                .collect();
            let margin = 1e-3 * scale;
            let mut lo = low.iter().copied().fold(f64::INFINITY, f64::min) - margin;
            let mut hi = low.iter().copied().fold(f64::NEG_INFINITY, f64::max) + margin;
            while expected.iter().any(|l| (l.energy - lo).abs() < margin) {
                lo -= margin;
            }
            while expected.iter().any(|l| (l.energy - hi).abs() < margin) {
                hi += margin;
            }
            // the list must be complete in the window: its last Landau index lies outside
            for l in expected.iter().filter(|l| l.n == max_n as i64) {
                assert!(
                    l.energy < lo || l.energy > hi,
                    "{}: window not closed ({} inside)",
                    case.what,
                    l.label
                );
            }
            let mut want: Vec<f64> = Vec::new();
            for l in expected.iter().filter(|l| l.energy >= lo && l.energy <= hi) {
                for _ in 0..l.multiplicity {
                    want.push(l.energy);
                }
            }
            want.sort_by(f64::total_cmp);
            assert!(want.len() >= 4, "{}: only {} levels", case.what, want.len());
            let in_win = |v: Vec<f64>| -> Vec<f64> {
                v.into_iter().filter(|e| *e >= lo && *e <= hi).collect()
            };
            let dense = dense_levels(&model, point, case.cutoff, 1e-7 * scale, (lo, hi));
            let solver = in_win(solver_levels(&model, point, case.cutoff));
            for (oracle, got) in [("dense", &dense), ("solver", &solver)] {
                assert_eq!(
                    got.len(),
                    want.len(),
                    "{} ({oracle}) q={q} B={} kz={}: {} levels in [{lo}, {hi}], closed form {}\n got {got:?}\n want {want:?}",
                    case.what,
                    point.field,
                    point.kz,
                    got.len(),
                    want.len()
                );
                for (g, w) in got.iter().zip(&want) {
                    let dev = (g - w).abs() / scale;
                    worst = worst.max(dev);
                    assert!(
                        dev <= TOL,
                        "{} ({oracle}) q={q} B={}: level {g} vs closed form {w}: {dev:e} of the scale {scale}",
                        case.what,
                        point.field
                    );
                }
            }
        }
    }
    eprintln!(
        "{:<34} max |E_num - E_closed| / scale = {worst:.2e}",
        case.what
    );
    worst
}

const LAB_FIELDS: [f64; 3] = [0.7, 3.0, 11.0];
const NATURAL_FIELDS: [f64; 3] = [0.04, 0.3, 1.1];

#[test]
fn schrodinger_and_pauli_match_landau_levels() {
    // invented parameters
    let s = ok(models::schrodinger(MassParams {
        mass_ratio: 0.067,
        charge: -1.0,
    }));
    run(&Case {
        what: "schrodinger m*=0.067",
        model: s,
        fields: LAB_FIELDS,
        kz: 0.03,
        cutoff: 40,
        n_win: 8,
        scale: Scale::Cyclotron,
    });
    for g in [2.0023, -0.44, 15.0] {
        let p = ok(models::pauli(PauliParams {
            mass_ratio: 0.2,
            g_factor: g,
            charge: -1.0,
        }));
        run(&Case {
            what: "pauli m*=0.2",
            model: p,
            fields: LAB_FIELDS,
            kz: 0.03,
            cutoff: 60,
            n_win: 8,
            scale: Scale::Cyclotron,
        });
    }
}

#[test]
fn dirac_and_klein_gordon_match_rabi_levels() {
    for (mass, speed, kz) in [(1.0, 1.0, 0.0), (1.0, 1.0, 0.3), (2.0, 0.5, -0.2)] {
        let p = RelativisticParams {
            mass,
            speed,
            charge: -1.0,
        };
        run(&Case {
            what: "dirac 3+1",
            model: ok(models::dirac(p)),
            fields: NATURAL_FIELDS,
            kz,
            cutoff: 40,
            n_win: 6,
            scale: Scale::NaturalCyclotron,
        });
        run(&Case {
            what: "klein-gordon",
            model: ok(models::klein_gordon(p)),
            fields: NATURAL_FIELDS,
            kz,
            cutoff: 40,
            n_win: 6,
            scale: Scale::NaturalCyclotron,
        });
    }
}

#[test]
fn dirac2d_and_weyl_match_mcclure_levels() {
    for (mass, valley) in [
        (0.0, Valley::Plus),
        (0.0, Valley::Minus),
        (25.0, Valley::Plus),
        (-12.0, Valley::Minus),
    ] {
        run(&Case {
            what: "dirac2d",
            model: ok(models::dirac2d(Dirac2dParams {
                velocity_m_per_s: 1.0e6,
                mass_mev: mass,
                valley,
                charge: -1.0,
            })),
            fields: LAB_FIELDS,
            kz: 0.0,
            cutoff: 40,
            n_win: 6,
            scale: Scale::Dirac(1.0),
        });
    }
    for (chirality, kz) in [
        (Chirality::Plus, 0.02),
        (Chirality::Minus, 0.02),
        (Chirality::Plus, -0.05),
    ] {
        run(&Case {
            what: "weyl",
            model: ok(models::weyl(models::WeylParams {
                velocity_m_per_s: 3.0e5,
                chirality,
                charge: -1.0,
            })),
            fields: LAB_FIELDS,
            kz,
            cutoff: 40,
            n_win: 6,
            scale: Scale::Dirac(1.0),
        });
    }
}

#[test]
fn dirac_with_anomalous_moment_matches_derived_levels() {
    for (kappa, kz) in [(0.05, 0.0), (0.05, 0.25), (-0.3, 0.1), (1.159_652e-3, 0.0)] {
        run(&Case {
            what: "dirac-amm",
            model: ok(models::dirac_amm(DiracAmmParams {
                mass: 1.0,
                speed: 1.0,
                anomaly_kappa: kappa,
                charge: -1.0,
            })),
            fields: NATURAL_FIELDS,
            kz,
            cutoff: 40,
            n_win: 6,
            scale: Scale::NaturalCyclotron,
        });
    }
}

#[test]
fn tilted_cone_matches_goerbig_scaling() {
    for (w, valley) in [
        (0.4e5, Valley::Plus),
        (-0.3e5, Valley::Minus),
        (0.6e5, Valley::Plus),
    ] {
        let p = models::TiltedDiracParams {
            velocity_m_per_s: 1.0e5,
            tilt_velocity_m_per_s: w,
            valley,
            charge: -1.0,
        };
        let beta: f64 = w / 1.0e5;
        run(&Case {
            what: "tilted-dirac2d",
            model: ok(models::tilted_dirac2d(p)),
            fields: LAB_FIELDS,
            kz: 0.0,
            cutoff: 160,
            n_win: 5,
            scale: Scale::Dirac((1.0 - beta * beta).powf(0.75)),
        });
    }
}

#[test]
fn rashba_bilayer_and_bhz_match_their_closed_forms() {
    for (alpha, g) in [(20.0, -8.0), (5.0, 2.0), (40.0, 0.0)] {
        run(&Case {
            what: "rashba",
            model: ok(models::rashba(RashbaParams {
                mass_ratio: 0.05,
                rashba_mev_nm: alpha,
                g_factor: g,
                charge: -1.0,
            })),
            fields: LAB_FIELDS,
            kz: 0.0,
            cutoff: 80,
            n_win: 6,
            scale: Scale::Cyclotron,
        });
    }
    for valley in [Valley::Plus, Valley::Minus] {
        run(&Case {
            what: "bilayer",
            model: ok(models::bilayer(BilayerParams {
                mass_ratio: 0.035,
                valley,
                charge: -1.0,
            })),
            fields: LAB_FIELDS,
            kz: 0.0,
            cutoff: 60,
            n_win: 6,
            scale: Scale::Cyclotron,
        });
    }
    // invented parameters: inverted (M B > 0) and normal (M B < 0) regimes, with Zeeman terms
    for (m, ge, gh) in [(-10.0, 20.0, 2.0), (8.0, 0.0, 0.0), (-10.0, -5.0, 3.0)] {
        run(&Case {
            what: "bhz",
            model: ok(models::bhz(BhzParams {
                m_mev: m,
                g_e: ge,
                g_h: gh,
                ..BhzParams::default()
            })),
            fields: LAB_FIELDS,
            kz: 0.0,
            cutoff: 60,
            n_win: 5,
            scale: Scale::Bhz,
        });
    }
}

#[test]
fn unpaired_levels_are_counted_once_per_block() {
    // BHZ: exactly two unpaired levels (one per spin block), bilayer: exactly two zero levels.
    let m = ok(models::bhz(BhzParams::default()));
    let l = models::expected_levels(&m, FieldPoint::field(2.0), 0.0, 10).unwrap_or_default();
    assert_eq!(l.iter().filter(|x| x.s == 0).count(), 2);
    let b = ok(models::bilayer(BilayerParams::default()));
    let l = models::expected_levels(&b, FieldPoint::field(2.0), 0.0, 10).unwrap_or_default();
    let zeros: Vec<_> = l.iter().filter(|x| x.energy == 0.0).collect();
    assert_eq!(zeros.len(), 2);
    // the same numbers from the dense oracle at 2 T (the two top-orbital zero modes removed)
    let pt = FieldPoint::field(2.0);
    let s = cyclotron_energy_mev(0.035, 2.0, -1.0);
    let dense = dense_levels(&b, pt, 50, 1e-7 * s, (-0.5 * s, 0.5 * s));
    assert_eq!(dense.iter().filter(|e| e.abs() < 1e-9 * s).count(), 2);
}

#[test]
fn closed_form_follows_the_typed_origin_not_the_name() {
    // The typed origin finds the closed form: the registry returns exactly the model file's
    // typed function's list. A model rebuilt term by term (as a model file with [[term]] would
    // describe it) has no origin, so it gets no closed form even under a built-in's name.
    let orig = ok(models::rashba(RashbaParams::default()));
    let pt = FieldPoint::field(-2.5);
    let typed = ok(models::rashba::levels(RashbaParams::default(), pt, 12));
    let via = models::expected_levels(&orig, pt, 0.0, 12).unwrap_or_default();
    assert_eq!(typed, via);
    assert_eq!(typed.len(), 25);
    let mut b = Model::builder(orig.name(), orig.dim())
        .charge(orig.charge())
        .units(orig.units());
    for (k, v) in orig.params() {
        b = b.param(k, *v);
    }
    for t in orig.terms() {
        b = b.term_complex(&t.label, t.coefficient, t.matrix.clone(), t.monomial);
    }
    let rebuilt = ok(b.build());
    assert!(models::expected_levels(&rebuilt, pt, 0.0, 12).is_none());
    // a model named like a built-in with other units and terms gets none either
    let named_dirac = ok(Model::builder("dirac", 1)
        .units(Units::Lab)
        .param("mass", 1.0)
        .param("speed", 1.0)
        .term(
            "x",
            1.0,
            ladderfan::matrix::identity(1),
            ladderfan::Monomial::ONE,
        )
        .build());
    assert!(models::expected_levels(&named_dirac, pt, 0.0, 3).is_none());
}

#[test]
fn solver_keeps_dirac_levels_at_one_tesla_to_1e_10_of_the_spacing() {
    // b = 1 T / B_c: hbar omega_c = b m c^2 ~ 2.3e-10 m c^2. Plain double precision of the
    // eigenvalues (~1e-16 m c^2) would be ~1e-6 of the spacing; the library refines levels near
    // the reference energy. Closed form: Rabi 1928 / Johnson & Lippmann 1949, cancellation-free.
    let b = 1.0 / ladderfan::units::ELECTRON_CRITICAL_FIELD_T;
    let model = ok(models::dirac(RelativisticParams::default()));
    for q in [-1.0, 1.0] {
        let model = ok(model.with_charge(q));
        let pt = FieldPoint::field(b);
        let spec = ok(Spectrum::compute(&model, pt, &Settings::with_cutoff(20)));
        let want = models::expected_levels(&model, pt, 1.0, 19).unwrap_or_default();
        let mut expanded: Vec<f64> = Vec::new();
        for l in want.iter().filter(|l| l.s > 0 && l.n <= 5) {
            for _ in 0..l.multiplicity {
                expanded.push(l.energy);
            }
        }
        expanded.sort_by(f64::total_cmp);
        let got: Vec<f64> = spec
            .converged()
            .map(|l| l.energy)
            .filter(|e| *e > -0.5 && *e < 5.5 * b)
            .collect();
        assert_eq!(got.len(), expanded.len(), "{got:?} vs {expanded:?}");
        let mut worst: f64 = 0.0;
        for (g, w) in got.iter().zip(&expanded) {
            worst = worst.max((g - w).abs() / b);
        }
        eprintln!("dirac at 1 T, q={q}: max deviation / hbar omega_c = {worst:.2e}");
        assert!(worst <= TOL, "{worst:e}");
    }
}
