//! `transitions.csv`: its columns, its rows and its sidecar, shared by the whole-record and
//! the streamed runs.

use super::*;
use ladderfan::records::meta::CsvMeta;

/// The columns of `transitions.csv`, in order (`vu`: the velocity unit, e.g. `m/s`).
pub(super) fn transition_columns(lm: &LoadedModel, vu: &str) -> Vec<Column> {
    let cu = common::column_units(lm);
    let e = cu.energy_unit;
    let v = vu.replace('/', "_per_").replace(' ', "_");
    let sq = format!("({vu})^2");
    vec![
        Column::new(cu.field_column(), cu.field_unit, "magnetic field B"),
        Column::new(
            cu.energy_valued("fermi_energy"),
            e,
            "Fermi level at this field",
        ),
        Column::new("filling_factor", "1", "filling factor nu at this field"),
        Column::new(cu.energy_column(), e, "transition energy E_to - E_from"),
        Column::new("from_label", "", "Landau label of the initial level"),
        Column::new("to_label", "", "Landau label of the final level"),
        Column::new(
            "transition",
            "",
            "the transition as printed, LL(from) -> LL(to)",
        ),
        Column::new("from_orbital", "1", "dominant orbital of the initial level"),
        Column::new("to_orbital", "1", "dominant orbital of the final level"),
        Column::new(
            cu.energy_valued("from_energy"),
            e,
            "energy of the initial level",
        ),
        Column::new(
            cu.energy_valued("to_energy"),
            e,
            "energy of the final level",
        ),
        Column::new("occupation_difference", "1", "o_i - o_f"),
        Column::new(
            format!("strength_x_{v}_sq"),
            sq.clone(),
            "|<f|v_x|i>|^2 (o_i - o_f)",
        ),
        Column::new(
            format!("strength_y_{v}_sq"),
            sq.clone(),
            "|<f|v_y|i>|^2 (o_i - o_f)",
        ),
        Column::new(
            format!("strength_sigma_plus_{v}_sq"),
            sq.clone(),
            "|<f|e+.v|i>|^2 (o_i - o_f), e+ = (x + i y)/sqrt2",
        ),
        Column::new(
            format!("strength_sigma_minus_{v}_sq"),
            sq,
            "|<f|e-.v|i>|^2 (o_i - o_f), e- = (x - i y)/sqrt2",
        ),
        Column::new(
            "relative_strength",
            "1",
            "strength_x + strength_y relative to the strongest transition of the run",
        ),
        Column::new(
            "oscillator_strength_x",
            "1",
            "dimensionless oscillator strength, x polarisation",
        ),
        Column::new(
            "polarisation",
            "",
            "the circular polarisation that carries it (or both)",
        ),
    ]
}

/// The sidecar of `transitions.csv` (its columns still to be set): conventions, the reference
/// energy, kz, cutoff and temperature of the run `j` (whose points may be empty).
pub(super) fn table_meta(lm: &LoadedModel, j: &OpticsRecord) -> CsvMeta {
    let eu = lm.shown.energy.label();
    csv_meta(
        lm,
        "optics",
        vec![
            CONVENTION.to_string(),
            format!("energies relative to {} {eu}", j.reference_energy),
        ],
        vec![format!(
            "kz {}, cutoff {}, T {} K",
            j.kz, j.cutoff, j.temperature_k
        )],
    )
}

/// Column of `TransitionRecord::relative_strength` in [`point_rows`]: a streamed run writes the
/// absolute strength there and divides it by the run's strongest at the end.
pub(super) const RELATIVE_COLUMN: usize = 16;

/// The rows of one field's transitions (record in the output units).
pub(super) fn point_rows(p: &OpticsPointRecord) -> impl Iterator<Item = Vec<String>> + '_ {
    p.transitions.iter().map(move |t| {
        vec![
            format!("{:e}", p.field),
            format!("{:e}", p.fermi.fermi_energy),
            format!("{:e}", p.fermi.filling_factor),
            format!("{:e}", t.energy),
            t.from.clone(),
            t.to.clone(),
            t.transition.clone(),
            t.from_orbital.to_string(),
            t.to_orbital.to_string(),
            format!("{:e}", t.from_energy),
            format!("{:e}", t.to_energy),
            format!("{:e}", t.occupation_difference),
            format!("{:e}", t.strength_x),
            format!("{:e}", t.strength_y),
            format!("{:e}", t.strength_plus),
            format!("{:e}", t.strength_minus),
            format!("{:e}", t.relative_strength),
            format!("{:e}", t.oscillator_strength_x),
            pol_name(t.polarisation).into(),
        ]
    })
}

/// `transitions.csv` of the whole record `j`: one row per field and transition; conventions go
/// to its sidecar.
pub(super) fn to_csv(lm: &LoadedModel, j: &OpticsRecord) -> CliResult<CsvFile> {
    common::csv_file_from_iter(
        table_meta(lm, j),
        transition_columns(lm, j.velocity_unit),
        j.points.iter().flat_map(point_rows),
    )
}
