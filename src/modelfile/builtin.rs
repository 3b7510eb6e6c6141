//! Files that refer to a built-in model: `builtin = "NAME"` with a `[set]` table of overrides.

use super::values::real_value;
use super::{RawFile, Source};
use crate::error::{Error, Result};
use crate::expr::{eval_expression, Front, Scope};
use crate::model::Model;
use crate::models::{self, Origin};
use std::collections::BTreeMap;
use std::ops::Range;
use toml::Spanned;

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

pub(super) fn from_builtin(
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
/// to be a parameter of `origin` (the `[set]` ones located in the file). Both are evaluated with
/// the constants of the built-in's own unit system (`m_e`, `hbar`, `c`, ... are 1 in natural
/// units), so a value means the same in `[set]` as on the command line.
fn builtin_values(
    src: &Source,
    raw: &RawFile,
    origin: &Origin,
    overrides: &[(String, String)],
) -> Result<BTreeMap<String, f64>> {
    let mut values = BTreeMap::new();
    if let Some(set) = &raw.set {
        let scope = Scope::with_constants(origin.info().units).for_front(Front::ModelFile);
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
