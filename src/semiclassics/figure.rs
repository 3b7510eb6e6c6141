//! Two small SVG figures drawn with plotters' SVG backend: the fan (Landau index against 1/B
//! with the fitted line and its intercept) and exact against semiclassical levels.

use crate::error::{Error, Result};
use plotters::prelude::*;

const SIZE: (u32, u32) = (820, 600);

fn err<E: std::fmt::Display>(e: E) -> Error {
    Error::Numerical {
        stage: "figure".into(),
        detail: format!("cannot draw the SVG: {e}"),
    }
}

/// A scatter of points with optional straight line, in one chart.
struct Chart<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    x_range: (f64, f64),
    y_range: (f64, f64),
}

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

/// Series: (legend, colour index, points, drawn as line?).
type Series<'a> = (&'a str, usize, &'a [(f64, f64)], bool);

fn draw(c: &Chart, series: &[Series]) -> Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(c.title, ("sans-serif", 20))
            .margin(16)
            .x_label_area_size(48)
            .y_label_area_size(70)
            .build_cartesian_2d(c.x_range.0..c.x_range.1, c.y_range.0..c.y_range.1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(c.x_label)
            .y_desc(c.y_label)
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 16))
            .draw()
            .map_err(err)?;
        for &(name, key, pts, line) in series {
            let color = Palette99::pick(key).to_rgba();
            let style = color.stroke_width(2);
            if line {
                chart
                    .draw_series(LineSeries::new(pts.iter().copied(), style))
                    .map_err(err)?
                    .label(name)
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], style));
            } else {
                chart
                    .draw_series(pts.iter().map(|&p| Circle::new(p, 4, style)))
                    .map_err(err)?
                    .label(name)
                    .legend(move |(x, y)| Circle::new((x + 9, y), 4, style));
            }
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .position(SeriesLabelPosition::UpperLeft)
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Landau index against 1/B: the crossings, the fitted line extended to 1/B = 0 and its
/// intercept; `field_unit` names the field unit (`T` or `B_c`).
///
/// # Errors
/// [`Error::Numerical`] if drawing fails.
pub fn fan_figure(
    points: &[(f64, f64)],
    slope: f64,
    intercept: f64,
    predicted: f64,
    field_unit: &str,
) -> Result<String> {
    let x_max = points.iter().map(|p| p.0).fold(0.0, f64::max) * 1.05;
    let line = [(0.0, intercept), (x_max, intercept + slope * x_max)];
    let fit_mark = [(0.0, intercept)];
    let pred_mark = [(0.0, predicted)];
    let y = span(
        points
            .iter()
            .map(|p| p.1)
            .chain([intercept, predicted, line[1].1]),
    );
    let fit_name = format!("fit: slope {slope:.4} {field_unit}, intercept {intercept:.3}");
    let pred_name = format!("Onsager + Berry intercept {predicted:.3}");
    draw(
        &Chart {
            title: "Landau index against 1/B at fixed Fermi energy",
            x_label: &format!("1/B [1/{field_unit}]"),
            y_label: "Landau index n",
            x_range: (-0.02 * x_max, x_max),
            y_range: y,
        },
        &[
            ("exact crossings", 0, points, false),
            (&fit_name, 1, &line, true),
            ("fitted intercept", 1, &fit_mark, false),
            (&pred_name, 3, &pred_mark, false),
        ],
    )
}

/// Exact and semiclassical levels, energy against index.
///
/// # Errors
/// [`Error::Numerical`] if drawing fails.
pub fn levels_figure(
    exact: &[(f64, f64)],
    semi: &[(f64, f64)],
    energy_unit: &str,
) -> Result<String> {
    let x = span(exact.iter().chain(semi).map(|p| p.0));
    let y = span(exact.iter().chain(semi).map(|p| p.1));
    draw(
        &Chart {
            title: "Exact against semiclassical Landau levels",
            x_label: "Landau index n",
            y_label: &format!("E [{energy_unit}]"),
            x_range: x,
            y_range: y,
        },
        &[
            ("exact (diagonalization)", 0, exact, false),
            ("semiclassical (Onsager + Berry)", 1, semi, true),
        ],
    )
}
