//! Trustworthy numbers: error bounds per level, separation of cutoff artefacts, window
//! completeness, convergence studies and the automatic cutoff.
//!
//! * [`bounds`]: residual (Weinstein) and Kato-Temple bounds.
//! * [`cluster`]: rotation inside degenerate clusters that separates artefacts from genuine
//!   levels (called by the solver).
//! * [`window`]: detection of bands that re-enter an energy window beyond the cutoff's reach.
//! * [`converge`]: convergence study over a list of cutoffs, and the automatic cutoff.
//! * [`report`]: CSV / JSON tables and an SVG plot of a study.

pub mod bounds;
pub mod cluster;
pub mod converge;
pub mod report;
pub mod window;
