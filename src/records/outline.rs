//! A sweep's tracks in bounded memory: what the figure and the summary of a sweep show, built
//! point by point. Each kept value is handed to the caller as it arrives (the command line
//! writes its CSV row then) and otherwise only the track's line thinned to the figure's
//! resolution ([`crate::plot::decimate`]), its energy range and its value at the reference point
//! are held: memory does not grow with the number of points.

use super::{ids, KeepTracks, TrackRecord};
use crate::levels::{Branch, LabelOrigin, Spectrum};
use crate::model::Model;
use crate::observables::labels::{self, TrackKey};
use crate::plot::decimate::{DecimatedLine, Decimation};
use std::collections::BTreeMap;

/// One value kept for a track at a point, as [`OutlineCollector::add`] hands it on: the
/// converged energy of a level within the window widened by half its width, exactly the
/// values [`super::TrackCollector`] keeps.
#[derive(Debug, Clone, Copy)]
pub struct KeptValue<'a> {
    /// The track's slot: its place in the order tracks were first seen (a key for the
    /// caller's own per-track data, [`TrackOutline::slot`]).
    pub slot: usize,
    /// The track's integer identity as text ([`TrackRecord::track`]).
    pub track: &'a str,
    /// The track's label as printed ([`TrackRecord::label`]).
    pub label: &'a str,
    /// Landau index n.
    pub n: Option<i64>,
    /// Branch.
    pub branch: Branch,
    /// Point index in the whole sweep.
    pub point: usize,
    /// Index of the level in its spectrum (for its weights and `<n>`).
    pub level: usize,
    /// Energy, model units.
    pub energy: f64,
    /// Deciding error bound, model units.
    pub bound: f64,
}

/// What a sweep's figure and summary need of one track.
#[derive(Debug, Clone)]
pub struct TrackOutline {
    /// The slot [`KeptValue::slot`] of the track's values.
    pub slot: usize,
    /// Integer identity as text ([`TrackRecord::track`]).
    pub track: String,
    /// Label as printed.
    pub label: String,
    /// Landau index n.
    pub n: Option<i64>,
    /// Branch.
    pub branch: Branch,
    /// Family.
    pub family: usize,
    /// Label origin at the reference point (or where the track first appears).
    pub label_origin: LabelOrigin,
    /// Dominant component at the reference point.
    pub component: Option<String>,
    /// Energy at the reference point, if kept there.
    pub at_reference: Option<f64>,
    /// Lowest and highest kept energy.
    pub range: Option<(f64, f64)>,
    /// Kept values (rows of the sweep's table).
    pub values: usize,
    /// The line (swept value, energy), thinned by the collector's [`Decimation`].
    pub line: Vec<(f64, f64)>,
    /// The weight of the model's first component at each point of `line` (NaN: none), when
    /// the sweep computed the level character.
    pub colours: Option<Vec<f64>>,
}

impl TrackOutline {
    /// Multiply the swept values of the line by `x_factor` and the energies (line, range,
    /// value at the reference point) by `energy_factor` (> 0): the conversion at the output
    /// edge, as [`super::SweepJson::in_units`] converts the whole record.
    pub fn scale(&mut self, x_factor: f64, energy_factor: f64) {
        for p in &mut self.line {
            *p = (p.0 * x_factor, p.1 * energy_factor);
        }
        self.at_reference = self.at_reference.map(|e| e * energy_factor);
        self.range = self
            .range
            .map(|(a, b)| (a * energy_factor, b * energy_factor));
    }

    /// The outline of a whole track record (the sweep's swept values `xs`, reference point
    /// `reference`), its line thinned by `d`: equal to the outline an [`OutlineCollector`]
    /// builds from the same values.
    pub fn from_record(
        t: &TrackRecord,
        slot: usize,
        xs: &[f64],
        reference: usize,
        d: &Decimation,
    ) -> Self {
        let mut line = DecimatedLine::default();
        let mut range: Option<(f64, f64)> = None;
        let mut values = 0;
        for (i, (&x, e)) in xs.iter().zip(&t.energies).enumerate() {
            let Some(e) = *e else { continue };
            let colour = t
                .weights
                .as_ref()
                .and_then(|w| w.get(i).cloned().flatten())
                .and_then(|w| w.first().copied())
                .unwrap_or(f64::NAN);
            line.push(d, i, x, e, colour);
            range = Some(range.map_or((e, e), |(a, b)| (a.min(e), b.max(e))));
            values += 1;
        }
        let (line, colours) = line.finish(d);
        let line_len = line.len();
        TrackOutline {
            slot,
            track: t.track.clone(),
            label: t.label.clone(),
            n: t.n,
            branch: t.branch,
            family: t.family,
            label_origin: t.label_origin,
            component: t.component.clone(),
            at_reference: t.energies.get(reference).copied().flatten(),
            range,
            values,
            line: if values > 0 { line } else { Vec::new() },
            colours: t
                .weights
                .is_some()
                .then(|| full_colours(colours, if values > 0 { line_len } else { 0 })),
        }
    }
}

/// The colour values of a line of `len` points: NaN throughout when none was finite.
fn full_colours(colours: Vec<f64>, len: usize) -> Vec<f64> {
    if colours.is_empty() {
        vec![f64::NAN; len]
    } else {
        colours
    }
}

/// One track so far.
#[derive(Debug)]
struct Partial {
    key: TrackKey,
    track: String,
    label: String,
    origin: Option<LabelOrigin>,
    component: Option<String>,
    at_reference: Option<f64>,
    range: Option<(f64, f64)>,
    values: usize,
    line: DecimatedLine,
    enters: bool,
}

/// Builds the [`TrackOutline`]s of a sweep from its spectra handed in one at a time, in point
/// order, handing each kept value to the caller as it goes. Keeps the same values as
/// [`super::TrackCollector`] (converged, within the window widened by half its width) and the
/// same tracks ([`KeepTracks`]), but holds per track only its thinned line
/// (at most [`Decimation::max_values`] values), not a value per point.
#[derive(Debug)]
pub struct OutlineCollector {
    reference: Option<usize>,
    window: (f64, f64),
    keep: KeepTracks,
    components: Vec<String>,
    xs: Vec<f64>,
    decimation: Decimation,
    character: bool,
    seen: usize,
    slots: BTreeMap<TrackKey, usize>,
    tracks: Vec<Partial>,
}

impl OutlineCollector {
    /// A collector for a sweep of `model` over the swept values `xs` (one per point of the
    /// whole sweep; the figure's abscissae), labels and components taken at the point
    /// `reference`, values kept within `window` widened by half its width, lines thinned to
    /// `columns` columns ([`crate::plot::decimate::FIGURE_COLUMNS`] for a sweep's figure).
    pub fn new(
        model: &Model,
        xs: &[f64],
        reference: Option<usize>,
        window: (f64, f64),
        keep: KeepTracks,
        columns: usize,
    ) -> Self {
        OutlineCollector {
            reference,
            window,
            keep,
            components: model.component_names().to_vec(),
            xs: xs.to_vec(),
            decimation: Decimation::new(xs, columns),
            character: true,
            seen: 0,
            slots: BTreeMap::new(),
            tracks: Vec::new(),
        }
    }

    /// The decimation of the lines.
    pub fn decimation(&self) -> &Decimation {
        &self.decimation
    }

    /// Take the levels of the spectrum of point `index` (points in ascending order), handing
    /// each kept value to `each` (in the order of the spectrum's levels); the spectrum may be
    /// dropped afterwards.
    pub fn add(&mut self, index: usize, s: &Spectrum, each: &mut dyn FnMut(KeptValue<'_>)) {
        let (lo, hi) = self.window;
        let margin = 0.5 * (hi - lo);
        self.character &= s.has_character();
        self.seen += 1;
        let at_reference = Some(index) == self.reference;
        let x = self.xs.get(index).copied().unwrap_or(f64::NAN);
        for (i, (key, l)) in labels::track_keys(s).into_iter().zip(&s.levels).enumerate() {
            if labels::is_artefact(l) {
                continue;
            }
            let slot = match self.slots.get(&key) {
                Some(&k) => k,
                None => {
                    let k = self.tracks.len();
                    let id = ids(&key);
                    self.tracks.push(Partial {
                        key,
                        track: format!("{}:{}:{}:{}", id[0], id[1], id[2], id[3]),
                        label: key.to_string(),
                        origin: None,
                        component: None,
                        at_reference: None,
                        range: None,
                        values: 0,
                        line: DecimatedLine::default(),
                        enters: false,
                    });
                    self.slots.insert(key, k);
                    k
                }
            };
            let t = &mut self.tracks[slot];
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
            let colour = if s.has_character() {
                s.weights_of(i).first().copied().unwrap_or(f64::NAN)
            } else {
                f64::NAN
            };
            t.line.push(&self.decimation, index, x, e, colour);
            t.range = Some(t.range.map_or((e, e), |(a, b)| (a.min(e), b.max(e))));
            if at_reference {
                t.at_reference = Some(e);
            }
            t.values += 1;
            each(KeptValue {
                slot,
                track: &t.track,
                label: &t.label,
                n: key.n,
                branch: key.branch,
                point: index,
                level: i,
                energy: e,
                bound: l.bound,
            });
        }
    }

    /// Whether every spectrum handed in carried the level character (and at least one was).
    pub fn has_character(&self) -> bool {
        self.character && self.seen > 0
    }

    /// Values held now over all tracks' lines (bounded by the number of tracks times
    /// [`Decimation::max_values`]).
    pub fn values_held(&self) -> usize {
        self.tracks.iter().map(|t| t.line.len()).sum()
    }

    /// The outlines of the kept tracks, sorted by their integer identity
    /// [`TrackRecord::track`] (the order of [`super::TrackCollector::finish`]).
    pub fn finish(self) -> Vec<TrackOutline> {
        let character = self.has_character();
        let d = self.decimation;
        let keep = self.keep;
        let mut out: Vec<(TrackKey, TrackOutline)> = self
            .tracks
            .into_iter()
            .enumerate()
            .filter(|(_, t)| keep == KeepTracks::All || t.enters)
            .map(|(slot, t)| {
                let (line, colours) = if t.values > 0 {
                    t.line.finish(&d)
                } else {
                    (Vec::new(), Vec::new())
                };
                let colours = character.then(|| full_colours(colours, line.len()));
                let o = TrackOutline {
                    slot,
                    track: t.track,
                    label: t.label,
                    n: t.key.n,
                    branch: t.key.branch,
                    family: t.key.family,
                    label_origin: t.origin.unwrap_or(LabelOrigin::Unlabelled),
                    component: t.component,
                    at_reference: t.at_reference,
                    range: t.range,
                    values: t.values,
                    line,
                    colours,
                };
                (t.key, o)
            })
            .collect();
        // the key order first, then stable by identity: as `TrackCollector::finish`
        out.sort_by_key(|a| a.0);
        out.sort_by_key(|(k, _)| ids(k));
        out.into_iter().map(|(_, o)| o).collect()
    }
}
