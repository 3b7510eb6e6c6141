//! Rendering helpers shared by the commands: CSV files with their metadata sidecars, aligned text tables,
//! number formats, level characters and branch names, and which levels a table shows.

use super::common::{CliError, CliResult, LoadedModel};
use ladderfan::records::meta::{Column, ColumnUnits, CsvMeta, ModelMeta};
use ladderfan::records::ModelRecord;
use ladderfan::{Error, Model, Spectrum};

/// The unit parts of column names for this model's output: the one place the CLI asks for
/// them (`energy_meV`, `field_T`, `kz_invnm`, ...).
pub fn column_units(lm: &LoadedModel) -> ColumnUnits {
    ColumnUnits::shown(lm.shown)
}

/// A CSV file and its metadata sidecar, ready for [`super::output::OutputFiles::add_csv`].
#[derive(Debug, Clone)]
pub struct CsvFile {
    /// The sidecar (`NAME.meta.json`).
    pub meta: CsvMeta,
    /// The CSV text: column line, then the rows.
    pub text: String,
}

/// The sidecar of a file about model `lm`, written by `command`: tool, version, command line,
/// model, units, conventions and notes (the columns are added by [`csv_file`]).
pub fn csv_meta(
    lm: &LoadedModel,
    command: &str,
    conventions: Vec<String>,
    notes: Vec<String>,
) -> CsvMeta {
    let mut m = CsvMeta::new(command, std::env::args().collect());
    m.model = Some(ModelMeta {
        model: ModelRecord::new(&lm.model, &lm.origin),
        component_names: lm.model.component_names().to_vec(),
    });
    let u = lm.model.units();
    m.units = format!(
        "energy {}, length {}, field {}, kz {}",
        lm.shown.energy.label(),
        u.length_unit(),
        lm.shown.field.label(),
        u.wavenumber_unit()
    );
    m.conventions = conventions;
    m.notes = notes;
    m
}

/// A cell as written: the characters a plain CSV reader would misread are replaced (`,` by
/// `;`, `"` by `'`, `#` by `*` since numpy treats `#` as a comment, line breaks by spaces),
/// so no cell is ever quoted.
pub fn csv_cell(text: &str) -> String {
    text.chars()
        .map(|c| match c {
            ',' => ';',
            '"' => '\'',
            '#' => '*',
            '\n' | '\r' => ' ',
            c => c,
        })
        .collect()
}

/// One CSV line: the cells through [`csv_cell`], joined by commas, with its newline (the
/// lines of [`csv_file_from_iter`], for a table written row by row).
pub fn csv_line<S: AsRef<str>>(cells: &[S]) -> String {
    let mut text = String::new();
    for (k, c) in cells.iter().enumerate() {
        if k > 0 {
            text.push(',');
        }
        text.push_str(&csv_cell(c.as_ref()));
    }
    text.push('\n');
    text
}

/// The CSV file of `rows` under `columns` with sidecar `meta` (its columns set to `columns`).
/// Cells pass through [`csv_cell`]; every row must have one cell per column.
pub fn csv_file(
    mut meta: CsvMeta,
    columns: Vec<Column>,
    rows: &[Vec<String>],
) -> CliResult<CsvFile> {
    let mut text = columns
        .iter()
        .map(|c| csv_cell(&c.name))
        .collect::<Vec<_>>()
        .join(",");
    text.push('\n');
    for (i, r) in rows.iter().enumerate() {
        if r.len() != columns.len() {
            return Err(CliError::Input(Error::Unsupported(format!(
                "internal: row {} of the {} table has {} cells for {} columns; please report",
                i + 1,
                meta.command,
                r.len(),
                columns.len()
            ))));
        }
        text.push_str(&r.iter().map(|c| csv_cell(c)).collect::<Vec<_>>().join(","));
        text.push('\n');
    }
    meta.columns = columns;
    Ok(CsvFile { meta, text })
}

/// [`csv_file`] from rows made one at a time (each row is turned into text and dropped, so a
/// long table holds its text only, not its cells).
pub fn csv_file_from_iter(
    mut meta: CsvMeta,
    columns: Vec<Column>,
    rows: impl Iterator<Item = Vec<String>>,
) -> CliResult<CsvFile> {
    let mut text = columns
        .iter()
        .map(|c| csv_cell(&c.name))
        .collect::<Vec<_>>()
        .join(",");
    text.push('\n');
    for (i, r) in rows.enumerate() {
        if r.len() != columns.len() {
            return Err(CliError::Input(Error::Unsupported(format!(
                "internal: row {} of the {} table has {} cells for {} columns; please report",
                i + 1,
                meta.command,
                r.len(),
                columns.len()
            ))));
        }
        for (k, c) in r.iter().enumerate() {
            if k > 0 {
                text.push(',');
            }
            text.push_str(&csv_cell(c));
        }
        text.push('\n');
    }
    meta.columns = columns;
    Ok(CsvFile { meta, text })
}

/// The `weight_<component>` columns of a model: the component name in lower case with every
/// character outside `a-z0-9` as `_` (so `A` gives `weight_a`); the index when the name is
/// empty or two names would coincide.
pub fn weight_columns(model: &Model) -> Vec<Column> {
    let names: Vec<String> = model
        .component_names()
        .iter()
        .map(|n| {
            n.to_lowercase()
                .chars()
                .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
                .collect::<String>()
        })
        .collect();
    (0..model.dim())
        .map(|a| {
            let given = model.component_names().get(a).cloned().unwrap_or_default();
            let clean = names.get(a).cloned().unwrap_or_default();
            let unique = clean.chars().any(|c| c != '_')
                && names.iter().filter(|n| **n == clean).count() == 1;
            let name = if unique {
                format!("weight_{clean}")
            } else {
                format!("weight_{a}")
            };
            Column::new(
                name,
                "1",
                format!("weight of component {a} ({given}) in the state, summed over orbitals"),
            )
        })
        .collect()
}

/// Format rows as an aligned text table (first row is the header; numeric-looking cells right-aligned).
pub fn table(rows: &[Vec<String>]) -> String {
    let ncol = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut width = vec![0; ncol];
    for r in rows {
        for (i, c) in r.iter().enumerate() {
            width[i] = width[i].max(c.chars().count());
        }
    }
    let mut s = String::new();
    for r in rows {
        let cells: Vec<String> = r
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let numeric = c
                    .chars()
                    .next()
                    .is_some_and(|ch| ch.is_ascii_digit() || ch == '-' || ch == '+');
                // padded by hand: a format width above 65535 panics
                let pad = " ".repeat(width[i] - c.chars().count());
                if numeric {
                    format!("{pad}{c}")
                } else {
                    format!("{c}{pad}")
                }
            })
            .collect();
        s.push_str(cells.join("  ").trim_end());
        s.push('\n');
    }
    s
}

/// A number with `sig` significant digits: fixed notation for moderate magnitudes, else
/// scientific.
pub fn fmt_num(x: f64, sig: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let mag = x.abs().log10().floor() as i32;
    if (-3..6).contains(&mag) {
        let decimals = (sig as i32 - 1 - mag).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.prec$e}", prec = sig.saturating_sub(1))
    }
}

/// Which levels a table shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shown {
    /// Only converged levels.
    Converged,
    /// Genuine levels, converged or not (cutoff artefacts hidden; the `levels` default).
    Genuine,
    /// Converged and unconverged levels (cutoff artefacts included).
    All,
}

/// Indices of the `count` levels closest to the reference energy (all when `count` is 0),
/// among the converged levels unless `shown` is [`Shown::All`], in ascending energy order.
pub fn nearest_levels(s: &Spectrum, count: usize, shown: Shown) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..s.levels.len())
        .filter(|&i| match shown {
            Shown::All => true,
            Shown::Genuine => s.levels[i].is_genuine(),
            Shown::Converged => s.levels[i].is_converged(),
        })
        .collect();
    if count > 0 && count < idx.len() {
        idx.sort_by(|&a, &b| {
            s.levels[a]
                .energy
                .abs()
                .total_cmp(&s.levels[b].energy.abs())
                .then(a.cmp(&b))
        });
        idx.truncate(count);
        idx.sort_unstable();
    }
    idx
}

/// The wave-number unit of a unit system, e.g. `1/nm` or `m c/hbar`.
pub fn inverse_length(u: ladderfan::units::Units) -> String {
    u.wavenumber_unit().to_string()
}

/// Component character as printed: the weights of the components above 1 %, largest first,
/// e.g. `A 0.93 B 0.07`.
pub fn character_text(model: &Model, weights: &[f64]) -> String {
    let names = model.component_names();
    let mut w: Vec<(usize, f64)> = weights.iter().copied().enumerate().collect();
    w.sort_by(|a, b| b.1.total_cmp(&a.1));
    w.iter()
        .filter(|(_, x)| *x >= 0.01)
        .map(|&(a, x)| {
            let name = names.get(a).cloned().unwrap_or_else(|| a.to_string());
            format!("{name} {x:.2}")
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// A Landau branch as printed in tables and CSV: `+` / `-` for the level nearest the gap on
/// each side, `+2` / `-2` for the second, `0` unpaired.
pub fn landau_branch_text(b: ladderfan::levels::Branch) -> String {
    use ladderfan::levels::Branch;
    match b {
        Branch::Upper(1) => "+".into(),
        Branch::Lower(1) => "-".into(),
        Branch::Upper(k) => format!("+{k}"),
        Branch::Lower(k) => format!("-{k}"),
        Branch::Unpaired => "0".into(),
    }
}

/// A Klein-Gordon branch (+1, -1; 0 for a direct Hamiltonian) as printed.
pub fn branch_text(b: i8) -> String {
    if b == 0 {
        "0".into()
    } else {
        format!("{b:+}")
    }
}
