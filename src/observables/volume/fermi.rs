//! The Fermi level of a kz-integrated density at a fixed carrier density, at one field and
//! against the field.

use super::{VolumeDensity, VolumeSettings};
use crate::error::{Error, Result};
use crate::model::Model;
use crate::numeric::root::{illinois, Stop};
use crate::solve::Settings;
use rayon::prelude::*;
use serde::Serialize;

impl VolumeDensity {
    /// The chemical potential at which [`VolumeDensity::carrier_density`] equals `target`
    /// (1/(length unit)^3) inside the range (the density is non-decreasing in mu): at T = 0 by
    /// Newton steps on n3 with its derivative g3 kept inside a shrinking bracket (bisection
    /// when a step would leave it), at T > 0 by the Illinois method; in a gap at T = 0, the
    /// middle of the interval where the density is flat.
    ///
    /// # Complexity
    /// O(sheets x levels within reach) per evaluation of n3; at T = 0 a handful of
    /// evaluations near a simple root (quadratic convergence), about 100 in a gap.
    ///
    /// # Errors
    /// [`Error::BadNumber`] when the target is not finite or not reached inside the range
    /// (widen the range).
    pub fn fermi_level(&self, target: f64) -> Result<f64> {
        let (lo, hi) = self.range;
        let (n_lo, n_hi) = (self.carrier_density(lo), self.carrier_density(hi));
        if !target.is_finite() || target < n_lo || target > n_hi {
            return Err(Error::BadNumber {
                name: "carrier density per volume".into(),
                value: target,
                fix: format!(
                    "the energies {lo} to {hi} hold densities {n_lo:e} to {n_hi:e} per length \
                     unit cubed; widen the energy range or change the density"
                ),
            });
        }
        if self.thermal_energy > 0.0 {
            // n(mu) is smooth and strictly increasing: regula falsi with the Illinois
            // modification (superlinear; every evaluation costs a thermal convolution per level)
            let f = |m: f64| Ok::<_, Error>(self.carrier_density(m) - target);
            let stop = Stop {
                rel_width: 2e-15,
                max_steps: 200,
                small: 1e-13 * (n_hi - n_lo).abs().max(target.abs()),
            };
            return illinois(f, (lo, n_lo - target), (hi, n_hi - target), stop);
        }
        // T = 0: n(mu) is smooth and non-decreasing (Gaussian lines), with derivative g3(mu);
        // Newton steps kept inside the bracket [a, b] with n(a) <= target <= n(b) (a bisection
        // step when a Newton step would leave it or g3 = 0). A root with g3 > 0 is the Fermi
        // level; n is flat only where no level is within reach (a gap), and there the middle of
        // the flat interval is wanted, which the two bisections of `flat_middle` give.
        let narrow = |a: f64, b: f64| 1e-15 * (a.abs() + b.abs()).max(self.width);
        let (mut a, mut b) = (lo, hi);
        let mut x = 0.5 * (lo + hi);
        for _ in 0..200 {
            let (n, g) = self.density_and_dos(x);
            let f = n - target;
            if f < 0.0 {
                a = x;
            } else if f > 0.0 {
                b = x;
            } else if g > 0.0 {
                return Ok(x);
            } else {
                break;
            }
            if g <= 0.0 {
                // no level within reach here: possibly a flat stretch; bisect towards the
                // root and let the bisections below settle a true gap
                if b - a <= narrow(a, b) {
                    break;
                }
                x = 0.5 * (a + b);
                continue;
            }
            let step = f / g;
            let newton = x - step;
            if step.abs() <= narrow(x, x) && newton >= a && newton <= b {
                return Ok(newton);
            }
            x = if newton > a && newton < b {
                newton
            } else {
                0.5 * (a + b)
            };
            if b - a <= narrow(a, b) {
                return Ok(x);
            }
        }
        Ok(self.flat_middle(target, (a, b)))
    }

    /// The middle of the interval inside `(a, b)` where the T = 0 carrier density equals
    /// `target` (a gap, where it is flat): the lowest mu with n >= target and the highest with
    /// n <= target, each by bisection to 1e-15 of the energies (or of the width).
    fn flat_middle(&self, target: f64, (lo, hi): (f64, f64)) -> f64 {
        let bisect = |above: bool| {
            let (mut a, mut b) = (lo, hi);
            for _ in 0..200 {
                let m = 0.5 * (a + b);
                let n = self.carrier_density(m);
                let go_left = if above { n >= target } else { n > target };
                if go_left {
                    b = m;
                } else {
                    a = m;
                }
                if b - a <= 1e-15 * (a.abs() + b.abs()).max(self.width) {
                    break;
                }
            }
            0.5 * (a + b)
        };
        0.5 * (bisect(true) + bisect(false))
    }
}

/// The 3D Fermi level at fixed carrier density against the field: one point per field.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VolumeFermiPoint {
    /// Field in the model's field unit.
    pub field: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// DOS per volume there, 1/(energy unit x length unit^3).
    pub dos_at_fermi: f64,
    /// kz points the integral needed at this field.
    pub kz_points: usize,
}

/// The Fermi level for the carrier density `target` (1/(length unit)^3, from neutrality) at
/// each of `fields`: the quantum oscillations of a 3D model at fixed density. Every field gets
/// its own [`VolumeDensity`] over `vs.range` (the broadening's field scaling applies), so the
/// Fermi level must stay inside that range at every field.
///
/// # Errors
/// Those of [`VolumeDensity::compute`] and [`VolumeDensity::fermi_level`] at the first field
/// that fails; the message names the field.
///
/// # Complexity
/// One [`VolumeDensity::compute`] per field, in parallel over the fields and, within each, over
/// its kz points and check energies.
pub fn fermi_sweep(
    model: &Model,
    fields: &[f64],
    settings: &Settings,
    vs: &VolumeSettings,
    target: f64,
) -> Result<Vec<VolumeFermiPoint>> {
    fermi_sweep_with(model, fields, settings, vs, target, &|| ())
}

/// [`fermi_sweep`], calling `tick` once per finished field (a front end draws its progress
/// from it).
///
/// # Errors
/// As [`fermi_sweep`].
pub fn fermi_sweep_with(
    model: &Model,
    fields: &[f64],
    settings: &Settings,
    vs: &VolumeSettings,
    target: f64,
    tick: &(dyn Fn() + Sync),
) -> Result<Vec<VolumeFermiPoint>> {
    // in parallel over the fields (each also solves its kz points in parallel); the results
    // are kept in field order and the first failing field in that order is reported
    let points: Vec<Result<VolumeFermiPoint>> = fields
        .par_iter()
        .map(|&field| {
            let at = |e: Error| at_field(e, field);
            let v = VolumeDensity::compute(model, field, settings, vs).map_err(at)?;
            let ef = v.fermi_level(target).map_err(at)?;
            tick();
            Ok(VolumeFermiPoint {
                field,
                fermi_energy: ef,
                dos_at_fermi: v.dos(ef),
                kz_points: v.kz.len(),
            })
        })
        .collect();
    points.into_iter().collect()
}

/// The same error, naming the field of the sweep point where it happened.
fn at_field(e: Error, field: f64) -> Error {
    match e {
        Error::BadNumber { name, value, fix } => Error::BadNumber {
            name: format!("{name} at field {field}"),
            value,
            fix,
        },
        Error::NotConverged { tolerance, detail } => Error::NotConverged {
            tolerance,
            detail: format!("at field {field}: {detail}"),
        },
        Error::Numerical { stage, detail } => Error::Numerical {
            stage: format!("{stage} at field {field}"),
            detail,
        },
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::super::{VolumeDensity, VolumeSettings};
    use crate::models::{dirac, RelativisticParams};
    use crate::observables::dos::Broadening;
    use crate::solve::Settings;

    #[test]
    fn newton_fermi_level_is_the_bisection_middle_in_bands_and_in_a_gap() {
        // Oracle: `flat_middle` over the whole range, the two bisections that were the whole
        // T = 0 search before the Newton steps. 3+1 Dirac in natural units (invented field
        // 0.05 B_c, width 0.005 m c^2): no level lies below 0 in the range (Johnson &
        // Lippmann, Phys. Rev. 76, 828 (1949)), so the density is flat from -0.05 up to the
        // reach (9 widths) of the first level, and rises smoothly above.
        let m = dirac(RelativisticParams::default()).unwrap();
        let vs = VolumeSettings::new(Broadening::gaussian(0.005), (-0.05, 0.3));
        let v = VolumeDensity::compute(&m, 0.05, &Settings::with_cutoff(80), &vs).unwrap();
        let (bottom, top) = (v.carrier_density(-0.05), v.carrier_density(0.3));
        assert!(top > bottom);
        for frac in [1e-4, 0.1, 0.37, 0.9, 1.0 - 1e-9] {
            let target = bottom + frac * (top - bottom);
            let newton = v.fermi_level(target).unwrap();
            let middle = v.flat_middle(target, v.range);
            assert!(
                (newton - middle).abs() <= 1e-9 * v.width,
                "target {frac} of the range: Newton {newton} vs bisection {middle}"
            );
            assert!((v.carrier_density(newton) / target - 1.0).abs() < 1e-9);
        }
        // the density at the bottom: the middle of the flat stretch below the first level
        let gap = v.fermi_level(bottom).unwrap();
        let middle = v.flat_middle(bottom, v.range);
        assert!((gap - middle).abs() <= 1e-9 * v.width, "{gap} vs {middle}");
        assert!(gap > -0.05 && gap < -0.045 + 1e-12, "{gap}");
    }
}
