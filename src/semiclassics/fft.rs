//! The oscillation frequency from a Fourier transform of the density of states at E_F
//! against 1/B.
//!
//! # Formula
//! D(B) = (1 / 2 pi l_B^2) sum_levels L(E_F - E_l(B)) with a normalised line L of the stated
//! broadening ([`Broadening`]: Lorentzian half width or Gaussian standard deviation), sampled
//! on N points uniform in x = 1/B. After removing the mean and a Hann window,
//! |sum_j w_j (D_j - `<D>`) exp(-2 pi i F x_j)| is evaluated on a grid 8 times finer than the
//! natural resolution 1 / (x_max - x_min) and the highest peak above `f_min` is refined by a
//! parabola through its three samples. The frequency's uncertainty is quoted as half the natural
//! resolution, 1 / (2 (x_max - x_min)).

use super::fan::exact_levels;
use crate::error::{Error, Result};
use crate::model::Model;
use crate::observables::dos::{landau_degeneracy_per_area, Broadening};
use std::f64::consts::PI;

/// The DOS at the Fermi energy on a grid uniform in 1/B.
#[derive(Debug, Clone, PartialEq)]
pub struct DosTrace {
    /// x = 1/B, ascending in |x|.
    pub inverse_field: Vec<f64>,
    /// D(E_F) per energy per area (model units) at each x.
    pub dos: Vec<f64>,
}

/// D(E_F) of `model` at `samples` fields uniform in 1/B between b_min and b_max.
///
/// # Errors
/// [`Error::BadNumber`] for a bad range or fewer than 16 samples; as [`exact_levels`] and
/// [`Broadening::width_at`].
#[allow(clippy::too_many_arguments)]
pub fn dos_trace(
    model: &Model,
    kz: f64,
    fermi_energy: f64,
    broadening: &Broadening,
    (b_min, b_max): (f64, f64),
    samples: usize,
    cutoff: usize,
) -> Result<DosTrace> {
    if !(b_min.abs() > 0.0 && b_max.abs() > b_min.abs() && b_min * b_max > 0.0) || samples < 16 {
        return Err(Error::BadNumber {
            name: "DOS field range".into(),
            value: b_min,
            fix: "give 0 < |B_min| < |B_max| of one sign and at least 16 samples".into(),
        });
    }
    let (x0, x1) = (1.0 / b_max, 1.0 / b_min);
    let mut trace = DosTrace {
        inverse_field: Vec::with_capacity(samples),
        dos: Vec::with_capacity(samples),
    };
    for j in 0..samples {
        let x = x0 + (x1 - x0) * j as f64 / (samples - 1) as f64;
        let b = 1.0 / x;
        let w = broadening.width_at(b)?;
        let window = (fermi_energy - 20.0 * w, fermi_energy + 20.0 * w);
        let levels = exact_levels(model, b, kz, cutoff, window)?;
        let sum: f64 = levels
            .iter()
            .map(|e| broadening.line(fermi_energy - e, w))
            .sum();
        trace.inverse_field.push(x);
        trace
            .dos
            .push(landau_degeneracy_per_area(model.units(), b, model.charge()) * sum);
    }
    Ok(trace)
}

/// The dominant frequency of a trace.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FrequencyPeak {
    /// Frequency F (field unit: T or B_c).
    pub frequency: f64,
    /// Half the natural resolution, 1 / (2 |x range|).
    pub uncertainty: f64,
    /// Peak magnitude relative to the largest magnitude below f_min (a quality indicator).
    pub amplitude: f64,
}

/// The highest peak of |Fourier transform| of `trace` above `f_min`, up to the Nyquist
/// frequency (see the module docs).
///
/// # Errors
/// [`Error::BadNumber`] when the trace is too short or flat, or no frequency lies above f_min.
pub fn dominant_frequency(trace: &DosTrace, f_min: f64) -> Result<FrequencyPeak> {
    let x = &trace.inverse_field;
    let n = x.len();
    if n < 16 || trace.dos.len() != n {
        return Err(Error::BadNumber {
            name: "DOS trace length".into(),
            value: n as f64,
            fix: "sample at least 16 fields".into(),
        });
    }
    let span = (x[n - 1] - x[0]).abs();
    let mean = trace.dos.iter().sum::<f64>() / n as f64;
    let y: Vec<f64> = trace
        .dos
        .iter()
        .enumerate()
        .map(|(j, d)| {
            let w = 0.5 - 0.5 * (2.0 * PI * j as f64 / (n - 1) as f64).cos();
            w * (d - mean)
        })
        .collect();
    let magnitude = |f: f64| -> f64 {
        let (mut re, mut im) = (0.0, 0.0);
        for (xj, yj) in x.iter().zip(&y) {
            let p = -2.0 * PI * f * (xj - x[0]);
            re += yj * p.cos();
            im += yj * p.sin();
        }
        (re * re + im * im).sqrt()
    };
    let df = 1.0 / (8.0 * span);
    let nyquist = 0.5 * (n - 1) as f64 / span;
    let steps = (nyquist / df) as usize;
    let mags: Vec<f64> = (0..=steps).map(|k| magnitude(k as f64 * df)).collect();
    let first = ((f_min / df).ceil() as usize).max(1);
    let best = (first..steps)
        .max_by(|&a, &b| mags[a].total_cmp(&mags[b]))
        .filter(|&k| mags[k] > 0.0)
        .ok_or_else(|| Error::BadNumber {
            name: "minimum frequency".into(),
            value: f_min,
            fix: format!(
                "no oscillation above it up to the Nyquist frequency {nyquist:e}; lower it or \
                 sample more fields"
            ),
        })?;
    let (a, b, c) = (mags[best - 1], mags[best], mags[best + 1]);
    let denom = a - 2.0 * b + c;
    let shift = if denom != 0.0 {
        (0.5 * (a - c) / denom).clamp(-0.5, 0.5)
    } else {
        0.0
    };
    let low = mags[..first]
        .iter()
        .cloned()
        .fold(f64::MIN_POSITIVE, f64::max);
    Ok(FrequencyPeak {
        frequency: (best as f64 + shift) * df,
        uncertainty: 0.5 / span,
        amplitude: b / low,
    })
}
