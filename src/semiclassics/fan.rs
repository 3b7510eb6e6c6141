//! The fan an experiment would fit: fields where exact levels cross a fixed Fermi energy, the
//! least-squares line of the Landau index against 1/B, and Onsager's predictions for it.
//!
//! # Formula
//! Onsager's rule with the Berry phase gives, for the level of index n crossing E_F at B_n,
//! n = F / B_n - 1/2 + gamma / 2 pi with F = hbar A(E_F) / (2 pi |q| e) (lab units: tesla;
//! natural units: A / (2 pi |q|) in B_c). The fitted slope is the frequency F, the intercept
//! beta = gamma/2pi - 1/2 (modulo 1): -1/2 for gamma = 0, 0 for gamma = pi (common practice in
//! quantum-oscillation analyses).
//!
//! The index of a crossing is the position of the crossing level counted from the band edge
//! (0 = the level nearest the edge; a level at the edge, within 1e-6 |E_F - edge|, counts).

use crate::error::{Error, Result};
use crate::model::Model;
use crate::numeric::root::{illinois, Stop};
use crate::problem::Settings;
use crate::units::{Units, ELEMENTARY_CHARGE, HBAR};
use crate::{FieldPoint, Spectrum};
use std::f64::consts::PI;

/// Onsager frequency F = hbar A / (2 pi |q| e): tesla for lab units (A in nm^-2), B_c for
/// natural units (A in (m c / hbar)^2).
pub fn onsager_frequency(units: Units, area: f64, charge: f64) -> f64 {
    match units {
        Units::Lab => HBAR * area * 1e18 / (2.0 * PI * charge.abs() * ELEMENTARY_CHARGE),
        Units::Natural => area / (2.0 * PI * charge.abs()),
    }
}

/// The exact levels of `model` at (field, kz), absolute energies, ascending, converged only.
///
/// # Errors
/// As [`Spectrum::compute`]; [`Error::NotConverged`] when a genuine but unconverged level lies
/// in `window` (raise the cutoff).
pub fn exact_levels(
    model: &Model,
    field: f64,
    kz: f64,
    cutoff: usize,
    window: (f64, f64),
) -> Result<Vec<f64>> {
    let settings = Settings::with_cutoff(cutoff);
    let s = Spectrum::compute(model, FieldPoint { field, kz }, &settings)?;
    let mut out = Vec::new();
    for l in &s.levels {
        let e = l.energy + s.reference_energy;
        let inside = e >= window.0 && e <= window.1;
        if l.is_converged() {
            out.push(e);
        } else if l.is_genuine() && inside {
            return Err(Error::NotConverged {
                tolerance: s.tolerance,
                detail: format!(
                    "a level at {e} near the Fermi energy is not converged with {cutoff} orbitals \
                     at field {field}; raise the cutoff"
                ),
            });
        }
    }
    Ok(out)
}

/// A band window of the exact spectrum: the levels between the band edge and the Fermi energy.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FanSetup {
    /// Band edge energy.
    pub edge: f64,
    /// +1 when the band rises from the edge (electron-like), -1 when it falls.
    pub direction: f64,
    /// Fermi energy.
    pub fermi_energy: f64,
    /// Wave number kz.
    pub kz: f64,
    /// Orbital cutoff of the exact solves.
    pub cutoff: usize,
}

impl FanSetup {
    /// Distances d = direction (E - edge) of the exact levels with d >= -tol, ascending.
    fn distances_from_edge(&self, model: &Model, field: f64) -> Result<Vec<f64>> {
        let tol = 1e-6 * (self.fermi_energy - self.edge).abs();
        let (lo, hi) = if self.direction > 0.0 {
            (self.edge - tol, self.fermi_energy)
        } else {
            (self.fermi_energy, self.edge + tol)
        };
        let levels = exact_levels(model, field, self.kz, self.cutoff, (lo, hi))?;
        let mut d: Vec<f64> = levels
            .iter()
            .map(|e| self.direction * (e - self.edge))
            .filter(|&d| d >= -tol)
            .collect();
        d.sort_by(f64::total_cmp);
        Ok(d)
    }

    /// Number of levels between the edge and E_F at `field`.
    fn count(&self, model: &Model, field: f64) -> Result<usize> {
        let df = self.direction * (self.fermi_energy - self.edge);
        Ok(self
            .distances_from_edge(model, field)?
            .iter()
            .filter(|&&d| d < df)
            .count())
    }
}

/// One crossing of an exact level with the Fermi energy.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Index of the level counted from the band edge.
    pub index: usize,
    /// Field of the crossing (sign of the fields given).
    pub field: f64,
}

/// The crossings of the exact levels with E_F for |B| in [b_min, b_max], found on `samples`
/// points uniform in 1/B and refined by regula falsi on the level energy.
///
/// # Errors
/// [`Error::BadNumber`] for a bad field range or fewer than 4 samples; as [`exact_levels`].
pub fn crossings(
    model: &Model,
    setup: &FanSetup,
    b_min: f64,
    b_max: f64,
    samples: usize,
) -> Result<Vec<Crossing>> {
    if !(b_min.is_finite() && b_max.is_finite() && b_min.abs() > 0.0 && b_max.abs() > b_min.abs())
        || b_min * b_max < 0.0
        || samples < 4
    {
        return Err(Error::BadNumber {
            name: "fan field range".into(),
            value: b_min,
            fix: "give 0 < |B_min| < |B_max| of one sign and at least 4 samples".into(),
        });
    }
    let (x0, x1) = (1.0 / b_max, 1.0 / b_min);
    let xs: Vec<f64> = (0..samples)
        .map(|j| x0 + (x1 - x0) * j as f64 / (samples - 1) as f64)
        .collect();
    let mut out = Vec::new();
    let mut prev = setup.count(model, 1.0 / xs[0])?;
    for w in xs.windows(2) {
        let now = setup.count(model, 1.0 / w[1])?;
        for k in prev..now {
            out.push(Crossing {
                index: k,
                field: 1.0 / refine(model, setup, k, w[0], w[1])?,
            });
        }
        prev = now;
    }
    Ok(out)
}

/// x = 1/B in [xa, xb] where level k (from the edge) sits at E_F.
fn refine(model: &Model, setup: &FanSetup, k: usize, xa: f64, xb: f64) -> Result<f64> {
    let df = setup.direction * (setup.fermi_energy - setup.edge);
    let h = |x: f64| -> Result<f64> {
        let d = setup.distances_from_edge(model, 1.0 / x)?;
        d.get(k).map(|v| v - df).ok_or_else(|| Error::Numerical {
            stage: "fan crossing".into(),
            detail: format!(
                "level {k} from the band edge is missing at field {}",
                1.0 / x
            ),
        })
    };
    let (fa, fb) = (h(xa)?, h(xb)?);
    let stop = Stop {
        rel_width: 1e-12,
        max_steps: 40,
        small: 0.0,
    };
    illinois(h, (xa, fa), (xb, fb), stop)
}

/// A least-squares line y = slope x + intercept with standard errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineFit {
    /// Slope.
    pub slope: f64,
    /// Standard error of the slope.
    pub slope_error: f64,
    /// Intercept at x = 0.
    pub intercept: f64,
    /// Standard error of the intercept.
    pub intercept_error: f64,
    /// Root-mean-square residual.
    pub rms_residual: f64,
    /// Number of points.
    pub points: usize,
}

/// Ordinary least squares of `y` on `x`.
///
/// # Formula
/// slope = S_xy / S_xx, intercept = mean(y) - slope mean(x); with s^2 = SSR / (N - 2):
/// se(slope) = s / sqrt(S_xx), se(intercept) = s sqrt(1/N + mean(x)^2 / S_xx)
/// (standard regression formulas, common practice).
///
/// # Errors
/// [`Error::BadNumber`] for fewer than 3 points, unequal lengths or all x equal.
pub fn fit_line(x: &[f64], y: &[f64]) -> Result<LineFit> {
    let n = x.len();
    if n < 3 || y.len() != n {
        return Err(Error::BadNumber {
            name: "fit points".into(),
            value: n as f64,
            fix: "the fan fit needs at least 3 crossings; widen the field range".into(),
        });
    }
    let nf = n as f64;
    let mx = x.iter().sum::<f64>() / nf;
    let my = y.iter().sum::<f64>() / nf;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    if sxx <= 0.0 {
        return Err(Error::BadNumber {
            name: "fit spread".into(),
            value: sxx,
            fix: "the crossings sit at one 1/B; widen the field range".into(),
        });
    }
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let ssr: f64 = x
        .iter()
        .zip(y)
        .map(|(a, b)| (b - slope * a - intercept).powi(2))
        .sum();
    let s = (ssr / (nf - 2.0)).sqrt();
    Ok(LineFit {
        slope,
        slope_error: s / sxx.sqrt(),
        intercept,
        intercept_error: s * (1.0 / nf + mx * mx / sxx).sqrt(),
        rms_residual: (ssr / nf).sqrt(),
        points: n,
    })
}

/// Fit index against 1/|B| over the crossings with index >= `min_index`.
///
/// # Errors
/// As [`fit_line`].
pub fn fit_fan(crossings: &[Crossing], min_index: usize) -> Result<LineFit> {
    let (x, y): (Vec<f64>, Vec<f64>) = crossings
        .iter()
        .filter(|c| c.index >= min_index)
        .map(|c| (1.0 / c.field.abs(), c.index as f64))
        .unzip();
    fit_line(&x, &y)
}

/// Onsager's intercept gamma/2pi - 1/2, taken modulo 1 to the representative nearest `near`.
pub fn predicted_intercept(berry_phase: f64, near: f64) -> f64 {
    let b = berry_phase / (2.0 * PI) - 0.5;
    b + (near - b).round()
}
