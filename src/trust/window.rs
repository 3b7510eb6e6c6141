//! Window completeness: does every level of an energy window have its orbitals below the
//! cutoff?
//!
//! A truncated solve with orbitals n < N sees, semiclassically, the band states with in-plane
//! wave number up to k_max = sqrt(2N) / l_B (Onsager quantisation: the orbit of Landau level n
//! encloses pi k^2 = 2 pi (n + 1/2) / l_B^2). If a band of the model turns back at large |k| —
//! a quadratic term outgrowing a linear one, e.g. a 2D Dirac model with -k^2 on one component —
//! its energy re-enters a low-energy window at some k* > k_max; the levels it contributes there
//! have orbital index n* ~ (k* l_B)^2 / 2 far above N. No truncated solve below n* sees them,
//! and comparing N with 2N does not reveal them. This module detects the situation from the
//! model itself.
//!
//! # Method
//! The bands E_b(k) are the eigenvalues of the d x d Bloch matrix
//! H(k) = sum_t c_t M_t kx^a ky^b kz^c B^f (field terms evaluated at the solve's field, kz at
//! the solve's kz), minus the reference energy, sorted ascending (Klein-Gordon models map each
//! eigenvalue to both energy branches). Along 16 in-plane directions and on a logarithmic grid
//! of |k| from k_max to 1e6 k_max (60 points per decade), a band is flagged when a sample lies
//! inside the window or two successive samples straddle it. The grid is finite, so a band that
//! dips into the window between samples by less than the grid resolves can escape; the warning
//! is a necessary-condition check, not a proof of completeness.
//!
//! # Complexity
//! O(directions x samples x d^3), about 6000 d x d eigen-solves: negligible next to a solve.

use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::levels::{kg_energy, Root};
use crate::model::{Model, SpectrumForm};
use nalgebra::DMatrix;
use num_complex::Complex64;
use serde::Serialize;

/// In-plane directions sampled.
pub const DIRECTIONS: usize = 16;
/// How far beyond k_max the bands are followed (factor).
pub const FAR_FACTOR: f64 = 1.0e6;
/// Samples per decade of |k|.
pub const SAMPLES_PER_DECADE: usize = 60;

/// An energy window, relative to the spectrum's reference energy, in the model's energy unit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EnergyWindow {
    /// Lower edge.
    pub lower: f64,
    /// Upper edge.
    pub upper: f64,
}

impl EnergyWindow {
    /// The window [lower, upper].
    ///
    /// # Errors
    /// [`Error::BadNumber`] when an edge is not finite or lower > upper.
    pub fn new(lower: f64, upper: f64) -> Result<Self> {
        if !(lower.is_finite() && upper.is_finite() && lower <= upper) {
            return Err(Error::BadNumber {
                name: "energy window".into(),
                value: upper - lower,
                fix: format!("give finite edges with lower <= upper (got [{lower}, {upper}])"),
            });
        }
        Ok(EnergyWindow { lower, upper })
    }

    /// Whether `e` lies inside the window (edges included).
    pub fn contains(&self, e: f64) -> bool {
        e >= self.lower && e <= self.upper
    }
}

/// A band that re-enters the window beyond the cutoff's reach.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WindowWarning {
    /// The window checked.
    pub window: EnergyWindow,
    /// Band index at large k (0 = lowest eigenvalue of H(k); Klein-Gordon: particle branch
    /// bands first, then antiparticle).
    pub band: usize,
    /// Direction (degrees from kx) where the re-entry was seen first.
    pub direction_deg: f64,
    /// Smallest |k| (inverse length unit) beyond k_max where the band is inside the window.
    pub wave_number: f64,
    /// k_max = sqrt(2N)/l_B reached by the cutoff.
    pub reached_wave_number: f64,
    /// Orbital index the re-entering levels have, about (k l_B)^2 / 2.
    pub orbital_estimate: f64,
    /// A sentence for the user, naming the window and the band.
    pub message: String,
}

/// The Bloch matrix H(k) of `model` at in-plane (kx, ky), with kz and field from `point`.
fn bloch(model: &Model, kx: f64, ky: f64, point: FieldPoint) -> DMatrix<Complex64> {
    let d = model.dim();
    let mut h = DMatrix::zeros(d, d);
    for t in model.terms() {
        let m = t.monomial;
        let f = kx.powi(m.kx as i32)
            * ky.powi(m.ky as i32)
            * point.kz.powi(m.kz as i32)
            * point.field.powi(m.field as i32);
        if f != 0.0 {
            h += &t.matrix * (t.coefficient * f);
        }
    }
    h
}

/// Band energies relative to `reference` at one k, ascending per branch.
fn energies(model: &Model, kx: f64, ky: f64, point: FieldPoint, reference: f64) -> Vec<f64> {
    let h = bloch(model, kx, ky, point);
    let mut ev: Vec<f64> = nalgebra::SymmetricEigen::new(h)
        .eigenvalues
        .iter()
        .copied()
        .collect();
    ev.sort_by(f64::total_cmp);
    match model.form() {
        SpectrumForm::Direct => ev.iter().map(|e| e - reference).collect(),
        SpectrumForm::KleinGordon { rest_energy } => {
            let mut out: Vec<f64> = ev
                .iter()
                .map(|&l| kg_energy(l, rest_energy, Root::Particle, reference))
                .collect();
            out.extend(
                ev.iter()
                    .map(|&l| kg_energy(l, rest_energy, Root::Antiparticle, reference)),
            );
            out
        }
    }
}

/// Check that no band of `model` re-enters `window` beyond the wave number reached by
/// `cutoff` orbitals at magnetic length `magnetic_length` (see the module docs).
///
/// Returns one warning per offending band (the first direction and smallest |k| found).
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive magnetic length or a cutoff of zero.
pub fn check_window(
    model: &Model,
    point: FieldPoint,
    reference_energy: f64,
    magnetic_length: f64,
    cutoff: usize,
    window: EnergyWindow,
) -> Result<Vec<WindowWarning>> {
    if !(magnetic_length.is_finite() && magnetic_length > 0.0) || cutoff == 0 {
        return Err(Error::BadNumber {
            name: "magnetic length".into(),
            value: magnetic_length,
            fix: "check the field (non-zero) and the cutoff (at least 1)".into(),
        });
    }
    let k_max = (2.0 * cutoff as f64).sqrt() / magnetic_length;
    let decades = FAR_FACTOR.log10();
    let samples = (decades * SAMPLES_PER_DECADE as f64).ceil() as usize;
    let mut found: Vec<Option<WindowWarning>> = Vec::new();
    for dir in 0..DIRECTIONS {
        let theta = 2.0 * std::f64::consts::PI * dir as f64 / DIRECTIONS as f64;
        let (c, s) = (theta.cos(), theta.sin());
        let mut prev: Option<Vec<f64>> = None;
        for i in 0..=samples {
            let k = k_max * 10f64.powf(decades * i as f64 / samples as f64);
            let e = energies(model, k * c, k * s, point, reference_energy);
            if found.len() < e.len() {
                found.resize(e.len(), None);
            }
            for (b, &eb) in e.iter().enumerate() {
                let straddle = prev.as_ref().is_some_and(|p| {
                    let pb = p[b];
                    (pb < window.lower && eb > window.upper)
                        || (pb > window.upper && eb < window.lower)
                });
                if !(window.contains(eb) || straddle) {
                    continue;
                }
                let better = found[b].as_ref().map_or(true, |w| k < w.wave_number);
                if better {
                    let n_est = 0.5 * (k * magnetic_length).powi(2);
                    found[b] = Some(WindowWarning {
                        window,
                        band: b,
                        direction_deg: theta.to_degrees(),
                        wave_number: k,
                        reached_wave_number: k_max,
                        orbital_estimate: n_est,
                        message: format!(
                            "band {b} of model '{}' re-enters the energy window [{}, {}] {} at |k| = {:.4e} \
                             (direction {:.1} deg), beyond the |k| = {:.4e} reached by a cutoff of {cutoff} \
                             orbitals: its levels there have orbital index about {:.3e} and are missing from \
                             the computed spectrum; raise the cutoff beyond that index or change the model",
                            model.name(),
                            window.lower,
                            window.upper,
                            model.units().energy_unit(),
                            k,
                            theta.to_degrees(),
                            k_max,
                            n_est
                        ),
                    });
                }
            }
            prev = Some(e);
        }
    }
    Ok(found.into_iter().flatten().collect())
}

/// [`check_window`] for the model, point, reference energy and cutoff of a computed spectrum.
///
/// # Errors
/// As [`check_window`].
pub fn check_spectrum(
    model: &Model,
    spectrum: &Spectrum,
    window: EnergyWindow,
) -> Result<Vec<WindowWarning>> {
    check_window(
        model,
        spectrum.point,
        spectrum.reference_energy,
        spectrum.magnetic_length,
        spectrum.cutoff,
        window,
    )
}
