//! The result records of whole commands: one record per front-end result (sweep, verify,
//! export, convergence study and automatic run, demo, model listing). Energies and bounds are
//! in the model's energy unit, fields in its field unit, kz in its wave-number unit, all named
//! in the [`UnitsRecord`] each record carries; the field order is the JSON key order.

use super::{ModelRecord, SpectrumRecord, SymmetryRecord, TrackRecord, UnitsRecord};
use crate::levels::Convergence;
use crate::sweep::Spacing;
use crate::trust::converge::{AutoStep, Study};
use crate::trust::window::WindowWarning;
use crate::units::OutputUnits;
use crate::verify::{ClosedFormCheck, Verdict};
use serde::Serialize;

/// What a sweep varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Swept {
    /// The magnetic field B (the model's field unit): a fan diagram.
    Field,
    /// kz (the model's wave-number unit): a dispersion along the field.
    Kz,
}

/// Everything a sweep (fan or dispersion) produced.
#[derive(Debug, Serialize)]
pub struct SweepJson {
    /// `fan` or `dispersion`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of every number.
    pub units: UnitsRecord,
    /// Which quantity is swept.
    pub swept: Swept,
    /// Grid spacing (`linear` or `log`).
    pub grid: Spacing,
    /// The swept values (field unit for a fan, wave-number unit for a dispersion).
    pub values: Vec<f64>,
    /// The fixed field of a dispersion (field unit), or null for a fan.
    pub field: Option<f64>,
    /// The fixed kz of a fan (wave-number unit), or null for a dispersion.
    pub kz: Option<f64>,
    /// Orbital cutoff N.
    pub cutoff: usize,
    /// Energies are relative to this (energy unit).
    pub reference_energy: f64,
    /// Symmetry found at the reference point.
    pub symmetry: SymmetryRecord,
    /// Energy window of the listed tracks (energy unit, relative to the reference).
    pub window: (f64, f64),
    /// Index of the point that set the tracks' component and the default window.
    pub reference_point: usize,
    /// Comparison with the model's closed form over every point, when it has one.
    pub closed_form: Option<ClosedFormCheck>,
    /// The tracked levels entering the window.
    pub tracks: Vec<TrackRecord>,
}

impl SweepJson {
    /// The record with energies (tracks, window, reference energy, closed-form deviation)
    /// multiplied by [`OutputUnits::energy_factor`] and fields (the swept values of a fan, the
    /// fixed field of a dispersion) by [`OutputUnits::field_factor`]: the conversion at the
    /// output edge. Applied once, to a record in the model's units.
    pub fn in_units(mut self, o: OutputUnits) -> Self {
        let (e, f) = (o.energy_factor(), o.field_factor());
        self.units = self.units.shown(o);
        if self.swept == Swept::Field {
            self.values.iter_mut().for_each(|v| *v *= f);
        }
        self.field = self.field.map(|b| b * f);
        self.reference_energy *= e;
        self.window = (self.window.0 * e, self.window.1 * e);
        if let Some(c) = &mut self.closed_form {
            c.max_deviation *= e;
        }
        for t in &mut self.tracks {
            t.scale_energies(e);
        }
        self
    }
}

/// The result of verifying expected levels against the spectrum.
#[derive(Debug, Serialize)]
pub struct VerifyJson {
    /// Always `verify`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of every number.
    pub units: UnitsRecord,
    /// Field B (field unit).
    pub field: f64,
    /// kz (wave-number unit).
    pub kz: f64,
    /// Orbital cutoff N.
    pub cutoff: usize,
    /// What the expected levels came from.
    pub expected_source: String,
    /// Number of expected levels (before multiplicities).
    pub expected_levels: usize,
    /// The one-line verdict.
    pub verdict_line: String,
    /// Everything the check found (energies relative to `verdict.reference_energy`).
    pub verdict: Verdict,
}

/// Description of an exported MatrixMarket file ([`crate::mtx`]).
#[derive(Debug, Serialize)]
pub struct ExportJson {
    /// Always `export`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units (the matrix elements are in the energy unit, no reference subtracted).
    pub units: UnitsRecord,
    /// Field B (field unit).
    pub field: f64,
    /// kz (wave-number unit).
    pub kz: f64,
    /// Orbital cutoff N.
    pub cutoff: usize,
    /// Sector exported (`CLASS:LABEL`), or null for the whole matrix.
    pub sector: Option<String>,
    /// File written.
    pub file: String,
    /// Matrix size (rows).
    pub rows: usize,
    /// Stored entries (lower triangle).
    pub entries: usize,
    /// Basis state (orbital n, component) of every row, in order.
    pub states: Vec<(usize, usize)>,
}

/// The result of a convergence study over a list of cutoffs.
#[derive(Debug, Serialize)]
pub struct StudyJson<'a> {
    /// Always `converge`.
    pub command: &'static str,
    /// `study`.
    pub mode: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of every number.
    pub units: UnitsRecord,
    /// The study.
    pub study: &'a Study,
    /// Wall-clock seconds per cutoff, only when timings are asked for (they differ from run
    /// to run).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub seconds: Option<&'a [f64]>,
}

/// One selected level of an automatic convergence run.
#[derive(Debug, Serialize)]
pub struct AutoLevelJson {
    /// Energy relative to the reference energy (energy unit).
    pub energy: f64,
    /// Residual bound (energy unit).
    pub bound: f64,
    /// Kato-Temple bound (energy unit), when its gap condition was certified.
    pub kato_temple: Option<f64>,
    /// Which bound decided the state: `residual` or `kato_temple`.
    pub bound_from: &'static str,
    /// `converged` or `not_converged` (artefacts are never selected).
    pub state: Convergence,
    /// Sector `class:label`.
    pub sector: String,
    /// Dominant orbital n.
    pub orbital: usize,
    /// Dominant component.
    pub component: usize,
}

/// The result of an automatic convergence run (the cutoff grown until the selected levels
/// meet the tolerance).
#[derive(Debug, Serialize)]
pub struct AutoJson<'a> {
    /// Always `converge`.
    pub command: &'static str,
    /// `auto`.
    pub mode: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of every number.
    pub units: UnitsRecord,
    /// Field B (field unit).
    pub field: f64,
    /// kz (wave-number unit).
    pub kz: f64,
    /// Relative tolerance met.
    pub tolerance: f64,
    /// Final cutoff.
    pub cutoff: usize,
    /// First cutoff that met the tolerance (confirmed by the final one).
    pub first_converged_cutoff: usize,
    /// Matrix dimension N d at the final cutoff.
    pub matrix_dimension: usize,
    /// Total wall-clock seconds, only when timings are asked for (they differ from run to
    /// run).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub seconds: Option<f64>,
    /// Wall-clock seconds of each step, only when timings are asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub step_seconds: Option<Vec<f64>>,
    /// Energies are relative to this (energy unit).
    pub reference_energy: f64,
    /// The steps.
    pub history: &'a [AutoStep],
    /// The selected levels at the final cutoff.
    pub levels: Vec<AutoLevelJson>,
    /// Bands re-entering the window beyond the cutoff.
    pub warnings: &'a [WindowWarning],
}

/// The result of the demo: levels at one field and a fan.
#[derive(Debug, Serialize)]
pub struct DemoJson {
    /// Always `demo`.
    pub command: &'static str,
    /// Levels at the demo field.
    pub levels: SpectrumRecord,
    /// The fan sweep.
    pub fan: SweepJson,
    /// Closed-form check at the demo field (the fan's own check is in `fan`).
    pub closed_form_check: Option<ClosedFormCheck>,
    /// Files written.
    pub files: Vec<String>,
}

/// One parameter of a built-in model in the model listing.
#[derive(Debug, Serialize)]
pub struct ParamJson {
    /// Name for `--set` and `[set]`.
    pub name: &'static str,
    /// Default value, in `unit`.
    pub default: f64,
    /// Unit.
    pub unit: &'static str,
    /// Meaning.
    pub meaning: &'static str,
}

/// One built-in model in the model listing.
#[derive(Debug, Serialize)]
pub struct ModelEntry {
    /// Name for `--builtin` and `builtin = ...`.
    pub name: &'static str,
    /// The Hamiltonian.
    pub summary: &'static str,
    /// Unit system.
    pub units: crate::units::Units,
    /// Units header.
    pub units_header: String,
    /// Source of the closed form.
    pub source: &'static str,
    /// Parameters.
    pub parameters: Vec<ParamJson>,
}
