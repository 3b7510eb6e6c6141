//! The recursive-descent parser: text -> syntax tree, with names resolved against a
//! [`Scope`] and nesting bounded by [`crate::limits::MAX_EXPRESSION_DEPTH`].

use super::names::{lookup_function, Func, FUNCTIONS};
use super::{Front, Scope};

/// Unary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Un {
    Neg,
    Not,
}

/// Binary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Bin {
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
pub(super) enum Logic {
    And,
    Or,
}

/// A syntax tree; variables are indices into the scope's values.
#[derive(Debug, Clone)]
pub(super) enum Node {
    Num(f64),
    Bool(bool),
    None,
    Var(usize),
    Unary(Un, Box<Node>),
    Binary(Bin, Box<Node>, Box<Node>),
    Logic(Logic, Box<Node>, Box<Node>),
    Call(&'static str, Func, Vec<Node>),
}

impl Node {
    /// Push the index of every variable the tree reads.
    pub(super) fn variables(&self, out: &mut Vec<usize>) {
        match self {
            Node::Num(_) | Node::Bool(_) | Node::None => {}
            Node::Var(i) => out.push(*i),
            Node::Unary(_, a) => a.variables(out),
            Node::Binary(_, a, b) | Node::Logic(_, a, b) => {
                a.variables(out);
                b.variables(out);
            }
            Node::Call(_, _, args) => args.iter().for_each(|a| a.variables(out)),
        }
    }
}

pub(super) struct Parser<'a> {
    pub(super) src: &'a [u8],
    pub(super) pos: usize,
    /// Current nesting (parentheses, signs, powers, calls), bounded by
    /// [`crate::limits::MAX_EXPRESSION_DEPTH`].
    pub(super) depth: usize,
    pub(super) scope: &'a Scope,
}

type PResult = std::result::Result<Node, String>;

impl Parser<'_> {
    pub(super) fn err(&self, msg: &str) -> String {
        format!("column {}: {msg}", self.pos + 1)
    }

    pub(super) fn skip_ws(&mut self) {
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

    pub(super) fn expr(&mut self) -> PResult {
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
                 calls together); simplify it or split it into parameters",
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
                        let name = crate::limits::excerpt(&name);
                        Err(self.err(&match self.scope.front {
                            Front::Formula => {
                                format!("unknown variable '{name}'; known names: {known}")
                            }
                            Front::ModelFile => format!(
                                "unknown name '{name}'; define it in [parameters] or use one \
                                 of: {known}"
                            ),
                        }))
                    }
                },
            };
        }
        Err(self.err(&format!("unexpected '{}'", c as char)))
    }

    fn call(&mut self, name: &str, start: usize) -> PResult {
        let (fname, f) = match lookup_function(name, self.scope.units) {
            Some(x) => x,
            None => {
                self.pos = start;
                return Err(self.err(&format!(
                    "unknown function '{}'; known: {}{}",
                    crate::limits::excerpt(name),
                    FUNCTIONS.join(" "),
                    if self.scope.units.is_none() {
                        " (hbar_v only with a model's unit system)"
                    } else {
                        ""
                    }
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
