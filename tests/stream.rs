//! Streamed sweeps: the tracks and the closed-form check built one point at a time
//! (`records::TrackCollector`, `verify::ClosedFormTally`, fed by `sweep::stream`) equal the
//! ones built from every spectrum held at once, and the stream holds a bounded number of
//! spectra whatever the number of points.

use ladderfan::models::{self, Dirac2dParams};
use ladderfan::records::{self, KeepTracks, TrackCollector};
use ladderfan::verify::{self, ClosedFormTally};
use ladderfan::{sweep, Character, FieldPoint, Model, Settings, Spectrum};

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

#[test]
fn streamed_tracks_equal_the_tracks_of_the_whole_sweep() {
    let m = cone();
    let pts = points(30);
    let settings = Settings {
        character: Character::Compute,
        ..Settings::with_cutoff(60)
    };
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
