//! Criterion benches of how the work scales (setup is never timed):
//!
//! * `dense_sector`: one dense Hermitian eigen-solve of the unsplit 3+1 Dirac matrix (real
//!   symmetric: `real_*`) and of its unitary similarity D H D^H with D = diag(exp(i phi_k))
//!   (complex Hermitian, same spectrum: `complex_*`), values only (`*_values`) and with
//!   eigenvectors (`*_vectors`), sizes 500, 1000, 2000 (and 4000 with `LADDERFAN_BENCH_4000=1`:
//!   minutes per sample on a shared 2-core machine). `scripts/compare.sh` times the same
//!   matrices against LAPACK.
//! * `window`: the 20 levels nearest 1.01 m c^2 of the unsplit 3+1 Dirac band matrix (4N
//!   states, half-bandwidth 7) by the shift-invert window solver in the matrix's own (real)
//!   arithmetic with real eigenvectors (`window::nearest_pairs`, what `scripts/compare.py`
//!   times against scipy), N = 1e4 and 1e5 (and 1e6 with `LADDERFAN_BENCH_1E6=1`: about half
//!   a minute per sample).
//! * `sweep_1000`: 1000 field points of the split 3+1 Dirac model (N = 1000), serially in a
//!   1-thread rayon pool and in a 2-thread pool, same inputs. Before timing, the 2-thread
//!   result is checked to equal the serial one exactly (the sweep's determinism claim: each
//!   point runs the same operations in the same order whatever the thread count).
//!
//! Run: `cargo bench --bench scale` (or `-- sweep_1000` for one group).

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::models::{self, RelativisticParams};
use ladderfan::numeric::banded::BandedHermitian;
use ladderfan::numeric::dense::{self, Vectors};
use ladderfan::numeric::window;
use ladderfan::{sweep, FieldPoint, Settings};
use nalgebra::DMatrix;
use num_complex::Complex64;
use std::hint::black_box;
use std::time::Duration;

fn point() -> FieldPoint {
    FieldPoint {
        field: 1e-3,
        kz: 0.05,
    }
}

/// D H D^H with D = diag(exp(i phi_k)), phi_k = 2 pi frac(k (sqrt5 - 1)/2): a unitary
/// similarity of `h` (same spectrum) whose off-diagonal elements are genuinely complex, so
/// the complex Hermitian path is timed (the same matrix as scripts/compare.py builds).
fn with_phases(h: &DMatrix<Complex64>) -> DMatrix<Complex64> {
    let s = h.nrows();
    let d: Vec<Complex64> = (0..s)
        .map(|k| {
            let phi = ((k as f64) * 0.618_033_988_749_894_9).fract() * std::f64::consts::TAU;
            Complex64::from_polar(1.0, phi)
        })
        .collect();
    DMatrix::from_fn(s, s, |j, k| d[j] * h[(j, k)] * d[k].conj())
}

fn dense_sector(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let h = LadderHamiltonian::assemble(&m, point(), 0.0).expect("assembly");
    let mut g = c.benchmark_group("dense_sector");
    g.sample_size(10);
    g.warm_up_time(Duration::from_millis(500));
    let mut sizes = vec![500usize, 1000, 2000];
    if std::env::var_os("LADDERFAN_BENCH_4000").is_some() {
        sizes.push(4000);
    }
    for size in sizes {
        let real = h.dense(size / 4);
        let complex = with_phases(&real);
        for (kind, mat) in [("real", &real), ("complex", &complex)] {
            for (what, vectors) in [("values", Vectors::Skip), ("vectors", Vectors::Compute)] {
                let id = BenchmarkId::new(format!("{kind}_{what}"), size);
                g.bench_with_input(id, mat, |b, mat| {
                    b.iter(|| dense::eigh(black_box(mat), vectors).expect("eigh"))
                });
            }
        }
    }
    g.finish();
}

fn window_solver(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let h = LadderHamiltonian::assemble(&m, point(), 0.0).expect("assembly");
    let d = h.dim;
    let half = d * (h.band + 1) - 1;
    let mut g = c.benchmark_group("window");
    g.sample_size(10);
    g.warm_up_time(Duration::from_millis(500));
    let mut cutoffs = vec![10_000usize, 100_000];
    if std::env::var_os("LADDERFAN_BENCH_1E6").is_some() {
        cutoffs.push(1_000_000);
    }
    for n in cutoffs {
        let band =
            BandedHermitian::from_fn(n * d, half, |i, j| h.element(i / d, i % d, j / d, j % d))
                .expect("band matrix");
        g.bench_with_input(BenchmarkId::new("nearest_20", n), &band, |b, band| {
            b.iter(|| window::nearest_pairs(black_box(band), 1.01, 20).expect("window"))
        });
    }
    g.finish();
}

fn sweep_1000(c: &mut Criterion) {
    let m = models::dirac(RelativisticParams::default()).expect("model");
    let fields = sweep::grid(1e-3, 1e-2, 1000, sweep::Spacing::Log).expect("grid");
    let points: Vec<FieldPoint> = fields
        .iter()
        .map(|&field| FieldPoint { field, kz: 0.05 })
        .collect();
    let settings = Settings::with_cutoff(1000);
    let pool = |n: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .expect("pool")
    };
    let (serial, parallel) = (pool(1), pool(2));
    let a = serial
        .install(|| sweep::run(&m, &points, &settings))
        .expect("serial sweep");
    let b = parallel
        .install(|| sweep::run(&m, &points, &settings))
        .expect("parallel sweep");
    let same = a.len() == b.len()
        && a.iter().zip(&b).all(|(x, y)| {
            x.levels.len() == y.levels.len()
                && x.levels.iter().zip(&y.levels).all(|(l, r)| {
                    l.energy.to_bits() == r.energy.to_bits()
                        && l.bound.to_bits() == r.bound.to_bits()
                        && l.sector == r.sector
                })
        });
    assert!(
        same,
        "a 2-thread sweep differs from the serial one: thread-count dependence"
    );
    eprintln!("sweep_1000: 2-thread result identical to serial (energies, bounds, sectors)");
    let mut g = c.benchmark_group("sweep_1000");
    g.sample_size(10);
    g.warm_up_time(Duration::from_millis(500));
    for (name, p) in [("threads_1", &serial), ("threads_2", &parallel)] {
        g.bench_function(name, |bench| {
            bench.iter(|| p.install(|| sweep::run(&m, black_box(&points), &settings)))
        });
    }
    g.finish();
}

criterion_group!(benches, sweep_1000, dense_sector, window_solver);
criterion_main!(benches);
