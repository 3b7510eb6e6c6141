//! Two-sided (partitioned) LU of a shifted banded Hermitian matrix with partial pivoting
//! inside each partition: the top half is eliminated downwards and the bottom half upwards,
//! at the same time on two threads, and the two meet in a dense separator of b rows. The
//! pivoted companion of [`super::ldl`], for shifts where the unpivoted L D L^H grows too much
//! (an indefinite shift inside the spectrum).
//!
//! # Definition
//! For A = H - sigma I of size n and half-bandwidth b, cut the rows into a top block
//! T = [0, s), a separator S = [s, s + b) and a bottom block B = [s + b, n), s = (n - b)/2.
//! T and B do not couple (they are more than b apart). A_TT = P_T L_T U_T is factored in
//! increasing order and A_BB in decreasing order (the LU of J A_BB J, J the reversal), each
//! with partial pivoting inside its own block ([`BandedLu`]). With
//!
//! E_T = A_ST U_T^(-1) (non-zero only on the last b columns of T) and
//! F_T = L_T^(-1) P_T^T A_TS (non-zero only on the last 2b rows of T),
//!
//! and the same for B, the separator carries the b x b Schur complement
//! C = A_SS - E_T F_T - E_B F_B (dense LU). A solve of A x = y is: forward sweeps
//! g_T = L_T^(-1) P_T^T y_T and g_B (two threads); x_S = C^(-1) (y_S - E_T g_T - E_B g_B);
//! backward sweeps x_T = U_T^(-1) (g_T - F_T x_S) and x_B (two threads). The corrections touch
//! only the last 2b rows of each block, so each thread does half of the serial LU's work.
//!
//! # Stability
//! Pivoting inside a block keeps that block's elimination as stable as banded Gaussian
//! elimination with partial pivoting, but a block can be nearly singular while A is not (sigma
//! near an eigenvalue of the principal block), which amplifies rounding in the Schur
//! complement. The factorisation is therefore checked a posteriori: one solve of a random
//! right-hand side must leave a residual ||A x - y|| below 64 (2b + 1) eps (||A|| ||x|| +
//! ||y||) (the bound used for the unpivoted L D L^H in [`super::ldl::GROWTH_MAX`]); otherwise
//! [`PartitionedLu::factor`] declines and the caller uses the serial [`BandedLu`].
//!
//! # Complexity
//! Factorisation about 2 n b^2 multiply-adds (half on each thread) plus O(n b) for E, F and
//! the check; each solve about 3 n b multiply-adds, reading the n (3b + 1) numbers of the
//! factors once, half on each thread, plus O(b^2). Memory: n (3b + 1) numbers and n pivots,
//! as the serial LU, plus O(b^2).
//!
//! # References
//! E. Polizzi and A. Sameh, "A parallel hybrid banded system solver: the SPIKE algorithm",
//! Parallel Computing 32, 177 (2006) (partitioned banded solvers, pivoting inside each
//! partition); Golub and Van Loan, Matrix Computations, 4th ed. (2013), sec. 4.3 (band
//! Gaussian elimination with pivoting).

use super::banded::{BandedHermitian, BandedLu, Scalar};
use super::lanczos::{random_fill, SplitMix};
use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector, Dyn, LU};

/// Smallest size for which [`PartitionedLu::factor`] partitions (8b + 8: each block keeps at
/// least 2b rows of its own beside the rows the separator touches).
pub fn min_size(b: usize) -> usize {
    8 * b + 8
}

/// One eliminated block: its pivoted LU in local order (top: increasing global index; bottom:
/// decreasing) and the two spikes that couple it to the separator.
#[derive(Debug, Clone)]
struct Part<T: Scalar> {
    lu: BandedLu<T>,
    /// E = A_SP U^(-1) restricted to the last b local columns: b x b (row r = separator row r).
    e: DMatrix<T>,
    /// F = L^(-1) P^T A_PS restricted to the last 2b local rows: 2b x b.
    f: DMatrix<T>,
}

impl<T: Scalar> Part<T> {
    /// Factor the block of size `len` whose local index i is global row `g(i)`, with the
    /// separator rows s..s + b.
    fn factor(
        a: &(impl Fn(usize, usize) -> T + Sync),
        len: usize,
        b: usize,
        s: usize,
        sigma: f64,
        g: impl Fn(usize) -> usize,
    ) -> Result<Self> {
        let lu = BandedLu::factor_fn(len, b, sigma, |i, j| a(g(i), g(j)))?;
        let near = |gi: usize, gj: usize| gi.abs_diff(gj) <= b;
        // F: forward sweep of each separator column restricted to the block
        let mut f = DMatrix::<T>::zeros(2 * b, b);
        let mut v = vec![T::zero(); len];
        for c in 0..b {
            v.iter_mut().for_each(|z| *z = T::zero());
            for (i, z) in v.iter_mut().enumerate().skip(len - b) {
                if near(g(i), s + c) {
                    *z = a(g(i), s + c);
                }
            }
            lu.forward::<false>(&mut v);
            for r in 0..2 * b {
                f[(r, c)] = v[len - 2 * b + r];
            }
        }
        // E: e^T U = a^T for each separator row, a on the last b local columns
        let mut e = DMatrix::<T>::zeros(b, b);
        let lo = len - b;
        for r in 0..b {
            let mut ev = vec![T::zero(); b];
            for j in lo..len {
                let mut z = if near(s + r, g(j)) {
                    a(s + r, g(j))
                } else {
                    T::zero()
                };
                for i in lo.max(j.saturating_sub(2 * b))..j {
                    z -= ev[i - lo] * lu.upper(i, j);
                }
                ev[j - lo] = z / lu.upper(j, j);
            }
            for (c, &z) in ev.iter().enumerate() {
                e[(r, c)] = z;
            }
        }
        Ok(Part { lu, e, f })
    }

    /// E (rows lo.. of F): the block's part of the separator's Schur complement, E F_tail.
    fn schur(&self, b: usize) -> DMatrix<T> {
        &self.e * self.f.rows(b, b)
    }

    /// Forward sweep of the block's slice `x` (local order reversed when `REV`); returns
    /// E g_tail, the update it owes the separator (to subtract).
    fn forward<const REV: bool>(&self, x: &mut [T]) -> Vec<T> {
        self.lu.forward::<REV>(x);
        let (len, b) = (x.len(), self.e.nrows());
        let at = |i: usize| if REV { len - 1 - i } else { i };
        (0..b)
            .map(|r| {
                let mut z = T::zero();
                for c in 0..b {
                    z += self.e[(r, c)] * x[at(len - b + c)];
                }
                z
            })
            .collect()
    }

    /// g_tail -= F x_S, then the backward sweep of the block's slice.
    fn backward<const REV: bool>(&self, x: &mut [T], xs: &[T]) {
        let (len, b) = (x.len(), self.e.nrows());
        let at = |i: usize| if REV { len - 1 - i } else { i };
        for r in 0..2 * b {
            let mut z = T::zero();
            for (c, &xc) in xs.iter().enumerate() {
                z += self.f[(r, c)] * xc;
            }
            x[at(len - 2 * b + r)] -= z;
        }
        self.lu.backward::<REV>(x);
    }
}

/// The partitioned pivoted LU factors of H - sigma I (see the module documentation).
#[derive(Debug, Clone)]
pub struct PartitionedLu<T: Scalar> {
    n: usize,
    b: usize,
    /// First separator row.
    s: usize,
    top: Part<T>,
    bottom: Part<T>,
    /// Dense LU of the separator's Schur complement C.
    sep: LU<T, Dyn, Dyn>,
}

impl<T: Scalar> PartitionedLu<T> {
    /// Factor H - sigma I in two partitions on two threads; `Ok(None)` when n is below
    /// [`min_size`], b = 0, a block or the separator is singular, or the check solve of the
    /// module documentation fails (then use [`BandedLu`]).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a non-finite sigma.
    ///
    /// # Complexity
    /// About 2 n b^2 multiply-adds, half on each thread; memory n (3b + 1) numbers.
    pub fn factor(h: &BandedHermitian, sigma: f64) -> Result<Option<Self>> {
        if !sigma.is_finite() {
            return Err(Error::BadNumber {
                name: "shift sigma".into(),
                value: sigma,
                fix: "give a finite number".into(),
            });
        }
        let (n, b) = (h.size(), h.half_bandwidth());
        if b == 0 || n < min_size(b) {
            return Ok(None);
        }
        let s = (n - b) / 2;
        let nb = n - s - b;
        let a = |i: usize, j: usize| BandedLu::<T>::shifted(h, sigma, i, j);
        let (top, bottom) = rayon::join(
            || Part::factor(&a, s, b, s, sigma, |i| i),
            || Part::factor(&a, nb, b, s, sigma, |i| n - 1 - i),
        );
        // a singular block (sigma an eigenvalue of it) does not make A singular: decline
        let (Ok(top), Ok(bottom)) = (top, bottom) else {
            return Ok(None);
        };
        let c = DMatrix::from_fn(b, b, |r, q| a(s + r, s + q)) - top.schur(b) - bottom.schur(b);
        let sep = c.lu();
        if !sep.is_invertible() {
            return Ok(None);
        }
        let plu = PartitionedLu {
            n,
            b,
            s,
            top,
            bottom,
            sep,
        };
        Ok(plu.checked(h, sigma).then_some(plu))
    }

    /// The a-posteriori check of the module documentation on one random right-hand side.
    fn checked(&self, h: &BandedHermitian, sigma: f64) -> bool {
        let n = self.n;
        let mut y = vec![T::zero(); n];
        random_fill(&mut y, &mut SplitMix(0x5eed_0fc0_ffee));
        let mut x = y.clone();
        self.solve_unchecked(&mut x);
        let mut r = vec![T::zero(); n];
        h.mul_into(&x, &mut r);
        let norm = |v: &[T]| v.iter().map(|z| z.modulus_squared()).sum::<f64>().sqrt();
        for ((ri, &xi), &yi) in r.iter_mut().zip(&x).zip(&y) {
            *ri -= xi * T::from_real(sigma) + yi;
        }
        let scale = (h.norm_bound() + sigma.abs()) * norm(&x) + norm(&y);
        let bound = 64.0 * (2 * self.b + 1) as f64 * f64::EPSILON * scale;
        let res = norm(&r);
        res.is_finite() && res <= bound
    }

    /// Overwrite `x` with (H - sigma I)^(-1) x.
    ///
    /// # Errors
    /// [`Error::BadNumber`] when `x` does not have n elements.
    ///
    /// # Complexity
    /// About 3 n b multiply-adds, half on each thread, plus O(b^2) for the separator.
    pub fn solve_in_place(&self, x: &mut [T]) -> Result<()> {
        super::banded::check_length(x.len(), self.n)?;
        self.solve_unchecked(x);
        Ok(())
    }

    /// Overwrite `x` (length n, caller checks) with (H - sigma I)^(-1) x.
    pub(crate) fn solve_unchecked(&self, x: &mut [T]) {
        let (top, rest) = x.split_at_mut(self.s);
        let (sep, bot) = rest.split_at_mut(self.b);
        let (ct, cb) = rayon::join(
            || self.top.forward::<false>(top),
            || self.bottom.forward::<true>(bot),
        );
        let y = DVector::from_fn(self.b, |r, _| sep[r] - ct[r] - cb[r]);
        // the Schur complement is invertible (checked when factored)
        if let Some(xs) = self.sep.solve(&y) {
            sep.copy_from_slice(xs.as_slice());
        }
        let xs: &[T] = sep;
        rayon::join(
            || self.top.backward::<false>(top, xs),
            || self.bottom.backward::<true>(bot, xs),
        );
    }
}
