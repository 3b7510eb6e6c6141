//! Convergence in the cutoff: a study over a list of cutoffs, and the automatic cutoff.
//!
//! # Study
//! [`study`] solves at each cutoff of a list (default: doubling), tracks the selected levels of
//! the largest cutoff back through the smaller ones, and tabulates energy, residual and
//! Kato-Temple bounds, the change between successive cutoffs, the actual error (against the
//! largest cutoff, or against exact values when given), the observed rate at which the change
//! decays, and the cutoff needed for a tolerance.
//!
//! The residual bound includes the solver's rounding floor, which grows with the norm of the
//! truncated operator (for a k^4 term as N^2): at large cutoffs the bound of a low level can
//! rise again, dominated by rounding rather than truncation. The table shows it; the needed
//! cutoff is the first one that meets the tolerance.
//!
//! Tracking by identity, not rank: a level is matched, within its own sector (the sector label
//! does not depend on the cutoff), one-to-one to a genuine level of each cutoff (cutoff
//! artefacts, [`is_cutoff_artefact`], are never candidates, so an artefact inside a sector
//! cannot shift the later levels), nearest energies first, accepted within the two deciding
//! bounds or well inside the gap to the neighbours (see `match_levels`). Convergence, the
//! state of each entry and the needed cutoff use the deciding bound
//! ([`crate::levels::Level::deciding_bound`]): the certified Kato-Temple bound where it is
//! sharper, else the residual bound.
//!
//! Rates: with changes c_k = |E(N_k) - E(N_(k-1))|, the last two changes above rounding noise
//! (100 eps |E|) give the algebraic exponent p = ln(c_(k-1)/c_k) / ln(N_k/N_(k-1))
//! (c ~ N^-p) and the geometric rate per orbital kappa = ln(c_(k-1)/c_k) / (N_k - N_(k-1))
//! (c ~ e^(-kappa N)). The cutoff needed for a tolerance is the smallest studied cutoff whose
//! residual bound is below it, or else an extrapolation of the bound with the geometric rate
//! of its own last two values.
//!
//! # Automatic cutoff
//! [`auto`] grows the cutoff geometrically until every genuine level of the selection (energy
//! window, or a count of levels nearest a target energy) has a residual bound below the
//! relative tolerance, and the selection agrees with that of the previous cutoff (same count,
//! energies within their bounds): the confirmation guards against a level that is missing at
//! one cutoff rather than unconverged. Cutoff artefacts (weight >= 1/2 on the top orbitals,
//! [`is_cutoff_artefact`]) never count as genuine. The bands are checked for re-entry into the
//! window ([`crate::trust::window`]) and any warning is returned with the result.
//!
//! # Complexity
//! One solve per cutoff; with geometric growth g the total cost is at most g/(g-1) (doubling:
//! 2, confirmation included: 4) times the cost of the solve at the smallest sufficient cutoff
//! for exactly conserved J, and g^3/(g^3-1) times the last solve for dense sectors.

use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::{BoundKind, Convergence, Level, Spectrum};
use crate::model::Model;
use crate::problem::{Problem, Settings};
use crate::sectors::SectorId;
use crate::trust::window::{check_spectrum, EnergyWindow, WindowWarning};
use serde::Serialize;
use std::time::Instant;

pub use crate::levels::{is_cutoff_artefact, ARTEFACT_TOP_WEIGHT};

/// Which levels a study or the automatic cutoff follows.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum Selection {
    /// Every genuine level inside an energy window (relative to the reference energy).
    Window(EnergyWindow),
    /// The `count` genuine levels nearest `target` (relative to the reference energy).
    Nearest {
        /// Target energy.
        target: f64,
        /// How many levels.
        count: usize,
    },
}

impl Selection {
    /// Indices (ascending energy) of the genuine levels of `spectrum` selected.
    pub fn pick(&self, spectrum: &Spectrum) -> Vec<usize> {
        let genuine = spectrum
            .levels
            .iter()
            .enumerate()
            .filter(|(_, l)| !is_cutoff_artefact(l));
        let mut out: Vec<usize> = match *self {
            Selection::Window(w) => genuine
                .filter(|(_, l)| w.contains(l.energy))
                .map(|(i, _)| i)
                .collect(),
            Selection::Nearest { target, count } => {
                let mut v: Vec<(usize, f64)> = genuine
                    .map(|(i, l)| (i, (l.energy - target).abs()))
                    .collect();
                v.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
                v.into_iter().take(count).map(|(i, _)| i).collect()
            }
        };
        out.sort_unstable();
        out
    }

    /// The energy window the selection covers in `spectrum` (for the completeness check).
    fn window_in(&self, spectrum: &Spectrum, picked: &[usize]) -> Option<EnergyWindow> {
        match *self {
            Selection::Window(w) => Some(w),
            Selection::Nearest { .. } => {
                let e: Vec<f64> = picked.iter().map(|&i| spectrum.levels[i].energy).collect();
                let lo = e.iter().copied().fold(f64::INFINITY, f64::min);
                let hi = e.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                EnergyWindow::new(lo, hi).ok()
            }
        }
    }
}

/// Absolute tolerance of a level in `spectrum` for relative tolerance `tol`:
/// tol x max(|E|, energy scale), the same rule as the convergence flags.
pub fn absolute_tolerance(spectrum: &Spectrum, level: &Level, tol: f64) -> f64 {
    tol * level.energy.abs().max(spectrum.energy_scale)
}

/// Cutoffs start, 2 start, 4 start, ... (`count` of them).
pub fn doubling(start: usize, count: usize) -> Vec<usize> {
    (0..count as u32).map(|k| start << k).collect()
}

/// One level at one cutoff in a study.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StudyEntry {
    /// Cutoff N.
    pub cutoff: usize,
    /// Energy (relative to the reference energy); `None` if no level could be matched.
    pub energy: Option<f64>,
    /// Residual bound.
    pub bound: Option<f64>,
    /// Kato-Temple bound where available.
    pub kato_temple: Option<f64>,
    /// |E(N) - E(previous N)|.
    pub change: Option<f64>,
    /// |E(N) - reference value| (largest-cutoff energy or exact value).
    pub actual_error: Option<f64>,
    /// Converged at the study's tolerance (by the deciding bound, see `bound_from`).
    pub converged: bool,
    /// Which bound decided: the certified Kato-Temple bound when sharper, else the residual.
    pub bound_from: Option<BoundKind>,
    /// State of the matched level at this cutoff (converged / not converged); `None` when no
    /// genuine level matched. Artefacts are never matched.
    pub state: Option<Convergence>,
}

/// A level followed through the cutoffs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrackedLevel {
    /// Sector of the level.
    pub sector: SectorId,
    /// Dominant orbital at the largest cutoff.
    pub orbital: usize,
    /// Dominant component at the largest cutoff.
    pub component: usize,
    /// Klein-Gordon root ([`crate::levels::Root::Direct`] for direct models).
    pub branch: crate::levels::Root,
    /// The value the actual error refers to.
    pub reference_value: f64,
    /// Whether `reference_value` is an exact (closed-form) value rather than the largest-cutoff
    /// energy.
    pub exact: ReferenceKind,
    /// One entry per cutoff, in the study's order.
    pub entries: Vec<StudyEntry>,
    /// Algebraic decay exponent p of the change (change ~ N^-p), if two non-zero changes exist.
    pub change_exponent: Option<f64>,
    /// Geometric decay rate per orbital kappa of the change (change ~ exp(-kappa N)).
    pub change_rate_per_orbital: Option<f64>,
    /// Cutoff needed for the study's tolerance (see the module docs).
    pub needed_cutoff: NeededCutoff,
}

/// What the actual error of a study is measured against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ReferenceKind {
    /// The energy at the largest cutoff.
    LargestCutoff,
    /// An exact value (closed form).
    Exact,
}

/// The cutoff a level needs for a tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NeededCutoff {
    /// Met within the study: the smallest studied cutoff whose bound is below the tolerance.
    Observed(usize),
    /// Extrapolated from the decay of the bound.
    Extrapolated(usize),
    /// Not met and the bound does not decay: no estimate.
    Unknown,
}

/// A convergence study (see the module docs).
#[derive(Debug, Clone, Serialize)]
pub struct Study {
    /// Model name.
    pub model: String,
    /// Field and kz.
    pub point: FieldPoint,
    /// The cutoffs studied, ascending.
    pub cutoffs: Vec<usize>,
    /// Relative tolerance used for flags and needed cutoffs.
    pub tolerance: f64,
    /// Energy unit.
    pub energy_unit: String,
    /// The tracked levels, ascending in energy at the largest cutoff.
    pub levels: Vec<TrackedLevel>,
    /// Seconds spent per cutoff (wall clock: not serialised, so that two runs give the same
    /// JSON; `converge --timings` reports them).
    #[serde(skip_serializing)]
    pub seconds: Vec<f64>,
    /// Bands re-entering the selection's window beyond the largest cutoff
    /// ([`crate::trust::window`]).
    pub warnings: Vec<WindowWarning>,
}

/// Where the actual error of a study is measured from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ExactValues<'a> {
    /// The closed form of [`crate::closed_form::for_model`] when the model has one, else the
    /// energy at the largest cutoff.
    ClosedFormIfKnown,
    /// Always the energy at the largest cutoff.
    LargestCutoff,
    /// These exact energies (relative to the reference energy); each tracked level is
    /// compared with the nearest one.
    Given(&'a [f64]),
}

/// Run a convergence study of `model` at `point` over `cutoffs` (sorted ascending, duplicates
/// removed) with the other settings from `base`, following the levels that `selection` picks
/// at the largest cutoff. `exact` says what the actual error is measured against; a tracked
/// level is compared with the nearest exact value.
///
/// # Errors
/// [`Error::Unsupported`] for an empty cutoff list; any error of [`Spectrum::compute`].
///
/// # Complexity
/// One solve per cutoff.
pub fn study(
    model: &Model,
    point: FieldPoint,
    base: &Settings,
    cutoffs: &[usize],
    selection: Selection,
    exact: ExactValues<'_>,
) -> Result<Study> {
    let mut cutoffs = cutoffs.to_vec();
    cutoffs.sort_unstable();
    cutoffs.dedup();
    let Some(&largest) = cutoffs.last() else {
        return Err(Error::Unsupported(
            "a convergence study needs at least one cutoff; give a list such as 25,50,100".into(),
        ));
    };
    // one set-up (one assembly) for every cutoff: the Hamiltonian does not depend on it
    let first = Problem::new(
        model,
        point,
        &Settings {
            cutoff: cutoffs[0],
            ..base.clone()
        },
    )?;
    let problems: Vec<Problem<'_>> = cutoffs
        .iter()
        .map(|&n| first.with_cutoff(n))
        .collect::<Result<_>>()?;
    // every spectrum is kept: check their sum before the first solve (src/memory.rs)
    let shapes: Vec<crate::memory::SolveShape> = problems.iter().map(|p| *p.shape()).collect();
    crate::memory::check(
        &format!(
            "a convergence study at {} cutoffs up to {largest} ({} levels at the largest; every spectrum is kept)",
            cutoffs.len(),
            shapes.last().map_or(0, |s| s.levels)
        ),
        crate::memory::study(
            &shapes,
            largest,
            matches!(exact, ExactValues::ClosedFormIfKnown)
                && crate::closed_form::for_model(model, point, model.reference_energy(), 1)
                    .is_some(),
            rayon::current_num_threads() as u64,
        ),
        base.memory_limit_mib,
        "lower the cutoff or use fewer cutoffs, or raise the memory limit",
    )?;
    let mut spectra = Vec::with_capacity(cutoffs.len());
    let mut seconds = Vec::with_capacity(cutoffs.len());
    for problem in &problems {
        let t0 = Instant::now();
        let s = Spectrum::solve(problem)?;
        seconds.push(t0.elapsed().as_secs_f64());
        spectra.push(s);
    }
    let last = &spectra[spectra.len() - 1];
    debug_assert_eq!(last.cutoff, largest);
    let picked = selection.pick(last);
    let closed: Option<Vec<f64>> = match exact {
        ExactValues::ClosedFormIfKnown => {
            crate::closed_form::for_model(model, point, last.reference_energy, 2 * largest + 8)
                .map(|v| v.iter().map(|l| l.energy).collect())
        }
        ExactValues::LargestCutoff => None,
        ExactValues::Given(v) => Some(v.to_vec()),
    };
    let tol = base.tolerance;
    let mut levels = Vec::with_capacity(picked.len());
    // matches[k][t] = index into spectra[k].levels of tracked level t
    let mut matches: Vec<Vec<Option<usize>>> = Vec::with_capacity(spectra.len());
    for s in &spectra {
        matches.push(match_levels(s, last, &picked));
    }
    for (t, &i) in picked.iter().enumerate() {
        let top = &last.levels[i];
        let (reference_value, kind) = match closed.as_deref() {
            Some(values) if !values.is_empty() => {
                (nearest(values, top.energy), ReferenceKind::Exact)
            }
            _ => (top.energy, ReferenceKind::LargestCutoff),
        };
        let mut entries = Vec::with_capacity(spectra.len());
        let mut prev_energy: Option<f64> = None;
        for (k, s) in spectra.iter().enumerate() {
            let lvl = matches[k][t].map(|j| s.levels[j]);
            let energy = lvl.map(|l| l.energy);
            let change = match (energy, prev_energy) {
                (Some(e), Some(p)) => Some((e - p).abs()),
                _ => None,
            };
            let actual_error = energy.map(|e| (e - reference_value).abs());
            entries.push(StudyEntry {
                cutoff: s.cutoff,
                energy,
                bound: lvl.map(|l| l.bound),
                kato_temple: lvl.and_then(|l| l.kato_temple),
                change,
                actual_error,
                converged: lvl.is_some_and(|l| l.best_bound() <= absolute_tolerance(s, &l, tol)),
                bound_from: lvl.map(|l| l.deciding_bound().1),
                state: lvl.map(|l| {
                    if l.best_bound() <= absolute_tolerance(s, &l, tol) {
                        Convergence::Converged
                    } else {
                        Convergence::NotConverged
                    }
                }),
            });
            prev_energy = energy;
        }
        let (change_exponent, change_rate_per_orbital) = rates(&entries);
        let needed_cutoff = needed(&entries, absolute_tolerance(last, top, tol));
        levels.push(TrackedLevel {
            sector: top.sector,
            orbital: top.orbital,
            component: top.component,
            branch: top.branch,
            reference_value,
            exact: kind,
            entries,
            change_exponent,
            change_rate_per_orbital,
            needed_cutoff,
        });
    }
    let warnings = match selection.window_in(last, &picked) {
        Some(w) => check_spectrum(model, last, w)?,
        None => Vec::new(),
    };
    Ok(Study {
        warnings,
        model: model.name().to_string(),
        point,
        cutoffs,
        tolerance: tol,
        energy_unit: model.units().energy_unit().to_string(),
        levels,
        seconds,
    })
}

fn nearest(values: &[f64], e: f64) -> f64 {
    values
        .iter()
        .copied()
        .min_by(|a, b| (a - e).abs().total_cmp(&(b - e).abs()))
        .unwrap_or(e)
}

/// For each picked level of `target`, its match among the genuine levels of `s` (same sector
/// and branch; cutoff artefacts are never candidates): one-to-one, by identity rather than
/// rank. All candidate pairs are ranked by |Delta E| and taken greedily, nearest first, each
/// level at most once on either side. A pair is accepted when the energies agree within the
/// sum of the two deciding bounds, or (an energy still moving with the cutoff) when |Delta E|
/// is below half the distance from the picked level to its nearest genuine neighbour of the
/// sector; otherwise the level stays unmatched (`None`) rather than take another level's row.
///
/// # Complexity
/// O(P L log(P L)) for P picked levels and L levels of the cutoff.
fn match_levels(s: &Spectrum, target: &Spectrum, picked: &[usize]) -> Vec<Option<usize>> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::new();
    for (t, &i) in picked.iter().enumerate() {
        let want = &target.levels[i];
        for (j, l) in s.levels.iter().enumerate() {
            if l.sector == want.sector && l.branch == want.branch && l.is_genuine() {
                pairs.push(((l.energy - want.energy).abs(), t, j));
            }
        }
    }
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
    let mut out = vec![None; picked.len()];
    let mut used = vec![false; s.levels.len()];
    for &(de, t, j) in &pairs {
        if out[t].is_some() || used[j] {
            continue;
        }
        let want = &target.levels[picked[t]];
        let l = &s.levels[j];
        let within = de <= l.best_bound() + want.best_bound();
        let separated = de < 0.5 * neighbour_distance(target, picked[t]);
        if within || separated {
            out[t] = Some(j);
            used[j] = true;
        }
    }
    out
}

/// Distance from level `i` of `s` to its nearest other genuine level of the same sector and
/// branch (infinite when it has none).
fn neighbour_distance(s: &Spectrum, i: usize) -> f64 {
    let me = &s.levels[i];
    s.levels
        .iter()
        .enumerate()
        .filter(|(j, l)| {
            *j != i && l.sector == me.sector && l.branch == me.branch && l.is_genuine()
        })
        .map(|(_, l)| (l.energy - me.energy).abs())
        .fold(f64::INFINITY, f64::min)
}

/// Changes below this many units of roundoff times |E| are noise, not convergence.
const NOISE_ULPS: f64 = 100.0;

fn rates(entries: &[StudyEntry]) -> (Option<f64>, Option<f64>) {
    let ch: Vec<(usize, f64)> = entries
        .iter()
        .filter_map(|e| {
            let noise = NOISE_ULPS * f64::EPSILON * e.energy.unwrap_or(0.0).abs();
            e.change.filter(|&c| c > noise).map(|c| (e.cutoff, c))
        })
        .collect();
    if ch.len() < 2 {
        return (None, None);
    }
    let (n1, c1) = ch[ch.len() - 2];
    let (n2, c2) = ch[ch.len() - 1];
    let ratio = (c1 / c2).ln();
    (
        Some(ratio / (n2 as f64 / n1 as f64).ln()),
        Some(ratio / (n2 as f64 - n1 as f64)),
    )
}

fn needed(entries: &[StudyEntry], tol_abs: f64) -> NeededCutoff {
    // the deciding bound of each entry: Kato-Temple where certified and sharper
    let deciding = |e: &StudyEntry| match (e.bound, e.kato_temple) {
        (Some(b), Some(k)) => Some(b.min(k)),
        (b, _) => b,
    };
    if let Some(e) = entries
        .iter()
        .find(|e| deciding(e).is_some_and(|b| b <= tol_abs))
    {
        return NeededCutoff::Observed(e.cutoff);
    }
    let b: Vec<(usize, f64)> = entries
        .iter()
        .filter_map(|e| deciding(e).filter(|&b| b > 0.0).map(|b| (e.cutoff, b)))
        .collect();
    if b.len() < 2 {
        return NeededCutoff::Unknown;
    }
    let (n1, b1) = b[b.len() - 2];
    let (n2, b2) = b[b.len() - 1];
    let kappa = (b1 / b2).ln() / (n2 as f64 - n1 as f64);
    if !(kappa.is_finite() && kappa > 0.0) {
        return NeededCutoff::Unknown;
    }
    let extra = (b2 / tol_abs).ln() / kappa;
    let n = n2 as f64 + extra.max(0.0).ceil();
    if n.is_finite() && n < usize::MAX as f64 {
        NeededCutoff::Extrapolated(n as usize)
    } else {
        NeededCutoff::Unknown
    }
}

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
            memory_limit_mib: 4096,
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
/// use ladderfan::{builtin, FieldPoint};
/// use ladderfan::trust::converge::{auto, AutoSettings, Selection};
/// let model = builtin::dirac2d(builtin::Dirac2dParams { mass_mev: 10.0, ..Default::default() })?;
/// let sel = Selection::Nearest { target: 0.0, count: 20 };
/// let res = auto(&model, FieldPoint::field(5.0), &AutoSettings::new(sel, 1e-9))?;
/// // n = 0 level at tau sign(qB) Delta = -10 meV for tau = +1, q = -1, B > 0 (McClure 1956)
/// let e0 = res.selected.iter().map(|&i| res.spectrum.levels[i].energy)
///     .min_by(|a, b| (a + 10.0).abs().total_cmp(&(b + 10.0).abs())).unwrap_or(f64::NAN);
/// assert!((e0 + 10.0).abs() < 1e-9);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn auto(model: &Model, point: FieldPoint, settings: &AutoSettings) -> Result<AutoResult> {
    validate_auto(settings)?;
    let mut cutoff = settings.start_cutoff.max(model.band() + 1);
    let mut history: Vec<AutoStep> = Vec::new();
    let mut previous: Option<(Spectrum, Vec<usize>, bool)> = None;
    let mut previous_shape: Option<crate::memory::SolveShape> = None;
    let mut first: Option<Problem<'_>> = None;
    let mut total = 0.0;
    loop {
        if cutoff > settings.max_cutoff {
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
            return Err(Error::NotConverged {
                tolerance: settings.tolerance,
                detail,
            });
        }
        let run = Settings {
            cutoff,
            tolerance: settings.tolerance,
            memory_limit_mib: settings.memory_limit_mib,
            ..settings.base.clone()
        };
        // one assembly for the whole run: later cutoffs reuse the first set-up
        let problem = match &first {
            Some(p) => p.with_cutoff(cutoff)?,
            None => Problem::new(model, point, &run)?,
        };
        // the previous spectrum is kept while the next is solved (src/memory.rs)
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
        let t0 = Instant::now();
        let spectrum = Spectrum::solve(&problem).map_err(|e| match e {
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
        })?;
        let seconds = t0.elapsed().as_secs_f64();
        total += seconds;
        let picked = settings.selection.pick(&spectrum);
        let mut unconverged = 0;
        let mut worst: f64 = 0.0;
        let mut floor_limited: Option<(f64, f64, f64)> = None;
        for &i in &picked {
            let l = &spectrum.levels[i];
            let tol_abs = absolute_tolerance(&spectrum, l, settings.tolerance);
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
                crate::solve::Splitting::Off => {
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
                    "at a cutoff of {cutoff} orbitals the level at {e:.10e} has an in-space residual and \
                     rounding floor of {floor:.3e}, above its absolute tolerance {tol_abs:.3e}; this floor \
                     grows with the cutoff, so {advice}"
                ),
            });
        }
        if let Selection::Nearest { count, .. } = settings.selection {
            unconverged += count.saturating_sub(picked.len());
        }
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
            // earliest step from which on every step met the tolerance and each later step
            // confirmed its predecessor
            let mut first = history.len() - 1;
            while first > 0
                && history[first - 1].unconverged == 0
                && history[first].agrees_with_previous
            {
                first -= 1;
            }
            let first_converged_cutoff = history[first].cutoff;
            let warnings = match settings.selection.window_in(&spectrum, &picked) {
                Some(w) => check_spectrum(model, &spectrum, w)?,
                None => Vec::new(),
            };
            return Ok(AutoResult {
                cutoff,
                first_converged_cutoff,
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
