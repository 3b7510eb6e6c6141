//! The figures of an `optics` result: the transition fan against B and the stick spectrum
//! (sigma+ up, sigma- down: a mirror, so the two never overlap).

use super::*;
use ladderfan::plot::decimate::{DecimatedLine, Decimation, FIGURE_COLUMNS};
use ladderfan::plot::{Colouring, Curve, LegendEntry, LinePlot, Rgb, Stroke};

pub(super) fn pol_color(p: Polarisation) -> Rgb {
    match p {
        Polarisation::SigmaPlus => Rgb(196, 40, 52),
        Polarisation::SigmaMinus => Rgb(32, 84, 176),
        Polarisation::Mixed => Rgb(110, 110, 110),
    }
}

fn pol_legend() -> Vec<LegendEntry> {
    vec![
        LegendEntry::solid("σ+", pol_color(Polarisation::SigmaPlus)),
        LegendEntry::solid("σ−", pol_color(Polarisation::SigmaMinus)),
        LegendEntry::solid("mixed", pol_color(Polarisation::Mixed)),
    ]
}

/// One line of the transition fan being built: its thinned points, its strongest relative
/// strength so far and the polarisation at its last point.
struct FanLine {
    line: DecimatedLine,
    strongest: f64,
    polarisation: Polarisation,
}

/// What the fan figure needs of a transition sweep, built one field at a time in field order:
/// per (from, to) pair its line (field, transition energy) thinned to the figure's columns
/// ([`Decimation`]: every field kept for a sweep of at most [`FIGURE_COLUMNS`] fields, a break
/// where the transition is absent), its strongest relative strength and polarisation. The
/// whole-record and the streamed runs build it the same way, so their figures are equal.
pub(super) struct FanOutline {
    decimation: Decimation,
    lines: BTreeMap<(String, String), FanLine>,
}

impl FanOutline {
    /// An outline for the fields `xs` (output unit, point order).
    pub(super) fn new(xs: &[f64]) -> Self {
        FanOutline {
            decimation: Decimation::new(xs, FIGURE_COLUMNS),
            lines: BTreeMap::new(),
        }
    }

    /// Add the transitions of field `index` (record in the output units).
    pub(super) fn add(&mut self, index: usize, p: &OpticsPointRecord) {
        for t in &p.transitions {
            let l = self
                .lines
                .entry((t.from.clone(), t.to.clone()))
                .or_insert_with(|| FanLine {
                    line: DecimatedLine::default(),
                    strongest: 0.0,
                    polarisation: t.polarisation,
                });
            l.line
                .push(&self.decimation, index, p.field, t.energy, f64::NAN);
            l.strongest = l.strongest.max(t.relative_strength);
            l.polarisation = t.polarisation;
        }
    }

    /// The outline of a whole record (fields in point order).
    pub(super) fn of_record(j: &OpticsRecord) -> Self {
        let xs: Vec<f64> = j.points.iter().map(|p| p.field).collect();
        let mut o = FanOutline::new(&xs);
        for (i, p) in j.points.iter().enumerate() {
            o.add(i, p);
        }
        o
    }

    /// The curves, strongest first (so thinning keeps them), their relative strengths divided
    /// by `unit` (1 when the records held relative strengths already): width and opacity grow
    /// with the strength, colour by polarisation, label `from→to`.
    fn curves(self, unit: f64) -> Vec<Curve> {
        let d = self.decimation;
        let mut lines: Vec<(f64, Curve)> = self
            .lines
            .into_iter()
            .map(|((from, to), l)| {
                let s = l.strongest / unit;
                let curve = Curve {
                    points: l.line.finish(&d).0,
                    colour: Some(pol_color(l.polarisation)),
                    width: 0.8 + 3.2 * s.sqrt(),
                    opacity: 0.3 + 0.7 * s.sqrt(),
                    label: Some(format!("{from}→{to}")),
                    ..Curve::default()
                };
                (s, curve)
            })
            .collect();
        lines.sort_by(|a, b| b.0.total_cmp(&a.0));
        lines.into_iter().map(|l| l.1).collect()
    }
}

/// The fan: transition energy against field, one line per (from, to) pair labelled
/// `from→to`, width and opacity growing with the strength, colour by polarisation; strong
/// lines first, so thinning keeps them. `j` gives the run's settings (its points may be
/// empty), `density_cm2` the carrier density, `unit` the divisor of the outline's strengths.
pub(super) fn fan_plot(
    lm: &LoadedModel,
    j: &OpticsRecord,
    density_cm2: f64,
    outline: FanOutline,
    unit: f64,
) -> LinePlot {
    let eu = lm.shown.energy.label();
    let mut legend = pol_legend();
    legend.push(LegendEntry {
        text: "width, opacity: strength".into(),
        colour: Some(Rgb(150, 150, 150)),
        stroke: Stroke::Solid,
    });
    LinePlot {
        title: format!("Magneto-optical transitions: {}", lm.model.name()),
        x_label: format!("B [{}]", lm.shown.field.label()),
        y_label: format!("transition energy [{eu}]"),
        curves: outline.curves(unit),
        y_range: Some((0.0, j.max_energy * 1.02)),
        notes: vec![format!(
            "{} ({}); n = {} cm^-2, T = {} K; cutoff {}",
            lm.model.name(),
            lm.origin,
            fmt_num(density_cm2, 4),
            j.temperature_k,
            j.cutoff
        )],
        legend,
        colouring: Colouring::Key {
            name: "polarisation".into(),
        },
        thin_px: 1.5,
        ..LinePlot::default()
    }
}

/// Stick spectrum at one field: a vertical line per transition, height = relative strength,
/// sigma+ upwards and sigma- downwards (mixed upwards, dashed).
pub(super) fn stick_plot(lm: &LoadedModel, j: &OpticsRecord) -> LinePlot {
    let eu = lm.shown.energy.label();
    let p = &j.points[0];
    let curves: Vec<Curve> = p
        .transitions
        .iter()
        .map(|t| {
            let sign = if t.polarisation == Polarisation::SigmaMinus {
                -1.0
            } else {
                1.0
            };
            Curve {
                points: vec![(t.energy, 0.0), (t.energy, sign * t.relative_strength)],
                colour: Some(pol_color(t.polarisation)),
                width: 2.2,
                stroke: if t.polarisation == Polarisation::Mixed {
                    Stroke::Dotted
                } else {
                    Stroke::Solid
                },
                ..Curve::default()
            }
        })
        .collect();
    LinePlot {
        title: format!(
            "Transitions at {} {}: {}",
            p.field,
            lm.shown.field.label(),
            lm.model.name()
        ),
        x_label: format!("transition energy [{eu}]"),
        y_label: "relative strength (σ+ up, σ− down)".into(),
        curves,
        x_range: Some((0.0, j.max_energy * 1.02)),
        y_range: Some((-1.1, 1.1)),
        notes: vec![format!(
            "{} ({}); Fermi level {} {eu}, ν = {}",
            lm.model.name(),
            lm.origin,
            fmt_num(p.fermi.fermi_energy, 6),
            fmt_num(p.fermi.filling_factor, 4)
        )],
        legend: pol_legend(),
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        zero_line: true,
        ..LinePlot::default()
    }
}
