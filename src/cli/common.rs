//! Helpers shared by every command: errors and exit codes, model loading, solve flags and
//! their resolution. Output ([`super::output`]), rendering ([`super::render`]) and flag parsers
//! ([`super::parse`]) live in their own files and are re-exported here.

use clap::{Args, ValueEnum};
use ladderfan::modelfile::{self, FileDefaults, DEFAULT_CUTOFF, DEFAULT_MEMORY_LIMIT_MIB};
use ladderfan::problem::Problem;
use ladderfan::{Error, FieldPoint, Model, Settings, Spectrum};
use serde::Serialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

pub use super::output::{emit, emit_json, OutputFiles, SpilledRows};
pub use super::parse::{field_in, parse_count, parse_int_list};
pub use super::render::{
    branch_text, character_text, column_units, csv_file, csv_file_from_iter, csv_line, csv_meta,
    fmt_num, inverse_length, landau_branch_text, nearest_levels, table, weight_columns, CsvFile,
    Shown,
};

/// Exit code for a run whose verification (closed form, convergence) failed.
pub const EXIT_VERIFICATION: i32 = 1;
/// Exit code for bad input (model file, flags, values).
pub const EXIT_BAD_INPUT: i32 = 2;
/// Exit code for an internal error (a panic: a bug in ladderfan).
pub const EXIT_INTERNAL: i32 = 3;

/// What can end a command.
#[derive(Debug)]
pub enum CliError {
    /// Bad input or a library error caused by it (exit 2).
    Input(Error),
    /// The computation ran but a check failed (exit 1).
    Verification(String),
    /// stdout was closed (e.g. piped into `head`): stop quietly (exit 0).
    BrokenPipe,
}

impl From<Error> for CliError {
    fn from(e: Error) -> Self {
        CliError::Input(e)
    }
}

impl CliError {
    /// Exit code: 1 for verification failures and numerical failures, 2 for bad input.
    pub fn exit_code(&self) -> i32 {
        match self {
            CliError::Verification(_) => EXIT_VERIFICATION,
            CliError::Input(Error::NotConverged { .. } | Error::Numerical { .. }) => {
                EXIT_VERIFICATION
            }
            CliError::Input(_) => EXIT_BAD_INPUT,
            CliError::BrokenPipe => 0,
        }
    }

    /// The one-line message (without the `ladderfan: error: ` prefix).
    pub fn message(&self) -> String {
        let m = match self {
            // the library states the physics; the command line knows the flag that sets it
            CliError::Input(e @ Error::ZeroField { .. }) => format!("{e} (pass e.g. --field 1)"),
            CliError::Input(e) => e.to_string(),
            CliError::Verification(m) => format!("verification failed: {m}"),
            CliError::BrokenPipe => String::new(),
        };
        // one line, and no single word (a quoted input) longer than a few dozen characters
        m.split_whitespace()
            .map(|w| {
                if w.chars().count() > 200 {
                    ladderfan::limits::excerpt(w)
                } else {
                    w.to_string()
                }
            })
            .collect::<Vec<_>>()
            .join(" ")
    }
}

/// Result of a command.
pub type CliResult<T = ()> = std::result::Result<T, CliError>;

/// A bad flag value, located at the flag.
pub fn bad_flag(flag: &str, message: impl Into<String>) -> CliError {
    CliError::Input(Error::Parse {
        location: flag.into(),
        message: message.into(),
    })
}

/// Where the model comes from: a file or a built-in with overrides.
#[derive(Debug, Clone, Args)]
pub struct ModelArgs {
    /// Model file (TOML; see the README, section Model files).
    #[arg(long, value_name = "FILE", conflicts_with = "builtin")]
    pub model: Option<PathBuf>,
    /// Built-in model by name (list them with `ladderfan models`).
    #[arg(long, value_name = "NAME")]
    pub builtin: Option<String>,
    /// Override a parameter: `--set key=value` (repeatable; value may be an expression).
    /// With --model it overrides a [set] entry of a built-in file or a [parameters] entry.
    #[arg(long = "set", value_name = "KEY=VALUE")]
    pub set: Vec<String>,
}

/// Field, kz and truncation flags.
#[derive(Debug, Clone, Args)]
pub struct SolveArgs {
    /// Magnetic field along z, signed: a plain number is in the model's field unit (T, or B_c
    /// in natural units); a suffix picks the unit (`1T`, `2.2e-10Bc`).
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub field: Option<ladderfan::units::FieldValue>,
    /// Wave number along the field, in 1/length of the model's units.
    #[arg(long, allow_negative_numbers = true)]
    pub kz: Option<f64>,
    #[command(flatten)]
    pub trunc: TruncArgs,
}

/// Truncation flags.
#[derive(Debug, Clone, Args)]
pub struct TruncArgs {
    /// Orbital cutoff N (orbitals n = 0..N-1 per component).
    #[arg(long, value_parser = parse_count)]
    pub cutoff: Option<usize>,
    /// Memory limit of the whole command (estimated before any work, see the README, section Memory), MiB.
    #[arg(long, value_name = "MIB")]
    pub memory_limit_mib: Option<u64>,
}

/// The output-unit flags (`--energy-unit`, `--field-unit`): part of [`OutputArgs`], and taken
/// alone by `verify`, which writes no files.
#[derive(Debug, Clone, Default, Args)]
pub struct UnitArgs {
    /// Energy unit of every printed or written energy: meV, eV, K, cm-1, THz, or mc2 (natural-unit
    /// models only; their m c^2 is the electron's, so they may also be shown in lab units).
    /// Energies given in flags (windows, Fermi energy) stay in the model's unit.
    #[arg(long, value_name = "UNIT", value_parser = crate::cli::parse::parse_energy_unit)]
    pub energy_unit: Option<ladderfan::units::EnergyUnit>,
    /// Field unit of every printed or written field: T, or Bc (B_c = 4.414e9 T, the
    /// electron's critical field). Default: the model's own.
    #[arg(long, value_name = "UNIT", value_parser = crate::cli::parse::parse_field_unit)]
    pub field_unit: Option<ladderfan::units::FieldUnit>,
}

impl UnitArgs {
    /// The output units of these flags for `lm` ([`ladderfan::units::OutputUnits`]).
    ///
    /// # Errors
    /// An m c^2 energy unit for a lab model (exit 2).
    pub fn units(&self, lm: &LoadedModel) -> CliResult<ladderfan::units::OutputUnits> {
        Ok(ladderfan::units::OutputUnits::new(
            lm.model.units(),
            self.energy_unit,
            self.field_unit,
        )?)
    }
}

/// Output flags every command takes.
#[derive(Debug, Clone, Args)]
pub struct OutputArgs {
    /// Print a machine-readable JSON result on stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Directory for CSV and SVG files (created if needed; files are written whole or not at all).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    #[command(flatten)]
    pub units: UnitArgs,
    /// Figure formats written into `--out` by commands that draw: a comma-separated list of
    /// svg, png, pdf (PNG at twice the SVG's size; text in the shipped DejaVu Sans font).
    #[arg(long, value_name = "LIST", default_value = "svg")]
    pub format: String,
}

impl OutputArgs {
    /// The output units of these flags for `lm` ([`ladderfan::units::OutputUnits`]).
    pub fn units(&self, lm: &LoadedModel) -> CliResult<ladderfan::units::OutputUnits> {
        self.units.units(lm)
    }
}

/// A model ready to solve, with where it came from and the file's solve defaults.
#[derive(Debug, Clone)]
pub struct LoadedModel {
    /// The model.
    pub model: Model,
    /// Solve defaults from the file.
    pub defaults: FileDefaults,
    /// `file PATH` or `builtin NAME` with overrides, for headers.
    pub origin: String,
    /// The model file's path, when there is one (errors about its `[defaults]` point into it).
    pub file: Option<String>,
    /// The units of the output edge (`--energy-unit`, `--field-unit`; the model's own until
    /// a command sets them with [`LoadedModel::show_in`]).
    pub shown: ladderfan::units::OutputUnits,
}

impl LoadedModel {
    /// Set the output units from the command's output flags.
    ///
    /// # Errors
    /// An m c^2 energy unit for a lab model (exit 2).
    pub fn show_in(&mut self, output: &OutputArgs) -> CliResult {
        self.shown = output.units(self)?;
        Ok(())
    }
}

fn parse_set(items: &[String]) -> CliResult<Vec<(String, String)>> {
    items
        .iter()
        .map(|s| {
            let (k, v) = s.split_once('=').ok_or_else(|| {
                bad_flag(
                    "--set",
                    format!("'{s}' is not KEY=VALUE; write e.g. --set mass_mev=5"),
                )
            })?;
            let (k, v) = (k.trim(), v.trim());
            if k.is_empty() || v.is_empty() {
                return Err(bad_flag(
                    "--set",
                    format!("'{s}' has an empty key or value; write e.g. --set mass_mev=5"),
                ));
            }
            Ok((k.to_string(), v.to_string()))
        })
        .collect()
}

/// The text of a model file, with a remedy for a file that is missing, unreadable, binary
/// or too large.
fn read_model_text(path: &Path) -> CliResult<String> {
    let shown = path.display().to_string();
    let limit = ladderfan::limits::MAX_MODEL_FILE_BYTES;
    let bytes = std::fs::File::open(path)
        .and_then(|f| {
            use std::io::Read;
            let mut b = Vec::new();
            f.take(limit as u64 + 1).read_to_end(&mut b)?;
            Ok(b)
        })
        .map_err(|e| {
            bad_flag(
                "--model",
                format!("cannot read model file {shown}: {e}; give the path of a readable TOML model file"),
            )
        })?;
    if bytes.len() > limit {
        return Err(bad_flag(
            "--model",
            format!(
                "{shown} is larger than {} MiB, the limit for a model file; give the TOML model \
                 file (see the README, section Model files)",
                limit >> 20
            ),
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        bad_flag(
            "--model",
            format!(
                "{shown} is not a text file (byte {at} is not UTF-8); --model takes a TOML \
                 model file (see the README, section Model files)"
            ),
        )
    })
}

/// Load the model from `--model FILE` or `--builtin NAME`, applying `--set` overrides.
///
/// With `--model`, a `builtin = ...` file takes the overrides as extra `[set]` entries, a term
/// file as replacements of `[parameters]` entries (which must exist).
pub fn load_model(args: &ModelArgs) -> CliResult<LoadedModel> {
    let sets = parse_set(&args.set)?;
    match (&args.model, &args.builtin) {
        (Some(path), _) => {
            let text = read_model_text(path)?;
            let name = path.display().to_string();
            let f = modelfile::parse_with_overrides(&name, &text, &sets)?;
            let mut origin = format!("file {name}");
            if !sets.is_empty() {
                origin.push_str(&format!(" with {}", args.set.join(", ")));
            }
            Ok(LoadedModel {
                shown: ladderfan::units::OutputUnits::native(f.model.units()),
                model: f.model,
                defaults: f.defaults,
                origin,
                file: Some(name),
            })
        }
        (None, Some(name)) => {
            let info = ladderfan::models::Origin::find(name).ok_or_else(|| {
                bad_flag(
                    "--builtin",
                    format!(
                        "unknown built-in model '{}'; choose one of {} (see `ladderfan models`)",
                        ladderfan::limits::excerpt(name),
                        ladderfan::models::names().join(", ")
                    ),
                )
            })?;
            let mut values = BTreeMap::new();
            for (k, v) in &sets {
                let x = modelfile::eval_expression(
                    v,
                    info.info().units,
                    &BTreeMap::new(),
                    &format!("--set {k}"),
                )?;
                values.insert(k.clone(), x);
            }
            let model = info.with_values(&values)?.build()?;
            let mut origin = format!("builtin {name}");
            if !sets.is_empty() {
                origin.push_str(&format!(" with {}", args.set.join(", ")));
            }
            Ok(LoadedModel {
                shown: ladderfan::units::OutputUnits::native(model.units()),
                model,
                defaults: FileDefaults::default(),
                origin,
                file: None,
            })
        }
        (None, None) => Err(bad_flag(
            "--model",
            "no model given; pass --model FILE or --builtin NAME (e.g. --builtin dirac2d)",
        )),
    }
}

/// Resolved solve settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resolved {
    /// Field.
    pub field: f64,
    /// kz.
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Memory limit, MiB.
    pub memory_limit_mib: u64,
}

impl Resolved {
    /// Solver settings for these values, with the component weights kept (the level tables
    /// show them).
    pub fn settings(&self) -> Settings {
        let mut s = Settings::with_cutoff(self.cutoff);
        s.memory_limit_mib = self.memory_limit_mib;
        s.weights = ladderfan::Weights::Compute;
        s
    }
    /// The field point.
    pub fn point(&self) -> FieldPoint {
        FieldPoint {
            field: self.field,
            kz: self.kz,
        }
    }
}

/// `s` if every level's energy and bound are finite; otherwise an error (exit 2) naming the
/// first level that is not, since its numbers overflowed double precision.
pub fn finite_spectrum(s: Spectrum) -> CliResult<Spectrum> {
    if let Some((i, l)) = s
        .levels
        .iter()
        .enumerate()
        .find(|(_, l)| !(l.energy.is_finite() && l.bound.is_finite()))
    {
        let (what, value) = if l.energy.is_finite() {
            ("bound", l.bound)
        } else {
            ("energy", l.energy)
        };
        return Err(CliError::Input(Error::BadNumber {
            name: format!(
                "the {what} of level {i} (sector {}:{}, n = {}) at field {:e}",
                l.sector.class, l.sector.label, l.orbital, s.point.field
            ),
            value,
            fix: "the matrix of this run overflows double precision; give coefficients, field \
                  and charge of moderate size, or a smaller cutoff"
                .into(),
        }));
    }
    Ok(s)
}

/// Check a finite flag value.
pub fn finite_flag(flag: &str, v: f64) -> CliResult<f64> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(bad_flag(
            flag,
            format!("{v} is not a finite number; give a finite value"),
        ))
    }
}

/// Combine flags with the file's defaults (flags win), validate, and set up the ONE
/// [`Problem`] of the command's solve at the real (B, kz) with `settings` (one assembly, one
/// symmetry detection, see [`set_up`]); then check the memory of that one solve
/// ([`Problem::check_memory`], the check the solve itself makes). The caller solves the
/// returned problem with [`Spectrum::solve`]: no second set-up.
pub fn resolve_problem<'m>(
    lm: &'m LoadedModel,
    a: &SolveArgs,
    default_field: f64,
    settings: impl FnOnce(&Resolved) -> Settings,
) -> CliResult<(Resolved, Problem<'m>)> {
    let r = resolve_unchecked(lm, a, default_field)?;
    let problem = set_up(lm, a.trunc.cutoff, r.point(), &settings(&r))?;
    problem
        .check_memory()
        .map_err(|e| located_at_cutoff(lm, a.trunc.cutoff, e))?;
    Ok((r, problem))
}

/// The one [`Problem`] of a solve of `lm` at `point` with `settings`: validated, assembled
/// once, sectors detected once. A cutoff or memory refusal is located at the cutoff in use
/// (`flag`: the `--cutoff` flag's value, if given).
pub fn set_up<'m>(
    lm: &'m LoadedModel,
    flag: Option<usize>,
    point: FieldPoint,
    settings: &Settings,
) -> CliResult<Problem<'m>> {
    Problem::new(&lm.model, point, settings).map_err(|e| located_at_cutoff(lm, flag, e))
}

/// A cutoff or memory refusal located at the cutoff in use; other errors unchanged.
fn located_at_cutoff(lm: &LoadedModel, flag: Option<usize>, e: Error) -> CliError {
    match e {
        e @ (Error::CutoffTooSmall { .. } | Error::MemoryLimit { .. }) => {
            bad_flag(&cutoff_location(lm, flag), e.to_string())
        }
        other => CliError::Input(other),
    }
}

/// The resolved flags without a set-up (for commands that check their own footprint from the
/// problem they build, or set up one problem per point); the cutoff must still exceed the
/// model's band.
pub fn resolve_unchecked(
    lm: &LoadedModel,
    a: &SolveArgs,
    default_field: f64,
) -> CliResult<Resolved> {
    let field = finite_flag(
        "--field",
        field_in(lm, a.field)
            .or(lm.defaults.field)
            .unwrap_or(default_field),
    )?;
    if field == 0.0 {
        return Err(bad_flag(
            "--field",
            "the field is 0; Landau levels need a non-zero magnetic field (pass e.g. --field 1)",
        ));
    }
    let kz = finite_flag("--kz", a.kz.or(lm.defaults.kz).unwrap_or(0.0))?;
    let (cutoff, memory_limit_mib) = resolve_trunc(lm, &a.trunc)?;
    Ok(Resolved {
        field,
        kz,
        cutoff,
        memory_limit_mib,
    })
}

/// Cutoff and memory limit from flags and file defaults (flags win; a `--cutoff` flag overrides
/// the file's `[defaults] cutoff`, whatever its value), with the cutoff checked against the
/// model's band. The memory is not checked here: each command checks its whole footprint once
/// ([`check_memory`], or [`resolve`] for one solve).
pub fn resolve_trunc(lm: &LoadedModel, t: &TruncArgs) -> CliResult<(usize, u64)> {
    let cutoff = t.cutoff.or(lm.defaults.cutoff).unwrap_or(DEFAULT_CUTOFF);
    let limit = t
        .memory_limit_mib
        .or(lm.defaults.memory_limit_mib)
        .unwrap_or(DEFAULT_MEMORY_LIMIT_MIB);
    if limit == 0 {
        return Err(bad_flag(
            "--memory-limit-mib",
            "0 MiB; give a positive limit",
        ));
    }
    let needed = lm.model.band() + 1;
    if cutoff < needed {
        return Err(bad_flag(
            &cutoff_location(lm, t.cutoff),
            Error::CutoffTooSmall {
                cutoff,
                needed,
                why: format!(
                    "for a model whose terms reach ladder power {}",
                    lm.model.band()
                ),
            }
            .to_string(),
        ));
    }
    Ok((cutoff, limit))
}

/// Where the cutoff in use was given, for its errors: `--cutoff` for the flag, else the file
/// position of the `[defaults] cutoff` value (`PATH:LINE:COLUMN`).
pub fn cutoff_location(lm: &LoadedModel, flag: Option<usize>) -> String {
    match (flag, lm.defaults.cutoff, lm.defaults.cutoff_at, &lm.file) {
        (None, Some(_), Some((line, col)), Some(path)) => format!("{path}:{line}:{col}"),
        _ => "--cutoff".into(),
    }
}

/// The default field of a model's unit system when neither flag nor file gives one:
/// 5 T in lab units, 0.1 B_c in natural units.
pub fn default_field(m: &Model) -> f64 {
    match m.units() {
        ladderfan::units::Units::Lab => 5.0,
        ladderfan::units::Units::Natural => 0.1,
    }
}

/// The memory check of a whole command (src/memory.rs) whose solves are shaped like the one
/// at `point` with `settings` (a sweep: each point sets up its own problem later; the cutoff,
/// the memory limit and whether weights are kept count): sets up that problem for the estimate
/// and calls [`check_footprint`].
pub fn check_memory(
    lm: &LoadedModel,
    path: &str,
    flag: &str,
    point: FieldPoint,
    settings: &Settings,
    footprint: &ladderfan::memory::Footprint,
    threads: Option<usize>,
) -> CliResult {
    let problem = Problem::new(&lm.model, point, settings)?;
    check_footprint(lm, &problem, path, flag, footprint, threads)
}

/// The remedy of a refused `fan` or `dispersion`, which can also be cut into shards.
const FIX_SHARDED_SWEEP: &str =
    "lower the cutoff, use fewer points (or cut the sweep with --shard K/N), or raise the memory limit";

/// The memory check of a whole command (src/memory.rs): `footprint` of solves shaped like
/// `problem` (its cutoff, its memory limit) on `threads` workers (the pool's size when
/// `None`); a refusal names `path` and is located at `flag`. A command that solves at one
/// point passes the problem it then solves, so nothing is set up twice.
pub fn check_footprint(
    lm: &LoadedModel,
    problem: &Problem<'_>,
    path: &str,
    flag: &str,
    footprint: &ladderfan::memory::Footprint,
    threads: Option<usize>,
) -> CliResult {
    use ladderfan::memory::{self, Footprint};
    let cutoff = problem.settings().cutoff;
    let limit_mib = problem.settings().memory_limit_mib;
    let shape = *problem.shape();
    let threads = threads.unwrap_or_else(rayon::current_num_threads) as u64;
    let bytes = problem.estimate(footprint, threads);
    if memory::to_mib(bytes) <= limit_mib {
        return Ok(());
    }
    // one solve alone too large: the cutoff is to blame (flag or file), not the points
    let single = memory::estimate(
        &shape,
        &Footprint::Solve {
            vectors: matches!(footprint, Footprint::Optics { .. }),
        },
        threads,
    );
    let solve_alone =
        memory::to_mib(single) > limit_mib && !matches!(footprint, Footprint::Export { .. });
    // the cutoff's own location: the file's `[defaults] cutoff` when that is the value in use
    let at_cutoff = if lm.defaults.cutoff == Some(cutoff) {
        cutoff_location(lm, None)
    } else {
        "--cutoff".to_string()
    };
    let export_at_cutoff = matches!(footprint, Footprint::Export { .. }) && flag == "--cutoff";
    let flag = if solve_alone || export_at_cutoff {
        at_cutoff
    } else {
        flag.to_string()
    };
    // the sweeps that can be cut into shards (`SweepArgs::shard`) say so
    let fix_sweep = if matches!(path, "fan" | "dispersion") {
        FIX_SHARDED_SWEEP
    } else {
        memory::FIX_SWEEP
    };
    let (what, fix) = match footprint {
        Footprint::Solve { .. } | Footprint::Table { .. } => (
            format!("{path}: a solve at cutoff {cutoff} ({} levels)", shape.levels),
            memory::FIX_SOLVE,
        ),
        Footprint::Optics {
            points,
            in_flight,
            held_points,
            ..
        } if *points > 1 && !solve_alone => (
            format!(
                "{path}: {points} fields at cutoff {cutoff} ({} levels each with eigenvectors, {} \
                 solved at once, the transitions of {} kept)",
                shape.levels,
                (*in_flight).min(*points),
                (*held_points).min(*points)
            ),
            fix_sweep,
        ),
        Footprint::Sweep { points, .. }
            if *points > 1 && !solve_alone =>
        {
            (
            format!(
                "{path}: {points} points at cutoff {cutoff} ({} levels each, all kept until the end)",
                shape.levels
            ),
            fix_sweep,
            )
        }
        Footprint::Stream {
            points, in_flight, ..
        } if *points > 1 && !solve_alone => (
            format!(
                "{path}: {points} points at cutoff {cutoff} ({} levels each, {} in flight)",
                shape.levels,
                (*in_flight).min(*points)
            ),
            fix_sweep,
        ),
        Footprint::Sweep { .. } | Footprint::Optics { .. } | Footprint::Stream { .. } => (
            format!("{path}: a solve at cutoff {cutoff} ({} levels)", shape.levels),
            memory::FIX_SOLVE,
        ),
        Footprint::Export { entries, .. } => (
            format!("{path}: a matrix of up to {entries} stored entries at cutoff {cutoff}"),
            "lower the cutoff, pass --sector, or raise the memory limit",
        ),
    };
    memory::check(&what, bytes, limit_mib, fix).map_err(|e| bad_flag(&flag, e.to_string()))
}

/// The fields of a `--b-min` .. `--b-max` sweep of `points` evenly spaced values in the
/// model's field unit (`--b-min` defaults to a tenth of `--b-max`), or `None` without
/// `--b-max`. Refused when a bound is not finite or the grid reaches or crosses B = 0.
pub fn field_sweep_grid(
    lm: &LoadedModel,
    b_min: Option<ladderfan::units::FieldValue>,
    b_max: Option<ladderfan::units::FieldValue>,
    points: usize,
) -> CliResult<Option<Vec<f64>>> {
    let Some(b_max) = field_in(lm, b_max) else {
        return Ok(None);
    };
    let b_max = finite_flag("--b-max", b_max)?;
    let b_min = finite_flag("--b-min", field_in(lm, b_min).unwrap_or(b_max / 10.0))?;
    let values = grid_values("--b-min", b_min, b_max, points, Grid::Linear)?;
    if values.contains(&0.0) || b_min.signum() != b_max.signum() {
        return Err(bad_flag(
            "--b-min",
            "the sweep crosses B = 0, where there are no Landau levels; choose --b-min and --b-max of one sign",
        ));
    }
    Ok(Some(values))
}

/// Grid spacing of a sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Grid {
    /// Evenly spaced values.
    Linear,
    /// Evenly spaced logarithms (all values of one sign, none zero).
    Log,
}

impl Grid {
    /// The library's spacing of this grid.
    pub fn spacing(self) -> ladderfan::sweep::Spacing {
        match self {
            Grid::Linear => ladderfan::sweep::Spacing::Linear,
            Grid::Log => ladderfan::sweep::Spacing::Log,
        }
    }
}

/// `points` values from `from` to `to` on `grid`.
pub fn grid_values(
    flag: &str,
    from: f64,
    to: f64,
    points: usize,
    grid: Grid,
) -> CliResult<Vec<f64>> {
    finite_flag(flag, from)?;
    finite_flag(flag, to)?;
    if points < 2 {
        return Err(bad_flag(
            "--points",
            format!("{points} points; a sweep needs at least 2"),
        ));
    }
    if points > ladderfan::limits::MAX_SWEEP_POINTS {
        return Err(bad_flag(
            "--points",
            format!(
                "{points} points is more than the limit of {}; use fewer points (or split the \
                 sweep with --shard)",
                ladderfan::limits::MAX_SWEEP_POINTS
            ),
        ));
    }
    let spacing = grid.spacing();
    if grid == Grid::Log && (from == 0.0 || to == 0.0 || from.signum() != to.signum()) {
        return Err(bad_flag(
            "--grid",
            format!(
                "a log grid from {from} to {to} is impossible; both ends need the same sign and neither may be 0 (or use --grid linear)"
            ),
        ));
    }
    Ok(ladderfan::sweep::grid(from, to, points, spacing)?)
}
