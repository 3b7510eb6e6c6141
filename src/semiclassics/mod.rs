//! Semiclassics of any model: zero-field bands, constant-energy contours, their area, cyclotron
//! mass and Berry phase; Onsager levels; and the quantum-oscillation fan an experiment fits,
//! next to the exact levels.
//!
//! The pieces, in data order:
//! * [`bands`]: H(kx, ky) at B = 0 (field-linear terms at a chosen field) from the model's own
//!   terms; band energies and eigenvectors.
//! * [`contour`]: contours E_b(k) = E along rays from a centre; area (trapezoid in the angle;
//!   shoelace as a cross-check).
//! * [`berry`]: the Berry phase of a contour by the discrete Wilson loop (gauge invariant).
//! * [`orbit`]: a contour refined until area and phase are stable; dA/dE and the cyclotron mass.
//! * [`onsager`]: semiclassical levels A(E_n) l_B^2 = 2 pi (n + 1/2 - gamma / 2 pi).
//! * [`fan`]: exact levels crossing a Fermi energy, the index-vs-1/B least-squares line, Onsager's
//!   frequency and intercept.
//! * [`fft`]: the oscillation frequency from the Fourier transform of the DOS at E_F vs 1/B.
//! * [`figure`]: two SVG figures.
//!
//! # Accuracy (measured by the tests in `tests/semiclassics.rs`)
//! Area to 1e-9 relative and Berry phase to 1e-6 rad by default ([`orbit::Resolution`]); the
//! cyclotron mass to about 1e-7 relative (Richardson-extrapolated differences).

pub mod bands;
pub mod berry;
pub mod contour;
pub mod fan;
pub mod fft;
pub mod figure;
pub mod onsager;
pub mod orbit;

pub use bands::Bands;
pub use contour::{Contour, Search};
pub use orbit::{Orbit, Resolution};
