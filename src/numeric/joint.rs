//! The nearest eigenvalues of a Hamiltonian split into several large symmetry sectors: each
//! sector is solved by the window solver ([`super::window::nearest_pairs`]) for about its
//! share of the count, and the union is certified by inertia counts, so that no sector is
//! asked for the whole count (see [`nearest_joint`]).

use super::banded::BandedHermitian;
use super::window::{nearest_normed, WindowPairs, WindowSolution, WindowWork};
use crate::error::{Error, Result};
use nalgebra::DMatrix;

/// Eigenpairs of several Hermitian band matrices (the symmetry sectors of one Hamiltonian)
/// whose union holds the `count` eigenvalues nearest `target` over all of them, with each
/// sector asked only for about its share instead of `count`.
///
/// # Method
/// 1. Shares: `count` is spread over the parts by water-filling on their sizes (a part smaller
///    than its equal share gives all of its eigenvalues, the rest is shared by the others);
///    each part is asked for its share q plus ceil(sqrt(q)) + 1 (about one standard deviation
///    of a count with Poisson statistics, common practice for a guessed density) and solved by
///    [`super::window::nearest_pairs`], the parts in parallel.
/// 2. Radius: R is the distance from `target` of the `count`-th nearest eigenvalue found in
///    all parts, so at least `count` eigenvalues lie within R.
/// 3. Certification: a part whose farthest found eigenvalue is nearer than R (and which has
///    eigenvalues left) may hold more within R; two inertia counts
///    ([`BandedHermitian::inertia`]) at target -+ (R + delta) (delta covers the residuals and
///    rounding) give how many it holds c, and a part holding more than it found (k) is solved
///    again for min(c, 2k); then R is taken again from the union (it can only shrink) and
///    step 3 repeated until no part is short. Then every part holds all its eigenvalues
///    within R, and the `count` nearest of the union are the `count` nearest overall (ties at
///    R broken arbitrarily).
/// 4. Each part keeps only its eigenvalues within R + delta (a contiguous run).
///
/// `build(i)` makes part i, of size `sizes[i]`; it is called once per non-empty part and the
/// matrices are kept until every part is certified. The result has one solution per part, in order (an
/// empty one for a part of size 0).
///
/// # Errors
/// [`Error::BadNumber`] for count = 0, more eigenvalues than the parts hold, a non-finite
/// target or a part whose matrix size differs from `sizes`; otherwise as [`super::window::nearest`] and
/// `build`.
///
/// # Complexity
/// Per part one factorisation O(n_i b_i^2) and Lanczos on a basis of about q_i + max(q_i / 2,
/// 12) vectors instead of `count` + max(`count` / 2, 12); two O(n_i b_i^2) inertia counts per
/// part nearer than R and further solves (each for at most twice as many) only for a part
/// with more than its share near the target. Memory: every part's band matrix and found
/// pairs until the end, and the factors and Lanczos basis of the parts being solved at once
/// (one per rayon thread), each as in [`super::window::nearest_pairs`] for its share.
pub fn nearest_joint<F>(
    sizes: &[usize],
    build: F,
    target: f64,
    count: usize,
) -> Result<Vec<WindowSolution>>
where
    F: Fn(usize) -> Result<BandedHermitian> + Sync,
{
    use rayon::prelude::*;
    let total: usize = sizes.iter().sum();
    if !target.is_finite() {
        return Err(Error::BadNumber {
            name: "target energy".into(),
            value: target,
            fix: "give a finite energy".into(),
        });
    }
    if count == 0 || count > total {
        return Err(Error::BadNumber {
            name: "number of eigenvalues wanted".into(),
            value: count as f64,
            fix: format!("ask for 1 to {total} eigenvalues (the sizes of all parts)"),
        });
    }
    let asked = shares(sizes, count);
    let solve = |i: usize, k: usize| -> Result<(BandedHermitian, WindowSolution, f64)> {
        let h = build(i)?;
        if h.size() != sizes[i] {
            return Err(Error::BadNumber {
                name: format!("size of part {i}"),
                value: h.size() as f64,
                fix: format!(
                    "build part {i} with the size given in `sizes`: {}",
                    sizes[i]
                ),
            });
        }
        let norm = h.norm_bound().max(f64::MIN_POSITIVE);
        let sol = nearest_normed(&h, target, k, norm)?;
        Ok((h, sol, norm))
    };
    let mut parts: Vec<Option<(BandedHermitian, WindowSolution, f64)>> = (0..sizes.len())
        .into_par_iter()
        .map(|i| (asked[i] > 0).then(|| solve(i, asked[i])).transpose())
        .collect::<Result<_>>()?;
    // the count-th nearest distance over all parts found so far (at least `count` were
    // found: the shares sum to `count` at least, each within its part's size)
    let radius = |parts: &[Option<(BandedHermitian, WindowSolution, f64)>]| {
        let mut dist: Vec<f64> = parts
            .iter()
            .flatten()
            .flat_map(|(_, s, _)| s.values().iter().map(|v| (v - target).abs()))
            .collect();
        dist.sort_by(f64::total_cmp);
        dist[count.min(dist.len()) - 1]
    };
    loop {
        let r = radius(&parts);
        // a part nearer than r with eigenvalues left is counted, and solved again for up to
        // twice as many when it holds more within r than it found
        let changed: Vec<bool> = parts
            .par_iter_mut()
            .map(|part| -> Result<bool> {
                let Some((h, sol, norm)) = part else {
                    return Ok(false);
                };
                let found = sol.values().len();
                let far = sol
                    .values()
                    .iter()
                    .map(|v| (v - target).abs())
                    .fold(0.0, f64::max);
                if found == h.size() || far >= r {
                    return Ok(false);
                }
                let delta = margin(*norm, sol.residuals());
                let within = h
                    .inertia(target + r + delta)?
                    .below
                    .saturating_sub(h.inertia(target - r - delta)?.below);
                if within <= found {
                    return Ok(false);
                }
                let more = within.min(2 * found).min(h.size());
                *sol = nearest_normed(h, target, more, *norm)?;
                Ok(true)
            })
            .collect::<Result<_>>()?;
        if !changed.contains(&true) {
            break;
        }
    }
    // every part holds all its eigenvalues within r, and at least `count` lie within r
    let r = radius(&parts);
    Ok(parts
        .into_iter()
        .map(|part| match part {
            Some((_, sol, norm)) => {
                let delta = margin(norm, sol.residuals());
                sol.keep_within(target, r + delta)
            }
            // an empty part
            None => WindowSolution::Real(WindowPairs {
                values: Vec::new(),
                vectors: DMatrix::zeros(0, 0),
                residuals: Vec::new(),
                shift: target,
                work: WindowWork::default(),
            }),
        })
        .collect())
}

/// The number asked of each part by [`nearest_joint`]: the water-filling share q of `count`
/// (parts in ascending size; a non-empty part takes min(size, max(1, ceil(left / parts
/// left)))) plus ceil(sqrt(q)) + 1, at most its size. The shares sum to at least `count` when the sizes do.
fn shares(sizes: &[usize], count: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..sizes.len()).collect();
    order.sort_by_key(|&i| sizes[i]);
    let mut out = vec![0; sizes.len()];
    let mut left = count;
    for (done, &i) in order.iter().enumerate() {
        // at least one from every non-empty part, so that each part is certified below
        let q = left.div_ceil(sizes.len() - done).max(1).min(sizes[i]);
        left -= q.min(left);
        let extra = if sizes.len() == 1 {
            0
        } else {
            (q as f64).sqrt().ceil() as usize + 1
        };
        out[i] = if q == 0 { 0 } else { (q + extra).min(sizes[i]) };
    }
    out
}

/// Widening of a radius by the uncertainty of the found eigenvalues: sqrt(k) times the worst
/// residual of k pairs plus rounding of the inertia count, 64 eps ||H||.
fn margin(norm: f64, residuals: &[f64]) -> f64 {
    let worst = residuals.iter().copied().fold(0.0, f64::max);
    (residuals.len() as f64).sqrt() * worst + 64.0 * f64::EPSILON * norm
}
