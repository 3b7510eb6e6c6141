//! The fixed vocabulary of the expression language: physical constants, unit names, keywords
//! and functions. Model files and level formulas see the same table.

use crate::units::{
    hbar_v_mev_nm, Units, BOHR_MAGNETON_MEV_PER_T, ELECTRON_MASS, ELECTRON_REST_ENERGY_MEV,
    HBAR2_OVER_2ME_MEV_NM2, HBAR_C_MEV_NM, HBAR_MEV_S, MEV, SPEED_OF_LIGHT,
};

/// One named constant of the expression language.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Constant {
    /// The name an expression uses.
    pub name: &'static str,
    /// Its value in the unit system it was made for.
    pub value: f64,
    /// What it is, with its unit.
    pub meaning: &'static str,
}

const fn c(name: &'static str, value: f64, meaning: &'static str) -> Constant {
    Constant {
        name,
        value,
        meaning,
    }
}

/// One kilogram in the lab system meV, nm, fs: J s^2/m^2 -> meV fs^2/nm^2.
const KG: f64 = 1e12 / MEV;

/// The physical constants in `units`, all from CODATA 2018 via [`crate::units`].
///
/// Lab models use the coherent system meV, nm, fs, T with charges in e, so that e = 1,
/// hbar = 658.2119569 meV fs, c = 299.792458 nm/fs, m_e = 5685.63 meV fs^2/nm^2 and
/// mu_B = e hbar/(2 m_e) = 0.057883818 meV/T; the shorthands `hbar2_2me` = hbar^2/(2 m_e)
/// (meV nm^2), `hbar_c` = hbar c (meV nm) and `me_c2` = m_e c^2 (meV) are products of these.
/// Natural-unit models have hbar = c = m_e = e = 1, so mu_B = hbar2_2me = 1/2 and
/// hbar_c = me_c2 = 1 (B in units of B_c = m^2 c^2/(e hbar)).
///
/// # Examples
/// ```
/// use ladderfan::expr::constants;
/// use ladderfan::units::Units;
/// let hbar = constants(Units::Lab).into_iter().find(|c| c.name == "hbar").map(|c| c.value);
/// assert!((hbar.unwrap_or(0.0) - 658.2119569).abs() < 1e-6); // meV fs, CODATA 2018
/// ```
pub fn constants(units: Units) -> Vec<Constant> {
    let pi = c("pi", std::f64::consts::PI, "pi");
    match units {
        Units::Lab => vec![
            pi,
            c("hbar", HBAR_MEV_S * 1e15, "reduced Planck constant, meV fs"),
            c("e", 1.0, "elementary charge (charges in units of e)"),
            c("m_e", ELECTRON_MASS * KG, "electron mass, meV fs^2/nm^2"),
            c("c", SPEED_OF_LIGHT * 1e-6, "speed of light, nm/fs"),
            c("mu_B", BOHR_MAGNETON_MEV_PER_T, "Bohr magneton, meV/T"),
            c(
                "hbar2_2me",
                HBAR2_OVER_2ME_MEV_NM2,
                "hbar^2/(2 m_e), meV nm^2",
            ),
            c("hbar_c", HBAR_C_MEV_NM, "hbar c, meV nm"),
            c(
                "me_c2",
                ELECTRON_REST_ENERGY_MEV,
                "electron rest energy, meV",
            ),
        ],
        Units::Natural => vec![
            pi,
            c("hbar", 1.0, "reduced Planck constant"),
            c("e", 1.0, "elementary charge"),
            c("m_e", 1.0, "electron mass"),
            c("c", 1.0, "speed of light"),
            c("mu_B", 0.5, "Bohr magneton, m c^2 per B_c"),
            c("hbar2_2me", 0.5, "hbar^2/(2 m_e)"),
            c("hbar_c", 1.0, "hbar c"),
            c("me_c2", 1.0, "electron rest energy"),
        ],
    }
}

/// Unit names that convert a quantity into the lab system meV, nm, fs, T (e.g. a velocity in
/// m/s is `v * metre / second` in nm/fs); natural units have none.
pub fn unit_names(units: Units) -> Vec<Constant> {
    match units {
        Units::Lab => vec![
            c("meV", 1.0, "millielectronvolt"),
            c("eV", 1e3, "electronvolt in meV"),
            c("joule", 1.0 / MEV, "joule in meV"),
            c("nm", 1.0, "nanometre"),
            c("angstrom", 0.1, "angstrom in nm"),
            c("metre", 1e9, "metre in nm"),
            c("fs", 1.0, "femtosecond"),
            c("ps", 1e3, "picosecond in fs"),
            c("second", 1e15, "second in fs"),
            c("tesla", 1.0, "tesla"),
            c("kg", KG, "kilogram in meV fs^2/nm^2"),
        ],
        Units::Natural => Vec::new(),
    }
}

/// Words with a fixed meaning: `none` (no level), `true`, `false`.
pub const KEYWORDS: [&str; 3] = ["none", "true", "false"];

/// Every function an expression may call.
pub const FUNCTIONS: [&str; 22] = [
    "sqrt", "abs", "sign", "exp", "ln", "log10", "sin", "cos", "tan", "atan", "sinh", "cosh",
    "tanh", "floor", "ceil", "round", "hypot", "atan2", "min", "max", "if", "hbar_v",
];

/// What a function does with its arguments.
#[derive(Debug, Clone, Copy)]
pub(super) enum Func {
    One(fn(f64) -> f64),
    Two(fn(f64, f64) -> f64),
    Min,
    Max,
    If,
}

fn sign(x: f64) -> f64 {
    if x > 0.0 {
        1.0
    } else if x < 0.0 {
        -1.0
    } else {
        0.0
    }
}

/// hbar v in natural units (energy x length = m c^2 x hbar/(m c)) for v in m/s.
fn hbar_v_natural(velocity_m_per_s: f64) -> f64 {
    velocity_m_per_s / SPEED_OF_LIGHT
}

/// The function called `name`; `hbar_v` (hbar v for v in m/s, in the energy x length of the
/// unit system) needs the unit system and is unknown without one.
pub(super) fn lookup_function(name: &str, units: Option<Units>) -> Option<(&'static str, Func)> {
    let one = |n: &'static str, f: fn(f64) -> f64| Some((n, Func::One(f)));
    match name {
        "sqrt" => one("sqrt", f64::sqrt),
        "abs" => one("abs", f64::abs),
        "sign" => one("sign", sign),
        "exp" => one("exp", f64::exp),
        "ln" => one("ln", f64::ln),
        "log10" => one("log10", f64::log10),
        "sin" => one("sin", f64::sin),
        "cos" => one("cos", f64::cos),
        "tan" => one("tan", f64::tan),
        "atan" => one("atan", f64::atan),
        "sinh" => one("sinh", f64::sinh),
        "cosh" => one("cosh", f64::cosh),
        "tanh" => one("tanh", f64::tanh),
        "floor" => one("floor", f64::floor),
        "ceil" => one("ceil", f64::ceil),
        "round" => one("round", f64::round),
        "hypot" => Some(("hypot", Func::Two(f64::hypot))),
        "atan2" => Some(("atan2", Func::Two(f64::atan2))),
        "min" => Some(("min", Func::Min)),
        "max" => Some(("max", Func::Max)),
        "if" => Some(("if", Func::If)),
        "hbar_v" => match units? {
            Units::Lab => one("hbar_v", hbar_v_mev_nm),
            Units::Natural => one("hbar_v", hbar_v_natural),
        },
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_listed_function_exists_and_lab_constants_are_coherent() {
        for f in FUNCTIONS {
            assert!(lookup_function(f, Some(Units::Lab)).is_some(), "{f}");
            assert!(lookup_function(f, Some(Units::Natural)).is_some(), "{f}");
        }
        // hbar^2/(2 m_e) and hbar c, m_e c^2 from the coherent meV-nm-fs values agree with
        // the CODATA 2018 products of crate::units (common practice: one system, no mixing)
        for units in [Units::Lab, Units::Natural] {
            let t = constants(units);
            let get = |n: &str| t.iter().find(|c| c.name == n).map_or(f64::NAN, |c| c.value);
            let rel = |a: f64, b: f64| (a / b - 1.0).abs();
            let (hbar, m, cc) = (get("hbar"), get("m_e"), get("c"));
            assert!(rel(hbar * hbar / (2.0 * m), get("hbar2_2me")) < 1e-14);
            assert!(rel(hbar * cc, get("hbar_c")) < 1e-14);
            assert!(rel(m * cc * cc, get("me_c2")) < 1e-14);
            assert!(rel(hbar * get("e") / (2.0 * m), get("mu_B")) < 1e-14);
        }
    }
}
