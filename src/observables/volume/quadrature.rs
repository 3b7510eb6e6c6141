//! The kz quadrature of [`super::VolumeDensity::compute`]: input checks, the kz limit, running
//! trapezoid sums on the check energies and the interleaving of a halved grid.

use super::{
    check_temperature, kz_powers, Line, Sheet, VolumeSettings, CHECK_ENERGIES, MAX_DOUBLINGS,
};
use crate::error::{Error, Result};
use crate::model::Model;
use crate::observables::dos::LineShape;
use rayon::prelude::*;

/// The checks of a kz-integrated density before any solve; returns whether the model has odd
/// powers of kz (then the kz grid spans -kz_max..kz_max, else 0..kz_max, doubled).
pub(super) fn check_volume_inputs(model: &Model, vs: &VolumeSettings) -> Result<bool> {
    let (has_kz, odd) = kz_powers(model);
    if !has_kz {
        return Err(Error::Unsupported(format!(
            "model '{}' has no kz term, so it is two-dimensional: use the density per area \
             (observables::dos::LevelDensity) instead of a kz integral",
            model.name()
        )));
    }
    if vs.broadening.shape != LineShape::Gaussian {
        return Err(Error::Unsupported(
            "kz-integrated densities need a Gaussian line: a Lorentzian's tails make the \
             3D carrier density diverge with the kz limit; use a Gaussian line shape"
                .into(),
        ));
    }
    let (from, to) = vs.range;
    if !(from.is_finite() && to.is_finite() && to > from) {
        return Err(Error::BadNumber {
            name: "energy range".into(),
            value: to - from,
            fix: "give finite energies with upper > lower".into(),
        });
    }
    check_temperature(vs.temperature_k)?;
    if !(vs.tolerance.is_finite() && vs.tolerance > 0.0 && vs.tolerance < 1.0) {
        return Err(Error::BadNumber {
            name: "kz quadrature tolerance".into(),
            value: vs.tolerance,
            fix: "give a relative tolerance between 0 and 1, e.g. 1e-7".into(),
        });
    }
    Ok(odd)
}

/// The energies of the converged levels (ascending) at each of some kz points.
pub(super) type ConvergedAt<'a> = dyn Fn(&[f64]) -> Result<Vec<Vec<f64>>> + 'a;

/// The kz limit: the given one, or the first of 1/l_B, 2/l_B, 4/l_B, ... beyond which no
/// converged level enters the padded energy range (`lo`, `hi`), probed at k and 2k (and -k,
/// -2k for a model odd in kz).
pub(super) fn kz_limit(
    vs: &VolumeSettings,
    odd: bool,
    magnetic_length: f64,
    (lo, hi): (f64, f64),
    solve: &ConvergedAt,
) -> Result<f64> {
    match vs.kz_max {
        Some(k) if k.is_finite() && k > 0.0 => return Ok(k),
        Some(k) => {
            return Err(Error::BadNumber {
                name: "kz limit".into(),
                value: k,
                fix: "give a positive wave number, or let it be chosen".into(),
            })
        }
        None => {}
    }
    // `solve` gives the energies of the converged levels of each kz
    let clear = |s: &Vec<f64>| s.iter().all(|&e| e < lo || e > hi);
    let mut k = 1.0 / magnetic_length;
    for _ in 0..MAX_DOUBLINGS {
        let probe: Vec<f64> = if odd {
            vec![-k, k, -2.0 * k, 2.0 * k]
        } else {
            vec![k, 2.0 * k]
        };
        if solve(&probe)?.iter().all(clear) {
            return Ok(k);
        }
        k *= 2.0;
    }
    Err(Error::NotConverged {
        tolerance: vs.tolerance,
        detail: format!(
            "no kz limit up to {k:e} clears the energies {lo:e} to {hi:e} of levels; \
             narrow the energy range or give the kz limit"
        ),
    })
}

/// Largest changes of one grid halving on the check energies: of the DOS (`dg`, against its
/// largest value `gmax`) and of the carrier density (`dn`, against `nmax`).
pub(super) struct Change {
    pub(super) dg: f64,
    pub(super) gmax: f64,
    pub(super) dn: f64,
    pub(super) nmax: f64,
}

/// Running trapezoid sums of the DOS (`sg`) and the carrier density (`sn`) on
/// [`CHECK_ENERGIES`] energies across the range: sum_i c_i f_i(E), c_i = 1/2 at the ends;
/// halving the step adds the midpoints with weight 1, so each sheet is evaluated once.
pub(super) struct Trapezoid {
    check: Vec<f64>,
    pub(super) line: Line,
    sg: Vec<f64>,
    sn: Vec<f64>,
}

impl Trapezoid {
    pub(super) fn new(vs: &VolumeSettings, line: Line) -> Self {
        let (from, to) = vs.range;
        let check: Vec<f64> = (0..CHECK_ENERGIES)
            .map(|i| from + (to - from) * i as f64 / (CHECK_ENERGIES - 1) as f64)
            .collect();
        let n = check.len();
        Trapezoid {
            check,
            line,
            sg: vec![0.0; n],
            sn: vec![0.0; n],
        }
    }

    /// Sums of `sheets` (the ends weighted 1/2 when `ends`), added to `sg`, `sn`. In parallel
    /// over the check energies; each energy sums its sheets in order, so the result does not
    /// depend on the thread count.
    fn sums(&self, sheets: &[Sheet], ends: bool, sg: &mut [f64], sn: &mut [f64]) {
        let weight = |i: usize| {
            if ends && (i == 0 || i + 1 == sheets.len()) {
                0.5
            } else {
                1.0
            }
        };
        self.check
            .par_iter()
            .zip(sg.par_iter_mut().zip(sn.par_iter_mut()))
            .for_each(|(&e, (g, n))| {
                for (i, sh) in sheets.iter().enumerate() {
                    let c = weight(i);
                    *g += c * sh.lines(&self.line, e);
                    *n += c * sh.occupied(&self.line, e, 0.0);
                }
            });
    }

    /// Add the first grid.
    pub(super) fn add(&mut self, sheets: &[Sheet], ends: bool) {
        let (mut sg, mut sn) = (std::mem::take(&mut self.sg), std::mem::take(&mut self.sn));
        self.sums(sheets, ends, &mut sg, &mut sn);
        (self.sg, self.sn) = (sg, sn);
    }

    /// Add the midpoints `fresh` of a halving; `c_old`, `c_new` scale the sums before and after
    /// into densities. Returns the largest changes.
    pub(super) fn refine(&mut self, fresh: &[Sheet], c_old: f64, c_new: f64) -> Change {
        let n = self.check.len();
        let (mut mg, mut mn) = (vec![0.0; n], vec![0.0; n]);
        self.sums(fresh, false, &mut mg, &mut mn);
        let mut c = Change {
            dg: 0.0,
            gmax: 0.0,
            dn: 0.0,
            nmax: 0.0,
        };
        for k in 0..n {
            let (g1, g2) = (c_old * self.sg[k], c_new * (self.sg[k] + mg[k]));
            let (n1, n2) = (c_old * self.sn[k], c_new * (self.sn[k] + mn[k]));
            c.dg = c.dg.max((g1 - g2).abs());
            c.gmax = c.gmax.max(g2.abs());
            c.dn = c.dn.max((n1 - n2).abs());
            c.nmax = c.nmax.max(n2.abs());
            self.sg[k] += mg[k];
            self.sn[k] += mn[k];
        }
        c
    }
}

/// The grid after a halving: old points and sheets with the midpoints between them.
pub(super) fn interleave(
    kz: Vec<f64>,
    sheets: Vec<Sheet>,
    mids: &[f64],
    fresh: Vec<Sheet>,
) -> (Vec<f64>, Vec<Sheet>) {
    let mut k2 = Vec::with_capacity(kz.len() + mids.len());
    let mut s2 = Vec::with_capacity(kz.len() + mids.len());
    let mut fresh = fresh.into_iter();
    for (i, (k, sh)) in kz.into_iter().zip(sheets).enumerate() {
        k2.push(k);
        s2.push(sh);
        if i < mids.len() {
            k2.push(mids[i]);
            if let Some(f) = fresh.next() {
                s2.push(f);
            }
        }
    }
    (k2, s2)
}
