//! Two figures drawn with the crate's own plot module ([`crate::plot`]): the fan (Landau
//! index against 1/B with the fitted line and its intercept) and exact against semiclassical
//! levels.

use crate::error::Result;
use crate::plot::colour::categorical;
use crate::plot::{line_plot, Curve, LegendEntry, LinePlot};

fn span(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0);
    }
    let pad = 0.05 * (hi - lo).max(1e-12 * hi.abs().max(1.0));
    (lo - pad, hi + pad)
}

/// One dot per point (each a one-point curve, which the plot draws as a dot) in palette
/// colour `key`.
fn dots(points: &[(f64, f64)], key: usize) -> impl Iterator<Item = Curve> + '_ {
    points.iter().map(move |&p| Curve {
        color_key: key,
        points: vec![p],
        ..Curve::default()
    })
}

/// A plot with the common settings of both figures (no line labels, no breaks).
fn plot(title: &str, x_label: String, y_label: String, curves: Vec<Curve>) -> LinePlot {
    LinePlot {
        title: title.into(),
        x_label,
        y_label,
        curves,
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        ..LinePlot::default()
    }
}

/// The SVG of [`fan_plot`].
///
/// # Errors
/// Those of [`line_plot`].
pub fn fan_figure(
    points: &[(f64, f64)],
    slope: f64,
    intercept: f64,
    predicted: f64,
    field_unit: &str,
) -> Result<String> {
    line_plot(&fan_plot(points, slope, intercept, predicted, field_unit))
}

/// Landau index against 1/B: the crossings (`points`, (1/B, n)), the fitted line
/// n = intercept + slope / B extended to 1/B = 0, and the fitted and predicted intercepts;
/// `field_unit` names the field unit (`T` or `B_c`).
pub fn fan_plot(
    points: &[(f64, f64)],
    slope: f64,
    intercept: f64,
    predicted: f64,
    field_unit: &str,
) -> LinePlot {
    let x_max = points.iter().map(|p| p.0).fold(0.0, f64::max) * 1.05;
    let line = vec![(0.0, intercept), (x_max, intercept + slope * x_max)];
    let y = span(
        points
            .iter()
            .map(|p| p.1)
            .chain([intercept, predicted, line[1].1]),
    );
    let mut curves: Vec<Curve> = dots(points, 0).collect();
    curves.push(Curve {
        color_key: 1,
        points: line,
        width: 2.0,
        ..Curve::default()
    });
    curves.extend(dots(&[(0.0, intercept)], 1));
    curves.extend(dots(&[(0.0, predicted)], 3));
    let mut p = plot(
        "Landau index against 1/B at fixed Fermi energy",
        format!("1/B [1/{field_unit}]"),
        "Landau index n".into(),
        curves,
    );
    p.x_range = Some((-0.02 * x_max, x_max));
    p.y_range = Some(y);
    p.legend = vec![
        LegendEntry::solid("exact crossings (dots)", categorical(0)),
        LegendEntry::solid(
            format!("fit: slope {slope:.4} {field_unit}, intercept {intercept:.3}"),
            categorical(1),
        ),
        LegendEntry::solid(
            format!("Onsager + Berry intercept {predicted:.3} (dot)"),
            categorical(3),
        ),
    ];
    p
}

/// The SVG of [`levels_plot`].
///
/// # Errors
/// Those of [`line_plot`].
pub fn levels_figure(
    exact: &[(f64, f64)],
    semi: &[(f64, f64)],
    energy_unit: &str,
) -> Result<String> {
    line_plot(&levels_plot(exact, semi, energy_unit))
}

/// Exact (dots) and semiclassical (line) levels, energy against the Landau index n; both
/// lists are (n, energy) in `energy_unit`.
pub fn levels_plot(exact: &[(f64, f64)], semi: &[(f64, f64)], energy_unit: &str) -> LinePlot {
    let mut curves: Vec<Curve> = dots(exact, 0).collect();
    curves.push(Curve {
        color_key: 1,
        points: semi.to_vec(),
        width: 2.0,
        ..Curve::default()
    });
    let mut p = plot(
        "Exact against semiclassical Landau levels",
        "Landau index n".into(),
        format!("E [{energy_unit}]"),
        curves,
    );
    p.x_range = Some(span(exact.iter().chain(semi).map(|p| p.0)));
    p.y_range = Some(span(exact.iter().chain(semi).map(|p| p.1)));
    p.legend = vec![
        LegendEntry::solid("exact (diagonalization, dots)", categorical(0)),
        LegendEntry::solid("semiclassical (Onsager + Berry)", categorical(1)),
    ];
    p
}
