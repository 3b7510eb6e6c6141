//! Every CSV file every command writes loads as a plain table: the column line first, no `#`
//! line, no quoted cell, equal row widths, column names `<quantity>_<unit>` in snake case
//! (the unit tokens `meV`, `T`, `Bc` ... keep their case), the level energy always
//! `energy_<unit>` and the field always `field_<unit>`, and a sidecar `NAME.meta.json` that
//! names the same columns in the same order. The checker itself is tested on bad files.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> &'static str {
    env!("CARGO_BIN_EXE_ladderfan")
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("ladderfan-files-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
    d
}

fn run_ok(args: &[&str]) {
    let out = Command::new(bin())
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("run ladderfan: {e}"));
    assert!(
        out.status.success(),
        "ladderfan {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// Unit tokens that keep their case inside a column name (the spellings of the shared
/// column convention: energies, fields; everything else is lower case).
const UNIT_TOKENS: [&str; 6] = ["meV", "eV", "K", "THz", "T", "Bc"];

/// Units of sidecar columns that are energies / fields (as the sidecar prints them).
const ENERGY_UNITS: [&str; 6] = ["meV", "eV", "K", "cm^-1", "THz", "m c^2"];
const FIELD_UNITS: [&str; 2] = ["T", "B_c"];

/// Energy-valued quantities other than the level energy, with their own names (a bound, a
/// width, the Fermi level, the ends of a transition, a change between cutoffs).
const ENERGY_VALUED: [&str; 9] = [
    "bound_",
    "residual_bound_",
    "kato_temple_bound_",
    "width_",
    "fermi_energy_",
    "from_energy_",
    "to_energy_",
    "change_",
    "actual_error_",
];

fn name_ok(name: &str) -> bool {
    let mut chars = name.chars();
    chars.next().is_some_and(|c| c.is_ascii_lowercase())
        && name.split('_').all(|tok| {
            UNIT_TOKENS.contains(&tok)
                || (!tok.is_empty()
                    && tok
                        .chars()
                        .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit()))
        })
}

/// Every problem of one CSV text and its sidecar text; empty when the file is good.
fn problems(csv: &str, meta: &str) -> Vec<String> {
    let mut bad = Vec::new();
    let lines: Vec<&str> = csv.lines().collect();
    let Some(head) = lines.first() else {
        return vec!["empty file".into()];
    };
    if csv.contains('#') {
        bad.push("a `#` somewhere (numpy reads it as a comment)".into());
    }
    if csv.contains('"') {
        bad.push("a quoted cell".into());
    }
    let names: Vec<&str> = head.split(',').collect();
    for (i, l) in lines.iter().enumerate().skip(1) {
        if l.split(',').count() != names.len() {
            bad.push(format!(
                "row {i} has {} cells for {} columns",
                l.split(',').count(),
                names.len()
            ));
        }
    }
    for n in &names {
        if !name_ok(n) {
            bad.push(format!("column name `{n}`"));
        }
    }
    let mut seen = std::collections::BTreeSet::new();
    for n in &names {
        if !seen.insert(n) {
            bad.push(format!("column `{n}` twice"));
        }
    }
    let meta: Value = match serde_json::from_str(meta) {
        Ok(v) => v,
        Err(e) => {
            bad.push(format!("sidecar is not JSON: {e}"));
            return bad;
        }
    };
    for key in ["tool", "version", "command", "command_line", "columns"] {
        if meta.get(key).is_none() {
            bad.push(format!("sidecar without `{key}`"));
        }
    }
    let cols = meta["columns"].as_array().cloned().unwrap_or_default();
    let side_names: Vec<&str> = cols.iter().filter_map(|c| c["name"].as_str()).collect();
    if side_names != names {
        bad.push(format!(
            "sidecar columns {side_names:?} differ from the CSV's {names:?}"
        ));
    }
    for c in &cols {
        let (name, unit) = (
            c["name"].as_str().unwrap_or(""),
            c["unit"].as_str().unwrap_or("?"),
        );
        if c["meaning"].as_str().map_or(true, str::is_empty) {
            bad.push(format!("column `{name}` has no meaning in the sidecar"));
        }
        let is_energy = ENERGY_UNITS.contains(&unit);
        if is_energy
            && !name.starts_with("energy_")
            && !ENERGY_VALUED.iter().any(|p| name.starts_with(p))
        {
            bad.push(format!("energy column `{name}` does not start `energy_`"));
        }
        if FIELD_UNITS.contains(&unit) && !name.starts_with("field_") {
            bad.push(format!("field column `{name}` does not start `field_`"));
        }
        if name.starts_with("energy_") && !is_energy {
            bad.push(format!(
                "`{name}` is named an energy but its unit is `{unit}`"
            ));
        }
    }
    bad
}

/// Every `*.csv` below `dir`, sorted.
fn csv_files(dir: &Path, found: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        let p = e.path();
        if p.is_dir() {
            csv_files(&p, found);
        } else if p.extension().is_some_and(|x| x == "csv") {
            found.push(p);
        }
    }
    found.sort();
}

fn check_dir(dir: &Path) -> Vec<PathBuf> {
    let mut found = Vec::new();
    csv_files(dir, &mut found);
    let mut all = Vec::new();
    for p in &found {
        let csv = std::fs::read_to_string(p).unwrap_or_default();
        let side = p.with_file_name(format!(
            "{}.meta.json",
            p.file_stem()
                .map(|s| s.to_string_lossy())
                .unwrap_or_default()
        ));
        let meta = std::fs::read_to_string(&side).unwrap_or_default();
        all.extend(
            problems(&csv, &meta)
                .into_iter()
                .map(|m| format!("{}: {m}", p.display())),
        );
    }
    assert!(all.is_empty(), "{}", all.join("\n"));
    found
}

/// The commands that write CSV files, with small cutoffs; `D` is replaced by a directory.
fn commands() -> Vec<Vec<&'static str>> {
    let small = ["--cutoff", "24"];
    let mut v: Vec<Vec<&str>> = vec![
        vec!["levels", "--builtin", "dirac2d", "--count", "6"],
        vec![
            "levels",
            "--builtin",
            "dirac",
            "--field",
            "0.5",
            "--count",
            "6",
        ],
        vec![
            "fan",
            "--builtin",
            "dirac2d",
            "--points",
            "4",
            "--b-max",
            "5",
        ],
        vec!["dispersion", "--builtin", "pauli", "--points", "4"],
        vec![
            "dispersion",
            "--builtin",
            "dirac",
            "--field",
            "0.5",
            "--points",
            "3",
        ],
        vec!["converge", "--builtin", "dirac2d", "--cutoffs", "8,16,24"],
        vec![
            "converge",
            "--builtin",
            "dirac2d",
            "--mode",
            "auto",
            "--count",
            "4",
        ],
        vec![
            "dos",
            "--builtin",
            "dirac2d",
            "--density-cm2",
            "1e11",
            "--b-max",
            "6",
            "--points",
            "3",
        ],
        vec![
            "dos",
            "--builtin",
            "weyl",
            "--field",
            "10",
            "--kz-integrate",
            "--width",
            "1",
            "--energy-points",
            "21",
            "--density-cm3",
            "1e16",
            "--b-min",
            "5",
            "--b-max",
            "10",
            "--points",
            "2",
            "--emin",
            "-20",
            "--emax",
            "20",
            "--cutoff",
            "100",
        ],
        vec!["optics", "--builtin", "dirac2d"],
        vec![
            "optics",
            "--builtin",
            "dirac2d",
            "--b-max",
            "6",
            "--points",
            "3",
        ],
    ];
    for c in v.iter_mut() {
        if c[0] != "converge" && !c.contains(&"--cutoff") {
            c.extend(small);
        }
    }
    v.push(vec!["models"]);
    v.push(vec!["demo"]);
    // the semiclassics command (its own cutoff choice; a small parabolic-band run)
    v.push(vec![
        "orbits",
        "--builtin",
        "schrodinger",
        "--set",
        "mass_ratio=0.1",
        "--density",
        "1e12",
        "--field",
        "2",
        "--levels",
        "3",
    ]);
    v
}

#[test]
fn every_csv_of_every_command_loads_as_a_plain_table() {
    let root = scratch("all");
    for (i, c) in commands().iter().enumerate() {
        let d = root.join(format!("{i}-{}", c[0]));
        let ds = d.to_string_lossy().to_string();
        let mut args = c.clone();
        args.extend(["--out", &ds]);
        run_ok(&args);
    }
    // shards and their merge
    let sweep = [
        "fan",
        "--builtin",
        "dirac2d",
        "--points",
        "6",
        "--b-max",
        "5",
        "--cutoff",
        "24",
    ];
    let mut shards = Vec::new();
    for k in 1..=2 {
        let d = root.join(format!("shard{k}")).to_string_lossy().to_string();
        let spec = format!("{k}/2");
        run_ok(&[&sweep[..], &["--shard", &spec, "--out", &d]].concat());
        shards.push(format!("{d}/fan.csv"));
    }
    let merged = root
        .join("merged")
        .join("fan.csv")
        .to_string_lossy()
        .to_string();
    let mut m = vec!["merge", merged.as_str()];
    m.extend(shards.iter().map(String::as_str));
    run_ok(&m);
    let found = check_dir(&root);
    let names: std::collections::BTreeSet<String> = found
        .iter()
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect();
    for want in [
        "levels.csv",
        "fan.csv",
        "dispersion.csv",
        "converge.csv",
        "converge-auto.csv",
        "dos.csv",
        "fermi.csv",
        "dos3d.csv",
        "fermi3d.csv",
        "transitions.csv",
        "models.csv",
    ] {
        assert!(names.contains(want), "{want} was not written: {names:?}");
    }
    // natural units spell their suffixes without symbols
    let nat = std::fs::read_to_string(root.join("4-dispersion").join("dispersion.csv"))
        .unwrap_or_default();
    assert!(
        nat.starts_with("kz_mc,track,label,landau_index,landau_branch,energy_mc2,bound_mc2\n"),
        "{nat}"
    );
    let _ = std::fs::remove_dir_all(&root);
}

#[test]
fn the_checker_rejects_bad_files() {
    let meta = |cols: &[(&str, &str)]| {
        let c: Vec<Value> = cols
            .iter()
            .map(|(n, u)| serde_json::json!({"name": n, "unit": u, "meaning": "invented"}))
            .collect();
        serde_json::json!({"tool": "ladderfan", "version": "0", "command": "x",
            "command_line": [], "columns": c})
        .to_string()
    };
    let good = meta(&[("field_T", "T"), ("energy_meV", "meV")]);
    assert!(problems("field_T,energy_meV\n1,2\n", &good).is_empty());
    // a comment line before the header, a ragged row, a quoted cell, a missing sidecar
    assert!(!problems("# old\nfield_T,energy_meV\n1,2\n", &good).is_empty());
    assert!(!problems("field_T,energy_meV\n1,2,3\n", &good).is_empty());
    assert!(!problems("field_T,energy_meV\n1,\"2,3\"\n", &good).is_empty());
    assert!(!problems("field_T,energy_meV\n1,2\n", "").is_empty());
    // names: a unitless field, an energy under another name, upper case, sidecar order
    let unitless = meta(&[("field", "T"), ("energy_meV", "meV")]);
    assert!(!problems("field,energy_meV\n1,2\n", &unitless).is_empty());
    let renamed = meta(&[("field_T", "T"), ("e_meV", "meV")]);
    assert!(!problems("field_T,e_meV\n1,2\n", &renamed).is_empty());
    let upper = meta(&[("Field_T", "T"), ("energy_meV", "meV")]);
    assert!(!problems("Field_T,energy_meV\n1,2\n", &upper).is_empty());
    let swapped = meta(&[("energy_meV", "meV"), ("field_T", "T")]);
    assert!(!problems("field_T,energy_meV\n1,2\n", &swapped).is_empty());
}
