//! Krylov–Schur (thick-restart) Lanczos with full reorthogonalisation on a shift-inverted
//! banded operator (H - sigma I)^(-1): the iteration behind [`super::window`], which chooses
//! the shift, checks completeness by inertia counts and refines the Ritz vectors in H.
//!
//! # Method
//! Each step applies the factored inverse ([`BandedLu`]) to the newest basis vector, removes the
//! three-term part, then orthogonalises against the whole basis (and any locked vectors) by
//! classical Gram–Schmidt with the DGKS test; when the basis reaches m vectors it is contracted
//! to the (m + k)/2 Ritz vectors of largest |theta| plus the residual vector (Krylov–Schur
//! restart). A Ritz pair (theta, y) is accepted when its residual |beta_m y_m| is below
//! 1e-10 |theta|.
//!
//! # Complexity
//! Per step one O(n b) solve and O(n m) for the reorthogonalisation, plus an O(m^3) dense
//! eigen-solve of the projected matrix every other step; in all O((r + 1) n m^2) for r
//! restarts. Memory O(n m) for the basis, m = max(2k + 10, k + 30) capped at n.
//!
//! # References
//! G. W. Stewart, "A Krylov–Schur algorithm for large eigenproblems", SIAM J. Matrix Anal.
//! Appl. 23, 601 (2001); J. W. Daniel, W. B. Gragg, L. Kaufman and G. W. Stewart, Math. Comp.
//! 30, 772 (1976) (DGKS reorthogonalisation).

use super::banded::{BandedLu, Scalar};
use super::dense::{eigh, Vectors};
use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

/// Relative tolerance of the inverted-problem residual.
pub(super) const TOL: f64 = 1e-10;
/// Restarts allowed per Krylov–Schur run.
pub(super) const MAX_RESTARTS: usize = 200;

/// Outcome of one Krylov–Schur run.
pub(super) enum Krylov<T> {
    Done(Vec<DVector<T>>),
    ShiftTooClose { radius: f64 },
}

/// Krylov–Schur Lanczos on (H - sigma)^(-1) restricted to the complement of `locked`;
/// returns the `want` Ritz vectors of largest |theta| (unit vectors).
pub(super) fn krylov_schur<T: Scalar>(
    lu: &BandedLu<T>,
    n: usize,
    want: usize,
    locked: &[&DVector<T>],
    rng: &mut SplitMix,
) -> Result<Krylov<T>> {
    let room = n - locked.len();
    let mmax = (2 * want + 10).max(want + 30).min(room);
    let k = want.min(mmax);
    let mut v = DMatrix::<T>::zeros(n, mmax + 1);
    let mut tm = DMatrix::<T>::zeros(mmax, mmax);
    // start vector: random, in the complement of the locked vectors
    let mut w = random_vector::<T>(n, rng);
    orthogonalize(&mut w, locked, &v, 0, None);
    let nw = w.norm();
    if nw == 0.0 {
        return Err(breakdown("the start vector lies in the locked subspace"));
    }
    v.set_column(0, &(w / T::from_real(nw)));
    let mut start = 0;
    let mut restarts = 0;
    loop {
        let mut j = start;
        let (m, beta, ritz) = loop {
            let basis = Basis {
                lu,
                locked,
                room,
                start,
            };
            let (beta, exhausted) = basis.step(&mut v, &mut tm, j, rng);
            let m = j + 1;
            // Ritz pairs: at a full basis, and every few steps once k of them can exist
            if exhausted || m == mmax || (m >= k + 2 && (m - start) % 2 == 0) {
                let ritz = Ritz::of(&tm, m)?;
                if let Some(out) = ritz.accept(&v, k, beta, exhausted) {
                    return Ok(out);
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
    lu: &'a BandedLu<T>,
    locked: &'a [&'a DVector<T>],
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
        j: usize,
        rng: &mut SplitMix,
    ) -> (f64, bool) {
        let n = v.nrows();
        let mut w: DVector<T> = v.column(j).into_owned();
        self.lu.solve_unchecked(w.as_mut_slice());
        let scale = w.norm();
        // three-term part first (cheap), then the full pass on the small remainder;
        // right after a restart column j couples to all kept vectors, so no local part
        let local = if j == self.start && j > 0 {
            None
        } else {
            Some((j.saturating_sub(1), j))
        };
        let hcol = orthogonalize(&mut w, self.locked, v, j + 1, local);
        for i in 0..j {
            tm[(i, j)] = hcol[i];
            tm[(j, i)] = hcol[i].conjugate();
        }
        tm[(j, j)] = T::from_real(hcol[j].real());
        let beta = w.norm();
        if beta > 1e-13 * scale.max(f64::MIN_POSITIVE) {
            v.set_column(j + 1, &(w / T::from_real(beta)));
            return (beta, false);
        }
        // invariant subspace found: continue with a fresh direction, coupling 0
        let mut r = random_vector::<T>(n, rng);
        orthogonalize(&mut r, self.locked, v, j + 1, None);
        let nr = r.norm();
        if nr <= 1e-10 * (n as f64).sqrt() || j + 1 == self.room {
            return (0.0, true);
        }
        v.set_column(j + 1, &(r / T::from_real(nr)));
        (0.0, false)
    }
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

    /// The run's outcome when the `k` largest pairs have converged (residual beta |y_m| below
    /// TOL |theta|), the space is exhausted, or the shift sits too close to an eigenvalue;
    /// `None` to go on.
    fn accept<T: Scalar>(
        &self,
        v: &DMatrix<T>,
        k: usize,
        beta: f64,
        exhausted: bool,
    ) -> Option<Krylov<T>> {
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
            return Some(Krylov::ShiftTooClose { radius: 1.0 / t_k });
        }
        if !(converged || exhausted) {
            return None;
        }
        let ysel = DMatrix::from_fn(m, kk, |r, c| T::from_c64(y[(r, order[c])]));
        let x = v.columns(0, m) * ysel;
        Some(Krylov::Done(
            x.column_iter()
                .map(|c| {
                    let nx = c.norm();
                    c.into_owned() / T::from_real(nx)
                })
                .collect(),
        ))
    }

    /// Krylov–Schur restart: contract the basis of `m` vectors to `keep` Ritz vectors plus the
    /// residual vector, with the arrowhead projected matrix; returns `keep`.
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
        let ykeep = DMatrix::from_fn(m, keep, |r, c| T::from_c64(y[(r, order[c])]));
        let u = v.columns(0, m) * &ykeep;
        let resid = v.column(m).into_owned();
        v.columns_mut(0, keep).copy_from(&u);
        v.set_column(keep, &resid);
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

/// Orthogonalise `w` against the locked vectors and the first `cols` columns of `v` by
/// classical Gram–Schmidt with the DGKS safeguard (a repeated pass only when the previous one
/// removed more than 1 - 1/sqrt(2) of the norm; Daniel, Gragg, Kaufman and Stewart, Math.
/// Comp. 30, 772 (1976)); returns the projections on the columns of `v`. With
/// `local = Some((p, j))` the projections on columns p and j (the Lanczos three-term part) are
/// removed first, so that the full pass acts on a small remainder and rarely needs repeating.
pub(super) fn orthogonalize<T: Scalar>(
    w: &mut DVector<T>,
    locked: &[&DVector<T>],
    v: &DMatrix<T>,
    cols: usize,
    local: Option<(usize, usize)>,
) -> Vec<T> {
    let mut h = vec![T::zero(); cols];
    if let Some((p, j)) = local {
        let idx: &[usize] = if p == j { &[j] } else { &[p, j] };
        for &i in idx {
            let c = v.column(i).dotc(w);
            w.axpy(-c, &v.column(i), T::one());
            h[i] += c;
        }
    }
    let mut before = w.norm();
    for _pass in 0..3 {
        for x in locked {
            let c = x.dotc(w);
            w.axpy(-c, *x, T::one());
        }
        if cols > 0 {
            let vc = v.columns(0, cols);
            let c = vc.ad_mul(w);
            w.gemv(-T::one(), &vc, &c, T::one());
            for (hi, ci) in h.iter_mut().zip(c.iter()) {
                *hi += *ci;
            }
        }
        let after = w.norm();
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

/// Random unit-box vector (deterministic, SplitMix64).
fn random_vector<T: Scalar>(n: usize, rng: &mut SplitMix) -> DVector<T> {
    DVector::from_fn(n, |_, _| {
        let re = rng.uniform();
        let im = rng.uniform();
        T::from_c64(Complex64::new(re, im))
    })
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
