//! Shared helpers for the observables tests (tests/observables.rs, tests/filling.rs,
//! tests/observables_cli.rs): settings with eigenvectors, closed-form scales and the invented
//! massless 2D Dirac model.

use ladderfan::models::{self, Dirac2dParams};
use ladderfan::units::{ELECTRON_MASS, ELEMENTARY_CHARGE, HBAR, MEV};
use ladderfan::{Model, Settings, Vectors};

pub fn with_vectors(cutoff: usize) -> Settings {
    let mut s = Settings::with_cutoff(cutoff);
    s.vectors = Vectors::Compute;
    s
}

/// hbar omega_c = hbar e B / (m* m_e) in meV (Landau 1930).
pub fn cyclotron_mev(mass_ratio: f64, field: f64) -> f64 {
    HBAR * ELEMENTARY_CHARGE * field / (mass_ratio * ELECTRON_MASS) / MEV
}

/// First massless Dirac level v sqrt(2 e hbar B) in meV (McClure, Phys. Rev. 104, 666 (1956)).
pub fn dirac_e1_mev(v: f64, field: f64) -> f64 {
    v * (2.0 * ELEMENTARY_CHARGE * HBAR * field).sqrt() / MEV
}

pub fn dirac(v: f64, charge: f64) -> Model {
    models::dirac2d(Dirac2dParams {
        velocity_m_per_s: v,
        mass_mev: 0.0,
        valley: ladderfan::models::Valley::Plus,
        charge,
    })
    .unwrap()
}

/// |n| of a massless Dirac level from its energy: (E/E_1)^2 (McClure 1956).
pub fn dirac_index(e: f64, e1: f64) -> (i64, f64) {
    let x = (e / e1).powi(2);
    let n = x.round();
    (n as i64 * if e < 0.0 { -1 } else { 1 }, (x - n).abs())
}
