//! Streamed sweeps: the tracks and the closed-form check built one point at a time
//! (`records::TrackCollector`, `verify::ClosedFormTally`, fed by `sweep::stream`) equal the
//! ones built from every spectrum held at once, and the stream holds a bounded number of
//! spectra whatever the number of points.

use ladderfan::models::{self, Dirac2dParams};
use ladderfan::records::{self, KeepTracks, TrackCollector};
use ladderfan::verify::{self, ClosedFormTally};
use ladderfan::{sweep, Character, FieldPoint, Model, Settings, Spectrum, Weights};

/// A massive 2D Dirac cone (invented mass), which has a closed form.
fn cone() -> Model {
    models::dirac2d(Dirac2dParams {
        mass_mev: 7.0, // invented gap parameter
        ..Dirac2dParams::default()
    })
    .unwrap_or_else(|e| panic!("{e}"))
}

fn points(n: usize) -> Vec<FieldPoint> {
    (1..=n)
        .map(|i| FieldPoint::field(0.25 * i as f64))
        .collect()
}

/// Energies within a quarter of the level range at the last point (an arbitrary window that
/// cuts through the fan, so that the margin and the entering rule both matter).
fn window_of(s: &Spectrum) -> (f64, f64) {
    let e: Vec<f64> = s.converged().map(|l| l.energy).collect();
    let lo = e.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = e.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (0.1 * lo, 0.15 * hi)
}

/// Settings at cutoff 60 with <n> asked for, and the component weights as `weights` says.
fn with_character(weights: Weights) -> Settings {
    Settings {
        character: Character::Compute,
        weights,
        ..Settings::with_cutoff(60)
    }
}

#[test]
fn streamed_tracks_equal_the_tracks_of_the_whole_sweep() {
    let m = cone();
    let pts = points(30);
    let settings = with_character(Weights::Compute);
    let all = sweep::run(&m, &pts, &settings).unwrap_or_else(|e| panic!("{e}"));
    let reference = pts.len() - 1;
    let win = window_of(&all[reference]);
    let whole = records::track_records(&m, &all, reference);
    let refs: Vec<&Spectrum> = all.iter().collect();
    let check = verify::closed_form_check(&m, &refs, win).unwrap_or_else(|| panic!("no check"));

    let mut entering = TrackCollector::new(
        &m,
        pts.len(),
        Some(reference),
        win,
        KeepTracks::EnteringWindow,
    );
    let mut every = TrackCollector::new(&m, pts.len(), Some(reference), win, KeepTracks::All);
    let mut tally = ClosedFormTally::new(&m, win);
    let stats = sweep::stream(&m, &pts, &settings, 3, None, &|| {}, &mut |i, s| {
        entering.add(i, &s);
        every.add(i, &s);
        tally.add(&s).unwrap_or_else(|| panic!("no closed form"));
        Ok(())
    })
    .unwrap_or_else(|e| panic!("{e}"));
    assert!(stats.max_held <= 6, "{stats:?}");
    // fewer values kept than levels solved: the margin drops the rest
    let solved: usize = all.iter().map(|s| s.levels.len()).sum();
    assert!(
        entering.values_held() < solved / 2,
        "{} of {solved}",
        entering.values_held()
    );
    let streamed = entering.finish();
    let expected = records::in_window(whole.clone(), win);
    assert!(!expected.is_empty());
    assert!(expected.iter().any(|t| t.weights.is_some()));
    // the same records, value for value (the same solves, so the same bits)
    assert_eq!(
        serde_json::to_string(&streamed).unwrap_or_default(),
        serde_json::to_string(&expected).unwrap_or_default()
    );
    let trimmed = records::trim_to_margin(whole, win);
    assert_eq!(
        serde_json::to_string(&every.finish()).unwrap_or_default(),
        serde_json::to_string(&trimmed).unwrap_or_default()
    );
    assert!(trimmed.len() > expected.len());
    let tallied = tally.finish();
    assert_eq!(
        serde_json::to_string(&tallied).unwrap_or_default(),
        serde_json::to_string(&check).unwrap_or_default()
    );
    assert!(
        tallied.computed_compared > 0 && tallied.passed,
        "{tallied:?}"
    );
}

#[test]
fn tracks_carry_no_character_when_the_weights_were_not_asked_for() {
    // <n> asked for, the weights not (the library's default): the records, whole or streamed,
    // carry energies and bounds only, the same as without <n>, instead of empty weights
    let m = cone();
    let pts = points(12);
    let mean_n_only = with_character(Weights::Skip);
    let all = sweep::run(&m, &pts, &mean_n_only).unwrap_or_else(|e| panic!("{e}"));
    assert!(all.iter().all(|s| s.mean_n.is_some() && !s.has_character()));
    let reference = pts.len() - 1;
    let win = window_of(&all[reference]);
    let whole = records::track_records(&m, &all, reference);
    assert!(!whole.is_empty());
    assert!(whole
        .iter()
        .all(|t| t.weights.is_none() && t.mean_n.is_none()));
    let mut streamed = TrackCollector::new(&m, pts.len(), Some(reference), win, KeepTracks::All);
    for (i, s) in all.iter().enumerate() {
        streamed.add(i, s);
    }
    let streamed = streamed.finish();
    assert!(!streamed.is_empty());
    assert!(streamed
        .iter()
        .all(|t| t.weights.is_none() && t.mean_n.is_none()));
    let plain = sweep::run(&m, &pts, &Settings::with_cutoff(60)).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        serde_json::to_string(&whole).unwrap_or_default(),
        serde_json::to_string(&records::track_records(&m, &plain, reference)).unwrap_or_default()
    );
}

#[test]
fn a_shard_collects_its_points_at_their_places_in_the_whole_sweep() {
    // points 10..20 of 30, the reference (last point) outside the shard
    let m = cone();
    let pts = points(30);
    let settings = Settings::with_cutoff(40);
    let all = sweep::run(&m, &pts, &settings).unwrap_or_else(|e| panic!("{e}"));
    let win = window_of(&all[29]);
    let mut c = TrackCollector::new(&m, 30, Some(29), win, KeepTracks::All);
    sweep::stream(&m, &pts[10..20], &settings, 4, None, &|| {}, &mut |i, s| {
        c.add(10 + i, &s);
        Ok(())
    })
    .unwrap_or_else(|e| panic!("{e}"));
    let tracks = c.finish();
    let mut values = 0;
    for t in &tracks {
        for (p, e) in t.energies.iter().enumerate() {
            if let Some(e) = e {
                assert!(
                    (10..20).contains(&p),
                    "value at point {p} outside the shard"
                );
                // the very level of the whole sweep at that point
                assert!(all[p].levels.iter().any(|l| l.energy == *e));
                values += 1;
            }
        }
        // no reference point in the shard: no component named
        assert!(t.component.is_none());
    }
    assert!(values > 0);
}

#[test]
fn outlines_hand_on_the_values_of_the_collected_tracks_and_draw_their_lines() {
    // the bounded-memory collector keeps the same values, tracks and order as the whole-track
    // collector; each value is handed on once, in point order per track; on a sweep shorter
    // than the figure's columns the lines are the whole tracks
    use ladderfan::plot::decimate::{Decimation, FIGURE_COLUMNS};
    use ladderfan::records::{OutlineCollector, TrackOutline};
    let m = cone();
    let pts = points(30);
    let xs: Vec<f64> = pts.iter().map(|p| p.field).collect();
    let settings = with_character(Weights::Compute);
    let all = sweep::run(&m, &pts, &settings).unwrap_or_else(|e| panic!("{e}"));
    let reference = pts.len() - 1;
    let win = window_of(&all[reference]);
    for keep in [KeepTracks::EnteringWindow, KeepTracks::All] {
        let mut whole = TrackCollector::new(&m, pts.len(), Some(reference), win, keep);
        let mut outlines =
            OutlineCollector::new(&m, &xs, Some(reference), win, keep, FIGURE_COLUMNS);
        // (slot, point, energy, bound) as handed on
        let mut handed: Vec<(usize, usize, f64, f64, String)> = Vec::new();
        for (i, s) in all.iter().enumerate() {
            whole.add(i, s);
            outlines.add(i, s, &mut |v| {
                assert_eq!(s.levels[v.level].energy, v.energy);
                handed.push((v.slot, v.point, v.energy, v.bound, v.track.to_string()));
            });
        }
        assert_eq!(outlines.values_held(), whole.values_held());
        let records = whole.finish();
        let got = outlines.finish();
        assert_eq!(got.len(), records.len());
        let d = Decimation::new(&xs, FIGURE_COLUMNS);
        assert!(d.is_exact());
        for (k, (o, r)) in got.iter().zip(&records).enumerate() {
            let from = TrackOutline::from_record(r, o.slot, &xs, reference, &d);
            assert_eq!((&o.track, &o.label, o.n), (&r.track, &r.label, r.n));
            assert_eq!(o.at_reference, from.at_reference, "track {k}");
            assert_eq!(o.range, from.range);
            assert_eq!(o.values, from.values);
            assert_eq!(o.line.len(), pts.len());
            // NaN marks a point without a value: compare the bits
            let bits = |l: &[(f64, f64)]| -> Vec<(u64, u64)> {
                l.iter().map(|p| (p.0.to_bits(), p.1.to_bits())).collect()
            };
            assert_eq!(bits(&o.line), bits(&from.line));
            assert!(o.colours.is_some());
            // the values handed on for this slot are the record's, in point order
            let mine: Vec<(usize, f64, f64)> = handed
                .iter()
                .filter(|h| h.0 == o.slot)
                .map(|h| (h.1, h.2, h.3))
                .collect();
            let expected: Vec<(usize, f64, f64)> = r
                .energies
                .iter()
                .zip(&r.bounds)
                .enumerate()
                .filter_map(|(p, (e, b))| Some((p, (*e)?, (*b)?)))
                .collect();
            assert_eq!(mine, expected);
            assert!(handed
                .iter()
                .filter(|h| h.0 == o.slot)
                .all(|h| h.4 == r.track));
        }
    }
}

#[test]
fn a_long_sweep_holds_thinned_lines_that_keep_every_extreme() {
    // 5000 points, about five per column of the figure: every line holds at most 3 values
    // per column (more than half of the values dropped), yet each track's lowest and highest
    // value are on its line
    use ladderfan::plot::decimate::{Decimation, FIGURE_COLUMNS};
    use ladderfan::records::OutlineCollector;
    let m = cone();
    let pts: Vec<FieldPoint> = (1..=5000)
        .map(|i| FieldPoint::field(0.002 * i as f64))
        .collect();
    let xs: Vec<f64> = pts.iter().map(|p| p.field).collect();
    let settings = Settings::with_cutoff(30);
    let last = Spectrum::compute(&m, pts[4999], &settings).unwrap_or_else(|e| panic!("{e}"));
    let win = window_of(&last);
    let mut c = OutlineCollector::new(
        &m,
        &xs,
        Some(4999),
        win,
        KeepTracks::EnteringWindow,
        FIGURE_COLUMNS,
    );
    let d = Decimation::new(&xs, FIGURE_COLUMNS);
    assert!(!d.is_exact());
    let mut handed = 0usize;
    sweep::stream(&m, &pts, &settings, 0, None, &|| {}, &mut |i, s| {
        c.add(i, &s, &mut |_| handed += 1);
        Ok(())
    })
    .unwrap_or_else(|e| panic!("{e}"));
    let tracks = c.finish();
    assert!(!tracks.is_empty());
    let mut thinned = 0;
    for t in &tracks {
        assert!(t.line.len() <= d.max_values(), "{}", t.line.len());
        let (lo, hi) = t.range.unwrap_or_else(|| panic!("no values"));
        let ys: Vec<f64> = t.line.iter().map(|p| p.1).collect();
        assert!(ys.contains(&lo) && ys.contains(&hi), "{}", t.label);
        thinned += t.values - ys.iter().filter(|y| y.is_finite()).count();
    }
    let kept: usize = tracks.iter().map(|t| t.values).sum();
    assert!(kept <= handed);
    assert!(thinned > kept / 2, "{thinned} of {kept} thinned");
}

/// Run the binary; its stdout.
fn ladderfan(args: &[&str]) -> String {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_ladderfan"))
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("run ladderfan: {e}"));
    assert!(
        out.status.success(),
        "ladderfan {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn scratch(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("ladderfan-stream-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn files_of(dir: &std::path::Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// The sidecar without its command line (which differs by the --json flag).
fn sidecar_without_command(path: &std::path::Path) -> serde_json::Value {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{e}"));
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{e}"));
    if let Some(o) = v.as_object_mut() {
        o.remove("command_line");
    }
    v
}

/// The directories `a` (whole record) and `b` (streamed) hold the same files, none hidden: the
/// same bytes, and the same sidecars but for the command line.
fn assert_same_files(a: &std::path::Path, b: &std::path::Path, what: &str) {
    assert_eq!(files_of(a), files_of(b), "{what}");
    assert!(files_of(b).iter().all(|n| !n.starts_with('.')));
    for name in files_of(a) {
        let (x, y) = (a.join(&name), b.join(&name));
        if name.ends_with(".meta.json") {
            assert_eq!(sidecar_without_command(&x), sidecar_without_command(&y));
        } else {
            let (x, y) = (
                std::fs::read(x).unwrap_or_default(),
                std::fs::read(y).unwrap_or_default(),
            );
            assert!(!x.is_empty());
            assert!(x == y, "{name} differs ({what})");
        }
    }
}

#[test]
fn the_streamed_files_equal_the_files_of_the_whole_record() {
    // `--json` keeps the whole record and writes the files from it (the path before
    // streaming); without it the rows stream through the spill: the CSV is the same byte for
    // byte, the figure and sidecar too, in lab and in converted units, with the character
    for (stem, extra) in [
        ("fan", vec!["--points", "40", "--cutoff", "80"]),
        (
            "fan",
            vec![
                "--points",
                "25",
                "--cutoff",
                "60",
                "--character",
                "--energy-unit",
                "K",
            ],
        ),
        ("dispersion", vec!["--points", "31", "--cutoff", "60"]),
    ] {
        let (a, b) = (scratch(&format!("{stem}-a")), scratch(&format!("{stem}-b")));
        let model = if stem == "fan" { "dirac2d" } else { "weyl" };
        let mut args = vec![stem, "--builtin", model];
        args.extend(&extra);
        let aa = a.to_string_lossy().into_owned();
        let bb = b.to_string_lossy().into_owned();
        let mut with_json = args.clone();
        with_json.extend(["--json", "--out", &aa]);
        let mut streamed = args.clone();
        streamed.extend(["--out", &bb]);
        ladderfan(&with_json);
        let text = ladderfan(&streamed);
        assert!(text.contains("tracked levels in the window"), "{text}");
        assert_same_files(&a, &b, &format!("{stem} {extra:?}"));
        let _ = std::fs::remove_dir_all(&a);
        let _ = std::fs::remove_dir_all(&b);
    }
}

#[test]
fn the_streamed_transition_fan_equals_the_whole_record() {
    // `optics --b-max` without --json streams its transitions through the spill (relative
    // strengths written absolute and divided by the run's strongest at the end); with --json
    // the whole record is kept and written: the table and figure must be the same bytes, the
    // sidecar the same but for the command line; at T > 0 (many transitions per field) and in
    // converted units
    for extra in [
        vec!["--points", "24", "--cutoff", "120"],
        vec![
            "--points",
            "17",
            "--cutoff",
            "90",
            "--temperature",
            "40",
            "--energy-unit",
            "invcm",
        ],
    ] {
        let (a, b) = (scratch("optics-a"), scratch("optics-b"));
        let mut args = vec![
            "optics",
            "--builtin",
            "dirac2d",
            "--b-max",
            "9",
            "--density-cm2",
            "2e12",
        ];
        args.extend(&extra);
        let aa = a.to_string_lossy().into_owned();
        let bb = b.to_string_lossy().into_owned();
        let mut with_json = args.clone();
        with_json.extend(["--json", "--out", &aa]);
        let mut streamed = args.clone();
        streamed.extend(["--out", &bb]);
        let record: serde_json::Value =
            serde_json::from_str(&ladderfan(&with_json)).unwrap_or_else(|e| panic!("{e}"));
        let text = ladderfan(&streamed);
        // the summary counts every transition of the record
        let count: usize = record["points"]
            .as_array()
            .map(|p| {
                p.iter()
                    .map(|q| q["transitions"].as_array().map_or(0, Vec::len))
                    .sum()
            })
            .unwrap_or(0);
        assert!(count > 0);
        assert!(
            text.contains(&format!(", {count} allowed transitions below")),
            "{text}"
        );
        assert_eq!(files_of(&b).len(), 3, "{:?}", files_of(&b));
        assert_same_files(&a, &b, &format!("{extra:?}"));
        // the strongest transition of the run has relative strength 1 in the table
        let table = std::fs::read_to_string(b.join("transitions.csv")).unwrap_or_default();
        let top = table
            .lines()
            .skip(1)
            .filter_map(|l| l.split(',').nth(16).and_then(|c| c.parse::<f64>().ok()))
            .fold(0.0, f64::max);
        assert!((top - 1.0).abs() < 1e-15, "{top}");
        let _ = std::fs::remove_dir_all(&a);
        let _ = std::fs::remove_dir_all(&b);
    }
}
