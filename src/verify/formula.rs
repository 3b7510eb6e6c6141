//! Level formulas: the text of `--formula` and friends compiled once in the crate's expression
//! language ([`crate::expr`]) against the variables of a level, then evaluated per (n, s).

use super::FormulaValue;
use crate::error::{Error, Result};
use crate::expr::{Expr, Scope, Value};
use crate::hamiltonian::FieldPoint;
use crate::model::Model;

/// Index of `n` in every scope from [`formula_scope`].
pub const VAR_N: usize = 0;
/// Index of `s` in every scope from [`formula_scope`].
pub const VAR_S: usize = 1;

/// The variables of a level formula for `model` at `point`, with `n = s = 0`.
///
/// In order: quantum numbers `n`, `s`; the point `B` (alias `field`) and `kz`; the charge `q`;
/// the magnetic length `l_B`; the constants and unit names of the model's unit system
/// ([`crate::expr::constants`], [`crate::expr::unit_names`]: `pi`, `hbar`, `e`, `m_e`, `c`,
/// `mu_B`, `hbar2_2me`, `hbar_c`, `me_c2`, and in lab units `meV`, `nm`, `fs`, `metre`,
/// `second`, ...); then every model parameter by its name (unless it clashes with a name
/// above) and as `param_NAME`.
///
/// # Units
/// Lab models use the coherent system meV, nm, fs, T with charges in e (hbar = 658.2119569
/// meV fs, c = 299.792458 nm/fs, CODATA 2018); a velocity parameter in m/s is converted with
/// `velocity * metre / second`. Natural-unit models have hbar = c = m_e = e = 1 and
/// mu_B = 1/2 (B in units of B_c).
pub fn formula_scope(model: &Model, point: FieldPoint) -> Scope {
    let mut s = Scope::new();
    s.set("n", 0.0);
    s.set("s", 0.0);
    s.set("B", point.field);
    s.set("field", point.field);
    s.set("kz", point.kz);
    s.set("q", model.charge());
    s.set(
        "l_B",
        model.units().magnetic_length(point.field, model.charge()),
    );
    s.add_constants(model.units());
    s.reserve();
    for (k, &v) in model.params() {
        s.add_parameter(k, v);
    }
    s
}

/// Level formulas as text, in the expression language of [`crate::expr`] (see the README (section Verifying a level formula)).
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

pub(super) struct CompiledFormula {
    scope: Scope,
    formula: Expr,
    pub(super) n0: Option<Expr>,
    cases: Vec<(Expr, Expr)>,
    multiplicity: Option<Expr>,
}

impl CompiledFormula {
    pub(super) fn new(model: &Model, point: FieldPoint, f: &LevelFormula) -> Result<Self> {
        let mut scope = formula_scope(model, point);
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

    pub(super) fn eval(&mut self, n: i64, s: i8) -> Result<FormulaValue> {
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

    pub(super) fn eval_n0(&mut self) -> Result<FormulaValue> {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lab_constants_are_coherent() {
        // meV-nm-fs-T system: hbar^2/(2 m_e) = 38.0998 meV nm^2 and hbar e / m_e = 2 mu_B
        // (CODATA 2018 values, common practice).
        let m = match crate::models::schrodinger(crate::models::MassParams::default()) {
            Ok(m) => m,
            Err(e) => panic!("{e}"),
        };
        let s = formula_scope(&m, FieldPoint::field(1.0));
        let get = |k: &str| s.get(k).unwrap_or(f64::NAN);
        let r = get("hbar").powi(2) / (2.0 * get("m_e"));
        assert!(
            (r / crate::units::HBAR2_OVER_2ME_MEV_NM2 - 1.0).abs() < 1e-14,
            "{r}"
        );
        let w = get("hbar") * get("e") / get("m_e");
        assert!((w / (2.0 * get("mu_B")) - 1.0).abs() < 1e-14, "{w}");
        // 1e6 m/s = 1 nm/fs
        assert!((1e6 * get("metre") / get("second") - 1.0).abs() < 1e-15);
        assert_eq!(get("mass_ratio"), 1.0);
        assert_eq!(get("param_mass_ratio"), 1.0);
        // l_B at 1 T: 25.6556 nm (common practice value)
        assert!((get("l_B") - 25.6556).abs() < 1e-3);
    }
}
