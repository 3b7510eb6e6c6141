//! Krylov–Schur (thick-restart) Lanczos with full reorthogonalisation on a shift-inverted
//! banded operator (H - sigma I)^(-1): the iteration behind [`super::window`], which chooses
//! the shift, checks completeness by inertia counts and refines the Ritz vectors in H.
//!
//! # Method
//! Each step applies the factored inverse (`ShiftInverse`: two-sided L D L^H or pivoted LU) to the newest basis vector, removes the
//! three-term part, then orthogonalises against the whole basis (and any locked vectors) by
//! classical Gram–Schmidt with the DGKS test; when the basis reaches m vectors it is contracted
//! to the (m + k)/2 Ritz vectors of largest |theta| plus the residual vector (Krylov–Schur
//! restart, in place). A Ritz pair (theta, y) is accepted when its residual |beta_m y_m| is below
//! 1e-10 |theta|.
//!
//! # Complexity
//! Per step one O(n b) solve and O(n m) for the reorthogonalisation, plus an O(m^3) dense
//! eigen-solve of the projected matrix every other step; in all O((r + 1) n m^2) for r
//! restarts. Memory: the basis of m + 1 vectors, m = k + max(k/2, 12) capped at n, and one
//! work vector; the restart and the final Ritz vectors are computed in place in the basis,
//! a block of rows at a time (no n x m temporary). The Gram–Schmidt passes are blocked over
//! rows so that each reads every basis column once and the vector once; they, the norms and
//! the restart run in parallel over fixed chunks of rows (partial sums added in chunk order,
//! so the result does not depend on the number of threads).
//!
//! # References
//! G. W. Stewart, "A Krylov–Schur algorithm for large eigenproblems", SIAM J. Matrix Anal.
//! Appl. 23, 601 (2001); J. W. Daniel, W. B. Gragg, L. Kaufman and G. W. Stewart, Math. Comp.
//! 30, 772 (1976) (DGKS reorthogonalisation).

use super::banded::Scalar;
use super::dense::{eigh, Vectors};
use super::ldl::ShiftInverse;
use crate::error::{Error, Result};
use nalgebra::DMatrix;
use num_complex::Complex64;

/// Relative tolerance of the inverted-problem residual.
pub(super) const TOL: f64 = 1e-10;
/// Restarts allowed per Krylov–Schur run.
pub(super) const MAX_RESTARTS: usize = 200;

/// Outcome of one Krylov–Schur run.
pub(super) enum Krylov<T: Scalar> {
    /// The basis buffer (n rows); its first `count` columns hold the wanted unit Ritz vectors,
    /// by decreasing |theta|. Returning the buffer itself keeps the peak memory at the basis.
    Done {
        basis: DMatrix<T>,
        count: usize,
        /// The Ritz values theta of the returned vectors (same order): their eigenvalues of H
        /// are about sigma + 1/theta.
        thetas: Vec<f64>,
        /// Operator applications (Lanczos steps) of this run.
        steps: usize,
        /// Restarts of this run.
        restarts: usize,
    },
    /// An eigenvalue sits almost on the shift; `radius` is the distance of the k-th one.
    ShiftTooClose { radius: f64 },
}

/// Basis size m for `want` wanted pairs: want + max(want / 2, 12), at most `room`.
///
/// Shift-invert separates the wanted eigenvalues well, so a basis of about 1.5 times the
/// count converges in a few restarts; each vector less saves n numbers of memory and one pass
/// over n numbers per Lanczos step (the reorthogonalisation dominates the time; measured in
/// `tools/window_timing.rs` and `scripts/compare.sh`).
pub(super) fn basis_size(want: usize, room: usize) -> usize {
    (want + (want / 2).max(12)).min(room)
}

/// Krylov–Schur Lanczos on (H - sigma)^(-1) restricted to the complement of `locked`;
/// returns the `want` Ritz vectors of largest |theta| (unit vectors) in place in the basis.
pub(super) fn krylov_schur<T: Scalar>(
    lu: &ShiftInverse<T>,
    n: usize,
    want: usize,
    locked: &[&[T]],
    rng: &mut SplitMix,
) -> Result<Krylov<T>> {
    let room = n - locked.len();
    let mmax = basis_size(want, room).max(want.min(room));
    let k = want.min(mmax);
    let mut v = DMatrix::<T>::zeros(n, mmax + 1);
    let mut tm = DMatrix::<T>::zeros(mmax, mmax);
    let mut w = vec![T::zero(); n];
    // start vector: random, in the complement of the locked vectors
    random_fill(&mut w, rng);
    orthogonalize(&mut w, locked, v.as_slice(), 0, None);
    let nw = norm(&w);
    if nw == 0.0 {
        return Err(breakdown("the start vector lies in the locked subspace"));
    }
    scale_into(&w, 1.0 / nw, &mut v.as_mut_slice()[..n]);
    let mut start = 0;
    let mut restarts = 0;
    let mut steps = 0;
    loop {
        let mut j = start;
        let (m, beta, ritz) = loop {
            let basis = Basis {
                lu,
                locked,
                room,
                start,
            };
            let (beta, exhausted) = basis.step(&mut v, &mut tm, &mut w, j, rng);
            steps += 1;
            let m = j + 1;
            // Ritz pairs: at a full basis, and every few steps once k of them can exist
            if exhausted || m == mmax || (m >= k + 2 && (m - start) % 2 == 0) {
                let ritz = Ritz::of(&tm, m)?;
                match ritz.verdict(k, beta, exhausted) {
                    Verdict::Done => {
                        let kk = k.min(m);
                        let y = ritz.columns::<T>(kk);
                        transform_in_place(&mut v, m, &y);
                        for c in 0..kk {
                            let col = &mut v.as_mut_slice()[c * n..(c + 1) * n];
                            let inv = T::from_real(1.0 / norm(col));
                            col.iter_mut().for_each(|z| *z *= inv);
                        }
                        let thetas = ritz.order[..kk].iter().map(|&i| ritz.values[i]).collect();
                        return Ok(Krylov::Done {
                            basis: v,
                            count: kk,
                            thetas,
                            steps,
                            restarts,
                        });
                    }
                    Verdict::ShiftTooClose(radius) => {
                        return Ok(Krylov::ShiftTooClose { radius });
                    }
                    Verdict::GoOn => {}
                }
                if m == mmax {
                    break (m, beta, ritz);
                }
            }
            j += 1;
        };
        restarts += 1;
        if restarts > MAX_RESTARTS {
            return Err(Error::NotConverged {
                tolerance: TOL,
                detail: format!(
                    "shift-invert Lanczos did not converge in {MAX_RESTARTS} restarts for {want} \
                     eigenvalues; the target may sit in a dense cluster: ask for fewer \
                     eigenvalues or move the target"
                ),
            });
        }
        start = ritz.contract(&mut v, &mut tm, m, k, beta);
    }
}

/// What one Lanczos step needs besides the basis: the factored operator, the locked vectors,
/// the room left beside them, and the first column after the last restart.
struct Basis<'a, T: Scalar> {
    lu: &'a ShiftInverse<T>,
    locked: &'a [&'a [T]],
    room: usize,
    start: usize,
}

impl<T: Scalar> Basis<'_, T> {
    /// One Lanczos step: w = (H - sigma)^(-1) v_j orthogonalised against the basis (column j of
    /// the projected matrix `tm` from its projections), then v_(j+1) = w / beta. Returns beta
    /// (0 when an invariant subspace was found and a fresh random direction continues the
    /// basis) and whether the space is exhausted (no fresh direction is left).
    fn step(
        &self,
        v: &mut DMatrix<T>,
        tm: &mut DMatrix<T>,
        w: &mut [T],
        j: usize,
        rng: &mut SplitMix,
    ) -> (f64, bool) {
        let n = v.nrows();
        w.copy_from_slice(&v.as_slice()[j * n..(j + 1) * n]);
        self.lu.solve_unchecked(w);
        let scale = norm(w);
        // three-term part first (cheap), then the full pass on the small remainder;
        // right after a restart column j couples to all kept vectors, so no local part
        let local = if j == self.start && j > 0 {
            None
        } else {
            Some((j.saturating_sub(1), j))
        };
        let hcol = orthogonalize(w, self.locked, v.as_slice(), j + 1, local);
        for i in 0..j {
            tm[(i, j)] = hcol[i];
            tm[(j, i)] = hcol[i].conjugate();
        }
        tm[(j, j)] = T::from_real(hcol[j].real());
        let beta = norm(w);
        if beta > 1e-13 * scale.max(f64::MIN_POSITIVE) {
            scale_into(
                w,
                1.0 / beta,
                &mut v.as_mut_slice()[(j + 1) * n..(j + 2) * n],
            );
            return (beta, false);
        }
        // invariant subspace found: continue with a fresh direction, coupling 0
        random_fill(w, rng);
        orthogonalize(w, self.locked, v.as_slice(), j + 1, None);
        let nr = norm(w);
        if nr <= 1e-10 * (n as f64).sqrt() || j + 1 == self.room {
            return (0.0, true);
        }
        scale_into(w, 1.0 / nr, &mut v.as_mut_slice()[(j + 1) * n..(j + 2) * n]);
        (0.0, false)
    }
}

/// What the Ritz pairs say about the run.
enum Verdict {
    Done,
    ShiftTooClose(f64),
    GoOn,
}

/// Ritz pairs of the leading m x m projected matrix: values theta, vectors y (columns) and the
/// order of decreasing |theta|.
struct Ritz {
    values: Vec<f64>,
    y: DMatrix<Complex64>,
    order: Vec<usize>,
}

impl Ritz {
    /// Eigen-solve of the leading `m` x `m` block of `tm`.
    fn of<T: Scalar>(tm: &DMatrix<T>, m: usize) -> Result<Ritz> {
        let tsub = DMatrix::from_fn(m, m, |r, c| {
            let z = tm[(r, c)];
            Complex64::new(z.real(), z.imaginary())
        });
        let eig = eigh(&tsub, Vectors::Compute)?;
        let y = eig.vectors.ok_or_else(|| breakdown("no Ritz vectors"))?;
        let values = eig.values;
        let mut order: Vec<usize> = (0..m).collect();
        order.sort_by(|&a, &b| values[b].abs().total_cmp(&values[a].abs()));
        Ok(Ritz { values, y, order })
    }

    /// The first `count` Ritz vectors y (by decreasing |theta|) as an m x count matrix.
    fn columns<T: Scalar>(&self, count: usize) -> DMatrix<T> {
        let m = self.values.len();
        DMatrix::from_fn(m, count, |r, c| T::from_c64(self.y[(r, self.order[c])]))
    }

    /// Done when the `k` largest pairs have converged (residual beta |y_m| below TOL |theta|)
    /// or the space is exhausted; ShiftTooClose when an eigenvalue sits almost on the shift.
    fn verdict(&self, k: usize, beta: f64, exhausted: bool) -> Verdict {
        let (values, y, order) = (&self.values, &self.y, &self.order);
        let m = values.len();
        let kk = k.min(m);
        let converged = order[..kk]
            .iter()
            .all(|&i| (beta * y[(m - 1, i)].norm()) <= TOL * values[i].abs());
        // an eigenvalue (almost) on the shift: its theta dwarfs the others so much that
        // the rounding of the solves (about eps * theta_max) swamps TOL * theta_k, and
        // even a "converged" Ritz estimate cannot be trusted
        let (t_max, t_k) = (values[order[0]].abs(), values[order[kk - 1]].abs());
        if !exhausted && t_max * f64::EPSILON * 64.0 > TOL * t_k {
            return Verdict::ShiftTooClose(1.0 / t_k);
        }
        if converged || exhausted {
            Verdict::Done
        } else {
            Verdict::GoOn
        }
    }

    /// Krylov–Schur restart: contract the basis of `m` vectors to `keep` Ritz vectors plus the
    /// residual vector, in place, with the arrowhead projected matrix; returns `keep`.
    fn contract<T: Scalar>(
        &self,
        v: &mut DMatrix<T>,
        tm: &mut DMatrix<T>,
        m: usize,
        k: usize,
        beta: f64,
    ) -> usize {
        let (values, y, order) = (&self.values, &self.y, &self.order);
        let keep = ((m + k) / 2).max(k).min(m - 1);
        transform_in_place(v, m, &self.columns::<T>(keep));
        let n = v.nrows();
        v.as_mut_slice().copy_within(m * n..(m + 1) * n, keep * n);
        tm.fill(T::zero());
        for c in 0..keep {
            let i = order[c];
            tm[(c, c)] = T::from_real(values[i]);
            let b = T::from_real(beta) * T::from_c64(y[(m - 1, i)]);
            tm[(keep, c)] = b;
            tm[(c, keep)] = b.conjugate();
        }
        keep
    }
}

/// Rows per block of the blocked kernels: a block of the vector being orthogonalised (16 or
/// 32 KiB) stays in cache while the basis columns stream past, so each pass over the basis
/// reads it once and the vector once.
pub(super) const ROW_BLOCK: usize = 2048;

/// Columns 0..k of the column-major n x c matrix `v` become V[:, 0..m] Y for the m x k matrix
/// `y` (k <= m), in place, one block of rows at a time (no n x k temporary).
pub(super) fn transform_in_place<T: Scalar>(v: &mut DMatrix<T>, m: usize, y: &DMatrix<T>) {
    transform_columns(v, 0, m, y);
}

/// Columns c0..c0+k of `v` become V[:, c0..c0+m] Y, in place, blocked over rows: the row
/// chunks of [`PAR_ROWS`] rows in parallel, each copied a block of rows at a time into a small
/// buffer that the product reads (no n x k temporary).
pub(super) fn transform_columns<T: Scalar>(
    v: &mut DMatrix<T>,
    c0: usize,
    m: usize,
    y: &DMatrix<T>,
) {
    use rayon::prelude::*;
    let (n, k) = (v.nrows(), y.ncols());
    if n == 0 || m == 0 || k == 0 {
        return;
    }
    // pieces[chunk][column]: the rows of one chunk in each of the columns c0..c0+m
    let chunks = n.div_ceil(PAR_ROWS);
    let mut pieces: Vec<Vec<&mut [T]>> = (0..chunks).map(|_| Vec::with_capacity(m)).collect();
    for col in v.as_mut_slice().chunks_mut(n).skip(c0).take(m) {
        for (c, p) in col.chunks_mut(PAR_ROWS).enumerate() {
            pieces[c].push(p);
        }
    }
    pieces.into_par_iter().for_each(|mut pc| {
        let len = pc[0].len();
        let rb = ROW_BLOCK.min(len);
        let mut a = DMatrix::<T>::zeros(rb, m);
        let mut t = DMatrix::<T>::zeros(rb, k);
        let mut r0 = 0;
        while r0 < len {
            let r = rb.min(len - r0);
            for (j, p) in pc.iter().enumerate() {
                a.as_mut_slice()[j * rb..j * rb + r].copy_from_slice(&p[r0..r0 + r]);
            }
            t.view_mut((0, 0), (r, k))
                .gemm(T::one(), &a.view((0, 0), (r, m)), y, T::zero());
            for (j, p) in pc.iter_mut().enumerate().take(k) {
                p[r0..r0 + r].copy_from_slice(&t.as_slice()[j * rb..j * rb + r]);
            }
            r0 += r;
        }
    });
}

/// sum conj(a_i) b_i with eight partial sums (independent chains, vectorisable).
#[inline]
pub(super) fn dotc<T: Scalar>(a: &[T], b: &[T]) -> T {
    let mut s = [T::zero(); 8];
    let (ca, cb) = (a.chunks_exact(8), b.chunks_exact(8));
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for i in 0..8 {
            s[i] += x[i].conjugate() * y[i];
        }
    }
    let mut t = ((s[0] + s[1]) + (s[2] + s[3])) + ((s[4] + s[5]) + (s[6] + s[7]));
    for (x, y) in ra.iter().zip(rb) {
        t += x.conjugate() * *y;
    }
    t
}

/// Four dot products conj(a_q) . b sharing one pass over b (two partial sums each).
#[inline]
fn dotc4<T: Scalar>(a: [&[T]; 4], b: &[T]) -> [T; 4] {
    let mut s = [[T::zero(); 2]; 4];
    let len = b.len();
    let a = [&a[0][..len], &a[1][..len], &a[2][..len], &a[3][..len]];
    let even = len - len % 2;
    let mut i = 0;
    while i < even {
        let (b0, b1) = (b[i], b[i + 1]);
        for q in 0..4 {
            s[q][0] += a[q][i].conjugate() * b0;
            s[q][1] += a[q][i + 1].conjugate() * b1;
        }
        i += 2;
    }
    let mut out = [T::zero(); 4];
    for q in 0..4 {
        out[q] = s[q][0] + s[q][1];
        if even < len {
            out[q] += a[q][even].conjugate() * b[even];
        }
    }
    out
}

/// y -= c x.
#[inline]
pub(super) fn sub_scaled<T: Scalar>(y: &mut [T], c: T, x: &[T]) {
    for (yi, &xi) in y.iter_mut().zip(x) {
        *yi -= c * xi;
    }
}

/// Euclidean norm of a slice (parallel over row chunks for long slices).
pub(super) fn norm<T: Scalar>(a: &[T]) -> f64 {
    chunk_sum::<Complex64>(a.len(), 1, |r0, r1| {
        vec![Complex64::new(norm2_seq(&a[r0..r1]), 0.0)]
    })[0]
        .re
        .sqrt()
}

/// out = a * x.
fn scale_into<T: Scalar>(x: &[T], a: f64, out: &mut [T]) {
    let a = T::from_real(a);
    for (o, &xi) in out.iter_mut().zip(x) {
        *o = xi * a;
    }
}

/// Rows per parallel chunk of the vector kernels: fixed (not derived from the thread count),
/// so the sums are added in the same order on any number of threads and the results do not
/// depend on it. 16384 rows = 128 KiB real, large enough to hide rayon's task overhead.
pub(super) const PAR_ROWS: usize = 16384;

/// Sum over the row chunks [r0, r1) of `part(r0, r1)` (a vector of `len` numbers), the chunks
/// in parallel, the partial sums added in chunk order.
pub(super) fn chunk_sum<T: Scalar>(
    n: usize,
    len: usize,
    part: impl Fn(usize, usize) -> Vec<T> + Sync,
) -> Vec<T> {
    use rayon::prelude::*;
    let chunks = n.div_ceil(PAR_ROWS).max(1);
    let parts: Vec<Vec<T>> = if chunks == 1 {
        vec![part(0, n)]
    } else {
        (0..chunks)
            .into_par_iter()
            .map(|c| part(c * PAR_ROWS, ((c + 1) * PAR_ROWS).min(n)))
            .collect()
    };
    let mut out = vec![T::zero(); len];
    for p in parts {
        for (o, x) in out.iter_mut().zip(p) {
            *o += x;
        }
    }
    out
}

/// Apply `f(r0, chunk of w)` to the row chunks of `w` in parallel and return the sum of its
/// results (added in chunk order).
fn chunk_apply<T: Scalar>(w: &mut [T], f: impl Fn(usize, &mut [T]) -> f64 + Sync) -> f64 {
    use rayon::prelude::*;
    if w.len() <= PAR_ROWS {
        return f(0, w);
    }
    let parts: Vec<f64> = w
        .par_chunks_mut(PAR_ROWS)
        .enumerate()
        .map(|(c, wc)| f(c * PAR_ROWS, wc))
        .collect();
    parts.into_iter().sum()
}

/// Squared norm of a slice, sequential.
fn norm2_seq<T: Scalar>(a: &[T]) -> f64 {
    let mut s = [0.0f64; 4];
    let c = a.chunks_exact(4);
    let r = c.remainder();
    for x in c {
        s[0] += x[0].modulus_squared();
        s[1] += x[1].modulus_squared();
        s[2] += x[2].modulus_squared();
        s[3] += x[3].modulus_squared();
    }
    let mut t = (s[0] + s[1]) + (s[2] + s[3]);
    for x in r {
        t += x.modulus_squared();
    }
    t
}

/// c_j = v_j^H w for the first `cols` columns of the column-major basis `v` (n = w.len()
/// rows), in parallel over row chunks, each blocked over rows.
pub(super) fn project<T: Scalar>(v: &[T], cols: usize, w: &[T], c: &mut [T]) {
    let n = w.len();
    let sums = chunk_sum(n, cols, |a, b| {
        let mut part = vec![T::zero(); cols];
        let mut r0 = a;
        while r0 < b {
            let r1 = (r0 + ROW_BLOCK).min(b);
            let wb = &w[r0..r1];
            let mut j = 0;
            while j + 4 <= cols {
                let d = dotc4(
                    [
                        &v[j * n + r0..j * n + r1],
                        &v[(j + 1) * n + r0..(j + 1) * n + r1],
                        &v[(j + 2) * n + r0..(j + 2) * n + r1],
                        &v[(j + 3) * n + r0..(j + 3) * n + r1],
                    ],
                    wb,
                );
                for (q, dq) in d.into_iter().enumerate() {
                    part[j + q] += dq;
                }
                j += 4;
            }
            for (jj, cj) in part.iter_mut().enumerate().skip(j) {
                *cj += dotc(&v[jj * n + r0..jj * n + r1], wb);
            }
            r0 = r1;
        }
        part
    });
    c[..cols].copy_from_slice(&sums);
}

/// w -= sum_j c_j v_j over the columns `idx` of `v` (coefficients `c[j]`), in parallel over
/// row chunks, blocked over rows; returns ||w||^2 after the update (fused, no extra pass).
fn subtract_norm2<T: Scalar>(v: &[T], idx: &[usize], c: &[T], w: &mut [T]) -> f64 {
    let n = w.len();
    chunk_apply(w, |a, wc| {
        let mut s = 0.0;
        let len = wc.len();
        let mut r0 = 0;
        while r0 < len {
            let r1 = (r0 + ROW_BLOCK).min(len);
            let wb = &mut wc[r0..r1];
            for &j in idx {
                sub_scaled(wb, c[j], &v[j * n + a + r0..j * n + a + r1]);
            }
            s += norm2_seq(wb);
            r0 = r1;
        }
        s
    })
}

/// Orthogonalise `w` against the locked vectors and the first `cols` columns of the
/// column-major basis `v` (n = w.len() rows) by classical Gram–Schmidt with the DGKS safeguard
/// (a repeated pass only when the previous one removed more than 1 - 1/sqrt(2) of the norm;
/// Daniel, Gragg, Kaufman and Stewart, Math. Comp. 30, 772 (1976)); returns the projections
/// on the columns of `v`. With `local = Some((p, j))` the projections on columns p and j (the
/// Lanczos three-term part) are removed first, so that the full pass acts on a small
/// remainder and rarely needs repeating. Each pass reads the basis once (blocked kernels,
/// parallel over row chunks), and the norms are fused into the subtractions.
pub(super) fn orthogonalize<T: Scalar>(
    w: &mut [T],
    locked: &[&[T]],
    v: &[T],
    cols: usize,
    local: Option<(usize, usize)>,
) -> Vec<T> {
    let mut h = vec![T::zero(); cols];
    let mut before = match local {
        Some((p, j)) => {
            let idx: Vec<usize> = if p == j { vec![j] } else { vec![p, j] };
            let mut c = vec![T::zero(); cols];
            let n = w.len();
            let sums = chunk_sum(n, idx.len(), |a, b| {
                idx.iter()
                    .map(|&i| dotc(&v[i * n + a..i * n + b], &w[a..b]))
                    .collect()
            });
            for (&i, &ci) in idx.iter().zip(&sums) {
                c[i] = ci;
                h[i] += ci;
            }
            subtract_norm2(v, &idx, &c, w).sqrt()
        }
        None => norm(w),
    };
    let all: Vec<usize> = (0..cols).collect();
    let mut c = vec![T::zero(); cols];
    for _pass in 0..3 {
        for x in locked {
            let cx = dotc(x, w);
            sub_scaled(w, cx, x);
        }
        let after = if cols > 0 {
            project(v, cols, w, &mut c);
            for (hi, ci) in h.iter_mut().zip(c.iter()) {
                *hi += *ci;
            }
            subtract_norm2(v, &all, &c, w).sqrt()
        } else {
            norm(w)
        };
        if after > std::f64::consts::FRAC_1_SQRT_2 * before {
            break;
        }
        before = after;
    }
    h
}

pub(super) fn breakdown(why: &str) -> Error {
    Error::Numerical {
        stage: "shift-invert Lanczos".into(),
        detail: format!("{why}; move the target or ask for fewer eigenvalues"),
    }
}

/// Fill with random unit-box numbers (deterministic, SplitMix64).
pub(super) fn random_fill<T: Scalar>(w: &mut [T], rng: &mut SplitMix) {
    for z in w.iter_mut() {
        let re = rng.uniform();
        let im = rng.uniform();
        *z = T::from_c64(Complex64::new(re, im));
    }
}

/// SplitMix64 generator (Steele, Lea and Flood, OOPSLA 2014), for reproducible start vectors
/// (and the crate's own test matrices).
pub(crate) struct SplitMix(pub(crate) u64);

impl SplitMix {
    /// Uniform in [-1, 1).
    pub(crate) fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    }
}
