//! `ladderfan optics`: allowed magneto-optical transitions at one field (a stick spectrum), or
//! against the field (the transition-energy fan) with `--b-max`.

use super::common::{
    self, bad_flag, csv_file, csv_meta, emit, emit_json, fmt_num, load_model, CliResult, CsvFile,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use super::dos::FermiArgs;
use super::progress::Progress;
use clap::Args;
use ladderfan::observables::optics::{
    transition_sweep_with, OpticsSettings, Polarisation, TransitionPoint,
};
use ladderfan::records::meta::Column;
use ladderfan::records::{
    transition_record, FermiRecord, ModelRecord, OpticsPointRecord, OpticsRecord, UnitsRecord,
};
use ladderfan::{FieldPoint, Settings, Spectrum};

mod plot;
use plot::{fan_plot, stick_plot};
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
    let fields = match common::field_in(lm, a.b_max) {
        None => (vec![r.field], r.cutoff, r.memory_limit_mib),
        Some(b_max) => {
            let b_max = common::finite_flag("--b-max", b_max)?;
            let b_min = common::finite_flag(
                "--b-min",
                common::field_in(lm, a.b_min).unwrap_or(b_max / 10.0),
            )?;
            let v = common::grid_values("--b-min", b_min, b_max, a.points, common::Grid::Linear)?;
            if v.contains(&0.0) || b_min.signum() != b_max.signum() {
                return Err(bad_flag(
                    "--b-min",
                    "the sweep crosses B = 0, where there are no Landau levels; choose --b-min and --b-max of one sign",
                ));
            }
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

/// The records of every field, strengths relative to the strongest transition of the run.
fn point_records(fan: &[TransitionPoint], u: ladderfan::units::Units) -> Vec<OpticsPointRecord> {
    let max = fan
        .iter()
        .flat_map(|p| p.transitions.iter())
        .map(|t| t.strength_x + t.strength_y)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    fan.iter()
        .map(|p| OpticsPointRecord {
            field: p.field,
            fermi: FermiRecord::new(u, &p.fermi),
            transitions: p
                .transitions
                .iter()
                .map(|t| transition_record(t, max))
                .collect(),
        })
        .collect()
}

/// The one set-up at the highest field `top`: it sizes the memory check of the whole run
/// (`points` fields, eigenvectors and velocity elements kept) and its solve, the probe,
/// gives the typical Landau spacing that sets the default width and window.
fn probe(
    a: &OpticsArgs,
    lm: &LoadedModel,
    top: FieldPoint,
    points: usize,
    settings: &Settings,
) -> CliResult<Spectrum> {
    // the one set-up at the highest field: it sizes the memory check of the whole run and its
    // solve (the typical Landau spacing there) sets the default width and window
    let probe = common::set_up(lm, a.solve.trunc.cutoff, top, settings)?;
    // eigenvectors and velocity elements of every field are kept (src/memory.rs)
    common::check_footprint(
        lm,
        &probe,
        "optics",
        if points > 1 { "--points" } else { "--cutoff" },
        &ladderfan::memory::Footprint::Optics {
            points: points as u64,
        },
        None,
    )?;
    Ok(Spectrum::solve(&probe)?)
}

/// Write the files of `--out` and print the result (JSON or the text summary).
fn output(a: &OpticsArgs, lm: &LoadedModel, json: &OpticsRecord) -> CliResult {
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("transitions.csv", to_csv(lm, json)?)?;
        let fig = if json.points.len() > 1 {
            fan_plot(lm, json)
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
    let mut text = summary(lm, json, a.count);
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
    let probe = probe(
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
    let bar = Progress::new("optics", pts.len(), "fields");
    let fan = transition_sweep_with(&lm.model, &pts, &settings, &fs, &opts, &|| bar.tick());
    bar.finish();
    let fan = fan?;
    let json = OpticsRecord {
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
        points: point_records(&fan, u),
    };
    output(a, &lm, &json.in_units(lm.shown))
}

fn pol_name(p: Polarisation) -> &'static str {
    match p {
        Polarisation::SigmaPlus => "sigma+",
        Polarisation::SigmaMinus => "sigma-",
        Polarisation::Mixed => "mixed",
    }
}

fn summary(lm: &LoadedModel, j: &OpticsRecord, count: usize) -> String {
    let u = lm.model.units();
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
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
            fu,
            fmt_num(j.max_energy, 6)
        ));
        return s;
    }
    let p = &j.points[0];
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

/// The columns of `transitions.csv`, in order (`vu`: the velocity unit, e.g. `m/s`).
fn transition_columns(lm: &LoadedModel, vu: &str) -> Vec<Column> {
    let cu = common::column_units(lm);
    let e = cu.energy_unit;
    let v = vu.replace('/', "_per_").replace(' ', "_");
    let sq = format!("({vu})^2");
    vec![
        Column::new(cu.field_column(), cu.field_unit, "magnetic field B"),
        Column::new(
            cu.energy_valued("fermi_energy"),
            e,
            "Fermi level at this field",
        ),
        Column::new("filling_factor", "1", "filling factor nu at this field"),
        Column::new(cu.energy_column(), e, "transition energy E_to - E_from"),
        Column::new("from_label", "", "Landau label of the initial level"),
        Column::new("to_label", "", "Landau label of the final level"),
        Column::new(
            "transition",
            "",
            "the transition as printed, LL(from) -> LL(to)",
        ),
        Column::new("from_orbital", "1", "dominant orbital of the initial level"),
        Column::new("to_orbital", "1", "dominant orbital of the final level"),
        Column::new(
            cu.energy_valued("from_energy"),
            e,
            "energy of the initial level",
        ),
        Column::new(
            cu.energy_valued("to_energy"),
            e,
            "energy of the final level",
        ),
        Column::new("occupation_difference", "1", "o_i - o_f"),
        Column::new(
            format!("strength_x_{v}_sq"),
            sq.clone(),
            "|<f|v_x|i>|^2 (o_i - o_f)",
        ),
        Column::new(
            format!("strength_y_{v}_sq"),
            sq.clone(),
            "|<f|v_y|i>|^2 (o_i - o_f)",
        ),
        Column::new(
            format!("strength_sigma_plus_{v}_sq"),
            sq.clone(),
            "|<f|e+.v|i>|^2 (o_i - o_f), e+ = (x + i y)/sqrt2",
        ),
        Column::new(
            format!("strength_sigma_minus_{v}_sq"),
            sq,
            "|<f|e-.v|i>|^2 (o_i - o_f), e- = (x - i y)/sqrt2",
        ),
        Column::new(
            "relative_strength",
            "1",
            "strength relative to the strongest at this field",
        ),
        Column::new(
            "oscillator_strength_x",
            "1",
            "dimensionless oscillator strength, x polarisation",
        ),
        Column::new(
            "polarisation",
            "",
            "the circular polarisation that carries it (or both)",
        ),
    ]
}

/// `transitions.csv`: one row per field and transition; conventions go to its sidecar.
fn to_csv(lm: &LoadedModel, j: &OpticsRecord) -> CliResult<CsvFile> {
    let eu = lm.shown.energy.label();
    let meta = csv_meta(
        lm,
        "optics",
        vec![
            CONVENTION.to_string(),
            format!("energies relative to {} {eu}", j.reference_energy),
        ],
        vec![format!(
            "kz {}, cutoff {}, T {} K",
            j.kz, j.cutoff, j.temperature_k
        )],
    );
    let mut rec = Vec::new();
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
    csv_file(meta, transition_columns(lm, j.velocity_unit), &rec)
}
