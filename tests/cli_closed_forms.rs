//! End-to-end tests of the `ladderfan` binary against closed forms: model files in tests/data
//! and built-ins by flags, their JSON results checked against closed forms computed here from
//! the published formulas (helpers in tests/common/cli.rs).

use std::path::Path;

mod common;
use common::cli::*;

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
    assert!(csv.starts_with("energy_meV,dos_per_meV_cm3,density_invcm3\n"));
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
    let texts: Vec<String> = ladderfan::plot::geometry::text_boxes(&svg)
        .into_iter()
        .map(|t| t.text)
        .collect();
    for label in ["+1", "-1", "+2", "-2"] {
        assert!(texts.iter().any(|t| t == label), "{label} missing");
    }
}
