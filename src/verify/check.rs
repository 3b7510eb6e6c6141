//! [`check`]: the expected list against the spectrum, in named steps (the frame and window,
//! the converged range, the two pairing phases, the leftovers, the outcome).

use super::expected::{Edge, ExpectedList};
use super::matching::{self, Interval};
use super::verdict::{
    Agreement, EnergyScale, ExpectedState, NumericalLevel, Outcome, Pair, Unpartnered, Verdict,
    VerifySettings,
};
use crate::error::{Error, Result};
use crate::levels::Spectrum;

fn numerical(spectrum: &Spectrum, i: usize) -> NumericalLevel {
    let l = &spectrum.levels[i];
    NumericalLevel {
        energy: l.energy,
        bound: l.bound,
        orbital: l.orbital,
        component: l.component as usize,
        sector: l.sector,
        label: l.label,
        state: l.convergence,
    }
}

fn nonneg(name: &str, v: f64) -> Result<()> {
    if v.is_finite() && v >= 0.0 {
        Ok(())
    } else {
        Err(Error::BadNumber {
            name: name.into(),
            value: v,
            fix: "give a non-negative finite number".into(),
        })
    }
}

/// The energy scale the tolerance multiplies, after checking the settings.
fn energy_scale(spectrum: &Spectrum, settings: &VerifySettings) -> Result<f64> {
    nonneg("tolerance", settings.tolerance)?;
    nonneg("rounding_ulps", settings.rounding_ulps)?;
    Ok(match settings.scale {
        EnergyScale::Spectrum => spectrum.energy_scale,
        EnergyScale::Value(v) => {
            nonneg("energy scale", v)?;
            v
        }
    })
}

/// The expected list's window, moved into the spectrum's frame by `shift`.
struct Frame<'a> {
    list: &'a ExpectedList,
    shift: f64,
}

impl Frame<'_> {
    /// Whether `x` lies in the window, each edge widened (or, for an excluded edge, narrowed)
    /// by `slack`.
    fn inside(&self, x: f64, slack: f64) -> bool {
        let shift = self.shift;
        let lo_ok = match self.list.window.lower {
            Edge::Open => true,
            Edge::Include(a) => x >= a + shift - slack,
            Edge::Exclude(a) => x > a + shift + slack,
        };
        let hi_ok = match self.list.window.upper {
            Edge::Open => true,
            Edge::Include(b) => x <= b + shift + slack,
            Edge::Exclude(b) => x < b + shift - slack,
        };
        lo_ok && hi_ok
    }

    /// The expected states (one per unit of multiplicity) in the spectrum's frame.
    fn states(&self, tol_abs: f64, rounding_ulps: f64) -> Vec<ExpectedState> {
        let mut states = Vec::new();
        for l in &self.list.levels {
            let e = l.energy + self.shift;
            let rounding = rounding_ulps * f64::EPSILON * (l.energy.abs() + self.shift.abs());
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
        states
    }
}

/// The converged levels and whether the spectrum is cut off below or above them.
struct ConvergedRange {
    /// Indices of the converged levels.
    levels: Vec<usize>,
    lo: f64,
    hi: f64,
    cut_below: bool,
    cut_above: bool,
}

impl ConvergedRange {
    fn new(spectrum: &Spectrum) -> Self {
        let levels: Vec<usize> = (0..spectrum.levels.len())
            .filter(|&i| spectrum.levels[i].is_converged())
            .collect();
        let lo = levels
            .iter()
            .map(|&i| spectrum.levels[i].energy)
            .fold(f64::INFINITY, f64::min);
        let hi = levels
            .iter()
            .map(|&i| spectrum.levels[i].energy)
            .fold(f64::NEG_INFINITY, f64::max);
        let cut_below = spectrum
            .levels
            .iter()
            .any(|l| !l.is_converged() && l.energy < lo);
        let cut_above = spectrum
            .levels
            .iter()
            .any(|l| !l.is_converged() && l.energy > hi);
        ConvergedRange {
            levels,
            lo,
            hi,
            cut_below,
            cut_above,
        }
    }

    fn contains(&self, x: f64, guard: f64, slack: f64) -> bool {
        if self.levels.is_empty() {
            return false;
        }
        (!self.cut_below || x >= self.lo - guard - slack)
            && (!self.cut_above || x <= self.hi + guard + slack)
    }
}

/// The pairs of both phases (agreeing first, then the nearest leftovers for the report),
/// sorted by energy, and which expected states and numerical levels they used.
fn pair_up(
    spectrum: &Spectrum,
    checked: &[ExpectedState],
    nums: &[usize],
    scale: f64,
) -> (Vec<Pair>, Vec<bool>, Vec<bool>) {
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
    // phase 1: agreeing pairs
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
    (pairs, e_used, n_used)
}

/// The expected states without a partner: (missing, unresolved). Unresolved when an
/// unconverged level that is no cutoff artefact could stand for the partner.
fn unpartnered(
    spectrum: &Spectrum,
    checked: &[ExpectedState],
    e_used: &[bool],
) -> (Vec<Unpartnered>, Vec<Unpartnered>) {
    let nearest_any = |e: f64| -> Option<NumericalLevel> {
        (0..spectrum.levels.len())
            .min_by(|&a, &b| {
                (spectrum.levels[a].energy - e)
                    .abs()
                    .total_cmp(&(spectrum.levels[b].energy - e).abs())
            })
            .map(|i| numerical(spectrum, i))
    };
    let mut missing = Vec::new();
    let mut unresolved = Vec::new();
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
            unresolved.push(u);
        } else {
            missing.push(u);
        }
    }
    (missing, unresolved)
}

/// The window actually checked, in the spectrum's frame, and whether its ends are included:
/// the list's window, clipped to the converged range where the spectrum is cut off.
fn checked_window(frame: &Frame, range: &ConvergedRange) -> ((f64, f64), (bool, bool)) {
    let window = &frame.list.window;
    let lo_edge = match window.lower {
        Edge::Open => f64::NEG_INFINITY,
        Edge::Include(a) | Edge::Exclude(a) => a + frame.shift,
    };
    let hi_edge = match window.upper {
        Edge::Open => f64::INFINITY,
        Edge::Include(b) | Edge::Exclude(b) => b + frame.shift,
    };
    let lo_clip = range.cut_below && range.lo >= lo_edge;
    let hi_clip = range.cut_above && range.hi <= hi_edge;
    (
        (
            if lo_clip { range.lo } else { lo_edge },
            if hi_clip { range.hi } else { hi_edge },
        ),
        (
            lo_clip || matches!(window.lower, Edge::Include(_)),
            hi_clip || matches!(window.upper, Edge::Include(_)),
        ),
    )
}

/// Largest |deviation| of the agreeing pairs, and largest |deviation| / allowed.
fn worst(agreeing: &[&Pair]) -> (f64, f64) {
    let deviation = agreeing
        .iter()
        .map(|p| p.deviation.abs())
        .fold(0.0, f64::max);
    let fraction = agreeing
        .iter()
        .map(|p| {
            if p.allowed > 0.0 {
                p.deviation.abs() / p.allowed
            } else {
                0.0
            }
        })
        .fold(0.0, f64::max);
    (deviation, fraction)
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
    let scale = energy_scale(spectrum, settings)?;
    let tol_abs = settings.tolerance * scale;
    let guard = (1e-3 * scale).max(4.0 * tol_abs);
    let frame = Frame {
        list: expected,
        shift: expected.origin - spectrum.reference_energy,
    };
    let range = ConvergedRange::new(spectrum);
    let (checked, not_checked): (Vec<ExpectedState>, Vec<ExpectedState>) = frame
        .states(tol_abs, settings.rounding_ulps)
        .into_iter()
        .partition(|st| {
            frame.inside(st.energy, guard + st.allowance)
                && range.contains(st.energy, guard, st.allowance)
        });
    let nums: Vec<usize> = range
        .levels
        .iter()
        .copied()
        .filter(|&i| {
            let l = &spectrum.levels[i];
            frame.inside(l.energy, guard + l.bound)
        })
        .collect();
    let (pairs, e_used, n_used) = pair_up(spectrum, &checked, &nums, scale);
    let unmatched_numerical: Vec<NumericalLevel> = (0..nums.len())
        .filter(|&k| !n_used[k])
        .map(|k| numerical(spectrum, nums[k]))
        .collect();
    let (missing_expected, unresolved_expected) = unpartnered(spectrum, &checked, &e_used);
    let agreeing: Vec<&Pair> = pairs
        .iter()
        .filter(|p| p.agreement == Agreement::Agrees)
        .collect();
    let (worst_deviation, worst_fraction_of_allowed) = worst(&agreeing);
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
    let (window, window_ends_included) = checked_window(&frame, &range);
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
        not_checked: not_checked.len(),
        worst_deviation,
        worst_fraction_of_allowed,
    })
}
