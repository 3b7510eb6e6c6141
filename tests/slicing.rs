//! Spectrum slicing of the window solver (`numeric::slicing`, used by `in_window` for a window
//! of more than `SLICE_LEVELS` levels): every level of a wide window found exactly once,
//! against a dense solve of the same matrix, with levels straddling the slice borders and with
//! degenerate levels exactly at the first cut. The dense oracle is nalgebra's general
//! `SymmetricEigen`; tolerances are scaled by the matrix norm.

// Tests walk parallel arrays (ours, oracle) by index.
#![allow(clippy::needless_range_loop)]

use ladderfan::hamiltonian::{FieldPoint, LadderHamiltonian};
use ladderfan::matrix::pauli;
use ladderfan::model::{Model, Monomial};
use ladderfan::numeric::banded::BandedHermitian;
use ladderfan::numeric::slicing::{slices, SLICE_LEVELS};
use ladderfan::numeric::window::in_window;
use ladderfan::units::Units;
use nalgebra::{DMatrix, SymmetricEigen};
use num_complex::Complex64;

/// Invented 2-band model with cubic warping (meV, nm); `rashba` makes the matrix complex.
fn warping_model(rashba: bool) -> Model {
    let (d, a, w) = (50.0, 300.0, 200.0);
    let mut b = Model::builder("warping (invented)", 2)
        .charge(-1.0)
        .units(Units::Lab)
        .term("D kx^2 sz", d, pauli("z").unwrap(), Monomial::new(2, 0, 0))
        .term("D ky^2 sz", d, pauli("z").unwrap(), Monomial::new(0, 2, 0))
        .term("W kx^3 sz", w, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term(
            "-3W kx ky^2 sz",
            -3.0 * w,
            pauli("z").unwrap(),
            Monomial::new(1, 2, 0),
        );
    b = if rashba {
        b.term("A kx sy", a, pauli("y").unwrap(), Monomial::KX)
            .term("-A ky sx", -a, pauli("x").unwrap(), Monomial::KY)
    } else {
        b.term("A kx sx", a, pauli("x").unwrap(), Monomial::KX)
            .term("A ky sy", a, pauli("y").unwrap(), Monomial::KY)
    };
    b.build().unwrap()
}

/// The truncated matrix over `cutoff` orbitals as a band matrix and densely.
fn model_matrix(rashba: bool, cutoff: usize) -> (BandedHermitian, DMatrix<Complex64>) {
    let lh =
        LadderHamiltonian::assemble(&warping_model(rashba), FieldPoint::field(10.0), 0.0).unwrap();
    let d = lh.dim;
    let hb = (lh.band + 1) * d - 1;
    let band = BandedHermitian::from_fn(cutoff * d, hb, |i, j| {
        lh.element(i / d, i % d, j / d, j % d)
    })
    .unwrap();
    (band, lh.dense(cutoff))
}

/// Ascending eigenvalues of the dense matrix (the oracle).
fn oracle(h: &DMatrix<Complex64>) -> Vec<f64> {
    let mut v: Vec<f64> = SymmetricEigen::new(h.clone())
        .eigenvalues
        .iter()
        .copied()
        .collect();
    v.sort_by(f64::total_cmp);
    v
}

/// Orthonormal columns and explicit residuals ||H x - lambda x|| <= tol.
fn check_vectors(dense: &DMatrix<Complex64>, vals: &[f64], vecs: &DMatrix<Complex64>, tol: f64) {
    let k = vals.len();
    let gram = vecs.adjoint() * vecs;
    let off = (gram - DMatrix::<Complex64>::identity(k, k)).norm();
    assert!(off <= 1e-9, "orthonormality {off}");
    for i in 0..k {
        let x = vecs.column(i);
        let r = (dense * x - x * Complex64::new(vals[i], 0.0)).norm();
        assert!(r <= tol, "explicit residual {r} of level {i}");
    }
}

#[test]
fn wide_window_is_sliced_and_matches_the_dense_solve() {
    for rashba in [false, true] {
        let (band, dense) = model_matrix(rashba, 300);
        let values = oracle(&dense);
        let norm = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        // a window of several slices' worth of levels
        let (lo, hi) = (-400.0, 400.0);
        let want: Vec<f64> = values
            .iter()
            .copied()
            .filter(|&v| v >= lo && v < hi)
            .collect();
        assert!(
            want.len() > 3 * SLICE_LEVELS,
            "the window should need at least four slices, holds {}",
            want.len()
        );
        let parts = slices(&band, lo, hi).unwrap();
        assert!(parts.len() >= 4, "{} slices", parts.len());
        assert_eq!(parts.iter().map(|s| s.count).sum::<usize>(), want.len());
        for w in parts.windows(2) {
            // contiguous slices, each border certified: the oracle's count of levels below it
            // is the count the slices give, and no level sits within 1e-9 ||H|| of it
            assert_eq!(w[0].hi, w[1].lo);
            let x = w[0].hi;
            let gap = values
                .iter()
                .fold(f64::INFINITY, |m, v| m.min((v - x).abs()));
            assert!(gap > 1e-9 * norm, "a level sits {gap} from the border {x}");
        }
        let mut below = values.iter().filter(|&&v| v < lo).count();
        for s in &parts {
            assert!(s.count <= SLICE_LEVELS);
            let inside = values.iter().filter(|&&v| v >= s.lo && v < s.hi).count();
            assert_eq!(s.count, inside, "slice [{}, {})", s.lo, s.hi);
            below += inside;
        }
        assert_eq!(below, values.iter().filter(|&&v| v < hi).count());
        // levels straddle the borders: some slice border lies between two adjacent levels
        // closer than the mean spacing, and all of them are found once
        let e = in_window(&band, lo, hi, 2000).unwrap();
        assert_eq!(e.values.len(), want.len(), "rashba {rashba}");
        for k in 0..want.len() {
            assert!(
                (e.values[k] - want[k]).abs() <= 1e-10 * norm,
                "rashba {rashba} level {k}: {} vs {}",
                e.values[k],
                want[k]
            );
        }
        check_vectors(&dense, &e.values, &e.vectors, 1e-9 * norm);
    }
}

/// The second-difference matrix T (2 on the diagonal, -1 beside it) of size m, doubled by
/// interleaving (rows 2i and 2i + 1 hold the two copies): every eigenvalue
/// 2 - 2 cos(pi k / (m + 1)), k = 1..m, twice (closed form, common practice).
fn doubled_second_difference(m: usize) -> (BandedHermitian, Vec<f64>) {
    let h = BandedHermitian::from_fn(2 * m, 2, |i, j| {
        if i % 2 != j % 2 {
            Complex64::new(0.0, 0.0)
        } else if i == j {
            Complex64::new(2.0, 0.0)
        } else {
            Complex64::new(-1.0, 0.0)
        }
    })
    .unwrap();
    let mut exact: Vec<f64> = (1..=m)
        .flat_map(|k| {
            let l = 2.0 - 2.0 * (std::f64::consts::PI * k as f64 / (m + 1) as f64).cos();
            [l, l]
        })
        .collect();
    exact.sort_by(f64::total_cmp);
    (h, exact)
}

#[test]
fn degenerate_pair_at_the_first_cut_is_neither_lost_nor_split() {
    let m = 120;
    let (band, exact) = doubled_second_difference(m);
    // centre the window exactly on the doubly degenerate level k = 60, so that the first cut
    // (the midpoint) falls on it; the window holds 2 x 31 levels, more than one slice
    let j = 59; // index of k = 60 among the single levels
    let single: Vec<f64> = exact.iter().step_by(2).copied().collect();
    let centre = single[j];
    let half = 0.5 * (single[j + 15] + single[j + 16]) - centre;
    let (lo, hi) = (centre - half, centre + half);
    let want: Vec<f64> = exact
        .iter()
        .copied()
        .filter(|&v| v >= lo && v < hi)
        .collect();
    assert!(want.len() > SLICE_LEVELS && want.len() % 2 == 0);
    let parts = slices(&band, lo, hi).unwrap();
    assert!(parts.len() >= 2);
    for s in &parts[1..] {
        // the border moved off the degenerate pair: both copies on the same side
        assert!(
            (s.lo - centre).abs() > 1e-9 * 4.0,
            "border {} on the pair",
            s.lo
        );
        let inside = exact.iter().filter(|&&v| v >= s.lo && v < s.hi).count();
        assert_eq!(s.count, inside);
        assert_eq!(inside % 2, 0, "a degenerate pair split by a border");
    }
    let e = in_window(&band, lo, hi, 1000).unwrap();
    assert_eq!(e.values.len(), want.len());
    // ||T|| <= 4 (Gershgorin)
    for k in 0..want.len() {
        assert!(
            (e.values[k] - want[k]).abs() <= 1e-12 * 4.0,
            "level {k}: {} vs {}",
            e.values[k],
            want[k]
        );
    }
    let at_centre = e
        .values
        .iter()
        .filter(|&&v| (v - centre).abs() <= 1e-10)
        .count();
    assert_eq!(
        at_centre, 2,
        "both copies of the level on the cut, once each"
    );
    let dense = DMatrix::from_fn(2 * m, 2 * m, |r, c| band.get(r, c));
    check_vectors(&dense, &e.values, &e.vectors, 1e-9 * 4.0);
}

#[test]
fn slicing_rejects_empty_windows() {
    let (band, _) = doubled_second_difference(10);
    assert!(slices(&band, 1.0, 1.0).is_err());
    assert!(slices(&band, 2.0, 1.0).is_err());
    assert!(slices(&band, f64::NAN, 1.0).is_err());
    // a window with no level gives one empty slice
    let s = slices(&band, 10.0, 11.0).unwrap();
    assert_eq!(s.len(), 1);
    assert_eq!(s[0].count, 0);
}
