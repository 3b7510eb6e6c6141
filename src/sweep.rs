//! Many (B, kz) points at once: rayon-parallel over points, results in input order and identical
//! to a serial run.
//!
//! # Complexity
//! The sum of the per-point costs (see [`crate::solve`]); on p cores the points run p at a time.
//! Each point's own sector loop is parallel too, and rayon balances the two levels.

use crate::error::Result;
use crate::hamiltonian::FieldPoint;
use crate::levels::Spectrum;
use crate::model::Model;
use crate::solve::Settings;
use rayon::prelude::*;

/// Grid spacing of a sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Spacing {
    /// Equal steps.
    Linear,
    /// Equal ratios (both ends must have the same sign and be non-zero).
    Log,
}

/// `count` values from `start` to `stop` inclusive.
///
/// # Formula
/// Linear: x_i = start + i (stop - start)/(count - 1); Log: x_i = start (stop/start)^(i/(count-1)).
///
/// # Errors
/// [`crate::Error::BadNumber`] for count 0, non-finite ends, or a log grid through zero.
///
/// # Examples
/// ```
/// use ladderfan::sweep::{grid, Spacing};
/// let g = grid(1.0, 100.0, 3, Spacing::Log)?;
/// assert!((g[1] - 10.0).abs() < 1e-12);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn grid(start: f64, stop: f64, count: usize, spacing: Spacing) -> Result<Vec<f64>> {
    if count == 0 || !start.is_finite() || !stop.is_finite() {
        return Err(crate::Error::BadNumber {
            name: "grid".into(),
            value: count as f64,
            fix: "give finite ends and at least one point".into(),
        });
    }
    if count == 1 {
        return Ok(vec![start]);
    }
    let t = |i: usize| i as f64 / (count - 1) as f64;
    match spacing {
        Spacing::Linear => Ok((0..count).map(|i| start + t(i) * (stop - start)).collect()),
        Spacing::Log => {
            if start == 0.0 || stop == 0.0 || start.signum() != stop.signum() {
                return Err(crate::Error::BadNumber {
                    name: "log grid end".into(),
                    value: if start == 0.0 { start } else { stop },
                    fix: "a logarithmic grid needs two non-zero ends of the same sign".into(),
                });
            }
            Ok((0..count)
                .map(|i| start * (stop / start).powf(t(i)))
                .collect())
        }
    }
}

/// Solve every point, in parallel, returning the spectra in the order of `points`.
///
/// # Errors
/// The first error of any point (in input order).
///
/// # Examples
/// ```
/// use ladderfan::{models, sweep, FieldPoint, Settings};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let pts: Vec<FieldPoint> = [1.0, 2.0].iter().map(|&b| FieldPoint::field(b)).collect();
/// let out = sweep::run(&m, &pts, &Settings::with_cutoff(30))?;
/// // the lowest level doubles with the field: hbar omega_c / 2 is linear in B
/// assert!((out[1].levels[0].energy / out[0].levels[0].energy - 2.0).abs() < 1e-12);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn run(model: &Model, points: &[FieldPoint], settings: &Settings) -> Result<Vec<Spectrum>> {
    run_with(model, points, settings, &|| {})
}

/// Like [`run`], calling `tick` once after each point (for progress bars).
///
/// # Errors
/// As [`run`].
pub fn run_with(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    tick: &(dyn Fn() + Sync),
) -> Result<Vec<Spectrum>> {
    points
        .par_iter()
        .map(|&p| {
            let r = Spectrum::compute(model, p, settings);
            tick();
            r
        })
        .collect()
}

/// How a streaming sweep ([`stream`]) went.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StreamStats {
    /// Points per batch: a batch is solved in parallel while the one before it is handed, in
    /// order, to the sink.
    pub batch: usize,
    /// The most spectra held at once (finished, not yet handed on, or being solved); at most
    /// `2 batch`, whatever the number of points.
    pub max_held: usize,
    /// Points solved and handed on.
    pub points: usize,
}

/// The batch size [`stream`] uses when given 0: four points per worker thread (at least 2),
/// enough to keep the threads busy across a batch's end.
pub fn default_batch() -> usize {
    (4 * rayon::current_num_threads()).max(2)
}

/// Solve every point in parallel and hand each spectrum to `sink` as soon as it and every point
/// before it are done, in the order of `points`, holding at most `2 batch` spectra at once: a
/// batch of `batch` points (0: [`default_batch`]) is solved in parallel while the previous one
/// is handed on, so the memory of a sweep does not grow with its number of points. The sink
/// sees exactly the spectra of [`run`] (each point's solve does not depend on the threads).
/// `reuse` offers a spectrum computed beforehand (say the reference point's) for its index:
/// that point is not solved again.
///
/// # Errors
/// The first error in input order, of a solve or of `sink`; points after it are not handed on.
///
/// # Examples
/// ```
/// use ladderfan::{models, sweep, FieldPoint, Settings};
/// let m = models::schrodinger(models::MassParams::default())?;
/// let pts: Vec<FieldPoint> = (1..=9).map(|b| FieldPoint::field(b as f64)).collect();
/// let mut lowest = Vec::new();
/// let stats = sweep::stream(&m, &pts, &Settings::with_cutoff(20), 2, None, &|| {}, &mut |i, s| {
///     lowest.push((i, s.levels[0].energy));
///     Ok(())
/// })?;
/// assert_eq!(lowest.len(), 9);
/// assert!(lowest.iter().enumerate().all(|(k, &(i, _))| k == i));
/// assert!(stats.max_held <= 4);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn stream(
    model: &Model,
    points: &[FieldPoint],
    settings: &Settings,
    batch: usize,
    reuse: Option<(usize, Spectrum)>,
    tick: &(dyn Fn() + Sync),
    sink: &mut (dyn FnMut(usize, Spectrum) -> Result<()> + Send),
) -> Result<StreamStats> {
    let compute = |i: usize| {
        let r = Spectrum::compute(model, points[i], settings);
        tick();
        r
    };
    stream_map(points.len(), batch, reuse, &compute, sink)
}

/// The engine of [`stream`] for any per-point result: compute `compute(i)` for every
/// i < `count` in parallel and hand each result to `sink` in index order as soon as it and
/// every one before it are done, holding at most `2 batch` results (0: [`default_batch`]): a
/// batch is computed while the one before it is handed on. A result offered in `reuse` (its
/// index) is not computed again. Used where a point's spectrum is reduced to something smaller
/// before it is handed on (the transitions of `optics`:
/// [`crate::observables::optics::transition_stream`]), so that at most one spectrum per
/// worker thread is alive.
///
/// # Errors
/// The first error in index order, of `compute` or of `sink`; results after it are not handed
/// on. A `reuse` index at or beyond `count` is [`crate::Error::BadNumber`].
///
/// # Complexity
/// The work of `count` calls of `compute`, in parallel; the handing on overlaps the next batch.
///
/// # Examples
/// ```
/// use ladderfan::sweep;
/// let mut seen = Vec::new();
/// let stats = sweep::stream_map(10, 3, None, &|i| Ok(i * i), &mut |i, sq| {
///     seen.push((i, sq));
///     Ok(())
/// })?;
/// assert_eq!(seen, (0..10).map(|i| (i, i * i)).collect::<Vec<_>>());
/// assert!(stats.max_held <= 6);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn stream_map<T: Send>(
    count: usize,
    batch: usize,
    reuse: Option<(usize, T)>,
    compute: &(dyn Fn(usize) -> Result<T> + Sync),
    sink: &mut (dyn FnMut(usize, T) -> Result<()> + Send),
) -> Result<StreamStats> {
    let batch = if batch == 0 { default_batch() } else { batch };
    if let Some((i, _)) = &reuse {
        if *i >= count {
            // a reused result whose index is not a point is an error of the caller
            return Err(crate::Error::BadNumber {
                name: "reused point index".into(),
                value: *i as f64,
                fix: format!("give an index below the {count} points"),
            });
        }
    }
    let mut reuse = reuse;
    let mut stats = StreamStats {
        batch,
        max_held: 0,
        points: 0,
    };
    let solve = |range: std::ops::Range<usize>, given: Option<(usize, T)>| {
        let skip = given.as_ref().map(|g| g.0);
        let mut out: Vec<(usize, Result<T>)> = range
            .into_par_iter()
            .filter(|&i| Some(i) != skip)
            .map(|i| (i, compute(i)))
            .collect();
        if let Some((i, s)) = given {
            let at = out.partition_point(|(j, _)| *j < i);
            out.insert(at, (i, Ok(s)));
        }
        out
    };
    let mut pending: Vec<(usize, Result<T>)> = Vec::new();
    let mut start = 0;
    loop {
        let next = start..(start + batch).min(count);
        stats.max_held = stats.max_held.max(pending.len() + next.len());
        let given = match &reuse {
            Some((i, _)) if next.contains(i) => reuse.take(),
            _ => None,
        };
        let (fed, solved) = rayon::join(
            || -> Result<usize> {
                let n = pending.len();
                for (i, r) in pending.drain(..) {
                    sink(i, r?)?;
                }
                Ok(n)
            },
            || solve(next.clone(), given),
        );
        stats.points += fed?;
        if solved.is_empty() {
            return Ok(stats);
        }
        pending = solved;
        start = next.end;
    }
}

/// The set-up of every solving path, counted: one assembly per (B, kz) solve
/// ([`crate::problem`]). Here, in the highest library layer that solves, so that the tests may
/// use the solver, the sweep and the convergence study.
#[cfg(test)]
mod set_up_tests {
    use crate::error::Error;
    use crate::hamiltonian::FieldPoint;
    use crate::hamiltonian::{assemblies, assemblies_of};
    use crate::levels::Spectrum;
    use crate::matrix::{identity, pauli};
    use crate::model::Model;
    use crate::model::Monomial;
    use crate::problem::{Problem, Settings, Splitting};

    /// An invented two-band model, H = v (kx sigma_x + ky sigma_y) + m sigma_z + c kz kx, whose
    /// last term couples orbitals n and n +- 1 of the same component: it breaks the exact J of
    /// the first three terms, but only at kz != 0 (at kz = 0 it vanishes at assembly).
    fn kz_only_coupling(name: &str) -> Model {
        let p = |s: &str| pauli(s).unwrap_or_else(|e| panic!("{e}"));
        Model::builder(name, 2)
            .term("v kx sigma_x", 500.0, p("x"), Monomial::KX)
            .term("v ky sigma_y", 500.0, p("y"), Monomial::KY)
            .term("m sigma_z", 10.0, p("z"), Monomial::new(0, 0, 0))
            .term("c kz kx", 100.0, identity(2), Monomial::new(1, 0, 1))
            .build()
            .unwrap_or_else(|e| panic!("{e}"))
    }

    #[test]
    fn a_coupling_only_at_nonzero_kz_is_judged_at_the_real_kz() {
        // invented parameters; 2000 orbitals x 2 components: split by the exact J at kz = 0
        // (sectors of at most 2 states, a few MiB), one dense sector of 4000 states at kz != 0
        // (48 x 4000^2 bytes = 732 MiB, common practice for a complex Hermitian eigen-solve)
        let model = kz_only_coupling("problem-test kz-only coupling (invented)");
        let mut settings = Settings::with_cutoff(2000);
        settings.memory_limit_mib = 64;
        let at_zero = Problem::new(
            &model,
            FieldPoint {
                field: 5.0,
                kz: 0.0,
            },
            &settings,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert!(at_zero.shape().largest_sector <= 2);
        assert!(at_zero.check_memory().is_ok());
        let kz = FieldPoint {
            field: 5.0,
            kz: 0.1,
        };
        let at_kz = Problem::new(&model, kz, &settings).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(at_kz.shape().largest_sector, 4000);
        // the pre-check refuses at the real kz (a check at kz = 0 would have let it through) ...
        let pre = match at_kz.check_memory() {
            Err(e @ Error::MemoryLimit { .. }) => e.to_string(),
            other => panic!("expected a memory refusal, got {other:?}"),
        };
        // ... with the verdict, and the very message, of the solve itself
        let solve = match Spectrum::compute(&model, kz, &settings) {
            Err(e @ Error::MemoryLimit { .. }) => e.to_string(),
            Err(e) => panic!("expected a memory refusal, got {e}"),
            Ok(_) => panic!("expected a memory refusal, the solve ran"),
        };
        assert_eq!(pre, solve);
        assert!(pre.contains("largest sector 4000 states"), "{pre}");
    }

    #[test]
    fn one_assembly_per_levels_solve() {
        let model = kz_only_coupling("problem-test one assembly per solve (invented)");
        let point = FieldPoint {
            field: 3.0,
            kz: 0.05,
        };
        let spec = Spectrum::compute(&model, point, &Settings::with_cutoff(30))
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(spec.levels.len(), 60);
        assert_eq!(assemblies(model.name(), point), 1);
        // the label families are read at a generic kz (src/labelling/): one more assembly,
        // at another point, and none besides
        assert_eq!(assemblies_of(model.name()), 2);
        // set up, checked and solved by hand: still one assembly at the point
        let p = Problem::new(&model, point, &Settings::with_cutoff(40))
            .unwrap_or_else(|e| panic!("{e}"));
        p.check_memory().unwrap_or_else(|e| panic!("{e}"));
        let spec = Spectrum::solve(&p).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(spec.levels.len(), 80);
        assert_eq!(assemblies(model.name(), point), 2);
    }

    #[test]
    fn a_model_without_kz_terms_is_assembled_once_in_all() {
        // the same invented cone without its kz term: the label families need no second
        // assembly at a generic kz, since no coupling depends on kz
        let p = |s: &str| pauli(s).unwrap_or_else(|e| panic!("{e}"));
        let model = Model::builder("problem-test 2D cone, one assembly (invented)", 2)
            .term("v kx sigma_x", 500.0, p("x"), Monomial::KX)
            .term("v ky sigma_y", 500.0, p("y"), Monomial::KY)
            .term("m sigma_z", 10.0, p("z"), Monomial::new(0, 0, 0))
            .build()
            .unwrap_or_else(|e| panic!("{e}"));
        let point = FieldPoint::field(3.0);
        let spec = Spectrum::compute(&model, point, &Settings::with_cutoff(30))
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(spec.levels.len(), 60);
        assert_eq!(assemblies_of(model.name()), 1);
    }

    #[test]
    fn one_assembly_per_sweep_point() {
        let model = kz_only_coupling("problem-test one assembly per sweep point (invented)");
        let points: Vec<FieldPoint> = [1.0, 2.0, 4.0]
            .iter()
            .map(|&field| FieldPoint { field, kz: 0.02 })
            .collect();
        let mut settings = Settings::with_cutoff(25);
        settings.splitting = Splitting::Off;
        let out = crate::sweep::run(&model, &points, &settings).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(out.len(), 3);
        for p in &points {
            assert_eq!(assemblies(model.name(), *p), 1, "{p:?}");
        }
        // no splitting: no label-family probe either
        assert_eq!(assemblies_of(model.name()), 3);
    }

    #[test]
    fn one_assembly_per_convergence_study() {
        use crate::trust::converge::{auto, study, AutoSettings, ExactValues, Selection};
        let model = kz_only_coupling("problem-test one assembly per study (invented)");
        let point = FieldPoint::field(2.0);
        let mut base = Settings::with_cutoff(20);
        base.splitting = Splitting::Off;
        let sel = Selection::Nearest {
            target: 0.0,
            count: 4,
        };
        let s = study(
            &model,
            point,
            &base,
            &[20, 30, 40],
            sel,
            ExactValues::LargestCutoff,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.cutoffs, vec![20, 30, 40]);
        // three solves at one (B, kz): the Hamiltonian does not depend on the cutoff
        assert_eq!(assemblies(model.name(), point), 1);
        let mut a = AutoSettings::new(sel, 1e-6);
        a.base = base;
        a.start_cutoff = 20;
        let r = auto(&model, point, &a).unwrap_or_else(|e| panic!("{e}"));
        assert!(r.history.len() >= 2, "{:?}", r.history);
        assert_eq!(assemblies(model.name(), point), 2);
    }
}

#[cfg(test)]
mod stream_tests {
    use super::*;
    use crate::models;

    fn schrodinger() -> Model {
        models::schrodinger(models::MassParams::default()).unwrap_or_else(|e| panic!("{e}"))
    }

    fn fields(n: usize) -> Vec<FieldPoint> {
        (1..=n).map(|b| FieldPoint::field(0.5 * b as f64)).collect()
    }

    #[test]
    fn streamed_spectra_are_the_batch_spectra_in_order_with_a_bounded_buffer() {
        let m = schrodinger();
        let pts = fields(41);
        let settings = Settings::with_cutoff(25);
        let all = run(&m, &pts, &settings).unwrap_or_else(|e| panic!("{e}"));
        for batch in [1, 3, 8] {
            let mut seen = Vec::new();
            let stats = stream(&m, &pts, &settings, batch, None, &|| {}, &mut |i, s| {
                // bit-identical to the all-at-once sweep (each point's solve is deterministic)
                assert_eq!(s.levels, all[i].levels, "point {i}");
                seen.push(i);
                Ok(())
            })
            .unwrap_or_else(|e| panic!("{e}"));
            assert_eq!(seen, (0..41).collect::<Vec<_>>());
            assert_eq!(stats.points, 41);
            // the buffer holds one batch being solved and one being handed on, not 41 points
            assert!(stats.max_held <= 2 * batch, "{stats:?}");
            assert_eq!(stats.max_held, 2 * batch.min(41 / 2), "{stats:?}");
        }
    }

    #[test]
    fn a_reused_spectrum_is_handed_on_in_its_place_and_not_solved_again() {
        let m = schrodinger();
        let pts = fields(7);
        let settings = Settings::with_cutoff(20);
        let reference = Spectrum::compute(&m, pts[4], &settings).unwrap_or_else(|e| panic!("{e}"));
        let solved = std::sync::atomic::AtomicUsize::new(0);
        let tick = || {
            solved.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        };
        let mut seen = Vec::new();
        stream(
            &m,
            &pts,
            &settings,
            2,
            Some((4, reference)),
            &tick,
            &mut |i, s| {
                seen.push((i, s.point.field));
                Ok(())
            },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let want: Vec<(usize, f64)> = pts.iter().map(|p| p.field).enumerate().collect();
        assert_eq!(seen, want);
        assert_eq!(solved.into_inner(), 6);
        // an index beyond the points is the caller's mistake, said so
        let r = Spectrum::compute(&m, pts[0], &settings).unwrap_or_else(|e| panic!("{e}"));
        let e = stream(&m, &pts, &settings, 2, Some((9, r)), &|| {}, &mut |_, _| {
            Ok(())
        });
        assert!(matches!(e, Err(crate::Error::BadNumber { .. })), "{e:?}");
    }

    #[test]
    fn the_first_error_in_point_order_stops_the_stream() {
        let m = schrodinger();
        let pts = fields(12);
        let mut seen = Vec::new();
        let r = stream(
            &m,
            &pts,
            &Settings::with_cutoff(15),
            4,
            None,
            &|| {},
            &mut |i, _| {
                seen.push(i);
                if i == 5 {
                    return Err(crate::Error::Unsupported(format!("stop at {i}")));
                }
                Ok(())
            },
        );
        assert!(matches!(r, Err(crate::Error::Unsupported(ref s)) if s == "stop at 5"));
        assert_eq!(seen, (0..=5).collect::<Vec<_>>());
    }
}
