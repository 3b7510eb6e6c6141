//! Constant-energy contours E_b(k) = E of one band, found along rays from a centre.
//!
//! # Method
//! From a centre k0 (usually the band extremum) each of M rays at angles theta_j = 2 pi j / M
//! is scanned at S equally spaced radii out to k_max (doubled, up to 40 times, while the ray
//! meets no crossing), and every sign change of E_b - E is refined by bracketed regula falsi (Illinois)
//! to a few ulp. A contour is star-shaped around k0: the i-th crossing of every ray
//! makes the i-th contour (innermost first); rays with different crossing counts are an error
//! that names the fix (another centre). Crossings closer together than k_max / S can be missed.
//!
//! # Area
//! A = (1/2) integral r(theta)^2 dtheta by the trapezoid rule over the M angles: exact for a
//! trigonometric polynomial r^2 of degree below M, so it converges exponentially for a smooth
//! contour. [`Contour::shoelace_area`] (the polygon through the crossing points, error
//! O(1/M^2)) is the cross-check.
//!
//! # Cost
//! about M (S + 10) band evaluations (d x d eigenvalues) per contour.

use super::bands::Bands;
use crate::error::{Error, Result};
use crate::numeric::root::{illinois, Stop};
use std::f64::consts::PI;

/// Radial samples per ray before bisection.
pub const RADIAL_SAMPLES: usize = 32;

/// Where to look for contours of one band.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Search {
    /// Band index (0 = lowest).
    pub band: usize,
    /// Centre (kx, ky) of the rays, 1/length.
    pub center: (f64, f64),
    /// Initial scan radius (doubled per ray while no crossing is met), 1/length.
    pub k_max: f64,
}

/// One closed contour, star-shaped around its centre, counter-clockwise.
#[derive(Debug, Clone, PartialEq)]
pub struct Contour {
    /// Energy of the contour.
    pub energy: f64,
    /// Centre (kx, ky).
    pub center: (f64, f64),
    /// Radius r(theta_j) at theta_j = 2 pi j / M.
    pub radii: Vec<f64>,
}

impl Contour {
    /// Number of rays M.
    pub fn rays(&self) -> usize {
        self.radii.len()
    }

    /// The points (kx, ky) in counter-clockwise order.
    pub fn points(&self) -> Vec<(f64, f64)> {
        let m = self.radii.len() as f64;
        self.radii
            .iter()
            .enumerate()
            .map(|(j, r)| {
                let t = 2.0 * PI * j as f64 / m;
                (self.center.0 + r * t.cos(), self.center.1 + r * t.sin())
            })
            .collect()
    }

    /// Enclosed area A = (1/2) sum_j r_j^2 (2 pi / M) (trapezoid rule in theta), 1/length^2.
    pub fn area(&self) -> f64 {
        let m = self.radii.len() as f64;
        0.5 * self.radii.iter().map(|r| r * r).sum::<f64>() * 2.0 * PI / m
    }

    /// Area of the polygon through the points (shoelace formula), 1/length^2.
    pub fn shoelace_area(&self) -> f64 {
        let p = self.points();
        let n = p.len();
        let twice: f64 = (0..n)
            .map(|i| {
                let (a, b) = (p[i], p[(i + 1) % n]);
                a.0 * b.1 - b.0 * a.1
            })
            .sum();
        0.5 * twice.abs()
    }
}

/// The crossings of E_b(k0 + r e) = `energy` along the unit direction `e`, ascending.
fn ray_crossings(bands: &Bands, s: &Search, energy: f64, dir: (f64, f64)) -> Result<Vec<f64>> {
    let f = |r: f64| -> Result<f64> {
        Ok(bands.energy(s.band, s.center.0 + r * dir.0, s.center.1 + r * dir.1)? - energy)
    };
    let mut k_max = s.k_max;
    for _ in 0..40 {
        let mut out = Vec::new();
        let mut prev_r = 0.0;
        let mut prev_f = f(0.0)?;
        for j in 1..=RADIAL_SAMPLES {
            let r = k_max * j as f64 / RADIAL_SAMPLES as f64;
            let fr = f(r)?;
            if (prev_f < 0.0) != (fr < 0.0) {
                out.push(bisect(&f, prev_r, r, prev_f)?);
            }
            prev_r = r;
            prev_f = fr;
        }
        if !out.is_empty() {
            return Ok(out);
        }
        k_max *= 2.0;
    }
    Err(Error::Numerical {
        stage: "constant-energy contour".into(),
        detail: format!(
            "band {} never reaches energy {energy} along a ray from ({}, {}) out to {k_max:e}; \
             pick an energy inside the band",
            s.band, s.center.0, s.center.1
        ),
    })
}

/// Root of a sign change of `f` on [a, b] (fa = f(a)) by the Illinois variant of regula falsi
/// ([`crate::numeric::root::illinois`]), bracketing kept, down to a relative width of 4 ulp or
/// 100 steps.
fn bisect(f: &impl Fn(f64) -> Result<f64>, a: f64, b: f64, fa: f64) -> Result<f64> {
    let fb = f(b)?;
    let stop = Stop {
        rel_width: 4.0 * f64::EPSILON,
        max_steps: 100,
        small: 0.0,
    };
    illinois(f, (a, fa), (b, fb), stop)
}

/// All contours of `s.band` at `energy` with `rays` rays, innermost first.
///
/// # Errors
/// [`Error::Numerical`] when a ray meets no crossing or rays disagree on the number of
/// crossings (the contour is not star-shaped around the centre); [`Error::BadNumber`] for fewer
/// than 8 rays or a non-positive k_max.
pub fn contours(bands: &Bands, s: &Search, energy: f64, rays: usize) -> Result<Vec<Contour>> {
    if rays < 8 {
        return Err(Error::BadNumber {
            name: "rays".into(),
            value: rays as f64,
            fix: "use at least 8 rays per contour".into(),
        });
    }
    if !(s.k_max.is_finite() && s.k_max > 0.0) {
        return Err(Error::BadNumber {
            name: "k_max".into(),
            value: s.k_max,
            fix: "give a positive scan radius in 1/length".into(),
        });
    }
    let mut per_ray: Vec<Vec<f64>> = Vec::with_capacity(rays);
    for j in 0..rays {
        let t = 2.0 * PI * j as f64 / rays as f64;
        per_ray.push(ray_crossings(bands, s, energy, (t.cos(), t.sin()))?);
    }
    let count = per_ray[0].len();
    if let Some((j, r)) = per_ray.iter().enumerate().find(|(_, r)| r.len() != count) {
        return Err(Error::Numerical {
            stage: "constant-energy contour".into(),
            detail: format!(
                "the contour of band {} at energy {energy} is not star-shaped around ({}, {}): \
                 {count} crossings on ray 0, {} on ray {j}; move the centre (--center) inside \
                 the pocket",
                s.band,
                s.center.0,
                s.center.1,
                r.len()
            ),
        });
    }
    Ok((0..count)
        .map(|i| Contour {
            energy,
            center: s.center,
            radii: per_ray.iter().map(|r| r[i]).collect(),
        })
        .collect())
}
