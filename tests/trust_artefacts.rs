//! Trustworthy numbers: bounds contain the closed forms, cutoff artefacts are flagged (also on
//! the unsplit path, which needs the cluster rotation), Kato-Temple bounds and window
//! completeness.
//!
//! Expected values come from `ladderfan::closed_form` (published formulas, each with its
//! source there), never from the solver; helpers in tests/common/catalogue.rs.

use ladderfan::matrix::identity;
use ladderfan::models::{self, Dirac2dParams};
use ladderfan::trust::converge::{is_cutoff_artefact, study, ExactValues, Selection};
use ladderfan::trust::window::{check_spectrum, EnergyWindow};
use ladderfan::units::{hbar_v_mev_nm, Units};
use ladderfan::{FieldPoint, Model, Monomial, Settings, Spectrum, Splitting};
use proptest::prelude::*;
use proptest::test_runner::{Config, FileFailurePersistence, RngSeed};

mod common;
use common::catalogue::*;

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
