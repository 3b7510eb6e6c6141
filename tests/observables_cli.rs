//! The command line for observables: `ladderfan dos` (degeneracy, Fermi level, files) and
//! `ladderfan optics` (the Kohn line, bad flags).
//! Every expected value names its source beside it; helpers in tests/common/observables.rs and
//! tests/common/cli.rs.

mod common;
use common::observables::*;

// ---- command line: `ladderfan dos` and `ladderfan optics` ----

fn run_cli(args: &[&str]) -> (i32, String, String) {
    let r = common::cli::run(args);
    (r.code, r.stdout, r.stderr)
}

#[test]
fn cli_dos_reports_degeneracy_fermi_level_and_files() {
    let dir = std::env::temp_dir().join(format!("ladderfan-obs-dos-{}", std::process::id()));
    let d = dir.to_string_lossy().to_string();
    let (code, out, err) = run_cli(&[
        "dos",
        "--builtin",
        "schrodinger",
        "--set",
        "mass_ratio=0.067",
        "--field",
        "3",
        "--cutoff",
        "80",
        "--filling",
        "3",
        "--width",
        "0.2",
        "--json",
        "--out",
        &d,
    ]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).expect("json");
    // eB/h = 2.417 989 242e10 cm^-2 per tesla (CODATA 2018), times 3 T
    let deg = j["landau_degeneracy_cm2"].as_f64().unwrap();
    assert!((deg / (3.0 * 2.417_989_242e10) - 1.0).abs() < 1e-9);
    assert_eq!(j["model_degeneracy"].as_u64(), Some(2));
    // nu = 3 in a spin-degenerate parabolic band half fills level 1: E_F = 1.5 hbar omega_c
    // (Landau 1930)
    let f = &j["fermi"];
    assert!((f["filling_factor"].as_f64().unwrap() - 3.0).abs() < 1e-9);
    let hw = cyclotron_mev(0.067, 3.0);
    assert!((f["fermi_energy"].as_f64().unwrap() - 1.5 * hw).abs() < 1e-6 * hw);
    let csv = std::fs::read_to_string(dir.join("dos.csv")).unwrap();
    assert!(csv.starts_with("energy_meV,dos_per_meV_cm2,density_invcm2\n"));
    let meta = std::fs::read_to_string(dir.join("dos.meta.json")).unwrap();
    assert!(meta.contains("only the") && meta.contains("converged levels count"));
    let svg = std::fs::read_to_string(dir.join("dos.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("E [meV]"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn cli_optics_kohn_line_and_bad_flags() {
    // Kohn (1961): one line at hbar omega_c, sigma+ for electrons with B along +z
    let (code, out, err) = run_cli(&[
        "optics",
        "--builtin",
        "schrodinger",
        "--set",
        "mass_ratio=0.067",
        "--field",
        "3",
        "--cutoff",
        "80",
        "--filling",
        "2.5",
        "--temperature",
        "4",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).expect("json");
    let hw = cyclotron_mev(0.067, 3.0);
    let tr = j["points"][0]["transitions"].as_array().unwrap();
    assert!(!tr.is_empty());
    for t in tr {
        assert!((t["energy"].as_f64().unwrap() - hw).abs() < 1e-9 * hw);
        assert_eq!(t["polarisation"].as_str(), Some("sigma_plus"));
    }
    assert_eq!(j["velocity_unit"].as_str(), Some("m/s"));
    // a negative width is bad input: exit 2, one error line, nothing on stdout
    let (code, out, err) = run_cli(&[
        "optics",
        "--builtin",
        "schrodinger",
        "--field",
        "3",
        "--width",
        "-1",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(out.is_empty() && err.contains("--width"), "{err}");
    let (code, _, err) = run_cli(&[
        "dos",
        "--builtin",
        "schrodinger",
        "--field",
        "3",
        "--neutrality",
        "middle",
        "--filling",
        "1",
    ]);
    assert_eq!(code, 2, "{err}");
}
