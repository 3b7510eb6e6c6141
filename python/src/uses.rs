//! Uses of a spectrum: verification against a formula or a Python callable, the density of
//! states with the Fermi level, and the magneto-optical transitions. Each returns the
//! library's record (`ladderfan::records`) as JSON text.

use crate::solves::finite_spectrum;
use crate::{bad_arg, finite, json, py_err, resolve, PyModel, Resolved};
use ladderfan::observables::dos::{
    from_per_cm2, landau_degeneracy_per_area, per_cm2, Broadening, LevelDensity, LineShape,
    WidthScaling,
};
use ladderfan::observables::filling::{fermi_level, FermiSettings, Neutrality};
use ladderfan::observables::optics::{transition_sweep, OpticsSettings};
use ladderfan::problem::Problem;
use ladderfan::records::{
    DosRecord, FermiRecord, ModelRecord, OpticsPointRecord, OpticsRecord, UnitsRecord, VerifyJson,
};
use ladderfan::units::Units;
use ladderfan::verify::{self, EnergyScale, ExpectedList, LevelFormula, VerifySettings};
use ladderfan::{Error, FieldPoint, Reference, Spectrum};
use pyo3::prelude::*;

/// The sign and selection-rule conventions of the optics record (as `ladderfan optics`).
const CONVENTION: &str = "B along +z; light ~ e exp(-i omega t); sigma+ = (x + i y)/sqrt2, \
sigma- = (x - i y)/sqrt2; strength = |<f|e.v|i>|^2 (o_i - o_f); selection rules come from the \
matrix elements, none is imposed";

/// Register the functions of this file in the module.
pub(crate) fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(verify_json, m)?)?;
    m.add_function(wrap_pyfunction!(dos_json, m)?)?;
    m.add_function(wrap_pyfunction!(optics_json, m)?)?;
    Ok(())
}

/// Set up, check the memory of and solve the one problem at `r` with the GIL released.
fn solve(py: Python<'_>, model: &PyModel, r: &Resolved) -> PyResult<Spectrum> {
    let s = py.detach(|| {
        Problem::new(&model.model, r.point, &r.settings)
            .and_then(|p| p.check_memory().map(|_| p))
            .and_then(|p| Spectrum::solve(&p))
    });
    finite_spectrum(s.map_err(py_err)?)
}

/// Check expected levels against the spectrum at one point, level by level (the library's
/// `verify::check`): the expected energy of every (n, s) in `ns` x `ss` comes from `formula`
/// (the expression language of `ladderfan verify --formula`, variables n, s, the model's
/// parameters and constants) or from `function(n, s)`, a Python callable returning the energy
/// in the model's energy unit or None for no level. Energies are absolute unless `relative`
/// (then relative to the model's reference energy). Returns the `VerifyJson` record.
#[pyfunction]
#[pyo3(signature = (model, ns, ss, formula=None, function=None, multiplicity=None,
    field=None, kz=None, cutoff=None, tolerance=None, relative=false, memory_limit_mib=None))]
#[allow(clippy::too_many_arguments)]
fn verify_json(
    py: Python<'_>,
    model: &PyModel,
    ns: Vec<i64>,
    ss: Vec<i8>,
    formula: Option<String>,
    function: Option<Py<PyAny>>,
    multiplicity: Option<String>,
    field: Option<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    tolerance: Option<f64>,
    relative: bool,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    let r = resolve(model, field, kz, cutoff, memory_limit_mib)?;
    let origin = if relative {
        Reference::Model
    } else {
        Reference::Zero
    };
    let (list, source) = match (formula, function) {
        (Some(f), None) => {
            let lf = LevelFormula {
                formula: f.clone(),
                n0: None,
                cases: Vec::new(),
                multiplicity,
                variables: Vec::new(),
            };
            let list = ExpectedList::from_formula(&model.model, r.point, origin, &lf, &ns, &ss)
                .map_err(py_err)?;
            (list, format!("formula \"{f}\""))
        }
        (None, Some(func)) => (
            callable_list(py, model, &r, origin, &ns, &ss, &func)?,
            "Python callable".to_string(),
        ),
        _ => {
            return Err(bad_arg(
                "formula",
                "give exactly one of formula (a string) or function (a callable E(n, s))",
            ))
        }
    };
    let spectrum = solve(py, model, &r)?;
    let settings = VerifySettings {
        tolerance: finite(
            "tolerance",
            tolerance.unwrap_or(VerifySettings::default().tolerance),
        )?,
        scale: EnergyScale::Spectrum,
        ..VerifySettings::default()
    };
    let verdict = verify::check(&spectrum, &list, &settings).map_err(py_err)?;
    json(&VerifyJson {
        command: "verify",
        model: ModelRecord::new(&model.model, &model.origin),
        units: UnitsRecord::new(&model.model),
        field: r.point.field,
        kz: r.point.kz,
        cutoff: r.settings.cutoff,
        expected_source: source,
        expected_levels: list.levels.len(),
        verdict_line: verdict.verdict_line(model.model.units().energy_unit()),
        verdict,
    })
}

/// The expected levels of a Python callable `func(n, s) -> float | None`; an exception the
/// callable raises is raised again unchanged.
fn callable_list(
    py: Python<'_>,
    model: &PyModel,
    r: &Resolved,
    origin: Reference,
    ns: &[i64],
    ss: &[i8],
    func: &Py<PyAny>,
) -> PyResult<ExpectedList> {
    let mut raised: Option<PyErr> = None;
    let list = ExpectedList::try_from_fn(&model.model, r.point, origin, ns, ss, |v| {
        match func
            .call1(py, (v.n, v.s))
            .and_then(|e| e.extract::<Option<f64>>(py))
        {
            Ok(e) => Ok(e.map(|e| (e, 1))),
            Err(err) => {
                let detail = err.to_string();
                raised.get_or_insert(err);
                Err(Error::Parse {
                    location: format!("function({}, {})", v.n, v.s),
                    message: detail,
                })
            }
        }
    });
    match (list, raised) {
        (_, Some(err)) => Err(err),
        (list, None) => list.map_err(py_err),
    }
}

/// The broadening of `shape` and `width` (default: 5 % of the spectrum's energy scale).
fn broadening(shape: &str, width: Option<f64>, scale: f64) -> PyResult<Broadening> {
    let width = finite("width", width.unwrap_or(0.05 * scale))?;
    if width <= 0.0 {
        return Err(bad_arg(
            "width",
            format!("{width}: the width must be positive (model energy unit)"),
        ));
    }
    let shape = match shape {
        "gaussian" => LineShape::Gaussian,
        "lorentzian" => LineShape::Lorentzian,
        other => {
            return Err(bad_arg(
                "shape",
                format!("'{other}': give gaussian or lorentzian"),
            ))
        }
    };
    Ok(Broadening {
        shape,
        width,
        scaling: WidthScaling::Constant,
    })
}

/// The carrier density (1/length unit^2) of `density_cm2` (cm^-2) or of `filling` (filling
/// factor at `field`), if either is given.
fn density(
    model: &PyModel,
    field: f64,
    density_cm2: Option<f64>,
    filling: Option<f64>,
) -> PyResult<Option<f64>> {
    let u = model.model.units();
    match (density_cm2, filling) {
        (Some(_), Some(_)) => Err(bad_arg("filling", "give density_cm2 or filling, not both")),
        (Some(n), None) => Ok(Some(from_per_cm2(u, finite("density_cm2", n)?))),
        (None, Some(nu)) => Ok(Some(
            finite("filling", nu)? * landau_degeneracy_per_area(u, field, model.model.charge()),
        )),
        (None, None) => Ok(None),
    }
}

/// Fermi settings for `density` at `temperature` K (neutrality decided by the library:
/// `Neutrality::Auto`).
fn fermi_settings(density: f64, temperature: f64, b: Broadening) -> PyResult<FermiSettings> {
    let t = finite("temperature", temperature)?;
    if t < 0.0 {
        return Err(bad_arg(
            "temperature",
            format!("{t} K; give 0 or a positive temperature"),
        ));
    }
    Ok(FermiSettings {
        carrier_density: density,
        temperature_k: t,
        broadening: b,
        neutrality: Neutrality::Auto,
    })
}

/// The density of states at one point on `points` energies from `emin` to `emax` (model
/// energy unit, relative to the reference energy; default: the converged window of the
/// spectrum), per energy unit and cm^2, with the Fermi level and filling factor when a
/// density or filling is given: the library's `DosRecord`, as JSON.
#[pyfunction]
#[pyo3(signature = (model, field=None, kz=None, cutoff=None, width=None, shape="gaussian",
    emin=None, emax=None, points=2000, density_cm2=None, filling=None, temperature=0.0,
    memory_limit_mib=None))]
#[allow(clippy::too_many_arguments)]
fn dos_json(
    py: Python<'_>,
    model: &PyModel,
    field: Option<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    width: Option<f64>,
    shape: &str,
    emin: Option<f64>,
    emax: Option<f64>,
    points: usize,
    density_cm2: Option<f64>,
    filling: Option<f64>,
    temperature: f64,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    if !(2..=ladderfan::limits::MAX_ENERGY_POINTS).contains(&points) {
        return Err(bad_arg(
            "points",
            format!(
                "{points} energies; give 2 to {}",
                ladderfan::limits::MAX_ENERGY_POINTS
            ),
        ));
    }
    let r = resolve(model, field, kz, cutoff, memory_limit_mib)?;
    let u = model.model.units();
    let spec = solve(py, model, &r)?;
    let b = broadening(shape, width, spec.energy_scale)?;
    let ld = LevelDensity::new(&model.model, &spec, b).map_err(py_err)?;
    let emin = finite("emin", emin.unwrap_or(ld.window.0))?;
    let emax = finite("emax", emax.unwrap_or(ld.window.1))?;
    if emax <= emin {
        return Err(bad_arg(
            "emax",
            format!("energy grid from {emin} to {emax}; need emax > emin"),
        ));
    }
    let curve = ld.curve(emin, emax, points).map_err(py_err)?;
    let t = finite("temperature", temperature)?;
    let fermi = match density(model, r.point.field, density_cm2, filling)? {
        Some(n) => {
            Some(fermi_level(&model.model, &spec, &fermi_settings(n, t, b)?).map_err(py_err)?)
        }
        None => None,
    };
    json(&DosRecord {
        command: "dos",
        model: ModelRecord::new(&model.model, &model.origin),
        units: UnitsRecord::new(&model.model),
        field: r.point.field,
        kz: r.point.kz,
        cutoff: r.settings.cutoff,
        reference_energy: spec.reference_energy,
        landau_degeneracy_cm2: per_cm2(u, ld.landau_degeneracy),
        model_degeneracy: ld.model_degeneracy,
        states_per_level_cm2: per_cm2(u, ld.per_level),
        shape: b.shape,
        width: ld.width,
        temperature_k: t,
        levels_used: ld.energies.len(),
        converged_window: ld.window,
        dos: curve.iter().map(|&(e, g)| (e, per_cm2(u, g))).collect(),
        fermi: fermi.as_ref().map(|f| FermiRecord::new(u, f)),
        fermi_sweep: Vec::new(),
        volume: None,
    })
}

/// The allowed magneto-optical transitions at each field of `fields` (one or more; the
/// library's `transition_sweep`, parallel over the fields, GIL released) for a carrier
/// density (`density_cm2` or `filling`; default 0 from neutrality), transition energies up to
/// `max_energy` (default 8 energy scales), strengths above `min_strength` of the largest:
/// the library's `OpticsRecord`, as JSON.
#[pyfunction]
#[pyo3(signature = (model, fields, kz=None, cutoff=None, density_cm2=None, filling=None,
    width=None, temperature=0.0, max_energy=None, min_strength=1e-8, memory_limit_mib=None))]
#[allow(clippy::too_many_arguments)]
fn optics_json(
    py: Python<'_>,
    model: &PyModel,
    fields: Vec<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    density_cm2: Option<f64>,
    filling: Option<f64>,
    width: Option<f64>,
    temperature: f64,
    max_energy: Option<f64>,
    min_strength: f64,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    let top = fields
        .iter()
        .copied()
        .max_by(|x, y| x.abs().total_cmp(&y.abs()))
        .ok_or_else(|| bad_arg("fields", "no field given; give one or more fields"))?;
    let r = resolve(model, Some(top), kz, cutoff, memory_limit_mib)?;
    for &b in &fields {
        if finite("fields", b)? == 0.0 {
            return Err(bad_arg("fields", "a field is 0; give non-zero fields"));
        }
    }
    let u = model.model.units();
    // the probe at the highest field gives the energy scale of the defaults
    let probe = solve(py, model, &r)?;
    let b = broadening("gaussian", width, probe.energy_scale)?;
    let max_energy = finite("max_energy", max_energy.unwrap_or(8.0 * probe.energy_scale))?;
    if max_energy <= 0.0 {
        return Err(bad_arg("max_energy", "give a positive energy"));
    }
    if !(min_strength.is_finite() && (0.0..1.0).contains(&min_strength)) {
        return Err(bad_arg("min_strength", "give a fraction in [0, 1)"));
    }
    let n = density(model, r.point.field, density_cm2, filling)?.unwrap_or(0.0);
    let fs = fermi_settings(n, temperature, b)?;
    let pts: Vec<FieldPoint> = fields
        .iter()
        .map(|&field| FieldPoint {
            field,
            kz: r.point.kz,
        })
        .collect();
    let opts = OpticsSettings {
        max_energy: Some(max_energy),
        min_relative_strength: min_strength,
    };
    let fan = py
        .detach(|| transition_sweep(&model.model, &pts, &r.settings, &fs, &opts))
        .map_err(py_err)?;
    json(&OpticsRecord {
        command: "optics",
        model: ModelRecord::new(&model.model, &model.origin),
        units: UnitsRecord::new(&model.model),
        velocity_unit: match u {
            Units::Lab => "m/s",
            Units::Natural => "c",
        },
        kz: r.point.kz,
        cutoff: r.settings.cutoff,
        reference_energy: probe.reference_energy,
        temperature_k: fs.temperature_k,
        max_energy,
        convention: CONVENTION,
        points: OpticsPointRecord::fan(&fan, u),
    })
}
