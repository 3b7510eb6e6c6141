//! Eigenvalues of a huge banded Hermitian matrix near a target energy or inside a window,
//! without forming a dense matrix.
//!
//! # Method
//! Shift-invert Krylov–Schur (thick-restart) Lanczos with full reorthogonalisation:
//! 1. factor H - sigma I = P^T L U once ([`BandedHermitian::lu`], partial pivoting), in real
//!    arithmetic when H is real;
//! 2. run Lanczos on the Hermitian operator (H - sigma I)^(-1), whose largest eigenvalues
//!    theta = 1/(lambda - sigma) belong to the lambda nearest sigma; each step removes the
//!    three-term part, then orthogonalises against the whole basis by classical Gram–Schmidt,
//!    repeated only when the DGKS test asks for it (full reorthogonalisation); when the basis
//!    reaches m vectors it is contracted to the (m + k)/2 wanted Ritz vectors plus the
//!    residual vector (Krylov–Schur restart) and expanded again;
//! 3. a Ritz pair (theta, y) has residual |beta_m y_m| in the inverted problem; it is accepted
//!    when this is below 1e-10 |theta|; the vector x = V y then gets the Rayleigh quotient
//!    lambda = x^H H x and the explicit residual ||H x - lambda x|| (an eigenvalue of H lies
//!    within it: Parlett, The Symmetric Eigenvalue Problem, 1980, Thm 4.5.1); before that,
//!    one block step of subspace iteration with Rayleigh–Ritz in H damps the far-from-sigma
//!    components that rounding leaves in the Ritz vectors (they dominate the residual, since
//!    ||H|| is large there);
//!    if an eigenvalue sits almost exactly on the target, the shift is moved off it by a few
//!    per cent of the search radius and two more pairs are computed;
//! 4. completeness: Sylvester inertia counts ([`BandedHermitian::inertia`]) around the target
//!    tell how many eigenvalues lie nearer than the farthest one found; if some are missing
//!    (a degenerate pair, which a single Krylov sequence sees only once), the found vectors are
//!    locked and the search is repeated in their orthogonal complement.
//!
//! Steps 1, 3 (refinement in H) and 4 are here; the Krylov–Schur iteration of steps 2-3 is in
//! the private module `numeric::lanczos`.
//!
//! Why not Sturm bisection plus inverse iteration: bisection needs one O(n b^2) factorisation
//! per halving, about 40 per eigenvalue to reach 1e-12, against one factorisation plus m
//! O(n b) solves here; with the cost of one inertia count measured in
//! `tools/window_timing.rs` (n = 2e5 and 2e6, b = 7, 20 levels; a shared, loaded
//! machine), bisection would take about 4-10 times longer than this solver, before even
//! computing eigenvectors.
//!
//! # Complexity
//! One factorisation O(n b^2), then per Lanczos step one O(n b) solve and O(n m) for the
//! reorthogonalisation; in all O(n b^2 + (r + 1) n m^2) for r restarts (two for the 20
//! levels of `tools/window_timing.rs`), plus two O(n b^2) inertia counts. Memory O(n b)
//! for the factors plus O(n m) for the basis, m = max(2k + 10, k + 30) capped at n.
//!
//! # References
//! G. W. Stewart, "A Krylov–Schur algorithm for large eigenproblems", SIAM J. Matrix Anal.
//! Appl. 23, 601 (2001); K. Wu and H. Simon, "Thick-restart Lanczos method for large symmetric
//! eigenvalue problems", SIAM J. Matrix Anal. Appl. 22, 602 (2000); T. Ericsson and A. Ruhe,
//! "The spectral transformation Lanczos method", Math. Comp. 35, 1251 (1980).

use super::banded::{BandedHermitian, BandedLu, Scalar};
use super::dense::{eigh, Vectors};
use super::lanczos::{breakdown, krylov_schur, orthogonalize, Krylov, SplitMix, TOL};
use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

/// Eigenpairs found by [`nearest`] or [`in_window`].
#[derive(Debug, Clone)]
pub struct WindowEigen {
    /// Eigenvalues, ascending.
    pub values: Vec<f64>,
    /// Orthonormal eigenvectors as columns (n x count), column i for `values[i]`.
    pub vectors: DMatrix<Complex64>,
    /// Explicit residual norms ||H x_i - lambda_i x_i|| for unit x_i: an eigenvalue of H lies
    /// within `residuals[i]` of `values[i]`.
    pub residuals: Vec<f64>,
    /// The shift sigma actually factored (the target, moved slightly if it hit an eigenvalue).
    pub shift: f64,
}

/// Locking rounds allowed for missing (degenerate) eigenvalues.
const MAX_ROUNDS: usize = 4;

/// The `count` eigenvalues of `h` nearest `target` (ties broken arbitrarily), ascending, with
/// eigenvectors and residual norms. See the module documentation for the method.
///
/// # Errors
/// [`Error::BadNumber`] for count = 0, count > n or a non-finite target;
/// [`Error::NotConverged`] when the Lanczos iteration stalls (report the target and count);
/// [`Error::Numerical`] when the factorisation fails at every nearby shift.
///
/// # Complexity
/// O(n b^2) for the factorisation and the two inertia counts, O(n m^2) for the Lanczos basis
/// work (m = max(2 count + 10, count + 30)); memory O(n (b + m)).
///
/// # Examples
/// ```
/// use ladderfan::numeric::{banded::BandedHermitian, window::nearest};
/// use num_complex::Complex64;
/// // the second-difference matrix 2 - 2cos(pi k/(n+1)), k = 1..n
/// let n = 200;
/// let h = BandedHermitian::from_fn(n, 1, |i, j| {
///     Complex64::new(if i == j { 2.0 } else { -1.0 }, 0.0)
/// }).unwrap();
/// let e = nearest(&h, 0.0, 3).unwrap();
/// for (k, v) in e.values.iter().enumerate() {
///     let exact = 2.0 - 2.0 * (std::f64::consts::PI * (k + 1) as f64 / (n + 1) as f64).cos();
///     assert!((v - exact).abs() < 1e-12);
/// }
/// ```
pub fn nearest(h: &BandedHermitian, target: f64, count: usize) -> Result<WindowEigen> {
    let n = h.size();
    if !target.is_finite() {
        return Err(Error::BadNumber {
            name: "target energy".into(),
            value: target,
            fix: "give a finite energy".into(),
        });
    }
    if count == 0 || count > n {
        return Err(Error::BadNumber {
            name: "number of eigenvalues wanted".into(),
            value: count as f64,
            fix: format!("ask for 1 to {n} eigenvalues (the matrix size)"),
        });
    }
    let norm = h.norm_bound().max(f64::MIN_POSITIVE);
    if h.is_real() {
        nearest_t::<f64>(h, target, count, norm)
    } else {
        nearest_t::<Complex64>(h, target, count, norm)
    }
}

/// Offsets (in units of the distance of the farthest wanted eigenvalue) by which the shift is
/// moved off the target when an eigenvalue sits almost exactly on it.
const SHIFT_OFFSETS: [f64; 3] = [0.05, -0.037, 0.11];

fn nearest_t<T: Scalar>(
    h: &BandedHermitian,
    target: f64,
    count: usize,
    norm: f64,
) -> Result<WindowEigen> {
    let mut sigma = target;
    let mut extra = 0;
    let mut offsets = SHIFT_OFFSETS.iter();
    loop {
        let (lu, s) = factor_near::<T>(h, sigma, norm)?;
        match search(h, &lu, target, s, count, extra, norm)? {
            Search::Done(w) => return Ok(w),
            Search::ShiftTooClose { radius } => {
                // an eigenvalue sits on the shift: (H - sigma)^(-1) is so ill-conditioned that
                // the others cannot converge; move the shift off it and ask for a few more
                let Some(offset) = offsets.next() else { break };
                sigma = target + offset * radius;
                extra = 2;
            }
        }
    }
    Err(Error::NotConverged {
        tolerance: TOL,
        detail: format!(
            "eigenvalues sit almost on every shift tried near {target}; move the target slightly"
        ),
    })
}

/// Outcome of one shift-invert search.
enum Search {
    Done(WindowEigen),
    ShiftTooClose { radius: f64 },
}

/// All eigenvalues of `h` in [lo, hi), ascending, with eigenvectors and residual norms; an
/// interval holding no eigenvalue gives an empty result. The count is fixed first by two
/// inertia counts, then the eigenpairs come from [`nearest`] at the window centre.
///
/// # Errors
/// [`Error::BadNumber`] when lo or hi is not finite, lo >= hi (an empty window), max_count = 0,
/// or the window holds more than `max_count` eigenvalues (narrow it or raise max_count);
/// otherwise as [`nearest`].
///
/// # Complexity
/// Two extra O(n b^2) inertia counts on top of [`nearest`] with count = eigenvalues inside.
pub fn in_window(h: &BandedHermitian, lo: f64, hi: f64, max_count: usize) -> Result<WindowEigen> {
    if !(lo.is_finite() && hi.is_finite()) {
        return Err(Error::BadNumber {
            name: "energy window bound".into(),
            value: if lo.is_finite() { hi } else { lo },
            fix: "give finite window bounds".into(),
        });
    }
    if lo >= hi {
        return Err(Error::BadNumber {
            name: "energy window width hi - lo".into(),
            value: hi - lo,
            fix: format!("the window [{lo}, {hi}) is empty: give lo < hi"),
        });
    }
    if max_count == 0 {
        return Err(Error::BadNumber {
            name: "max_count".into(),
            value: 0.0,
            fix: "allow at least one eigenvalue".into(),
        });
    }
    let inside = h.inertia(hi)?.below.saturating_sub(h.inertia(lo)?.below);
    if inside > max_count {
        return Err(Error::BadNumber {
            name: "eigenvalues in the window".into(),
            value: inside as f64,
            fix: format!(
                "the window [{lo}, {hi}) holds {inside} eigenvalues, above max_count = \
                 {max_count}; narrow the window or raise max_count"
            ),
        });
    }
    let n = h.size();
    if inside == 0 {
        return Ok(WindowEigen {
            values: Vec::new(),
            vectors: DMatrix::zeros(n, 0),
            residuals: Vec::new(),
            shift: 0.5 * (lo + hi),
        });
    }
    // the `inside` eigenvalues nearest the centre are the ones in the window, up to ties at
    // the edges: ask for a few more and keep those inside
    let all = nearest(h, 0.5 * lo + 0.5 * hi, (inside + 2).min(n))?;
    let keep: Vec<usize> = (0..all.values.len())
        .filter(|&i| all.values[i] >= lo && all.values[i] < hi)
        .collect();
    Ok(WindowEigen {
        values: keep.iter().map(|&i| all.values[i]).collect(),
        vectors: all.vectors.select_columns(keep.iter()),
        residuals: keep.iter().map(|&i| all.residuals[i]).collect(),
        shift: all.shift,
    })
}

/// Factor H - sigma I at sigma = target, or nearby if the target hits an eigenvalue exactly.
fn factor_near<T: Scalar>(
    h: &BandedHermitian,
    target: f64,
    norm: f64,
) -> Result<(BandedLu<T>, f64)> {
    let mut last = None;
    for attempt in 0..4 {
        let sigma = target + (attempt as f64) * 1e-9 * norm;
        match BandedLu::<T>::factor_pub(h, sigma) {
            Ok(lu) => return Ok((lu, sigma)),
            Err(e) => last = Some(e),
        }
    }
    Err(last.unwrap_or_else(|| Error::Numerical {
        stage: "banded LU".into(),
        detail: "no shift could be factored".into(),
    }))
}

/// One eigenpair found by a Krylov–Schur run, in H.
struct Found<T> {
    round: usize,
    value: f64,
    vector: DVector<T>,
    residual: f64,
}

fn search<T: Scalar>(
    h: &BandedHermitian,
    lu: &BandedLu<T>,
    target: f64,
    sigma: f64,
    count: usize,
    extra: usize,
    norm: f64,
) -> Result<Search> {
    let n = h.size();
    let mut rng = SplitMix(0x1a2b_3c4d_5e6f_7081);
    let mut found: Vec<Found<T>> = Vec::new();
    let mut want = (count + extra).min(n);
    for round in 0..MAX_ROUNDS {
        let locked: Vec<DVector<T>> = found.iter().map(|f| f.vector.clone()).collect();
        let locked: Vec<&DVector<T>> = locked.iter().collect();
        let room = n - locked.len();
        if room == 0 {
            break;
        }
        let pairs = match krylov_schur(lu, n, want.min(room), &locked, &mut rng)? {
            Krylov::Done(p) => p,
            Krylov::ShiftTooClose { radius } => return Ok(Search::ShiftTooClose { radius }),
        };
        for mut f in refine(h, lu, pairs, &locked)? {
            f.round = round;
            found.push(f);
        }
        found.sort_by(|a, b| {
            (a.value - target)
                .abs()
                .total_cmp(&(b.value - target).abs())
        });
        found.truncate(count);
        if round > 0 && !found.iter().any(|f| f.round == round) {
            return Err(Error::NotConverged {
                tolerance: TOL,
                detail: format!(
                    "the inertia count finds more eigenvalues near {target} than the Lanczos \
                     search in the complement of the {count} found ones; the unpivoted inertia \
                     count may be unreliable at this target: move the target slightly"
                ),
            });
        }
        let missing = missing_count(h, &found, target, norm)?;
        if missing == 0 {
            break;
        }
        if round + 1 == MAX_ROUNDS {
            return Err(Error::NotConverged {
                tolerance: TOL,
                detail: format!(
                    "after {MAX_ROUNDS} locking rounds the inertia count still finds {missing} \
                     eigenvalue(s) nearer to {target} than the farthest of the {count} found; \
                     the spectrum may be highly degenerate there: move the target or ask for \
                     more eigenvalues"
                ),
            });
        }
        want = missing + 2;
    }
    found.sort_by(|a, b| a.value.total_cmp(&b.value));
    let k = found.len();
    let vectors = DMatrix::from_fn(n, k, |i, j| {
        let z = found[j].vector[i];
        Complex64::new(z.real(), z.imaginary())
    });
    Ok(Search::Done(WindowEigen {
        values: found.iter().map(|f| f.value).collect(),
        residuals: found.iter().map(|f| f.residual).collect(),
        vectors,
        shift: sigma,
    }))
}

/// Distance from target of the `count`-th nearest found value (infinity if fewer).
fn radius<T>(found: &[Found<T>], target: f64, count: usize) -> f64 {
    if found.len() < count {
        f64::INFINITY
    } else {
        found
            .iter()
            .map(|f| (f.value - target).abs())
            .fold(0.0, f64::max)
    }
}

/// How many eigenvalues certainly lie nearer to `target` than the farthest found one but were
/// not found (inertia count minus found ones).
fn missing_count<T: Scalar>(
    h: &BandedHermitian,
    found: &[Found<T>],
    target: f64,
    norm: f64,
) -> Result<usize> {
    let r = radius(found, target, 0);
    let max_res = found.iter().map(|f| f.residual).fold(0.0, f64::max);
    let delta = (found.len() as f64).sqrt() * max_res + 64.0 * f64::EPSILON * norm;
    if r - delta <= 0.0 {
        return Ok(0);
    }
    let inner = h.inertia(target + (r - delta))?.below
        - h.inertia(target - (r - delta))?.below.min(h.size());
    let within = found
        .iter()
        .filter(|f| (f.value - target).abs() < r)
        .count();
    Ok(inner.saturating_sub(within))
}

/// One step of subspace iteration with Rayleigh–Ritz in H: X' = (H - sigma)^(-1) X,
/// orthonormalised (also against `locked`), then the eigenvectors of X'^H H X'. It damps the
/// components far from sigma left by the Lanczos rounding (they dominate ||H x - lambda x||
/// because ||H|| is large there; measured: residuals drop by orders of magnitude). The Lanczos
/// pairs are kept when the refined block loses rank or has the larger worst residual.
fn refine<T: Scalar>(
    h: &BandedHermitian,
    lu: &BandedLu<T>,
    xs: Vec<DVector<T>>,
    locked: &[&DVector<T>],
) -> Result<Vec<Found<T>>> {
    let n = h.size();
    let k = xs.len();
    let mut q = DMatrix::<T>::zeros(n, k);
    let mut cols = 0;
    for x in &xs {
        let mut w = x.clone();
        lu.solve_unchecked(w.as_mut_slice());
        orthogonalize(&mut w, locked, &q, cols, None);
        let nw = w.norm();
        if nw == 0.0 || !nw.is_finite() {
            continue;
        }
        q.set_column(cols, &(w / T::from_real(nw)));
        cols += 1;
    }
    if cols < k {
        // the block lost rank (cannot happen for orthonormal input in exact arithmetic)
        return Ok(xs.into_iter().map(|x| rayleigh(h, x)).collect());
    }
    let mut hq = DMatrix::<T>::zeros(n, k);
    for c in 0..k {
        let mut y = vec![T::zero(); n];
        h.mul_into(q.column(c).into_owned().as_slice(), &mut y);
        hq.set_column(c, &DVector::from_vec(y));
    }
    let g = q.ad_mul(&hq);
    let gc = DMatrix::from_fn(k, k, |i, j| {
        let z = g[(i, j)];
        Complex64::new(z.real(), z.imaginary())
    });
    let eig = eigh(&gc, Vectors::Compute)?;
    let y = eig
        .vectors
        .ok_or_else(|| breakdown("no Rayleigh-Ritz vectors"))?;
    let yt = DMatrix::from_fn(k, k, |i, j| T::from_c64(y[(i, j)]));
    let x_new = &q * &yt;
    let new: Vec<Found<T>> = (0..k)
        .map(|c| rayleigh(h, x_new.column(c).into_owned()))
        .collect();
    // keep whichever block has the smaller worst residual: the step can lose accuracy when an
    // eigenvalue sits almost on sigma (its huge 1/(lambda - sigma) amplifies rounding)
    let worst =
        |v: &[Found<T>]| {
            v.iter().map(|f| f.residual).fold(0.0, |a: f64, r| {
                if r.is_nan() {
                    f64::INFINITY
                } else {
                    a.max(r)
                }
            })
        };
    let old: Vec<Found<T>> = xs.into_iter().map(|x| rayleigh(h, x)).collect();
    Ok(if worst(&old) < worst(&new) { old } else { new })
}

/// Rayleigh quotient and explicit residual of a unit vector in H.
fn rayleigh<T: Scalar>(h: &BandedHermitian, x: DVector<T>) -> Found<T> {
    let n = x.len();
    let mut hx = vec![T::zero(); n];
    h.mul_into(x.as_slice(), &mut hx);
    let hx = DVector::from_vec(hx);
    let value = x.dotc(&hx).real();
    let residual = (hx - &x * T::from_real(value)).norm();
    Found {
        round: 0,
        value,
        vector: x,
        residual,
    }
}
