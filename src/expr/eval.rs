//! Evaluation of a syntax tree against the current values of a scope.

use super::names::Func;
use super::parse::{Bin, Logic, Node, Un};
use super::Value;

pub(super) fn num(v: Value, what: &str) -> std::result::Result<f64, String> {
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

pub(super) fn eval(node: &Node, vars: &[f64]) -> std::result::Result<Value, String> {
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
