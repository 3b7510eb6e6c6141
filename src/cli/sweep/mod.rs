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
pub use render::{csv, figure, summary};
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
/// `sink` in point order as soon as it and the points before it are done; at most
/// [`in_flight`] spectra are held at once. `reuse` is a spectrum already solved at one of the
/// points (its index). Each point's spectrum does not depend on the number of threads.
pub fn stream_points(
    lm: &LoadedModel,
    points: &[FieldPoint],
    settings: &Settings,
    what: &str,
    threads: Option<usize>,
    reuse: Option<(usize, Spectrum)>,
    sink: &mut (dyn FnMut(usize, &Spectrum) + Send),
) -> CliResult<ladderfan::sweep::StreamStats> {
    let bar = crate::cli::progress::Progress::new(what, points.len(), "points");
    if reuse.is_some() {
        bar.tick();
    }
    let tick = || bar.tick();
    let mut levels = 0usize;
    let mut failed: Option<CliError> = None;
    let mut take = |i: usize, s: Spectrum| -> ladderfan::Result<()> {
        match super::common::finite_spectrum(s) {
            Ok(s) => {
                levels += s.levels.len();
                sink(i, &s);
                Ok(())
            }
            Err(e) => {
                failed = Some(e);
                // stops the stream; the CLI error above is the one reported
                Err(ladderfan::Error::Unsupported("a non-finite level".into()))
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
/// window (widened by half its width) dropped.
pub fn closed_form_curves(
    lm: &LoadedModel,
    points: &[FieldPoint],
    xs: &[f64],
    reference_energy: f64,
    cutoff: usize,
    (lo, hi): (f64, f64),
) -> Option<Vec<Vec<(f64, f64)>>> {
    let margin = 0.5 * (hi - lo);
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
    Some(
        curves
            .into_values()
            .filter(|c| c.iter().any(|&(_, e)| e >= lo && e <= hi))
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

/// Solve, track and select.
pub fn execute(lm: &LoadedModel, plan: &Plan, a: &SweepArgs) -> CliResult<Outcome> {
    // flag problems first: a bad window must not cost a sweep
    check_window_flags(a)?;
    let mut settings = Settings::with_cutoff(plan.cutoff);
    settings.memory_limit_mib = plan.memory_limit_mib;
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
        plan.cutoff,
        plan.memory_limit_mib,
        &ladderfan::memory::Footprint::Stream {
            points: block.len() as u64,
            in_flight: held,
            extra_per_level: ladderfan::memory::SWEEP_STREAM_BYTES,
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
        let weights = first_weights(&o.json);
        let name = format!(
            "weight of component {}",
            lm.model
                .component_names()
                .first()
                .map_or("0", String::as_str)
        );
        let colours = weights.as_ref().map(|values| render::PointColours {
            name: &name,
            values,
        });
        let fig = figure(lm, &o.json, o.closed.as_deref(), colours);
        super::plot::add_figure(&mut files, stem, &fig, &super::plot::formats(output)?)?;
        written = files.write_all(dir)?;
    }
    if output.json {
        common::emit_json(&o.json)?;
    } else {
        let mut text = summary(lm, &o.json);
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        common::emit(&text)?;
    }
    verdict(o.json.closed_form.as_ref())
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

/// Per track and swept point, the weight of the model's first component (NaN where the track
/// has no value there), when the sweep computed the level character; `None` otherwise.
fn first_weights(j: &SweepJson) -> Option<Vec<Vec<f64>>> {
    if !j.tracks.iter().any(|t| t.weights.is_some()) {
        return None;
    }
    Some(
        j.tracks
            .iter()
            .map(|t| {
                (0..j.values.len())
                    .map(|i| {
                        t.weights
                            .as_ref()
                            .and_then(|w| w.get(i).cloned().flatten())
                            .and_then(|w| w.first().copied())
                            .unwrap_or(f64::NAN)
                    })
                    .collect()
            })
            .collect(),
    )
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
