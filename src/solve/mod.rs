//! The solver: sector by sector, in parallel, with labels and bounds.
//!
//! # Paths and complexity
//! * Exactly conserved J (e.g. 3+1 Dirac, 2D Dirac, Pauli): O(N) sectors of size s <= d, each a
//!   dense solve of O(d^3): total O(N d^3) time, O(N d) memory, rayon-parallel over sectors.
//! * J mod m conserved, or no symmetry: m (or 1) dense sectors of size s ~ N d / m, O(s^3) each
//!   ([`dense`]), or the window solver for sectors too large to diagonalise densely.
//!
//! * Collecting the levels: O(L log L) for L levels (a parallel sort of 16-byte integer keys,
//!   energy then position), then one parallel gather of the levels and weights from the
//!   per-chunk buffers, with the convergence flags set on the way. Each level is written twice
//!   (chunk buffer, final array), about 2 x (96 + 8 d) bytes plus a 16-byte key.
//!
//! Measured (`tools/split_timing.rs`, 3+1 Dirac, N = 1e6 orbitals, 4e6 levels): on two
//! free cores the whole split solve takes about 1.5x a single-threaded bare loop of 1e6
//! fixed-size 4x4 complex solves; on one core about 2.9x, of which the sector eigen-solves are
//! about a fifth, the rest building the sector matrices, residuals, leakage, labels and
//! Kato-Temple bounds, and moving 4e6 levels through memory (page faults of fresh memory are a
//! large share on a virtual machine).
//!
//! Results do not depend on the thread count: each sector is solved independently, and the
//! sort key breaks energy ties by the position in sector order.

use crate::error::{Error, Result};
use crate::hamiltonian::{FieldPoint, LadderHamiltonian};
use crate::ladder::ladder_element;
use crate::levels::{Convergence, Level, LevelVector, Spectrum};
use crate::model::{Model, SpectrumForm};
use crate::numeric::dd::DdComplex;
use crate::numeric::{banded, dense, refine, window};
use crate::policy::{DENSE_MAX_DEFAULT, WINDOW_MAX_LEVELS};
use crate::sectors::{SectorId, SectorPlan, Symmetry};
use crate::trust::bounds::{kato_temple_sector, SectorEdges};
pub use dense::Vectors;
use nalgebra::DMatrix;
use num_complex::Complex64;
use rayon::prelude::*;

/// Which energy the levels are reported relative to.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Reference {
    /// The model's own reference energy (m c^2 for the relativistic models, else 0).
    #[default]
    Model,
    /// Zero: absolute energies.
    Zero,
    /// A given energy in the model's unit.
    Energy(f64),
}

/// Whether to split the basis by the conserved quantity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Splitting {
    /// Detect the conserved quantity and split (the fast path).
    #[default]
    Auto,
    /// One sector holding everything (the dense oracle).
    Off,
}

/// Arithmetic used for the eigenvalues.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Precision {
    /// When the reference energy is non-zero (levels near a rest energy), refine a level of a
    /// small sector in double-double whenever the rounding error of the double solve,
    /// eps x ||H_sector||, could exceed 1e-4 x tolerance x |E|; plain double otherwise.
    #[default]
    Auto,
    /// Plain double precision.
    Double,
    /// Always refine small sectors (size <= [`REFINE_MAX_SECTOR`]) in double-double.
    Extended,
}

/// Fewest levels one task of the final gather handles: small spectra (one point of a sweep,
/// where the points already run in parallel) are gathered without splitting.
const GATHER_GRAIN: usize = 1 << 14;

/// Largest sector whose levels get an explicit in-space residual (larger ones rely on the
/// backward stability of the dense solver, O(eps ||H||), inside the rounding floor).
pub const EXPLICIT_RESIDUAL_MAX_SECTOR: usize = 64;

/// Largest sector that the double-double refinement handles.
pub const REFINE_MAX_SECTOR: usize = 16;

/// Settings of a solve. `Settings::with_cutoff(N)` gives good defaults.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// Orbital cutoff N: orbitals n = 0..N-1 for every component.
    pub cutoff: usize,
    /// Reference energy for the reported levels.
    pub reference: Reference,
    /// Splitting by the conserved quantity.
    pub splitting: Splitting,
    /// Keep eigenvectors in the result.
    pub vectors: Vectors,
    /// Relative tolerance for the convergence flags: a level is converged when its bound is at
    /// most `tolerance x max(|E|, energy scale)`.
    pub tolerance: f64,
    /// Arithmetic of the eigenvalues.
    pub precision: Precision,
    /// Memory limit in MiB of one solve ([`crate::memory`]): the solve refuses beyond it.
    pub memory_limit_mib: u64,
    /// Which levels are wanted: all, an energy window, or the levels nearest an energy.
    pub target: Target,
    /// Sectors larger than this (states) use the window solver when `target` is not
    /// [`Target::All`]; smaller ones are diagonalised densely and then filtered.
    pub dense_max: usize,
}

/// Which levels a solve returns. Energies are relative to the reference energy, in the model's
/// energy unit.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Target {
    /// Every eigenvalue of the truncated problem.
    #[default]
    All,
    /// The levels with lo <= E <= hi.
    Window {
        /// Lower end.
        lo: f64,
        /// Upper end.
        hi: f64,
    },
    /// The `count` levels nearest `energy`.
    Nearest {
        /// Target energy.
        energy: f64,
        /// How many levels.
        count: usize,
    },
}

impl Settings {
    /// Defaults with the given cutoff: split, model reference, no vectors, tolerance 1e-9,
    /// automatic precision, 4096 MiB.
    pub fn with_cutoff(cutoff: usize) -> Self {
        Settings {
            cutoff,
            reference: Reference::Model,
            splitting: Splitting::Auto,
            vectors: Vectors::Skip,
            tolerance: crate::policy::DEFAULT_TOLERANCE,
            precision: Precision::Auto,
            memory_limit_mib: crate::policy::DEFAULT_MEMORY_LIMIT_MIB,
            target: Target::All,
            dense_max: DENSE_MAX_DEFAULT,
        }
    }
}

impl Default for Settings {
    fn default() -> Self {
        Settings::with_cutoff(crate::policy::DEFAULT_CUTOFF)
    }
}

/// The untruncated part of a level that the truncated basis cannot see: the exact norm of the
/// components of H v beyond orbital N-1.
///
/// # Formula
/// r_out^2 = sum over m >= N and alpha of |sum_(n < N, beta) H_(m alpha, n beta) v_(n beta)|^2,
/// where only states with n >= N - band contribute.
pub fn leakage(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    v: &[Complex64],
) -> f64 {
    let mut buckets: Vec<((usize, usize), Complex64)> = Vec::new();
    for_each_outside(h, cutoff, states, v, |key, val| {
        match buckets.iter_mut().find(|(k, _)| *k == key) {
            Some((_, acc)) => *acc += val,
            None => buckets.push((key, val)),
        }
    });
    buckets
        .iter()
        .map(|(_, z)| z.norm_sqr())
        .sum::<f64>()
        .sqrt()
}

/// Visit every contribution H_(m alpha, n beta) v_(n beta) with m >= N (the part of H v beyond
/// the cutoff) as `(key (m, alpha), value)`; keys repeat and must be summed by the caller.
pub fn for_each_outside(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    v: &[Complex64],
    mut visit: impl FnMut((usize, usize), Complex64),
) {
    for (idx, &(n, beta)) in states.iter().enumerate() {
        if n + h.band < cutoff {
            continue;
        }
        for op in &h.ops {
            let shift = op.shift();
            if shift <= 0 {
                continue;
            }
            let m = n + shift as usize;
            if m < cutoff {
                continue;
            }
            let f = ladder_element(op.j, op.k, n);
            for alpha in 0..h.dim {
                let a = op.matrix[(alpha, beta)];
                if a.re == 0.0 && a.im == 0.0 {
                    continue;
                }
                visit((m, alpha), a * f * v[idx]);
            }
        }
    }
}

/// Buffers of one chunk of sectors, reused from sector to sector (no heap allocation per
/// sector once their sizes fit).
struct Scratch {
    states: Vec<(usize, usize)>,
    hs: DMatrix<Complex64>,
    eig: dense::DenseEigen,
    v: Vec<Complex64>,
}

struct SectorResult {
    levels: Vec<Level>,
    weights: Vec<f64>,
    vectors: Vec<LevelVector>,
}

/// When the double-double refinement runs.
#[derive(Debug, Clone, Copy, PartialEq)]
enum RefinePolicy {
    Never,
    Always,
    /// Refine a level when the rounding error of a double solve, eps x ||H_s||, exceeds this
    /// fraction of tolerance x |E|.
    Adaptive(f64),
}

/// Fraction of the tolerance that rounding may use before a level is refined: with the default
/// tolerance 1e-9 an unrefined level carries a rounding error below 1e-13 |E|.
const ROUNDING_SHARE: f64 = 1e-4;

struct Job<'a> {
    h: &'a LadderHamiltonian,
    plan: &'a SectorPlan,
    form: SpectrumForm,
    reference: f64,
    refine: RefinePolicy,
    keep_vectors: bool,
    real: bool,
    /// Relative tolerance of the solve (also sets the cluster width of the artefact rotation).
    tolerance: f64,
    target: Target,
    dense_max: usize,
}

impl Job<'_> {
    fn solve_sector(
        &self,
        id: SectorId,
        scratch: &mut Scratch,
        out: &mut SectorResult,
    ) -> Result<()> {
        let Scratch { states, hs, eig, v } = scratch;
        self.plan.states(id, states);
        let states: &[(usize, usize)] = states;
        let s = states.len();
        let d = self.h.dim;
        let cutoff = self.plan.cutoff;
        if s == 0 {
            return Ok(());
        }
        let element = |r: usize, c: usize| -> Complex64 {
            let (m, a) = states[r];
            let (n, b) = states[c];
            let z = self.h.element(m, a, n, b);
            if self.real {
                Complex64::new(z.re, 0.0)
            } else {
                z
            }
        };
        let windowed = s > self.dense_max && self.target != Target::All;
        let (have_hs, hs_norm, window_residuals) = if windowed {
            let hbw = self.plan.half_bandwidth(id, self.h.band).min(s - 1);
            let banded = banded::BandedHermitian::from_fn(s, hbw, element)?;
            let w = match self.target {
                Target::Nearest { energy, count } => {
                    window::nearest(&banded, energy, count.min(s))?
                }
                Target::Window { lo, hi } => window::in_window(&banded, lo, hi, WINDOW_MAX_LEVELS)?,
                Target::All => unreachable!("the window path is only taken for a partial target"),
            };
            let norm = banded.norm_bound();
            eig.values = w.values;
            eig.vectors = Some(w.vectors);
            (false, norm, Some(w.residuals))
        } else {
            // the sector matrix and the eigen-solve reuse the chunk's buffers when sizes fit
            if hs.shape() != (s, s) {
                *hs = DMatrix::zeros(s, s);
            }
            for c in 0..s {
                for r in 0..s {
                    hs[(r, c)] = element(r, c);
                }
            }
            dense::eigh_into(hs, Vectors::Compute, eig)?;
            let norm = hs.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt();
            (true, norm, None)
        };
        // trust: rotate degenerate clusters so cutoff artefacts separate (src/trust/cluster.rs)
        if let Some(vectors) = eig.vectors.as_mut() {
            crate::trust::cluster::separate_leaking(
                self.h,
                cutoff,
                states,
                &mut eig.values,
                vectors,
                self.tolerance,
            );
        }
        let vecs = eig.vectors.as_ref().ok_or_else(|| Error::Numerical {
            stage: "sector solve".into(),
            detail: "eigenvectors missing".into(),
        })?;
        let top_from = cutoff.saturating_sub(self.h.band.max(1));
        let dropped = self.h.dropped_norm(cutoff);
        let tail_from = top_from.min(cutoff - cutoff / TAIL_DENOMINATOR);
        let first_level = out.levels.len();
        for (i, &lam0) in eig.values.iter().enumerate() {
            v.clear();
            v.extend(vecs.column(i).iter().copied());
            let mut lam = lam0;
            let mut lam_lo = 0.0;
            let in_res;
            let refine_this = s <= REFINE_MAX_SECTOR
                && match self.refine {
                    RefinePolicy::Never => false,
                    RefinePolicy::Always => true,
                    RefinePolicy::Adaptive(tol) => {
                        f64::EPSILON * hs_norm > ROUNDING_SHARE * tol * lam0.abs()
                    }
                };
            if refine_this {
                let elem = |r: usize, c: usize| -> DdComplex {
                    let (m, a) = states[r];
                    let (n, b) = states[c];
                    self.h.element_dd(m, a, n, b)
                };
                let rf = refine::refine(s, &elem, lam0, v, 4);
                lam = rf.value.hi;
                lam_lo = rf.value.lo;
                v.clear();
                v.extend_from_slice(&rf.vector);
                in_res = rf.residual;
            } else if let Some(res) = &window_residuals {
                // the window solver's own residual ||H v - lambda v||
                in_res = res[i];
            } else if s > EXPLICIT_RESIDUAL_MAX_SECTOR {
                // backward-stable dense solver: ||H v - lambda v|| = O(eps ||H||), covered by the
                // rounding floor below; an explicit residual would cost O(s^2) per level
                in_res = 0.0;
            } else {
                // in-space residual ||H v - lambda v||
                let mut acc = 0.0;
                if have_hs {
                    for r in 0..s {
                        let mut hv = Complex64::new(0.0, 0.0);
                        for c in 0..s {
                            hv += hs[(r, c)] * v[c];
                        }
                        acc += (hv - v[r] * lam0).norm_sqr();
                    }
                }
                in_res = acc.sqrt();
            }
            let out_res = leakage(self.h, cutoff, states, v);
            // rounding floor: the residuals above are themselves computed in floating point
            let rounding = if refine_this {
                2.0 * f64::EPSILON * (lam + lam_lo).abs()
                    + s as f64 * f64::EPSILON * f64::EPSILON * hs_norm
            } else {
                // backward-stable dense solvers: eigenvalue error of order eps ||H||_2 <= eps ||H||_F
                4.0 * f64::EPSILON * hs_norm
            };
            // the rounding residues of cancelling terms dropped at assembly (Weyl's
            // inequality: they move no eigenvalue by more than their norm)
            let r = (in_res * in_res + out_res * out_res).sqrt() + rounding + dropped;
            let w0 = out.weights.len();
            out.weights.resize(w0 + d, 0.0);
            let mut best = (0.0, 0usize, 0usize);
            let mut top = 0.0;
            let mut tail = 0.0;
            for (idx, &(n, a)) in states.iter().enumerate() {
                let p = v[idx].norm_sqr();
                out.weights[w0 + a] += p;
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
            let base = Level {
                energy: 0.0,
                bound: 0.0,
                kato_temple: None,
                leakage: out_res,
                in_space_residual: in_res + rounding,
                convergence: Convergence::NotConverged,
                sector: id,
                orbital: best.1,
                component: best.2,
                branch: 0,
                label: crate::levels::LandauLabel::UNLABELLED,
                top_weight: top,
                tail_weight: tail,
            };
            match self.form {
                SpectrumForm::Direct => {
                    // lam is already relative to the reference (subtracted in assembly)
                    out.levels.push(Level {
                        energy: lam + lam_lo,
                        bound: r,
                        ..base
                    });
                    if self.keep_vectors {
                        out.vectors.push(LevelVector {
                            states: states.to_vec(),
                            coeffs: v.clone(),
                        });
                    }
                }
                SpectrumForm::KleinGordon { rest_energy } => {
                    let lam_full = lam + lam_lo;
                    for branch in [1i8, -1] {
                        let e = kg_energy(lam_full, rest_energy, branch, self.reference);
                        let ep = kg_energy(lam_full + r, rest_energy, branch, self.reference);
                        let em = kg_energy(
                            (lam_full - r).max(-0.5 * rest_energy),
                            rest_energy,
                            branch,
                            self.reference,
                        );
                        let bound = (ep - e).abs().max((e - em).abs());
                        out.levels.push(Level {
                            energy: e,
                            bound,
                            branch,
                            ..base
                        });
                        if branch == -1 {
                            // the second branch shares the weights of the first
                            let w: Vec<f64> = out.weights[w0..w0 + d].to_vec();
                            out.weights.extend_from_slice(&w);
                        }
                        if self.keep_vectors {
                            out.vectors.push(LevelVector {
                                states: states.to_vec(),
                                coeffs: v.clone(),
                            });
                        }
                    }
                }
            }
        }
        // trust: Kato-Temple bounds from this sector's own neighbours (src/trust/bounds.rs)
        let edges = if windowed {
            SectorEdges::Partial
        } else {
            SectorEdges::Complete
        };
        kato_temple_sector(&mut out.levels[first_level..], edges);
        // quantum numbers: n = J in an exact sector (src/labelling.rs)
        if self.plan.symmetry.classes[id.class].conservation.is_exact() {
            let family = self.plan.symmetry.classes[id.class].components[0];
            crate::labelling::label_exact_sector(&mut out.levels[first_level..], id.label, family);
        }
        Ok(())
    }
}

/// Energy of a Klein-Gordon branch relative to `reference`, from the eigenvalue lambda of the
/// squared-form operator: E = branch sqrt(M^2 + 2 M lambda), M = m c^2, evaluated without
/// cancellation as E - M = 2 lambda / (sqrt(1 + 2 lambda / M) + 1).
pub fn kg_energy(lambda: f64, rest_energy: f64, branch: i8, reference: f64) -> f64 {
    let x = 2.0 * lambda / rest_energy;
    let excess = 2.0 * lambda / ((1.0 + x).max(0.0).sqrt() + 1.0); // E+ - M
    if branch >= 0 {
        excess + (rest_energy - reference)
    } else {
        -excess - (rest_energy + reference)
    }
}

impl Spectrum {
    /// Compute the Landau-level spectrum of `model` at `point` with `settings`.
    ///
    /// # Errors
    /// [`Error::ZeroField`] for B = 0; [`Error::CutoffTooSmall`] when the cutoff does not exceed
    /// the model's band; [`Error::MemoryLimit`] when a dense sector would exceed the limit.
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
        let reference = match settings.reference {
            Reference::Model => model.reference_energy(),
            Reference::Zero => 0.0,
            Reference::Energy(e) => e,
        };
        if !(settings.tolerance.is_finite() && settings.tolerance > 0.0) {
            return Err(Error::BadNumber {
                name: "tolerance".into(),
                value: settings.tolerance,
                fix: "use a positive relative tolerance such as 1e-9".into(),
            });
        }
        match settings.target {
            Target::All => {}
            Target::Window { lo, hi } => {
                if !(lo.is_finite() && hi.is_finite() && lo < hi) {
                    return Err(Error::BadNumber {
                        name: "energy window".into(),
                        value: if lo.is_finite() { hi } else { lo },
                        fix: format!("give finite ends with lo < hi (got {lo} .. {hi})"),
                    });
                }
            }
            Target::Nearest { energy, count } => {
                if !energy.is_finite() || count == 0 {
                    return Err(Error::BadNumber {
                        name: "target".into(),
                        value: if energy.is_finite() {
                            count as f64
                        } else {
                            energy
                        },
                        fix: "give a finite target energy and a count of at least 1".into(),
                    });
                }
            }
        }
        // The Klein-Gordon operator is assembled without shift; the reference enters the map.
        let assembly_ref = match model.form() {
            SpectrumForm::Direct => reference,
            SpectrumForm::KleinGordon { .. } => 0.0,
        };
        let h = LadderHamiltonian::assemble(model, point, assembly_ref)?;
        let needed = h.band + 1;
        if settings.cutoff < needed {
            return Err(Error::CutoffTooSmall {
                cutoff: settings.cutoff,
                needed,
                why: format!("for a model whose terms reach ladder power {}", h.band),
            });
        }
        let symmetry = match settings.splitting {
            Splitting::Auto => Symmetry::detect(&h),
            Splitting::Off => Symmetry::none(h.dim),
        };
        let plan = SectorPlan::new(symmetry, settings.cutoff);
        // memory check before anything is allocated (closed form, src/memory.rs); the sector
        // list is built only after it
        let shape = crate::memory::SolveShape::new(
            &plan.symmetry,
            settings.cutoff,
            crate::memory::branches(model),
        );
        let largest = shape.largest_sector;
        let windowed = largest > settings.dense_max as u64 && settings.target != Target::All;
        let threads = rayon::current_num_threads() as u64;
        let need = if windowed {
            // banded matrix + its LU (about 4 b + 4 numbers a row) + a Krylov basis of ~3 count
            let wanted = match settings.target {
                Target::Nearest { count, .. } => count,
                _ => WINDOW_MAX_LEVELS.min(64),
            };
            let hbw = ((h.band + 2) * h.dim) as u64;
            largest
                .saturating_mul(4 * hbw + 4 + 3 * wanted as u64 + 20)
                .saturating_mul(16)
                .saturating_add(crate::memory::BASE_BYTES)
        } else {
            let vectors = settings.vectors == Vectors::Compute;
            crate::memory::estimate(
                &shape,
                &crate::memory::Footprint::Solve { vectors },
                threads,
            )
        };
        let kind = if windowed {
            format!("a window solve of a sector of {largest} states")
        } else {
            format!(
                "a solve at cutoff {} ({} levels, largest sector {largest} states)",
                settings.cutoff, shape.levels
            )
        };
        crate::memory::check(
            &kind,
            need,
            settings.memory_limit_mib,
            crate::memory::FIX_SOLVE,
        )?;
        let ids = plan.sectors();
        let refine = match settings.precision {
            Precision::Double => RefinePolicy::Never,
            Precision::Extended => RefinePolicy::Always,
            Precision::Auto if assembly_ref != 0.0 => RefinePolicy::Adaptive(settings.tolerance),
            Precision::Auto => RefinePolicy::Never,
        };
        let job = Job {
            h: &h,
            plan: &plan,
            form: model.form(),
            reference,
            refine,
            keep_vectors: settings.vectors == Vectors::Compute,
            real: h.is_real(),
            tolerance: settings.tolerance,
            target: settings.target,
            dense_max: settings.dense_max,
        };
        let branches = match model.form() {
            SpectrumForm::Direct => 1,
            SpectrumForm::KleinGordon { .. } => 2,
        };
        // many small sectors: chunks amortise the scheduling; few large ones: one per task
        let chunk = (ids.len() / (8 * rayon::current_num_threads())).clamp(1, 512);
        let parts_raw: Vec<Result<SectorResult>> = ids
            .par_chunks(chunk)
            .map(|chunk_ids| {
                let mut scratch = Scratch {
                    states: Vec::new(),
                    hs: DMatrix::zeros(0, 0),
                    eig: dense::DenseEigen {
                        values: Vec::new(),
                        vectors: None,
                    },
                    v: Vec::new(),
                };
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
                let mut acc = SectorResult {
                    levels: Vec::with_capacity(expected),
                    weights: Vec::with_capacity(expected * h.dim),
                    vectors: Vec::new(),
                };
                for &id in chunk_ids {
                    job.solve_sector(id, &mut scratch, &mut acc)?;
                }
                Ok(acc)
            })
            .collect();
        let mut parts: Vec<SectorResult> = Vec::with_capacity(parts_raw.len());
        for p in parts_raw {
            parts.push(p?);
        }
        let d = h.dim;
        // Sort contiguous (energy, part, index) keys; ties are broken by the position, so the
        // order is total and the result is the same whatever the thread count. The levels are
        // then gathered straight from the per-chunk parts: no unsorted concatenation is ever
        // built (at 4e6 levels each extra pass over fresh memory costs ~0.1 s in page faults).
        let total: usize = parts.iter().map(|p| p.levels.len()).sum();
        if total > u32::MAX as usize || parts.len() > u32::MAX as usize {
            return Err(Error::MemoryLimit {
                what: format!("{total} levels in one solve (at most 2^32)"),
                needed_mib: (total * std::mem::size_of::<Level>()) as u64 >> 20,
                limit_mib: settings.memory_limit_mib,
                fix: crate::memory::FIX_SOLVE.into(),
            });
        }
        // each chunk writes its keys into its own slice of one array, in parallel (a zeroed
        // integer array is allocated lazily, so its pages are first touched by the workers)
        let mut raw: Vec<u128> = vec![0; total];
        let mut slices = Vec::with_capacity(parts.len());
        let mut rest = raw.as_mut_slice();
        for p in &parts {
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
        let mut keys: Vec<SortKey> = raw.into_iter().map(SortKey).collect();
        keys.par_sort_unstable();
        select_target(&mut keys, settings.target);
        // the typical spacing comes from the sorted energies, so the convergence flags are set
        // during the gather (no extra pass over the levels)
        let energy_scale = energy_scale_sorted(&keys, d);
        let tolerance = settings.tolerance;
        let levels: Vec<Level> = keys
            .par_iter()
            .with_min_len(GATHER_GRAIN)
            .map(|k| {
                let mut l = parts[k.part()].levels[k.index()];
                l.convergence = convergence_of(&l, tolerance, energy_scale);
                l
            })
            .collect();
        let mut weights = vec![0.0; keys.len() * d];
        weights
            .par_chunks_mut(d.max(1))
            .zip(keys.par_iter())
            .with_min_len(GATHER_GRAIN)
            .for_each(|(w, k)| {
                let i = k.index();
                w.copy_from_slice(&parts[k.part()].weights[i * d..(i + 1) * d]);
            });
        let vectors = if settings.vectors == Vectors::Compute {
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
        let spectrum = Spectrum {
            model: model.name().to_string(),
            units: model.units(),
            point,
            cutoff: settings.cutoff,
            dim: d,
            reference_energy: reference,
            magnetic_length: h.magnetic_length,
            symmetry: plan.symmetry.clone(),
            tolerance: settings.tolerance,
            energy_scale,
            levels,
            weights,
            vectors,
        };
        let mut spectrum = spectrum;
        if settings.splitting == Splitting::Auto && settings.target == Target::All {
            // a kz = 0 split must not change the labels (src/labelling.rs); the offset is an
            // arbitrary irrational multiple of 1/l_B so that no coupling vanishes by accident
            let generic = FieldPoint {
                kz: point.kz + std::f64::consts::FRAC_1_SQRT_2 / h.magnetic_length,
                ..point
            };
            let hg = LadderHamiltonian::assemble(model, generic, assembly_ref)?;
            crate::labelling::join_kz_families(&hg, &mut spectrum);
        }
        if settings.splitting == Splitting::Auto {
            // labels where only J mod m (or nothing) is conserved (src/labelling.rs)
            crate::labelling::continue_labels(&h, model.form(), &mut spectrum)?;
        }
        Ok(spectrum)
    }
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

/// A typical Landau spacing: the median of the non-zero |E| among the 2d+1 levels closest to
/// the reference energy (1 if there are none). Any order of `levels`.
///
/// # Complexity
/// O(L) for L levels (a selection, not a sort).
pub fn energy_scale(levels: &[Level], dim: usize) -> f64 {
    let mut mags: Vec<f64> = levels.iter().map(|l| l.energy.abs()).collect();
    median_of_smallest_nonzero(&mut mags, 2 * dim + 1).unwrap_or(1.0)
}

/// [`energy_scale`] for sort keys in ascending order of energy: the 2d+1 smallest |E| are
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

/// Median of the entries above the smallest positive normal number among the `take` smallest
/// entries of `mags` (non-negative magnitudes, reordered in place); `None` when there is none.
///
/// # Complexity
/// O(len + take log take).
pub(crate) fn median_of_smallest_nonzero(mags: &mut [f64], take: usize) -> Option<f64> {
    let take = take.min(mags.len());
    if take < mags.len() {
        mags.select_nth_unstable_by(take, f64::total_cmp);
    }
    let near = &mut mags[..take];
    near.sort_unstable_by(f64::total_cmp);
    let first = near.partition_point(|&x| x <= f64::MIN_POSITIVE);
    let nonzero = &near[first..];
    (!nonzero.is_empty()).then(|| nonzero[nonzero.len() / 2])
}

/// Set each level's state ([`Convergence`]): converged when its deciding bound
/// ([`Level::deciding_bound`]: certified Kato-Temple when sharper, else residual) is at most
/// tolerance x max(|E|, scale) (the bound itself proves the level genuine); else a cutoff
/// artefact when its weight on the top `band` orbitals, or on the top quarter of the basis,
/// is at least [`crate::policy::ARTEFACT_TOP_WEIGHT`]; else genuine but not
/// converged.
pub fn flag_convergence(s: &mut Spectrum) {
    let (tol, scale) = (s.tolerance, s.energy_scale);
    for l in &mut s.levels {
        l.convergence = convergence_of(l, tol, scale);
    }
}

/// The tail of the basis for [`Level::tail_weight`]: the top 1/TAIL_DENOMINATOR of the orbitals.
const TAIL_DENOMINATOR: usize = 4;

fn convergence_of(l: &Level, tolerance: f64, scale: f64) -> Convergence {
    use crate::policy::ARTEFACT_TOP_WEIGHT;
    // a bound below the tolerance proves an eigenvalue of the untruncated operator that close:
    // such a level is genuine whatever its weights (the top sector of an exact-J model can
    // hold exact eigenvectors with half their weight on the top orbital)
    if l.deciding_bound().0 <= tolerance * l.energy.abs().max(scale) {
        Convergence::Converged
    } else if l.top_weight >= ARTEFACT_TOP_WEIGHT || l.tail_weight >= ARTEFACT_TOP_WEIGHT {
        Convergence::CutoffArtefact
    } else {
        Convergence::NotConverged
    }
}

#[cfg(test)]
mod tests {
    use super::SortKey;

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
