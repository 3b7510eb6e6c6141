//! End-to-end tests of the `ladderfan` binary: model files in tests/data, JSON results checked
//! against closed forms computed here from the published formulas, files written by --out and
//! the demo, and a corpus of broken model files and bad flags (exit code 2, one located error
//! line, no output left behind).

use serde_json::Value;
use std::path::{Path, PathBuf};

mod common;
use common::{run_in, Run};

// CODATA 2018 exact / recommended values (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)),
// written out here independently of ladderfan::units.
const H_PLANCK: f64 = 6.626_070_15e-34;
const E_CHARGE: f64 = 1.602_176_634e-19;
const M_E: f64 = 9.109_383_701_5e-31;
const MEV_J: f64 = 1.602_176_634e-22;
const NM_M: f64 = 1e-9;

fn hbar() -> f64 {
    H_PLANCK / (2.0 * std::f64::consts::PI)
}
/// Magnetic length sqrt(hbar / (e B)) in nm.
fn l_b_nm(field_t: f64) -> f64 {
    (hbar() / (E_CHARGE * field_t.abs())).sqrt() / NM_M
}
/// hbar v in meV nm for v in m/s.
fn hbar_v(v: f64) -> f64 {
    hbar() * v / MEV_J / NM_M
}
/// hbar e B / m in meV for m = ratio m_e.
fn hbar_omega_c(field_t: f64, ratio: f64) -> f64 {
    hbar() * E_CHARGE * field_t.abs() / (ratio * M_E) / MEV_J
}
/// Bohr magneton e hbar / (2 m_e) in meV/T.
fn mu_b() -> f64 {
    E_CHARGE * hbar() / (2.0 * M_E) / MEV_J
}

fn run(args: &[&str]) -> Run {
    run_in(Path::new(env!("CARGO_MANIFEST_DIR")), args)
}

fn json(args: &[&str]) -> Value {
    let r = run(args);
    assert_eq!(r.code, 0, "ladderfan {args:?} failed: {}", r.stderr);
    serde_json::from_str(&r.stdout)
        .unwrap_or_else(|e| panic!("ladderfan {args:?}: not JSON ({e}): {}", r.stdout))
}

fn scratch(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("cli_e2e")
        .join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(d.parent().unwrap_or(Path::new("."))).ok();
    d
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

fn converged_energies(j: &Value) -> Vec<f64> {
    j["levels"]
        .as_array()
        .unwrap_or_else(|| panic!("no levels: {j}"))
        .iter()
        .filter(|l| l["converged"].as_bool() == Some(true))
        .map(|l| f(&l["energy"]))
        .collect()
}

/// Every computed value is within `tol` of an expected one and vice versa.
fn assert_same_set(computed: &[f64], expected: &[f64], tol: f64) {
    for c in computed {
        let d = expected
            .iter()
            .map(|e| (e - c).abs())
            .fold(f64::INFINITY, f64::min);
        assert!(
            d <= tol,
            "computed {c} is {d} from every expected value {expected:?}"
        );
    }
    for e in expected {
        let d = computed
            .iter()
            .map(|c| (e - c).abs())
            .fold(f64::INFINITY, f64::min);
        assert!(
            d <= tol,
            "expected {e} is {d} from every computed value {computed:?}"
        );
    }
}

#[test]
fn dirac_film_file_matches_the_massive_dirac_closed_form() {
    // tests/data/dirac_film.toml: v = 5e5 m/s, Delta = 7.5 meV, field 4 T, cutoff 150, q = -1.
    let j = json(&[
        "levels",
        "--model",
        "tests/data/dirac_film.toml",
        "--count",
        "21",
        "--json",
    ]);
    assert_eq!(j["units"]["energy"], "meV");
    assert_eq!(
        j["units"]["header"],
        "energy meV, length nm, field T, kz 1/nm"
    );
    assert_eq!(j["model"]["name"], "invented-dirac-film");
    assert_eq!(f(&j["field"]), 4.0);
    assert_eq!(j["cutoff"], 150);
    assert_eq!(j["symmetry"]["exact"], true);
    // 2D massive Dirac: E_n = ±sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2), n >= 1; the unpaired
    // n = 0 level at tau sign(qB) Delta = -Delta for tau = +1, q = -1, B > 0
    // (McClure, Phys. Rev. 104, 666 (1956) for Delta = 0; the mass term shifts E^2 by Delta^2).
    let (delta, w) = (7.5, hbar_v(5.0e5) / l_b_nm(4.0));
    let mut expected = vec![-delta];
    for n in 1..=10 {
        let e = (delta * delta + 2.0 * n as f64 * w * w).sqrt();
        expected.extend([e, -e]);
    }
    let computed = converged_energies(&j);
    assert_eq!(computed.len(), 21);
    assert_same_set(&computed, &expected, 1e-9 * w);
    // labels: the n = 0 level sits on component B, orbital 0
    let zero = j["levels"]
        .as_array()
        .and_then(|ls| {
            ls.iter()
                .find(|l| (f(&l["energy"]) + delta).abs() < 1e-9 * w)
        })
        .unwrap_or_else(|| panic!("no n = 0 level"));
    assert_eq!(zero["component_name"], "B");
    assert_eq!(zero["orbital"], 0);
}

#[test]
fn massless_builtin_by_flags_and_by_file_match_mcclure() {
    // McClure, Phys. Rev. 104, 666 (1956): E_n = ±sqrt(2 n) hbar v / l_B, v = 8e5 m/s at 2 T.
    let by_flags = json(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--set",
        "velocity_m_per_s=8e5",
        "--set",
        "mass_mev=0",
        "--field",
        "2",
        "--count",
        "15",
        "--json",
    ]);
    let by_file = json(&[
        "levels",
        "--model",
        "tests/data/dirac_builtin.toml",
        "--field",
        "2",
        "--count",
        "15",
        "--json",
    ]);
    let w = hbar_v(8.0e5) / l_b_nm(2.0);
    let mut expected = vec![0.0];
    for n in 1..=7 {
        let e = (2.0 * n as f64).sqrt() * w;
        expected.extend([e, -e]);
    }
    let a = converged_energies(&by_flags);
    let b = converged_energies(&by_file);
    assert_same_set(&a, &expected, 1e-9 * w);
    assert_same_set(&b, &a, 1e-12 * w);
}

#[test]
fn effective_mass_dispersion_is_landau_plus_kz_squared() {
    // tests/data/schrodinger_kz.toml: m* = 0.07 m_e. Landau, Z. Phys. 64, 629 (1930):
    // E = hbar omega_c (n + 1/2) + hbar^2 kz^2 / (2 m*).
    let j = json(&[
        "dispersion",
        "--model",
        "tests/data/schrodinger_kz.toml",
        "--field",
        "3",
        "--kz-min",
        "-0.2",
        "--kz-max",
        "0.2",
        "--points",
        "5",
        "--emin",
        "0",
        "--emax",
        "40",
        "--cutoff",
        "60",
        "--json",
    ]);
    assert_eq!(j["swept"], "kz");
    let hw = hbar_omega_c(3.0, 0.07);
    let kin = |kz: f64| hbar() * hbar() * (kz / NM_M).powi(2) / (2.0 * 0.07 * M_E) / MEV_J;
    let values: Vec<f64> = j["values"]
        .as_array()
        .unwrap_or_else(|| panic!("no values"))
        .iter()
        .map(f)
        .collect();
    assert_eq!(values.len(), 5);
    let tracks = j["tracks"]
        .as_array()
        .unwrap_or_else(|| panic!("no tracks"));
    // hbar omega_c = 4.96 meV: levels n = 0..7 reach into [0, 40] meV
    assert!(tracks.len() >= 7, "{} tracks", tracks.len());
    let mut checked = 0;
    for t in tracks {
        // one component: the Landau index n is the orbital index itself
        let n = t["n"].as_i64().unwrap_or_else(|| panic!("Landau index"));
        for (i, e) in t["energies"]
            .as_array()
            .unwrap_or_else(|| panic!("energies"))
            .iter()
            .enumerate()
        {
            if e.is_null() {
                continue;
            }
            let want = hw * (n as f64 + 0.5) + kin(values[i]);
            assert!(
                (f(e) - want).abs() <= 1e-9 * want,
                "n={n} kz={}: {} vs {want}",
                values[i],
                f(e)
            );
            checked += 1;
        }
    }
    assert!(checked >= 35, "only {checked} values checked");
}

#[test]
fn zeeman_term_proportional_to_field_splits_by_spin() {
    // tests/data/pauli_zeeman.toml: m* = 0.2 m_e, g = -4.4, H_Z = +(g/2) mu_B B sigma_z.
    // Landau (1930) plus the spin term: E = hbar omega_c (n + 1/2) + s (g/2) mu_B B, s = ±1
    // for up/down.
    let field = 5.0;
    let j = json(&[
        "levels",
        "--model",
        "tests/data/pauli_zeeman.toml",
        "--field",
        "5",
        "--count",
        "10",
        "--json",
    ]);
    let hw = hbar_omega_c(field, 0.2);
    let z = 0.5 * -4.4 * mu_b() * field;
    let levels = j["levels"].as_array().unwrap_or_else(|| panic!("levels"));
    assert_eq!(levels.len(), 10);
    for l in levels {
        let n = l["orbital"].as_u64().unwrap_or_else(|| panic!("orbital")) as f64;
        let s = match l["component_name"].as_str() {
            Some("up") => 1.0,
            Some("down") => -1.0,
            other => panic!("component {other:?}"),
        };
        let want = hw * (n + 0.5) + s * z;
        assert!(
            (f(&l["energy"]) - want).abs() <= 1e-9 * hw,
            "{l}: expected {want}"
        );
    }
}

#[test]
fn natural_units_dirac_written_with_kronecker_shorthand() {
    // tests/data/dirac_natural.toml: 3+1 Dirac, m = c = 1, b = B/B_c = 0.05, reference m c^2.
    // Rabi (1928); Johnson & Lippmann, Phys. Rev. 76, 828 (1949): E = sqrt(1 + 2 nu b),
    // nu = 0 once, nu >= 1 twice (kz = 0, positive branch), relative to m c^2:
    // E - 1 = 2 nu b / (sqrt(1 + 2 nu b) + 1).
    let j = json(&[
        "levels",
        "--model",
        "tests/data/dirac_natural.toml",
        "--count",
        "9",
        "--json",
    ]);
    assert_eq!(j["units"]["energy"], "m c^2");
    assert_eq!(f(&j["reference_energy"]), 1.0);
    let b = 0.05;
    let mut expected = Vec::new();
    for nu in 0..=4 {
        let x = 2.0 * nu as f64 * b;
        let e = x / ((1.0 + x).sqrt() + 1.0);
        expected.push(e);
        if nu > 0 {
            expected.push(e);
        }
    }
    let mut computed = converged_energies(&j);
    computed.sort_by(f64::total_cmp);
    assert_eq!(computed.len(), 9);
    for (c, e) in computed.iter().zip(&expected) {
        assert!((c - e).abs() <= 1e-10 * b, "{c} vs {e}");
    }
}

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
    assert!(csv.starts_with("# ladderfan"));
    assert!(csv.contains("# units: energy meV, length nm, field T, kz 1/nm"));
    assert!(csv.contains("field,track,level,n,branch,energy_meV,bound_meV"));
    let svg = std::fs::read_to_string(out.join("fan.svg")).unwrap_or_default();
    assert!(svg.starts_with("<svg") && svg.contains("B [T]") && svg.contains("E [meV]"));
    assert!(svg.contains("dashed: closed form"));

    // no temporary files left next to the results
    let names: Vec<String> = std::fs::read_dir(&out)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "{names:?}");
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
    assert!(csv.contains("# units: energy meV"));
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

/// Each broken model file with the words its error line must contain (after the location).
const BAD_FILES: &[(&str, &str, &[&str])] = &[
    (
        "bad_monomial.toml",
        "5:12",
        &["unknown factor 'kw'", "kx, ky, kz and B"],
    ),
    ("bad_pauli.toml", "4:10", &["unknown Pauli factor 'q'"]),
    (
        "bad_units.toml",
        "2:9",
        &["units = \"si\"", "\"lab\"", "\"natural\""],
    ),
    (
        "builtin_bad_parameter.toml",
        "3:1",
        &["no parameter 'mass'", "mass_mev"],
    ),
    (
        "builtin_bad_valley.toml",
        "3:10",
        &["valley = 2", "+1 or -1"],
    ),
    (
        "builtin_with_terms.toml",
        "2:1",
        &["'term' cannot be combined", "[set]"],
    ),
    (
        "component_names_count.toml",
        "2:19",
        &["3 names for 2 components"],
    ),
    (
        "cutoff_memory.toml",
        "8:10",
        &["memory limit", "MiB", "lower the cutoff"],
    ),
    (
        "cutoff_too_small.toml",
        "11:10",
        &["cutoff of 2", "3 needed", "raise the cutoff"],
    ),
    (
        "degree_too_high.toml",
        "5:12",
        &["in-plane degree 8", "at or below 6"],
    ),
    (
        "division_by_zero.toml",
        "3:15",
        &["inf", "not a finite number"],
    ),
    ("field_squared.toml", "5:12", &["B^2", "at most linear"]),
    (
        "inf_parameter.toml",
        "3:7",
        &["parameter big is inf", "finite"],
    ),
    (
        "missing_components.toml",
        "1:1",
        &["missing key 'components'"],
    ),
    (
        "nan_coefficient.toml",
        "3:15",
        &["NaN", "not a finite number"],
    ),
    (
        "non_hermitian.toml",
        "2:1",
        &["not Hermitian", "raising only", "Hermitian-conjugate"],
    ),
    (
        "non_hermitian_complex.toml",
        "2:1",
        &["not Hermitian", "imaginary sigma_x"],
    ),
    ("non_square_rows.toml", "4:10", &["not square", "[2, 1]"]),
    (
        "parameter_cycle.toml",
        "3:1",
        &["a, b refer to each other in a cycle"],
    ),
    ("syntax_error.toml", "3:15", &["TOML syntax"]),
    (
        "unknown_builtin.toml",
        "1:11",
        &["unknown built-in model 'graphite'", "dirac2d"],
    ),
    (
        "unknown_key.toml",
        "2:1",
        &["unknown field `colour`", "remove or rename"],
    ),
    (
        "unknown_parameter.toml",
        "5:15",
        &["unknown name 'hw'", "[parameters]"],
    ),
    (
        "unknown_term_key.toml",
        "3:1",
        &["unknown field `coeff`", "`coefficient`"],
    ),
    (
        "wrong_matrix_shape.toml",
        "5:10",
        &["4x4", "2 components", "2x2"],
    ),
    (
        "wrong_type.toml",
        "1:14",
        &["invalid type", "expected an integer"],
    ),
    ("zero_charge.toml", "2:10", &["charge = 0", "neutral"]),
    (
        "zero_field.toml",
        "3:9",
        &["field = 0", "non-zero magnetic field"],
    ),
];

fn assert_one_error_line(r: &Run, words: &[&str], context: &str) {
    assert_eq!(r.code, 2, "{context}: exit code {} ({})", r.code, r.stderr);
    let lines: Vec<&str> = r.stderr.lines().collect();
    assert_eq!(lines.len(), 1, "{context}: not one line: {:?}", r.stderr);
    assert!(
        lines[0].starts_with("ladderfan: error: "),
        "{context}: {}",
        lines[0]
    );
    for w in words {
        assert!(
            lines[0].contains(w),
            "{context}: '{w}' not in: {}",
            lines[0]
        );
    }
    assert!(
        r.stdout.is_empty(),
        "{context}: stdout not empty: {}",
        r.stdout
    );
}

#[test]
fn every_broken_model_file_exits_2_with_a_located_line_and_leaves_no_file() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/bad");
    let mut on_disk: Vec<String> = std::fs::read_dir(&dir)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    on_disk.sort();
    let mut listed: Vec<String> = BAD_FILES.iter().map(|b| b.0.to_string()).collect();
    listed.sort();
    assert_eq!(
        on_disk, listed,
        "every file in tests/data/bad needs an expectation here"
    );
    assert!(BAD_FILES.len() >= 20);
    for (file, at, words) in BAD_FILES {
        for cmd in ["levels", "fan"] {
            let out = scratch(&format!("bad-{cmd}-{file}"));
            let path = format!("tests/data/bad/{file}");
            let r = run(&[cmd, "--model", &path, "--out", &out.display().to_string()]);
            let located = format!("ladderfan: error: {path}:{at}: ");
            let mut all = vec![located.as_str()];
            all.extend_from_slice(words);
            assert_one_error_line(&r, &all, &format!("{cmd} {file}"));
            assert!(!out.exists(), "{cmd} {file}: output directory was created");
        }
    }
}

#[test]
fn bad_flags_exit_2_with_one_line_and_leave_no_file() {
    let cases: &[(&[&str], &[&str])] = &[
        (
            &["levels", "--builtin", "dirac2d", "--field", "0"],
            &["--field", "field is 0"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--field", "nan"],
            &["--field", "not a finite number"],
        ),
        (
            &["levels", "--builtin", "graphite"],
            &["--builtin", "unknown built-in model 'graphite'"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass=3"],
            &["no parameter 'mass'", "mass_mev"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass_mev"],
            &["--set", "not KEY=VALUE"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass_mev=1/0"],
            &["--set mass_mev", "not a finite number"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "valley=3"],
            &["valley = 3", "+1 or -1"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--cutoff", "1"],
            &["--cutoff", "below the 2 needed"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--cutoff", "100000000"],
            &["--cutoff", "memory limit"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--memory-limit-mib", "0"],
            &["--memory-limit-mib", "positive"],
        ),
        (
            &[
                "levels",
                "--model",
                "tests/data/dirac_film.toml",
                "--set",
                "nope=2",
            ],
            &["--set nope", "no parameter 'nope'", "delta"],
        ),
        (
            &["levels", "--model", "tests/data/no-such-file.toml"],
            &["cannot read model file", "no-such-file.toml"],
        ),
        (
            &[
                "levels",
                "--model",
                "tests/data/dirac_film.toml",
                "--builtin",
                "dirac2d",
            ],
            &["cannot be used with"],
        ),
        (&["levels"], &["no model given", "--builtin"]),
        (&["levels", "--bogus"], &["unexpected argument '--bogus'"]),
        (&["frobnicate"], &["unrecognized subcommand"]),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--b-min",
                "-1",
                "--b-max",
                "1",
                "--points",
                "3",
            ],
            &["B = 0", "one sign"],
        ),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--grid",
                "log",
                "--b-min",
                "-1",
                "--b-max",
                "2",
            ],
            &["--grid", "log grid"],
        ),
        (
            &["fan", "--builtin", "dirac2d", "--points", "1"],
            &["--points", "at least 2"],
        ),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--emin",
                "5",
                "--emax",
                "1",
                "--points",
                "3",
            ],
            &["--emin", "window"],
        ),
        (
            &[
                "dispersion",
                "--builtin",
                "weyl",
                "--threads",
                "0",
                "--points",
                "3",
            ],
            &["--threads", "at least 1"],
        ),
        (
            &["dispersion", "--builtin", "weyl", "--field", "0"],
            &["--field", "field is 0"],
        ),
        (
            &["export", "--builtin", "dirac2d", "--sector", "5"],
            &["--sector", "CLASS:LABEL"],
        ),
        (
            &[
                "export",
                "--builtin",
                "dirac2d",
                "--cutoff",
                "4",
                "--sector",
                "0:99",
            ],
            &["--sector", "does not exist"],
        ),
    ];
    for (i, (args, words)) in cases.iter().enumerate() {
        let out = scratch(&format!("flag-{i}"));
        let mut a: Vec<&str> = args.to_vec();
        let outs = out.display().to_string();
        // every command that writes files takes --out; point it at a fresh path
        if matches!(
            a.first(),
            Some(&("levels" | "fan" | "dispersion" | "export"))
        ) {
            a.extend(["--out", &outs]);
        }
        let r = run(&a);
        assert_one_error_line(&r, words, &format!("{args:?}"));
        assert!(!out.exists(), "{args:?}: output directory was created");
    }
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

#[test]
fn the_worked_example_in_the_readme_runs_and_matches_its_closed_form() {
    let doc = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md"))
        .unwrap_or_else(|e| panic!("{e}"));
    let block: String = doc
        .split("```toml\n")
        .nth(1)
        .and_then(|b| b.split("```").next())
        .unwrap_or_else(|| panic!("no toml block"))
        .to_string();
    let dir = scratch("doc-example");
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{e}"));
    let file = dir.join("invented-film.toml");
    std::fs::write(&file, block).unwrap_or_else(|e| panic!("{e}"));
    let j = json(&[
        "levels",
        "--model",
        &file.display().to_string(),
        "--count",
        "11",
        "--json",
    ]);
    // Delta(B) = delta + (g_mass/2) mu_B B; massive 2D Dirac levels with that mass:
    // E_n = ±sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2), n = 0 at -Delta for q = -1, B > 0
    // (McClure, Phys. Rev. 104, 666 (1956) for the massless case).
    let field = 5.0;
    let delta = 6.0 + 0.5 * 3.0 * mu_b() * field;
    let w = hbar_v(4.2e5) / l_b_nm(field);
    let mut expected = vec![-delta];
    for n in 1..=5 {
        let e = (delta * delta + 2.0 * n as f64 * w * w).sqrt();
        expected.extend([e, -e]);
    }
    assert_same_set(&converged_energies(&j), &expected, 1e-9 * w);
}

#[test]
fn every_builtin_fan_agrees_with_its_closed_form() {
    // ladderfan::closed_form holds the published formula of each built-in (sources there); the
    // fan compares every converged level in the window with it, both ways, at every field.
    let models = json(&["models", "--json"]);
    let names: Vec<String> = models
        .as_array()
        .unwrap_or_else(|| panic!("list"))
        .iter()
        .filter_map(|m| m["name"].as_str().map(String::from))
        .collect();
    assert!(names.len() >= 11);
    for name in &names {
        let j = json(&[
            "fan",
            "--builtin",
            name,
            "--points",
            "4",
            "--cutoff",
            "60",
            "--json",
        ]);
        let c = &j["closed_form"];
        assert_eq!(c["passed"], true, "{name}: {c}");
        assert!(
            c["computed_compared"].as_u64().unwrap_or(0) >= 8,
            "{name}: {c}"
        );
        assert!(
            c["expected_compared"].as_u64().unwrap_or(0) >= 4,
            "{name}: {c}"
        );
    }
}

#[test]
fn dos_kz_integrate_gives_the_weyl_chiral_plateau_per_volume() {
    // Nielsen & Ninomiya, Phys. Lett. B 130, 389 (1983): below the first Landau level of a
    // Weyl node only the chiral level is there, g3 = (eB/h) / (2 pi hbar v) per volume.
    // CODATA 2018 constants (exact e, h); v = 3e5 m/s is the built-in default (invented).
    let dir = scratch("dos3d");
    let base = [
        "dos",
        "--builtin",
        "weyl",
        "--field",
        "10",
        "--cutoff",
        "200",
        "--kz-integrate",
        "--width",
        "1",
    ];
    let extra = [
        "--emin",
        "-10",
        "--emax",
        "10",
        "--energy-points",
        "21",
        "--density-cm3",
        "1e16",
        "--json",
    ];
    let v = json(&[&base[..], &extra[..]].concat());
    let vol = &v["volume"];
    let eb_h = E_CHARGE * 10.0 / H_PLANCK; // m^-2
    let hv = hbar() * 3.0e5 / MEV_J; // meV m
    let plateau_cm3 = eb_h / (2.0 * std::f64::consts::PI * hv) * 1e-6; // 1/(meV cm^3)
    let rows = vol["dos"].as_array().expect("dos rows");
    assert_eq!(rows.len(), 21);
    for row in rows {
        let (e, g, n) = (f(&row[0]), f(&row[1]), f(&row[2]));
        assert!(
            (g / plateau_cm3 - 1.0).abs() < 1e-6,
            "E = {e}: {g:e} vs {plateau_cm3:e}"
        );
        assert!(
            (n - plateau_cm3 * e).abs() < 1e-6 * plateau_cm3 * 10.0,
            "E = {e}: n = {n:e}"
        );
    }
    let ef = f(&vol["fermi"]["fermi_energy"]);
    assert!((ef - 1e16 / plateau_cm3).abs() < 1e-6, "Fermi level {ef}");
    // files: the per-volume CSV with its units, next to the sheet CSV
    let r = run(&[&base[..], &["--out", dir.to_str().unwrap()][..]].concat());
    assert_eq!(r.code, 0, "{}", r.stderr);
    let csv = std::fs::read_to_string(dir.join("dos3d.csv")).unwrap();
    assert!(csv.contains("energy_meV,dos_per_meV_per_cm3,density_from_neutrality_per_cm3"));
    assert!(dir.join("dos3d.svg").exists());
    // the 3D Fermi level against B at fixed density: E_F B constant in the quantum limit
    let sweep = json(
        &[
            &base[..],
            &[
                "--emin",
                "-20",
                "--emax",
                "20",
                "--density-cm3",
                "1e16",
                "--b-min",
                "5",
                "--b-max",
                "10",
                "--points",
                "3",
                "--json",
            ][..],
        ]
        .concat(),
    );
    let pts = sweep["volume"]["fermi_sweep"].as_array().expect("sweep");
    assert_eq!(pts.len(), 3);
    for p in pts {
        let (b, ef) = (f(&p["field"]), f(&p["fermi_energy"]));
        assert!(
            (ef * b / (1e16 / plateau_cm3 * 10.0) - 1.0).abs() < 1e-6,
            "B = {b}: {ef}"
        );
    }
    // refusals: one line, exit 2
    for args in [
        &[
            "dos",
            "--builtin",
            "weyl",
            "--kz-integrate",
            "--shape",
            "lorentzian",
        ][..],
        &["dos", "--builtin", "dirac2d", "--kz-integrate"][..],
    ] {
        let r = run(args);
        assert_eq!(r.code, 2, "{args:?}: {}", r.stdout);
        assert_eq!(r.stderr.trim().lines().count(), 1, "{}", r.stderr);
    }
}

#[test]
fn tilted_cone_fan_at_a_small_cutoff_is_not_comparable_rather_than_failed() {
    // Goerbig et al., Phys. Rev. B 78, 045415 (2008) is the closed form; at cutoff 40 the upper
    // levels of the default window are not converged: a note and exit 0, not a failure
    let r = run(&[
        "fan",
        "--builtin",
        "tilted-dirac2d",
        "--cutoff",
        "40",
        "--points",
        "4",
    ]);
    assert_eq!(r.code, 0, "{} {}", r.stdout, r.stderr);
    assert!(
        r.stdout.contains("not comparable at this cutoff"),
        "{}",
        r.stdout
    );
}

#[test]
fn plus_and_minus_e_n_of_the_gapped_2d_dirac_model_share_n_in_levels_verify_and_optics() {
    // E_n = ± sqrt(Delta^2 + 2 n (hbar v / l_B)^2), lone level n = 0 at tau sign(qB) Delta
    // (McClure 1956, massive form common practice); Delta = 10 meV, v = 1e6 m/s, 5 T
    let j = json(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=10",
        "--field",
        "5",
        "--cutoff",
        "80",
        "--count",
        "7",
        "--json",
    ]);
    let levels = j["levels"].as_array().unwrap_or_else(|| panic!("levels"));
    let w = hbar_v(1.0e6) / l_b_nm(5.0);
    for l in levels {
        let e = f(&l["energy"]);
        let n = l["landau_n"].as_i64().unwrap_or_else(|| panic!("n"));
        let want = (100.0 + 2.0 * n as f64 * w * w).sqrt();
        if n == 0 {
            assert!((e.abs() - 10.0).abs() < 1e-9, "{e}");
            assert_eq!(l["label"], "0");
        } else {
            assert!(
                (e.abs() - want).abs() < 1e-9 * want,
                "n = {n}: {e} vs {want}"
            );
            let sign = if e > 0.0 { "+" } else { "-" };
            assert_eq!(l["label"], format!("{sign}{n}"));
        }
    }
    // verify: each row pairs the expected n with a level of the same n
    let v = json(&[
        "verify",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=10",
        "--field",
        "5",
        "--cutoff",
        "80",
        "--formula",
        "s*sqrt(mass_mev^2 + 2*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)",
        "--formula-n0",
        "valley*sign(q*B)*mass_mev",
        "--n",
        "0..4",
        "--s",
        "1,-1",
        "--json",
    ]);
    let pairs = v["verdict"]["pairs"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    assert!(pairs.len() >= 8, "{v}");
    for p in &pairs {
        assert_eq!(p["numerical"]["label"]["n"], p["expected"]["n"], "{p}");
        // the pairs of a converged window carry the level state too (common practice: every
        // output names the state, README "Reading a level")
        assert_eq!(p["numerical"]["state"], "converged", "{p}");
    }
    // optics: the strong sigma+ line from LL(-2) ends on LL(+3) (|n| changes by one)
    let r = run(&[
        "optics",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=10",
        "--field",
        "5",
        "--cutoff",
        "80",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("LL(-2) -> LL(+3)"), "{}", r.stdout);
    assert!(r.stdout.contains("LL(0) -> LL(+1)"), "{}", r.stdout);
    // fan: the curves carry the same labels at their right end (+n and -n both present)
    let out = scratch("fan-labels");
    let outs = out.display().to_string();
    let r = run(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=10",
        "--b-max",
        "5",
        "--points",
        "3",
        "--cutoff",
        "80",
        "--emin",
        "-130",
        "--emax",
        "130",
        "--out",
        &outs,
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let svg = std::fs::read_to_string(out.join("fan.svg")).unwrap_or_default();
    for label in ["+1", "-1", "+2", "-2"] {
        assert!(svg.lines().any(|l| l.trim() == label), "{label} missing");
    }
}
