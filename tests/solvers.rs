//! Tests of the dense-sector solver, the banded factorisations and the window solver.
//! Every oracle is an independent computation: nalgebra's general dynamic-size
//! `SymmetricEigen` of the same matrix formed densely, closed-form spectra, or explicit
//! residuals.

// Tests walk several parallel arrays (ours, oracle) by index; iterators would obscure that.
#![allow(clippy::needless_range_loop)]

use ladderfan::hamiltonian::{FieldPoint, LadderHamiltonian};
use ladderfan::matrix::pauli;
use ladderfan::model::{Model, Monomial};
use ladderfan::numeric::banded::BandedHermitian;
use ladderfan::numeric::dense::{eigh, Vectors};
use ladderfan::numeric::ldl::PartitionedLdl;
use ladderfan::numeric::plu::{min_size, PartitionedLu};
use ladderfan::numeric::window::{in_window, nearest, nearest_pairs};
use ladderfan::units::Units;
use nalgebra::{DMatrix, SymmetricEigen};
use num_complex::Complex64;

/// SplitMix64 (Steele, Lea and Flood, OOPSLA 2014), uniform in [-1, 1).
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    }
}

#[derive(Clone, Copy, PartialEq)]
enum Field {
    Real,
    Complex,
}

fn random_hermitian(s: usize, field: Field, rng: &mut Rng) -> DMatrix<Complex64> {
    let mut h = DMatrix::zeros(s, s);
    for j in 0..s {
        for i in j..s {
            let re = rng.next();
            let im = if i == j || field == Field::Real {
                0.0
            } else {
                rng.next()
            };
            h[(i, j)] = Complex64::new(re, im);
            h[(j, i)] = Complex64::new(re, -im);
        }
    }
    h
}

/// Ascending eigenvalues from nalgebra's general dynamic-size solver (the oracle).
fn oracle(h: &DMatrix<Complex64>) -> Vec<f64> {
    let mut v: Vec<f64> = SymmetricEigen::new(h.clone())
        .eigenvalues
        .iter()
        .copied()
        .collect();
    v.sort_by(f64::total_cmp);
    v
}

fn frobenius(h: &DMatrix<Complex64>) -> f64 {
    h.iter().map(|z| z.norm_sqr()).sum::<f64>().sqrt()
}

fn check_dense(h: &DMatrix<Complex64>) {
    let s = h.nrows();
    let norm = frobenius(h).max(1.0);
    let tol = 1e-13 * norm * (s as f64).max(4.0);
    let want = oracle(h);
    let skip = eigh(h, Vectors::Skip).unwrap();
    assert!(skip.vectors.is_none());
    let got = eigh(h, Vectors::Compute).unwrap();
    assert_eq!(got.values.len(), s);
    for k in 0..s {
        assert!(
            (got.values[k] - want[k]).abs() <= tol,
            "size {s} value {k}: {} vs oracle {}",
            got.values[k],
            want[k]
        );
        assert!((skip.values[k] - want[k]).abs() <= tol);
        if k > 0 {
            assert!(got.values[k] >= got.values[k - 1], "not ascending");
        }
    }
    let v = got.vectors.unwrap();
    let gram = v.adjoint() * &v;
    let ortho = (gram - DMatrix::<Complex64>::identity(s, s)).norm();
    assert!(
        ortho <= 1e-13 * (s as f64).max(4.0),
        "size {s}: ||V^H V - I|| = {ortho}"
    );
    for k in 0..s {
        let x = v.column(k);
        let r = (h * x - x * Complex64::new(got.values[k], 0.0)).norm();
        assert!(r <= tol, "size {s} vector {k}: residual {r}");
    }
}

#[test]
fn dense_every_path_matches_general_solver() {
    let mut rng = Rng(7);
    for field in [Field::Real, Field::Complex] {
        for s in [1, 2, 3, 4, 5, 6, 9, 17, 40, 120] {
            for _ in 0..4 {
                let h = random_hermitian(s, field, &mut rng);
                check_dense(&h);
            }
        }
    }
}

#[test]
fn dense_2x2_closed_form_has_no_cancellation() {
    // tiny coupling next to a large splitting: lambda = m -/+ r with r = hypot(delta, |c|);
    // exact values to first order: a + |c|^2/(a-d), d - |c|^2/(a-d) (perturbation theory,
    // common practice); vector components of order |c|/(a-d) must keep full relative accuracy
    for (a, d) in [(1.0, -1.0), (-1.0, 1.0)] {
        let c = Complex64::new(3e-9, -4e-9);
        let h = DMatrix::from_row_slice(
            2,
            2,
            &[Complex64::new(a, 0.0), c, c.conj(), Complex64::new(d, 0.0)],
        );
        let e = eigh(&h, Vectors::Compute).unwrap();
        let shift = c.norm_sqr() / 2.0; // |c|^2/|a-d|
        assert!((e.values[0] - (-1.0 - shift)).abs() <= 4e-16);
        assert!((e.values[1] - (1.0 + shift)).abs() <= 4e-16);
        let v = e.vectors.unwrap();
        // the small component of the eigenvector of the upper level: |c|/(a-d) to first order
        let small = if a > d {
            v[(1, 1)].norm()
        } else {
            v[(0, 1)].norm()
        };
        let expect = c.norm() / 2.0;
        assert!(
            (small - expect).abs() <= 1e-12 * expect,
            "{small} vs {expect}"
        );
    }
    // degenerate diagonal, no coupling: r = 0
    let h = DMatrix::from_row_slice(
        2,
        2,
        &[
            Complex64::new(2.5, 0.0),
            Complex64::new(0.0, 0.0),
            Complex64::new(0.0, 0.0),
            Complex64::new(2.5, 0.0),
        ],
    );
    let e = eigh(&h, Vectors::Compute).unwrap();
    assert_eq!(e.values, vec![2.5, 2.5]);
    let v = e.vectors.unwrap();
    assert!((v.adjoint() * &v - DMatrix::<Complex64>::identity(2, 2)).norm() < 1e-15);
}

#[test]
fn dense_rejects_bad_input() {
    let h = DMatrix::<Complex64>::zeros(2, 3);
    assert!(eigh(&h, Vectors::Skip).is_err());
    let mut h = DMatrix::<Complex64>::zeros(6, 6);
    h[(4, 1)] = Complex64::new(f64::NAN, 0.0);
    assert!(eigh(&h, Vectors::Skip).is_err());
    let e = eigh(&DMatrix::<Complex64>::zeros(0, 0), Vectors::Compute).unwrap();
    assert!(e.values.is_empty());
}

/// Invented parameters (meV, nm): a 2-band model with a cubic warping term,
/// H = D (kx^2 + ky^2) sz + A (kx sx + ky sy) + W (kx^3 - 3 kx ky^2) sz  (real in this basis),
/// or with the Rashba-like form A (kx sy - ky sx) (complex in this basis).
fn warping_model(rashba: bool) -> Model {
    let (d, a, w) = (50.0, 300.0, 200.0);
    let mut b = Model::builder("warping (invented)", 2)
        .charge(-1.0)
        .units(Units::Lab)
        .term("D kx^2 sz", d, pauli("z").unwrap(), Monomial::new(2, 0, 0))
        .term("D ky^2 sz", d, pauli("z").unwrap(), Monomial::new(0, 2, 0))
        .term("W kx^3 sz", w, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term(
            "-3W kx ky^2 sz",
            -3.0 * w,
            pauli("z").unwrap(),
            Monomial::new(1, 2, 0),
        );
    b = if rashba {
        b.term("A kx sy", a, pauli("y").unwrap(), Monomial::KX)
            .term("-A ky sx", -a, pauli("x").unwrap(), Monomial::KY)
    } else {
        b.term("A kx sx", a, pauli("x").unwrap(), Monomial::KX)
            .term("A ky sy", a, pauli("y").unwrap(), Monomial::KY)
    };
    b.build().unwrap()
}

/// The truncated ladder matrix over `cutoff` orbitals as a band matrix (orbital-major, index
/// n d + alpha, half-bandwidth (band + 1) d - 1), and the same matrix formed densely.
fn model_matrix(rashba: bool, cutoff: usize) -> (BandedHermitian, DMatrix<Complex64>) {
    let model = warping_model(rashba);
    let lh = LadderHamiltonian::assemble(&model, FieldPoint::field(10.0), 0.0).unwrap();
    let d = lh.dim;
    let hb = (lh.band + 1) * d - 1;
    let band = BandedHermitian::from_fn(cutoff * d, hb, |i, j| {
        lh.element(i / d, i % d, j / d, j % d)
    })
    .unwrap();
    (band, lh.dense(cutoff))
}

#[test]
fn banded_product_factorisation_and_inertia_match_dense() {
    for rashba in [false, true] {
        let (band, dense) = model_matrix(rashba, 60);
        assert_eq!(band.is_real(), !rashba);
        let n = band.size();
        assert_eq!(band.half_bandwidth(), 7);
        let mut rng = Rng(3);
        let x: Vec<Complex64> = (0..n)
            .map(|_| Complex64::new(rng.next(), rng.next()))
            .collect();
        let y = band.mul_vec(&x).unwrap();
        let xd = nalgebra::DVector::from_vec(x.clone());
        let yd = &dense * &xd;
        let scale = frobenius(&dense);
        for i in 0..n {
            assert!((y[i] - yd[i]).norm() <= 1e-13 * scale);
        }
        // solve (H - sigma) z = x and check the residual with the dense matrix
        let sigma = 3.3;
        let lu = band.lu(sigma).unwrap();
        let mut z = x.clone();
        lu.solve_in_place(&mut z).unwrap();
        let zd = nalgebra::DVector::from_vec(z);
        let r = &dense * &zd - &zd * Complex64::new(sigma, 0.0) - &xd;
        assert!(
            r.norm() <= 1e-12 * scale * zd.norm(),
            "LU residual {}",
            r.norm()
        );
        if let Some(lur) = band.lu_real(sigma).unwrap() {
            let mut zr: Vec<f64> = x.iter().map(|c| c.re).collect();
            lur.solve_in_place(&mut zr).unwrap();
            for i in 0..n {
                assert!((zr[i] - zd[i].re).abs() <= 1e-10 * zd.norm());
            }
        } else {
            assert!(rashba, "a real matrix must give a real factorisation");
        }
        // inertia: number of eigenvalues below sigma, against the dense oracle
        let values = oracle(&dense);
        for sigma in [-40.0, -3.0, 0.1, 2.0, 25.0, 1e4] {
            let below = values.iter().filter(|&&v| v < sigma).count();
            assert_eq!(band.inertia(sigma).unwrap().below, below, "sigma {sigma}");
        }
        assert!(band.mul_vec(&x[1..]).is_err());
    }
}

/// A random banded Hermitian matrix (seeded) as a band and densely.
fn random_band(
    n: usize,
    b: usize,
    field: Field,
    seed: u64,
) -> (BandedHermitian, DMatrix<Complex64>) {
    let mut rng = Rng(seed);
    let mut dense = DMatrix::<Complex64>::zeros(n, n);
    for i in 0..n {
        for j in i.saturating_sub(b)..=i {
            let re = rng.next();
            let im = if i == j || field == Field::Real {
                0.0
            } else {
                rng.next()
            };
            dense[(i, j)] = Complex64::new(re, im);
            dense[(j, i)] = Complex64::new(re, -im);
        }
    }
    let band = BandedHermitian::from_fn(n, b, |i, j| dense[(i, j)]).unwrap();
    (band, dense)
}

/// Residual ||(H - sigma) z - x|| / (||H - sigma||_F ||z|| + ||x||) of a solve, densely.
fn relative_residual(
    dense: &DMatrix<Complex64>,
    sigma: f64,
    x: &[Complex64],
    z: &[Complex64],
) -> f64 {
    let n = x.len();
    let shifted = dense - DMatrix::<Complex64>::identity(n, n) * Complex64::new(sigma, 0.0);
    let zd = nalgebra::DVector::from_column_slice(z);
    let xd = nalgebra::DVector::from_column_slice(x);
    (&shifted * &zd - &xd).norm() / (frobenius(&shifted) * zd.norm() + xd.norm())
}

#[test]
fn partitioned_ldl_solves_and_counts_like_the_dense_oracle() {
    // sizes with and without the two-block split (n >= 8 (b + 1)), b = 0 (diagonal) to 7,
    // shifts between eigenvalues and very close to one (1e-6 of the local spacing)
    let mut checked = 0;
    for (n, b) in [
        (5, 1),
        (40, 3),
        (64, 7),
        (65, 7),
        (200, 7),
        (301, 4),
        (50, 0),
        (97, 1),
    ] {
        for field in [Field::Real, Field::Complex] {
            let (band, dense) = random_band(n, b, field, 17 + n as u64 + b as u64);
            let values = oracle(&dense);
            let mid = n / 2;
            let gap = values[mid + 1] - values[mid];
            for sigma in [
                0.5 * (values[mid] + values[mid + 1]),
                values[mid] + 1e-6 * gap,
                values[0] - 1.0,
                values[n - 1] + 0.25,
            ] {
                let below = values.iter().filter(|&&v| v < sigma).count();
                let mut rng = Rng(5 + n as u64);
                let x: Vec<Complex64> = (0..n)
                    .map(|_| Complex64::new(rng.next(), rng.next()))
                    .collect();
                if let Some(f) =
                    PartitionedLdl::<Complex64>::factor(&band, sigma, f64::INFINITY).unwrap()
                {
                    assert_eq!(f.below(), below, "n {n} b {b} sigma {sigma}: inertia");
                    let mut z = x.clone();
                    f.solve_in_place(&mut z).unwrap();
                    // backward error of the order of eps times the growth (Higham 2002, sec. 10.4)
                    let eta = relative_residual(&dense, sigma, &x, &z);
                    assert!(
                        eta <= 1e-14 * (1.0 + f.growth()) * (b as f64 + 1.0),
                        "n {n} b {b} sigma {sigma}: backward error {eta:e}, growth {}",
                        f.growth()
                    );
                    checked += 1;
                }
                if field == Field::Real {
                    if let Some(f) =
                        PartitionedLdl::<f64>::factor(&band, sigma, f64::INFINITY).unwrap()
                    {
                        assert_eq!(f.below(), below);
                        let mut zr: Vec<f64> = x.iter().map(|c| c.re).collect();
                        f.solve_in_place(&mut zr).unwrap();
                        let xr: Vec<Complex64> =
                            x.iter().map(|c| Complex64::new(c.re, 0.0)).collect();
                        let zc: Vec<Complex64> =
                            zr.iter().map(|&r| Complex64::new(r, 0.0)).collect();
                        let eta = relative_residual(&dense, sigma, &xr, &zc);
                        assert!(
                            eta <= 1e-14 * (1.0 + f.growth()) * (b as f64 + 1.0),
                            "real: {eta:e}"
                        );
                        assert!(f.solve_in_place(&mut zr[1..]).is_err());
                    }
                }
            }
        }
    }
    // the random matrices factor without pivoting at almost every shift
    assert!(checked >= 56, "only {checked} of 64 factorisations existed");
}

#[test]
fn partitioned_lu_solves_like_the_dense_oracle_or_declines() {
    // sizes at and above the partition minimum 8b + 8, b = 1 to 7, shifts between eigenvalues,
    // very close to one (1e-6 of the local spacing) and outside the spectrum; where it
    // factors, the backward error must be that of a pivoted banded LU (eps times a small
    // multiple of the bandwidth; Golub and Van Loan 2013, sec. 4.3)
    let mut checked = 0;
    let mut tried = 0;
    for (n, b) in [
        (64, 7),
        (65, 7),
        (200, 7),
        (301, 4),
        (97, 1),
        (40, 3),
        (16, 1),
        (12, 1),
    ] {
        for field in [Field::Real, Field::Complex] {
            let (band, dense) = random_band(n, b, field, 29 + n as u64 + b as u64);
            let values = oracle(&dense);
            let mid = n / 2;
            let gap = values[mid + 1] - values[mid];
            for sigma in [
                0.5 * (values[mid] + values[mid + 1]),
                values[mid] + 1e-6 * gap,
                values[0] - 1.0,
                values[n - 1] + 0.25,
            ] {
                let mut rng = Rng(7 + n as u64);
                let x: Vec<Complex64> = (0..n)
                    .map(|_| Complex64::new(rng.next(), rng.next()))
                    .collect();
                let bound = 1e-14 * (2.0 * b as f64 + 1.0);
                let fc = PartitionedLu::<Complex64>::factor(&band, sigma).unwrap();
                if n < min_size(b) {
                    assert!(fc.is_none(), "n {n} b {b}: partitioned below the minimum");
                    continue;
                }
                tried += 1;
                if let Some(f) = fc {
                    let mut z = x.clone();
                    f.solve_in_place(&mut z).unwrap();
                    let eta = relative_residual(&dense, sigma, &x, &z);
                    assert!(
                        eta <= bound,
                        "n {n} b {b} sigma {sigma}: backward error {eta:e}"
                    );
                    assert!(f.solve_in_place(&mut z[1..]).is_err());
                    checked += 1;
                }
                if field == Field::Real {
                    if let Some(f) = PartitionedLu::<f64>::factor(&band, sigma).unwrap() {
                        let mut zr: Vec<f64> = x.iter().map(|c| c.re).collect();
                        f.solve_in_place(&mut zr).unwrap();
                        let xr: Vec<Complex64> =
                            x.iter().map(|c| Complex64::new(c.re, 0.0)).collect();
                        let zc: Vec<Complex64> =
                            zr.iter().map(|&r| Complex64::new(r, 0.0)).collect();
                        let eta = relative_residual(&dense, sigma, &xr, &zc);
                        assert!(eta <= bound, "real n {n} b {b} sigma {sigma}: {eta:e}");
                    }
                }
            }
        }
    }
    // random blocks are almost never singular at these shifts
    assert!(
        checked + 4 >= tried,
        "only {checked} of {tried} factorisations existed"
    );
    assert!(PartitionedLu::<f64>::factor(&random_band(64, 7, Field::Real, 1).0, f64::NAN).is_err());
}

#[test]
fn window_solver_uses_the_partitioned_lu_where_ldl_refuses() {
    // zero diagonal, unit off-diagonal (the path graph, eigenvalues 2 cos(pi k / (n + 1)),
    // common practice): at sigma = 0 the first unpivoted pivot is exactly zero, so the
    // L D L^H refuses; n = 20001 makes both halves (10000 rows) non-singular at 0, so the
    // two-threaded pivoted LU is used. Same levels on one thread and on two.
    let n = 20_001;
    let band = BandedHermitian::from_fn(n, 1, |i, j| {
        Complex64::new(if i == j { 0.0 } else { 1.0 }, 0.0)
    })
    .unwrap();
    let count = 6;
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| nearest_pairs(&band, 0.0, count).unwrap())
    };
    let (one, two) = (run(1), run(2));
    assert!(one.work().split_lu && !one.work().ldl, "{:?}", one.work());
    let mut exact: Vec<f64> = (1..=n)
        .map(|k| 2.0 * (std::f64::consts::PI * k as f64 / (n + 1) as f64).cos())
        .collect();
    exact.sort_by(|a, b| a.abs().total_cmp(&b.abs()));
    let mut want = exact[..count].to_vec();
    want.sort_by(f64::total_cmp);
    for i in 0..count {
        assert!(
            (one.values()[i] - want[i]).abs() <= 1e-12 * 2.0,
            "{} vs {}",
            one.values()[i],
            want[i]
        );
        assert!(one.residuals()[i] <= 1e-10 * 2.0);
        assert_eq!(one.values()[i].to_bits(), two.values()[i].to_bits());
    }
}

#[test]
fn partitioned_ldl_refuses_a_zero_pivot_and_the_window_solver_pivots_instead() {
    // zero diagonal, unit off-diagonal: the first pivot of H - 0 I is exactly 0, so the
    // unpivoted factorisation must refuse and the window solver must use the pivoted LU;
    // eigenvalues 2 cos(pi k / (n + 1)) (the path graph, common practice)
    let n = 400;
    let band = BandedHermitian::from_fn(n, 1, |i, j| {
        Complex64::new(if i == j { 0.0 } else { 1.0 }, 0.0)
    })
    .unwrap();
    assert!(PartitionedLdl::<f64>::factor(&band, 0.0, f64::INFINITY)
        .unwrap()
        .is_none());
    let e = nearest(&band, 0.0, 4).unwrap();
    let mut exact: Vec<f64> = (1..=n)
        .map(|k| 2.0 * (std::f64::consts::PI * k as f64 / (n + 1) as f64).cos())
        .collect();
    exact.sort_by(|a, b| a.abs().total_cmp(&b.abs()));
    let mut want = exact[..4].to_vec();
    want.sort_by(f64::total_cmp);
    for (v, x) in e.values.iter().zip(&want) {
        assert!((v - x).abs() <= 1e-12 * 2.0, "{v} vs {x}");
    }
}

fn nearest_oracle(values: &[f64], target: f64, count: usize) -> Vec<f64> {
    let mut v = values.to_vec();
    v.sort_by(|a, b| (a - target).abs().total_cmp(&(b - target).abs()));
    v.truncate(count);
    v.sort_by(f64::total_cmp);
    v
}

fn check_vectors(dense: &DMatrix<Complex64>, vals: &[f64], vecs: &DMatrix<Complex64>, tol: f64) {
    let k = vals.len();
    let gram = vecs.adjoint() * vecs;
    assert!((gram - DMatrix::<Complex64>::identity(k, k)).norm() <= 1e-10);
    for i in 0..k {
        let x = vecs.column(i);
        let r = (dense * x - x * Complex64::new(vals[i], 0.0)).norm();
        assert!(r <= tol, "explicit residual {r}");
    }
}

#[test]
fn window_nearest_matches_dense_oracle_on_warping_model() {
    for rashba in [false, true] {
        let (band, dense) = model_matrix(rashba, 350);
        let values = oracle(&dense);
        let norm = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for (target, count) in [(0.0, 20), (17.0, 8), (-60.0, 12), (values[5], 3)] {
            let e = nearest(&band, target, count).unwrap();
            let want = nearest_oracle(&values, target, count);
            assert_eq!(e.values.len(), count);
            for k in 0..count {
                assert!(
                    (e.values[k] - want[k]).abs() <= 1e-10 * norm,
                    "rashba {rashba} target {target}: {} vs {}",
                    e.values[k],
                    want[k]
                );
                assert!(
                    e.residuals[k] <= 1e-9 * norm,
                    "residual {} norm {norm} target {target} rashba {rashba}",
                    e.residuals[k]
                );
            }
            check_vectors(&dense, &e.values, &e.vectors, 1e-9 * norm);
        }
    }
}

#[test]
fn window_target_exactly_on_an_eigenvalue() {
    // (H - target)^(-1) is then singular to machine precision: the solver must move its shift
    // off the target and still return the levels nearest the target
    let (band, dense) = model_matrix(false, 300);
    let values = oracle(&dense);
    let norm = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let i0 = values.iter().position(|&v| v > 40.0).unwrap();
    let target = values[i0];
    let e = nearest(&band, target, 6).unwrap();
    let want = nearest_oracle(&values, target, 6);
    assert!(
        e.shift != target,
        "the shift should have been moved off the eigenvalue"
    );
    for k in 0..6 {
        assert!((e.values[k] - want[k]).abs() <= 1e-10 * norm);
    }
    check_vectors(&dense, &e.values, &e.vectors, 1e-9 * norm);
}

#[test]
fn window_in_window_matches_dense_oracle() {
    let (band, dense) = model_matrix(false, 300);
    let values = oracle(&dense);
    let norm = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let (lo, hi) = (-200.0, 150.0);
    let want: Vec<f64> = values
        .iter()
        .copied()
        .filter(|&v| v >= lo && v < hi)
        .collect();
    assert!(want.len() > 5, "window should hold several levels");
    let e = in_window(&band, lo, hi, 500).unwrap();
    assert_eq!(e.values.len(), want.len());
    for k in 0..want.len() {
        assert!((e.values[k] - want[k]).abs() <= 1e-10 * norm);
    }
    check_vectors(&dense, &e.values, &e.vectors, 1e-9 * norm);
    // too many levels for max_count
    assert!(in_window(&band, lo, hi, want.len() - 1).is_err());
    // a window between two levels holds none
    let gap = values
        .windows(2)
        .find(|w| w[0] > 0.0 && w[1] - w[0] > 1e-6)
        .unwrap();
    let e = in_window(&band, gap[0] + 1e-7, gap[1] - 1e-7, 5).unwrap();
    assert!(e.values.is_empty());
}

#[test]
fn window_finds_both_copies_of_degenerate_levels() {
    // H ⊕ H interleaved (even rows one copy, odd rows the other): every level is doubly
    // degenerate, which a single Krylov sequence sees only once; the inertia check and locking
    // must find both copies
    let m = 150;
    let base = BandedHermitian::from_fn(m, 2, |i, j| {
        let d = i - j;
        Complex64::new(
            match d {
                0 => (i as f64).sqrt() + 0.1 * ((i * 7) % 5) as f64,
                1 => 0.4,
                _ => -0.05,
            },
            if d == 0 { 0.0 } else { 0.02 * d as f64 },
        )
    })
    .unwrap();
    let doubled = BandedHermitian::from_fn(2 * m, 4, |i, j| {
        if (i - j) % 2 == 0 {
            base.get(i / 2, j / 2)
        } else {
            Complex64::new(0.0, 0.0)
        }
    })
    .unwrap();
    let dense = DMatrix::from_fn(m, m, |i, j| base.get(i, j));
    let values = oracle(&dense);
    let target = 3.0;
    let single = nearest_oracle(&values, target, 5);
    let e = nearest(&doubled, target, 10).unwrap();
    let norm = values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    for k in 0..5 {
        assert!((e.values[2 * k] - single[k]).abs() <= 1e-10 * norm);
        assert!((e.values[2 * k + 1] - single[k]).abs() <= 1e-10 * norm);
    }
}

#[test]
fn window_rejects_bad_requests() {
    let (band, _) = model_matrix(false, 20);
    let n = band.size();
    assert!(nearest(&band, 0.0, 0).is_err());
    assert!(nearest(&band, 0.0, n + 1).is_err());
    assert!(nearest(&band, f64::NAN, 3).is_err());
    assert!(in_window(&band, 1.0, 1.0, 3).is_err());
    assert!(in_window(&band, 2.0, 1.0, 3).is_err());
    assert!(in_window(&band, f64::NEG_INFINITY, 1.0, 3).is_err());
    assert!(in_window(&band, 0.0, 1.0, 0).is_err());
    // the whole spectrum of a small matrix: count = n exhausts the Krylov space
    let e = nearest(&band, 0.0, n).unwrap();
    assert_eq!(e.values.len(), n);
}

#[test]
fn window_parallel_kernels_match_the_closed_form_on_any_thread_count() {
    // 40000 rows: several row chunks of the parallel Gram-Schmidt and both halves of the
    // two-sided factorisation. Second-difference matrix 2 - 2cos(pi k/(n+1)), k = 1..n
    // (common practice); the result must not depend on the number of threads (fixed chunks,
    // partial sums added in chunk order, fixed split of the factorisation)
    let n = 40_000;
    let band = BandedHermitian::from_fn(n, 1, |i, j| {
        Complex64::new(if i == j { 2.0 } else { -1.0 }, 0.0)
    })
    .unwrap();
    let target = 1.0;
    let count = 6;
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| nearest(&band, target, count).unwrap())
    };
    let (one, two) = (run(1), run(2));
    let mut exact: Vec<f64> = (1..=n)
        .map(|k| 2.0 - 2.0 * (std::f64::consts::PI * k as f64 / (n + 1) as f64).cos())
        .collect();
    exact.sort_by(|a, b| (a - target).abs().total_cmp(&(b - target).abs()));
    let mut want = exact[..count].to_vec();
    want.sort_by(f64::total_cmp);
    for i in 0..count {
        assert!(
            (one.values[i] - want[i]).abs() <= 1e-12 * 4.0,
            "{} vs {}",
            one.values[i],
            want[i]
        );
        assert!(one.residuals[i] <= 1e-10 * 4.0);
        assert_eq!(
            one.values[i].to_bits(),
            two.values[i].to_bits(),
            "thread count changed level {i}"
        );
    }
}
