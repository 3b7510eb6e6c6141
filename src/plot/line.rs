//! Layout and drawing of a [`LinePlot`]: caption band on top, the data frame, line-end labels
//! and the key (legend and colour bar) to the right of the frame, so text never covers data.

use super::axis::{data_range, nice_ticks, Axis, Scale};
use super::colour::{categorical, continuous};
use super::svg::{text_width, Anchor, Pen, Rgb, Svg};
use super::thin::{clip_runs, jump_breaks, thin, P};
use super::{Colouring, Curve, LinePlot, Stroke};
use crate::error::Result;

const INK: Rgb = Rgb(40, 40, 40);
const GRID: Rgb = Rgb(232, 232, 232);
const TITLE: f64 = 18.0;
const NOTE: f64 = 12.5;
const TICK: f64 = 12.0;
const AXIS: f64 = 14.0;
const LABEL: f64 = 11.0;
const KEY: f64 = 12.0;

/// The colour scale of the curves: values at its two ends, its title; `None` when the curves
/// are coloured by up to ten categories.
struct ColourScale {
    lo: f64,
    hi: f64,
    name: String,
}

fn colour_scale(p: &LinePlot) -> Option<ColourScale> {
    match &p.colouring {
        Colouring::Values { name, range } => {
            let (lo, hi) = range.unwrap_or_else(|| {
                data_range(
                    p.curves
                        .iter()
                        .flat_map(|c| c.values.iter().flatten().copied()),
                    0.0,
                )
            });
            Some(ColourScale {
                lo,
                hi,
                name: name.clone(),
            })
        }
        Colouring::Key { name } => {
            let mut keys: Vec<usize> = p.curves.iter().map(|c| c.color_key).collect();
            keys.sort_unstable();
            keys.dedup();
            (keys.len() > super::colour::CATEGORICAL.len()).then(|| ColourScale {
                lo: keys[0] as f64,
                hi: keys[keys.len() - 1] as f64,
                name: name.clone(),
            })
        }
    }
}

fn scale_colour(s: &ColourScale, v: f64) -> Rgb {
    let span = s.hi - s.lo;
    continuous(if span > 0.0 { (v - s.lo) / span } else { 0.5 })
}

/// Greedy word wrap of `s` to `width` pixels at `size`.
fn wrap(s: &str, size: f64, width: f64) -> Vec<String> {
    let mut lines = vec![String::new()];
    for w in s.split(' ') {
        let last = lines.last_mut().map(|l| l.clone()).unwrap_or_default();
        let cand = if last.is_empty() {
            w.to_string()
        } else {
            format!("{last} {w}")
        };
        if text_width(&cand, size) > width && !last.is_empty() {
            lines.push(w.to_string());
        } else if let Some(l) = lines.last_mut() {
            *l = cand;
        }
    }
    lines
}

/// Where everything goes.
struct Layout {
    w: f64,
    h: f64,
    left: f64,
    right: f64,
    top: f64,
    bottom: f64,
    /// Height of the label bands above and below the frame (0 without labels).
    band: f64,
    notes: Vec<String>,
    title_size: f64,
    key_x: f64,
    key_size: f64,
}

fn layout(p: &LinePlot, cs: Option<&ColourScale>, y_ticks: &[(f64, String)]) -> Layout {
    let (w, h) = (p.size.0 as f64, p.size.1 as f64);
    let notes: Vec<String> = p
        .notes
        .iter()
        .flat_map(|n| wrap(n, NOTE, w - 40.0))
        .collect();
    let title_size = TITLE.min(TITLE * (w - 30.0) / text_width(&p.title, TITLE).max(1.0));
    let labelled = p.labels && p.curves.iter().any(|c| c.label.is_some());
    // bands above and below the frame for the labels of lines leaving through the top or
    // bottom edge
    let band = if labelled { LABEL + 5.0 } else { 0.0 };
    let top = 34.0 + 16.0 * notes.len() as f64 + 12.0 + band;
    let mut key_w: f64 = p
        .legend
        .iter()
        .map(|e| text_width(&e.text, KEY) + 44.0)
        .fold(0.0, f64::max);
    if let Some(s) = cs {
        let ticks = nice_ticks(s.lo, s.hi, 5);
        let tw = ticks
            .iter()
            .map(|t| text_width(&t.1, LABEL))
            .fold(0.0, f64::max);
        key_w = key_w.max(text_width(&s.name, KEY) + 16.0).max(46.0 + tw);
    }
    let max_key = 0.3 * w;
    let key_size = if key_w > max_key {
        KEY * max_key / key_w
    } else {
        KEY
    };
    let key_w = key_w.min(max_key).max(90.0);
    let label_w = if labelled {
        p.curves
            .iter()
            .filter_map(|c| c.label.as_deref())
            .map(|l| text_width(l, LABEL))
            .fold(0.0, f64::max)
            .min(80.0)
            + 12.0
    } else {
        10.0
    };
    let ytw = y_ticks
        .iter()
        .map(|t| text_width(&t.1, TICK))
        .fold(0.0, f64::max);
    let left = 34.0 + ytw + 10.0;
    let right = w - key_w - label_w - 12.0;
    Layout {
        w,
        h,
        left,
        right,
        top,
        bottom: h - 58.0 - band,
        band,
        notes,
        title_size,
        key_x: w - key_w - 4.0,
        key_size,
    }
}

fn axis_range(p: &LinePlot, x: bool) -> (f64, f64) {
    let (scale, given) = if x {
        (p.x_scale, p.x_range)
    } else {
        (p.y_scale, p.y_range)
    };
    let ts = p.curves.iter().flat_map(|c| {
        c.points
            .iter()
            .map(move |q| scale.forward(if x { q.0 } else { q.1 }))
    });
    match given {
        Some((a, b)) => {
            let (ta, tb) = (scale.forward(a), scale.forward(b));
            if ta.is_finite() && tb.is_finite() && ta != tb {
                (ta.min(tb), ta.max(tb))
            } else {
                data_range(ts, 0.03)
            }
        }
        None => data_range(ts, if x { 0.0 } else { 0.03 }),
    }
}

/// Draw a line plot as SVG.
///
/// # Errors
/// None today (an empty plot draws empty axes); the `Result` leaves room for checks.
///
/// # Examples
/// ```
/// use ladderfan::plot::{line_plot, Curve, LinePlot};
/// let svg = line_plot(&LinePlot {
///     title: "t".into(), x_label: "B [T]".into(), y_label: "E [meV]".into(),
///     curves: vec![Curve { points: vec![(0.0, 0.0), (1.0, 2.0)], ..Curve::default() }],
///     ..LinePlot::default()
/// })?;
/// assert!(svg.starts_with("<svg") && svg.contains("B [T]"));
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn line_plot(p: &LinePlot) -> Result<String> {
    let cs = colour_scale(p);
    let (xt0, xt1) = axis_range(p, true);
    let (yt0, yt1) = axis_range(p, false);
    let probe = Axis {
        scale: p.y_scale,
        t0: yt0,
        t1: yt1,
        p0: 1.0,
        p1: 0.0,
    };
    let lay = layout(p, cs.as_ref(), &probe.ticks());
    let xa = Axis {
        scale: p.x_scale,
        t0: xt0,
        t1: xt1,
        p0: lay.left,
        p1: lay.right,
    };
    let ya = Axis {
        scale: p.y_scale,
        t0: yt0,
        t1: yt1,
        p0: lay.bottom,
        p1: lay.top,
    };
    let mut s = Svg::new(lay.w, lay.h);
    draw_caption(&mut s, p, &lay);
    draw_axes(&mut s, p, &lay, &xa, &ya);
    let ends = draw_curves(&mut s, p, &lay, &xa, &ya, cs.as_ref());
    if p.labels {
        draw_labels(&mut s, &lay, ends);
    }
    draw_key(&mut s, p, &lay, cs.as_ref());
    Ok(s.finish())
}

fn draw_caption(s: &mut Svg, p: &LinePlot, lay: &Layout) {
    s.group("caption");
    s.text(
        (lay.w / 2.0, 26.0),
        lay.title_size,
        Anchor::Middle,
        INK,
        &p.title,
        false,
    );
    for (i, n) in lay.notes.iter().enumerate() {
        let y = 46.0 + 16.0 * i as f64;
        s.text((20.0, y), NOTE, Anchor::Start, Rgb(70, 70, 70), n, false);
    }
    s.end_group();
}

fn draw_axes(s: &mut Svg, p: &LinePlot, lay: &Layout, xa: &Axis, ya: &Axis) {
    let frame = (
        lay.left,
        lay.top,
        lay.right - lay.left,
        lay.bottom - lay.top,
    );
    let grid = Pen {
        colour: GRID,
        width: 1.0,
        opacity: 1.0,
        dash: None,
    };
    let tick = Pen {
        colour: INK,
        width: 1.0,
        opacity: 1.0,
        dash: None,
    };
    s.group("axes");
    let mut xt = xa.ticks();
    // fewer x ticks when their labels would touch
    let mut target = 6;
    while xa.scale != Scale::Log && target > 2 && {
        let total: f64 = xt.iter().map(|t| text_width(&t.1, TICK) + 12.0).sum();
        total > lay.right - lay.left
    } {
        target -= 1;
        xt = nice_ticks(xa.t0, xa.t1, target);
    }
    for (t, label) in &xt {
        let x = xa.px_t(*t);
        s.path(&[(x, lay.top), (x, lay.bottom)], grid);
        s.path(&[(x, lay.bottom), (x, lay.bottom + 5.0)], tick);
        s.text(
            (x, lay.bottom + lay.band + 19.0),
            TICK,
            Anchor::Middle,
            INK,
            label,
            false,
        );
    }
    for (t, label) in ya.ticks() {
        let y = ya.px_t(t);
        s.path(&[(lay.left, y), (lay.right, y)], grid);
        s.path(&[(lay.left - 5.0, y), (lay.left, y)], tick);
        s.text(
            (lay.left - 8.0, y + 4.0),
            TICK,
            Anchor::End,
            INK,
            &label,
            false,
        );
    }
    if p.zero_line {
        let y0 = ya.px(0.0);
        if y0.is_finite() && y0 > lay.top && y0 < lay.bottom {
            s.path(
                &[(lay.left, y0), (lay.right, y0)],
                Pen {
                    colour: Rgb(150, 150, 150),
                    ..tick
                },
            );
        }
    }
    let xmid = 0.5 * (lay.left + lay.right);
    s.text(
        (xmid, lay.bottom + lay.band + 44.0),
        AXIS,
        Anchor::Middle,
        INK,
        &p.x_label,
        false,
    );
    let ymid = 0.5 * (lay.top + lay.bottom);
    s.text((20.0, ymid), AXIS, Anchor::Middle, INK, &p.y_label, true);
    s.rect(Some("plot-area"), frame, None, Some(INK));
    s.end_group();
}

/// The pixel points of a curve, `None` where it cannot be drawn.
fn pixels(c: &Curve, xa: &Axis, ya: &Axis, lay: &Layout) -> Vec<Option<P>> {
    c.points
        .iter()
        .enumerate()
        .map(|(i, &(x, y))| {
            let (px, py) = (xa.px(x), ya.px(y));
            let v = c
                .values
                .as_ref()
                .and_then(|v| v.get(i).copied())
                .unwrap_or(f64::NAN);
            let inside_x = px >= lay.left - 0.5 && px <= lay.right + 0.5;
            (px.is_finite() && py.is_finite() && inside_x).then_some((px, py, v))
        })
        .collect()
}

/// Break flags of a curve: jumps, and sign changes of x (B = 0) when asked for or on a 1/x axis.
fn breaks(p: &LinePlot, c: &Curve, pts: &[Option<P>], lay: &Layout) -> Vec<bool> {
    let mut b = if p.split_jumps && c.stroke == Stroke::Solid {
        jump_breaks(pts, 0.12 * (lay.bottom - lay.top))
    } else {
        vec![false; pts.len()]
    };
    if p.split_at_zero_x || p.x_scale == Scale::Inverse {
        for (i, w) in c.points.windows(2).enumerate() {
            if w[0].0 * w[1].0 < 0.0 {
                b[i + 1] = true;
            }
        }
    }
    b
}

fn pen_of(c: &Curve, colour: Rgb) -> Pen {
    match c.stroke {
        Stroke::Solid => Pen {
            colour,
            width: c.width,
            opacity: c.opacity,
            dash: None,
        },
        Stroke::Dashed => Pen {
            colour: c.colour.unwrap_or(Rgb(25, 25, 25)),
            width: c.width.min(1.1),
            opacity: 0.7 * c.opacity,
            dash: Some((5.0, 4.0)),
        },
        Stroke::Dotted => Pen {
            colour,
            width: c.width,
            opacity: c.opacity,
            dash: Some((1.5, 3.0)),
        },
    }
}

/// Where a line's label goes: the line reaches the right edge, leaves the frame through its
/// top or bottom edge (or ends within 5 % of the frame height of it), or ends inside the
/// frame.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Side {
    Right,
    Top,
    Bottom,
    Inside,
}

/// A label candidate: where its line ends (pixels), the text and its colour.
struct EndLabel {
    side: Side,
    at: (f64, f64),
    text: String,
    colour: Rgb,
}

/// Draw every curve; returns the label candidates, one per labelled line that is drawn.
fn draw_curves(
    s: &mut Svg,
    p: &LinePlot,
    lay: &Layout,
    xa: &Axis,
    ya: &Axis,
    cs: Option<&ColourScale>,
) -> Vec<EndLabel> {
    let mut px: Vec<(u8, Vec<Option<P>>)> = p
        .curves
        .iter()
        .map(|c| (c.stroke as u8, pixels(c, xa, ya, lay)))
        .collect();
    let brk: Vec<Vec<bool>> = p
        .curves
        .iter()
        .zip(&px)
        .map(|(c, q)| breaks(p, c, &q.1, lay))
        .collect();
    // where each line ends inside the frame before thinning: a line that thinning cuts short
    // does not end where its drawn part does, so it gets no label beside that cut
    let drawn_to: Vec<f64> = px
        .iter()
        .map(|(_, q)| {
            q.iter()
                .flatten()
                .filter(|a| a.1 >= lay.top && a.1 <= lay.bottom)
                .map(|a| a.0)
                .fold(f64::NEG_INFINITY, f64::max)
        })
        .collect();
    thin(&mut px, p.thin_px, (lay.top, lay.bottom));
    let mut ends = Vec::new();
    s.group("data");
    for (((c, (_, pts)), b), &full_x) in p.curves.iter().zip(&px).zip(&brk).zip(&drawn_to) {
        let base = c.colour.unwrap_or_else(|| match (&p.colouring, cs) {
            (Colouring::Key { .. }, Some(sc)) => scale_colour(sc, c.color_key as f64),
            _ => categorical(c.color_key),
        });
        let by_value = matches!(p.colouring, Colouring::Values { .. }) && c.colour.is_none();
        let runs = clip_runs(pts, b, (lay.top, lay.bottom));
        let lone = c
            .points
            .iter()
            .filter(|q| q.0.is_finite() && q.1.is_finite())
            .count()
            == 1;
        for run in &runs {
            if run.len() == 1 && (lone || c.markers) {
                s.dot((run[0].0, run[0].1), 2.5, base);
            }
            match (by_value, cs) {
                (true, Some(sc)) => draw_graded(s, run, c, sc),
                _ => s.path(
                    &run.iter().map(|q| (q.0, q.1)).collect::<Vec<_>>(),
                    pen_of(c, base),
                ),
            }
            if c.markers {
                run.iter().for_each(|q| s.dot((q.0, q.1), 2.5, base));
            }
        }
        // the end nearest the right edge (the first point on a 1/x axis)
        let ends_of = [
            runs.first().and_then(|r| r.first()),
            runs.last().and_then(|r| r.last()),
        ];
        let right_end = ends_of
            .into_iter()
            .flatten()
            .max_by(|a, b| a.0.total_cmp(&b.0));
        if let (Some(text), Some(last)) = (&c.label, right_end) {
            // an end this close to the top or bottom edge is labelled in the band there (a
            // fan cut at its energy window ends just inside the padded frame)
            let near = 0.05 * (lay.bottom - lay.top);
            let side = if last.0 >= lay.right - 0.03 * (lay.right - lay.left) {
                Side::Right
            } else if last.1 <= lay.top + near {
                Side::Top
            } else if last.1 >= lay.bottom - near {
                Side::Bottom
            } else {
                Side::Inside
            };
            if side != Side::Right && last.0 < full_x - 0.5 {
                // cut short by thinning: its end is not here (inside the frame or in the top
                // or bottom band); its neighbours' labels at the right edge name the sequence
                continue;
            }
            let colour = match (by_value, cs) {
                (true, Some(sc)) => scale_colour(sc, last.2),
                _ => base,
            };
            ends.push(EndLabel {
                side,
                at: (last.0, last.1),
                text: text.clone(),
                colour,
            });
        }
    }
    s.end_group();
    ends
}

/// A run whose colour follows its per-point values: consecutive segments of the same colour
/// (32 steps along the scale) share one path.
fn draw_graded(s: &mut Svg, run: &[P], c: &Curve, sc: &ColourScale) {
    let step = |v: f64| {
        let span = sc.hi - sc.lo;
        let u = if span > 0.0 { (v - sc.lo) / span } else { 0.5 };
        (u.clamp(0.0, 1.0) * 31.0).round() as i32
    };
    let mut i = 0;
    while i + 1 < run.len() {
        let k = step(0.5 * (run[i].2 + run[i + 1].2));
        let mut j = i + 1;
        while j + 1 < run.len() && step(0.5 * (run[j].2 + run[j + 1].2)) == k {
            j += 1;
        }
        let pts: Vec<(f64, f64)> = run[i..=j].iter().map(|q| (q.0, q.1)).collect();
        let colour = continuous(k as f64 / 31.0);
        s.path(&pts, pen_of(c, colour));
        i = j;
    }
}

/// Labels in the trade's notation where their lines end: right of the frame for lines that
/// reach the right edge (pushed apart to one line height, down first, then back up from the
/// bottom of the frame), in the bands above and below the frame for lines that leave through
/// the top or bottom edge (centred on the exit, nudged sideways), and beside the end for lines
/// that end inside the frame. A label that would overlap one already placed (or leave its
/// band) is left out, so no two labels overlap.
fn draw_labels(s: &mut Svg, lay: &Layout, ends: Vec<EndLabel>) {
    let mut placed: Vec<Rect> = Vec::new();
    s.group("labels");
    let right: Vec<&EndLabel> = ends.iter().filter(|e| e.side == Side::Right).collect();
    for (e, y) in right_column(lay, &right) {
        let x = lay.right + 6.0;
        let r = label_rect(x, y + 4.0, &e.text);
        if y >= lay.top && !placed.iter().any(|p| p.overlaps(&r)) {
            placed.push(r);
            s.line_label((x, y + 4.0), LABEL, Anchor::Start, e.colour, &e.text);
        }
    }
    let mut rest: Vec<&EndLabel> = ends.iter().filter(|e| e.side != Side::Right).collect();
    rest.sort_by(|a, b| a.at.0.total_cmp(&b.at.0));
    for e in rest {
        let w = text_width(&e.text, LABEL);
        let (x0, y) = match e.side {
            Side::Top => (e.at.0 - 0.5 * w, lay.top - 4.0),
            Side::Bottom => (e.at.0 - 0.5 * w, lay.bottom + LABEL + 1.0),
            _ => (e.at.0 + 4.0, e.at.1 + 4.0),
        };
        // nudge right by up to three label widths, then give up
        let spot = (0..8)
            .map(|k| x0 + k as f64 * 0.5 * w.max(LABEL))
            .map(|x| label_rect(x, y, &e.text))
            .find(|r| {
                r.x0 >= lay.left
                    && r.x1 <= lay.right
                    && (e.side != Side::Inside || r.y0 >= lay.top && r.y1 <= lay.bottom)
                    && !placed.iter().any(|p| p.overlaps(r))
            });
        if let Some(r) = spot {
            s.line_label((r.x0, y), LABEL, Anchor::Start, e.colour, &e.text);
            placed.push(r);
        }
    }
    s.end_group();
}

/// A label's box (baseline at `y`, start at `x`): 0.76 em above, 0.24 em below.
struct Rect {
    x0: f64,
    y0: f64,
    x1: f64,
    y1: f64,
}

impl Rect {
    fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
}

fn label_rect(x: f64, y: f64, text: &str) -> Rect {
    Rect {
        x0: x,
        y0: y - 0.76 * LABEL,
        x1: x + text_width(text, LABEL),
        y1: y + 0.24 * LABEL,
    }
}

/// The right-hand column: the labels' y pushed apart to one line height, down first, then
/// back up from the bottom of the frame.
fn right_column<'a>(lay: &Layout, ends: &[&'a EndLabel]) -> Vec<(&'a EndLabel, f64)> {
    let mut ends: Vec<&EndLabel> = ends.to_vec();
    ends.sort_by(|a, b| a.at.1.total_cmp(&b.at.1));
    let step = LABEL + 1.0;
    let mut ys: Vec<f64> = Vec::with_capacity(ends.len());
    for e in &ends {
        let y = ys.last().map_or(e.at.1, |&l: &f64| e.at.1.max(l + step));
        ys.push(y);
    }
    let mut next = lay.bottom;
    for y in ys.iter_mut().rev() {
        *y = y.min(next);
        next = *y - step;
    }
    ends.into_iter().zip(ys).collect()
}

fn draw_key(s: &mut Svg, p: &LinePlot, lay: &Layout, cs: Option<&ColourScale>) {
    let x0 = lay.key_x;
    let mut y = lay.top + 12.0;
    if !p.legend.is_empty() {
        s.group("legend");
        for e in &p.legend {
            let colour = e.colour.unwrap_or(Rgb(25, 25, 25));
            let c = Curve {
                stroke: e.stroke,
                width: 2.2,
                ..Curve::default()
            };
            s.path(&[(x0, y - 4.0), (x0 + 26.0, y - 4.0)], pen_of(&c, colour));
            s.text(
                (x0 + 32.0, y),
                lay.key_size,
                Anchor::Start,
                INK,
                &e.text,
                false,
            );
            y += lay.key_size + 7.0;
        }
        s.end_group();
        y += 16.0;
    }
    if let Some(sc) = cs {
        draw_colour_bar(s, sc, x0, y, lay.bottom, lay.key_size);
    }
}

fn draw_colour_bar(s: &mut Svg, sc: &ColourScale, x0: f64, y: f64, bottom: f64, size: f64) {
    s.group("colour-bar");
    s.text((x0, y), size, Anchor::Start, INK, &sc.name, false);
    let (top, h) = (y + 10.0, (bottom - y - 16.0).clamp(40.0, 260.0));
    const SLICES: usize = 64;
    for i in 0..SLICES {
        let u = 1.0 - (i as f64 + 0.5) / SLICES as f64;
        let sy = top + h * i as f64 / SLICES as f64;
        s.rect(
            None,
            (x0, sy, 16.0, h / SLICES as f64 + 0.3),
            Some(continuous(u)),
            None,
        );
    }
    s.rect(None, (x0, top, 16.0, h), None, Some(INK));
    let span = sc.hi - sc.lo;
    for (v, label) in nice_ticks(sc.lo, sc.hi, 5) {
        let u = if span > 0.0 { (v - sc.lo) / span } else { 0.5 };
        let ty = top + h * (1.0 - u);
        s.path(
            &[(x0 + 16.0, ty), (x0 + 21.0, ty)],
            Pen {
                colour: INK,
                width: 1.0,
                opacity: 1.0,
                dash: None,
            },
        );
        s.text(
            (x0 + 24.0, ty + 4.0),
            LABEL,
            Anchor::Start,
            INK,
            &label,
            false,
        );
    }
    s.end_group();
}
