//! Banded Hermitian matrices: storage, product, shifted LU factorisation and inertia counts.
//!
//! # Definition
//! A Hermitian n x n matrix H with half-bandwidth b has H_ij = 0 for |i - j| > b. Only the
//! lower band j in i-b..=i is stored (row-major, b + 1 numbers a row); the upper band is its
//! conjugate. A ladder-form Hamiltonian in orbital-major order (index n d + alpha) with band
//! half-width `band` orbitals has b = (band + 1) d - 1.
//!
//! # Factorisations
//! - [`BandedLu`]: Gaussian elimination with partial pivoting of H - sigma I, the banded form of
//!   LAPACK's `gbtrf`: the upper factor gains at most b extra super-diagonals (2b in all), the
//!   lower factor keeps b multipliers a column. Backward stable in practice (growth bounded by
//!   2^(2b) in theory). Time O(n b^2), memory O(n b).
//! - [`BandedHermitian::inertia`]: the number of eigenvalues below sigma by Sylvester's law of
//!   inertia from an unpivoted L D L^H of H - sigma I (the banded Sturm count). Time O(n b^2).
//!
//! # References
//! Golub and Van Loan, Matrix Computations, 4th ed. (2013), sec. 4.3 (band Gaussian
//! elimination with pivoting) and sec. 8.4 (Sturm sequences and inertia).

use crate::error::{Error, Result};
use num_complex::Complex64;

/// A scalar the banded kernels work in: `f64` (real symmetric matrices, about four times
/// cheaper) or `Complex64`.
pub trait Scalar: nalgebra::ComplexField<RealField = f64> + Copy {
    /// Conversion from a complex number; the real type keeps the real part (the real kernels
    /// run only when every imaginary part is exactly zero).
    fn from_c64(z: Complex64) -> Self;
    /// The number re + i im (the real type drops `im`, as [`Scalar::from_c64`]).
    fn from_parts(re: f64, im: f64) -> Self;
    /// Whether the type is real (then imaginary parts are never read).
    const IS_REAL: bool;
}
impl Scalar for f64 {
    const IS_REAL: bool = true;
    #[inline]
    fn from_c64(z: Complex64) -> Self {
        z.re
    }
    #[inline]
    fn from_parts(re: f64, _im: f64) -> Self {
        re
    }
}
impl Scalar for Complex64 {
    const IS_REAL: bool = false;
    #[inline]
    fn from_c64(z: Complex64) -> Self {
        z
    }
    #[inline]
    fn from_parts(re: f64, im: f64) -> Self {
        Complex64::new(re, im)
    }
}

/// A Hermitian band matrix stored by its lower band.
#[derive(Debug, Clone)]
pub struct BandedHermitian {
    n: usize,
    b: usize,
    /// Real parts: row i holds columns i-b..=i at `i*(b+1) + (j + b - i)`; entries with
    /// j < 0 are zero.
    re: Vec<f64>,
    /// Imaginary parts in the same layout, or empty when every element is real (a real
    /// matrix is stored in 8 bytes an element, half the complex storage).
    im: Vec<f64>,
    /// [`BandedHermitian::norm_bound`], computed at its first use (the matrix never changes
    /// after it is built, and the window solver, its factorisations and the caller each ask).
    norm: std::sync::OnceLock<f64>,
}

/// Inertia of H - sigma I: how many eigenvalues of H lie below sigma.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Inertia {
    /// Number of eigenvalues below sigma (negative pivots of L D L^H).
    pub below: usize,
    /// Number of pivots that were exactly zero or below the tiny threshold and were replaced by
    /// +threshold (each is an eigenvalue within about machine precision x ||H|| of sigma).
    pub tiny_pivots: usize,
}

impl BandedHermitian {
    /// Build the n x n Hermitian matrix with half-bandwidth `b` from its lower band:
    /// `f(i, j)` is called for j in i.saturating_sub(b)..=i (b above n - 1 is reduced to
    /// n - 1). Only the real part of diagonal elements is used (a Hermitian matrix has a real
    /// diagonal).
    ///
    /// # Errors
    /// [`Error::BadNumber`] when n = 0 or an element is not finite.
    ///
    /// # Complexity
    /// n (b + 1) calls of `f`; memory 8 n (b + 1) bytes for a real matrix (every imaginary
    /// part zero), 16 n (b + 1) bytes otherwise.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::numeric::banded::BandedHermitian;
    /// use num_complex::Complex64;
    /// // tridiagonal 2 on the diagonal, -1 off it
    /// let h = BandedHermitian::from_fn(4, 1, |i, j| {
    ///     Complex64::new(if i == j { 2.0 } else { -1.0 }, 0.0)
    /// }).unwrap();
    /// let y = h.mul_vec(&[Complex64::new(1.0, 0.0); 4]).unwrap();
    /// assert_eq!(y[0].re, 1.0);
    /// assert_eq!(y[1].re, 0.0);
    /// ```
    pub fn from_fn<F>(n: usize, b: usize, mut f: F) -> Result<Self>
    where
        F: FnMut(usize, usize) -> Complex64,
    {
        if n == 0 {
            return Err(Error::BadNumber {
                name: "band matrix size".into(),
                value: 0.0,
                fix: "give at least one row".into(),
            });
        }
        let b = b.min(n - 1);
        let w = b + 1;
        let mut re = vec![0.0; n * w];
        // the imaginary parts are allocated at the first non-zero one only
        let mut im: Vec<f64> = Vec::new();
        for i in 0..n {
            for j in i.saturating_sub(b)..=i {
                let mut z = f(i, j);
                if i == j {
                    z.im = 0.0;
                }
                if !(z.re.is_finite() && z.im.is_finite()) {
                    return Err(Error::BadNumber {
                        name: format!("band matrix element ({i},{j})"),
                        value: if z.re.is_finite() { z.im } else { z.re },
                        fix: "every element must be finite; check the model parameters".into(),
                    });
                }
                let k = i * w + (j + b - i);
                if z.im != 0.0 && im.is_empty() {
                    im = vec![0.0; n * w];
                }
                re[k] = z.re;
                if !im.is_empty() {
                    im[k] = z.im;
                }
            }
        }
        Ok(BandedHermitian {
            n,
            b,
            re,
            im,
            norm: std::sync::OnceLock::new(),
        })
    }

    /// Matrix size n.
    pub fn size(&self) -> usize {
        self.n
    }

    /// Half-bandwidth b (H_ij = 0 for |i - j| > b).
    pub fn half_bandwidth(&self) -> usize {
        self.b
    }

    /// Whether every stored element is real (then the real-arithmetic kernels are used).
    pub fn is_real(&self) -> bool {
        self.im.is_empty()
    }

    /// Stored element at flat index `k` of the lower-band layout, in the kernel's scalar type.
    #[inline]
    fn at<T: Scalar>(&self, k: usize) -> T {
        if T::IS_REAL || self.im.is_empty() {
            T::from_parts(self.re[k], 0.0)
        } else {
            T::from_parts(self.re[k], self.im[k])
        }
    }

    /// Stored element H_ij of the lower band (j <= i, i - j <= b; caller checks), in the
    /// kernel's scalar type.
    #[inline]
    pub(crate) fn lower<T: Scalar>(&self, i: usize, j: usize) -> T {
        self.at::<T>(i * (self.b + 1) + (j + self.b - i))
    }

    /// Element H_ij for any i, j < n (zero outside the band, conjugate in the upper band).
    pub fn get(&self, i: usize, j: usize) -> Complex64 {
        if i >= self.n || j >= self.n || i.abs_diff(j) > self.b {
            Complex64::new(0.0, 0.0)
        } else if j <= i {
            self.at::<Complex64>(i * (self.b + 1) + (j + self.b - i))
        } else {
            self.at::<Complex64>(j * (self.b + 1) + (i + self.b - j))
                .conj()
        }
    }

    /// The largest absolute row sum, max_i sum_j |H_ij|: an upper bound of the 2-norm, used to
    /// scale tolerances. O(n b) at the first call, then kept with the matrix.
    pub fn norm_bound(&self) -> f64 {
        *self.norm.get_or_init(|| self.row_sum_max())
    }

    /// max_i sum_j |H_ij| over the stored band (both triangles).
    fn row_sum_max(&self) -> f64 {
        let mut rows = vec![0.0f64; self.n];
        let w = self.b + 1;
        for i in 0..self.n {
            for j in i.saturating_sub(self.b)..=i {
                let z = self.at::<Complex64>(i * w + (j + self.b - i));
                // |z| without hypot for a real element (the same value)
                let a = if z.im == 0.0 { z.re.abs() } else { z.norm() };
                rows[i] += a;
                if j != i {
                    rows[j] += a;
                }
            }
        }
        rows.into_iter().fold(0.0, f64::max)
    }

    /// y = H x.
    ///
    /// # Errors
    /// [`Error::BadNumber`] when `x` does not have n elements.
    ///
    /// # Complexity
    /// O(n b).
    pub fn mul_vec(&self, x: &[Complex64]) -> Result<Vec<Complex64>> {
        self.check_len(x.len())?;
        let mut y = vec![Complex64::new(0.0, 0.0); self.n];
        self.mul_into(x, &mut y);
        Ok(y)
    }

    fn check_len(&self, len: usize) -> Result<()> {
        if len != self.n {
            return Err(Error::BadNumber {
                name: "vector length".into(),
                value: len as f64,
                fix: format!("the vector must have {} elements, the matrix size", self.n),
            });
        }
        Ok(())
    }

    /// y = H x for slices of length n (caller checks).
    pub(crate) fn mul_into<T: Scalar>(&self, x: &[T], y: &mut [T]) {
        let w = self.b + 1;
        y.iter_mut().for_each(|yi| *yi = T::zero());
        for i in 0..self.n {
            let j0 = i.saturating_sub(self.b);
            let mut acc = T::zero();
            let xi = x[i];
            for j in j0..i {
                let h = self.at::<T>(i * w + (j + self.b - i));
                acc += h * x[j];
                y[j] += h.conjugate() * xi;
            }
            acc += self.at::<T>(i * w + self.b) * xi;
            y[i] += acc;
        }
    }

    /// Rows r0..r1 of y = H x: `out[i - r0] = sum_j H_ij x_j` for i in r0..r1 (x of length n,
    /// `out` of length r1 - r0; caller checks). Each row gathers its 2b + 1 products (the
    /// upper part from the stored conjugates), so disjoint row ranges can run in parallel.
    ///
    /// # Complexity
    /// O((r1 - r0) b).
    pub(crate) fn mul_rows<T: Scalar>(&self, x: &[T], r0: usize, r1: usize, out: &mut [T]) {
        let (n, b, w) = (self.n, self.b, self.b + 1);
        for (i, o) in (r0..r1).zip(out.iter_mut()) {
            let mut acc = T::zero();
            let j0 = i.saturating_sub(b);
            for (j, &xj) in x[j0..=i].iter().enumerate().map(|(d, xj)| (j0 + d, xj)) {
                acc += self.at::<T>(i * w + (j + b - i)) * xj;
            }
            let j1 = (i + b).min(n - 1);
            for (j, &xj) in x[i + 1..=j1]
                .iter()
                .enumerate()
                .map(|(d, xj)| (i + 1 + d, xj))
            {
                acc += self.at::<T>(j * w + (i + b - j)).conjugate() * xj;
            }
            *o = acc;
        }
    }

    /// LU factorisation with partial pivoting of H - sigma I in complex arithmetic.
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a non-finite sigma; [`Error::Numerical`] when a whole pivot
    /// column is zero (sigma is an eigenvalue to machine precision: move it slightly).
    ///
    /// # Complexity
    /// Time O(n b^2) (about 2 n b^2 complex multiply-adds), memory 16 n (3 b + 1) bytes, also
    /// during the factorisation (one buffer, see [`BandedLu`]).
    pub fn lu(&self, sigma: f64) -> Result<BandedLu<Complex64>> {
        BandedLu::factor(self, sigma)
    }

    /// The same factorisation in real arithmetic, or `None` when the matrix has a non-zero
    /// imaginary part somewhere.
    ///
    /// # Errors
    /// As [`BandedHermitian::lu`].
    ///
    /// # Complexity
    /// Time O(n b^2), memory 8 n (3 b + 1) bytes, also during the factorisation.
    pub fn lu_real(&self, sigma: f64) -> Result<Option<BandedLu<f64>>> {
        if self.is_real() {
            BandedLu::factor(self, sigma).map(Some)
        } else {
            Ok(None)
        }
    }

    /// Number of eigenvalues below `sigma` (Sylvester's law of inertia): the count of negative
    /// pivots of the unpivoted factorisation H - sigma I = L D L^H, computed in a sliding
    /// window of b + 1 rows. A pivot of modulus below eps ||H|| is replaced by +eps ||H|| (the
    /// classical Sturm-count safeguard); such pivots are counted in
    /// [`Inertia::tiny_pivots`]. Without pivoting the count is exact for eigenvalues farther
    /// than about eps ||H|| g from sigma, g the element growth; it is used as a completeness
    /// check of the window solver, not as the source of eigenvalues.
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a non-finite sigma.
    ///
    /// # Complexity
    /// Time O(n b^2) (about n b^2 / 2 multiply-adds), memory O(b^2).
    ///
    /// # References
    /// Golub and Van Loan, Matrix Computations, 4th ed. (2013), sec. 8.4.
    pub fn inertia(&self, sigma: f64) -> Result<Inertia> {
        check_finite("shift sigma", sigma)?;
        if self.is_real() {
            Ok(self.inertia_t::<f64>(sigma))
        } else {
            Ok(self.inertia_t::<Complex64>(sigma))
        }
    }

    fn inertia_t<T: Scalar>(&self, sigma: f64) -> Inertia {
        let (n, b) = (self.n, self.b);
        let w = b + 1;
        let tiny = f64::EPSILON * self.norm_bound().max(f64::MIN_POSITIVE);
        // ring of b+1 rows, row i at slot i % w, column j at offset j + b - i
        let mut ring = vec![T::zero(); w * w];
        let load = |ring: &mut [T], i: usize| {
            let s = (i % w) * w;
            for off in 0..w {
                let j = (i + off) as isize - b as isize;
                ring[s + off] = if j < 0 {
                    T::zero()
                } else {
                    let mut z = self.at::<T>(i * w + off);
                    if off == b {
                        z -= T::from_real(sigma);
                    }
                    z
                };
            }
        };
        for i in 0..w.min(n) {
            load(&mut ring, i);
        }
        let mut below = 0;
        let mut tiny_pivots = 0;
        for k in 0..n {
            let sk = (k % w) * w;
            let mut d = ring[sk + b].real();
            if d.abs() < tiny {
                d = tiny;
                tiny_pivots += 1;
            } else if d < 0.0 {
                below += 1;
            }
            let last = (k + b).min(n - 1);
            for i in k + 1..=last {
                let si = (i % w) * w;
                let lik = ring[si + (k + b - i)] / T::from_real(d);
                if lik == T::zero() {
                    continue;
                }
                for j in k + 1..=i {
                    let sj = (j % w) * w;
                    let ajk = ring[sj + (k + b - j)];
                    let upd = lik * ajk.conjugate();
                    ring[si + (j + b - i)] -= upd;
                }
            }
            if k + w < n {
                load(&mut ring, k + w);
            }
        }
        Inertia { below, tiny_pivots }
    }
}

fn check_finite(name: &str, x: f64) -> Result<()> {
    if x.is_finite() {
        Ok(())
    } else {
        Err(Error::BadNumber {
            name: name.into(),
            value: x,
            fix: "give a finite number".into(),
        })
    }
}

/// LU factors with partial pivoting of a banded H - sigma I (P A = L U, the factorisation of
/// LAPACK's `gbtrf`), all in one buffer.
///
/// # Storage
/// Row k of the buffer holds w = 3b + 1 numbers: 1 / U_kk, U_k,k+1, ..., U_k,k+2b (the pivoted
/// upper factor gains at most b super-diagonals beyond the band), then the b multipliers
/// l_(k+1),k .. l_(k+b),k of elimination step k. The pivot row of step k is k + `piv[k]`.
/// The factorisation runs in a ring of the b + 1 rows still active (a few kilobytes, resident
/// in cache); each row is written to the buffer once, when its step is done, so the peak
/// memory is the buffer itself: 8 n (3b + 1) bytes real, 16 n (3b + 1) complex, plus 4 n for
/// the pivots.
#[derive(Debug, Clone)]
pub struct BandedLu<T: Scalar> {
    n: usize,
    b: usize,
    /// n rows of 3b + 1: U row (2b + 1 numbers) then the b multipliers.
    f: Vec<T>,
    /// Pivot row of step k is k + piv[k] (piv[k] <= b).
    piv: Vec<u32>,
}

impl<T: Scalar> BandedLu<T> {
    pub(crate) fn factor_pub(h: &BandedHermitian, sigma: f64) -> Result<Self> {
        Self::factor(h, sigma)
    }

    /// Element (i, j) of H - sigma I for |i - j| <= b, i, j < n (caller checks).
    #[inline]
    pub(crate) fn shifted(h: &BandedHermitian, sigma: f64, i: usize, j: usize) -> T {
        let hw = h.b + 1;
        if j < i {
            h.at::<T>(i * hw + (j + h.b - i))
        } else if j > i {
            h.at::<T>(j * hw + (i + h.b - j)).conjugate()
        } else {
            h.at::<T>(i * hw + h.b) - T::from_real(sigma)
        }
    }

    /// Row i of the n x n band matrix `get`, columns i-b..=i+b, into a ring slot that holds
    /// columns i-b..=i+2b (offset j - i + b); the fill columns start at zero.
    fn load_row(n: usize, b: usize, get: &impl Fn(usize, usize) -> T, i: usize, slot: &mut [T]) {
        slot.iter_mut().for_each(|z| *z = T::zero());
        for j in i.saturating_sub(b)..=(i + b).min(n - 1) {
            slot[j + b - i] = get(i, j);
        }
    }

    fn factor(h: &BandedHermitian, sigma: f64) -> Result<Self> {
        check_finite("shift sigma", sigma)?;
        Self::factor_fn(h.n, h.b, sigma, |i, j| Self::shifted(h, sigma, i, j))
    }

    /// LU with partial pivoting of the n x n band matrix of half-bandwidth b whose element
    /// (i, j), |i - j| <= b, is `get(i, j)` (`sigma` only names the shift in the error).
    pub(crate) fn factor_fn(
        n: usize,
        b: usize,
        sigma: f64,
        get: impl Fn(usize, usize) -> T,
    ) -> Result<Self> {
        let sw = 3 * b + 1; // ring slot: columns i-b..=i+2b of active row i
        let wu = 2 * b + 1;
        let w = wu + b;
        let mut ring = vec![T::zero(); (b + 1) * sw];
        for i in 0..(b + 1).min(n) {
            let s = (i % (b + 1)) * sw;
            Self::load_row(n, b, &get, i, &mut ring[s..s + sw]);
        }
        let mut f = vec![T::zero(); n * w];
        let mut piv = vec![0u32; n];
        let mut urow = vec![T::zero(); wu];
        for k in 0..n {
            let last = (k + b).min(n - 1);
            let slot = |i: usize| (i % (b + 1)) * sw;
            let mut p = k;
            let mut best = -1.0f64;
            for i in k..=last {
                let a = ring[slot(i) + (k + b - i)].norm1();
                if a > best {
                    best = a;
                    p = i;
                }
            }
            if best == 0.0 {
                return Err(Error::Numerical {
                    stage: "banded LU of H - sigma I".into(),
                    detail: format!(
                        "column {k} has no non-zero pivot: sigma = {sigma} is an eigenvalue to \
                         machine precision; move the target slightly"
                    ),
                });
            }
            piv[k] = (p - k) as u32;
            let jmax = (k + 2 * b).min(n - 1);
            let (sk, sp) = (slot(k), slot(p));
            if p != k {
                for j in k..=jmax {
                    ring.swap(sk + (j + b - k), sp + (j + b - p));
                }
            }
            // row k of U, columns k..=jmax (offsets b.. of its slot)
            let len = jmax - k + 1;
            urow[..len].copy_from_slice(&ring[sk + b..sk + b + len]);
            let urow = &urow[..len];
            let pivot = urow[0];
            let out = &mut f[k * w..(k + 1) * w];
            out[..len].copy_from_slice(urow);
            // the diagonal is stored inverted: the backward sweep multiplies (no division
            // on its serial dependency chain)
            out[0] = T::one() / pivot;
            for i in k + 1..=last {
                let si = slot(i);
                let l = ring[si + (k + b - i)] / pivot;
                out[wu + (i - k - 1)] = l;
                ring[si + (k + b - i)] = T::zero();
                if l == T::zero() {
                    continue;
                }
                let rowi = &mut ring[si + (k + b - i)..si + (k + b - i) + len];
                for (x, &y) in rowi.iter_mut().zip(urow.iter()).skip(1) {
                    *x -= l * y;
                }
            }
            // the slot of row k takes row k + b + 1
            if k + b + 1 < n {
                Self::load_row(n, b, &get, k + b + 1, &mut ring[sk..sk + sw]);
            }
        }
        Ok(BandedLu { n, b, f, piv })
    }

    /// Overwrite `x` with (H - sigma I)^(-1) x.
    ///
    /// # Errors
    /// [`Error::BadNumber`] when `x` does not have n elements.
    ///
    /// # Complexity
    /// O(n b): one forward and one backward sweep, reading the 3b + 1 numbers of each row of
    /// the factors once.
    pub fn solve_in_place(&self, x: &mut [T]) -> Result<()> {
        check_length(x.len(), self.n)?;
        self.solve_unchecked(x);
        Ok(())
    }

    pub(crate) fn solve_unchecked(&self, x: &mut [T]) {
        self.forward::<false>(x);
        self.backward::<false>(x);
    }

    /// U_kj of the upper factor, j in k..=k + 2b (caller checks; zero past the stored width).
    #[inline]
    pub(crate) fn upper(&self, k: usize, j: usize) -> T {
        let w = 3 * self.b + 1;
        if j == k {
            T::one() / self.f[k * w]
        } else {
            self.f[k * w + (j - k)]
        }
    }

    /// The forward sweep x <- L^(-1) P^T x (row interchanges and multipliers). With `REV` the
    /// local index i is element n - 1 - i of `x` (a matrix factored in reversed order).
    pub(crate) fn forward<const REV: bool>(&self, x: &mut [T]) {
        let (n, b) = (self.n, self.b);
        let wu = 2 * b + 1;
        let w = wu + b;
        for k in 0..n {
            let p = k + self.piv[k] as usize;
            let last = (k + b).min(n - 1);
            let mult = &self.f[k * w + wu..k * w + wu + (last - k)];
            if REV {
                let (rk, rp) = (n - 1 - k, n - 1 - p);
                if p != k {
                    x.swap(rk, rp);
                }
                let xk = x[rk];
                for (xi, &l) in x[n - 1 - last..rk].iter_mut().rev().zip(mult) {
                    *xi -= l * xk;
                }
            } else {
                if p != k {
                    x.swap(k, p);
                }
                let xk = x[k];
                for (xi, &l) in x[k + 1..=last].iter_mut().zip(mult) {
                    *xi -= l * xk;
                }
            }
        }
    }

    /// The backward sweep x <- U^(-1) x (local indices as in [`BandedLu::forward`]). The terms
    /// of the far columns k + 2..=k + 2b are summed first, off the serial chain; only the
    /// newest x_(k+1) and the stored 1 / U_kk sit on it.
    pub(crate) fn backward<const REV: bool>(&self, x: &mut [T]) {
        let (n, b) = (self.n, self.b);
        let wu = 2 * b + 1;
        let w = wu + b;
        for k in (0..n).rev() {
            let jmax = (k + 2 * b).min(n - 1);
            let row = &self.f[k * w..k * w + (jmax - k) + 1];
            let mut far = T::zero();
            if REV {
                let rk = n - 1 - k;
                if jmax > k {
                    for (uj, &xj) in row[2..].iter().zip(x[n - 1 - jmax..rk - 1].iter().rev()) {
                        far += *uj * xj;
                    }
                    x[rk] = (x[rk] - far - row[1] * x[rk - 1]) * row[0];
                } else {
                    x[rk] *= row[0];
                }
            } else if jmax > k {
                for (uj, &xj) in row[2..].iter().zip(x[k + 2..=jmax].iter()) {
                    far += *uj * xj;
                }
                x[k] = (x[k] - far - row[1] * x[k + 1]) * row[0];
            } else {
                x[k] *= row[0];
            }
        }
    }
}

/// A vector of `len` elements handed to a solve of an `n` x `n` factorisation: an error that
/// names the size it must have unless `len == n`.
pub(crate) fn check_length(len: usize, n: usize) -> Result<()> {
    if len != n {
        return Err(Error::BadNumber {
            name: "vector length".into(),
            value: len as f64,
            fix: format!("the vector must have {n} elements, the matrix size"),
        });
    }
    Ok(())
}
