//! Property tests of invariants on random Hermitian models (seeded by proptest; failures are
//! recorded under proptest-regressions/).

mod common;

use common::*;
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::matrix::SpinMatrix;
use ladderfan::{FieldPoint, Model, Monomial};
use num_complex::Complex64;
use proptest::prelude::*;

/// A random Hermitian d x d matrix from a flat list of numbers.
fn hermitian(d: usize, xs: &[f64]) -> SpinMatrix {
    let mut m = SpinMatrix::zeros(d, d);
    let mut k = 0;
    for r in 0..d {
        for c in 0..=r {
            let re = xs[k % xs.len()];
            let im = if r == c { 0.0 } else { xs[(k + 1) % xs.len()] };
            k += 2;
            m[(r, c)] = Complex64::new(re, im);
            m[(c, r)] = Complex64::new(re, -im);
        }
    }
    m
}

fn random_model(d: usize, monos: &[(u32, u32, u32)], xs: &[f64], charge: f64) -> Model {
    let mut b = Model::builder("random", d).charge(charge);
    for (i, &(kx, ky, kz)) in monos.iter().enumerate() {
        let m = hermitian(d, &xs[i % xs.len()..]);
        b = b.term(
            &format!("t{i}"),
            1.0 + i as f64,
            m,
            Monomial::new(kx, ky, kz),
        );
    }
    b.build().expect("Hermitian by construction")
}

fn model_strategy() -> impl Strategy<Value = (Model, f64)> {
    (
        1usize..=3,
        prop::collection::vec((0u32..=3, 0u32..=2, 0u32..=1), 1..5),
        prop::collection::vec(-2.0f64..2.0, 12),
        prop::bool::ANY,
        0.2f64..3.0,
    )
        .prop_map(|(d, monos, xs, neg, field)| {
            let q = if neg { -1.0 } else { 1.0 };
            (random_model(d, &monos, &xs, q), field)
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn assembled_matrix_is_hermitian((model, field) in model_strategy()) {
        let h = LadderHamiltonian::assemble(&model, FieldPoint { field, kz: 0.3 }, 0.0).unwrap();
        let a = h.dense(12);
        let scale = norm1(&a).max(1e-300);
        for r in 0..a.nrows() {
            for c in 0..a.ncols() {
                prop_assert!((a[(r, c)] - a[(c, r)].conj()).norm() <= 1e-13 * scale);
            }
        }
    }

    /// Cauchy interlacing: the spectrum at cutoff N (a principal submatrix with d fewer rows)
    /// interlaces the one at N + 1: lambda_i(N+1) <= mu_i(N) <= lambda_(i+d)(N+1).
    #[test]
    fn eigenvalues_at_n_and_n_plus_one_interlace((model, field) in model_strategy()) {
        let h = LadderHamiltonian::assemble(&model, FieldPoint { field, kz: 0.1 }, 0.0).unwrap();
        let n = 10;
        let d = model.dim();
        let big = h.dense(n + 1);
        let lam = dense_eigenvalues(&big);
        let mu = dense_eigenvalues(&h.dense(n));
        let tol = 1e-11 * norm1(&big).max(1e-300);
        for (i, m) in mu.iter().enumerate() {
            prop_assert!(lam[i] <= m + tol && *m <= lam[i + d] + tol, "i {}: {} {} {}", i, lam[i], m, lam[i + d]);
        }
    }

    #[test]
    fn split_spectrum_equals_the_unsplit_one((model, field) in model_strategy()) {
        let (a, b) = split_and_unsplit(&model, FieldPoint { field, kz: -0.2 }, 14);
        prop_assert_eq!(a.len(), b.len());
        let scale = b.iter().fold(1e-300f64, |x, y| x.max(y.abs()));
        for (x, y) in a.iter().zip(&b) {
            prop_assert!((x - y).abs() <= 1e-10 * scale, "{} vs {}", x, y);
        }
    }
}
