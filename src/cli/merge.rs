//! `ladderfan merge OUT.csv SHARD.csv...`: join the CSV files of the N shards of a sweep
//! (`fan`/`dispersion --shard K/N --out DIR`) into exactly the table one run would write.
//! Each shard's sidecar (`NAME.meta.json` beside `NAME.csv`) says which shard it is; the
//! merged table gets its own sidecar. See [`ladderfan::shard`] for the checks (every shard
//! once, one sweep, disjoint points).

use super::common::{bad_flag, emit, CliResult, CsvFile, OutputFiles};
use clap::Args;
use ladderfan::records::meta::{sidecar_name, CsvMeta};
use ladderfan::shard::ShardTable;
use ladderfan::Error;
use std::path::{Path, PathBuf};

/// Flags of `ladderfan merge`.
#[derive(Debug, Clone, Args)]
pub struct MergeArgs {
    /// The merged table to write (with its sidecar OUT.meta.json; written whole or not at all).
    pub out: PathBuf,
    /// The shard tables, in any order (each K of 1..N exactly once), each with its sidecar
    /// NAME.meta.json beside it.
    #[arg(required = true, num_args = 1..)]
    pub shards: Vec<PathBuf>,
}

/// The sidecar path of a CSV path.
fn sidecar_path(p: &Path) -> PathBuf {
    let name = p
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    p.with_file_name(sidecar_name(&name))
}

/// The lines every shard of one sweep shares: its sidecar without the command line and the
/// shard object, as pretty JSON lines.
fn context(meta: &CsvMeta) -> CliResult<Vec<String>> {
    let mut m = meta.clone();
    m.command_line.clear();
    m.shard = None;
    Ok(m.to_json()?.lines().map(str::to_string).collect())
}

/// Read one shard: its CSV and its sidecar (which must name the shard).
fn read_shard(p: &Path) -> CliResult<(ShardTable, CsvMeta)> {
    let text = std::fs::read_to_string(p).map_err(|source| Error::Io {
        action: "read shard table".into(),
        path: p.display().to_string(),
        source,
    })?;
    let side = sidecar_path(p);
    let side_text = std::fs::read_to_string(&side).map_err(|e| {
        bad_flag(
            "SHARD.csv",
            format!(
                "cannot read {} ({e}): the sidecar written beside {} by the `--shard K/N` run \
                 says which shard it is; copy it along with the CSV",
                side.display(),
                p.display()
            ),
        )
    })?;
    let meta = CsvMeta::from_json(&side_text, &side.display().to_string())?;
    let header = meta.shard.clone().ok_or_else(|| Error::Parse {
        location: side.display().to_string(),
        message: "no `shard` object: this is not the output of a `--shard K/N` run".into(),
    })?;
    let mut t = ShardTable::new(p.display().to_string(), header, text);
    t.context = context(&meta)?;
    Ok((t, meta))
}

/// Run `ladderfan merge`.
pub fn run(a: &MergeArgs) -> CliResult {
    if a.shards.iter().any(|p| p == &a.out) {
        return Err(bad_flag(
            "OUT",
            format!(
                "{} is also a shard input; write the merged table elsewhere",
                a.out.display()
            ),
        ));
    }
    let mut tables = Vec::with_capacity(a.shards.len());
    let mut first_meta = None;
    for p in &a.shards {
        let (t, m) = read_shard(p)?;
        tables.push(t);
        first_meta.get_or_insert(m);
    }
    let merged = ladderfan::shard::merge(&tables)?;
    let Some(mut meta) = first_meta else {
        return Err(bad_flag("SHARD.csv", "no shard tables given"));
    };
    meta.shard = None;
    meta.command_line = std::env::args().collect();
    meta.notes.push(format!(
        "merged by `ladderfan merge` from {} shard tables",
        tables.len()
    ));
    let rows = merged.lines().count().saturating_sub(1);
    let name = a
        .out
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .ok_or_else(|| bad_flag("OUT", "give a file name for the merged table"))?;
    let dir = match a.out.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let mut files = OutputFiles::default();
    files.add_csv(&name, CsvFile { meta, text: merged })?;
    files.write_all(&dir)?;
    emit(&format!(
        "merged {} shard tables ({rows} data rows) into {}\n",
        tables.len(),
        a.out.display()
    ))
}
