//! Tables and plots of a convergence study: CSV, JSON and an SVG plot of bound and actual
//! error against the cutoff on log axes.

use crate::error::{Error, Result};
use crate::trust::converge::{NeededCutoff, Study};
use plotters::prelude::*;
use std::path::Path;

/// The columns of [`study_csv`], in order: (quantity, whether it is an energy in the study's
/// energy unit, meaning). An energy-valued column is named `<quantity>_<energy suffix>`
/// ([`csv_columns`]); the others by their quantity alone.
pub const STUDY_COLUMNS: [(&str, bool, &str); 16] = [
    ("level", false, "index of the tracked level"),
    ("sector_class", false, "component class of the sector"),
    ("sector_label", false, "J (or J mod m) of the sector"),
    ("orbital", false, "dominant orbital"),
    ("component_index", false, "dominant component index"),
    (
        "branch",
        false,
        "Klein-Gordon branch +1 / -1; 0 for a direct Hamiltonian",
    ),
    ("cutoff", false, "orbitals kept in this solve"),
    (
        "energy",
        true,
        "level energy relative to the reference energy",
    ),
    ("residual_bound", true, "residual (Weinstein) bound"),
    (
        "kato_temple_bound",
        true,
        "Kato-Temple bound (empty where not certified)",
    ),
    (
        "change",
        true,
        "change of the energy from the previous cutoff",
    ),
    (
        "actual_error",
        true,
        "difference from the exact value (empty when none is known)",
    ),
    ("converged", false, "true when converged at this cutoff"),
    (
        "bound_from",
        false,
        "which bound decided: residual or kato_temple",
    ),
    (
        "state",
        false,
        "converged, not_converged or cutoff_artefact",
    ),
    (
        "needed_cutoff",
        false,
        "cutoff needed for convergence; ~ marks an extrapolation",
    ),
];

/// The column names of [`study_csv`] for the energy suffix `energy_suffix` (e.g. `meV`, as
/// the front end spells energy units in column names): `energy_meV`, `bound_meV`, ...
pub fn csv_columns(energy_suffix: &str) -> Vec<String> {
    STUDY_COLUMNS
        .iter()
        .map(|&(q, energy, _)| {
            if energy {
                format!("{q}_{energy_suffix}")
            } else {
                q.to_string()
            }
        })
        .collect()
}

fn opt(x: Option<f64>) -> String {
    x.map_or_else(String::new, |v| format!("{v:.17e}"))
}

fn needed_str(n: NeededCutoff) -> String {
    match n {
        NeededCutoff::Observed(c) => c.to_string(),
        NeededCutoff::Extrapolated(c) => format!("~{c}"),
        NeededCutoff::Unknown => String::new(),
    }
}

/// The study as CSV, one row per tracked level and cutoff (columns [`csv_columns`] of
/// `energy_suffix`; energies and errors in the study's energy unit, relative to the reference
/// energy; empty cells for missing values; a needed cutoff prefixed by `~` is extrapolated).
/// The first line is the column line; there are no comment lines.
///
/// # Errors
/// [`Error::Unsupported`] if the CSV writer fails (it writes to memory).
pub fn study_csv(study: &Study, energy_suffix: &str) -> Result<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let fail = |e: csv::Error| Error::Unsupported(format!("cannot format the CSV table: {e}"));
    w.write_record(csv_columns(energy_suffix)).map_err(fail)?;
    for (t, l) in study.levels.iter().enumerate() {
        for e in &l.entries {
            w.write_record([
                t.to_string(),
                l.sector.class.to_string(),
                l.sector.label.to_string(),
                l.orbital.to_string(),
                l.component.to_string(),
                l.branch.to_string(),
                e.cutoff.to_string(),
                opt(e.energy),
                opt(e.bound),
                opt(e.kato_temple),
                opt(e.change),
                opt(e.actual_error),
                e.converged.to_string(),
                e.bound_from
                    .map_or_else(String::new, |b| b.name().to_string()),
                e.state
                    .map_or_else(String::new, |st| st.word().replace(' ', "_")),
                needed_str(l.needed_cutoff),
            ])
            .map_err(fail)?;
        }
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Error::Unsupported(format!("cannot format the CSV table: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Error::Unsupported(format!("CSV table is not UTF-8: {e}")))
}

/// The study as pretty-printed JSON (the serde form of [`Study`]).
///
/// # Errors
/// [`Error::Unsupported`] if serialisation fails (a non-finite number, for instance).
pub fn study_json(study: &Study) -> Result<String> {
    serde_json::to_string_pretty(study)
        .map_err(|e| Error::Unsupported(format!("cannot format the JSON table: {e}")))
}

/// How many tracked levels the plot shows at most (the lowest in energy).
pub const PLOT_MAX_LEVELS: usize = 8;

/// Write the SVG plot of [`study_svg_string`] to `path`.
///
/// # Errors
/// [`Error::Io`] when the file cannot be written; the errors of [`study_svg_string`].
pub fn study_svg(study: &Study, path: &Path) -> Result<()> {
    let svg = study_svg_string(study)?;
    std::fs::write(path, svg).map_err(|source| Error::Io {
        action: "write".into(),
        path: path.display().to_string(),
        source,
    })
}

/// An SVG plot of residual bound (solid lines), Kato-Temple bound (dotted) and actual error
/// (dashed, with markers)
/// against the cutoff, both axes logarithmic, for up to [`PLOT_MAX_LEVELS`] tracked levels.
/// Zero errors are drawn at the bottom of the axis (the smallest positive value / 10).
///
/// # Errors
/// [`Error::Unsupported`] when the study has no plottable value or drawing fails.
pub fn study_svg_string(study: &Study) -> Result<String> {
    let shown = &study.levels[..study.levels.len().min(PLOT_MAX_LEVELS)];
    let values: Vec<f64> = shown
        .iter()
        .flat_map(|l| {
            l.entries
                .iter()
                .flat_map(|e| [e.bound, e.actual_error, e.kato_temple])
        })
        .flatten()
        .filter(|v| v.is_finite() && *v > 0.0)
        .collect();
    let (Some(&n_min), Some(&n_max)) = (study.cutoffs.first(), study.cutoffs.last()) else {
        return Err(Error::Unsupported(
            "the study has no cutoffs to plot".into(),
        ));
    };
    if values.is_empty() {
        return Err(Error::Unsupported(
            "every bound and error of the study is zero: nothing to draw on log axes".into(),
        ));
    }
    let floor = values.iter().copied().fold(f64::INFINITY, f64::min) / 10.0;
    let top = values.iter().copied().fold(0.0, f64::max) * 10.0;
    let io = |e: String| Error::Unsupported(format!("cannot draw the convergence plot: {e}"));
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (900, 600)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| io(e.to_string()))?;
        let x_hi = (n_max as f64 * 1.2).max(n_min as f64 + 1.0);
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!(
                    "{}: bound (solid), Kato-Temple (dotted), actual error (dashed, dots)",
                    study.model
                ),
                ("sans-serif", 20),
            )
            .margin(15)
            .x_label_area_size(45)
            .y_label_area_size(80)
            .build_cartesian_2d(
                ((n_min as f64 / 1.2).max(0.5)..x_hi).log_scale(),
                (floor..top).log_scale(),
            )
            .map_err(|e| io(e.to_string()))?;
        chart
            .configure_mesh()
            .x_desc("cutoff N (orbitals)")
            .x_labels(8)
            .x_label_formatter(&|x| format!("{x:.0}"))
            .y_desc(format!("error ({})", study.energy_unit))
            .y_label_formatter(&|y| format!("{y:.0e}"))
            .draw()
            .map_err(|e| io(e.to_string()))?;
        for (t, l) in shown.iter().enumerate() {
            let color = Palette99::pick(t).to_rgba();
            let bound: Vec<(f64, f64)> = l
                .entries
                .iter()
                .filter_map(|e| e.bound.map(|b| (e.cutoff as f64, b.max(floor))))
                .collect();
            let err: Vec<(f64, f64)> = l
                .entries
                .iter()
                .filter_map(|e| e.actual_error.map(|a| (e.cutoff as f64, a.max(floor))))
                .collect();
            let label = format!(
                "E = {:.6e} (sector {}:{})",
                l.reference_value, l.sector.class, l.sector.label
            );
            chart
                .draw_series(LineSeries::new(bound, color.stroke_width(2)))
                .map_err(|e| io(e.to_string()))?
                .label(label)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(2))
                });
            let kt: Vec<(f64, f64)> = l
                .entries
                .iter()
                .filter_map(|e| e.kato_temple.map(|k| (e.cutoff as f64, k.max(floor))))
                .collect();
            chart
                .draw_series(DashedLineSeries::new(kt, 2, 3, color.stroke_width(1)))
                .map_err(|e| io(e.to_string()))?;
            chart
                .draw_series(DashedLineSeries::new(
                    err.clone(),
                    6,
                    4,
                    color.stroke_width(1),
                ))
                .map_err(|e| io(e.to_string()))?;
            chart
                .draw_series(err.into_iter().map(|p| Circle::new(p, 3, color.filled())))
                .map_err(|e| io(e.to_string()))?;
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .draw()
            .map_err(|e| io(e.to_string()))?;
        root.present().map_err(|e| io(e.to_string()))?;
    }
    Ok(svg)
}
