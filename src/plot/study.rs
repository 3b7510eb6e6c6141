//! The convergence figure of a study ([`crate::trust::converge::Study`]): residual bound
//! (solid), Kato-Temple bound (dotted) and actual error (dots) against the cutoff, both axes
//! logarithmic, the key beside the data.

use super::colour::categorical;
use super::{line_plot, Curve, LegendEntry, LinePlot, Rgb, Scale, Stroke};
use crate::error::{Error, Result};
use crate::trust::converge::Study;
use crate::trust::report::PLOT_MAX_LEVELS;
use std::path::Path;

/// The figure of a study (the lowest [`PLOT_MAX_LEVELS`] tracked levels); zero errors sit at
/// the bottom of the axis (the smallest positive value / 10).
pub fn study_plot(study: &Study) -> LinePlot {
    let shown = &study.levels[..study.levels.len().min(PLOT_MAX_LEVELS)];
    let floor = shown
        .iter()
        .flat_map(|l| {
            l.entries
                .iter()
                .flat_map(|e| [e.bound, e.actual_error, e.kato_temple])
        })
        .flatten()
        .filter(|v| v.is_finite() && *v > 0.0)
        .fold(f64::INFINITY, f64::min)
        / 10.0;
    let floor = if floor.is_finite() { floor } else { 1e-300 };
    let mut curves = Vec::new();
    let mut legend = Vec::new();
    for (t, l) in shown.iter().enumerate() {
        let colour = categorical(t);
        let series = |f: &dyn Fn(&crate::trust::converge::StudyEntry) -> Option<f64>| {
            l.entries
                .iter()
                .filter_map(|e| f(e).map(|v| (e.cutoff as f64, v.max(floor))))
                .collect::<Vec<_>>()
        };
        let base = Curve {
            colour: Some(colour),
            ..Curve::default()
        };
        curves.push(Curve {
            points: series(&|e| e.bound),
            width: 2.0,
            ..base.clone()
        });
        curves.push(Curve {
            points: series(&|e| e.kato_temple),
            stroke: Stroke::Dotted,
            width: 1.4,
            ..base.clone()
        });
        curves.push(Curve {
            points: series(&|e| e.actual_error),
            stroke: Stroke::Dotted,
            width: 1.0,
            markers: true,
            ..base
        });
        legend.push(LegendEntry::solid(
            format!(
                "E = {:.6e} ({}:{})",
                l.reference_value, l.sector.class, l.sector.label
            ),
            colour,
        ));
    }
    let grey = Some(Rgb(90, 90, 90));
    legend.push(LegendEntry {
        text: "solid: residual bound".into(),
        colour: grey,
        stroke: Stroke::Solid,
    });
    legend.push(LegendEntry {
        text: "dotted: Kato-Temple bound".into(),
        colour: grey,
        stroke: Stroke::Dotted,
    });
    legend.push(LegendEntry {
        text: "dots: actual error".into(),
        colour: grey,
        stroke: Stroke::Dotted,
    });
    LinePlot {
        title: format!("Convergence in the cutoff: {}", study.model),
        x_label: "cutoff N (orbitals)".into(),
        y_label: format!("error [{}]", study.energy_unit),
        curves,
        notes: vec![format!(
            "cutoffs {}; errors against the largest cutoff; zero errors drawn at the floor {:.1e}",
            study
                .cutoffs
                .iter()
                .map(|c| c.to_string())
                .collect::<Vec<_>>()
                .join(", "),
            floor
        )],
        legend,
        x_scale: Scale::Log,
        y_scale: Scale::Log,
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        ..LinePlot::default()
    }
}

/// The SVG of [`study_plot`].
///
/// # Errors
/// [`Error::Unsupported`] when the study has no cutoff or every bound and error is zero
/// (nothing to draw on log axes).
pub fn study_svg_string(study: &Study) -> Result<String> {
    if study.cutoffs.is_empty() {
        return Err(Error::Unsupported(
            "the study has no cutoffs to plot".into(),
        ));
    }
    let any = study.levels.iter().take(PLOT_MAX_LEVELS).any(|l| {
        l.entries.iter().any(|e| {
            [e.bound, e.actual_error, e.kato_temple]
                .into_iter()
                .flatten()
                .any(|v| v.is_finite() && v > 0.0)
        })
    });
    if !any {
        return Err(Error::Unsupported(
            "every bound and error of the study is zero: nothing to draw on log axes".into(),
        ));
    }
    line_plot(&study_plot(study))
}

/// Write the SVG of [`study_svg_string`] to `path`.
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
