//! Fermi level, carrier density and filling factor, at zero or finite temperature.
//!
//! # Definitions
//! * Occupation of a level at E_l, broadened into the line L (see [`super::dos`]), at chemical
//!   potential mu and temperature T: o_l = int L(E - E_l) f(E - mu) dE with the Fermi-Dirac
//!   function f(x) = 1/(exp(x/kT) + 1); at T = 0, o_l = C(mu - E_l), the cumulative line.
//! * Carrier density measured from charge neutrality at energy E_cnp ([`Neutrality`]):
//!   n(mu) = g |qB|/h sum_l (o_l - theta(E_cnp - E_l)), with theta(0) = 1/2 (a level within
//!   1e-9 line widths of E_cnp counts as sitting at it), summed over the converged levels. For a Dirac-like model (E_cnp at the Dirac point) this is electrons above
//!   the neutrality point minus holes below it, negative for hole doping; a level sitting exactly
//!   at E_cnp (the n = 0 level of a massless Dirac model) is half filled at neutrality. For a
//!   single band ([`Neutrality::EmptyBand`]) it is simply the number of occupied states.
//! * Filling factor nu = n h / (|q| e B) = n / (|qB|/h): carriers per Landau degeneracy, without
//!   dividing out the model's extra degeneracy g: a massless Dirac model with g = 2 has its
//!   gaps at nu = ±1, ±3, ±5, ... = ±g (k + 1/2); graphene's ±2, ±6, ±10 need g = 4 (spin and
//!   valley), as is common practice.
//! * The Fermi level solves n(mu) = n_target by bisection (n is non-decreasing in mu); when the
//!   target falls in a gap (n flat over an interval, as at T = 0 with narrow lines), the middle
//!   of that interval is returned.
//!
//! # Units
//! Densities in 1/(length unit)^2 (1/nm^2 for lab models; see [`super::dos::per_cm2`]),
//! energies in the model's energy unit relative to the spectrum's reference energy, temperature
//! in kelvin.

use super::dos::{landau_degeneracy_per_area, Broadening, LevelDensity};
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::numeric::root::{illinois, Stop};
use crate::policy::NEUTRALITY_SNAP_WIDTHS;
use crate::solve::Settings;
use crate::units::{Units, ELECTRON_MASS, MEV, SPEED_OF_LIGHT};
use serde::Serialize;

/// Boltzmann constant in J/K (exact, CODATA 2018).
pub const BOLTZMANN: f64 = 1.380_649e-23;

/// k_B T in the model's energy unit for a temperature in kelvin (meV for lab units; m_e c^2 for
/// natural units, the electron being the reference particle).
///
/// # Examples
/// ```
/// // k_B = 8.617 333 262e-2 meV/K (CODATA 2018)
/// let kt = ladderfan::observables::filling::thermal_energy(ladderfan::units::Units::Lab, 1.0);
/// assert!((kt - 8.617_333_262e-2).abs() < 1e-11);
/// ```
pub fn thermal_energy(units: Units, temperature_k: f64) -> f64 {
    match units {
        Units::Lab => BOLTZMANN * temperature_k / MEV,
        Units::Natural => {
            BOLTZMANN * temperature_k / (ELECTRON_MASS * SPEED_OF_LIGHT * SPEED_OF_LIGHT)
        }
    }
}

/// A temperature in kelvin must be finite and not negative.
pub(crate) fn check_temperature(t: f64) -> Result<()> {
    if t.is_finite() && t >= 0.0 {
        Ok(())
    } else {
        Err(Error::BadNumber {
            name: "temperature (K)".into(),
            value: t,
            fix: "give a temperature in kelvin, 0 or positive".into(),
        })
    }
}

/// Where the carrier density is counted from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub enum Neutrality {
    /// [`Neutrality::EmptyBand`] when the model's spectrum is bounded below
    /// ([`super::dos::bounded_below`]: a parabolic band, say), otherwise
    /// [`Neutrality::Energy`] at the absolute energy zero (the Dirac point of the built-in Dirac
    /// models, the middle of the gap of the relativistic ones).
    #[default]
    Auto,
    /// Count every occupied converged level (a band that is empty at neutrality).
    EmptyBand,
    /// Neutrality at this energy (model energy unit, relative to the spectrum's reference):
    /// converged levels below it are filled at neutrality.
    Energy(f64),
}

impl Neutrality {
    /// Resolve [`Neutrality::Auto`] for a spectrum: `None` means an empty band, `Some(E_cnp)` an
    /// energy relative to the spectrum's reference.
    pub fn resolve(self, spectrum: &Spectrum, density: &LevelDensity) -> Option<f64> {
        match self {
            Neutrality::EmptyBand => None,
            Neutrality::Energy(e) => Some(e),
            Neutrality::Auto if density.bounded_below => None,
            Neutrality::Auto => Some(0.0 - spectrum.reference_energy),
        }
    }
}

/// What fixes the Fermi level: density, temperature, broadening, neutrality.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FermiSettings {
    /// Carrier density from neutrality, in 1/(length unit)^2 (1/nm^2 for lab models;
    /// 1e12 cm^-2 = 0.01 nm^-2); negative for holes.
    pub carrier_density: f64,
    /// Temperature in kelvin (0 allowed).
    pub temperature_k: f64,
    /// Broadening of the levels.
    pub broadening: Broadening,
    /// Where the density is counted from.
    pub neutrality: Neutrality,
}

/// Occupations of levels for a given chemical potential, temperature and broadening.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Occupation {
    /// Chemical potential (Fermi level), model energy unit, relative to the reference.
    pub chemical_potential: f64,
    /// k_B T in the model's energy unit.
    pub thermal_energy: f64,
    /// Broadening.
    pub broadening: Broadening,
    /// Width at the field of the spectrum.
    pub width: f64,
}

// 10-point Gauss-Legendre nodes and weights on [-1, 1] (Abramowitz & Stegun Table 25.4).
const GL_X: [f64; 5] = [
    0.148_874_338_981_631_2,
    0.433_395_394_129_247_2,
    0.679_409_568_299_024_4,
    0.865_063_366_688_984_5,
    0.973_906_528_517_171_7,
];
const GL_W: [f64; 5] = [
    0.295_524_224_714_752_9,
    0.269_266_719_309_996_4,
    0.219_086_362_515_982,
    0.149_451_349_150_580_6,
    0.066_671_344_308_688_1,
];

fn gauss_legendre(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> f64 {
    let (c, h) = (0.5 * (a + b), 0.5 * (b - a));
    let mut s = 0.0;
    for i in 0..5 {
        s += GL_W[i] * (f(c + h * GL_X[i]) + f(c - h * GL_X[i]));
    }
    s * h
}

/// Fermi-Dirac tail 1/(e^u + 1) for u >= 0.
fn fermi_tail(u: f64) -> f64 {
    let e = (-u).exp();
    e / (1.0 + e)
}

/// Thermal window in units of kT beyond which 1/(e^u+1) < 5e-18.
pub(crate) const THERMAL_REACH: f64 = 40.0;

impl Occupation {
    /// Occupation o = int L(E - e_level) f(E - mu) dE of a level at `e_level`, between 0 and 1.
    ///
    /// # Formula
    /// o = C(mu - e_level) + int_0^inf f_0(t) [L(mu + t - e_level) - L(mu - t - e_level)] dt,
    /// f_0(t) = 1/(exp(t/kT) + 1): the T = 0 value plus a thermal correction, integrated by
    /// 10-point Gauss-Legendre panels graded geometrically around the line centre (panel width
    /// from w/4 up to 2 kT: the Fermi tail changes on the scale kT, and 10 nodes integrate
    /// exp(-t/kT) over 2 kT to about 1e-19), so both w << kT and w >> kT are resolved. A
    /// Gaussian line is integrated only where it reaches, |t - |mu - e_level|| <= 9 w
    /// ([`Broadening::reach`]: beyond it the line's weight is below 1e-17).
    ///
    /// # Complexity
    /// O(1) at T = 0; at T > 0, per level within 40 kT (+ 9 w) of the Fermi level (at 300 K
    /// that is every level within 1 eV): for a Lorentzian about 20 panels plus 5 per factor 2
    /// between w and kT, for a Gaussian about 30 panels when w << kT (the graded ones within
    /// 9 w of the line centre).
    pub fn of_level(&self, e_level: f64) -> f64 {
        let a = self.chemical_potential - e_level;
        let w = self.width;
        let base = self.broadening.cumulative(a, w);
        let kt = self.thermal_energy;
        if kt <= 0.0 {
            return base;
        }
        let u0 = a.abs() / kt;
        // the integrand vanishes where neither line term reaches: a line of finite reach r
        // (Gaussian) contributes only for |t - |a|| <= r
        let (u_lo, u_hi) = match self.broadening.reach(w) {
            Some(reach) if a.abs() > THERMAL_REACH * kt + reach => return base,
            Some(reach) => (
                ((a.abs() - reach) / kt).max(0.0),
                ((a.abs() + reach) / kt).min(THERMAL_REACH),
            ),
            None => (0.0, THERMAL_REACH),
        };
        let b = self.broadening;
        // integrand in u = t / kT
        let g = |u: f64| {
            let t = kt * u;
            fermi_tail(u) * (b.line(a + t, w) - b.line(a - t, w))
        };
        // breakpoints: graded around the line centre u0 = |a|/kT where the integrand is sharp
        let sw = w / kt;
        let mut points = vec![u_lo, u_hi];
        let step = |d: f64| (2.0f64).min((0.25 * sw).max(0.25 * d));
        for dir in [1.0, -1.0] {
            let mut d = 0.0;
            loop {
                d += step(d);
                let u = u0 + dir * d;
                if !(u_lo..=u_hi).contains(&u) {
                    break;
                }
                points.push(u);
            }
        }
        if (u_lo..u_hi).contains(&u0) {
            points.push(u0);
        }
        points.sort_by(f64::total_cmp);
        points.dedup();
        let mut corr = 0.0;
        for pair in points.windows(2) {
            corr += gauss_legendre(&g, pair[0], pair[1]);
        }
        (base + kt * corr).clamp(0.0, 1.0)
    }
}

/// A solved Fermi level at one field, with the numbers users compare with measurements.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FermiSolution {
    /// Field in the model's field unit.
    pub field: f64,
    /// Fermi level (chemical potential) relative to the spectrum's reference, model energy unit.
    pub fermi_energy: f64,
    /// Carrier density from neutrality reached at that level, 1/(length unit)^2.
    pub carrier_density: f64,
    /// Filling factor nu = n h/(|q| e B).
    pub filling_factor: f64,
    /// Density of states at the Fermi level, 1/(energy unit x length unit^2).
    pub dos_at_fermi: f64,
    /// Neutrality energy used (`None`: empty band).
    pub neutrality_energy: Option<f64>,
    /// Broadening width at this field.
    pub width: f64,
    /// k_B T in the model's energy unit.
    pub thermal_energy: f64,
    /// The occupation rule at this Fermi level (for optics).
    pub occupation: Occupation,
}

/// Carrier density n(mu) from neutrality (see the module docs), in 1/(length unit)^2.
///
/// `neutrality` is the resolved neutrality energy (`None`: empty band).
///
/// # Complexity
/// O(levels) at T = 0; O(levels near mu x 1000) at T > 0.
pub fn carrier_density(
    density: &LevelDensity,
    occupation: &Occupation,
    neutrality: Option<f64>,
) -> f64 {
    // a level this close to the neutrality energy sits at it (rounding)
    let at = NEUTRALITY_SNAP_WIDTHS * density.width;
    let mut sum = 0.0;
    for &el in &density.energies {
        let filled_at_neutrality = match neutrality {
            None => 0.0,
            Some(e0) if (el - e0).abs() <= at => 0.5,
            Some(e0) if el < e0 => 1.0,
            Some(_) => 0.0,
        };
        sum += occupation.of_level(el) - filled_at_neutrality;
    }
    density.per_level * sum
}

/// The Fermi level for the requested carrier density at the spectrum's field.
///
/// # Errors
/// [`Error::BadNumber`] for a negative or non-finite temperature, a bad broadening, a
/// non-positive density for an empty band, or a density that the converged levels cannot hold
/// (the Fermi level would come within 5 widths plus 10 kT of the edge of the converged window:
/// raise the cutoff); [`Error::NotConverged`] when no level is converged.
///
/// # Examples
/// ```
/// use ladderfan::observables::{dos::Broadening, filling::*};
/// use ladderfan::{models, FieldPoint, Settings, Spectrum};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let s = Spectrum::compute(&m, FieldPoint::field(10.0), &Settings::with_cutoff(60))?;
/// // filling factor 3: with spin degeneracy 2, n = 3 eB/h; the Fermi level sits in the
/// // second Landau level at (3/2) hbar omega_c = 1.737 meV (Landau 1930)
/// let nu3 = 3.0 * ladderfan::observables::dos::landau_degeneracy_per_area(m.units(), 10.0, -1.0);
/// let fs = FermiSettings { carrier_density: nu3, temperature_k: 0.0,
///     broadening: Broadening::gaussian(0.05), neutrality: Neutrality::Auto };
/// let sol = fermi_level(&m, &s, &fs)?;
/// assert!((sol.filling_factor - 3.0).abs() < 1e-9);
/// assert!((sol.fermi_energy - 1.5 * 2.0 * 0.5788381806 ).abs() < 1e-6);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn fermi_level(
    model: &Model,
    spectrum: &Spectrum,
    settings: &FermiSettings,
) -> Result<FermiSolution> {
    let t = settings.temperature_k;
    check_temperature(t)?;
    let target = settings.carrier_density;
    check_target_density(target)?;
    let density = LevelDensity::new(model, spectrum, settings.broadening)?;
    let neutrality = settings.neutrality.resolve(spectrum, &density);
    let kt = thermal_energy(spectrum.units, t);
    let w = density.width;
    let occ_at = |mu: f64| Occupation {
        chemical_potential: mu,
        thermal_energy: kt,
        broadening: settings.broadening,
        width: w,
    };
    let n_at = |mu: f64| carrier_density(&density, &occ_at(mu), neutrality);
    let bracket = Bracket {
        target,
        margin: 5.0 * w + 10.0 * kt,
        window: density.window,
        unit: per_area_unit(spectrum.units),
    };
    let hi = bracket.upper(&n_at)?;
    let lo = bracket.lower(&n_at, neutrality)?;
    // In a gap n(mu) is flat (to rounding): take the middle of the interval where
    // |n(mu) - target| <= 1e-12 of one level's capacity, found by two bisections.
    let slack = 1e-12 * density.per_level;
    let scale = lo.abs().max(hi.abs()).max(w);
    let mu = flat_middle(&n_at, (lo, hi), target, slack, scale);
    let n = n_at(mu);
    let landau = landau_degeneracy_per_area(spectrum.units, spectrum.point.field, model.charge());
    Ok(FermiSolution {
        field: spectrum.point.field,
        fermi_energy: mu,
        carrier_density: n,
        filling_factor: n / landau,
        dos_at_fermi: thermal_dos(&density, &occ_at(mu)),
        neutrality_energy: neutrality,
        width: w,
        thermal_energy: kt,
        occupation: occ_at(mu),
    })
}

/// The requested carrier density must be finite.
fn check_target_density(target: f64) -> Result<()> {
    if !target.is_finite() {
        return Err(Error::BadNumber {
            name: "carrier density".into(),
            value: target,
            fix: "give a finite density".into(),
        });
    }
    Ok(())
}

/// What the bracket of the Fermi level needs: the target density, the safety margin
/// `5 w + 10 kT` from the edges of the converged window `(lo_e, hi_e)`, and the density unit
/// for messages.
struct Bracket {
    target: f64,
    margin: f64,
    window: (f64, f64),
    unit: &'static str,
}

impl Bracket {
    /// Upper end `hi_e - margin`: always a limit; the target must not exceed `n(hi)`.
    fn upper(&self, n_at: &dyn Fn(f64) -> f64) -> Result<f64> {
        let (target, margin, unit) = (self.target, self.margin, self.unit);
        let hi_e = self.window.1;
        let hi = hi_e - margin;
        let n_hi = n_at(hi);
        if target > n_hi {
            return Err(Error::BadNumber {
                name: format!("carrier density ({unit})"),
                value: target,
                fix: format!(
                    "the converged levels hold at most {n_hi:.6e} {unit} before the Fermi level \
                     comes within {margin:.3e} of the top of the converged window at {hi_e:.6e}; \
                     raise the cutoff or lower the density"
                ),
            });
        }
        Ok(hi)
    }

    /// Lower end: `lo_e + margin` (a limit) with a neutrality energy; without one,
    /// `lo_e - margin` moved down until `n(lo) <= target`.
    fn lower(&self, n_at: &dyn Fn(f64) -> f64, neutrality: Option<f64>) -> Result<f64> {
        let (target, margin, unit) = (self.target, self.margin, self.unit);
        let (lo_e, hi_e) = self.window;
        let lo = match neutrality {
            Some(_) => lo_e + margin,
            None => {
                if target <= 0.0 {
                    return Err(Error::BadNumber {
                        name: format!("carrier density ({unit})"),
                        value: target,
                        fix: "a band that is empty at neutrality needs a positive density; pass \
                              a neutrality energy for densities counted from a filled band"
                            .into(),
                    });
                }
                lo_e - margin
            }
        };
        let n_lo = n_at(lo);
        if neutrality.is_some() && target < n_lo {
            return Err(Error::BadNumber {
                name: format!("carrier density ({unit})"),
                value: target,
                fix: format!(
                    "the converged levels reach down to {n_lo:.6e} {unit} only before the Fermi \
                     level comes within {margin:.3e} of the bottom of the converged window at \
                     {lo_e:.6e}; raise the cutoff or raise the density"
                ),
            });
        }
        // empty band: move down until the density is below the target (Lorentzian tails are long)
        let spread = (hi_e - lo_e).abs().max(margin).max(f64::MIN_POSITIVE);
        widen_down(n_at, target, lo, n_lo, spread)
    }
}

/// Step `lo` down by a doubling `spread` while `n(lo) > target` (at most 200 steps).
fn widen_down(
    n_at: &dyn Fn(f64) -> f64,
    target: f64,
    mut lo: f64,
    mut n_lo: f64,
    mut spread: f64,
) -> Result<f64> {
    let mut guard = 0;
    while n_lo > target {
        lo -= spread;
        spread *= 2.0;
        n_lo = n_at(lo);
        guard += 1;
        if guard > 200 {
            return Err(Error::Numerical {
                stage: "Fermi level bracket".into(),
                detail: "the density does not fall below the target; check the broadening".into(),
            });
        }
    }
    Ok(lo)
}

/// Middle of the interval in `[lo, hi]` where `|n(mu) - target| <= slack`: its lower end is the
/// crossing n(mu) = target - slack, its upper end the crossing n(mu) = target + slack, each
/// found by regula falsi with the Illinois modification ([`crate::numeric::root::illinois`],
/// kept in its bracket) to `1e-14 * scale`; an end whose crossing lies outside the bracket is
/// the bracket's end on that side.
///
/// # Complexity
/// About 10-20 evaluations of n per crossing where n is smooth (superlinear convergence, order
/// about 1.44), at most 200; a bisection to the same width took about 47 each. At T > 0 every
/// evaluation sums the thermally smeared occupation of every level within 40 kT of mu, so this
/// is the cost of a finite-temperature Fermi level.
fn flat_middle(
    n_at: &dyn Fn(f64) -> f64,
    (lo, hi): (f64, f64),
    target: f64,
    slack: f64,
    scale: f64,
) -> f64 {
    let stop = Stop {
        rel_width: 1e-14 * scale / lo.abs().max(hi.abs()).max(f64::MIN_POSITIVE),
        max_steps: 200,
        small: 0.0,
    };
    let (n_lo, n_hi) = (n_at(lo), n_at(hi));
    let crossing = |level: f64, (a, na): (f64, f64), (b, nb): (f64, f64)| {
        let f = |m: f64| Ok::<f64, std::convert::Infallible>(n_at(m) - level);
        match illinois(f, (a, na - level), (b, nb - level), stop) {
            Ok(m) => m,
            Err(never) => match never {},
        }
    };
    let mu_lo = crossing(target - slack, (lo, n_lo), (hi, n_hi));
    let mu_hi = crossing(target + slack, (mu_lo, n_at(mu_lo)), (hi, n_hi));
    0.5 * (mu_lo + mu_hi)
}

/// dn/dmu: the DOS at the Fermi level, thermally smeared at T > 0 (a centred difference of the
/// density over 1e-4 of max(w, kT)); equal to g(mu) at T = 0.
fn thermal_dos(density: &LevelDensity, occ: &Occupation) -> f64 {
    if occ.thermal_energy <= 0.0 {
        return density.dos(occ.chemical_potential);
    }
    let h = 1e-4 * occ.width.max(occ.thermal_energy);
    let at = |mu: f64| {
        let o = Occupation {
            chemical_potential: mu,
            ..*occ
        };
        carrier_density(density, &o, None)
    };
    (at(occ.chemical_potential + h) - at(occ.chemical_potential - h)) / (2.0 * h)
}

fn per_area_unit(units: Units) -> &'static str {
    match units {
        Units::Lab => "1/nm^2",
        Units::Natural => "(m c/hbar)^2",
    }
}

/// One point of a Fermi-level sweep: the spectrum and the solution there.
#[derive(Debug, Clone)]
pub struct FermiPoint {
    /// The spectrum at this field.
    pub spectrum: Spectrum,
    /// The Fermi level and filling.
    pub solution: FermiSolution,
}

/// The Fermi level against field at fixed carrier density: the saw-tooth whose jumps between
/// Landau levels are the quantum oscillations (the DOS at the Fermi level oscillates with 1/B).
/// Spectra are computed in parallel ([`crate::sweep::run`]).
///
/// # Errors
/// As [`crate::Spectrum::compute`] and [`fermi_level`] at any point.
pub fn fermi_sweep(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
) -> Result<Vec<FermiPoint>> {
    fermi_sweep_with(model, points, settings, fermi, &|| ())
}

/// [`fermi_sweep`], calling `tick` once per finished point (from any worker thread; a front
/// end draws its progress from it). Collects [`fermi_sweep_stream`].
///
/// # Errors
/// As [`fermi_sweep`].
pub fn fermi_sweep_with(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
    tick: &(dyn Fn() + Sync),
) -> Result<Vec<FermiPoint>> {
    let mut all = Vec::with_capacity(points.len());
    fermi_sweep_stream(model, points, settings, fermi, tick, &mut |_, p| {
        all.push(p);
        Ok(())
    })?;
    Ok(all)
}

/// [`fermi_sweep_with`] in bounded memory: each point's spectrum is solved and its Fermi level
/// found in parallel, and the point is handed to `sink` (with its index) in the order of
/// `points` as soon as it and every point before it are done; at most two batches of
/// [`crate::sweep::default_batch`] points are alive at once, whatever the number of points
/// ([`crate::sweep::stream_map`]). A sink that keeps only what it needs of each spectrum (a
/// figure's thinned lines, the solutions) makes the sweep's memory flat in its length.
///
/// # Errors
/// As [`fermi_sweep`], and the first error of `sink`; points after an error are not handed on.
///
/// # Complexity
/// The solves and Fermi-level searches of every point, in parallel over points.
///
/// # Examples
/// ```
/// use ladderfan::observables::dos::Broadening;
/// use ladderfan::observables::filling::{fermi_sweep_stream, FermiSettings, Neutrality};
/// use ladderfan::{models, FieldPoint, Settings};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let pts: Vec<_> = (1..=6).map(|b| FieldPoint::field(b as f64)).collect();
/// // 1e-2 electrons per nm^2 (invented), Gaussian lines 0.1 meV wide, at 0 K
/// let f = FermiSettings {
///     carrier_density: 1e-2,
///     temperature_k: 0.0,
///     broadening: Broadening::gaussian(0.1),
///     neutrality: Neutrality::Auto,
/// };
/// let mut levels = Vec::new();
/// fermi_sweep_stream(&m, &pts, &Settings::with_cutoff(60), &f, &|| (), &mut |i, p| {
///     levels.push((i, p.solution.fermi_energy));
///     Ok(())
/// })?;
/// assert_eq!(levels.iter().map(|p| p.0).collect::<Vec<_>>(), (0..6).collect::<Vec<_>>());
/// assert!(levels.iter().all(|p| p.1 > 0.0));
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn fermi_sweep_stream(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    fermi: &FermiSettings,
    tick: &(dyn Fn() + Sync),
    sink: &mut (dyn FnMut(usize, FermiPoint) -> Result<()> + Send),
) -> Result<crate::sweep::StreamStats> {
    let compute = |i: usize| {
        let spectrum = Spectrum::compute(model, points[i], settings)?;
        let solution = fermi_level(model, &spectrum, fermi)?;
        tick();
        Ok(FermiPoint { spectrum, solution })
    };
    crate::sweep::stream_map(points.len(), 0, None, &compute, sink)
}
