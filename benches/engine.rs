//! Criterion benches of the core engine, grouped by stage and size (setup is not timed).
//!
//! * `assembly`: ladder-form assembly of the 3+1 Dirac model.
//! * `sectors`: detection of the conserved quantity.
//! * `split_dirac`: the full split 3+1 Dirac spectrum (labels and bounds included) at
//!   N = 1e4, 1e5, 1e6 orbitals.
//! * `dense_unsplit`: the same model solved as one dense sector at 4N = 2000 (N = 500).

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::models::{self, RelativisticParams};
use ladderfan::sectors::Symmetry;
use ladderfan::solve::Precision;
use ladderfan::{FieldPoint, Settings, Spectrum, Splitting};
use std::hint::black_box;

fn point() -> FieldPoint {
    FieldPoint {
        field: 1e-3,
        kz: 0.05,
    }
}

fn assembly(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let mut g = c.benchmark_group("assembly");
    g.bench_function("dirac", |b| {
        b.iter(|| LadderHamiltonian::assemble(black_box(&m), point(), 1.0))
    });
    g.finish();
    let h = LadderHamiltonian::assemble(&m, point(), 1.0).expect("assembly");
    let mut g = c.benchmark_group("sectors");
    g.bench_function("detect_dirac", |b| {
        b.iter(|| Symmetry::detect(black_box(&h)))
    });
    g.finish();
}

fn split_dirac(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let mut g = c.benchmark_group("split_dirac");
    g.sample_size(10);
    // Baseline: a bare loop of N independent 4x4 complex Hermitian eigen-solves with vectors
    // (nalgebra fixed size) on the same sector matrices, built outside the timed region.
    let h = LadderHamiltonian::assemble(&m, point(), 1.0).expect("assembly");
    for n in [10_000usize, 100_000, 1_000_000] {
        let blocks: Vec<nalgebra::Matrix4<num_complex::Complex64>> = (1..n)
            .map(|j| {
                // sector J = j holds (n, alpha) = (j - s_alpha), s = [1, 0, 1, 0]
                let st = [(j - 1, 0usize), (j, 1), (j - 1, 2), (j, 3)];
                nalgebra::Matrix4::from_fn(|r, c| h.element(st[r].0, st[r].1, st[c].0, st[c].1))
            })
            .collect();
        g.bench_with_input(
            BenchmarkId::new("bare_loop_4x4", n),
            &blocks,
            |b, blocks| {
                b.iter(|| {
                    let mut acc = 0.0;
                    for m4 in blocks {
                        acc += nalgebra::SymmetricEigen::new(*m4).eigenvalues[0];
                    }
                    acc
                })
            },
        );
    }
    for n in [10_000usize, 100_000, 1_000_000] {
        // the double-double refinement of every level costs ~5x; bench it at the smaller sizes
        let variants: &[(&str, Precision)] = if n >= 1_000_000 {
            &[("double", Precision::Double)]
        } else {
            &[
                ("double", Precision::Double),
                ("refined", Precision::Extended),
            ]
        };
        for &(name, precision) in variants {
            let mut s = Settings::with_cutoff(n);
            s.precision = precision;
            // the spectrum is freed outside the timed region (hundreds of megabytes at 1e6:
            // the caller's cost, later), as in tools/split_timing.rs
            g.bench_with_input(BenchmarkId::new(name, n), &s, |b, s| {
                b.iter_with_large_drop(|| Spectrum::compute(&m, point(), s).expect("solve"))
            });
        }
    }
    g.finish();
}

fn dense_unsplit(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let mut g = c.benchmark_group("dense_unsplit");
    g.sample_size(10);
    let mut s = Settings::with_cutoff(500);
    s.splitting = Splitting::Off;
    g.bench_function("dirac_4N_2000", |b| {
        b.iter(|| Spectrum::compute(&m, point(), &s).expect("solve"))
    });
    g.finish();
}

criterion_group!(benches, assembly, split_dirac, dense_unsplit);
criterion_main!(benches);
