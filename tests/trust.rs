//! Trustworthy numbers: bounds contain the closed forms, cutoff artefacts are flagged (also on
//! the unsplit path, which needs the cluster rotation), window completeness, convergence study
//! and the automatic cutoff.
//!
//! Expected values come from `ladderfan::closed_form` (published formulas, each with its
//! source there), never from the solver.

use ladderfan::matrix::identity;
use ladderfan::models::{
    self, BhzParams, BilayerParams, Dirac2dParams, DiracAmmParams, MassParams, PauliParams,
    RashbaParams, RelativisticParams, TiltedDiracParams, WeylParams,
};
use ladderfan::trust::converge::{
    auto, doubling, is_cutoff_artefact, study, AutoSettings, BoundChoice, ExactValues,
    NeededCutoff, ReferenceKind, Selection,
};
use ladderfan::trust::report::{study_csv, study_json, study_svg, CSV_COLUMNS};
use ladderfan::trust::window::{check_spectrum, EnergyWindow};
use ladderfan::units::{hbar_v_mev_nm, Units, HBAR2_OVER_2ME_MEV_NM2};
use ladderfan::{Error, FieldPoint, Model, Monomial, Settings, Spectrum, Splitting};
use proptest::prelude::*;
use proptest::test_runner::{Config, FileFailurePersistence, RngSeed};

/// Rounding allowance for comparing a computed eigenvalue with a closed form evaluated in
/// double precision: the matrix elements themselves carry relative rounding of a few eps
/// (common practice: a small multiple of eps times the energy scale).
fn rounding(e: f64, scale: f64) -> f64 {
    64.0 * f64::EPSILON * (e.abs() + scale)
}

/// A closed-form level: energy relative to the reference energy and its Landau index n; for
/// every model of the catalogue except the tilted cone the eigenvector uses orbitals n and
/// n - 1 (n - 2) only, so it is exact in the truncated basis when n is below the cutoff.
#[derive(Debug, Clone, Copy)]
struct Exact {
    energy: f64,
    top_orbital: usize,
}

/// The models of the catalogue (all have closed forms in `ladderfan::closed_form`).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
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

const ALL: [Kind; 12] = [
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
fn model(kind: Kind, charge: f64) -> Model {
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
fn exact_levels(_kind: Kind, m: &Model, p: FieldPoint, n_max: usize) -> Vec<Exact> {
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
fn complete(kind: Kind, top_orbital: usize, cutoff: usize) -> bool {
    match kind {
        Kind::Tilted => false,
        _ => top_orbital + 3 <= cutoff,
    }
}

fn field_for(kind: Kind, magnitude: f64) -> f64 {
    match kind {
        // natural units: B in units of B_c
        Kind::Dirac | Kind::KleinGordon | Kind::DiracAmm => magnitude * 1e-2,
        _ => magnitude,
    }
}

fn kz_for(kind: Kind, x: f64) -> f64 {
    match kind {
        Kind::Dirac | Kind::KleinGordon | Kind::DiracAmm => 0.05 * x,
        Kind::Schrodinger | Kind::Pauli | Kind::Weyl => 0.02 * x,
        _ => 0.0,
    }
}

/// Every level is within its bound (and within its Kato-Temple bound, when reported) of the
/// nearest closed-form value; returns how many levels had a bound below the tolerance.
fn check_bounds_contain(spec: &Spectrum, exact: &[Exact]) -> usize {
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
fn check_flags(kind: Kind, spec: &Spectrum, exact: &[Exact]) {
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

fn solve(
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

proptest! {
    #![proptest_config(Config {
        cases: 96,
        rng_seed: RngSeed::Fixed(0x7275_7374),
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct("proptest-regressions/trust.txt"))),
        ..Config::default()
    })]

    /// For random fields, charges, kz and models, the closed-form value lies inside the
    /// reported (residual and Kato-Temple) bound of its matched level, and the low levels are
    /// actually converged (so the check is not vacuous).
    #[test]
    fn closed_form_inside_bound(
        k in 0usize..ALL.len(),
        magnitude in 0.3f64..30.0,
        negative_field in any::<bool>(),
        charge in prop_oneof![Just(-1.0f64), Just(1.0), Just(-2.0)],
        kz in -1.0f64..1.0,
        cutoff in 12usize..40,
        off in any::<bool>(),
    ) {
        let kind = ALL[k];
        let field = field_for(kind, magnitude) * if negative_field { -1.0 } else { 1.0 };
        let point = FieldPoint { field, kz: kz_for(kind, kz) };
        let split = if off { Splitting::Off } else { Splitting::Auto };
        let (m, spec) = solve(kind, charge, point, cutoff, split);
        let exact = exact_levels(kind, &m, point, 2 * cutoff + 4);
        let converged = check_bounds_contain(&spec, &exact);
        // every closed-form level well inside the basis is found converged
        let inside = exact.iter().filter(|x| complete(kind, x.top_orbital, cutoff)).count();
        prop_assert!(converged >= inside, "{kind:?}: {converged} converged levels < {inside} complete closed-form levels");
        check_flags(kind, &spec, &exact);
    }
}

/// The massless 2D Dirac model at equal cutoffs has exactly one artefact: a second zero level,
/// flagged, while the genuine n = 0 level and every other complete level are converged —
/// on the split path and on the unsplit path (which needs the cluster rotation).
#[test]
fn massless_dirac_artefact_flagged_on_both_paths() {
    for split in [Splitting::Auto, Splitting::Off] {
        let n = 30;
        let (m, spec) = solve(
            Kind::Dirac2dMassless,
            -1.0,
            FieldPoint::field(2.0),
            n,
            split,
        );
        let scale = spec.energy_scale;
        let zeros: Vec<_> = spec
            .levels
            .iter()
            .filter(|l| l.energy.abs() < 1e-9 * scale)
            .collect();
        assert_eq!(
            zeros.len(),
            2,
            "{split:?}: two zero levels expected (genuine n = 0 and the artefact)"
        );
        let flagged: Vec<_> = zeros.iter().filter(|l| !l.is_converged()).collect();
        assert_eq!(
            flagged.len(),
            1,
            "{split:?}: exactly one zero level must be flagged: {zeros:?}"
        );
        // the flagged one leaks past the cutoff; the genuine one does not
        assert!(
            flagged[0].leakage > 0.1 * scale,
            "{split:?}: artefact leakage {}",
            flagged[0].leakage
        );
        assert!(
            is_cutoff_artefact(flagged[0]),
            "{split:?}: artefact top weight {}",
            flagged[0].top_weight
        );
        // genuine levels: 2 (N - 1) + 1 of them are complete, all converged; the artefact is the rest
        let converged = spec.converged().count();
        assert_eq!(converged, 2 * (n - 1) + 1, "{split:?}");
        assert_eq!(spec.levels.len() - converged, 1, "{split:?}");
        let exact = exact_levels(Kind::Dirac2dMassless, &m, spec.point, 2 * n);
        check_bounds_contain(&spec, &exact);
        check_flags(Kind::Dirac2dMassless, &spec, &exact);
    }
}

/// Artefacts are flagged in every model of the catalogue, on both paths: the number of
/// converged levels at each physical energy equals its multiplicity.
#[test]
fn artefacts_flagged_in_every_model() {
    for kind in ALL {
        for split in [Splitting::Auto, Splitting::Off] {
            for charge in [-1.0, 1.0] {
                let point = FieldPoint {
                    field: field_for(kind, 3.0),
                    kz: kz_for(kind, 0.4),
                };
                let (m, spec) = solve(kind, charge, point, 24, split);
                let exact = exact_levels(kind, &m, point, 60);
                check_bounds_contain(&spec, &exact);
                check_flags(kind, &spec, &exact);
            }
        }
    }
}

/// Gapped 2D Dirac: the artefact sits at the other valley's n = 0 energy (-tau sign(qB) Delta)
/// and is flagged; the genuine n = 0 level at +tau sign(qB) Delta is converged.
#[test]
fn gapped_dirac_artefact_at_other_valley_energy() {
    for split in [Splitting::Auto, Splitting::Off] {
        let (m, spec) = solve(Kind::Dirac2dGapped, -1.0, FieldPoint::field(4.0), 20, split);
        let delta = m.param("mass_mev").expect("mass_mev");
        // n = 0 at tau sign(qB) Delta (McClure 1956; src/models/ conventions); q = -1, B > 0
        let e0 =
            m.param("valley").expect("valley") * (m.charge() * spec.point.field).signum() * delta;
        let at = |e: f64| -> Vec<_> {
            spec.levels
                .iter()
                .filter(|l| (l.energy - e).abs() < 1e-9 * delta)
                .copied()
                .collect()
        };
        let genuine = at(e0);
        let other = at(-e0);
        assert_eq!(genuine.len(), 1);
        assert!(genuine[0].is_converged());
        assert_eq!(
            other.len(),
            1,
            "{split:?}: one artefact at the other valley's n = 0 energy"
        );
        assert!(!other[0].is_converged());
    }
}

/// Kato-Temple is sharper than the residual bound for an unconverged genuine level of a
/// model without exact J (isotropic Schrodinger plus an invented cubic-anisotropy k^4 term,
/// conserving only J mod 4), and it still contains the reference value from a much larger
/// cutoff.
#[test]
fn kato_temple_sharper_and_contains() {
    let m = anharmonic();
    let p = FieldPoint::field(5.0);
    let small = Spectrum::compute(&m, p, &Settings::with_cutoff(24)).expect("solve");
    // 120 orbitals converge the low levels (bounds ~1e-11) while keeping the rounding floor,
    // which grows with the norm of the truncated k^4 operator, small
    let big = Spectrum::compute(&m, p, &Settings::with_cutoff(120)).expect("solve");
    let mut checked = 0;
    for l in small.levels.iter().filter(|l| !is_cutoff_artefact(l)) {
        let Some(kt) = l.kato_temple else { continue };
        let r = big
            .levels
            .iter()
            .filter(|b| b.sector == l.sector)
            .min_by(|a, b| {
                (a.energy - l.energy)
                    .abs()
                    .total_cmp(&(b.energy - l.energy).abs())
            })
            .expect("same sector at larger cutoff");
        let err = (r.energy - l.energy).abs();
        // the reference's own uncertainty: its sharpest bound (Kato-Temple at 120 orbitals)
        let slack = r.best_bound() + rounding(l.energy, small.energy_scale);
        assert!(
            err <= kt + slack,
            "level {}: error {err:e} > KT {kt:e}",
            l.energy
        );
        assert!(err <= l.bound + slack);
        if l.bound > 1e-6 && l.bound < 0.01 * small.energy_scale && err > 10.0 * slack {
            // an unconverged genuine level, its residual well inside the gap, its error well
            // resolved by the reference
            assert!(
                kt < 0.1 * l.bound,
                "KT {kt:e} not sharper than residual {:e}",
                l.bound
            );
            checked += 1;
        }
    }
    assert!(
        checked >= 3,
        "only {checked} unconverged levels had a Kato-Temple bound"
    );
}

/// Schrodinger (m = 0.067 m_e) plus an invented cubic-anisotropy term lambda (kx^4 + ky^4),
/// lambda = 2e4 meV nm^4 (comparable to hbar omega_c l_B^4 at 5 T): no exact J, so levels
/// converge only gradually with the cutoff.
fn anharmonic() -> Model {
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

/// A 2D Dirac band bent back by -c k^2 (invented c = 1 meV nm^2, hbar v = 658 meV nm):
/// E_+(k) = hbar v k - c k^2 re-enters the window [-50, 50] meV at k* = (hbar v +
/// sqrt((hbar v)^2 - 200 c)) / (2c) (root of hbar v k - c k^2 = 50), far beyond the cutoff's
/// reach; the check names the window and the band there. Plain 2D Dirac gives no warning.
#[test]
fn window_reentry_detected() {
    let hv = hbar_v_mev_nm(1.0e6);
    let c = 1.0;
    let base = models::dirac2d(Dirac2dParams::default()).expect("valid");
    let mut b = Model::builder("bent-dirac", 2).charge(-1.0);
    for t in base.terms() {
        b = b.term_complex(&t.label, t.coefficient, t.matrix.clone(), t.monomial);
    }
    let bent = b
        .term("-c kx^2", -c, identity(2), Monomial::new(2, 0, 0))
        .term("-c ky^2", -c, identity(2), Monomial::new(0, 2, 0))
        .build()
        .expect("valid");
    let p = FieldPoint::field(1.0);
    let window = EnergyWindow::new(-50.0, 50.0).expect("window");
    let spec = Spectrum::compute(&bent, p, &Settings::with_cutoff(200)).expect("solve");
    let warnings = check_spectrum(&bent, &spec, window).expect("check");
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    let w = &warnings[0];
    assert_eq!(w.band, 1);
    let k_star = (hv + (hv * hv - 200.0 * c).sqrt()) / (2.0 * c);
    assert!(
        (w.wave_number - k_star).abs() < 0.05 * k_star,
        "{} vs {k_star}",
        w.wave_number
    );
    assert!(
        w.message.contains("[-50, 50]") && w.message.contains("band 1"),
        "{}",
        w.message
    );
    let lb = spec.magnetic_length;
    assert!((w.orbital_estimate / (0.5 * (k_star * lb).powi(2)) - 1.0).abs() < 0.1);
    // a study over that window carries the same warning
    let st = study(
        &bent,
        p,
        &Settings::default(),
        &[50, 100],
        Selection::Window(window),
        ExactValues::LargestCutoff,
    )
    .expect("study");
    assert_eq!(st.warnings.len(), 1);
    assert_eq!(st.warnings[0].band, 1);
    // the plain model: nothing re-enters
    let spec0 = Spectrum::compute(&base, p, &Settings::with_cutoff(200)).expect("solve");
    assert!(check_spectrum(&base, &spec0, window)
        .expect("check")
        .is_empty());
}

/// The automatic cutoff meets its tolerance against the closed forms for every model of the
/// catalogue: each selected level is within tol x max(|E|, scale) (+ rounding) of a closed
/// form and within its own bound.
#[test]
fn auto_meets_tolerance_for_every_model() {
    let tol = 1e-9;
    for kind in ALL {
        for split in [Splitting::Auto, Splitting::Off] {
            let m = model(kind, -1.0);
            let p = FieldPoint {
                field: field_for(kind, 2.0),
                kz: kz_for(kind, 0.3),
            };
            let mut a = AutoSettings::new(
                Selection::Nearest {
                    target: 0.0,
                    count: 20,
                },
                tol,
            );
            a.base.splitting = split;
            let res = auto(&m, p, &a).expect("auto converges");
            assert_eq!(res.selected.len(), 20);
            let exact = exact_levels(kind, &m, p, 4 * res.cutoff);
            for &i in &res.selected {
                let l = &res.spectrum.levels[i];
                let nearest = exact
                    .iter()
                    .map(|x| x.energy)
                    .min_by(|a, b| (a - l.energy).abs().total_cmp(&(b - l.energy).abs()))
                    .expect("non-empty");
                let err = (l.energy - nearest).abs();
                let slack = rounding(nearest, res.spectrum.energy_scale);
                let tol_abs = tol * l.energy.abs().max(res.spectrum.energy_scale);
                assert!(
                    err <= tol_abs + slack,
                    "{kind:?} {split:?}: error {err:e} above tolerance {tol_abs:e}"
                );
                assert!(err <= l.bound + slack);
            }
            assert!(res.warnings.is_empty(), "{kind:?}: {:?}", res.warnings);
            assert!(res.first_converged_cutoff <= res.cutoff);
        }
    }
}

/// Gradual convergence: the automatic cutoff on the anharmonic model reaches the tolerance
/// against a much larger cutoff, grows past the start, and reports the cost.
#[test]
fn auto_converges_gradually_and_reports_cost() {
    let m = anharmonic();
    let p = FieldPoint::field(5.0);
    let tol = 1e-10;
    let res = auto(
        &m,
        p,
        &AutoSettings::new(
            Selection::Nearest {
                target: 0.0,
                count: 6,
            },
            tol,
        ),
    )
    .expect("auto");
    assert!(
        res.cutoff > 16 && res.history.len() >= 3,
        "{:?}",
        res.history
    );
    assert_eq!(res.matrix_dimension, res.cutoff);
    assert!(res.seconds >= 0.0);
    // the Kato-Temple choice needs a smaller (never larger) cutoff for the same tolerance here
    let mut a = AutoSettings::new(
        Selection::Nearest {
            target: 0.0,
            count: 6,
        },
        tol,
    );
    a.bound = BoundChoice::KatoTemple;
    let kt = auto(&m, p, &a).expect("auto with Kato-Temple");
    assert!(kt.cutoff <= res.cutoff, "{} > {}", kt.cutoff, res.cutoff);
    let big = Spectrum::compute(&m, p, &Settings::with_cutoff(4 * res.cutoff)).expect("solve");
    for (r, &i) in [(&res, &res.selected), (&kt, &kt.selected)]
        .into_iter()
        .flat_map(|(r, s)| s.iter().map(move |i| (r, i)))
    {
        let res = r;
        let l = &res.spectrum.levels[i];
        let r = big
            .levels
            .iter()
            .min_by(|a, b| {
                (a.energy - l.energy)
                    .abs()
                    .total_cmp(&(b.energy - l.energy).abs())
            })
            .expect("non-empty");
        let tol_abs = tol * l.energy.abs().max(res.spectrum.energy_scale);
        assert!((l.energy - r.energy).abs() <= tol_abs + r.bound);
    }
}

/// The automatic cutoff stops with clear errors when the tolerance cannot be met.
#[test]
fn auto_errors_are_clear() {
    let m = anharmonic();
    let p = FieldPoint::field(5.0);
    let mut a = AutoSettings::new(
        Selection::Nearest {
            target: 0.0,
            count: 6,
        },
        1e-12,
    );
    a.max_cutoff = 30;
    match auto(&m, p, &a) {
        Err(e @ Error::NotConverged { .. }) => {
            let msg = e.to_string();
            assert!(
                msg.contains("max_cutoff") && msg.contains("not converged"),
                "{msg}"
            );
        }
        other => panic!("expected NotConverged, got {other:?}"),
    }
    // a tolerance below the solver's rounding floor: stops at once, saying why
    let a = AutoSettings::new(
        Selection::Nearest {
            target: 0.0,
            count: 6,
        },
        1e-17,
    );
    match auto(&m, p, &a) {
        Err(e @ Error::NotConverged { .. }) => {
            let msg = e.to_string();
            assert!(
                msg.contains("rounding floor") && msg.contains("loosen the tolerance"),
                "{msg}"
            );
        }
        other => panic!("expected NotConverged, got {other:?}"),
    }
    // without exact J the sectors are dense (N/4 states here): starting at 2048 orbitals
    // (512-state sectors, about 12 MiB) under a 1 MiB limit stops with a memory error
    let mut a = AutoSettings::new(
        Selection::Nearest {
            target: 0.0,
            count: 6,
        },
        1e-9,
    );
    a.start_cutoff = 2048;
    a.memory_limit_mib = 1;
    match auto(&m, p, &a) {
        Err(e @ Error::MemoryLimit { .. }) => {
            let msg = e.to_string();
            assert!(
                msg.contains("memory limit") && msg.contains("not met"),
                "{msg}"
            );
        }
        other => panic!("expected MemoryLimit, got {other:?}"),
    }
    let a = AutoSettings::new(
        Selection::Nearest {
            target: 0.0,
            count: 6,
        },
        -1.0,
    );
    assert!(matches!(auto(&m, p, &a), Err(Error::BadNumber { .. })));
}

/// Study: doubling cutoffs, tracked levels, rates, needed cutoffs, tables and plot.
#[test]
fn study_tables_and_plot() {
    let m = anharmonic();
    let p = FieldPoint::field(5.0);
    let base = Settings {
        tolerance: 1e-10,
        ..Settings::default()
    };
    let cutoffs = doubling(12, 5);
    assert_eq!(cutoffs, vec![12, 24, 48, 96, 192]);
    let st = study(
        &m,
        p,
        &base,
        &cutoffs,
        Selection::Nearest {
            target: 0.0,
            count: 4,
        },
        ExactValues::ClosedFormIfKnown,
    )
    .expect("study");
    assert_eq!(st.levels.len(), 4);
    for l in &st.levels {
        assert_eq!(l.entries.len(), 5);
        assert_eq!(l.exact, ReferenceKind::LargestCutoff);
        // the actual error against the largest cutoff is within the bound (+ the reference's own bound)
        let last_bound = l.entries[4].bound.expect("matched");
        for e in &l.entries {
            let (err, b) = (e.actual_error.expect("matched"), e.bound.expect("matched"));
            assert!(err <= b + last_bound + rounding(l.reference_value, 1.0));
        }
        // the change decays
        let rate = l.change_rate_per_orbital.expect("two changes");
        assert!(rate > 0.0, "rate {rate}");
        assert!(matches!(
            l.needed_cutoff,
            NeededCutoff::Observed(_) | NeededCutoff::Extrapolated(_)
        ));
    }
    let csv = study_csv(&st).expect("csv");
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().map(|h| h.split(',').count()),
        Some(CSV_COLUMNS.len())
    );
    assert_eq!(lines.count(), 4 * 5);
    let json = study_json(&st).expect("json");
    let v: serde_json::Value = serde_json::from_str(&json).expect("valid JSON");
    assert_eq!(v["levels"].as_array().map(|a| a.len()), Some(4));
    let path =
        std::env::temp_dir().join(format!("ladderfan-trust-study-{}.svg", std::process::id()));
    study_svg(&st, &path).expect("svg");
    let svg = std::fs::read_to_string(&path).expect("read back");
    assert!(svg.starts_with("<svg") && svg.contains("cutoff N"));
    let _ = std::fs::remove_file(&path);
    // with exact values, the actual error is measured against them
    let exact: Vec<f64> = st.levels.iter().map(|l| l.reference_value).collect();
    let st2 = study(
        &m,
        p,
        &base,
        &cutoffs,
        Selection::Nearest {
            target: 0.0,
            count: 4,
        },
        ExactValues::Given(&exact),
    )
    .expect("study");
    assert!(st2.levels.iter().all(|l| l.exact == ReferenceKind::Exact));
}

/// The cluster rotation itself: take the exact eigenvectors of the unsplit massless 2D Dirac
/// matrix, mix the genuine n = 0 state with the zero-energy artefact (as an eigen-solver may
/// do inside a degenerate cluster: both then leak), and check that the rotation separates
/// them again: one vector with no leakage, one carrying all of it, energies still zero.
#[test]
fn cluster_rotation_separates_a_mixed_pair() {
    use ladderfan::hamiltonian::leakage;
    use ladderfan::hamiltonian::LadderHamiltonian;
    use ladderfan::trust::cluster::separate_leaking;
    use num_complex::Complex64;
    let m = model(Kind::Dirac2dMassless, -1.0);
    let n = 20;
    let h = LadderHamiltonian::assemble(&m, FieldPoint::field(2.0), 0.0).expect("assemble");
    let dense = h.dense(n);
    let states: Vec<(usize, usize)> = (0..n).flat_map(|k| (0..2).map(move |a| (k, a))).collect();
    let eig = nalgebra::SymmetricEigen::new(dense.clone());
    let mut order: Vec<usize> = (0..2 * n).collect();
    order.sort_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]));
    let mut values: Vec<f64> = order.iter().map(|&i| eig.eigenvalues[i]).collect();
    let mut vectors =
        nalgebra::DMatrix::from_fn(2 * n, 2 * n, |r, c| eig.eigenvectors[(r, order[c])]);
    // hbar v sqrt(2) / l_B: the Landau energy scale of this model (McClure 1956)
    let scale = hbar_v_mev_nm(1.0e6) * 2f64.sqrt() / Units::Lab.magnetic_length(2.0, -1.0);
    let zeros: Vec<usize> = (0..2 * n)
        .filter(|&i| values[i].abs() < 1e-9 * scale)
        .collect();
    assert_eq!(zeros.len(), 2);
    let (i, j) = (zeros[0], zeros[1]);
    let leak = |v: &nalgebra::DMatrix<Complex64>, c: usize| {
        let col: Vec<Complex64> = v.column(c).iter().copied().collect();
        leakage(&h, n, &states, &col)
    };
    // mix: (v_i + e^{i phi} v_j)/sqrt 2 and its orthogonal partner
    let (vi, vj) = (
        vectors.column(i).into_owned(),
        vectors.column(j).into_owned(),
    );
    let ph = Complex64::from_polar(1.0, 0.7);
    let s = std::f64::consts::FRAC_1_SQRT_2;
    vectors.set_column(i, &((&vi + &vj * ph) * Complex64::new(s, 0.0)));
    vectors.set_column(j, &((&vi - &vj * ph) * Complex64::new(s, 0.0)));
    assert!(
        leak(&vectors, i) > 0.1 * scale && leak(&vectors, j) > 0.1 * scale,
        "the mixture leaks"
    );
    let total = (leak(&vectors, i).powi(2) + leak(&vectors, j).powi(2)).sqrt();
    separate_leaking(&h, n, &states, &mut values, &mut vectors, 1e-9);
    let (a, b) = (leak(&vectors, i), leak(&vectors, j));
    assert!(a.min(b) < 1e-12 * scale, "after rotation: {a:e}, {b:e}");
    assert!((a.max(b) - total).abs() < 1e-9 * scale);
    assert!(values[i].abs() < 1e-9 * scale && values[j].abs() < 1e-9 * scale);
    // the rotated vectors are still orthonormal eigenvectors of the truncated matrix
    for c in [i, j] {
        let v = vectors.column(c).into_owned();
        let r = (&dense * &v - &v * Complex64::new(values[c], 0.0)).norm();
        assert!(r < 1e-12 * scale, "residual {r:e}");
    }
    let overlap = (vectors.column(i).adjoint() * vectors.column(j))[(0, 0)].norm();
    assert!(overlap < 1e-12);
}

/// Measurement for the report (run with `--ignored --nocapture`): the cutoff the automatic
/// mode chooses for 1e-9 relative on the 50 levels nearest the reference energy, and the
/// largest ratio of bound to actual error (against the closed forms) seen. Asserts that no
/// bound is ever below its actual error.
#[test]
#[ignore]
fn measure_auto_cutoffs() {
    let tol = 1e-9;
    let cases: Vec<(Kind, f64)> = [1e-3, 3e-3, 1e-2, 3e-2, 0.1]
        .iter()
        .map(|&b| (Kind::Dirac, b))
        .chain(
            [0.5, 2.0, 10.0, 30.0]
                .iter()
                .map(|&b| (Kind::Dirac2dGapped, b)),
        )
        .collect();
    println!("model, field, split, cutoff, first_converged, matrix_dim, seconds, max bound/error, max KT/error, levels with zero error");
    for (kind, field) in cases {
        for split in [Splitting::Auto, Splitting::Off] {
            let m = model(kind, -1.0);
            let p = FieldPoint::field(field);
            let mut a = AutoSettings::new(
                Selection::Nearest {
                    target: 0.0,
                    count: 50,
                },
                tol,
            );
            a.base.splitting = split;
            let res = match auto(&m, p, &a) {
                Ok(r) => r,
                Err(e @ Error::NotConverged { .. }) => {
                    println!("{kind:?}, {field}, {split:?}, not met: {e}");
                    continue;
                }
                Err(e) => panic!("{e}"),
            };
            let exact = exact_levels(kind, &m, p, 4 * res.cutoff);
            let (mut worst, mut worst_kt, mut zero) = (0.0f64, 0.0f64, 0);
            for &i in &res.selected {
                let l = &res.spectrum.levels[i];
                let nearest = exact
                    .iter()
                    .map(|x| x.energy)
                    .min_by(|a, b| (a - l.energy).abs().total_cmp(&(b - l.energy).abs()))
                    .expect("non-empty");
                let err = (l.energy - nearest).abs();
                assert!(err <= l.bound + rounding(nearest, res.spectrum.energy_scale));
                if err > 0.0 {
                    worst = worst.max(l.bound / err);
                    if let Some(kt) = l.kato_temple {
                        worst_kt = worst_kt.max(kt / err);
                    }
                } else {
                    zero += 1;
                }
            }
            println!(
                "{kind:?}, {field}, {split:?}, {}, {}, {}, {:.4}, {worst:.3e}, {worst_kt:.3e}, {zero}",
                res.cutoff, res.first_converged_cutoff, res.matrix_dimension, res.seconds
            );
        }
    }
}

/// A study of a model with a closed form measures the actual error against it: the tilted
/// cone (Goerbig et al., Phys. Rev. B 78, 045415 (2008), via `closed_form`) converges
/// gradually, and at every cutoff the closed form lies within the residual bound.
#[test]
fn study_against_closed_form() {
    let m = model(Kind::Tilted, -1.0);
    let p = FieldPoint::field(3.0);
    let st = study(
        &m,
        p,
        &Settings::default(),
        &doubling(6, 4),
        Selection::Nearest {
            target: 0.0,
            count: 5,
        },
        ExactValues::ClosedFormIfKnown,
    )
    .expect("study");
    assert_eq!(st.levels.len(), 5);
    let exact = exact_levels(Kind::Tilted, &m, p, 200);
    let mut decaying = 0;
    for l in &st.levels {
        assert_eq!(l.exact, ReferenceKind::Exact);
        for e in &l.entries {
            // the bound promises an eigenvalue near the matched level (not necessarily the
            // tracked one when the match at a small cutoff is another level)
            let (en, b) = (e.energy.expect("matched"), e.bound.expect("matched"));
            let nearest = exact
                .iter()
                .map(|x| x.energy)
                .min_by(|a, b| (a - en).abs().total_cmp(&(b - en).abs()))
                .expect("non-empty");
            let err = (en - nearest).abs();
            assert!(
                err <= b + rounding(nearest, 1.0),
                "cutoff {}: error {err:e} > bound {b:e}",
                e.cutoff
            );
        }
        let first = l.entries[0].actual_error.expect("matched");
        let last = l.entries[3].actual_error.expect("matched");
        if first > 1e-9 && last < 1e-3 * first {
            decaying += 1;
        }
    }
    assert!(
        decaying >= 3,
        "only {decaying} levels show convergence: {}",
        ladderfan::trust::report::study_csv(&st).unwrap_or_default()
    );
}

/// End to end: `ladderfan converge` in both modes, JSON and files, and its exit codes.
#[test]
fn cli_converge_end_to_end() {
    use std::process::Command;
    let bin = env!("CARGO_BIN_EXE_ladderfan");
    let dir = std::env::temp_dir().join(format!("ladderfan-trust-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    // the anharmonic test model as a model file: hbar^2/2m* for m* = 0.067 m_e
    // (38.0998 meV nm^2 / 0.067, CODATA 2018 via units.rs) and the invented lambda
    let file = dir.join("anharmonic.toml");
    let c = HBAR2_OVER_2ME_MEV_NM2 / 0.067;
    let mut toml = format!(
        "name = \"invented-anharmonic\"\ncomponents = 1\ncharge = -1\nunits = \"lab\"\n\n[parameters]\nc = {c}\nlam = 2.0e4\n"
    );
    for (label, coef, mono) in [
        ("kx2", "c", "kx^2"),
        ("ky2", "c", "ky^2"),
        ("kx4", "lam", "kx^4"),
        ("ky4", "lam", "ky^4"),
    ] {
        toml.push_str(&format!(
            "\n[[term]]\nlabel = \"{label}\"\ncoefficient = \"{coef}\"\nmatrix = [[1]]\nmonomial = \"{mono}\"\n"
        ));
    }
    std::fs::write(&file, toml).expect("write model file");
    let model_arg = file.to_str().expect("utf-8 path");
    // study with JSON on stdout and files in --out
    let out_dir = dir.join("out");
    let o = Command::new(bin)
        .args([
            "converge",
            "--model",
            model_arg,
            "--field",
            "5",
            "--count",
            "3",
            "--cutoffs",
            "12,24,48",
            "--json",
            "--out",
        ])
        .arg(&out_dir)
        .output()
        .expect("run");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON on stdout");
    assert_eq!(v["mode"], "study");
    assert_eq!(v["study"]["levels"].as_array().map(|a| a.len()), Some(3));
    assert_eq!(v["study"]["cutoffs"], serde_json::json!([12, 24, 48]));
    for f in ["converge.csv", "converge.json", "converge.svg"] {
        assert!(out_dir.join(f).exists(), "{f} written");
    }
    // auto: the same model reaches 1e-9 and agrees with the library's automatic mode
    let o = Command::new(bin)
        .args([
            "converge", "--model", model_arg, "--field", "5", "--count", "5", "--mode", "auto",
            "--json",
        ])
        .output()
        .expect("run");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON on stdout");
    let lib = auto(
        &anharmonic(),
        FieldPoint::field(5.0),
        &AutoSettings::new(
            Selection::Nearest {
                target: 0.0,
                count: 5,
            },
            1e-9,
        ),
    )
    .expect("auto");
    assert_eq!(v["cutoff"].as_u64(), Some(lib.cutoff as u64));
    // a tolerance that cannot be met within --max-cutoff: exit code 1 and a clear message
    let o = Command::new(bin)
        .args([
            "converge",
            "--model",
            model_arg,
            "--field",
            "5",
            "--mode",
            "auto",
            "--tolerance",
            "1e-11",
            "--max-cutoff",
            "20",
        ])
        .output()
        .expect("run");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("not met") && err.contains("max_cutoff"),
        "{err}"
    );
    // a malformed window: exit code 2, located at the flag
    let o = Command::new(bin)
        .args(["converge", "--builtin", "dirac2d", "--window", "1,2,3"])
        .output()
        .expect("run");
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--window"));
    let _ = std::fs::remove_dir_all(&dir);
}
