//! The character of a level: component weights sum_n |psi_(n alpha)|^2 and the mean orbital
//! index <n> = sum n |psi_n|^2, computed by the solver when asked
//! (`Settings::weights = Weights::Compute`, `Settings::character = Character::Compute`), checked against models whose eigenvectors are
//! known in closed form.

use ladderfan::models::{self, Dirac2dParams, MassParams, PauliParams};
use ladderfan::{Character, FieldPoint, Model, Settings, Spectrum, Weights};

/// The spectrum of `m` at `field` (T) with the weights and <n> computed.
fn solve(m: &Model, field: f64, cutoff: usize) -> Spectrum {
    let settings = Settings {
        character: Character::Compute,
        weights: Weights::Compute,
        ..Settings::with_cutoff(cutoff)
    };
    Spectrum::compute(m, FieldPoint::field(field), &settings)
        .unwrap_or_else(|e| panic!("solve failed: {e}"))
}

/// Tolerance of a weight or <n>: rounding of a unit eigenvector of length `cutoff * dim`
/// (common practice: a few hundred eps times the vector length).
fn tol(s: &Spectrum) -> f64 {
    1e2 * f64::EPSILON * (s.cutoff * s.dim) as f64
}

#[test]
fn weights_sum_to_one_and_mean_n_lies_in_the_basis() {
    // Normalised eigenvectors (definition): sum_alpha w_alpha = 1 and 0 <= <n> <= N - 1.
    let massive = models::dirac2d(Dirac2dParams {
        mass_mev: 7.0, // invented gap parameter
        ..Dirac2dParams::default()
    });
    let bhz = models::bhz(models::BhzParams::default());
    for m in [massive, bhz] {
        let m = m.unwrap_or_else(|e| panic!("model: {e}"));
        let s = solve(&m, 3.0, 80);
        let tol = tol(&s);
        for i in 0..s.levels.len() {
            let sum: f64 = s.weights_of(i).iter().sum();
            assert!(
                (sum - 1.0).abs() < tol,
                "{}: level {i} sums to {sum}",
                m.name()
            );
            assert!(s.weights_of(i).iter().all(|&w| w >= 0.0));
            let n = s.mean_n_of(i).unwrap_or(f64::NAN);
            assert!(
                n >= 0.0 && n <= (s.cutoff - 1) as f64,
                "{}: <n> = {n}",
                m.name()
            );
        }
    }
}

#[test]
fn the_default_solve_stores_no_mean_n_and_no_weights() {
    // Settings::with_cutoff leaves Character::Skip and Weights::Skip: nothing extra is stored,
    // and what needs the weights says how to ask for them
    let m = models::schrodinger(MassParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let s = Spectrum::compute(&m, FieldPoint::field(2.0), &Settings::with_cutoff(30))
        .unwrap_or_else(|e| panic!("{e}"));
    assert!(s.mean_n.is_none());
    assert_eq!(s.mean_n_of(0), None);
    assert!(s.weights.is_empty());
    assert!(s.weights_of(0).is_empty());
    let e = ladderfan::observables::labels::pattern_expectation(&s, &[1.0])
        .expect_err("no weights to read");
    assert!(e.to_string().contains("Weights::Compute"), "{e}");
}

#[test]
fn pauli_levels_are_pure_spin() {
    // H = hbar omega_c (n + 1/2) + (g/2) mu_B B sigma_z commutes with sigma_z: every
    // eigenvector is |n> (x) |up> or |n> (x) |down> (Pauli, Z. Phys. 43, 601 (1927); from
    // memory). Weight 1 on its component, 0 on the other, and <n> is a whole number equal to
    // the dominant orbital.
    let m = models::pauli(PauliParams {
        g_factor: 2.7, // invented: splits the spin pairs apart from the orbital ladder
        ..PauliParams::default()
    })
    .unwrap_or_else(|e| panic!("{e}"));
    let s = solve(&m, 4.0, 40);
    let tol = tol(&s);
    for (i, l) in s.levels.iter().enumerate() {
        let w = s.weights_of(i);
        assert!(
            (w[l.component as usize] - 1.0).abs() < tol,
            "level {i}: {w:?}"
        );
        assert!(w[1 - l.component as usize].abs() < tol, "level {i}: {w:?}");
        let n = s.mean_n_of(i).unwrap_or(f64::NAN);
        assert!((n - l.orbital as f64).abs() < tol, "level {i}: <n> = {n}");
    }
}

#[test]
fn schrodinger_level_n_has_mean_n_equal_to_n() {
    // Landau 1930 (from memory): E_n = hbar omega_c (n + 1/2) with eigenvector |n>, so the
    // k-th level from the bottom is n = k and <n> = n exactly.
    let m = models::schrodinger(MassParams {
        mass_ratio: 0.067, // common practice GaAs-like effective mass
        ..MassParams::default()
    })
    .unwrap_or_else(|e| panic!("{e}"));
    let s = solve(&m, 5.0, 30);
    let tol = tol(&s);
    for (k, l) in s
        .levels
        .iter()
        .enumerate()
        .filter(|(_, l)| l.is_converged())
    {
        let n = s.mean_n_of(k).unwrap_or(f64::NAN);
        assert!((n - k as f64).abs() < tol, "level {k}: <n> = {n}");
        assert_eq!(l.label.n, k as i64);
    }
}

#[test]
fn massless_dirac_levels_share_their_weight_equally() {
    // H = v (sigma_x pi_x + sigma_y pi_y) = sqrt(2) hbar v / l_B (sigma_+ a + sigma_- a^dagger)
    // (up to the valley's phase convention) maps |n-1, A> <-> |n, B> with the same amplitude
    // sqrt(n) hbar omega: for n >= 1 the eigenvectors are (|n-1, A> +- |n, B>)/sqrt(2)
    // (derived here; cf. McClure, Phys. Rev. 104, 666 (1956), from memory). So each sublattice
    // carries 1/2, and <n> = ((n - 1) + n)/2 = n - 1/2; the n = 0 level lives on one
    // sublattice alone at orbital 0.
    let m = models::dirac2d(Dirac2dParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let s = solve(&m, 2.0, 120);
    let tol = 1e3 * tol(&s);
    let mut checked = 0;
    for (i, l) in s.levels.iter().enumerate() {
        if !l.is_converged() || !l.label.is_known() {
            continue;
        }
        let n = l.label.n;
        let w = s.weights_of(i);
        let mean = s.mean_n_of(i).unwrap_or(f64::NAN);
        if n == 0 {
            assert!(w.iter().any(|&x| (x - 1.0).abs() < tol), "n = 0: {w:?}");
            assert!(mean.abs() < tol, "n = 0: <n> = {mean}");
        } else {
            assert!(
                (w[0] - 0.5).abs() < tol && (w[1] - 0.5).abs() < tol,
                "n = {n}: {w:?}"
            );
            assert!(
                (mean - (n as f64 - 0.5)).abs() < tol,
                "n = {n}: <n> = {mean}"
            );
        }
        checked += 1;
    }
    assert!(checked > 50, "only {checked} levels checked");
}
