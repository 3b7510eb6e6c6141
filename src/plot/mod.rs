//! Figures: fan diagrams, dispersions, level diagrams, densities of states, optical spectra
//! and convergence plots, written as SVG by our own small writer ([`svg`]) with `f64`
//! coordinates, then rendered to PNG or PDF ([`mod@render`]) with the font shipped in
//! `assets/fonts/` (DejaVu Sans, embedded), so text never depends on system fonts.
//!
//! A figure is a [`LinePlot`]: curves of (x, y) points in data units, drawn on a linear, log
//! or inverse (1/B) axis ([`Scale`]), coloured by a category or by a per-point quantity with
//! a colour bar ([`Colouring`]), with a key, a caption outside the data and optional labels at
//! the right-hand ends of the lines. Lines break at non-finite points, at B = 0 and at jumps;
//! where lines crowd closer than a resolution limit they are thinned instead of drawn as a
//! solid block. [`geometry`] reads the text and plot-area geometry back from an SVG (tests use
//! it to check that no text leaves the canvas or covers the data).

pub mod axis;
pub mod colour;
pub mod decimate;
pub mod geometry;
mod line;
pub mod render;
pub mod study;
pub mod svg;
mod thin;

pub use axis::Scale;
pub use line::line_plot;
pub use render::{render, Format};
pub use svg::Rgb;

/// Default figure size in pixels.
pub const SIZE: (u32, u32) = (960, 680);

/// How a curve is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Stroke {
    /// Solid line in the curve's colour (computed levels).
    #[default]
    Solid,
    /// Dashed dark line (a closed-form overlay or a reference line).
    Dashed,
    /// Dotted line in the curve's colour (a secondary quantity of the same level).
    Dotted,
}

/// One curve: points (x, y) in data units; a non-finite coordinate breaks the line.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// Category (same key, same colour), e.g. the branch or the Landau index.
    pub color_key: usize,
    /// Drawing style.
    pub stroke: Stroke,
    /// Points in plot order.
    pub points: Vec<(f64, f64)>,
    /// Text written beside the right-hand end of the line when that end reaches the right
    /// edge of the plot (e.g. the Landau label `+2`).
    pub label: Option<String>,
    /// Per-point values of the colour quantity (same length as `points`) for
    /// [`Colouring::Values`].
    pub values: Option<Vec<f64>>,
    /// A fixed colour, overriding the colouring (e.g. a polarisation).
    pub colour: Option<Rgb>,
    /// Line width in pixels.
    pub width: f64,
    /// Line opacity in (0, 1].
    pub opacity: f64,
    /// Draw a dot at every point (e.g. measured errors of a convergence study).
    pub markers: bool,
}

impl Default for Curve {
    fn default() -> Self {
        Curve {
            color_key: 0,
            stroke: Stroke::Solid,
            points: Vec::new(),
            label: None,
            values: None,
            colour: None,
            width: 1.8,
            opacity: 1.0,
            markers: false,
        }
    }
}

/// How the curves are coloured.
#[derive(Debug, Clone, PartialEq)]
pub enum Colouring {
    /// By [`Curve::color_key`]: up to ten keys get distinct palette colours; more keys are
    /// placed on the continuous scale with a colour bar titled `name`, so no colour repeats.
    Key {
        /// The quantity the key stands for, e.g. `Landau index |n|`.
        name: String,
    },
    /// By the per-point [`Curve::values`] on the continuous scale, with a colour bar titled
    /// `name` (e.g. `weight of component 1`) over `range` (default: the values' range).
    Values {
        /// The quantity, with its unit if it has one.
        name: String,
        /// The values at the two ends of the scale.
        range: Option<(f64, f64)>,
    },
}

impl Default for Colouring {
    fn default() -> Self {
        Colouring::Key {
            name: "curve".into(),
        }
    }
}

/// One line of the key: a line sample and its text.
#[derive(Debug, Clone, PartialEq)]
pub struct LegendEntry {
    /// What the sample stands for.
    pub text: String,
    /// The sample's colour (`None`: dark grey).
    pub colour: Option<Rgb>,
    /// The sample's line style.
    pub stroke: Stroke,
}

impl LegendEntry {
    /// An entry with a solid sample of `colour`.
    pub fn solid(text: impl Into<String>, colour: Rgb) -> Self {
        LegendEntry {
            text: text.into(),
            colour: Some(colour),
            stroke: Stroke::Solid,
        }
    }

    /// An entry with a dashed dark sample.
    pub fn dashed(text: impl Into<String>) -> Self {
        LegendEntry {
            text: text.into(),
            colour: None,
            stroke: Stroke::Dashed,
        }
    }
}

/// A line plot: caption, axes (labels with units, scales, ranges), curves and key.
#[derive(Debug, Clone, PartialEq)]
pub struct LinePlot {
    /// Title, above the data.
    pub title: String,
    /// x-axis label, e.g. `B [T]` (or `1/B [1/T]` on an inverse axis).
    pub x_label: String,
    /// y-axis label, e.g. `E [meV]`.
    pub y_label: String,
    /// The curves, most important first (thinning keeps earlier curves).
    pub curves: Vec<Curve>,
    /// x range in data units; default: the finite points, exactly.
    pub x_range: Option<(f64, f64)>,
    /// y range in data units; default: the finite points, padded by 3 %.
    pub y_range: Option<(f64, f64)>,
    /// Caption lines under the title (model, parameters), wrapped to the width.
    pub notes: Vec<String>,
    /// The key, drawn right of the data.
    pub legend: Vec<LegendEntry>,
    /// How the curves are coloured.
    pub colouring: Colouring,
    /// x-axis scale.
    pub x_scale: Scale,
    /// y-axis scale.
    pub y_scale: Scale,
    /// Draw the curves' labels at their right-hand ends.
    pub labels: bool,
    /// Never join a point at x < 0 to one at x > 0 (a fan over both field signs).
    pub split_at_zero_x: bool,
    /// Break a line where one step is a jump: taller than 12 % of the plot and more than six
    /// times both neighbouring steps.
    pub split_jumps: bool,
    /// Resolution limit in pixels: where solid lines come closer than this at the same x, the
    /// later curves are left out there (0: off).
    pub thin_px: f64,
    /// A thin horizontal line at y = 0.
    pub zero_line: bool,
    /// Figure size in pixels.
    pub size: (u32, u32),
}

impl Default for LinePlot {
    fn default() -> Self {
        LinePlot {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            curves: Vec::new(),
            x_range: None,
            y_range: None,
            notes: Vec::new(),
            legend: Vec::new(),
            colouring: Colouring::default(),
            x_scale: Scale::Linear,
            y_scale: Scale::Linear,
            labels: true,
            split_at_zero_x: true,
            split_jumps: true,
            thin_px: 0.0,
            zero_line: false,
            size: SIZE,
        }
    }
}

/// A level diagram: each level a short bar at (Landau index n, energy).
#[derive(Debug, Clone, PartialEq)]
pub struct LevelDiagram {
    /// Caption.
    pub title: String,
    /// Energy unit for the axis label.
    pub energy_unit: String,
    /// (Landau index n, energy) of each level.
    pub levels: Vec<(f64, f64)>,
}

/// Draw a level diagram as SVG ([`level_plot`] drawn by [`line_plot`]).
///
/// # Errors
/// Those of [`line_plot`].
pub fn level_diagram(d: &LevelDiagram) -> crate::error::Result<String> {
    line_plot(&level_plot(d))
}

/// The figure of a level diagram: a bar per level at its Landau index n.
pub fn level_plot(d: &LevelDiagram) -> LinePlot {
    let curves = d
        .levels
        .iter()
        .map(|&(n, e)| Curve {
            color_key: if n < 0.0 { 1 } else { 0 },
            points: vec![(n - 0.32, e), (n + 0.32, e)],
            width: 2.4,
            ..Curve::default()
        })
        .collect();
    let (n0, n1) = axis::data_range(d.levels.iter().map(|l| l.0), 0.0);
    LinePlot {
        title: d.title.clone(),
        x_label: "Landau index n".into(),
        y_label: format!("E [{}]", d.energy_unit),
        curves,
        x_range: Some((n0 - 0.8, n1 + 0.8)),
        legend: vec![
            LegendEntry::solid("level, n >= 0", colour::categorical(0)),
            LegendEntry::solid("level, n < 0", colour::categorical(1)),
        ],
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        ..LinePlot::default()
    }
}
