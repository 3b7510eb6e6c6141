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
    /// Text written at the curve's last finite point when that lies inside the plot (e.g. a
    /// Landau label `+2` at the right end of a fan).
    pub label: Option<String>,
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

/// Split a curve at non-finite values into drawable runs, and clip it to the band
/// y0 <= y <= y1: a segment that crosses the band edge ends (or starts) at the crossing point,
/// found by linear interpolation, so no line is drawn outside the frame.
fn runs(points: &[(f64, f64)], (y0, y1): (f64, f64)) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    let mut cur: Vec<(f64, f64)> = Vec::new();
    let inside = |y: f64| y >= y0 && y <= y1;
    let cross = |a: (f64, f64), b: (f64, f64), edge: f64| {
        let t = (edge - a.1) / (b.1 - a.1);
        (a.0 + t * (b.0 - a.0), edge)
    };
    let edge_between = |a: f64, b: f64| {
        if (a - y1) * (b - y1) <= 0.0 {
            y1
        } else {
            y0
        }
    };
    let mut prev: Option<(f64, f64)> = None;
    for &(x, y) in points {
        if !(x.is_finite() && y.is_finite()) {
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev = None;
            continue;
        }
        let p = (x, y);
        match prev {
            Some(q) if inside(q.1) && inside(y) => cur.push(p),
            Some(q) if inside(q.1) => {
                cur.push(cross(q, p, edge_between(q.1, y)));
                out.push(std::mem::take(&mut cur));
            }
            Some(q) if inside(y) => {
                cur.push(cross(q, p, edge_between(q.1, y)));
                cur.push(p);
            }
            // both outside: the segment may still pass through the band
            Some(q) if (q.1 < y0 && y > y1) || (q.1 > y1 && y < y0) => {
                out.push(vec![cross(q, p, y0), cross(q, p, y1)]);
            }
            Some(_) => {}
            None if inside(y) => cur.push(p),
            None => {}
        }
        prev = Some(p);
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
///     curves: vec![Curve { color_key: 0, stroke: Stroke::Solid, points: vec![(0.0, 0.0), (1.0, 2.0)], label: None }],
///     y_range: None, notes: vec![],
/// })?;
/// assert!(svg.starts_with("<svg") && svg.contains("B [T]"));
/// # Ok::<(), ladderfan::Error>(())
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
        // title and notes in a band above the chart, so they never cover a curve
        let band = 40 + 18 * p.notes.len() as u32;
        let (top, body) = root.split_vertically(band);
        top.draw(&Text::new(
            p.title.clone(),
            (SIZE.0 as i32 / 2, 12),
            TextStyle::from(("sans-serif", 22).into_font()).pos(
                plotters::style::text_anchor::Pos::new(
                    plotters::style::text_anchor::HPos::Center,
                    plotters::style::text_anchor::VPos::Top,
                ),
            ),
        ))
        .map_err(plot_err)?;
        for (i, note) in p.notes.iter().enumerate() {
            top.draw(&Text::new(
                note.clone(),
                (100, 40 + 18 * i as i32),
                ("sans-serif", 14).into_font().color(&BLACK.mix(0.8)),
            ))
            .map_err(plot_err)?;
        }
        let mut chart = ChartBuilder::on(&body)
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
        for c in &p.curves {
            for run in runs(&c.points, (y0, y1)) {
                match c.stroke {
                    Stroke::Solid => {
                        let color = palette(c.color_key).stroke_width(2);
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
                            .draw_series(DashedLineSeries::new(
                                run,
                                5,
                                5,
                                BLACK.mix(0.7).stroke_width(1),
                            ))
                            .map_err(plot_err)?;
                    }
                }
            }
        }
        // labels at the last finite point of each labelled curve, when inside the y range
        for c in &p.curves {
            let (Some(text), Some(&(x, y))) =
                (&c.label, c.points.iter().rev().find(|(_, y)| y.is_finite()))
            else {
                continue;
            };
            if y < y0 || y > y1 {
                continue;
            }
            chart
                .draw_series(std::iter::once(Text::new(
                    text.clone(),
                    (x, y),
                    ("sans-serif", 11).into_font().color(&palette(c.color_key)),
                )))
                .map_err(plot_err)?;
        }
        root.present().map_err(plot_err)?;
    }
    Ok(svg)
}

/// Eight strong, distinguishable colours (no pale ones, which a dashed overlay would hide).
fn palette(key: usize) -> RGBColor {
    const COLORS: [RGBColor; 8] = [
        RGBColor(31, 119, 180),
        RGBColor(214, 39, 40),
        RGBColor(44, 160, 44),
        RGBColor(148, 103, 189),
        RGBColor(255, 127, 14),
        RGBColor(23, 190, 207),
        RGBColor(140, 86, 75),
        RGBColor(227, 119, 194),
    ];
    COLORS[key % COLORS.len()]
}

fn padded_x((a, b): (f64, f64)) -> (f64, f64) {
    if !(a.is_finite() && b.is_finite()) || b <= a {
        return padded(a, b);
    }
    (a, b)
}

/// A level diagram: each level a point at (Landau index n, energy).
#[derive(Debug, Clone, PartialEq)]
pub struct LevelDiagram {
    /// Caption.
    pub title: String,
    /// Energy unit for the axis label.
    pub energy_unit: String,
    /// (Landau index n, energy) of each level.
    pub levels: Vec<(f64, f64)>,
}

/// Draw a level diagram as SVG: energy against the Landau index n.
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
            .x_desc("Landau index n")
            .x_label_formatter(&|x| format!("{x:.0}"))
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
        let r = runs(
            &[(0.0, 1.0), (1.0, f64::NAN), (2.0, 3.0), (3.0, 4.0)],
            (0.0, 10.0),
        );
        assert_eq!(r, vec![vec![(0.0, 1.0)], vec![(2.0, 3.0), (3.0, 4.0)]]);
    }

    #[test]
    fn curves_are_clipped_at_the_frame() {
        // y = 2x from x = 0 to 3 leaves the band [0, 4] at x = 2
        let r = runs(&[(0.0, 0.0), (1.0, 2.0), (3.0, 6.0)], (0.0, 4.0));
        assert_eq!(r, vec![vec![(0.0, 0.0), (1.0, 2.0), (2.0, 4.0)]]);
        // entering from below: y = 2x - 2 from x = 0 enters at x = 1
        let r = runs(&[(0.0, -2.0), (2.0, 2.0)], (0.0, 4.0));
        assert_eq!(r, vec![vec![(1.0, 0.0), (2.0, 2.0)]]);
        // crossing the whole band in one segment
        let r = runs(&[(0.0, -4.0), (4.0, 8.0)], (0.0, 4.0));
        assert_eq!(r.len(), 1);
        assert!((r[0][0].0 - 4.0 / 3.0).abs() < 1e-12 && (r[0][1].0 - 8.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn plots_carry_axis_labels_and_curves() {
        let svg = line_plot(&LinePlot {
            title: "fan".into(),
            x_label: "B [T]".into(),
            y_label: "E [meV]".into(),
            curves: vec![
                Curve {
                    label: None,
                    color_key: 1,
                    stroke: Stroke::Solid,
                    points: vec![(1.0, 1.0), (2.0, 2.0), (3.0, 3.0)],
                },
                Curve {
                    label: None,
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
        assert!(lv.contains("Landau index n") && lv.contains("E [meV]"));
    }
}
