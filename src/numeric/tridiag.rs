//! Blocked Householder tridiagonalisation (lower storage) and the eigen-solve built on it.
//!
//! # Formula
//! Q^H H Q = T (tridiagonal) with Q = P_0 P_1 ... P_{s-2}, P_k = I - v_k v_k^H / tau_k
//! (faer's real-tau reflector convention). Columns are reduced in panels of `NB`: inside a
//! panel each column's reflector comes from the column updated by the panel's previous
//! reflectors through W (the LAPACK `xLATRD` recurrence: w = tau^-1 (A v - V (W^H v) -
//! W (V^H v)), w -= (tau^-1 / 2)(w^H v) v), and the trailing matrix is updated once per panel
//! by the rank-2 NB update A -= V W^H + W V^H (a level-3 product). Each column costs one read
//! of the trailing lower triangle (a fused Hermitian matrix-vector product), where an
//! unblocked reduction reads and writes it.
//!
//! # References
//! Dongarra, Sorensen and Hammarling, "Block reduction of matrices to condensed forms for
//! eigenvalue computations", J. Comput. Appl. Math. 27 (1989); the LAPACK routines
//! xSYTRD/xHETRD and xLATRD (Anderson et al., LAPACK Users' Guide, 3rd ed., SIAM 1999).
//!
//! # Complexity
//! About (4/3) s^3 flops for the reduction of a size-s matrix, O(s^2) memory (the matrix
//! itself, reduced in place); applying Q to the tridiagonal eigenvectors costs O(s^2 w) for
//! reflectors of length at most w (O(s^3) in general).

use super::Vectors;
use faer::linalg::matmul::matmul;
use faer::linalg::matmul::triangular::{self as tri, BlockStructure};
use faer::{Accum, MatMut, MatRef, Par};
use num_complex::Complex64;
use std::ops::{Add, AddAssign, Mul, MulAssign, Neg, Sub, SubAssign};

/// Panel width (columns reduced per rank-2 NB update of the trailing matrix).
pub(super) const NB: usize = 32;

/// Scalar of the reduction: f64 (real symmetric) or Complex64 (Hermitian).
pub(super) trait Scalar:
    faer::traits::ComplexField<Real = f64>
    + Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Neg<Output = Self>
    + AddAssign
    + SubAssign
    + MulAssign
{
    /// Complex conjugate.
    fn cj(self) -> Self;
    /// Real part.
    fn re_part(self) -> f64;
    /// The real number x as a scalar.
    fn of_re(x: f64) -> Self;
    /// y = A x, A = a[s0.., s0..] Hermitian of size x.len(), lower triangle (see [`Hemv`]).
    fn hemv(a: &[Self], ld: usize, s0: usize, x: &[Self], y: &mut [Self]);
}

impl Scalar for f64 {
    #[inline(always)]
    fn cj(self) -> Self {
        self
    }
    #[inline(always)]
    fn re_part(self) -> f64 {
        self
    }
    #[inline(always)]
    fn of_re(x: f64) -> Self {
        x
    }
    fn hemv(a: &[Self], ld: usize, s0: usize, x: &[Self], y: &mut [Self]) {
        pulp::Arch::new().dispatch(Hemv { a, ld, s0, x, y });
    }
}

impl Scalar for Complex64 {
    #[inline(always)]
    fn cj(self) -> Self {
        self.conj()
    }
    #[inline(always)]
    fn re_part(self) -> f64 {
        self.re
    }
    #[inline(always)]
    fn of_re(x: f64) -> Self {
        Complex64::new(x, 0.0)
    }
    fn hemv(a: &[Self], ld: usize, s0: usize, x: &[Self], y: &mut [Self]) {
        pulp::Arch::new().dispatch(Hemv { a, ld, s0, x, y });
    }
}

/// y = A x for the Hermitian block A = a[s0.., s0..] of size m = x.len() (lower triangle
/// of the column-major buffer `a` with leading dimension `ld`, read once; diagonal taken
/// real): column j adds A[j+1.., j] x_j to y[j+1..] and A[j+1.., j]^H x[j+1..] to y_j in
/// one pass, with explicit SIMD (pulp) chosen at run time for this CPU.
struct Hemv<'a, T> {
    a: &'a [T],
    ld: usize,
    s0: usize,
    x: &'a [T],
    y: &'a mut [T],
}

/// The [`Hemv`] kernel for one scalar type, given its pulp vector operations: columns in
/// groups of four (one pass over y and x per four columns, four streams of A at once),
/// the 4 x 4 diagonal blocks and the ragged ends in scalar arithmetic.
macro_rules! hemv_impl {
    ($t:ty, $as:ident, $as_mut:ident, $splat:ident, $fma:ident, $cfma:ident, $sum:ident) => {
        impl pulp::WithSimd for Hemv<'_, $t> {
            type Output = ();
            #[inline(always)]
            fn with_simd<S: pulp::Simd>(self, simd: S) {
                let Self { a, ld, s0, x, y } = self;
                let m = x.len();
                let zero = <$t as Scalar>::of_re(0.0);
                y.fill(zero);
                let mut j = 0;
                while j + 4 <= m {
                    let g = s0 + j;
                    // the 4 x 4 diagonal block (lower part) in scalar arithmetic
                    for c in 0..4 {
                        let col = &a[(g + c) * ld + g..(g + c) * ld + g + 4];
                        y[j + c] += x[j + c] * <$t as Scalar>::of_re(col[c].re_part());
                        for r in c + 1..4 {
                            y[j + r] += col[r] * x[j + c];
                            y[j + c] += col[r].cj() * x[j + r];
                        }
                    }
                    let below = |c: usize| &a[(g + c) * ld + g + 4..(g + c) * ld + s0 + m];
                    let (a0, a1, a2, a3) = (below(0), below(1), below(2), below(3));
                    let (yh, yt) = S::$as_mut(&mut y[j + 4..]);
                    let (xh, xt) = S::$as(&x[j + 4..]);
                    let (a0h, a0t) = S::$as(a0);
                    let (a1h, a1t) = S::$as(a1);
                    let (a2h, a2t) = S::$as(a2);
                    let (a3h, a3t) = S::$as(a3);
                    let xv = [
                        simd.$splat(x[j]),
                        simd.$splat(x[j + 1]),
                        simd.$splat(x[j + 2]),
                        simd.$splat(x[j + 3]),
                    ];
                    let z = simd.$splat(zero);
                    let mut acc = [z, z, z, z];
                    for (((((yy, xx), p0), p1), p2), p3) in
                        yh.iter_mut().zip(xh).zip(a0h).zip(a1h).zip(a2h).zip(a3h)
                    {
                        let mut v = simd.$fma(*p0, xv[0], *yy);
                        v = simd.$fma(*p1, xv[1], v);
                        v = simd.$fma(*p2, xv[2], v);
                        *yy = simd.$fma(*p3, xv[3], v);
                        acc[0] = simd.$cfma(*p0, *xx, acc[0]);
                        acc[1] = simd.$cfma(*p1, *xx, acc[1]);
                        acc[2] = simd.$cfma(*p2, *xx, acc[2]);
                        acc[3] = simd.$cfma(*p3, *xx, acc[3]);
                    }
                    let mut sums = [
                        simd.$sum(acc[0]),
                        simd.$sum(acc[1]),
                        simd.$sum(acc[2]),
                        simd.$sum(acc[3]),
                    ];
                    for (((((yy, xx), p0), p1), p2), p3) in
                        yt.iter_mut().zip(xt).zip(a0t).zip(a1t).zip(a2t).zip(a3t)
                    {
                        *yy += *p0 * x[j] + *p1 * x[j + 1] + *p2 * x[j + 2] + *p3 * x[j + 3];
                        sums[0] += p0.cj() * *xx;
                        sums[1] += p1.cj() * *xx;
                        sums[2] += p2.cj() * *xx;
                        sums[3] += p3.cj() * *xx;
                    }
                    for c in 0..4 {
                        y[j + c] += sums[c];
                    }
                    j += 4;
                }
                // the last m mod 4 columns, one at a time
                while j < m {
                    let g = s0 + j;
                    let col = &a[g * ld + g..g * ld + s0 + m];
                    let xj = x[j];
                    let mut sum = xj * <$t as Scalar>::of_re(col[0].re_part());
                    for (r, aa) in col.iter().enumerate().skip(1) {
                        y[j + r] += *aa * xj;
                        sum += aa.cj() * x[j + r];
                    }
                    y[j] += sum;
                    j += 1;
                }
            }
        }
    };
}

hemv_impl!(
    f64,
    as_simd_f64s,
    as_mut_simd_f64s,
    splat_f64s,
    mul_add_f64s,
    mul_add_f64s,
    reduce_sum_f64s
);
hemv_impl!(
    Complex64,
    as_simd_c64s,
    as_mut_simd_c64s,
    splat_c64s,
    mul_add_c64s,
    conj_mul_add_c64s,
    reduce_sum_c64s
);

/// Reduces the Hermitian matrix stored (lower triangle) in the column-major n x n buffer
/// `a` to tridiagonal form in place. On return the diagonal of `a` holds T's diagonal,
/// `sub[k]` = T(k+1, k), column k below row k+1 holds the essential part of v_k, and
/// `tau[k]` its faer tau (infinity for the identity).
pub(super) fn tridiagonalize<T: Scalar>(a: &mut [T], n: usize, sub: &mut [T], tau: &mut [f64]) {
    let nx = 2 * NB; // below this the whole remainder is one panel
    let mut w = vec![T::of_re(0.0); n * NB.max(nx)];
    let mut p = 0;
    while p < n {
        let m = n - p;
        let jb = if m > nx { NB } else { m };
        let wb = &mut w[..m * jb];
        panel(a, n, p, jb, wb, sub, tau);
        let q = p + jb;
        if q < n {
            // trailing A[q.., q..] -= V W^H + W V^H (lower triangle), V = A[q.., p..q]
            let (left, right) = a.split_at_mut(q * n);
            let v = MatRef::from_column_major_slice(&left[p * n..], n, jb).subrows(q, n - q);
            let wr = MatRef::from_column_major_slice(&wb[..], m, jb).subrows(jb, m - jb);
            let mut a22 =
                MatMut::from_column_major_slice_mut(right, n, n - q).subrows_mut(q, n - q);
            let minus_one = T::of_re(-1.0);
            tri::matmul(
                a22.as_mut(),
                BlockStructure::TriangularLower,
                Accum::Add,
                v,
                BlockStructure::Rectangular,
                wr.adjoint(),
                BlockStructure::Rectangular,
                minus_one,
                Par::Seq,
            );
            tri::matmul(
                a22.as_mut(),
                BlockStructure::TriangularLower,
                Accum::Add,
                wr,
                BlockStructure::Rectangular,
                v.adjoint(),
                BlockStructure::Rectangular,
                minus_one,
                Par::Seq,
            );
        }
        // the unit heads back to T's subdiagonal
        for c in p..q.min(n - 1) {
            a[c * n + c + 1] = sub[c];
        }
        p = q;
    }
    if n > 0 {
        sub[n - 1] = T::of_re(0.0);
    }
}

/// One panel of `jb` columns starting at p (xLATRD, lower): updates those columns by the
/// panel's earlier reflectors, makes their reflectors (heads set to 1, beta in `sub`) and
/// fills W (m x jb, m = n - p, row r is global row p + r).
fn panel<T: Scalar>(
    a: &mut [T],
    n: usize,
    p: usize,
    jb: usize,
    w: &mut [T],
    sub: &mut [T],
    tau: &mut [f64],
) {
    let m = n - p;
    let one = T::of_re(1.0);
    let minus_one = T::of_re(-1.0);
    for j in 0..jb {
        let c = p + j;
        {
            // A[c.., c] -= A[c.., p..c] W[c, ..j]^H + W[c.., ..j] A[c, p..c]^H
            let (left, right) = a.split_at_mut(c * n);
            let ap = MatRef::from_column_major_slice(&left[p * n..], n, j);
            let wm = MatRef::from_column_major_slice(&w[..m * j], m, j);
            let mut col =
                MatMut::from_column_major_slice_mut(&mut right[..n], n, 1).subrows_mut(c, n - c);
            if j > 0 {
                matmul(
                    col.as_mut(),
                    Accum::Add,
                    ap.subrows(c, n - c),
                    wm.subrows(j, 1).adjoint(),
                    minus_one,
                    Par::Seq,
                );
                matmul(
                    col.as_mut(),
                    Accum::Add,
                    wm.subrows(j, m - j),
                    ap.subrows(c, 1).adjoint(),
                    minus_one,
                    Par::Seq,
                );
            }
            col[(0, 0)] = T::of_re(col[(0, 0)].re_part());
        }
        if c + 1 >= n {
            break;
        }
        // reflector of A[c+1.., c]
        let t_inv = {
            let column = &mut a[c * n + c + 1..c * n + n];
            let (head, tail) = column.split_at_mut(1);
            let tail_len = tail.len();
            let info = faer::linalg::householder::make_householder_in_place(
                &mut head[0],
                MatMut::from_column_major_slice_mut(tail, tail_len, 1).col_mut(0),
            );
            sub[c] = head[0];
            head[0] = one;
            tau[c] = info.tau;
            if info.tau.is_finite() {
                info.tau.recip()
            } else {
                0.0
            }
        };
        // W[c+1.., j] = A[c+1.., c+1..] v with the panel corrections
        let r0 = c + 1 - p; // first row of W's column j in use
        let len = n - c - 1;
        let (wl, wr) = w.split_at_mut(j * m);
        let wcol = &mut wr[r0..m];
        let ar: &[T] = a;
        let v = &ar[c * n + c + 1..c * n + n];
        T::hemv(ar, n, c + 1, v, wcol);
        if j > 0 {
            let ap =
                MatRef::from_column_major_slice(&ar[p * n..(p + j) * n], n, j).subrows(c + 1, len);
            let wp = MatRef::from_column_major_slice(&wl[..], m, j).subrows(r0, len);
            let vm = MatRef::from_column_major_slice(v, len, 1);
            let mut tmp = faer::Mat::<T>::zeros(j, 1);
            let mut wc = MatMut::from_column_major_slice_mut(wcol, len, 1);
            matmul(
                tmp.as_mut(),
                Accum::Replace,
                wp.adjoint(),
                vm,
                one,
                Par::Seq,
            );
            matmul(
                wc.as_mut(),
                Accum::Add,
                ap,
                tmp.as_ref(),
                minus_one,
                Par::Seq,
            );
            matmul(
                tmp.as_mut(),
                Accum::Replace,
                ap.adjoint(),
                vm,
                one,
                Par::Seq,
            );
            matmul(
                wc.as_mut(),
                Accum::Add,
                wp,
                tmp.as_ref(),
                minus_one,
                Par::Seq,
            );
        }
        let ti = T::of_re(t_inv);
        let mut dot = T::of_re(0.0);
        for (x, &vi) in wcol.iter_mut().zip(v) {
            *x *= ti;
            dot += x.cj() * vi;
        }
        let alpha = T::of_re(-0.5 * t_inv) * dot;
        for (x, &vi) in wcol.iter_mut().zip(v) {
            *x += alpha * vi;
        }
        for x in wr[..r0].iter_mut() {
            *x = T::of_re(0.0);
        }
    }
}

/// Eigenvalues (ascending) and, with `Vectors::Compute`, eigenvectors of the Hermitian
/// matrix whose lower triangle is in the column-major n x n buffer `a` (consumed):
/// [`tridiagonalize`], then faer's tridiagonal solver (QR iteration for values,
/// divide and conquer for vectors) and faer's blocked application of Q.
pub(super) fn solve<T: Scalar>(
    mut a: Vec<T>,
    n: usize,
    vectors: Vectors,
) -> Result<(Vec<f64>, Option<faer::Mat<T>>), faer::linalg::evd::EvdError> {
    use faer::dyn_stack::{MemBuffer, MemStack};
    use faer::linalg::evd::{self, ComputeEigenvectors};
    use faer::linalg::householder;
    let mut sub = vec![T::of_re(0.0); n];
    let mut tau = vec![0.0; n];
    tridiagonalize(&mut a, n, &mut sub, &mut tau);
    let diag = faer::Col::<T>::from_fn(n, |k| a[k * n + k]);
    let subc = faer::Col::<T>::from_fn(n, |k| sub[k]);
    let mut s = faer::Col::<T>::zeros(n);
    let compute = match vectors {
        Vectors::Compute => ComputeEigenvectors::Yes,
        Vectors::Skip => ComputeEigenvectors::No,
    };
    let mut mem = MemBuffer::new(evd::self_adjoint_evd_scratch::<T>(
        n,
        compute,
        Par::Seq,
        Default::default(),
    ));
    let stack = MemStack::new(&mut mem);
    let mut u = match vectors {
        Vectors::Compute => Some(faer::Mat::<T>::zeros(n, n)),
        Vectors::Skip => None,
    };
    evd::tridiagonal_self_adjoint_evd(
        diag.as_diagonal(),
        subc.as_diagonal(),
        s.as_diagonal_mut(),
        u.as_mut().map(|u| u.as_mut()),
        Par::Seq,
        stack,
        Default::default(),
    )?;
    if let Some(u) = u.as_mut() {
        if n > 1 {
            // Q = P_0 ... P_{n-2} applied to the tridiagonal eigenvectors (rows 1..n), one
            // block of reflectors at a time from the last, each restricted to the rows
            // where its reflectors are non-zero (as LAPACK's xLARFB does: a banded input
            // keeps short reflectors, and the product then costs O(s^2 bandwidth))
            let bs = faer::linalg::qr::no_pivoting::factor::recommended_block_size::<T>(n, n);
            let ess = MatRef::from_column_major_slice(&a, n, n).submatrix(1, 0, n - 1, n - 1);
            let mut hf = faer::Mat::<T>::zeros(bs, bs);
            let starts: Vec<usize> = (0..n - 1).step_by(bs).collect();
            for &j in starts.iter().rev() {
                let b = bs.min(n - 1 - j);
                // last row (of ess) with a non-zero essential element in this block
                let mut last = j + b - 1;
                for k in j..j + b {
                    let col = &a[k * n..(k + 1) * n];
                    if let Some(r) = col[k + 2..].iter().rposition(|z| *z != T::of_re(0.0)) {
                        last = last.max(r + k + 1);
                    }
                }
                let rows = last + 1 - j;
                let v = ess.submatrix(j, j, rows, b);
                let mut h = hf.as_mut().submatrix_mut(0, 0, b, b);
                for k in 0..b {
                    h[(k, k)] = T::of_re(tau[j + k]);
                }
                householder::upgrade_householder_factor(h.as_mut(), v, b, 1, Par::Seq);
                householder::apply_block_householder_sequence_on_the_left_in_place_with_conj(
                    v,
                    h.as_ref(),
                    faer::Conj::No,
                    u.as_mut().subrows_mut(1 + j, rows),
                    Par::Seq,
                    stack,
                );
            }
        }
    }
    let values = (0..n).map(|k| s[k].re_part()).collect();
    Ok((values, u))
}
