//! Collecting the levels of all sectors: one sort of integer keys (energy, then position),
//! laid out rank by rank within the sectors so that a merge of their natural runs usually
//! suffices, then one parallel gather from the per-chunk buffers.

use super::sector::SectorResult;
use super::{Target, Vectors, Weights};
use crate::error::{Error, Result};
use crate::levels::{median_of_smallest_nonzero, Level, LevelVector};
use rayon::prelude::*;

/// Fewest levels one task of the final gather handles: small spectra (one point of a sweep,
/// where the points already run in parallel) are gathered without splitting.
const GATHER_GRAIN: usize = 1 << 14;

/// The levels of all chunks in ascending order of energy (ties broken by the position in
/// sector order, so the result does not depend on the thread count), cut to `target`, with
/// their convergence states at `tolerance`, their weights (d per level) and, when `vectors`,
/// their eigenvectors (their weights only when `weights` is [`Weights::Compute`]); and the
/// energy scale of the sorted levels.
///
/// # Errors
/// [`Error::MemoryLimit`] beyond 2^32 levels or chunks (the sort key's positions).
///
/// # Complexity
/// O(L log runs) for L levels laid out in few monotone runs (exact-J sectors, see
/// [`rank_layout`]; a parallel merge), else O(L log L): a sort of 16-byte integer keys, then
/// one parallel gather
/// from the per-chunk buffers (no unsorted concatenation is ever built: at 4e6 levels each
/// extra pass over fresh memory costs about 0.1 s in page faults).
pub(super) fn gather(
    mut parts: Vec<SectorResult>,
    dim: usize,
    target: Target,
    tolerance: f64,
    (vectors, character, weights): (Vectors, crate::problem::Character, Weights),
    memory_limit_mib: u64,
) -> Result<Gathered> {
    let keys = sorted_keys(&parts, target, memory_limit_mib)?;
    let d = dim;
    // the typical spacing comes from the sorted energies, so the convergence flags are set
    // during the gather (no extra pass over the levels)
    let energy_scale = energy_scale_sorted(&keys, d);
    let levels: Vec<Level> = keys
        .par_iter()
        .with_min_len(GATHER_GRAIN)
        .map(|k| {
            let p = &parts[k.part()];
            let mut l = p.levels[k.index()].unpack(&p.sectors);
            l.convergence = l.convergence_at(tolerance, energy_scale);
            l
        })
        .collect();
    let weights = if weights == Weights::Compute && d > 0 {
        let mut w = vec![0.0; keys.len() * d];
        w.par_chunks_mut(d)
            .zip(keys.par_iter())
            .with_min_len(GATHER_GRAIN)
            .for_each(|(w, k)| {
                let i = k.index();
                w.copy_from_slice(&parts[k.part()].weights[i * d..(i + 1) * d]);
            });
        w
    } else {
        Vec::new()
    };
    let mean_n = (character == crate::problem::Character::Compute).then(|| {
        keys.par_iter()
            .with_min_len(GATHER_GRAIN)
            .map(|k| parts[k.part()].mean_n[k.index()])
            .collect()
    });
    let vectors = if vectors == Vectors::Compute {
        let empty = || LevelVector {
            states: Vec::new(),
            coeffs: Vec::new(),
        };
        Some(
            keys.iter()
                .map(|k| std::mem::replace(&mut parts[k.part()].vectors[k.index()], empty()))
                .collect(),
        )
    } else {
        None
    };
    // free the chunks in parallel: unmapping their pages is a measurable share at 1e6
    parts.into_par_iter().for_each(drop);
    Ok(Gathered {
        levels,
        weights,
        mean_n,
        vectors,
        energy_scale,
    })
}

/// The sorted levels of a solve, see [`gather`].
pub(super) struct Gathered {
    pub(super) levels: Vec<Level>,
    pub(super) weights: Vec<f64>,
    pub(super) mean_n: Option<Vec<f64>>,
    pub(super) vectors: Option<Vec<LevelVector>>,
    pub(super) energy_scale: f64,
}

/// Sort keys of every level of `parts`, ascending, cut to `target`.
fn sorted_keys(
    parts: &[SectorResult],
    target: Target,
    memory_limit_mib: u64,
) -> Result<Vec<SortKey>> {
    let total: usize = parts.iter().map(|p| p.levels.len()).sum();
    if total > u32::MAX as usize || parts.len() > u32::MAX as usize {
        return Err(Error::MemoryLimit {
            what: format!("{total} levels in one solve (at most 2^32)"),
            needed_mib: (total * std::mem::size_of::<Level>()) as u64 >> 20,
            limit_mib: memory_limit_mib,
            fix: crate::memory::FIX_SOLVE.into(),
        });
    }
    let mut raw: Vec<u128> = vec![0; total];
    match rank_layout(parts) {
        Some(layout) => fill_by_rank(&mut raw, parts, &layout),
        None => fill_by_part(&mut raw, parts),
    }
    let mut keys: Vec<SortKey> = raw.into_iter().map(SortKey).collect();
    if few_runs(&keys) {
        // a merge of the natural runs (rayon's stable sort finds them in each of its parts and
        // merges the parts in parallel): O(L log runs) work, no longer a serial pass
        keys.par_sort();
    } else {
        keys.par_sort_unstable();
    }
    select_target(&mut keys, target);
    Ok(keys)
}

/// Most levels a sector may have for the rank-major key layout of [`rank_layout`] (exactly
/// conserved J: at most d states per sector, times two Klein-Gordon roots).
const MAX_RANKS: usize = 64;

/// Most direction changes (ascending to descending or back) of the laid-out keys for which the
/// natural-run merge is used instead of the parallel general sort.
const MAX_TURNS: usize = 256;

/// Where the keys of each (rank in sector, chunk) go in the rank-major layout: for R ranks and
/// P chunks, `counts[p * R + r]` levels of chunk p have rank r, and the layout is rank by rank,
/// chunk by chunk within a rank, sector order within a chunk.
struct RankLayout {
    ranks: usize,
    counts: Vec<usize>,
}

/// The rank-major layout of the keys, or `None` when a sector has more than [`MAX_RANKS`]
/// levels (few large sectors: the chunk order is as good).
///
/// # Why
/// The k-th level of the sectors J = 0, 1, 2, ... of an exactly conserved J is usually
/// monotone in J (E ~ ±sqrt(J) for a Dirac model), so laid out rank by rank the keys form a
/// few long natural runs, which a merge sorts in O(L log runs) instead of O(L log L).
fn rank_layout(parts: &[SectorResult]) -> Option<RankLayout> {
    let sector_len = |p: &SectorResult, s: usize| -> usize {
        let end = p
            .sector_starts
            .get(s + 1)
            .map_or(p.levels.len(), |&e| e as usize);
        end - p.sector_starts[s] as usize
    };
    let mut ranks = 0;
    for p in parts {
        if p.sector_starts
            .first()
            .map_or(!p.levels.is_empty(), |&f| f != 0)
        {
            return None; // levels outside any recorded sector
        }
        for s in 0..p.sector_starts.len() {
            ranks = ranks.max(sector_len(p, s));
        }
    }
    if ranks > MAX_RANKS {
        return None;
    }
    let mut counts = vec![0usize; parts.len() * ranks];
    for (pi, p) in parts.iter().enumerate() {
        for s in 0..p.sector_starts.len() {
            for c in &mut counts[pi * ranks..pi * ranks + sector_len(p, s)] {
                *c += 1;
            }
        }
    }
    Some(RankLayout { ranks, counts })
}

/// Each chunk writes its keys into its own slice of `raw`, in chunk order (a zeroed integer
/// array is allocated lazily, so its pages are first touched by the workers).
fn fill_by_part(raw: &mut [u128], parts: &[SectorResult]) {
    let mut slices = Vec::with_capacity(parts.len());
    let mut rest = raw;
    for p in parts {
        let (head, tail) = rest.split_at_mut(p.levels.len());
        slices.push(head);
        rest = tail;
    }
    slices
        .into_par_iter()
        .zip(parts.par_iter())
        .enumerate()
        .for_each(|(pi, (slice, p))| {
            for (i, (k, l)) in slice.iter_mut().zip(&p.levels).enumerate() {
                *k = SortKey::new(l.energy, pi as u32, i as u32).0;
            }
        });
}

/// Each chunk writes its keys into its slices of `raw` in the rank-major `layout`, in
/// parallel over chunks. The keys themselves (energy, chunk, index) do not depend on the
/// layout, so neither does the sorted order.
fn fill_by_rank(raw: &mut [u128], parts: &[SectorResult], layout: &RankLayout) {
    let r_max = layout.ranks;
    // slices[p * R + r]: the keys of chunk p at rank r
    let mut slices: Vec<&mut [u128]> = Vec::with_capacity(parts.len() * r_max);
    slices.resize_with(parts.len() * r_max, Default::default);
    let mut rest = raw;
    for r in 0..r_max {
        for pi in 0..parts.len() {
            let (head, tail) = rest.split_at_mut(layout.counts[pi * r_max + r]);
            slices[pi * r_max + r] = head;
            rest = tail;
        }
    }
    slices
        .par_chunks_mut(r_max.max(1))
        .zip(parts.par_iter())
        .enumerate()
        .for_each(|(pi, (by_rank, p))| {
            let mut cursor = [0usize; MAX_RANKS];
            for (s, &start) in p.sector_starts.iter().enumerate() {
                let start = start as usize;
                let end = p
                    .sector_starts
                    .get(s + 1)
                    .map_or(p.levels.len(), |&e| e as usize);
                for (r, i) in (start..end).enumerate() {
                    by_rank[r][cursor[r]] = SortKey::new(p.levels[i].energy, pi as u32, i as u32).0;
                    cursor[r] += 1;
                }
            }
        });
}

/// Whether `keys` consist of at most [`MAX_TURNS`] + 1 monotone runs (counted as the places
/// where the direction changes).
fn few_runs(keys: &[SortKey]) -> bool {
    keys.par_windows(3)
        .filter(|w| (w[0] < w[1]) != (w[1] < w[2]))
        .count()
        <= MAX_TURNS
}

/// Sort key of a level: its energy mapped to an unsigned integer with the order of
/// `f64::total_cmp` in the high 64 bits, and its position (chunk, index in the chunk) in the low
/// 64, so that one integer comparison orders by energy and breaks ties by position.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
#[repr(transparent)]
struct SortKey(u128);

impl SortKey {
    const SIGN: u64 = 1 << 63;

    fn new(energy: f64, part: u32, index: u32) -> Self {
        let b = energy.to_bits();
        let ordered = if b & Self::SIGN != 0 {
            !b
        } else {
            b | Self::SIGN
        };
        SortKey((u128::from(ordered) << 64) | (u128::from(part) << 32) | u128::from(index))
    }

    fn energy(self) -> f64 {
        let o = (self.0 >> 64) as u64;
        f64::from_bits(if o & Self::SIGN != 0 {
            o & !Self::SIGN
        } else {
            !o
        })
    }

    fn part(self) -> usize {
        ((self.0 >> 32) as u32) as usize
    }

    fn index(self) -> usize {
        (self.0 as u32) as usize
    }
}

/// Keep only the levels the target asks for, preserving the ascending order of `keys`.
fn select_target(keys: &mut Vec<SortKey>, target: Target) {
    match target {
        Target::All => {}
        Target::Window { lo, hi } => keys.retain(|k| k.energy() >= lo && k.energy() <= hi),
        Target::Nearest { energy, count } => {
            let mut by_distance: Vec<usize> = (0..keys.len()).collect();
            by_distance.sort_by(|&a, &b| {
                let da = (keys[a].energy() - energy).abs();
                let db = (keys[b].energy() - energy).abs();
                da.total_cmp(&db).then(a.cmp(&b))
            });
            let mut chosen: Vec<usize> = by_distance.into_iter().take(count).collect();
            chosen.sort_unstable();
            *keys = chosen.into_iter().map(|k| keys[k]).collect();
        }
    }
}

/// [`crate::levels::energy_scale`] for sort keys in ascending order of energy: the 2d+1 smallest |E| are
/// read outward from the zero crossing, in O(log L + d).
fn energy_scale_sorted(keys: &[SortKey], dim: usize) -> f64 {
    let take = (2 * dim + 1).min(keys.len());
    let mut hi = keys.partition_point(|k| k.energy() < 0.0);
    let mut lo = hi; // keys[lo..hi] are taken
    let mut near = Vec::with_capacity(take);
    while near.len() < take {
        let below = (lo > 0).then(|| keys[lo - 1].energy().abs());
        let above = keys.get(hi).map(|k| k.energy().abs());
        match (below, above) {
            (Some(b), Some(a)) if b <= a => {
                near.push(b);
                lo -= 1;
            }
            (_, Some(a)) => {
                near.push(a);
                hi += 1;
            }
            (Some(b), None) => {
                near.push(b);
                lo -= 1;
            }
            (None, None) => break,
        }
    }
    median_of_smallest_nonzero(&mut near, take).unwrap_or(1.0)
}

#[cfg(test)]
mod tests {
    use super::SortKey;

    use super::super::packed::Packed;
    use super::super::sector::SectorResult;
    use super::{sorted_keys, Target};
    use crate::levels::{Convergence, LandauLabel, Level, Root};
    use crate::sectors::SectorId;

    fn level(energy: f64) -> Level {
        Level {
            energy,
            bound: 0.0,
            kato_temple: None,
            leakage: 0.0,
            in_space_residual: 0.0,
            convergence: Convergence::NotConverged,
            sector: SectorId { class: 0, label: 0 },
            orbital: 0,
            component: 0,
            branch: Root::Direct,
            label: LandauLabel::UNLABELLED,
            top_weight: 0.0,
            tail_weight: 0.0,
        }
    }

    /// Chunks of `sectors_per_chunk` sectors whose level r in sector J has energy `e(J, r)`.
    fn parts(
        chunks: usize,
        sectors_per_chunk: usize,
        per_sector: usize,
        e: impl Fn(usize, usize) -> f64,
    ) -> Vec<SectorResult> {
        (0..chunks)
            .map(|c| {
                let mut p = SectorResult::with_capacity(0, 0);
                for s in 0..sectors_per_chunk {
                    let j = c * sectors_per_chunk + s;
                    p.sector_starts.push(p.levels.len() as u32);
                    p.sectors.push(SectorId {
                        class: 0,
                        label: j as i64,
                    });
                    // the first sector has fewer levels, as at J = 0
                    let k = if j == 0 { per_sector / 2 } else { per_sector };
                    for r in 0..k {
                        p.levels
                            .push(Packed::pack(&level(e(j, r)), p.sectors.len() as u32 - 1));
                    }
                }
                p
            })
            .collect()
    }

    /// (energy, chunk, index) of every level, sorted as the keys must be.
    fn expected(parts: &[SectorResult]) -> Vec<(u64, usize, usize)> {
        let mut all: Vec<(f64, usize, usize)> = parts
            .iter()
            .enumerate()
            .flat_map(|(pi, p)| {
                p.levels
                    .iter()
                    .enumerate()
                    .map(move |(i, l)| (l.energy, pi, i))
            })
            .collect();
        all.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        all.into_iter()
            .map(|(e, p, i)| (e.to_bits(), p, i))
            .collect()
    }

    #[test]
    fn keys_sort_like_energy_then_position_with_few_or_many_runs() {
        // invented spectra: monotone in J per rank (few runs, the merge), with ties between
        // sectors, and scrambled (many runs, the parallel sort)
        let cases: Vec<Box<dyn Fn(usize, usize) -> f64>> = vec![
            Box::new(|j, r| {
                let s = ((j + 1) as f64).sqrt();
                [-s - 0.1, -s, s, s + 0.1][r]
            }),
            Box::new(|j, r| [-1.0, (j % 3) as f64, 2.0, (j / 4) as f64][r]),
            Box::new(|j, r| (((j * 7919 + r * 104_729) % 1009) as f64) - 500.0),
        ];
        for e in &cases {
            let p = parts(5, 37, 4, e);
            let keys = sorted_keys(&p, Target::All, 1).unwrap();
            let got: Vec<(u64, usize, usize)> = keys
                .iter()
                .map(|k| (k.energy().to_bits(), k.part(), k.index()))
                .collect();
            assert_eq!(got, expected(&p));
        }
    }

    #[test]
    fn sort_key_orders_like_total_cmp_and_round_trips() {
        let xs = [
            -f64::INFINITY,
            -1e300,
            -1.0,
            -f64::MIN_POSITIVE,
            -0.0,
            0.0,
            5e-324,
            1.0,
            1.0 + f64::EPSILON,
            f64::INFINITY,
        ];
        for (i, &a) in xs.iter().enumerate() {
            let ka = SortKey::new(a, 7, 9);
            assert_eq!(ka.energy().to_bits(), a.to_bits());
            assert_eq!((ka.part(), ka.index()), (7, 9));
            for &b in &xs[i + 1..] {
                assert!(ka < SortKey::new(b, 0, 0), "{a} < {b}");
            }
        }
        // equal energies: the position decides
        assert!(SortKey::new(2.0, 1, 5) < SortKey::new(2.0, 2, 0));
        assert!(SortKey::new(2.0, 1, 5) < SortKey::new(2.0, 1, 6));
    }
}
