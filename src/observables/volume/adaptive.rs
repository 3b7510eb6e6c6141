//! The default kz quadrature ([`super::Quadrature::Adaptive`]): lean sheet solves, the kz
//! mirror used when the model has one, and a trapezoid grid refined only where the sheets are
//! not inert.
//!
//! # Method
//! * One set-up per field: the [`Problem`] is assembled once at a generic kz (an irrational
//!   multiple of 1/l_B, where every coupling any kz can have is present), its sector plan and
//!   memory estimate reused at every kz ([`Problem::at_kz`]: one assembly per kz, the plan kept
//!   when the couplings are covered), and each sheet solved by
//!   [`crate::solve::converged_energies_near`]: the same sector solves, bounds and convergence
//!   flags as a full solve, on one thread in buffers reused by the thread's later jobs, keeping
//!   only the energies of the converged levels (no level records, weights, labels or gather:
//!   the densities only count levels), and of those only the levels that can change the
//!   sheet: a sector whose every level lies above the padded range (or below it, when the
//!   neutrality is inside it) adds nothing to the densities and gets no bounds (its energies
//!   still set the energy scale of the convergence test). One kz point is one job (solve, sheet, sums on the check
//!   energies); the jobs of all fields of a sweep share one rayon pool (work stealing over
//!   fields and kz together, no nested parallelism inside a sheet).
//! * Mirror: when [`super::kz_mirror`] finds U with U H(kz) U^-1 = H(-kz), only [0, K] is
//!   solved and counted twice; otherwise [-K, K].
//! * Grid: the first grid has [`super::FIRST_POINTS`] points; each round halves every interval
//!   that is still active and adds the change of the trapezoid sums on the check energies,
//!   (h/4) (2 f(m) - f(a) - f(b)) for an interval [a, b] with midpoint m. The first round cuts
//!   every interval into 2, 3 or 4 equal parts instead, chosen from the steepest level slope
//!   seen on the first grid (`first_parts`) so that the next round can already settle; the
//!   change is then the trapezoid sum over the parts minus the old one; an interval whose
//!   two ends are inert sheets with the same count of levels outside is only halved in that
//!   round (its midpoint is the check a later halving would make, and its trapezoid sum is
//!   the same however it is cut when it stays inert). An interval is
//!   frozen (never halved again) when its ends and its new points were all inert sheets (no
//!   converged level within reach of the padded range) with the same count of levels
//!   outside: the integrand is constant there to the line's reach (below 1e-17 of a line), so
//!   its trapezoid sum is exact, and at its ends every derivative vanishes, so the uniform
//!   refinement of the active intervals keeps the trapezoid rule's fast convergence. The
//!   refinement stops when one round changes the sums by at most the tolerance, as for the
//!   uniform grid (the change is reported as the quadrature error); the result is the finer
//!   grid, with the weights of the trapezoid rule on the non-uniform grid.
//! * Check sums: the Gaussian line and its cumulative at each (level, check energy) pair come
//!   from a shared table with Taylor polynomials (`gauss.rs`, the same values to rounding)
//!   instead of an `exp` and an `erfc` each; the sums only steer the refinement and give the
//!   reported change, the densities themselves are evaluated with `exp` and `erfc`.

use super::gauss::{GaussTable, COVER};
use super::mirror::kz_mirror;
use super::quadrature::{check_volume_inputs, kz_limit, Change};
use super::sheet::{sheet_of, Sheet, SheetPoint};
use super::{
    settled, too_many_points, Frame, Integral, Line, VolumeDensity, VolumeSettings, CHECK_ENERGIES,
    FIRST_POINTS,
};
use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::model::Model;
use crate::observables::dos::LineShape;
use crate::solve::{converged_energies_near, LeanBuffers, Problem, Settings};
use rayon::prelude::*;
use std::f64::consts::{FRAC_1_SQRT_2, PI};

/// One grid point: its kz, its sheet and the sheet's DOS and density sums on the check
/// energies.
struct Node {
    kz: f64,
    sheet: Sheet,
    g: Vec<f64>,
    n: Vec<f64>,
}

impl Node {
    /// Inert: no converged level within reach of the padded range.
    fn inert(&self) -> bool {
        self.sheet.near.is_empty()
    }
}

/// [`super::VolumeDensity::compute`] with [`super::Quadrature::Adaptive`] (module docs).
pub(super) fn compute(
    model: &Model,
    field: f64,
    settings: &Settings,
    vs: &VolumeSettings,
) -> Result<VolumeDensity> {
    check_volume_inputs(model, vs)?;
    let even = kz_mirror(model).is_some();
    let lb = model.units().magnetic_length(field, model.charge());
    // a generic kz: an irrational multiple of 1/l_B (kz = 0 when l_B is not usable, so that
    // the set-up reports the field's own error)
    let generic = if lb.is_finite() && lb > 0.0 {
        FRAC_1_SQRT_2 / lb
    } else {
        0.0
    };
    let template = Problem::new(model, FieldPoint { field, kz: generic }, settings)?;
    let frame = Frame::new(
        model,
        field,
        vs,
        (template.reference(), template.hamiltonian().magnetic_length),
    )?;
    let lean = LeanSolve {
        template: &template,
        tolerance: settings.tolerance,
        cutoff: settings.cutoff,
        window: (frame.lo, frame.hi),
        below_too: frame.neutrality.is_some(),
    };
    let probe = |kz: &[f64]| -> Result<Vec<Vec<f64>>> {
        kz.par_iter()
            .map_init(LeanBuffers::default, |buf, &k| {
                let mut e = Vec::new();
                lean.energies(k, buf, &mut e)?;
                Ok(e)
            })
            .collect()
    };
    let kz_max = kz_limit(
        vs,
        !even,
        frame.magnetic_length,
        (frame.lo, frame.hi),
        &probe,
    )?;
    let start = if even { 0.0 } else { -kz_max };
    let both = if even { 2.0 } else { 1.0 };
    let check: Vec<f64> = (0..CHECK_ENERGIES)
        .map(|i| vs.range.0 + (vs.range.1 - vs.range.0) * i as f64 / (CHECK_ENERGIES - 1) as f64)
        .collect();
    // one job per kz point: solve, reduce to a sheet and sum it on the check energies, with
    // the buffers of the thread's earlier jobs (the fields of a sweep run in the same pool)
    let nodes_at = |kz: &[f64]| -> Result<Vec<Node>> {
        kz.par_iter()
            .map_init(
                || (LeanBuffers::default(), Vec::new()),
                |(buf, e), &k| {
                    lean.energies(k, buf, e)?;
                    let at = SheetPoint {
                        kz: k,
                        tolerance: lean.tolerance,
                        cutoff: lean.cutoff,
                    };
                    let sheet = sheet_of(
                        e,
                        at,
                        (frame.lo, frame.hi),
                        frame.neutrality,
                        frame.bounded,
                        frame.line.width,
                    )?;
                    Ok(node(k, sheet, &frame.line, &check))
                },
            )
            .collect()
    };
    let intervals = FIRST_POINTS - 1;
    let first_grid: Vec<f64> = (0..=intervals)
        .map(|i| start + (kz_max - start) * i as f64 / intervals as f64)
        .collect();
    let mut nodes = nodes_at(&first_grid)?;
    let mut active = vec![true; intervals];
    // sums over the intervals of (h/2)(f(a) + f(b)), per check energy
    let (mut sg, mut sn) = (vec![0.0; check.len()], vec![0.0; check.len()]);
    for w in nodes.windows(2) {
        let h = w[1].kz - w[0].kz;
        for k in 0..check.len() {
            sg[k] += 0.5 * h * (w[0].g[k] + w[1].g[k]);
            sn[k] += 0.5 * h * (w[0].n[k] + w[1].n[k]);
        }
    }
    let scale = frame.per_level * both / (2.0 * PI);
    let mut last_change = f64::INFINITY;
    // the first round cuts each interval into `parts` (2 to 4, from the steepest level seen),
    // except an interval between two inert nodes with the same count of levels outside, which
    // is only halved (its midpoint checks it as a later round's halving would); every later
    // round halves
    let mut parts = first_parts(&nodes, frame.line.width, vs.tolerance);
    let mut first_round = true;
    loop {
        let refine: Vec<usize> = (0..active.len()).filter(|&i| active[i]).collect();
        let cuts: Vec<usize> = refine
            .iter()
            .map(|&i| {
                let (a, b) = (&nodes[i], &nodes[i + 1]);
                if first_round && a.inert() && b.inert() && a.sheet.base == b.sheet.base {
                    2
                } else {
                    parts
                }
            })
            .collect();
        let added: usize = cuts.iter().map(|&p| p - 1).sum();
        if nodes.len() + added > vs.max_points {
            return Err(too_many_points(vs, last_change));
        }
        let mids: Vec<f64> = refine
            .iter()
            .zip(&cuts)
            .flat_map(|(&i, &p)| {
                let (a, b) = (nodes[i].kz, nodes[i + 1].kz);
                (1..p).map(move |j| a + (b - a) * j as f64 / p as f64)
            })
            .collect();
        let fresh = nodes_at(&mids)?;
        let (mut dg, mut dn) = (vec![0.0; check.len()], vec![0.0; check.len()]);
        let mut from = 0;
        for (&i, &p) in refine.iter().zip(&cuts) {
            // trapezoid sum over the `p` sub-intervals minus the old (h/2)(f(a) + f(b))
            let inner = &fresh[from..from + p - 1];
            from += p - 1;
            let (a, b) = (&nodes[i], &nodes[i + 1]);
            let h = b.kz - a.kz;
            let sub = h / p as f64;
            let ends = 0.5 * sub - 0.5 * h;
            for k in 0..check.len() {
                let (mut ig, mut inn) = (0.0, 0.0);
                for m in inner {
                    ig += m.g[k];
                    inn += m.n[k];
                }
                dg[k] += sub * ig + ends * (a.g[k] + b.g[k]);
                dn[k] += sub * inn + ends * (a.n[k] + b.n[k]);
            }
        }
        let mut change = Change {
            dg: 0.0,
            gmax: 0.0,
            dn: 0.0,
            nmax: 0.0,
        };
        for k in 0..check.len() {
            sg[k] += dg[k];
            sn[k] += dn[k];
            change.dg = change.dg.max(scale * dg[k].abs());
            change.dn = change.dn.max(scale * dn[k].abs());
            change.gmax = change.gmax.max(scale * sg[k].abs());
            change.nmax = change.nmax.max(scale * sn[k].abs());
        }
        (nodes, active) = merge(nodes, &active, fresh, &cuts);
        parts = 2;
        first_round = false;
        last_change = change.dg / change.gmax.max(f64::MIN_POSITIVE);
        if settled(&change, vs) || !active.contains(&true) {
            let kz: Vec<f64> = nodes.iter().map(|n| n.kz).collect();
            let weights = (0..kz.len())
                .map(|i| {
                    let left = if i > 0 { kz[i] - kz[i - 1] } else { 0.0 };
                    let right = kz.get(i + 1).map_or(0.0, |k| k - kz[i]);
                    both * 0.5 * (left + right) / (2.0 * PI)
                })
                .collect();
            let integral = Integral {
                kz_max,
                even_in_kz: even,
                kz,
                weights,
                sheets: nodes.into_iter().map(|n| n.sheet).collect(),
                change,
            };
            return Ok(VolumeDensity::finish(
                model, field, settings, vs, frame, integral,
            ));
        }
    }
}

/// The lean solve of one kz sheet: the field's set-up reused ([`Problem::at_kz`]) and only
/// the converged energies the sheet needs kept ([`converged_energies_near`]).
struct LeanSolve<'a, 'm> {
    template: &'a Problem<'m>,
    tolerance: f64,
    cutoff: usize,
    /// The padded range of the sheets: sectors wholly above it (or below it, when
    /// `below_too`) add nothing to a sheet and are left out ([`converged_energies_near`]).
    window: (f64, f64),
    /// Whether the neutrality lies inside the window (then a level below it adds nothing).
    below_too: bool,
}

impl LeanSolve<'_, '_> {
    /// The energies of the converged levels at `kz` that the sheet needs into `out`, in
    /// sector order ([`converged_energies_near`]; not sorted: [`sheet_of`] sorts the few it
    /// keeps, and the kz limit only asks whether any is inside the window).
    fn energies(&self, kz: f64, buffers: &mut LeanBuffers, out: &mut Vec<f64>) -> Result<()> {
        converged_energies_near(
            &self.template.at_kz(kz)?,
            buffers,
            out,
            self.window,
            self.below_too,
        )
    }
}

/// A grid point with its sums on the check energies (T = 0 densities, as the uniform check):
/// [`Sheet::lines`] and [`Sheet::occupied`] at each check energy, summed level by level over
/// the check energies within the line's reach of the level (two binary searches per level
/// instead of four per check energy).
///
/// # Formula
/// g(E_k) = sum_l L(E_k - E_l) and
/// n(E_k) = base - sum_l f_l + #{l: E_k > E_l + r} + sum over |E_k - E_l| <= r of
/// C(E_k - E_l), with the cumulative line C, the reach r and the filled column f_l of the
/// sheet (C = 1 beyond the reach to below 1e-17). L and C of a Gaussian line come from the
/// shared table of `gauss.rs` (the same values to rounding, without an `exp` and an `erfc`
/// per pair of level and check energy).
fn node(kz: f64, sheet: Sheet, line: &Line, check: &[f64]) -> Node {
    let count = check.len();
    let (mut g, mut n) = (vec![0.0; count], vec![0.0; count]);
    // steps[k]: levels whose reach ends just below check energy k (then full from k on)
    let mut steps = vec![0.0; count + 1];
    let b = line.broadening;
    // the Gaussian line and its cumulative from the shared table when the reach is inside it
    // (always for the Gaussian's 9 widths), else directly
    let inv_w = 1.0 / line.width;
    let table =
        (b.shape == LineShape::Gaussian && line.reach * inv_w <= COVER).then(GaussTable::get);
    for &(el, _) in &sheet.near {
        let k0 = check.partition_point(|&e| e < el - line.reach);
        let k1 = check.partition_point(|&e| e <= el + line.reach).max(k0);
        match table {
            Some(tab) => {
                for k in k0..k1 {
                    let (phi, cum) = tab.at((check[k] - el) * inv_w);
                    g[k] += phi * inv_w;
                    n[k] += cum;
                }
            }
            None => {
                for k in k0..k1 {
                    let x = check[k] - el;
                    g[k] += b.line(x, line.width);
                    n[k] += b.cumulative(x, line.width);
                }
            }
        }
        steps[k1] += 1.0;
    }
    let offset = sheet.base - sheet.filled_before[sheet.near.len()];
    let mut full = 0.0;
    for k in 0..count {
        full += steps[k];
        n[k] += offset + full;
    }
    Node { kz, sheet, g, n }
}

/// The grid after a round: the k-th refined interval i (active[i]) gets its `cuts[k]` - 1 new
/// points from `fresh` (in order); its sub-intervals stay active unless its ends and its new
/// points are all inert with the same count of levels outside. Frozen intervals stay frozen.
fn merge(
    nodes: Vec<Node>,
    active: &[bool],
    fresh: Vec<Node>,
    cuts: &[usize],
) -> (Vec<Node>, Vec<bool>) {
    // which refined intervals freeze, decided before the nodes move
    let mut freeze = Vec::with_capacity(active.len());
    let mut cut = cuts.iter();
    let mut from = 0;
    for (i, &on) in active.iter().enumerate() {
        if !on {
            freeze.push(false);
            continue;
        }
        let p = *cut.next().expect("one cut per refined interval");
        let group = &fresh[from..from + p - 1];
        from += p - 1;
        let (a, b) = (&nodes[i], &nodes[i + 1]);
        let base = a.sheet.base;
        let alike = |n: &Node| n.inert() && n.sheet.base == base;
        freeze.push(alike(a) && alike(b) && group.iter().all(alike));
    }
    let mut out: Vec<Node> = Vec::with_capacity(nodes.len() + fresh.len());
    let mut flags = Vec::with_capacity(active.len() + fresh.len());
    let mut fresh = fresh.into_iter();
    let mut cut = cuts.iter();
    let last = nodes.len() - 1;
    for (i, a) in nodes.into_iter().enumerate() {
        out.push(a);
        if i == last {
            break;
        }
        if active[i] {
            let p = *cut.next().expect("one cut per refined interval");
            out.extend(fresh.by_ref().take(p - 1));
            flags.extend(std::iter::repeat(!freeze[i]).take(p));
        } else {
            flags.push(false);
        }
    }
    (out, flags)
}

/// Into how many parts the first round cuts each interval of the first grid (2 to 4): the
/// steepest |dE/dkz| seen between neighbouring first-grid nodes, s (the k-th near levels of
/// two nodes with as many near levels, paired in order), turns a line of width w into a
/// Gaussian of width sigma = w/s in kz, which the trapezoid rule with step h integrates to
/// 2 exp(-2 pi^2 sigma^2/h^2) of its weight (Poisson summation, common practice). The parts are
/// chosen so that the step after the first round is at most the h at which that error is
/// `tolerance`, sigma pi sqrt(2 / ln(2/tolerance)): the round after it then settles when s
/// was not underestimated (else later halvings follow as usual). Capped at 4, which gives the
/// grid of two halvings; 2 when no slope is seen.
fn first_parts(nodes: &[Node], width: f64, tolerance: f64) -> usize {
    let steepest = nodes
        .windows(2)
        .filter(|w| w[0].sheet.near.len() == w[1].sheet.near.len())
        .flat_map(|w| {
            let h = (w[1].kz - w[0].kz).abs();
            w[0].sheet
                .near
                .iter()
                .zip(&w[1].sheet.near)
                .map(move |(x, y)| (y.0 - x.0).abs() / h)
        })
        .fold(0.0, f64::max);
    let step = nodes.get(1).map_or(0.0, |n| n.kz - nodes[0].kz).abs();
    if !(steepest > 0.0 && step > 0.0 && width > 0.0) {
        return 2;
    }
    let sigma = width / steepest;
    let h_star = sigma * PI * (2.0 / (2.0 / tolerance).ln()).sqrt();
    ((step / h_star).ceil() as usize).clamp(2, 4)
}

#[cfg(test)]
mod tests {
    use super::super::sheet::{sheet_of, SheetPoint};
    use super::super::Line;
    use super::node;
    use crate::observables::dos::Broadening;

    #[test]
    fn node_sums_level_by_level_equal_the_sheet_sums_energy_by_energy() {
        // Oracle: Sheet::lines and Sheet::occupied at each check energy (the sums of the
        // uniform reference path); the level-by-level sweep must give the same values up to
        // rounding (1e-13 of the largest), with neutrality inside the range and for a band
        // empty at neutrality. Energies invented, two of them closer than a width.
        let b = Broadening::gaussian(1.0);
        let line = Line {
            broadening: b,
            width: 1.0,
            reach: b.reach(1.0).unwrap(),
        };
        let check: Vec<f64> = (0..401).map(|i| -40.0 + 0.2 * i as f64).collect();
        let levels = [
            -60.0, -30.3, -12.1, -0.4, 0.0, 3.3, 3.31, 25.0, 39.95, 47.9, 80.0,
        ];
        let at = SheetPoint {
            kz: 0.0,
            tolerance: 1e-9,
            cutoff: 10,
        };
        for (neutrality, bounded) in [(Some(0.0), false), (None, true)] {
            let sheet = sheet_of(&levels, at, (-50.0, 50.0), neutrality, bounded, 1.0).unwrap();
            let n0 = node(0.0, sheet.clone(), &line, &check);
            for (k, &e) in check.iter().enumerate() {
                let (g, n) = (sheet.lines(&line, e), sheet.occupied(&line, e, 0.0));
                assert!((n0.g[k] - g).abs() <= 1e-13, "g at {e}: {} vs {g}", n0.g[k]);
                assert!(
                    (n0.n[k] - n).abs() <= 1e-13 * 11.0,
                    "n at {e}: {} vs {n}",
                    n0.n[k]
                );
            }
            // the sums are not trivial: a line peak and a filled level
            assert!(n0.g.iter().cloned().fold(0.0, f64::max) > 0.3);
            assert!(n0.n.iter().any(|&x| x.abs() > 0.5));
        }
    }
}
