//! The solver: sector by sector, in parallel, with labels and bounds.
//!
//! A solve starts from a [`Problem`] (src/problem.rs: validated inputs, the Hamiltonian
//! assembled once, the sector plan and the memory estimate); [`Spectrum::compute`] sets one up
//! and solves it. One sector's work is in `sector.rs` (matrix, eigen-solve, residual bounds,
//! Kato-Temple bounds of [`bounds`], the artefact rotation of [`cluster`]), the collection of
//! the levels in `gather.rs`.
//!
//! # Layering
//! Layer 4. The solver uses the set-up ([`crate::problem`], [`crate::memory`]), the
//! description layers, the level records ([`crate::levels`]) and the labels
//! ([`crate::labelling`]); it never uses [`crate::trust`], which drives it (one way).
//!
//! # Paths and complexity
//! * Exactly conserved J (e.g. 3+1 Dirac, 2D Dirac, Pauli): O(N) sectors of size s <= d, each a
//!   dense solve of O(d^3): total O(N d^3) time, O(N d) memory, rayon-parallel over sectors.
//! * J mod m conserved, or no symmetry: m (or 1) dense sectors of size s ~ N d / m, O(s^3) each
//!   ([`dense`]), or the window solver for sectors too large to diagonalise densely; for a
//!   [`Target::Nearest`] with several such sectors they are solved ahead by
//!   [`window::nearest_joint`], each asked for about its share of the count (certified by
//!   inertia counts at the joint radius) instead of the whole count.
//!
//! * Collecting the levels: 16-byte integer sort keys (energy then position) laid out rank by
//!   rank within the sectors, which for exact-J sectors makes a few long monotone runs: a merge
//!   of those runs, O(L log runs), else a parallel sort, O(L log L), for L levels; then one
//!   parallel gather of the levels and weights from the per-chunk buffers, with the
//!   convergence flags set on the way. Each level is written twice: packed in its chunk buffer
//!   (80 bytes, `sector::Packed`) and as a [`crate::levels::Level`] (112 bytes) in the final
//!   array, plus
//!   8 d bytes of weights each time when [`Weights::Compute`] is asked for (the default skips
//!   them).
//!
//! Measured (`tools/split_timing.rs`, 3+1 Dirac, N = 1e6 orbitals, 4e6 levels, before the
//! packed records and the run merge): on two free cores the whole split solve took about 1.5x a
//! single-threaded bare loop of 1e6 fixed-size 4x4 complex solves; on one core about 2.9x, of
//! which the sector eigen-solves are
//! about a fifth, the rest building the sector matrices, residuals, leakage, labels and
//! Kato-Temple bounds, and moving 4e6 levels through memory (page faults of fresh memory are a
//! large share on a virtual machine).
//!
//! Results do not depend on the thread count: each sector is solved independently, and the
//! sort key breaks energy ties by the position in sector order.

pub mod bounds;
pub mod cluster;
mod gather;
mod packed;
mod sector;

use crate::numeric::{banded, dense, refine, window};

use crate::error::Result;
use crate::hamiltonian::{FieldPoint, LadderHamiltonian};
use crate::levels::Spectrum;
use crate::model::Model;
pub use crate::problem::{
    Character, Precision, Problem, Reference, Settings, Splitting, Target, Weights,
    DENSE_MAX_DEFAULT, WINDOW_MAX_LEVELS,
};
pub use dense::Vectors;
use rayon::prelude::*;
use sector::{Job, RefinePolicy, Scratch, SectorResult};

/// Largest sector whose levels get an explicit in-space residual (larger ones rely on the
/// backward stability of the dense solver, O(eps ||H||), inside the rounding floor).
pub const EXPLICIT_RESIDUAL_MAX_SECTOR: usize = 64;

/// Largest sector that the double-double refinement handles.
pub const REFINE_MAX_SECTOR: usize = 16;

impl Spectrum {
    /// Compute the Landau-level spectrum of `model` at `point` with `settings`: set up the
    /// [`Problem`] (one assembly) and [`Spectrum::solve`] it.
    ///
    /// # Errors
    /// [`crate::Error::ZeroField`] for B = 0; [`crate::Error::CutoffTooSmall`] when the cutoff
    /// does not exceed the model's band; [`crate::Error::MemoryLimit`] when a dense sector
    /// would exceed the limit; [`crate::Error::BadNumber`] for an invalid tolerance or target.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::{models, FieldPoint, Settings, Spectrum};
    /// let model = models::schrodinger(models::MassParams { mass_ratio: 1.0, charge: -1.0 })?;
    /// let spec = Spectrum::compute(&model, FieldPoint::field(1.0), &Settings::with_cutoff(40))?;
    /// // hbar omega_c / 2 for a free electron at 1 T: 0.05788 meV (CODATA 2018: 2 mu_B B / 2)
    /// assert!((spec.levels[0].energy - 0.057_883_8).abs() < 1e-6);
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn compute(model: &Model, point: FieldPoint, settings: &Settings) -> Result<Spectrum> {
        Spectrum::solve(&Problem::new(model, point, settings)?)
    }

    /// Solve a set-up [`Problem`]: refuse it first when its memory estimate exceeds the limit
    /// ([`Problem::check_memory`], before anything is allocated), then solve every sector in
    /// parallel, collect the levels in ascending order and label them.
    ///
    /// # Errors
    /// [`crate::Error::MemoryLimit`]; any error of a sector's eigen-solve or of the labelling.
    pub fn solve(problem: &Problem<'_>) -> Result<Spectrum> {
        let mut spectrum = Spectrum::solve_unlabelled(problem)?;
        label(problem, &mut spectrum)?;
        Ok(spectrum)
    }

    /// [`Spectrum::solve`] without the labels that need the whole spectrum (the families
    /// joined across a kz = 0 split and the continued labels): energies, bounds, convergence
    /// flags and weights are the same. For consumers that only count levels, such as the kz
    /// integrals of `observables::volume`.
    ///
    /// # Errors
    /// As [`Spectrum::solve`].
    pub fn solve_unlabelled(problem: &Problem<'_>) -> Result<Spectrum> {
        problem.check_memory()?;
        let settings = problem.settings();
        let h = problem.hamiltonian();
        let parts = solve_sectors(problem)?;
        let g = gather::gather(
            parts,
            h.dim,
            settings.target,
            settings.tolerance,
            (settings.vectors, settings.character, settings.weights),
            settings.memory_limit_mib,
        )?;
        let model = problem.model();
        let spectrum = Spectrum {
            model: model.name().to_string(),
            units: model.units(),
            point: problem.point(),
            cutoff: settings.cutoff,
            dim: h.dim,
            reference_energy: problem.reference(),
            magnetic_length: h.magnetic_length,
            symmetry: problem.plan().symmetry.clone(),
            tolerance: settings.tolerance,
            energy_scale: g.energy_scale,
            levels: g.levels,
            weights: g.weights,
            mean_n: g.mean_n,
            vectors: g.vectors,
        };
        Ok(spectrum)
    }
}

/// When the double-double refinement runs, from [`Settings::precision`]: adaptive only when
/// the assembly subtracted a non-zero reference (levels near a rest energy).
fn refine_policy(problem: &Problem<'_>) -> RefinePolicy {
    let settings = problem.settings();
    match settings.precision {
        Precision::Double => RefinePolicy::Never,
        Precision::Extended => RefinePolicy::Always,
        Precision::Auto if problem.assembly_reference() != 0.0 => {
            RefinePolicy::Adaptive(settings.tolerance)
        }
        Precision::Auto => RefinePolicy::Never,
    }
}

/// [`job`] for the lean energy-only solves: no vectors, <n>, weights or labels.
fn lean_job<'a>(problem: &'a Problem<'_>) -> Job<'a> {
    Job {
        keep_vectors: false,
        keep_mean_n: false,
        keep_weights: false,
        labels: false,
        ..job(problem)
    }
}

/// What every sector of `problem` shares (the per-sector work of `sector.rs`).
fn job<'a>(problem: &'a Problem<'_>) -> Job<'a> {
    let settings = problem.settings();
    let h = problem.hamiltonian();
    let plan = problem.plan();
    Job {
        h,
        couplings: sector::Couplings::new(h),
        plan,
        form: problem.model().form(),
        reference: problem.reference(),
        refine: refine_policy(problem),
        keep_vectors: settings.vectors == Vectors::Compute,
        keep_mean_n: settings.character == crate::problem::Character::Compute,
        keep_weights: settings.weights == Weights::Compute,
        labels: true,
        real: h.is_real(),
        tolerance: settings.tolerance,
        target: settings.target,
        dense_max: settings.dense_max,
        dropped: h.dropped_norm(plan.cutoff),
        windows: std::sync::Mutex::new(Vec::new()),
    }
}

/// Buffers of [`converged_energies`], reused from call to call on one thread (the sector
/// matrix, the eigen-solve's output, the levels of one solve and the magnitudes of the energy
/// scale): after the first call at a given cutoff no solve allocates.
pub struct LeanBuffers {
    scratch: Scratch,
    acc: SectorResult,
    mags: Vec<f64>,
    /// The sectors [`converged_energies_near`] left out.
    left_out: Vec<crate::sectors::SectorId>,
}

impl Default for LeanBuffers {
    fn default() -> Self {
        LeanBuffers {
            scratch: Scratch::new(),
            acc: SectorResult::with_capacity(0, 0),
            mags: Vec::new(),
            left_out: Vec::new(),
        }
    }
}

/// The energies (relative to the reference) of the converged levels of `problem`, ascending,
/// written into `out`: the same levels, bounds and convergence flags as
/// [`Spectrum::solve_unlabelled`] followed by [`Spectrum::converged`], without the level
/// records, weights, vectors and labels across sectors, on the calling thread only, in the
/// reused `buffers`. For callers that solve many points in parallel and only count levels
/// (the kz integrals of `observables::volume`). A partial [`Target`] takes the full path.
///
/// # Formula
/// A level is converged when its deciding bound is at most tolerance x max(|E|, scale), with
/// the energy scale of [`crate::levels::energy_scale`] over all levels of the solve
/// ([`crate::levels::Level::convergence_at`]).
///
/// # Errors
/// As [`Spectrum::solve`].
///
/// # Complexity
/// As the sector solves of [`Spectrum::solve`] (O(N d^3) for exact-J sectors), sequential;
/// then O(L log L) for the sort of the L converged energies.
pub fn converged_energies(
    problem: &Problem<'_>,
    buffers: &mut LeanBuffers,
    out: &mut Vec<f64>,
) -> Result<()> {
    converged_energies_unsorted(problem, buffers, out)?;
    out.sort_unstable_by(f64::total_cmp);
    Ok(())
}

/// [`converged_energies`] without the final sort: the same energies in sector order (for a
/// caller that only sorts the few it keeps, as the kz sheets of `observables::volume` do).
///
/// # Errors
/// As [`Spectrum::solve`].
///
/// # Complexity
/// As the sector solves of [`Spectrum::solve`], sequential; no sort.
pub fn converged_energies_unsorted(
    problem: &Problem<'_>,
    buffers: &mut LeanBuffers,
    out: &mut Vec<f64>,
) -> Result<()> {
    out.clear();
    if problem.settings().target != Target::All {
        let s = Spectrum::solve_unlabelled(problem)?;
        out.extend(s.converged().map(|l| l.energy));
        return Ok(());
    }
    problem.check_memory()?;
    let job = lean_job(problem);
    let LeanBuffers {
        scratch, acc, mags, ..
    } = buffers;
    acc.clear();
    for id in problem.plan().sectors() {
        job.solve_sector(id, scratch, acc)?;
    }
    mags.clear();
    let scale = lean_energy_scale(problem, acc, mags);
    push_converged(out, &acc.levels, problem.settings().tolerance, scale);
    Ok(())
}

/// The energies of the converged levels of `problem` that a kz sheet of
/// `observables::volume` needs, unsorted, written into `out`: those of
/// [`converged_energies_unsorted`] (the same solves, bounds, energy scale and convergence
/// flags), except the levels of sectors that lie wholly above `hi`, or, when `below_too`,
/// wholly below `lo` (every eigenvalue outside, direct form, none refined): such a sector is
/// diagonalised for its energies (which enter the energy scale as before) but gets no
/// bounds, and its levels are left out. While the levels kept hold no converged level at or
/// above `hi` (or, with `below_too`, at or below `lo`), the sectors left out are solved in
/// full one by one in plan order and their converged levels added, so that a sheet's check
/// that its levels cover [lo, hi] gets the same answer as with every level.
///
/// # Formula
/// A level is converged as in [`converged_energies`]. A sheet counts a converged level
/// outside [lo, hi] only through 1 - f below and -f above, with f the filled fraction at
/// neutrality, which is 1 below and 0 above when the neutrality lies inside [lo, hi] (as
/// `observables::volume` pads it), and 0 above for a band empty at neutrality (there
/// `below_too` must be false): the levels left out add zero, converged or not.
///
/// # Errors
/// As [`Spectrum::solve`].
///
/// # Complexity
/// The eigen-solve of every sector (O(N d^3) for exact-J sectors), sequential; the residuals,
/// leakage and Kato-Temple bounds only of the sectors with a level inside [lo, hi].
pub fn converged_energies_near(
    problem: &Problem<'_>,
    buffers: &mut LeanBuffers,
    out: &mut Vec<f64>,
    (lo, hi): (f64, f64),
    below_too: bool,
) -> Result<()> {
    if problem.settings().target != Target::All {
        return converged_energies_unsorted(problem, buffers, out);
    }
    out.clear();
    problem.check_memory()?;
    let job = lean_job(problem);
    let LeanBuffers {
        scratch,
        acc,
        mags,
        left_out,
    } = buffers;
    acc.clear();
    mags.clear();
    left_out.clear();
    for id in problem.plan().sectors() {
        if job.solve_sector_unless_outside(id, scratch, acc, (lo, hi, below_too), mags)? {
            left_out.push(id);
        }
    }
    // over every level, those left out included (their energies are in `mags` already)
    let scale = lean_energy_scale(problem, acc, mags);
    let tolerance = problem.settings().tolerance;
    push_converged(out, &acc.levels, tolerance, scale);
    let covered =
        |out: &[f64]| out.iter().any(|&e| e >= hi) && (!below_too || out.iter().any(|&e| e <= lo));
    // the sectors left out, in plan order, until the levels kept reach beyond the window
    // (one or two sectors next to the window when the levels there are converged)
    for &id in left_out.iter() {
        if covered(out) {
            break;
        }
        let from = acc.levels.len();
        job.solve_sector(id, scratch, acc)?;
        push_converged(out, &acc.levels[from..], tolerance, scale);
    }
    Ok(())
}

/// The energy scale of `gather` (the median of the non-zero |E| among the 2d+1 smallest) over
/// the levels of `acc` and the magnitudes already in `mags`.
fn lean_energy_scale(problem: &Problem<'_>, acc: &SectorResult, mags: &mut Vec<f64>) -> f64 {
    mags.extend(acc.levels.iter().map(|l| l.energy.abs()));
    let d = problem.hamiltonian().dim;
    crate::levels::median_of_smallest_nonzero(mags, 2 * d + 1).unwrap_or(1.0)
}

/// Append the energies of the converged levels of `levels` to `out`.
fn push_converged(out: &mut Vec<f64>, levels: &[packed::Packed], tolerance: f64, scale: f64) {
    out.extend(
        levels
            .iter()
            .filter(|l| l.converged(tolerance, scale))
            .map(|l| l.energy),
    );
}

/// Solve every sector of the problem's plan, rayon-parallel over chunks of sectors.
fn solve_sectors(problem: &Problem<'_>) -> Result<Vec<SectorResult>> {
    let h = problem.hamiltonian();
    let plan = problem.plan();
    let ids = plan.sectors();
    let mut job = job(problem);
    let branches = problem.shape().branches as usize;
    job.solve_windows_jointly(&ids, branches)?;
    // many small sectors: chunks amortise the scheduling; few large ones: one per task
    let chunk = (ids.len() / (8 * rayon::current_num_threads())).clamp(1, 512);
    ids.par_chunks(chunk)
        .map(|chunk_ids| {
            let mut scratch = Scratch::new();
            // exact-J sectors hold at most one state per component: reserve for them, so
            // the chunk's vectors never regrow (regrowth copies into fresh pages)
            let expected: usize = chunk_ids
                .iter()
                .map(|id| {
                    let c = &plan.symmetry.classes[id.class];
                    if c.conservation.is_exact() {
                        c.components.len() * branches
                    } else {
                        0
                    }
                })
                .sum();
            let d = if job.keep_weights { h.dim } else { 0 };
            let mut acc = SectorResult::with_capacity(expected, d);
            acc.sector_starts.reserve(chunk_ids.len());
            acc.sectors.reserve(chunk_ids.len());
            for &id in chunk_ids {
                job.solve_sector(id, &mut scratch, &mut acc)?;
            }
            Ok(acc)
        })
        .collect()
}

/// Labels that need the whole spectrum (src/labelling/): the families of a kz = 0 split
/// joined as at a generic kz, and continued labels where only J mod m (or nothing) is
/// conserved. Exact sectors were labelled sector by sector.
fn label(problem: &Problem<'_>, spectrum: &mut Spectrum) -> Result<()> {
    let settings = problem.settings();
    let h = problem.hamiltonian();
    let depends_on_kz = problem.model().terms().iter().any(|t| t.monomial.kz > 0);
    if settings.splitting == Splitting::Auto && settings.target == Target::All && depends_on_kz {
        // a kz = 0 split must not change the labels; the offset is an arbitrary irrational
        // multiple of 1/l_B so that no coupling vanishes by accident. This second assembly is
        // at another kz and only feeds the symmetry of the label families; a model without kz
        // terms has the same couplings at every kz and needs none.
        let point = problem.point();
        let generic = FieldPoint {
            kz: point.kz + std::f64::consts::FRAC_1_SQRT_2 / h.magnetic_length,
            ..point
        };
        let hg =
            LadderHamiltonian::assemble(problem.model(), generic, problem.assembly_reference())?;
        crate::labelling::join_kz_families(&hg, spectrum);
    }
    if settings.splitting == Splitting::Auto {
        crate::labelling::continue_labels(h, problem.model().form(), spectrum)?;
    }
    Ok(())
}
