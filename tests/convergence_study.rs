//! The convergence study over doubling cutoffs: tracked levels, rates, needed cutoffs, tables
//! and plot, the actual error against a closed form, and `ladderfan converge` end to end.
//!
//! Expected values come from `ladderfan::closed_form` (published formulas, each with its
//! source there), never from the solver; helpers in tests/common/catalogue.rs.

use ladderfan::plot::study::study_svg;
use ladderfan::trust::converge::{
    auto, doubling, study, AutoSettings, ExactValues, NeededCutoff, ReferenceKind, Selection,
};
use ladderfan::trust::report::{csv_columns, study_csv, study_json};
use ladderfan::units::HBAR2_OVER_2ME_MEV_NM2;
use ladderfan::{FieldPoint, Settings};

mod common;
use common::catalogue::*;

/// Study: doubling cutoffs, tracked levels, rates, needed cutoffs, tables and plot.
#[test]
fn study_tables_and_plot() {
    let m = anharmonic();
    let p = FieldPoint::field(5.0);
    let base = Settings {
        tolerance: 1e-10,
        ..Settings::default()
    };
    let cutoffs = doubling(12, 5);
    assert_eq!(cutoffs, vec![12, 24, 48, 96, 192]);
    let st = study(
        &m,
        p,
        &base,
        &cutoffs,
        Selection::Nearest {
            target: 0.0,
            count: 4,
        },
        ExactValues::ClosedFormIfKnown,
    )
    .expect("study");
    assert_eq!(st.levels.len(), 4);
    for l in &st.levels {
        assert_eq!(l.entries.len(), 5);
        assert_eq!(l.exact, ReferenceKind::LargestCutoff);
        // the actual error against the largest cutoff is within the bound (+ the reference's own bound)
        let last_bound = l.entries[4].bound.expect("matched");
        for e in &l.entries {
            let (err, b) = (e.actual_error.expect("matched"), e.bound.expect("matched"));
            assert!(err <= b + last_bound + rounding(l.reference_value, 1.0));
        }
        // the change decays
        let rate = l.change_rate_per_orbital.expect("two changes");
        assert!(rate > 0.0, "rate {rate}");
        assert!(matches!(
            l.needed_cutoff,
            NeededCutoff::Observed(_) | NeededCutoff::Extrapolated(_)
        ));
    }
    let csv = study_csv(&st, "meV").expect("csv");
    let mut lines = csv.lines();
    assert_eq!(
        lines.next(),
        Some(csv_columns("meV").join(",").as_str()),
        "the first line is the column line"
    );
    // the names of the shared column convention (README, "Output files")
    assert_eq!(
        csv_columns("meV")[7..12].join(","),
        "energy_meV,residual_bound_meV,kato_temple_bound_meV,change_meV,actual_error_meV"
    );
    assert_eq!(lines.count(), 4 * 5);
    let json = study_json(&st).expect("json");
    let v: serde_json::Value = serde_json::from_str(&json).expect("valid JSON");
    assert_eq!(v["levels"].as_array().map(|a| a.len()), Some(4));
    let path =
        std::env::temp_dir().join(format!("ladderfan-trust-study-{}.svg", std::process::id()));
    study_svg(&st, &path).expect("svg");
    let svg = std::fs::read_to_string(&path).expect("read back");
    assert!(svg.starts_with("<svg") && svg.contains("cutoff N"));
    let _ = std::fs::remove_file(&path);
    // with exact values, the actual error is measured against them
    let exact: Vec<f64> = st.levels.iter().map(|l| l.reference_value).collect();
    let st2 = study(
        &m,
        p,
        &base,
        &cutoffs,
        Selection::Nearest {
            target: 0.0,
            count: 4,
        },
        ExactValues::Given(&exact),
    )
    .expect("study");
    assert!(st2.levels.iter().all(|l| l.exact == ReferenceKind::Exact));
}

/// A study of a model with a closed form measures the actual error against it: the tilted
/// cone (Goerbig et al., Phys. Rev. B 78, 045415 (2008), via `closed_form`) converges
/// gradually, and at every cutoff the closed form lies within the residual bound.
#[test]
fn study_against_closed_form() {
    let m = model(Kind::Tilted, -1.0);
    let p = FieldPoint::field(3.0);
    let st = study(
        &m,
        p,
        &Settings::default(),
        &doubling(6, 4),
        Selection::Nearest {
            target: 0.0,
            count: 5,
        },
        ExactValues::ClosedFormIfKnown,
    )
    .expect("study");
    assert_eq!(st.levels.len(), 5);
    let exact = exact_levels(Kind::Tilted, &m, p, 200);
    let mut decaying = 0;
    for l in &st.levels {
        assert_eq!(l.exact, ReferenceKind::Exact);
        for e in &l.entries {
            // the bound promises an eigenvalue near the matched level (not necessarily the
            // tracked one when the match at a small cutoff is another level)
            let (en, b) = (e.energy.expect("matched"), e.bound.expect("matched"));
            let nearest = exact
                .iter()
                .map(|x| x.energy)
                .min_by(|a, b| (a - en).abs().total_cmp(&(b - en).abs()))
                .expect("non-empty");
            let err = (en - nearest).abs();
            assert!(
                err <= b + rounding(nearest, 1.0),
                "cutoff {}: error {err:e} > bound {b:e}",
                e.cutoff
            );
        }
        let first = l.entries[0].actual_error.expect("matched");
        let last = l.entries[3].actual_error.expect("matched");
        if first > 1e-9 && last < 1e-3 * first {
            decaying += 1;
        }
    }
    assert!(
        decaying >= 3,
        "only {decaying} levels show convergence: {}",
        ladderfan::trust::report::study_csv(&st, "meV").unwrap_or_default()
    );
}

/// End to end: `ladderfan converge` in both modes, JSON and files, and its exit codes.
#[test]
fn cli_converge_end_to_end() {
    use std::process::Command;
    let bin = env!("CARGO_BIN_EXE_ladderfan");
    let dir = std::env::temp_dir().join(format!("ladderfan-trust-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    // the anharmonic test model as a model file: hbar^2/2m* for m* = 0.067 m_e
    // (38.0998 meV nm^2 / 0.067, CODATA 2018 via units.rs) and the invented lambda
    let file = dir.join("anharmonic.toml");
    let c = HBAR2_OVER_2ME_MEV_NM2 / 0.067;
    let mut toml = format!(
        "name = \"invented-anharmonic\"\ncomponents = 1\ncharge = -1\nunits = \"lab\"\n\n[parameters]\nc = {c}\nlam = 2.0e4\n"
    );
    for (label, coef, mono) in [
        ("kx2", "c", "kx^2"),
        ("ky2", "c", "ky^2"),
        ("kx4", "lam", "kx^4"),
        ("ky4", "lam", "ky^4"),
    ] {
        toml.push_str(&format!(
            "\n[[term]]\nlabel = \"{label}\"\ncoefficient = \"{coef}\"\nmatrix = [[1]]\nmonomial = \"{mono}\"\n"
        ));
    }
    std::fs::write(&file, toml).expect("write model file");
    let model_arg = file.to_str().expect("utf-8 path");
    // study with JSON on stdout and files in --out
    let out_dir = dir.join("out");
    let o = Command::new(bin)
        .args([
            "converge",
            "--model",
            model_arg,
            "--field",
            "5",
            "--count",
            "3",
            "--cutoffs",
            "12,24,48",
            "--json",
            "--out",
        ])
        .arg(&out_dir)
        .output()
        .expect("run");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON on stdout");
    assert_eq!(v["mode"], "study");
    assert_eq!(v["study"]["levels"].as_array().map(|a| a.len()), Some(3));
    assert_eq!(v["study"]["cutoffs"], serde_json::json!([12, 24, 48]));
    for f in ["converge.csv", "converge.json", "converge.svg"] {
        assert!(out_dir.join(f).exists(), "{f} written");
    }
    // auto: the same model reaches 1e-9 and agrees with the library's automatic mode
    let o = Command::new(bin)
        .args([
            "converge", "--model", model_arg, "--field", "5", "--count", "5", "--mode", "auto",
            "--json",
        ])
        .output()
        .expect("run");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON on stdout");
    let lib = auto(
        &anharmonic(),
        FieldPoint::field(5.0),
        &AutoSettings::new(
            Selection::Nearest {
                target: 0.0,
                count: 5,
            },
            1e-9,
        ),
    )
    .expect("auto");
    assert_eq!(v["cutoff"].as_u64(), Some(lib.cutoff as u64));
    // a tolerance that cannot be met within --max-cutoff: exit code 1 and a clear message
    let o = Command::new(bin)
        .args([
            "converge",
            "--model",
            model_arg,
            "--field",
            "5",
            "--mode",
            "auto",
            "--tolerance",
            "1e-11",
            "--max-cutoff",
            "20",
        ])
        .output()
        .expect("run");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("not met") && err.contains("max_cutoff"),
        "{err}"
    );
    // a malformed window: exit code 2, located at the flag
    let o = Command::new(bin)
        .args(["converge", "--builtin", "dirac2d", "--window", "1,2,3"])
        .output()
        .expect("run");
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--window"));
    let _ = std::fs::remove_dir_all(&dir);
}
