//! Defaults and tolerances: the numbers the crate chooses when the caller does not, in one
//! place, each with what it means and why it has its value. Algorithm constants that only a
//! solver's internals see (block sizes, restart counts) stay with their algorithm.

/// Default truncation of the ladder basis: the number of Landau orbitals kept per component
/// when neither the command line nor the model file gives a cutoff.
///
/// 200 orbitals keep the low levels of a fan diagram well away from the truncation edge (the
/// levels near the cutoff are the ones it spoils), while the matrix of a 2- or 4-component
/// model (400 or 800 rows) stays small for a dense solve and far inside
/// [`DEFAULT_MEMORY_LIMIT_MIB`]. Common practice; the automatic cutoff
/// (`crate::trust::converge`) grows it when a tolerance asks for more.
pub const DEFAULT_CUTOFF: usize = 200;

/// Default memory limit of one solve, in MiB: an estimate above it is refused before any
/// allocation, with the fix (a smaller cutoff or a larger limit) in the message.
///
/// 4096 MiB (4 GiB) fits a laptop or a CI runner with room for the rest of the system, and is
/// far above what the default cutoff needs; a user with a larger machine raises it.
pub const DEFAULT_MEMORY_LIMIT_MIB: u64 = 4096;

/// Default relative tolerance of a solve (`crate::solve::Settings::tolerance`) and of the
/// automatic cutoff: a level counts as converged when its rigorous error bound is below this
/// fraction of the energy scale.
///
/// 1e-9 is about 10^7 times the double-precision rounding (eps = 2.2e-16), so rounding of a
/// well-conditioned eigenvalue never decides convergence, and still far below any physically
/// resolvable energy difference (1e-9 of a meV scale is a peV).
pub const DEFAULT_TOLERANCE: f64 = 1e-9;

/// Weight on the top `band` orbitals of the basis above which a level that is not proved
/// converged counts as a cutoff artefact.
///
/// An eigenvector of the untruncated operator does not notice where the basis ends, so its
/// weight on the last orbitals is small; a state with half or more of its weight there lives
/// at the truncation edge and is an artefact of it. 0.5 is the majority rule (common
/// practice); it only sorts levels that have no convergence proof.
pub const ARTEFACT_TOP_WEIGHT: f64 = 0.5;

/// Default largest sector diagonalised densely when only some levels are wanted
/// (`crate::solve::Settings::dense_max`); larger sectors use the banded and window solvers.
///
/// A dense Hermitian eigensolve costs O(N^3) time and 16 N^2 bytes for the complex matrix
/// (144 MB at N = 3000), while the banded solvers cost O(N b^2) for a band width b; below a
/// few thousand the dense path is simple and cheap enough that the switch is not worth it.
pub const DENSE_MAX_DEFAULT: usize = 3000;

/// Most levels the window solver may return from one sector for an energy window
/// (`crate::solve::Target::Window`).
///
/// A window is meant for the levels near an energy; a window holding more than 2000 levels of
/// one sector is better served by a full solve, and the cap bounds the memory of the
/// shift-and-invert vectors.
pub const WINDOW_MAX_LEVELS: usize = 2000;

/// Distance from the charge-neutrality energy, in line widths, within which a level counts as
/// sitting at it (half filled) when the filling factor is counted from neutrality
/// (`crate::observables::filling` and its per-volume twin `crate::observables::volume`).
///
/// The zero mode of a Dirac-like model lies exactly at neutrality in exact arithmetic, but
/// the solver returns it with a rounding error; 1e-9 line widths is far above that rounding
/// for any sensible width and far below the spacing of distinct levels.
pub const NEUTRALITY_SNAP_WIDTHS: f64 = 1e-9;
