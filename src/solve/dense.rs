//! Dense Hermitian eigen-solve of one sector (temporary nalgebra path; replaced by the measured
//! multi-path solver).

use crate::error::{Error, Result};
use nalgebra::DMatrix;
use num_complex::Complex64;

/// Whether eigenvectors are wanted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Vectors {
    /// Compute eigenvectors.
    Compute,
    /// Eigenvalues only.
    Skip,
}

/// Eigenvalues (ascending) and optionally eigenvectors (columns) of a dense Hermitian matrix.
#[derive(Debug, Clone)]
pub struct DenseEigen {
    /// Eigenvalues, ascending.
    pub values: Vec<f64>,
    /// Eigenvectors as columns, in the order of `values`.
    pub vectors: Option<DMatrix<Complex64>>,
}

/// Hermitian eigen-solve; reads the lower triangle.
///
/// # Complexity
/// O(s^3) for an s x s matrix.
///
/// # Errors
/// [`Error::Numerical`] when the matrix holds non-finite numbers.
pub fn eigh(h: &DMatrix<Complex64>, vectors: Vectors) -> Result<DenseEigen> {
    if h.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
        return Err(Error::Numerical {
            stage: "dense eigen-solve".into(),
            detail: "the sector matrix holds a non-finite number".into(),
        });
    }
    let eig = nalgebra::SymmetricEigen::new(h.clone());
    let mut idx: Vec<usize> = (0..eig.eigenvalues.len()).collect();
    idx.sort_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]));
    let values = idx.iter().map(|&i| eig.eigenvalues[i]).collect();
    let vecs = match vectors {
        Vectors::Compute => Some(DMatrix::from_fn(h.nrows(), h.ncols(), |r, c| {
            eig.eigenvectors[(r, idx[c])]
        })),
        Vectors::Skip => None,
    };
    Ok(DenseEigen {
        values,
        vectors: vecs,
    })
}
