//! End-to-end tests of the units at the edges (`--energy-unit`, `--field-unit`, field flags
//! with a `T`/`Bc` suffix), the level character on the command line (`--character`) and
//! progress output (never on a piped stderr).

mod common;
use common::cli::*;
use serde_json::Value;

// CODATA 2018 energy equivalents (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)),
// written out here independently of ladderfan::units: 1 meV in cm^-1, K, THz; m_e c^2 in eV;
// the electron's critical field B_c = m_e^2 c^2 / (e hbar) in T (derived from CODATA 2018
// m_e, c, e, h; common practice value 4.414e9 T).
const MEV_IN_INVCM: f64 = 8.065_543_937;
const MEV_IN_K: f64 = 11.604_518_12;
const MEV_IN_THZ: f64 = 0.241_798_924_2;
const ME_C2_EV: f64 = 510_998.950_00;
const C_LIGHT: f64 = 299_792_458.0;

fn critical_field_t() -> f64 {
    M_E * M_E * C_LIGHT * C_LIGHT / (E_CHARGE * hbar())
}

fn energies(j: &Value) -> Vec<f64> {
    j["levels"]
        .as_array()
        .unwrap_or_else(|| panic!("no levels: {j}"))
        .iter()
        .map(|l| f(&l["energy"]))
        .collect()
}

/// Each `a[i] * factor` equals `b[i]` within `rel` of the largest |b| (the level scale).
fn assert_scaled(a: &[f64], b: &[f64], factor: f64, rel: f64) {
    assert_eq!(a.len(), b.len());
    let scale = b.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    for (x, y) in a.iter().zip(b) {
        assert!(
            (x * factor - y).abs() <= rel * scale,
            "{x} x {factor} = {} is not {y}",
            x * factor
        );
    }
}

const DIRAC2D: [&str; 9] = [
    "levels",
    "--builtin",
    "dirac2d",
    "--set",
    "mass_mev=4",
    "--cutoff",
    "80",
    "--count",
    "8",
];

fn levels_json(extra: &[&str]) -> Value {
    let mut a: Vec<&str> = DIRAC2D.to_vec();
    a.extend_from_slice(extra);
    a.push("--json");
    json(&a)
}

#[test]
fn energies_convert_with_codata_2018_factors() {
    let mev = levels_json(&["--field", "3"]);
    assert_eq!(mev["units"]["energy"], "meV");
    for (unit, label, factor) in [
        ("cm-1", "cm^-1", MEV_IN_INVCM),
        ("K", "K", MEV_IN_K),
        ("THz", "THz", MEV_IN_THZ),
        ("eV", "eV", 1e-3),
    ] {
        let j = levels_json(&["--field", "3", "--energy-unit", unit]);
        assert_eq!(j["units"]["energy"], label, "{unit}");
        assert_scaled(&energies(&mev), &energies(&j), factor, 1e-9);
    }
}

#[test]
fn natural_units_take_tesla_and_show_lab_units() {
    // 2e8 T on the 3+1 Dirac model (natural units) is 2e8 / B_c in its own unit.
    let bc = critical_field_t();
    let native = format!("{:e}", 2e8 / bc);
    let base = [
        "levels",
        "--builtin",
        "dirac",
        "--cutoff",
        "60",
        "--count",
        "6",
        "--json",
    ];
    let with = |extra: &[&str]| {
        let mut a = base.to_vec();
        a.extend_from_slice(extra);
        json(&a)
    };
    let a = with(&["--field", &native]);
    let b = with(&["--field", "2e8T"]);
    assert_scaled(&energies(&a), &energies(&b), 1.0, 1e-9);
    assert!((f(&b["field"]) - 2e8 / bc).abs() < 1e-9 * f(&b["field"]));
    // natural -> lab: energies in eV are m_e c^2 = 510 998.95 eV per unit (CODATA 2018)
    let ev = with(&[
        "--field",
        "2e8T",
        "--energy-unit",
        "eV",
        "--field-unit",
        "T",
    ]);
    assert_eq!(ev["units"]["energy"], "eV");
    assert_eq!(ev["units"]["field"], "T");
    assert_scaled(&energies(&a), &energies(&ev), ME_C2_EV, 1e-9);
    assert!((f(&ev["field"]) - 2e8).abs() < 1e-6 * 2e8);
    // the reference energy m c^2 too
    assert!((f(&ev["reference_energy"]) - ME_C2_EV).abs() < 1e-9 * ME_C2_EV);
}

#[test]
fn fan_fields_take_suffixes_and_convert_on_output() {
    let dir = scratch("units-fan");
    let d = dir.to_string_lossy().to_string();
    let j = json(&[
        "fan",
        "--builtin",
        "dirac2d",
        "--b-min",
        "1T",
        "--b-max",
        "4",
        "--points",
        "4",
        "--cutoff",
        "60",
        "--field-unit",
        "Bc",
        "--energy-unit",
        "cm-1",
        "--character",
        "--out",
        &d,
        "--json",
    ]);
    let bc = critical_field_t();
    let values: Vec<f64> = j["values"]
        .as_array()
        .unwrap_or_else(|| panic!("no values"))
        .iter()
        .map(f)
        .collect();
    for (v, t) in values.iter().zip([1.0, 2.0, 3.0, 4.0]) {
        assert!(
            (v - t / bc).abs() < 1e-9 * t / bc,
            "{v} is not {t} T in B_c"
        );
    }
    assert_eq!(j["units"]["energy"], "cm^-1");
    // the E_1 track at 4 T: sqrt(2 hbar e B) v (v = 1e6 m/s), common practice closed form
    let e1 = (2.0 * hbar() * E_CHARGE * 4.0).sqrt() * 1e6 / MEV_J * MEV_IN_INVCM;
    let tracks = j["tracks"]
        .as_array()
        .unwrap_or_else(|| panic!("no tracks"));
    let plus1 = tracks
        .iter()
        .find(|t| t["label"] == "+1")
        .unwrap_or_else(|| panic!("no +1 track"));
    assert!((f(&plus1["energies"][3]) - e1).abs() < 1e-6 * e1);
    // character per point: two weights summing to 1, <n> = 1/2 for the massless +1 level
    let w = &plus1["weights"][3];
    assert!((f(&w[0]) + f(&w[1]) - 1.0).abs() < 1e-9, "{w}");
    assert!((f(&plus1["mean_n"][3]) - 0.5).abs() < 1e-6);
    let csv = std::fs::read_to_string(dir.join("fan.csv")).unwrap_or_default();
    assert!(
        csv.contains("energy_invcm,bound_invcm,weight_a,weight_b,mean_n"),
        "{csv}"
    );
    // the units sit in the sidecar (the CSV has no comment line)
    let meta = std::fs::read_to_string(dir.join("fan.meta.json")).unwrap_or_default();
    assert!(
        meta.contains("energy cm^-1, length nm, field B_c"),
        "{meta}"
    );
}

#[test]
fn levels_character_in_table_and_csv() {
    let dir = scratch("units-levels-character");
    let d = dir.to_string_lossy().to_string();
    let mut a: Vec<&str> = DIRAC2D.to_vec();
    a.extend(["--character", "--out", &d]);
    let r = run(&a);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("mean_n") && r.stdout.contains("weight_A"));
    let csv = std::fs::read_to_string(dir.join("levels.csv")).unwrap_or_default();
    let header = csv
        .lines()
        .find(|l| !l.starts_with('#'))
        .unwrap_or_default();
    assert!(header.ends_with("weight_a,weight_b,mean_n"), "{header}");
    // without --character: no mean_n anywhere
    let j = levels_json(&[]);
    assert!(j["levels"][0].get("mean_n").is_none());
    let j = levels_json(&["--character"]);
    assert!(j["levels"][0]["mean_n"].is_number());
}

#[test]
fn bad_units_are_one_clear_error() {
    for (args, says) in [
        (vec!["--field", "1G"], "unknown field unit"),
        (vec!["--energy-unit", "MeV"], "not an energy unit"),
        (vec!["--field-unit", "gauss"], "not a field unit"),
        (vec!["--energy-unit", "mc2"], "natural-unit models"),
    ] {
        let mut a: Vec<&str> = DIRAC2D.to_vec();
        a.extend(args.iter().copied());
        let r = run(&a);
        assert_eq!(r.code, 2, "{args:?}: {}", r.stderr);
        assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
        assert!(r.stderr.starts_with("ladderfan: error: "), "{}", r.stderr);
        assert!(r.stderr.contains(says), "{args:?}: {}", r.stderr);
    }
    // m c^2 is refused for a lab model by the commands that took no unit flag before too
    for cmd in ["orbits", "verify"] {
        let r = run(&[cmd, "--builtin", "schrodinger", "--energy-unit", "mc2"]);
        assert_eq!(r.code, 2, "{cmd}: {}", r.stderr);
        assert!(r.stderr.contains("--energy-unit"), "{cmd}: {}", r.stderr);
    }
    // a negative field with a suffix reaches its flag
    let r = run(&[
        "levels",
        "--builtin",
        "dirac2d",
        "--field",
        "-2T",
        "--cutoff",
        "40",
        "--json",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
}

/// Bytes a drawn progress bar leaves: carriage returns, escape sequences, the bar's `eta`.
fn has_progress_bytes(stderr: &str) -> bool {
    stderr.contains('\r') || stderr.contains('\u{1b}') || stderr.contains("eta ")
}

#[test]
fn progress_never_reaches_a_pipe() {
    // stderr is a pipe here, as in scripts and CI: the long commands (a kz-integrated Fermi
    // sweep of several seconds, past the bar's 0.8 s delay; an optics fan; a convergence
    // study; a fan; the semiclassical orbits) write no progress, with or without --json.
    let orbits = with_flags(&ORBITS_PARABOLIC, &["--field", "2", "--json"]);
    let runs: [&[&str]; 6] = [
        &orbits,
        &[
            "dos",
            "--builtin",
            "weyl",
            "--field",
            "10",
            "--cutoff",
            "100",
            "--kz-integrate",
            "--width",
            "1",
            "--density-cm3",
            "1e17",
            "--b-min",
            "4",
            "--b-max",
            "10",
            "--points",
            "4",
            "--json",
        ],
        &[
            "optics",
            "--builtin",
            "dirac2d",
            "--b-max",
            "8T",
            "--points",
            "20",
            "--cutoff",
            "120",
        ],
        &[
            "converge",
            "--builtin",
            "dirac2d",
            "--cutoffs",
            "50,100,200",
        ],
        &[
            "converge",
            "--builtin",
            "dirac2d",
            "--mode",
            "auto",
            "--count",
            "10",
            "--json",
        ],
        &[
            "fan",
            "--builtin",
            "dirac2d",
            "--points",
            "80",
            "--cutoff",
            "150",
        ],
    ];
    for args in runs {
        let r = run(args);
        assert_eq!(r.code, 0, "{args:?}: {}", r.stderr);
        assert!(!has_progress_bytes(&r.stderr), "{args:?}: {:?}", r.stderr);
        assert!(!has_progress_bytes(&r.stdout), "{args:?}");
    }
}

#[test]
fn optics_energies_convert_too() {
    let base = [
        "optics",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=4",
        "--field",
        "3T",
        "--cutoff",
        "80",
        "--json",
    ];
    let run_with = |extra: &[&str]| {
        let mut a = base.to_vec();
        a.extend_from_slice(extra);
        json(&a)
    };
    let transition_energies = |j: &Value| -> Vec<f64> {
        j["points"][0]["transitions"]
            .as_array()
            .unwrap_or_else(|| panic!("no transitions: {j}"))
            .iter()
            .map(|t| f(&t["energy"]))
            .collect()
    };
    let mev = run_with(&[]);
    let invcm = run_with(&["--energy-unit", "cm-1", "--field-unit", "Bc"]);
    assert_eq!(invcm["units"]["energy"], "cm^-1");
    let (a, b) = (transition_energies(&mev), transition_energies(&invcm));
    assert!(!a.is_empty());
    assert_scaled(&a, &b, MEV_IN_INVCM, 1e-9);
    let bc = critical_field_t();
    assert!((f(&invcm["points"][0]["field"]) - 3.0 / bc).abs() < 1e-9 * 3.0 / bc);
}

/// `dos` and `converge` (study and auto) on the natural-unit 3+1 Dirac model with the field
/// given as `--field 1e8T`: the same run in m c^2 and in meV differ by m_e c^2 = 510 998.950 00
/// eV (CODATA 2018, Tiesinga et al. 2021); densities of states per energy by its inverse.
#[test]
fn dos_and_converge_convert_energies_and_fields() {
    // 1e-10: the published m_e c^2 (510 998.950 00 eV, standard uncertainty 1.5e-4 eV, 3e-10
    // relative) and the product of CODATA 2018 m_e and c over e differ by 7e-12 relative
    let mev_per_mc2 = ME_C2_EV * 1e3;
    let dos = |extra: &[&str]| {
        let mut a = vec![
            "dos",
            "--builtin",
            "dirac",
            "--field",
            "1e8T",
            "--cutoff",
            "60",
            "--width",
            "0.002",
            "--energy-points",
            "21",
            "--emin",
            "-0.5",
            "--emax",
            "0.5",
            "--json",
        ];
        a.extend_from_slice(extra);
        json(&a)
    };
    let nat = dos(&[]);
    let mev = dos(&["--energy-unit", "meV", "--field-unit", "T"]);
    assert_eq!(mev["units"]["energy"], "meV");
    assert_eq!(mev["units"]["field"], "T");
    let col = |j: &Value, k: usize| -> Vec<f64> {
        j["dos"]
            .as_array()
            .unwrap_or_else(|| panic!("no dos: {j}"))
            .iter()
            .map(|p| f(&p[k]))
            .collect()
    };
    assert_scaled(&col(&nat, 0), &col(&mev, 0), mev_per_mc2, 1e-10);
    assert_scaled(&col(&nat, 1), &col(&mev, 1), 1.0 / mev_per_mc2, 1e-9);
    assert!(
        (f(&mev["field"]) - 1e8).abs() < 1e-9 * 1e8,
        "{}",
        mev["field"]
    );
    assert!((f(&mev["width"]) - 0.002 * mev_per_mc2).abs() < 1e-9 * f(&mev["width"]));
    // the CSV column names follow the unit, DOS per energy included
    let dir = scratch("units-dos");
    let d = dir.to_string_lossy().to_string();
    dos(&["--energy-unit", "eV", "--out", &d]);
    let text = std::fs::read_to_string(dir.join("dos.csv")).unwrap_or_default();
    assert!(
        text.starts_with("energy_eV,dos_per_eV_cm2,density_invcm2"),
        "{}",
        text.lines().next().unwrap_or_default()
    );
    // converge, study and auto
    let conv = |extra: &[&str]| {
        let mut a = vec![
            "converge",
            "--builtin",
            "dirac",
            "--field",
            "1e8T",
            "--count",
            "3",
            "--json",
        ];
        a.extend_from_slice(extra);
        json(&a)
    };
    let refs = |j: &Value| -> Vec<f64> {
        j["study"]["levels"]
            .as_array()
            .unwrap_or_else(|| panic!("no levels: {j}"))
            .iter()
            .map(|l| f(&l["reference_value"]))
            .collect()
    };
    let (a, b) = (
        conv(&["--cutoffs", "20,40"]),
        conv(&["--cutoffs", "20,40", "--energy-unit", "meV"]),
    );
    assert_eq!(b["study"]["energy_unit"], "meV");
    assert_scaled(&refs(&a), &refs(&b), mev_per_mc2, 1e-10);
    let auto = |extra: &[&str]| {
        let mut e = vec!["--mode", "auto"];
        e.extend_from_slice(extra);
        conv(&e)
    };
    let (a, b) = (
        auto(&[]),
        auto(&["--energy-unit", "K", "--field-unit", "T"]),
    );
    let lv = |j: &Value| -> Vec<f64> {
        j["levels"]
            .as_array()
            .unwrap_or_else(|| panic!("no levels: {j}"))
            .iter()
            .map(|l| f(&l["energy"]))
            .collect()
    };
    // MEV_IN_K is written to 10 digits (1.3e-10 relative)
    assert_scaled(&lv(&a), &lv(&b), mev_per_mc2 * MEV_IN_K, 1e-9);
    assert!((f(&b["field"]) - 1e8).abs() < 1e-9 * 1e8, "{}", b["field"]);
}

#[test]
fn orbits_and_verify_convert_energies_and_fields() {
    // orbits: the same run in meV/T and in eV/B_c (field flags given with a suffix): every
    // energy a thousand times smaller (1 eV = 1000 meV by definition of the prefix), every
    // field divided by B_c (CODATA 2018, above), indices and phases unchanged
    let orbits = |extra: &[&str]| {
        json(&with_flags(
            &ORBITS_PARABOLIC,
            &with_flags(&["--levels", "3", "--json"], extra),
        ))
    };
    let native = orbits(&["--field", "2"]);
    let shown = orbits(&["--field", "2T", "--energy-unit", "eV", "--field-unit", "Bc"]);
    assert_eq!(shown["units"]["energy"], "eV");
    assert_eq!(shown["units"]["field"], "B_c");
    let bc = critical_field_t();
    let close = |a: f64, b: f64, what: &str| {
        assert!((a - b).abs() <= 1e-9 * b.abs(), "{what}: {a} vs {b}");
    };
    close(
        f(&shown["orbit"]["fermi_energy"]),
        1e-3 * f(&native["orbit"]["fermi_energy"]),
        "Fermi energy",
    );
    close(f(&shown["field"]), 2.0 / bc, "table field");
    for k in ["frequency", "b_min", "b_max", "fft_frequency"] {
        close(f(&shown["fan"][k]), f(&native["fan"][k]) / bc, k);
    }
    close(
        f(&shown["fan"]["broadening"]),
        1e-3 * f(&native["fan"]["broadening"]),
        "broadening",
    );
    assert_eq!(shown["fan"]["intercept"], native["fan"]["intercept"]);
    let exact = |j: &Value| -> Vec<f64> {
        j["levels"]
            .as_array()
            .unwrap_or_else(|| panic!("no levels: {j}"))
            .iter()
            .map(|l| f(&l["exact"]))
            .collect()
    };
    assert_scaled(&exact(&native), &exact(&shown), 1e-3, 1e-12);
    // the text names the units it prints in
    let r = run(&with_flags(
        &ORBITS_PARABOLIC,
        &["--levels", "3", "--energy-unit", "K"],
    ));
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("units: energy K"), "{}", r.stdout);

    // verify: the same check of E_n = hbar omega_c (n + 1/2) (Landau 1930) shown in cm^-1
    fn verify<'a>(extra: &[&'a str]) -> Vec<&'a str> {
        let mut a = vec![
            "verify",
            "--builtin",
            "schrodinger",
            "--field",
            "3",
            "--cutoff",
            "60",
            "--formula",
            "hbar*e*abs(q*B)/(mass_ratio*m_e)*(n+1/2)",
            "--n",
            "0..10",
        ];
        a.extend_from_slice(extra);
        a
    }
    let (a, b) = (
        json(&verify(&["--json"])),
        json(&verify(&["--json", "--energy-unit", "cm-1"])),
    );
    assert_eq!(b["units"]["energy"], "cm^-1");
    let pairs = |j: &Value, side: &str| -> Vec<f64> {
        j["verdict"]["pairs"]
            .as_array()
            .unwrap_or_else(|| panic!("no pairs: {j}"))
            .iter()
            .map(|p| f(&p[side]["energy"]))
            .collect()
    };
    assert_eq!(pairs(&a, "numerical").len(), 11);
    assert_scaled(
        &pairs(&a, "numerical"),
        &pairs(&b, "numerical"),
        MEV_IN_INVCM,
        1e-9,
    );
    assert_scaled(
        &pairs(&a, "expected"),
        &pairs(&b, "expected"),
        MEV_IN_INVCM,
        1e-9,
    );
    assert_eq!(a["verdict"]["outcome"], b["verdict"]["outcome"]);
    let text = run(&verify(&["--energy-unit", "cm-1"]));
    assert_eq!(text.code, 0, "{}", text.stderr);
    assert!(text.stdout.contains("expected [cm^-1]"), "{}", text.stdout);
    assert!(text.stdout.contains("cm^-1 = "), "{}", text.stdout);
}

#[test]
fn progress_reaches_a_terminal() {
    // the other side of `progress_never_reaches_a_pipe`: `script` (util-linux, on every Debian
    // machine) runs the command on a pseudo-terminal, and LADDERFAN_PROGRESS_AFTER_MS=0 draws
    // at once, so the spinner of a one-field kz-integrated DOS must appear in what the
    // terminal received
    let bin = env!("CARGO_BIN_EXE_ladderfan");
    let cmd = format!(
        "{bin} dos --builtin weyl --field 10 --cutoff 60 --kz-integrate --width 1 \
         --energy-points 11"
    );
    let out = std::process::Command::new("script")
        .args(["-q", "-e", "-c", &cmd, "/dev/null"])
        .env("LADDERFAN_PROGRESS_AFTER_MS", "0")
        .output()
        .expect("script (util-linux) runs the command on a pseudo-terminal");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{text}");
    assert!(text.contains("dos --kz-integrate"), "{text}");
    // and the result itself is there, after the spinner was cleared
    assert!(text.contains("kz-integrated (per volume)"), "{text}");
}
