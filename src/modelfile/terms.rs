//! Files that describe a model term by term: `[parameters]` resolved in dependency order and
//! `[[term]]` tables turned into a [`Model`].

use super::values::{complex_value, matrix_value, parse_monomial, real_value};
use super::{RawFile, RawTerm, Source};
use crate::error::{Error, Result};
use crate::expr::{Front, Scope, FUNCTIONS, KEYWORDS};
use crate::model::{Model, ModelBuilder};
use crate::units::Units;
use std::collections::BTreeMap;
use toml::Spanned;

/// A model described term by term: `components`, `units`, `[parameters]` (with `--set`
/// overrides), `charge`, `name`, `component_names`, `degeneracy`, `reference_energy` and the
/// `[[term]]` tables, in that order, each problem located in the file.
pub(super) fn from_terms(
    src: &Source,
    raw: &RawFile,
    overrides: &[(String, String)],
) -> Result<Model> {
    if let Some(set) = &raw.set {
        return Err(src.err(
            &set.span(),
            "[set] overrides the parameters of a built-in; add builtin = \"NAME\" or move the \
             values to [parameters]",
        ));
    }
    let d = components(src, raw)?;
    let units = units(src, raw)?;
    // parameters: numbers or expressions of other parameters, resolved in dependency order
    let pending: Vec<(&Spanned<String>, &Spanned<toml::Value>)> =
        raw.parameters.iter().flat_map(|p| p.iter()).collect();
    check_parameter_names(src, &pending)?;
    check_overrides(src, &pending, overrides)?;
    let resolved = resolve_parameters(src, units, &pending, overrides)?;
    let scope = &resolved.scope;
    let charge = charge(src, raw, scope)?;
    let mut b = Model::builder(&model_name(src, raw), d)
        .charge(charge)
        .units(units);
    for (k, v) in &resolved.params {
        b = b.param(k, *v);
    }
    b = header(src, raw, scope, d, b)?;
    let terms = raw.term.as_deref().unwrap_or(&[]);
    if terms.is_empty() {
        return Err(src.err(
            &(0..0),
            "the model has no [[term]] tables; add at least one term with coefficient, matrix and monomial",
        ));
    }
    for (i, t) in terms.iter().enumerate() {
        b = add_term(src, t.get_ref(), &term_label(i, t.get_ref()), scope, d, b)?;
    }
    build_located(src, terms, b)
}

/// The `components` key: a number of spinor components between 1 and 64.
fn components(src: &Source, raw: &RawFile) -> Result<usize> {
    let comps = raw.components.as_ref().ok_or_else(|| {
        src.err(
            &(0..0),
            "missing key 'components' (number of spinor components); add e.g. components = 2, \
             or refer to a built-in with builtin = \"NAME\"",
        )
    })?;
    let d = *comps.get_ref();
    if !(1..=64).contains(&d) {
        return Err(src.err(
            &comps.span(),
            format!("components = {d}; give a number of spinor components between 1 and 64"),
        ));
    }
    Ok(d as usize)
}

/// The `units` key: `"lab"` (the default) or `"natural"`.
fn units(src: &Source, raw: &RawFile) -> Result<Units> {
    match &raw.units {
        None => Ok(Units::Lab),
        Some(u) => match u.get_ref().as_str() {
            "lab" => Ok(Units::Lab),
            "natural" => Ok(Units::Natural),
            other => Err(src.err(
                &u.span(),
                format!(
                    "units = \"{}\" is unknown; use \"lab\" (meV, nm, T) or \"natural\" \
                     (m c^2, hbar/(m c), B_c)",
                    crate::limits::excerpt(other)
                ),
            )),
        },
    }
}

/// Every `[parameters]` name is an identifier, not too long, and not a function or keyword of
/// the expression language.
fn check_parameter_names(
    src: &Source,
    pending: &[(&Spanned<String>, &Spanned<toml::Value>)],
) -> Result<()> {
    for (k, _) in pending {
        let key = k.get_ref();
        if !is_identifier(key) {
            return Err(src.err(
                &k.span(),
                format!(
                    "parameter name '{key}' is not an identifier; use letters, digits and _ \
                     (not starting with a digit)"
                ),
            ));
        }
        if key.chars().count() > crate::limits::MAX_NAME_LEN {
            return Err(src.err(
                &k.span(),
                format!(
                    "parameter name '{}' is longer than {} characters; shorten it",
                    crate::limits::excerpt(key),
                    crate::limits::MAX_NAME_LEN
                ),
            ));
        }
        if FUNCTIONS.contains(&key.as_str()) || KEYWORDS.contains(&key.as_str()) {
            return Err(src.err(
                &k.span(),
                format!("parameter name '{key}' is a built-in function or keyword; rename it"),
            ));
        }
    }
    Ok(())
}

/// Every `--set` override names a `[parameters]` entry.
fn check_overrides(
    src: &Source,
    pending: &[(&Spanned<String>, &Spanned<toml::Value>)],
    overrides: &[(String, String)],
) -> Result<()> {
    for (k, _) in overrides {
        if !pending.iter().any(|(p, _)| p.get_ref() == k) {
            return Err(Error::Parse {
                location: format!("--set {k}"),
                message: format!(
                    "{} has no parameter '{k}' in [parameters]; its parameters are {}",
                    src.name,
                    pending
                        .iter()
                        .map(|(p, _)| p.get_ref().as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            });
        }
    }
    Ok(())
}

/// The `charge` key in units of e: -1 when absent, never 0.
fn charge(src: &Source, raw: &RawFile, scope: &Scope) -> Result<f64> {
    let Some(c) = &raw.charge else {
        return Ok(-1.0);
    };
    let q = real_value(src, c, scope, "charge")?;
    if q == 0.0 {
        return Err(src.err(
            &c.span(),
            "charge = 0: a neutral carrier has no Landau levels; use -1 (electron) or +1 \
             (hole, positron), in units of e",
        ));
    }
    Ok(q)
}

/// The `name` key, else the file's stem, else `model`.
fn model_name(src: &Source, raw: &RawFile) -> String {
    raw.name
        .as_ref()
        .map(|n| n.get_ref().clone())
        .unwrap_or_else(|| {
            std::path::Path::new(src.name)
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "model".into())
        })
}

/// The optional `component_names` (one per component), `degeneracy` (a positive integer) and
/// `reference_energy` keys.
fn header(
    src: &Source,
    raw: &RawFile,
    scope: &Scope,
    d: usize,
    mut b: ModelBuilder,
) -> Result<ModelBuilder> {
    if let Some(names) = &raw.component_names {
        if names.get_ref().len() != d {
            return Err(src.err(
                &names.span(),
                format!(
                    "component_names has {} names for {d} components; give one name per component",
                    names.get_ref().len()
                ),
            ));
        }
        let refs: Vec<&str> = names.get_ref().iter().map(String::as_str).collect();
        b = b.component_names(&refs);
    }
    if let Some(g) = &raw.degeneracy {
        let g0 = *g.get_ref();
        if !(1..=u32::MAX as i64).contains(&g0) {
            return Err(src.err(
                &g.span(),
                format!("degeneracy = {g0}; give a positive integer (1 unless spin or valley copies are not among the components)"),
            ));
        }
        b = b.degeneracy(g0 as u32);
    }
    if let Some(r) = &raw.reference_energy {
        b = b.reference_energy(real_value(src, r, scope, "reference_energy")?);
    }
    Ok(b)
}

/// The label of term `i` (0-based): its `label` key, else `term {i + 1}`.
fn term_label(i: usize, t: &RawTerm) -> String {
    t.label.clone().unwrap_or_else(|| format!("term {}", i + 1))
}

/// One `[[term]]` table: a coefficient, a d x d matrix and a monomial of bounded in-plane degree.
fn add_term(
    src: &Source,
    tr: &RawTerm,
    label: &str,
    scope: &Scope,
    d: usize,
    b: ModelBuilder,
) -> Result<ModelBuilder> {
    let coef = complex_value(
        src,
        &tr.coefficient,
        scope,
        &format!("coefficient of {label}"),
    )?;
    let m = matrix_value(src, &tr.matrix, scope, label)?;
    if m.nrows() != d {
        return Err(src.err(
            &tr.matrix.span(),
            format!(
                "matrix of {label} is {}x{} but the model has {d} components; give a {d}x{d} \
                 matrix{}",
                m.nrows(),
                m.ncols(),
                if d.is_power_of_two() {
                    format!(" (a Pauli string of {} factors)", d.ilog2())
                } else {
                    String::new()
                }
            ),
        ));
    }
    let mono = parse_monomial(tr.monomial.get_ref())
        .map_err(|msg| src.err(&tr.monomial.span(), format!("monomial of {label}: {msg}")))?;
    if mono.inplane_degree() > crate::model::MAX_INPLANE_DEGREE {
        return Err(src.err(
            &tr.monomial.span(),
            format!(
                "monomial of {label} has in-plane degree {}; keep kx + ky powers at or below {}",
                mono.inplane_degree(),
                crate::model::MAX_INPLANE_DEGREE
            ),
        ));
    }
    Ok(b.term_complex(label, coef, m, mono))
}

/// Build the model; an error is located at the first term its message names (a non-Hermitian
/// sum), else at the first term.
fn build_located(src: &Source, terms: &[Spanned<RawTerm>], b: ModelBuilder) -> Result<Model> {
    b.build().map_err(|e| {
        let msg = e.to_string();
        let span = match &e {
            Error::NotHermitian { terms: names, .. } => terms
                .iter()
                .enumerate()
                .find(|(i, t)| {
                    let l = term_label(*i, t.get_ref());
                    names.split(", ").any(|n| n == l)
                })
                .map(|(_, t)| t.span()),
            _ => None,
        }
        .unwrap_or_else(|| terms[0].span());
        src.err(&span, msg)
    })
}

/// The `[parameters]` of a file, evaluated.
pub(super) struct Resolved {
    /// The constants of the file's unit system with every parameter set (a parameter shadows
    /// a constant of the same name).
    scope: Scope,
    /// The parameters by name.
    params: BTreeMap<String, f64>,
    /// Expressions evaluated (each parameter at most once, in dependency order; read by the
    /// tests).
    #[cfg_attr(not(test), allow(dead_code))]
    pub(super) evaluations: usize,
}

/// The text of parameter `k`: its `--set` override (with the override's name) or its string.
fn parameter_text<'a>(
    k: &str,
    v: &'a Spanned<toml::Value>,
    overrides: &'a [(String, String)],
) -> Option<(Option<&'a str>, &'a str)> {
    match overrides.iter().find(|(o, _)| o == k) {
        Some((o, e)) => Some((Some(o.as_str()), e.as_str())),
        None => match v.get_ref() {
            toml::Value::String(e) => Some((None, e.as_str())),
            _ => None,
        },
    }
}

/// Evaluate the `[parameters]` (with `--set` overrides) in dependency order.
///
/// Every parameter name is in the scope from the start, so each expression compiles once to
/// find the parameters it names; these give a dependency graph, which Kahn's algorithm orders
/// (linear in the number of parameters and references). What is left over lies on or behind
/// a cycle, which is reported by walking the left-over references until a name repeats.
pub(super) fn resolve_parameters(
    src: &Source,
    units: Units,
    pending: &[(&Spanned<String>, &Spanned<toml::Value>)],
    overrides: &[(String, String)],
) -> Result<Resolved> {
    let mut scope = Scope::with_constants(units).for_front(Front::ModelFile);
    let slots: Vec<usize> = pending
        .iter()
        .map(|(k, _)| scope.set(k.get_ref(), f64::NAN))
        .collect();
    let deps = parameter_dependencies(&scope, &slots, pending, overrides);
    let mut users: Vec<Vec<usize>> = vec![Vec::new(); pending.len()];
    let mut missing: Vec<usize> = vec![0; pending.len()];
    for (i, d) in deps.iter().enumerate() {
        missing[i] = d.len();
        for &j in d {
            users[j].push(i);
        }
    }
    let mut ready: Vec<usize> = (0..pending.len()).filter(|&i| missing[i] == 0).collect();
    let mut done = vec![false; pending.len()];
    let mut params = BTreeMap::new();
    let mut evaluations = 0;
    while let Some(i) = ready.pop() {
        let (k, v) = pending[i];
        let text = parameter_text(k.get_ref(), v, overrides);
        evaluations += usize::from(text.is_some());
        let value = match text {
            Some((Some(o), expr)) => {
                crate::expr::evaluate(expr, &scope).map_err(|m| Error::Parse {
                    location: format!("--set {o}"),
                    message: format!("in \"{}\": {m}", crate::limits::excerpt(expr)),
                })
            }
            _ => real_value(src, v, &scope, &format!("parameter {}", k.get_ref())),
        }?;
        if !value.is_finite() {
            return Err(Error::Parse {
                location: format!("--set {}", k.get_ref()),
                message: format!(
                    "{} is {value}, not a finite number; give a finite value",
                    k.get_ref()
                ),
            });
        }
        scope.set_at(slots[i], value);
        params.insert(k.get_ref().clone(), value);
        done[i] = true;
        for &u in &users[i] {
            missing[u] -= 1;
            if missing[u] == 0 {
                ready.push(u);
            }
        }
    }
    match (0..pending.len()).find(|&i| !done[i]) {
        None => Ok(Resolved {
            scope,
            params,
            evaluations,
        }),
        Some(start) => Err(cycle_error(src, pending, &deps, &done, start)),
    }
}

/// deps[i]: the parameters (indices into `pending`) that parameter i's expression names, from
/// its compiled form in `scope`, where parameter i sits at `slots[i]` (a text that does not
/// compile names none: its evaluation reports the error).
fn parameter_dependencies(
    scope: &Scope,
    slots: &[usize],
    pending: &[(&Spanned<String>, &Spanned<toml::Value>)],
    overrides: &[(String, String)],
) -> Vec<Vec<usize>> {
    let param_of: BTreeMap<usize, usize> = slots.iter().enumerate().map(|(i, &s)| (s, i)).collect();
    // deps[i]: the parameters expression i names (a text that does not compile has none: its
    // evaluation reports the error)
    pending
        .iter()
        .map(|(k, v)| {
            parameter_text(k.get_ref(), v, overrides)
                .and_then(|(_, t)| crate::expr::Expr::compile(t, scope).ok())
                .map(|e| {
                    let mut d: Vec<usize> = e
                        .variables()
                        .iter()
                        .filter_map(|s| param_of.get(s).copied())
                        .collect();
                    d.sort_unstable();
                    d
                })
                .unwrap_or_default()
        })
        .collect()
}

/// The error for parameters left over by the ordering: every left-over parameter names a
/// left-over parameter, so walking from `start` repeats a name; the repeated stretch is the
/// cycle.
fn cycle_error(
    src: &Source,
    pending: &[(&Spanned<String>, &Spanned<toml::Value>)],
    deps: &[Vec<usize>],
    done: &[bool],
    start: usize,
) -> Error {
    let mut seen = vec![usize::MAX; pending.len()];
    let mut path = Vec::new();
    let mut at = start;
    while seen[at] == usize::MAX {
        seen[at] = path.len();
        path.push(at);
        at = deps[at].iter().copied().find(|&j| !done[j]).unwrap_or(at);
    }
    let cycle = &path[seen[at]..];
    let names: Vec<&str> = cycle
        .iter()
        .map(|&i| pending[i].0.get_ref().as_str())
        .collect();
    src.err(
        &pending[cycle[0]].0.span(),
        format!(
            "parameters {} refer to each other in a cycle; give one of them a number",
            names.join(", ")
        ),
    )
}

fn is_identifier(s: &str) -> bool {
    let mut c = s.chars();
    matches!(c.next(), Some(ch) if ch.is_ascii_alphabetic() || ch == '_')
        && c.all(|ch| ch.is_ascii_alphanumeric() || ch == '_')
}
