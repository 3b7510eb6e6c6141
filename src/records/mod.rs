//! Output records: the serialisable results a front end prints, writes or hands on (the
//! command line writes them as JSON, the CSV columns are read from them).
//!
//! Each record mirrors a library result with plain fields: energies and bounds in the model's
//! energy unit, fields in its field unit, wave numbers in its wave-number unit, all named in
//! the [`UnitsRecord`] that every result carries. The field order is the JSON key order.

use crate::levels::{Branch, Convergence, LabelOrigin, Spectrum};
use crate::model::Model;
use crate::observables::labels;
use crate::units::OutputUnits;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

mod collect;
mod commands;
pub use collect::{KeepTracks, TrackCollector};
mod outline;
pub use outline::{KeptValue, OutlineCollector, TrackOutline};
pub mod meta;
mod observables;
pub use commands::{
    AutoJson, AutoLevelJson, DemoJson, ExportJson, ModelEntry, ParamJson, StudyJson, SweepJson,
    Swept, VerifyJson,
};
pub use observables::{
    strongest, transition_record, transition_text, DosRecord, FermiRecord, OpticsPointRecord,
    OpticsRecord, TransitionRecord, VolumeFermiRecord, VolumeFermiSweepRecord, VolumeRecord,
};

/// The model block every result starts with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelRecord {
    /// Model name.
    pub name: String,
    /// Where it came from.
    pub origin: String,
    /// Components.
    pub components: usize,
    /// Carrier charge in e.
    pub charge: f64,
    /// Parameters by name, each in the unit its name or the model documentation gives.
    pub parameters: BTreeMap<String, f64>,
}

impl ModelRecord {
    /// The record of `model`, loaded from `origin` (a file path or `built-in`, as the front end
    /// describes it).
    pub fn new(model: &Model, origin: &str) -> Self {
        ModelRecord {
            name: model.name().to_string(),
            origin: origin.to_string(),
            components: model.dim(),
            charge: model.charge(),
            parameters: model.params().clone(),
        }
    }
}

/// The unit block of every result: the units all its numbers are given in (the model's own,
/// or the output units of [`UnitsRecord::shown`] after the record's energies and fields were
/// converted at the output edge).
#[derive(Debug, Clone, Serialize)]
pub struct UnitsRecord {
    /// `lab` or `natural`.
    pub system: crate::units::Units,
    /// `Units::header()`.
    pub header: String,
    /// Energy unit.
    pub energy: String,
    /// Length unit.
    pub length: String,
    /// Field unit.
    pub field: String,
    /// Wave-number (kz) unit.
    pub wavenumber: String,
    /// The output units the energies and fields are in (suffixes of column names, factors
    /// from the model's units).
    #[serde(skip)]
    pub output: OutputUnits,
}

impl UnitsRecord {
    /// For a model.
    pub fn new(m: &Model) -> Self {
        let u = m.units();
        UnitsRecord {
            system: u,
            header: u.header(),
            energy: u.energy_unit().into(),
            length: u.length_unit().into(),
            field: u.field_unit().into(),
            wavenumber: u.wavenumber_unit().into(),
            output: OutputUnits::native(u),
        }
    }

    /// This block after converting to the output units `o`: the energy and field names
    /// become those of `o` (the header line says so too); lengths and kz stay in the model's.
    pub fn shown(mut self, o: OutputUnits) -> Self {
        self.energy = o.energy.label().into();
        self.field = o.field.label().into();
        self.header = format!(
            "energy {}, length {}, field {}, kz {}",
            self.energy, self.length, self.field, self.wavenumber
        );
        self.output = o;
        self
    }
}

/// One level as reported (`levels`, `demo`): energy, bounds, sector, label and character.
/// Energies and bounds are in the model's energy unit ([`UnitsRecord::energy`]).
#[derive(Debug, Clone, Serialize)]
pub struct LevelRecord {
    /// Energy relative to the reference energy.
    pub energy: f64,
    /// Error bound on the energy: the deciding bound (`bound_from` says which).
    pub bound: f64,
    /// Residual (Weinstein) bound, always available.
    pub residual_bound: f64,
    /// Kato-Temple bound where its gap condition was certified; absent otherwise (a JSON
    /// result never carries null, so scripts cannot mistake a missing bound for a number).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub kato_temple_bound: Option<f64>,
    /// Which bound decided the state: `residual` or `kato_temple`.
    pub bound_from: &'static str,
    /// `converged`, `not_converged` (genuine, raise the cutoff) or `cutoff_artefact`.
    pub state: crate::levels::Convergence,
    /// Converged at the solve's tolerance (state == converged).
    pub converged: bool,
    /// Sector label `class:J`.
    pub sector: String,
    /// Component class index.
    pub sector_class: usize,
    /// J, J mod m or 0.
    pub sector_label: i64,
    /// Branch (Klein-Gordon form: +1/-1; else 0).
    pub branch: i8,
    /// Dominant orbital (largest weight); not the Landau index, see `landau_n`.
    pub orbital: usize,
    /// Dominant component index.
    pub component: usize,
    /// Dominant component name.
    pub component_name: String,
    /// Rank within the (sector, branch) by ascending energy.
    pub rank: usize,
    /// Landau index n as the trade writes it (null: no label; see the README, "Reading a
    /// level").
    pub landau_n: Option<i64>,
    /// Branch within the sector, counted from the gap.
    pub landau_branch: crate::levels::Branch,
    /// The printed label: `+2`, `-2`, `0`, `+1'`, `+3~` (continued), `?`.
    pub label: String,
    /// How the label was obtained.
    pub label_origin: crate::levels::LabelOrigin,
    /// Family (smallest component of the coupled set).
    pub family: usize,
    /// Weight on each component (sum 1), in the model's component order.
    pub weights: Vec<f64>,
    /// Mean orbital index `<n>` = sum n |psi_n|^2, when the solve computed it (`--character`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mean_n: Option<f64>,
}

/// The records of the levels of `s` with indices `idx` (in that order); `model` names the
/// components.
pub fn level_records(model: &Model, s: &Spectrum, idx: &[usize]) -> Vec<LevelRecord> {
    let r = labels::ranks(s);
    idx.iter()
        .map(|&i| {
            let l = &s.levels[i];
            let (bound, from) = l.deciding_bound();
            LevelRecord {
                energy: l.energy,
                bound,
                residual_bound: l.bound,
                kato_temple_bound: l.kato_temple,
                bound_from: from.name(),
                state: l.convergence,
                converged: l.is_converged(),
                sector: format!("{}:{}", l.sector.class, l.sector.label),
                sector_class: l.sector.class,
                sector_label: l.sector.label,
                branch: l.branch.sign(),
                orbital: l.orbital,
                component: l.component as usize,
                component_name: model
                    .component_names()
                    .get(l.component as usize)
                    .cloned()
                    .unwrap_or_default(),
                rank: r[i],
                landau_n: l.label.is_known().then_some(l.label.n),
                landau_branch: l.label.branch,
                label: l.label.to_string(),
                label_origin: l.label.origin,
                family: l.label.family as usize,
                weights: s.weights_of(i).to_vec(),
                mean_n: s.mean_n_of(i),
            }
        })
        .collect()
}

/// The conserved quantity found (see [`crate::sectors`]).
#[derive(Debug, Clone, Serialize)]
pub struct SymmetryRecord {
    /// Human-readable description.
    pub description: String,
    /// Whether J is exactly conserved in every class (sectors of at most d states).
    pub exact: bool,
    /// The classes.
    pub classes: crate::sectors::Symmetry,
}

impl SymmetryRecord {
    /// From a spectrum.
    pub fn new(s: &Spectrum) -> Self {
        SymmetryRecord {
            description: s.symmetry.describe(),
            exact: s.symmetry.is_exact(),
            classes: s.symmetry.clone(),
        }
    }
}

/// One tracked level across the sweep (None where it was not converged or not present),
/// followed by its quantum numbers ([`labels::tracks`]); energies and bounds in the
/// model's energy unit.
#[derive(Debug, Clone, Serialize)]
pub struct TrackRecord {
    /// The identity as integers `family:n:branch:copy` (n = -1 unlabelled; branch +k above
    /// the gap, -k below, 0 unpaired): the grouping column of the CSV and of shard merges.
    pub track: String,
    /// The level's identity as printed: Landau label (`+2`, `-2`, `0`, `+1'`; `?` unlabelled),
    /// `@f<family>` for a family other than 0, `#<copy>` for a repeated label.
    pub label: String,
    /// Landau index n (null: no label).
    pub n: Option<i64>,
    /// Branch within the sector.
    pub branch: Branch,
    /// Family (smallest component of the coupled set).
    pub family: usize,
    /// How the label was obtained at the reference point (or the first point it appears).
    pub label_origin: LabelOrigin,
    /// Dominant component name at the reference point.
    pub component: Option<String>,
    /// Energies per sweep point (null: not converged there).
    pub energies: Vec<Option<f64>>,
    /// Bounds per sweep point.
    pub bounds: Vec<Option<f64>>,
    /// Component weights per sweep point (in the model's component order; null where the
    /// energy is), present when the sweep computed the character (`--character`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub weights: Option<Vec<Option<Vec<f64>>>>,
    /// Mean orbital index `<n>` per sweep point, present with `weights`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mean_n: Option<Vec<Option<f64>>>,
}

/// The integer identity `[family, n (-1: none), branch (+k, -k, 0), copy]` of a track key, the
/// order of [`TrackRecord::track`] and of a shard merge.
fn ids(k: &labels::TrackKey) -> [i64; 4] {
    let b = match k.branch {
        Branch::Upper(x) => x as i64,
        Branch::Lower(x) => -(x as i64),
        Branch::Unpaired => 0,
    };
    [k.family as i64, k.n.unwrap_or(-1), b, k.copy as i64]
}

/// Follow every level across the sweep by its quantum numbers (the library's
/// [`labels::tracks`]; cutoff artefacts never enter). Only converged values are kept; the
/// label origin and component are taken at the point `reference`. Sorted by the integer
/// identity [`TrackRecord::track`], the order of a shard merge.
pub fn track_records(model: &Model, spectra: &[Spectrum], reference: usize) -> Vec<TrackRecord> {
    let np = spectra.len();
    let character = spectra.iter().all(Spectrum::has_character) && !spectra.is_empty();
    let mut all = labels::tracks(spectra);
    // the order of the integer identity, which is also the order of a shard merge
    all.sort_by_key(|t| ids(&t.key));
    all.into_iter()
        .map(|t| {
            let mut energies = vec![None; np];
            let mut bounds = vec![None; np];
            let mut weights = vec![None; np];
            let mut mean_n = vec![None; np];
            let mut origin = None;
            let mut component = None;
            for p in &t.points {
                let l = &spectra[p.point].levels[p.level];
                if p.converged {
                    energies[p.point] = Some(l.energy);
                    bounds[p.point] = Some(l.bound);
                    if character {
                        let s = &spectra[p.point];
                        weights[p.point] = Some(s.weights_of(p.level).to_vec());
                        mean_n[p.point] = s.mean_n_of(p.level);
                    }
                }
                if origin.is_none() || p.point == reference {
                    origin = Some(l.label.origin);
                }
                if p.point == reference {
                    component = model.component_names().get(l.component as usize).cloned();
                }
            }
            let id = ids(&t.key);
            TrackRecord {
                track: format!("{}:{}:{}:{}", id[0], id[1], id[2], id[3]),
                label: t.key.to_string(),
                n: t.key.n,
                branch: t.key.branch,
                family: t.key.family,
                label_origin: origin.unwrap_or(LabelOrigin::Unlabelled),
                component,
                energies,
                bounds,
                weights: character.then_some(weights),
                mean_n: character.then_some(mean_n),
            }
        })
        .collect()
}

/// Keep the tracks that enter the window at some point, and their values within the window
/// widened by half its width on either side (so curves leave the plot frame cleanly).
pub fn in_window(tracks: Vec<TrackRecord>, (lo, hi): (f64, f64)) -> Vec<TrackRecord> {
    let entering = tracks
        .into_iter()
        .filter(|t| t.energies.iter().flatten().any(|&e| e >= lo && e <= hi))
        .collect();
    trim_to_margin(entering, (lo, hi))
}

/// Drop the values of every track lying more than half a window outside it (a shard keeps
/// every track: whether a track enters the window is decided over all shards by the merge).
pub fn trim_to_margin(tracks: Vec<TrackRecord>, (lo, hi): (f64, f64)) -> Vec<TrackRecord> {
    let margin = 0.5 * (hi - lo);
    tracks
        .into_iter()
        .map(|mut t| {
            for (e, b) in t.energies.iter_mut().zip(t.bounds.iter_mut()) {
                if e.is_some_and(|v| v < lo - margin || v > hi + margin) {
                    *e = None;
                    *b = None;
                }
            }
            clear_character_where_no_energy(&mut t);
            t
        })
        .collect()
}

/// Drop the character values of the points where a track has no energy (kept in step with
/// the energies when the window trims them).
fn clear_character_where_no_energy(t: &mut TrackRecord) {
    let gone: Vec<bool> = t.energies.iter().map(Option::is_none).collect();
    if let Some(w) = &mut t.weights {
        for (w, &g) in w.iter_mut().zip(&gone) {
            if g {
                *w = None;
            }
        }
    }
    if let Some(m) = &mut t.mean_n {
        for (m, &g) in m.iter_mut().zip(&gone) {
            if g {
                *m = None;
            }
        }
    }
}

/// The spectrum at one point as reported (`levels`): the model, units, point, symmetry, level
/// counts and the levels shown, energies relative to `reference_energy` in the model's energy
/// unit, the magnetic length in its length unit.
#[derive(Debug, Serialize)]
pub struct SpectrumRecord {
    /// The command (or other front) that produced the record, e.g. `levels`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of every number.
    pub units: UnitsRecord,
    /// Field, model field unit.
    pub field: f64,
    /// kz, model wave-number unit.
    pub kz: f64,
    /// Orbital cutoff.
    pub cutoff: usize,
    /// Energies are relative to this.
    pub reference_energy: f64,
    /// Magnetic length.
    pub magnetic_length: f64,
    /// Relative tolerance of the convergence flags.
    pub tolerance: f64,
    /// Symmetry found.
    pub symmetry: SymmetryRecord,
    /// Number of levels computed.
    pub levels_total: usize,
    /// Number of converged levels.
    pub levels_converged: usize,
    /// Number of genuine levels that are not converged (raise the cutoff).
    pub levels_not_converged: usize,
    /// Number of cutoff artefacts.
    pub levels_artefacts: usize,
    /// The levels shown, ascending in energy.
    pub levels: Vec<LevelRecord>,
    /// Named warnings (also printed on stderr), e.g. `nothing converged`.
    pub warnings: Vec<String>,
}

/// The warnings of a spectrum ([`SpectrumRecord::warnings`]): `nothing converged: ...` when no level met the tolerance.
pub fn warnings(s: &Spectrum) -> Vec<String> {
    let mut w = Vec::new();
    if !s.levels.is_empty() && s.converged().next().is_none() {
        w.push(format!(
            "nothing converged: none of the {} levels at cutoff {} meets the tolerance {:e}; \
             raise the cutoff, or check that the model's energy scales are sensible",
            s.levels.len(),
            s.cutoff,
            s.tolerance
        ));
    }
    w
}

impl SpectrumRecord {
    /// The record of spectrum `s` of `model` (loaded from `origin`) showing the levels with
    /// indices `idx`.
    pub fn new(model: &Model, origin: &str, s: &Spectrum, idx: &[usize]) -> Self {
        SpectrumRecord {
            command: "levels",
            model: ModelRecord::new(model, origin),
            units: UnitsRecord::new(model),
            field: s.point.field,
            kz: s.point.kz,
            cutoff: s.cutoff,
            reference_energy: s.reference_energy,
            magnetic_length: s.magnetic_length,
            tolerance: s.tolerance,
            symmetry: SymmetryRecord::new(s),
            levels_total: s.levels.len(),
            levels_converged: s.converged().count(),
            levels_not_converged: count_state(s, Convergence::NotConverged),
            levels_artefacts: count_state(s, Convergence::CutoffArtefact),
            levels: level_records(model, s, idx),
            warnings: warnings(s),
        }
    }
}

impl SpectrumRecord {
    /// The record with its energies (levels, bounds, reference energy) multiplied by
    /// [`OutputUnits::energy_factor`] and its field by [`OutputUnits::field_factor`]: the
    /// conversion at the output edge. Applied once, to a record in the model's units.
    pub fn in_units(mut self, o: OutputUnits) -> Self {
        let (e, f) = (o.energy_factor(), o.field_factor());
        self.units = self.units.shown(o);
        self.field *= f;
        self.reference_energy *= e;
        for l in &mut self.levels {
            l.energy *= e;
            l.bound *= e;
            l.residual_bound *= e;
            l.kato_temple_bound = l.kato_temple_bound.map(|k| k * e);
        }
        self
    }
}

impl TrackRecord {
    /// Multiply the energies and bounds by `factor` (conversion at the output edge).
    pub fn scale_energies(&mut self, factor: f64) {
        for v in self
            .energies
            .iter_mut()
            .chain(self.bounds.iter_mut())
            .flatten()
        {
            *v *= factor;
        }
    }
}

/// The number of levels of `s` in `state`.
pub fn count_state(s: &Spectrum, state: Convergence) -> usize {
    s.levels.iter().filter(|l| l.convergence == state).count()
}
