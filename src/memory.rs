//! The memory estimate of a solve, a sweep and each command, in closed form from the sector
//! plan's sizes; the one guard every path uses before it allocates. The sizes come from the
//! set-up of the solve ([`crate::problem::Problem::shape`]: the symmetry detected at the real
//! (B, kz)), so the pre-checks of the command line and the solve itself judge the same shape.
//!
//! # Formula
//! For a model of d components and B branches (2 in Klein-Gordon form, else 1) at cutoff N the
//! truncated basis holds N d states and a solve returns L = B N d levels, whatever the
//! splitting. With `l` = `size_of::<Level>()` bytes per level record and 8 d bytes of
//! component weights (0 when the solve skips them, [`crate::problem::Weights::Skip`]), the
//! peak resident set of one solve is
//!
//! ```text
//! solve = L (l + 8d)              the levels kept in the result
//!       + L (l + 8d) g            the per-chunk buffers they are gathered from (g = 1 when every
//!                                  class conserves J exactly: buffers are reserved once; g = 2
//!                                  otherwise: doubling growth)
//!       + 16 L                    the sort keys
//!       + c 48 s^2                c sectors of s states solved at once: matrix, vectors and
//!                                  the eigen-solver's workspace, 16 bytes per complex entry
//!       + L 32 s + 48 L           eigenvectors on s states each, when kept
//! ```
//!
//! where s is the largest sector in closed form: |class| for exact conservation, ceil((N +
//! max shift) / m) |class| for J mod m, N |class| with no conserved quantity, and c the number
//! of such sectors in flight (at most the thread count). A sweep of P points keeps P results and
//! has min(P, threads) solves in flight; each command adds its own per-level records (see
//! [`Footprint`]) and a fixed [`BASE_BYTES`] for the program itself.
//!
//! Nothing here enumerates sectors or states: the cost is O(d^2) for the symmetry detection and
//! O(1) after it, and every product saturates, so a cutoff of 10^12 gives a finite (huge)
//! estimate instead of an overflow.
//!
//! # Accuracy
//! Measured against the peak resident set (`scripts/memcheck.sh`, README section Memory): the
//! estimate is never below the peak and at most 1.3x above it for the levels, fan, dos, optics,
//! converge and export paths at mid to large sizes; at small sizes [`BASE_BYTES`] dominates.

use crate::error::{Error, Result};
use crate::levels::{Level, LevelVector};
use crate::model::{Model, SpectrumForm};
use crate::sectors::{Conservation, Symmetry};

/// Resident memory of the program before any solve (binary, libraries, thread stacks, the
/// allocator's arenas), in bytes: the measured peak of a run at cutoff 10 is 6.7-7.5 MiB.
pub const BASE_BYTES: u64 = 8 << 20;

/// Bytes of one level record in a result.
pub const LEVEL_BYTES: u64 = std::mem::size_of::<Level>() as u64;

/// Bytes of one sort key of the final gather. The stable merge that sorts keys laid out in
/// natural runs (`solve::gather`) borrows as much again, but frees it before the level records
/// are allocated, so it does not add to the peak.
const KEY_BYTES: u64 = 16;

/// Bytes per entry of a dense sector solve: the matrix, the eigenvectors and the solver's
/// workspace, one complex number (16 bytes) each.
const DENSE_ENTRY_BYTES: u64 = 48;

/// Bytes of the two empty `Vec`s of a kept eigenvector.
const VECTOR_HEADER_BYTES: u64 = std::mem::size_of::<LevelVector>() as u64;

/// Bytes per state of a kept eigenvector: the state (n, alpha) and its complex coefficient.
const VECTOR_STATE_BYTES: u64 = 32;

/// One mebibyte.
const MIB: u64 = 1 << 20;

/// The sizes of one solve, in closed form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SolveShape {
    /// Components d.
    pub dim: u64,
    /// Branches per eigenvalue (2 for the Klein-Gordon form, else 1).
    pub branches: u64,
    /// Levels L = branches x N x d.
    pub levels: u64,
    /// States of the largest sector.
    pub largest_sector: u64,
    /// Sectors of that largest size (at most; saturating).
    pub largest_count: u64,
    /// Whether every class conserves J exactly (chunk buffers reserved once).
    pub exact: bool,
    /// Whether the solve keeps 8 d bytes of component weights per level
    /// ([`crate::problem::Weights`]); [`SolveShape::new`] assumes it does (the larger estimate).
    pub weights: bool,
}

impl SolveShape {
    /// The shape of a solve of `symmetry` at `cutoff` orbitals with `branches` branches.
    ///
    /// # Formula
    /// Sector sizes per class of c components with shifts s: exact J: c; J mod m:
    /// ceil((N + max s) / m) c (m sectors); none: N c (one sector).
    pub fn new(symmetry: &Symmetry, cutoff: usize, branches: u64) -> Self {
        let n = cutoff as u64;
        let mut dim = 0u64;
        let mut largest = 0u64;
        let mut count = 0u64;
        for c in &symmetry.classes {
            let k = c.components.len() as u64;
            dim += k;
            let spread = c.shifts.iter().copied().max().unwrap_or(0).max(0) as u64;
            let (size, many) = match c.conservation {
                Conservation::Exact => (k, n.saturating_add(spread)),
                Conservation::None => (n.saturating_mul(k), 1),
                Conservation::Modulo(m) => {
                    (n.saturating_add(spread).div_ceil(m).saturating_mul(k), m)
                }
            };
            if size > largest {
                largest = size;
                count = many;
            } else if size == largest {
                count = count.saturating_add(many);
            }
        }
        SolveShape {
            dim,
            branches,
            levels: n.saturating_mul(dim).saturating_mul(branches),
            largest_sector: largest,
            largest_count: count,
            exact: symmetry.is_exact(),
            weights: true,
        }
    }

    /// Peak bytes of a window solve ([`crate::numeric::window`]) of the largest sector, with
    /// `half_bandwidth` b (states), `wanted` levels w, in real arithmetic (`real`, 8 bytes a
    /// number) or complex (16), including [`BASE_BYTES`].
    ///
    /// # Formula
    /// For a sector of s states and z bytes a number, m = w + max(w/2, 12) basis vectors:
    /// z s (b + 1) for the band matrix, plus the larger of the solve phase,
    /// z s (3b + 1) + 4 s (the pivoted LU, the larger of the two factorisations; the two-sided
    /// L D L^H needs z s (b + 1)) + z s (m + 1) (the Krylov basis) + 4 z s (work vectors), and
    /// the hand-over phase, z s w + 16 s w (the found vectors and their complex copy for the
    /// level records).
    pub fn window_bytes(&self, half_bandwidth: u64, wanted: u64, real: bool) -> u64 {
        let s = self.largest_sector;
        let z: u64 = if real { 8 } else { 16 };
        let b = half_bandwidth;
        let m = wanted.saturating_add((wanted / 2).max(12));
        let band = z.saturating_mul(b.saturating_add(1));
        let solve = z
            .saturating_mul(b.saturating_mul(3).saturating_add(1))
            .saturating_add(4)
            .saturating_add(z.saturating_mul(m.saturating_add(1)))
            .saturating_add(z.saturating_mul(4));
        let hand_over = z.saturating_add(16).saturating_mul(wanted);
        s.saturating_mul(band.saturating_add(solve.max(hand_over)))
            .saturating_add(BASE_BYTES)
    }

    /// Bytes of the result a solve returns: the level records and their weights, plus the
    /// eigenvectors when `vectors` is true.
    pub fn kept_bytes(&self, vectors: bool) -> u64 {
        let per_level = self.level_bytes();
        let mut b = self.levels.saturating_mul(per_level);
        if vectors {
            b = b.saturating_add(self.vector_bytes());
        }
        b
    }

    /// Bytes of one level of the result: its record and, when kept, its d weights.
    fn level_bytes(&self) -> u64 {
        LEVEL_BYTES + if self.weights { 8 * self.dim } else { 0 }
    }

    /// Bytes of the eigenvectors: each level keeps the states and coefficients of its sector
    /// (bounded by the largest sector).
    fn vector_bytes(&self) -> u64 {
        let per_level = VECTOR_HEADER_BYTES.saturating_add(
            VECTOR_STATE_BYTES.saturating_mul(self.largest_sector.min(self.levels)),
        );
        self.levels.saturating_mul(per_level)
    }

    /// Bytes a solve holds on top of its result while it runs, with `threads` workers: the
    /// chunk buffers, the sort keys and the dense sectors in flight (see the module docs).
    pub fn transient_bytes(&self, threads: u64) -> u64 {
        let per_level = self.level_bytes();
        let growth = if self.exact { 1 } else { 2 };
        let buffers = self
            .levels
            .saturating_mul(per_level.saturating_mul(growth).saturating_add(KEY_BYTES));
        let s = self.largest_sector;
        let in_flight = self.largest_count.clamp(1, threads.max(1));
        let dense = s
            .saturating_mul(s)
            .saturating_mul(DENSE_ENTRY_BYTES)
            .saturating_mul(in_flight);
        buffers.saturating_add(dense)
    }

    /// Bytes `points` solves of a sweep hold on top of their results while they run on
    /// `threads` workers: min(P, threads) sets of chunk buffers and sort keys, and at most
    /// `threads` dense sectors in all, counted 10% higher than in one solve alone (measured on
    /// a model with one dense sector per point: two concurrent points of 600 to 2000 states
    /// hold 46-58 bytes per entry each, against 46 for one solve alone).
    pub fn sweep_transient_bytes(&self, points: u64, threads: u64) -> u64 {
        let threads = threads.max(1);
        let alone = self.transient_bytes(1);
        let s = self.largest_sector;
        let one_dense = s.saturating_mul(s).saturating_mul(DENSE_ENTRY_BYTES);
        let buffers = alone.saturating_sub(one_dense);
        let in_flight = points
            .max(1)
            .saturating_mul(self.largest_count.max(1))
            .min(threads);
        let dense = one_dense.saturating_mul(in_flight);
        points
            .max(1)
            .min(threads)
            .saturating_mul(buffers)
            .saturating_add(dense)
            .saturating_add(dense / 10)
    }

    /// Peak bytes of one solve on its own (result plus transient, without [`BASE_BYTES`]).
    pub fn solve_bytes(&self, threads: u64, vectors: bool) -> u64 {
        self.kept_bytes(vectors)
            .saturating_add(self.transient_bytes(threads))
    }
}

/// 2 for the Klein-Gordon form (both branches reported), else 1.
pub fn branches(model: &Model) -> u64 {
    match model.form() {
        SpectrumForm::Direct => 1,
        SpectrumForm::KleinGordon { .. } => 2,
    }
}

/// What a command holds at its peak, for [`estimate`].
#[derive(Debug, Clone, PartialEq)]
pub enum Footprint {
    /// One solve whose result is kept and summarised (`levels`, `dos` at one field, `verify`).
    Solve {
        /// Whether the eigenvectors are kept.
        vectors: bool,
    },
    /// One solve and a table (or JSON, CSV, SVG) of `shown` of its levels (`levels`).
    Table {
        /// Levels listed.
        shown: u64,
        /// Bytes per listed level of the text and records built for it.
        bytes_per_shown: u64,
    },
    /// P solves kept together (`fan`, `dispersion`, `dos`/`optics` sweeps, a convergence study):
    /// P results, min(P, threads) solves in flight, and `extra_per_level` bytes of the command's
    /// own records (tracks, tables) per level and point.
    Sweep {
        /// Number of points P.
        points: u64,
        /// Bytes the command adds per level and point.
        extra_per_level: u64,
    },
    /// A streamed sweep (`fan`, `dispersion`; [`crate::sweep::stream`]): `in_flight` results
    /// at once (two batches), `extra_per_level` bytes of the command's own records per level
    /// and held point (at most every level is shown), over `held_points` points (all P when
    /// the whole record is kept, for JSON; the figure's thinned lines,
    /// [`crate::plot::decimate::Decimation::max_values`], when the rows are written as they
    /// come), and `buffer_bytes` of fixed buffers (the CSV rows grouped by track,
    /// [`SWEEP_REGROUP_BYTES`]).
    ///
    /// # Formula
    /// min(in_flight, P) kept results + levels x (held_points x extra_per_level + per_level)
    /// + buffer_bytes + the solves' transients.
    Stream {
        /// Number of points P.
        points: u64,
        /// Results held at once.
        in_flight: u64,
        /// Points whose values each level's record holds (at most P).
        held_points: u64,
        /// Bytes the command adds per level and held point.
        extra_per_level: u64,
        /// Bytes per level independent of P (the entry of each level's track and of its
        /// closed-form label: [`SWEEP_TRACK_ENTRY_BYTES`]).
        per_level: u64,
        /// Fixed bytes of buffers, independent of P.
        buffer_bytes: u64,
    },
    /// Solves with eigenvectors and the velocity matrix elements between their levels
    /// (`optics`): `in_flight` fields solved at once (each spectrum is dropped as soon as its
    /// transitions are found), the transitions of `held_points` fields kept.
    Optics {
        /// Number of fields of the run.
        points: u64,
        /// Fields whose spectrum (with eigenvectors) is alive at once: at most the worker
        /// threads.
        in_flight: u64,
        /// Fields whose transitions are held: every field when the whole record is kept
        /// (`--json`, the Python module), two batches of a streamed run.
        held_points: u64,
        /// Transitions of one held field, at most (0 before any was counted; `optics` counts
        /// those at its probe field and scales them to the lowest field of the sweep).
        transitions: u64,
    },
    /// A MatrixMarket text of at most `entries` stored entries of at most `line_bytes` bytes,
    /// parsed back once to check it (`export`): no solve.
    Export {
        /// Stored (lower-triangle) entries, at most.
        entries: u64,
        /// Bytes of one entry's text line, at most.
        line_bytes: u64,
    },
}

/// Bytes a command's own records take per level and point of a sweep: the track of every
/// label holds an optional energy and bound per point (2 x 16 bytes), and the sweep's JSON view
/// a few more.
pub const SWEEP_TRACK_BYTES: u64 = 64;

/// Bytes a streamed sweep that keeps its whole record (`--json`; [`Footprint::Stream`] with
/// `held_points` = P) keeps per level and point: 32 for the track's
/// optional energy and bound (an upper bound: only the levels shown are kept) and 8 for the CSV
/// row's text, built before the atomic write (about 9 measured per level and point over all of
/// them, 71 MB for 4000 points of 2000 levels; the tracks' slack covers the difference). Checked
/// against the measured peak at both ends: a 16-point fan at cutoff 20000 (tests/memory.rs,
/// estimate / peak 1.2-1.3) and a 4000-point fan at cutoff 1000 (see the README, Memory).
pub const SWEEP_STREAM_BYTES: u64 = 40;

/// Bytes a streamed sweep that writes its rows as they come keeps per level and held point
/// ([`Footprint::Stream`] with `held_points` the figure's thinned line,
/// [`crate::plot::decimate::Decimation::max_values`]): the lines of the tracks and of the
/// closed-form overlay (16 bytes per value), the figure's curves and its SVG text, for the
/// levels near the window only (about a tenth of them at cutoff 1000). Calibrated on
/// `fan --builtin dirac2d --b-max 5 --cutoff 1000 --out DIR` (debug build, 2026-12-04):
/// estimate / measured peak 1.07-1.5 at 500 to 8000 points, never below (see the README,
/// Streaming sweeps).
pub const SWEEP_OUTLINE_BYTES: u64 = 14;

/// Bytes per level and held value of the Fermi-level sweep's figure (`dos --b-max`) when each
/// line holds at most `held_values` values ([`crate::plot::decimate::Decimation::max_values`],
/// at most one per field): every converged level's line keeps its (field, energy) pairs, 16
/// bytes, in a buffer that grows by doubling from 4 (`Vec::push` of the Rust standard library:
/// at least 4 slots for elements of this size, then twice the capacity; from memory of its
/// `RawVec`, and held by the peak measured in tests/memory.rs), so its capacity is at most the
/// next power of two of `held_values`, and the bytes per held value are
/// ceil(16 next_pow2(h) / h). An
/// upper bound: levels that are not converged get no line. (With 24, the average over the
/// growth, a sweep of 600 fields held 16 KiB per line against 14.4 KiB estimated.)
///
/// ```
/// use ladderfan::memory::fermi_line_bytes;
/// assert_eq!(fermi_line_bytes(512), 16);
/// assert_eq!(fermi_line_bytes(600), 28); // 1024 slots of 16 bytes for 600 values
/// assert_eq!(fermi_line_bytes(1), 64); // the first growth reserves 4
/// ```
pub fn fermi_line_bytes(held_values: u64) -> u64 {
    let h = held_values.max(1);
    let slots = h.max(4).checked_next_power_of_two().unwrap_or(u64::MAX);
    slots.saturating_mul(16).div_ceil(h)
}

/// Bytes per level of the Fermi-level sweep's figure that do not grow with its points: the
/// line's entry in the map of tracks (its key, its state while thinning, the map's node
/// share).
pub const FERMI_LINE_ENTRY_BYTES: u64 = 256;

/// Bytes per level of a streamed sweep that do not grow with its points: every level's
/// track entry (identity and label texts, label origin, its line's state) and its closed-form
/// label, made when the level is first seen, kept to the end. Calibrated on a 16-point fan at
/// cutoff 20000 (tests/memory.rs: without it the estimate was 0.95 of the peak).
pub const SWEEP_TRACK_ENTRY_BYTES: u64 = 320;

/// Bytes of CSV rows a streamed sweep's table reads back from its spill in one pass when it
/// groups the rows by track before the atomic rename (the spill itself is on disk): 4 MiB,
/// 18 passes over the largest tables (71 MB at 4000 points of a fan at cutoff 1000, read
/// back from the page cache).
pub const SWEEP_REGROUP_BYTES: u64 = 4 << 20;

/// Bytes per listed level of the `levels` table or JSON (strings and records of one row;
/// measured: about 420).
pub const TABLE_BYTES_PER_LEVEL: u64 = 480;

/// Bytes per listed level of the CSV and SVG files of `levels --out` on top of the table
/// (measured: about 150).
pub const FILES_BYTES_PER_LEVEL: u64 = 160;

/// Bytes per level of the velocity matrix elements of `optics`: the applied velocity of each
/// level (two hash maps of about 2 d entries of 40 bytes with their table overhead), the index
/// of levels by state and the transition records.
const OPTICS_BYTES_PER_LEVEL: u64 = 380;

/// Bytes of one transition a field of `optics` keeps after its spectrum is dropped: the
/// library's transition (its two level keys and labels) and its record (three strings), both
/// alive while the record is built, with the allocator's slack.
pub const OPTICS_TRANSITION_BYTES: u64 = 640;

/// Bytes per stored entry of an exported matrix besides its text line: the parsed entry
/// (i, j, z: 32 bytes) and the parser's temporaries (measured: about 60 in all).
const EXPORT_PARSED_BYTES: u64 = 60;

/// Bytes per orbital and component of the closed-form reference list a convergence study
/// builds for 2N + 8 orbitals (an energy, labels and a short label string per level; measured
/// on the 2D Dirac model).
pub const CLOSED_FORM_BYTES: u64 = 48;

/// Estimated peak resident bytes of a command with footprint `f` whose solves have `shape`,
/// on `threads` workers, including [`BASE_BYTES`]. See the module docs for the formula.
pub fn estimate(shape: &SolveShape, f: &Footprint, threads: u64) -> u64 {
    let threads = threads.max(1);
    let work = match f {
        Footprint::Solve { vectors } => shape.solve_bytes(threads, *vectors),
        Footprint::Table {
            shown,
            bytes_per_shown,
        } => shape
            .solve_bytes(threads, false)
            .saturating_add(shown.min(&shape.levels).saturating_mul(*bytes_per_shown)),
        Footprint::Sweep {
            points,
            extra_per_level,
        } => {
            let p = (*points).max(1);
            let per_point = shape
                .kept_bytes(false)
                .saturating_add(shape.levels.saturating_mul(*extra_per_level));
            p.saturating_mul(per_point)
                .saturating_add(shape.sweep_transient_bytes(p, threads))
        }
        Footprint::Stream {
            points,
            in_flight,
            held_points,
            extra_per_level,
            per_level,
            buffer_bytes,
        } => {
            let held = (*in_flight).clamp(1, (*points).max(1));
            let records = (*held_points)
                .clamp(1, (*points).max(1))
                .saturating_mul(*extra_per_level)
                .saturating_add(*per_level)
                .saturating_mul(shape.levels);
            held.saturating_mul(shape.kept_bytes(false))
                .saturating_add(records)
                .saturating_add(*buffer_bytes)
                .saturating_add(shape.sweep_transient_bytes(held, threads))
        }
        Footprint::Optics {
            points,
            in_flight,
            held_points,
            transitions,
        } => {
            let live = (*in_flight).min(threads).min(*points).max(1);
            let per_solve = shape
                .kept_bytes(true)
                .saturating_add(shape.levels.saturating_mul(OPTICS_BYTES_PER_LEVEL));
            let held = (*held_points)
                .min(*points)
                .saturating_mul(*transitions)
                .saturating_mul(OPTICS_TRANSITION_BYTES);
            // a probe solve at the top field comes first and is dropped before the sweep
            live.saturating_mul(per_solve)
                .saturating_add(shape.sweep_transient_bytes(live, threads))
                .saturating_add(held)
        }
        Footprint::Export {
            entries,
            line_bytes,
        } => entries.saturating_mul(line_bytes.saturating_add(EXPORT_PARSED_BYTES)),
    };
    with_headroom(work).saturating_add(BASE_BYTES)
}

/// `bytes` plus 15%: the allocator's slack, page rounding and what the per-level constants
/// miss, measured as 3-12% depending on the model (`scripts/memcheck.sh`: 4-component models
/// with two classes of components need the most), so that the estimate stays above the peak.
fn with_headroom(bytes: u64) -> u64 {
    bytes.saturating_add(bytes / 20 * 3)
}

/// Estimated peak bytes of solves kept together, one per shape (a convergence study keeps the
/// spectrum of every cutoff): the sum of their results, the largest transient, and
/// [`BASE_BYTES`].
pub fn kept_together(shapes: &[SolveShape], threads: u64) -> u64 {
    let kept = shapes
        .iter()
        .fold(0u64, |acc, s| acc.saturating_add(s.kept_bytes(false)));
    let transient = shapes
        .iter()
        .map(|s| s.transient_bytes(threads.max(1)))
        .max()
        .unwrap_or(0);
    with_headroom(kept.saturating_add(transient)).saturating_add(BASE_BYTES)
}

/// [`kept_together`] plus the closed-form reference list of a study up to `largest` orbitals
/// (`closed_form`: whether the model has one).
pub fn study(shapes: &[SolveShape], largest: usize, closed_form: bool, threads: u64) -> u64 {
    let reference = if closed_form {
        let dim = shapes.first().map_or(1, |s| s.dim);
        (largest as u64)
            .saturating_mul(2)
            .saturating_add(8)
            .saturating_mul(dim)
            .saturating_mul(CLOSED_FORM_BYTES)
    } else {
        0
    };
    kept_together(shapes, threads).saturating_add(with_headroom(reference))
}

/// Bytes rounded up to MiB.
pub fn to_mib(bytes: u64) -> u64 {
    bytes.div_ceil(MIB)
}

/// The usual remedy of a refused solve.
pub const FIX_SOLVE: &str = "lower the cutoff, narrow the window, or raise the memory limit";

/// The remedy of a refused sweep (its points in flight, or every point when all are kept).
pub const FIX_SWEEP: &str = "lower the cutoff, use fewer points, or raise the memory limit";

/// Refuse work whose estimate (bytes) exceeds `limit_mib`.
///
/// # Errors
/// [`Error::MemoryLimit`] naming `what`, the estimate, the limit and `fix`.
pub fn check(what: &str, bytes: u64, limit_mib: u64, fix: &str) -> Result<()> {
    let needed_mib = to_mib(bytes);
    if needed_mib > limit_mib {
        return Err(Error::MemoryLimit {
            what: what.to_string(),
            needed_mib,
            limit_mib,
            fix: fix.to_string(),
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sectors::{ComponentClass, Conservation};

    fn class(components: Vec<usize>, shifts: Vec<i64>, modulus: u64) -> ComponentClass {
        ComponentClass {
            components,
            shifts,
            conservation: Conservation::from_modulus(modulus),
        }
    }

    #[test]
    fn closed_form_sizes_match_the_sector_plan() {
        use crate::sectors::SectorPlan;
        // exact, modular and no symmetry, each against the plan's own enumeration (small N)
        for (sym, n) in [
            (
                Symmetry {
                    classes: vec![class(vec![0, 1], vec![0, 1], 0)],
                },
                37,
            ),
            (
                Symmetry {
                    classes: vec![class(vec![0, 1, 2], vec![0, 1, 2], 3)],
                },
                41,
            ),
            (Symmetry::none(4), 23),
        ] {
            let shape = SolveShape::new(&sym, n, 1);
            let plan = SectorPlan::new(sym.clone(), n);
            let mut buf = Vec::new();
            let sizes: Vec<u64> = plan
                .sectors()
                .into_iter()
                .map(|id| {
                    plan.states(id, &mut buf);
                    buf.len() as u64
                })
                .collect();
            let max = sizes.iter().copied().max().unwrap_or(0);
            assert!(shape.largest_sector >= max, "{sym:?}");
            // the closed form counts every J value of a residue class as full: it may exceed
            // the largest sector by the partly filled J values at both ends (spread x |class|)
            let k = sym.classes[0].components.len() as u64;
            let spread = *sym.classes[0].shifts.iter().max().unwrap_or(&0) as u64;
            assert!(shape.largest_sector <= max + 2 * spread * k, "{sym:?}");
            assert_eq!(shape.levels, sizes.iter().sum::<u64>());
        }
    }

    #[test]
    fn a_huge_cutoff_saturates_instead_of_overflowing() {
        let sym = Symmetry::none(4);
        let shape = SolveShape::new(&sym, usize::MAX, 2);
        assert_eq!(
            estimate(&shape, &Footprint::Solve { vectors: true }, 2),
            u64::MAX
        );
        let err = check("a solve", u64::MAX, 4096, FIX_SOLVE).unwrap_err();
        assert!(err
            .to_string()
            .contains("above the memory limit of 4096 MiB"));
    }
}
