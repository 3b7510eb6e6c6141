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
//! [`auto`] (in `trust/auto.rs`, re-exported here) grows the cutoff until the selection
//! converges.
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
pub use crate::trust::auto::{auto, auto_with, AutoResult, AutoSettings, AutoStep, BoundChoice};

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
    pub(crate) fn window_in(&self, spectrum: &Spectrum, picked: &[usize]) -> Option<EnergyWindow> {
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
    /// The closed form of [`crate::models::expected_levels`] when the model has one, else the
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
    study_with(model, point, base, cutoffs, selection, exact, &|| ())
}

/// [`study`], calling `tick` once per finished cutoff (a front end draws its progress from
/// it).
///
/// # Errors
/// As [`study`].
pub fn study_with(
    model: &Model,
    point: FieldPoint,
    base: &Settings,
    cutoffs: &[usize],
    selection: Selection,
    exact: ExactValues<'_>,
    tick: &(dyn Fn() + Sync),
) -> Result<Study> {
    let mut cutoffs = cutoffs.to_vec();
    cutoffs.sort_unstable();
    cutoffs.dedup();
    let Some(&largest) = cutoffs.last() else {
        return Err(Error::Unsupported(
            "a convergence study needs at least one cutoff; give a list such as 25,50,100".into(),
        ));
    };
    let problems = set_up(model, point, base, &cutoffs, exact)?;
    let mut spectra = Vec::with_capacity(cutoffs.len());
    let mut seconds = Vec::with_capacity(cutoffs.len());
    for problem in &problems {
        let t0 = Instant::now();
        let s = Spectrum::solve(problem)?;
        seconds.push(t0.elapsed().as_secs_f64());
        spectra.push(s);
        tick();
    }
    let last = &spectra[spectra.len() - 1];
    debug_assert_eq!(last.cutoff, largest);
    let picked = selection.pick(last);
    let closed: Option<Vec<f64>> = match exact {
        ExactValues::ClosedFormIfKnown => {
            crate::models::expected_levels(model, point, last.reference_energy, 2 * largest + 8)
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
        let lvls: Vec<Option<Level>> = spectra
            .iter()
            .zip(&matches)
            .map(|(s, m)| m[t].map(|j| s.levels[j]))
            .collect();
        let entries = entries_of(&spectra, &lvls, reference_value, tol);
        let (change_exponent, change_rate_per_orbital) = rates(&entries);
        let needed_cutoff = needed(&entries, absolute_tolerance(last, top, tol));
        levels.push(TrackedLevel {
            sector: top.sector,
            orbital: top.orbital,
            component: top.component as usize,
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

/// One set-up (one assembly) for every cutoff of a study (the Hamiltonian does not depend on
/// it), refused before the first solve when the kept spectra exceed the memory limit together
/// (src/memory.rs).
fn set_up<'m>(
    model: &'m Model,
    point: FieldPoint,
    base: &Settings,
    cutoffs: &[usize],
    exact: ExactValues<'_>,
) -> Result<Vec<Problem<'m>>> {
    let first = Problem::new(
        model,
        point,
        &Settings {
            cutoff: cutoffs[0],
            ..base.clone()
        },
    )?;
    let problems: Vec<Problem<'m>> = cutoffs
        .iter()
        .map(|&n| first.with_cutoff(n))
        .collect::<Result<_>>()?;
    let shapes: Vec<crate::memory::SolveShape> = problems.iter().map(|p| *p.shape()).collect();
    let largest = cutoffs[cutoffs.len() - 1];
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
                && crate::models::expected_levels(model, point, model.reference_energy(), 1)
                    .is_some(),
            rayon::current_num_threads() as u64,
        ),
        base.memory_limit_mib,
        "lower the cutoff or use fewer cutoffs, or raise the memory limit",
    )?;
    Ok(problems)
}

/// The entries of one tracked level: its match `lvls[k]` in each spectrum `spectra[k]`, the
/// change from the previous cutoff, the error against `reference_value` and the state at
/// relative tolerance `tol`.
fn entries_of(
    spectra: &[Spectrum],
    lvls: &[Option<Level>],
    reference_value: f64,
    tol: f64,
) -> Vec<StudyEntry> {
    let mut entries = Vec::with_capacity(spectra.len());
    let mut prev_energy: Option<f64> = None;
    for (s, &lvl) in spectra.iter().zip(lvls) {
        let energy = lvl.map(|l| l.energy);
        let change = match (energy, prev_energy) {
            (Some(e), Some(p)) => Some((e - p).abs()),
            _ => None,
        };
        let converged = lvl.map(|l| l.best_bound() <= absolute_tolerance(s, &l, tol));
        entries.push(StudyEntry {
            cutoff: s.cutoff,
            energy,
            bound: lvl.map(|l| l.bound),
            kato_temple: lvl.and_then(|l| l.kato_temple),
            change,
            actual_error: energy.map(|e| (e - reference_value).abs()),
            converged: converged == Some(true),
            bound_from: lvl.map(|l| l.deciding_bound().1),
            state: converged.map(|c| {
                if c {
                    Convergence::Converged
                } else {
                    Convergence::NotConverged
                }
            }),
        });
        prev_energy = energy;
    }
    entries
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
