//! Separating cutoff artefacts from genuine levels inside a degenerate cluster.
//!
//! With one cutoff N for every component, the truncated operator has spurious eigenvalues
//! (artefacts) that can coincide with genuine ones: the unpaired top state of a massless 2D
//! Dirac model sits at zero like the genuine n = 0 level. Inside such a cluster the eigen-solver
//! returns arbitrary orthonormal mixtures, and every mixture leaks past the cutoff, so both
//! levels look unconverged.
//!
//! # Method
//! Let V (s x k) hold the cluster's eigenvectors and L the map from a vector of the truncated
//! space to the part of H v beyond orbital N-1 (the states (m, alpha) with m >= N). The Gram
//! matrix G = (L V)^H (L V) is k x k Hermitian; with G = U diag(g) U^H the rotated vectors
//! V U have leakage sqrt(g_j), the smallest possible leakage for the first, the next smallest
//! orthogonal to it, and so on (Courant-Fischer). Each rotated vector gets its Rayleigh quotient
//! u_j^H diag(lambda) u_j as energy; its bounds are then recomputed on the rotated vector by the
//! caller, so a rotation can never make a bound dishonest: at worst the in-space residual grows
//! by the cluster's width.
//!
//! # Complexity
//! O(k s band d + k^2 (s + band d) + k^3) per cluster of k vectors of length s.

use crate::hamiltonian::LadderHamiltonian;
use nalgebra::DMatrix;
use num_complex::Complex64;
use std::collections::BTreeMap;

/// Clusters are never narrower than this many units of roundoff times the largest |eigenvalue|
/// of the sector (eigenvalues that are equal in exact arithmetic come out this close).
const ROUNDOFF_WIDTH: f64 = 1.0e3;

/// Widest relative cluster: genuine levels closer than this (relative to the energy scale)
/// are still rotated, so the rotation never blurs levels that a loose tolerance would merge.
const MAX_RELATIVE_WIDTH: f64 = 1.0e-8;

/// The part of H v that lies beyond the cutoff: the components (m, alpha), m >= `cutoff`,
/// of H applied to the vector `v` over `states`, as a sorted map.
///
/// # Formula
/// (L v)_(m alpha) = sum_(n < N, beta) H_(m alpha, n beta) v_(n beta), m >= N; its norm is
/// [`crate::hamiltonian::leakage`].
pub fn outside_part(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    v: &[Complex64],
) -> BTreeMap<(usize, usize), Complex64> {
    let mut out: BTreeMap<(usize, usize), Complex64> = BTreeMap::new();
    crate::hamiltonian::for_each_outside(h, cutoff, states, v, |key, val| {
        *out.entry(key).or_default() += val;
    });
    out
}

/// Absolute width below which two eigenvalues of one sector count as one cluster.
///
/// # Formula
/// width = max(min(tolerance, 1e-8) x scale, 1e3 eps max|lambda|), where scale is the median
/// of the non-zero |lambda| among the 2d+1 eigenvalues closest to zero (the same typical
/// spacing as [`crate::levels::energy_scale`]).
pub fn cluster_width(values: &[f64], relative_tolerance: f64, dim: usize) -> f64 {
    let largest = values.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    // small sectors (the split paths: millions of them) use a stack buffer
    let mut small = [0.0f64; 32];
    let mut large = Vec::new();
    let mags: &mut [f64] = if values.len() <= small.len() {
        &mut small[..values.len()]
    } else {
        large.resize(values.len(), 0.0);
        &mut large
    };
    for (m, x) in mags.iter_mut().zip(values) {
        *m = x.abs();
    }
    let scale = crate::levels::median_of_smallest_nonzero(mags, 2 * dim + 1).unwrap_or(largest);
    (relative_tolerance.min(MAX_RELATIVE_WIDTH) * scale)
        .max(ROUNDOFF_WIDTH * f64::EPSILON * largest)
}

/// Runs of consecutive (ascending) eigenvalues whose neighbours differ by at most `width`;
/// only runs of two or more are returned, as index ranges.
pub fn clusters(values: &[f64], width: f64) -> Vec<std::ops::Range<usize>> {
    let mut out = Vec::new();
    let mut start = 0;
    for i in 1..=values.len() {
        if i == values.len() || (values[i] - values[i - 1]).abs() > width {
            if i - start >= 2 {
                out.push(start..i);
            }
            start = i;
        }
    }
    out
}

/// Rotate every cluster of eigenvectors so that the leakage past the cutoff is concentrated
/// in as few vectors as possible (see the module docs), replacing the eigenvalues of the
/// cluster by the Rayleigh quotients of the rotated vectors.
///
/// `values` must be ascending and `vectors` hold the matching eigenvectors as columns.
///
/// # Complexity
/// See the module docs; nothing is done for a sector without clusters.
pub fn separate_leaking(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    values: &mut [f64],
    vectors: &mut DMatrix<Complex64>,
    relative_tolerance: f64,
) {
    // only states within the band of the cutoff can couple past it: a sector without such a
    // state leaks nothing, whatever the rotation (the common case: deep sectors of a split solve)
    if states.iter().all(|&(n, _)| n + h.band < cutoff) {
        return;
    }
    let width = cluster_width(values, relative_tolerance, h.dim);
    for range in clusters(values, width) {
        let k = range.len();
        let outs: Vec<BTreeMap<(usize, usize), Complex64>> = range
            .clone()
            .map(|c| {
                let v: Vec<Complex64> = vectors.column(c).iter().copied().collect();
                outside_part(h, cutoff, states, &v)
            })
            .collect();
        if outs.iter().all(|o| o.is_empty()) {
            continue;
        }
        let gram = DMatrix::from_fn(k, k, |i, j| {
            outs[i]
                .iter()
                .filter_map(|(key, zi)| outs[j].get(key).map(|zj| zi.conj() * zj))
                .sum::<Complex64>()
        });
        let eig = nalgebra::SymmetricEigen::new(gram);
        let mut order: Vec<usize> = (0..k).collect();
        order.sort_by(|&a, &b| eig.eigenvalues[a].total_cmp(&eig.eigenvalues[b]));
        let u = DMatrix::from_fn(k, k, |r, c| eig.eigenvectors[(r, order[c])]);
        let block = vectors.columns(range.start, k).into_owned();
        let rotated = &block * &u;
        let lam: Vec<f64> = values[range.clone()].to_vec();
        for c in 0..k {
            let rq: f64 = (0..k).map(|r| u[(r, c)].norm_sqr() * lam[r]).sum();
            values[range.start + c] = rq;
            vectors.set_column(range.start + c, &rotated.column(c));
        }
    }
}
