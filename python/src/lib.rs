//! The native part of the Python package `ladderfan` (`ladderfan._native`): thin bindings that
//! load models and call the ladderfan library, returning the library's own output records
//! (`ladderfan::records`) as JSON text, which the Python layer (`python/ladderfan/`) turns into
//! numpy arrays. serde_json writes the shortest round-trip form of every f64 and Python's
//! `float()` reads it back to the same bits, so the Python results equal the Rust results bit
//! for bit. No physics lives here: every number comes from the library.
//!
//! The GIL is released during every solve (`Python::detach`); sweeps run on the library's rayon
//! pool. Every library error becomes `ladderfan.LadderfanError` with the one-line message the
//! command line prints after `ladderfan: error: `.

use ladderfan::modelfile::{self, FileDefaults, DEFAULT_CUTOFF, DEFAULT_MEMORY_LIMIT_MIB};
use ladderfan::{Error, FieldPoint, Model, Settings};
use pyo3::create_exception;
use pyo3::exceptions::PyException;
use pyo3::prelude::*;
use std::collections::BTreeMap;

mod solves;
mod uses;

create_exception!(
    ladderfan,
    LadderfanError,
    PyException,
    "Every error of ladderfan: bad input (model, parameters, field, cutoff) or a failed \
     computation. The message is the one line the command line prints after `ladderfan: error: `."
);

/// The one-line message of a library error, as the command line prints it: the library states
/// the physics, the front adds the argument that fixes it; whitespace collapsed to one line.
pub(crate) fn message(e: &Error) -> String {
    let m = match e {
        Error::ZeroField { .. } => format!("{e} (pass e.g. field=1)"),
        other => other.to_string(),
    };
    m.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// A library error as a Python exception.
pub(crate) fn py_err(e: Error) -> PyErr {
    LadderfanError::new_err(message(&e))
}

/// A bad argument, located at the keyword that fixes it (`location: message`, as the command
/// line locates a bad flag).
pub(crate) fn bad_arg(location: &str, message: impl Into<String>) -> PyErr {
    py_err(Error::Parse {
        location: location.into(),
        message: message.into(),
    })
}

/// A loaded model: the library's [`Model`], the solve defaults of its file and where it came
/// from (`file PATH`, `string NAME` or `builtin NAME`, with overrides).
#[pyclass(name = "Model", module = "ladderfan._native", frozen)]
pub struct PyModel {
    pub(crate) model: Model,
    pub(crate) defaults: FileDefaults,
    pub(crate) origin: String,
}

#[pymethods]
impl PyModel {
    /// Model name.
    #[getter]
    fn name(&self) -> String {
        self.model.name().to_string()
    }
    /// Where the model came from (`file PATH`, `string NAME`, `builtin NAME with ...`).
    #[getter]
    fn origin(&self) -> String {
        self.origin.clone()
    }
    /// Names of the spinor components, in the model's component order.
    #[getter]
    fn components(&self) -> Vec<String> {
        self.model.component_names().to_vec()
    }
    /// Number of spinor components.
    #[getter]
    fn dim(&self) -> usize {
        self.model.dim()
    }
    /// Charge in units of e (signed).
    #[getter]
    fn charge(&self) -> f64 {
        self.model.charge()
    }
    /// Units of every number: a JSON object {system, energy, length, field, wavenumber}.
    fn units_json(&self) -> PyResult<String> {
        json(&ladderfan::records::UnitsRecord::new(&self.model))
    }
    /// The model record (name, origin, parameters) as JSON.
    fn record_json(&self) -> PyResult<String> {
        json(&ladderfan::records::ModelRecord::new(
            &self.model,
            &self.origin,
        ))
    }
    fn __repr__(&self) -> String {
        format!(
            "<ladderfan.Model {} ({}), {} component(s)>",
            self.model.name(),
            self.origin,
            self.model.dim()
        )
    }
}

/// JSON text of a record.
pub(crate) fn json<T: serde::Serialize>(value: &T) -> PyResult<String> {
    serde_json::to_string(value).map_err(|e| {
        py_err(Error::Numerical {
            stage: "writing the result record".into(),
            detail: e.to_string(),
        })
    })
}

/// Overrides as `(name, expression)` pairs, in the order given.
type Overrides = Vec<(String, String)>;

/// Parse a TOML model file's text; `name` locates its errors (`NAME:LINE:COLUMN`), `overrides`
/// replace `[set]` entries of a built-in file or `[parameters]` entries of a term file.
#[pyfunction]
fn load_toml(name: &str, text: &str, overrides: Overrides, origin: String) -> PyResult<PyModel> {
    let f = modelfile::parse_with_overrides(name, text, &overrides).map_err(py_err)?;
    Ok(PyModel {
        model: f.model,
        defaults: f.defaults,
        origin: with_overrides(origin, &overrides),
    })
}

/// A built-in model by name with `overrides` (each value an expression of the model-file
/// language, e.g. `"5"` or `"2*mu_B"`).
#[pyfunction]
fn load_builtin(name: &str, overrides: Overrides) -> PyResult<PyModel> {
    let info = ladderfan::models::Origin::find(name).ok_or_else(|| {
        bad_arg(
            "builtin",
            format!(
                "unknown built-in model '{}'; choose one of {} (see ladderfan.builtin_names())",
                ladderfan::limits::excerpt(name),
                ladderfan::models::names().join(", ")
            ),
        )
    })?;
    let mut values = BTreeMap::new();
    for (k, v) in &overrides {
        let x = modelfile::eval_expression(v, info.info().units, &BTreeMap::new(), k)
            .map_err(py_err)?;
        values.insert(k.clone(), x);
    }
    let model = info
        .with_values(&values)
        .and_then(|o| o.build())
        .map_err(py_err)?;
    Ok(PyModel {
        model,
        defaults: FileDefaults::default(),
        origin: with_overrides(format!("builtin {name}"), &overrides),
    })
}

/// `origin` followed by ` with k=v, ...` when there are overrides.
fn with_overrides(mut origin: String, overrides: &Overrides) -> String {
    if !overrides.is_empty() {
        let list: Vec<String> = overrides.iter().map(|(k, v)| format!("{k}={v}")).collect();
        origin.push_str(&format!(" with {}", list.join(", ")));
    }
    origin
}

/// The names of the built-in models.
#[pyfunction]
fn builtin_names() -> Vec<&'static str> {
    ladderfan::models::names()
}

/// The library's version (the crate version of ladderfan).
#[pyfunction]
fn version() -> &'static str {
    env!("CARGO_PKG_VERSION")
}

/// The point and settings of one solve, resolved as the command line resolves its flags:
/// an argument wins over the model file's `[defaults]`, which win over the defaults (5 T or
/// 0.1 B_c, kz = 0, `DEFAULT_CUTOFF`, `DEFAULT_MEMORY_LIMIT_MIB`).
pub(crate) struct Resolved {
    pub(crate) point: FieldPoint,
    pub(crate) settings: Settings,
}

/// Resolve `field`, `kz`, `cutoff` and `memory_limit_mib` for `m` (see [`Resolved`]).
pub(crate) fn resolve(
    m: &PyModel,
    field: Option<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    memory_limit_mib: Option<u64>,
) -> PyResult<Resolved> {
    let default_field = match m.model.units() {
        ladderfan::units::Units::Lab => 5.0,
        ladderfan::units::Units::Natural => 0.1,
    };
    let field = finite("field", field.or(m.defaults.field).unwrap_or(default_field))?;
    if field == 0.0 {
        return Err(bad_arg(
            "field",
            "the field is 0; Landau levels need a non-zero magnetic field (pass e.g. field=1)",
        ));
    }
    let kz = finite("kz", kz.or(m.defaults.kz).unwrap_or(0.0))?;
    Ok(Resolved {
        point: FieldPoint { field, kz },
        settings: settings(m, cutoff, memory_limit_mib)?,
    })
}

/// Solver settings from `cutoff` and `memory_limit_mib` (argument, else file default, else
/// the library default).
pub(crate) fn settings(
    m: &PyModel,
    cutoff: Option<usize>,
    memory_limit_mib: Option<u64>,
) -> PyResult<Settings> {
    let cutoff = cutoff.or(m.defaults.cutoff).unwrap_or(DEFAULT_CUTOFF);
    let limit = memory_limit_mib
        .or(m.defaults.memory_limit_mib)
        .unwrap_or(DEFAULT_MEMORY_LIMIT_MIB);
    if limit == 0 {
        return Err(bad_arg("memory_limit_mib", "0 MiB; give a positive limit"));
    }
    let mut s = Settings::with_cutoff(cutoff);
    s.memory_limit_mib = limit;
    // the spectra and records handed to Python carry the component weights
    s.weights = ladderfan::Weights::Compute;
    Ok(s)
}

/// `v` if finite, else an error located at `name`.
pub(crate) fn finite(name: &str, v: f64) -> PyResult<f64> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(bad_arg(
            name,
            format!("{v} is not a finite number; give a finite value"),
        ))
    }
}

/// The module `ladderfan._native`.
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("LadderfanError", m.py().get_type::<LadderfanError>())?;
    m.add_class::<PyModel>()?;
    m.add_function(wrap_pyfunction!(load_toml, m)?)?;
    m.add_function(wrap_pyfunction!(load_builtin, m)?)?;
    m.add_function(wrap_pyfunction!(builtin_names, m)?)?;
    m.add_function(wrap_pyfunction!(version, m)?)?;
    solves::register(m)?;
    uses::register(m)?;
    Ok(())
}
