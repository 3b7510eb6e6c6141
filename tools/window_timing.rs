//! Timing of the eigen-solvers (run once, release build):
//! `cargo bench --bench window_timing [-- --skip-million | --window-only | --dense-only]`.
//!
//! 1. Window solver: the 20 levels nearest a chosen energy of a 2-band model with cubic
//!    warping (invented parameters), N = 1e5 and 1e6 orbitals (matrix sizes 2e5 and 2e6).
//! 2. The cost of one Sturm (inertia) count, and from it the estimated cost of bisection for
//!    the same 20 levels, to justify shift-invert Lanczos over bisection.
//! 3. Dense Hermitian solves: faer (this crate's path) against nalgebra's dynamic
//!    `SymmetricEigen`, sizes 500, 1000, 2000, values only and with vectors, complex and real.
//! 4. Tiny blocks (sizes 2-4): this crate's closed-form / fixed-size paths against nalgebra's
//!    dynamic solver, per million blocks.
//!
//! Prints times and ratios; it asserts nothing (speed is not a test).

use ladderfan::hamiltonian::{FieldPoint, LadderHamiltonian};
use ladderfan::matrix::pauli;
use ladderfan::model::{Model, Monomial};
use ladderfan::numeric::banded::BandedHermitian;
use ladderfan::numeric::dense::{eigh, Vectors};
use ladderfan::numeric::window::nearest;
use ladderfan::units::Units;
use nalgebra::{DMatrix, SymmetricEigen};
use num_complex::Complex64;
use std::time::Instant;

/// Invented parameters (meV, nm): H = D k^2 sz + A (kx sx + ky sy) + W (kx^3 - 3 kx ky^2) sz.
fn model() -> ladderfan::Result<Model> {
    Model::builder("warping (invented)", 2)
        .charge(-1.0)
        .units(Units::Lab)
        .term("D kx^2 sz", 50.0, pauli("z")?, Monomial::new(2, 0, 0))
        .term("D ky^2 sz", 50.0, pauli("z")?, Monomial::new(0, 2, 0))
        .term("A kx sx", 300.0, pauli("x")?, Monomial::KX)
        .term("A ky sy", 300.0, pauli("y")?, Monomial::KY)
        .term("W kx^3 sz", 200.0, pauli("z")?, Monomial::new(3, 0, 0))
        .term(
            "-3W kx ky^2 sz",
            -600.0,
            pauli("z")?,
            Monomial::new(1, 2, 0),
        )
        .build()
}

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

fn random_hermitian(s: usize, real: bool, rng: &mut Rng) -> DMatrix<Complex64> {
    let mut h = DMatrix::zeros(s, s);
    for j in 0..s {
        for i in j..s {
            let re = rng.next();
            let im = if i == j || real { 0.0 } else { rng.next() };
            h[(i, j)] = Complex64::new(re, im);
            h[(j, i)] = Complex64::new(re, -im);
        }
    }
    h
}

fn secs(t: Instant) -> f64 {
    t.elapsed().as_secs_f64()
}

/// On-CPU time of this thread in seconds (Linux /proc/thread-self/schedstat, first field in
/// ns); the machine may be shared, so wall-clock times are printed next to it.
fn cpu() -> f64 {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|s| {
            s.split_whitespace()
                .next()
                .and_then(|x| x.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |ns| ns * 1e-9)
}

fn main() -> ladderfan::Result<()> {
    let skip_million = std::env::args().any(|a| a == "--skip-million");
    let window_only = std::env::args().any(|a| a == "--window-only");
    let dense_only = std::env::args().any(|a| a == "--dense-only");
    let model = model()?;
    let lh = LadderHamiltonian::assemble(&model, FieldPoint::field(10.0), 0.0)?;
    let d = lh.dim;
    let hb = (lh.band + 1) * d - 1;
    let target = 100.0; // meV, invented
    println!("# window solver: 20 levels nearest {target} meV, field 10 T, half-bandwidth {hb}");
    let sizes: &[usize] = if dense_only {
        &[]
    } else if skip_million {
        &[100_000]
    } else {
        &[100_000, 1_000_000]
    };
    for &orbitals in sizes {
        let t = Instant::now();
        let h = BandedHermitian::from_fn(orbitals * d, hb, |i, j| {
            lh.element(i / d, i % d, j / d, j % d)
        })?;
        let t_build = secs(t);
        let t = Instant::now();
        let c0 = cpu();
        let e = nearest(&h, target, 20)?;
        let c_solve = cpu() - c0;
        let t_solve = secs(t);
        let t = Instant::now();
        let inertia = h.inertia(target)?;
        let t_inertia = secs(t);
        let t = Instant::now();
        let _lu = h.lu_real(target)?;
        let t_lu = secs(t);
        let worst = e.residuals.iter().fold(0.0f64, |a, &r| a.max(r));
        println!(
            "N = {orbitals:>8} orbitals (n = {}): build {t_build:.3} s, nearest(20) {t_solve:.3} s \
             wall / {c_solve:.3} s CPU (target: {}), one LU {t_lu:.4} s, one inertia count {t_inertia:.4} s \
             ({} levels below target), worst residual {worst:.2e} meV",
            orbitals * d,
            if orbitals == 100_000 { "< 1 s" } else { "< 10 s" },
            inertia.below
        );
        println!(
            "    levels: {:?}",
            e.values
                .iter()
                .map(|v| (v * 1e6).round() / 1e6)
                .collect::<Vec<_>>()
        );
        // bisection to 1e-12 relative needs ~40 halvings per level, each one inertia count
        let bisect = 20.0 * 40.0 * t_inertia;
        println!(
            "    estimated Sturm bisection for the same 20 levels (20 x 40 counts): {bisect:.2} s \
             = {:.1} x the shift-invert Lanczos time",
            bisect / t_solve
        );
    }

    if window_only {
        return Ok(());
    }
    println!("# dense Hermitian solve: faer (this crate) vs nalgebra dynamic SymmetricEigen");
    let mut rng = Rng(11);
    for real in [false, true] {
        for s in [500usize, 1000, 2000] {
            let h = random_hermitian(s, real, &mut rng);
            for vectors in [Vectors::Skip, Vectors::Compute] {
                let t = Instant::now();
                let ours = eigh(&h, vectors)?;
                let t_ours = secs(t);
                let t = Instant::now();
                let theirs: Vec<f64> = match vectors {
                    Vectors::Skip => h.clone().symmetric_eigenvalues().iter().copied().collect(),
                    Vectors::Compute => SymmetricEigen::new(h.clone())
                        .eigenvalues
                        .iter()
                        .copied()
                        .collect(),
                };
                let t_na = secs(t);
                let mut theirs = theirs;
                theirs.sort_by(f64::total_cmp);
                let diff = ours
                    .values
                    .iter()
                    .zip(&theirs)
                    .fold(0.0f64, |a, (x, y)| a.max((x - y).abs()));
                println!(
                    "{} size {s:>5} {:<12} faer {t_ours:8.3} s, nalgebra {t_na:8.3} s, \
                     ratio nalgebra/faer {:6.1}, max |diff| {diff:.1e}",
                    if real { "real   " } else { "complex" },
                    match vectors {
                        Vectors::Skip => "values only",
                        Vectors::Compute => "vectors",
                    },
                    t_na / t_ours
                );
            }
        }
    }

    println!("# tiny blocks, per million solves with vectors: this crate vs nalgebra dynamic");
    for s in [2usize, 3, 4] {
        let reps = 200_000;
        let blocks: Vec<DMatrix<Complex64>> = (0..64)
            .map(|_| random_hermitian(s, false, &mut rng))
            .collect();
        let t = Instant::now();
        let mut acc = 0.0;
        for r in 0..reps {
            acc += eigh(&blocks[r % 64], Vectors::Compute)?.values[0];
        }
        let t_ours = secs(t) * 1e6 / reps as f64;
        let t = Instant::now();
        for r in 0..reps {
            acc += SymmetricEigen::new(blocks[r % 64].clone()).eigenvalues[0];
        }
        let t_na = secs(t) * 1e6 / reps as f64;
        println!(
            "size {s}: ours {t_ours:.3} s, nalgebra dynamic {t_na:.3} s per million, ratio {:.1} \
             (checksum {acc:.3})",
            t_na / t_ours
        );
    }
    Ok(())
}
