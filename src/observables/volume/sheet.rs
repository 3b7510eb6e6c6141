//! One kz sheet of a kz-integrated density reduced to what the densities need: the converged
//! levels near the energies asked for, and the count of those far from them.

use super::Line;
use crate::error::{Error, Result};
use crate::levels::Spectrum;
use crate::observables::filling::Occupation;
use crate::observables::filling::THERMAL_REACH;
use crate::policy::NEUTRALITY_SNAP_WIDTHS;

/// One kz sheet reduced to what the densities need.
#[derive(Debug, Clone)]
pub(super) struct Sheet {
    /// Converged levels within the active range, ascending: (energy, filled at neutrality:
    /// 0, 1/2 or 1).
    pub(super) near: Vec<(f64, f64)>,
    /// Running sums of the filled column: `filled_before[i]` = sum of filled over near[..i].
    pub(super) filled_before: Vec<f64>,
    /// sum over the converged levels outside the active range of (occupation - filled at
    /// neutrality): 1 - filled below it, -filled above it.
    pub(super) base: f64,
}

impl Sheet {
    /// Indices of the levels within `r` of `e`: near[i0..i1].
    pub(super) fn span(&self, e: f64, r: f64) -> (usize, usize) {
        let i0 = self.near.partition_point(|&(el, _)| el < e - r);
        let i1 = self.near.partition_point(|&(el, _)| el <= e + r);
        (i0, i1.max(i0))
    }

    /// sum_l L(e - E_l) over this sheet's levels (levels beyond the reach add below 1e-17).
    pub(super) fn lines(&self, line: &Line, e: f64) -> f64 {
        let (i0, i1) = self.span(e, line.reach);
        self.near[i0..i1]
            .iter()
            .map(|&(el, _)| line.broadening.line(e - el, line.width))
            .sum()
    }

    /// sum_l (o_l(mu) - filled_l) over this sheet's levels at temperature kt: levels far below
    /// mu are full, far above empty.
    pub(super) fn occupied(&self, line: &Line, mu: f64, kt: f64) -> f64 {
        let occ = Occupation {
            chemical_potential: mu,
            thermal_energy: kt,
            broadening: line.broadening,
            width: line.width,
        };
        let (i0, i1) = self.span(mu, line.reach + THERMAL_REACH * kt);
        let total = self.filled_before[self.near.len()];
        let below = i0 as f64 - self.filled_before[i0];
        let above = -(total - self.filled_before[i1]);
        let inside: f64 = self.near[i0..i1]
            .iter()
            .map(|&(el, filled)| occ.of_level(el) - filled)
            .sum();
        self.base + below + inside + above
    }

    /// [`Sheet::occupied`] at zero temperature and [`Sheet::lines`] at `mu`, from one search
    /// of the levels within reach.
    pub(super) fn occupied_and_lines(&self, line: &Line, mu: f64) -> (f64, f64) {
        let (i0, i1) = self.span(mu, line.reach);
        let total = self.filled_before[self.near.len()];
        let below = i0 as f64 - self.filled_before[i0];
        let above = -(total - self.filled_before[i1]);
        let (mut inside, mut g) = (0.0, 0.0);
        for &(el, filled) in &self.near[i0..i1] {
            inside += line.broadening.cumulative(mu - el, line.width) - filled;
            g += line.broadening.line(mu - el, line.width);
        }
        (self.base + below + inside + above, g)
    }
}

/// Reduce one spectrum to a sheet, after checking that its converged levels cover [lo, hi].
pub(super) fn sheet(
    s: &Spectrum,
    range: (f64, f64),
    neutrality: Option<f64>,
    bounded: bool,
    width: f64,
) -> Result<Sheet> {
    let conv: Vec<f64> = s.converged().map(|l| l.energy).collect();
    let at = SheetPoint {
        kz: s.point.kz,
        tolerance: s.tolerance,
        cutoff: s.cutoff,
    };
    sheet_of(&conv, at, range, neutrality, bounded, width)
}

/// Where a sheet was solved, for the messages of [`sheet_of`].
#[derive(Debug, Clone, Copy)]
pub(super) struct SheetPoint {
    pub(super) kz: f64,
    pub(super) tolerance: f64,
    pub(super) cutoff: usize,
}

/// Reduce the energies `conv` of the converged levels of one kz sheet (in any order) to a
/// sheet, after checking that they cover [lo, hi]; only the levels kept in [`Sheet::near`]
/// are sorted.
pub(super) fn sheet_of(
    conv: &[f64],
    at_point: SheetPoint,
    (lo, hi): (f64, f64),
    neutrality: Option<f64>,
    bounded: bool,
    width: f64,
) -> Result<Sheet> {
    let (first, last) = conv
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &e| {
            (a.min(e), b.max(e))
        });
    if conv.is_empty() {
        return Err(Error::NotConverged {
            tolerance: at_point.tolerance,
            detail: format!(
                "no level is converged at kz = {}; raise the cutoff",
                at_point.kz
            ),
        });
    }
    if last < hi || (!bounded && first > lo) {
        return Err(Error::NotConverged {
            tolerance: at_point.tolerance,
            detail: format!(
                "at kz = {:e} the converged levels span {first:e} to {last:e}, but the energies \
                 {lo:e} to {hi:e} are needed; raise the cutoff (now {})",
                at_point.kz, at_point.cutoff
            ),
        });
    }
    let at = NEUTRALITY_SNAP_WIDTHS * width;
    let filled = |el: f64| match neutrality {
        None => 0.0,
        Some(e0) if (el - e0).abs() <= at => 0.5,
        Some(e0) if el < e0 => 1.0,
        Some(_) => 0.0,
    };
    let mut near = Vec::new();
    let mut base = 0.0;
    for &el in conv {
        if el < lo {
            base += 1.0 - filled(el);
        } else if el > hi {
            base -= filled(el);
        } else {
            near.push((el, filled(el)));
        }
    }
    near.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    let mut filled_before = Vec::with_capacity(near.len() + 1);
    let mut acc = 0.0;
    filled_before.push(acc);
    for &(_, f) in &near {
        acc += f;
        filled_before.push(acc);
    }
    Ok(Sheet {
        near,
        filled_before,
        base,
    })
}
