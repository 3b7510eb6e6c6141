//! One-to-one assignment of numerical levels to expected levels, in two phases.
//!
//! 1. [`agreeing`]: the largest set of pairs that agree. Every expected level j is an interval
//!    [e_j - a_j, e_j + a_j] (a_j its allowance: tolerance x energy scale + rounding of the
//!    formula), every numerical level i an interval [x_i - b_i, x_i + b_i] (b_i its error
//!    bound); i and j may pair when the intervals overlap, |x_i - e_j| <= a_j + b_i. A greedy
//!    sweep (expected levels by right end; each takes the free overlapping numerical level with
//!    the smallest right end) finds a maximum-cardinality matching: by the exchange argument
//!    for interval graphs, the expected level with the smallest right end can always take that
//!    partner in some maximum matching. Degenerate expected values thus get as many partners
//!    as there are numerical levels within reach, never more.
//! 2. [`nearest`]: the leftovers of phase 1 are paired for the report (pairs that disagree)
//!    by an order-preserving alignment of the two sorted lists that minimises
//!    sum |x - e| + (reach / 2) x (number of unpaired levels), pairs further apart than `reach`
//!    being forbidden. On a line an optimal L1 assignment never crosses, so the alignment
//!    (dynamic programming) is optimal.
//!
//! # Complexity
//! Phase 1: O((m + k) log(m + k)) time and O(m + k) memory for m expected and k numerical
//! levels (sorting plus an ordered set). Phase 2: O(m' k') time and memory for the m' and k'
//! leftovers; above [`DP_MAX_CELLS`] cells it falls back to a greedy two-pointer sweep,
//! O(m' + k') after sorting, that keeps the pairs non-crossing but may not minimise the sum.

use std::cmp::Ordering;
use std::collections::BTreeSet;

/// A level as an interval: centre `energy`, half-width `halfwidth` (>= 0).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// Centre.
    pub energy: f64,
    /// Half-width.
    pub halfwidth: f64,
}

impl Interval {
    fn left(&self) -> f64 {
        self.energy - self.halfwidth
    }
    fn right(&self) -> f64 {
        self.energy + self.halfwidth
    }
}

/// Largest phase-2 table (leftover expected x leftover numerical) solved exactly.
pub const DP_MAX_CELLS: usize = 4_000_000;

#[derive(Debug, Clone, Copy)]
struct Key(f64, usize);

impl PartialEq for Key {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == Ordering::Equal
    }
}
impl Eq for Key {}
impl PartialOrd for Key {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Key {
    fn cmp(&self, other: &Self) -> Ordering {
        self.0.total_cmp(&other.0).then(self.1.cmp(&other.1))
    }
}

/// Phase 1: a maximum set of pairs (expected index, numerical index) whose intervals overlap.
///
/// # Complexity
/// O((m + k) log(m + k)).
///
/// # Examples
/// ```
/// use ladderfan::verify::matching::{agreeing, Interval};
/// let iv = |e| Interval { energy: e, halfwidth: 0.1 };
/// // a doubly degenerate expected value takes two partners, not three
/// let exp = [iv(1.0), iv(1.0), iv(2.0)];
/// let num = [iv(1.0), iv(1.05), iv(1.02), iv(3.0)];
/// let pairs = agreeing(&exp, &num);
/// assert_eq!(pairs.len(), 2);
/// ```
pub fn agreeing(expected: &[Interval], numerical: &[Interval]) -> Vec<(usize, usize)> {
    let mut by_right: Vec<usize> = (0..expected.len()).collect();
    by_right.sort_by(|&a, &b| expected[a].right().total_cmp(&expected[b].right()));
    let mut by_left: Vec<usize> = (0..numerical.len()).collect();
    by_left.sort_by(|&a, &b| numerical[a].left().total_cmp(&numerical[b].left()));
    let mut open: BTreeSet<Key> = BTreeSet::new();
    let mut next = 0;
    let mut pairs = Vec::new();
    for j in by_right {
        let e = expected[j];
        while next < by_left.len() && numerical[by_left[next]].left() <= e.right() {
            let i = by_left[next];
            open.insert(Key(numerical[i].right(), i));
            next += 1;
        }
        let found = open.range(Key(e.left(), 0)..).next().copied();
        if let Some(k) = found {
            open.remove(&k);
            pairs.push((j, k.1));
        }
    }
    pairs
}

/// Phase 2: order-preserving pairs (index into `expected`, index into `numerical`) of two
/// ascending lists, each pair at most `reach` apart, minimising the sum of distances plus
/// reach/2 per unpaired element.
///
/// # Complexity
/// O(m k) time and memory up to [`DP_MAX_CELLS`] cells, a greedy O(m + k) sweep beyond.
pub fn nearest(expected: &[f64], numerical: &[f64], reach: f64) -> Vec<(usize, usize)> {
    let (m, k) = (expected.len(), numerical.len());
    if m == 0 || k == 0 || reach.is_nan() || reach <= 0.0 {
        return Vec::new();
    }
    if (m + 1).saturating_mul(k + 1) > DP_MAX_CELLS {
        return greedy(expected, numerical, reach);
    }
    let gap = 0.5 * reach;
    let w = k + 1;
    // cost[i][j]: best cost of the first i expected and first j numerical
    let mut cost = vec![0.0f64; (m + 1) * w];
    // 0: pair, 1: skip expected, 2: skip numerical
    let mut step = vec![0u8; (m + 1) * w];
    for i in 0..=m {
        for j in 0..=k {
            if i == 0 && j == 0 {
                continue;
            }
            let mut best = f64::INFINITY;
            let mut how = 0u8;
            if i > 0 && j > 0 {
                let d = (expected[i - 1] - numerical[j - 1]).abs();
                if d <= reach {
                    best = cost[(i - 1) * w + j - 1] + d;
                }
            }
            if i > 0 && cost[(i - 1) * w + j] + gap < best {
                best = cost[(i - 1) * w + j] + gap;
                how = 1;
            }
            if j > 0 && cost[i * w + j - 1] + gap < best {
                best = cost[i * w + j - 1] + gap;
                how = 2;
            }
            cost[i * w + j] = best;
            step[i * w + j] = how;
        }
    }
    let mut pairs = Vec::new();
    let (mut i, mut j) = (m, k);
    while i > 0 || j > 0 {
        match step[i * w + j] {
            0 => {
                pairs.push((i - 1, j - 1));
                i -= 1;
                j -= 1;
            }
            1 => i -= 1,
            _ => j -= 1,
        }
    }
    pairs.reverse();
    pairs
}

fn greedy(expected: &[f64], numerical: &[f64], reach: f64) -> Vec<(usize, usize)> {
    let mut pairs = Vec::new();
    let mut j = 0;
    for (i, &e) in expected.iter().enumerate() {
        while j < numerical.len() && numerical[j] < e - reach {
            j += 1;
        }
        if j < numerical.len() && numerical[j] <= e + reach {
            pairs.push((i, j));
            j += 1;
        }
    }
    pairs
}

#[cfg(test)]
mod tests {
    use super::*;

    fn iv(e: f64, h: f64) -> Interval {
        Interval {
            energy: e,
            halfwidth: h,
        }
    }

    /// Brute-force maximum matching size by augmenting paths (Kuhn), an independent check.
    fn max_matching(exp: &[Interval], num: &[Interval]) -> usize {
        fn augment(
            j: usize,
            adj: &[Vec<usize>],
            seen: &mut [bool],
            owner: &mut [Option<usize>],
        ) -> bool {
            for &i in &adj[j] {
                if seen[i] {
                    continue;
                }
                seen[i] = true;
                let free = match owner[i] {
                    None => true,
                    Some(o) => augment(o, adj, seen, owner),
                };
                if free {
                    owner[i] = Some(j);
                    return true;
                }
            }
            false
        }
        let adj: Vec<Vec<usize>> = exp
            .iter()
            .map(|e| {
                (0..num.len())
                    .filter(|&i| (num[i].energy - e.energy).abs() <= e.halfwidth + num[i].halfwidth)
                    .collect()
            })
            .collect();
        let mut owner = vec![None; num.len()];
        (0..exp.len())
            .filter(|&j| augment(j, &adj, &mut vec![false; num.len()], &mut owner))
            .count()
    }

    #[test]
    fn greedy_phase_one_is_maximum_on_random_interval_sets() {
        // deterministic pseudo-random intervals of mixed widths (linear congruential)
        let mut state = 12345u64;
        let mut rnd = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..300 {
            let m = (rnd() * 8.0) as usize;
            let k = (rnd() * 8.0) as usize;
            let exp: Vec<Interval> = (0..m).map(|_| iv(rnd() * 5.0, rnd() * 0.8)).collect();
            let num: Vec<Interval> = (0..k).map(|_| iv(rnd() * 5.0, rnd() * 0.8)).collect();
            let pairs = agreeing(&exp, &num);
            // valid, one-to-one
            let mut used_e = vec![false; m];
            let mut used_n = vec![false; k];
            for &(j, i) in &pairs {
                assert!(!used_e[j] && !used_n[i]);
                used_e[j] = true;
                used_n[i] = true;
                assert!(
                    (exp[j].energy - num[i].energy).abs() <= exp[j].halfwidth + num[i].halfwidth
                );
            }
            assert_eq!(pairs.len(), max_matching(&exp, &num));
        }
    }

    #[test]
    fn nearest_pairs_by_distance_and_leaves_far_ones() {
        // expected 1, 2, 10; numerical 1.1, 1.9, 2.2: 10 is out of reach, 2.2 left over
        let p = nearest(&[1.0, 2.0, 10.0], &[1.1, 1.9, 2.2], 0.5);
        assert_eq!(p, vec![(0, 0), (1, 1)]);
        // a closer partner on the right wins over a farther one on the left
        let p = nearest(&[1.0], &[0.6, 1.01], 0.5);
        assert_eq!(p, vec![(0, 1)]);
        assert!(nearest(&[1.0], &[], 1.0).is_empty());
        // the greedy fallback stays within reach and one-to-one
        let g = greedy(&[1.0, 1.0, 5.0], &[0.9, 1.2, 9.0], 0.5);
        assert_eq!(g, vec![(0, 0), (1, 1)]);
    }
}
