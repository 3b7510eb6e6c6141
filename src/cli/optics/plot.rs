//! The figures of an `optics` result: the transition fan against B and the stick spectrum
//! (sigma+ up, sigma- down: a mirror, so the two never overlap).

use super::*;
use ladderfan::plot::{Colouring, Curve, LegendEntry, LinePlot, Rgb, Stroke};
use ladderfan::records::TransitionRecord;

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

/// The fan's lines: each (from, to) pair's (field, transition) points in field order.
type Lines<'j> = BTreeMap<(String, String), Vec<(f64, &'j TransitionRecord)>>;

/// Group the transitions of every field by their (from, to) pair.
fn transition_lines(j: &OpticsRecord) -> Lines<'_> {
    let mut lines: Lines<'_> = BTreeMap::new();
    for p in &j.points {
        for t in &p.transitions {
            lines
                .entry((t.from.clone(), t.to.clone()))
                .or_default()
                .push((p.field, t));
        }
    }
    lines
}

/// The fan: transition energy against field, one line per (from, to) pair labelled
/// `from→to`, width and opacity growing with the strength, colour by polarisation; strong
/// lines first, so thinning keeps them.
pub(super) fn fan_plot(lm: &LoadedModel, j: &OpticsRecord) -> LinePlot {
    let eu = lm.shown.energy.label();
    let mut lines: Vec<(f64, Curve)> = transition_lines(j)
        .into_iter()
        .map(|((from, to), pts)| {
            let s = pts
                .iter()
                .map(|p| p.1.relative_strength)
                .fold(0.0, f64::max);
            let pol = pts
                .last()
                .map(|p| p.1.polarisation)
                .unwrap_or(Polarisation::Mixed);
            let curve = Curve {
                points: pts.iter().map(|(b, t)| (*b, t.energy)).collect(),
                colour: Some(pol_color(pol)),
                width: 0.8 + 3.2 * s.sqrt(),
                opacity: 0.3 + 0.7 * s.sqrt(),
                label: Some(format!("{from}→{to}")),
                ..Curve::default()
            };
            (s, curve)
        })
        .collect();
    lines.sort_by(|a, b| b.0.total_cmp(&a.0));
    let p0 = &j.points[0];
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
        curves: lines.into_iter().map(|l| l.1).collect(),
        y_range: Some((0.0, j.max_energy * 1.02)),
        notes: vec![format!(
            "{} ({}); n = {} cm^-2, T = {} K; cutoff {}",
            lm.model.name(),
            lm.origin,
            fmt_num(p0.fermi.density_cm2, 4),
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
