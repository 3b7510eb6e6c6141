//! Spectrum slicing: every eigenvalue of a wide window of a banded Hermitian matrix from
//! several shifts solved in parallel, each slice's count certified by inertia counts.
//!
//! # Method
//! 1. The window [lo, hi) holds N = nu(hi) - nu(lo) eigenvalues, nu(x) the number below x by
//!    Sylvester's law of inertia ([`BandedHermitian::inertia`]).
//! 2. A slice holding more than [`SLICE_LEVELS`] of them is halved at its midpoint, until
//!    every slice holds at most that many (one inertia count per cut).
//! 3. Each inner border x is certified: nu(x - delta) = nu(x + delta), delta = 1e-9 ||H||
//!    (no eigenvalue within delta of x); otherwise x is moved by a sixteenth of the slice
//!    width at a time (both ways) until it is. The computed eigenvalues (accurate to their
//!    residuals, far below delta) then fall on the same side of every border as the true
//!    ones, so a level is never counted in two slices or lost between them, and a degenerate
//!    level is never split across a border.
//! 4. The slices are solved in parallel (rayon), each by one shift at its centre
//!    ([`super::window`]); a slice must return exactly its certified count
//!    nu(x_(s+1)) - nu(x_s), else the solve fails with the counts in the message.
//!
//! # Complexity
//! One O(n b^2) inertia count per cut and two per certification; per slice one O(n b^2)
//! factorisation and a Lanczos basis for its own at most [`SLICE_LEVELS`] levels, so the
//! basis work grows linearly with the number of levels rather than quadratically. Memory:
//! one factorisation and basis per slice being solved at once (one per rayon thread).
//!
//! # References
//! T. Ericsson and A. Ruhe, "The spectral transformation Lanczos method", Math. Comp. 35,
//! 1251 (1980) (shifts across an interval with inertia checks); C. Campos and J. E. Roman,
//! "Strategies for spectrum slicing based on restarted Lanczos methods", Numer. Algorithms
//! 60, 279 (2012).

use super::banded::BandedHermitian;
use super::window::{window_by_nearest, WindowEigen};
use crate::error::{Error, Result};
use nalgebra::DMatrix;
use num_complex::Complex64;
use rayon::prelude::*;

/// Most levels one slice holds: a window with more is sliced. About the count at which one
/// shift's Lanczos basis (1.5 times the count) costs more than a second factorisation.
pub const SLICE_LEVELS: usize = 24;

/// Relative distance (of ||H||) that no eigenvalue may come to an inner border.
const BORDER_GAP: f64 = 1e-9;

/// A slice [lo, hi) with its certified eigenvalue count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slice {
    /// Lower border (included).
    pub lo: f64,
    /// Upper border (excluded).
    pub hi: f64,
    /// Eigenvalues in [lo, hi), from the inertia counts at the borders.
    pub count: usize,
}

/// The slices of [lo, hi): at most [`SLICE_LEVELS`] eigenvalues each, inner borders certified
/// free of eigenvalues within 1e-9 ||H|| (see the module documentation). `below_lo` and
/// `below_hi` are the inertia counts at the window's own edges.
///
/// # Errors
/// [`Error::BadNumber`] for non-finite or empty bounds; [`Error::NotConverged`] when no
/// border free of eigenvalues can be found near a cut (a cluster wider than the slice).
///
/// # Complexity
/// O(n b^2) per inertia count: about 3 per slice.
///
/// # Examples
/// ```
/// use ladderfan::numeric::{banded::BandedHermitian, slicing::slices};
/// use num_complex::Complex64;
/// // diagonal 0, 1, ..., 99: [0, 100) holds 100 levels, sliced into at most 24 each
/// let h = BandedHermitian::from_fn(100, 0, |i, _| Complex64::new(i as f64, 0.0)).unwrap();
/// let s = slices(&h, -0.5, 99.5).unwrap();
/// assert_eq!(s.iter().map(|x| x.count).sum::<usize>(), 100);
/// assert!(s.iter().all(|x| x.count <= 24));
/// ```
pub fn slices(h: &BandedHermitian, lo: f64, hi: f64) -> Result<Vec<Slice>> {
    if !(lo.is_finite() && hi.is_finite() && lo < hi) {
        return Err(Error::BadNumber {
            name: "slicing window width hi - lo".into(),
            value: hi - lo,
            fix: format!("give finite bounds with lo < hi (got [{lo}, {hi}))"),
        });
    }
    let delta = BORDER_GAP * h.norm_bound().max(f64::MIN_POSITIVE);
    let below_lo = h.inertia(lo)?.below;
    let whole = Slice {
        lo,
        hi,
        count: h.inertia(hi)?.below.saturating_sub(below_lo),
    };
    // (slice, eigenvalues below its lower border)
    let mut todo = vec![(whole, below_lo)];
    let mut done: Vec<Slice> = Vec::new();
    while let Some((s, below)) = todo.pop() {
        if s.count <= SLICE_LEVELS {
            done.push(s);
            continue;
        }
        let (x, below_x) = certified_cut(h, s, delta)?;
        // inertia counts are monotone in exact arithmetic; clamp against rounding
        let first = below_x.saturating_sub(below).min(s.count);
        todo.push((
            Slice {
                lo: x,
                hi: s.hi,
                count: s.count - first,
            },
            below_x,
        ));
        todo.push((
            Slice {
                lo: s.lo,
                hi: x,
                count: first,
            },
            below,
        ));
    }
    done.sort_by(|a, b| a.lo.total_cmp(&b.lo));
    Ok(done)
}

/// A cut near the middle of `s` with no eigenvalue within `delta`, and the count below it.
fn certified_cut(h: &BandedHermitian, s: Slice, delta: f64) -> Result<(f64, usize)> {
    let mid = 0.5 * s.lo + 0.5 * s.hi;
    let step = (s.hi - s.lo) / 16.0;
    for t in [0.0, 1.0, -1.0, 2.0, -2.0, 3.0, -3.0, 4.0, -4.0] {
        let x = mid + t * step;
        if x - delta <= s.lo || x + delta >= s.hi {
            continue;
        }
        let below = h.inertia(x - delta)?.below;
        if h.inertia(x + delta)?.below == below {
            return Ok((x, below));
        }
    }
    Err(Error::NotConverged {
        tolerance: BORDER_GAP,
        detail: format!(
            "no border free of eigenvalues found in [{}, {}) ({} levels) to slice the window; \
             the levels cluster there: narrow the window",
            s.lo, s.hi, s.count
        ),
    })
}

/// All eigenvalues in [lo, hi) (`inside` of them by the inertia counts) by slicing: the
/// slices of [`slices`] solved in parallel, each checked against its certified count, then
/// joined in ascending order. The `shift` of the result is that of the slice holding the
/// most levels.
///
/// # Errors
/// As [`slices`]; [`Error::NotConverged`] when a slice returns another number of levels than
/// its certified count, or the slices together not `inside`.
pub(super) fn sliced(h: &BandedHermitian, lo: f64, hi: f64, inside: usize) -> Result<WindowEigen> {
    let parts = slices(h, lo, hi)?;
    let total: usize = parts.iter().map(|s| s.count).sum();
    if total != inside {
        return Err(count_error(lo, hi, total, inside));
    }
    let solved: Vec<Result<WindowEigen>> = parts
        .par_iter()
        .map(|s| {
            if s.count == 0 {
                return Ok(WindowEigen {
                    values: Vec::new(),
                    vectors: DMatrix::zeros(h.size(), 0),
                    residuals: Vec::new(),
                    shift: 0.5 * (s.lo + s.hi),
                });
            }
            let w = window_by_nearest(h, s.lo, s.hi, s.count)?;
            if w.values.len() != s.count {
                return Err(count_error(s.lo, s.hi, w.values.len(), s.count));
            }
            Ok(w)
        })
        .collect();
    let solved = solved.into_iter().collect::<Result<Vec<_>>>()?;
    let n = h.size();
    let mut vectors = DMatrix::<Complex64>::zeros(n, inside);
    let (mut values, mut residuals) = (Vec::with_capacity(inside), Vec::with_capacity(inside));
    let mut shift = 0.5 * (lo + hi);
    let mut most = 0;
    for w in &solved {
        let c0 = values.len();
        vectors
            .columns_mut(c0, w.values.len())
            .copy_from(&w.vectors);
        values.extend_from_slice(&w.values);
        residuals.extend_from_slice(&w.residuals);
        if w.values.len() > most {
            most = w.values.len();
            shift = w.shift;
        }
    }
    Ok(WindowEigen {
        values,
        vectors,
        residuals,
        shift,
    })
}

fn count_error(lo: f64, hi: f64, got: usize, want: usize) -> Error {
    Error::NotConverged {
        tolerance: BORDER_GAP,
        detail: format!(
            "the slice [{lo}, {hi}) gave {got} levels but its inertia counts certify {want}; \
             move the window edges slightly"
        ),
    }
}
