//! `ladderfan merge OUT.csv SHARD.csv...`: join the CSV files of the N shards of a sweep
//! (`fan`/`dispersion --shard K/N --out DIR`) into exactly the table one run would write.
//! See [`ladderfan::shard`] for the checks (every shard once, one sweep, disjoint points).

use super::common::{emit, write_atomic, CliResult};
use clap::Args;
use ladderfan::Error;
use std::path::PathBuf;

/// Flags of `ladderfan merge`.
#[derive(Debug, Clone, Args)]
pub struct MergeArgs {
    /// The merged table to write (written whole or not at all).
    pub out: PathBuf,
    /// The shard tables, in any order (each K of 1..N exactly once).
    #[arg(required = true, num_args = 1..)]
    pub shards: Vec<PathBuf>,
}

/// Run `ladderfan merge`.
pub fn run(a: &MergeArgs) -> CliResult {
    let mut tables = Vec::with_capacity(a.shards.len());
    for p in &a.shards {
        let text = std::fs::read_to_string(p).map_err(|source| Error::Io {
            action: "read shard table".into(),
            path: p.display().to_string(),
            source,
        })?;
        tables.push((p.display().to_string(), text));
    }
    if a.shards.iter().any(|p| p == &a.out) {
        return Err(super::common::bad_flag(
            "OUT",
            format!(
                "{} is also a shard input; write the merged table elsewhere",
                a.out.display()
            ),
        ));
    }
    let merged = ladderfan::shard::merge(&tables)?;
    write_atomic(&a.out, merged.as_bytes())?;
    let rows = merged
        .lines()
        .filter(|l| !l.starts_with('#'))
        .count()
        .saturating_sub(1);
    emit(&format!(
        "merged {} shard tables ({rows} data rows) into {}\n",
        tables.len(),
        a.out.display()
    ))
}
