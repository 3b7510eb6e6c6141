//! End-to-end tests of what the `ladderfan` binary writes: fan sweeps (thread-count
//! independence, tracks, CSV and SVG), the demo, MatrixMarket export, the model list, help and
//! version, and the aligned table output (helpers in tests/common/cli.rs).

mod common;
use common::cli::*;
use common::run_in;

#[test]
fn fan_results_do_not_depend_on_the_thread_count() {
    let args = |t: &'static str| {
        vec![
            "fan",
            "--builtin",
            "dirac2d",
            "--set",
            "mass_mev=3",
            "--b-min",
            "0.5",
            "--b-max",
            "8",
            "--points",
            "12",
            "--cutoff",
            "120",
            "--threads",
            t,
            "--json",
        ]
    };
    let one = json(&args("1"));
    let two = json(&args("2"));
    let t1 = one["tracks"].as_array().unwrap_or_else(|| panic!("tracks"));
    let t2 = two["tracks"].as_array().unwrap_or_else(|| panic!("tracks"));
    assert_eq!(t1.len(), t2.len());
    assert!(!t1.is_empty());
    for (a, b) in t1.iter().zip(t2) {
        assert_eq!(a["label"], b["label"]);
        let (ea, eb) = (a["energies"].as_array(), b["energies"].as_array());
        for (x, y) in ea.into_iter().flatten().zip(eb.into_iter().flatten()) {
            assert_eq!(x.is_null(), y.is_null());
            if !x.is_null() {
                // same arithmetic per point: agreement far below any physical scale
                assert!((f(x) - f(y)).abs() <= 1e-13 * f(x).abs().max(1.0));
            }
        }
    }
    // the built-in has a closed form, and the fan agrees with it at every point
    assert_eq!(one["closed_form"]["passed"], true);
    assert!(
        one["closed_form"]["computed_compared"]
            .as_u64()
            .unwrap_or(0)
            > 50
    );
}

#[test]
fn fan_tracks_follow_the_closed_form_and_write_csv_and_svg() {
    let out = scratch("fan");
    let outs = out.display().to_string();
    let j = json(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--set",
        "velocity_m_per_s=6e5",
        "--set",
        "mass_mev=4",
        "--b-min",
        "1",
        "--b-max",
        "9",
        "--grid",
        "log",
        "--points",
        "9",
        "--emin",
        "-60",
        "--emax",
        "60",
        "--out",
        &outs,
        "--json",
    ]);
    let values: Vec<f64> = j["values"]
        .as_array()
        .unwrap_or_else(|| panic!("values"))
        .iter()
        .map(f)
        .collect();
    // log grid: equal ratios (9/1)^(1/8)
    for w in values.windows(2) {
        assert!((w[1] / w[0] - 9f64.powf(0.125)).abs() < 1e-12);
    }
    // the first positive level, labelled by its sector, follows sqrt(Delta^2 + 2 (hbar v/l_B)^2)
    // (massive 2D Dirac, n = 1) at every field
    let tracks = j["tracks"].as_array().unwrap_or_else(|| panic!("tracks"));
    let first = tracks
        .iter()
        .filter(|t| {
            t["energies"][values.len() - 1]
                .as_f64()
                .is_some_and(|e| e > 0.0)
        })
        .min_by(|a, b| {
            f(&a["energies"][values.len() - 1]).total_cmp(&f(&b["energies"][values.len() - 1]))
        })
        .unwrap_or_else(|| panic!("no positive track"));
    for (i, &b) in values.iter().enumerate() {
        let w = hbar_v(6.0e5) / l_b_nm(b);
        let want = (16.0 + 2.0 * w * w).sqrt();
        assert!((f(&first["energies"][i]) - want).abs() <= 1e-9 * want);
    }
    let csv = std::fs::read_to_string(out.join("fan.csv")).unwrap_or_default();
    // the column line comes first; the units go to the sidecar fan.meta.json
    assert!(
        csv.starts_with("field_T,track,label,landau_index,landau_branch,energy_meV,bound_meV\n")
    );
    assert!(!csv.contains('#'));
    let meta = std::fs::read_to_string(out.join("fan.meta.json")).unwrap_or_default();
    assert!(meta.contains("\"units\": \"energy meV, length nm, field T, kz 1/nm\""));
    let svg = std::fs::read_to_string(out.join("fan.svg")).unwrap_or_default();
    assert!(svg.starts_with("<svg") && svg.contains("B [T]") && svg.contains("E [meV]"));
    // the key names the dashed closed-form overlay
    assert!(svg.contains(">closed form</text>"));

    // no temporary files left next to the results
    let names: Vec<String> = std::fs::read_dir(&out)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 3, "{names:?}");
}

#[test]
fn demo_writes_svg_and_csv_and_passes_its_closed_form_check() {
    let out = scratch("demo");
    let outs = out.display().to_string();
    let r = run(&["demo", "--out", &outs]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("INVENTED"));
    assert!(r.stdout.contains("closed-form check at 6 T: passed"));
    assert!(r.stdout.contains("closed-form check over the fan: passed"));
    for name in ["fan.svg", "fan.csv", "levels.csv", "model.toml"] {
        let text = std::fs::read_to_string(out.join(name)).unwrap_or_default();
        assert!(!text.is_empty(), "{name} missing");
    }
    let svg = std::fs::read_to_string(out.join("fan.svg")).unwrap_or_default();
    assert!(svg.contains("B [T]") && svg.contains("E [meV]") && svg.trim_end().ends_with("</svg>"));
    let csv = std::fs::read_to_string(out.join("levels.csv")).unwrap_or_default();
    assert!(csv.starts_with("sector,label,landau_index,"));
    let meta = std::fs::read_to_string(out.join("levels.meta.json")).unwrap_or_default();
    assert!(meta.contains("\"units\": \"energy meV"));
    // the written model file is itself a valid model file
    let m = run(&[
        "levels",
        "--model",
        &out.join("model.toml").display().to_string(),
        "--json",
    ]);
    assert_eq!(m.code, 0, "{}", m.stderr);
}

#[test]
fn bare_invocation_runs_the_demo_into_the_current_directory() {
    let dir = scratch("bare");
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{e}"));
    let r = run_in(&dir, &[]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(dir.join("ladderfan-demo").join("fan.svg").is_file());
    assert!(dir.join("ladderfan-demo").join("fan.csv").is_file());
}

#[test]
fn export_writes_matrix_market_that_parses_back_to_the_assembled_matrix() {
    use ladderfan::hamiltonian::LadderHamiltonian;
    let out = scratch("export");
    let outs = out.display().to_string();
    let j = json(&[
        "export",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=2",
        "--field",
        "3",
        "--kz",
        "0",
        "--cutoff",
        "6",
        "--out",
        &outs,
        "--json",
    ]);
    let path = j["file"].as_str().unwrap_or_else(|| panic!("file"));
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{e}"));
    let mut lines = text
        .lines()
        .filter(|l| !l.starts_with('%') || l.starts_with("%%"));
    assert_eq!(
        lines.next(),
        Some("%%MatrixMarket matrix coordinate complex hermitian")
    );
    let size: Vec<usize> = lines
        .next()
        .unwrap_or("")
        .split_whitespace()
        .filter_map(|x| x.parse().ok())
        .collect();
    assert_eq!(&size[..2], &[12, 12]);
    // independent reference: the library's dense assembly of the same model
    let mut set = std::collections::BTreeMap::new();
    set.insert("mass_mev".to_string(), 2.0);
    let model = ladderfan::models::build("dirac2d", &set).unwrap_or_else(|e| panic!("{e}"));
    let h = LadderHamiltonian::assemble(
        &model,
        ladderfan::FieldPoint {
            field: 3.0,
            kz: 0.0,
        },
        0.0,
    )
    .unwrap_or_else(|e| panic!("{e}"))
    .dense(6);
    let scale = h.iter().map(|z| z.norm()).fold(0.0, f64::max);
    let mut seen = 0;
    for l in lines {
        let v: Vec<&str> = l.split_whitespace().collect();
        let (i, k): (usize, usize) = (v[0].parse().unwrap_or(0), v[1].parse().unwrap_or(0));
        let (re, im): (f64, f64) = (
            v[2].parse().unwrap_or(f64::NAN),
            v[3].parse().unwrap_or(f64::NAN),
        );
        assert!(
            i >= k && k >= 1,
            "entry ({i}, {k}) outside the lower triangle"
        );
        let z = h[(i - 1, k - 1)];
        assert!((z.re - re).abs() <= 1e-15 * scale && (z.im - im).abs() <= 1e-15 * scale);
        seen += 1;
    }
    let nonzero_lower = (0..12)
        .flat_map(|i| (0..=i).map(move |k| (i, k)))
        .filter(|&(i, k)| h[(i, k)].norm() > 0.0)
        .count();
    assert_eq!(seen, nonzero_lower);
    assert_eq!(size[2], seen);
    // one sector of the exactly conserved J holds at most d = 2 states
    let js = json(&[
        "export",
        "--builtin",
        "dirac2d",
        "--field",
        "3",
        "--cutoff",
        "6",
        "--sector",
        "0:3",
        "--out",
        &outs,
        "--json",
    ]);
    assert_eq!(js["rows"], 2);
}

#[test]
fn models_lists_every_builtin_with_parameters() {
    let j = json(&["models", "--json"]);
    let names: Vec<&str> = j
        .as_array()
        .unwrap_or_else(|| panic!("list"))
        .iter()
        .filter_map(|m| m["name"].as_str())
        .collect();
    for want in [
        "schrodinger",
        "pauli",
        "dirac",
        "klein-gordon",
        "dirac2d",
        "weyl",
        "dirac-amm",
        "tilted-dirac2d",
        "rashba",
        "bilayer",
        "bhz",
    ] {
        assert!(names.contains(&want), "{want} missing from {names:?}");
    }
    let text = run(&["models"]);
    assert_eq!(text.code, 0);
    assert!(text.stdout.contains("mass_mev") && text.stdout.contains("McClure"));
}

#[test]
fn help_and_version_exit_0() {
    let r = run(&["--help"]);
    assert_eq!(r.code, 0);
    for cmd in ["levels", "fan", "dispersion", "models", "export", "demo"] {
        assert!(r.stdout.contains(cmd), "{cmd} missing from help");
    }
    let v = run(&["--version"]);
    assert_eq!(v.code, 0);
    assert!(v.stdout.contains(env!("CARGO_PKG_VERSION")));
}

#[test]
fn table_output_is_aligned_and_labelled() {
    let r = run(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=5",
        "--field",
        "5",
        "--count",
        "5",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let header = r
        .stdout
        .lines()
        .find(|l| l.starts_with("sector"))
        .unwrap_or_else(|| panic!("no table header: {}", r.stdout));
    for col in [
        "sector",
        "LL",
        "character",
        "energy [meV]",
        "bound [meV]",
        "from",
        "state",
    ] {
        assert!(header.contains(col), "{col} missing: {header}");
    }
    let rows: Vec<&str> = r
        .stdout
        .lines()
        .skip_while(|l| !l.starts_with("sector"))
        .skip(1)
        .collect();
    assert_eq!(rows.len(), 5);
    // right-aligned energies end in the same column
    let ends: Vec<usize> = rows
        .iter()
        .map(|l| header.find("bound").unwrap_or(0).min(l.len()))
        .collect();
    assert!(ends.windows(2).all(|w| w[0] == w[1]));
    assert!(rows
        .iter()
        .all(|l| l.trim_end().ends_with(" converged") && !l.contains("not converged")));
}
