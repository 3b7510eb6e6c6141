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
//! or 1 (verification failed).

pub mod common;
pub mod converge;
pub mod demo;
pub mod dispersion;
pub mod dos;
pub mod export;
pub mod fan;
pub mod levels;
pub mod merge;
pub mod models;
pub mod optics;
pub mod sweep;
pub mod verify;

use clap::{Parser, Subcommand};
use common::{CliError, CliResult, EXIT_BAD_INPUT, EXIT_VERIFICATION};

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
    /// Join the CSV files of the shards of a sweep (`--shard K/N`) into the single-run table.
    Merge(merge::MergeArgs),
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
    }
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// Parse the command line, run, and return the process exit code: 0 success, 1 verification
/// failed, 2 bad input. Errors are printed as one `ladderfan: error: ...` line on stderr.
pub fn main_exit_code() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
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
    // A panic is a bug; report it as one line like every other error.
    std::panic::set_hook(Box::new(|info| {
        let msg = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown".into());
        eprintln!(
            "ladderfan: error: internal error ({}); please report it",
            one_line(&msg)
        );
    }));
    match std::panic::catch_unwind(|| dispatch(command)) {
        Ok(Ok(())) => 0,
        Ok(Err(CliError::BrokenPipe)) => 0,
        Ok(Err(e)) => {
            eprintln!("ladderfan: error: {}", e.message());
            e.exit_code()
        }
        Err(_) => EXIT_VERIFICATION,
    }
}
