//! # ladderfan
//!
//! Landau-level spectra of relativistic and Dirac-like Hamiltonians by exact diagonalization in a
//! truncated ladder-operator (Landau-orbital) basis, with a rigorous error bound on every level
//! and checks against published closed forms.
//!
//! The data path is the module list:
//! [`model`] (terms: coefficient x spinor [`matrix`] x monomial; [`models`]: the built-in models) ->
//! [`ladder`] (Peierls substitution, Weyl and normal ordering) -> [`hamiltonian`] (assembly in
//! ladder form at one field and kz) -> [`sectors`] (conserved J = n + s_alpha, exact or mod m) ->
//! [`solve`] (per-sector eigen-solves, precision refinement) -> [`levels`] (labels, bounds,
//! convergence) -> [`sweep`] (many field points in parallel).
//!
//! ```
//! use ladderfan::{models, FieldPoint, Settings, Spectrum};
//! // massless 2D Dirac, v = 1e6 m/s: first level sqrt(2) hbar v / l_B = 36.3 meV at 1 T
//! // (common practice value for graphene-like velocities)
//! let m = models::dirac2d(models::Dirac2dParams::default())?;
//! let s = Spectrum::compute(&m, FieldPoint::field(1.0), &Settings::with_cutoff(100))?;
//! let first = s.converged().find(|l| l.energy > 1.0).unwrap();
//! assert!((first.energy - 36.28).abs() < 0.01);
//! # Ok::<(), ladderfan::Error>(())
//! ```
//!
//! # Conventions
//! * Units: SI with CODATA 2018 inside; lab units (meV, nm, T) or natural units (m c^2,
//!   hbar/(m c), B/B_c) at the edges ([`units::Units`]).
//! * B is along +z and signed; the charge q (units of e) is signed. With s = sign(qB) the lowering
//!   operator is a = l_B (pi_x + i s pi_y)/(sqrt 2 hbar) ([`ladder`]).
//! * Zeeman-like terms are +(g/2) mu_B B sigma_z (free electron g = +2.0023 here).
//! * Levels are sorted ascending, energies relative to [`Spectrum::reference_energy`]; each level
//!   is labelled by its sector, its Landau index n and branch as the trade writes them
//!   ([`levels::LandauLabel`], [`labelling`]: +E_n and -E_n share n, the unpaired Dirac level
//!   is n = 0) and its component weights.

// missing_docs is denied for the whole package in Cargo.toml's [lints]; unsafe code is denied
// there too, and forbidden here so that no `allow` inside the library can lift it
#![forbid(unsafe_code)]

pub mod closed_form;
pub mod error;
pub mod expr;
pub mod hamiltonian;
pub mod labelling;
pub mod ladder;
pub mod levels;
pub mod limits;
pub mod matrix;
pub mod memory;
pub mod model;
pub mod modelfile;
pub mod models;
pub mod mtx;
pub mod numeric;
pub mod observables;
pub mod plot;
pub mod policy;
pub mod problem;
pub mod records;
pub mod sectors;
pub mod semiclassics;
pub mod shard;
pub mod solve;
pub mod sweep;
pub mod trust;
pub mod units;
pub mod verify;

pub use error::{Error, Result};
pub use hamiltonian::FieldPoint;
pub use levels::{Level, Spectrum};
pub use model::{Model, Monomial};
pub use solve::{Character, Reference, Settings, Splitting, Target, Vectors, Weights};

/// The README's Rust snippet, compiled and run as a doc test so that it stays true.
#[cfg(doctest)]
#[doc = include_str!("../README.md")]
pub struct ReadmeDoctests;
