//! Sweeps shared by `fan` and `dispersion`: parallel solves over points, window selection and
//! the CSV/JSON/SVG views. Tracking by label and the closed-form check are the library's
//! ([`ladderfan::records::track_records`], [`ladderfan::verify::closed_form_check`]).

use super::common::{self, bad_flag, csv_meta, fmt_num, CliError, CliResult, CsvFile, LoadedModel};
use clap::Args;
use ladderfan::models;
use ladderfan::plot::{Colouring, Curve, LegendEntry, LinePlot, Rgb, Stroke};
use ladderfan::records::meta::Column;
use ladderfan::records::{self, ModelRecord, SymmetryRecord, TrackRecord, UnitsRecord};
pub use ladderfan::records::{SweepJson, Swept};
use ladderfan::shard::{KeepGroups, Shard, ShardHeader};
use ladderfan::verify;
use ladderfan::{FieldPoint, Settings, Spectrum};

mod render;
use ladderfan::plot::decimate::{DecimatedLine, Decimation, FIGURE_COLUMNS};
use ladderfan::records::OutlineCollector;
pub use render::{csv, figure, outlines_of, summary};
use std::collections::BTreeMap;

/// Flags shared by every sweep.
#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    /// Number of sweep points (default: 60 for fan, 61 for dispersion so that kz = 0 is one).
    #[arg(value_parser = crate::cli::common::parse_count, long)]
    pub points: Option<usize>,
    /// Grid spacing.
    #[arg(long, value_enum, default_value_t = common::Grid::Linear)]
    pub grid: common::Grid,
    /// Lower end of the energy window of the plotted/listed levels (default: from the levels
    /// closest to the reference energy at the end point).
    #[arg(long, allow_negative_numbers = true)]
    pub emin: Option<f64>,
    /// Upper end of the energy window.
    #[arg(long, allow_negative_numbers = true)]
    pub emax: Option<f64>,
    /// How many levels (closest to the reference energy at the end point) set the default window.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 16)]
    pub count: usize,
    /// Worker threads for the sweep (default: all cores). Results do not depend on it.
    #[arg(value_parser = crate::cli::common::parse_count, long)]
    pub threads: Option<usize>,
    /// Compute only shard K of N (1-based) of the points, e.g. as one task of a job array;
    /// needs --out. Join the N CSV files with `ladderfan merge OUT.csv SHARD.csv...` into
    /// exactly the single-run table.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Also report each level's character at every point: component weights
    /// (`weight_<component>` columns, `weights` in JSON) and the mean orbital index <n>
    /// (`mean_n`).
    #[arg(long)]
    pub character: bool,
}

/// Run `work` on `threads` worker threads (all cores when `None`).
fn with_threads<T: Send>(threads: Option<usize>, work: impl FnOnce() -> T + Send) -> CliResult<T> {
    match threads {
        None => Ok(work()),
        Some(0) => Err(bad_flag("--threads", "0 threads; give at least 1")),
        Some(n) if n > ladderfan::limits::MAX_THREADS => Err(bad_flag(
            "--threads",
            format!(
                "{n} threads is more than the limit of {}; give at most the number of cores \
                 (results do not depend on it)",
                ladderfan::limits::MAX_THREADS
            ),
        )),
        Some(n) => Ok(rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .map_err(|e| bad_flag("--threads", format!("cannot start {n} threads: {e}")))?
            .install(work)),
    }
}

/// Points a streamed sweep on `threads` workers holds at once ([`ladderfan::sweep::stream`]:
/// two batches of four points per thread), at most `points`.
pub fn in_flight(threads: Option<usize>, points: usize) -> usize {
    let t = threads.unwrap_or_else(rayon::current_num_threads).max(1);
    (2 * (4 * t).max(2)).min(points.max(1))
}

/// Solve at every point, in parallel over points, handing each spectrum (checked finite) to
/// `sink` (whose error stops the sweep) in point order as soon as it and the points before it are done; at most
/// [`in_flight`] spectra are held at once. `reuse` is a spectrum already solved at one of the
/// points (its index). Each point's spectrum does not depend on the number of threads.
pub fn stream_points(
    lm: &LoadedModel,
    points: &[FieldPoint],
    settings: &Settings,
    what: &str,
    threads: Option<usize>,
    reuse: Option<(usize, Spectrum)>,
    sink: &mut (dyn FnMut(usize, &Spectrum) -> CliResult + Send),
) -> CliResult<ladderfan::sweep::StreamStats> {
    let bar = crate::cli::progress::Progress::new(what, points.len(), "points");
    if reuse.is_some() {
        bar.tick();
    }
    let tick = || bar.tick();
    let mut levels = 0usize;
    let mut failed: Option<CliError> = None;
    let mut take = |i: usize, s: Spectrum| -> ladderfan::Result<()> {
        match super::common::finite_spectrum(s).and_then(|s| {
            levels += s.levels.len();
            sink(i, &s)
        }) {
            Ok(()) => Ok(()),
            Err(e) => {
                failed = Some(e);
                // stops the stream; the CLI error above is the one reported
                Err(ladderfan::Error::Unsupported(
                    "a non-finite level or an output error".into(),
                ))
            }
        }
    };
    let work = || ladderfan::sweep::stream(&lm.model, points, settings, 0, reuse, &tick, &mut take);
    let result = with_threads(threads, work)?;
    bar.finish();
    if let Some(e) = failed {
        return Err(e);
    }
    let stats = result?;
    eprintln!(
        "{what}: {} points, {levels} levels, {:.2} s",
        points.len(),
        bar.elapsed().as_secs_f64()
    );
    Ok(stats)
}

/// The energy window: flags if given, else the span of the `count` converged levels closest to
/// the reference energy at the reference point, padded by 10 %.
pub fn window(a: &SweepArgs, reference: &Spectrum) -> CliResult<(f64, f64)> {
    let mut near: Vec<f64> = reference.converged().map(|l| l.energy).collect();
    near.sort_by(|x, y| x.abs().total_cmp(&y.abs()));
    near.truncate(a.count.max(1));
    let (lo, hi) = near
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &e| {
            (a.min(e), b.max(e))
        });
    let (lo, hi) = if lo.is_finite() {
        let pad = 0.1 * (hi - lo).max(reference.energy_scale);
        (lo - pad, hi + pad)
    } else {
        (-reference.energy_scale, reference.energy_scale)
    };
    let lo = match a.emin {
        Some(v) => common::finite_flag("--emin", v)?,
        None => lo,
    };
    let hi = match a.emax {
        Some(v) => common::finite_flag("--emax", v)?,
        None => hi,
    };
    if lo >= hi {
        return Err(bad_flag(
            "--emin",
            format!("the energy window [{lo}, {hi}] is empty; give --emin below --emax"),
        ));
    }
    Ok((lo, hi))
}

/// Closed-form overlay curves for the swept points, if the model has a closed form
/// ([`ladderfan::models::expected_levels`]): one curve per closed-form label, values outside the
/// window (widened by half its width) dropped, curves that never enter the window left out.
/// A sweep longer than the figure's columns (`d`) keeps per curve only its thinned line
/// ([`DecimatedLine`]), so memory does not grow with the number of points.
pub fn closed_form_curves(
    lm: &LoadedModel,
    points: &[FieldPoint],
    xs: &[f64],
    reference_energy: f64,
    cutoff: usize,
    (lo, hi): (f64, f64),
    d: &Decimation,
) -> Option<Vec<Vec<(f64, f64)>>> {
    let margin = 0.5 * (hi - lo);
    if d.is_exact() {
        let mut curves: BTreeMap<(i64, i8, String), Vec<(f64, f64)>> = BTreeMap::new();
        for (i, (p, &x)) in points.iter().zip(xs).enumerate() {
            let levels = models::expected_levels(&lm.model, *p, reference_energy, cutoff)?;
            for l in levels {
                let c = curves
                    .entry((l.n, l.s, l.label.clone()))
                    .or_insert_with(|| vec![(f64::NAN, f64::NAN); points.len()]);
                let keep = l.energy >= lo - margin && l.energy <= hi + margin;
                c[i] = (x, if keep { l.energy } else { f64::NAN });
            }
        }
        return Some(
            curves
                .into_values()
                .filter(|c| c.iter().any(|&(_, e)| e >= lo && e <= hi))
                .collect(),
        );
    }
    let mut curves: BTreeMap<(i64, i8, String), (DecimatedLine, bool)> = BTreeMap::new();
    for (i, (p, &x)) in points.iter().zip(xs).enumerate() {
        let levels = models::expected_levels(&lm.model, *p, reference_energy, cutoff)?;
        for l in levels {
            if l.energy < lo - margin || l.energy > hi + margin {
                continue;
            }
            let c = curves.entry((l.n, l.s, l.label.clone())).or_default();
            c.0.push(d, i, x, l.energy, f64::NAN);
            c.1 |= l.energy >= lo && l.energy <= hi;
        }
    }
    Some(
        curves
            .into_values()
            .filter(|c| c.1)
            .map(|c| c.0.finish(d).0)
            .collect(),
    )
}

/// A sweep to run: the swept values and the field points they map to.
#[derive(Debug, Clone)]
pub struct Plan {
    /// `fan` or `dispersion`.
    pub command: &'static str,
    /// What is swept.
    pub swept: Swept,
    /// Swept values.
    pub values: Vec<f64>,
    /// Points, one per value.
    pub points: Vec<FieldPoint>,
    /// Index of the reference point (labels and default window).
    pub reference_point: usize,
    /// Cutoff and memory limit.
    pub cutoff: usize,
    /// Memory limit, MiB.
    pub memory_limit_mib: u64,
}

/// A finished sweep: JSON view and closed-form overlay.
#[derive(Debug)]
pub struct Outcome {
    /// The result.
    pub json: SweepJson,
    /// Closed-form curves, if the model has a closed form.
    pub closed: Option<Vec<Vec<(f64, f64)>>>,
    /// Set for a `--shard K/N` run: only the CSV of the shard's points is written.
    pub shard: Option<ShardHeader>,
}

/// The window flags alone: finite, and --emin below --emax.
fn check_window_flags(a: &SweepArgs) -> CliResult {
    for (flag, v) in [("--emin", a.emin), ("--emax", a.emax)] {
        if let Some(v) = v {
            common::finite_flag(flag, v)?;
        }
    }
    if let (Some(lo), Some(hi)) = (a.emin, a.emax) {
        if lo >= hi {
            return Err(bad_flag(
                "--emin",
                format!("the energy window [{lo}, {hi}] is empty; give --emin below --emax"),
            ));
        }
    }
    Ok(())
}

/// The shard object of a shard's sidecar: tracks grouped by identity, kept where they enter
/// the window `win`.
fn shard_header(lm: &LoadedModel, s: Shard, total: usize, win: (f64, f64)) -> ShardHeader {
    // the shard's rows are in the shown energy unit; the window flags in the model's
    let f = lm.shown.energy_factor();
    ShardHeader {
        shard: s,
        total_points: total,
        group_by: vec!["track".into()],
        keep: Some(KeepGroups {
            column: common::column_units(lm).energy_column(),
            lo: win.0 * f,
            hi: win.1 * f,
        }),
    }
}

/// Solve, track and select, keeping the whole record (every kept value of every track at
/// every point: the JSON result, `--json`); see [`run_streamed`] for the files and summary
/// in memory that does not grow with the points.
pub fn execute(lm: &LoadedModel, plan: &Plan, a: &SweepArgs) -> CliResult<Outcome> {
    // flag problems first: a bad window must not cost a sweep
    check_window_flags(a)?;
    let mut settings = Settings::with_cutoff(plan.cutoff);
    settings.memory_limit_mib = plan.memory_limit_mib;
    // the track records carry each level's component weights
    settings.weights = ladderfan::Weights::Compute;
    if a.character {
        settings.character = ladderfan::Character::Compute;
    }
    let shard = parse_shard(a)?;

    let total = plan.points.len();
    let block = match shard {
        Some(s) => s.range(total)?,
        None => 0..total,
    };
    // the sweep streams: a few spectra in flight, and the track records of the values shown
    // (at most every level at every point)
    let held = in_flight(a.threads, block.len()) as u64;
    common::check_memory(
        lm,
        plan.command,
        "--points",
        plan.points[plan.reference_point],
        &settings,
        &ladderfan::memory::Footprint::Stream {
            points: block.len() as u64,
            in_flight: held,
            held_points: block.len() as u64,
            extra_per_level: ladderfan::memory::SWEEP_STREAM_BYTES,
            per_level: 0,
            buffer_bytes: 0,
        },
        a.threads,
    )?;
    // the reference point sets the window, so it is solved first (and not again in the sweep)
    let reference = with_threads(a.threads, || {
        Spectrum::compute(&lm.model, plan.points[plan.reference_point], &settings)
    })??;
    let reference = common::finite_spectrum(reference)?;
    let win = window(a, &reference)?;
    let keep = match shard {
        Some(_) => records::KeepTracks::All,
        None => records::KeepTracks::EnteringWindow,
    };
    let mut collector =
        records::TrackCollector::new(&lm.model, total, Some(plan.reference_point), win, keep);
    let mut tally = Some(verify::ClosedFormTally::new(&lm.model, win));
    let reuse = block
        .contains(&plan.reference_point)
        .then(|| (plan.reference_point - block.start, reference.clone()));
    stream_points(
        lm,
        &plan.points[block.clone()],
        &settings,
        plan.command,
        a.threads,
        reuse,
        &mut |i, s| {
            collector.add(block.start + i, s);
            if tally.as_mut().and_then(|t| t.add(s)).is_none() {
                tally = None;
            }
            Ok(())
        },
    )?;
    let reference = &reference;
    let shard_header = shard.map(|s| shard_header(lm, s, total, win));
    let tracks = collector.finish();
    let closed = closed_form_curves(
        lm,
        &plan.points,
        &plan.values,
        reference.reference_energy,
        plan.cutoff,
        win,
        &Decimation::new(&plan.values, FIGURE_COLUMNS),
    );
    let check = tally.map(verify::ClosedFormTally::finish);
    let json = sweep_json(lm, plan, a, reference, win, check, tracks);
    Ok(Outcome {
        json,
        closed,
        shard: shard_header,
    })
}

/// The `--shard I/K` flag, if given.
fn parse_shard(a: &SweepArgs) -> CliResult<Option<Shard>> {
    Ok(match &a.shard {
        Some(text) => Some(Shard::parse(text).map_err(|e| match e {
            ladderfan::Error::Parse { message, .. } => bad_flag("--shard", message),
            e => e.into(),
        })?),
        None => None,
    })
}

/// The sweep's result record: the plan, the reference point's energy and symmetry, the
/// window, the closed-form check and the tracks.
fn sweep_json(
    lm: &LoadedModel,
    plan: &Plan,
    a: &SweepArgs,
    reference: &Spectrum,
    win: (f64, f64),
    check: Option<verify::ClosedFormCheck>,
    tracks: Vec<TrackRecord>,
) -> SweepJson {
    SweepJson {
        command: plan.command,
        model: ModelRecord::new(&lm.model, &lm.origin),
        units: UnitsRecord::new(&lm.model),
        swept: plan.swept,
        grid: a.grid.spacing(),
        values: plan.values.clone(),
        field: match plan.swept {
            Swept::Kz => Some(plan.points[0].field),
            Swept::Field => None,
        },
        kz: match plan.swept {
            Swept::Field => Some(plan.points[0].kz),
            Swept::Kz => None,
        },
        cutoff: plan.cutoff,
        reference_energy: reference.reference_energy,
        symmetry: SymmetryRecord::new(reference),
        window: win,
        reference_point: plan.reference_point,
        closed_form: check,
        tracks,
    }
}

/// Refuse flags that cannot go together with `--shard`, before any work: a shard writes its
/// CSV for `ladderfan merge` and has no JSON result.
pub fn check_shard_output(a: &SweepArgs, output: &common::OutputArgs) -> CliResult {
    if a.shard.is_some() && output.json {
        return Err(bad_flag(
            "--json",
            "a shard run (--shard) writes its CSV for `ladderfan merge` and has no JSON result; \
             drop --json, or run the sweep without --shard for JSON",
        ));
    }
    Ok(())
}

/// The outcome with its energies and fields in the output units `lm.shown` (the record, the
/// closed-form curves and a shard's window of kept tracks).
fn in_output_units(lm: &LoadedModel, mut o: Outcome) -> Outcome {
    let u = lm.shown;
    let (e, f) = (u.energy_factor(), u.field_factor());
    let xf = if o.json.swept == Swept::Field { f } else { 1.0 };
    if let Some(curves) = &mut o.closed {
        for c in curves {
            for p in c {
                *p = (p.0 * xf, p.1 * e);
            }
        }
    }
    if let Some(k) = o.shard.as_mut().and_then(|h| h.keep.as_mut()) {
        k.column = u.energy_column("energy");
        k.lo *= e;
        k.hi *= e;
    }
    o.json = o.json.in_units(u);
    o
}

/// Write the files (if `--out`) and print the result, in the output units `lm.shown`.
pub fn finish(lm: &LoadedModel, o: Outcome, output: &common::OutputArgs, stem: &str) -> CliResult {
    let o = in_output_units(lm, o);
    if let Some(h) = &o.shard {
        let Some(dir) = &output.out else {
            return Err(bad_flag(
                "--shard",
                "a shard run writes its CSV for `ladderfan merge`: give --out DIR",
            ));
        };
        let mut files = common::OutputFiles::default();
        let mut file = csv(lm, &o.json)?;
        file.meta.shard = Some(h.clone());
        files.add_csv(&format!("{stem}.csv"), file)?;
        let written = files.write_all(dir)?;
        let mut text = format!("{}\n", h.line());
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        return common::emit(&text);
    }
    let mut written = Vec::new();
    if let Some(dir) = &output.out {
        let mut files = common::OutputFiles::default();
        files.add_csv(&format!("{stem}.csv"), csv(lm, &o.json)?)?;
        // with --character the figure is coloured by the weight of the first component
        let fig = figure(lm, &o.json, outlines_of(&o.json), o.closed.as_deref(), true);
        super::plot::add_figure(&mut files, stem, &fig, &super::plot::formats(output)?)?;
        written = files.write_all(dir)?;
    }
    if output.json {
        common::emit_json(&o.json)?;
    } else {
        let mut text = summary(lm, &o.json, &outlines_of(&o.json));
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        common::emit(&text)?;
    }
    verdict(o.json.closed_form.as_ref())
}

/// Run a sweep and write its result (files of `--out`, text or JSON on stdout): with
/// `--json` the whole record is built ([`execute`], [`finish`]); otherwise the sweep streams
/// ([`run_streamed`]).
pub fn run(
    lm: &LoadedModel,
    plan: &Plan,
    a: &SweepArgs,
    output: &common::OutputArgs,
    stem: &str,
) -> CliResult {
    if output.json {
        let o = execute(lm, plan, a)?;
        finish(lm, o, output, stem)
    } else {
        run_streamed(lm, plan, a, output, stem)
    }
}

/// Solve, track, select and write in memory that does not grow with the number of points:
/// each point's CSV rows are written as the point is handed on (in point order) to a spill in
/// the output directory ([`common::SpilledRows`]), which becomes the table (rows grouped by
/// track, as [`csv`] writes them) under its temporary name when the sweep is done and is
/// renamed into place with the other files only when everything succeeded; the figure and the
/// summary come from the tracks' outlines ([`OutlineCollector`]: lines thinned to
/// [`FIGURE_COLUMNS`] columns). The files and text equal those of [`execute`] and [`finish`]:
/// the CSV byte for byte, the figure too for a sweep of at most [`FIGURE_COLUMNS`] points.
pub fn run_streamed(
    lm: &LoadedModel,
    plan: &Plan,
    a: &SweepArgs,
    output: &common::OutputArgs,
    stem: &str,
) -> CliResult {
    check_window_flags(a)?;
    let mut settings = Settings::with_cutoff(plan.cutoff);
    settings.memory_limit_mib = plan.memory_limit_mib;
    // the track records carry each level's component weights
    settings.weights = ladderfan::Weights::Compute;
    if a.character {
        settings.character = ladderfan::Character::Compute;
    }
    let shard = parse_shard(a)?;
    if shard.is_some() && output.out.is_none() {
        return Err(bad_flag(
            "--shard",
            "a shard run writes its CSV for `ladderfan merge`: give --out DIR",
        ));
    }
    let total = plan.points.len();
    let block = match shard {
        Some(s) => s.range(total)?,
        None => 0..total,
    };
    let decimation = Decimation::new(&plan.values, FIGURE_COLUMNS);
    common::check_memory(
        lm,
        plan.command,
        "--points",
        plan.points[plan.reference_point],
        &settings,
        &ladderfan::memory::Footprint::Stream {
            points: block.len() as u64,
            in_flight: in_flight(a.threads, block.len()) as u64,
            held_points: decimation.max_values() as u64,
            extra_per_level: ladderfan::memory::SWEEP_OUTLINE_BYTES,
            per_level: ladderfan::memory::SWEEP_TRACK_ENTRY_BYTES,
            buffer_bytes: if output.out.is_some() {
                ladderfan::memory::SWEEP_REGROUP_BYTES
            } else {
                0
            },
        },
        a.threads,
    )?;
    let csv_name = format!("{stem}.csv");
    // the rows go to the output directory as the points finish
    let mut spill = match &output.out {
        Some(dir) => Some(common::SpilledRows::create(dir, &csv_name)?),
        None => None,
    };
    let reference = with_threads(a.threads, || {
        Spectrum::compute(&lm.model, plan.points[plan.reference_point], &settings)
    })??;
    let reference = common::finite_spectrum(reference)?;
    let win = window(a, &reference)?;
    let keep = match shard {
        Some(_) => records::KeepTracks::All,
        None => records::KeepTracks::EnteringWindow,
    };
    let mut collector = OutlineCollector::new(
        &lm.model,
        &plan.values,
        Some(plan.reference_point),
        win,
        keep,
        FIGURE_COLUMNS,
    );
    let mut tally = Some(verify::ClosedFormTally::new(&lm.model, win));
    let reuse = block
        .contains(&plan.reference_point)
        .then(|| (plan.reference_point - block.start, reference.clone()));
    let (energy_factor, x_factor) = output_factors(lm, plan.swept);
    let dim = lm.model.dim();
    stream_points(
        lm,
        &plan.points[block.clone()],
        &settings,
        plan.command,
        a.threads,
        reuse,
        &mut |i, s| {
            let point = block.start + i;
            let x = plan.values[point] * x_factor;
            let mut failed: Option<CliError> = None;
            collector.add(point, s, &mut |v| {
                let Some(spill) = spill.as_mut().filter(|_| failed.is_none()) else {
                    return;
                };
                let mut cells = render::row_cells(
                    x,
                    v.track,
                    v.label,
                    v.n,
                    v.branch,
                    v.energy * energy_factor,
                    v.bound * energy_factor,
                );
                if a.character {
                    cells.extend(render::weight_cells(
                        s.has_character().then(|| s.weights_of(v.level)),
                        s.mean_n_of(v.level),
                        dim,
                    ));
                }
                if let Err(e) = spill.push(v.slot, &common::csv_line(&cells)) {
                    failed = Some(e);
                }
            });
            if tally.as_mut().and_then(|t| t.add(s)).is_none() {
                tally = None;
            }
            failed.map_or(Ok(()), Err)
        },
    )?;
    if a.character && !collector.has_character() {
        return Err(CliError::Input(ladderfan::Error::Unsupported(
            "internal: a point of the sweep has no level character; please report".into(),
        )));
    }
    let mut tracks = collector.finish();
    for t in &mut tracks {
        t.scale(x_factor, energy_factor);
    }
    let closed = closed_form_curves(
        lm,
        &plan.points,
        &plan.values,
        reference.reference_energy,
        plan.cutoff,
        win,
        &decimation,
    );
    let check = tally.map(verify::ClosedFormTally::finish);
    let o = in_output_units(
        lm,
        Outcome {
            json: sweep_json(lm, plan, a, &reference, win, check, Vec::new()),
            closed,
            shard: shard.map(|s| shard_header(lm, s, total, win)),
        },
    );
    // the summary first: the figure takes the tracks' lines
    let mut text = match &o.shard {
        Some(h) => format!("{}\n", h.line()),
        None => summary(lm, &o.json, &tracks),
    };
    if let (Some(dir), Some(spill)) = (&output.out, spill) {
        let character = a.character && !tracks.is_empty();
        let (mut meta, columns) = render::csv_parts(lm, &o.json, character);
        let names: Vec<&str> = columns.iter().map(|c| c.name.as_str()).collect();
        let header = common::csv_line(&names);
        meta.columns = columns;
        meta.shard = o.shard.clone();
        let order: Vec<usize> = tracks.iter().map(|t| t.slot).collect();
        let table = spill.finish(&header, &order)?;
        let mut files = common::OutputFiles::default();
        files.add_staged_csv(&csv_name, table, &meta)?;
        if o.shard.is_none() {
            let fig = figure(lm, &o.json, tracks, o.closed.as_deref(), true);
            super::plot::add_figure(&mut files, stem, &fig, &super::plot::formats(output)?)?;
        }
        for p in files.write_all(dir)? {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
    }
    common::emit(&text)?;
    if o.shard.is_some() {
        return Ok(());
    }
    verdict(o.json.closed_form.as_ref())
}

/// The factors from the model's units to the output units `lm.shown` of a sweep's energies
/// and of its swept values (the field of a fan; kz is not converted).
fn output_factors(lm: &LoadedModel, swept: Swept) -> (f64, f64) {
    let u = lm.shown;
    let x = match swept {
        Swept::Field => u.field_factor(),
        Swept::Kz => 1.0,
    };
    (u.energy_factor(), x)
}

/// Exit status of a closed-form comparison: a disagreement is a failed verification; levels
/// that are not comparable at this cutoff are not.
pub fn verdict(c: Option<&verify::ClosedFormCheck>) -> CliResult {
    match c {
        Some(c) if !c.passed => Err(CliError::Verification(format!(
            "computed levels of {} {}",
            c.model, c.note
        ))),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_closed_form_disagreement_is_a_verification_failure() {
        let mut c = verify::ClosedFormCheck {
            model: "m".into(),
            computed_compared: 3,
            expected_compared: 3,
            max_deviation: 1e-3,
            worst_ratio: 5.0,
            not_comparable_points: 0,
            failed_points: 1,
            passed: false,
            note: "disagrees at 1 of 1 points".into(),
        };
        let e = verdict(Some(&c))
            .err()
            .unwrap_or_else(|| panic!("no error"));
        assert_eq!(e.exit_code(), common::EXIT_VERIFICATION);
        assert!(e
            .message()
            .starts_with("verification failed: computed levels of m disagrees"));
        c.passed = true;
        assert!(verdict(Some(&c)).is_ok());
        assert!(verdict(None).is_ok());
    }
}
