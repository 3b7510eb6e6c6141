//! Shared helpers for the integration tests.
#![allow(dead_code)]

use ladderfan::{FieldPoint, Model, Settings, Spectrum, Splitting};
use nalgebra::DMatrix;
use num_complex::Complex64;

/// Sorted eigenvalues of a dense Hermitian matrix (nalgebra, the slow obvious oracle).
pub fn dense_eigenvalues(h: &DMatrix<Complex64>) -> Vec<f64> {
    let mut v: Vec<f64> = nalgebra::SymmetricEigen::new(h.clone())
        .eigenvalues
        .iter()
        .copied()
        .collect();
    v.sort_by(f64::total_cmp);
    v
}

/// Largest absolute row sum: an upper bound of the 2-norm, used to scale tolerances.
pub fn norm1(h: &DMatrix<Complex64>) -> f64 {
    (0..h.nrows())
        .map(|r| h.row(r).iter().map(|z| z.norm()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// Energies of the split solve and of the unsplit (dense oracle) solve.
pub fn split_and_unsplit(model: &Model, point: FieldPoint, cutoff: usize) -> (Vec<f64>, Vec<f64>) {
    let mut s = Settings::with_cutoff(cutoff);
    let a = Spectrum::compute(model, point, &s)
        .expect("split solve")
        .energies();
    s.splitting = Splitting::Off;
    let b = Spectrum::compute(model, point, &s)
        .expect("unsplit solve")
        .energies();
    (a, b)
}
