//! Timing probe for `scripts/compare.py`: runs one ladderfan path on the 3+1 Dirac model
//! (natural units, B = 1e-3 B_c, kz = 0.05, the point of `benches/engine.rs`), prints one JSON
//! object with the timings and writes the eigenvalues (absolute energies, ascending, raw
//! little-endian f64) to `--values FILE` for the agreement check against numpy.
//!
//! ```text
//! compare_probe split N [--threads T] [--values FILE]   split sectors, labels and bounds
//! compare_probe dense N [--threads T] [--values FILE] [--phases] [--vectors] [--full]
//!                                                  one dense sector of 4N states
//! compare_probe sweep P [--threads T] [--rounds R]   P-point sweep, 1 thread vs T, alternately
//! compare_probe window N [--target E] [--count K] [--values FILE]   K levels nearest E (1.01)
//!                                                  of the unsplit 4N-state band matrix
//! compare_probe volume P [--threads T] [--rounds R] [--b-min B] [--b-max B]   P-field
//!                                                  kz-integrated Fermi sweep of the Weyl node,
//!                                                  fixed-grid reference path against the
//!                                                  default path, alternating R rounds (2) (see
//!                                                  `volume_case`)
//! ```
//! Setup (model, assembly of the dense matrix) is not timed; each timing is the median of
//! repeated runs (as many as fit in about 2 s, at least 1, at most 15). `dense ... --full` also
//! times the complete unsplit `Spectrum::compute` (eigenvectors, bounds, labels).

use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::numeric::banded::BandedHermitian;
use ladderfan::numeric::{dense, window};
use ladderfan::{models, FieldPoint, Settings, Spectrum, Splitting};
use std::io::Write;
use std::time::Instant;

const POINT: FieldPoint = FieldPoint {
    field: 1e-3,
    kz: 0.05,
};

fn fail(msg: &str) -> ! {
    eprintln!("compare_probe: {msg}");
    std::process::exit(2)
}

/// Median wall time (s) of `f`, repeated while the total stays below ~2 s (1..=15 runs), and
/// the result of the last run.
fn timed<T>(mut f: impl FnMut() -> T) -> (f64, usize, T) {
    let mut times = Vec::new();
    let start = Instant::now();
    let out = loop {
        let t = Instant::now();
        let r = f();
        times.push(t.elapsed().as_secs_f64());
        let total = start.elapsed().as_secs_f64();
        if times.len() >= 15 || total > 2.0 {
            break r;
        }
    };
    times.sort_by(f64::total_cmp);
    (times[times.len() / 2], times.len(), out)
}

fn write_values(path: Option<&str>, values: &[f64]) {
    if let Some(p) = path {
        let mut bytes = Vec::with_capacity(values.len() * 8);
        for v in values {
            bytes.extend_from_slice(&v.to_le_bytes());
        }
        let res = std::fs::File::create(p).and_then(|mut f| f.write_all(&bytes));
        if let Err(e) = res {
            fail(&format!("cannot write {p}: {e}"));
        }
    }
}

/// CPU seconds (user + system) used by this process so far, from /proc/self/stat (Linux;
/// clock ticks of 1/100 s, the kernel's USER_HZ on common configurations); NaN elsewhere.
fn cpu_seconds() -> f64 {
    let Ok(stat) = std::fs::read_to_string("/proc/self/stat") else {
        return f64::NAN;
    };
    // fields after the parenthesised command name: state is field 3, utime 14, stime 15
    let rest = stat.rsplit_once(')').map_or("", |x| x.1);
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |i: usize| {
        f.get(i)
            .and_then(|x| x.parse::<f64>().ok())
            .unwrap_or(f64::NAN)
    };
    (tick(11) + tick(12)) / 100.0
}

/// Phase angle phi_k = 2 pi frac(k g), g = (sqrt 5 - 1)/2, of the diagonal unitary used to make
/// the complex test matrix; `scripts/compare.py` computes the same numbers.
fn phase(k: usize) -> f64 {
    ((k as f64) * 0.618_033_988_749_894_9).fract() * std::f64::consts::TAU
}

/// H <- D H D^H with D = diag(exp(i phi_k)): element (j, k) gains exp(i (phi_j - phi_k)).
/// A unitary similarity, so the spectrum is unchanged while the off-diagonal elements become
/// genuinely complex.
fn conjugate_by_phases(m: &mut nalgebra::DMatrix<num_complex::Complex64>) {
    let s = m.nrows();
    let d: Vec<num_complex::Complex64> = (0..s)
        .map(|k| num_complex::Complex64::from_polar(1.0, phase(k)))
        .collect();
    for k in 0..s {
        for j in 0..s {
            m[(j, k)] = d[j] * m[(j, k)] * d[k].conj();
        }
    }
}

/// Backward-error check of an eigen-decomposition (not timed): returns
/// (||H V - V diag(lambda)||_F / ||H||_F, ||V^H V - 1||_F / sqrt(s)), products by faer.
fn residuals(
    h: &nalgebra::DMatrix<num_complex::Complex64>,
    values: &[f64],
    v: &nalgebra::DMatrix<num_complex::Complex64>,
) -> (f64, f64) {
    use faer::c64;
    let s = h.nrows();
    let hf = faer::Mat::<c64>::from_fn(s, s, |i, j| c64::new(h[(i, j)].re, h[(i, j)].im));
    let vf = faer::Mat::<c64>::from_fn(s, s, |i, j| c64::new(v[(i, j)].re, v[(i, j)].im));
    let mut r = &hf * &vf;
    for j in 0..s {
        for i in 0..s {
            r[(i, j)] -= vf[(i, j)] * values[j];
        }
    }
    let mut g = vf.adjoint() * &vf;
    for i in 0..s {
        g[(i, i)] -= c64::new(1.0, 0.0);
    }
    (r.norm_l2() / hf.norm_l2(), g.norm_l2() / (s as f64).sqrt())
}

fn main() {
    // `cargo bench` appends `--bench`; a plain `cargo bench` (no arguments) only prints the usage
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    if args.is_empty() {
        println!("compare_probe: the worker of scripts/compare.sh; see the usage in tools/compare_probe.rs");
        return;
    }
    let (path, n) = match (
        args.first(),
        args.get(1).and_then(|s| s.parse::<usize>().ok()),
    ) {
        (Some(p), Some(n)) => (p.clone(), n),
        _ => fail("usage: compare_probe split|dense N [--threads T] [--values FILE]"),
    };
    let flag = |name: &str| {
        args.iter()
            .position(|a| a == name)
            .and_then(|i| args.get(i + 1))
            .map(String::as_str)
    };
    let threads = flag("--threads")
        .map(|t| t.parse::<usize>().unwrap_or_else(|_| fail("bad --threads")))
        .unwrap_or(0);
    let values_path = flag("--values");
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap_or_else(|e| fail(&format!("thread pool: {e}")));
    let threads = pool.current_num_threads();
    let model = models::dirac(models::RelativisticParams::default())
        .unwrap_or_else(|e| fail(&e.to_string()));
    let json = pool.install(|| match path.as_str() {
        "split" => {
            let settings = Settings::with_cutoff(n);
            let (t, reps, spec) = timed(|| {
                Spectrum::compute(&model, POINT, &settings).unwrap_or_else(|e| fail(&e.to_string()))
            });
            let mut abs: Vec<f64> = spec
                .levels
                .iter()
                .map(|l| l.energy + spec.reference_energy)
                .collect();
            abs.sort_by(f64::total_cmp);
            write_values(values_path, &abs);
            let converged = spec.converged().count();
            serde_json::json!({
                "path": "split", "cutoff": n, "size": 4 * n, "threads": threads,
                "seconds": t, "repeats": reps, "levels": spec.levels.len(),
                "converged": converged, "reference_energy": spec.reference_energy,
                "what": "Spectrum::compute, split by J, labels and bounds, default precision",
            })
        }
        "dense" => {
            // the unsplit 4N x 4N matrix (real symmetric), or with `--phases` the complex
            // Hermitian D H D^H, D = diag(exp(i phi_k)) (same spectrum, no zero imaginary part)
            let h = LadderHamiltonian::assemble(&model, POINT, 0.0)
                .unwrap_or_else(|e| fail(&e.to_string()));
            let mut m = h.dense(n);
            let complex = args.iter().any(|a| a == "--phases");
            if complex {
                conjugate_by_phases(&mut m);
            }
            let vectors = if args.iter().any(|a| a == "--vectors") {
                dense::Vectors::Compute
            } else {
                dense::Vectors::Skip
            };
            let (c0, w0) = (cpu_seconds(), Instant::now());
            let (t_eigh, reps_eigh, eig) =
                timed(|| dense::eigh(&m, vectors).unwrap_or_else(|e| fail(&e.to_string())));
            // CPU seconds per wall second over the timed runs: about 1 when single-threaded
            let cpu_per_wall = (cpu_seconds() - c0) / w0.elapsed().as_secs_f64();
            write_values(values_path, &eig.values);
            let what = match (complex, vectors) {
                (false, dense::Vectors::Skip) => "numeric::dense::eigh, real symmetric, values only",
                (false, dense::Vectors::Compute) => {
                    "numeric::dense::eigh, real symmetric, values and vectors"
                }
                (true, dense::Vectors::Skip) => "numeric::dense::eigh, complex Hermitian, values only",
                (true, dense::Vectors::Compute) => {
                    "numeric::dense::eigh, complex Hermitian, values and vectors"
                }
            };
            let mut out = serde_json::json!({
                "path": "dense", "cutoff": n, "size": 4 * n, "threads": threads,
                "seconds": t_eigh, "repeats": reps_eigh, "what": what,
                "levels": eig.values.len(), "complex": complex,
                "vectors": vectors == dense::Vectors::Compute,
                "cpu_per_wall": cpu_per_wall,
            });
            if let Some(v) = &eig.vectors {
                let (res, orth) = residuals(&m, &eig.values, v);
                out["residual"] = res.into();
                out["orthogonality"] = orth.into();
            }
            if args.iter().any(|a| a == "--full") {
                let mut settings = Settings::with_cutoff(n);
                settings.splitting = Splitting::Off;
                let (t_full, reps_full, _) = timed(|| {
                    Spectrum::compute(&model, POINT, &settings)
                        .unwrap_or_else(|e| fail(&e.to_string()))
                });
                out["full_seconds"] = t_full.into();
                out["full_repeats"] = reps_full.into();
                out["full_what"] =
                    "Spectrum::compute with Splitting::Off (eigenvectors, bounds, labels)".into();
            }
            out
        }
        "sweep" => {
            // n field points of the split model at cutoff 1000, alternately in a 1-thread and
            // a `threads`-thread pool (alternating shares out the load of a busy machine)
            let fields = ladderfan::sweep::grid(1e-3, 1e-2, n, ladderfan::sweep::Spacing::Log)
                .unwrap_or_else(|e| fail(&e.to_string()));
            let points: Vec<FieldPoint> = fields
                .iter()
                .map(|&field| FieldPoint { field, kz: 0.05 })
                .collect();
            let settings = Settings::with_cutoff(1000);
            let serial = rayon::ThreadPoolBuilder::new()
                .num_threads(1)
                .build()
                .unwrap_or_else(|e| fail(&format!("thread pool: {e}")));
            let cpu0 = std::cell::Cell::new(0.0);
            let run = |p: &rayon::ThreadPool| {
                let c = cpu_seconds();
                let t = Instant::now();
                let r = p
                    .install(|| ladderfan::sweep::run(&model, &points, &settings))
                    .unwrap_or_else(|e| fail(&e.to_string()));
                cpu0.set(cpu_seconds() - c);
                (t.elapsed().as_secs_f64(), r)
            };
            let rounds = flag("--rounds")
                .and_then(|r| r.parse::<usize>().ok())
                .unwrap_or(5);
            let (mut t1, mut tp) = (Vec::new(), Vec::new());
            let (mut c1, mut cp) = (0.0, 0.0);
            let mut identical = true;
            for _ in 0..rounds {
                let (a, ra) = run(&serial);
                c1 += cpu0.get();
                let (b, rb) = run(&pool);
                cp += cpu0.get();
                t1.push(a);
                tp.push(b);
                // determinism claim of the sweep: the same operations in the same order
                identical &= ra.len() == rb.len()
                    && ra.iter().zip(&rb).all(|(x, y)| {
                        x.levels.len() == y.levels.len()
                            && x.levels.iter().zip(&y.levels).all(|(l, r)| {
                                l.energy.to_bits() == r.energy.to_bits()
                                    && l.bound.to_bits() == r.bound.to_bits()
                                    && l.sector == r.sector
                            })
                    });
            }
            // control: independent pure arithmetic of a similar total, in the same two pools,
            // alternating; its speed-up is what this machine grants two threads right now
            let spin = |p: &rayon::ThreadPool| {
                use rayon::prelude::*;
                let t = Instant::now();
                let s: f64 = p.install(|| {
                    (0..n)
                        .into_par_iter()
                        .map(|i| {
                            let mut x = i as f64;
                            for _ in 0..400_000 {
                                x = std::hint::black_box(x * 0.999_999 + 1e-3);
                            }
                            x
                        })
                        .sum()
                });
                std::hint::black_box(s);
                t.elapsed().as_secs_f64()
            };
            let (mut s1, mut sp) = (Vec::new(), Vec::new());
            for _ in 0..rounds {
                s1.push(spin(&serial));
                sp.push(spin(&pool));
            }
            s1.sort_by(f64::total_cmp);
            sp.sort_by(f64::total_cmp);
            t1.sort_by(f64::total_cmp);
            tp.sort_by(f64::total_cmp);
            let med = |v: &[f64]| v[v.len() / 2];
            serde_json::json!({
                "path": "sweep", "points": n, "cutoff": 1000, "threads": threads,
                "rounds": rounds,
                "serial_min": t1[0], "serial_median": med(&t1),
                "parallel_min": tp[0], "parallel_median": med(&tp),
                "speedup_min": t1[0] / tp[0], "speedup_median": med(&t1) / med(&tp),
                "identical_to_serial": identical,
                "control_serial_median": med(&s1), "control_parallel_median": med(&sp),
                "control_speedup_median": med(&s1) / med(&sp),
                "control_note": "independent arithmetic loops, same pools: the speed-up the machine grants",
                "cpu_serial": c1 / rounds as f64, "cpu_parallel": cp / rounds as f64,
                "cpu_note": "process CPU seconds per run (user + system, /proc/self/stat)",
                "what": "sweep::run over n points (3+1 Dirac, N = 1000), 1 thread vs `threads`",
            })
        }
        "window" => {
            // the unsplit matrix of 4N states as a band matrix (half-bandwidth 4 (band + 1) - 1
            // in the orbital-major order), then the `count` eigenvalues nearest `target`
            let h = LadderHamiltonian::assemble(&model, POINT, 0.0)
                .unwrap_or_else(|e| fail(&e.to_string()));
            let d = h.dim;
            let half = d * (h.band + 1) - 1;
            let target = flag("--target")
                .and_then(|t| t.parse::<f64>().ok())
                .unwrap_or(1.01);
            let count = flag("--count")
                .and_then(|t| t.parse::<usize>().ok())
                .unwrap_or(20);
            let t0 = Instant::now();
            let band = BandedHermitian::from_fn(n * d, half, |i, j| {
                h.element(i / d, i % d, j / d, j % d)
            })
            .unwrap_or_else(|e| fail(&e.to_string()));
            let build = t0.elapsed().as_secs_f64();
            // real arithmetic and real eigenvectors for the real Dirac matrix
            let (t, reps, eig) = timed(|| {
                window::nearest_pairs(&band, target, count)
                    .unwrap_or_else(|e| fail(&e.to_string()))
            });
            write_values(values_path, eig.values());
            let max_res = eig.residuals().iter().copied().fold(0.0, f64::max);
            let work = eig.work();
            serde_json::json!({
                "path": "window", "cutoff": n, "size": d * n, "threads": threads,
                "ldl": work.ldl, "split_lu": work.split_lu, "lanczos_steps": work.lanczos_steps, "restarts": work.restarts,
                "seconds": t, "repeats": reps, "build_seconds": build,
                "target": target, "count": count, "max_residual": max_res,
                "half_bandwidth": half,
                "what": "numeric::window::nearest_pairs on the unsplit band matrix (values, real vectors, residuals)",
            })
        }
        "volume" => {
            let rounds = flag("--rounds")
                .and_then(|r| r.parse::<usize>().ok())
                .unwrap_or(2)
                .max(1);
            volume_case(n, threads, rounds, (flag("--b-min"), flag("--b-max")))
        }
        other => fail(&format!(
            "unknown path {other}; use split, dense, sweep, window or volume"
        )),
    });
    println!("{json}");
}

/// `volume P`: the kz-integrated Fermi level of the Weyl node (built-in `weyl`, v = 3e5 m/s,
/// invented) at a fixed density of 1e16 cm^-3 on P fields from `--b-min` (2 T) to `--b-max`
/// (10 T), cutoff 200, Gaussian lines of 1 meV, energies -40..40 meV: once with
/// `Quadrature::Uniform` (the fixed-grid reference path: full solves, halved uniform grid, the
/// path of every kz integral before the default existed) and once with the default
/// `Quadrature::Adaptive`, on the same inputs in this one process, alternating for `rounds`
/// rounds. Prints the median times ("before" = Uniform, "after" = default), their ratio and the
/// largest differences of the Fermi level and of the DOS there.
fn volume_case(
    points: usize,
    threads: usize,
    rounds: usize,
    (b_min, b_max): (Option<&str>, Option<&str>),
) -> serde_json::Value {
    use ladderfan::observables::dos::Broadening;
    use ladderfan::observables::volume::{fermi_sweep, Quadrature, VolumeSettings};
    let num = |value: Option<&str>, name: &str, default: f64| {
        value.map_or(default, |v| {
            v.parse::<f64>()
                .unwrap_or_else(|_| fail(&format!("bad {name}")))
        })
    };
    let (b_min, b_max) = (num(b_min, "--b-min", 2.0), num(b_max, "--b-max", 10.0));
    let model =
        models::weyl(models::WeylParams::default()).unwrap_or_else(|e| fail(&e.to_string()));
    let fields = ladderfan::sweep::grid(b_min, b_max, points, ladderfan::sweep::Spacing::Linear)
        .unwrap_or_else(|e| fail(&e.to_string()));
    let settings = Settings::with_cutoff(200);
    let n3 = 1e-5; // 1/nm^3 = 1e16 cm^-3 (invented)
    let mut reference = VolumeSettings::new(Broadening::gaussian(1.0), (-40.0, 40.0));
    reference.quadrature = Quadrature::Uniform;
    let fast = VolumeSettings {
        quadrature: Quadrature::Adaptive,
        ..reference
    };
    let run = |vs: &VolumeSettings| {
        let t = Instant::now();
        let c = cpu_seconds();
        let r = fermi_sweep(&model, &fields, &settings, vs, n3)
            .unwrap_or_else(|e| fail(&e.to_string()));
        (t.elapsed().as_secs_f64(), cpu_seconds() - c, r)
    };
    let (mut ts_old, mut ts_new, mut c_old, mut c_new) = (Vec::new(), Vec::new(), 0.0, 0.0);
    let (mut old, mut new) = (Vec::new(), Vec::new());
    for _ in 0..rounds {
        let (t, c, r) = run(&reference);
        ts_old.push(t);
        c_old += c / rounds as f64;
        old = r;
        let (t, c, r) = run(&fast);
        ts_new.push(t);
        c_new += c / rounds as f64;
        new = r;
    }
    let median = |v: &[f64]| {
        let mut v = v.to_vec();
        v.sort_by(f64::total_cmp);
        let m = v.len() / 2;
        if v.len() % 2 == 0 {
            0.5 * (v[m - 1] + v[m])
        } else {
            v[m]
        }
    };
    let (t_old, t_new) = (median(&ts_old), median(&ts_new));
    let mut max_def = 0.0f64;
    let mut max_ddos = 0.0f64;
    for (a, b) in old.iter().zip(&new) {
        max_def = max_def.max((a.fermi_energy - b.fermi_energy).abs());
        max_ddos = max_ddos.max(
            (a.dos_at_fermi - b.dos_at_fermi).abs() / a.dos_at_fermi.abs().max(f64::MIN_POSITIVE),
        );
    }
    let kz_old: usize = old.iter().map(|p| p.kz_points).sum();
    let kz_new: usize = new.iter().map(|p| p.kz_points).sum();
    serde_json::json!({
        "path": "volume", "points": points, "threads": threads, "rounds": rounds,
        "b_min": b_min, "b_max": b_max,
        "cutoff": 200, "width_meV": 1.0, "density_invnm3": n3,
        "uniform_seconds": t_old, "adaptive_seconds": t_new, "ratio": t_old / t_new,
        "uniform_cpu": c_old, "adaptive_cpu": c_new, "cpu_ratio": c_old / c_new,
        "uniform_runs_seconds": ts_old, "adaptive_runs_seconds": ts_new,
        "uniform_kz_points": kz_old, "adaptive_kz_points": kz_new,
        "max_fermi_difference_meV": max_def, "max_relative_dos_difference": max_ddos,
        "what": "volume::fermi_sweep of the Weyl node, Quadrature::Uniform vs Quadrature::Adaptive",
    })
}
