//! Hostile input through the binary: every kind of input that used to abort, hang, panic,
//! print `null` or lose a file now ends with exit code 2 (or 0 and a named warning) and one
//! `ladderfan: error:` line. Each test is named after the defect it pins and holds its input.
//! All models here are invented.

use serde_json::Value;
use std::path::{Path, PathBuf};

mod common;
use common::{run_in, Run};

fn scratch(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("hostile")
        .join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
    d
}

fn run(args: &[&str]) -> Run {
    run_in(Path::new(env!("CARGO_TARGET_TMPDIR")), args)
}

/// Exit code 2, exactly one line on stderr starting with `ladderfan:` (the last; a sweep's
/// progress summary may come before it) that is an error containing every word of `words`,
/// and nothing on stdout.
fn assert_bad_input(r: &Run, words: &[&str], context: &str) {
    assert_eq!(r.code, 2, "{context}: exit code {} ({})", r.code, r.stderr);
    let lines: Vec<&str> = r
        .stderr
        .lines()
        .filter(|l| l.starts_with("ladderfan:"))
        .collect();
    assert_eq!(lines.len(), 1, "{context}: not one line: {}", r.stderr);
    assert!(
        r.stderr.trim_end().ends_with(lines[0]),
        "{context}: {}",
        r.stderr
    );
    assert!(
        lines[0].starts_with("ladderfan: error: "),
        "{context}: {}",
        lines[0]
    );
    assert!(
        lines[0].len() < 600,
        "{context}: line of {} bytes",
        lines[0].len()
    );
    for w in words {
        assert!(
            lines[0].contains(w),
            "{context}: '{w}' missing in: {}",
            lines[0]
        );
    }
    assert!(r.stdout.is_empty(), "{context}: stdout: {}", r.stdout);
}

/// A one-component file (invented quadratic model) whose first coefficient is `coef`.
fn quadratic_model(dir: &Path, coef: &str) -> PathBuf {
    let p = dir.join("m.toml");
    let text = format!(
        "name = \"invented-quadratic\"\ncomponents = 1\n[[term]]\ncoefficient = {coef}\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = {coef}\nmatrix = [[1]]\nmonomial = \"ky^2\"\n"
    );
    std::fs::write(&p, text).unwrap_or_else(|e| panic!("{e}"));
    p
}

fn nested(depth: usize) -> String {
    format!("{}1{}", "(".repeat(depth), ")".repeat(depth))
}

#[test]
fn deeply_nested_expressions_are_refused_in_every_parser() {
    // row 4: about 20,000 nested parentheses overflowed the stack
    let d = scratch("nested");
    for depth in [4_000, 20_000] {
        let m = quadratic_model(&d, &format!("\"{}\"", nested(depth)));
        let m = m.to_string_lossy().into_owned();
        let r = run(&["levels", "--model", &m, "--cutoff", "10"]);
        assert_bad_input(&r, &["m.toml:4:15"], "model file");
        let set = format!("mass_mev={}", nested(depth));
        let r = run(&[
            "levels",
            "--builtin",
            "dirac2d",
            "--set",
            &set,
            "--cutoff",
            "10",
        ]);
        assert_bad_input(&r, &["--set mass_mev"], "--set");
        let e = nested(depth);
        let r = run(&[
            "verify",
            "--builtin",
            "dirac2d",
            "--cutoff",
            "20",
            "--n",
            "0..3",
            "--formula",
            &e,
        ]);
        assert_bad_input(&r, &["--formula"], "--formula");
        let case = format!("n < 2 => {e}");
        let r = run(&[
            "verify",
            "--builtin",
            "dirac2d",
            "--cutoff",
            "20",
            "--n",
            "0..3",
            "--formula",
            "1",
            "--case",
            &case,
        ]);
        assert_bad_input(&r, &["--case"], "--case");
    }
}

#[test]
fn a_long_pauli_string_is_refused_before_it_is_expanded() {
    // row 5: a 24-factor string aborted (2^24 x 2^24 matrix)
    let d = scratch("pauli");
    let p = d.join("p.toml");
    let text = format!(
        "components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"{}\"\nmonomial = \"1\"\n",
        "x".repeat(24)
    );
    std::fs::write(&p, text).unwrap_or_else(|e| panic!("{e}"));
    let r = run(&["levels", "--model", &p.to_string_lossy()]);
    assert_bad_input(&r, &["p.toml:4:10", "more than 6 factors"], "pauli");
}

#[test]
fn a_failed_out_write_keeps_the_earlier_files() {
    // row 6: when DIR/fan.svg is a directory, the old DIR/fan.csv was deleted
    let d = scratch("keep");
    let out = d.join("out");
    std::fs::create_dir_all(out.join("fan.svg").join("inside")).unwrap_or_else(|e| panic!("{e}"));
    std::fs::write(out.join("fan.csv"), "my earlier fan\n").unwrap_or_else(|e| panic!("{e}"));
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "2",
        "--points",
        "4",
        "--cutoff",
        "20",
        "--out",
        &out.to_string_lossy(),
    ]);
    assert_bad_input(
        &r,
        &["--out", "fan.svg", "is a directory"],
        "fan.svg directory",
    );
    assert_eq!(
        std::fs::read_to_string(out.join("fan.csv")).ok().as_deref(),
        Some("my earlier fan\n")
    );
    // the temporaries of a killed run (its pid no longer exists) are removed by the next run
    let dead = format!(".fan.csv.tmp-{}", u32::MAX - 3);
    std::fs::write(out.join(&dead), "partial").unwrap_or_else(|e| panic!("{e}"));
    std::fs::remove_dir_all(out.join("fan.svg")).unwrap_or_else(|e| panic!("{e}"));
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "2",
        "--points",
        "4",
        "--cutoff",
        "20",
        "--out",
        &out.to_string_lossy(),
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(!out.join(&dead).exists(), "stale temporary left");
    let mut names: Vec<String> = std::fs::read_dir(&out)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["fan.csv", "fan.meta.json", "fan.svg"]);
    // an --out below a regular file cannot be created: a remedy, exit 2
    let below = d.join("out").join("fan.csv").join("sub");
    let r = run(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--cutoff",
        "20",
        "--out",
        &below.to_string_lossy(),
    ]);
    assert_bad_input(
        &r,
        &["--out", "choose a directory you can write to"],
        "unwritable",
    );
}

#[test]
fn negative_numbers_with_signed_exponents_are_values() {
    // row 7: `--field -1e-3` was "unexpected argument"; `--cutoff -5` got the same message
    let r = run(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--field",
        "-1e-3",
        "--cutoff",
        "20",
        "--json",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let v: Value = serde_json::from_str(&r.stdout).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(v["field"].as_f64(), Some(-1e-3));
    let r = run(&["levels", "--builtin", "dirac2d", "--cutoff", "-5"]);
    assert_bad_input(&r, &["--cutoff", "-5 is negative"], "negative cutoff");
    let r = run(&[
        "dos",
        "--builtin",
        "dirac2d",
        "--cutoff",
        "20",
        "--emin",
        "-1e+1",
        "--emax",
        "1e1",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
}

#[test]
fn a_chain_of_2000_parameters_resolves() {
    // row 8: resolution was cubic (over 10 s for 2000). The worst order for the old rounds:
    // each name refers to the next in name order, p0000 = p0001 + 1, ..., p1999 = 1, so
    // p0000 = 2000. Counted evaluations are checked by the library test of the same name.
    let d = scratch("chain");
    let mut text = String::from("name = \"invented-chain\"\ncomponents = 1\n[parameters]\n");
    for i in 0..1999 {
        text.push_str(&format!("p{i:04} = \"p{:04} + 1\"\n", i + 1));
    }
    text.push_str("p1999 = 1\n[[term]]\ncoefficient = \"p0000 / 2000\"\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n");
    let p = d.join("chain.toml");
    std::fs::write(&p, text).unwrap_or_else(|e| panic!("{e}"));
    let r = run(&[
        "levels",
        "--model",
        &p.to_string_lossy(),
        "--cutoff",
        "10",
        "--json",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let v: Value = serde_json::from_str(&r.stdout).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(v["model"]["parameters"]["p0000"].as_f64(), Some(2000.0));
}

#[test]
fn non_finite_results_are_errors_never_null() {
    // row 9: each of these printed JSON `null` and exited 0
    let d = scratch("finite");
    let m = quadratic_model(&d, "1e300");
    let m = m.to_string_lossy().into_owned();
    let cases: Vec<Vec<&str>> = vec![
        vec!["levels", "--model", &m, "--cutoff", "20", "--json"],
        vec![
            "levels",
            "--builtin",
            "dirac2d",
            "--field",
            "1e-308",
            "--cutoff",
            "20",
            "--json",
        ],
        vec![
            "dos",
            "--builtin",
            "dirac2d",
            "--width",
            "1e-308",
            "--cutoff",
            "20",
            "--json",
        ],
        vec![
            "optics",
            "--builtin",
            "dirac2d",
            "--set",
            "charge=1e308",
            "--cutoff",
            "20",
            "--json",
        ],
        vec![
            "dos",
            "--builtin",
            "dirac2d",
            "--width",
            "1e-308",
            "--cutoff",
            "20",
        ],
    ];
    for args in &cases {
        let r = run(args);
        assert_bad_input(&r, &["is not allowed"], &args.join(" "));
    }
    // a huge but representable field: finite numbers, or a refusal; never null
    let r = run(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--field",
        "1e200",
        "--cutoff",
        "20",
        "--json",
    ]);
    assert!(r.code == 0 || r.code == 2, "{}", r.stderr);
    assert!(!r.stdout.contains("null"), "{}", r.stdout);
}

#[test]
fn nothing_converged_is_a_named_warning() {
    // row 9: a run where nothing converged exited 0 with no warning. Invented quartic model
    // at a cutoff of 5: every level leaks out of the basis.
    let d = scratch("unconverged");
    let p = d.join("q.toml");
    std::fs::write(
        &p,
        "name = \"invented-quartic\"\ncomponents = 1\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^4\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^4\"\n",
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let r = run(&[
        "levels",
        "--model",
        &p.to_string_lossy(),
        "--cutoff",
        "5",
        "--json",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stderr
            .starts_with("ladderfan: warning: nothing converged"),
        "{}",
        r.stderr
    );
    let v: Value = serde_json::from_str(&r.stdout).unwrap_or_else(|e| panic!("{e}"));
    let w = v["warnings"].as_array().cloned().unwrap_or_default();
    assert_eq!(w.len(), 1);
    assert!(w[0]
        .as_str()
        .is_some_and(|s| s.starts_with("nothing converged")));
    // a converged run has an empty list
    let r = run(&["levels", "--builtin", "dirac2d", "--cutoff", "40", "--json"]);
    let v: Value = serde_json::from_str(&r.stdout).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(v["warnings"].as_array().map(Vec::len), Some(0));
}

#[test]
fn sizes_from_input_have_limits() {
    // row 10: 18446744073709551615 energy points panicked, 1e9 aborted; a component name of
    // 65,536 characters panicked the table; 100000 threads were started
    for n in ["18446744073709551615", "1e9", "1000000000"] {
        let r = run(&["dos", "--builtin", "dirac2d", "--energy-points", n]);
        assert_bad_input(&r, &["--energy-points"], n);
    }
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "1",
        "--threads",
        "100000",
        "--cutoff",
        "20",
    ]);
    assert_bad_input(&r, &["--threads", "limit of 1024"], "threads");
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "1",
        "--points",
        "100001",
    ]);
    assert_bad_input(&r, &["--points", "limit of 100000"], "points");
    let d = scratch("names");
    let p = d.join("n.toml");
    std::fs::write(
        &p,
        format!(
            "components = 1\ncomponent_names = [\"{}\"]\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n",
            "A".repeat(65_536)
        ),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let r = run(&["levels", "--model", &p.to_string_lossy()]);
    assert_bad_input(&r, &["n.toml:2:19", "limit of 256"], "name");
}

#[test]
fn json_with_shard_is_refused_and_converge_json_is_reproducible() {
    // row 12: --json was silently ignored with --shard
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-max",
        "1",
        "--shard",
        "1/2",
        "--json",
        "--cutoff",
        "20",
    ]);
    assert_bad_input(&r, &["--json", "--shard"], "shard json");
    // row 12: converge --json carried wall-clock times, so two runs differed
    for args in [
        vec![
            "converge",
            "--builtin",
            "dirac2d",
            "--cutoff",
            "40",
            "--json",
        ],
        vec![
            "converge",
            "--builtin",
            "dirac2d",
            "--mode",
            "auto",
            "--count",
            "5",
            "--json",
        ],
    ] {
        let a = run(&args);
        let b = run(&args);
        assert_eq!(a.code, 0, "{}", a.stderr);
        assert_eq!(a.stdout, b.stdout, "{args:?}: two runs differ");
        assert!(!a.stdout.contains("seconds"), "{}", a.stdout);
    }
    let r = run(&[
        "converge",
        "--builtin",
        "dirac2d",
        "--cutoff",
        "40",
        "--json",
        "--timings",
    ]);
    assert!(
        r.stdout.contains("\"seconds\""),
        "--timings keeps them on request"
    );
}

#[test]
fn file_problems_have_a_remedy_and_the_right_line() {
    // row 12: binary files, TOML syntax errors (pointing at the wrong line), duplicate keys
    let d = scratch("files");
    let bin = d.join("bin.toml");
    std::fs::write(&bin, [0xffu8, 0xfe, 0x00, 0x01, b'a']).unwrap_or_else(|e| panic!("{e}"));
    let r = run(&["levels", "--model", &bin.to_string_lossy()]);
    assert_bad_input(
        &r,
        &["--model", "not a text file", "TOML model file"],
        "binary",
    );
    let open = d.join("open.toml");
    std::fs::write(
        &open,
        "components = 1\nname = \"x\"\nweights = [1, 2\n\n\ndescription = \"y\"\n",
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let r = run(&["levels", "--model", &open.to_string_lossy()]);
    assert_bad_input(
        &r,
        &["open.toml:3:16", "noticed at line 6", "fix the TOML"],
        "unclosed",
    );
    let dup = d.join("dup.toml");
    std::fs::write(&dup, "components = 1\nname = \"a\"\nname = \"b\"\n")
        .unwrap_or_else(|e| panic!("{e}"));
    let r = run(&["levels", "--model", &dup.to_string_lossy()]);
    assert_bad_input(
        &r,
        &["dup.toml:3:1", "duplicate key", "remove or merge"],
        "duplicate",
    );
}
