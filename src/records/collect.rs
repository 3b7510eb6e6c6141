//! Tracks built point by point: the streaming form of [`super::track_records`] followed by
//! [`super::in_window`] (or [`super::trim_to_margin`] for a shard), holding only the values a
//! sweep's table and figure show instead of every spectrum.

use super::{ids, TrackRecord};
use crate::levels::{LabelOrigin, Spectrum};
use crate::model::Model;
use crate::observables::labels::{self, TrackKey};
use std::collections::BTreeMap;

/// What a finished collection keeps: every track with a value within the margin, or only the
/// tracks that enter the window itself somewhere.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KeepTracks {
    /// Tracks with a converged value inside the window at some point ([`super::in_window`]).
    EnteringWindow,
    /// Every track, its values trimmed to the margin ([`super::trim_to_margin`]; a shard,
    /// whose merge decides which tracks enter the window).
    All,
}

/// One track so far: its label origin and component, and its kept values.
#[derive(Debug, Default)]
struct Partial {
    origin: Option<LabelOrigin>,
    component: Option<String>,
    /// (point, energy, bound) of the converged values within the margin.
    values: Vec<(usize, f64, f64)>,
    /// `dim` weights per kept value, with the sweep's character.
    weights: Vec<f64>,
    /// <n> per kept value (NaN: none), with the sweep's character.
    mean_n: Vec<f64>,
    enters: bool,
}

/// Builds the [`TrackRecord`]s of a sweep from its spectra handed in one at a time (in
/// point order), keeping per level only the converged values within the window widened by half its
/// width on either side: memory grows with the values shown, not with the spectra.
///
/// The result equals `in_window(track_records(..), window)` (or `trim_to_margin` with
/// [`KeepTracks::All`]) on the same spectra, with each point at its index of a sweep of
/// `total` points (a shard's points at their places in the whole sweep).
#[derive(Debug)]
pub struct TrackCollector {
    total: usize,
    reference: Option<usize>,
    window: (f64, f64),
    keep: KeepTracks,
    components: Vec<String>,
    dim: usize,
    character: bool,
    seen: usize,
    held: usize,
    tracks: BTreeMap<TrackKey, Partial>,
}

impl TrackCollector {
    /// A collector for a sweep of `total` points of `model`, labels and components taken at
    /// the point `reference` (if among the points handed in), values kept within `window`
    /// widened by half its width.
    pub fn new(
        model: &Model,
        total: usize,
        reference: Option<usize>,
        window: (f64, f64),
        keep: KeepTracks,
    ) -> Self {
        TrackCollector {
            total,
            reference,
            window,
            keep,
            components: model.component_names().to_vec(),
            dim: model.dim(),
            character: true,
            seen: 0,
            held: 0,
            tracks: BTreeMap::new(),
        }
    }

    /// Take the levels of the spectrum of point `index` (below `total`; points in ascending
    /// order, as a sweep hands them on), after which the spectrum may be dropped.
    pub fn add(&mut self, index: usize, s: &Spectrum) {
        let (lo, hi) = self.window;
        let margin = 0.5 * (hi - lo);
        let with_character = s.has_character();
        self.character &= with_character;
        self.seen += 1;
        for (i, (key, l)) in labels::track_keys(s).into_iter().zip(&s.levels).enumerate() {
            if labels::is_artefact(l) {
                continue;
            }
            let t = self.tracks.entry(key).or_default();
            let at_reference = Some(index) == self.reference;
            if t.origin.is_none() || at_reference {
                t.origin = Some(l.label.origin);
            }
            if at_reference {
                t.component = self.components.get(l.component as usize).cloned();
            }
            let e = l.energy;
            if !l.is_converged() || e < lo - margin || e > hi + margin {
                continue;
            }
            t.enters |= e >= lo && e <= hi;
            t.values.push((index, e, l.bound));
            if with_character {
                t.weights.extend_from_slice(s.weights_of(i));
                t.mean_n.push(s.mean_n_of(i).unwrap_or(f64::NAN));
            }
            self.held += 1;
        }
    }

    /// Values held so far (energies within the margin, over all points).
    pub fn values_held(&self) -> usize {
        self.held
    }

    /// The tracks, sorted by their integer identity [`TrackRecord::track`].
    pub fn finish(self) -> Vec<TrackRecord> {
        let character = self.character && self.seen > 0;
        let (total, dim, keep) = (self.total, self.dim, self.keep);
        let mut out: Vec<(TrackKey, TrackRecord)> = self
            .tracks
            .into_iter()
            .filter(|(_, t)| keep == KeepTracks::All || t.enters)
            .map(|(key, t)| (key, record(key, t, total, dim, character)))
            .collect();
        // stable: equal identities keep the order of their keys, as in `track_records`
        out.sort_by_key(|(k, _)| ids(k));
        out.into_iter().map(|(_, r)| r).collect()
    }
}

/// The record of one collected track, its values at their points of `total`.
fn record(key: TrackKey, t: Partial, total: usize, dim: usize, character: bool) -> TrackRecord {
    let mut energies = vec![None; total];
    let mut bounds = vec![None; total];
    let mut weights = vec![None; if character { total } else { 0 }];
    let mut mean_n = vec![None; if character { total } else { 0 }];
    for (k, &(p, e, b)) in t.values.iter().enumerate() {
        energies[p] = Some(e);
        bounds[p] = Some(b);
        if character {
            weights[p] = Some(t.weights[k * dim..(k + 1) * dim].to_vec());
            mean_n[p] = Some(t.mean_n[k]).filter(|m| !m.is_nan());
        }
    }
    let id = ids(&key);
    TrackRecord {
        track: format!("{}:{}:{}:{}", id[0], id[1], id[2], id[3]),
        label: key.to_string(),
        n: key.n,
        branch: key.branch,
        family: key.family,
        label_origin: t.origin.unwrap_or(LabelOrigin::Unlabelled),
        component: t.component,
        energies,
        bounds,
        weights: character.then_some(weights),
        mean_n: character.then_some(mean_n),
    }
}
