//! SVG plots (fan diagrams, dispersions, level diagrams) drawn with `plotters`' SVG backend.
//! Text is emitted as SVG `<text>` elements, so no system fonts are needed.
//!
//! Every plot is returned as an SVG string; writing it is the caller's business.

use crate::error::{Error, Result};
use plotters::prelude::*;

/// Plot size in pixels.
pub const SIZE: (u32, u32) = (960, 680);

/// How a curve is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stroke {
    /// Solid coloured line (computed levels).
    Solid,
    /// Dashed black line (closed-form overlay).
    Dashed,
}

/// One curve: points (x, y); a non-finite y breaks the line.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// Colour index (curves with the same key share a colour; e.g. the sector).
    pub color_key: usize,
    /// Drawing style.
    pub stroke: Stroke,
    /// Points in plot order.
    pub points: Vec<(f64, f64)>,
}

/// A line plot: title, axis labels (with units) and curves.
#[derive(Debug, Clone, PartialEq)]
pub struct LinePlot {
    /// Caption.
    pub title: String,
    /// x-axis label, e.g. `B [T]`.
    pub x_label: String,
    /// y-axis label, e.g. `E [meV]`.
    pub y_label: String,
    /// The curves.
    pub curves: Vec<Curve>,
    /// Optional y range; default: the range of the finite points, padded by 3 %.
    pub y_range: Option<(f64, f64)>,
    /// Legend lines printed in the top-left corner (e.g. "dashed: closed form").
    pub notes: Vec<String>,
}

fn plot_err<E: std::fmt::Display>(e: E) -> Error {
    Error::Numerical {
        stage: "plot".into(),
        detail: format!("cannot draw the SVG: {e}"),
    }
}

fn padded(lo: f64, hi: f64) -> (f64, f64) {
    if !(lo.is_finite() && hi.is_finite()) {
        return (-1.0, 1.0);
    }
    if hi - lo <= f64::EPSILON * hi.abs().max(lo.abs()).max(1e-300) {
        let w = if lo == 0.0 { 1.0 } else { 0.05 * lo.abs() };
        return (lo - w, hi + w);
    }
    let pad = 0.03 * (hi - lo);
    (lo - pad, hi + pad)
}

fn range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        })
}

/// Split a curve at non-finite values into drawable runs.
fn runs(points: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    let mut cur = Vec::new();
    for &(x, y) in points {
        if x.is_finite() && y.is_finite() {
            cur.push((x, y));
        } else if !cur.is_empty() {
            out.push(std::mem::take(&mut cur));
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// Draw a line plot as SVG.
///
/// # Errors
/// [`Error::Numerical`] (stage `plot`) if plotters fails, [`Error::InvalidModel`]-free: an
/// empty plot draws empty axes.
///
/// # Examples
/// ```
/// use ladderfan::plot::{line_plot, Curve, LinePlot, Stroke};
/// let svg = line_plot(&LinePlot {
///     title: "t".into(), x_label: "B [T]".into(), y_label: "E [meV]".into(),
///     curves: vec![Curve { color_key: 0, stroke: Stroke::Solid, points: vec![(0.0, 0.0), (1.0, 2.0)] }],
///     y_range: None, notes: vec![],
/// }).unwrap();
/// assert!(svg.starts_with("<svg") && svg.contains("B [T]"));
/// ```
pub fn line_plot(p: &LinePlot) -> Result<String> {
    let (x0, x1) = padded_x(range(
        p.curves.iter().flat_map(|c| c.points.iter().map(|q| q.0)),
    ));
    let (y0, y1) = match p.y_range {
        Some(r) => r,
        None => {
            let (a, b) = range(p.curves.iter().flat_map(|c| c.points.iter().map(|q| q.1)));
            padded(a, b)
        }
    };
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(&p.title, ("sans-serif", 22))
            .margin(18)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(plot_err)?;
        chart
            .configure_mesh()
            .x_desc(&p.x_label)
            .y_desc(&p.y_label)
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(plot_err)?;
        let clip = |v: &[(f64, f64)]| -> Vec<(f64, f64)> {
            // keep points slightly outside so lines leave the frame instead of stopping short
            let (lo, hi) = (y0 - (y1 - y0), y1 + (y1 - y0));
            v.iter()
                .map(|&(x, y)| (x, if y < lo || y > hi { f64::NAN } else { y }))
                .collect()
        };
        for c in &p.curves {
            for run in runs(&clip(&c.points)) {
                match c.stroke {
                    Stroke::Solid => {
                        let color = Palette99::pick(c.color_key).stroke_width(2);
                        if run.len() == 1 {
                            chart
                                .draw_series(std::iter::once(Circle::new(
                                    run[0],
                                    3,
                                    color.filled(),
                                )))
                                .map_err(plot_err)?;
                        } else {
                            chart
                                .draw_series(LineSeries::new(run, color))
                                .map_err(plot_err)?;
                        }
                    }
                    Stroke::Dashed => {
                        chart
                            .draw_series(DashedLineSeries::new(run, 6, 4, BLACK.stroke_width(1)))
                            .map_err(plot_err)?;
                    }
                }
            }
        }
        for (i, note) in p.notes.iter().enumerate() {
            root.draw(&Text::new(
                note.clone(),
                (100, 60 + 18 * i as i32),
                ("sans-serif", 14).into_font().color(&BLACK.mix(0.8)),
            ))
            .map_err(plot_err)?;
        }
        root.present().map_err(plot_err)?;
    }
    Ok(svg)
}

fn padded_x((a, b): (f64, f64)) -> (f64, f64) {
    if !(a.is_finite() && b.is_finite()) || b <= a {
        return padded(a, b);
    }
    (a, b)
}

/// A level diagram: each level a point at (dominant orbital n, energy).
#[derive(Debug, Clone, PartialEq)]
pub struct LevelDiagram {
    /// Caption.
    pub title: String,
    /// Energy unit for the axis label.
    pub energy_unit: String,
    /// (orbital n, energy) of each level.
    pub levels: Vec<(f64, f64)>,
}

/// Draw a level diagram as SVG: energy against the dominant orbital index.
///
/// # Errors
/// [`Error::Numerical`] (stage `plot`) if plotters fails.
pub fn level_diagram(d: &LevelDiagram) -> Result<String> {
    let (x0, x1) = range(d.levels.iter().map(|l| l.0));
    let (y0, y1) = range(d.levels.iter().map(|l| l.1));
    let (x0, x1) = padded(x0 - 0.5, x1 + 0.5);
    let (y0, y1) = padded(y0, y1);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(&d.title, ("sans-serif", 22))
            .margin(18)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(plot_err)?;
        chart
            .configure_mesh()
            .x_desc("dominant orbital n")
            .y_desc(format!("E [{}]", d.energy_unit))
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(plot_err)?;
        chart
            .draw_series(d.levels.iter().map(|&(n, e)| {
                PathElement::new(vec![(n - 0.3, e), (n + 0.3, e)], BLUE.stroke_width(2))
            }))
            .map_err(plot_err)?;
        root.present().map_err(plot_err)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn broken_curves_split_into_runs() {
        let r = runs(&[(0.0, 1.0), (1.0, f64::NAN), (2.0, 3.0), (3.0, 4.0)]);
        assert_eq!(r, vec![vec![(0.0, 1.0)], vec![(2.0, 3.0), (3.0, 4.0)]]);
    }

    #[test]
    fn plots_carry_axis_labels_and_curves() {
        let svg = line_plot(&LinePlot {
            title: "fan".into(),
            x_label: "B [T]".into(),
            y_label: "E [meV]".into(),
            curves: vec![
                Curve {
                    color_key: 1,
                    stroke: Stroke::Solid,
                    points: vec![(1.0, 1.0), (2.0, 2.0), (3.0, 3.0)],
                },
                Curve {
                    color_key: 0,
                    stroke: Stroke::Dashed,
                    points: vec![(1.0, 1.5), (3.0, 3.5)],
                },
            ],
            y_range: None,
            notes: vec!["dashed: closed form".into()],
        })
        .unwrap_or_else(|e| panic!("{e}"));
        assert!(svg.contains("B [T]") && svg.contains("E [meV]") && svg.contains("closed form"));
        assert!(svg.matches("<polyline").count() >= 2, "{svg}");
        let lv = level_diagram(&LevelDiagram {
            title: "lv".into(),
            energy_unit: "meV".into(),
            levels: vec![(0.0, 1.0), (1.0, 2.0)],
        })
        .unwrap_or_else(|e| panic!("{e}"));
        assert!(lv.contains("dominant orbital n") && lv.contains("E [meV]"));
    }
}
