//! The window solver inside `Spectrum::compute`: for sectors too large to diagonalise densely,
//! the levels in a window (or nearest a target) come from shift-invert Lanczos on the banded
//! sector matrix; the dense path is the oracle (same levels to 1e-10 of the matrix scale).

mod common;

use common::warped;
use ladderfan::{FieldPoint, Settings, Spectrum, Splitting, Target};

fn solve(target: Target, dense_max: usize, splitting: Splitting) -> Spectrum {
    let mut s = Settings::with_cutoff(450);
    s.target = target;
    s.dense_max = dense_max;
    s.splitting = splitting;
    Spectrum::compute(&warped(), FieldPoint::field(4.0), &s).unwrap()
}

fn assert_same(a: &Spectrum, b: &Spectrum) {
    assert_eq!(a.levels.len(), b.levels.len());
    let scale = b.levels.iter().fold(1.0f64, |x, l| x.max(l.energy.abs()));
    for (x, y) in a.levels.iter().zip(&b.levels) {
        assert!(
            (x.energy - y.energy).abs() <= 1e-10 * scale,
            "{} vs {}",
            x.energy,
            y.energy
        );
        assert!((x.bound - y.bound).abs() <= 1e-6 * scale + 0.5 * y.bound.max(x.bound));
        assert_eq!(x.sector, y.sector);
    }
}

#[test]
fn nearest_levels_from_the_window_solver_match_the_dense_oracle() {
    for splitting in [Splitting::Auto, Splitting::Off] {
        let target = Target::Nearest {
            energy: 35.0,
            count: 20,
        };
        let window = solve(target, 100, splitting);
        let dense = solve(target, usize::MAX, splitting);
        assert_eq!(window.levels.len(), 20);
        assert_same(&window, &dense);
        // they are the 20 nearest of the full dense spectrum
        let all = solve(Target::All, usize::MAX, splitting);
        let mut d: Vec<f64> = all.levels.iter().map(|l| (l.energy - 35.0).abs()).collect();
        d.sort_by(f64::total_cmp);
        let worst = window
            .levels
            .iter()
            .map(|l| (l.energy - 35.0).abs())
            .fold(0.0, f64::max);
        assert!(worst <= d[19] + 1e-9);
    }
}

#[test]
fn window_levels_from_the_window_solver_match_the_dense_oracle() {
    let target = Target::Window {
        lo: -150.0,
        hi: 150.0,
    };
    let window = solve(target, 100, Splitting::Auto);
    let dense = solve(target, usize::MAX, Splitting::Auto);
    assert!(window.levels.len() > 5);
    assert_same(&window, &dense);
    assert!(window
        .levels
        .iter()
        .all(|l| (-150.0..=150.0).contains(&l.energy)));
}

#[test]
fn bad_targets_are_refused_with_a_message() {
    let mut s = Settings::with_cutoff(50);
    s.target = Target::Window { lo: 3.0, hi: 1.0 };
    let e = Spectrum::compute(&warped(), FieldPoint::field(4.0), &s)
        .unwrap_err()
        .to_string();
    assert!(e.contains("lo < hi"), "{e}");
    s.target = Target::Nearest {
        energy: 0.0,
        count: 0,
    };
    let e = Spectrum::compute(&warped(), FieldPoint::field(4.0), &s)
        .unwrap_err()
        .to_string();
    assert!(e.contains("count of at least 1"), "{e}");
}
