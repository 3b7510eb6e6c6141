//! The expected side of a check: an [`ExpectedList`] of levels and the [`Window`] where it
//! is complete (see the module documentation of [`crate::verify`]).

use super::{CompiledFormula, FormulaValue, LevelFormula};
use crate::closed_form::ExpectedLevel;
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::model::Model;
use crate::models;
use crate::solve::Reference;
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
    /// centre (as in [`crate::closed_form`]).
    pub levels: Vec<ExpectedLevel>,
    /// The energy the list's energies are measured from (0: absolute energies).
    pub origin: f64,
    /// Where the list is complete.
    pub window: Window,
}

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

    /// Levels from formulas in the expression language of [`crate::expr`] (see the README (section Verifying a level formula)).
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

    /// Levels from CSV text: a header row naming the columns, the energy required as
    /// `energy_<unit>` (e.g. `energy_meV`, the column name every ladderfan CSV uses, in the
    /// model's energy unit) or `energy`; `landau_index` (or `n`), `s`, `multiplicity`
    /// (default 1) and `label` optional. A `#` line is skipped (older files had them).
    /// Energies are E - `origin`. The window is [lowest, highest] energy.
    ///
    /// # Errors
    /// [`Error::Parse`] located at `name:line` for a missing `energy` column, a value that is
    /// not a number, or a non-finite energy.
    ///
    /// # Examples
    /// ```
    /// let text = "landau_index,s,energy_meV\n0,1,0.5\n1,1,1.5\n";
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
        let perr = |line: u64, message: String| csv_error(name, line, message);
        let headers = rdr
            .headers()
            .map_err(|e| perr(1, format!("cannot read the header row: {e}")))?
            .clone();
        let cols = CsvColumns::find(&headers, name)?;
        let mut levels = Vec::new();
        for rec in rdr.records() {
            let rec = rec.map_err(|e| {
                let line = e.position().map(|p| p.line()).unwrap_or(0);
                perr(line, format!("{e}"))
            })?;
            if let Some(level) = cols.level(&rec, name)? {
                levels.push(level);
            }
        }
        levels.sort_by(|a, b| a.energy.total_cmp(&b.energy));
        Ok(ExpectedList::from_levels(levels, origin))
    }
}

/// A parse error located at `name:line`.
fn csv_error(name: &str, line: u64, message: String) -> Error {
    Error::Parse {
        location: format!("{name}:{line}"),
        message,
    }
}

/// Column positions of an expected-levels CSV header (matched ignoring ASCII case).
struct CsvColumns {
    energy: usize,
    n: Option<usize>,
    s: Option<usize>,
    multiplicity: Option<usize>,
    label: Option<usize>,
}

impl CsvColumns {
    /// Find the columns; `energy` is required.
    fn find(headers: &csv::StringRecord, name: &str) -> Result<Self> {
        let perr = |line: u64, message: String| csv_error(name, line, message);
        let col = |k: &str| headers.iter().position(|h| h.eq_ignore_ascii_case(k));
        let energy_col = headers
            .iter()
            .position(|h| {
                h.eq_ignore_ascii_case("energy")
                    || h.get(..7)
                        .is_some_and(|p| p.eq_ignore_ascii_case("energy_"))
            })
            .ok_or_else(|| {
                perr(
                    1,
                    format!(
                        "no energy column in the header ({}); the first row must name the \
                         columns, e.g. landau_index,s,energy_meV",
                        headers.iter().collect::<Vec<_>>().join(",")
                    ),
                )
            })?;
        let n_col = col("landau_index").or_else(|| col("n"));
        let (s_col, m_col, l_col) = (col("s"), col("multiplicity"), col("label"));
        Ok(CsvColumns {
            energy: energy_col,
            n: n_col,
            s: s_col,
            multiplicity: m_col,
            label: l_col,
        })
    }

    /// One data row as a level; `None` for multiplicity 0.
    fn level(&self, rec: &csv::StringRecord, name: &str) -> Result<Option<ExpectedLevel>> {
        let perr = |line: u64, message: String| csv_error(name, line, message);
        let (n_col, s_col, m_col, l_col) = (self.n, self.s, self.multiplicity, self.label);
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        let field = |c: usize| rec.get(c).unwrap_or("");
        let number = |c: usize, what: &str| -> Result<f64> {
            field(c)
                .parse::<f64>()
                .map_err(|_| perr(line, format!("{what} '{}' is not a number", field(c))))
        };
        let energy = number(self.energy, "energy")?;
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
        Ok((m > 0).then_some(ExpectedLevel {
            energy,
            multiplicity: m,
            n,
            s,
            label,
        }))
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

#[cfg(test)]
mod tests {
    use super::*;

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
