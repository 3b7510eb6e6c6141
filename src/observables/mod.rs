//! From levels to what experiments measure: densities of states, Fermi level and filling
//! factor, magneto-optical transitions, and per-level labels.
//!
//! * [`dos`]: Landau degeneracy |qB|/h per area (times the model's declared degeneracy),
//!   broadened density of states (Gaussian or Lorentzian, width optionally growing as sqrt B),
//!   integrated density of states. Only converged levels count.
//! * [`filling`]: carrier density from charge neutrality, Fermi level by bisection at zero or
//!   finite temperature (Fermi-Dirac), filling factor nu = n h/(|q| e B), sweeps against B.
//! * [`optics`]: the velocity operator v = (1/hbar) dH/dk in ladder form, its matrix elements
//!   between eigenvectors (linear x, y and circular sigma±), allowed transitions weighted by
//!   occupation differences, the transition-energy fan against B.
//! * [`volume`]: for 3D models, the kz sheets integrated over kz: DOS, carrier density and
//!   Fermi level per unit volume, with a kz grid refined until it stops changing.
//! * [`labels`]: track keys that follow levels across a sweep, <sigma_z>-like expectation
//!   values, orbital content.
//!
//! # Units
//! Energies in the model's energy unit (meV or m c^2) relative to the spectrum's reference
//! energy; areas in the model's length unit squared (1/nm^2 for lab models, converted to
//! cm^-2 by [`dos::per_cm2`]); temperatures in kelvin; velocities in m/s (lab) or c (natural).
//!
//! # Examples
//! ```
//! use ladderfan::observables::{dos::Broadening, filling::*, optics::*};
//! use ladderfan::{models, FieldPoint, Settings, Spectrum, Vectors};
//! // free electron at 2 T, 5 electrons per Landau degeneracy (invented numbers)
//! let m = models::schrodinger(models::MassParams::default())?;
//! let mut s = Settings::with_cutoff(40);
//! s.vectors = Vectors::Compute;
//! let spec = Spectrum::compute(&m, FieldPoint::field(2.0), &s)?;
//! let n = 5.0 * ladderfan::observables::dos::landau_degeneracy_per_area(m.units(), 2.0, -1.0);
//! let fs = FermiSettings { carrier_density: n, temperature_k: 4.2,
//!     broadening: Broadening::gaussian(0.01), neutrality: Neutrality::Auto };
//! let sol = fermi_level(&m, &spec, &fs)?;
//! let lines = transitions(&m, &spec, &sol.occupation, &OpticsSettings::default())?;
//! // Kohn (1961): one cyclotron line at hbar omega_c = 2 mu_B B = 0.2315 meV (CODATA 2018)
//! assert!(!lines.is_empty());
//! assert!(lines.iter().all(|t| (t.energy - 0.231_535_27).abs() < 1e-6));
//! # Ok::<(), ladderfan::Error>(())
//! ```

pub mod dos;
pub mod filling;
pub mod labels;
pub mod optics;
pub mod volume;
