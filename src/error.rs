//! The crate's one error type. Every message says what was wrong and what to do about it.

use thiserror::Error;

/// Everything that can go wrong in ladderfan. Messages name the offending item and the fix.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum Error {
    /// A model was described inconsistently (shape, degree, non-finite number, ...).
    #[error("invalid model: {what}; {fix}")]
    InvalidModel {
        /// What is wrong.
        what: String,
        /// What to change.
        fix: String,
    },
    /// The terms sharing one monomial do not add up to a Hermitian matrix.
    #[error(
        "the Hamiltonian is not Hermitian: the terms with monomial {monomial} ({terms}) sum to a matrix \
         whose ({row},{col}) element {a} is not the complex conjugate of the ({col},{row}) element {b}; \
         add the Hermitian-conjugate term or fix the coefficient"
    )]
    NotHermitian {
        /// The monomial, e.g. `kx^1 ky^0 kz^0`.
        monomial: String,
        /// Labels of the contributing terms.
        terms: String,
        /// Row of the offending element (0-based spinor component).
        row: usize,
        /// Column of the offending element.
        col: usize,
        /// Element (row, col), formatted.
        a: String,
        /// Element (col, row), formatted.
        b: String,
    },
    /// A magnetic field of zero (or not finite) was requested.
    #[error("the magnetic field is {field}; Landau levels need a finite non-zero magnetic field")]
    ZeroField {
        /// The offending field value.
        field: f64,
    },
    /// A numeric input was not finite or out of its range.
    #[error("{name} = {value} is not allowed: {fix}")]
    BadNumber {
        /// Name of the quantity.
        name: String,
        /// Its value.
        value: f64,
        /// What is allowed.
        fix: String,
    },
    /// The orbital cutoff is too small for what was asked.
    #[error("cutoff of {cutoff} orbitals is below the {needed} needed {why}; raise the cutoff")]
    CutoffTooSmall {
        /// Requested cutoff.
        cutoff: usize,
        /// Minimal cutoff.
        needed: usize,
        /// Why it is needed.
        why: String,
    },
    /// The work would exceed the memory limit.
    #[error(
        "{what} needs about {needed_mib} MiB, above the memory limit of {limit_mib} MiB; {fix}"
    )]
    MemoryLimit {
        /// What would need the memory (the path and its sizes).
        what: String,
        /// Estimated need in MiB (see `crate::memory`).
        needed_mib: u64,
        /// The limit in MiB.
        limit_mib: u64,
        /// What to change.
        fix: String,
    },
    /// A requested tolerance could not be met.
    #[error("tolerance {tolerance:e} not met: {detail}")]
    NotConverged {
        /// Requested tolerance.
        tolerance: f64,
        /// What was reached and why it stopped.
        detail: String,
    },
    /// A numerical routine failed.
    #[error("numerical failure in {stage}: {detail}")]
    Numerical {
        /// Which stage.
        stage: String,
        /// What happened.
        detail: String,
    },
    /// A model file or other input could not be parsed. The message is shown through
    /// [`crate::limits::bounded`]: it quotes input, and stays one bounded line.
    #[error("{}: {}", crate::limits::bounded(.location), crate::limits::bounded(.message))]
    Parse {
        /// `file:line:column` or the flag name.
        location: String,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// Input/output failed.
    #[error("cannot {action} {path}: {source}")]
    Io {
        /// What was attempted ("write", "read").
        action: String,
        /// The path involved.
        path: String,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// Anything else that the user asked for and cannot be done.
    #[error("{0}")]
    Unsupported(String),
}

/// Shorthand for `Result<T, ladderfan::Error>`.
pub type Result<T> = std::result::Result<T, Error>;
