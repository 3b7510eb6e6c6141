//! One sector of a solve: build its matrix, diagonalise it (dense, or the window solver for a
//! large sector when only some levels are wanted), then turn each eigenpair into a [`Level`]
//! with its residual bound, weights and (Klein-Gordon form) both roots, and finally the
//! sector's Kato-Temple bounds and exact-J labels.
//!
//! # Formula
//! The residual bound of a level is r = sqrt(r_in^2 + r_out^2) + rounding + ||E_dropped||,
//! with r_in the in-space residual ||P H P v - lambda v||, r_out the leakage
//! ([`crate::hamiltonian::leakage`]), the rounding floor of the solver and the norm of the
//! cancelling terms dropped at assembly (Weyl's inequality).

use super::packed::Packed;
use super::{banded, bounds, cluster, dense, refine, window};
use super::{Target, Vectors, EXPLICIT_RESIDUAL_MAX_SECTOR, REFINE_MAX_SECTOR, WINDOW_MAX_LEVELS};
use crate::error::{Error, Result};
use crate::hamiltonian::{leakage, LadderHamiltonian};
use crate::levels::{kg_energy, Convergence, Level, LevelVector, Root};
use crate::model::SpectrumForm;
use crate::numeric::dd::DdComplex;
use crate::sectors::{SectorId, SectorPlan};
use nalgebra::DMatrix;
use num_complex::Complex64;
use std::sync::Mutex;

/// The tail of the basis for [`Level::tail_weight`]: the top 1/TAIL_DENOMINATOR of the orbitals.
const TAIL_DENOMINATOR: usize = 4;

/// Fraction of the tolerance that rounding may use before a level is refined: with the default
/// tolerance 1e-9 an unrefined level carries a rounding error below 1e-13 |E|.
const ROUNDING_SHARE: f64 = 1e-4;

/// Buffers of one chunk of sectors, reused from sector to sector (no heap allocation per
/// sector once their sizes fit).
pub(super) struct Scratch {
    states: Vec<(usize, usize)>,
    hs: DMatrix<Complex64>,
    eig: dense::DenseEigen,
    v: Vec<Complex64>,
    /// The levels of the sector being solved, before they are packed into the chunk.
    levels: Vec<Level>,
}

impl Scratch {
    pub(super) fn new() -> Self {
        Scratch {
            states: Vec::new(),
            hs: DMatrix::zeros(0, 0),
            eig: dense::DenseEigen {
                values: Vec::new(),
                vectors: None,
            },
            v: Vec::new(),
            levels: Vec::new(),
        }
    }
}

/// The levels of a chunk of sectors, with their weights (d per level) and vectors (if kept).
pub(super) struct SectorResult {
    /// The levels, packed ([`Packed`]), sector by sector in sector order.
    pub(super) levels: Vec<Packed>,
    /// The sectors that have levels, in the order of `sector_starts` ([`Packed::unpack`]).
    pub(super) sectors: Vec<SectorId>,
    pub(super) weights: Vec<f64>,
    /// Mean orbital index <n> per level, when the job keeps it (else empty).
    pub(super) mean_n: Vec<f64>,
    pub(super) vectors: Vec<LevelVector>,
    /// Index in `levels` of the first level of each solved sector that has levels, in sector
    /// order (the levels of one sector run from its start to the next one's). The gather lays
    /// out its sort keys by rank within the sector from these ([`super::gather`]).
    pub(super) sector_starts: Vec<u32>,
}

impl SectorResult {
    /// An empty result whose level and weight buffers hold `levels` levels of `dim` weights
    /// without regrowing.
    pub(super) fn with_capacity(levels: usize, dim: usize) -> Self {
        SectorResult {
            levels: Vec::with_capacity(levels),
            weights: Vec::with_capacity(levels * dim),
            mean_n: Vec::new(),
            vectors: Vec::new(),
            sectors: Vec::new(),
            sector_starts: Vec::new(),
        }
    }

    /// Empty every buffer, keeping their capacity.
    pub(super) fn clear(&mut self) {
        self.levels.clear();
        self.weights.clear();
        self.mean_n.clear();
        self.vectors.clear();
        self.sectors.clear();
        self.sector_starts.clear();
    }
}

/// When the double-double refinement runs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum RefinePolicy {
    Never,
    Always,
    /// Refine a level when the rounding error of a double solve, eps x ||H_s||, exceeds this
    /// fraction of tolerance x |E|.
    Adaptive(f64),
}

/// The non-zero spinor entries of the operators of a [`LadderHamiltonian`], grouped by
/// component pair (alpha, beta) in operator order, so that a sector matrix element visits only
/// the operators that couple its two components.
///
/// # Formula
/// H_(m alpha, n beta) = sum over operators a^dagger^j a^k with j - k = m - n of
/// A_jk[alpha, beta] <m| a^dagger^j a^k |n>, summed in operator order exactly as
/// [`LadderHamiltonian::element`] sums it (the same terms in the same order: the same bits).
pub(super) struct Couplings {
    dim: usize,
    /// Entries of pair (alpha, beta) are `entries[start[alpha d + beta]..start[alpha d + beta + 1]]`.
    start: Vec<usize>,
    /// (shift j - k, j, k, A_jk[alpha, beta]).
    entries: Vec<(i64, u32, u32, Complex64)>,
}

impl Couplings {
    /// The table of `h`.
    ///
    /// # Complexity
    /// O(ops d^2).
    pub(super) fn new(h: &LadderHamiltonian) -> Self {
        let d = h.dim;
        let mut start = Vec::with_capacity(d * d + 1);
        let mut entries = Vec::new();
        for alpha in 0..d {
            for beta in 0..d {
                start.push(entries.len());
                for op in &h.ops {
                    let a = op.matrix[(alpha, beta)];
                    if a.re != 0.0 || a.im != 0.0 {
                        entries.push((op.shift(), op.j, op.k, a));
                    }
                }
            }
        }
        start.push(entries.len());
        Couplings {
            dim: d,
            start,
            entries,
        }
    }

    /// H_(m alpha, n beta), bit for bit [`LadderHamiltonian::element`].
    #[inline]
    fn element(&self, m: usize, alpha: usize, n: usize, beta: usize) -> Complex64 {
        let pair = alpha * self.dim + beta;
        let shift = m as i64 - n as i64;
        let mut sum = Complex64::new(0.0, 0.0);
        for &(s, j, k, a) in &self.entries[self.start[pair]..self.start[pair + 1]] {
            if s == shift {
                sum += a * crate::ladder::ladder_element(j, k, n);
            }
        }
        sum
    }
}

/// What every sector of one solve shares.
pub(super) struct Job<'a> {
    pub(super) h: &'a LadderHamiltonian,
    /// The operators of `h` by component pair, for the sector matrices.
    pub(super) couplings: Couplings,
    pub(super) plan: &'a SectorPlan,
    pub(super) form: SpectrumForm,
    pub(super) reference: f64,
    pub(super) refine: RefinePolicy,
    pub(super) keep_vectors: bool,
    /// Keep <n> of every level ([`crate::problem::Character::Compute`]).
    pub(super) keep_mean_n: bool,
    /// Keep the d component weights of every level ([`crate::problem::Weights`]).
    pub(super) keep_weights: bool,
    /// Label the levels of exact sectors n = J (off where only energies are wanted).
    pub(super) labels: bool,
    pub(super) real: bool,
    /// Relative tolerance of the solve (also sets the cluster width of the artefact rotation).
    pub(super) tolerance: f64,
    pub(super) target: Target,
    pub(super) dense_max: usize,
    /// Norm of the cancelling terms dropped at assembly over the truncated space
    /// ([`LadderHamiltonian::dropped_norm`]).
    pub(super) dropped: f64,
    /// Window solutions of large sectors solved ahead, jointly over the sectors
    /// ([`Job::solve_windows_jointly`]); [`Job::diagonalise`] takes a sector's from here.
    /// With each, the norm bound of the sector's band matrix.
    pub(super) windows: Mutex<Vec<(SectorId, window::WindowSolution, f64)>>,
}

/// What the eigen-solve of a sector leaves besides the eigenpairs (in the scratch).
struct Diagonalised {
    /// Whether the dense sector matrix is in the scratch (for explicit residuals).
    have_hs: bool,
    /// ||H_s||_F (dense) or a bound on it (window).
    hs_norm: f64,
    /// The window solver's own residuals ||H v - lambda v||.
    window_residuals: Option<Vec<f64>>,
    /// Whether only a contiguous run of the sector's eigenvalues was computed.
    windowed: bool,
}

/// One eigenpair after refinement: the eigenvalue (double-double hi + lo) and its in-space
/// residual with its rounding floor.
struct Eigenpair {
    lam: f64,
    lam_lo: f64,
    in_res: f64,
    rounding: f64,
}

impl Job<'_> {
    /// Solve sector `id` and append its levels to `out`.
    pub(super) fn solve_sector(
        &self,
        id: SectorId,
        scratch: &mut Scratch,
        out: &mut SectorResult,
    ) -> Result<()> {
        self.plan.states(id, &mut scratch.states);
        if scratch.states.is_empty() {
            return Ok(());
        }
        let diag = self.prepare(id, scratch)?;
        self.finish_levels(id, scratch, &diag, out)
    }

    /// [`Job::solve_sector`], except that a sector whose every level lies outside the window
    /// `outside` (above `hi`, or below `lo` when `below_too`) is left out: its |E| are added
    /// to `mags` and `Ok(true)` returned, with no level in `out`. Only in the direct form and
    /// when no eigenvalue of the sector would be refined, so that the energies left out are
    /// bit for bit the levels' energies (the eigenvalues after the cluster rotation). A sector
    /// of one or two states with no state within the band of the cutoff is first solved for
    /// its eigenvalues only (the closed forms give the same bits with or without vectors, and
    /// the cluster rotation leaves such a sector alone), and for its vectors only when kept.
    pub(super) fn solve_sector_unless_outside(
        &self,
        id: SectorId,
        scratch: &mut Scratch,
        out: &mut SectorResult,
        (lo, hi, below_too): (f64, f64, bool),
        mags: &mut Vec<f64>,
    ) -> Result<bool> {
        self.plan.states(id, &mut scratch.states);
        if scratch.states.is_empty() {
            return Ok(false);
        }
        let s = scratch.states.len();
        let outside = |values: &[f64], diag: &Diagonalised| {
            self.form == SpectrumForm::Direct
                && !diag.windowed
                && values.iter().all(|&lam| {
                    (lam > hi || (below_too && lam < lo)) && !self.refines(s, diag.hs_norm, lam)
                })
        };
        // a sector of one or two states away from the cutoff: its eigenvalues first, without
        // vectors (the closed forms give the same values either way, and no cluster rotation
        // can move them: no state lies within the band of the cutoff)
        let band = self.h.band;
        let cutoff = self.plan.cutoff;
        if s <= 2 && scratch.states.iter().all(|&(n, _)| n + band < cutoff) {
            let diag = self.diagonalise(id, scratch, Vectors::Skip)?;
            if outside(&scratch.eig.values, &diag) {
                mags.extend(scratch.eig.values.iter().map(|lam| lam.abs()));
                return Ok(true);
            }
        }
        let diag = self.prepare(id, scratch)?;
        if outside(&scratch.eig.values, &diag) {
            mags.extend(scratch.eig.values.iter().map(|lam| lam.abs()));
            return Ok(true);
        }
        self.finish_levels(id, scratch, &diag, out)?;
        Ok(false)
    }

    /// Diagonalise the sector whose states are in the scratch and rotate its degenerate
    /// clusters so that cutoff artefacts separate (src/solve/cluster.rs).
    fn prepare(&self, id: SectorId, scratch: &mut Scratch) -> Result<Diagonalised> {
        let diag = self.diagonalise(id, scratch, Vectors::Compute)?;
        let Scratch { states, eig, .. } = scratch;
        if let Some(vectors) = eig.vectors.as_mut() {
            cluster::separate_leaking(
                self.h,
                self.plan.cutoff,
                states,
                &mut eig.values,
                vectors,
                self.tolerance,
            );
        }
        Ok(diag)
    }

    /// The levels of the prepared sector ([`Job::prepare`]) into `out`.
    fn finish_levels(
        &self,
        id: SectorId,
        scratch: &mut Scratch,
        diag: &Diagonalised,
        out: &mut SectorResult,
    ) -> Result<()> {
        let Scratch {
            states,
            hs,
            eig,
            v,
            levels,
        } = scratch;
        let states: &[(usize, usize)] = states;
        let vecs = eig.vectors.as_ref().ok_or_else(|| Error::Numerical {
            stage: "sector solve".into(),
            detail: "eigenvectors missing".into(),
        })?;
        levels.clear();
        for (i, &lam0) in eig.values.iter().enumerate() {
            v.clear();
            v.extend(vecs.column(i).iter().copied());
            let pair = self.eigenpair(states, hs, diag, i, lam0, v);
            self.push_levels(id, states, v, &pair, levels, out);
        }
        self.finish_sector(id, levels, diag.windowed);
        if !levels.is_empty() {
            // beyond 2^32 levels (or chunks) the gather refuses the solve before reading these
            out.sector_starts.push(out.levels.len() as u32);
            let sector = out.sectors.len() as u32;
            out.sectors.push(id);
            out.levels
                .extend(levels.iter().map(|l| Packed::pack(l, sector)));
        }
        Ok(())
    }

    /// Matrix element (r, c) of the sector over `states` (real part only for a real model).
    fn element(&self, states: &[(usize, usize)], r: usize, c: usize) -> Complex64 {
        let (m, a) = states[r];
        let (n, b) = states[c];
        let z = self.couplings.element(m, a, n, b);
        if self.real {
            Complex64::new(z.re, 0.0)
        } else {
            z
        }
    }

    /// Eigenvalues and eigenvectors of the sector into the scratch: the window solver for a
    /// sector larger than `dense_max` when only some levels are wanted, else a dense solve.
    fn diagonalise(
        &self,
        id: SectorId,
        scratch: &mut Scratch,
        vectors: Vectors,
    ) -> Result<Diagonalised> {
        let Scratch {
            states, hs, eig, ..
        } = scratch;
        let states: &[(usize, usize)] = states;
        let s = states.len();
        let element = |r: usize, c: usize| self.element(states, r, c);
        if s > self.dense_max && self.target != Target::All {
            let ahead = {
                let mut windows = self.windows.lock().unwrap_or_else(|e| e.into_inner());
                let at = windows.iter().position(|w| w.0 == id);
                at.map(|at| windows.swap_remove(at))
            };
            if let Some((_, w, hs_norm)) = ahead {
                let w = w.into_complex();
                eig.values = w.values;
                eig.vectors = Some(w.vectors);
                return Ok(Diagonalised {
                    have_hs: false,
                    hs_norm,
                    window_residuals: Some(w.residuals),
                    windowed: true,
                });
            }
            let banded = self.sector_banded(id, states)?;
            let w = match self.target {
                Target::Nearest { energy, count } => {
                    window::nearest(&banded, energy, count.min(s))?
                }
                Target::Window { lo, hi } => window::in_window(&banded, lo, hi, WINDOW_MAX_LEVELS)?,
                Target::All => unreachable!("the window path is only taken for a partial target"),
            };
            eig.values = w.values;
            eig.vectors = Some(w.vectors);
            return Ok(Diagonalised {
                have_hs: false,
                hs_norm: banded.norm_bound(),
                window_residuals: Some(w.residuals),
                windowed: true,
            });
        }
        // the sector matrix and the eigen-solve reuse the chunk's buffers when sizes fit
        if hs.shape() != (s, s) {
            *hs = DMatrix::zeros(s, s);
        }
        // the lower triangle from the couplings, the upper as its conjugate: the eigen-solve
        // reads the lower triangle only, and the residuals then use the same Hermitian matrix
        for c in 0..s {
            hs[(c, c)] = element(c, c);
            for r in c + 1..s {
                let z = element(r, c);
                hs[(r, c)] = z;
                hs[(c, r)] = z.conj();
            }
        }
        dense::eigh_into(hs, vectors, eig)?;
        Ok(Diagonalised {
            have_hs: true,
            hs_norm: hs.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt(),
            window_residuals: None,
            windowed: false,
        })
    }

    /// The band matrix of sector `id` over its `states`, for the window solver.
    fn sector_banded(
        &self,
        id: SectorId,
        states: &[(usize, usize)],
    ) -> Result<banded::BandedHermitian> {
        let s = states.len();
        let hbw = self.plan.half_bandwidth(id, self.h.band).min(s.max(1) - 1);
        banded::BandedHermitian::from_fn(s, hbw, |r, c| self.element(states, r, c))
    }

    /// For a [`Target::Nearest`] with two or more sectors on the window path (larger than
    /// `dense_max`): solve those sectors ahead by [`window::nearest_joint`], each asked for
    /// about its share of the count with a certified radius instead of the whole count, and
    /// keep the solutions for [`Job::diagonalise`]. Sectors of exact classes no larger than
    /// `dense_max` are not even listed. Does nothing for other targets.
    ///
    /// # Errors
    /// As [`window::nearest_joint`].
    ///
    /// # Complexity
    /// O(states) to list the sector sizes of inexact classes, then as
    /// [`window::nearest_joint`].
    pub(super) fn solve_windows_jointly(
        &mut self,
        ids: &[SectorId],
        branches: usize,
    ) -> Result<()> {
        let Target::Nearest { energy, count } = self.target else {
            return Ok(());
        };
        let mut large = Vec::new();
        let mut states = Vec::new();
        for &id in ids {
            let c = &self.plan.symmetry.classes[id.class];
            if c.conservation.is_exact() && c.components.len() * branches <= self.dense_max {
                continue;
            }
            self.plan.states(id, &mut states);
            if states.len() > self.dense_max {
                large.push((id, states.len()));
            }
        }
        if large.len() < 2 {
            return Ok(());
        }
        let sizes: Vec<usize> = large.iter().map(|l| l.1).collect();
        let total: usize = sizes.iter().sum();
        let norms = Mutex::new(vec![0.0; large.len()]);
        let build = |i: usize| {
            let mut states = Vec::new();
            self.plan.states(large[i].0, &mut states);
            let banded = self.sector_banded(large[i].0, &states)?;
            norms.lock().unwrap_or_else(|e| e.into_inner())[i] = banded.norm_bound();
            Ok(banded)
        };
        let solved = window::nearest_joint(&sizes, build, energy, count.min(total))?;
        let norms = norms.into_inner().unwrap_or_else(|e| e.into_inner());
        *self.windows.get_mut().unwrap_or_else(|e| e.into_inner()) = large
            .iter()
            .zip(solved)
            .zip(norms)
            .map(|((l, w), norm)| (l.0, w, norm))
            .collect();
        Ok(())
    }

    /// Whether eigenvalue `lam0` of a sector of `s` states with norm `hs_norm` is refined in
    /// double-double ([`RefinePolicy`]).
    fn refines(&self, s: usize, hs_norm: f64, lam0: f64) -> bool {
        s <= REFINE_MAX_SECTOR
            && match self.refine {
                RefinePolicy::Never => false,
                RefinePolicy::Always => true,
                RefinePolicy::Adaptive(tol) => {
                    f64::EPSILON * hs_norm > ROUNDING_SHARE * tol * lam0.abs()
                }
            }
    }

    /// The eigenpair `i` (value `lam0`, vector in `v`): refined in double-double when
    /// [`Job::refines`] (then `v` is replaced by the refined vector), with its in-space
    /// residual and rounding floor.
    fn eigenpair(
        &self,
        states: &[(usize, usize)],
        hs: &DMatrix<Complex64>,
        diag: &Diagonalised,
        i: usize,
        lam0: f64,
        v: &mut Vec<Complex64>,
    ) -> Eigenpair {
        let s = states.len();
        let hs_norm = diag.hs_norm;
        if self.refines(s, hs_norm, lam0) {
            let elem = |r: usize, c: usize| -> DdComplex {
                let (m, a) = states[r];
                let (n, b) = states[c];
                self.h.element_dd(m, a, n, b)
            };
            let rf = refine::refine(s, &elem, lam0, v, 4);
            v.clear();
            v.extend_from_slice(&rf.vector);
            let (lam, lam_lo) = (rf.value.hi, rf.value.lo);
            return Eigenpair {
                lam,
                lam_lo,
                in_res: rf.residual,
                // the residuals are themselves computed in floating point
                rounding: 2.0 * f64::EPSILON * (lam + lam_lo).abs()
                    + s as f64 * f64::EPSILON * f64::EPSILON * hs_norm,
            };
        }
        let in_res = if let Some(res) = &diag.window_residuals {
            // the window solver's own residual ||H v - lambda v||
            res[i]
        } else if s > EXPLICIT_RESIDUAL_MAX_SECTOR {
            // backward-stable dense solver: ||H v - lambda v|| = O(eps ||H||), covered by the
            // rounding floor below; an explicit residual would cost O(s^2) per level
            0.0
        } else {
            // in-space residual ||H v - lambda v||
            let mut acc = 0.0;
            if diag.have_hs {
                for r in 0..s {
                    let mut hv = Complex64::new(0.0, 0.0);
                    for c in 0..s {
                        hv += hs[(r, c)] * v[c];
                    }
                    acc += (hv - v[r] * lam0).norm_sqr();
                }
            }
            acc.sqrt()
        };
        Eigenpair {
            lam: lam0,
            lam_lo: 0.0,
            in_res,
            // backward-stable dense solvers: eigenvalue error of order eps ||H||_2 <= eps ||H||_F
            rounding: 4.0 * f64::EPSILON * hs_norm,
        }
    }

    /// Append the level(s) of one eigenpair to `levels` (the sector's) and its weights, <n>
    /// and vectors (as kept) to `out`: its weights, dominant state, top and tail weights,
    /// leakage and bound; one level (direct form) or both roots (Klein-Gordon).
    fn push_levels(
        &self,
        id: SectorId,
        states: &[(usize, usize)],
        v: &[Complex64],
        pair: &Eigenpair,
        levels: &mut Vec<Level>,
        out: &mut SectorResult,
    ) {
        let d = self.h.dim;
        let cutoff = self.plan.cutoff;
        let top_from = cutoff.saturating_sub(self.h.band.max(1));
        let tail_from = top_from.min(cutoff - cutoff / TAIL_DENOMINATOR);
        let out_res = leakage(self.h, cutoff, states, v);
        // the rounding residues of cancelling terms dropped at assembly (Weyl's
        // inequality: they move no eigenvalue by more than their norm)
        let r =
            (pair.in_res * pair.in_res + out_res * out_res).sqrt() + pair.rounding + self.dropped;
        let w0 = out.weights.len();
        let weights = if self.keep_weights {
            out.weights.resize(w0 + d, 0.0);
            Some(&mut out.weights[w0..])
        } else {
            None
        };
        let (best, top, tail, mean_n) = weigh(states, v, weights, top_from, tail_from);
        // one value per level pushed below: both roots of the Klein-Gordon form share it
        if self.keep_mean_n {
            let roots = match self.form {
                SpectrumForm::Direct => 1,
                SpectrumForm::KleinGordon { .. } => 2,
            };
            out.mean_n.extend(std::iter::repeat(mean_n).take(roots));
        }
        let base = Level {
            energy: 0.0,
            bound: 0.0,
            kato_temple: None,
            leakage: out_res,
            in_space_residual: pair.in_res + pair.rounding,
            convergence: Convergence::NotConverged,
            sector: id,
            orbital: best.1,
            component: best.2 as u32,
            branch: Root::Direct,
            label: crate::levels::LandauLabel::UNLABELLED,
            // single precision: a diagnostic weight, compared with ARTEFACT_TOP_WEIGHT
            top_weight: top as f32,
            tail_weight: tail as f32,
        };
        let lam_full = pair.lam + pair.lam_lo;
        let vector = || LevelVector {
            states: states.to_vec(),
            coeffs: v.to_vec(),
        };
        match self.form {
            SpectrumForm::Direct => {
                // lam is already relative to the reference (subtracted in assembly)
                levels.push(Level {
                    energy: lam_full,
                    bound: r,
                    ..base
                });
                if self.keep_vectors {
                    out.vectors.push(vector());
                }
            }
            SpectrumForm::KleinGordon { rest_energy } => {
                for branch in [Root::Particle, Root::Antiparticle] {
                    let e = kg_energy(lam_full, rest_energy, branch, self.reference);
                    let ep = kg_energy(lam_full + r, rest_energy, branch, self.reference);
                    let em = kg_energy(
                        (lam_full - r).max(-0.5 * rest_energy),
                        rest_energy,
                        branch,
                        self.reference,
                    );
                    let bound = (ep - e).abs().max((e - em).abs());
                    levels.push(Level {
                        energy: e,
                        bound,
                        branch,
                        ..base
                    });
                    if branch == Root::Antiparticle && self.keep_weights {
                        // the second branch shares the weights of the first
                        let w: Vec<f64> = out.weights[w0..w0 + d].to_vec();
                        out.weights.extend_from_slice(&w);
                    }
                    if self.keep_vectors {
                        out.vectors.push(vector());
                    }
                }
            }
        }
    }

    /// The sector's Kato-Temple bounds from its own neighbours (src/solve/bounds.rs) and, in an
    /// exact sector, its labels n = J (src/labelling/).
    fn finish_sector(&self, id: SectorId, levels: &mut [Level], windowed: bool) {
        let edges = if windowed {
            bounds::SectorEdges::Partial
        } else {
            bounds::SectorEdges::Complete
        };
        bounds::kato_temple_sector(levels, edges);
        if self.labels && self.plan.symmetry.classes[id.class].conservation.is_exact() {
            let family = self.plan.symmetry.classes[id.class].components[0];
            crate::labelling::label_exact_sector(levels, id.label, family as u32);
        }
    }
}

/// Add the component weights |v_(n alpha)|^2 of `v` over `states` into `weights` (d entries,
/// when given);
/// return the dominant state (weight, n, alpha), the weight on orbitals n >= `top_from`, the
/// weight on orbitals n >= `tail_from` and the mean orbital index
/// <n> = sum n |v_(n alpha)|^2 / sum |v_(n alpha)|^2.
fn weigh(
    states: &[(usize, usize)],
    v: &[Complex64],
    mut weights: Option<&mut [f64]>,
    top_from: usize,
    tail_from: usize,
) -> ((f64, usize, usize), f64, f64, f64) {
    let mut best = (0.0, 0usize, 0usize);
    let mut top = 0.0;
    let mut tail = 0.0;
    let mut norm = 0.0;
    let mut first_moment = 0.0;
    for (idx, &(n, a)) in states.iter().enumerate() {
        let p = v[idx].norm_sqr();
        if let Some(w) = weights.as_deref_mut() {
            w[a] += p;
        }
        norm += p;
        first_moment += n as f64 * p;
        if p > best.0 {
            best = (p, n, a);
        }
        if n >= top_from {
            top += p;
        }
        if n >= tail_from {
            tail += p;
        }
    }
    let mean_n = if norm > 0.0 { first_moment / norm } else { 0.0 };
    (best, top, tail, mean_n)
}
