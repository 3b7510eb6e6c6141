//! Helpers shared by every command: model loading, solve flags, output (stdout, JSON, atomic
//! files) and the mapping of errors to exit codes.

use clap::{Args, ValueEnum};
use ladderfan::modelfile::{self, FileDefaults, DEFAULT_CUTOFF, DEFAULT_MEMORY_LIMIT_MIB};
use ladderfan::{Error, FieldPoint, Model, Settings, Spectrum};
use serde::Serialize;
use std::collections::BTreeMap;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

/// Exit code for a run whose verification (closed form, convergence) failed.
pub const EXIT_VERIFICATION: i32 = 1;
/// Exit code for bad input (model file, flags, values).
pub const EXIT_BAD_INPUT: i32 = 2;
/// Exit code for an internal error (a panic: a bug in ladderfan).
pub const EXIT_INTERNAL: i32 = 3;

/// Parse a count flag (`--cutoff`, `--points`, ...): a whole number, with a message that
/// says what is wrong with a negative, fractional or huge value.
pub fn parse_count(s: &str) -> std::result::Result<usize, String> {
    let t = s.trim();
    if let Ok(n) = t.parse::<usize>() {
        return Ok(n);
    }
    match t.parse::<f64>() {
        Ok(x) if x < 0.0 => Err(format!("{t} is negative; give a whole number such as 200")),
        Ok(x) if x.fract() == 0.0 && x.is_finite() && x < 1e19 => Ok(x as usize),
        Ok(x) if x.is_finite() && x.fract() == 0.0 => {
            Err(format!("{t} is too large; give a whole number such as 200"))
        }
        _ => Err(format!("'{t}' is not a whole number; give e.g. 200")),
    }
}

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
    /// Magnetic field along z, signed, in the model's field unit (T, or B_c in natural units).
    #[arg(long, allow_negative_numbers = true)]
    pub field: Option<f64>,
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

/// Output flags every command takes.
#[derive(Debug, Clone, Args)]
pub struct OutputArgs {
    /// Print a machine-readable JSON result on stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Directory for CSV and SVG files (created if needed; files are written whole or not at all).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
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
                model: f.model,
                defaults: f.defaults,
                origin,
                file: Some(name),
            })
        }
        (None, Some(name)) => {
            let info = modelfile::builtin_info(name).ok_or_else(|| {
                bad_flag(
                    "--builtin",
                    format!(
                        "unknown built-in model '{}'; choose one of {} (see `ladderfan models`)",
                        ladderfan::limits::excerpt(name),
                        modelfile::builtin_names().join(", ")
                    ),
                )
            })?;
            let mut values = BTreeMap::new();
            for (k, v) in &sets {
                let x = modelfile::eval_expression(
                    v,
                    info.units,
                    &BTreeMap::new(),
                    &format!("--set {k}"),
                )?;
                values.insert(k.clone(), x);
            }
            let model = modelfile::build_builtin(name, &values)?;
            let mut origin = format!("builtin {name}");
            if !sets.is_empty() {
                origin.push_str(&format!(" with {}", args.set.join(", ")));
            }
            Ok(LoadedModel {
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
    /// Solver settings for these values.
    pub fn settings(&self) -> Settings {
        let mut s = Settings::with_cutoff(self.cutoff);
        s.memory_limit_mib = self.memory_limit_mib;
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

/// Combine flags with the file's defaults (flags win), validate, and check the cutoff
/// against the model's band and the memory limit of one solve at the real (B, kz)
/// ([`ladderfan::problem::Problem::check_memory`], the check the solve itself makes).
pub fn resolve(lm: &LoadedModel, a: &SolveArgs, default_field: f64) -> CliResult<Resolved> {
    let r = resolve_unchecked(lm, a, default_field)?;
    ladderfan::problem::Problem::new(&lm.model, r.point(), &r.settings())
        .and_then(|p| p.check_memory())
        .map_err(|e| match e {
            e @ (Error::CutoffTooSmall { .. } | Error::MemoryLimit { .. }) => {
                bad_flag(&cutoff_location(lm, a.trunc.cutoff), e.to_string())
            }
            other => CliError::Input(other),
        })?;
    Ok(r)
}

/// [`resolve`] without the memory check of one solve (for commands that do not solve, such as
/// `export`, which check their own footprint); the cutoff must still exceed the model's band.
pub fn resolve_unchecked(
    lm: &LoadedModel,
    a: &SolveArgs,
    default_field: f64,
) -> CliResult<Resolved> {
    let field = finite_flag(
        "--field",
        a.field.or(lm.defaults.field).unwrap_or(default_field),
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

/// The memory check of a whole command (src/memory.rs): `footprint` at `cutoff` and `point`
/// on `threads` workers (the pool's size when `None`); a refusal names `path` and is located at
/// `flag`.
#[allow(clippy::too_many_arguments)]
pub fn check_memory(
    lm: &LoadedModel,
    path: &str,
    flag: &str,
    point: FieldPoint,
    cutoff: usize,
    limit_mib: u64,
    footprint: &ladderfan::memory::Footprint,
    threads: Option<usize>,
) -> CliResult {
    use ladderfan::memory::{self, Footprint};
    let problem =
        ladderfan::problem::Problem::new(&lm.model, point, &Settings::with_cutoff(cutoff))?;
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
    let (what, fix) = match footprint {
        Footprint::Solve { .. } | Footprint::Table { .. } => (
            format!("{path}: a solve at cutoff {cutoff} ({} levels)", shape.levels),
            memory::FIX_SOLVE,
        ),
        Footprint::Sweep { points, .. } | Footprint::Optics { points }
            if *points > 1 && !solve_alone =>
        {
            (
            format!(
                "{path}: {points} points at cutoff {cutoff} ({} levels each, all kept until the end)",
                shape.levels
            ),
            memory::FIX_SWEEP,
            )
        }
        Footprint::Sweep { .. } | Footprint::Optics { .. } => (
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

/// Write to stdout; a closed pipe ends the command quietly.
pub fn emit(text: &str) -> CliResult {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Err(CliError::BrokenPipe),
        Err(e) => Err(CliError::Input(Error::Io {
            action: "write".into(),
            path: "stdout".into(),
            source: e,
        })),
    }
}

/// Serialise `value` as pretty JSON and print it. A number that is not finite (JSON would
/// print it as `null`) is an error naming its path, and nothing is printed.
pub fn emit_json<T: Serialize>(value: &T) -> CliResult {
    if let Some((path, x)) = super::finite::first_non_finite(value) {
        return Err(CliError::Input(Error::BadNumber {
            name: format!("the result's {path}"),
            value: x,
            fix: "the numbers of this run overflow double precision (coefficients, field, \
                  charge or line width too large or too small); give values of moderate size"
                .into(),
        }));
    }
    let mut s = serde_json::to_string_pretty(value).map_err(|e| {
        CliError::Input(Error::Unsupported(format!(
            "cannot serialise the result: {e}"
        )))
    })?;
    s.push('\n');
    emit(&s)
}

/// Files to write into `--out`: name and content. Written only after every computation has
/// succeeded, each through a temporary name and a rename.
#[derive(Debug, Default)]
pub struct OutputFiles {
    files: Vec<(String, Vec<u8>)>,
}

/// A `--out` problem with its remedy, located at the flag.
fn out_error(path: &Path, what: &str, e: &std::io::Error) -> CliError {
    bad_flag(
        "--out",
        format!(
            "cannot {what} {}: {e}; choose a directory you can write to (or remove what is in \
             the way); no file was changed",
            path.display()
        ),
    )
}

/// Whether a process with this id is running (Linux `/proc`; elsewhere every process counts
/// as running, so nothing of another run is ever removed).
fn process_alive(pid: u32) -> bool {
    let proc_dir = Path::new("/proc");
    !proc_dir.is_dir() || proc_dir.join(pid.to_string()).exists()
}

/// Remove the temporaries (`.NAME.tmp-PID`) and backups (`.NAME.bak-PID`) that a killed run
/// left in `dir`: those whose process no longer runs.
pub fn remove_stale_temporaries(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        if !name.starts_with('.') {
            continue;
        }
        let pid = [".tmp-", ".bak-"].iter().find_map(|tag| {
            name.rsplit_once(tag)
                .and_then(|(_, p)| p.parse::<u32>().ok())
        });
        if let Some(pid) = pid {
            if pid != std::process::id() && !process_alive(pid) {
                let _ = std::fs::remove_file(e.path());
            }
        }
    }
}

impl OutputFiles {
    /// Queue a file.
    pub fn add(&mut self, name: &str, content: impl Into<Vec<u8>>) {
        self.files.push((name.to_string(), content.into()));
    }

    /// Write every queued file into `dir` (created if missing). Returns the written paths.
    ///
    /// All files are first written in full under temporary names (`.NAME.tmp-PID`); only when
    /// every one of them succeeded are they renamed to their final names. A file that already
    /// exists is first linked to a backup (`.NAME.bak-PID`), so that when a later rename fails
    /// every earlier file is put back as it was: a failed run changes no file. Temporaries and
    /// backups of a run that was killed are removed by the next run writing into `dir`.
    pub fn write_all(self, dir: &Path) -> CliResult<Vec<PathBuf>> {
        let existed = dir.exists();
        std::fs::create_dir_all(dir).map_err(|e| out_error(dir, "create the directory", &e))?;
        remove_stale_temporaries(dir);
        let remove_dir = || {
            if !existed {
                let _ = std::fs::remove_dir(dir);
            }
        };
        // a target that is a directory cannot be replaced: refuse before anything is written
        for (name, _) in &self.files {
            let path = dir.join(name);
            if path.is_dir() {
                remove_dir();
                return Err(bad_flag(
                    "--out",
                    format!(
                        "{} is a directory, where this command writes a file; remove or rename \
                         it, or choose another --out; no file was changed",
                        path.display()
                    ),
                ));
            }
        }
        let mut staged: Vec<(PathBuf, PathBuf)> = Vec::new();
        for (name, content) in &self.files {
            let path = dir.join(name);
            match write_temp(&path, content) {
                Ok(tmp) => staged.push((tmp, path)),
                Err(e) => {
                    for (tmp, _) in &staged {
                        let _ = std::fs::remove_file(tmp);
                    }
                    remove_dir();
                    return Err(e);
                }
            }
        }
        commit_staged(&staged, &|from, to| std::fs::rename(from, to)).inspect_err(|_| {
            remove_dir();
        })
    }
}

/// Rename every staged `(temporary, target)` pair with `rename`. An existing target is first
/// linked (or copied) to a backup; when a rename fails, every earlier target gets its old
/// content back (or is removed if it did not exist), the remaining temporaries are removed,
/// and the error names the file. On success the backups are removed.
fn commit_staged(
    staged: &[(PathBuf, PathBuf)],
    rename: &dyn Fn(&Path, &Path) -> std::io::Result<()>,
) -> CliResult<Vec<PathBuf>> {
    // (target, backup of its old content if it had one) of every file renamed so far
    let mut done: Vec<(PathBuf, Option<PathBuf>)> = Vec::new();
    let undo = |done: &[(PathBuf, Option<PathBuf>)], rest: &[(PathBuf, PathBuf)]| {
        for (path, backup) in done.iter().rev() {
            match backup {
                Some(b) => {
                    let _ = std::fs::rename(b, path);
                }
                None => {
                    let _ = std::fs::remove_file(path);
                }
            }
        }
        for (t, _) in rest {
            let _ = std::fs::remove_file(t);
        }
    };
    for (i, (tmp, path)) in staged.iter().enumerate() {
        let backup = if path.is_file() {
            let b = sibling(path, "bak");
            let _ = std::fs::remove_file(&b);
            match std::fs::hard_link(path, &b).or_else(|_| std::fs::copy(path, &b).map(|_| ())) {
                Ok(()) => Some(b),
                Err(e) => {
                    undo(&done, &staged[i..]);
                    return Err(out_error(path, "keep a backup of", &e));
                }
            }
        } else {
            None
        };
        if let Err(e) = rename(tmp, path) {
            if let Some(b) = &backup {
                let _ = std::fs::remove_file(b);
            }
            undo(&done, &staged[i..]);
            return Err(out_error(path, "write", &e));
        }
        done.push((path.clone(), backup));
    }
    for (_, backup) in &done {
        if let Some(b) = backup {
            let _ = std::fs::remove_file(b);
        }
    }
    Ok(done.into_iter().map(|(p, _)| p).collect())
}

/// `.NAME.TAG-PID` next to `path`: the temporary (`tmp`) or backup (`bak`) of this process.
fn sibling(path: &Path, tag: &str) -> PathBuf {
    let dir = path.parent().unwrap_or(Path::new("."));
    let file_name = path
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    dir.join(format!(".{file_name}.{tag}-{}", std::process::id()))
}

/// Write `content` in full to a temporary file next to `path` (flushed and synced) and return
/// its name; on failure nothing is left behind.
fn write_temp(path: &Path, content: &[u8]) -> CliResult<PathBuf> {
    let tmp = sibling(path, "tmp");
    let result = (|| -> std::io::Result<()> {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(content)?;
        f.sync_all()
    })();
    match result {
        Ok(()) => Ok(tmp),
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(out_error(path, "write", &e))
        }
    }
}

/// Write `content` to `path` whole or not at all: a temporary file in the same directory,
/// then a rename over the target.
#[allow(dead_code)] // shared helper for commands that write a single file outside --out
pub fn write_atomic(path: &Path, content: &[u8]) -> CliResult {
    let tmp = write_temp(path, content)?;
    std::fs::rename(&tmp, path).map_err(|source| {
        let _ = std::fs::remove_file(&tmp);
        CliError::Input(Error::Io {
            action: "write".into(),
            path: path.display().to_string(),
            source,
        })
    })
}

/// Whether progress bars may be drawn: both stderr and stdout are terminals.
pub fn interactive() -> bool {
    std::io::stderr().is_terminal() && std::io::stdout().is_terminal()
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
    let spacing = match grid {
        Grid::Linear => ladderfan::sweep::Spacing::Linear,
        Grid::Log => ladderfan::sweep::Spacing::Log,
    };
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

/// JSON view of one level.
#[derive(Debug, Clone, Serialize)]
pub struct LevelJson {
    /// Energy relative to the reference energy.
    pub energy: f64,
    /// Error bound on the energy: the deciding bound (`bound_from` says which).
    pub bound: f64,
    /// Residual (Weinstein) bound, always available.
    pub residual_bound: f64,
    /// Kato-Temple bound where its gap condition was certified; absent otherwise (a JSON
    /// result never carries null, so scripts cannot mistake a missing bound for a number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub kato_temple_bound: Option<f64>,
    /// Which bound decided the state: `residual` or `kato_temple`.
    pub bound_from: &'static str,
    /// `converged`, `not_converged` (genuine, raise the cutoff) or `cutoff_artefact`.
    pub state: ladderfan::levels::Convergence,
    /// Converged at the solve's tolerance (state == converged).
    pub converged: bool,
    /// Sector label `class:J`.
    pub sector: String,
    /// Component class index.
    pub sector_class: usize,
    /// J, J mod m or 0.
    pub sector_label: i64,
    /// Branch (Klein-Gordon form: +1/-1; else 0).
    pub branch: i8,
    /// Dominant orbital (largest weight); not the Landau index, see `landau_n`.
    pub orbital: usize,
    /// Dominant component index.
    pub component: usize,
    /// Dominant component name.
    pub component_name: String,
    /// Rank within the (sector, branch) by ascending energy.
    pub rank: usize,
    /// Landau index n as the trade writes it (null: no label; see the README, "Reading a
    /// level").
    pub landau_n: Option<i64>,
    /// Branch within the sector, counted from the gap.
    pub landau_branch: ladderfan::levels::Branch,
    /// The printed label: `+2`, `-2`, `0`, `+1'`, `+3~` (continued), `?`.
    pub label: String,
    /// How the label was obtained.
    pub label_origin: ladderfan::levels::LabelOrigin,
    /// Family (smallest component of the coupled set).
    pub family: usize,
    /// Weight on each component (sum 1), in the model's component order.
    pub weights: Vec<f64>,
}

/// Ranks of the levels within their (sector, branch), by ascending energy (levels are sorted
/// by energy already).
pub fn ranks(s: &Spectrum) -> Vec<usize> {
    let mut count: BTreeMap<(usize, i64, i8), usize> = BTreeMap::new();
    s.levels
        .iter()
        .map(|l| {
            let c = count
                .entry((l.sector.class, l.sector.label, l.branch.sign()))
                .or_insert(0);
            *c += 1;
            *c - 1
        })
        .collect()
}

/// JSON view of the levels with indices `idx`.
pub fn levels_json(model: &Model, s: &Spectrum, idx: &[usize]) -> Vec<LevelJson> {
    let r = ranks(s);
    idx.iter()
        .map(|&i| {
            let l = &s.levels[i];
            let (bound, from) = l.deciding_bound();
            LevelJson {
                energy: l.energy,
                bound,
                residual_bound: l.bound,
                kato_temple_bound: l.kato_temple,
                bound_from: from.name(),
                state: l.convergence,
                converged: l.is_converged(),
                sector: format!("{}:{}", l.sector.class, l.sector.label),
                sector_class: l.sector.class,
                sector_label: l.sector.label,
                branch: l.branch.sign(),
                orbital: l.orbital,
                component: l.component,
                component_name: model
                    .component_names()
                    .get(l.component)
                    .cloned()
                    .unwrap_or_default(),
                rank: r[i],
                landau_n: l.label.is_known().then_some(l.label.n),
                landau_branch: l.label.branch,
                label: l.label.to_string(),
                label_origin: l.label.origin,
                family: l.label.family,
                weights: s.weights_of(i).to_vec(),
            }
        })
        .collect()
}

/// The header every JSON result starts with.
#[derive(Debug, Clone, Serialize)]
pub struct ModelJson {
    /// Model name.
    pub name: String,
    /// Where it came from.
    pub origin: String,
    /// Components.
    pub components: usize,
    /// Carrier charge in e.
    pub charge: f64,
    /// Parameters.
    pub parameters: BTreeMap<String, f64>,
}

impl ModelJson {
    /// From a loaded model.
    pub fn new(lm: &LoadedModel) -> Self {
        ModelJson {
            name: lm.model.name().to_string(),
            origin: lm.origin.clone(),
            components: lm.model.dim(),
            charge: lm.model.charge(),
            parameters: lm.model.params().clone(),
        }
    }
}

/// Units block of every JSON result.
#[derive(Debug, Clone, Serialize)]
pub struct UnitsJson {
    /// `lab` or `natural`.
    pub system: ladderfan::units::Units,
    /// `Units::header()`.
    pub header: String,
    /// Energy unit.
    pub energy: String,
    /// Length unit.
    pub length: String,
    /// Field unit.
    pub field: String,
    /// Wave-number (kz) unit.
    pub wavenumber: String,
}

impl UnitsJson {
    /// For a model.
    pub fn new(m: &Model) -> Self {
        let u = m.units();
        UnitsJson {
            system: u,
            header: u.header(),
            energy: u.energy_unit().into(),
            length: u.length_unit().into(),
            field: u.field_unit().into(),
            wavenumber: u.wavenumber_unit().into(),
        }
    }
}

/// `#` comment lines for CSV headers: tool, model, origin, units and extra lines.
pub fn csv_header(lm: &LoadedModel, what: &str, extra: &[String]) -> String {
    let mut s = format!("# ladderfan {} {what}\n", env!("CARGO_PKG_VERSION"));
    s.push_str(&format!(
        "# model: {} ({}), {} component(s), charge {} e\n",
        lm.model.name(),
        lm.origin,
        lm.model.dim(),
        lm.model.charge()
    ));
    if !lm.model.params().is_empty() {
        let p: Vec<String> = lm
            .model
            .params()
            .iter()
            .map(|(k, v)| format!("{k} = {v}"))
            .collect();
        s.push_str(&format!("# parameters: {}\n", p.join(", ")));
    }
    s.push_str(&format!("# units: {}\n", lm.model.units().header()));
    for e in extra {
        s.push_str(&format!("# {e}\n"));
    }
    s
}

/// Format rows as an aligned text table (first row is the header; numeric-looking cells right-aligned).
pub fn table(rows: &[Vec<String>]) -> String {
    let ncol = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut width = vec![0; ncol];
    for r in rows {
        for (i, c) in r.iter().enumerate() {
            width[i] = width[i].max(c.chars().count());
        }
    }
    let mut s = String::new();
    for r in rows {
        let cells: Vec<String> = r
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let numeric = c
                    .chars()
                    .next()
                    .is_some_and(|ch| ch.is_ascii_digit() || ch == '-' || ch == '+');
                // padded by hand: a format width above 65535 panics
                let pad = " ".repeat(width[i] - c.chars().count());
                if numeric {
                    format!("{pad}{c}")
                } else {
                    format!("{c}{pad}")
                }
            })
            .collect();
        s.push_str(cells.join("  ").trim_end());
        s.push('\n');
    }
    s
}

/// CSV text of `records` (header row first) after the `#` header lines.
pub fn csv_text(header: &str, records: &[Vec<String>]) -> CliResult<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    for r in records {
        w.write_record(r)
            .map_err(|e| CliError::Input(Error::Unsupported(format!("csv: {e}"))))?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| CliError::Input(Error::Unsupported(format!("csv: {e}"))))?;
    Ok(format!("{header}{}", String::from_utf8_lossy(&bytes)))
}

/// A number with `sig` significant digits: fixed notation for moderate magnitudes, else
/// scientific.
pub fn fmt_num(x: f64, sig: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let mag = x.abs().log10().floor() as i32;
    if (-3..6).contains(&mag) {
        let decimals = (sig as i32 - 1 - mag).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.prec$e}", prec = sig.saturating_sub(1))
    }
}

/// Which levels a table shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shown {
    /// Only converged levels.
    Converged,
    /// Genuine levels, converged or not (cutoff artefacts hidden; the `levels` default).
    Genuine,
    /// Converged and unconverged levels (cutoff artefacts included).
    All,
}

/// Indices of the `count` levels closest to the reference energy (all when `count` is 0),
/// among the converged levels unless `shown` is [`Shown::All`], in ascending energy order.
pub fn nearest_levels(s: &Spectrum, count: usize, shown: Shown) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..s.levels.len())
        .filter(|&i| match shown {
            Shown::All => true,
            Shown::Genuine => s.levels[i].is_genuine(),
            Shown::Converged => s.levels[i].is_converged(),
        })
        .collect();
    if count > 0 && count < idx.len() {
        idx.sort_by(|&a, &b| {
            s.levels[a]
                .energy
                .abs()
                .total_cmp(&s.levels[b].energy.abs())
                .then(a.cmp(&b))
        });
        idx.truncate(count);
        idx.sort_unstable();
    }
    idx
}

/// JSON view of the symmetry found.
#[derive(Debug, Clone, Serialize)]
pub struct SymmetryJson {
    /// Human-readable description.
    pub description: String,
    /// Whether J is exactly conserved in every class (sectors of at most d states).
    pub exact: bool,
    /// The classes.
    pub classes: ladderfan::sectors::Symmetry,
}

impl SymmetryJson {
    /// From a spectrum.
    pub fn new(s: &Spectrum) -> Self {
        SymmetryJson {
            description: s.symmetry.describe(),
            exact: s.symmetry.is_exact(),
            classes: s.symmetry.clone(),
        }
    }
}

/// The wave-number unit of a unit system, e.g. `1/nm` or `m c/hbar`.
pub fn inverse_length(u: ladderfan::units::Units) -> String {
    u.wavenumber_unit().to_string()
}

/// Component character as printed: the weights of the components above 1 %, largest first,
/// e.g. `A 0.93 B 0.07`.
pub fn character_text(model: &Model, weights: &[f64]) -> String {
    let names = model.component_names();
    let mut w: Vec<(usize, f64)> = weights.iter().copied().enumerate().collect();
    w.sort_by(|a, b| b.1.total_cmp(&a.1));
    w.iter()
        .filter(|(_, x)| *x >= 0.01)
        .map(|&(a, x)| {
            let name = names.get(a).cloned().unwrap_or_else(|| a.to_string());
            format!("{name} {x:.2}")
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// A Landau branch as printed in tables and CSV: `+` / `-` for the level nearest the gap on
/// each side, `+2` / `-2` for the second, `0` unpaired.
pub fn landau_branch_text(b: ladderfan::levels::Branch) -> String {
    use ladderfan::levels::Branch;
    match b {
        Branch::Upper(1) => "+".into(),
        Branch::Lower(1) => "-".into(),
        Branch::Upper(k) => format!("+{k}"),
        Branch::Lower(k) => format!("-{k}"),
        Branch::Unpaired => "0".into(),
    }
}

/// A Klein-Gordon branch (+1, -1; 0 for a direct Hamiltonian) as printed.
pub fn branch_text(b: i8) -> String {
    if b == 0 {
        "0".into()
    } else {
        format!("{b:+}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("ladderfan-common-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        d
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .into_iter()
            .flatten()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn output_files_are_written_whole() {
        let d = scratch("ok");
        let mut f = OutputFiles::default();
        f.add("a.csv", "1,2\n");
        f.add("b.svg", "<svg/>");
        let w = f
            .write_all(&d)
            .unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(w.len(), 2);
        assert_eq!(names(&d), vec!["a.csv", "b.svg"]);
        assert_eq!(
            std::fs::read_to_string(d.join("a.csv")).ok().as_deref(),
            Some("1,2\n")
        );
        write_atomic(&d.join("a.csv"), b"3").unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(
            std::fs::read_to_string(d.join("a.csv")).ok().as_deref(),
            Some("3")
        );
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn a_failed_rename_puts_back_every_earlier_file() {
        // regression: a failed write deleted the user's earlier file of the same name. Two
        // files are staged over existing ones; the second rename fails: both keep their old
        // content and no temporary or backup remains
        let d = scratch("restore");
        std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(d.join("a.csv"), "old a\n").unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(d.join("b.svg"), "old b\n").unwrap_or_else(|e| panic!("{e}"));
        let mut staged = Vec::new();
        for (name, text) in [
            ("a.csv", "new a\n"),
            ("b.svg", "new b\n"),
            ("c.csv", "new c\n"),
        ] {
            let path = d.join(name);
            let tmp =
                write_temp(&path, text.as_bytes()).unwrap_or_else(|e| panic!("{}", e.message()));
            staged.push((tmp, path));
        }
        let fail_on_b = |from: &Path, to: &Path| {
            if to.ends_with("b.svg") {
                Err(std::io::Error::other("injected failure"))
            } else {
                std::fs::rename(from, to)
            }
        };
        let r = commit_staged(&staged, &fail_on_b);
        match r {
            Ok(_) => panic!("the injected failure was not reported"),
            Err(e) => assert!(
                e.message().contains("b.svg") && e.message().contains("no file was changed")
            ),
        }
        let read = |n: &str| std::fs::read_to_string(d.join(n)).ok();
        assert_eq!(read("a.csv").as_deref(), Some("old a\n"));
        assert_eq!(read("b.svg").as_deref(), Some("old b\n"));
        assert_eq!(names(&d), vec!["a.csv", "b.svg"]);
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn stale_temporaries_of_a_killed_run_are_removed() {
        // a run killed while writing leaves .NAME.tmp-PID; the next run into the directory
        // removes those of processes that no longer run, and keeps everything else
        let d = scratch("stale");
        std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
        let dead = u32::MAX - 7; // above any pid_max of Linux (at most 2^22)
        std::fs::write(d.join(format!(".fan.csv.tmp-{dead}")), "x")
            .unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(d.join(format!(".fan.csv.bak-{dead}")), "x")
            .unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(d.join(".notes.tmp-abc"), "x").unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(d.join("keep.csv"), "x").unwrap_or_else(|e| panic!("{e}"));
        let mut f = OutputFiles::default();
        f.add("fan.csv", "1\n");
        f.write_all(&d)
            .unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(names(&d), vec![".notes.tmp-abc", "fan.csv", "keep.csv"]);
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn a_failed_write_leaves_no_file_behind() {
        // the second target is an existing directory: refused before anything is written;
        // nothing new may remain
        let d = scratch("fail");
        std::fs::create_dir_all(d.join("b.svg").join("inside")).unwrap_or_else(|e| panic!("{e}"));
        let mut f = OutputFiles::default();
        f.add("a.csv", "1,2\n");
        f.add("b.svg", "<svg/>");
        let r = f.write_all(&d);
        assert!(r.is_err());
        let left = names(&d);
        assert_eq!(
            left,
            vec!["b.svg"],
            "only the pre-existing directory may remain"
        );
        let _ = std::fs::remove_dir_all(&d);
    }
}
