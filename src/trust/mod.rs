//! Trustworthy numbers: error bounds per level, separation of cutoff artefacts, window
//! completeness, convergence studies and the automatic cutoff.
//!
//! * [`bounds`]: residual (Weinstein) and Kato-Temple bounds (computed by the solver, sector
//!   by sector: they live in `solve/bounds.rs` and are re-exported here).
//! * [`cluster`]: rotation inside degenerate clusters that separates artefacts from genuine
//!   levels (called by the solver: `solve/cluster.rs`, re-exported here).
//! * [`window`]: detection of bands that re-enter an energy window beyond the cutoff's reach.
//! * [`converge`]: convergence study over a list of cutoffs.
//! * [`auto`]: the automatic cutoff (re-exported by [`converge`]).
//! * [`report`]: CSV / JSON tables and an SVG plot of a study.
//!
//! # Layering
//! One way: `trust` uses the solver ([`crate::solve`], through [`crate::problem::Problem`])
//! and the level records ([`crate::levels`]); the solver never uses `trust`. The per-level
//! bounds the solver needs during a sector (Kato-Temple, the cluster rotation) therefore live
//! under `solve/` and are re-exported here; the leakage and residual helpers live with the
//! Hamiltonian ([`crate::hamiltonian::leakage`]), the energy-scale statistics and the artefact
//! rule with the levels ([`crate::levels::energy_scale`], [`crate::levels::ARTEFACT_TOP_WEIGHT`]).

pub use crate::solve::{bounds, cluster};
pub mod auto;
pub mod converge;
pub mod report;
pub mod window;
