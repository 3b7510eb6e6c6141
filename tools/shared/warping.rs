//! The invented two-band model with cubic warping (only J mod 3 conserved) that the window
//! probes time, shared by `tools/timing_probe.rs` and `tools/warp_probe.rs`.
use ladderfan::matrix::pauli;
use ladderfan::{Model, Monomial, Result, Settings, Splitting, Target};

/// Mass 20 meV, k^2 terms 400 meV nm^2, velocity 300 meV nm, warping k_x^3 - 3 k_x k_y^2 of
/// 900 meV nm^3 (all numbers invented).
pub fn warped() -> Result<Model> {
    Model::builder("warped (invented)", 2)
        .term("mass", 20.0, pauli("z")?, Monomial::ONE)
        .term("kx2", 400.0, pauli("z")?, Monomial::new(2, 0, 0))
        .term("ky2", 400.0, pauli("z")?, Monomial::new(0, 2, 0))
        .term("vx", 300.0, pauli("x")?, Monomial::KX)
        .term("vy", 300.0, pauli("y")?, Monomial::KY)
        .term("w1", 900.0, pauli("z")?, Monomial::new(3, 0, 0))
        .term("w2", -2700.0, pauli("z")?, Monomial::new(1, 2, 0))
        .build()
}

/// The window the probes time on [`warped`]: the 20 levels nearest 100 meV at cutoff `n`, with
/// the J mod 3 split or without it.
pub fn window_settings(n: usize, split: Splitting) -> Settings {
    let mut s = Settings::with_cutoff(n);
    s.target = Target::Nearest {
        energy: 100.0,
        count: 20,
    };
    s.splitting = split;
    s
}
