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
pub use error::{Error, Result};
