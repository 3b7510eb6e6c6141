//! `ladderfan converge`: how the levels depend on the cutoff, and the cutoff a tolerance needs.
//!
//! Two modes ([`Mode`]):
//! * `study` (default): solve at a list of cutoffs (`--cutoffs 25,50,100`, or `--steps`
//!   doublings ending at `--cutoff`), follow the selected levels, and tabulate bounds, the decay
//!   rate of the change between cutoffs and the cutoff needed for `--tolerance`. The actual
//!   error is measured against the closed form when the model has one, else against the
//!   largest cutoff. `--out DIR` writes `converge.csv`, `converge.json` and `converge.svg`.
//! * `auto`: grow the cutoff from `--cutoff` until every selected level meets `--tolerance`
//!   (confirmed by the next cutoff), up to `--max-cutoff` and `--memory-limit-mib`; exits with
//!   code 1 and a clear message when the tolerance cannot be met.
//!
//! The selection is `--window LO,HI` (energies relative to the reference energy) or the
//! `--count` levels nearest `--target`.

use super::common::{
    self, bad_flag, emit, emit_json, fmt_num, load_model, CliResult, ModelArgs, OutputArgs,
    OutputFiles, SolveArgs, TruncArgs,
};
use clap::{Args, ValueEnum};
use ladderfan::records::{AutoJson, AutoLevelJson, StudyJson};
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::trust::converge::{
    auto_with, study_with, AutoResult, AutoSettings, BoundChoice, ExactValues, NeededCutoff,
    Selection, Study,
};
use ladderfan::trust::report::study_json;
use ladderfan::trust::window::EnergyWindow;
use ladderfan::Settings;

mod figure;
mod files;
mod tables;
use files::{auto_csv, study_file};
pub use tables::{auto_table, study_table};

/// What `converge` does.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Mode {
    /// Tabulate the selected levels over a list of cutoffs.
    Study,
    /// Grow the cutoff until the selected levels meet the tolerance.
    Auto,
}

/// Which bound the automatic mode requires below the tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BoundFlag {
    /// Residual (Weinstein) bound: no assumption.
    Residual,
    /// The deciding bound (default): Kato-Temple where its gap is certified and it is
    /// sharper, else the residual bound.
    KatoTemple,
}

/// Flags of `ladderfan converge`.
#[derive(Debug, Clone, Args)]
pub struct ConvergeArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Magnetic field along z, signed, in the model's field unit (T, or B_c in natural units).
    /// A suffix picks the unit: `1T`, `2.2e-10Bc`.
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub field: Option<ladderfan::units::FieldValue>,
    /// Wave number along the field, in 1/length of the model's units.
    #[arg(long, allow_negative_numbers = true)]
    pub kz: Option<f64>,
    /// study: tabulate over cutoffs; auto: grow the cutoff until the tolerance is met.
    #[arg(long, value_enum, default_value_t = Mode::Study)]
    pub mode: Mode,
    /// Cutoffs of a study, comma-separated (e.g. 25,50,100); overrides --cutoff and --steps.
    #[arg(value_parser = crate::cli::common::parse_count, long, value_delimiter = ',', value_name = "N,N,...")]
    pub cutoffs: Vec<usize>,
    /// study: the largest cutoff of the doubling list; auto: the first cutoff tried.
    #[arg(value_parser = crate::cli::common::parse_count, long)]
    pub cutoff: Option<usize>,
    /// Number of cutoffs of a study's doubling list (cutoff / 2^(steps-1), ..., cutoff).
    #[arg(long, default_value_t = 5)]
    pub steps: u32,
    /// auto: the largest cutoff allowed.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 1 << 20)]
    pub max_cutoff: usize,
    /// Memory limit of the whole study or of each automatic step (every spectrum kept is counted), MiB.
    #[arg(long, value_name = "MIB")]
    pub memory_limit_mib: Option<u64>,
    /// Relative tolerance: a level is converged when its bound is at most
    /// tolerance x max(|E|, typical Landau spacing).
    #[arg(long, default_value_t = ladderfan::policy::DEFAULT_TOLERANCE)]
    pub tolerance: f64,
    /// Energy window LO,HI relative to the reference energy (model's energy unit); replaces
    /// --count/--target.
    #[arg(
        long,
        value_delimiter = ',',
        allow_negative_numbers = true,
        value_name = "LO,HI"
    )]
    pub window: Vec<f64>,
    /// Number of levels to follow, those nearest --target.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 10)]
    pub count: usize,
    /// Target energy relative to the reference energy for --count.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub target: f64,
    /// auto: which bound must meet the tolerance.
    #[arg(long, value_enum, default_value_t = BoundFlag::KatoTemple)]
    pub bound: BoundFlag,
    /// Also put the wall-clock seconds into the JSON result (without it two runs give the
    /// same JSON).
    #[arg(long)]
    pub timings: bool,
    #[command(flatten)]
    pub output: OutputArgs,
}

fn selection(a: &ConvergeArgs) -> CliResult<Selection> {
    match a.window.as_slice() {
        [] => {
            if a.count == 0 {
                return Err(bad_flag("--count", "0 levels; follow at least one level"));
            }
            Ok(Selection::Nearest {
                target: common::finite_flag("--target", a.target)?,
                count: a.count,
            })
        }
        [lo, hi] => Ok(Selection::Window(
            EnergyWindow::new(*lo, *hi).map_err(|e| bad_flag("--window", e.to_string()))?,
        )),
        other => Err(bad_flag(
            "--window",
            format!(
                "{} values given; write two energies LO,HI (e.g. --window -50,50)",
                other.len()
            ),
        )),
    }
}

/// The cutoff list of a study: `--cutoffs`, else `--steps` halvings of `top`.
fn study_cutoffs(a: &ConvergeArgs, top: usize) -> CliResult<Vec<usize>> {
    if !a.cutoffs.is_empty() {
        return Ok(a.cutoffs.clone());
    }
    if a.steps == 0 || a.steps > 20 {
        return Err(bad_flag("--steps", "give between 1 and 20 cutoffs"));
    }
    let mut v: Vec<usize> = (0..a.steps).map(|k| top >> k).filter(|&n| n > 0).collect();
    v.reverse();
    Ok(v)
}

fn auto_json<'a>(
    lm: &common::LoadedModel,
    res: &'a AutoResult,
    tol: f64,
    timings: bool,
) -> AutoJson<'a> {
    let s = &res.spectrum;
    AutoJson {
        command: "converge",
        mode: "auto",
        model: ModelRecord::new(&lm.model, &lm.origin),
        units: UnitsRecord::new(&lm.model).shown(lm.shown),
        field: s.point.field,
        kz: s.point.kz,
        tolerance: tol,
        cutoff: res.cutoff,
        first_converged_cutoff: res.first_converged_cutoff,
        matrix_dimension: res.matrix_dimension,
        seconds: timings.then_some(res.seconds),
        step_seconds: timings.then(|| res.history.iter().map(|h| h.seconds).collect()),
        reference_energy: s.reference_energy,
        history: &res.history,
        levels: res
            .selected
            .iter()
            .map(|&i| {
                let l = &s.levels[i];
                AutoLevelJson {
                    energy: l.energy,
                    bound: l.bound,
                    kato_temple: l.kato_temple,
                    bound_from: l.deciding_bound().1.name(),
                    state: l.convergence,
                    sector: format!("{}:{}", l.sector.class, l.sector.label),
                    orbital: l.orbital,
                    component: l.component as usize,
                }
            })
            .collect(),
        warnings: &res.warnings,
    }
}

/// Run `ladderfan converge`.
pub fn run(a: &ConvergeArgs) -> CliResult {
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let sel = selection(a)?;
    if !(a.tolerance.is_finite() && a.tolerance > 0.0) {
        return Err(bad_flag(
            "--tolerance",
            format!("{} is not a positive number; use e.g. 1e-9", a.tolerance),
        ));
    }
    let top_default = match a.mode {
        Mode::Study => 256,
        Mode::Auto => 16,
    };
    let requested = a
        .cutoffs
        .iter()
        .copied()
        .max()
        .or(a.cutoff)
        .unwrap_or(top_default);
    // validate field, kz, cutoff and memory limit through the shared resolver
    let solve = SolveArgs {
        field: a.field,
        kz: a.kz,
        trunc: TruncArgs {
            cutoff: Some(requested),
            memory_limit_mib: a.memory_limit_mib,
        },
    };
    // the memory of the whole study (or of each automatic step) is checked by the library
    let r = common::resolve_unchecked(&lm, &solve, common::default_field(&lm.model))?;
    let mut base = Settings::with_cutoff(r.cutoff);
    base.tolerance = a.tolerance;
    base.memory_limit_mib = r.memory_limit_mib;
    match a.mode {
        Mode::Study => run_study(a, &lm, &r, &base, sel, requested),
        Mode::Auto => run_auto(a, &lm, &r, base, sel),
    }
}

/// `--mode study`: the levels at every cutoff of the list, as a table, JSON or files.
fn run_study(
    a: &ConvergeArgs,
    lm: &common::LoadedModel,
    r: &common::Resolved,
    base: &Settings,
    sel: Selection,
    requested: usize,
) -> CliResult {
    let cutoffs = study_cutoffs(a, requested)?;
    let bar = super::progress::Progress::new("converge", cutoffs.len(), "cutoffs");
    let st = study_with(
        &lm.model,
        r.point(),
        base,
        &cutoffs,
        sel,
        ExactValues::ClosedFormIfKnown,
        &|| bar.tick(),
    );
    bar.finish();
    let st = study_in_units(st?, lm.shown);
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("converge.csv", study_file(lm, r, &st)?)?;
        files.add("converge.json", study_json(&st)?);
        let formats = super::plot::formats(&a.output)?;
        super::plot::add_figure(
            &mut files,
            "converge",
            &figure::convergence_plot(&st),
            &formats,
        )?;
        written = files.write_all(dir)?;
    }
    if a.output.json {
        emit_json(&StudyJson {
            command: "converge",
            mode: "study",
            model: ModelRecord::new(&lm.model, &lm.origin),
            units: UnitsRecord::new(&lm.model).shown(lm.shown),
            study: &st,
            seconds: a.timings.then_some(st.seconds.as_slice()),
        })
    } else {
        let mut text = study_table(&st, &lm.origin, lm.model.units(), lm.shown);
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        emit(&text)
    }
}

/// `--mode auto`: raise the cutoff until the selected levels converge.
fn run_auto(
    a: &ConvergeArgs,
    lm: &common::LoadedModel,
    r: &common::Resolved,
    base: Settings,
    sel: Selection,
) -> CliResult {
    let unit = lm.shown.energy.label();
    if r.cutoff > a.max_cutoff {
        return Err(bad_flag(
            "--max-cutoff",
            format!(
                "the start cutoff {} exceeds --max-cutoff {}; raise --max-cutoff or lower \
                 --cutoff",
                r.cutoff, a.max_cutoff
            ),
        ));
    }
    let mut s = AutoSettings::new(sel, a.tolerance);
    s.start_cutoff = r.cutoff;
    s.max_cutoff = a.max_cutoff;
    s.memory_limit_mib = r.memory_limit_mib;
    s.bound = match a.bound {
        BoundFlag::Residual => BoundChoice::Residual,
        BoundFlag::KatoTemple => BoundChoice::KatoTemple,
    };
    s.base = base;
    let bar = super::progress::Progress::open_ended("converge --mode auto", "cutoffs");
    let res = auto_with(&lm.model, r.point(), &s, &|| bar.tick());
    bar.finish();
    let res = auto_in_units(res?, lm.shown);
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("converge-auto.csv", auto_csv(lm, &res)?)?;
        let formats = super::plot::formats(&a.output)?;
        super::plot::add_figure(
            &mut files,
            "converge-auto",
            &figure::auto_plot(&res, unit, a.tolerance),
            &formats,
        )?;
        written = files.write_all(dir)?;
    }
    if a.output.json {
        emit_json(&auto_json(lm, &res, a.tolerance, a.timings))
    } else {
        let mut text = auto_table(&res, unit, lm.shown.field.label(), &lm.origin, a.tolerance);
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        emit(&text)
    }
}

/// The study in the output units `o`: energies, bounds, changes and errors times
/// [`ladderfan::units::OutputUnits::energy_factor`], the field times
/// [`ladderfan::units::OutputUnits::field_factor`]; rates and cutoffs unchanged.
fn study_in_units(mut st: Study, o: ladderfan::units::OutputUnits) -> Study {
    let (e, f) = (o.energy_factor(), o.field_factor());
    st.energy_unit = o.energy.label().to_string();
    st.point.field *= f;
    for l in &mut st.levels {
        l.reference_value *= e;
        for x in &mut l.entries {
            for v in [
                &mut x.energy,
                &mut x.bound,
                &mut x.kato_temple,
                &mut x.change,
                &mut x.actual_error,
            ] {
                *v = v.map(|y| y * e);
            }
        }
    }
    st
}

/// The automatic result in the output units `o`: the energies and bounds of the spectrum's
/// levels and its reference energy times the energy factor, its field times the field factor
/// (bound over tolerance is a ratio and stays).
fn auto_in_units(mut res: AutoResult, o: ladderfan::units::OutputUnits) -> AutoResult {
    let (e, f) = (o.energy_factor(), o.field_factor());
    let s = &mut res.spectrum;
    s.point.field *= f;
    s.reference_energy *= e;
    for l in &mut s.levels {
        l.energy *= e;
        l.bound *= e;
        l.kato_temple = l.kato_temple.map(|k| k * e);
    }
    res
}
