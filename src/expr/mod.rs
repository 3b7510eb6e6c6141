//! The one expression language of the crate: model-file parameters and coefficients, `--set`
//! values and level formulas are all parsed and evaluated here. Everything is a double; there
//! is no integer division (`1/2` is 0.5).
//!
//! The syntax is documented in the README (sections Model files and Verifying a level
//! formula); in short:
//!
//! * numbers `2`, `0.5`, `1e-6`; names of variables, parameters and constants
//!   ([`constants`], [`unit_names`]);
//! * `+ - * /`, `^` (power, right-associative, binds tighter than a unary minus:
//!   `-x^2 = -(x^2)`; integer powers up to 64 are exact products), parentheses;
//! * comparisons `== != < <= > >=`, logic `&& || !`, and `if(condition, a, b)` (only the chosen
//!   branch is evaluated);
//! * `none`: "no level for these quantum numbers" (e.g. `if(s < 0, none, 0)`), meaningful in
//!   level formulas;
//! * the functions of [`FUNCTIONS`]: `sqrt abs sign exp ln log10 sin cos tan atan sinh cosh
//!   tanh floor ceil round` and `hbar_v` (one argument), `hypot(a, b)`, `atan2(y, x)`,
//!   `min(a, b, ...)`, `max(a, b, ...)`.
//!
//! An expression is compiled once against a [`Scope`] (unknown names are reported with their
//! column and the list of known names) and then evaluated many times with new values. The
//! input limits (length [`crate::limits::MAX_EXPRESSION_LEN`], nesting
//! [`crate::limits::MAX_EXPRESSION_DEPTH`]) are checked here and nowhere else.

mod eval;
mod names;
mod parse;

pub use names::{constants, unit_names, Constant, FUNCTIONS, KEYWORDS};

use crate::error::{Error, Result};
use crate::units::Units;
use parse::{Node, Parser};
use std::collections::BTreeMap;

/// The value of an expression.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Value {
    /// A number.
    Num(f64),
    /// The result of a comparison or logical operator.
    Bool(bool),
    /// `none`: no level for these quantum numbers.
    None,
}

/// Which front end compiles against a scope; it changes only how an unknown name is reported
/// (a formula names its variables, a model file says where to define a parameter).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Front {
    /// A level formula (`--formula` and friends).
    #[default]
    Formula,
    /// A model file or `--set` value.
    ModelFile,
}

/// Names and current values of the variables an expression may use.
///
/// [`Scope::with_constants`] holds the constants of a unit system; a model file adds its
/// parameters ([`Scope::set`], which may shadow a constant), a level formula its quantum
/// numbers and point first and the model's parameters after [`Scope::reserve`] (see
/// `crate::verify::formula_scope`).
#[derive(Debug, Clone, PartialEq)]
pub struct Scope {
    names: Vec<String>,
    values: Vec<f64>,
    /// The first `reserved` names are fixed variables and constants that parameters never
    /// shadow.
    reserved: usize,
    /// The unit system of the constants (and of `hbar_v`), if any were added.
    units: Option<Units>,
    front: Front,
}

impl Scope {
    /// An empty scope.
    pub fn new() -> Self {
        Scope {
            names: Vec::new(),
            values: Vec::new(),
            reserved: 0,
            units: None,
            front: Front::Formula,
        }
    }

    /// A scope holding the constants and unit names of `units` ([`constants`],
    /// [`unit_names`]).
    pub fn with_constants(units: Units) -> Self {
        let mut s = Scope::new();
        s.add_constants(units);
        s
    }

    /// Add the constants and unit names of `units`; `hbar_v` then converts in this system.
    pub fn add_constants(&mut self, units: Units) {
        for c in constants(units).into_iter().chain(unit_names(units)) {
            self.set(c.name, c.value);
        }
        self.units = Some(units);
    }

    /// The same scope, reporting unknown names as `front` does.
    pub fn for_front(mut self, front: Front) -> Self {
        self.front = front;
        self
    }

    /// Fix every name defined so far: [`Scope::add_parameter`] will not shadow them.
    pub fn reserve(&mut self) {
        self.reserved = self.names.len();
    }

    /// Add (or overwrite) a variable; returns its index.
    pub fn set(&mut self, name: &str, value: f64) -> usize {
        if let Some(i) = self.index(name) {
            self.values[i] = value;
            return i;
        }
        self.names.push(name.to_string());
        self.values.push(value);
        self.names.len() - 1
    }

    /// Add a model parameter: as `NAME` unless that is a name fixed by [`Scope::reserve`]
    /// (n, s, B, e, ... in a level formula), and always as `param_NAME`.
    pub fn add_parameter(&mut self, name: &str, value: f64) {
        if self.names[..self.reserved].iter().all(|x| x != name) {
            self.set(name, value);
        }
        self.set(&format!("param_{name}"), value);
    }

    /// Index of a variable.
    pub fn index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|x| x == name)
    }

    /// Set the value at an index (from [`Scope::set`] or [`Scope::index`]).
    pub fn set_at(&mut self, index: usize, value: f64) {
        self.values[index] = value;
    }

    /// Current value of a variable.
    pub fn get(&self, name: &str) -> Option<f64> {
        self.index(name).map(|i| self.values[i])
    }

    /// All names, in definition order.
    pub fn names(&self) -> &[String] {
        &self.names
    }
}

impl Default for Scope {
    fn default() -> Self {
        Scope::new()
    }
}

/// A compiled expression.
#[derive(Debug, Clone)]
pub struct Expr {
    source: String,
    root: Node,
}

impl Expr {
    /// Compile `source` against the names of `scope`.
    ///
    /// # Errors
    /// [`Error::Parse`] located at `what` (e.g. the flag `--formula`) with the column of the
    /// problem: a syntax error, an unknown variable or function, a wrong number of arguments.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::expr::{Expr, Scope, Value};
    /// let mut scope = Scope::new();
    /// let n = scope.set("n", 0.0);
    /// let e = Expr::parse("(n + 1/2) * 2^2", &scope, "--formula")?;
    /// scope.set_at(n, 3.0);
    /// assert_eq!(e.eval(&scope), Ok(Value::Num(14.0)));
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn parse(source: &str, scope: &Scope, what: &str) -> Result<Expr> {
        Expr::compile(source, scope).map_err(|message| Error::Parse {
            location: what.to_string(),
            message: format!("{message} in \"{}\"", crate::limits::excerpt(source)),
        })
    }

    /// Compile `source` against the names of `scope`, with the problem as a bare message
    /// (`column N: ...`) for a caller that locates it itself (a model file's line and column).
    ///
    /// # Errors
    /// As [`Expr::parse`], plus the input limits: more than
    /// [`crate::limits::MAX_EXPRESSION_LEN`] bytes or nesting deeper than
    /// [`crate::limits::MAX_EXPRESSION_DEPTH`].
    pub fn compile(source: &str, scope: &Scope) -> std::result::Result<Expr, String> {
        if source.len() > crate::limits::MAX_EXPRESSION_LEN {
            return Err(format!(
                "the expression is {} bytes long, more than the limit of {}; shorten it (e.g. \
                 with a parameter)",
                source.len(),
                crate::limits::MAX_EXPRESSION_LEN
            ));
        }
        let mut p = Parser {
            src: source.as_bytes(),
            pos: 0,
            depth: 0,
            scope,
        };
        let root = p.expr()?;
        p.skip_ws();
        if p.pos < p.src.len() {
            return Err(p.err(&format!(
                "unexpected '{}' after a complete expression",
                p.src[p.pos] as char
            )));
        }
        Ok(Expr {
            source: source.to_string(),
            root,
        })
    }

    /// The text the expression was compiled from.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// The indices (into the scope it was compiled against) of the variables it reads,
    /// ascending and without repeats: a model file orders its parameters by them.
    pub fn variables(&self) -> Vec<usize> {
        let mut v = Vec::new();
        self.root.variables(&mut v);
        v.sort_unstable();
        v.dedup();
        v
    }

    /// Evaluate with the current values of `scope` (the scope it was compiled against, or one
    /// with the same names in the same order).
    ///
    /// # Errors
    /// A message for a type error: arithmetic on a comparison or on `none`, a number used as a
    /// condition. Non-finite numbers are returned as they are (the caller decides).
    pub fn eval(&self, scope: &Scope) -> std::result::Result<Value, String> {
        eval::eval(&self.root, &scope.values)
    }

    /// Evaluate to a number (a parameter, coefficient or `--set` value).
    ///
    /// # Errors
    /// As [`Expr::eval`], and when the value is a comparison or `none`. Non-finite numbers are
    /// returned as they are.
    pub fn number(&self, scope: &Scope) -> std::result::Result<f64, String> {
        match self.eval(scope)? {
            Value::Num(x) => Ok(x),
            Value::Bool(_) => Err("the value is a comparison (true/false), not a number".into()),
            Value::None => Err("the value is `none`, not a number".into()),
        }
    }
}

/// Compile and evaluate `source` to a number in `scope` ([`Expr::compile`], [`Expr::number`]).
///
/// # Errors
/// The message of either step.
pub fn evaluate(source: &str, scope: &Scope) -> std::result::Result<f64, String> {
    Expr::compile(source, scope)?.number(scope)
}

/// Evaluate a `--set` value or other stand-alone expression to a finite number, with the
/// constants of `units` and the given parameters (which may shadow a constant).
///
/// # Errors
/// [`Error::Parse`] at `location` naming the unknown name or syntax problem, or a value that is
/// not a finite number.
///
/// # Examples
/// ```
/// use ladderfan::units::Units;
/// let x = ladderfan::expr::eval_expression("2 * mu_B", Units::Natural, &Default::default(), "x")?;
/// assert!((x - 1.0).abs() < 1e-15);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn eval_expression(
    expr: &str,
    units: Units,
    params: &BTreeMap<String, f64>,
    location: &str,
) -> Result<f64> {
    let mut scope = Scope::with_constants(units).for_front(Front::ModelFile);
    for (k, &v) in params {
        scope.set(k, v);
    }
    let x = evaluate(expr, &scope).map_err(|m| Error::Parse {
        location: location.into(),
        message: format!("in \"{}\": {m}", crate::limits::excerpt(expr)),
    })?;
    if !x.is_finite() {
        return Err(Error::Parse {
            location: location.into(),
            message: format!(
                "\"{}\" is {x}, not a finite number; give a finite value",
                crate::limits::excerpt(expr)
            ),
        });
    }
    Ok(x)
}
#[cfg(test)]
mod tests {
    use super::*;

    fn ev(src: &str, scope: &Scope) -> Value {
        match Expr::parse(src, scope, "test") {
            Ok(e) => e.eval(scope).unwrap_or(Value::None),
            Err(e) => panic!("{e}"),
        }
    }

    fn n(src: &str) -> f64 {
        let mut s = Scope::new();
        s.set("x", 3.0);
        match ev(src, &s) {
            Value::Num(x) => x,
            v => panic!("{src}: {v:?}"),
        }
    }

    #[test]
    fn deep_nesting_is_refused_not_a_stack_overflow() {
        // regression: 20,000 nested parentheses overflowed the stack
        let s = Scope::new();
        for (open, want) in [
            (20_000, "limit of 10000"),
            (4_000, "more than 200 levels deep"),
        ] {
            let deep = format!("{}1{}", "(".repeat(open), ")".repeat(open));
            match Expr::parse(&deep, &s, "--formula") {
                Ok(_) => panic!("{open} nested parentheses were accepted"),
                Err(e) => {
                    let m = e.to_string();
                    assert!(m.contains(want), "{m}");
                    assert!(m.len() < 400, "the message quotes the whole input: {m}");
                }
            }
        }
        for deep in ["-".repeat(9_000) + "1", "2^".repeat(4_000) + "1"] {
            assert!(Expr::parse(&deep, &s, "--formula").is_err());
        }
        // just inside the limit: 199 parentheses (plus the top level) parse and evaluate
        let ok = format!("{}1{}", "(".repeat(199), ")".repeat(199));
        assert_eq!(ev(&ok, &s), Value::Num(1.0));
        // the longest chain the length limit allows is a tree about 5000 deep: evaluating and
        // dropping it must fit the 2 MiB stack of a test thread
        let chain = vec!["1"; 4_999].join("+");
        assert!(chain.len() <= crate::limits::MAX_EXPRESSION_LEN);
        assert_eq!(ev(&chain, &s), Value::Num(4999.0));
        let long = vec!["1"; 6_000].join("+");
        assert!(Expr::parse(&long, &s, "--formula").is_err());
    }

    #[test]
    fn precedence_and_float_division() {
        assert_eq!(n("1/2"), 0.5);
        assert_eq!(n("-x^2"), -9.0);
        assert_eq!(n("2^-1"), 0.5);
        assert_eq!(n("2^3^2"), 512.0);
        assert_eq!(n("1 + 2*3 - 4/2"), 5.0);
        assert_eq!(n("(1+2)*3"), 9.0);
        assert_eq!(n("1.5e2 + 2E-1"), 150.2);
        assert_eq!(n("-(-x)"), 3.0);
        assert_eq!(n("if(x > 2 && !(x == 5), 1, 2)"), 1.0);
        assert_eq!(n("if(x < 2 || x != 3, 1, 2)"), 2.0);
        assert_eq!(n("min(4, x, 7) + max(1, 2)"), 5.0);
        assert_eq!(n("sign(-2) + sign(0) + abs(-4)"), 3.0);
        assert_eq!(n("hypot(3, 4)"), 5.0);
        assert_eq!(n("sqrt(16)"), 4.0);
    }

    #[test]
    fn none_and_type_errors() {
        let mut s = Scope::new();
        s.set("x", 1.0);
        assert_eq!(ev("if(x == 1, none, 2)", &s), Value::None);
        let e = match Expr::parse("none + 1", &s, "t") {
            Ok(e) => e,
            Err(e) => panic!("{e}"),
        };
        assert!(e.eval(&s).is_err());
        let e = match Expr::parse("if(x, 1, 2)", &s, "t") {
            Ok(e) => e,
            Err(e) => panic!("{e}"),
        };
        assert!(e.eval(&s).is_err());
    }

    #[test]
    fn syntax_errors_name_the_column() {
        let mut s = Scope::new();
        s.set("n", 1.0);
        for (src, want) in [
            ("n + mas", "column 5: unknown variable 'mas'"),
            ("n +", "ends where a value"),
            ("(n", "missing ')'"),
            ("n = 0", "'=='"),
            ("sqrt(1, 2)", "sqrt takes 1 argument, got 2"),
            ("foo(1)", "unknown function 'foo'"),
            ("2n", "write the product with '*'"),
            ("n ** 2", "'^'"),
            ("n 2", "unexpected '2'"),
        ] {
            match Expr::parse(src, &s, "--formula") {
                Ok(_) => panic!("{src} parsed"),
                Err(e) => {
                    let m = e.to_string();
                    assert!(m.contains(want), "{src}: {m}");
                    assert!(m.starts_with("--formula: "), "{m}");
                }
            }
        }
    }

    #[test]
    fn model_file_scope_numbers_and_shadowing() {
        let mut s = Scope::with_constants(Units::Lab).for_front(Front::ModelFile);
        s.set("a", 3.0);
        let ev = |src: &str, s: &Scope| evaluate(src, s);
        assert_eq!(ev("1 + 2 * a ^ 2", &s), Ok(19.0));
        assert_eq!(ev("(1 + a) / 2e1", &s), Ok(0.2));
        assert_eq!(ev("sqrt(4 * a * a)", &s), Ok(6.0));
        // 1e6 m/s: hbar v = 658.2119569 meV nm (CODATA 2018 hbar)
        let hv = ev("hbar_v(1e6)", &s).unwrap_or(f64::NAN);
        assert!((hv - 658.211_956_9).abs() < 1e-6, "{hv}");
        assert!(
            (ev("hbar * 1e6 * metre / second", &s).unwrap_or(f64::NAN) / hv - 1.0).abs() < 1e-14
        );
        // a comparison or none is not a parameter value
        assert!(ev("a > 1", &s).is_err_and(|m| m.contains("comparison")));
        assert!(ev("none", &s).is_err_and(|m| m.contains("none")));
        let m = ev("b + 1", &s).err().unwrap_or_default();
        assert!(
            m.contains("unknown name 'b'; define it in [parameters]"),
            "{m}"
        );
        // a file's own parameter shadows a constant of the same name
        s.set("c", 2.0);
        assert_eq!(ev("c", &s), Ok(2.0));
        // without a unit system there is no hbar_v
        let m = ev("hbar_v(1)", &Scope::new()).err().unwrap_or_default();
        assert!(m.contains("unknown function 'hbar_v'"), "{m}");
        let (a, c) = (s.index("a"), s.index("c"));
        let mut want: Vec<usize> = [a, c].into_iter().flatten().collect();
        want.sort_unstable();
        assert_eq!(want.len(), 2);
        assert_eq!(
            Expr::compile("a * c + a", &s).map(|e| e.variables()),
            Ok(want)
        );
    }
}
