//! The outcome of a check: settings, pairs, the [`Verdict`] and [`check`] itself (see the
//! module documentation of [`crate::verify`]).

use super::expected::{Edge, ExpectedList};
use super::matching::{self, Interval};
use crate::error::{Error, Result};
use crate::levels::Spectrum;
use crate::sectors::SectorId;
use serde::Serialize;

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
