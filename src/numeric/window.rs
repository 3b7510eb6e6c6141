//! Eigenvalues of a huge banded Hermitian matrix near a target energy or inside a window,
//! without forming a dense matrix.
//!
//! # Method
//! Shift-invert Krylov–Schur (thick-restart) Lanczos with full reorthogonalisation:
//! 1. factor H - sigma I once, in real arithmetic when H is real: by the two-sided
//!    L D L^H of [`super::ldl`] (top half downwards and bottom half upwards on two threads,
//!    n (b + 1) numbers) when its growth is at most [`super::ldl::GROWTH_MAX`], else by
//!    P^T L U with partial pivoting ([`BandedHermitian::lu`], n (3b + 1) numbers);
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
//!    ||H|| is large there), in spare columns of the basis when it has room for a second
//!    block (then the better block is kept), else in place;
//!    if an eigenvalue sits almost exactly on the target, the shift is moved off it by a few
//!    per cent of the search radius and two more pairs are computed;
//! 4. completeness: Sylvester inertia counts ([`BandedHermitian::inertia`]) around the target
//!    tell how many eigenvalues lie nearer than the farthest one found; if some are missing
//!    (a degenerate pair, which a single Krylov sequence sees only once), the found vectors are
//!    locked and the search is repeated in their orthogonal complement.
//!
//! Steps 1 and 4 are here, the refinement in H of step 3 in the private module
//! `numeric::ritz`; the Krylov–Schur iteration of steps 2-3 is in the private module
//! `numeric::lanczos`.
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
//! reorthogonalisation (both spread over two threads: the solve by its two halves, the
//! Gram–Schmidt passes over row chunks); in all O(n b^2 + (r + 1) n m^2) for r restarts, plus two O(n b^2)
//! inertia counts. The basis has m = k + max(k/2, 12) vectors for k wanted (a smaller basis
//! than the usual 2k: shift-invert separates the wanted eigenvalues well, and each vector
//! less saves n numbers and one pass over n numbers per step). For a real matrix everything
//! is real (8 bytes a number). Memory, in numbers of the matrix's type: n (b + 1) for H (the
//! caller's), n (3b + 1) for the LU factors (one buffer, also during the factorisation), n
//! (m + 1) for the basis, which also holds the refinement block and becomes the returned
//! eigenvectors (no copy), and three work vectors; with the L D L^H the factors take n (b + 1)
//! numbers instead of n (3b + 1). Where the time goes (perf, 4N = 4e5
//! Dirac matrix, b = 7, k = 20): the reorthogonalisation passes over the basis and the
//! triangular solves, both bound by memory bandwidth; the kernels read each basis column
//! once per pass in cache-sized row blocks.
//!
//! A wide window ([`in_window`] with more than [`super::slicing::SLICE_LEVELS`] levels) is
//! cut into slices with certified counts, solved in parallel ([`super::slicing`]).
//!
//! # References
//! G. W. Stewart, "A Krylov–Schur algorithm for large eigenproblems", SIAM J. Matrix Anal.
//! Appl. 23, 601 (2001); K. Wu and H. Simon, "Thick-restart Lanczos method for large symmetric
//! eigenvalue problems", SIAM J. Matrix Anal. Appl. 22, 602 (2000); T. Ericsson and A. Ruhe,
//! "The spectral transformation Lanczos method", Math. Comp. 35, 1251 (1980).

use super::banded::{BandedHermitian, Scalar};
pub use super::joint::nearest_joint;
use super::lanczos::{krylov_schur, Krylov, SplitMix, TOL};
use super::ldl::ShiftInverse;
use super::ritz::refine;
use crate::error::{Error, Result};
use nalgebra::DMatrix;
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

/// Eigenpairs in the matrix's own arithmetic: `T = f64` (real vectors, half the memory of
/// complex ones) for a real matrix, `Complex64` otherwise. Fields as in [`WindowEigen`].
#[derive(Debug, Clone)]
pub struct WindowPairs<T: Scalar> {
    /// Eigenvalues, ascending.
    pub values: Vec<f64>,
    /// Orthonormal eigenvectors as columns (n x count), column i for `values[i]`.
    pub vectors: DMatrix<T>,
    /// Explicit residual norms ||H x_i - lambda_i x_i|| for unit x_i.
    pub residuals: Vec<f64>,
    /// The shift sigma actually factored.
    pub shift: f64,
    /// What was done: the factorisation used, operator applications and restarts.
    pub work: WindowWork,
}

/// The work of one window solve, for timing probes and reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct WindowWork {
    /// Whether the last shift was factored by the two-sided L D L^H
    /// ([`super::ldl::PartitionedLdl`]) rather than a pivoted LU.
    pub ldl: bool,
    /// Whether the last shift was factored by the two-sided pivoted LU
    /// ([`super::plu::PartitionedLu`]) rather than the serial one (false with `ldl`).
    pub split_lu: bool,
    /// Applications of (H - sigma I)^(-1) in the Lanczos iterations (one per step), over all
    /// shifts and locking rounds; the refinement adds one per returned pair.
    pub lanczos_steps: usize,
    /// Krylov–Schur restarts, over all shifts and locking rounds.
    pub restarts: usize,
}

/// The result of [`nearest_pairs`]: real pairs for a real matrix, complex ones otherwise.
#[derive(Debug, Clone)]
pub enum WindowSolution {
    /// The matrix is real symmetric: real arithmetic throughout, real eigenvectors.
    Real(WindowPairs<f64>),
    /// The matrix has a non-zero imaginary part somewhere.
    Complex(WindowPairs<Complex64>),
}

impl WindowSolution {
    /// Eigenvalues, ascending.
    pub fn values(&self) -> &[f64] {
        match self {
            WindowSolution::Real(p) => &p.values,
            WindowSolution::Complex(p) => &p.values,
        }
    }

    /// Explicit residual norms, one per eigenvalue.
    pub fn residuals(&self) -> &[f64] {
        match self {
            WindowSolution::Real(p) => &p.residuals,
            WindowSolution::Complex(p) => &p.residuals,
        }
    }

    /// The work done (factorisation, Lanczos steps, restarts).
    pub fn work(&self) -> WindowWork {
        match self {
            WindowSolution::Real(p) => p.work,
            WindowSolution::Complex(p) => p.work,
        }
    }

    /// The same pairs with complex eigenvectors (a copy of 16 bytes a number for real ones).
    pub fn into_complex(self) -> WindowEigen {
        match self {
            WindowSolution::Real(p) => WindowEigen {
                vectors: p.vectors.map(|x| Complex64::new(x, 0.0)),
                values: p.values,
                residuals: p.residuals,
                shift: p.shift,
            },
            WindowSolution::Complex(p) => WindowEigen {
                vectors: p.vectors,
                values: p.values,
                residuals: p.residuals,
                shift: p.shift,
            },
        }
    }
}

/// Locking rounds allowed for missing (degenerate) eigenvalues.
const MAX_ROUNDS: usize = 4;

/// The `count` eigenvalues of `h` nearest `target` (ties broken arbitrarily), ascending, with
/// eigenvectors and residual norms. See the module documentation for the method; the
/// eigenvectors are complex here, [`nearest_pairs`] keeps real ones for a real matrix.
///
/// # Errors
/// [`Error::BadNumber`] for count = 0, count > n or a non-finite target;
/// [`Error::NotConverged`] when the Lanczos iteration stalls (report the target and count);
/// [`Error::Numerical`] when the factorisation fails at every nearby shift.
///
/// # Complexity
/// O(n b^2) for the factorisation and the two inertia counts, O(n m^2) for the Lanczos basis
/// work (m = count + max(count / 2, 12)); memory O(n (b + m)).
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
    nearest_pairs(h, target, count).map(WindowSolution::into_complex)
}

/// As [`nearest`], in the matrix's own arithmetic: real eigenvectors for a real matrix. The
/// returned vectors occupy the first columns of the Lanczos basis buffer itself, so the
/// peak memory is the band matrix, its LU factors (8 n (3b + 1) bytes real) and the basis of
/// m + 1 vectors, m = count + max(count / 2, 12), with no copy for the result.
///
/// # Errors
/// As [`nearest`].
///
/// # Examples
/// ```
/// use ladderfan::numeric::{banded::BandedHermitian, window::{nearest_pairs, WindowSolution}};
/// use num_complex::Complex64;
/// let h = BandedHermitian::from_fn(100, 1, |i, j| {
///     Complex64::new(if i == j { 2.0 } else { -1.0 }, 0.0)
/// }).unwrap();
/// let WindowSolution::Real(p) = nearest_pairs(&h, 0.0, 2).unwrap() else { panic!() };
/// let exact = 2.0 - 2.0 * (std::f64::consts::PI / 101.0).cos();
/// assert!((p.values[0] - exact).abs() < 1e-12 && p.vectors.ncols() == 2);
/// ```
pub fn nearest_pairs(h: &BandedHermitian, target: f64, count: usize) -> Result<WindowSolution> {
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
    nearest_normed(h, target, count, h.norm_bound().max(f64::MIN_POSITIVE))
}

/// [`nearest_pairs`] with the norm bound of `h` given (valid arguments).
pub(super) fn nearest_normed(
    h: &BandedHermitian,
    target: f64,
    count: usize,
    norm: f64,
) -> Result<WindowSolution> {
    if h.is_real() {
        nearest_t::<f64>(h, target, count, norm).map(WindowSolution::Real)
    } else {
        nearest_t::<Complex64>(h, target, count, norm).map(WindowSolution::Complex)
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
) -> Result<WindowPairs<T>> {
    let mut sigma = target;
    let mut extra = 0;
    let mut offsets = SHIFT_OFFSETS.iter();
    let mut work = WindowWork::default();
    loop {
        let (lu, s) = factor_near::<T>(h, sigma, norm)?;
        work.ldl = matches!(lu, ShiftInverse::Ldl(_));
        work.split_lu = matches!(lu, ShiftInverse::SplitLu(_));
        match search(h, (&lu, s), target, count, extra, norm, &mut work)? {
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
enum Search<T: Scalar> {
    Done(WindowPairs<T>),
    ShiftTooClose { radius: f64 },
}

/// All eigenvalues of `h` in [lo, hi), ascending, with eigenvectors and residual norms; an
/// interval holding no eigenvalue gives an empty result. The count is fixed first by two
/// inertia counts; a window of more than [`SLICE_LEVELS`](super::slicing::SLICE_LEVELS)
/// levels is cut into slices solved in parallel ([`super::slicing`]), a smaller one is solved
/// by [`nearest`] at its centre.
///
/// # Errors
/// [`Error::BadNumber`] when lo or hi is not finite, lo >= hi (an empty window), max_count = 0,
/// or the window holds more than `max_count` eigenvalues (narrow it or raise max_count);
/// otherwise as [`nearest`].
///
/// # Complexity
/// Two extra O(n b^2) inertia counts on top of [`nearest`] with count = eigenvalues inside;
/// sliced: per slice one factorisation and a basis for its own levels only.
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
    if inside > super::slicing::SLICE_LEVELS {
        return super::slicing::sliced(h, lo, hi, inside);
    }
    window_by_nearest(h, lo, hi, inside)
}

/// The `inside` eigenvalues in [lo, hi) from one shift at the centre: the `inside` nearest the
/// centre are the ones in the window, up to ties at the edges, so a few more are asked for and
/// those inside kept.
pub(super) fn window_by_nearest(
    h: &BandedHermitian,
    lo: f64,
    hi: f64,
    inside: usize,
) -> Result<WindowEigen> {
    let all = nearest(h, 0.5 * lo + 0.5 * hi, (inside + 2).min(h.size()))?;
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
) -> Result<(ShiftInverse<T>, f64)> {
    let mut last = None;
    for attempt in 0..4 {
        let sigma = target + (attempt as f64) * 1e-9 * norm;
        match ShiftInverse::<T>::factor(h, sigma) {
            Ok(lu) => return Ok((lu, sigma)),
            Err(e) => last = Some(e),
        }
    }
    Err(last.unwrap_or_else(|| Error::Numerical {
        stage: "banded LU".into(),
        detail: "no shift could be factored".into(),
    }))
}

/// One eigenpair found by a Krylov–Schur round: column `col` of that round's block, in H.
struct Found {
    round: usize,
    col: usize,
    value: f64,
    residual: f64,
}

/// Column `c` of a column-major block.
fn col<T: Scalar>(m: &DMatrix<T>, c: usize) -> &[T] {
    let n = m.nrows();
    &m.as_slice()[c * n..(c + 1) * n]
}

fn search<T: Scalar>(
    h: &BandedHermitian,
    (lu, sigma): (&ShiftInverse<T>, f64),
    target: f64,
    count: usize,
    extra: usize,
    norm: f64,
    work: &mut WindowWork,
) -> Result<Search<T>> {
    let n = h.size();
    let mut rng = SplitMix(0x1a2b_3c4d_5e6f_7081);
    let mut blocks: Vec<DMatrix<T>> = Vec::new();
    let mut found: Vec<Found> = Vec::new();
    let mut want = (count + extra).min(n);
    for round in 0..MAX_ROUNDS {
        let locked: Vec<&[T]> = found.iter().map(|f| col(&blocks[f.round], f.col)).collect();
        let room = n - locked.len();
        if room == 0 {
            break;
        }
        let (basis, k, thetas) = match krylov_schur(lu, n, want.min(room), &locked, &mut rng)? {
            Krylov::Done {
                basis,
                count,
                thetas,
                steps,
                restarts,
            } => {
                work.lanczos_steps += steps;
                work.restarts += restarts;
                (basis, count, thetas)
            }
            Krylov::ShiftTooClose { radius } => return Ok(Search::ShiftTooClose { radius }),
        };
        // the Lanczos eigenvalue estimates sigma + 1/theta, the guesses of their Rayleigh
        // quotients in H
        let guess: Vec<f64> = thetas.iter().map(|t| sigma + 1.0 / t).collect();
        let (block, values, residuals) = refine(h, lu, basis, k, &guess, &locked)?;
        blocks.push(block);
        for c in 0..k {
            found.push(Found {
                round,
                col: c,
                value: values[c],
                residual: residuals[c],
            });
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
    let vectors = gather(blocks, &found);
    Ok(Search::Done(WindowPairs {
        work: *work,
        values: found.iter().map(|f| f.value).collect(),
        residuals: found.iter().map(|f| f.residual).collect(),
        vectors,
        shift: sigma,
    }))
}

/// The found vectors as the columns of one n x k matrix, in the order of `found`. With one
/// round (the usual case) the columns are permuted inside that round's buffer and the buffer
/// is cut to k columns (no copy of the vectors).
fn gather<T: Scalar>(mut blocks: Vec<DMatrix<T>>, found: &[Found]) -> DMatrix<T> {
    let k = found.len();
    if blocks.len() == 1 {
        let mut b = blocks.pop().unwrap_or_else(|| DMatrix::zeros(0, 0));
        let n = b.nrows();
        // apply the permutation by swaps: `at[p]` is the original column now at p
        let mut at: Vec<usize> = (0..b.ncols()).collect();
        let mut pos: Vec<usize> = (0..b.ncols()).collect();
        for (c, f) in found.iter().enumerate() {
            let p = pos[f.col];
            if p != c {
                b.swap_columns(c, p);
                let oc = at[c];
                at.swap(c, p);
                pos[f.col] = c;
                pos[oc] = p;
            }
        }
        let mut data: Vec<T> = b.data.into();
        data.truncate(n * k);
        data.shrink_to_fit();
        return DMatrix::from_vec(n, k, data);
    }
    let n = blocks.first().map_or(0, |b| b.nrows());
    let mut out = DMatrix::<T>::zeros(n, k);
    for (c, f) in found.iter().enumerate() {
        out.as_mut_slice()[c * n..(c + 1) * n].copy_from_slice(col(&blocks[f.round], f.col));
    }
    out
}

/// Distance from target of the farthest found value.
fn radius(found: &[Found], target: f64) -> f64 {
    found
        .iter()
        .map(|f| (f.value - target).abs())
        .fold(0.0, f64::max)
}

/// How many eigenvalues certainly lie nearer to `target` than the farthest found one but were
/// not found (inertia count minus found ones).
fn missing_count(h: &BandedHermitian, found: &[Found], target: f64, norm: f64) -> Result<usize> {
    let r = radius(found, target);
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

impl<T: Scalar> WindowPairs<T> {
    /// The pairs with |value - target| <= radius (a contiguous run of the ascending values).
    pub(super) fn keep_within(self, target: f64, radius: f64) -> Self {
        let lo = self.values.partition_point(|&v| v < target - radius);
        let hi = self.values.partition_point(|&v| v <= target + radius);
        if lo == 0 && hi == self.values.len() {
            return self;
        }
        WindowPairs {
            vectors: self.vectors.columns(lo, hi - lo).into_owned(),
            values: self.values[lo..hi].to_vec(),
            residuals: self.residuals[lo..hi].to_vec(),
            ..self
        }
    }
}

impl WindowSolution {
    /// The pairs with |value - target| <= radius.
    pub(super) fn keep_within(self, target: f64, radius: f64) -> Self {
        match self {
            WindowSolution::Real(p) => WindowSolution::Real(p.keep_within(target, radius)),
            WindowSolution::Complex(p) => WindowSolution::Complex(p.keep_within(target, radius)),
        }
    }
}
