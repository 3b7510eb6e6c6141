//! A small expression language for level formulas: numbers, variables, the physical constants
//! of the model's unit system, arithmetic, comparisons and a few functions. Everything is a
//! double; there is no integer division (`1/2` is 0.5).
//!
//! The full syntax is documented in the README (section Verifying a level formula); in short:
//!
//! * numbers `2`, `0.5`, `1e-6`; variables and constants by name (see [`Scope::for_model`]);
//! * `+ - * /`, `^` (power, right-associative, binds tighter than a unary minus:
//!   `-x^2 = -(x^2)`), parentheses;
//! * comparisons `== != < <= > >=`, logic `&& || !`, and `if(condition, a, b)` (only the chosen
//!   branch is evaluated);
//! * `none`: "no level for these quantum numbers" (e.g. `if(s < 0, none, 0)`);
//! * functions `sqrt abs sign exp ln log10 sin cos tan atan sinh cosh tanh floor ceil round`
//!   (one argument), `hypot(a, b)`, `atan2(y, x)`, `min(a, b, ...)`, `max(a, b, ...)`.
//!
//! An expression is compiled once against a [`Scope`] (unknown names are reported with their
//! column and the list of known names) and then evaluated many times with new values.

use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::model::Model;
use crate::units::{
    Units, BOHR_MAGNETON_MEV_PER_T, ELECTRON_MASS, HBAR_MEV_S, MEV, SPEED_OF_LIGHT,
};

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

/// Unary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Un {
    Neg,
    Not,
}

/// Binary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Bin {
    Add,
    Sub,
    Mul,
    Div,
    Pow,
    Eq,
    Ne,
    Lt,
    Le,
    Gt,
    Ge,
}

/// Logical operators (short-circuit).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Logic {
    And,
    Or,
}

/// Built-in functions.
#[derive(Debug, Clone, Copy)]
enum Func {
    One(fn(f64) -> f64),
    Two(fn(f64, f64) -> f64),
    Min,
    Max,
    If,
}

#[derive(Debug, Clone)]
enum Node {
    Num(f64),
    Bool(bool),
    None,
    Var(usize),
    Unary(Un, Box<Node>),
    Binary(Bin, Box<Node>, Box<Node>),
    Logic(Logic, Box<Node>, Box<Node>),
    Call(&'static str, Func, Vec<Node>),
}

fn sign(x: f64) -> f64 {
    if x > 0.0 {
        1.0
    } else if x < 0.0 {
        -1.0
    } else {
        0.0
    }
}

fn lookup_function(name: &str) -> Option<(&'static str, Func)> {
    let one = |n: &'static str, f: fn(f64) -> f64| Some((n, Func::One(f)));
    match name {
        "sqrt" => one("sqrt", f64::sqrt),
        "abs" => one("abs", f64::abs),
        "sign" => one("sign", sign),
        "exp" => one("exp", f64::exp),
        "ln" => one("ln", f64::ln),
        "log10" => one("log10", f64::log10),
        "sin" => one("sin", f64::sin),
        "cos" => one("cos", f64::cos),
        "tan" => one("tan", f64::tan),
        "atan" => one("atan", f64::atan),
        "sinh" => one("sinh", f64::sinh),
        "cosh" => one("cosh", f64::cosh),
        "tanh" => one("tanh", f64::tanh),
        "floor" => one("floor", f64::floor),
        "ceil" => one("ceil", f64::ceil),
        "round" => one("round", f64::round),
        "hypot" => Some(("hypot", Func::Two(f64::hypot))),
        "atan2" => Some(("atan2", Func::Two(f64::atan2))),
        "min" => Some(("min", Func::Min)),
        "max" => Some(("max", Func::Max)),
        "if" => Some(("if", Func::If)),
        _ => None,
    }
}

/// Names and current values of the variables an expression may use.
///
/// Built by [`Scope::for_model`]: quantum numbers `n`, `s`; the point `B` (alias `field`) and
/// `kz`; the charge `q`; the magnetic length `l_B`; constants `pi`, `hbar`, `e`, `m_e`, `c`,
/// `mu_B` in the model's unit system; in lab units also unit names (`meV`, `eV`, `joule`,
/// `nm`, `angstrom`, `metre`, `fs`, `ps`, `second`, `tesla`, `kg`); and every model parameter
/// by its name (unless it clashes with a name above) and as `param_NAME`.
#[derive(Debug, Clone, PartialEq)]
pub struct Scope {
    names: Vec<String>,
    values: Vec<f64>,
    /// The first `reserved` names are fixed variables and constants that parameters never
    /// shadow.
    reserved: usize,
}

/// Index of `n` in every scope from [`Scope::for_model`].
pub const VAR_N: usize = 0;
/// Index of `s` in every scope from [`Scope::for_model`].
pub const VAR_S: usize = 1;

impl Scope {
    /// An empty scope.
    pub fn new() -> Self {
        Scope {
            names: Vec::new(),
            values: Vec::new(),
            reserved: 0,
        }
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

    /// Add a model parameter: as `NAME` unless that is one of the fixed names of
    /// [`Scope::for_model`] (n, s, B, e, ...), and always as `param_NAME`.
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

    /// The variables of a level formula for `model` at `point`, with `n = s = 0`.
    ///
    /// # Units
    /// Lab models use the coherent system meV, nm, fs, T with charges in e, so that e = 1,
    /// hbar = 658.2119569 meV fs, c = 299.792458 nm/fs, m_e = 5685.63 meV fs^2/nm^2 and
    /// mu_B = 0.057883818 meV/T (all from CODATA 2018 via [`crate::units`]); a velocity
    /// parameter in m/s is converted with `velocity * metre / second`. Natural-unit models
    /// have hbar = c = m_e = e = 1 and mu_B = 1/2 (B in units of B_c).
    pub fn for_model(model: &Model, point: FieldPoint) -> Self {
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
        s.set("pi", std::f64::consts::PI);
        match model.units() {
            Units::Lab => {
                let kg = 1e12 / MEV; // J s^2/m^2 -> meV fs^2/nm^2
                s.set("hbar", HBAR_MEV_S * 1e15);
                s.set("e", 1.0);
                s.set("m_e", ELECTRON_MASS * kg);
                s.set("c", SPEED_OF_LIGHT * 1e-6);
                s.set("mu_B", BOHR_MAGNETON_MEV_PER_T);
                for (name, v) in [
                    ("meV", 1.0),
                    ("eV", 1e3),
                    ("joule", 1.0 / MEV),
                    ("nm", 1.0),
                    ("angstrom", 0.1),
                    ("metre", 1e9),
                    ("fs", 1.0),
                    ("ps", 1e3),
                    ("second", 1e15),
                    ("tesla", 1.0),
                    ("kg", kg),
                ] {
                    s.set(name, v);
                }
            }
            Units::Natural => {
                for (name, v) in [("hbar", 1.0), ("e", 1.0), ("m_e", 1.0), ("c", 1.0)] {
                    s.set(name, v);
                }
                s.set("mu_B", Units::Natural.bohr_magneton());
            }
        }
        s.reserved = s.names.len();
        for (k, &v) in model.params() {
            s.add_parameter(k, v);
        }
        s
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
    /// use ladderfan::verify::expr::{Expr, Scope, Value};
    /// let mut scope = Scope::new();
    /// let n = scope.set("n", 0.0);
    /// let e = Expr::parse("(n + 1/2) * 2^2", &scope, "--formula")?;
    /// scope.set_at(n, 3.0);
    /// assert_eq!(e.eval(&scope), Ok(Value::Num(14.0)));
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn parse(source: &str, scope: &Scope, what: &str) -> Result<Expr> {
        if source.len() > crate::limits::MAX_EXPRESSION_LEN {
            return Err(Error::Parse {
                location: what.to_string(),
                message: format!(
                    "the expression is {} bytes long, more than the limit of {}; shorten it \
                     (e.g. with a model parameter)",
                    source.len(),
                    crate::limits::MAX_EXPRESSION_LEN
                ),
            });
        }
        let mut p = Parser {
            src: source.as_bytes(),
            pos: 0,
            depth: 0,
            scope,
        };
        let root = p
            .expr()
            .and_then(|n| {
                p.skip_ws();
                if p.pos < p.src.len() {
                    Err(p.err(&format!(
                        "unexpected '{}' after a complete expression",
                        p.src[p.pos] as char
                    )))
                } else {
                    Ok(n)
                }
            })
            .map_err(|message| Error::Parse {
                location: what.to_string(),
                message: format!("{message} in \"{}\"", crate::limits::excerpt(source)),
            })?;
        Ok(Expr {
            source: source.to_string(),
            root,
        })
    }

    /// The text the expression was compiled from.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// Evaluate with the current values of `scope` (the scope it was compiled against, or one
    /// with the same names in the same order).
    ///
    /// # Errors
    /// A message for a type error: arithmetic on a comparison or on `none`, a number used as a
    /// condition. Non-finite numbers are returned as they are (the caller decides).
    pub fn eval(&self, scope: &Scope) -> std::result::Result<Value, String> {
        eval(&self.root, &scope.values)
    }
}

fn num(v: Value, what: &str) -> std::result::Result<f64, String> {
    match v {
        Value::Num(x) => Ok(x),
        Value::Bool(_) => Err(format!(
            "{what} is a comparison (true/false) where a number is needed"
        )),
        Value::None => Err(format!(
            "{what} is `none` where a number is needed (use none only as the whole result)"
        )),
    }
}

fn boolean(v: Value, what: &str) -> std::result::Result<bool, String> {
    match v {
        Value::Bool(b) => Ok(b),
        _ => Err(format!(
            "{what} must be a comparison such as n == 0, not a number or none"
        )),
    }
}

fn eval(node: &Node, vars: &[f64]) -> std::result::Result<Value, String> {
    Ok(match node {
        Node::Num(x) => Value::Num(*x),
        Node::Bool(b) => Value::Bool(*b),
        Node::None => Value::None,
        Node::Var(i) => Value::Num(vars[*i]),
        Node::Unary(Un::Neg, a) => Value::Num(-num(eval(a, vars)?, "the operand of -")?),
        Node::Unary(Un::Not, a) => Value::Bool(!boolean(eval(a, vars)?, "the operand of !")?),
        Node::Logic(Logic::And, a, b) => Value::Bool(
            boolean(eval(a, vars)?, "the left side of &&")?
                && boolean(eval(b, vars)?, "the right side of &&")?,
        ),
        Node::Logic(Logic::Or, a, b) => Value::Bool(
            boolean(eval(a, vars)?, "the left side of ||")?
                || boolean(eval(b, vars)?, "the right side of ||")?,
        ),
        Node::Binary(op, a, b) => {
            let x = num(eval(a, vars)?, "an operand")?;
            let y = num(eval(b, vars)?, "an operand")?;
            match op {
                Bin::Add => Value::Num(x + y),
                Bin::Sub => Value::Num(x - y),
                Bin::Mul => Value::Num(x * y),
                Bin::Div => Value::Num(x / y),
                Bin::Pow => Value::Num(pow(x, y)),
                Bin::Eq => Value::Bool(x == y),
                Bin::Ne => Value::Bool(x != y),
                Bin::Lt => Value::Bool(x < y),
                Bin::Le => Value::Bool(x <= y),
                Bin::Gt => Value::Bool(x > y),
                Bin::Ge => Value::Bool(x >= y),
            }
        }
        Node::Call(name, f, args) => match f {
            Func::If => {
                if boolean(eval(&args[0], vars)?, "the condition of if")? {
                    eval(&args[1], vars)?
                } else {
                    eval(&args[2], vars)?
                }
            }
            Func::One(g) => Value::Num(g(num(
                eval(&args[0], vars)?,
                &format!("the argument of {name}"),
            )?)),
            Func::Two(g) => Value::Num(g(
                num(eval(&args[0], vars)?, &format!("the argument of {name}"))?,
                num(eval(&args[1], vars)?, &format!("the argument of {name}"))?,
            )),
            Func::Min | Func::Max => {
                let mut acc: Option<f64> = None;
                for a in args {
                    let x = num(eval(a, vars)?, &format!("an argument of {name}"))?;
                    acc = Some(match acc {
                        None => x,
                        Some(y) if matches!(f, Func::Min) => y.min(x),
                        Some(y) => y.max(x),
                    });
                }
                Value::Num(acc.unwrap_or(f64::NAN))
            }
        },
    })
}

/// x^y with exact small integer powers (x^2 = x*x), so that squares of negative numbers and
/// of large values keep full precision.
fn pow(x: f64, y: f64) -> f64 {
    if y.fract() == 0.0 && y.abs() <= 64.0 {
        x.powi(y as i32)
    } else {
        x.powf(y)
    }
}

struct Parser<'a> {
    src: &'a [u8],
    pos: usize,
    /// Current nesting (parentheses, signs, powers, calls), bounded by
    /// [`crate::limits::MAX_EXPRESSION_DEPTH`].
    depth: usize,
    scope: &'a Scope,
}

type PResult = std::result::Result<Node, String>;

impl Parser<'_> {
    fn err(&self, msg: &str) -> String {
        format!("column {}: {msg}", self.pos + 1)
    }

    fn skip_ws(&mut self) {
        while self.pos < self.src.len() && self.src[self.pos].is_ascii_whitespace() {
            self.pos += 1;
        }
    }

    fn peek(&mut self) -> Option<u8> {
        self.skip_ws();
        self.src.get(self.pos).copied()
    }

    /// Consume `tok` if it comes next.
    fn eat(&mut self, tok: &str) -> bool {
        self.skip_ws();
        if self.src[self.pos..].starts_with(tok.as_bytes()) {
            self.pos += tok.len();
            true
        } else {
            false
        }
    }

    fn expr(&mut self) -> PResult {
        let mut a = self.and()?;
        while self.eat("||") {
            let b = self.and()?;
            a = Node::Logic(Logic::Or, Box::new(a), Box::new(b));
        }
        Ok(a)
    }

    fn and(&mut self) -> PResult {
        let mut a = self.cmp()?;
        while self.eat("&&") {
            let b = self.cmp()?;
            a = Node::Logic(Logic::And, Box::new(a), Box::new(b));
        }
        Ok(a)
    }

    fn cmp(&mut self) -> PResult {
        let a = self.add()?;
        let op = if self.eat("==") {
            Bin::Eq
        } else if self.eat("!=") {
            Bin::Ne
        } else if self.eat("<=") {
            Bin::Le
        } else if self.eat(">=") {
            Bin::Ge
        } else if self.eat("<") {
            Bin::Lt
        } else if self.eat(">") {
            Bin::Gt
        } else if self.peek() == Some(b'=') {
            return Err(self.err("a single '=' is not an operator; compare with '=='"));
        } else {
            return Ok(a);
        };
        let b = self.add()?;
        Ok(Node::Binary(op, Box::new(a), Box::new(b)))
    }

    fn add(&mut self) -> PResult {
        let mut a = self.mul()?;
        loop {
            let op = match self.peek() {
                Some(b'+') => Bin::Add,
                Some(b'-') => Bin::Sub,
                _ => return Ok(a),
            };
            self.pos += 1;
            let b = self.mul()?;
            a = Node::Binary(op, Box::new(a), Box::new(b));
        }
    }

    fn mul(&mut self) -> PResult {
        let mut a = self.unary()?;
        loop {
            let op = match self.peek() {
                Some(b'*') => Bin::Mul,
                Some(b'/') => Bin::Div,
                _ => return Ok(a),
            };
            self.pos += 1;
            let b = self.unary()?;
            a = Node::Binary(op, Box::new(a), Box::new(b));
        }
    }

    /// Every recursion of the parser passes through here, so this is where the depth is counted.
    fn unary(&mut self) -> PResult {
        self.depth += 1;
        if self.depth > crate::limits::MAX_EXPRESSION_DEPTH {
            return Err(self.err(&format!(
                "the expression nests more than {} levels deep (parentheses, signs, powers and \
                 calls together); simplify it",
                crate::limits::MAX_EXPRESSION_DEPTH
            )));
        }
        let node = self.unary_inner();
        self.depth -= 1;
        node
    }

    fn unary_inner(&mut self) -> PResult {
        match self.peek() {
            Some(b'-') => {
                self.pos += 1;
                Ok(Node::Unary(Un::Neg, Box::new(self.unary()?)))
            }
            Some(b'+') => {
                self.pos += 1;
                self.unary()
            }
            Some(b'!') if self.src.get(self.pos + 1) != Some(&b'=') => {
                self.pos += 1;
                Ok(Node::Unary(Un::Not, Box::new(self.unary()?)))
            }
            _ => self.power(),
        }
    }

    fn power(&mut self) -> PResult {
        let base = self.atom()?;
        if self.peek() == Some(b'^') {
            self.pos += 1;
            let exp = self.unary()?;
            return Ok(Node::Binary(Bin::Pow, Box::new(base), Box::new(exp)));
        }
        if self.src[self.pos..].starts_with(b"**") {
            return Err(self.err("use '^' for powers, not '**'"));
        }
        Ok(base)
    }

    fn atom(&mut self) -> PResult {
        let c = match self.peek() {
            Some(c) => c,
            None => return Err(self.err("the expression ends where a value is expected")),
        };
        if c == b'(' {
            self.pos += 1;
            let e = self.expr()?;
            if !self.eat(")") {
                return Err(self.err("missing ')'"));
            }
            return Ok(e);
        }
        if c.is_ascii_digit() || c == b'.' {
            return self.number();
        }
        if c.is_ascii_alphabetic() || c == b'_' {
            let start = self.pos;
            while self.pos < self.src.len()
                && (self.src[self.pos].is_ascii_alphanumeric() || self.src[self.pos] == b'_')
            {
                self.pos += 1;
            }
            let name = String::from_utf8_lossy(&self.src[start..self.pos]).into_owned();
            if self.peek() == Some(b'(') {
                return self.call(&name, start);
            }
            return match name.as_str() {
                "none" => Ok(Node::None),
                "true" => Ok(Node::Bool(true)),
                "false" => Ok(Node::Bool(false)),
                _ => match self.scope.index(&name) {
                    Some(i) => Ok(Node::Var(i)),
                    None => {
                        self.pos = start;
                        let known = self.scope.names().join(", ");
                        Err(self.err(&format!(
                            "unknown variable '{}'; known names: {known}",
                            crate::limits::excerpt(&name)
                        )))
                    }
                },
            };
        }
        Err(self.err(&format!("unexpected '{}'", c as char)))
    }

    fn call(&mut self, name: &str, start: usize) -> PResult {
        let (fname, f) = match lookup_function(name) {
            Some(x) => x,
            None => {
                self.pos = start;
                return Err(self.err(&format!(
                    "unknown function '{}'; known: sqrt abs sign exp ln log10 sin cos tan \
                     atan sinh cosh tanh floor ceil round hypot atan2 min max if",
                    crate::limits::excerpt(name)
                )));
            }
        };
        self.pos += 1; // '('
        let mut args = Vec::new();
        if !self.eat(")") {
            loop {
                args.push(self.expr()?);
                if self.eat(",") {
                    continue;
                }
                if self.eat(")") {
                    break;
                }
                return Err(self.err(&format!("expected ',' or ')' in the call of {name}")));
            }
        }
        let want = match f {
            Func::One(_) => Some(1),
            Func::Two(_) => Some(2),
            Func::If => Some(3),
            Func::Min | Func::Max => None,
        };
        match want {
            Some(k) if args.len() != k => {
                return Err(self.err(&format!(
                    "{name} takes {k} argument{}, got {}",
                    if k == 1 { "" } else { "s" },
                    args.len()
                )))
            }
            None if args.is_empty() => {
                return Err(self.err(&format!("{name} needs at least one argument")))
            }
            _ => {}
        }
        Ok(Node::Call(fname, f, args))
    }

    fn number(&mut self) -> PResult {
        let start = self.pos;
        let digits = |p: &mut Self| {
            while p.pos < p.src.len() && p.src[p.pos].is_ascii_digit() {
                p.pos += 1;
            }
        };
        digits(self);
        if self.src.get(self.pos) == Some(&b'.') {
            self.pos += 1;
            digits(self);
        }
        if matches!(self.src.get(self.pos), Some(b'e' | b'E')) {
            let save = self.pos;
            self.pos += 1;
            if matches!(self.src.get(self.pos), Some(b'+' | b'-')) {
                self.pos += 1;
            }
            let before = self.pos;
            digits(self);
            if self.pos == before {
                // `2e` followed by a name, e.g. `2e` is not an exponent: leave it
                self.pos = save;
            }
        }
        let text = String::from_utf8_lossy(&self.src[start..self.pos]);
        let x: f64 = match text.parse() {
            Ok(x) => x,
            Err(_) => {
                self.pos = start;
                return Err(self.err(&format!(
                    "'{}' is not a number",
                    crate::limits::excerpt(&text)
                )));
            }
        };
        if let Some(c) = self.src.get(self.pos) {
            if c.is_ascii_alphabetic() || *c == b'_' {
                return Err(
                    self.err("a number runs into a name; write the product with '*' (e.g. 2*n)")
                );
            }
        }
        Ok(Node::Num(x))
    }
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
    fn lab_constants_are_coherent() {
        // meV-nm-fs-T system: hbar^2/(2 m_e) = 38.0998 meV nm^2 and hbar e / m_e = 2 mu_B
        // (CODATA 2018 values, common practice).
        let m = match crate::models::schrodinger(crate::models::MassParams::default()) {
            Ok(m) => m,
            Err(e) => panic!("{e}"),
        };
        let s = Scope::for_model(&m, FieldPoint::field(1.0));
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
