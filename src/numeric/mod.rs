//! The physics-free numerical layer: dense and banded Hermitian eigen-solvers, shift-invert
//! Lanczos near a target, extended-precision refinement and double-double arithmetic.
//!
//! Nothing here knows about models, fields, levels or Landau labels: every routine takes plain
//! matrices, slices and numbers, and the physics layers ([`crate::solve`] and above) call in.
//! It imports only the foundation modules ([`crate::error`]), so it can be tested, timed and
//! reused on its own (the dependency rule of DEVELOPERS.md, checked by `tests/layers.rs`).
//!
//! # Paths and complexity (s = matrix size, n = banded size, b = half-bandwidth)
//! * [`dense`]: one Hermitian eigen-solve, the fastest exact path chosen by size: O(s^3) time,
//!   O(s^2) memory.
//! * `jacobi` (private): cyclic Jacobi for the real symmetric sizes 3 and 4 behind [`dense`]:
//!   O(s^3) a sweep, a few sweeps, no heap memory.
//! * `tridiag` (private): the blocked Householder tridiagonal reduction behind [`dense`] from size 256
//!   on: about (4/3) s^3 flops, one read of the trailing triangle per column.
//! * [`banded`]: banded Hermitian storage, shifted LU with partial pivoting and Sylvester
//!   inertia counts: O(n b^2) time, O(n b) memory.
//! * [`ldl`]: the two-sided (partitioned) L D L^H of a shifted band matrix, both halves on two
//!   threads meeting in a b x b separator: O(n b^2) time, n (b + 1) numbers, no pivoting
//!   (used by the window solver when its growth is small).
//! * [`plu`]: the two-sided LU with partial pivoting inside each half, meeting in a b x b
//!   separator (two threads; checked by one solve, else the serial pivoted LU): O(n b^2)
//!   time, n (3b + 1) numbers (the window solver's operator when the L D L^H grows too much).
//! * [`window`]: the eigenvalues nearest a target or in an interval of a huge banded matrix,
//!   by shift-invert Krylov-Schur Lanczos (the iteration itself in the private `lanczos`):
//!   O(n b^2 + (r + 1) n m^2) for r restarts and a basis of m vectors.
//! * [`slicing`]: a wide window cut into slices of at most [`slicing::SLICE_LEVELS`] levels,
//!   each count certified by inertia counts at borders kept clear of eigenvalues, solved in
//!   parallel: O(n b^2) per slice plus its own basis work.
//! * [`refine`]: Dongarra-Moler-Wilkinson refinement of one eigenpair in double-double: O(s^3)
//!   per step, for small matrices.
//! * [`dd`]: double-double numbers (about 32 significant digits), O(1) per operation.
//! * [`root`]: a bracketed root of a function of one variable (Illinois regula falsi), at most
//!   a given number of evaluations.

pub mod banded;
pub mod dd;
pub mod dense;
mod jacobi;
mod joint;
mod lanczos;
pub mod ldl;
pub mod plu;
pub mod refine;
mod ritz;
pub mod root;
pub mod slicing;
mod tridiag;
pub mod window;

/// Whether an eigen-solve ([`dense::eigh`], the window solver) computes eigenvectors.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Vectors {
    /// Compute the eigenvectors (columns of [`dense::DenseEigen::vectors`]).
    Compute,
    /// Eigenvalues only (cheaper).
    Skip,
}
