//! Extended-precision refinement of an eigenpair of a small Hermitian sector.
//!
//! Near a large reference energy (a rest energy m c^2 ~ 5e8 meV against Landau splittings of
//! ~0.1 meV per tesla) a double-precision eigenvalue carries an absolute error of order
//! 1e-16 x ||H||, which is most of the splitting. The caller therefore assembles the matrix with
//! E_ref subtracted in double-double arithmetic (in ladderfan the Hamiltonian's double-double
//! sector elements, passed here as a function of (i, j)), and each eigenpair is
//! refined by the iteration of Dongarra, Moler & Wilkinson: the residual r = lambda y - A y is
//! evaluated in double-double, the correction is solved in double from the bordered system
//!
//! (A - lambda I) delta - mu y = r,   delta_s = 0 (s = index of the largest |y_s|),
//!
//! and y += delta, lambda += mu are accumulated in double-double. Each step gains a factor of
//! about eps x ||A|| / gap, so a few steps reach double-double accuracy.
//!
//! # References
//! J. J. Dongarra, C. B. Moler & J. H. Wilkinson, "Improving the accuracy of computed
//! eigenvalues and eigenvectors", SIAM J. Numer. Anal. 20, 23 (1983).
//!
//! # Complexity
//! O(s^3) per step for an s x s sector (LU of the bordered matrix); used for small sectors only.

use super::dd::{Dd, DdComplex};
use nalgebra::DMatrix;
use num_complex::Complex64;

/// Result of a refinement: eigenvalue as double-double and the refined vector (normalised).
#[derive(Debug, Clone)]
pub struct Refined {
    /// Refined eigenvalue.
    pub value: Dd,
    /// Refined eigenvector, unit norm, rounded to double.
    pub vector: Vec<Complex64>,
    /// Norm of the final residual A y - lambda y (double-double evaluation), for a unit y.
    pub residual: f64,
}

/// Refine the eigenpair (`lambda`, `y`) of the Hermitian matrix whose double-double elements
/// are given by `a(i, j)`.
pub fn refine(
    size: usize,
    a: &dyn Fn(usize, usize) -> DdComplex,
    lambda: f64,
    y: &[Complex64],
    max_steps: usize,
) -> Refined {
    let amat: Vec<DdComplex> = (0..size * size).map(|k| a(k / size, k % size)).collect();
    let ahi = DMatrix::from_fn(size, size, |i, j| amat[i * size + j].to_c64());
    let mut lam = Dd::from_f64(lambda);
    let mut yv: Vec<DdComplex> = y.iter().map(|&z| DdComplex::from_c64(z)).collect();
    let mut last_res = f64::INFINITY;
    for _ in 0..max_steps {
        // residual r = lam y - A y in double-double
        let mut r = vec![DdComplex::default(); size];
        let lamc = DdComplex {
            re: lam,
            im: Dd::default(),
        };
        for i in 0..size {
            let mut acc = lamc * yv[i];
            for j in 0..size {
                acc = acc - amat[i * size + j] * yv[j];
            }
            r[i] = acc;
        }
        let rd: Vec<Complex64> = r.iter().map(|z| z.to_c64()).collect();
        let ynorm = yv.iter().map(|z| z.to_c64().norm_sqr()).sum::<f64>().sqrt();
        let rnorm =
            rd.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt() / ynorm.max(f64::MIN_POSITIVE);
        last_res = rnorm;
        if rnorm == 0.0 {
            break;
        }
        // bordered system: column s of (A - lam I) replaced by -y
        let yd: Vec<Complex64> = yv.iter().map(|z| z.to_c64()).collect();
        let s = (0..size)
            .max_by(|&i, &j| yd[i].norm_sqr().total_cmp(&yd[j].norm_sqr()))
            .unwrap_or(0);
        let lamd = lam.to_f64();
        let mut b = ahi.clone();
        for i in 0..size {
            b[(i, i)] -= Complex64::new(lamd, 0.0);
        }
        for i in 0..size {
            b[(i, s)] = -yd[i];
        }
        let rhs = nalgebra::DVector::from_vec(rd);
        let Some(z) = b.lu().solve(&rhs) else { break };
        let mu = z[s];
        for i in 0..size {
            if i != s {
                yv[i] = yv[i] + DdComplex::from_c64(z[i]);
            }
        }
        lam = lam + Dd::from_f64(mu.re);
        if mu.norm() == 0.0 {
            break;
        }
    }
    let yd: Vec<Complex64> = yv.iter().map(|z| z.to_c64()).collect();
    let norm = yd.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt();
    let vector = yd.iter().map(|z| z / norm).collect();
    Refined {
        value: lam,
        vector,
        residual: last_res,
    }
}
