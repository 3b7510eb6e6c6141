//! The SVG views of an `optics` result: the transition fan against B and the stick spectrum.

use super::*;
use ladderfan::records::TransitionRecord;

pub(super) fn plot_err<E: std::fmt::Display>(e: E) -> common::CliError {
    common::CliError::Input(ladderfan::Error::Numerical {
        stage: "plot".into(),
        detail: format!("cannot draw the SVG: {e}"),
    })
}

pub(super) fn pol_color(p: Polarisation) -> RGBColor {
    match p {
        Polarisation::SigmaPlus => RGBColor(200, 30, 30),
        Polarisation::SigmaMinus => RGBColor(30, 60, 200),
        Polarisation::Mixed => RGBColor(90, 90, 90),
    }
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

/// The order the fan's lines are drawn in.
fn drawing_order<'a, 'j>(lines: &'a Lines<'j>) -> Vec<&'a [(f64, &'j TransitionRecord)]> {
    // sigma+ first and 2 px wider, then the others, weakest first: a sigma- line on top of
    // a degenerate sigma+ line leaves a red rim, and strong lines are drawn over weak ones
    let mut ordered: Vec<&[(f64, &TransitionRecord)]> = lines.values().map(Vec::as_slice).collect();
    let key = |v: &[(f64, &TransitionRecord)]| {
        let plus = v
            .iter()
            .any(|p| p.1.polarisation == Polarisation::SigmaPlus);
        let s = v.iter().map(|p| p.1.relative_strength).fold(0.0, f64::max);
        (!plus, s)
    };
    ordered.sort_by(|a, b| {
        let (ka, kb) = (key(a), key(b));
        ka.0.cmp(&kb.0).then(ka.1.total_cmp(&kb.1))
    });
    ordered
}

/// The two notes at the top of the fan: model, density, temperature, cutoff; the legend.
fn fan_notes(lm: &LoadedModel, j: &OpticsRecord) -> [String; 2] {
    let p0 = &j.points[0];
    [
        format!(
            "{} ({}); n = {} cm^-2, T = {} K; cutoff {}",
            lm.model.name(),
            lm.origin,
            fmt_num(p0.fermi.density_cm2, 4),
            j.temperature_k,
            j.cutoff
        ),
        "red: sigma+ (drawn wider), blue: sigma-, grey: mixed; width and opacity: strength".into(),
    ]
}

/// The fan: transition energy against field, one line per (from, to) pair, line width and
/// opacity growing with the strength, colour by polarisation.
pub(super) fn fan_svg(lm: &LoadedModel, j: &OpticsRecord) -> CliResult<String> {
    let eu = lm.shown.energy.label();
    let lines = transition_lines(j);
    let (x0, x1) = j
        .points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.field), b.max(p.field))
        });
    let y1 = j.max_energy * 1.02;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, ladderfan::plot::SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("Magneto-optical transitions: {}", lm.model.name()),
                ("sans-serif", 22),
            )
            .margin(18)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, 0.0..y1)
            .map_err(plot_err)?;
        chart
            .configure_mesh()
            .x_desc(format!("B [{}]", lm.shown.field.label()))
            .y_desc(format!("transition energy [{eu}]"))
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(plot_err)?;
        for pts in drawing_order(&lines) {
            for w in pts.windows(2) {
                let (b0, t0) = w[0];
                let (b1, t1) = w[1];
                let s = 0.5 * (t0.relative_strength + t1.relative_strength);
                let rim = if t1.polarisation == Polarisation::SigmaPlus {
                    2
                } else {
                    0
                };
                let style = pol_color(t1.polarisation)
                    .mix(0.25 + 0.75 * s.sqrt())
                    .stroke_width(1 + rim + (4.0 * s.sqrt()).round() as u32);
                chart
                    .draw_series(LineSeries::new(
                        vec![(b0, t0.energy), (b1, t1.energy)],
                        style,
                    ))
                    .map_err(plot_err)?;
            }
            if pts.len() == 1 {
                let (b, t) = pts[0];
                chart
                    .draw_series(std::iter::once(Circle::new(
                        (b, t.energy),
                        2,
                        pol_color(t.polarisation).filled(),
                    )))
                    .map_err(plot_err)?;
            }
        }
        for (i, note) in fan_notes(lm, j).iter().enumerate() {
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

/// Stick spectrum at one field: a vertical line per transition, height = relative strength.
pub(super) fn stick_svg(lm: &LoadedModel, j: &OpticsRecord) -> CliResult<String> {
    let eu = lm.shown.energy.label();
    let p = &j.points[0];
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, ladderfan::plot::SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(plot_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!(
                    "Transitions at {} {}: {}",
                    p.field,
                    lm.shown.field.label(),
                    lm.model.name()
                ),
                ("sans-serif", 22),
            )
            .margin(18)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..j.max_energy * 1.02, 0.0..1.1)
            .map_err(plot_err)?;
        chart
            .configure_mesh()
            .x_desc(format!("transition energy [{eu}]"))
            .y_desc("relative strength")
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(plot_err)?;
        for t in &p.transitions {
            chart
                .draw_series(LineSeries::new(
                    vec![(t.energy, 0.0), (t.energy, t.relative_strength)],
                    pol_color(t.polarisation).stroke_width(2),
                ))
                .map_err(plot_err)?;
        }
        root.draw(&Text::new(
            format!(
                "Fermi level {} {eu}, nu = {}; red: sigma+, blue: sigma-",
                fmt_num(p.fermi.fermi_energy, 6),
                fmt_num(p.fermi.filling_factor, 4)
            ),
            (100, 60),
            ("sans-serif", 14).into_font().color(&BLACK.mix(0.8)),
        ))
        .map_err(plot_err)?;
        root.present().map_err(plot_err)?;
    }
    Ok(svg)
}
