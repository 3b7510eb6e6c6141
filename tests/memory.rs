//! End-to-end tests of the memory guard (src/memory.rs): a huge cutoff is refused before any
//! allocation, for built-in models, model files and `[defaults]`; a sweep is refused when all
//! its points together would exceed the limit; `--cutoff` overrides a file's `[defaults]
//! cutoff`; and the estimate is not below the measured peak resident set and at most 1.3x
//! above it.
//!
//! Children run under an address-space cap (`setrlimit(RLIMIT_AS)`): a guard that allocates
//! before it refuses then aborts at once instead of swapping or hanging, so these tests fail
//! (rather than time out) on a build that enumerates sectors first. The peak resident set of
//! a child is its `ru_maxrss` from `wait4` (Linux: KiB), which is exact for that one process.

use std::io::Read;
use std::os::unix::process::CommandExt;
use std::process::{Command, Stdio};

/// Address-space cap of a child that must be refused, bytes: far below what the refused work
/// would need, well above what the program needs to start (about 80 MiB of mappings with
/// thread stacks).
const CAP_BYTES: u64 = 1 << 30;

struct Outcome {
    /// Exit code, `None` when killed by a signal (e.g. an abort on a failed allocation).
    code: Option<i32>,
    stdout: String,
    stderr: String,
    /// Peak resident set, KiB.
    peak_kib: u64,
}

/// Run the binary with `args`, optionally under an address-space cap, and reap it with `wait4`
/// to read its own peak resident set.
// the child is reaped by wait4 below, which std's `Child` does not see; unsafe for libc's
// setrlimit (address-space cap of the child) and wait4 (its own peak resident set), which std
// does not offer
#[allow(clippy::zombie_processes, unsafe_code)]
fn run(args: &[&str], cap: Option<u64>) -> Outcome {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_ladderfan"));
    cmd.args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .env("RAYON_NUM_THREADS", "2");
    if let Some(bytes) = cap {
        // SAFETY: setrlimit is async-signal-safe; the closure allocates nothing.
        unsafe {
            cmd.pre_exec(move || {
                let lim = libc::rlimit {
                    rlim_cur: bytes as libc::rlim_t,
                    rlim_max: bytes as libc::rlim_t,
                };
                if libc::setrlimit(libc::RLIMIT_AS, &lim) != 0 {
                    return Err(std::io::Error::last_os_error());
                }
                Ok(())
            });
        }
    }
    let mut child = cmd.spawn().expect("start ladderfan");
    // drain both pipes on threads so a chatty child never blocks on a full pipe
    let mut out_pipe = child.stdout.take().expect("stdout pipe");
    let mut err_pipe = child.stderr.take().expect("stderr pipe");
    let out_t = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = out_pipe.read_to_string(&mut s);
        s
    });
    let err_t = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = err_pipe.read_to_string(&mut s);
        s
    });
    let pid = child.id() as libc::pid_t;
    let mut status: libc::c_int = 0;
    // SAFETY: rusage is plain data; wait4 fills it for this child only.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    let reaped = unsafe { libc::wait4(pid, &mut status, 0, &mut usage) };
    assert_eq!(
        reaped,
        pid,
        "wait4 failed: {}",
        std::io::Error::last_os_error()
    );
    let code = libc::WIFEXITED(status).then(|| libc::WEXITSTATUS(status));
    Outcome {
        code,
        stdout: out_t.join().unwrap_or_default(),
        stderr: err_t.join().unwrap_or_default(),
        peak_kib: usage.ru_maxrss as u64,
    }
}

/// Assert a refusal: exit 2 and one error line naming the limit, the estimate and a remedy.
fn assert_refused(o: &Outcome, must_contain: &[&str]) {
    assert_eq!(
        o.code,
        Some(2),
        "expected a refusal (exit 2), got {:?}; stderr: {}",
        o.code,
        o.stderr
    );
    let line = o.stderr.trim();
    assert!(line.starts_with("ladderfan: error: "), "{line}");
    assert_eq!(line.lines().count(), 1, "one line: {line}");
    for s in ["needs about", "MiB, above the memory limit of"]
        .iter()
        .chain(must_contain)
    {
        assert!(line.contains(s), "'{s}' missing from: {line}");
    }
}

/// The estimate in MiB the guard compares, read from the refusal of the same command line
/// with a limit of 1 MiB.
fn estimate_mib(args: &[&str]) -> u64 {
    estimate_mib_at(args, "1")
}

/// [`estimate_mib`] with a limit of `limit_mib`: a sweep whose one solve alone is refused at
/// 1 MiB shows the estimate of the whole sweep only above that solve's.
fn estimate_mib_at(args: &[&str], limit_mib: &str) -> u64 {
    let mut a: Vec<&str> = args.to_vec();
    a.extend(["--memory-limit-mib", limit_mib]);
    let o = run(&a, Some(CAP_BYTES));
    assert_refused(&o, &[]);
    let tail = o.stderr.split("needs about ").nth(1).expect("estimate");
    tail.split(' ')
        .next()
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("no number in: {}", o.stderr))
}

fn model_file(dir: &std::path::Path, name: &str, defaults_cutoff: &str) -> String {
    // invented parameters (a massless 2D Dirac film written term by term)
    let text = format!(
        r#"name = "invented-film"
components = 2
charge = -1
units = "lab"

[parameters]
hv = "hbar_v(5.0e5)"

[[term]]
coefficient = "hv"
matrix = "x"
monomial = "kx"

[[term]]
coefficient = "hv"
matrix = "y"
monomial = "ky"

[defaults]
field = 2.0
cutoff = {defaults_cutoff}
"#
    );
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write model file");
    path.display().to_string()
}

fn temp_dir(tag: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("ladderfan-memory-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&d).expect("temp dir");
    d
}

// Issue #12 row 1: on 852de3c the guard enumerated every sector first: cutoff 1e9 aborted on
// an 8 GiB allocation, 1e12 hung.
#[test]
fn huge_cutoff_of_a_builtin_is_refused_before_any_allocation() {
    for cutoff in ["1000000000", "1000000000000", "18446744073709551615"] {
        for cmd in [
            vec!["levels"],
            vec!["dos"],
            vec!["optics"],
            vec!["converge", "--mode", "study"],
            vec!["export"],
        ] {
            let mut args = cmd.clone();
            args.extend(["--builtin", "dirac2d", "--cutoff", cutoff]);
            let o = run(&args, Some(CAP_BYTES));
            assert_refused(&o, &["lower the cutoff"]);
            // far below the cap: nothing was allocated for the refused work
            assert!(o.peak_kib < 64 * 1024, "{args:?}: peak {} KiB", o.peak_kib);
        }
    }
}

// Issue #12 row 1, model files: `--cutoff 1e12` on a file and a huge `[defaults] cutoff`.
#[test]
fn huge_cutoff_of_a_model_file_and_of_its_defaults_is_refused() {
    let dir = temp_dir("huge");
    let file = model_file(&dir, "huge.toml", "1000000000000");
    // the file's own default
    let o = run(&["levels", "--model", &file], Some(CAP_BYTES));
    assert_refused(&o, &["cutoff 1000000000000", "lower the cutoff"]);
    // a flag just as huge
    let small = model_file(&dir, "small.toml", "40");
    let o = run(
        &["levels", "--model", &small, "--cutoff", "1000000000000"],
        Some(CAP_BYTES),
    );
    assert_refused(&o, &["--cutoff", "cutoff 1000000000000"]);
    let _ = std::fs::remove_dir_all(&dir);
}

// Issue #12 row 12: a file's `[defaults] cutoff` could not be overridden by `--cutoff` (the
// default was checked, and with a huge value enumerated, while the file was read).
#[test]
fn cutoff_flag_overrides_a_huge_defaults_cutoff() {
    let dir = temp_dir("override");
    let file = model_file(&dir, "huge.toml", "1000000000000");
    let o = run(
        &["levels", "--model", &file, "--cutoff", "40", "--json"],
        Some(CAP_BYTES),
    );
    assert_eq!(o.code, Some(0), "stderr: {}", o.stderr);
    let v: serde_json::Value = serde_json::from_str(&o.stdout).expect("json");
    assert_eq!(v["cutoff"], 40);
    // 40 orbitals x 2 components
    assert_eq!(v["levels_total"], 80);
    // and a modest default is used when no flag is given
    let file = model_file(&dir, "modest.toml", "30");
    let o = run(&["levels", "--model", &file, "--json"], Some(CAP_BYTES));
    assert_eq!(o.code, Some(0), "stderr: {}", o.stderr);
    let v: serde_json::Value = serde_json::from_str(&o.stdout).expect("json");
    assert_eq!(v["cutoff"], 30);
    let _ = std::fs::remove_dir_all(&dir);
}

// Issue #12 row 3: a sweep kept every point and had no guard (5.8 GB peak for 200 points).
// The fan now streams (a few points in flight), so 200 points fit; 2000 points are refused
// for the track records, counted at 64 bytes per level and point (an upper bound).
#[test]
fn sweep_refused_when_all_points_together_exceed_the_limit() {
    let o = run(
        &[
            "fan",
            "--builtin",
            "dirac2d",
            "--b-max",
            "5",
            "--cutoff",
            "100000",
            "--points",
            "2000",
        ],
        Some(CAP_BYTES),
    );
    assert_refused(
        &o,
        &[
            "fan",
            "2000 points",
            "in flight",
            "fewer points",
            "--points",
        ],
    );
    let streamed = estimate_mib(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "5",
        "--cutoff",
        "100000",
        "--points",
        "200",
    ]);
    assert!(streamed < 4096, "200 streamed points: {streamed} MiB");
    // two points of the same sweep fit: the refusal is about keeping all of them
    let two = estimate_mib(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "5",
        "--cutoff",
        "100000",
        "--points",
        "2",
    ]);
    assert!(two < 4096, "two points: {two} MiB");
    // the dos sweep is guarded the same way
    let o = run(
        &[
            "dos",
            "--builtin",
            "dirac2d",
            "--b-max",
            "5",
            "--cutoff",
            "300000",
            "--points",
            "400",
            "--density-cm2",
            "1e12",
        ],
        Some(CAP_BYTES),
    );
    assert_refused(&o, &["dos --b-max", "400 points"]);
}

// `optics --b-max` solves one field with eigenvectors per thread at a time: what grows with the
// fields is only the transitions kept, all of them with --json, two batches when streamed. The
// transitions per field are counted at the probe (here 37 at 5 T, 30 K) and scaled to the
// lowest field (x10).
#[test]
fn transition_fan_refused_only_when_its_kept_transitions_exceed_the_limit() {
    let args = |points: &'static str, json: bool| {
        let mut a = vec![
            "optics",
            "--builtin",
            "dirac2d",
            "--b-max",
            "5",
            "--cutoff",
            "200",
            "--density-cm2",
            "1e12",
            "--temperature",
            "30",
            "--memory-limit-mib",
            "40",
            "--points",
            points,
        ];
        if json {
            a.push("--json");
        }
        a
    };
    let o = run(&args("2000", true), Some(CAP_BYTES));
    assert_refused(
        &o,
        &[
            "optics",
            "2000 fields",
            "the transitions of 2000 kept",
            "--points",
        ],
    );
    // streamed, the same limit holds the sweep (run here with fewer fields, to stay quick)
    let o = run(&args("40", false), Some(CAP_BYTES));
    assert_eq!(o.code, Some(0), "{}", o.stderr);
    assert!(
        o.stdout.contains("transition fan: 40 fields"),
        "{}",
        o.stdout
    );
}

/// Estimate and measured peak of one command line: the estimate must not be below the peak and
/// at most 1.3x above it (issue #12, "within 1.3x of the measured peak").
///
/// `runs` > 1 for a command whose peak depends on the schedule of its threads (a streamed
/// sweep holds up to two batches of results, fewer when a batch is handed on before the next
/// one finishes): the estimate is an upper bound for every schedule, so it is held against
/// the largest peak of the runs.
fn assert_estimate_tracks_peak(args: &[&str], runs: usize) {
    assert_estimate_tracks_peak_at(args, runs, "1");
}

/// [`assert_estimate_tracks_peak`] with the estimate read at a limit of `probe_limit_mib`
/// ([`estimate_mib_at`]).
fn assert_estimate_tracks_peak_at(args: &[&str], runs: usize, probe_limit_mib: &str) {
    let est_kib = estimate_mib_at(args, probe_limit_mib) * 1024;
    let mut peak_kib = 0;
    for _ in 0..runs.max(1) {
        let o = run(args, None);
        assert_eq!(o.code, Some(0), "{args:?}: {}", o.stderr);
        peak_kib = peak_kib.max(o.peak_kib);
    }
    let ratio = est_kib as f64 / peak_kib as f64;
    eprintln!("{args:?}: estimate {est_kib} KiB, largest peak of {runs} run(s) {peak_kib} KiB, ratio {ratio:.2}");
    assert!(
        (1.0..=1.3).contains(&ratio),
        "{args:?}: estimate {est_kib} KiB vs largest peak {peak_kib} KiB of {runs} run(s) (ratio {ratio:.2})"
    );
}

// Issue #12 row 2: the estimate was about 2.25x below the peak.
#[test]
fn estimate_is_not_below_the_peak_of_a_solve() {
    assert_estimate_tracks_peak(&["levels", "--builtin", "dirac2d", "--cutoff", "400000"], 1);
}

#[test]
fn estimate_is_not_below_the_peak_of_a_sweep() {
    assert_estimate_tracks_peak(
        &[
            "fan",
            "--builtin",
            "dirac2d",
            "--b-max",
            "5",
            "--cutoff",
            "20000",
            "--points",
            "16",
        ],
        4,
    );
}

#[test]
fn estimate_is_not_below_the_peak_of_a_streamed_transition_fan() {
    // `optics --b-max` solves one field with eigenvectors per thread at a time and drops it
    // once its transitions are found (the probe's eigenvectors are dropped before the sweep):
    // the estimate counts the fields in flight, not every field
    assert_estimate_tracks_peak(
        &[
            "optics",
            "--builtin",
            "dirac2d",
            "--b-max",
            "8",
            "--cutoff",
            "20000",
            "--density-cm2",
            "1e12",
            "--points",
            "24",
        ],
        3,
    );
}

/// `dos --b-max`: a Fermi-level sweep of the built-in dirac2d model at 1e12 cm^-2.
fn fermi_sweep_args<'a>(cutoff: &'a str, points: &'a str) -> [&'a str; 11] {
    [
        "dos",
        "--builtin",
        "dirac2d",
        "--b-max",
        "8",
        "--cutoff",
        cutoff,
        "--density-cm2",
        "1e12",
        "--points",
        points,
    ]
}

// `dos --b-max` streams its fields: each spectrum is dropped once its Fermi level is found and
// its converged levels are added to the figure's lines, thinned to the figure's columns. The
// estimate counts two batches of spectra in flight and every level's line at its most values;
// the single solve at cutoff 2000 (10 MiB) is below the probe's limit of 11 MiB, the sweep
// above it.
#[test]
fn estimate_is_not_below_the_peak_of_a_streamed_fermi_sweep() {
    assert_estimate_tracks_peak_at(&fermi_sweep_args("2000", "600"), 3, "11");
}

// Flat in the number of fields: 4x the fields of a Fermi-level sweep add at most 8 MiB to its
// peak, what the figure's lines gain while they fill up to their 3 x 480 values (when every
// spectrum was kept, 2400 fields at cutoff 300 peaked at 226 MB against 63 MB for 600;
// streamed, 21-23 MB against 21 MB, debug build, 2026-12-05).
#[test]
fn a_streamed_fermi_sweep_holds_flat_memory_in_its_fields() {
    let peak = |points: &str| {
        let o = run(&fermi_sweep_args("300", points), None);
        assert_eq!(o.code, Some(0), "{}", o.stderr);
        o.peak_kib
    };
    let (few, many) = (peak("600"), peak("2400"));
    eprintln!("dos --b-max at cutoff 300: peak {few} KiB at 600 fields, {many} KiB at 2400");
    assert!(
        many < few + 8 * 1024,
        "600 fields: {few} KiB, 2400 fields: {many} KiB"
    );
}
