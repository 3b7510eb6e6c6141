//! The `ladderfan` command line: one file per command, shared helpers in [`common`].
//!
//! # Adding a command
//! 1. Write `src/cli/NAME.rs` with a `#[derive(clap::Args)] pub struct NameArgs` (flatten
//!    [`common::ModelArgs`], [`common::SolveArgs`] and [`common::OutputArgs`] as needed) and a
//!    `pub fn run(args: &NameArgs) -> common::CliResult`.
//! 2. Add `pub mod NAME;` below, a variant to [`Command`] and its arm in [`dispatch`].
//!
//! Conventions: results go to stdout (a table, or JSON with `--json`); files only into `--out`
//! through [`common::OutputFiles`] after every computation succeeded; errors are returned as
//! [`common::CliError`] and become one `ladderfan: error: ...` line and exit code 2 (bad input)
//! or 1 (verification failed); a panic is a bug and exits 3 with a request for a report.

pub mod common;
pub mod converge;
pub mod demo;
pub mod dispersion;
pub mod dos;
pub mod export;
pub mod fan;
pub mod finite;
pub mod levels;
pub mod merge;
pub mod models;
pub mod optics;
pub mod orbits;
pub mod output;
pub mod parse;
pub mod plot;
mod plot_json;
pub mod progress;
pub mod render;
pub mod sweep;
pub mod verify;

use clap::{Parser, Subcommand};
use common::{CliError, CliResult, EXIT_BAD_INPUT, EXIT_INTERNAL};

/// Landau-level spectra by exact diagonalization in a truncated ladder basis.
///
/// Without a command, runs `ladderfan demo`.
#[derive(Debug, Parser)]
#[command(name = "ladderfan", version, about, long_about = None)]
pub struct Cli {
    /// The command (default: demo).
    #[command(subcommand)]
    pub command: Option<Command>,
}

/// Every command. Planned additions (separate files, added by their authors): `merge`.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Levels at one field and kz: a labelled table with error bounds.
    Levels(levels::LevelsArgs),
    /// Fan diagram: levels over a sweep of the magnetic field, tracked by label.
    Fan(fan::FanArgs),
    /// Dispersion: levels over a sweep of kz at fixed field, tracked by label.
    Dispersion(dispersion::DispersionArgs),
    /// The built-in models with their parameters and sources.
    Models(models::ModelsArgs),
    /// Write the assembled matrix (or one sector) as a MatrixMarket file.
    Export(export::ExportArgs),
    /// An invented gapped Dirac film: table, fan diagram SVG and CSV in a few seconds.
    Demo(demo::DemoArgs),
    /// Density of states, Fermi level and filling factor (and the Fermi level against B).
    Dos(dos::DosArgs),
    /// Allowed magneto-optical transitions at one field, or their fan against B.
    Optics(optics::OpticsArgs),
    /// Check a level formula (or a CSV of expected levels) against the exact spectrum, level
    /// by level: exit 0 pass, 1 fail, 2 bad input.
    Verify(verify::VerifyArgs),
    /// Convergence in the cutoff: a study over cutoffs, or the cutoff a tolerance needs.
    Converge(converge::ConvergeArgs),
    /// Semiclassics next to the exact levels: zero-field orbit (area, mass, Berry phase),
    /// Onsager levels, and the index-vs-1/B fan with its frequency and intercept.
    Orbits(orbits::OrbitsArgs),
    /// Join the CSV files of the shards of a sweep (`--shard K/N`) into the single-run table.
    Merge(merge::MergeArgs),
    /// Re-draw a CSV or JSON file the tools wrote (other axes, colours, labels, size, format)
    /// without recomputing.
    Plot(plot::PlotArgs),
}

/// Run one command.
pub fn dispatch(command: Command) -> CliResult {
    match command {
        Command::Levels(a) => levels::run(&a),
        Command::Fan(a) => fan::run(&a),
        Command::Dispersion(a) => dispersion::run(&a),
        Command::Models(a) => models::run(&a),
        Command::Export(a) => export::run(&a),
        Command::Demo(a) => demo::run(&a),
        Command::Dos(a) => dos::run(&a),
        Command::Optics(a) => optics::run(&a),
        Command::Verify(a) => verify::run(&a),
        Command::Converge(a) => converge::run(&a),
        Command::Merge(a) => merge::run(&a),
        Command::Orbits(a) => orbits::run(&a),
        Command::Plot(a) => plot::run(&a),
    }
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// Whether `s` is a negative number such as `-5`, `-1e-3`, `-.5` or `-inf`, or a negative
/// field with a unit suffix such as `-1T` or `-2e-10Bc`.
fn is_negative_number(s: &str) -> bool {
    s.strip_prefix('-').is_some_and(|rest| {
        rest.starts_with(|c: char| c.is_ascii_digit() || c == '.' || c == 'i' || c == 'I')
            && (s.parse::<f64>().is_ok()
                || ladderfan::units::FieldValue::parse(s).is_ok_and(|f| f.unit.is_some()))
    })
}

/// The command line with every `--flag VALUE` whose value is a negative number joined into
/// `--flag=VALUE`, so that `--field -1e-3` or `--cutoff -5` reach the flag (and its own
/// message) instead of being taken for an unknown flag. Arguments that are not UTF-8 are left
/// alone (clap reports them).
pub fn normalize_args(args: Vec<std::ffi::OsString>) -> Vec<std::ffi::OsString> {
    let mut out: Vec<std::ffi::OsString> = Vec::with_capacity(args.len());
    for a in args {
        let joined = match (out.last().and_then(|p| p.to_str()), a.to_str()) {
            (Some(prev), Some(value))
                if prev.starts_with("--")
                    && prev.len() > 2
                    && !prev.contains('=')
                    && is_negative_number(value) =>
            {
                Some(format!("{prev}={value}"))
            }
            _ => None,
        };
        match joined {
            Some(j) => {
                out.pop();
                out.push(j.into());
            }
            None => out.push(a),
        }
    }
    out
}

/// Report a panic as one line that asks for a bug report with the command line.
fn install_panic_hook() {
    std::panic::set_hook(Box::new(|info| {
        let msg = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown".into());
        let at = info
            .location()
            .map(|l| format!(" at {}:{}", l.file(), l.line()))
            .unwrap_or_default();
        let args: Vec<String> = std::env::args().collect();
        eprintln!("{}", panic_report(&msg, &at, &args));
    }));
}

/// The one line printed for a panic: what happened, where, and a request for a report with
/// the command line.
fn panic_report(msg: &str, at: &str, args: &[String]) -> String {
    let command: Vec<String> = args.iter().map(|a| limits_excerpt(a)).collect();
    format!(
        "ladderfan: error: internal error ({}{at}); this is a bug in ladderfan, please report \
         it with this line and the command line: {} (exit code 3)",
        one_line(&limits_excerpt(msg)),
        one_line(&command.join(" "))
    )
}

/// Run `f`; a panic (already reported by the hook) becomes [`EXIT_INTERNAL`], an error its
/// one line and exit code.
fn guarded(f: impl FnOnce() -> CliResult + std::panic::UnwindSafe) -> i32 {
    match std::panic::catch_unwind(f) {
        Ok(Ok(())) => 0,
        Ok(Err(CliError::BrokenPipe)) => 0,
        Ok(Err(e)) => {
            eprintln!("ladderfan: error: {}", e.message());
            e.exit_code()
        }
        Err(_) => EXIT_INTERNAL,
    }
}

fn limits_excerpt(s: &str) -> String {
    ladderfan::limits::excerpt(s)
}

/// Parse the command line, run, and return the process exit code: 0 success, 1 verification
/// failed, 2 bad input, 3 internal error (a panic: a bug). Errors are printed as one
/// `ladderfan: error: ...` line on stderr.
pub fn main_exit_code() -> i32 {
    install_panic_hook();
    let args = normalize_args(std::env::args_os().collect());
    let cli = match std::panic::catch_unwind(|| Cli::try_parse_from(args)) {
        Ok(Ok(c)) => c,
        Err(_) => return EXIT_INTERNAL,
        Ok(Err(e)) => {
            use clap::error::ErrorKind;
            return match e.kind() {
                ErrorKind::DisplayHelp
                | ErrorKind::DisplayVersion
                | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
                    let _ = e.print();
                    0
                }
                _ => {
                    let text = e.to_string();
                    let first = text.lines().next().unwrap_or("bad command line");
                    let first = first.strip_prefix("error: ").unwrap_or(first);
                    eprintln!(
                        "ladderfan: error: {}; see `ladderfan --help`",
                        one_line(first)
                    );
                    EXIT_BAD_INPUT
                }
            };
        }
    };
    let command = cli
        .command
        .unwrap_or_else(|| Command::Demo(demo::DemoArgs::default()));
    guarded(|| dispatch(command))
}

#[cfg(test)]
mod one_setup_tests;

#[cfg(test)]
mod tests {
    use super::*;

    fn norm(args: &[&str]) -> Vec<String> {
        normalize_args(args.iter().map(|a| (*a).into()).collect())
            .into_iter()
            .map(|a| a.to_string_lossy().into_owned())
            .collect()
    }

    #[test]
    fn a_panic_exits_3_and_asks_for_a_report() {
        // regression: a panic exited 1, the code of a failed verification
        assert_eq!(guarded(|| panic!("injected")), 3);
        assert_eq!(guarded(|| Ok(())), 0);
        assert_eq!(
            guarded(|| Err(CliError::Verification("formula".into()))),
            common::EXIT_VERIFICATION
        );
        assert_eq!(
            guarded(|| Err(common::bad_flag("--x", "bad"))),
            EXIT_BAD_INPUT
        );
        let line = panic_report(
            "index out of\nbounds",
            " at src/x.rs:3",
            &[
                "ladderfan".into(),
                "levels".into(),
                "--builtin".into(),
                "dirac2d".into(),
            ],
        );
        assert!(!line.contains('\n'), "{line}");
        assert!(line.contains("please report it"), "{line}");
        assert!(
            line.contains("ladderfan levels --builtin dirac2d"),
            "{line}"
        );
        assert!(line.contains("exit code 3"), "{line}");
    }

    #[test]
    fn negative_numbers_reach_their_flag() {
        assert_eq!(
            norm(&["ladderfan", "levels", "--field", "-1e-3", "--kz", "-.5"]),
            ["ladderfan", "levels", "--field=-1e-3", "--kz=-.5"]
        );
        assert_eq!(norm(&["x", "--cutoff", "-5"]), ["x", "--cutoff=-5"]);
        assert_eq!(norm(&["x", "--field", "-1T"]), ["x", "--field=-1T"]);
        assert_eq!(
            norm(&["x", "--b-max", "-2e-10Bc"]),
            ["x", "--b-max=-2e-10Bc"]
        );
        // flags and names that merely start with '-' stay as they are
        assert_eq!(
            norm(&["x", "--json", "--field", "2"]),
            ["x", "--json", "--field", "2"]
        );
        assert_eq!(norm(&["x", "--formula", "-x"]), ["x", "--formula", "-x"]);
        assert_eq!(norm(&["x", "--a=1", "-2"]), ["x", "--a=1", "-2"]);
    }
}
