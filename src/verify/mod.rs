//! Verify an analytic level formula against the exact spectrum: every level, including the
//! special ones.
//!
//! The expected levels come as an [`ExpectedList`]: from a Rust closure over the quantum
//! numbers ([`ExpectedList::from_fn`]), from formulas in the small expression language of
//! [`expr`] ([`ExpectedList::from_formula`], documented in the README (section Verifying a level formula)), from a list or a
//! CSV file ([`ExpectedList::from_levels`], [`ExpectedList::from_csv`]), or from the crate's
//! own closed forms ([`ExpectedList::from_closed_form`]).
//!
//! [`check`] assigns numerical levels to expected ones one to one ([`matching`]) inside the
//! window where both are meaningful, and returns a [`Verdict`]: per pair the expected and
//! numerical energies, the deviation, the allowed deviation and whether they agree; the
//! numerical levels that no expected level accounts for (a forgotten level); the expected
//! levels that no numerical level matches.
//!
//! # Which levels are checked
//! * Numerical: the converged levels of the spectrum only (cutoff artefacts never count).
//! * The window: where the expected list is complete. A list built from a formula over
//!   n = n_min..n_max knows where it stops being complete: each branch (value of s) is
//!   evaluated once more at n_max + 1; an increasing branch closes the window from above at
//!   that value, a decreasing one from below. A side that no branch closes stays open, so a
//!   forgotten lowest level (n = 0 left out of the range or of the formula) is reported. A
//!   plain list covers [its lowest, its highest] energy unless a window is given
//!   ([`ExpectedList::with_window`]).
//! * Where the spectrum is cut off: when unconverged levels lie above (below) every converged
//!   one, expected levels above (below) the converged range are not checked.
//!
//! # Agreement
//! A numerical level x (bound b) agrees with an expected value e when
//! |x - e| <= b + tolerance x scale + rounding, where scale is the spectrum's typical Landau
//! spacing ([`crate::Spectrum::energy_scale`]) unless set, and rounding =
//! `rounding_ulps` x eps x (|e| + |shift|) covers the evaluation of e itself in double
//! precision (shift: the difference between the list's and the spectrum's reference energy;
//! a formula for the absolute energy of a relativistic level at 1 T cannot be more precise
//! than eps x m c^2).

pub mod formula;
pub mod matching;

use crate::closed_form::ExpectedLevel;
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::models;
use crate::sectors::SectorId;
use crate::solve::Reference;
use formula::CompiledFormula;
pub use formula::{formula_scope, LevelFormula};
use matching::Interval;
use serde::Serialize;

/// The variables a Rust closure sees for one level: the quantum numbers and the point.
#[derive(Debug, Clone, Copy)]
pub struct Vars<'a> {
    /// Landau index.
    pub n: i64,
    /// Spin or branch sign (any small integer the formula gives a meaning to).
    pub s: i8,
    /// Field and kz.
    pub point: FieldPoint,
    /// The model (its parameters, charge and units).
    pub model: &'a Model,
}

impl Vars<'_> {
    /// A model parameter by name.
    pub fn param(&self, name: &str) -> Option<f64> {
        self.model.param(name)
    }
    /// Magnetic length l_B = sqrt(hbar/|qB|) in the model's length unit.
    pub fn magnetic_length(&self) -> f64 {
        self.model
            .units()
            .magnetic_length(self.point.field, self.model.charge())
    }
    /// sign(qB): +1 or -1.
    pub fn sign_qb(&self) -> f64 {
        if self.model.charge() * self.point.field < 0.0 {
            -1.0
        } else {
            1.0
        }
    }
}

/// One side of the window where an expected list is complete.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind", content = "energy")]
pub enum Edge {
    /// No limit on this side.
    Open,
    /// Levels at this energy (within the allowances) are inside.
    Include(f64),
    /// Levels at this energy (within the allowances) are outside: an unlisted level sits there.
    Exclude(f64),
}

/// The energy window an expected list covers, in the list's energies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Window {
    /// Lower side.
    pub lower: Edge,
    /// Upper side.
    pub upper: Edge,
}

impl Window {
    /// Both sides open.
    pub const ALL: Window = Window {
        lower: Edge::Open,
        upper: Edge::Open,
    };

    /// The window [lo, hi] with both edges included; an infinite value opens that side.
    pub fn closed(lo: f64, hi: f64) -> Window {
        let edge = |x: f64| {
            if x.is_infinite() {
                Edge::Open
            } else {
                Edge::Include(x)
            }
        };
        Window {
            lower: edge(lo),
            upper: edge(hi),
        }
    }
}

/// Expected levels with the energy they are measured from and the window they cover.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExpectedList {
    /// The levels; `energy` is E - `origin`. Multiplicities count the states of one orbital
    /// centre (as in [`closed_form`]).
    pub levels: Vec<ExpectedLevel>,
    /// The energy the list's energies are measured from (0: absolute energies).
    pub origin: f64,
    /// Where the list is complete.
    pub window: Window,
}

/// Everything that can be said about one candidate level of a formula.
type FormulaValue = Option<(f64, u32)>;

fn resolve_origin(model: &Model, origin: Reference) -> f64 {
    match origin {
        Reference::Model => model.reference_energy(),
        Reference::Zero => 0.0,
        Reference::Energy(e) => e,
    }
}

fn level_label(n: i64, s: i8, n_only: bool) -> String {
    if n_only || s == 0 {
        format!("n={n}")
    } else {
        format!("n={n} s={s:+}")
    }
}

impl ExpectedList {
    /// A plain list; energies are E - `origin`. The window is [lowest, highest] energy.
    pub fn from_levels(levels: Vec<ExpectedLevel>, origin: f64) -> Self {
        let lo = levels
            .iter()
            .map(|l| l.energy)
            .fold(f64::INFINITY, f64::min);
        let hi = levels
            .iter()
            .map(|l| l.energy)
            .fold(f64::NEG_INFINITY, f64::max);
        let window = if levels.is_empty() {
            Window::ALL
        } else {
            Window::closed(lo, hi)
        };
        ExpectedList {
            levels,
            origin,
            window,
        }
    }

    /// Replace the window (in the list's energies).
    pub fn with_window(mut self, window: Window) -> Self {
        self.window = window;
        self
    }

    /// Levels from a closure `f(vars) -> Some(E)` (or `None`: no level for these quantum
    /// numbers), for every n in `ns` and s in `ss`, multiplicity 1 each. `origin` says what E
    /// is measured from: [`Reference::Zero`] for absolute energies, [`Reference::Model`] for
    /// E - the model's reference energy (m c^2 for the relativistic models).
    ///
    /// The window is derived as in the module documentation, by evaluating `f` at
    /// n = max(ns) + 1.
    ///
    /// # Errors
    /// [`Error::Parse`] when `f` gives a non-finite energy for a listed level.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::{models, verify, FieldPoint, Reference, Settings, Spectrum};
    /// let m = models::pauli(models::PauliParams { mass_ratio: 0.5, g_factor: 3.0, charge: -1.0 })?;
    /// let pt = FieldPoint::field(2.0);
    /// let w = ladderfan::closed_form::cyclotron_energy_mev(0.5, 2.0, -1.0);
    /// let z = 1.5 * ladderfan::units::BOHR_MAGNETON_MEV_PER_T * 2.0;
    /// let ns: Vec<i64> = (0..=20).collect();
    /// let expected = verify::ExpectedList::from_fn(&m, pt, Reference::Zero, &ns, &[-1, 1], |v| {
    ///     Some(w * (v.n as f64 + 0.5) + v.s as f64 * z)
    /// })?;
    /// let spectrum = Spectrum::compute(&m, pt, &Settings::with_cutoff(60))?;
    /// let verdict = verify::check(&spectrum, &expected, &verify::VerifySettings::default())?;
    /// assert!(verdict.passed(), "{}", verdict.verdict_line("meV"));
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn from_fn<F>(
        model: &Model,
        point: FieldPoint,
        origin: Reference,
        ns: &[i64],
        ss: &[i8],
        mut f: F,
    ) -> Result<Self>
    where
        F: FnMut(&Vars) -> Option<f64>,
    {
        Self::try_from_fn(model, point, origin, ns, ss, |v| Ok(f(v).map(|e| (e, 1))))
    }

    /// As [`ExpectedList::from_fn`], with a closure that also gives the multiplicity and may
    /// fail: `f(vars) -> Ok(Some((E, multiplicity)))`, `Ok(None)` for no level.
    ///
    /// # Errors
    /// The closure's errors for listed levels; [`Error::Parse`] for a non-finite energy.
    pub fn try_from_fn<F>(
        model: &Model,
        point: FieldPoint,
        origin: Reference,
        ns: &[i64],
        ss: &[i8],
        mut f: F,
    ) -> Result<Self>
    where
        F: FnMut(&Vars) -> Result<FormulaValue>,
    {
        let mut levels = Vec::new();
        let mut vars = Vars {
            n: 0,
            s: 0,
            point,
            model,
        };
        for &n in ns {
            for &s in ss {
                vars.n = n;
                vars.s = s;
                if let Some((e, mult)) = f(&vars)? {
                    if !e.is_finite() {
                        return Err(Error::Parse {
                            location: "expected levels".into(),
                            message: format!(
                                "the formula gives {e} at n = {n}, s = {s}; check it for a square \
                                 root of a negative number or a division by zero"
                            ),
                        });
                    }
                    if mult > 0 {
                        levels.push(ExpectedLevel {
                            energy: e,
                            multiplicity: mult,
                            n,
                            s,
                            label: level_label(n, s, false),
                        });
                    }
                }
            }
        }
        let window = match ns.iter().max() {
            Some(&n_max) => beyond_window(ns, ss, n_max, |n, s| {
                vars.n = n;
                vars.s = s;
                match f(&vars) {
                    Ok(Some((e, _))) if e.is_finite() => Some(e),
                    _ => None,
                }
            }),
            None => Window::ALL,
        };
        levels.sort_by(|a, b| a.energy.total_cmp(&b.energy));
        Ok(ExpectedList {
            levels,
            origin: resolve_origin(model, origin),
            window,
        })
    }

    /// Levels from formulas in the expression language of [`expr`] (see the README (section Verifying a level formula)).
    ///
    /// For every n in `ns` and s in `ss`: the first case whose condition holds gives the
    /// energy, else `formula.formula`; when `formula.n0` is given, n = 0 is evaluated once,
    /// with s = 0, from it (the unpaired lowest level of Dirac-like models). An expression
    /// that yields `none` gives no level. `formula.multiplicity` (default 1) gives the number of
    /// states sharing the value.
    ///
    /// # Errors
    /// [`Error::Parse`] located at the flag name of the offending expression for a syntax
    /// error, an unknown name, a type error, a non-finite value for a listed level, or a
    /// multiplicity that is not a whole number in 0..=64.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::{models, verify, FieldPoint, Reference};
    /// let m = models::dirac2d(models::Dirac2dParams { mass_mev: 5.0, ..Default::default() })?;
    /// let f = verify::LevelFormula {
    ///     formula: "s*sqrt(mass_mev^2 + 2*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)".into(),
    ///     n0: Some("valley*sign(q*B)*mass_mev".into()),
    ///     ..Default::default()
    /// };
    /// let ns: Vec<i64> = (0..=3).collect();
    /// let list = verify::ExpectedList::from_formula(&m, FieldPoint::field(1.0), Reference::Zero, &f, &ns, &[-1, 1])?;
    /// assert_eq!(list.levels.len(), 7);
    /// // n = 0 at tau sign(qB) Delta = -5 meV for the electron at +1 T
    /// assert!(list.levels.iter().any(|l| l.n == 0 && l.energy == -5.0));
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn from_formula(
        model: &Model,
        point: FieldPoint,
        origin: Reference,
        formula: &LevelFormula,
        ns: &[i64],
        ss: &[i8],
    ) -> Result<Self> {
        let mut c = CompiledFormula::new(model, point, formula)?;
        let mut levels = Vec::new();
        let has_n0 = c.n0.is_some();
        for &n in ns {
            if n == 0 && has_n0 {
                if let Some((e, m)) = c.eval_n0()? {
                    levels.push(ExpectedLevel {
                        energy: e,
                        multiplicity: m,
                        n: 0,
                        s: 0,
                        label: level_label(0, 0, true),
                    });
                }
                continue;
            }
            for &s in ss {
                if let Some((e, m)) = c.eval(n, s)? {
                    levels.push(ExpectedLevel {
                        energy: e,
                        multiplicity: m,
                        n,
                        s,
                        label: level_label(n, s, false),
                    });
                }
            }
        }
        levels.retain(|l| l.multiplicity > 0);
        levels.sort_by(|a, b| a.energy.total_cmp(&b.energy));
        let window = match ns.iter().max() {
            Some(&n_max) => beyond_window(ns, ss, n_max, |n, s| {
                if n == 0 && has_n0 {
                    return c.eval_n0().ok().flatten().map(|x| x.0);
                }
                c.eval(n, s).ok().flatten().map(|x| x.0)
            }),
            None => Window::ALL,
        };
        Ok(ExpectedList {
            levels,
            origin: resolve_origin(model, origin),
            window,
        })
    }

    /// The crate's closed form for `model` ([`models::expected_levels`]) for Landau indices
    /// 0..=max_n, relative to the model's reference energy, with the window closed where the
    /// index max_n + 1 of each branch lies. `None` when there is no closed form for the model.
    pub fn from_closed_form(model: &Model, point: FieldPoint, max_n: usize) -> Option<Self> {
        let r = model.reference_energy();
        let levels = models::expected_levels(model, point, r, max_n)?;
        let next = models::expected_levels(model, point, r, max_n + 1)?;
        let family = |l: &ExpectedLevel| -> (i8, String) {
            (
                l.s,
                l.label.chars().filter(|c| !c.is_ascii_digit()).collect(),
            )
        };
        let mut lower = f64::NEG_INFINITY;
        let mut upper = f64::INFINITY;
        for b in next.iter().filter(|l| l.n == max_n as i64 + 1) {
            let fam = family(b);
            let last = levels
                .iter()
                .filter(|l| l.n == max_n as i64 && family(l) == fam)
                .map(|l| l.energy)
                .next();
            match last {
                Some(e) if b.energy > e => upper = upper.min(b.energy),
                Some(e) if b.energy < e => lower = lower.max(b.energy),
                _ => {}
            }
        }
        let edge = |x: f64| {
            if x.is_finite() {
                Edge::Exclude(x)
            } else {
                Edge::Open
            }
        };
        Some(ExpectedList {
            levels,
            origin: r,
            window: Window {
                lower: edge(lower),
                upper: edge(upper),
            },
        })
    }

    /// Levels from CSV text: a header row naming the columns, `energy` required, `n`, `s`,
    /// `multiplicity` (default 1) and `label` optional; `#` starts a comment line. Energies
    /// are E - `origin`. The window is [lowest, highest] energy.
    ///
    /// # Errors
    /// [`Error::Parse`] located at `name:line` for a missing `energy` column, a value that is
    /// not a number, or a non-finite energy.
    ///
    /// # Examples
    /// ```
    /// let text = "n,s,energy\n# the two lowest\n0,1,0.5\n1,1,1.5\n";
    /// let list = ladderfan::verify::ExpectedList::from_csv(text, "levels.csv", 0.0)?;
    /// assert_eq!(list.levels.len(), 2);
    /// assert_eq!(list.levels[1].energy, 1.5);
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn from_csv(text: &str, name: &str, origin: f64) -> Result<Self> {
        let mut rdr = csv::ReaderBuilder::new()
            .comment(Some(b'#'))
            .trim(csv::Trim::All)
            .flexible(false)
            .from_reader(text.as_bytes());
        let perr = |line: u64, message: String| Error::Parse {
            location: format!("{name}:{line}"),
            message,
        };
        let headers = rdr
            .headers()
            .map_err(|e| perr(1, format!("cannot read the header row: {e}")))?
            .clone();
        let col = |k: &str| headers.iter().position(|h| h.eq_ignore_ascii_case(k));
        let energy_col = col("energy").ok_or_else(|| {
            perr(
                1,
                format!(
                    "no 'energy' column in the header ({}); the first row must name the \
                     columns, e.g. n,s,energy",
                    headers.iter().collect::<Vec<_>>().join(",")
                ),
            )
        })?;
        let (n_col, s_col, m_col, l_col) = (col("n"), col("s"), col("multiplicity"), col("label"));
        let mut levels = Vec::new();
        for rec in rdr.records() {
            let rec = rec.map_err(|e| {
                let line = e.position().map(|p| p.line()).unwrap_or(0);
                perr(line, format!("{e}"))
            })?;
            let line = rec.position().map(|p| p.line()).unwrap_or(0);
            let field = |c: usize| rec.get(c).unwrap_or("");
            let number = |c: usize, what: &str| -> Result<f64> {
                field(c)
                    .parse::<f64>()
                    .map_err(|_| perr(line, format!("{what} '{}' is not a number", field(c))))
            };
            let energy = number(energy_col, "energy")?;
            if !energy.is_finite() {
                return Err(perr(line, format!("energy {energy} is not finite")));
            }
            let whole = |c: Option<usize>, what: &str, default: i64| -> Result<i64> {
                match c {
                    None => Ok(default),
                    Some(c) => {
                        let x = number(c, what)?;
                        if x.fract() != 0.0 || x.abs() > 1e9 {
                            Err(perr(line, format!("{what} {x} is not a whole number")))
                        } else {
                            Ok(x as i64)
                        }
                    }
                }
            };
            let n = whole(n_col, "n", 0)?;
            let s = whole(s_col, "s", 0)?;
            let s = i8::try_from(s).map_err(|_| perr(line, format!("s = {s} is out of range")))?;
            let m = whole(m_col, "multiplicity", 1)?;
            let m = u32::try_from(m)
                .ok()
                .filter(|&m| m <= 64)
                .ok_or_else(|| perr(line, format!("multiplicity {m} is not in 0..=64")))?;
            let label = match l_col {
                Some(c) if !field(c).is_empty() => field(c).to_string(),
                _ => match (n_col, s_col) {
                    (Some(_), Some(_)) => level_label(n, s, false),
                    (Some(_), None) => level_label(n, s, true),
                    _ => format!("line {line}"),
                },
            };
            if m > 0 {
                levels.push(ExpectedLevel {
                    energy,
                    multiplicity: m,
                    n,
                    s,
                    label,
                });
            }
        }
        levels.sort_by(|a, b| a.energy.total_cmp(&b.energy));
        Ok(ExpectedList::from_levels(levels, origin))
    }
}

/// Close the window at the values of index n_max + 1 of each branch (see the module docs).
fn beyond_window(
    ns: &[i64],
    ss: &[i8],
    n_max: i64,
    mut f: impl FnMut(i64, i8) -> Option<f64>,
) -> Window {
    let mut lower = f64::NEG_INFINITY;
    let mut upper = f64::INFINITY;
    let mut sorted_ns: Vec<i64> = ns.to_vec();
    sorted_ns.sort_unstable();
    sorted_ns.dedup();
    for &s in ss {
        let next = match f(n_max + 1, s) {
            Some(x) => x,
            None => continue,
        };
        // the last listed index of this branch that gives a level
        let last = sorted_ns.iter().rev().find_map(|&n| f(n, s));
        match last {
            Some(e) if next > e => upper = upper.min(next),
            Some(e) if next < e => lower = lower.max(next),
            _ => {}
        }
    }
    let edge = |x: f64| {
        if x.is_finite() {
            Edge::Exclude(x)
        } else {
            Edge::Open
        }
    };
    Window {
        lower: edge(lower),
        upper: edge(upper),
    }
}

/// Parse a list of whole numbers: `0..40` (both ends included, like n = 0..40), `0..=40`
/// (the same), `0,1,2,5`, `-1,1`, or a mix `0..3,7`.
///
/// # Errors
/// [`Error::Parse`] located at `flag` for anything else, an empty or reversed range, or more
/// than 1 000 000 values.
///
/// # Examples
/// ```
/// let v = ladderfan::verify::parse_int_list("0..3,7", "--n")?;
/// assert_eq!(v, vec![0, 1, 2, 3, 7]);
/// assert_eq!(ladderfan::verify::parse_int_list("-1,1", "--s")?, vec![-1, 1]);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn parse_int_list(text: &str, flag: &str) -> Result<Vec<i64>> {
    let err = |m: String| Error::Parse {
        location: flag.to_string(),
        message: m,
    };
    let int = |t: &str| -> Result<i64> {
        t.trim().parse::<i64>().map_err(|_| {
            err(format!(
                "'{}' is not a whole number; write e.g. 0..40 or -1,1",
                t.trim()
            ))
        })
    };
    let mut out = Vec::new();
    for part in text.split(',') {
        let part = part.trim();
        if part.is_empty() {
            return Err(err(format!(
                "empty item in '{text}'; write e.g. 0..40 or -1,1"
            )));
        }
        // a range needs '..' that is not at the start (a leading '-' is a sign)
        if let Some((a, b)) = part.split_once("..") {
            let b = b.strip_prefix('=').unwrap_or(b);
            let (a, b) = (int(a)?, int(b)?);
            if b < a {
                return Err(err(format!(
                    "the range {part} is reversed; write the smaller end first"
                )));
            }
            if b - a >= 1_000_000 {
                return Err(err(format!(
                    "the range {part} has more than 1000000 values"
                )));
            }
            out.extend(a..=b);
        } else {
            out.push(int(part)?);
        }
        if out.len() > 1_000_000 {
            return Err(err("more than 1000000 values".into()));
        }
    }
    Ok(out)
}

/// Which energy scale the relative tolerance multiplies.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind", content = "value")]
pub enum EnergyScale {
    /// The spectrum's typical Landau spacing ([`Spectrum::energy_scale`]).
    #[default]
    Spectrum,
    /// A given energy in the model's unit.
    Value(f64),
}

/// Settings of [`check`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VerifySettings {
    /// Relative tolerance: a level agrees when |x - e| <= bound + tolerance x scale +
    /// rounding. Default 1e-8.
    pub tolerance: f64,
    /// The scale the tolerance multiplies.
    pub scale: EnergyScale,
    /// Rounding allowance of the expected values in units of eps x (|e| + |shift|)
    /// (see the module documentation). Default 16.
    pub rounding_ulps: f64,
}

impl Default for VerifySettings {
    fn default() -> Self {
        VerifySettings {
            tolerance: 1e-8,
            scale: EnergyScale::Spectrum,
            rounding_ulps: 16.0,
        }
    }
}

/// Whether a pair agrees.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Agreement {
    /// Within the allowed deviation.
    Agrees,
    /// Outside it.
    Disagrees,
}

/// The outcome of a verification.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    /// Every checked level agrees, none is left over and none is unresolved.
    Pass,
    /// Some level disagrees or has no partner.
    Fail,
    /// Nothing failed, but nothing could be checked (no converged level inside the window) or
    /// some expected level has only unconverged candidates.
    Inconclusive,
}

/// A numerical level as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NumericalLevel {
    /// Energy relative to the spectrum's reference energy.
    pub energy: f64,
    /// Its error bound.
    pub bound: f64,
    /// Dominant orbital.
    pub orbital: usize,
    /// Dominant component.
    pub component: usize,
    /// Sector.
    pub sector: SectorId,
    /// Landau label (n and branch as the trade writes them), to set beside the expected n, s.
    pub label: crate::levels::LandauLabel,
    /// Converged, genuine but not converged, or cutoff artefact (see the README, "Reading a
    /// level").
    pub state: crate::levels::Convergence,
}

/// An expected level as reported (one state of its multiplicity).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExpectedState {
    /// Label, e.g. `n=3 s=-1`.
    pub label: String,
    /// Landau index.
    pub n: i64,
    /// Branch or spin sign.
    pub s: i8,
    /// Energy relative to the spectrum's reference energy.
    pub energy: f64,
    /// Its allowance: tolerance x scale + rounding.
    pub allowance: f64,
}

/// A checked pair.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Pair {
    /// The expected level.
    pub expected: ExpectedState,
    /// Its numerical partner.
    pub numerical: NumericalLevel,
    /// numerical - expected.
    pub deviation: f64,
    /// The allowed |deviation|: bound + allowance.
    pub allowed: f64,
    /// The verdict for this pair.
    pub agreement: Agreement,
}

/// An expected level without a converged partner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Unpartnered {
    /// The expected level.
    pub expected: ExpectedState,
    /// The nearest numerical level of any kind (converged or not), if any.
    pub nearest: Option<NumericalLevel>,
}

/// A window `(lo, hi)` with each infinite (open) side written as `None` (JSON `null`), so that
/// a serialised result never holds a non-finite number.
fn open_sides_as_null<S: serde::Serializer>(
    w: &(f64, f64),
    s: S,
) -> std::result::Result<S::Ok, S::Error> {
    let side = |x: f64| if x.is_infinite() { None } else { Some(x) };
    serde::Serialize::serialize(&(side(w.0), side(w.1)), s)
}

/// The result of [`check`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Pass, fail or inconclusive.
    pub outcome: Outcome,
    /// Energies below are relative to this (the spectrum's reference energy).
    pub reference_energy: f64,
    /// The energy scale the tolerance multiplies.
    pub energy_scale: f64,
    /// The relative tolerance.
    pub tolerance: f64,
    /// The window checked, relative to the reference energy (infinite: open; an open side is
    /// `null` in JSON).
    #[serde(serialize_with = "open_sides_as_null")]
    pub window: (f64, f64),
    /// Whether each end of `window` is itself inside (a listed or converged level); false for
    /// an open side and for an end that is the first level the expected list does not cover.
    pub window_ends_included: (bool, bool),
    /// Pairs, ascending in expected energy; agreeing and disagreeing.
    pub pairs: Vec<Pair>,
    /// Converged numerical levels in the window that no expected level accounts for.
    pub unmatched_numerical: Vec<NumericalLevel>,
    /// Expected levels in the window with no numerical level at all within reach.
    pub missing_expected: Vec<Unpartnered>,
    /// Expected levels whose only candidates are unconverged levels that are not cutoff
    /// artefacts: not verified, so the outcome is at best inconclusive (raise the cutoff).
    pub unresolved_expected: Vec<Unpartnered>,
    /// Expected states not checked: outside the window or beyond the converged range.
    pub not_checked: usize,
    /// Largest |deviation| among agreeing pairs.
    pub worst_deviation: f64,
    /// Largest |deviation| / allowed among agreeing pairs.
    pub worst_fraction_of_allowed: f64,
}

impl Verdict {
    /// Whether the formula passed.
    pub fn passed(&self) -> bool {
        self.outcome == Outcome::Pass
    }

    /// The disagreeing pairs.
    pub fn disagreeing(&self) -> impl Iterator<Item = &Pair> {
        self.pairs
            .iter()
            .filter(|p| p.agreement == Agreement::Disagrees)
    }

    /// Process exit code for scripts: 0 pass, 1 fail or inconclusive.
    pub fn exit_code(&self) -> i32 {
        match self.outcome {
            Outcome::Pass => 0,
            Outcome::Fail | Outcome::Inconclusive => 1,
        }
    }

    /// One line: `verdict: PASS: ...`, `verdict: FAIL: ...` or `verdict: INCONCLUSIVE: ...`,
    /// energies in `unit`.
    pub fn verdict_line(&self, unit: &str) -> String {
        let agree = self.pairs.len() - self.disagreeing().count();
        let bad = self.disagreeing().count();
        let extra = if self.unresolved_expected.is_empty() && self.not_checked == 0 {
            String::new()
        } else {
            format!(
                "; {} expected level(s) not checked (outside the window or the converged range), \
                 {} unresolved (partner not converged)",
                self.not_checked,
                self.unresolved_expected.len()
            )
        };
        match self.outcome {
            Outcome::Pass => format!(
                "verdict: PASS: all {agree} levels in the window agree (worst |deviation| \
                 {:.2e} {unit} = {:.1e} of the allowed){extra}",
                self.worst_deviation, self.worst_fraction_of_allowed
            ),
            Outcome::Fail => format!(
                "verdict: FAIL: {bad} of {} paired levels disagree, {} numerical level(s) have \
                 no expected partner, {} expected level(s) have no numerical partner{extra}",
                self.pairs.len(),
                self.unmatched_numerical.len(),
                self.missing_expected.len()
            ),
            Outcome::Inconclusive if !self.unresolved_expected.is_empty() => format!(
                "verdict: INCONCLUSIVE: {agree} levels agree, but {} expected level(s) inside the \
                 converged range have only unconverged candidates; raise the cutoff or narrow \
                 the window",
                self.unresolved_expected.len()
            ),
            Outcome::Inconclusive => format!(
                "verdict: INCONCLUSIVE: no converged level and no expected level to compare in \
                 the window{extra}; raise the cutoff or widen the n range"
            ),
        }
    }
}

fn numerical(spectrum: &Spectrum, i: usize) -> NumericalLevel {
    let l = &spectrum.levels[i];
    NumericalLevel {
        energy: l.energy,
        bound: l.bound,
        orbital: l.orbital,
        component: l.component,
        sector: l.sector,
        label: l.label,
        state: l.convergence,
    }
}

/// Check `expected` against `spectrum` (see the module documentation for the window and the
/// agreement criterion, and [`matching`] for the assignment).
///
/// # Errors
/// [`Error::BadNumber`] for a negative or non-finite tolerance, rounding allowance or energy
/// scale.
///
/// # Complexity
/// O((m + k) log(m + k)) for m expected states and k converged levels in the window, plus
/// the report pairing of the leftovers, O(m' k') (see [`matching`]).
pub fn check(
    spectrum: &Spectrum,
    expected: &ExpectedList,
    settings: &VerifySettings,
) -> Result<Verdict> {
    let nonneg = |name: &str, v: f64| -> Result<()> {
        if v.is_finite() && v >= 0.0 {
            Ok(())
        } else {
            Err(Error::BadNumber {
                name: name.into(),
                value: v,
                fix: "give a non-negative finite number".into(),
            })
        }
    };
    nonneg("tolerance", settings.tolerance)?;
    nonneg("rounding_ulps", settings.rounding_ulps)?;
    let scale = match settings.scale {
        EnergyScale::Spectrum => spectrum.energy_scale,
        EnergyScale::Value(v) => {
            nonneg("energy scale", v)?;
            v
        }
    };
    let tol_abs = settings.tolerance * scale;
    let guard = (1e-3 * scale).max(4.0 * tol_abs);
    let shift = expected.origin - spectrum.reference_energy;

    // expected states in the spectrum's frame
    let mut states: Vec<ExpectedState> = Vec::new();
    for l in &expected.levels {
        let e = l.energy + shift;
        let rounding = settings.rounding_ulps * f64::EPSILON * (l.energy.abs() + shift.abs());
        for _ in 0..l.multiplicity {
            states.push(ExpectedState {
                label: l.label.clone(),
                n: l.n,
                s: l.s,
                energy: e,
                allowance: tol_abs + rounding,
            });
        }
    }
    let inside = |x: f64, slack: f64| -> bool {
        let lo_ok = match expected.window.lower {
            Edge::Open => true,
            Edge::Include(a) => x >= a + shift - slack,
            Edge::Exclude(a) => x > a + shift + slack,
        };
        let hi_ok = match expected.window.upper {
            Edge::Open => true,
            Edge::Include(b) => x <= b + shift + slack,
            Edge::Exclude(b) => x < b + shift - slack,
        };
        lo_ok && hi_ok
    };
    // converged range and whether the spectrum is cut off beyond it
    let conv: Vec<usize> = (0..spectrum.levels.len())
        .filter(|&i| spectrum.levels[i].is_converged())
        .collect();
    let conv_lo = conv
        .iter()
        .map(|&i| spectrum.levels[i].energy)
        .fold(f64::INFINITY, f64::min);
    let conv_hi = conv
        .iter()
        .map(|&i| spectrum.levels[i].energy)
        .fold(f64::NEG_INFINITY, f64::max);
    let cut_below = spectrum
        .levels
        .iter()
        .any(|l| !l.is_converged() && l.energy < conv_lo);
    let cut_above = spectrum
        .levels
        .iter()
        .any(|l| !l.is_converged() && l.energy > conv_hi);
    let in_converged_range = |x: f64, slack: f64| -> bool {
        if conv.is_empty() {
            return false;
        }
        (!cut_below || x >= conv_lo - guard - slack) && (!cut_above || x <= conv_hi + guard + slack)
    };

    let mut checked: Vec<ExpectedState> = Vec::new();
    let mut not_checked = 0;
    for st in states {
        if inside(st.energy, guard + st.allowance) && in_converged_range(st.energy, st.allowance) {
            checked.push(st);
        } else {
            not_checked += 1;
        }
    }
    let nums: Vec<usize> = conv
        .iter()
        .copied()
        .filter(|&i| {
            let l = &spectrum.levels[i];
            inside(l.energy, guard + l.bound)
        })
        .collect();

    // phase 1: agreeing pairs
    let e_iv: Vec<Interval> = checked
        .iter()
        .map(|s| Interval {
            energy: s.energy,
            halfwidth: s.allowance,
        })
        .collect();
    let n_iv: Vec<Interval> = nums
        .iter()
        .map(|&i| Interval {
            energy: spectrum.levels[i].energy,
            halfwidth: spectrum.levels[i].bound,
        })
        .collect();
    let mut e_used = vec![false; checked.len()];
    let mut n_used = vec![false; nums.len()];
    let mut pairs: Vec<Pair> = Vec::new();
    let push_pair = |j: usize, k: usize, pairs: &mut Vec<Pair>| {
        let num = numerical(spectrum, nums[k]);
        let deviation = num.energy - checked[j].energy;
        let allowed = num.bound + checked[j].allowance;
        pairs.push(Pair {
            expected: checked[j].clone(),
            numerical: num,
            deviation,
            allowed,
            agreement: if deviation.abs() <= allowed {
                Agreement::Agrees
            } else {
                Agreement::Disagrees
            },
        });
    };
    for (j, k) in matching::agreeing(&e_iv, &n_iv) {
        e_used[j] = true;
        n_used[k] = true;
        push_pair(j, k, &mut pairs);
    }
    // phase 2: pair the leftovers for the report
    let mut e_left: Vec<usize> = (0..checked.len()).filter(|&j| !e_used[j]).collect();
    let mut n_left: Vec<usize> = (0..nums.len()).filter(|&k| !n_used[k]).collect();
    e_left.sort_by(|&a, &b| checked[a].energy.total_cmp(&checked[b].energy));
    n_left.sort_by(|&a, &b| n_iv[a].energy.total_cmp(&n_iv[b].energy));
    let ev: Vec<f64> = e_left.iter().map(|&j| checked[j].energy).collect();
    let nv: Vec<f64> = n_left.iter().map(|&k| n_iv[k].energy).collect();
    for (a, b) in matching::nearest(&ev, &nv, scale) {
        let (j, k) = (e_left[a], n_left[b]);
        e_used[j] = true;
        n_used[k] = true;
        push_pair(j, k, &mut pairs);
    }
    pairs.sort_by(|a, b| {
        a.expected
            .energy
            .total_cmp(&b.expected.energy)
            .then(a.numerical.energy.total_cmp(&b.numerical.energy))
    });

    let unmatched_numerical: Vec<NumericalLevel> = (0..nums.len())
        .filter(|&k| !n_used[k])
        .map(|k| numerical(spectrum, nums[k]))
        .collect();
    let nearest_any = |e: f64| -> Option<NumericalLevel> {
        (0..spectrum.levels.len())
            .min_by(|&a, &b| {
                (spectrum.levels[a].energy - e)
                    .abs()
                    .total_cmp(&(spectrum.levels[b].energy - e).abs())
            })
            .map(|i| numerical(spectrum, i))
    };
    let mut missing_expected = Vec::new();
    let mut unresolved_expected = Vec::new();
    for j in (0..checked.len()).filter(|&j| !e_used[j]) {
        let st = &checked[j];
        // an unconverged level can stand for the partner only if it is not a cutoff artefact
        // (an artefact lives on the top orbitals: the massless 2D Dirac model has a spurious
        // second zero level there, which must not excuse a doubly listed n = 0 level)
        let covered = spectrum.levels.iter().any(|l| {
            !l.is_converged()
                && !crate::trust::converge::is_cutoff_artefact(l)
                && (l.energy - st.energy).abs() <= l.bound + st.allowance
        });
        let u = Unpartnered {
            expected: st.clone(),
            nearest: nearest_any(st.energy),
        };
        if covered {
            unresolved_expected.push(u);
        } else {
            missing_expected.push(u);
        }
    }
    let agreeing: Vec<&Pair> = pairs
        .iter()
        .filter(|p| p.agreement == Agreement::Agrees)
        .collect();
    let worst_deviation = agreeing
        .iter()
        .map(|p| p.deviation.abs())
        .fold(0.0, f64::max);
    let worst_fraction_of_allowed = agreeing
        .iter()
        .map(|p| {
            if p.allowed > 0.0 {
                p.deviation.abs() / p.allowed
            } else {
                0.0
            }
        })
        .fold(0.0, f64::max);
    let failed = agreeing.len() < pairs.len()
        || !unmatched_numerical.is_empty()
        || !missing_expected.is_empty();
    let outcome = if failed {
        Outcome::Fail
    } else if agreeing.is_empty() || !unresolved_expected.is_empty() {
        // a level that could not be compared is not verified: no pass
        Outcome::Inconclusive
    } else {
        Outcome::Pass
    };
    // the window actually checked, in the spectrum's frame
    let lo_edge = match expected.window.lower {
        Edge::Open => f64::NEG_INFINITY,
        Edge::Include(a) | Edge::Exclude(a) => a + shift,
    };
    let hi_edge = match expected.window.upper {
        Edge::Open => f64::INFINITY,
        Edge::Include(b) | Edge::Exclude(b) => b + shift,
    };
    let lo_clip = cut_below && conv_lo >= lo_edge;
    let hi_clip = cut_above && conv_hi <= hi_edge;
    let window = (
        if lo_clip { conv_lo } else { lo_edge },
        if hi_clip { conv_hi } else { hi_edge },
    );
    let window_ends_included = (
        lo_clip || matches!(expected.window.lower, Edge::Include(_)),
        hi_clip || matches!(expected.window.upper, Edge::Include(_)),
    );
    Ok(Verdict {
        outcome,
        reference_energy: spectrum.reference_energy,
        energy_scale: scale,
        tolerance: settings.tolerance,
        window,
        window_ends_included,
        pairs,
        unmatched_numerical,
        missing_expected,
        unresolved_expected,
        not_checked,
        worst_deviation,
        worst_fraction_of_allowed,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn int_lists_parse_and_reject() {
        let ok = |t: &str| parse_int_list(t, "--n").unwrap_or_default();
        assert_eq!(ok("0..3"), vec![0, 1, 2, 3]);
        assert_eq!(ok("0..=2"), vec![0, 1, 2]);
        assert_eq!(ok("-2..-1"), vec![-2, -1]);
        assert_eq!(ok(" -1 , 1 "), vec![-1, 1]);
        for bad in ["", "3..1", "a", "1,,2", "0..x", "1.5"] {
            assert!(parse_int_list(bad, "--n").is_err(), "{bad}");
        }
    }

    #[test]
    fn beyond_window_closes_each_branch_on_its_side() {
        // two branches: s = +1 increasing (1 + n), s = -1 decreasing (-1 - n)
        let w = beyond_window(&[0, 1, 2], &[-1, 1], 2, |n, s| {
            Some(s as f64 * (1.0 + n as f64))
        });
        assert_eq!(w.lower, Edge::Exclude(-4.0));
        assert_eq!(w.upper, Edge::Exclude(4.0));
        // one increasing branch only: the lower side stays open
        let w = beyond_window(&[1, 2], &[1], 2, |n, _| Some(n as f64));
        assert_eq!((w.lower, w.upper), (Edge::Open, Edge::Exclude(3.0)));
    }
}
