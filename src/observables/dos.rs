//! Landau-level degeneracy, broadened density of states and integrated density of states.
//!
//! # Definitions
//! Each Landau level holds |qB|/h states per unit area (Landau 1930; any solid-state text),
//! which is 1/(2 pi l_B^2) with the magnetic length l_B = sqrt(hbar/|qB|). A model that declares
//! a degeneracy g ([`crate::Model::degeneracy`], spin or valley copies that are not among its
//! components) multiplies this by g. The density of states per unit area and energy is
//!
//! g(E) = g |qB|/h sum_l L(E - E_l; w),
//!
//! summed over the **converged** levels only (a level flagged not converged belongs to the cutoff,
//! not to the physical spectrum), with a normalised line shape L of width w
//! ([`Broadening`]). The integrated density of states N(E) = int_{-inf}^{E} g(E') dE' is
//! evaluated in closed form from the cumulative line shape.
//!
//! # Units
//! Areas are in the model's length unit squared: 1/nm^2 for lab models (1 nm^-2 = 1e14 cm^-2,
//! see [`per_cm2`]), 1/(hbar/(m_e c))^2 for natural-unit models; energies in the model's energy
//! unit (meV or m c^2). So the DOS is in 1/(meV nm^2) for lab models. For a 3D model the
//! numbers are those of one kz slice (a sheet), not integrated over kz.

use crate::error::{Error, Result};
use crate::levels::Spectrum;
use crate::model::Model;
use crate::units::{Units, ELECTRON_MASS, HBAR, SPEED_OF_LIGHT};
use serde::Serialize;

/// Shape of the line each level is broadened into.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum LineShape {
    /// Gaussian exp(-x^2/(2 w^2)) / (w sqrt(2 pi)); w is the standard deviation.
    Gaussian,
    /// Lorentzian (w/pi) / (x^2 + w^2); w is the half width at half maximum.
    Lorentzian,
}

/// How the broadening width depends on the field.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum WidthScaling {
    /// The same width at every field.
    Constant,
    /// w(B) = w sqrt(|B| / B_ref): the short-range-scatterer form common in practice
    /// (Ando & Uemura, J. Phys. Soc. Jpn. 36, 959 (1974)).
    SqrtField {
        /// B_ref in the model's field unit (T or B_c): the field at which the width is `width`.
        reference_field: f64,
    },
}

/// Broadening of every level into a normalised line.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Broadening {
    /// Line shape.
    pub shape: LineShape,
    /// Width in the model's energy unit (meV for lab models): the standard deviation of a
    /// Gaussian or the half width at half maximum of a Lorentzian, at the reference field.
    pub width: f64,
    /// Field dependence of the width.
    pub scaling: WidthScaling,
}

impl Broadening {
    /// A constant-width Gaussian.
    pub fn gaussian(width: f64) -> Self {
        Broadening {
            shape: LineShape::Gaussian,
            width,
            scaling: WidthScaling::Constant,
        }
    }

    /// A constant-width Lorentzian.
    pub fn lorentzian(width: f64) -> Self {
        Broadening {
            shape: LineShape::Lorentzian,
            width,
            scaling: WidthScaling::Constant,
        }
    }

    /// The width at field `field`.
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a non-positive or non-finite width or reference field.
    pub fn width_at(&self, field: f64) -> Result<f64> {
        if !(self.width.is_finite() && self.width > 0.0) {
            return Err(Error::BadNumber {
                name: "broadening width".into(),
                value: self.width,
                fix: "give a positive width in the model's energy unit (e.g. 0.5 meV)".into(),
            });
        }
        match self.scaling {
            WidthScaling::Constant => Ok(self.width),
            WidthScaling::SqrtField { reference_field } => {
                if !(reference_field.is_finite() && reference_field > 0.0) {
                    return Err(Error::BadNumber {
                        name: "reference field of the sqrt(B) width".into(),
                        value: reference_field,
                        fix: "give a positive field (e.g. 1 T)".into(),
                    });
                }
                Ok(self.width * (field.abs() / reference_field).sqrt())
            }
        }
    }

    /// Normalised line L(x; w) at distance x from the level centre.
    pub fn line(&self, x: f64, w: f64) -> f64 {
        match self.shape {
            LineShape::Gaussian => {
                let t = x / w;
                (-0.5 * t * t).exp() / (w * (2.0 * std::f64::consts::PI).sqrt())
            }
            LineShape::Lorentzian => w / (std::f64::consts::PI * (x * x + w * w)),
        }
    }

    /// Cumulative line C(x; w) = int_{-inf}^{x} L(x'; w) dx', from 0 to 1.
    ///
    /// # Formula
    /// Gaussian: erfc(-x/(w sqrt 2))/2; Lorentzian: 1/2 + atan(x/w)/pi.
    pub fn cumulative(&self, x: f64, w: f64) -> f64 {
        match self.shape {
            LineShape::Gaussian => 0.5 * erfc(-x / (w * std::f64::consts::SQRT_2)),
            LineShape::Lorentzian => 0.5 + (x / w).atan() / std::f64::consts::PI,
        }
    }

    /// Distance beyond which a line's weight is below 1e-17 (Gaussian), or `None` for the
    /// long-tailed Lorentzian.
    pub fn reach(&self, w: f64) -> Option<f64> {
        match self.shape {
            LineShape::Gaussian => Some(9.0 * w),
            LineShape::Lorentzian => None,
        }
    }
}

/// Complementary error function erfc(x) = 1 - erf(x), relative error below 1 ulp.
///
/// # Formula
/// erfc(x) = (2/sqrt pi) int_x^inf e^{-t^2} dt, evaluated by the `libm` crate (a port of the
/// FreeBSD/musl implementation: rational approximations on |x| < 0.84375, < 1.25, < 1/0.35 and
/// beyond, with e^{-x^2} split to keep full precision); 0 once e^{-x^2} underflows (x > 27.3)
/// and 2 on the other side. It replaced a series / continued fraction of ours (Abramowitz &
/// Stegun 7.1.6 and 7.1.14, up to 80 terms per call) that took a quarter of a 3D Fermi-level
/// sweep's time; the tests compare both with Abramowitz & Stegun's table.
///
/// # Examples
/// ```
/// // erfc(1) = 0.157 299 207 050 285 (Abramowitz & Stegun, Table 7.1)
/// let v = ladderfan::observables::dos::erfc(1.0);
/// assert!((v - 0.157_299_207_050_285).abs() < 1e-15);
/// ```
pub fn erfc(x: f64) -> f64 {
    libm::erfc(x)
}

/// Landau-level degeneracy per unit area |qB|/h = 1/(2 pi l_B^2), in 1/(length unit)^2
/// (1/nm^2 for lab units), without the model's extra degeneracy.
///
/// # Formula
/// |q| e |B| / h = 1 / (2 pi l_B^2) with l_B from [`Units::magnetic_length`].
///
/// # References
/// L. Landau, Z. Phys. 64, 629 (1930).
///
/// # Examples
/// ```
/// use ladderfan::observables::dos::{landau_degeneracy_per_area, per_cm2};
/// use ladderfan::units::Units;
/// // e/h x 1 T = 2.417 989 242e14 m^-2 = 2.418e10 cm^-2 (CODATA 2018 exact e and h)
/// let d = per_cm2(Units::Lab, landau_degeneracy_per_area(Units::Lab, 1.0, -1.0));
/// assert!((d / 2.417_989_242e10 - 1.0).abs() < 1e-9);
/// ```
pub fn landau_degeneracy_per_area(units: Units, field: f64, charge: f64) -> f64 {
    let lb = units.magnetic_length(field, charge);
    1.0 / (2.0 * std::f64::consts::PI * lb * lb)
}

/// Convert a density per (model length unit)^2 into cm^-2.
///
/// Lab units: 1 nm^-2 = 1e14 cm^-2. Natural units: the length unit is the reduced Compton
/// wavelength hbar/(m c) of the reference particle, taken to be the electron here
/// (3.8616e-11 cm, CODATA 2018).
pub fn per_cm2(units: Units, per_length2: f64) -> f64 {
    match units {
        Units::Lab => per_length2 * 1e14,
        Units::Natural => {
            let compton_cm = HBAR / (ELECTRON_MASS * SPEED_OF_LIGHT) * 100.0;
            per_length2 / (compton_cm * compton_cm)
        }
    }
}

/// Convert a density in cm^-2 into 1/(model length unit)^2 (the inverse of [`per_cm2`]).
pub fn from_per_cm2(units: Units, per_cm2_value: f64) -> f64 {
    per_cm2_value / per_cm2(units, 1.0)
}

/// Whether the model's spectrum is bounded below, judged from its classical band structure at
/// large in-plane k: the terms of the highest in-plane degree p (field-independent, kz = 0),
/// H_p(theta) = sum c M cos^a(theta) sin^b(theta), must be positive semi-definite at every
/// direction theta (sampled at 72 angles). Odd p (Dirac-like) is never bounded: H_p(theta + pi)
/// = -H_p(theta). Klein-Gordon-form models have both branches and are not bounded below.
///
/// # Examples
/// ```
/// use ladderfan::models;
/// use ladderfan::observables::dos::bounded_below;
/// assert!(bounded_below(&models::schrodinger(models::MassParams::default())?));
/// assert!(!bounded_below(&models::dirac2d(models::Dirac2dParams::default())?));
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn bounded_below(model: &Model) -> bool {
    if let crate::model::SpectrumForm::KleinGordon { .. } = model.form() {
        return false;
    }
    let lead = model
        .terms()
        .iter()
        .filter(|t| t.monomial.field == 0 && t.monomial.kz == 0)
        .map(|t| t.monomial.inplane_degree())
        .max()
        .unwrap_or(0);
    if lead == 0 {
        return true;
    }
    let d = model.dim();
    for k in 0..72 {
        let th = k as f64 * std::f64::consts::PI / 36.0;
        let (c, s) = (th.cos(), th.sin());
        let mut h = nalgebra::DMatrix::<num_complex::Complex64>::zeros(d, d);
        for t in model.terms() {
            let m = t.monomial;
            if m.field == 0 && m.kz == 0 && m.inplane_degree() == lead {
                h += &t.matrix * (t.coefficient * c.powi(m.kx as i32) * s.powi(m.ky as i32));
            }
        }
        let scale = h.iter().map(|z| z.norm()).fold(0.0, f64::max);
        if scale == 0.0 {
            continue;
        }
        let eig = nalgebra::SymmetricEigen::new(h).eigenvalues;
        if eig.iter().any(|&e| e < -1e-12 * scale) {
            return false;
        }
    }
    true
}

/// The converged levels of one spectrum, with everything needed for densities: the states per
/// level and area, the line shape and its width at this field.
#[derive(Debug, Clone, Serialize)]
pub struct LevelDensity {
    /// Unit system of every number.
    pub units: Units,
    /// Field in the model's field unit.
    pub field: f64,
    /// Landau degeneracy |qB|/h in 1/(length unit)^2, without the model's degeneracy.
    pub landau_degeneracy: f64,
    /// The model's declared extra degeneracy g (spin or valley copies not among its components).
    pub model_degeneracy: u32,
    /// States per level and unit area: g |qB|/h, in 1/(length unit)^2.
    pub per_level: f64,
    /// Energies of the converged levels (relative to the spectrum's reference energy), ascending.
    pub energies: Vec<f64>,
    /// Lowest and highest converged energy: outside this window levels are missing.
    pub window: (f64, f64),
    /// Whether the model's spectrum is bounded below ([`bounded_below`]): a band that is empty
    /// at neutrality, rather than a Dirac sea truncated by the cutoff.
    pub bounded_below: bool,
    /// The broadening.
    pub broadening: Broadening,
    /// Its width at this field, in the model's energy unit.
    pub width: f64,
}

impl LevelDensity {
    /// Collect the converged levels of `spectrum` (computed for `model`).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a bad broadening; [`Error::NotConverged`] when no level is
    /// converged.
    pub fn new(model: &Model, spectrum: &Spectrum, broadening: Broadening) -> Result<Self> {
        let width = broadening.width_at(spectrum.point.field)?;
        let energies: Vec<f64> = spectrum.converged().map(|l| l.energy).collect();
        let (Some(&lo), Some(&hi)) = (energies.first(), energies.last()) else {
            return Err(Error::NotConverged {
                tolerance: spectrum.tolerance,
                detail: "no level of the spectrum is converged; raise the cutoff".into(),
            });
        };
        let landau =
            landau_degeneracy_per_area(spectrum.units, spectrum.point.field, model.charge());
        let bounded_below = bounded_below(model);
        Ok(LevelDensity {
            units: spectrum.units,
            field: spectrum.point.field,
            landau_degeneracy: landau,
            model_degeneracy: model.degeneracy(),
            per_level: landau * model.degeneracy() as f64,
            energies,
            window: (lo, hi),
            bounded_below,
            broadening,
            width,
        })
    }

    /// Density of states g(E) per unit area and energy at energy `e` (relative to the
    /// spectrum's reference), in 1/(energy unit x length unit^2): 1/(meV nm^2) for lab models.
    ///
    /// # Complexity
    /// O(number of converged levels).
    pub fn dos(&self, e: f64) -> f64 {
        let w = self.width;
        self.per_level
            * self
                .energies
                .iter()
                .map(|&el| self.broadening.line(e - el, w))
                .sum::<f64>()
    }

    /// Integrated density of states N(E): states per unit area below `e` at zero temperature,
    /// counted from below the lowest converged level, in 1/(length unit)^2.
    pub fn states_below(&self, e: f64) -> f64 {
        let w = self.width;
        self.per_level
            * self
                .energies
                .iter()
                .map(|&el| self.broadening.cumulative(e - el, w))
                .sum::<f64>()
    }

    /// The DOS on a grid of `count` energies from `from` to `to`: pairs (E, g(E)).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for fewer than two points or a non-finite or empty range.
    pub fn curve(&self, from: f64, to: f64, count: usize) -> Result<Vec<(f64, f64)>> {
        if count < 2 || !from.is_finite() || !to.is_finite() || to <= from {
            return Err(Error::BadNumber {
                name: "energy grid".into(),
                value: count as f64,
                fix: "give at least two points and an energy range with to > from".into(),
            });
        }
        let step = (to - from) / (count - 1) as f64;
        let curve: Vec<(f64, f64)> = (0..count)
            .map(|i| {
                let e = from + i as f64 * step;
                (e, self.dos(e))
            })
            .collect();
        if let Some(&(e, g)) = curve.iter().find(|p| !p.1.is_finite()) {
            return Err(Error::BadNumber {
                name: format!("the DOS at energy {e}"),
                value: g,
                fix: format!(
                    "the line width {} is too small for double precision (the peak height \
                     goes as 1/width); give a larger width",
                    self.width
                ),
            });
        }
        Ok(curve)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn erfc_matches_tabulated_values() {
        // Abramowitz & Stegun Table 7.1 / standard tables (from memory, 15 digits).
        for (x, v) in [
            (0.0, 1.0),
            (0.5, 0.479_500_122_186_953_5),
            (1.0, 0.157_299_207_050_285_1),
            (2.0, 0.004_677_734_981_047_266),
            (3.0, 2.209_049_699_858_544e-5),
            (-1.0, 1.842_700_792_949_715),
        ] {
            assert!(
                (erfc(x) - v).abs() < 2e-15,
                "erfc({x}) = {} vs {v}",
                erfc(x)
            );
        }
        // continuity across the switch at x = 3
        assert!((erfc(3.0 - 1e-12) - erfc(3.0)).abs() < 1e-15);
    }

    /// The series / continued fraction of Abramowitz & Stegun 7.1.6 and 7.1.14 that `erfc`
    /// used before: an independent implementation to compare with.
    fn erfc_series(x: f64) -> f64 {
        if x < 0.0 {
            return 2.0 - erfc_series(-x);
        }
        if x < 3.0 {
            let x2 = x * x;
            let (mut term, mut sum, mut n) = (x, x, 0.0);
            while term > 1e-17 * sum && n < 200.0 {
                n += 1.0;
                term *= 2.0 * x2 / (2.0 * n + 1.0);
                sum += term;
            }
            1.0 - 2.0 / std::f64::consts::PI.sqrt() * (-x2).exp() * sum
        } else {
            let mut k = x;
            for depth in (1..=80).rev() {
                k = x + 0.5 * depth as f64 / k;
            }
            (-x * x).exp() / (std::f64::consts::PI.sqrt() * k)
        }
    }

    #[test]
    fn erfc_agrees_with_the_series_everywhere() {
        // two independent evaluations (A&S 7.1.6/7.1.14 vs the libm rational approximations)
        // agree to a few ulps of erfc or 1e-15 absolute, on a grid through every switch point
        for i in -3000..=6000 {
            let x = i as f64 * 1e-3 * 4.7;
            let (a, b) = (erfc(x), erfc_series(x));
            assert!(
                (a - b).abs() <= 1e-15_f64.max(1e-13 * b.abs()),
                "erfc({x}) = {a:e} vs series {b:e}"
            );
        }
    }

    #[test]
    fn erfc_far_tail_is_exact_zero_or_two() {
        // e^{-x^2} is below the smallest subnormal (2^-1074, about 4.9e-324) once x^2 > 745.2
        // (IEEE 754 double range, from memory): erfc is 0 there and 2 - 0 on the other side
        for x in [27.32, 30.0, 1e3, 1e300, f64::INFINITY] {
            assert_eq!(erfc(x).to_bits(), 0.0f64.to_bits(), "erfc({x})");
            assert_eq!(erfc(-x).to_bits(), 2.0f64.to_bits(), "erfc(-{x})");
        }
        // just inside the cut the continued fraction still gives a positive subnormal or zero
        let inside = erfc(27.0);
        assert!((0.0..1e-300).contains(&inside), "erfc(27) = {inside:e}");
    }

    #[test]
    fn cumulative_is_the_integral_of_the_line() {
        // trapezoid integral of the line against the closed-form cumulative
        for b in [Broadening::gaussian(0.7), Broadening::lorentzian(0.7)] {
            let (a, z, n) = (-3.0, 2.0, 20000);
            let h = (z - a) / n as f64;
            let mut s = 0.5 * (b.line(a, 0.7) + b.line(z, 0.7));
            for i in 1..n {
                s += b.line(a + i as f64 * h, 0.7);
            }
            s *= h;
            let exact = b.cumulative(z, 0.7) - b.cumulative(a, 0.7);
            assert!((s - exact).abs() < 1e-7, "{b:?}: {s} vs {exact}");
        }
    }
}
