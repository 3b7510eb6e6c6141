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
//! reported as [`VolumeDensity::quadrature_error`]. That is [`Quadrature::Uniform`], the
//! reference; the default [`Quadrature::Adaptive`] (`adaptive.rs`) keeps the same check but
//! sets up each field once, skips the labels, halves the kz range when [`kz_mirror`] finds
//! U H(kz) U^-1 = H(-kz), and stops halving intervals whose sheets have no level within reach.
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
//! One spectrum per kz point (in parallel over the points); then
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

mod adaptive;
mod fermi;
mod gauss;
pub mod mirror;
mod quadrature;
mod sheet;

pub use fermi::{fermi_sweep, fermi_sweep_with, VolumeFermiPoint};
pub use mirror::kz_mirror;

use super::dos::{bounded_below, landau_degeneracy_per_area, per_cm2, Broadening};
use super::filling::{check_temperature, thermal_energy, Neutrality, THERMAL_REACH};
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::solve::Settings;
use crate::units::Units;
use quadrature::{check_volume_inputs, interleave, kz_limit, Change, Trapezoid};
use serde::Serialize;
use sheet::{sheet, Sheet};
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
    /// How the kz integral is done: the fast default or the fixed-grid reference.
    pub quadrature: Quadrature,
}

/// The kz quadrature of [`VolumeDensity::compute`] (module docs, "Method").
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Quadrature {
    /// The reference path: every sheet a full [`Spectrum::compute`] (labels, bounds), one
    /// uniform trapezoid grid on [-K, K] ([0, K] only when no term has an odd power of kz),
    /// halved everywhere until two grids agree. Kept as the accuracy reference of the tests and
    /// of `tools/compare_probe.rs volume`.
    Uniform,
    /// The default: lean sheet solves (one set-up per field reused across kz, no labels), the
    /// kz -> -kz mirror of the model detected and used, and the trapezoid grid refined only on
    /// the panels whose halving still changes the sums (module docs).
    Adaptive,
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
            quadrature: Quadrature::Adaptive,
        }
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
        match vs.quadrature {
            Quadrature::Uniform => uniform(model, field, settings, vs),
            Quadrature::Adaptive => adaptive::compute(model, field, settings, vs),
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

    /// The T = 0 carrier density and the DOS at `mu` in one pass over the sheets:
    /// ([`VolumeDensity::carrier_density`] at zero temperature, [`VolumeDensity::dos`]), the
    /// function and derivative of the T = 0 Fermi-level search.
    fn density_and_dos(&self, mu: f64) -> (f64, f64) {
        let (mut n, mut g) = (0.0, 0.0);
        for (s, &wt) in self.sheets.iter().zip(&self.weights) {
            let (sn, sg) = s.occupied_and_lines(&self.line, mu);
            n += wt * sn;
            g += wt * sg;
        }
        (self.per_level * n, self.per_level * g)
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
}

/// What both quadratures derive from the inputs and the kz = 0 sheet: the line, the
/// neutrality, the padded energy range (`lo`, `hi`) every sheet must cover, and the states per
/// level and area.
struct Frame {
    line: Line,
    thermal_energy: f64,
    neutrality: Option<f64>,
    bounded: bool,
    lo: f64,
    hi: f64,
    per_level: f64,
    reference_energy: f64,
    magnetic_length: f64,
}

impl Frame {
    /// The frame of `model` at `field`, with the reference energy and magnetic length of its
    /// solves.
    fn new(
        model: &Model,
        field: f64,
        vs: &VolumeSettings,
        (reference_energy, magnetic_length): (f64, f64),
    ) -> Result<Self> {
        let (from, to) = vs.range;
        let width = vs.broadening.width_at(field)?;
        let reach = vs.broadening.reach(width).unwrap_or(f64::INFINITY);
        let units = model.units();
        let kt = thermal_energy(units, vs.temperature_k);
        let bounded = bounded_below(model);
        let neutrality = match vs.neutrality {
            Neutrality::EmptyBand => None,
            Neutrality::Energy(e) => Some(e),
            Neutrality::Auto if bounded => None,
            Neutrality::Auto => Some(0.0 - reference_energy),
        };
        let pad = reach + THERMAL_REACH * kt;
        let (mut lo, mut hi) = (from - pad, to + pad);
        if let Some(e0) = neutrality {
            lo = lo.min(e0 - pad);
            hi = hi.max(e0 + pad);
        }
        Ok(Frame {
            line: Line {
                broadening: vs.broadening,
                width,
                reach,
            },
            thermal_energy: kt,
            neutrality,
            bounded,
            lo,
            hi,
            per_level: landau_degeneracy_per_area(units, field, model.charge())
                * model.degeneracy() as f64,
            reference_energy,
            magnetic_length,
        })
    }

    /// Reduce the spectra of some kz points to sheets.
    fn sheets(&self, spectra: &[Spectrum]) -> Result<Vec<Sheet>> {
        spectra
            .iter()
            .map(|s| {
                sheet(
                    s,
                    (self.lo, self.hi),
                    self.neutrality,
                    self.bounded,
                    self.line.width,
                )
            })
            .collect()
    }
}

/// The parts of a finished integral that are not in the [`Frame`].
struct Integral {
    kz_max: f64,
    even_in_kz: bool,
    kz: Vec<f64>,
    weights: Vec<f64>,
    sheets: Vec<Sheet>,
    change: Change,
}

impl VolumeDensity {
    /// Assemble the result.
    fn finish(
        model: &Model,
        field: f64,
        settings: &Settings,
        vs: &VolumeSettings,
        frame: Frame,
        integral: Integral,
    ) -> Self {
        VolumeDensity {
            units: model.units(),
            field,
            reference_energy: frame.reference_energy,
            per_level: frame.per_level,
            model_degeneracy: model.degeneracy(),
            broadening: vs.broadening,
            width: frame.line.width,
            thermal_energy: frame.thermal_energy,
            neutrality_energy: frame.neutrality,
            range: vs.range,
            kz_max: integral.kz_max,
            even_in_kz: integral.even_in_kz,
            kz: integral.kz,
            weights: integral.weights,
            quadrature_error: integral.change.dg,
            density_quadrature_error: integral.change.dn,
            cutoff: settings.cutoff,
            line: frame.line,
            sheets: integral.sheets,
        }
    }
}

/// Whether the last grid change is within the tolerance: the DOS relative to its largest value,
/// the density relative to its largest value or to that DOS times the width of the range,
/// whichever is larger (a density scale that is not zero where n3 crosses zero in the range).
fn settled(change: &Change, vs: &VolumeSettings) -> bool {
    let n_scale = change.nmax.max(change.gmax * (vs.range.1 - vs.range.0));
    change.dg <= vs.tolerance * change.gmax && change.dn <= vs.tolerance * n_scale
}

/// The error of a grid that did not settle within `max_points`.
fn too_many_points(vs: &VolumeSettings, last_change: f64) -> Error {
    Error::NotConverged {
        tolerance: vs.tolerance,
        detail: format!(
            "the kz grid did not settle within {} points (last relative change \
             {last_change:e} in the DOS); widen the line or allow more points",
            vs.max_points
        ),
    }
}

/// The reference path of [`VolumeDensity::compute`] ([`Quadrature::Uniform`]): full solves on
/// a uniform grid halved everywhere (module docs, "Method").
fn uniform(
    model: &Model,
    field: f64,
    settings: &Settings,
    vs: &VolumeSettings,
) -> Result<VolumeDensity> {
    let odd = check_volume_inputs(model, vs)?;
    let solve = |kz: &[f64]| -> Result<Vec<Spectrum>> {
        let pts: Vec<FieldPoint> = kz.iter().map(|&kz| FieldPoint { field, kz }).collect();
        crate::sweep::run(model, &pts, settings)
    };
    // reference spectrum at kz = 0: reference energy, neutrality, length scale
    let first = solve(&[0.0])?.remove(0);
    let frame = Frame::new(
        model,
        field,
        vs,
        (first.reference_energy, first.magnetic_length),
    )?;
    let converged = |kz: &[f64]| -> Result<Vec<Vec<f64>>> {
        Ok(solve(kz)?
            .iter()
            .map(|s| s.converged().map(|l| l.energy).collect())
            .collect())
    };
    let kz_max = kz_limit(
        vs,
        odd,
        frame.magnetic_length,
        (frame.lo, frame.hi),
        &converged,
    )?;
    let start = if odd { -kz_max } else { 0.0 };
    let span = kz_max - start;
    let both = if odd { 1.0 } else { 2.0 };
    let mut sums = Trapezoid::new(vs, frame.line);
    // grid of 2^r (FIRST_POINTS - 1) + 1 points, refined by adding midpoints
    let mut intervals = FIRST_POINTS - 1;
    let mut kz: Vec<f64> = (0..=intervals)
        .map(|i| start + span * i as f64 / intervals as f64)
        .collect();
    let mut sheets = frame.sheets(&solve(&kz)?)?;
    sums.add(&sheets, true);
    let scale = |intervals: usize| frame.per_level * both * span / intervals as f64 / (2.0 * PI);
    let mut last_change = f64::INFINITY;
    loop {
        if 2 * intervals + 1 > vs.max_points {
            return Err(too_many_points(vs, last_change));
        }
        let h = span / intervals as f64;
        let mids: Vec<f64> = (0..intervals)
            .map(|i| start + h * (i as f64 + 0.5))
            .collect();
        let fresh = frame.sheets(&solve(&mids)?)?;
        let change = sums.refine(&fresh, scale(intervals), scale(2 * intervals));
        (kz, sheets) = interleave(kz, sheets, &mids, fresh);
        intervals *= 2;
        last_change = change.dg / change.gmax.max(f64::MIN_POSITIVE);
        if settled(&change, vs) {
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
            let integral = Integral {
                kz_max,
                even_in_kz: !odd,
                kz,
                weights,
                sheets,
                change,
            };
            return Ok(VolumeDensity::finish(
                model, field, settings, vs, frame, integral,
            ));
        }
    }
}
