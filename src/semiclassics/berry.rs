//! Berry phase of a closed contour for one band by the discrete Wilson loop.
//!
//! # Formula
//! With u_j the unit eigenvector of the band at the j-th contour point (counter-clockwise,
//! j = 0..M-1, u_M = u_0),
//!
//! W = prod_j <u_j | u_{j+1}>,   phi_B = -arg W  in [-pi, pi).
//!
//! Every u_j appears once as a bra and once as a ket, so an arbitrary phase of each
//! eigenvector cancels: W is gauge invariant. As M grows, -arg W tends to the Berry phase
//! i oint <u|grad_k u> . dk (Resta 2000, "Manifestations of Berry's phase in molecules and
//! condensed matter", J. Phys.: Condens. Matter 12, R107; from memory); the error is
//! O(1/M^2) for a smooth contour. The phase is defined modulo 2 pi: a Wilson loop cannot tell
//! 2 pi from 0.

use super::bands::Bands;
use super::contour::Contour;
use crate::error::{Error, Result};
use num_complex::Complex64;

/// The Wilson loop of one band around one contour.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WilsonLoop {
    /// Berry phase phi_B = -arg W in [-pi, pi), counter-clockwise contour.
    pub phase: f64,
    /// |W| (1 for a perfectly resolved loop; well below 1 means too few points).
    pub modulus: f64,
    /// Smallest gap of the band to its neighbours on the contour.
    pub min_gap: f64,
}

/// The Wilson loop of band `band` around `contour` (counter-clockwise).
///
/// # Errors
/// [`Error::Numerical`] when the band touches a neighbour on the contour (gap below 1e-10 of
/// the contour energy scale: the single-band phase is undefined there).
pub fn wilson_loop(bands: &Bands, band: usize, contour: &Contour) -> Result<WilsonLoop> {
    let pts = contour.points();
    let states = pts
        .iter()
        .map(|&(kx, ky)| bands.state(band, kx, ky))
        .collect::<Result<Vec<_>>>()?;
    let scale = contour
        .energy
        .abs()
        .max(bands.energy_scale())
        .max(f64::MIN_POSITIVE);
    let min_gap = states.iter().map(|s| s.gap).fold(f64::INFINITY, f64::min);
    if min_gap < 1e-10 * scale {
        return Err(Error::Numerical {
            stage: "Berry phase".into(),
            detail: format!(
                "band {band} touches another band on the contour at energy {} (gap {min_gap:e}): \
                 the phase of a single band is undefined there; pick an energy where the band is \
                 alone (bands degenerate everywhere, such as the spin pairs of dirac or bhz at \
                 zero field, need a many-band Wilson loop, not available yet)",
                contour.energy
            ),
        });
    }
    let mut w = Complex64::new(1.0, 0.0);
    for j in 0..states.len() {
        let a = &states[j].vector;
        let b = &states[(j + 1) % states.len()].vector;
        w *= a.dotc(b);
    }
    Ok(WilsonLoop {
        phase: -w.arg(),
        modulus: w.norm(),
        min_gap,
    })
}
