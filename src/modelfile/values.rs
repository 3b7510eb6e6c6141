//! Values in a model file: real and complex scalars (numbers or expression strings), matrices
//! (Pauli strings or explicit rows) and monomials.

use super::Source;
use crate::error::Result;
use crate::expr::Scope;
use crate::matrix::{self, SpinMatrix};
use crate::model::Monomial;
use num_complex::Complex64;
use std::ops::Range;
use toml::Spanned;

pub(super) fn real_value(
    src: &Source,
    v: &Spanned<toml::Value>,
    scope: &Scope,
    what: &str,
) -> Result<f64> {
    let x = scalar(src, v.get_ref(), &v.span(), scope, what)?;
    Ok(x)
}

fn scalar(
    src: &Source,
    v: &toml::Value,
    span: &Range<usize>,
    scope: &Scope,
    what: &str,
) -> Result<f64> {
    let x = match v {
        toml::Value::Integer(i) => *i as f64,
        toml::Value::Float(f) => *f,
        toml::Value::String(s) => crate::expr::evaluate(s, scope).map_err(|m| {
            src.err(
                span,
                format!("{what}: in \"{}\": {m}", crate::limits::excerpt(s)),
            )
        })?,
        other => {
            return Err(src.err(
                span,
                format!(
                "{what} is a {}; give a number or an expression string such as \"0.5 * g * mu_B\"",
                other.type_str()
            ),
            ))
        }
    };
    if !x.is_finite() {
        return Err(src.err(
            span,
            format!("{what} is {x}, not a finite number; give a finite value"),
        ));
    }
    Ok(x)
}

fn complex_scalar(
    src: &Source,
    v: &toml::Value,
    span: &Range<usize>,
    scope: &Scope,
    what: &str,
) -> Result<Complex64> {
    match v {
        toml::Value::Array(a) => {
            if a.len() != 2 {
                return Err(src.err(
                    span,
                    format!(
                        "{what}: a complex number is written [re, im]; this array has {} entries",
                        a.len()
                    ),
                ));
            }
            Ok(Complex64::new(
                scalar(src, &a[0], span, scope, what)?,
                scalar(src, &a[1], span, scope, what)?,
            ))
        }
        _ => Ok(Complex64::new(scalar(src, v, span, scope, what)?, 0.0)),
    }
}

pub(super) fn complex_value(
    src: &Source,
    v: &Spanned<toml::Value>,
    scope: &Scope,
    what: &str,
) -> Result<Complex64> {
    complex_scalar(src, v.get_ref(), &v.span(), scope, what)
}

pub(super) fn matrix_value(
    src: &Source,
    v: &Spanned<toml::Value>,
    scope: &Scope,
    label: &str,
) -> Result<SpinMatrix> {
    let span = v.span();
    match v.get_ref() {
        toml::Value::String(s) => {
            matrix::pauli(s).map_err(|e| src.err(&span, format!("matrix of {label}: {e}")))
        }
        toml::Value::Array(rows) => {
            let mut out: Vec<Vec<Complex64>> = Vec::new();
            for (r, row) in rows.iter().enumerate() {
                let toml::Value::Array(entries) = row else {
                    return Err(src.err(
                        &span,
                        format!(
                            "matrix of {label}: row {} is not an array; write rows as [[a, b], [c, d]] \
                             with complex entries as [re, im]",
                            r + 1
                        ),
                    ));
                };
                let mut out_row = Vec::new();
                for (c, e) in entries.iter().enumerate() {
                    out_row.push(complex_scalar(
                        src,
                        e,
                        &span,
                        scope,
                        &format!("matrix of {label}, entry ({}, {})", r + 1, c + 1),
                    )?);
                }
                out.push(out_row);
            }
            let n = out.len();
            if n == 0 || out.iter().any(|r| r.len() != n) {
                return Err(src.err(
                    &span,
                    format!(
                        "matrix of {label} is not square (rows of lengths {:?}); give as many \
                         entries in each row as there are rows",
                        out.iter().map(Vec::len).collect::<Vec<_>>()
                    ),
                ));
            }
            matrix::from_rows(&out).map_err(|e| src.err(&span, e.to_string()))
        }
        other => Err(src.err(
            &span,
            format!(
                "matrix of {label} is a {}; give a Pauli string such as \"x⊗z\" or explicit rows",
                other.type_str()
            ),
        )),
    }
}

/// Parse a monomial such as `"1"`, `"kx"`, `"kx^2 ky"`, `"kx*ky"`, `"kz^2"`, `"B"` or `"kz B"`.
///
/// # Errors
/// A message naming the unknown factor or bad power.
///
/// # Examples
/// ```
/// use ladderfan::modelfile::parse_monomial;
/// let m = parse_monomial("kx^2 * ky B")?;
/// assert_eq!((m.kx, m.ky, m.kz, m.field), (2, 1, 0, 1));
/// # Ok::<(), String>(())
/// ```
pub fn parse_monomial(s: &str) -> std::result::Result<Monomial, String> {
    let mut m = Monomial::ONE;
    let mut any = false;
    for f in s.split(|c: char| c.is_whitespace() || c == '*' || c == '·') {
        if f.is_empty() {
            continue;
        }
        any = true;
        if f == "1" {
            continue;
        }
        let (base, pow) = match f.split_once('^') {
            Some((b, p)) => (
                b,
                p.parse::<u32>().map_err(|_| {
                    format!(
                        "power '{}' in '{}' is not a non-negative integer; write e.g. kx^2",
                        crate::limits::excerpt(p),
                        crate::limits::excerpt(f)
                    )
                })?,
            ),
            None => (f, 1),
        };
        let slot = match base {
            "kx" => &mut m.kx,
            "ky" => &mut m.ky,
            "kz" => &mut m.kz,
            "B" => &mut m.field,
            _ => {
                return Err(format!(
                    "unknown factor '{}'; use kx, ky, kz and B with integer powers, or \"1\"",
                    crate::limits::excerpt(base)
                ))
            }
        };
        *slot += pow;
    }
    if !any {
        return Err("empty monomial; write \"1\" for a constant term".into());
    }
    if m.field > 1 {
        return Err(format!(
            "B^{}: terms may be at most linear in the field B",
            m.field
        ));
    }
    Ok(m)
}
