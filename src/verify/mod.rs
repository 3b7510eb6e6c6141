//! Verify an analytic level formula against the exact spectrum: every level, including the
//! special ones.
//!
//! The expected levels come as an [`ExpectedList`]: from a Rust closure over the quantum
//! numbers ([`ExpectedList::from_fn`]), from formulas in the small expression language of
//! [`crate::expr`] ([`ExpectedList::from_formula`], documented in the README (section Verifying a level formula)), from a list or a
//! CSV file ([`ExpectedList::from_levels`], [`ExpectedList::from_csv`]), or from the crate's
//! own closed forms ([`ExpectedList::from_closed_form`]).
//!
//! [`check`] assigns numerical levels to expected ones one to one ([`matching`]) inside the
//! window where both are meaningful, and returns a [`Verdict`]: per pair the expected and
//! numerical energies, the deviation, the allowed deviation and whether they agree; the
//! numerical levels that no expected level accounts for (a forgotten level); the expected
//! levels that no numerical level matches.
//!
//! # Which levels are checked
//! * Numerical: the converged levels of the spectrum only (cutoff artefacts never count).
//! * The window: where the expected list is complete. A list built from a formula over
//!   n = n_min..n_max knows where it stops being complete: each branch (value of s) is
//!   evaluated once more at n_max + 1; an increasing branch closes the window from above at
//!   that value, a decreasing one from below. A side that no branch closes stays open, so a
//!   forgotten lowest level (n = 0 left out of the range or of the formula) is reported. A
//!   plain list covers [its lowest, its highest] energy unless a window is given
//!   ([`ExpectedList::with_window`]).
//! * Where the spectrum is cut off: when unconverged levels lie above (below) every converged
//!   one, expected levels above (below) the converged range are not checked.
//!
//! # Agreement
//! A numerical level x (bound b) agrees with an expected value e when
//! |x - e| <= b + tolerance x scale + rounding, where scale is the spectrum's typical Landau
//! spacing ([`crate::Spectrum::energy_scale`]) unless set, and rounding =
//! `rounding_ulps` x eps x (|e| + |shift|) covers the evaluation of e itself in double
//! precision (shift: the difference between the list's and the spectrum's reference energy;
//! a formula for the absolute energy of a relativistic level at 1 T cannot be more precise
//! than eps x m c^2).

pub mod formula;
pub mod matching;

mod check;
mod expected;
mod sweep;
mod verdict;

pub use check::check;
pub use expected::{Edge, ExpectedList, Vars, Window};
pub use formula::{formula_scope, LevelFormula};
pub use sweep::{closed_form_check, ClosedFormCheck, ClosedFormTally};
pub use verdict::{
    Agreement, EnergyScale, ExpectedState, NumericalLevel, Outcome, Pair, Unpartnered, Verdict,
    VerifySettings,
};

use formula::CompiledFormula;

/// Everything that can be said about one candidate level of a formula.
type FormulaValue = Option<(f64, u32)>;
