//! ladderfan (scaffolding in progress)
#![deny(missing_docs)]
#![forbid(unsafe_code)]
pub mod builtin;
pub mod dd;
pub mod error;
pub mod hamiltonian;
pub mod ladder;
pub mod matrix;
pub mod model;
pub mod units;
// TEMPORARY (solvers branch): the lead writes src/solve/mod.rs; remove this line then.
/// Eigen-solvers: dense sectors, banded factorisations, shift-invert windows (temporary declaration).
pub mod solve {
    pub mod banded;
    pub mod dense;
    pub mod window;
}
pub use error::{Error, Result};
