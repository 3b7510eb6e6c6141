//! The automatic cutoff.
//!
//! [`auto`] grows the cutoff geometrically until every genuine level of the selection (energy
//! window, or a count of levels nearest a target energy) has a residual bound below the
//! relative tolerance, and the selection agrees with that of the previous cutoff (same count,
//! energies within their bounds): the confirmation guards against a level that is missing at
//! one cutoff rather than unconverged. Cutoff artefacts (weight >= 1/2 on the top orbitals,
//! [`crate::levels::is_cutoff_artefact`]) never count as genuine. The bands are checked for re-entry into the
//! window ([`crate::trust::window`]) and any warning is returned with the result.
//!
//! # Complexity
//! With geometric growth g the total cost is at most g/(g-1) (doubling: 2, confirmation
//! included: 4) times the cost of the solve at the smallest sufficient cutoff for exactly
//! conserved J, and g^3/(g^3-1) times the last solve for dense sectors. One assembly for the
//! whole run ([`Problem::with_cutoff`]).

use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::{Level, Spectrum};
use crate::model::Model;
use crate::problem::{Problem, Settings};
use crate::trust::converge::{absolute_tolerance, Selection};
use crate::trust::window::{check_spectrum, WindowWarning};
use serde::Serialize;
use std::time::Instant;

/// Which bound the automatic cutoff requires below the tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BoundChoice {
    /// The residual (Weinstein) bound only: needs no assumption at all.
    Residual,
    /// The deciding bound (the default): the Kato-Temple bound where its gap condition was
    /// certified and it is sharper, else the residual bound; far sharper for levels that
    /// converge gradually (see [`crate::trust::bounds`] for the gap and its assumption).
    #[default]
    KatoTemple,
}

impl BoundChoice {
    /// The bound of `level` this choice uses.
    pub fn of(self, level: &Level) -> f64 {
        match self {
            BoundChoice::Residual => level.bound,
            BoundChoice::KatoTemple => level.best_bound(),
        }
    }
}

/// Settings of the automatic cutoff.
#[derive(Debug, Clone, PartialEq)]
pub struct AutoSettings {
    /// Which levels must converge.
    pub selection: Selection,
    /// Relative tolerance (same rule as the convergence flags).
    pub tolerance: f64,
    /// First cutoff tried.
    pub start_cutoff: usize,
    /// Growth factor of the cutoff per step (> 1; 2 = doubling).
    pub growth: f64,
    /// Largest cutoff allowed before giving up with [`Error::NotConverged`].
    pub max_cutoff: usize,
    /// Memory limit in MiB for one solve (dense sectors and the stored levels).
    pub memory_limit_mib: u64,
    /// Which bound must meet the tolerance.
    pub bound: BoundChoice,
    /// Everything else (reference energy, splitting, precision); its cutoff, tolerance and
    /// memory limit are overridden.
    pub base: Settings,
}

impl AutoSettings {
    /// Defaults for a selection and tolerance: start at 16 orbitals, doubling, at most 2^22
    /// orbitals, 4096 MiB, the deciding bound ([`BoundChoice::KatoTemple`]).
    pub fn new(selection: Selection, tolerance: f64) -> Self {
        AutoSettings {
            selection,
            tolerance,
            start_cutoff: 16,
            growth: 2.0,
            max_cutoff: 1 << 22,
            memory_limit_mib: crate::policy::DEFAULT_MEMORY_LIMIT_MIB,
            bound: BoundChoice::KatoTemple,
            base: Settings::default(),
        }
    }
}

/// One step of the automatic cutoff.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AutoStep {
    /// Cutoff N.
    pub cutoff: usize,
    /// Matrix dimension N d of the truncated problem.
    pub matrix_dimension: usize,
    /// Genuine levels selected.
    pub selected: usize,
    /// How many of them are not converged, plus (count selection) how many are missing.
    pub unconverged: usize,
    /// Largest bound / absolute tolerance among the selected levels.
    pub worst_bound_over_tolerance: f64,
    /// Whether the selection agreed with the previous step's.
    pub agrees_with_previous: bool,
    /// Wall-clock seconds of the solve (not serialised, so that two runs give the same JSON;
    /// `converge --timings` reports them).
    #[serde(skip_serializing)]
    pub seconds: f64,
}

/// Result of the automatic cutoff.
#[derive(Debug, Clone)]
pub struct AutoResult {
    /// The spectrum at the final cutoff.
    pub spectrum: Spectrum,
    /// Indices into `spectrum.levels` of the selected genuine levels.
    pub selected: Vec<usize>,
    /// Final cutoff (where the tolerance was met and confirmed).
    pub cutoff: usize,
    /// The first cutoff at which every selected level met the tolerance (confirmed by the
    /// final one).
    pub first_converged_cutoff: usize,
    /// Matrix dimension N d at the final cutoff.
    pub matrix_dimension: usize,
    /// Total wall-clock seconds over all steps.
    pub seconds: f64,
    /// The steps taken.
    pub history: Vec<AutoStep>,
    /// Bands re-entering the selection's window beyond the final cutoff.
    pub warnings: Vec<WindowWarning>,
}

fn validate_auto(a: &AutoSettings) -> Result<()> {
    if !(a.tolerance.is_finite() && a.tolerance > 0.0) {
        return Err(Error::BadNumber {
            name: "tolerance".into(),
            value: a.tolerance,
            fix: "use a positive relative tolerance such as 1e-9".into(),
        });
    }
    if !(a.growth.is_finite() && a.growth > 1.0) {
        return Err(Error::BadNumber {
            name: "growth".into(),
            value: a.growth,
            fix: "the cutoff must grow each step: use a factor above 1, e.g. 2".into(),
        });
    }
    if let Selection::Nearest { count: 0, .. } = a.selection {
        return Err(Error::BadNumber {
            name: "count".into(),
            value: 0.0,
            fix: "ask for at least one level".into(),
        });
    }
    Ok(())
}

/// Grow the cutoff until every genuine level of the selection has a bound (residual by
/// default, see [`BoundChoice`]) below the relative tolerance, confirmed by the next cutoff
/// (see the module docs).
///
/// # Errors
/// [`Error::NotConverged`] when the cutoff would exceed `max_cutoff` (the message names the
/// worst level and its bound), or at once when an unconverged level's in-space residual and
/// rounding floor alone exceed its tolerance (that floor grows with the cutoff, so growing
/// cannot help); [`Error::MemoryLimit`] when the next solve would exceed the
/// memory limit; [`Error::BadNumber`] for a non-positive tolerance, a growth factor <= 1 or a
/// count of zero; any error of [`Spectrum::compute`].
///
/// # Complexity
/// See the module docs: a bounded multiple of the final solve.
///
/// # Examples
/// ```
/// use ladderfan::{models, FieldPoint};
/// use ladderfan::trust::converge::{auto, AutoSettings, Selection};
/// let model = models::dirac2d(models::Dirac2dParams { mass_mev: 10.0, ..Default::default() })?;
/// let sel = Selection::Nearest { target: 0.0, count: 20 };
/// let res = auto(&model, FieldPoint::field(5.0), &AutoSettings::new(sel, 1e-9))?;
/// // n = 0 level at tau sign(qB) Delta = -10 meV for tau = +1, q = -1, B > 0 (McClure 1956)
/// let e0 = res.selected.iter().map(|&i| res.spectrum.levels[i].energy)
///     .min_by(|a, b| (a + 10.0).abs().total_cmp(&(b + 10.0).abs())).unwrap_or(f64::NAN);
/// assert!((e0 + 10.0).abs() < 1e-9);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn auto(model: &Model, point: FieldPoint, settings: &AutoSettings) -> Result<AutoResult> {
    auto_with(model, point, settings, &|| ())
}

/// [`auto`], calling `tick` once per solved cutoff (a front end draws its progress from it).
///
/// # Errors
/// As [`auto`].
pub fn auto_with(
    model: &Model,
    point: FieldPoint,
    settings: &AutoSettings,
    tick: &(dyn Fn() + Sync),
) -> Result<AutoResult> {
    validate_auto(settings)?;
    let mut cutoff = settings.start_cutoff.max(model.band() + 1);
    let mut history: Vec<AutoStep> = Vec::new();
    let mut previous: Option<(Spectrum, Vec<usize>, bool)> = None;
    let mut previous_shape: Option<crate::memory::SolveShape> = None;
    let mut first: Option<Problem<'_>> = None;
    let mut total = 0.0;
    loop {
        if cutoff > settings.max_cutoff {
            return Err(beyond_max_cutoff(&history, cutoff, settings));
        }
        // one assembly for the whole run: later cutoffs reuse the first set-up
        let problem = match &first {
            Some(p) => p.with_cutoff(cutoff)?,
            None => Problem::new(
                model,
                point,
                &Settings {
                    cutoff,
                    tolerance: settings.tolerance,
                    memory_limit_mib: settings.memory_limit_mib,
                    ..settings.base.clone()
                },
            )?,
        };
        let t0 = Instant::now();
        let spectrum = solve_step(&problem, previous_shape, settings)?;
        tick();
        let seconds = t0.elapsed().as_secs_f64();
        total += seconds;
        let picked = settings.selection.pick(&spectrum);
        let (unconverged, worst) = assess(&spectrum, &picked, settings)?;
        let all_ok = unconverged == 0;
        let agrees = previous.as_ref().is_some_and(|(ps, pp, _)| {
            selections_agree(
                ps,
                pp,
                &spectrum,
                &picked,
                settings.tolerance,
                settings.bound,
            )
        });
        history.push(AutoStep {
            cutoff,
            matrix_dimension: cutoff * model.dim(),
            selected: picked.len(),
            unconverged,
            worst_bound_over_tolerance: worst,
            agrees_with_previous: agrees,
            seconds,
        });
        let prev_ok = previous.as_ref().is_some_and(|p| p.2);
        if all_ok && agrees && prev_ok {
            let warnings = match settings.selection.window_in(&spectrum, &picked) {
                Some(w) => check_spectrum(model, &spectrum, w)?,
                None => Vec::new(),
            };
            return Ok(AutoResult {
                cutoff,
                first_converged_cutoff: first_converged_cutoff(&history),
                matrix_dimension: cutoff * model.dim(),
                seconds: total,
                history,
                warnings,
                selected: picked,
                spectrum,
            });
        }
        previous = Some((spectrum, picked, all_ok));
        previous_shape = Some(*problem.shape());
        if first.is_none() {
            first = Some(problem);
        }
        let next = (cutoff as f64 * settings.growth).ceil() as usize;
        cutoff = next.max(cutoff + 1);
    }
}

/// The error of a run whose next cutoff would exceed `max_cutoff`: it names the worst level
/// of the last step tried.
fn beyond_max_cutoff(history: &[AutoStep], cutoff: usize, settings: &AutoSettings) -> Error {
    let detail = match history.last() {
        Some(h) => format!(
            "at the largest cutoff tried ({} orbitals) {} of {} selected levels were not converged \
             (worst bound {:.3e} x the tolerance{}); raise max_cutoff (now {}) or loosen the tolerance",
            h.cutoff,
            h.unconverged,
            h.selected,
            h.worst_bound_over_tolerance,
            if h.agrees_with_previous { "" } else { ", selection still changing" },
            settings.max_cutoff
        ),
        None => format!(
            "the start cutoff {} exceeds max_cutoff {}; raise max_cutoff",
            cutoff, settings.max_cutoff
        ),
    };
    Error::NotConverged {
        tolerance: settings.tolerance,
        detail,
    }
}

/// Solve one step: refuse it first when it and the kept previous spectrum (of
/// `previous_shape`) exceed the memory limit together (src/memory.rs).
fn solve_step(
    problem: &Problem<'_>,
    previous_shape: Option<crate::memory::SolveShape>,
    settings: &AutoSettings,
) -> Result<Spectrum> {
    let cutoff = problem.settings().cutoff;
    let mut shapes = vec![*problem.shape()];
    shapes.extend(previous_shape);
    crate::memory::check(
        &format!(
            "a solve with {cutoff} orbitals (tolerance {:e} not met below it; the previous spectrum is kept)",
            settings.tolerance
        ),
        crate::memory::kept_together(&shapes, rayon::current_num_threads() as u64),
        settings.memory_limit_mib,
        "loosen the tolerance, lower max_cutoff, or raise the memory limit",
    )?;
    Spectrum::solve(problem).map_err(|e| match e {
        Error::MemoryLimit {
            what,
            needed_mib,
            limit_mib,
            fix,
        } => Error::MemoryLimit {
            fix,
            what: format!(
                "{what} at a cutoff of {cutoff} orbitals (tolerance {:e} not met below it)",
                settings.tolerance
            ),
            needed_mib,
            limit_mib,
        },
        other => other,
    })
}

/// The unconverged count of the selection `picked` (missing levels of a nearest-count
/// selection included) and the worst bound over its tolerance.
///
/// # Errors
/// [`Error::NotConverged`] at once when an unconverged level's in-space residual and rounding
/// floor alone exceed its tolerance.
fn assess(spectrum: &Spectrum, picked: &[usize], settings: &AutoSettings) -> Result<(usize, f64)> {
    let mut unconverged = 0;
    let mut worst: f64 = 0.0;
    let mut floor_limited: Option<(f64, f64, f64)> = None;
    for &i in picked {
        let l = &spectrum.levels[i];
        let tol_abs = absolute_tolerance(spectrum, l, settings.tolerance);
        let ratio = settings.bound.of(l) / tol_abs;
        worst = worst.max(ratio);
        if ratio > 1.0 {
            unconverged += 1;
            if l.in_space_residual > tol_abs {
                floor_limited = Some((l.energy, l.in_space_residual, tol_abs));
            }
        }
    }
    if let Some((e, floor, tol_abs)) = floor_limited {
        let advice = match settings.base.splitting {
            crate::problem::Splitting::Off => {
                "loosen the tolerance, or use the split path (Splitting::Auto) whose small \
                 sectors keep it low"
            }
            _ => "loosen the tolerance",
        };
        // the solver's own residual and rounding floor grow with the cutoff (with the
        // norm and size of the truncated matrix): a larger cutoff cannot help
        return Err(Error::NotConverged {
            tolerance: settings.tolerance,
            detail: format!(
                "at a cutoff of {} orbitals the level at {e:.10e} has an in-space residual and \
                 rounding floor of {floor:.3e}, above its absolute tolerance {tol_abs:.3e}; this floor \
                 grows with the cutoff, so {advice}",
                spectrum.cutoff
            ),
        });
    }
    if let Selection::Nearest { count, .. } = settings.selection {
        unconverged += count.saturating_sub(picked.len());
    }
    Ok((unconverged, worst))
}

/// The earliest step from which on every step met the tolerance and each later step confirmed
/// its predecessor.
fn first_converged_cutoff(history: &[AutoStep]) -> usize {
    let mut first = history.len().saturating_sub(1);
    while first > 0 && history[first - 1].unconverged == 0 && history[first].agrees_with_previous {
        first -= 1;
    }
    history.get(first).map_or(0, |h| h.cutoff)
}

/// Same number of selected levels, and each pair (in energy order) within the sum of their
/// bounds plus the tolerance.
fn selections_agree(
    a: &Spectrum,
    pa: &[usize],
    b: &Spectrum,
    pb: &[usize],
    tol: f64,
    bound: BoundChoice,
) -> bool {
    pa.len() == pb.len()
        && pa.iter().zip(pb).all(|(&i, &j)| {
            let (la, lb) = (&a.levels[i], &b.levels[j]);
            (la.energy - lb.energy).abs()
                <= bound.of(la) + bound.of(lb) + absolute_tolerance(b, lb, tol)
        })
}
