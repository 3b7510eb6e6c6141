//! One orbit: a contour refined until its area and Berry phase are stable, and the cyclotron
//! mass from the area's energy derivative.
//!
//! # Refinement
//! The number of rays M starts at [`Resolution::start_rays`] and doubles until two successive
//! resolutions agree to `area_tol` (relative) in area and `phase_tol` (radians) in Berry phase;
//! the last differences are reported as the error estimates. Above [`Resolution::max_rays`]
//! the computation fails with [`Error::NotConverged`] naming what was reached.
//!
//! # Cyclotron mass
//! m* = (hbar^2 / 2 pi) dA/dE (Ashcroft & Mermin, Solid State Physics, ch. 14; from memory),
//! with dA/dE by Richardson-extrapolated central differences (error O(h^4)); in units of the
//! electron mass (lab units: hbar^2/m_e = 2 x 38.0998 meV nm^2) or of the model's mass m
//! (natural units, hbar = m = c = 1). Negative for a hole-like orbit (area grows as E falls).

use super::bands::Bands;
use super::berry::wilson_loop;
use super::contour::{contours, Contour, Search};
use crate::error::{Error, Result};
use crate::units::{Units, HBAR2_OVER_2ME_MEV_NM2};
use std::f64::consts::PI;

/// Resolution and tolerances of an orbit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resolution {
    /// Rays of the first try.
    pub start_rays: usize,
    /// Most rays before giving up.
    pub max_rays: usize,
    /// Relative tolerance on the area.
    pub area_tol: f64,
    /// Absolute tolerance on the Berry phase, radians.
    pub phase_tol: f64,
}

impl Default for Resolution {
    /// 32 rays at first, at most 16384; area to 1e-9 relative, phase to 1e-6 rad.
    fn default() -> Self {
        Resolution {
            start_rays: 32,
            max_rays: 16384,
            area_tol: 1e-9,
            phase_tol: 1e-6,
        }
    }
}

/// A resolved orbit at one energy.
#[derive(Debug, Clone, PartialEq)]
pub struct Orbit {
    /// Energy.
    pub energy: f64,
    /// Which contour (0 = innermost around the centre).
    pub index: usize,
    /// The contour at the final resolution.
    pub contour: Contour,
    /// Enclosed area, 1/length^2.
    pub area: f64,
    /// Estimated error of `area` (difference to the previous resolution).
    pub area_error: f64,
    /// Berry phase of the counter-clockwise contour, [-pi, pi).
    pub berry_phase: f64,
    /// Estimated error of `berry_phase`.
    pub phase_error: f64,
}

fn one(
    bands: &Bands,
    s: &Search,
    energy: f64,
    index: usize,
    rays: usize,
) -> Result<(Contour, f64)> {
    let all = contours(bands, s, energy, rays)?;
    let count = all.len();
    let c = all.into_iter().nth(index).ok_or_else(|| Error::BadNumber {
        name: "contour index".into(),
        value: index as f64,
        fix: format!("band {} has {count} contour(s) at energy {energy}", s.band),
    })?;
    let w = wilson_loop(bands, s.band, &c)?;
    Ok((c, w.phase))
}

/// Wrapped difference of two phases, in [0, pi].
fn phase_diff(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(2.0 * PI);
    d.min(2.0 * PI - d)
}

/// The orbit of contour `index` of `s.band` at `energy`, refined per `res`.
///
/// # Errors
/// As [`contours`] and [`wilson_loop`]; [`Error::NotConverged`] when `res.max_rays` is reached.
pub fn orbit(
    bands: &Bands,
    s: &Search,
    energy: f64,
    index: usize,
    res: &Resolution,
) -> Result<Orbit> {
    let mut rays = res.start_rays.max(8);
    let (mut c, mut phase) = one(bands, s, energy, index, rays)?;
    loop {
        if rays * 2 > res.max_rays {
            return Err(Error::NotConverged {
                tolerance: res.area_tol,
                detail: format!(
                    "the orbit at energy {energy} did not settle with {rays} rays \
                     (area tolerance {:e}, phase tolerance {:e} rad); loosen the tolerances",
                    res.area_tol, res.phase_tol
                ),
            });
        }
        rays *= 2;
        let (c2, phase2) = one(bands, s, energy, index, rays)?;
        let (a1, a2) = (c.area(), c2.area());
        let da = (a2 - a1).abs();
        let dp = phase_diff(phase2, phase);
        c = c2;
        phase = phase2;
        if da <= res.area_tol * a2.abs() && dp <= res.phase_tol {
            return Ok(Orbit {
                energy,
                index,
                area: a2,
                area_error: da,
                berry_phase: phase,
                phase_error: dp,
                contour: c,
            });
        }
    }
}

/// dA/dE of contour `index` at `energy` with step `h`: Richardson extrapolation of central
/// differences, (4 D(h/2) - D(h)) / 3, and its error estimate |D(h/2) - D(h)| / 3.
///
/// # Errors
/// As [`contours`] (the contour must exist at energy ± h).
pub fn area_slope(
    bands: &Bands,
    s: &Search,
    energy: f64,
    index: usize,
    h: f64,
    rays: usize,
) -> Result<(f64, f64)> {
    let area = |e: f64| -> Result<f64> {
        let all = contours(bands, s, e, rays)?;
        all.get(index)
            .map(Contour::area)
            .ok_or_else(|| Error::Numerical {
                stage: "cyclotron mass".into(),
                detail: format!(
                    "contour {index} of band {} disappears near energy {e}; use an energy further \
                 from the band edge",
                    s.band
                ),
            })
    };
    let d = |h: f64| -> Result<f64> { Ok((area(energy + h)? - area(energy - h)?) / (2.0 * h)) };
    let (d1, d2) = (d(h)?, d(0.5 * h)?);
    Ok(((4.0 * d2 - d1) / 3.0, (d2 - d1).abs() / 3.0))
}

/// Cyclotron mass m* = (hbar^2 / 2 pi) dA/dE in units of m_e (lab) or the model mass (natural).
pub fn cyclotron_mass(units: Units, da_de: f64) -> f64 {
    match units {
        Units::Lab => 2.0 * HBAR2_OVER_2ME_MEV_NM2 * da_de / (2.0 * PI),
        Units::Natural => da_de / (2.0 * PI),
    }
}

/// The energy at which contour `index` encloses `target` area (e.g. the Fermi energy of a
/// density n: A = 4 pi^2 n / g for g spin or valley copies), by bisection between the band edge
/// `edge` and `edge + direction * span` (the area must grow away from the edge), with `rays`
/// rays per contour. Returns the energy to 1e-12 relative to `span`.
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive target or span, or a target beyond the area at
/// `edge + direction * span`; as [`contours`].
#[allow(clippy::too_many_arguments)]
pub fn energy_for_area(
    bands: &Bands,
    s: &Search,
    index: usize,
    target: f64,
    edge: f64,
    direction: f64,
    span: f64,
    rays: usize,
) -> Result<f64> {
    if !(target > 0.0 && target.is_finite() && span > 0.0 && span.is_finite()) {
        return Err(Error::BadNumber {
            name: "target area".into(),
            value: target,
            fix: "give a positive density and a positive energy span".into(),
        });
    }
    let area = |t: f64| -> Result<f64> {
        let all = contours(bands, s, edge + direction * t, rays)?;
        Ok(all.get(index).map(Contour::area).unwrap_or(0.0))
    };
    if area(span)? < target {
        return Err(Error::BadNumber {
            name: "density".into(),
            value: target,
            fix: format!(
                "the orbit would lie more than {span:e} from the band edge; give a smaller \
                 density or a Fermi energy"
            ),
        });
    }
    let (mut lo, mut hi) = (0.0, span);
    while hi - lo > 1e-12 * span {
        let mid = 0.5 * (lo + hi);
        if area(mid)? < target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(edge + direction * 0.5 * (lo + hi))
}
