//! Split 3+1 Dirac path against a bare loop of 4x4 eigen-solves, timed alternately in one run
//! (release build; a measurement, not a test, so a `[[bench]]` target and not run by CI).
//!
//! ```text
//! cargo bench --bench split_timing -- [N] [ROUNDS]
//! ```
//! Prints, per round, the bare loop of N - 1 fixed-size 4x4 Hermitian solves with vectors (one
//! thread, matrices built outside the timed region, as in `benches/engine.rs`) and
//! `Spectrum::compute` on the same model and point with the default settings (automatic
//! precision, no component weights), with the component weights asked for
//! ([`ladderfan::Weights::Compute`]) and with double precision, then the medians and the
//! ratios split / bare. A call is timed until its spectrum is in hand; freeing the spectrum
//! (hundreds of megabytes at N = 1e6) is timed apart and printed beside it. With `profile` as third argument only the default solve runs (for a
//! profiler).
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::solve::Precision;
use ladderfan::*;
use std::hint::black_box;
use std::time::Instant;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn main() -> Result<()> {
    let mut args = std::env::args().skip(1);
    let n: usize = args
        .next()
        .and_then(|a| a.parse().ok())
        .unwrap_or(1_000_000);
    let rounds: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(5);
    // `profile` as third argument: only the default-precision solve, for a profiler
    if args.next().as_deref() == Some("profile") {
        let m = models::dirac(models::RelativisticParams::default())?;
        let point = FieldPoint {
            field: 1e-3,
            kz: 0.05,
        };
        for _ in 0..rounds {
            let t = Instant::now();
            black_box(Spectrum::compute(&m, point, &Settings::with_cutoff(n))?);
            println!("{:.3} s", t.elapsed().as_secs_f64());
        }
        return Ok(());
    }
    let m = models::dirac(models::RelativisticParams::default())?;
    let point = FieldPoint {
        field: 1e-3,
        kz: 0.05,
    };
    let h = LadderHamiltonian::assemble(&m, point, 1.0)?;
    let blocks: Vec<nalgebra::Matrix4<num_complex::Complex64>> = (1..n)
        .map(|j| {
            let st = [(j - 1, 0usize), (j, 1), (j - 1, 2), (j, 3)];
            nalgebra::Matrix4::from_fn(|r, c| h.element(st[r].0, st[r].1, st[c].0, st[c].1))
        })
        .collect();
    let auto = Settings::with_cutoff(n);
    let mut weighed = auto.clone();
    weighed.weights = Weights::Compute;
    let mut double = auto.clone();
    double.precision = Precision::Double;
    let (mut tb, mut td, mut ta, mut tl) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut drops = Vec::new();
    // the time of one call until its spectrum is in hand, and apart from it the time to free
    // that spectrum (the caller's, later: criterion's `iter_with_large_drop` convention)
    let timed = |settings: &Settings| -> Result<(f64, f64)> {
        let t = Instant::now();
        let sp = black_box(Spectrum::compute(&m, point, settings)?);
        let compute = t.elapsed().as_secs_f64();
        let t = Instant::now();
        drop(sp);
        Ok((compute, t.elapsed().as_secs_f64()))
    };
    for _ in 0..rounds {
        let t = Instant::now();
        let mut acc = 0.0;
        for m4 in &blocks {
            acc += nalgebra::SymmetricEigen::new(*m4).eigenvalues[0];
        }
        black_box(acc);
        tb.push(t.elapsed().as_secs_f64());
        td.push(timed(&double)?.0);
        let (compute, freeing) = timed(&auto)?;
        ta.push(compute);
        drops.push(freeing);
        tl.push(timed(&weighed)?.0);
    }
    let (b, d, a, l) = (median(tb), median(td), median(ta), median(tl));
    let dr = median(drops);
    println!(
        "N = {n}, {} threads, medians of {rounds}: bare 4x4 loop (1 thread) {b:.3} s, split default {a:.3} s ({:.2}x), split with weights {l:.3} s ({:.2}x), split double precision {d:.3} s ({:.2}x); freeing the default spectrum afterwards {dr:.3} s (with it {:.2}x); level record {} bytes",
        rayon::current_num_threads(),
        a / b,
        l / b,
        d / b,
        (a + dr) / b,
        std::mem::size_of::<Level>()
    );
    Ok(())
}
