//! Solves: the spectrum at one point, sweeps over the field or kz, the convergence study and
//! the truncated matrix. Each returns the library's record as JSON text (see the crate docs).

use crate::{bad_arg, finite, json, py_err, resolve, settings, PyModel};
use ladderfan::memory::{self, Footprint};
use ladderfan::problem::Problem;
use ladderfan::records::{self, SpectrumRecord};
use ladderfan::sectors::{Conservation, SectorId, SectorPlan};
use ladderfan::trust::converge::{study, ExactValues, Selection};
use ladderfan::{Error, FieldPoint, Spectrum};
use pyo3::prelude::*;
use serde::Serialize;

/// Register the functions of this file in the module.
pub(crate) fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(spectrum_json, m)?)?;
    m.add_function(wrap_pyfunction!(sweep_json, m)?)?;
    m.add_function(wrap_pyfunction!(converge_json, m)?)?;
    m.add_function(wrap_pyfunction!(matrix_entries, m)?)?;
    Ok(())
}

/// `s` if every level's energy and bound are finite (the command line's rule: a spectrum whose
/// numbers overflowed double precision is refused, with the fix).
pub(crate) fn finite_spectrum(s: Spectrum) -> PyResult<Spectrum> {
    if let Some((i, l)) = s
        .levels
        .iter()
        .enumerate()
        .find(|(_, l)| !(l.energy.is_finite() && l.bound.is_finite()))
    {
        let (what, value) = if l.energy.is_finite() {
            ("bound", l.bound)
        } else {
            ("energy", l.energy)
        };
        return Err(py_err(Error::BadNumber {
            name: format!(
                "the {what} of level {i} (sector {}:{}, n = {}) at field {:e}",
                l.sector.class, l.sector.label, l.orbital, s.point.field
            ),
            value,
            fix: "the matrix of this run overflows double precision; give coefficients, field \
                  and charge of moderate size, or a smaller cutoff"
                .into(),
        }));
    }
    Ok(s)
}

/// The spectrum at one (field, kz) with every level (ascending energy, cutoff artefacts
/// included and marked): the `SpectrumRecord` of `ladderfan levels --json`, as JSON.
#[pyfunction]
#[pyo3(signature = (model, field=None, kz=None, cutoff=None, memory_limit_mib=None))]
fn spectrum_json(
    py: Python<'_>,
    model: &PyModel,
    field: Option<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    let r = resolve(model, field, kz, cutoff, memory_limit_mib)?;
    let s = py.detach(|| {
        Problem::new(&model.model, r.point, &r.settings)
            .and_then(|p| p.check_memory().map(|_| p))
            .and_then(|p| Spectrum::solve(&p))
    });
    let s = finite_spectrum(s.map_err(py_err)?)?;
    let idx: Vec<usize> = (0..s.levels.len()).collect();
    json(&SpectrumRecord::new(&model.model, &model.origin, &s, &idx))
}

/// A sweep's result: the swept values, the fixed coordinate, the reference point and the
/// tracked levels (the library's `TrackRecord`s).
#[derive(Serialize)]
struct SweepOut {
    swept: &'static str,
    values: Vec<f64>,
    fixed: f64,
    cutoff: usize,
    reference_point: usize,
    reference_energy: f64,
    tracks: Vec<records::TrackRecord>,
}

/// Levels over a sweep of the field (`swept = "field"`, `fixed` = kz) or of kz
/// (`swept = "kz"`, `fixed` = field), solved in parallel on the library's rayon pool and
/// tracked by their quantum numbers as the points finish (`records::TrackCollector`, equal to
/// `records::track_records`; at most two batches of spectra held); the reference point (labels,
/// memory check) is the largest |B| of a field sweep, the smallest |kz| of a kz sweep, as in
/// `ladderfan fan` / `ladderfan dispersion`.
#[pyfunction]
#[pyo3(signature = (model, swept, values, fixed=None, cutoff=None, memory_limit_mib=None))]
fn sweep_json(
    py: Python<'_>,
    model: &PyModel,
    swept: &str,
    values: Vec<f64>,
    fixed: Option<f64>,
    cutoff: Option<usize>,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    let what = match swept {
        "field" => "fields",
        "kz" => "kz",
        other => return Err(bad_arg("swept", format!("'{other}': give field or kz"))),
    };
    if values.len() < 2 {
        return Err(bad_arg(
            what,
            format!("{} points; a sweep needs at least 2", values.len()),
        ));
    }
    if values.len() > ladderfan::limits::MAX_SWEEP_POINTS {
        return Err(bad_arg(
            what,
            format!(
                "{} points is more than the limit of {}; use fewer points",
                values.len(),
                ladderfan::limits::MAX_SWEEP_POINTS
            ),
        ));
    }
    for &v in &values {
        finite(what, v)?;
    }
    let (points, reference_point) = sweep_points(model, swept, &values, fixed)?;
    let settings = settings(model, cutoff, memory_limit_mib)?;
    let fixed = if swept == "field" {
        points[0].kz
    } else {
        points[0].field
    };
    // the spectra stream (two batches in flight) into the tracks, which hold every converged
    // value of every level: the result itself
    let in_flight = 2 * ladderfan::sweep::default_batch() as u64;
    let probe = Problem::new(&model.model, points[reference_point], &settings).map_err(py_err)?;
    let bytes = probe.estimate(
        &Footprint::Stream {
            points: points.len() as u64,
            in_flight,
            held_points: points.len() as u64,
            extra_per_level: memory::SWEEP_TRACK_BYTES,
            per_level: 0,
            buffer_bytes: 0,
        },
        rayon_threads(),
    );
    memory::check(
        &format!(
            "{} points at cutoff {} ({} levels each, {} in flight, every value kept)",
            points.len(),
            settings.cutoff,
            probe.shape().levels,
            in_flight.min(points.len() as u64)
        ),
        bytes,
        settings.memory_limit_mib,
        memory::FIX_SWEEP,
    )
    .map_err(py_err)?;
    // every track and every converged value: an unbounded window, every track kept
    let mut collector = records::TrackCollector::new(
        &model.model,
        points.len(),
        Some(reference_point),
        (f64::NEG_INFINITY, f64::INFINITY),
        records::KeepTracks::All,
    );
    let mut reference_energy = f64::NAN;
    let mut failed: Option<PyErr> = None;
    let result = py.detach(|| {
        ladderfan::sweep::stream(
            &model.model,
            &points,
            &settings,
            0,
            None,
            &|| {},
            &mut |i, s| match finite_spectrum(s) {
                Ok(s) => {
                    if i == reference_point {
                        reference_energy = s.reference_energy;
                    }
                    collector.add(i, &s);
                    Ok(())
                }
                Err(e) => {
                    failed = Some(e);
                    // stops the stream; the Python error above is the one raised
                    Err(Error::Unsupported("a non-finite level".into()))
                }
            },
        )
    });
    if let Some(e) = failed {
        return Err(e);
    }
    result.map_err(py_err)?;
    json(&SweepOut {
        swept: if swept == "field" { "field" } else { "kz" },
        fixed,
        cutoff: settings.cutoff,
        reference_point,
        reference_energy,
        tracks: collector.finish(),
        values,
    })
}

/// The number of worker threads of the library's rayon pool.
fn rayon_threads() -> u64 {
    rayon::current_num_threads() as u64
}

/// The field points of a sweep and its reference point (see [`sweep_json`]).
fn sweep_points(
    model: &PyModel,
    swept: &str,
    values: &[f64],
    fixed: Option<f64>,
) -> PyResult<(Vec<FieldPoint>, usize)> {
    let by = |pick: fn(f64, f64) -> bool| {
        let mut best = 0;
        for (i, v) in values.iter().enumerate() {
            if pick(v.abs(), values[best].abs()) {
                best = i;
            }
        }
        best
    };
    if swept == "field" {
        if let Some(i) = values.iter().position(|&b| b == 0.0) {
            return Err(bad_arg(
                "fields",
                format!(
                    "point {} of the sweep is B = 0, where there are no Landau levels; give fields of one sign",
                    i + 1
                ),
            ));
        }
        let kz = finite("kz", fixed.or(model.defaults.kz).unwrap_or(0.0))?;
        let points = values
            .iter()
            .map(|&field| FieldPoint { field, kz })
            .collect();
        Ok((points, by(|a, b| a > b)))
    } else {
        let r = resolve(model, fixed, Some(0.0), None, None)?;
        let field = r.point.field;
        let points = values.iter().map(|&kz| FieldPoint { field, kz }).collect();
        Ok((points, by(|a, b| a < b)))
    }
}

/// A convergence study at one point over `cutoffs`, following the `count` genuine levels
/// nearest `target` (model energy unit, relative to the reference energy) at the largest
/// cutoff, the actual error measured against the closed form when the model has one: the
/// library's `Study` (`trust::report::study_json`), as JSON.
#[pyfunction]
#[pyo3(signature = (model, cutoffs, field=None, kz=None, target=0.0, count=10, memory_limit_mib=None))]
#[allow(clippy::too_many_arguments)]
fn converge_json(
    py: Python<'_>,
    model: &PyModel,
    cutoffs: Vec<usize>,
    field: Option<f64>,
    kz: Option<f64>,
    target: f64,
    count: usize,
    memory_limit_mib: Option<u64>,
) -> PyResult<String> {
    let largest = cutoffs.iter().copied().max().ok_or_else(|| {
        bad_arg(
            "cutoffs",
            "an empty list; give cutoffs such as [25, 50, 100]",
        )
    })?;
    let r = resolve(model, field, kz, Some(largest), memory_limit_mib)?;
    let target = finite("target", target)?;
    if count == 0 {
        return Err(bad_arg("count", "0 levels; follow at least one"));
    }
    let selection = Selection::Nearest { target, count };
    let st = py
        .detach(|| {
            study(
                &model.model,
                r.point,
                &r.settings,
                &cutoffs,
                selection,
                ExactValues::ClosedFormIfKnown,
            )
        })
        .map_err(py_err)?;
    ladderfan::trust::report::study_json(&st).map_err(py_err)
}

/// The matrix entries of a truncated Hamiltonian.
type Entries = (
    usize,
    Vec<usize>,
    Vec<usize>,
    Vec<f64>,
    Vec<f64>,
    Vec<(usize, usize)>,
);

/// The truncated Hamiltonian at one point in absolute energies (no reference subtracted), the
/// whole matrix (rows n d + alpha, orbital-major) or one sector (`sector = (class, label)`, its
/// states in banded order): `(size, rows, cols, re, im, states)`, every stored entry of the
/// Hermitian matrix (both triangles), the elements of the infinite matrix (the truncated
/// matrix is its principal submatrix), as `ladderfan export` writes them.
#[pyfunction]
#[pyo3(signature = (model, field=None, kz=None, cutoff=None, sector=None, memory_limit_mib=None))]
fn matrix_entries(
    py: Python<'_>,
    model: &PyModel,
    field: Option<f64>,
    kz: Option<f64>,
    cutoff: Option<usize>,
    sector: Option<(usize, i64)>,
    memory_limit_mib: Option<u64>,
) -> PyResult<Entries> {
    let mut r = resolve(model, field, kz, cutoff, memory_limit_mib)?;
    r.settings.reference = ladderfan::Reference::Zero;
    let problem = Problem::new(&model.model, r.point, &r.settings).map_err(py_err)?;
    let h = problem.hamiltonian();
    let (d, cutoff) = (h.dim, problem.settings().cutoff);
    let (states, half_bandwidth): (Vec<(usize, usize)>, usize) = match sector {
        None => {
            let entries = (cutoff * d) as u64 * ((2 * h.band + 1) * d) as u64;
            if entries > 50_000_000 {
                return Err(bad_arg(
                    "cutoff",
                    format!("the whole matrix ({} rows, up to {entries} entries) is too large; lower the cutoff or give a sector", cutoff * d),
                ));
            }
            let states = (0..cutoff)
                .flat_map(|n| (0..d).map(move |alpha| (n, alpha)))
                .collect();
            (states, (h.band + 1) * d - 1)
        }
        Some((class, label)) => {
            let id = SectorId { class, label };
            let plan = problem.plan();
            if !sector_exists(plan, id) {
                return Err(bad_arg(
                    "sector",
                    format!(
                        "sector {class}:{label} does not exist for this model and cutoff (symmetry: {})",
                        plan.symmetry.describe()
                    ),
                ));
            }
            let mut s = Vec::new();
            plan.states(id, &mut s);
            (s, plan.half_bandwidth(id, h.band))
        }
    };
    let size = states.len();
    let (rows, cols, re, im) = py.detach(|| {
        let (mut rows, mut cols, mut re, mut im) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        for (i, &(m, al)) in states.iter().enumerate() {
            let near = i.saturating_sub(half_bandwidth)..(i + half_bandwidth + 1).min(size);
            for (j, &(n, be)) in states.iter().enumerate().take(near.end).skip(near.start) {
                if m.abs_diff(n) > h.band {
                    continue;
                }
                let z = h.element(m, al, n, be);
                if z.re != 0.0 || z.im != 0.0 {
                    rows.push(i);
                    cols.push(j);
                    re.push(z.re);
                    im.push(z.im);
                }
            }
        }
        (rows, cols, re, im)
    });
    Ok((size, rows, cols, re, im, states))
}

/// Whether sector `id` exists in `plan` (its label in the range of its conservation law).
fn sector_exists(plan: &SectorPlan, id: SectorId) -> bool {
    let Some(c) = plan.symmetry.classes.get(id.class) else {
        return false;
    };
    let max_s = c.shifts.iter().copied().max().unwrap_or(0);
    match c.conservation {
        Conservation::Exact => {
            id.label >= 0 && (id.label as i128) < plan.cutoff as i128 + max_s as i128
        }
        Conservation::None => id.label == 0,
        Conservation::Modulo(m) => id.label >= 0 && (id.label as u64) < m,
    }
}
