//! Many (B, kz) points at once: rayon-parallel over points, results in input order and identical
//! to a serial run.
//!
//! # Complexity
//! The sum of the per-point costs (see [`crate::solve`]); on p cores the points run p at a time.
//! Each point's own sector loop is parallel too, and rayon balances the two levels.

use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::solve::Settings;
use rayon::prelude::*;

/// Grid spacing of a sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Spacing {
    /// Equal steps.
    Linear,
    /// Equal ratios (both ends must have the same sign and be non-zero).
    Log,
}

/// `count` values from `start` to `stop` inclusive.
///
/// # Formula
/// Linear: x_i = start + i (stop - start)/(count - 1); Log: x_i = start (stop/start)^(i/(count-1)).
///
/// # Errors
/// [`crate::Error::BadNumber`] for count 0, non-finite ends, or a log grid through zero.
///
/// # Examples
/// ```
/// use ladderfan::sweep::{grid, Spacing};
/// let g = grid(1.0, 100.0, 3, Spacing::Log)?;
/// assert!((g[1] - 10.0).abs() < 1e-12);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn grid(start: f64, stop: f64, count: usize, spacing: Spacing) -> Result<Vec<f64>> {
    if count == 0 || !start.is_finite() || !stop.is_finite() {
        return Err(crate::Error::BadNumber {
            name: "grid".into(),
            value: count as f64,
            fix: "give finite ends and at least one point".into(),
        });
    }
    if count == 1 {
        return Ok(vec![start]);
    }
    let t = |i: usize| i as f64 / (count - 1) as f64;
    match spacing {
        Spacing::Linear => Ok((0..count).map(|i| start + t(i) * (stop - start)).collect()),
        Spacing::Log => {
            if start == 0.0 || stop == 0.0 || start.signum() != stop.signum() {
                return Err(crate::Error::BadNumber {
                    name: "log grid end".into(),
                    value: if start == 0.0 { start } else { stop },
                    fix: "a logarithmic grid needs two non-zero ends of the same sign".into(),
                });
            }
            Ok((0..count)
                .map(|i| start * (stop / start).powf(t(i)))
                .collect())
        }
    }
}

/// Solve every point, in parallel, returning the spectra in the order of `points`.
///
/// # Errors
/// The first error of any point (in input order).
///
/// # Examples
/// ```
/// use ladderfan::{models, sweep, FieldPoint, Settings};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let pts: Vec<FieldPoint> = [1.0, 2.0].iter().map(|&b| FieldPoint::field(b)).collect();
/// let out = sweep::run(&m, &pts, &Settings::with_cutoff(30))?;
/// // the lowest level doubles with the field: hbar omega_c / 2 is linear in B
/// assert!((out[1].levels[0].energy / out[0].levels[0].energy - 2.0).abs() < 1e-12);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn run(model: &Model, points: &[FieldPoint], settings: &Settings) -> Result<Vec<Spectrum>> {
    run_with(model, points, settings, &|| {})
}

/// Like [`run`], calling `tick` once after each point (for progress bars).
///
/// # Errors
/// As [`run`].
pub fn run_with(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    tick: &(dyn Fn() + Sync),
) -> Result<Vec<Spectrum>> {
    points
        .par_iter()
        .map(|&p| {
            let r = Spectrum::compute(model, p, settings);
            tick();
            r
        })
        .collect()
}
