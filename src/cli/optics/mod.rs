//! `ladderfan optics`: allowed magneto-optical transitions at one field (a stick spectrum), or
//! against the field (the transition-energy fan) with `--b-max`.

use super::common::{
    self, bad_flag, csv_meta, emit, emit_json, fmt_num, load_model, CliResult, CsvFile,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use super::dos::FermiArgs;
use super::progress::Progress;
use clap::Args;
use ladderfan::observables::filling::{fermi_level, FermiSettings};
use ladderfan::observables::optics::{
    transition_sweep_with, transitions, OpticsSettings, Polarisation,
};
use ladderfan::records::meta::Column;
use ladderfan::records::{ModelRecord, OpticsPointRecord, OpticsRecord, UnitsRecord};
use ladderfan::{FieldPoint, Settings, Spectrum};

mod plot;
mod stream;
mod table;
use plot::{fan_plot, stick_plot, FanOutline};
use std::collections::BTreeMap;
use table::{point_rows, to_csv, transition_columns};

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
    /// A suffix picks the unit (`10T`, `2e-9Bc`); a plain number is in the model's unit.
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub b_max: Option<ladderfan::units::FieldValue>,
    /// Lowest field of the sweep (default: a tenth of --b-max).
    #[arg(long, allow_negative_numbers = true, requires = "b_max", value_parser = crate::cli::parse::parse_field)]
    pub b_min: Option<ladderfan::units::FieldValue>,
    /// Points of the sweep.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 40)]
    pub points: usize,
    #[command(flatten)]
    pub output: OutputArgs,
}

const CONVENTION: &str = "B along +z; light ~ e exp(-i omega t); sigma+ = (x + i y)/sqrt2, \
sigma- = (x - i y)/sqrt2; strength = |<f|e.v|i>|^2 (o_i - o_f); selection rules come from the \
matrix elements, none is imposed";

/// The fields to solve (one, or the `--b-max` sweep) with the cutoff and memory limit that
/// apply to them.
fn fields(
    a: &OpticsArgs,
    lm: &LoadedModel,
    r: &common::Resolved,
) -> CliResult<(Vec<f64>, usize, u64)> {
    let fields = match common::field_sweep_grid(lm, a.b_min, a.b_max, a.points)? {
        None => (vec![r.field], r.cutoff, r.memory_limit_mib),
        Some(v) => {
            let (c, m) = common::resolve_trunc(lm, &a.solve.trunc)?;
            (v, c, m)
        }
    };
    if a.b_max.is_some() && a.fermi.filling.is_some() {
        return Err(bad_flag(
            "--filling",
            "a filling factor changes with the field; give --density-cm2 for a sweep",
        ));
    }
    Ok(fields)
}

/// The one set-up at the highest field `top` and its solve with eigenvectors, the probe: the
/// set-up sizes the memory check of the whole run (`points` fields, one solve with
/// eigenvectors and velocity elements per worker thread at a time; the transitions the run
/// holds are checked once the probe has counted them, [`check_held`]); the probe's typical
/// Landau spacing sets the default width and window.
fn probe<'m>(
    a: &OpticsArgs,
    lm: &'m LoadedModel,
    top: FieldPoint,
    points: usize,
    settings: &Settings,
) -> CliResult<(ladderfan::problem::Problem<'m>, Spectrum)> {
    let mut settings = settings.clone();
    settings.vectors = ladderfan::Vectors::Compute;
    let probe = common::set_up(lm, a.solve.trunc.cutoff, top, &settings)?;
    common::check_footprint(
        lm,
        &probe,
        "optics",
        if points > 1 { "--points" } else { "--cutoff" },
        &optics_footprint(points, 0, 0),
        None,
    )?;
    let spectrum = Spectrum::solve(&probe)?;
    Ok((probe, spectrum))
}

/// The memory of `optics` over `points` fields (src/memory.rs): one spectrum with
/// eigenvectors per worker thread at a time, the transitions (`transitions` per field at
/// most) of `held` fields kept.
fn optics_footprint(points: usize, held: usize, transitions: u64) -> ladderfan::memory::Footprint {
    ladderfan::memory::Footprint::Optics {
        points: points as u64,
        in_flight: rayon::current_num_threads() as u64,
        held_points: held as u64,
        transitions,
    }
}

/// The memory check of the transitions the run holds (`held` of its fields: all of them for
/// the whole record, two batches when streamed), counted at the probe (the highest field
/// `top`, whose Landau levels are the sparsest) and scaled by `|top| / |lowest|`, since the
/// levels in a fixed energy window grow at most as 1/B (a parabolic band; sqrt(1/B) for a
/// Dirac cone).
#[allow(clippy::too_many_arguments)]
fn check_held(
    lm: &LoadedModel,
    problem: &ladderfan::problem::Problem<'_>,
    probe: &Spectrum,
    fermi: &FermiSettings,
    optics: &OpticsSettings,
    values: &[f64],
    top: f64,
    held: usize,
) -> CliResult {
    let sol = fermi_level(&lm.model, probe, fermi)?;
    let at_top = transitions(&lm.model, probe, &sol.occupation, optics)?.len();
    let lowest = values.iter().map(|v| v.abs()).fold(f64::INFINITY, f64::min);
    let per_field = (at_top as f64 * (top.abs() / lowest).max(1.0)).ceil() as u64 + 1;
    common::check_footprint(
        lm,
        problem,
        "optics",
        if values.len() > 1 {
            "--points"
        } else {
            "--cutoff"
        },
        &optics_footprint(values.len(), held, per_field),
        None,
    )
}

/// Write the files of `--out` and print the result (JSON or the text summary).
fn output(a: &OpticsArgs, lm: &LoadedModel, json: &OpticsRecord) -> CliResult {
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("transitions.csv", to_csv(lm, json)?)?;
        let fig = if json.points.len() > 1 {
            let density = json.points[0].fermi.density_cm2;
            fan_plot(lm, json, density, FanOutline::of_record(json), 1.0)
        } else {
            stick_plot(lm, json)
        };
        let formats = super::plot::formats(&a.output)?;
        super::plot::add_figure(&mut files, "transitions", &fig, &formats)?;
        written = files.write_all(dir)?;
    }
    if a.output.json {
        return emit_json(json);
    }
    let mut text = summary_head(lm, json);
    text.push_str(&match json.points.as_slice() {
        [one] => field_table(lm, json, one, a.count),
        [first, .., last] => fan_line(lm, json, first.field, last.field, json.points.len(), {
            json.points.iter().map(|p| p.transitions.len()).sum()
        }),
        [] => String::new(),
    });
    for p in written {
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&text)
}

/// Run `ladderfan optics`.
pub fn run(a: &OpticsArgs) -> CliResult {
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let u = lm.model.units();
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    let (values, cutoff, mem) = fields(a, &lm, &r)?;
    let top = values
        .iter()
        .copied()
        .max_by(|x, y| x.abs().total_cmp(&y.abs()))
        .unwrap_or(r.field);
    let mut settings = Settings::with_cutoff(cutoff);
    settings.memory_limit_mib = mem;
    // a sweep without --json streams: its transitions are written as the fields finish
    let streamed = values.len() > 1 && !a.output.json;
    let held = if streamed {
        2 * ladderfan::sweep::default_batch()
    } else {
        values.len()
    };
    let (problem, probe) = probe(
        a,
        &lm,
        FieldPoint {
            field: top,
            kz: r.kz,
        },
        values.len(),
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
    check_held(&lm, &problem, &probe, &fs, &opts, &values, top, held)?;
    let reference_energy = probe.reference_energy;
    // the probe's eigenvectors and set-up are not needed any more
    drop((problem, probe));
    let mut json = OpticsRecord {
        command: "optics",
        model: ModelRecord::new(&lm.model, &lm.origin),
        units: UnitsRecord::new(&lm.model),
        velocity_unit: match u {
            ladderfan::units::Units::Lab => "m/s",
            ladderfan::units::Units::Natural => "c",
        },
        kz: r.kz,
        cutoff,
        reference_energy,
        temperature_k: fs.temperature_k,
        max_energy,
        convention: CONVENTION,
        points: Vec::new(),
    };
    let job = stream::Job {
        points: &pts,
        settings: &settings,
        fermi: &fs,
        optics: &opts,
    };
    if streamed {
        return stream::run(a, &lm, json.in_units(lm.shown), &job);
    }
    let bar = Progress::new("optics", pts.len(), "fields");
    let fan = transition_sweep_with(&lm.model, &pts, &settings, &fs, &opts, &|| bar.tick());
    bar.finish();
    json.points = OpticsPointRecord::fan(&fan?, u);
    output(a, &lm, &json.in_units(lm.shown))
}

fn pol_name(p: Polarisation) -> &'static str {
    match p {
        Polarisation::SigmaPlus => "sigma+",
        Polarisation::SigmaMinus => "sigma-",
        Polarisation::Mixed => "mixed",
    }
}

/// The first lines of the text: model, kz, cutoff, temperature, convention, units.
fn summary_head(lm: &LoadedModel, j: &OpticsRecord) -> String {
    let u = lm.model.units();
    let eu = lm.shown.energy.label();
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
    s
}

/// The line of a transition fan: `points` fields from `first` to `last` (output unit),
/// `transitions` allowed transitions in all.
fn fan_line(
    lm: &LoadedModel,
    j: &OpticsRecord,
    first: f64,
    last: f64,
    points: usize,
    transitions: usize,
) -> String {
    let eu = lm.shown.energy.label();
    format!(
        "transition fan: {points} fields from {first} to {last} {}, {transitions} allowed transitions below {} {eu}\n",
        lm.shown.field.label(),
        fmt_num(j.max_energy, 6)
    )
}

/// The table of the transitions at one field, the `count` strongest (0: all) in energy order.
fn field_table(lm: &LoadedModel, j: &OpticsRecord, p: &OpticsPointRecord, count: usize) -> String {
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
    let mut s = String::new();
    s.push_str(&format!(
        "field {} {}: Fermi level {} {eu}, filling factor {}, {} allowed transitions below {} {eu}\n\n",
        p.field,
        fu,
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
