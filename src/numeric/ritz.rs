//! Step 3 of the window solver ([`super::window`]): the Ritz pairs of the shift-inverted
//! Lanczos iteration refined in H itself, by one block step of subspace iteration with
//! Rayleigh-Ritz (Cholesky QR twice for the block's orthonormality), then the Rayleigh quotients
//! and explicit residuals ||H x - lambda x|| that bound the eigenvalues.

use super::banded::{BandedHermitian, Scalar};
use super::dense::{eigh, Vectors};
use super::lanczos::{
    breakdown, chunk_sum, dotc, norm, orthogonalize, sub_scaled, transform_columns, ROW_BLOCK,
};
use super::ldl::ShiftInverse;
use crate::error::Result;
use nalgebra::DMatrix;
use num_complex::Complex64;

/// One step of subspace iteration with Rayleigh–Ritz in H on the `k` Lanczos Ritz vectors in
/// the first columns of `basis`: X' = (H - sigma)^(-1) X, orthonormalised (against the locked
/// vectors too), then the Ritz pairs of H in span X'. `guess` holds the Lanczos estimates
/// sigma + 1/theta of the k eigenvalues (the Rayleigh quotients of the Lanczos pairs are
/// computed from them in one pass when they are close). Returns the buffer with the chosen
/// vectors in its first k columns, their Rayleigh quotients and explicit residuals.
///
/// Why: the Lanczos Ritz vectors carry rounding in directions far from sigma, where ||H|| is
/// large, and that dominates their residual in H; one inverse step damps it by the ratio of
/// the distances to sigma (measured: residuals drop by orders of magnitude). When the buffer
/// has room for a second block (m + 1 >= 2k) the step works there and the Lanczos pairs are
/// kept if the refined block has the larger worst residual; otherwise it works in place (and
/// the Lanczos pairs are not evaluated at all).
///
/// # Complexity
/// k solves (in parallel over the columns), then block kernels that each read the k columns
/// once in cache-sized row blocks, in parallel over row chunks: two Cholesky-QR passes (Gram
/// matrix and triangular transform), the projected matrix Q^H H Q, the Ritz transform and one
/// pass for the Rayleigh quotients and residuals; O(n k (b + k)) in all.
pub(super) fn refine<T: Scalar>(
    h: &BandedHermitian,
    lu: &ShiftInverse<T>,
    mut basis: DMatrix<T>,
    k: usize,
    guess: &[f64],
    locked: &[&[T]],
) -> Result<(DMatrix<T>, Vec<f64>, Vec<f64>)> {
    use rayon::prelude::*;
    let n = h.size();
    let backup = basis.ncols() >= 2 * k;
    let q0 = if backup { k } else { 0 };
    // the Lanczos pairs are only a fallback when they survive beside the refined block
    let old: Option<Vec<(f64, f64)>> =
        backup.then(|| rayleigh_guessed(h, basis.as_slice(), k, guess));
    if backup {
        basis.as_mut_slice().copy_within(0..k * n, k * n);
    }
    // X' = (H - sigma)^(-1) X, the columns in parallel (each solve in place)
    basis.as_mut_slice()[q0 * n..(q0 + k) * n]
        .par_chunks_mut(n)
        .for_each(|c| lu.solve_unchecked(c));
    // orthonormalise: Cholesky QR twice when nothing is locked and the block is well
    // conditioned (the usual case), else column by column with DGKS against the locked too
    if !(locked.is_empty() && cholesky_qr2(&mut basis, q0, k)) {
        let mut w = vec![T::zero(); n];
        for c in 0..k {
            let region = &basis.as_slice()[q0 * n..];
            w.copy_from_slice(&region[c * n..(c + 1) * n]);
            orthogonalize(&mut w, locked, region, c, None);
            let nw = norm(&w);
            if nw == 0.0 || !nw.is_finite() {
                // the block lost rank (cannot happen for orthonormal input in exact arithmetic)
                if let Some(old) = old {
                    return Ok((basis, old.iter().map(|p| p.0).collect(), residuals(&old)));
                }
                return Err(breakdown("the refinement block lost rank"));
            }
            let inv = T::from_real(1.0 / nw);
            for (d, s) in basis.as_mut_slice()[(q0 + c) * n..(q0 + c + 1) * n]
                .iter_mut()
                .zip(&w)
            {
                *d = *s * inv;
            }
        }
    }
    // Rayleigh–Ritz in H: G = Q^H H Q, Q <- Q Y
    let g = gram(Some(h), &basis.as_slice()[q0 * n..], n, k);
    let g = (&g + g.adjoint()) * Complex64::new(0.5, 0.0);
    let eig = eigh(&g, Vectors::Compute)?;
    let y = eig
        .vectors
        .ok_or_else(|| breakdown("no Rayleigh-Ritz vectors"))?;
    let yt = DMatrix::from_fn(k, k, |i, j| T::from_c64(y[(i, j)]));
    transform_columns(&mut basis, q0, k, &yt);
    let new = rayleigh_near(h, &basis.as_slice()[q0 * n..], k, &eig.values);
    // keep whichever block has the smaller worst residual: the step can lose accuracy when an
    // eigenvalue sits almost on sigma (its huge 1/(lambda - sigma) amplifies rounding)
    let worst = |v: &[(f64, f64)]| {
        v.iter().fold(0.0f64, |a, p| {
            if p.1.is_nan() {
                f64::INFINITY
            } else {
                a.max(p.1)
            }
        })
    };
    if let Some(old) = old {
        if worst(&old) < worst(&new) {
            return Ok((basis, old.iter().map(|p| p.0).collect(), residuals(&old)));
        }
        basis.as_mut_slice().copy_within(k * n..2 * k * n, 0);
    }
    Ok((basis, new.iter().map(|p| p.0).collect(), residuals(&new)))
}

fn residuals(p: &[(f64, f64)]) -> Vec<f64> {
    p.iter().map(|x| x.1).collect()
}

/// Copy rows r0..r1 of the first `out.ncols()` columns of the column-major block `q` (n rows)
/// into the leading rows of `out`.
fn load_rows<T: Scalar>(q: &[T], n: usize, r0: usize, r1: usize, out: &mut DMatrix<T>) {
    let rb = out.nrows();
    for c in 0..out.ncols() {
        out.as_mut_slice()[c * rb..c * rb + (r1 - r0)].copy_from_slice(&q[c * n + r0..c * n + r1]);
    }
}

/// Q^H Q (`h` = None) or Q^H H Q for the first k columns Q of the column-major block `q` (n
/// rows), as a k x k complex matrix. One pass over the rows in blocks of [`ROW_BLOCK`] (each
/// column read once), in parallel over the fixed row chunks of `chunk_sum` (partial sums added
/// in chunk order, so the result does not depend on the thread count).
fn gram<T: Scalar>(h: Option<&BandedHermitian>, q: &[T], n: usize, k: usize) -> DMatrix<Complex64> {
    let sums = chunk_sum::<T>(n, k * k, |a, b| {
        let rb = ROW_BLOCK.min(b - a);
        let mut qa = DMatrix::<T>::zeros(rb, k);
        let mut hq = DMatrix::<T>::zeros(if h.is_some() { rb } else { 0 }, k);
        let mut g = DMatrix::<T>::zeros(k, k);
        let mut r0 = a;
        while r0 < b {
            let r1 = (r0 + rb).min(b);
            let r = r1 - r0;
            load_rows(q, n, r0, r1, &mut qa);
            let right = match h {
                Some(h) => {
                    for c in 0..k {
                        h.mul_rows(
                            &q[c * n..(c + 1) * n],
                            r0,
                            r1,
                            &mut hq.as_mut_slice()[c * rb..c * rb + r],
                        );
                    }
                    &hq
                }
                None => &qa,
            };
            g.gemm_ad(
                T::one(),
                &qa.view((0, 0), (r, k)),
                &right.view((0, 0), (r, k)),
                T::one(),
            );
            r0 = r1;
        }
        g.as_slice().to_vec()
    });
    DMatrix::from_fn(k, k, |i, j| {
        let z = sums[i + j * k];
        Complex64::new(z.real(), z.imaginary())
    })
}

/// Orthonormalise columns q0..q0+k of `basis` in place by Cholesky QR, twice (CholQR2: the
/// second pass restores orthogonality to rounding level when the first leaves cond(X)^2 eps
/// behind; Fukaya, Nakatsukasa, Yanagisawa and Yamamoto, "CholeskyQR2", ScalA 2014). The Gram
/// matrix is scaled to unit diagonal first, so unequal column norms (|theta| spread after the
/// inverse step) do not enter the condition number. Returns false, with the block spanning the
/// same space, when a scaled Gram matrix is not safely positive definite (a Cholesky pivot
/// below 1e-5, i.e. the scaled block has condition above about 1e5): then the caller
/// orthonormalises column by column.
///
/// # Complexity
/// Per pass one Gram pass and one transform pass over the k columns, O(n k^2).
fn cholesky_qr2<T: Scalar>(basis: &mut DMatrix<T>, q0: usize, k: usize) -> bool {
    let n = basis.nrows();
    for _pass in 0..2 {
        let g = gram(None, &basis.as_slice()[q0 * n..], n, k);
        let d: Vec<f64> = (0..k).map(|i| 1.0 / g[(i, i)].re.sqrt()).collect();
        if d.iter().any(|x| !x.is_finite()) {
            return false;
        }
        let gs = DMatrix::from_fn(k, k, |i, j| g[(i, j)] * (d[i] * d[j]));
        let Some(chol) = gs.cholesky() else {
            return false;
        };
        let l = chol.l();
        if (0..k).any(|i| l[(i, i)].re.is_nan() || l[(i, i)].re <= 1e-5) {
            return false;
        }
        let Some(linv) = l.solve_lower_triangular(&DMatrix::identity(k, k)) else {
            return false;
        };
        // Q = X D L^(-H): t_ij = d_i conj(linv_ji)
        let t = DMatrix::from_fn(k, k, |i, j| T::from_c64(linv[(j, i)].conj() * d[i]));
        transform_columns(basis, q0, k, &t);
    }
    true
}

/// Rayleigh quotients and explicit residuals of the k unit columns of `q`, each from a guess
/// `guess[c]` of its Rayleigh quotient, in one pass over the rows: r = H q - g q, then
/// lambda = g + q^H r and ||H q - lambda q||^2 = ||r||^2 - (lambda - g)^2 (exact for a unit q;
/// the guess must be close, as the Rayleigh–Ritz values are, for this to keep its accuracy).
/// Blocked over rows (the band rows of a block stay in cache for all k columns), in parallel
/// over row chunks.
fn rayleigh_near<T: Scalar>(
    h: &BandedHermitian,
    q: &[T],
    k: usize,
    guess: &[f64],
) -> Vec<(f64, f64)> {
    let n = h.size();
    // per column: q^H r (real part) and ||r||^2
    let sums = chunk_sum::<Complex64>(n, 2 * k, |a, b| {
        let mut part = vec![Complex64::new(0.0, 0.0); 2 * k];
        let mut buf = vec![T::zero(); ROW_BLOCK.min(b - a)];
        let mut r0 = a;
        while r0 < b {
            let r1 = (r0 + ROW_BLOCK).min(b);
            let r = r1 - r0;
            for c in 0..k {
                let qc = &q[c * n..(c + 1) * n];
                h.mul_rows(qc, r0, r1, &mut buf[..r]);
                sub_scaled(&mut buf[..r], T::from_real(guess[c]), &qc[r0..r1]);
                part[2 * c].re += dotc(&qc[r0..r1], &buf[..r]).real();
                part[2 * c + 1].re += buf[..r].iter().map(|z| z.modulus_squared()).sum::<f64>();
            }
            r0 = r1;
        }
        part
    });
    (0..k)
        .map(|c| {
            let delta = sums[2 * c].re;
            let r2 = sums[2 * c + 1].re;
            (guess[c] + delta, (r2 - delta * delta).max(0.0).sqrt())
        })
        .collect()
}

/// Rayleigh quotients and explicit residuals of the first k unit columns of `q` from guesses
/// of the quotients: one pass of [`rayleigh_near`], and a second from the quotients of the
/// first only when a guess was far off. Close means |lambda - g| <= 1e3 r (r the residual):
/// then ||r_g||^2 = r^2 + (lambda - g)^2 <= (1 + 1e6) r^2, and the rounding of the sum,
/// about eps ||r_g||^2, changes r^2 by at most about 2e-10 of itself. A guess far off (0, say,
/// or an unconverged estimate) fails the test because the cancellation then leaves at least
/// about sqrt(eps) |lambda - g| in the computed r.
fn rayleigh_guessed<T: Scalar>(
    h: &BandedHermitian,
    q: &[T],
    k: usize,
    guess: &[f64],
) -> Vec<(f64, f64)> {
    let first = rayleigh_near(h, q, k, guess);
    let close = first.iter().zip(guess).all(|(p, g)| {
        let d = p.0 - g;
        d.is_finite() && d * d <= 1e6 * p.1 * p.1
    });
    if close {
        return first;
    }
    let values: Vec<f64> = first.iter().map(|p| p.0).collect();
    rayleigh_near(h, q, k, &values)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::lanczos::SplitMix;

    /// A real band matrix (b = 2) with a random diagonal, and a unit vector near one of its
    /// eigenvectors: the eigenvector plus a perturbation of size `eps_pert`.
    fn case(eps_pert: f64) -> (BandedHermitian, Vec<f64>, f64) {
        let n = 300;
        let mut rng = SplitMix(7);
        let diag: Vec<f64> = (0..n).map(|_| 4.0 * rng.uniform()).collect();
        let h = BandedHermitian::from_fn(n, 2, |i, j| {
            Complex64::new(
                match i - j {
                    0 => diag[i],
                    1 => -1.0,
                    _ => 0.25,
                },
                0.0,
            )
        })
        .unwrap();
        let e = crate::numeric::window::nearest(&h, 1.3, 1).unwrap();
        let mut q: Vec<f64> = (0..n).map(|i| e.vectors[(i, 0)].re).collect();
        for z in q.iter_mut() {
            *z += eps_pert * rng.uniform();
        }
        let nq = q.iter().map(|z| z * z).sum::<f64>().sqrt();
        q.iter_mut().for_each(|z| *z /= nq);
        (h, q, e.values[0])
    }

    /// The quotient and residual computed directly: q^T H q and ||H q - lambda q||.
    fn direct(h: &BandedHermitian, q: &[f64]) -> (f64, f64) {
        let mut hq = vec![0.0; q.len()];
        h.mul_into(q, &mut hq);
        let lam: f64 = q.iter().zip(&hq).map(|(a, b)| a * b).sum();
        let r = hq
            .iter()
            .zip(q)
            .map(|(a, b)| (a - lam * b).powi(2))
            .sum::<f64>()
            .sqrt();
        (lam, r)
    }

    #[test]
    fn one_pass_from_a_close_guess_and_two_from_a_far_one_agree_with_the_direct_values() {
        for pert in [1e-9, 1e-5, 1e-2] {
            let (h, q, lam) = case(pert);
            let (l0, r0) = direct(&h, &q);
            // close (the eigenvalue itself), far (0 and 1e3) and exact guesses
            for g in [lam, 0.0, 1e3, l0] {
                let got = rayleigh_guessed(&h, &q, 1, &[g]);
                let (l, r) = got[0];
                assert!(
                    (l - l0).abs() <= 1e-13 * (1.0 + l0.abs()),
                    "{pert} {g}: {l} vs {l0}"
                );
                assert!(
                    (r - r0).abs() <= 1e-6 * r0 + 1e-13,
                    "{pert} {g}: residual {r} vs {r0}"
                );
            }
        }
    }
}
