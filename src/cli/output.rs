//! Output: stdout (text and JSON, a closed pipe ends quietly) and the files of `--out`,
//! written atomically after every computation succeeded.

use super::common::{bad_flag, CliError, CliResult};
use ladderfan::Error;
use serde::Serialize;
use std::io::Write;
use std::path::{Path, PathBuf};

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
    files: Vec<(String, Content)>,
}

/// What a queued file holds: its bytes, or a temporary already written in full
/// ([`SpilledRows::finish`]).
#[derive(Debug)]
enum Content {
    Bytes(Vec<u8>),
    Staged(StagedFile),
}

/// A file written in full under its temporary name (`.NAME.tmp-PID` in the output
/// directory), waiting for [`OutputFiles::write_all`] to rename it into place. Dropped
/// without that (an error on the way), it removes the temporary, and the output directory
/// if this run created it and it is empty: a failed run leaves nothing behind.
#[derive(Debug)]
pub struct StagedFile {
    tmp: Option<PathBuf>,
    created_dir: Option<PathBuf>,
}

impl StagedFile {
    /// The temporary's path, now owned by the caller (no longer removed on drop).
    fn take(&mut self) -> Option<PathBuf> {
        self.created_dir = None;
        self.tmp.take()
    }
}

impl Drop for StagedFile {
    fn drop(&mut self) {
        if let Some(t) = self.tmp.take() {
            let _ = std::fs::remove_file(t);
        }
        if let Some(d) = self.created_dir.take() {
            let _ = std::fs::remove_dir(d);
        }
    }
}

/// Bytes of the spill read back in one pass when [`SpilledRows::finish`] groups the rows by
/// track ([`ladderfan::memory::SWEEP_REGROUP_BYTES`]).
const REGROUP_BYTES: u64 = ladderfan::memory::SWEEP_REGROUP_BYTES;

/// The rows of a CSV table written while a sweep runs: each row goes, as soon as its point is
/// done (in point order), to a spill file in the output directory (`.NAME.spill-PID`), tagged
/// with its group (a track's slot); [`SpilledRows::finish`] then writes the table, its rows
/// grouped in a given order of the groups and in point order within each, to the table's
/// temporary, ready for the atomic rename of [`OutputFiles::write_all`]. Memory: one buffered
/// row at a time while writing, at most [`REGROUP_BYTES`] of rows while grouping (the spill
/// is read once per that many bytes), whatever the number of points.
#[derive(Debug)]
pub struct SpilledRows {
    dir: PathBuf,
    name: String,
    spill: PathBuf,
    out: Option<std::io::BufWriter<std::fs::File>>,
    /// Bytes of rows per group.
    bytes: Vec<u64>,
    created_dir: bool,
}

impl SpilledRows {
    /// Create the output directory `dir` if missing and the spill of the table `name` in it.
    pub fn create(dir: &Path, name: &str) -> CliResult<Self> {
        let existed = dir.exists();
        std::fs::create_dir_all(dir).map_err(|e| out_error(dir, "create the directory", &e))?;
        remove_stale_temporaries(dir);
        let target = dir.join(name);
        if target.is_dir() {
            if !existed {
                let _ = std::fs::remove_dir(dir);
            }
            return Err(is_a_directory(&target));
        }
        let spill = sibling(&target, "spill");
        let file = std::fs::File::create(&spill).map_err(|e| {
            if !existed {
                let _ = std::fs::remove_dir(dir);
            }
            out_error(&target, "write", &e)
        })?;
        Ok(SpilledRows {
            dir: dir.to_path_buf(),
            name: name.to_string(),
            spill,
            out: Some(std::io::BufWriter::new(file)),
            bytes: Vec::new(),
            created_dir: !existed,
        })
    }

    /// Append the row `text` (one line, with its newline) of group `group`.
    pub fn push(&mut self, group: usize, text: &str) -> CliResult {
        if self.bytes.len() <= group {
            self.bytes.resize(group + 1, 0);
        }
        self.bytes[group] += text.len() as u64;
        let (g, n) = (group as u64, text.len() as u64);
        let target = self.dir.join(&self.name);
        let Some(out) = self.out.as_mut() else {
            return Ok(());
        };
        out.write_all(&g.to_le_bytes())
            .and_then(|_| out.write_all(&n.to_le_bytes()))
            .and_then(|_| out.write_all(text.as_bytes()))
            .map_err(|e| out_error(&target, "write", &e))
    }

    /// Write the table, `header` (with its newline) then the rows of the groups `order`
    /// (other groups dropped), each group's rows in the order they were pushed, to the
    /// table's temporary; the spill is removed.
    pub fn finish(self, header: &str, order: &[usize]) -> CliResult<StagedFile> {
        self.finish_in_passes(header, order, REGROUP_BYTES, None)
    }

    /// [`SpilledRows::finish`], each row (one line, without its newline) written as
    /// `rewrite` returns it: for a cell known only when the sweep is done (the relative
    /// strength of `optics`, whose unit is the strongest transition of the run).
    pub fn finish_rewriting(
        self,
        header: &str,
        order: &[usize],
        rewrite: &dyn Fn(&str) -> String,
    ) -> CliResult<StagedFile> {
        self.finish_in_passes(header, order, REGROUP_BYTES, Some(rewrite))
    }

    /// [`SpilledRows::finish`], reading at most `budget` bytes of rows per pass (one group
    /// larger than that is read alone).
    fn finish_in_passes(
        mut self,
        header: &str,
        order: &[usize],
        budget: u64,
        rewrite: Option<&dyn Fn(&str) -> String>,
    ) -> CliResult<StagedFile> {
        let target = self.dir.join(&self.name);
        let err = |e: std::io::Error| out_error(&target, "write", &e);
        if let Some(out) = self.out.take() {
            out.into_inner().map_err(|e| err(e.into_error()))?;
        }
        let tmp = sibling(&target, "tmp");
        let staged = StagedFile {
            tmp: Some(tmp.clone()),
            created_dir: self.created_dir.then(|| self.dir.clone()),
        };
        self.created_dir = false;
        let file = std::fs::File::create(&tmp).map_err(err)?;
        let mut w = std::io::BufWriter::new(file);
        w.write_all(header.as_bytes()).map_err(err)?;
        let size = |g: usize| self.bytes.get(g).copied().unwrap_or(0);
        // place of each group in the current chunk (u32::MAX: not in it)
        let mut place = vec![u32::MAX; self.bytes.len()];
        let mut start = 0;
        while start < order.len() {
            let mut end = start;
            let mut chunk = 0;
            while end < order.len() && (end == start || chunk + size(order[end]) <= budget) {
                chunk += size(order[end]);
                end += 1;
            }
            if chunk > 0 {
                let mut buffers: Vec<Vec<u8>> = order[start..end]
                    .iter()
                    .map(|&g| Vec::with_capacity(size(g) as usize))
                    .collect();
                for (k, &g) in order[start..end].iter().enumerate() {
                    if let Some(p) = place.get_mut(g) {
                        *p = k as u32;
                    }
                }
                self.read_spill(&place, &mut buffers).map_err(err)?;
                for b in &buffers {
                    match rewrite {
                        None => w.write_all(b).map_err(err)?,
                        Some(f) => {
                            for line in String::from_utf8_lossy(b).lines() {
                                w.write_all(f(line).as_bytes()).map_err(err)?;
                                w.write_all(b"\n").map_err(err)?;
                            }
                        }
                    }
                }
                for &g in &order[start..end] {
                    if let Some(p) = place.get_mut(g) {
                        *p = u32::MAX;
                    }
                }
            }
            start = end;
        }
        let file = w.into_inner().map_err(|e| err(e.into_error()))?;
        file.sync_all().map_err(err)?;
        Ok(staged)
    }

    /// One pass over the spill: each row of a group with a place goes to its buffer.
    fn read_spill(&self, place: &[u32], buffers: &mut [Vec<u8>]) -> std::io::Result<()> {
        use std::io::{BufRead, Read};
        let mut r = std::io::BufReader::with_capacity(1 << 16, std::fs::File::open(&self.spill)?);
        let mut head = [0u8; 16];
        loop {
            if r.fill_buf()?.is_empty() {
                return Ok(());
            }
            r.read_exact(&mut head)?;
            let mut g = [0u8; 8];
            let mut n = [0u8; 8];
            g.copy_from_slice(&head[..8]);
            n.copy_from_slice(&head[8..]);
            let (g, n) = (u64::from_le_bytes(g) as usize, u64::from_le_bytes(n));
            match place.get(g).copied().filter(|&p| p != u32::MAX) {
                Some(p) => {
                    let b = &mut buffers[p as usize];
                    let at = b.len();
                    b.resize(at + n as usize, 0);
                    r.read_exact(&mut b[at..])?;
                }
                None => r.seek_relative(n as i64)?,
            }
        }
    }
}

impl Drop for SpilledRows {
    fn drop(&mut self) {
        self.out = None;
        let _ = std::fs::remove_file(&self.spill);
        if self.created_dir {
            let _ = std::fs::remove_dir(&self.dir);
        }
    }
}

/// The error for an output file whose place is taken by a directory.
fn is_a_directory(path: &Path) -> CliError {
    bad_flag(
        "--out",
        format!(
            "{} is a directory, where this command writes a file; remove or rename \
             it, or choose another --out; no file was changed",
            path.display()
        ),
    )
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

/// Remove the temporaries (`.NAME.tmp-PID`), backups (`.NAME.bak-PID`) and row spills
/// (`.NAME.spill-PID`) that a killed run left in `dir`: those whose process no longer runs.
pub fn remove_stale_temporaries(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        if !name.starts_with('.') {
            continue;
        }
        let pid = [".tmp-", ".bak-", ".spill-"].iter().find_map(|tag| {
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
        self.files
            .push((name.to_string(), Content::Bytes(content.into())));
    }

    /// Queue a CSV file `NAME.csv` already written in full to its temporary
    /// ([`SpilledRows::finish`]) and its metadata sidecar: both are renamed into place, or
    /// neither.
    pub fn add_staged_csv(
        &mut self,
        name: &str,
        file: StagedFile,
        meta: &ladderfan::records::meta::CsvMeta,
    ) -> CliResult {
        let json = meta.to_json()?;
        self.files.push((name.to_string(), Content::Staged(file)));
        self.add(&ladderfan::records::meta::sidecar_name(name), json);
        Ok(())
    }

    /// Queue a CSV file `NAME.csv` and its metadata sidecar `NAME.meta.json`
    /// ([`ladderfan::records::meta`]): both are written, or neither.
    pub fn add_csv(&mut self, name: &str, file: super::render::CsvFile) -> CliResult {
        let json = file.meta.to_json()?;
        self.add(name, file.text);
        self.add(&ladderfan::records::meta::sidecar_name(name), json);
        Ok(())
    }

    /// Write every queued file into `dir` (created if missing). Returns the written paths.
    ///
    /// All files are first written in full under temporary names (`.NAME.tmp-PID`); only when
    /// every one of them succeeded are they renamed to their final names. A file that already
    /// exists is first linked to a backup (`.NAME.bak-PID`), so that when a later rename fails
    /// every earlier file is put back as it was: a failed run changes no file. Temporaries and
    /// backups of a run that was killed are removed by the next run writing into `dir`.
    pub fn write_all(mut self, dir: &Path) -> CliResult<Vec<PathBuf>> {
        // a staged file's run created the directory: on failure it goes again
        let created_for_staged = self.files.iter().any(|(_, c)| {
            matches!(
                c,
                Content::Staged(StagedFile {
                    created_dir: Some(_),
                    ..
                })
            )
        });
        let existed = dir.exists() && !created_for_staged;
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
                return Err(is_a_directory(&path));
            }
        }
        let mut staged: Vec<(PathBuf, PathBuf)> = Vec::new();
        for (name, content) in &mut self.files {
            let path = dir.join(&*name);
            let written = match content {
                Content::Bytes(bytes) => write_temp(&path, bytes),
                Content::Staged(file) => file
                    .take()
                    .ok_or_else(|| out_error(&path, "write", &std::io::Error::other("gone"))),
            };
            match written {
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

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("ladderfan-output-{}-{name}", std::process::id()));
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
    fn spilled_rows_come_out_grouped_in_order_over_several_passes() {
        // rows of three groups pushed interleaved (as points finish); the table lists group
        // 2, then 0 (group 1 dropped), each in push order, whatever the bytes per pass
        let d = scratch("spill");
        for budget in [1, 12, 1 << 20] {
            let mut rows =
                SpilledRows::create(&d, "t.csv").unwrap_or_else(|e| panic!("{}", e.message()));
            for (g, text) in [
                (0, "a1\n"),
                (2, "c1\n"),
                (1, "b1\n"),
                (0, "a2\n"),
                (2, "c2\n"),
                (0, "a3\n"),
            ] {
                rows.push(g, text)
                    .unwrap_or_else(|e| panic!("{}", e.message()));
            }
            let staged = rows
                .finish_in_passes("h\n", &[2, 0], budget, None)
                .unwrap_or_else(|e| panic!("{}", e.message()));
            // only the table's temporary is there, the spill is gone
            let hidden: Vec<String> = names(&d)
                .into_iter()
                .filter(|n| n.starts_with('.'))
                .collect();
            assert!(
                hidden.len() == 1 && hidden[0].contains(".tmp-"),
                "{hidden:?}"
            );
            let mut f = OutputFiles::default();
            f.files.push(("t.csv".into(), Content::Staged(staged)));
            f.write_all(&d)
                .unwrap_or_else(|e| panic!("{}", e.message()));
            assert_eq!(
                std::fs::read_to_string(d.join("t.csv")).ok().as_deref(),
                Some("h\nc1\nc2\na1\na2\na3\n"),
                "budget {budget}"
            );
            assert_eq!(names(&d), vec!["t.csv"]);
        }
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn spilled_rows_are_rewritten_line_by_line_over_several_passes() {
        // the rewrite sees each row without its newline, in the table's order, in every pass
        let d = scratch("spill-rewrite");
        for budget in [1, 7, 1 << 20] {
            let mut rows =
                SpilledRows::create(&d, "t.csv").unwrap_or_else(|e| panic!("{}", e.message()));
            for (g, text) in [(1, "b1,2\n"), (0, "a1,4\n"), (1, "b2,8\n")] {
                rows.push(g, text)
                    .unwrap_or_else(|e| panic!("{}", e.message()));
            }
            let halve = |line: &str| -> String {
                let (name, v) = line.split_once(',').unwrap_or((line, "nan"));
                format!("{name},{}", v.parse::<f64>().unwrap_or(f64::NAN) / 2.0)
            };
            let staged = rows
                .finish_in_passes("h\n", &[0, 1], budget, Some(&halve))
                .unwrap_or_else(|e| panic!("{}", e.message()));
            let mut f = OutputFiles::default();
            f.files.push(("t.csv".into(), Content::Staged(staged)));
            f.write_all(&d)
                .unwrap_or_else(|e| panic!("{}", e.message()));
            assert_eq!(
                std::fs::read_to_string(d.join("t.csv")).ok().as_deref(),
                Some("h\na1,2\nb1,1\nb2,4\n"),
                "budget {budget}"
            );
        }
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn an_abandoned_spill_leaves_nothing_behind() {
        // a sweep that fails after its rows began: the spill, a staged table and the
        // directory this run created are all removed
        let d = scratch("abandoned");
        let mut rows =
            SpilledRows::create(&d, "t.csv").unwrap_or_else(|e| panic!("{}", e.message()));
        rows.push(0, "x\n")
            .unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(names(&d).len(), 1);
        drop(rows);
        assert!(!d.exists(), "{:?}", names(&d));
        let rows = SpilledRows::create(&d, "t.csv").unwrap_or_else(|e| panic!("{}", e.message()));
        let staged = rows
            .finish("h\n", &[])
            .unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(names(&d).len(), 1);
        drop(staged);
        assert!(!d.exists(), "{:?}", names(&d));
    }

    #[test]
    fn a_csv_is_written_with_its_sidecar() {
        let d = scratch("sidecar");
        let mut meta = ladderfan::records::meta::CsvMeta::new("test", vec!["ladderfan".into()]);
        meta.columns.push(ladderfan::records::meta::Column::new(
            "energy_meV",
            "meV",
            "invented",
        ));
        let mut f = OutputFiles::default();
        let file = super::super::render::CsvFile {
            meta,
            text: "energy_meV\n1e0\n".into(),
        };
        f.add_csv("a.csv", file)
            .unwrap_or_else(|e| panic!("{}", e.message()));
        f.write_all(&d)
            .unwrap_or_else(|e| panic!("{}", e.message()));
        assert_eq!(names(&d), vec!["a.csv", "a.meta.json"]);
        let side = std::fs::read_to_string(d.join("a.meta.json")).unwrap_or_default();
        let back = ladderfan::records::meta::CsvMeta::from_json(&side, "a.meta.json")
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(back.column_names(), vec!["energy_meV"]);
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
        std::fs::write(d.join(format!(".fan.csv.spill-{dead}")), "x")
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
