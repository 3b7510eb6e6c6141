//! Records of the observables: densities of states, Fermi levels and magneto-optical
//! transitions.

use super::{ModelRecord, UnitsRecord};
use crate::observables::dos::{per_cm2, LineShape};
use crate::observables::filling::FermiSolution;
use crate::observables::optics::{Polarisation, Transition, TransitionPoint};
use crate::units::{OutputUnits, Units};
use serde::Serialize;

/// The kz-integrated (per volume) density of states of a 3D model at one field
/// ([`crate::observables::volume`]); energies relative to the reference energy, model unit.
#[derive(Debug, Serialize)]
pub struct VolumeRecord {
    /// Limit K of the kz integral, model wave-number unit.
    pub kz_max: f64,
    /// kz points solved (on [-K, K], or [0, K] for a spectrum even in kz).
    pub kz_points: usize,
    /// Whether the spectrum is even in kz.
    pub even_in_kz: bool,
    /// Largest change of the DOS between the last two kz grids, relative to its largest value.
    pub quadrature_change: f64,
    /// Temperature of the density column, K.
    pub temperature_k: f64,
    /// Neutrality energy the density is counted from (null: band empty at neutrality).
    pub neutrality_energy: Option<f64>,
    /// (energy, DOS per (energy unit cm^3), carrier density from neutrality in cm^-3).
    pub dos: Vec<(f64, f64, f64)>,
    /// The Fermi level for a given 3D carrier density.
    pub fermi: Option<VolumeFermiRecord>,
    /// The Fermi level for a given 3D carrier density against the field (empty: no sweep).
    pub fermi_sweep: Vec<VolumeFermiSweepRecord>,
}

/// One field of the 3D Fermi-level sweep.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct VolumeFermiSweepRecord {
    /// Field, model field unit.
    pub field: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// DOS there, 1/(energy unit cm^3).
    pub dos_at_fermi_per_cm3: f64,
    /// kz points needed at this field.
    pub kz_points: usize,
}

/// Fermi level for a 3D density.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct VolumeFermiRecord {
    /// Carrier density from neutrality, cm^-3.
    pub density_cm3: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// DOS there, 1/(energy unit cm^3).
    pub dos_at_fermi_per_cm3: f64,
}

/// The Fermi level and filling at one field ([`FermiSolution`]), densities in cm^-2.
#[derive(Debug, Clone, Serialize)]
pub struct FermiRecord {
    /// Field, model field unit.
    pub field: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// Filling factor nu = n h / (|q| e B).
    pub filling_factor: f64,
    /// Carrier density from neutrality, cm^-2.
    pub density_cm2: f64,
    /// DOS at the Fermi level, 1/(energy unit cm^2).
    pub dos_at_fermi_per_cm2: f64,
    /// Broadening width there, model energy unit.
    pub width: f64,
    /// Neutrality energy used (null: band empty at neutrality).
    pub neutrality_energy: Option<f64>,
}

impl FermiRecord {
    /// From a solution (densities converted to cm^-2).
    pub fn new(u: Units, s: &FermiSolution) -> Self {
        FermiRecord {
            field: s.field,
            fermi_energy: s.fermi_energy,
            filling_factor: s.filling_factor,
            density_cm2: per_cm2(u, s.carrier_density),
            dos_at_fermi_per_cm2: per_cm2(u, s.dos_at_fermi),
            width: s.width,
            neutrality_energy: s.neutrality_energy,
        }
    }
}

/// One allowed magneto-optical transition ([`Transition`]); energies relative to the
/// reference energy in the model's energy unit, strengths in its velocity unit squared.
#[derive(Debug, Clone, Serialize)]
pub struct TransitionRecord {
    /// Identity of the initial level: its Landau label (`+2`, `-2`, `0`, `+1'`, `~` when
    /// continued, `@f<family>` for a family other than 0).
    pub from: String,
    /// Identity of the final level.
    pub to: String,
    /// The transition in the trade's notation, e.g. `LL(-2) -> LL(+3)`.
    pub transition: String,
    /// Dominant orbital of the initial level.
    pub from_orbital: usize,
    /// Dominant orbital of the final level.
    pub to_orbital: usize,
    /// Initial level energy.
    pub from_energy: f64,
    /// Final level energy.
    pub to_energy: f64,
    /// Transition energy.
    pub energy: f64,
    /// Occupation difference.
    pub occupation_difference: f64,
    /// |<f|v_x|i>|^2 (o_i - o_f), velocity unit squared.
    pub strength_x: f64,
    /// |<f|v_y|i>|^2 (o_i - o_f).
    pub strength_y: f64,
    /// sigma+ strength.
    pub strength_plus: f64,
    /// sigma- strength.
    pub strength_minus: f64,
    /// (strength_x + strength_y) relative to the strongest transition of the whole run.
    pub relative_strength: f64,
    /// 2 m_e |<f|v_x|i>|^2 / (E_f - E_i).
    pub oscillator_strength_x: f64,
    /// Dominant polarisation.
    pub polarisation: Polarisation,
}

/// The transitions at one field.
#[derive(Debug, Clone, Serialize)]
pub struct OpticsPointRecord {
    /// Field, model field unit.
    pub field: f64,
    /// Fermi level and filling.
    pub fermi: FermiRecord,
    /// Allowed transitions, ascending in energy.
    pub transitions: Vec<TransitionRecord>,
}

impl OpticsPointRecord {
    /// The record of the point `p` in the model's units `u`, strengths relative to `max`
    /// (the largest strength_x + strength_y of the run, [`transition_record`]).
    pub fn new(p: &TransitionPoint, u: Units, max: f64) -> Self {
        OpticsPointRecord {
            field: p.field,
            fermi: FermiRecord::new(u, &p.fermi),
            transitions: p
                .transitions
                .iter()
                .map(|t| transition_record(t, max))
                .collect(),
        }
    }

    /// The records of a transition fan (or of one field), strengths relative to the
    /// strongest transition of the whole fan: [`strongest`] of all its points.
    pub fn fan(points: &[TransitionPoint], u: Units) -> Vec<Self> {
        let max = strongest(points.iter().flat_map(|p| p.transitions.iter()));
        points.iter().map(|p| Self::new(p, u, max)).collect()
    }

    /// Transition and level energies times `energy_factor`, the Fermi record by
    /// `FermiRecord::scale`, the field times `field_factor`; strengths unchanged (the output
    /// edge: [`OpticsRecord::in_units`]).
    pub fn scale(&mut self, energy_factor: f64, field_factor: f64) {
        self.field *= field_factor;
        self.fermi.scale(energy_factor, field_factor);
        for t in &mut self.transitions {
            t.energy *= energy_factor;
            t.from_energy *= energy_factor;
            t.to_energy *= energy_factor;
        }
    }
}

/// The unit of [`TransitionRecord::relative_strength`]: the largest strength_x + strength_y of
/// `transitions` (at least the smallest positive f64, so that a run without any transition
/// divides by a positive number).
pub fn strongest<'a>(transitions: impl Iterator<Item = &'a Transition>) -> f64 {
    transitions
        .map(|t| t.strength_x + t.strength_y)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE)
}

/// `LL(-2) -> LL(+3)`: initial and final Landau level by their labels.
pub fn transition_text(t: &Transition) -> String {
    format!("LL({}) -> LL({})", t.from_key, t.to_key)
}

/// The record of transition `t`; `max` is the largest strength_x + strength_y of the run
/// (the unit of [`TransitionRecord::relative_strength`]).
pub fn transition_record(t: &Transition, max: f64) -> TransitionRecord {
    TransitionRecord {
        from: t.from_key.to_string(),
        to: t.to_key.to_string(),
        transition: transition_text(t),
        from_orbital: t.from_orbital,
        to_orbital: t.to_orbital,
        from_energy: t.from_energy,
        to_energy: t.to_energy,
        energy: t.energy,
        occupation_difference: t.occupation_difference,
        strength_x: t.strength_x,
        strength_y: t.strength_y,
        strength_plus: t.strength_plus,
        strength_minus: t.strength_minus,
        relative_strength: (t.strength_x + t.strength_y) / max,
        oscillator_strength_x: t.oscillator_strength_x,
        polarisation: t.polarisation,
    }
}

/// The density of states at one field as reported (`dos`): the DOS per area on an energy grid,
/// the Fermi level, its sweep against the field and the kz-integrated part; energies relative
/// to `reference_energy` in the model's energy unit, densities per cm^2 (cm^3 for the volume
/// part).
#[derive(Debug, Serialize)]
pub struct DosRecord {
    /// The command that produced the record (`dos`).
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units.
    pub units: UnitsRecord,
    /// Field.
    pub field: f64,
    /// kz (a 3D model's DOS is that of one kz sheet).
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Energies are relative to this.
    pub reference_energy: f64,
    /// Landau degeneracy |qB|/h, cm^-2.
    pub landau_degeneracy_cm2: f64,
    /// The model's extra degeneracy g.
    pub model_degeneracy: u32,
    /// States per level, g |qB|/h, cm^-2.
    pub states_per_level_cm2: f64,
    /// Line shape.
    pub shape: LineShape,
    /// Width at this field, model energy unit.
    pub width: f64,
    /// Temperature, K.
    pub temperature_k: f64,
    /// Number of converged levels used (unconverged ones never count).
    pub levels_used: usize,
    /// Energy window of the converged levels.
    pub converged_window: (f64, f64),
    /// DOS grid: energy and DOS in 1/(energy unit cm^2).
    pub dos: Vec<(f64, f64)>,
    /// Fermi level at this field, when a density or filling was given.
    pub fermi: Option<FermiRecord>,
    /// Fermi level against the field (empty: no sweep).
    pub fermi_sweep: Vec<FermiRecord>,
    /// Densities per unit volume, for a kz-integrated result (null otherwise).
    pub volume: Option<VolumeRecord>,
}

/// The magneto-optical transitions as reported (`optics`), at one field or over a sweep.
#[derive(Debug, Serialize)]
pub struct OpticsRecord {
    /// The command that produced the record (`optics`).
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units of energies and fields.
    pub units: UnitsRecord,
    /// Velocity unit of the strengths (m/s, or c in natural units).
    pub velocity_unit: &'static str,
    /// kz.
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Energies are relative to this.
    pub reference_energy: f64,
    /// Temperature, K.
    pub temperature_k: f64,
    /// Largest transition energy listed.
    pub max_energy: f64,
    /// Polarisation convention.
    pub convention: &'static str,
    /// The points.
    pub points: Vec<OpticsPointRecord>,
}

impl FermiRecord {
    /// Energies times `e`, the DOS per energy divided by `e`, the field times `f`.
    fn scale(&mut self, e: f64, f: f64) {
        self.field *= f;
        self.fermi_energy *= e;
        self.dos_at_fermi_per_cm2 /= e;
        self.width *= e;
        self.neutrality_energy = self.neutrality_energy.map(|x| x * e);
    }
}

impl VolumeRecord {
    /// Energies times `e`, densities of states per energy divided by `e`, fields times `f`;
    /// carrier densities and kz unchanged.
    fn scale(&mut self, e: f64, f: f64) {
        self.neutrality_energy = self.neutrality_energy.map(|x| x * e);
        for p in &mut self.dos {
            p.0 *= e;
            p.1 /= e;
        }
        if let Some(r) = &mut self.fermi {
            r.fermi_energy *= e;
            r.dos_at_fermi_per_cm3 /= e;
        }
        for r in &mut self.fermi_sweep {
            r.field *= f;
            r.fermi_energy *= e;
            r.dos_at_fermi_per_cm3 /= e;
        }
    }
}

impl DosRecord {
    /// The record in the output units `o`: energies (grid, Fermi levels, widths, window,
    /// reference) times [`OutputUnits::energy_factor`], densities of states per energy divided
    /// by it (a DOS per meV becomes a DOS per eV, 1000 times larger), fields times
    /// [`OutputUnits::field_factor`]; carrier densities, degeneracies and kz unchanged.
    /// Applied once, to a record in the model's units.
    pub fn in_units(mut self, o: OutputUnits) -> Self {
        let (e, f) = (o.energy_factor(), o.field_factor());
        self.units = self.units.shown(o);
        self.field *= f;
        self.reference_energy *= e;
        self.width *= e;
        self.converged_window = (self.converged_window.0 * e, self.converged_window.1 * e);
        for p in &mut self.dos {
            p.0 *= e;
            p.1 /= e;
        }
        if let Some(r) = &mut self.fermi {
            r.scale(e, f);
        }
        for r in &mut self.fermi_sweep {
            r.scale(e, f);
        }
        if let Some(v) = &mut self.volume {
            v.scale(e, f);
        }
        self
    }
}

impl OpticsRecord {
    /// The record in the output units `o`: transition and level energies, Fermi levels,
    /// widths and the reference energy times [`OutputUnits::energy_factor`], the DOS at the
    /// Fermi level per output energy unit, fields times [`OutputUnits::field_factor`]; strengths
    /// and densities unchanged. Applied once, to a record in the model's units.
    pub fn in_units(mut self, o: OutputUnits) -> Self {
        let (e, f) = (o.energy_factor(), o.field_factor());
        self.units = self.units.shown(o);
        self.reference_energy *= e;
        self.max_energy *= e;
        for p in &mut self.points {
            p.scale(e, f);
        }
        self
    }
}
