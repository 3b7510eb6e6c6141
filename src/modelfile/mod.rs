//! Model files: a TOML description of a model (ours; the key names are documented in
//! the README (section Model files)), turned into a validated [`Model`].
//!
//! A file either describes a model term by term:
//!
//! ```toml
//! name = "invented-film"
//! components = 2
//! charge = -1
//! units = "lab"
//!
//! [parameters]
//! hv = 276.4      # hbar v in meV nm (invented)
//! half_gap = 12   # meV (invented)
//!
//! [[term]]
//! coefficient = "hv"
//! matrix = "x"
//! monomial = "kx"
//!
//! [[term]]
//! coefficient = "hv"
//! matrix = "y"
//! monomial = "ky"
//!
//! [[term]]
//! coefficient = "half_gap"
//! matrix = "z"
//! monomial = "1"
//! ```
//!
//! or refers to a built-in model by name with overrides (`builtin = "dirac2d"` and a `[set]`
//! table). Every problem is reported as one [`Error::Parse`] whose location is
//! `file:line:column` and whose message says what to fix.
//!
//! # Examples
//! ```
//! let text = "components = 1\n[[term]]\ncoefficient = 2.0\nmatrix = [[1]]\nmonomial = \"kx^2\"\n\
//!             [[term]]\ncoefficient = 2.0\nmatrix = [[1]]\nmonomial = \"ky^2\"\n";
//! let file = ladderfan::modelfile::parse("m.toml", text)?;
//! assert_eq!(file.model.dim(), 1);
//! assert_eq!(file.model.band(), 2);
//! # Ok::<(), ladderfan::Error>(())
//! ```

use crate::error::{Error, Result};
use crate::expr::{Front, Scope, FUNCTIONS, KEYWORDS};
use crate::matrix::{self, SpinMatrix};
use crate::model::{Model, Monomial};
use crate::models::{self, Origin};
use crate::units::Units;
use num_complex::Complex64;
use serde::Deserialize;
use std::collections::BTreeMap;
use std::ops::Range;
use toml::Spanned;

/// Evaluate a `--set` value (re-exported from the one expression language, [`crate::expr`]).
pub use crate::expr::eval_expression;

/// The default cutoff and memory limit (defined in [`crate::policy`]).
pub use crate::policy::{DEFAULT_CUTOFF, DEFAULT_MEMORY_LIMIT_MIB};

/// Solve defaults a file may carry (`[defaults]` table); command-line flags override them.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FileDefaults {
    /// Magnetic field in the model's field unit.
    pub field: Option<f64>,
    /// kz in the model's inverse length unit.
    pub kz: Option<f64>,
    /// Orbital cutoff.
    pub cutoff: Option<usize>,
    /// Memory limit in MiB.
    pub memory_limit_mib: Option<u64>,
    /// Line and column (1-based) of the `cutoff` value in the file, for errors about it (the
    /// value is checked only when it is used, so that a `--cutoff` flag can override it).
    pub cutoff_at: Option<(usize, usize)>,
}

/// A parsed and validated model file.
#[derive(Debug, Clone)]
pub struct ModelFile {
    /// The model.
    pub model: Model,
    /// Solve defaults from the `[defaults]` table.
    pub defaults: FileDefaults,
    /// Free-text description (`description` key), if any.
    pub description: Option<String>,
    /// The built-in the file refers to, if any.
    pub builtin: Option<String>,
}

/// Where a problem sits: a file with its source text, for `file:line:column` locations.
#[derive(Debug, Clone, Copy)]
pub struct Source<'a> {
    /// File name as shown to the user.
    pub name: &'a str,
    /// Full text.
    pub text: &'a str,
}

impl Source<'_> {
    /// `file:line:column` (1-based) of a byte offset.
    pub fn location(&self, offset: usize) -> String {
        let offset = offset.min(self.text.len());
        let before = self.text.get(..offset).unwrap_or(self.text);
        let line = before.matches('\n').count() + 1;
        let col = before
            .rsplit('\n')
            .next()
            .map(|s| s.chars().count())
            .unwrap_or(0)
            + 1;
        format!("{}:{line}:{col}", self.name)
    }

    fn err(&self, span: &Range<usize>, message: impl Into<String>) -> Error {
        Error::Parse {
            location: self.location(span.start),
            message: message.into(),
        }
    }
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    name: Option<Spanned<String>>,
    description: Option<String>,
    builtin: Option<Spanned<String>>,
    set: Option<Spanned<BTreeMap<Spanned<String>, Spanned<toml::Value>>>>,
    components: Option<Spanned<i64>>,
    charge: Option<Spanned<toml::Value>>,
    units: Option<Spanned<String>>,
    component_names: Option<Spanned<Vec<String>>>,
    degeneracy: Option<Spanned<i64>>,
    reference_energy: Option<Spanned<toml::Value>>,
    parameters: Option<BTreeMap<Spanned<String>, Spanned<toml::Value>>>,
    term: Option<Vec<Spanned<RawTerm>>>,
    defaults: Option<Spanned<RawDefaults>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTerm {
    label: Option<String>,
    coefficient: Spanned<toml::Value>,
    matrix: Spanned<toml::Value>,
    monomial: Spanned<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDefaults {
    field: Option<Spanned<toml::Value>>,
    kz: Option<Spanned<toml::Value>>,
    cutoff: Option<Spanned<i64>>,
    memory_limit_mib: Option<Spanned<i64>>,
}

/// Read and parse a model file from disk.
///
/// # Errors
/// [`Error::Io`] when the file cannot be read; otherwise as [`parse`].
pub fn load(path: &std::path::Path) -> Result<ModelFile> {
    let text = std::fs::read_to_string(path).map_err(|source| Error::Io {
        action: "read model file".into(),
        path: path.display().to_string(),
        source,
    })?;
    parse(&path.display().to_string(), &text)
}

/// Parse and validate a model file's text. `name` is used in error locations.
///
/// # Errors
/// [`Error::Parse`] (location `name:line:column`) for TOML syntax errors, unknown keys, a
/// missing key, a wrong matrix shape, an unknown Pauli factor, an unknown parameter or function
/// in an expression, a non-finite number, a zero field or a cutoff that is below the band of
/// the model or above the memory limit in `[defaults]`, a non-Hermitian sum of terms (the
/// message names the monomial and the terms) and any other model inconsistency.
pub fn parse(name: &str, text: &str) -> Result<ModelFile> {
    parse_with_overrides(name, text, &[])
}

/// [`parse`] with parameter overrides `(name, value expression)` as given by `--set`: for a
/// `builtin = ...` file they act as extra `[set]` entries, for a term file they replace
/// `[parameters]` entries (which must exist). Locations in the file are kept.
///
/// # Errors
/// As [`parse`]; an override naming no parameter or failing to evaluate is an
/// [`Error::Parse`] located at `--set NAME`.
pub fn parse_with_overrides(
    name: &str,
    text: &str,
    overrides: &[(String, String)],
) -> Result<ModelFile> {
    let src = Source { name, text };
    let raw: RawFile = toml::from_str(text).map_err(|e| {
        let raw_message = e.message().to_string();
        let (location, note) = match e.span() {
            Some(s) => {
                // a syntax error found only at the start of a later line (an unclosed array,
                // table or string) is shown where the text before it ends: that is where the
                // missing `]`, `}`, `,` or quote belongs
                let before = text.get(..s.start).unwrap_or(text);
                let after_blank = before.trim_end_matches([' ', '\t']).ends_with('\n');
                let end = before.trim_end().len();
                let syntax = !raw_message.contains("duplicate")
                    && !raw_message.starts_with("unknown field")
                    && !raw_message.starts_with("missing field")
                    && !raw_message.starts_with("invalid type");
                if syntax && after_blank && end > 0 {
                    let line = text.get(..s.start).map_or(0, |b| b.matches('\n').count()) + 1;
                    (
                        src.location(end),
                        format!(
                            " (noticed at line {line}; the value that ends here is not closed)"
                        ),
                    )
                } else {
                    (src.location(s.start), String::new())
                }
            }
            None => (name.to_string(), String::new()),
        };
        Error::Parse {
            location,
            message: toml_message(&format!("{raw_message}{note}")),
        }
    })?;
    check_name_lengths(&src, &raw)?;
    let model = match &raw.builtin {
        Some(b) => from_builtin(&src, &raw, b, overrides)?,
        None => from_terms(&src, &raw, overrides)?,
    };
    let defaults = read_defaults(&src, &raw, &model)?;
    Ok(ModelFile {
        model,
        defaults,
        description: raw.description.clone(),
        builtin: raw.builtin.as_ref().map(|b| b.get_ref().clone()),
    })
}

/// Names and labels longer than [`crate::limits::MAX_NAME_LEN`] are refused: they end up in
/// table columns, CSV headers and plot legends.
fn check_name_lengths(src: &Source, raw: &RawFile) -> Result<()> {
    let max = crate::limits::MAX_NAME_LEN;
    let too_long = |what: &str, name: &str, span: &Range<usize>| -> Result<()> {
        if name.chars().count() > max {
            return Err(src.err(
                span,
                format!(
                    "{what} '{}' is {} characters long, more than the limit of {max}; shorten it",
                    crate::limits::excerpt(name),
                    name.chars().count()
                ),
            ));
        }
        Ok(())
    };
    if let Some(n) = &raw.name {
        too_long("name", n.get_ref(), &n.span())?;
    }
    if let Some(names) = &raw.component_names {
        for n in names.get_ref() {
            too_long("component name", n, &names.span())?;
        }
    }
    for t in raw.term.iter().flatten() {
        if let Some(l) = &t.get_ref().label {
            too_long("term label", l, &t.span())?;
        }
    }
    Ok(())
}

fn toml_message(m: &str) -> String {
    let one_line = m.split_whitespace().collect::<Vec<_>>().join(" ");
    // keys and values quoted in backticks come from the file: keep them short
    let one_line: String = one_line
        .split('`')
        .enumerate()
        .map(|(i, part)| {
            if i % 2 == 1 {
                crate::limits::excerpt(part)
            } else {
                part.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("`");
    // a value quoted in full (e.g. `invalid type: string "..."`) may be long: keep the start
    // and the end, where the expected type is named
    let n = one_line.chars().count();
    let one_line = if n > 400 {
        let head: String = one_line.chars().take(150).collect();
        let tail: String = one_line.chars().skip(n - 200).collect();
        format!("{head}...{tail}")
    } else {
        one_line
    };
    if one_line.starts_with("unknown field") {
        format!("{one_line}; remove or rename the key (see the README, section Model files)")
    } else if one_line.starts_with("missing field") {
        format!("{one_line}; add the key")
    } else if one_line.starts_with("invalid type") {
        let fixed = one_line
            .replace("expected i64", "expected an integer")
            .replace("expected f64", "expected a number")
            .replace("expected a string", "expected a quoted string");
        format!("{fixed}; change the value's type")
    } else if one_line.starts_with("duplicate key") || one_line.contains("duplicate") {
        format!(
            "TOML syntax: {one_line}; a key or [table] may appear only once: remove or merge the \
             repeated one"
        )
    } else {
        format!(
            "TOML syntax: {one_line}; fix the TOML at this place (see the README, section Model \
             files)"
        )
    }
}

/// Refuse the keys of a term model in a `builtin = ...` file: a built-in brings its own terms,
/// so they would be silently ignored.
fn refuse_term_keys(src: &Source, raw: &RawFile, b: &Spanned<String>) -> Result<()> {
    let conflicts: [(&str, Option<Range<usize>>); 7] = [
        ("components", raw.components.as_ref().map(|s| s.span())),
        ("charge", raw.charge.as_ref().map(|s| s.span())),
        ("units", raw.units.as_ref().map(|s| s.span())),
        (
            "component_names",
            raw.component_names.as_ref().map(|s| s.span()),
        ),
        ("degeneracy", raw.degeneracy.as_ref().map(|s| s.span())),
        (
            "reference_energy",
            raw.reference_energy.as_ref().map(|s| s.span()),
        ),
        (
            "term",
            raw.term.as_ref().and_then(|t| t.first().map(|x| x.span())),
        ),
    ];
    if let Some(n) = &raw.name {
        return Err(src.err(
            &n.span(),
            format!(
                "key 'name' cannot be combined with builtin = \"{}\": a built-in keeps its name; \
                 remove the key or put it in 'description'",
                b.get_ref()
            ),
        ));
    }
    for (key, span) in conflicts {
        if let Some(span) = span {
            return Err(src.err(
                &span,
                format!(
                    "key '{key}' cannot be combined with builtin = \"{}\"; change the built-in's \
                     parameters in [set] instead, or describe the whole model with [[term]]",
                    b.get_ref()
                ),
            ));
        }
    }
    if let Some(p) = raw.parameters.as_ref().and_then(|p| p.keys().next()) {
        return Err(src.err(
            &p.span(),
            "[parameters] belongs to a model described by [[term]]; with builtin = ... put \
             overrides in [set]",
        ));
    }
    Ok(())
}

fn from_builtin(
    src: &Source,
    raw: &RawFile,
    b: &Spanned<String>,
    overrides: &[(String, String)],
) -> Result<Model> {
    refuse_term_keys(src, raw, b)?;
    let origin = Origin::find(b.get_ref()).ok_or_else(|| {
        src.err(
            &b.span(),
            format!(
                "unknown built-in model '{}'; choose one of {}",
                crate::limits::excerpt(b.get_ref()),
                models::names().join(", ")
            ),
        )
    })?;
    let values = builtin_values(src, raw, &origin, overrides)?;
    origin
        .with_values(&values)
        .and_then(|o| o.build())
        .map_err(|e| {
            // point at the [set] entry a range error names, else at the built-in's name
            let span = match &e {
                Error::BadNumber { name, .. } => raw
                    .set
                    .as_ref()
                    .and_then(|set| {
                        set.get_ref()
                            .iter()
                            .find(|(k, _)| k.get_ref() == name)
                            .map(|(_, v)| v.span())
                    })
                    .unwrap_or_else(|| b.span()),
                _ => b.span(),
            };
            src.err(&span, format!("built-in '{}': {e}", origin.name()))
        })
}

/// The `[set]` entries and `--set` overrides of a `builtin = ...` file, evaluated, each checked
/// to be a parameter of `origin` (the `[set]` ones located in the file).
fn builtin_values(
    src: &Source,
    raw: &RawFile,
    origin: &Origin,
    overrides: &[(String, String)],
) -> Result<BTreeMap<String, f64>> {
    let mut values = BTreeMap::new();
    if let Some(set) = &raw.set {
        let scope = Scope::with_constants(Units::Lab).for_front(Front::ModelFile);
        for (k, v) in set.get_ref() {
            if !origin.has_parameter(k.get_ref()) {
                return Err(src.err(&k.span(), origin.unknown_parameter(k.get_ref())));
            }
            let x = real_value(src, v, &scope, &format!("[set] {}", k.get_ref()))?;
            values.insert(k.get_ref().clone(), x);
        }
    }
    for (k, v) in overrides {
        let loc = format!("--set {k}");
        if !origin.has_parameter(k) {
            return Err(Error::Parse {
                location: loc,
                message: origin.unknown_parameter(k),
            });
        }
        let x = eval_expression(v, origin.info().units, &BTreeMap::new(), &loc)?;
        values.insert(k.clone(), x);
    }
    Ok(values)
}

fn from_terms(src: &Source, raw: &RawFile, overrides: &[(String, String)]) -> Result<Model> {
    if let Some(set) = &raw.set {
        return Err(src.err(
            &set.span(),
            "[set] overrides the parameters of a built-in; add builtin = \"NAME\" or move the \
             values to [parameters]",
        ));
    }
    let whole = 0..0;
    let comps = raw.components.as_ref().ok_or_else(|| {
        src.err(
            &whole,
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
    let d = d as usize;
    let units = match &raw.units {
        None => Units::Lab,
        Some(u) => match u.get_ref().as_str() {
            "lab" => Units::Lab,
            "natural" => Units::Natural,
            other => {
                return Err(src.err(
                    &u.span(),
                    format!(
                        "units = \"{}\" is unknown; use \"lab\" (meV, nm, T) or \"natural\" \
                         (m c^2, hbar/(m c), B_c)",
                        crate::limits::excerpt(other)
                    ),
                ))
            }
        },
    };
    // parameters: numbers or expressions of other parameters, resolved in dependency order
    let pending: Vec<(&Spanned<String>, &Spanned<toml::Value>)> =
        raw.parameters.iter().flat_map(|p| p.iter()).collect();
    for (k, _) in &pending {
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
    let resolved = resolve_parameters(src, units, &pending, overrides)?;
    let scope = &resolved.scope;
    let charge = match &raw.charge {
        None => -1.0,
        Some(c) => {
            let q = real_value(src, c, scope, "charge")?;
            if q == 0.0 {
                return Err(src.err(
                    &c.span(),
                    "charge = 0: a neutral carrier has no Landau levels; use -1 (electron) or +1 \
                     (hole, positron), in units of e",
                ));
            }
            q
        }
    };
    let name = raw
        .name
        .as_ref()
        .map(|n| n.get_ref().clone())
        .unwrap_or_else(|| {
            std::path::Path::new(src.name)
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "model".into())
        });
    let mut b = Model::builder(&name, d).charge(charge).units(units);
    for (k, v) in &resolved.params {
        b = b.param(k, *v);
    }
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
    let terms = raw.term.as_deref().unwrap_or(&[]);
    if terms.is_empty() {
        return Err(src.err(
            &whole,
            "the model has no [[term]] tables; add at least one term with coefficient, matrix and monomial",
        ));
    }
    for (i, t) in terms.iter().enumerate() {
        let tr = t.get_ref();
        let label = tr
            .label
            .clone()
            .unwrap_or_else(|| format!("term {}", i + 1));
        let coef = complex_value(
            src,
            &tr.coefficient,
            scope,
            &format!("coefficient of {label}"),
        )?;
        let m = matrix_value(src, &tr.matrix, scope, &label)?;
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
        b = b.term_complex(&label, coef, m, mono);
    }
    b.build().map_err(|e| {
        // point at the first term the message names, else at the first term
        let msg = e.to_string();
        let span = match &e {
            Error::NotHermitian { terms: names, .. } => terms
                .iter()
                .enumerate()
                .find(|(i, t)| {
                    let l = t
                        .get_ref()
                        .label
                        .clone()
                        .unwrap_or_else(|| format!("term {}", i + 1));
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
struct Resolved {
    /// The constants of the file's unit system with every parameter set (a parameter shadows
    /// a constant of the same name).
    scope: Scope,
    /// The parameters by name.
    params: BTreeMap<String, f64>,
    /// Expressions evaluated (each parameter at most once, in dependency order; read by the
    /// tests).
    #[cfg_attr(not(test), allow(dead_code))]
    evaluations: usize,
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
fn resolve_parameters(
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

fn read_defaults(src: &Source, raw: &RawFile, model: &Model) -> Result<FileDefaults> {
    let mut out = FileDefaults::default();
    let Some(d) = &raw.defaults else {
        return Ok(out);
    };
    let d = d.get_ref();
    let mut scope = Scope::with_constants(model.units()).for_front(Front::ModelFile);
    for (k, &v) in model.params() {
        scope.set(k, v);
    }
    if let Some(f) = &d.field {
        let b = real_value(src, f, &scope, "[defaults] field")?;
        if b == 0.0 {
            return Err(src.err(
                &f.span(),
                "field = 0: Landau levels need a non-zero magnetic field; give e.g. field = 1",
            ));
        }
        out.field = Some(b);
    }
    if let Some(k) = &d.kz {
        out.kz = Some(real_value(src, k, &scope, "[defaults] kz")?);
    }
    if let Some(m) = &d.memory_limit_mib {
        let v = *m.get_ref();
        if v < 1 {
            return Err(src.err(
                &m.span(),
                format!("memory_limit_mib = {v}; give a positive number of MiB"),
            ));
        }
        out.memory_limit_mib = Some(v as u64);
    }
    if let Some(c) = &d.cutoff {
        let v = *c.get_ref();
        if v < 1 {
            return Err(src.err(
                &c.span(),
                format!("cutoff = {v}; give a positive number of orbitals"),
            ));
        }
        // checked against the model and the memory limit only once the flags are merged
        // (a `--cutoff` flag overrides this value; src/memory.rs)
        let v = usize::try_from(v).unwrap_or(usize::MAX);
        let at = src.location(c.span().start);
        let mut parts = at.rsplit(':');
        let col = parts.next().and_then(|x| x.parse().ok());
        let line = parts.next().and_then(|x| x.parse().ok());
        out.cutoff_at = line.zip(col);
        out.cutoff = Some(v);
    }
    Ok(out)
}

fn is_identifier(s: &str) -> bool {
    let mut c = s.chars();
    matches!(c.next(), Some(ch) if ch.is_ascii_alphabetic() || ch == '_')
        && c.all(|ch| ch.is_ascii_alphanumeric() || ch == '_')
}

fn real_value(src: &Source, v: &Spanned<toml::Value>, scope: &Scope, what: &str) -> Result<f64> {
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

fn complex_value(
    src: &Source,
    v: &Spanned<toml::Value>,
    scope: &Scope,
    what: &str,
) -> Result<Complex64> {
    complex_scalar(src, v.get_ref(), &v.span(), scope, what)
}

fn matrix_value(
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::hamiltonian::LadderHamiltonian;

    fn msg(text: &str) -> String {
        match parse("t.toml", text) {
            Ok(_) => String::from("parsed"),
            Err(e) => e.to_string(),
        }
    }

    /// A one-component file whose coefficient is `coef` (a TOML value).
    fn with_coefficient(coef: &str) -> String {
        format!("components = 1\n[[term]]\ncoefficient = {coef}\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n")
    }

    #[test]
    fn deep_nesting_is_refused_not_a_stack_overflow() {
        // regression: about 20,000 nested parentheses in a model file overflowed the stack
        let deep = format!("\"{}1{}\"", "(".repeat(20_000), ")".repeat(20_000));
        let m = msg(&with_coefficient(&deep));
        assert!(
            m.contains("t.toml:3:15") && m.contains("limit of 10000"),
            "{m}"
        );
        assert!(m.len() < 400, "the message quotes the whole input: {m}");
        // within the length limit, the depth limit speaks
        let deep = format!("\"{}1{}\"", "(".repeat(4_000), ")".repeat(4_000));
        let m = msg(&with_coefficient(&deep));
        assert!(
            m.contains("t.toml:3:15") && m.contains("more than 200 levels deep"),
            "{m}"
        );
        let signs = format!("\"{}1\"", "-".repeat(9_000));
        assert!(msg(&with_coefficient(&signs)).contains("levels deep"));
        let ok = format!("\"{}2{}\"", "(".repeat(150), ")".repeat(150));
        assert_eq!(msg(&with_coefficient(&ok)), "parsed");
        // TOML itself: the toml crate refuses deep arrays (its recursion limit is 80)
        let arrays = format!("{}1{}", "[".repeat(20_000), "]".repeat(20_000));
        let m = msg(&with_coefficient(&arrays));
        assert!(m.starts_with("t.toml:3:"), "{m}");
        let tables = format!("{}1{}", "{a=".repeat(20_000), "}".repeat(20_000));
        assert!(msg(&with_coefficient(&tables)).starts_with("t.toml:3:"));
        let over = format!("\"{}\"", vec!["1"; 6_000].join("+"));
        assert!(msg(&with_coefficient(&over)).contains("more than the limit of 10000"));
        // --set goes through the same parser
        let deep_set = format!("{}1{}", "(".repeat(4_000), ")".repeat(4_000));
        match eval_expression(&deep_set, Units::Lab, &BTreeMap::new(), "--set a") {
            Ok(_) => panic!("accepted"),
            Err(e) => assert!(e.to_string().contains("levels deep")),
        }
    }

    #[test]
    fn long_pauli_string_is_refused_before_it_is_expanded() {
        // regression: a 24-factor string was expanded to 2^24 x 2^24 before its size was checked
        let text = "components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"xxxxxxxxxxxxxxxxxxxxxxxx\"\nmonomial = \"1\"\n";
        let m = msg(text);
        assert!(m.contains("more than 6 factors"), "{m}");
        let m =
            msg("components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"Q\"\nmonomial = \"1\"\n");
        assert!(m.contains("unknown Pauli factor 'Q'"), "{m}");
    }

    #[test]
    fn long_names_are_refused() {
        // regression: a component name of 65,536 characters panicked the table
        let long = "A".repeat(65_536);
        let text = format!("components = 1\ncomponent_names = [\"{long}\"]\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n");
        let m = msg(&text);
        assert!(
            m.contains("component name") && m.contains("limit of 256"),
            "{m}"
        );
        assert!(m.len() < 400, "{m}");
        let text = format!("name = \"{long}\"\n{}", with_coefficient("1"));
        assert!(msg(&text).contains("limit of 256"));
        let text = format!(
            "components = 1\n[parameters]\n{long} = 1\n{}",
            &with_coefficient("1")["components = 1\n".len()..]
        );
        assert!(msg(&text).contains("longer than 256"), "{}", msg(&text));
    }

    #[test]
    fn a_long_parameter_chain_resolves_in_order() {
        // regression: resolution was cubic in the number of parameters (2000: over 10 s). The
        // worst order for the old rounds: each name refers to the next one in name order,
        // p0000 = p0001 + 1, ..., p1999 = 1, so p0000 = 2000
        let n = 2000;
        let mut text = String::from("components = 1\n[parameters]\n");
        for i in 0..n - 1 {
            text.push_str(&format!("p{i:04} = \"p{:04} + 1\"\n", i + 1));
        }
        text.push_str(&format!("p{:04} = 1\n", n - 1));
        text.push_str(&with_coefficient("\"p0000\"")["components = 1\n".len()..]);
        let f = parse("t.toml", &text).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(f.model.param("p0000"), Some(n as f64));
        // each expression is evaluated exactly once (the old rounds re-tried every pending
        // parameter: about n^2/2 evaluations)
        let raw: RawFile = toml::from_str(&text).unwrap_or_else(|e| panic!("{e}"));
        let pending: Vec<(&Spanned<String>, &Spanned<toml::Value>)> =
            raw.parameters.iter().flat_map(|p| p.iter()).collect();
        let src = Source {
            name: "t.toml",
            text: &text,
        };
        let resolved =
            resolve_parameters(&src, Units::Lab, &pending, &[]).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(
            resolved.evaluations,
            n - 1,
            "one evaluation per expression parameter"
        );
        // a cycle behind a long chain is still named
        let text =
            "components = 1\n[parameters]\nx = \"y + 1\"\ny = \"z\"\nz = \"y * 2\"\nw = \"x\"\n"
                .to_string()
                + &with_coefficient("1")["components = 1\n".len()..];
        let m = msg(&text);
        assert!(
            m.contains("parameters y, z refer to each other in a cycle"),
            "{m}"
        );
    }

    #[test]
    fn locations_are_line_and_column() {
        let s = Source {
            name: "f",
            text: "ab\ncdé\nx",
        };
        assert_eq!(s.location(0), "f:1:1");
        assert_eq!(s.location(4), "f:2:2");
        assert_eq!(s.location(s.text.len() - 1), "f:3:1");
    }

    #[test]
    fn dirac_film_matches_the_builtin_elementwise() {
        let text = r#"
components = 2
[parameters]
v = 1e6
hv = "hbar_v(v)"
m = 5
[[term]]
coefficient = "hv"
matrix = "x"
monomial = "kx"
[[term]]
coefficient = "hv"
matrix = [[0, [0, -1]], [[0, 1], 0]]
monomial = "ky"
[[term]]
coefficient = "m"
matrix = "z"
monomial = "1"
"#;
        let f = parse("t.toml", text).unwrap_or_else(|e| panic!("{e}"));
        let b = models::dirac2d(models::Dirac2dParams {
            mass_mev: 5.0,
            ..Default::default()
        })
        .unwrap_or_else(|e| panic!("{e}"));
        let p = crate::hamiltonian::FieldPoint {
            field: 3.0,
            kz: 0.0,
        };
        let h1 = LadderHamiltonian::assemble(&f.model, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
        let h2 = LadderHamiltonian::assemble(&b, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
        let (a, c) = (h1.dense(6), h2.dense(6));
        let scale = c.iter().map(|z| z.norm()).fold(0.0, f64::max);
        assert!((a - c).iter().all(|z| z.norm() <= 1e-13 * scale));
    }

    #[test]
    fn problems_are_located_and_explained() {
        let m = msg("components = 2\nfoo = 1\n");
        assert!(
            m.starts_with("t.toml:2:1:") && m.contains("unknown field"),
            "{m}"
        );
        let m =
            msg("components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"x⊗z\"\nmonomial = \"1\"\n");
        assert!(m.starts_with("t.toml:4:10:") && m.contains("4x4"), "{m}");
        let m = msg("components = 2\n[[term]]\nlabel = \"hop\"\ncoefficient = 1\nmatrix = \"+\"\nmonomial = \"kx\"\n");
        assert!(m.contains("not Hermitian") && m.contains("hop"), "{m}");
        let m =
            msg("components = 1\n[[term]]\ncoefficient = nan\nmatrix = \"0\"\nmonomial = \"1\"\n");
        assert!(m.starts_with("t.toml:3:15:") && m.contains("finite"), "{m}");
    }

    #[test]
    fn a_term_model_may_reuse_a_builtin_name_and_has_no_closed_form() {
        // refused before the typed origin ("name is reserved for the built-in model")
        let text = "name = \"dirac2d\"\ncomponents = 1\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n";
        let f = parse("t.toml", text).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(f.model.name(), "dirac2d");
        assert!(Origin::of(&f.model).is_none());
        assert!(models::expected_levels(
            &f.model,
            crate::hamiltonian::FieldPoint::field(1.0),
            0.0,
            3
        )
        .is_none());
        // the built-in of that name keeps its origin and closed form
        let b = parse("b.toml", "builtin = \"dirac2d\"\n").unwrap_or_else(|e| panic!("{e}"));
        assert!(matches!(Origin::of(&b.model), Some(Origin::Dirac2d(_))));
        assert!(models::expected_levels(
            &b.model,
            crate::hamiltonian::FieldPoint::field(1.0),
            0.0,
            3
        )
        .is_some());
    }

    #[test]
    fn builtin_with_overrides() {
        let f = parse("b.toml", "builtin = \"dirac2d\"\n[set]\nmass_mev = 5\n")
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(f.model.param("mass_mev"), Some(5.0));
        let m = msg("builtin = \"dirac2d\"\n[set]\nmass = 5\n");
        assert!(
            m.starts_with("t.toml:3:1:") && m.contains("mass_mev"),
            "{m}"
        );
    }
}
