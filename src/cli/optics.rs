//! `ladderfan optics`: allowed magneto-optical transitions at one field (a stick spectrum), or
//! against the field (the transition-energy fan) with `--b-max`.

use super::common::{
    self, bad_flag, csv_header, csv_text, emit, emit_json, fmt_num, load_model, CliResult,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use super::dos::{FermiArgs, FermiJson};
use clap::Args;
use ladderfan::observables::optics::{
    transition_sweep, OpticsSettings, Polarisation, Transition, TransitionPoint,
};
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::{FieldPoint, Settings, Spectrum};
use plotters::prelude::*;
use serde::Serialize;
use std::collections::BTreeMap;

/// Flags of `ladderfan optics`.
#[derive(Debug, Clone, Args)]
pub struct OpticsArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    #[command(flatten)]
    pub solve: SolveArgs,
    #[command(flatten)]
    pub fermi: FermiArgs,
    /// Largest transition energy listed, model energy unit (default: 8 typical Landau spacings
    /// at the highest field).
    #[arg(long)]
    pub max_energy: Option<f64>,
    /// List a transition when its weighted strength exceeds this fraction of the largest.
    #[arg(long, default_value_t = 1e-8)]
    pub min_strength: f64,
    /// Rows of the table at one field (strongest first; 0: all).
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 30)]
    pub count: usize,
    /// Sweep the field up to this value: the transition-energy fan.
    #[arg(long, allow_negative_numbers = true)]
    pub b_max: Option<f64>,
    /// Lowest field of the sweep (default: a tenth of --b-max).
    #[arg(long, allow_negative_numbers = true, requires = "b_max")]
    pub b_min: Option<f64>,
    /// Points of the sweep.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 40)]
    pub points: usize,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// One transition in the JSON result.
#[derive(Debug, Clone, Serialize)]
pub struct TransitionJson {
    /// Identity of the initial level: its Landau label (`+2`, `-2`, `0`, `+1'`, `~` when
    /// continued, `@f<family>` for a family other than 0).
    pub from: String,
    /// Identity of the final level.
    pub to: String,
    /// The transition in the trade's notation, e.g. `LL(-2) -> LL(+3)`.
    pub transition: String,
    /// Dominant orbital of the initial level.
    pub from_orbital: usize,
    /// Dominant orbital of the final level.
    pub to_orbital: usize,
    /// Initial level energy.
    pub from_energy: f64,
    /// Final level energy.
    pub to_energy: f64,
    /// Transition energy.
    pub energy: f64,
    /// Occupation difference.
    pub occupation_difference: f64,
    /// |<f|v_x|i>|^2 (o_i - o_f), velocity unit squared.
    pub strength_x: f64,
    /// |<f|v_y|i>|^2 (o_i - o_f).
    pub strength_y: f64,
    /// sigma+ strength.
    pub strength_plus: f64,
    /// sigma- strength.
    pub strength_minus: f64,
    /// (strength_x + strength_y) relative to the strongest transition of the whole run.
    pub relative_strength: f64,
    /// 2 m_e |<f|v_x|i>|^2 / (E_f - E_i).
    pub oscillator_strength_x: f64,
    /// Dominant polarisation.
    pub polarisation: Polarisation,
}

/// One field of the result.
#[derive(Debug, Clone, Serialize)]
pub struct PointJson {
    /// Field.
    pub field: f64,
    /// Fermi level and filling.
    pub fermi: FermiJson,
    /// Allowed transitions, ascending in energy.
    pub transitions: Vec<TransitionJson>,
}

/// The JSON result of `optics`.
#[derive(Debug, Serialize)]
pub struct OpticsJson {
    /// Always `optics`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of energies and fields.
    pub units: UnitsRecord,
    /// Velocity unit of the strengths (m/s, or c in natural units).
    pub velocity_unit: &'static str,
    /// kz.
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Energies are relative to this.
    pub reference_energy: f64,
    /// Temperature, K.
    pub temperature_k: f64,
    /// Largest transition energy listed.
    pub max_energy: f64,
    /// Polarisation convention.
    pub convention: &'static str,
    /// The points.
    pub points: Vec<PointJson>,
}

const CONVENTION: &str = "B along +z; light ~ e exp(-i omega t); sigma+ = (x + i y)/sqrt2, \
sigma- = (x - i y)/sqrt2; strength = |<f|e.v|i>|^2 (o_i - o_f); selection rules come from the \
matrix elements, none is imposed";

/// `LL(-2) -> LL(+3)`: initial and final Landau level by their labels.
pub fn transition_text(t: &Transition) -> String {
    format!("LL({}) -> LL({})", t.from_key, t.to_key)
}

fn transition_json(t: &Transition, max: f64) -> TransitionJson {
    TransitionJson {
        from: t.from_key.to_string(),
        to: t.to_key.to_string(),
        transition: transition_text(t),
        from_orbital: t.from_orbital,
        to_orbital: t.to_orbital,
        from_energy: t.from_energy,
        to_energy: t.to_energy,
        energy: t.energy,
        occupation_difference: t.occupation_difference,
        strength_x: t.strength_x,
        strength_y: t.strength_y,
        strength_plus: t.strength_plus,
        strength_minus: t.strength_minus,
        relative_strength: (t.strength_x + t.strength_y) / max,
        oscillator_strength_x: t.oscillator_strength_x,
        polarisation: t.polarisation,
    }
}

/// Run `ladderfan optics`.
pub fn run(a: &OpticsArgs) -> CliResult {
    let lm = load_model(&a.model)?;
    let u = lm.model.units();
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    let (values, cutoff, mem) = match a.b_max {
        None => (vec![r.field], r.cutoff, r.memory_limit_mib),
        Some(b_max) => {
            let b_max = common::finite_flag("--b-max", b_max)?;
            let b_min = common::finite_flag("--b-min", a.b_min.unwrap_or(b_max / 10.0))?;
            let v = common::grid_values("--b-min", b_min, b_max, a.points, common::Grid::Linear)?;
            if v.contains(&0.0) || b_min.signum() != b_max.signum() {
                return Err(bad_flag(
                    "--b-min",
                    "the sweep crosses B = 0, where there are no Landau levels; choose --b-min and --b-max of one sign",
                ));
            }
            let (c, m) = common::resolve_trunc(&lm, &a.solve.trunc)?;
            (v, c, m)
        }
    };
    if a.b_max.is_some() && a.fermi.filling.is_some() {
        return Err(bad_flag(
            "--filling",
            "a filling factor changes with the field; give --density-cm2 for a sweep",
        ));
    }
    let top = values
        .iter()
        .copied()
        .max_by(|x, y| x.abs().total_cmp(&y.abs()))
        .unwrap_or(r.field);
    // eigenvectors and velocity elements of every field are kept (src/memory.rs)
    common::check_memory(
        &lm,
        "optics",
        if values.len() > 1 {
            "--points"
        } else {
            "--cutoff"
        },
        FieldPoint {
            field: top,
            kz: r.kz,
        },
        cutoff,
        mem,
        &ladderfan::memory::Footprint::Optics {
            points: values.len() as u64,
        },
        None,
    )?;
    let mut settings = Settings::with_cutoff(cutoff);
    settings.memory_limit_mib = mem;
    // the typical Landau spacing at the highest field sets the default width and window
    let probe = Spectrum::compute(
        &lm.model,
        FieldPoint {
            field: top,
            kz: r.kz,
        },
        &settings,
    )?;
    let broadening = a.fermi.broadening(probe.energy_scale)?;
    let max_energy = common::finite_flag(
        "--max-energy",
        a.max_energy.unwrap_or(8.0 * probe.energy_scale),
    )?;
    if max_energy <= 0.0 {
        return Err(bad_flag("--max-energy", "give a positive energy"));
    }
    if !(a.min_strength.is_finite() && (0.0..1.0).contains(&a.min_strength)) {
        return Err(bad_flag("--min-strength", "give a fraction in [0, 1)"));
    }
    let density = a.fermi.density(&lm, r.field)?.unwrap_or(0.0);
    let fs = a.fermi.settings(density, broadening)?;
    let pts: Vec<FieldPoint> = values
        .iter()
        .map(|&field| FieldPoint { field, kz: r.kz })
        .collect();
    let opts = OpticsSettings {
        max_energy: Some(max_energy),
        min_relative_strength: a.min_strength,
    };
    let fan = transition_sweep(&lm.model, &pts, &settings, &fs, &opts)?;
    let max = fan
        .iter()
        .flat_map(|p| p.transitions.iter())
        .map(|t| t.strength_x + t.strength_y)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let json = OpticsJson {
        command: "optics",
        model: ModelRecord::new(&lm.model, &lm.origin),
        units: UnitsRecord::new(&lm.model),
        velocity_unit: match u {
            ladderfan::units::Units::Lab => "m/s",
            ladderfan::units::Units::Natural => "c",
        },
        kz: r.kz,
        cutoff,
        reference_energy: probe.reference_energy,
        temperature_k: fs.temperature_k,
        max_energy,
        convention: CONVENTION,
        points: fan
            .iter()
            .map(|p: &TransitionPoint| PointJson {
                field: p.field,
                fermi: FermiJson::new(u, &p.fermi),
                transitions: p
                    .transitions
                    .iter()
                    .map(|t| transition_json(t, max))
                    .collect(),
            })
            .collect(),
    };
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add("transitions.csv", to_csv(&lm, &json)?);
        let svg = if json.points.len() > 1 {
            fan_svg(&lm, &json)?
        } else {
            stick_svg(&lm, &json)?
        };
        files.add("transitions.svg", svg);
        written = files.write_all(dir)?;
    }
    if a.output.json {
        return emit_json(&json);
    }
    let mut text = summary(&lm, &json, a.count);
    for p in written {
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&text)
}

fn pol_name(p: Polarisation) -> &'static str {
    match p {
        Polarisation::SigmaPlus => "sigma+",
        Polarisation::SigmaMinus => "sigma-",
        Polarisation::Mixed => "mixed",
    }
}

fn summary(lm: &LoadedModel, j: &OpticsJson, count: usize) -> String {
    let u = lm.model.units();
    let eu = u.energy_unit();
    let mut s = format!(
        "model: {} ({}), kz {} {}, cutoff {}, T = {} K\n{CONVENTION}\n",
        lm.model.name(),
        lm.origin,
        j.kz,
        u.wavenumber_unit(),
        j.cutoff,
        j.temperature_k
    );
    s.push_str(&format!(
        "energies in {eu} relative to {} {eu}; strengths relative to the strongest line; only converged levels\n",
        j.reference_energy
    ));
    if j.points.len() > 1 {
        let n: usize = j.points.iter().map(|p| p.transitions.len()).sum();
        s.push_str(&format!(
            "transition fan: {} fields from {} to {} {}, {n} allowed transitions below {} {eu}\n",
            j.points.len(),
            j.points[0].field,
            j.points[j.points.len() - 1].field,
            u.field_unit(),
            fmt_num(j.max_energy, 6)
        ));
        return s;
    }
    let p = &j.points[0];
    s.push_str(&format!(
        "field {} {}: Fermi level {} {eu}, filling factor {}, {} allowed transitions below {} {eu}\n\n",
        p.field,
        u.field_unit(),
        fmt_num(p.fermi.fermi_energy, 8),
        fmt_num(p.fermi.filling_factor, 6),
        p.transitions.len(),
        fmt_num(j.max_energy, 6)
    ));
    let mut idx: Vec<usize> = (0..p.transitions.len()).collect();
    idx.sort_by(|&x, &y| {
        p.transitions[y]
            .relative_strength
            .total_cmp(&p.transitions[x].relative_strength)
    });
    if count > 0 {
        idx.truncate(count);
    }
    idx.sort_by(|&x, &y| p.transitions[x].energy.total_cmp(&p.transitions[y].energy));
    let mut rows = vec![vec![
        format!("energy [{eu}]"),
        "transition".to_string(),
        format!("from [{eu}]"),
        format!("to [{eu}]"),
        "strength".into(),
        "polarisation".into(),
        "osc. str. x".into(),
    ]];
    for &i in &idx {
        let t = &p.transitions[i];
        rows.push(vec![
            fmt_num(t.energy, 8),
            t.transition.clone(),
            fmt_num(t.from_energy, 8),
            fmt_num(t.to_energy, 8),
            format!("{:.4}", t.relative_strength),
            pol_name(t.polarisation).into(),
            format!("{:.4e}", t.oscillator_strength_x),
        ]);
    }
    s.push_str(&common::table(&rows));
    s
}

fn to_csv(lm: &LoadedModel, j: &OpticsJson) -> CliResult<String> {
    let eu = lm.model.units().energy_unit().replace(' ', "");
    let fu = lm.model.units().field_unit();
    let v = j.velocity_unit.replace('/', "_per_");
    let header = csv_header(
        lm,
        "optics",
        &[
            CONVENTION.to_string(),
            format!(
                "kz {}, cutoff {}, T {} K; energies relative to {} {eu}",
                j.kz, j.cutoff, j.temperature_k, j.reference_energy
            ),
        ],
    );
    let mut rec = vec![vec![
        format!("field_{fu}"),
        format!("fermi_energy_{eu}"),
        "filling_factor".into(),
        format!("energy_{eu}"),
        "from".into(),
        "to".into(),
        "transition".into(),
        "from_orbital".into(),
        "to_orbital".into(),
        format!("from_energy_{eu}"),
        format!("to_energy_{eu}"),
        "occupation_difference".into(),
        format!("strength_x_{v}_sq"),
        format!("strength_y_{v}_sq"),
        format!("strength_sigma_plus_{v}_sq"),
        format!("strength_sigma_minus_{v}_sq"),
        "relative_strength".into(),
        "oscillator_strength_x".into(),
        "polarisation".into(),
    ]];
    for p in &j.points {
        for t in &p.transitions {
            rec.push(vec![
                format!("{:e}", p.field),
                format!("{:e}", p.fermi.fermi_energy),
                format!("{:e}", p.fermi.filling_factor),
                format!("{:e}", t.energy),
                t.from.clone(),
                t.to.clone(),
                t.transition.clone(),
                t.from_orbital.to_string(),
                t.to_orbital.to_string(),
                format!("{:e}", t.from_energy),
                format!("{:e}", t.to_energy),
                format!("{:e}", t.occupation_difference),
                format!("{:e}", t.strength_x),
                format!("{:e}", t.strength_y),
                format!("{:e}", t.strength_plus),
                format!("{:e}", t.strength_minus),
                format!("{:e}", t.relative_strength),
                format!("{:e}", t.oscillator_strength_x),
                pol_name(t.polarisation).into(),
            ]);
        }
    }
    csv_text(&header, &rec)
}

fn plot_err<E: std::fmt::Display>(e: E) -> common::CliError {
    common::CliError::Input(ladderfan::Error::Numerical {
        stage: "plot".into(),
        detail: format!("cannot draw the SVG: {e}"),
    })
}

fn pol_color(p: Polarisation) -> RGBColor {
    match p {
        Polarisation::SigmaPlus => RGBColor(200, 30, 30),
        Polarisation::SigmaMinus => RGBColor(30, 60, 200),
        Polarisation::Mixed => RGBColor(90, 90, 90),
    }
}

/// The fan: transition energy against field, one line per (from, to) pair, line width and
/// opacity growing with the strength, colour by polarisation.
fn fan_svg(lm: &LoadedModel, j: &OpticsJson) -> CliResult<String> {
    let u = lm.model.units();
    let eu = u.energy_unit();
    let mut lines: BTreeMap<(String, String), Vec<(f64, &TransitionJson)>> = BTreeMap::new();
    for p in &j.points {
        for t in &p.transitions {
            lines
                .entry((t.from.clone(), t.to.clone()))
                .or_default()
                .push((p.field, t));
        }
    }
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
            .x_desc(format!("B [{}]", u.field_unit()))
            .y_desc(format!("transition energy [{eu}]"))
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(plot_err)?;
        // sigma+ first and 2 px wider, then the others, weakest first: a sigma- line on top of
        // a degenerate sigma+ line leaves a red rim, and strong lines are drawn over weak ones
        let mut ordered: Vec<&Vec<(f64, &TransitionJson)>> = lines.values().collect();
        let key = |v: &Vec<(f64, &TransitionJson)>| {
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
        for pts in ordered {
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
        let p0 = &j.points[0];
        for (i, note) in [
            format!(
                "{} ({}); n = {} cm^-2, T = {} K; cutoff {}",
                lm.model.name(),
                lm.origin,
                fmt_num(p0.fermi.density_cm2, 4),
                j.temperature_k,
                j.cutoff
            ),
            "red: sigma+ (drawn wider), blue: sigma-, grey: mixed; width and opacity: strength"
                .into(),
        ]
        .iter()
        .enumerate()
        {
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
fn stick_svg(lm: &LoadedModel, j: &OpticsJson) -> CliResult<String> {
    let u = lm.model.units();
    let eu = u.energy_unit();
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
                    u.field_unit(),
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
