//! Shared helpers for the integration tests.
#![allow(dead_code)]

pub mod catalogue;
pub mod cli;
pub mod observables;
pub mod verdict;

use ladderfan::matrix::pauli;
use ladderfan::{FieldPoint, Model, Monomial, Settings, Spectrum, Splitting};
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

/// Invented two-band model with a cubic warping term: no exact conserved J, only J mod 3.
pub fn warped() -> Model {
    Model::builder("warped (invented)", 2)
        .term("mass", 20.0, pauli("z").unwrap(), Monomial::ONE)
        .term("kx2", 400.0, pauli("z").unwrap(), Monomial::new(2, 0, 0))
        .term("ky2", 400.0, pauli("z").unwrap(), Monomial::new(0, 2, 0))
        .term("vx", 300.0, pauli("x").unwrap(), Monomial::KX)
        .term("vy", 300.0, pauli("y").unwrap(), Monomial::KY)
        .term("w1", 900.0, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term("w2", -2700.0, pauli("z").unwrap(), Monomial::new(1, 2, 0))
        .build()
        .unwrap()
}

/// What one run of the `ladderfan` binary gave.
pub struct Run {
    /// Exit code (-1 when killed by a signal).
    pub code: i32,
    /// Standard output.
    pub stdout: String,
    /// Standard error.
    pub stderr: String,
}

/// Run the `ladderfan` binary with `args` in `dir`.
pub fn run_in(dir: &std::path::Path, args: &[&str]) -> Run {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_ladderfan"))
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap_or_else(|e| panic!("cannot run ladderfan: {e}"));
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}
