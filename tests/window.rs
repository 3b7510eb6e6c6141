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

/// Part `p` of the joint tests: a band matrix (half-bandwidth 2) with diagonal
/// offset + spacing * i and small couplings, complex when `complex` (invented numbers).
fn part(
    n: usize,
    offset: f64,
    spacing: f64,
    complex: bool,
) -> ladderfan::numeric::banded::BandedHermitian {
    use num_complex::Complex64;
    ladderfan::numeric::banded::BandedHermitian::from_fn(n, 2, |i, j| {
        if i == j {
            Complex64::new(offset + spacing * i as f64, 0.0)
        } else {
            let im = if complex { 0.05 } else { 0.0 };
            let c = Complex64::new(0.3 / (i.abs_diff(j)) as f64, im);
            // H[i][j] for i > j; the conjugate above
            if i > j {
                c
            } else {
                c.conj()
            }
        }
    })
    .unwrap()
}

/// All eigenvalues of a band matrix, densely (nalgebra, the oracle).
fn dense_values(h: &ladderfan::numeric::banded::BandedHermitian) -> Vec<f64> {
    let n = h.size();
    let m = nalgebra::DMatrix::from_fn(n, n, |r, c| h.get(r, c));
    let mut v: Vec<f64> = m.symmetric_eigenvalues().iter().copied().collect();
    v.sort_by(f64::total_cmp);
    v
}

/// The `count` nearest `target` of the union of the parts, by the dense oracle, and those of
/// `nearest_joint`, compared; every part returns only eigenvalues within the certified radius.
fn check_joint(parts: &[ladderfan::numeric::banded::BandedHermitian], target: f64, count: usize) {
    use ladderfan::numeric::window::nearest_joint;
    let sizes: Vec<usize> = parts.iter().map(|p| p.size()).collect();
    let got = nearest_joint(&sizes, |i| Ok(parts[i].clone()), target, count).unwrap();
    assert_eq!(got.len(), parts.len());
    let mut exact: Vec<f64> = parts.iter().flat_map(dense_values).collect();
    exact.sort_by(|a, b| (a - target).abs().total_cmp(&(b - target).abs()));
    let radius = (exact[count - 1] - target).abs();
    let mut union: Vec<f64> = got.iter().flat_map(|s| s.values().to_vec()).collect();
    union.sort_by(|a, b| (a - target).abs().total_cmp(&(b - target).abs()));
    assert!(
        union.len() >= count,
        "{} found, {count} wanted",
        union.len()
    );
    let scale = parts.iter().map(|p| p.norm_bound()).fold(1.0, f64::max);
    let mut union: Vec<f64> = union[..count].to_vec();
    let mut exact: Vec<f64> = exact[..count].to_vec();
    union.sort_by(f64::total_cmp);
    exact.sort_by(f64::total_cmp);
    for (g, e) in union.iter().zip(&exact) {
        assert!((g - e).abs() <= 1e-10 * scale, "{g} vs {e}");
    }
    // each part's own eigenvalues within the radius are all there
    for (p, s) in parts.iter().zip(&got) {
        let inside = dense_values(p)
            .iter()
            .filter(|v| (*v - target).abs() < radius - 1e-9 * scale)
            .count();
        let returned = s.values().len();
        assert!(
            returned >= inside,
            "part of size {}: {returned} < {inside}",
            p.size()
        );
        assert!(s
            .values()
            .iter()
            .all(|v| (v - target).abs() <= radius + 1e-6 * scale));
    }
}

#[test]
fn joint_nearest_over_parts_matches_the_dense_oracle() {
    // three parts of similar density (equal shares suffice), one of them complex
    let parts = [
        part(400, -50.0, 0.25, false),
        part(380, -49.9, 0.26, true),
        part(410, -50.1, 0.24, false),
    ];
    check_joint(&parts, 3.0123, 20);
    // one dense part holds most of the nearest levels: it must be solved again for more
    let skewed = [
        part(300, -2.0, 0.02, false),
        part(300, -50.0, 1.0, false),
        part(300, -50.3, 1.0, false),
    ];
    check_joint(&skewed, 1.0123, 24);
    // a part smaller than its share gives all it has, the others share the rest
    let small = [part(3, 0.5, 0.1, false), part(200, -20.0, 0.3, false)];
    check_joint(&small, 0.7123, 12);
}

#[test]
fn joint_nearest_refuses_bad_arguments_with_a_message() {
    use ladderfan::numeric::window::nearest_joint;
    let parts = [part(20, 0.0, 1.0, false), part(30, 0.0, 1.0, false)];
    let build = |i: usize| Ok(parts[i].clone());
    let e = nearest_joint(&[20, 30], build, 0.0, 51)
        .unwrap_err()
        .to_string();
    assert!(e.contains("1 to 50"), "{e}");
    let e = nearest_joint(&[20, 31], build, 0.0, 5)
        .unwrap_err()
        .to_string();
    assert!(e.contains("size given"), "{e}");
    let e = nearest_joint(&[20, 30], build, f64::NAN, 5)
        .unwrap_err()
        .to_string();
    assert!(e.contains("finite"), "{e}");
}
