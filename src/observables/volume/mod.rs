//! Density of states, carrier density and Fermi level of a 3D model per unit volume: the kz
//! sheets of [`super::dos`] integrated over kz.
//!
//! # Definitions
//! A 3D model in a field along z has, at each kz, Landau levels E_l(kz) holding g |qB|/h
//! states per unit area (see [`super::dos`]). Per unit volume,
//!
//! g3(E) = g |qB|/h int dkz/(2 pi) sum_l L(E - E_l(kz); w),
//!
//! n3(mu) = g |qB|/h int dkz/(2 pi) sum_l (o_l(mu) - theta(E_cnp - E_l(kz))),
//!
//! with the line L, the occupation o_l (zero or finite temperature) and the neutrality energy
//! E_cnp of [`super::filling`] (the theta term is absent for a band that is empty at
//! neutrality). Only converged levels count. Every sheet at |kz| beyond the integration limit
//! K must contribute nothing: K is chosen so that no converged level of the sheets at ±K, nor
//! at ±2K, lies within the reach of the line (9 widths) and 40 k_B T of the energies asked
//! for. This assumes the levels move away monotonically beyond K (true for every model whose
//! kz dependence is dominated at large |kz| by its highest power of kz, as in all built-in
//! models); a band that turns back into the window beyond 2K would be missed.
//!
//! # Method
//! The integrand is smooth in kz (the lines have width w), so the trapezoidal rule on a
//! uniform grid converges faster than any power of the step once the step resolves
//! w / |dE/dkz|. The grid starts at 65 points on [-K, K] ([0, K] when the model has no odd
//! power of kz, whose spectrum is then even in kz) and is halved until two successive grids
//! agree on 401 check energies to `tolerance`: g3 relative to its largest value, n3 relative
//! to its largest value or to that DOS times the width of the range, whichever is larger;
//! that difference (the error of the coarser grid, an over-estimate of the finer one's) is
//! reported as [`VolumeDensity::quadrature_error`].
//!
//! Gaussian lines only: a Lorentzian's 1/x^2 tail makes n3 diverge logarithmically with K
//! (every sheet far out still contributes w/(pi |E - E_l|)), so the result would depend on an
//! arbitrary cutoff.
//!
//! # Units
//! Energies in the model's energy unit relative to the reference energy; densities per (model
//! length unit)^3: 1/nm^3 for lab models (1 nm^-3 = 1e21 cm^-3, see [`per_cm3`]), DOS in
//! 1/(meV nm^3).
//!
//! # Complexity
//! One spectrum per kz point (in parallel over the points, [`crate::sweep::run`]); then
//! O(points x levels within reach) per energy.
//!
//! # Examples
//! ```
//! use ladderfan::observables::{dos::Broadening, volume::*};
//! use ladderfan::{models, Settings};
//! // one Weyl node (v = 3e5 m/s, invented) at 10 T: between the first Landau levels at
//! // ±hbar v sqrt(2)/l_B = ±34 meV only the chiral level is there, and its density of states
//! // is |eB|/h x 1/(2 pi hbar v) (Nielsen & Ninomiya, Phys. Lett. B 130, 389 (1983))
//! let m = models::weyl(models::WeylParams::default())?;
//! let vs = VolumeSettings::new(Broadening::gaussian(1.0), (-10.0, 10.0));
//! let v = VolumeDensity::compute(&m, 10.0, &Settings::with_cutoff(200), &vs)?;
//! let hv = ladderfan::units::hbar_v_mev_nm(3.0e5);
//! let chiral = v.per_level / (2.0 * std::f64::consts::PI * hv);
//! assert!((v.dos(0.0) / chiral - 1.0).abs() < 1e-6);
//! # Ok::<(), ladderfan::Error>(())
//! ```

mod quadrature;

use super::dos::{bounded_below, landau_degeneracy_per_area, per_cm2, Broadening};
use super::filling::{check_temperature, thermal_energy, Neutrality, Occupation, THERMAL_REACH};
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::policy::NEUTRALITY_SNAP_WIDTHS;
use crate::solve::Settings;
use crate::units::Units;
use quadrature::{check_volume_inputs, interleave, kz_limit, Trapezoid};
use rayon::prelude::*;
use serde::Serialize;
use std::f64::consts::PI;

/// Points of the first kz grid (on [-K, K], or [0, K] for an even spectrum).
const FIRST_POINTS: usize = 65;
/// Check energies on which successive grids are compared.
const CHECK_ENERGIES: usize = 401;
/// Doublings of K tried before giving up.
const MAX_DOUBLINGS: usize = 60;

/// What [`VolumeDensity::compute`] needs besides the model, the field and the solver settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VolumeSettings {
    /// Broadening of every level (Gaussian only, see the module docs).
    pub broadening: Broadening,
    /// Energies (relative to the reference energy, model energy unit) at which the densities
    /// are wanted: lower and upper end. Outside this range the kz integral is not complete.
    pub range: (f64, f64),
    /// Temperature in kelvin for [`VolumeDensity::carrier_density`] and
    /// [`VolumeDensity::fermi_level`] (0 allowed).
    pub temperature_k: f64,
    /// Where the carrier density is counted from.
    pub neutrality: Neutrality,
    /// Integration limit K in the model's wave-number unit, or `None` to choose it (module
    /// docs).
    pub kz_max: Option<f64>,
    /// Relative agreement of two successive kz grids at which the refinement stops.
    pub tolerance: f64,
    /// Most kz points allowed (the refinement stops with an error beyond).
    pub max_points: usize,
}

impl VolumeSettings {
    /// Defaults: T = 0, automatic neutrality and K, tolerance 1e-7, at most 16385 points.
    pub fn new(broadening: Broadening, range: (f64, f64)) -> Self {
        VolumeSettings {
            broadening,
            range,
            temperature_k: 0.0,
            neutrality: Neutrality::Auto,
            kz_max: None,
            tolerance: 1e-7,
            max_points: 16385,
        }
    }
}

/// One kz sheet reduced to what the densities need.
#[derive(Debug, Clone)]
struct Sheet {
    /// Converged levels within the active range, ascending: (energy, filled at neutrality:
    /// 0, 1/2 or 1).
    near: Vec<(f64, f64)>,
    /// Running sums of the filled column: `filled_before[i]` = sum of filled over near[..i].
    filled_before: Vec<f64>,
    /// sum over the converged levels outside the active range of (occupation - filled at
    /// neutrality): 1 - filled below it, -filled above it.
    base: f64,
}

impl Sheet {
    /// Indices of the levels within `r` of `e`: near[i0..i1].
    fn span(&self, e: f64, r: f64) -> (usize, usize) {
        let i0 = self.near.partition_point(|&(el, _)| el < e - r);
        let i1 = self.near.partition_point(|&(el, _)| el <= e + r);
        (i0, i1.max(i0))
    }

    /// sum_l L(e - E_l) over this sheet's levels (levels beyond the reach add below 1e-17).
    fn lines(&self, line: &Line, e: f64) -> f64 {
        let (i0, i1) = self.span(e, line.reach);
        self.near[i0..i1]
            .iter()
            .map(|&(el, _)| line.broadening.line(e - el, line.width))
            .sum()
    }

    /// sum_l (o_l(mu) - filled_l) over this sheet's levels at temperature kt: levels far below
    /// mu are full, far above empty.
    fn occupied(&self, line: &Line, mu: f64, kt: f64) -> f64 {
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
}

/// Densities per unit volume of a 3D model at one field (see the module docs).
#[derive(Debug, Clone, Serialize)]
pub struct VolumeDensity {
    /// Unit system of every number.
    pub units: Units,
    /// Field in the model's field unit.
    pub field: f64,
    /// Reference energy the energies are relative to.
    pub reference_energy: f64,
    /// States per level and unit area, g |qB|/h, in 1/(length unit)^2.
    pub per_level: f64,
    /// The model's declared extra degeneracy g.
    pub model_degeneracy: u32,
    /// The broadening.
    pub broadening: Broadening,
    /// Its width at this field.
    pub width: f64,
    /// k_B T in the model's energy unit.
    pub thermal_energy: f64,
    /// Neutrality energy used (`None`: a band empty at neutrality).
    pub neutrality_energy: Option<f64>,
    /// Energies at which the densities are complete.
    pub range: (f64, f64),
    /// Integration limit K.
    pub kz_max: f64,
    /// Whether the spectrum is even in kz (only kz >= 0 was solved).
    pub even_in_kz: bool,
    /// The kz points solved.
    pub kz: Vec<f64>,
    /// Trapezoidal weights over 2 pi (the integral over [-K, K] of dkz/(2 pi)), per point.
    pub weights: Vec<f64>,
    /// Largest difference of g3 between the last two grids on the check energies, in
    /// 1/(energy unit x length unit^3).
    pub quadrature_error: f64,
    /// Largest difference of n3 (at T = 0) between the last two grids, 1/(length unit)^3.
    pub density_quadrature_error: f64,
    /// Cutoff used for every sheet.
    pub cutoff: usize,
    #[serde(skip)]
    line: Line,
    /// The reduced sheets (not serialised: one entry per kz point and level).
    #[serde(skip)]
    sheets: Vec<Sheet>,
}

/// The line shape with its width and the distance beyond which it is negligible.
#[derive(Debug, Clone, Copy)]
struct Line {
    broadening: Broadening,
    width: f64,
    reach: f64,
}

/// Convert a density per (model length unit)^3 into cm^-3.
///
/// Lab units: 1 nm^-3 = 1e21 cm^-3. Natural units: the length unit is the reduced Compton
/// wavelength hbar/(m_e c) (3.8616e-11 cm, CODATA 2018).
///
/// # Examples
/// ```
/// use ladderfan::observables::volume::per_cm3;
/// assert_eq!(per_cm3(ladderfan::units::Units::Lab, 1.0), 1e21);
/// ```
pub fn per_cm3(units: Units, per_length3: f64) -> f64 {
    // per_cm2(units, 1) = 1 / (length unit in cm)^2
    per_length3 * per_cm2(units, 1.0).powf(1.5)
}

/// Convert a density in cm^-3 into 1/(model length unit)^3 (the inverse of [`per_cm3`]).
pub fn from_per_cm3(units: Units, per_cm3_value: f64) -> f64 {
    per_cm3_value / per_cm3(units, 1.0)
}

/// Whether the model has a term with kz, and whether any has an odd power of kz.
fn kz_powers(model: &Model) -> (bool, bool) {
    let mut any = false;
    let mut odd = false;
    for t in model.terms() {
        if t.monomial.kz > 0 && t.coefficient.norm() > 0.0 {
            any = true;
            odd |= t.monomial.kz % 2 == 1;
        }
    }
    (any, odd)
}

impl VolumeDensity {
    /// Solve the kz sheets of `model` at `field` and integrate them (module docs).
    ///
    /// # Errors
    /// [`Error::Unsupported`] for a model without kz terms (use [`super::dos::LevelDensity`])
    /// or a Lorentzian line; [`Error::BadNumber`] for a bad range, width, temperature,
    /// tolerance or K; [`Error::NotConverged`] when a sheet's converged levels do not cover
    /// the energies asked for (raise the cutoff), when no K up to 2^60 / l_B clears them, or
    /// when the kz grid needs more than `max_points`; solver errors of any sheet.
    pub fn compute(
        model: &Model,
        field: f64,
        settings: &Settings,
        vs: &VolumeSettings,
    ) -> Result<Self> {
        let odd = check_volume_inputs(model, vs)?;
        let (from, to) = vs.range;
        let width = vs.broadening.width_at(field)?;
        let reach = vs.broadening.reach(width).unwrap_or(f64::INFINITY);
        let units = model.units();
        let kt = thermal_energy(units, vs.temperature_k);
        let solve = |kz: &[f64]| -> Result<Vec<Spectrum>> {
            let pts: Vec<FieldPoint> = kz.iter().map(|&kz| FieldPoint { field, kz }).collect();
            crate::sweep::run(model, &pts, settings)
        };
        // reference spectrum at kz = 0: reference energy, neutrality, length scale
        let first = solve(&[0.0])?.remove(0);
        let bounded = bounded_below(model);
        let neutrality = match vs.neutrality {
            Neutrality::EmptyBand => None,
            Neutrality::Energy(e) => Some(e),
            Neutrality::Auto if bounded => None,
            Neutrality::Auto => Some(0.0 - first.reference_energy),
        };
        let pad = reach + THERMAL_REACH * kt;
        let (mut lo, mut hi) = (from - pad, to + pad);
        if let Some(e0) = neutrality {
            lo = lo.min(e0 - pad);
            hi = hi.max(e0 + pad);
        }
        let kz_max = kz_limit(vs, odd, first.magnetic_length, (lo, hi), &solve)?;
        let start = if odd { -kz_max } else { 0.0 };
        let span = kz_max - start;
        let both = if odd { 1.0 } else { 2.0 };
        let per_level =
            landau_degeneracy_per_area(units, field, model.charge()) * model.degeneracy() as f64;
        let make = |spectra: &[Spectrum]| -> Result<Vec<Sheet>> {
            spectra
                .iter()
                .map(|s| sheet(s, lo, hi, neutrality, bounded, width))
                .collect()
        };
        let mut sums = Trapezoid::new(
            vs,
            Line {
                broadening: vs.broadening,
                width,
                reach,
            },
        );
        // grid of 2^r (FIRST_POINTS - 1) + 1 points, refined by adding midpoints
        let mut intervals = FIRST_POINTS - 1;
        let mut kz: Vec<f64> = (0..=intervals)
            .map(|i| start + span * i as f64 / intervals as f64)
            .collect();
        let mut sheets = make(&solve(&kz)?)?;
        sums.add(&sheets, true);
        let scale = |intervals: usize| per_level * both * span / intervals as f64 / (2.0 * PI);
        let mut last_change = f64::INFINITY;
        loop {
            if 2 * intervals + 1 > vs.max_points {
                return Err(Error::NotConverged {
                    tolerance: vs.tolerance,
                    detail: format!(
                        "the kz grid did not settle within {} points (last relative change \
                         {last_change:e} in the DOS); widen the line or allow more points",
                        vs.max_points
                    ),
                });
            }
            let h = span / intervals as f64;
            let mids: Vec<f64> = (0..intervals)
                .map(|i| start + h * (i as f64 + 0.5))
                .collect();
            let fresh = make(&solve(&mids)?)?;
            let change = sums.refine(&fresh, scale(intervals), scale(2 * intervals));
            (kz, sheets) = interleave(kz, sheets, &mids, fresh);
            intervals *= 2;
            last_change = change.dg / change.gmax.max(f64::MIN_POSITIVE);
            // a density scale that is not zero where n3 crosses zero inside the range
            let n_scale = change.nmax.max(change.gmax * (to - from));
            if change.dg <= vs.tolerance * change.gmax && change.dn <= vs.tolerance * n_scale {
                let h = span / intervals as f64;
                let weights = (0..kz.len())
                    .map(|i| {
                        let end = if i == 0 || i + 1 == kz.len() {
                            0.5
                        } else {
                            1.0
                        };
                        both * end * h / (2.0 * PI)
                    })
                    .collect();
                return Ok(VolumeDensity {
                    units,
                    field,
                    reference_energy: first.reference_energy,
                    per_level,
                    model_degeneracy: model.degeneracy(),
                    broadening: vs.broadening,
                    width,
                    thermal_energy: kt,
                    neutrality_energy: neutrality,
                    range: (from, to),
                    kz_max,
                    even_in_kz: !odd,
                    kz,
                    weights,
                    quadrature_error: change.dg,
                    density_quadrature_error: change.dn,
                    cutoff: settings.cutoff,
                    line: sums.line,
                    sheets,
                });
            }
        }
    }

    /// Density of states per unit volume and energy at `e` (relative to the reference), in
    /// 1/(energy unit x length unit^3): 1/(meV nm^3) for lab models. Complete for `e` inside
    /// [`VolumeDensity::range`].
    pub fn dos(&self, e: f64) -> f64 {
        let sum: f64 = self
            .sheets
            .iter()
            .zip(&self.weights)
            .map(|(s, &wt)| wt * s.lines(&self.line, e))
            .sum();
        self.per_level * sum
    }

    /// Carrier density per unit volume from neutrality (electrons above minus holes below, or
    /// all carriers of a band empty at neutrality) with the chemical potential at `mu`, at the
    /// settings' temperature, in 1/(length unit)^3.
    pub fn carrier_density(&self, mu: f64) -> f64 {
        let sum: f64 = self
            .sheets
            .iter()
            .zip(&self.weights)
            .map(|(s, &wt)| wt * s.occupied(&self.line, mu, self.thermal_energy))
            .sum();
        self.per_level * sum
    }

    /// The DOS on `count` energies from `from` to `to` (inside the range): (E, g3(E)).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for fewer than two points or energies outside
    /// [`VolumeDensity::range`].
    pub fn curve(&self, from: f64, to: f64, count: usize) -> Result<Vec<(f64, f64)>> {
        let (lo, hi) = self.range;
        let slack = 1e-12 * (hi - lo).abs().max(1.0);
        if count < 2
            || to.partial_cmp(&from) != Some(std::cmp::Ordering::Greater)
            || from < lo - slack
            || to > hi + slack
        {
            return Err(Error::BadNumber {
                name: "energy grid".into(),
                value: count as f64,
                fix: format!(
                    "give at least two points from >= {lo} to <= {hi} (the range the kz \
                     integral was completed for)"
                ),
            });
        }
        let step = (to - from) / (count - 1) as f64;
        Ok((0..count)
            .map(|i| {
                let e = from + i as f64 * step;
                (e, self.dos(e))
            })
            .collect())
    }

    /// The chemical potential at which [`VolumeDensity::carrier_density`] equals `target`
    /// (1/(length unit)^3), by bisection inside the range (the density is non-decreasing in
    /// mu); in a gap, the middle of the interval where the density is flat.
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
            let f = |m: f64| self.carrier_density(m) - target;
            let (mut a, mut b) = (lo, hi);
            let (mut fa, mut fb) = (n_lo - target, n_hi - target);
            let small = 1e-13 * (n_hi - n_lo).abs().max(target.abs());
            let mut side = 0;
            for _ in 0..200 {
                if fa.abs() <= small {
                    return Ok(a);
                }
                if fb.abs() <= small || fb == fa {
                    return Ok(b);
                }
                let c = (a * fb - b * fa) / (fb - fa);
                let fc = f(c);
                if fc.abs() <= small || (b - a).abs() <= 1e-15 * (a.abs() + b.abs()) {
                    return Ok(c);
                }
                if fc > 0.0 {
                    b = c;
                    fb = fc;
                    if side == -1 {
                        fa *= 0.5;
                    }
                    side = -1;
                } else {
                    a = c;
                    fa = fc;
                    if side == 1 {
                        fb *= 0.5;
                    }
                    side = 1;
                }
            }
            return Ok(0.5 * (a + b));
        }
        // T = 0: n may be flat in a gap; the lowest mu with n >= target and the highest with
        // n <= target, then their middle
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
        Ok(0.5 * (bisect(true) + bisect(false)))
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

/// Reduce one spectrum to a sheet, after checking that its converged levels cover [lo, hi].
fn sheet(
    s: &Spectrum,
    lo: f64,
    hi: f64,
    neutrality: Option<f64>,
    bounded: bool,
    width: f64,
) -> Result<Sheet> {
    let conv: Vec<f64> = s.converged().map(|l| l.energy).collect();
    let (Some(&first), Some(&last)) = (conv.first(), conv.last()) else {
        return Err(Error::NotConverged {
            tolerance: s.tolerance,
            detail: format!(
                "no level is converged at kz = {}; raise the cutoff",
                s.point.kz
            ),
        });
    };
    if last < hi || (!bounded && first > lo) {
        return Err(Error::NotConverged {
            tolerance: s.tolerance,
            detail: format!(
                "at kz = {:e} the converged levels span {first:e} to {last:e}, but the energies \
                 {lo:e} to {hi:e} are needed; raise the cutoff (now {})",
                s.point.kz, s.cutoff
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
    for el in conv {
        if el < lo {
            base += 1.0 - filled(el);
        } else if el > hi {
            base -= filled(el);
        } else {
            near.push((el, filled(el)));
        }
    }
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
