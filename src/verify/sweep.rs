//! The closed-form check of a sweep: the computed levels in an energy window compared with
//! the model's closed form (if it has one) at every point, each point through [`check`].

use super::{check, Edge, ExpectedList, Outcome, VerifySettings, Window};
use crate::levels::Spectrum;
use crate::model::Model;
use serde::Serialize;

/// Outcome of comparing computed levels with a closed form at one or more points, each point
/// through [`check`] (one-to-one matching, its tolerance rule).
#[derive(Debug, Clone, Serialize)]
pub struct ClosedFormCheck {
    /// Source named by the closed form module (the model's published formula).
    pub model: String,
    /// Pairs checked over all points (converged computed level, closed-form state).
    pub computed_compared: usize,
    /// Closed-form states paired over all points (the same pairs, counted from the closed
    /// form's side).
    pub expected_compared: usize,
    /// Largest |E_computed - E_closed form| among the pairs, energy unit of the model.
    pub max_deviation: f64,
    /// Largest |deviation| / allowed deviation among the pairs (<= 1 for agreement).
    pub worst_ratio: f64,
    /// Points where some closed-form level in the window has only unconverged candidates or
    /// lies beyond the converged range: not comparable at this cutoff there (neither a pass
    /// nor a failure for those levels).
    pub not_comparable_points: usize,
    /// Points where a level disagrees or has no partner.
    pub failed_points: usize,
    /// False only for a real disagreement (some failed point).
    pub passed: bool,
    /// What to tell the user: empty when every point agrees.
    pub note: String,
}

/// The list with its completeness window intersected with `(lo, hi)` (in the list's frame).
fn clip_window(list: ExpectedList, (lo, hi): (f64, f64)) -> ExpectedList {
    let lower = match list.window.lower {
        Edge::Exclude(x) if x >= lo => Edge::Exclude(x),
        Edge::Include(x) if x >= lo => Edge::Include(x),
        _ => Edge::Include(lo),
    };
    let upper = match list.window.upper {
        Edge::Exclude(x) if x <= hi => Edge::Exclude(x),
        Edge::Include(x) if x <= hi => Edge::Include(x),
        _ => Edge::Include(hi),
    };
    list.with_window(Window { lower, upper })
}

/// Compare the converged levels in the window with the closed form at every spectrum, through
/// [`check`] with its default settings: the closed-form list covers Landau indices up
/// to N - 1 for cutoff N, its own completeness window is intersected with the sweep's window. A point
/// whose verdict is inconclusive (closed-form levels whose only candidates are not converged)
/// is "not comparable at this cutoff", which is no failure. `None` when the model has no closed
/// form.
pub fn closed_form_check(
    model: &Model,
    spectra: &[&Spectrum],
    window: (f64, f64),
) -> Option<ClosedFormCheck> {
    let mut tally = ClosedFormTally::new(model, window);
    for s in spectra {
        tally.add(s)?;
    }
    Some(tally.finish())
}

/// [`closed_form_check`] one point at a time (a streamed sweep hands each spectrum on and
/// drops it): [`ClosedFormTally::add`] every spectrum, then [`ClosedFormTally::finish`].
#[derive(Debug)]
pub struct ClosedFormTally<'a> {
    model: &'a Model,
    window: (f64, f64),
    out: ClosedFormCheck,
    points: usize,
    first_failure: Option<(crate::hamiltonian::FieldPoint, String)>,
}

impl<'a> ClosedFormTally<'a> {
    /// An empty tally of the levels in `window` (energy unit of the model).
    pub fn new(model: &'a Model, window: (f64, f64)) -> Self {
        ClosedFormTally {
            model,
            window,
            out: ClosedFormCheck {
                model: model.name().to_string(),
                computed_compared: 0,
                expected_compared: 0,
                max_deviation: 0.0,
                worst_ratio: 0.0,
                not_comparable_points: 0,
                failed_points: 0,
                passed: true,
                note: String::new(),
            },
            points: 0,
            first_failure: None,
        }
    }

    /// Compare one more point; `None` when the model has no closed form there (then the sweep
    /// has no check at all).
    pub fn add(&mut self, s: &Spectrum) -> Option<()> {
        let (lo, hi) = self.window;
        let out = &mut self.out;
        // Landau indices the truncated basis can hold: n <= N - 1
        let max_n = s.cutoff.saturating_sub(1).max(1);
        let list = ExpectedList::from_closed_form(self.model, s.point, max_n)?;
        // the list's energies are relative to the model reference, the spectrum's to its own
        let shift = list.origin - s.reference_energy;
        let list = clip_window(list, (lo - shift, hi - shift));
        let v = check(s, &list, &VerifySettings::default()).ok()?;
        self.points += 1;
        // closed-form states inside the window that were neither paired nor reported missing or
        // unresolved lie beyond the converged range: not comparable at this cutoff
        let inside: usize = list
            .levels
            .iter()
            .filter(|x| x.energy - shift >= lo && x.energy - shift <= hi)
            .map(|x| x.multiplicity as usize)
            .sum();
        let accounted = v.pairs.len() + v.missing_expected.len() + v.unresolved_expected.len();
        let beyond = inside > accounted;
        for p in &v.pairs {
            out.computed_compared += 1;
            out.expected_compared += 1;
            out.max_deviation = out.max_deviation.max(p.deviation.abs());
            out.worst_ratio = out.worst_ratio.max(p.deviation.abs() / p.allowed);
        }
        match v.outcome {
            Outcome::Pass if beyond => out.not_comparable_points += 1,
            Outcome::Pass => {}
            Outcome::Inconclusive => out.not_comparable_points += 1,
            Outcome::Fail => {
                out.failed_points += 1;
                if self.first_failure.is_none() {
                    self.first_failure = Some((s.point, v.verdict_line(s.units.energy_unit())));
                }
            }
        }
        Some(())
    }

    /// The check over the points added.
    pub fn finish(self) -> ClosedFormCheck {
        let mut out = self.out;
        let points = self.points;
        out.passed = out.failed_points == 0;
        if let Some((p, line)) = self.first_failure {
            out.note = format!(
                "disagrees at {} of {points} points (first at field {}, kz {}: {line})",
                out.failed_points, p.field, p.kz
            );
        } else if out.not_comparable_points > 0 {
            out.note = format!(
                "not comparable at this cutoff at {} of {points} points: closed-form levels in \
                 the window have only unconverged partners there (raise the cutoff or narrow the \
                 window); the converged levels agree",
                out.not_comparable_points
            );
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::levels::Spectrum;

    #[test]
    fn a_small_cutoff_is_not_comparable_but_a_moved_level_is_a_disagreement() {
        // tilted cone (Goerbig et al., Phys. Rev. B 78, 045415 (2008)) at cutoff 40: the levels
        // of the window beyond the converged range are not comparable, which is no failure
        let model =
            crate::models::tilted_dirac2d(Default::default()).unwrap_or_else(|e| panic!("{e}"));
        let s = Spectrum::compute(
            &model,
            crate::FieldPoint::field(10.0),
            &crate::Settings::with_cutoff(40),
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let win = (-80.0, 80.0);
        let c = closed_form_check(&model, &[&s], win).unwrap_or_else(|| panic!("closed form"));
        assert!(c.passed, "{c:?}");
        assert_eq!(c.not_comparable_points, 1, "{c:?}");
        assert!(
            c.note.contains("not comparable at this cutoff"),
            "{}",
            c.note
        );
        // a real disagreement: one converged level moved by 1 meV (far above its bound)
        let mut moved = s.clone();
        let i = moved
            .levels
            .iter()
            .position(|l| l.is_converged() && l.energy > 5.0)
            .unwrap_or_else(|| panic!("no level"));
        moved.levels[i].energy += 1.0;
        let c = closed_form_check(&model, &[&moved], win).unwrap_or_else(|| panic!("closed form"));
        assert!(!c.passed, "{c:?}");
        assert_eq!(c.failed_points, 1);
    }
}
