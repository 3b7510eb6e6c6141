//! The CSV files of `converge`: `converge.csv` (the study) and `converge-auto.csv` (the
//! automatic cutoff), each with its metadata sidecar.

use super::*;
use common::{column_units, csv_file, csv_meta, CsvFile};
use ladderfan::records::meta::Column;
use ladderfan::trust::report::{csv_columns, study_csv, STUDY_COLUMNS};

/// `converge.csv`: the library's study table (column line first, no comment line) with the
/// sidecar naming every column's unit and meaning.
pub(super) fn study_file(
    lm: &common::LoadedModel,
    r: &common::Resolved,
    st: &Study,
) -> CliResult<CsvFile> {
    let cu = column_units(lm);
    let u = lm.model.units();
    let point = r.point();
    let mut meta = csv_meta(
        lm,
        "converge",
        vec!["energies and errors relative to the reference energy".into()],
        vec![format!(
            "field {} {}, kz {} {}, cutoffs {:?}, relative tolerance {:e}",
            point.field * lm.shown.field_factor(),
            lm.shown.field.label(),
            point.kz,
            u.wavenumber_unit(),
            st.cutoffs,
            st.tolerance
        )],
    );
    meta.columns = csv_columns(cu.energy)
        .into_iter()
        .zip(STUDY_COLUMNS)
        .map(|(name, (_, energy, meaning))| {
            let unit = if energy {
                cu.energy_unit
            } else if matches!(name.as_str(), "bound_from" | "state" | "converged") {
                ""
            } else {
                "1"
            };
            Column::new(name, unit, meaning)
        })
        .collect();
    Ok(CsvFile {
        meta,
        text: study_csv(st, cu.energy)?,
    })
}

/// `converge-auto.csv`: the selected levels at the automatic cutoff.
pub(super) fn auto_csv(lm: &common::LoadedModel, res: &AutoResult) -> CliResult<CsvFile> {
    let cu = column_units(lm);
    let e = cu.energy_unit;
    let s = &res.spectrum;
    let meta = csv_meta(
        lm,
        "converge",
        vec![format!("energies relative to {} {e}", s.reference_energy)],
        vec![format!(
            "--mode auto: field {} {}, kz {} {}, final cutoff {}, first converged cutoff {}",
            s.point.field,
            lm.shown.field.label(),
            s.point.kz,
            s.units.wavenumber_unit(),
            res.cutoff,
            res.first_converged_cutoff,
        )],
    );
    let columns = vec![
        Column::new("sector", "", "sector `class:J` of the conserved J = n + s"),
        Column::new("orbital", "1", "dominant orbital"),
        Column::new("component_index", "1", "dominant component index"),
        Column::new(
            cu.energy_column(),
            e,
            "level energy relative to the reference energy",
        ),
        Column::new(
            cu.energy_valued("residual_bound"),
            e,
            "residual (Weinstein) bound",
        ),
        Column::new(
            cu.energy_valued("kato_temple_bound"),
            e,
            "Kato-Temple bound (empty where not certified)",
        ),
        Column::new(
            "bound_from",
            "",
            "which bound decided: residual or kato_temple",
        ),
        Column::new("state", "", "converged, not_converged or cutoff_artefact"),
    ];
    let mut rec = Vec::new();
    for &i in &res.selected {
        let l = &s.levels[i];
        rec.push(vec![
            format!("{}:{}", l.sector.class, l.sector.label),
            l.orbital.to_string(),
            l.component.to_string(),
            format!("{:e}", l.energy),
            format!("{:e}", l.bound),
            l.kato_temple.map_or_else(String::new, |k| format!("{k:e}")),
            l.deciding_bound().1.name().into(),
            l.convergence.word().replace(' ', "_"),
        ]);
    }
    csv_file(meta, columns, &rec)
}
