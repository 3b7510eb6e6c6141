//! The figures of `converge`: the study's is the library's
//! ([`ladderfan::plot::study::study_plot`]); `converge-auto` draws the error bounds of the
//! selected levels at the final cutoff against their energies.

use ladderfan::plot::colour::categorical;
pub(super) use ladderfan::plot::study::study_plot as convergence_plot;
use ladderfan::plot::{Curve, LegendEntry, LinePlot, Scale};
use ladderfan::trust::auto::AutoResult;

/// The figure of `converge-auto.csv`: residual bound (dots) and Kato-Temple bound (dots of a
/// second colour, where certified) of every selected level against its energy, the bound on a
/// log axis; `unit` is the energy unit of `res` (already converted to the output unit).
pub(super) fn auto_plot(res: &AutoResult, unit: &str, tolerance: f64) -> LinePlot {
    let s = &res.spectrum;
    let dot = |key: usize, x: f64, y: f64| Curve {
        color_key: key,
        points: vec![(x, y)],
        ..Curve::default()
    };
    let mut curves = Vec::new();
    for &i in &res.selected {
        let l = &s.levels[i];
        if l.bound > 0.0 {
            curves.push(dot(0, l.energy, l.bound));
        }
        if let Some(k) = l.kato_temple.filter(|k| *k > 0.0) {
            curves.push(dot(1, l.energy, k));
        }
    }
    LinePlot {
        title: format!("Error bounds at the automatic cutoff: {}", s.model),
        x_label: format!("E [{unit}]"),
        y_label: format!("bound [{unit}]"),
        curves,
        notes: vec![format!(
            "{} selected levels; tolerance {tolerance:e} (relative) met at cutoff {} (first at {})",
            res.selected.len(),
            res.cutoff,
            res.first_converged_cutoff
        )],
        legend: vec![
            LegendEntry::solid("residual bound", categorical(0)),
            LegendEntry::solid("Kato-Temple bound", categorical(1)),
        ],
        y_scale: Scale::Log,
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        ..LinePlot::default()
    }
}
