//! Two-sided (partitioned) L D L^H factorisation of a shifted banded Hermitian matrix: the
//! top half is eliminated downwards and the bottom half upwards, at the same time on two
//! threads, and the two meet in a dense separator of b rows.
//!
//! # Definition
//! For H - sigma I of size n and half-bandwidth b, cut the rows into a top block T = [0, s),
//! a separator S = [s, s + b) and a bottom block B = [s + b, n), s = n/2. Rows of T couple to
//! S but not to B (they are more than b apart), so eliminating T in increasing order and B in
//! decreasing order, without pivoting, gives the congruence
//!
//! H - sigma I = L diag(D_T, C, D_B) L^H,
//!
//! where L is unit lower triangular in the elimination order (b multipliers per eliminated
//! row), D_T, D_B are the pivots and C = (H - sigma I)_SS - (updates from T) - (updates from
//! B) is the b x b Schur complement on the separator, decomposed densely as C = Q Lambda Q^H.
//! A solve is a forward sweep on both blocks (parallel), the separator solve, and a backward
//! sweep on both blocks (parallel). The inertia (Sylvester's law) is the number of negative
//! pivots plus the negative eigenvalues of C.
//!
//! # Stability
//! Without pivoting the factorisation of an indefinite matrix can grow. The growth
//! g = max_i sum_k |l_ik|^2 |d_k| / max |H - sigma I|_ij bounds every element of |L||D||L^H|
//! (Cauchy-Schwarz), and the backward error of a solve is about eps (2b + 1) g ||H - sigma||
//! (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed. (2002), sec. 10.4 and
//! 11.1); the caller ([`super::window`]) uses this factorisation only when g is small and
//! falls back to the pivoted [`super::banded::BandedLu`] otherwise.
//!
//! # Complexity
//! Factorisation n b^2 / 2 multiply-adds (half on each thread) plus O(b^3); each solve 2 n b
//! multiply-adds, reading the n (b + 1) numbers of the factors twice, half on each thread.
//! Memory: n (b + 1) numbers (8 bytes each real, 16 complex), against n (3b + 1) for the
//! pivoted LU.
//!
//! # References
//! Golub and Van Loan, Matrix Computations, 4th ed. (2013), sec. 4.1 and 4.3 (band L D L^T);
//! A. Sameh and D. Kuck, "On stable parallel linear system solvers", J. ACM 25, 81 (1978)
//! and E. Polizzi and A. Sameh, "A parallel hybrid banded system solver: the SPIKE
//! algorithm", Parallel Computing 32, 177 (2006) (partitioned banded solvers).

use super::banded::{BandedHermitian, BandedLu, Scalar};
use super::dense::{eigh, Vectors};
use super::plu::PartitionedLu;
use crate::error::Result;
use nalgebra::DMatrix;
use num_complex::Complex64;

/// The partitioned L D L^H factors of H - sigma I (see the module documentation).
#[derive(Debug, Clone)]
pub struct PartitionedLdl<T: Scalar> {
    n: usize,
    b: usize,
    /// First separator row (= n when there is no bottom block).
    s: usize,
    /// Separator rows (b, or 0 without a bottom block).
    sb: usize,
    /// Row i of an eliminated block: 1 / d_i, then the multipliers of its elimination step for
    /// rows i + 1..=i + b (top) or i - 1, .., i - b (bottom). Separator rows unused.
    f: Vec<T>,
    /// C^(-1) = Q Lambda^(-1) Q^H on the separator (sb x sb, column-major).
    sep_inv: Vec<T>,
    below: usize,
    growth: f64,
}

/// The shape of one block's elimination: `len` rows eliminated, `sp` spill rows, half-bandwidth
/// `b`, pivots of modulus at most `tiny` refused.
#[derive(Clone, Copy)]
struct Block {
    len: usize,
    sp: usize,
    b: usize,
    tiny: f64,
    /// Growth (absolute, sum_k |l_ik|^2 |d_k|) at which the sweep gives up.
    limit: f64,
}

/// Statistics of one elimination sweep.
struct Sweep {
    negative: usize,
    growth: f64,
}

/// One block's elimination: local rows 0..len (in elimination order) are eliminated, rows
/// len..len + sp are the spill rows whose coupled block starts at zero and collects the
/// updates (returned in `spill`, lower triangle, row-major sp x sp). `get(i, j)` (j <= i,
/// i - j <= b) is the element of H - sigma I in local order. `out` gets the factor row of
/// local step k at row `pos(k)` (rows of b + 1 numbers).
/// Returns `None` at a pivot of modulus <= `tiny` or a non-finite one.
fn sweep<T: Scalar>(
    Block {
        len,
        sp,
        b,
        tiny,
        limit,
    }: Block,
    get: impl Fn(usize, usize) -> T,
    pos: impl Fn(usize) -> usize,
    out: &mut [T],
    spill: &mut [T],
) -> Option<Sweep> {
    let w = b + 1;
    let total = len + sp;
    let mut ring = vec![T::zero(); w * w];
    let mut g = vec![0.0f64; w];
    let load = |ring: &mut [T], g: &mut [f64], i: usize| {
        let s = (i % w) * w;
        g[i % w] = 0.0;
        for off in 0..w {
            let j = (i + off) as isize - b as isize;
            ring[s + off] = if j < 0 || (i >= len && j as usize >= len) {
                T::zero()
            } else {
                get(i, j as usize)
            };
        }
    };
    for i in 0..w.min(total) {
        load(&mut ring, &mut g, i);
    }
    let mut negative = 0;
    let mut growth = 0.0f64;
    for k in 0..len {
        let sk = (k % w) * w;
        let d = ring[sk + b].real();
        if d.abs() <= tiny || !d.is_finite() {
            return None;
        }
        if d < 0.0 {
            negative += 1;
        }
        growth = growth.max(g[k % w] + d.abs());
        if growth > limit {
            // too much growth to be used: stop early rather than finish a refused factorisation
            return None;
        }
        let o = pos(k);
        let row = &mut out[o * w..(o + 1) * w];
        let inv = 1.0 / d;
        row[0] = T::from_real(inv);
        let last = (k + b).min(total - 1);
        for i in k + 1..=last {
            let si = (i % w) * w;
            let aik = ring[si + (k + b - i)];
            let lik = aik * T::from_real(inv);
            row[i - k] = lik;
            g[i % w] += lik.modulus_squared() * d.abs();
            for j in k + 1..=i {
                let sj = (j % w) * w;
                let ajk = ring[sj + (k + b - j)];
                ring[si + (j + b - i)] -= lik * ajk.conjugate();
            }
        }
        if k + w < total {
            load(&mut ring, &mut g, k + w);
        }
    }
    for r in 0..sp {
        let i = len + r;
        let si = (i % w) * w;
        for c in 0..=r {
            let j = len + c;
            spill[r * sp + c] = ring[si + (j + b - i)];
        }
    }
    if !growth.is_finite() {
        return None;
    }
    Some(Sweep { negative, growth })
}

impl<T: Scalar> PartitionedLdl<T> {
    /// Factor H - sigma I without pivoting, the two blocks on two threads (rayon `join`).
    /// Returns `Ok(None)` when a pivot or a separator eigenvalue has modulus at most
    /// eps ||H||_max-row-sum, or as soon as the growth exceeds `max_growth` (use the pivoted
    /// LU then; pass `f64::INFINITY` for no limit); the growth of a successful factorisation
    /// is [`PartitionedLdl::growth`].
    ///
    /// # Errors
    /// [`crate::Error::Numerical`] when the dense separator eigen-solve fails.
    ///
    /// # Complexity
    /// About n b^2 / 2 multiply-adds, half on each thread, plus O(b^3); memory n (b + 1)
    /// numbers.
    pub fn factor(h: &BandedHermitian, sigma: f64, max_growth: f64) -> Result<Option<Self>> {
        let (n, b) = (h.size(), h.half_bandwidth());
        let w = b + 1;
        let tiny = f64::EPSILON * h.norm_bound().max(f64::MIN_POSITIVE);
        let elem = |i: usize, j: usize| -> T {
            // H - sigma I at (i, j), j <= i, original order
            let mut z = h.lower::<T>(i, j);
            if i == j {
                z -= T::from_real(sigma);
            }
            z
        };
        let hmax = (0..n)
            .flat_map(|i| (i.saturating_sub(b)..=i).map(move |j| (i, j)))
            .fold(0.0f64, |a, (i, j)| a.max(elem(i, j).modulus()))
            .max(f64::MIN_POSITIVE);
        let limit = max_growth * hmax;
        // two blocks only when each is long enough to be worth a thread
        let (s, sb) = if n >= 8 * w && b > 0 {
            (n / 2, b)
        } else {
            (n, 0)
        };
        let nb = n - s - sb;
        let mut f = vec![T::zero(); n * w];
        let (top, rest) = f.split_at_mut(s * w);
        let bottom = &mut rest[sb * w..];
        let mut spill_t = vec![T::zero(); sb * sb];
        let mut spill_b = vec![T::zero(); sb * sb];
        let (rt, rb) = rayon::join(
            || {
                let block = Block {
                    len: s,
                    sp: sb,
                    b,
                    tiny,
                    limit,
                };
                sweep(block, elem, |k| k, top, &mut spill_t)
            },
            || {
                if nb == 0 {
                    return Some(Sweep {
                        negative: 0,
                        growth: 0.0,
                    });
                }
                // local row i' is original n - 1 - i'; (i', j'), j' <= i', is the upper
                // element (n-1-i', n-1-j') = conj of the stored (n-1-j', n-1-i'); local step
                // k' is stored at original row n - 1 - k', row nb - 1 - k' of the bottom
                let block = Block {
                    len: nb,
                    sp: sb,
                    b,
                    tiny,
                    limit,
                };
                sweep(
                    block,
                    |i, j| elem(n - 1 - j, n - 1 - i).conjugate(),
                    |k| nb - 1 - k,
                    bottom,
                    &mut spill_b,
                )
            },
        );
        let (Some(rt), Some(rb)) = (rt, rb) else {
            return Ok(None);
        };
        let mut below = rt.negative + rb.negative;
        let mut growth = rt.growth.max(rb.growth);
        let mut sep_inv = Vec::new();
        if sb > 0 {
            // C = (H - sigma)_SS + spill_t + spill_b (the spills hold minus the updates);
            // bottom spill local (r, c) is original (s + sb - 1 - r, s + sb - 1 - c), upper
            let c = DMatrix::<Complex64>::from_fn(sb, sb, |r, q| {
                let (i, j) = (r.max(q), r.min(q));
                let mut z = elem(s + i, s + j) + spill_t[i * sb + j];
                // original lower (s+i, s+j) = conj(local (sb-1-j, sb-1-i)) of the bottom
                let (li, lj) = (sb - 1 - j, sb - 1 - i);
                z += spill_b[li * sb + lj].conjugate();
                let z = Complex64::new(z.real(), z.imaginary());
                if r >= q {
                    z
                } else {
                    z.conj()
                }
            });
            let c = (&c + c.adjoint()) * Complex64::new(0.5, 0.0);
            let scale = c.iter().fold(0.0f64, |a, z| a.max(z.norm()));
            growth = growth.max(scale);
            let e = eigh(&c, Vectors::Compute)?;
            let Some(q) = e.vectors else {
                return Ok(None);
            };
            if e.values.iter().any(|l| l.abs() <= tiny || l.is_nan()) {
                return Ok(None);
            }
            below += e.values.iter().filter(|&&l| l < 0.0).count();
            let inv = DMatrix::<Complex64>::from_fn(sb, sb, |r, q2| {
                (0..sb)
                    .map(|t| q[(r, t)] * q[(q2, t)].conj() / e.values[t])
                    .sum()
            });
            sep_inv = inv.iter().map(|&z| T::from_c64(z)).collect();
        }
        if growth > limit {
            return Ok(None);
        }
        Ok(Some(PartitionedLdl {
            n,
            b,
            s,
            sb,
            f,
            sep_inv,
            below,
            growth: growth / hmax,
        }))
    }

    /// Number of eigenvalues of H below sigma (Sylvester's law of inertia on the congruence).
    pub fn below(&self) -> usize {
        self.below
    }

    /// Growth g = max_i sum_k |l_ik|^2 |d_k| / max_ij |H - sigma I|_ij (also covering the
    /// separator's largest element), >= 1 up to rounding; see the module documentation.
    pub fn growth(&self) -> f64 {
        self.growth
    }

    /// Overwrite `x` with (H - sigma I)^(-1) x: forward sweeps of both blocks (two threads),
    /// the separator solve, backward sweeps of both blocks (two threads).
    ///
    /// # Errors
    /// [`crate::Error::BadNumber`] when `x` does not have n elements.
    ///
    /// # Complexity
    /// 2 n b multiply-adds, reading the factors (n (b + 1) numbers) twice, plus O(b^2).
    pub fn solve_in_place(&self, x: &mut [T]) -> Result<()> {
        super::banded::check_length(x.len(), self.n)?;
        self.solve_unchecked(x);
        Ok(())
    }

    /// Overwrite `x` (length n, caller checks) with (H - sigma I)^(-1) x.
    pub(crate) fn solve_unchecked(&self, x: &mut [T]) {
        let (n, b, s, sb) = (self.n, self.b, self.s, self.sb);
        let w = b + 1;
        let (top, rest) = x.split_at_mut(s);
        let (sep, bot) = rest.split_at_mut(sb);
        let (ft, frest) = self.f.split_at(s * w);
        let fb = &frest[sb * w..];
        // forward sweeps and the diagonal; each side returns its updates of the separator
        let (acc_t, acc_b) = rayon::join(
            || forward_top(ft, b, sb, top),
            || forward_bottom(fb, b, sb, bot),
        );
        if sb > 0 {
            let y: Vec<T> = (0..sb).map(|r| sep[r] - acc_t[r] - acc_b[r]).collect();
            for (r, out) in sep.iter_mut().enumerate() {
                let mut z = T::zero();
                for (c, &yc) in y.iter().enumerate() {
                    z += self.sep_inv[c * sb + r] * yc;
                }
                *out = z;
            }
        }
        let sep: &[T] = sep;
        rayon::join(
            || backward_top(ft, b, sep, top),
            || backward_bottom(fb, b, sep, bot),
        );
        debug_assert_eq!(x.len(), n);
    }
}

/// L D forward solve of the top block (rows 0..s in order); returns the updates it owes the
/// separator rows s..s + sb (to subtract).
fn forward_top<T: Scalar>(f: &[T], b: usize, sb: usize, x: &mut [T]) -> Vec<T> {
    let w = b + 1;
    let s = x.len();
    let mut acc = vec![T::zero(); sb];
    for k in 0..s {
        let row = &f[k * w..(k + 1) * w];
        let xk = x[k];
        if k + b < s {
            for (xi, &l) in x[k + 1..=k + b].iter_mut().zip(&row[1..]) {
                *xi -= l * xk;
            }
        } else {
            for (r, &l) in row[1..].iter().enumerate() {
                let i = k + 1 + r;
                if i < s {
                    x[i] -= l * xk;
                } else if i - s < sb {
                    acc[i - s] += l * xk;
                }
            }
        }
        x[k] = xk * row[0];
    }
    acc
}

/// L D forward solve of the bottom block (rows in decreasing order); `x` is rows s + sb..n,
/// `f` their factor rows. Returns the updates owed to the separator.
fn forward_bottom<T: Scalar>(f: &[T], b: usize, sb: usize, x: &mut [T]) -> Vec<T> {
    let w = b + 1;
    let mut acc = vec![T::zero(); sb];
    for k in (0..x.len()).rev() {
        let row = &f[k * w..(k + 1) * w];
        let xk = x[k];
        if k >= b {
            // multiplier r (1-based) belongs to row k - r
            for (r, &l) in row[1..].iter().enumerate() {
                x[k - 1 - r] -= l * xk;
            }
        } else {
            for (r, &l) in row[1..].iter().enumerate() {
                let i = k as isize - 1 - r as isize; // local; below 0 is the separator
                if i >= 0 {
                    x[i as usize] -= l * xk;
                } else {
                    let t = (sb as isize + i) as usize; // separator row s + sb + i
                    if t < sb {
                        acc[t] += l * xk;
                    }
                }
            }
        }
        x[k] = xk * row[0];
    }
    acc
}

/// L^H backward solve of the top block, reading the solved separator.
fn backward_top<T: Scalar>(f: &[T], b: usize, sep: &[T], x: &mut [T]) {
    let w = b + 1;
    let s = x.len();
    for k in (0..s).rev() {
        let row = &f[k * w..(k + 1) * w];
        let mut z = x[k];
        if k + b < s {
            for (&l, &xi) in row[1..].iter().zip(&x[k + 1..=k + b]) {
                z -= l.conjugate() * xi;
            }
        } else {
            for (r, &l) in row[1..].iter().enumerate() {
                let i = k + 1 + r;
                let xi = if i < s {
                    x[i]
                } else if i - s < sep.len() {
                    sep[i - s]
                } else {
                    continue;
                };
                z -= l.conjugate() * xi;
            }
        }
        x[k] = z;
    }
}

/// L^H backward solve of the bottom block (rows in increasing order).
fn backward_bottom<T: Scalar>(f: &[T], b: usize, sep: &[T], x: &mut [T]) {
    let w = b + 1;
    let sb = sep.len() as isize;
    for k in 0..x.len() {
        let row = &f[k * w..(k + 1) * w];
        let mut z = x[k];
        if k >= b {
            for (r, &l) in row[1..].iter().enumerate() {
                z -= l.conjugate() * x[k - 1 - r];
            }
        } else {
            for (r, &l) in row[1..].iter().enumerate() {
                let i = k as isize - 1 - r as isize;
                let xi = if i >= 0 {
                    x[i as usize]
                } else if sb + i >= 0 {
                    sep[(sb + i) as usize]
                } else {
                    continue;
                };
                z -= l.conjugate() * xi;
            }
        }
        x[k] = z;
    }
}

/// Largest growth [`PartitionedLdl::growth`] accepted for the shift-invert operator: the
/// backward error of a solve is then at most about eps (2b + 1) 64 ||H - sigma||, the order of
/// the pivoted LU's in practice; above it the pivoted LU is used (common practice: accept an
/// unpivoted factorisation only with a small growth factor, Higham (2002) sec. 11.1).
pub const GROWTH_MAX: f64 = 64.0;

/// The factored shift-invert operator (H - sigma I)^(-1) the Lanczos iteration applies: the
/// two-sided L D L^H when its growth is small, else the two-sided pivoted LU when it passes
/// its check, else the serial pivoted LU.
#[derive(Debug, Clone)]
pub(crate) enum ShiftInverse<T: Scalar> {
    /// [`PartitionedLdl`] (two threads, n (b + 1) numbers).
    Ldl(PartitionedLdl<T>),
    /// [`PartitionedLu`] (two threads, n (3b + 1) numbers).
    SplitLu(Box<PartitionedLu<T>>),
    /// [`BandedLu`] (one thread, n (3b + 1) numbers).
    Lu(BandedLu<T>),
}

/// Smallest matrix size for which the window solver uses the two-threaded
/// [`PartitionedLu`]: below it a solve takes tens of microseconds and the two joins per solve
/// would not pay (common practice; the probe sizes are far above it).
pub(crate) const SPLIT_LU_MIN: usize = 16384;

impl<T: Scalar> ShiftInverse<T> {
    /// Factor H - sigma I: the partitioned L D L^H if it exists with growth at most
    /// [`GROWTH_MAX`], else the partitioned pivoted LU (n >= [`SPLIT_LU_MIN`]) if it passes its
    /// check, else the serial pivoted LU.
    ///
    /// # Errors
    /// As [`BandedLu`]'s factorisation (no pivot in a column: sigma is an eigenvalue).
    pub(crate) fn factor(h: &BandedHermitian, sigma: f64) -> Result<Self> {
        if let Some(ldl) = PartitionedLdl::<T>::factor(h, sigma, GROWTH_MAX)? {
            return Ok(ShiftInverse::Ldl(ldl));
        }
        if h.size() >= SPLIT_LU_MIN {
            if let Some(plu) = PartitionedLu::<T>::factor(h, sigma)? {
                return Ok(ShiftInverse::SplitLu(Box::new(plu)));
            }
        }
        BandedLu::<T>::factor_pub(h, sigma).map(ShiftInverse::Lu)
    }

    /// Overwrite `x` (length n, unchecked) with (H - sigma I)^(-1) x.
    pub(crate) fn solve_unchecked(&self, x: &mut [T]) {
        match self {
            ShiftInverse::Ldl(f) => f.solve_unchecked(x),
            ShiftInverse::SplitLu(f) => f.solve_unchecked(x),
            ShiftInverse::Lu(f) => f.solve_unchecked(x),
        }
    }
}
