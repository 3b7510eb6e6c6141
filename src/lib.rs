//! ladderfan (scaffolding in progress)
#![deny(missing_docs)]
#![forbid(unsafe_code)]
pub mod builtin;
pub mod dd;
pub mod error;
pub mod hamiltonian;
pub mod ladder;
pub mod levels;
pub mod matrix;
pub mod model;
pub mod sectors;
pub mod solve;
pub mod trust;
pub mod units;
pub use error::{Error, Result};
pub use hamiltonian::FieldPoint;
pub use levels::{Level, Spectrum};
pub use model::{Model, Monomial};
pub use solve::{Reference, Settings, Splitting, Vectors};
