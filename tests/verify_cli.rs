//! Verification of level formulas on the command line: one passing (exit 0) and one failing
//! (exit 1) run, CSV lists and bad input (exit 2), model-file parameters as formula variables.
//!
//! Model parameters are invented; the binary runs through tests/common/cli.rs.

use ladderfan::units::BOHR_MAGNETON_MEV_PER_T;

mod common;

// ---------------------------------------------------------------------------------------------
// The command line

fn ladderfan(args: &[&str]) -> (i32, String, String) {
    let r = common::cli::run(args);
    (r.code, r.stdout, r.stderr)
}

const DIRAC2D_N: &str = "s*sqrt(mass_mev^2 + 2*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)";

#[test]
fn cli_passing_formula_exits_zero_with_a_pass_verdict() {
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=5",
        "--field",
        "3",
        "--cutoff",
        "160",
        "--formula",
        DIRAC2D_N,
        "--formula-n0",
        "valley*sign(q*B)*mass_mev",
        "--n",
        "0..40",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    let last = out.lines().last().unwrap_or_default();
    assert!(
        last.starts_with("verdict: PASS: all 81 levels in the window agree"),
        "{last}"
    );
    // the n = 0 level at tau sign(qB) Delta = -5 meV is listed as agreeing
    assert!(out
        .lines()
        .any(|l| l.starts_with("n=0 ") && l.contains("-5.000000000") && l.contains("agrees")));
}

#[test]
fn cli_failing_formula_exits_one_and_lists_the_forgotten_level() {
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=5",
        "--field",
        "3",
        "--cutoff",
        "160",
        "--formula",
        DIRAC2D_N,
        "--n",
        "1..40",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 1, "{out}\n{err}");
    let last = out.lines().last().unwrap_or_default();
    assert_eq!(
        last,
        "verdict: FAIL: 0 of 80 paired levels disagree, 1 numerical level(s) have no expected \
         partner, 0 expected level(s) have no numerical partner"
    );
    let row: Vec<&str> = out
        .lines()
        .filter(|l| l.contains("NO EXPECTED PARTNER"))
        .collect();
    assert_eq!(row.len(), 1, "{out}");
    assert!(row[0].contains("-5.000000000"), "{}", row[0]);
    assert!(err.contains("verification failed"), "{err}");

    // JSON: the same verdict, machine-readable, same exit code
    let (code, json, _) = ladderfan(&[
        "verify",
        "--builtin",
        "pauli",
        "--set",
        "mass_ratio=0.2",
        "--field",
        "3",
        "--cutoff",
        "60",
        "--formula",
        "hbar*e*abs(q*B)/(mass_ratio*m_e)*(n + 1/2)",
        "--n",
        "0..10",
        "--s",
        "-1,1",
        "--json",
    ]);
    assert_eq!(code, 1);
    let v: serde_json::Value = match serde_json::from_str(&json) {
        Ok(v) => v,
        Err(e) => panic!("{e}: {json}"),
    };
    assert_eq!(v["verdict"]["outcome"], "fail");
    // the dropped Zeeman term (g/2) mu_B B, g = 2 (built-in default): every pair disagrees by it
    let z = BOHR_MAGNETON_MEV_PER_T * 3.0;
    let pairs = v["verdict"]["pairs"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    assert_eq!(pairs.len(), 22);
    for p in &pairs {
        assert_eq!(p["agreement"], "disagrees");
        let d = p["deviation"].as_f64().unwrap_or(0.0).abs();
        assert!((d - z).abs() < 1e-9, "{d} vs {z}");
    }
}

#[test]
fn cli_csv_and_bad_input() {
    // CSV of Landau 1930 levels for the free electron at 2 T (hbar omega_c = 2 mu_B B)
    let w = 2.0 * BOHR_MAGNETON_MEV_PER_T * 2.0;
    // the column names of the files ladderfan writes (levels.csv): landau_index, energy_meV
    let mut text = String::from("landau_index,energy_meV\n");
    for n in 0..=8 {
        text.push_str(&format!("{n},{:.17e}\n", w * (n as f64 + 0.5)));
    }
    let path = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("verify_landau.csv");
    if let Err(e) = std::fs::write(&path, text) {
        panic!("{e}");
    }
    let p = path.display().to_string();
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "schrodinger",
        "--field",
        "2",
        "--cutoff",
        "40",
        "--expected",
        &p,
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    assert!(out.contains("verdict: PASS: all 9 levels"), "{out}");
    // the levels.csv that `levels --out` writes is itself a valid expected list
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("verify_levels_csv");
    let d = dir.display().to_string();
    let schrodinger = ["--builtin", "schrodinger", "--field", "2", "--cutoff", "40"];
    let (code, _, err) = ladderfan(
        &[
            &["levels"][..],
            &schrodinger,
            &["--count", "6", "--out", &d],
        ]
        .concat(),
    );
    assert_eq!(code, 0, "{err}");
    let levels_csv = dir.join("levels.csv").display().to_string();
    let (code, out, err) =
        ladderfan(&[&["verify"][..], &schrodinger, &["--expected", &levels_csv]].concat());
    assert_eq!(code, 0, "{out}\n{err}");
    assert!(out.contains("verdict: PASS: all 6 levels"), "{out}");
    // bad input: exit 2 with one located error line
    for (args, want) in [
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--formula",
                "n +",
                "--n",
                "0..3",
            ],
            "--formula: column",
        ),
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--formula",
                "n",
                "--n",
                "3..1",
            ],
            "--n",
        ),
        (
            vec!["verify", "--builtin", "schrodinger"],
            "nothing to verify",
        ),
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--expected",
                "/no/such/file.csv",
            ],
            "/no/such/file.csv",
        ),
    ] {
        let (code, _, err) = ladderfan(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(want), "{args:?}: {err}");
        assert_eq!(err.lines().count(), 1, "{err}");
    }
}

#[test]
fn cli_model_file_parameters_are_formula_variables() {
    // tests/data/pauli_zeeman.toml: [parameters] m = 0.2, g = -4.4 (invented); Landau 1930 plus
    // the Zeeman term, written with the file's own parameter names
    let file = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/pauli_zeeman.toml");
    let (code, out, err) = ladderfan(&[
        "verify",
        "--model",
        file,
        "--field",
        "4",
        "--cutoff",
        "60",
        "--formula",
        "hbar*e*abs(q*B)/(m*m_e)*(n + 1/2) + s*g/2*mu_B*B",
        "--n",
        "0..20",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    assert!(out.contains("verdict: PASS: all 42 levels"), "{out}");
}
