//! Results: levels with labels and error bounds, and the spectrum that holds them; the rule
//! that decides a level's state ([`Level::convergence_at`]), the energy scale a relative
//! tolerance refers to ([`energy_scale`]) and the energy map of the Klein-Gordon form
//! ([`kg_energy`]).
//!
//! # Layering
//! Layer 4, below the solver: [`crate::solve`] fills these records and [`crate::trust`] reads
//! them; this module imports neither.

use crate::hamiltonian::FieldPoint;
use crate::sectors::{SectorId, Symmetry};
use crate::units::Units;
use num_complex::Complex64;
use serde::Serialize;

/// The state of a level: one of three, decided in this order (see
/// [`Level::convergence_at`]).
///
/// # Definition
/// * [`Convergence::Converged`]: the deciding bound ([`Level::deciding_bound`]) is at most
///   tolerance x max(|E|, energy scale). The bound proves an eigenvalue of the untruncated
///   operator that close, so a converged level is genuine.
/// * [`Convergence::CutoffArtefact`]: not converged, and weight >= 1/2 on the highest `band`
///   orbitals or on the top quarter of the basis
///   ([`crate::policy::ARTEFACT_TOP_WEIGHT`]): the eigenvector lives where the basis
///   ends and stands for no eigenvalue of the untruncated operator.
/// * [`Convergence::NotConverged`]: the rest: a genuine level whose deciding bound exceeds the
///   tolerance; raise the cutoff.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Convergence {
    /// Genuine and the deciding bound is below the tolerance.
    Converged,
    /// Genuine, but the deciding bound exceeds the tolerance: raise the cutoff.
    NotConverged,
    /// Most of the weight sits on the top orbitals: an artefact of the cutoff.
    CutoffArtefact,
}

impl Convergence {
    /// The word used in tables and CSV files: `converged`, `not converged`, `artefact`.
    pub fn word(self) -> &'static str {
        match self {
            Convergence::Converged => "converged",
            Convergence::NotConverged => "not converged",
            Convergence::CutoffArtefact => "artefact",
        }
    }
}

/// Which rigorous bound decided a level's state (the sharper one that applies).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BoundKind {
    /// The residual (Weinstein / Krylov-Bogoliubov) bound [`Level::bound`].
    Residual,
    /// The Kato-Temple bound [`Level::kato_temple`], whose gap condition was certified.
    KatoTemple,
}

impl BoundKind {
    /// `residual` or `kato_temple`, as in the JSON and CSV output.
    pub fn name(self) -> &'static str {
        match self {
            BoundKind::Residual => "residual",
            BoundKind::KatoTemple => "kato_temple",
        }
    }
}

/// Branch of a level within its sector, counted from the gap of that sector.
///
/// # Definition
/// The k levels of one exact sector (fixed J) are split at their middle: the upper
/// floor(k/2) are [`Branch::Upper`] counted upward from the gap (1 = nearest the gap), the
/// lower floor(k/2) are [`Branch::Lower`] counted downward, and for odd k the middle level is
/// [`Branch::Unpaired`]. For the Klein-Gordon form the sign of the root decides and the count
/// runs away from the gap within each sign. Two-band models give the usual +/- of
/// E = ± sqrt(...); the single level of a one-component sector (Schrodinger, each spin of the
/// Pauli model) and the n = 0 level of a 2D Dirac cone are unpaired.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Branch {
    /// Below the gap, the k-th level counted downward from it (1 = nearest the gap).
    Lower(u32),
    /// No partner of opposite sign in the sector.
    Unpaired,
    /// Above the gap, the k-th level counted upward from it (1 = nearest the gap).
    Upper(u32),
}

impl Branch {
    /// +1 above the gap, -1 below, 0 unpaired (the `s` of
    /// [`crate::closed_form::ExpectedLevel`]).
    pub fn sign(self) -> i8 {
        match self {
            Branch::Upper(_) => 1,
            Branch::Lower(_) => -1,
            Branch::Unpaired => 0,
        }
    }
}

/// Which root of the energy map a level is: the one energy of a direct Hamiltonian, or one of
/// the two roots E = ± sqrt(M^2 + 2 M lambda) of the Klein-Gordon form
/// ([`crate::model::SpectrumForm`], [`kg_energy`]).
///
/// Not the label's [`Branch`] (the side of the gap within a sector). Written as the integers
/// -1, 0, +1 ([`Root::sign`]) in JSON and as `-1`, `0`, `1` by `Display`; ordered as those
/// integers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Root {
    /// The negative root E = -sqrt(...) (antiparticle): -1.
    Antiparticle,
    /// A direct Hamiltonian: eigenvalues are energies (0).
    Direct,
    /// The positive root E = +sqrt(...) (particle): +1.
    Particle,
}

impl Root {
    /// The root of sign `sign`: negative -> [`Root::Antiparticle`], zero -> [`Root::Direct`],
    /// positive -> [`Root::Particle`].
    pub fn from_sign(sign: i8) -> Self {
        match sign {
            s if s < 0 => Root::Antiparticle,
            0 => Root::Direct,
            _ => Root::Particle,
        }
    }

    /// -1, 0 or +1.
    pub fn sign(self) -> i8 {
        match self {
            Root::Antiparticle => -1,
            Root::Direct => 0,
            Root::Particle => 1,
        }
    }
}

impl Serialize for Root {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_i8(self.sign())
    }
}

impl std::fmt::Display for Root {
    /// `-1`, `0` or `1`.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.sign())
    }
}

/// How a [`LandauLabel`] was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LabelOrigin {
    /// Read off the exactly conserved J of the level's own sector.
    ExactSector,
    /// Only J mod m (or nothing) is conserved: the label was carried over from the model
    /// without its symmetry-breaking couplings by adiabatic continuation (the breaking part
    /// switched on in steps, each level followed by the overlap of its eigenvectors).
    Continuation,
    /// No label could be given (a sector too large for the continuation, or a level the
    /// continuation could not place, such as one near the cutoff).
    Unlabelled,
}

/// The quantum numbers of a level as the trade writes them.
///
/// # Convention
/// n is the Landau index: for an exactly conserved J = n_orbital + s_alpha (shifts s >= 0,
/// the smallest 0) it is J counted from the lowest allowed J of the class, J = 0, so +E_n and
/// -E_n share n and the unpaired level of a Dirac cone is n = 0. With [`Branch`] it is written
/// `+n`, `-n` or `n` (unpaired); a second level on the same side of the gap of a sector reads
/// `+n'`, a third `+n''`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct LandauLabel {
    /// Landau index n.
    pub n: i64,
    /// Branch within the sector.
    pub branch: Branch,
    /// How the label was obtained.
    pub origin: LabelOrigin,
    /// Family of the level: the smallest component index of the set of components its sector
    /// couples at a generic kz (tells apart the spin blocks of the BHZ model or the two spins
    /// of the Pauli model, which share n and branch).
    pub family: u32,
}

impl LandauLabel {
    /// A level with no label.
    pub const UNLABELLED: LandauLabel = LandauLabel {
        n: -1,
        branch: Branch::Unpaired,
        origin: LabelOrigin::Unlabelled,
        family: 0,
    };

    /// Whether a label was given.
    pub fn is_known(&self) -> bool {
        self.origin != LabelOrigin::Unlabelled
    }
}

impl std::fmt::Display for LandauLabel {
    /// `+2`, `-2`, `0`, `+1'` (second level above the gap in its sector), `?` when unlabelled;
    /// a continued label ends in `~`.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if !self.is_known() {
            return write!(f, "?");
        }
        let (sign, k) = match self.branch {
            Branch::Upper(k) => ("+", k),
            Branch::Lower(k) => ("-", k),
            Branch::Unpaired => ("", 1),
        };
        let primes = "'".repeat(k.saturating_sub(1) as usize);
        let cont = if self.origin == LabelOrigin::Continuation {
            "~"
        } else {
            ""
        };
        write!(f, "{sign}{}{primes}{cont}", self.n)
    }
}

/// One eigenvalue of the truncated problem with its labels and bound.
///
/// A compact record (112 bytes on a 64-bit target; a solve at 1e6 orbitals of a 4-component
/// model returns 4e6 of them): the dominant component and the family are 32-bit indices, the
/// top and tail weights (diagnostics compared with [`ARTEFACT_TOP_WEIGHT`]) single precision;
/// energies and bounds are double precision.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Level {
    /// Energy relative to the spectrum's reference energy, in the model's energy unit.
    pub energy: f64,
    /// Rigorous bound (Krylov-Bogoliubov / Weinstein): the untruncated operator has an
    /// eigenvalue within `bound` of `energy + reference`. Combines the exact norm of the part of
    /// H v that leaves the truncated space with the in-space residual of the solver.
    pub bound: f64,
    /// Kato-Temple bound r^2 / gap (plus a rounding floor), sharper than `bound` when the
    /// distance `gap` from `energy` to the nearest other eigenvalue of the same sector (each
    /// genuine neighbour widened by its own bound, an artefact at its energy) is certified and
    /// positive; `None` otherwise. Filled by [`crate::solve::bounds::kato_temple_sector`]; see
    /// [`crate::solve::bounds`] for the certification and its one assumption.
    pub kato_temple: Option<f64>,
    /// The part of `bound` that comes from leaving the truncated space: the exact norm of the
    /// components of H v beyond orbital N-1 ([`crate::hamiltonian::leakage`]). Large for cutoff
    /// artefacts.
    pub leakage: f64,
    /// The other part: the in-space residual ||P H P v - E v|| of the solver plus its rounding
    /// floor (for the Klein-Gordon form, of the squared operator). Not squared by the
    /// Kato-Temple argument, so it floors that bound.
    pub in_space_residual: f64,
    /// Converged or not at the tolerance of the solve.
    pub convergence: Convergence,
    /// The sector (conserved quantity) the level belongs to.
    pub sector: SectorId,
    /// Dominant orbital (largest weight). Not the Landau index: that is `label.n`.
    pub orbital: usize,
    /// Dominant spinor component.
    pub component: u32,
    /// Root of the Klein-Gordon energy map (written +1 particle, -1 antiparticle), or
    /// [`Root::Direct`] (written 0) for a direct Hamiltonian. Not the label's [`Branch`].
    pub branch: Root,
    /// Landau index and branch as the trade writes them (see [`LandauLabel`]); the component
    /// character is [`Spectrum::weights_of`].
    pub label: LandauLabel,
    /// Weight of the eigenvector on the highest `band` orbitals of the basis (a cutoff
    /// artefact has weight of order 1 there).
    pub top_weight: f32,
    /// Weight of the eigenvector on the top quarter of the orbitals (n >= 3N/4, at least the
    /// top `band`): a second artefact test for levels that are not converged
    /// ([`is_cutoff_artefact`]).
    pub tail_weight: f32,
}

pub use crate::policy::ARTEFACT_TOP_WEIGHT;

/// Whether a level is a cutoff artefact: its state says so ([`Convergence::CutoffArtefact`]),
/// or, for a level not flagged converged, most of its weight sits on the highest `band`
/// orbitals of the basis (an eigenvector of the untruncated operator would not notice where
/// the basis ends). A converged level never is: its bound proves an eigenvalue of the
/// untruncated operator.
pub fn is_cutoff_artefact(level: &Level) -> bool {
    match level.convergence {
        Convergence::CutoffArtefact => true,
        Convergence::Converged => false,
        // before the states are set (the Kato-Temple pass inside the solve) and after
        Convergence::NotConverged => f64::from(level.top_weight) >= ARTEFACT_TOP_WEIGHT,
    }
}

impl Level {
    /// The state of the level at relative `tolerance` and energy `scale` (see
    /// [`Convergence`]): converged when its deciding bound ([`Level::deciding_bound`]) is at
    /// most tolerance x max(|E|, scale) (the bound itself proves the level genuine); else a
    /// cutoff artefact when its weight on the top `band` orbitals, or on the top quarter of the
    /// basis, is at least [`ARTEFACT_TOP_WEIGHT`]; else genuine but not converged.
    pub fn convergence_at(&self, tolerance: f64, scale: f64) -> Convergence {
        // a bound below the tolerance proves an eigenvalue of the untruncated operator that
        // close: such a level is genuine whatever its weights (the top sector of an exact-J
        // model can hold exact eigenvectors with half their weight on the top orbital)
        if self.deciding_bound().0 <= tolerance * self.energy.abs().max(scale) {
            Convergence::Converged
        } else if f64::from(self.top_weight) >= ARTEFACT_TOP_WEIGHT
            || f64::from(self.tail_weight) >= ARTEFACT_TOP_WEIGHT
        {
            Convergence::CutoffArtefact
        } else {
            Convergence::NotConverged
        }
    }

    /// Whether the level is converged.
    pub fn is_converged(&self) -> bool {
        self.convergence == Convergence::Converged
    }

    /// Whether the level is a genuine level (converged or not), not a cutoff artefact.
    pub fn is_genuine(&self) -> bool {
        self.convergence != Convergence::CutoffArtefact
    }

    /// The sharpest rigorous bound available: the Kato-Temple bound when known, else the
    /// residual bound (never more than `bound`).
    pub fn best_bound(&self) -> f64 {
        self.deciding_bound().0
    }

    /// The bound that decides the level's state, and which one it is: the Kato-Temple bound
    /// when its gap condition was certified and it is sharper, else the residual bound.
    pub fn deciding_bound(&self) -> (f64, BoundKind) {
        match self.kato_temple {
            Some(kt) if kt < self.bound => (kt, BoundKind::KatoTemple),
            _ => (self.bound, BoundKind::Residual),
        }
    }
}

/// An eigenvector restricted to its sector: coefficients on the states (n, alpha).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LevelVector {
    /// States (orbital n, component alpha).
    pub states: Vec<(usize, usize)>,
    /// Unit-norm coefficients on those states.
    pub coeffs: Vec<Complex64>,
}

/// A computed spectrum at one field point.
#[derive(Debug, Clone, Serialize)]
pub struct Spectrum {
    /// Model name.
    pub model: String,
    /// Unit system of every number.
    pub units: Units,
    /// Field and kz.
    pub point: FieldPoint,
    /// Orbital cutoff N (orbitals n = 0..N-1 per component).
    pub cutoff: usize,
    /// Number of components d.
    pub dim: usize,
    /// Energies are reported relative to this (m c^2 for the relativistic models).
    pub reference_energy: f64,
    /// Magnetic length in the model's length unit.
    pub magnetic_length: f64,
    /// The conserved quantity found and used.
    pub symmetry: Symmetry,
    /// Relative tolerance used for the convergence flags.
    pub tolerance: f64,
    /// Energy scale the relative tolerance refers to (a typical Landau spacing).
    pub energy_scale: f64,
    /// Levels, ascending in energy.
    pub levels: Vec<Level>,
    /// Component weights, `dim` per level, in the order of `levels`; empty when the solve
    /// skipped them ([`crate::problem::Weights::Skip`]).
    pub weights: Vec<f64>,
    /// Mean orbital index `<n>` = sum_(n, alpha) n |psi_(n alpha)|^2 per level, in the order of
    /// `levels`, when the solve was asked for it ([`crate::problem::Character::Compute`]).
    pub mean_n: Option<Vec<f64>>,
    /// Eigenvectors in the order of `levels`, if requested.
    #[serde(skip)]
    pub vectors: Option<Vec<LevelVector>>,
}

impl Spectrum {
    /// Component weights of level `i` (sum 1): its component (spin, sublattice, band)
    /// character; empty when the solve skipped the weights
    /// ([`crate::problem::Weights::Skip`]).
    ///
    /// # Panics
    /// When the weights were computed and `i` is not a level index.
    pub fn weights_of(&self, i: usize) -> &[f64] {
        if self.weights.is_empty() {
            return &[];
        }
        &self.weights[i * self.dim..(i + 1) * self.dim]
    }

    /// Whether the spectrum carries the character of every level: its component weights
    /// ([`crate::problem::Weights::Compute`]) and its `<n>` ([`crate::problem::Character::Compute`]),
    /// as the track records of a sweep report them.
    pub fn has_character(&self) -> bool {
        self.mean_n.is_some() && self.weights.len() == self.levels.len() * self.dim
    }

    /// Mean orbital index `<n>` = sum_(n, alpha) n |psi_(n alpha)|^2 of level `i`, when the solve
    /// computed it ([`crate::problem::Character::Compute`]); for a level of the Schrodinger
    /// model in Landau level n it is n.
    pub fn mean_n_of(&self, i: usize) -> Option<f64> {
        self.mean_n.as_ref().and_then(|m| m.get(i).copied())
    }

    /// Converged levels only.
    pub fn converged(&self) -> impl Iterator<Item = &Level> {
        self.levels.iter().filter(|l| l.is_converged())
    }

    /// Energies of all levels (relative to the reference energy).
    pub fn energies(&self) -> Vec<f64> {
        self.levels.iter().map(|l| l.energy).collect()
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

/// Energy of the Klein-Gordon root `root` relative to `reference`, from the eigenvalue lambda
/// of the squared-form operator: E = ± sqrt(M^2 + 2 M lambda), M = m c^2, evaluated without
/// cancellation as E - M = 2 lambda / (sqrt(1 + 2 lambda / M) + 1). [`Root::Direct`] is
/// taken as the positive root.
pub fn kg_energy(lambda: f64, rest_energy: f64, root: Root, reference: f64) -> f64 {
    let x = 2.0 * lambda / rest_energy;
    let excess = 2.0 * lambda / ((1.0 + x).max(0.0).sqrt() + 1.0); // E+ - M
    match root {
        Root::Particle | Root::Direct => excess + (rest_energy - reference),
        Root::Antiparticle => -excess - (rest_energy + reference),
    }
}
