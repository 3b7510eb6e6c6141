//! The set-up of a solve, done once: validate the inputs, assemble the Hamiltonian at the real
//! (B, kz), detect the conserved quantity, and estimate the memory.
//!
//! Every path that solves goes through a [`Problem`]: [`crate::Spectrum::compute`], a sweep
//! point ([`crate::sweep`]), each cutoff of a convergence study ([`crate::trust::converge`]),
//! and the command line's pre-checks. So the cutoff check, the symmetry and the memory
//! estimate that refuse a run before it allocates are exactly those the solve then uses: a
//! coupling that exists only at kz != 0 is judged at the kz of the solve, and the Hamiltonian
//! is assembled once per (B, kz) (a study over several cutoffs reuses it through
//! [`Problem::with_cutoff`]).
//!
//! # Layering
//! Layer 3 (set-up): uses the description layers (`model`, `hamiltonian`, `sectors`) and
//! [`crate::memory`]; the solver ([`crate::solve`], layer 4) consumes a `Problem`, and the
//! settings types of a solve ([`Settings`], [`Target`], ...) live here so that `memory` and
//! `problem` never import the solver.
//!
//! # Complexity
//! One assembly (O(terms x d^2)) and one symmetry detection (O(d^2)); nothing here depends on
//! the cutoff beyond O(1) closed-form sizes.

use crate::error::{Error, Result};
use crate::hamiltonian::{FieldPoint, LadderHamiltonian};
use crate::memory::{self, Footprint, SolveShape};
use crate::model::{Model, SpectrumForm};
pub use crate::numeric::dense::Vectors;
use crate::sectors::{SectorPlan, Symmetry};

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
    /// Always refine small sectors (size <= [`crate::solve::REFINE_MAX_SECTOR`]) in
    /// double-double.
    Extended,
}

pub use crate::policy::{DENSE_MAX_DEFAULT, WINDOW_MAX_LEVELS};

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
    /// Whether the solve also reports each level's mean orbital index `<n>`
    /// ([`crate::levels::Spectrum::mean_n`]).
    pub character: Character,
    /// Whether the solve reports the component weights of every level
    /// ([`crate::levels::Spectrum::weights`], 8 d bytes per level).
    pub weights: Weights,
}

/// Whether a solve reports the component weights |psi_alpha|^2 = sum_n |psi_(n alpha)|^2 of
/// each level ([`crate::levels::Spectrum::weights`]). The dominant state, the top and tail
/// weights and the convergence states of the levels do not depend on it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Weights {
    /// d weights per level, on request: the level tables, the track records of sweeps and
    /// [`crate::observables::labels::pattern_expectation`] read them (the command line and the
    /// Python module ask for them where their output shows the component character).
    Compute,
    /// No weights ([`crate::levels::Spectrum::weights`] is empty; the default): energies,
    /// bounds, labels, dominant states and convergence states are the same; saves 8 d bytes
    /// per level, written twice (at 4e6 levels of a 4-component model, 256 MB of fresh pages).
    #[default]
    Skip,
}

/// Whether a solve reports the orbital character of its levels: the mean orbital index
/// `<n>` = sum_(n, alpha) n |psi_(n alpha)|^2 of each eigenvector.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Character {
    /// No `<n>` (the default; nothing extra is stored).
    #[default]
    Skip,
    /// Also `<n>` per level (8 bytes per level).
    Compute,
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
    /// Defaults with the given cutoff: split, model reference, no vectors, no component
    /// weights, no `<n>`, tolerance 1e-9, automatic precision, 4096 MiB.
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
            character: Character::Skip,
            weights: Weights::Skip,
        }
    }

    /// Check the tolerance and the target.
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a tolerance that is not positive and finite, an energy window
    /// without finite ends lo < hi, or a nearest-levels target with a non-finite energy or a
    /// count of zero.
    pub fn validate(&self) -> Result<()> {
        if !(self.tolerance.is_finite() && self.tolerance > 0.0) {
            return Err(Error::BadNumber {
                name: "tolerance".into(),
                value: self.tolerance,
                fix: "use a positive relative tolerance such as 1e-9".into(),
            });
        }
        match self.target {
            Target::All => Ok(()),
            Target::Window { lo, hi } if !(lo.is_finite() && hi.is_finite() && lo < hi) => {
                Err(Error::BadNumber {
                    name: "energy window".into(),
                    value: if lo.is_finite() { hi } else { lo },
                    fix: format!("give finite ends with lo < hi (got {lo} .. {hi})"),
                })
            }
            Target::Window { .. } => Ok(()),
            Target::Nearest { energy, count } if !energy.is_finite() || count == 0 => {
                Err(Error::BadNumber {
                    name: "target".into(),
                    value: if energy.is_finite() {
                        count as f64
                    } else {
                        energy
                    },
                    fix: "give a finite target energy and a count of at least 1".into(),
                })
            }
            Target::Nearest { .. } => Ok(()),
        }
    }
}

impl Default for Settings {
    fn default() -> Self {
        Settings::with_cutoff(crate::policy::DEFAULT_CUTOFF)
    }
}

/// One solve, set up: the validated inputs, the Hamiltonian assembled at the real (B, kz), the
/// sector plan and the closed-form sizes of the solve.
///
/// # Examples
/// ```
/// use ladderfan::{models, problem::Problem, FieldPoint, Settings, Spectrum};
/// let model = models::schrodinger(models::MassParams { mass_ratio: 1.0, charge: -1.0 })?;
/// let problem = Problem::new(&model, FieldPoint::field(1.0), &Settings::with_cutoff(40))?;
/// // one component, exactly conserved J: 40 sectors of one state each
/// assert_eq!((problem.shape().levels, problem.shape().largest_sector), (40, 1));
/// problem.check_memory()?;
/// let spec = Spectrum::solve(&problem)?;
/// // hbar omega_c / 2 for a free electron at 1 T: 0.05788 meV (CODATA 2018: 2 mu_B B / 2)
/// assert!((spec.levels[0].energy - 0.057_883_8).abs() < 1e-6);
/// # Ok::<(), ladderfan::Error>(())
/// ```
#[derive(Debug, Clone)]
pub struct Problem<'m> {
    model: &'m Model,
    point: FieldPoint,
    settings: Settings,
    reference: f64,
    assembly_reference: f64,
    hamiltonian: LadderHamiltonian,
    plan: SectorPlan,
    shape: SolveShape,
}

impl<'m> Problem<'m> {
    /// Set up the solve of `model` at `point` with `settings`: validate, assemble once, check
    /// the cutoff against the band, detect the conserved quantity (when splitting). The memory
    /// is not checked here: [`Problem::check_memory`] checks one solve, and a command that
    /// keeps more checks its own [`Footprint`] with [`Problem::estimate`].
    ///
    /// # Errors
    /// [`Error::BadNumber`] for an invalid tolerance or target (see [`Settings::validate`]);
    /// the errors of [`LadderHamiltonian::assemble`] ([`Error::ZeroField`] for B = 0);
    /// [`Error::CutoffTooSmall`] when the cutoff does not exceed the band of the assembled
    /// operator.
    pub fn new(model: &'m Model, point: FieldPoint, settings: &Settings) -> Result<Self> {
        settings.validate()?;
        let reference = match settings.reference {
            Reference::Model => model.reference_energy(),
            Reference::Zero => 0.0,
            Reference::Energy(e) => e,
        };
        // The Klein-Gordon operator is assembled without shift; the reference enters the map.
        let assembly_reference = match model.form() {
            SpectrumForm::Direct => reference,
            SpectrumForm::KleinGordon { .. } => 0.0,
        };
        let hamiltonian = LadderHamiltonian::assemble(model, point, assembly_reference)?;
        let symmetry = match settings.splitting {
            Splitting::Auto => Symmetry::detect(&hamiltonian),
            Splitting::Off => Symmetry::none(hamiltonian.dim),
        };
        Self::from_parts(
            model,
            point,
            settings.clone(),
            (reference, assembly_reference),
            hamiltonian,
            symmetry,
        )
    }

    /// The same problem at another cutoff: the Hamiltonian and the symmetry do not depend on
    /// the cutoff and are reused (no second assembly).
    ///
    /// # Errors
    /// [`Error::CutoffTooSmall`] as in [`Problem::new`].
    pub fn with_cutoff(&self, cutoff: usize) -> Result<Problem<'m>> {
        Self::from_parts(
            self.model,
            self.point,
            Settings {
                cutoff,
                ..self.settings.clone()
            },
            (self.reference, self.assembly_reference),
            self.hamiltonian.clone(),
            self.plan.symmetry.clone(),
        )
    }

    /// The same problem at another kz: one new assembly, while the symmetry (sector plan) of
    /// this problem is reused when every coupling of the new assembly is among this one's (a
    /// problem set up at a generic kz has every coupling any kz can have); otherwise it is
    /// detected anew. The lean path of the kz integrals (`observables::volume`).
    ///
    /// # Errors
    /// Those of [`LadderHamiltonian::assemble`] for the new point.
    pub fn at_kz(&self, kz: f64) -> Result<Problem<'m>> {
        let point = FieldPoint { kz, ..self.point };
        let hamiltonian = LadderHamiltonian::assemble(self.model, point, self.assembly_reference)?;
        let symmetry = if self.settings.splitting == Splitting::Off {
            self.plan.symmetry.clone()
        } else {
            let old = self.hamiltonian.couplings();
            let covered = hamiltonian
                .couplings()
                .iter()
                .all(|c| old.binary_search(c).is_ok());
            if covered {
                self.plan.symmetry.clone()
            } else {
                Symmetry::detect(&hamiltonian)
            }
        };
        Self::from_parts(
            self.model,
            point,
            self.settings.clone(),
            (self.reference, self.assembly_reference),
            hamiltonian,
            symmetry,
        )
    }

    fn from_parts(
        model: &'m Model,
        point: FieldPoint,
        settings: Settings,
        (reference, assembly_reference): (f64, f64),
        hamiltonian: LadderHamiltonian,
        symmetry: Symmetry,
    ) -> Result<Self> {
        let needed = hamiltonian.band + 1;
        if settings.cutoff < needed {
            return Err(Error::CutoffTooSmall {
                cutoff: settings.cutoff,
                needed,
                why: format!(
                    "for a model whose terms reach ladder power {}",
                    hamiltonian.band
                ),
            });
        }
        let mut shape = SolveShape::new(&symmetry, settings.cutoff, memory::branches(model));
        shape.weights = settings.weights == Weights::Compute;
        let plan = SectorPlan::new(symmetry, settings.cutoff);
        Ok(Problem {
            model,
            point,
            settings,
            reference,
            assembly_reference,
            hamiltonian,
            plan,
            shape,
        })
    }

    /// The model.
    pub fn model(&self) -> &'m Model {
        self.model
    }

    /// The field point (B, kz) the Hamiltonian was assembled at.
    pub fn point(&self) -> FieldPoint {
        self.point
    }

    /// The settings of the solve.
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// The energy the levels are reported relative to (resolved from
    /// [`Settings::reference`]).
    pub fn reference(&self) -> f64 {
        self.reference
    }

    /// The energy subtracted from the diagonal at assembly: the reference for a direct
    /// Hamiltonian, 0 for the Klein-Gordon form (whose reference enters the energy map).
    pub fn assembly_reference(&self) -> f64 {
        self.assembly_reference
    }

    /// The Hamiltonian, assembled once at [`Problem::point`].
    pub fn hamiltonian(&self) -> &LadderHamiltonian {
        &self.hamiltonian
    }

    /// The sector plan: the detected (or switched-off) symmetry at the cutoff.
    pub fn plan(&self) -> &SectorPlan {
        &self.plan
    }

    /// The closed-form sizes of the solve ([`SolveShape`]).
    pub fn shape(&self) -> &SolveShape {
        &self.shape
    }

    /// Whether the largest sector goes to the window solver: larger than
    /// [`Settings::dense_max`] while only some levels are wanted.
    pub fn windowed(&self) -> bool {
        self.shape.largest_sector > self.settings.dense_max as u64
            && self.settings.target != Target::All
    }

    /// Peak bytes of this one solve on `threads` workers, including [`memory::BASE_BYTES`]:
    /// the window solver's footprint ([`SolveShape::window_bytes`]) when
    /// [`Problem::windowed`], else [`memory::estimate`] of a [`Footprint::Solve`].
    pub fn solve_bytes(&self, threads: u64) -> u64 {
        if self.windowed() {
            let wanted = match self.settings.target {
                Target::Nearest { count, .. } => count,
                _ => WINDOW_MAX_LEVELS.min(64),
            };
            let hbw = ((self.hamiltonian.band + 2) * self.hamiltonian.dim) as u64;
            self.shape
                .window_bytes(hbw, wanted as u64, self.hamiltonian.is_real())
        } else {
            self.estimate(
                &Footprint::Solve {
                    vectors: self.settings.vectors == Vectors::Compute,
                },
                threads,
            )
        }
    }

    /// Peak bytes of a command that holds `footprint` of solves of this shape on `threads`
    /// workers ([`memory::estimate`]).
    pub fn estimate(&self, footprint: &Footprint, threads: u64) -> u64 {
        memory::estimate(&self.shape, footprint, threads)
    }

    /// Refuse this one solve, before anything is allocated, when [`Problem::solve_bytes`] on
    /// the current thread pool exceeds [`Settings::memory_limit_mib`].
    ///
    /// # Errors
    /// [`Error::MemoryLimit`] naming the solve, the estimate, the limit and the usual remedy.
    pub fn check_memory(&self) -> Result<()> {
        let need = self.solve_bytes(rayon::current_num_threads() as u64);
        let largest = self.shape.largest_sector;
        let kind = if self.windowed() {
            format!("a window solve of a sector of {largest} states")
        } else {
            format!(
                "a solve at cutoff {} ({} levels, largest sector {largest} states)",
                self.settings.cutoff, self.shape.levels
            )
        };
        memory::check(
            &kind,
            need,
            self.settings.memory_limit_mib,
            memory::FIX_SOLVE,
        )
    }

    /// Estimated peak MiB of this one solve ([`Problem::solve_bytes`] on the current thread
    /// pool, rounded up).
    pub fn solve_mib(&self) -> u64 {
        memory::to_mib(self.solve_bytes(rayon::current_num_threads() as u64))
    }
}
