//! Tables of a convergence study: CSV and JSON (its figure is
//! `crate::plot::study`, in the uses layer).

use crate::error::{Error, Result};
use crate::trust::converge::{NeededCutoff, Study};

/// The columns of [`study_csv`], in order: (quantity, whether it is an energy in the study's
/// energy unit, meaning). An energy-valued column is named `<quantity>_<energy suffix>`
/// ([`csv_columns`]); the others by their quantity alone.
pub const STUDY_COLUMNS: [(&str, bool, &str); 16] = [
    ("level", false, "index of the tracked level"),
    ("sector_class", false, "component class of the sector"),
    ("sector_label", false, "J (or J mod m) of the sector"),
    ("orbital", false, "dominant orbital"),
    ("component_index", false, "dominant component index"),
    (
        "branch",
        false,
        "Klein-Gordon branch +1 / -1; 0 for a direct Hamiltonian",
    ),
    ("cutoff", false, "orbitals kept in this solve"),
    (
        "energy",
        true,
        "level energy relative to the reference energy",
    ),
    ("residual_bound", true, "residual (Weinstein) bound"),
    (
        "kato_temple_bound",
        true,
        "Kato-Temple bound (empty where not certified)",
    ),
    (
        "change",
        true,
        "change of the energy from the previous cutoff",
    ),
    (
        "actual_error",
        true,
        "difference from the exact value (empty when none is known)",
    ),
    ("converged", false, "true when converged at this cutoff"),
    (
        "bound_from",
        false,
        "which bound decided: residual or kato_temple",
    ),
    (
        "state",
        false,
        "converged, not_converged or cutoff_artefact",
    ),
    (
        "needed_cutoff",
        false,
        "cutoff needed for convergence; ~ marks an extrapolation",
    ),
];

/// The column names of [`study_csv`] for the energy suffix `energy_suffix` (e.g. `meV`, as
/// the front end spells energy units in column names): `energy_meV`, `bound_meV`, ...
pub fn csv_columns(energy_suffix: &str) -> Vec<String> {
    STUDY_COLUMNS
        .iter()
        .map(|&(q, energy, _)| {
            if energy {
                format!("{q}_{energy_suffix}")
            } else {
                q.to_string()
            }
        })
        .collect()
}

fn opt(x: Option<f64>) -> String {
    x.map_or_else(String::new, |v| format!("{v:.17e}"))
}

fn needed_str(n: NeededCutoff) -> String {
    match n {
        NeededCutoff::Observed(c) => c.to_string(),
        NeededCutoff::Extrapolated(c) => format!("~{c}"),
        NeededCutoff::Unknown => String::new(),
    }
}

/// The study as CSV, one row per tracked level and cutoff (columns [`csv_columns`] of
/// `energy_suffix`; energies and errors in the study's energy unit, relative to the reference
/// energy; empty cells for missing values; a needed cutoff prefixed by `~` is extrapolated).
/// The first line is the column line; there are no comment lines.
///
/// # Errors
/// [`Error::Unsupported`] if the CSV writer fails (it writes to memory).
pub fn study_csv(study: &Study, energy_suffix: &str) -> Result<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let fail = |e: csv::Error| Error::Unsupported(format!("cannot format the CSV table: {e}"));
    w.write_record(csv_columns(energy_suffix)).map_err(fail)?;
    for (t, l) in study.levels.iter().enumerate() {
        for e in &l.entries {
            w.write_record([
                t.to_string(),
                l.sector.class.to_string(),
                l.sector.label.to_string(),
                l.orbital.to_string(),
                l.component.to_string(),
                l.branch.to_string(),
                e.cutoff.to_string(),
                opt(e.energy),
                opt(e.bound),
                opt(e.kato_temple),
                opt(e.change),
                opt(e.actual_error),
                e.converged.to_string(),
                e.bound_from
                    .map_or_else(String::new, |b| b.name().to_string()),
                e.state
                    .map_or_else(String::new, |st| st.word().replace(' ', "_")),
                needed_str(l.needed_cutoff),
            ])
            .map_err(fail)?;
        }
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Error::Unsupported(format!("cannot format the CSV table: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Error::Unsupported(format!("CSV table is not UTF-8: {e}")))
}

/// The study as pretty-printed JSON (the serde form of [`Study`]).
///
/// # Errors
/// [`Error::Unsupported`] if serialisation fails (a non-finite number, for instance).
pub fn study_json(study: &Study) -> Result<String> {
    serde_json::to_string_pretty(study)
        .map_err(|e| Error::Unsupported(format!("cannot format the JSON table: {e}")))
}

/// How many tracked levels the plot shows at most (the lowest in energy).
pub const PLOT_MAX_LEVELS: usize = 8;
