//! Verify an analytic level formula against the exact spectrum: every level, including the
//! special ones.
//!
//! The expected levels come as an [`ExpectedList`]: from a Rust closure over the quantum
//! numbers ([`ExpectedList::from_fn`]), from formulas in the small expression language of
//! [`expr`] ([`ExpectedList::from_formula`], documented in the README (section Verifying a level formula)), from a list or a
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

mod check;
mod expected;
pub mod expr;
pub mod matching;
mod sweep;
mod verdict;

pub use check::check;
pub use expected::{Edge, ExpectedList, Vars, Window};
pub use sweep::{closed_form_check, ClosedFormCheck};
pub use verdict::{
    Agreement, EnergyScale, ExpectedState, NumericalLevel, Outcome, Pair, Unpartnered, Verdict,
    VerifySettings,
};

use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::model::Model;
use expr::{Expr, Scope, Value, VAR_N, VAR_S};

/// Everything that can be said about one candidate level of a formula.
type FormulaValue = Option<(f64, u32)>;

/// Level formulas as text, in the expression language of [`expr`] (see the README (section Verifying a level formula)).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LevelFormula {
    /// The energy E(n, s) (flag `--formula`).
    pub formula: String,
    /// The n = 0 level, evaluated once with s = 0 (flag `--formula-n0`).
    pub n0: Option<String>,
    /// Conditional cases `(condition, energy)`, tried in order before `formula`
    /// (flag `--case "CONDITION => ENERGY"`).
    pub cases: Vec<(String, String)>,
    /// Multiplicity expression (flag `--multiplicity`, default 1).
    pub multiplicity: Option<String>,
    /// Extra named values, added like model parameters (e.g. the command line's parameter
    /// names of a built-in model, `mass_mev`, `velocity_m_per_s`).
    pub variables: Vec<(String, f64)>,
}

struct CompiledFormula {
    scope: Scope,
    formula: Expr,
    n0: Option<Expr>,
    cases: Vec<(Expr, Expr)>,
    multiplicity: Option<Expr>,
}

impl CompiledFormula {
    fn new(model: &Model, point: FieldPoint, f: &LevelFormula) -> Result<Self> {
        let mut scope = Scope::for_model(model, point);
        for (k, v) in &f.variables {
            scope.add_parameter(k, *v);
        }
        let formula = Expr::parse(&f.formula, &scope, "--formula")?;
        let n0 = match &f.n0 {
            Some(t) => Some(Expr::parse(t, &scope, "--formula-n0")?),
            None => None,
        };
        let mut cases = Vec::new();
        for (i, (c, e)) in f.cases.iter().enumerate() {
            let loc = format!("--case #{}", i + 1);
            cases.push((Expr::parse(c, &scope, &loc)?, Expr::parse(e, &scope, &loc)?));
        }
        let multiplicity = match &f.multiplicity {
            Some(t) => Some(Expr::parse(t, &scope, "--multiplicity")?),
            None => None,
        };
        Ok(CompiledFormula {
            scope,
            formula,
            n0,
            cases,
            multiplicity,
        })
    }

    fn value(&self, e: &Expr, what: &str, n: i64, s: i8) -> Result<Option<f64>> {
        let err = |message: String| Error::Parse {
            location: what.to_string(),
            message,
        };
        match e.eval(&self.scope) {
            Ok(Value::Num(x)) if x.is_finite() => Ok(Some(x)),
            Ok(Value::Num(x)) => Err(err(format!(
                "\"{}\" gives {x} at n = {n}, s = {s}; check it for a square root of a negative \
                 number or a division by zero (return none where there is no level)",
                e.source()
            ))),
            Ok(Value::None) => Ok(None),
            Ok(Value::Bool(_)) => Err(err(format!(
                "\"{}\" is a comparison, not an energy",
                e.source()
            ))),
            Err(m) => Err(err(format!("\"{}\" at n = {n}, s = {s}: {m}", e.source()))),
        }
    }

    fn finish(&self, energy: Option<f64>, n: i64, s: i8) -> Result<FormulaValue> {
        let e = match energy {
            Some(e) => e,
            None => return Ok(None),
        };
        let m = match &self.multiplicity {
            None => 1,
            Some(me) => match self.value(me, "--multiplicity", n, s)? {
                None => 0,
                Some(x) if x.fract() == 0.0 && (0.0..=64.0).contains(&x) => x as u32,
                Some(x) => {
                    return Err(Error::Parse {
                        location: "--multiplicity".into(),
                        message: format!(
                            "\"{}\" gives {x} at n = {n}, s = {s}; a multiplicity is a whole \
                             number in 0..=64",
                            me.source()
                        ),
                    })
                }
            },
        };
        Ok(Some((e, m)))
    }

    fn eval(&mut self, n: i64, s: i8) -> Result<FormulaValue> {
        self.scope.set_at(VAR_N, n as f64);
        self.scope.set_at(VAR_S, s as f64);
        for (i, (cond, val)) in self.cases.iter().enumerate() {
            let loc = format!("--case #{}", i + 1);
            match cond.eval(&self.scope) {
                Ok(Value::Bool(true)) => {
                    let e = self.value(val, &loc, n, s)?;
                    return self.finish(e, n, s);
                }
                Ok(Value::Bool(false)) => {}
                Ok(_) => {
                    return Err(Error::Parse {
                        location: loc,
                        message: format!(
                            "the condition \"{}\" must be a comparison such as n == 0",
                            cond.source()
                        ),
                    })
                }
                Err(m) => {
                    return Err(Error::Parse {
                        location: loc,
                        message: format!("\"{}\": {m}", cond.source()),
                    })
                }
            }
        }
        let e = self.value(&self.formula, "--formula", n, s)?;
        self.finish(e, n, s)
    }

    fn eval_n0(&mut self) -> Result<FormulaValue> {
        self.scope.set_at(VAR_N, 0.0);
        self.scope.set_at(VAR_S, 0.0);
        match &self.n0 {
            Some(e) => {
                let v = self.value(e, "--formula-n0", 0, 0)?;
                self.finish(v, 0, 0)
            }
            None => Ok(None),
        }
    }
}
