//! Shared helpers for the end-to-end tests of the `ladderfan` binary (tests/cli_*.rs): CODATA
//! constants and the closed-form scales written out independently of ladderfan::units, running
//! the binary from the crate root, reading its JSON and a scratch directory per test.

use super::{run_in, Run};
use serde_json::Value;
use std::path::{Path, PathBuf};

// CODATA 2018 exact / recommended values (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)),
// written out here independently of ladderfan::units.
pub const H_PLANCK: f64 = 6.626_070_15e-34;

pub const E_CHARGE: f64 = 1.602_176_634e-19;

pub const M_E: f64 = 9.109_383_701_5e-31;

pub const MEV_J: f64 = 1.602_176_634e-22;

pub const NM_M: f64 = 1e-9;

/// `orbits` on an invented parabolic band (m* = 0.1 m_e) at 1e12 cm^-2: a small, quick run that
/// several end-to-end tests share; extend it with [`with_flags`].
pub const ORBITS_PARABOLIC: [&str; 7] = [
    "orbits",
    "--builtin",
    "schrodinger",
    "--set",
    "mass_ratio=0.1",
    "--density",
    "1e12",
];

/// `base` followed by `extra`.
pub fn with_flags<'a>(base: &[&'a str], extra: &[&'a str]) -> Vec<&'a str> {
    base.iter().chain(extra).copied().collect()
}

pub fn hbar() -> f64 {
    H_PLANCK / (2.0 * std::f64::consts::PI)
}

/// Magnetic length sqrt(hbar / (e B)) in nm.
pub fn l_b_nm(field_t: f64) -> f64 {
    (hbar() / (E_CHARGE * field_t.abs())).sqrt() / NM_M
}

/// hbar v in meV nm for v in m/s.
pub fn hbar_v(v: f64) -> f64 {
    hbar() * v / MEV_J / NM_M
}

/// hbar e B / m in meV for m = ratio m_e.
pub fn hbar_omega_c(field_t: f64, ratio: f64) -> f64 {
    hbar() * E_CHARGE * field_t.abs() / (ratio * M_E) / MEV_J
}

/// Bohr magneton e hbar / (2 m_e) in meV/T.
pub fn mu_b() -> f64 {
    E_CHARGE * hbar() / (2.0 * M_E) / MEV_J
}

pub fn run(args: &[&str]) -> Run {
    run_in(Path::new(env!("CARGO_MANIFEST_DIR")), args)
}

pub fn json(args: &[&str]) -> Value {
    let r = run(args);
    assert_eq!(r.code, 0, "ladderfan {args:?} failed: {}", r.stderr);
    serde_json::from_str(&r.stdout)
        .unwrap_or_else(|e| panic!("ladderfan {args:?}: not JSON ({e}): {}", r.stdout))
}

pub fn scratch(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("cli")
        .join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(d.parent().unwrap_or(Path::new("."))).ok();
    d
}

pub fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

pub fn converged_energies(j: &Value) -> Vec<f64> {
    j["levels"]
        .as_array()
        .unwrap_or_else(|| panic!("no levels: {j}"))
        .iter()
        .filter(|l| l["converged"].as_bool() == Some(true))
        .map(|l| f(&l["energy"]))
        .collect()
}

/// Every computed value is within `tol` of an expected one and vice versa.
pub fn assert_same_set(computed: &[f64], expected: &[f64], tol: f64) {
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
