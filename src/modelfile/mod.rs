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

mod builtin;
mod terms;
mod values;

use crate::error::{Error, Result};
use crate::expr::{Front, Scope};
use crate::model::Model;
use builtin::from_builtin;
use serde::Deserialize;
use std::collections::BTreeMap;
use std::ops::Range;
use terms::from_terms;
use toml::Spanned;
use values::real_value;

pub use values::parse_monomial;

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

#[cfg(test)]
mod tests;
