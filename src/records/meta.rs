//! The metadata sidecar of a CSV file: `NAME.csv` -> `NAME.meta.json`.
//!
//! A CSV file written by ladderfan holds only the column line and the data rows, so that
//! `numpy.genfromtxt(f, delimiter=',', names=True)` and `pandas.read_csv(f)` load it without
//! further arguments. Everything else (tool, version, command line, model, units, conventions,
//! notes, the meaning and unit of every column, and for a shard of a sweep the shard it holds)
//! goes into the JSON file beside it, described by [`CsvMeta`].
//!
//! # Column names
//! snake_case `<quantity>_<unit>`, the unit spelled so that numpy keeps it when it sanitises
//! names: energies `energy_meV` / `energy_mc2` (natural units, m c^2), fields `field_T` /
//! `field_Bc` (B/B_c), wave numbers `kz_invnm` / `kz_mc` (m c/hbar). The unit part comes from
//! one place, [`ColumnUnits`].
//!
//! # Examples
//! ```
//! use ladderfan::records::meta::{sidecar_name, Column, ColumnUnits, CsvMeta};
//! use ladderfan::units::Units;
//! let cu = ColumnUnits::of(Units::Lab);
//! assert_eq!(cu.energy_column(), "energy_meV");
//! let mut meta = CsvMeta::new("levels", vec!["ladderfan".into(), "levels".into()]);
//! meta.columns.push(Column::new(cu.energy_column(), "meV", "level energy"));
//! let back = CsvMeta::from_json(&meta.to_json()?, "levels.meta.json")?;
//! assert_eq!(back.column_names(), vec!["energy_meV"]);
//! assert_eq!(sidecar_name("levels.csv"), "levels.meta.json");
//! # Ok::<(), ladderfan::Error>(())
//! ```

use super::ModelRecord;
use crate::error::{Error, Result};
use crate::shard::ShardHeader;
use crate::units::Units;
use serde::{Deserialize, Serialize};

/// One column of a CSV file: its name, unit (`1` for a plain number, empty for text) and
/// meaning.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Column {
    /// The name in the column line.
    pub name: String,
    /// Unit of the values (`meV`, `T`, `1/nm`, `1/cm^2`, ...), `1` for a pure number, empty
    /// for text or labels.
    pub unit: String,
    /// What the values are.
    pub meaning: String,
}

impl Column {
    /// A column from its three parts.
    pub fn new(
        name: impl Into<String>,
        unit: impl Into<String>,
        meaning: impl Into<String>,
    ) -> Self {
        Column {
            name: name.into(),
            unit: unit.into(),
            meaning: meaning.into(),
        }
    }
}

/// The model block of a sidecar (the [`ModelRecord`] plus the component names).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelMeta {
    /// Model name, origin, components, charge and parameters.
    #[serde(flatten)]
    pub model: ModelRecord,
    /// Names of the spinor components, in basis order.
    pub component_names: Vec<String>,
}

/// The sidecar `NAME.meta.json` of a CSV file `NAME.csv`.
///
/// Keys in order: `tool`, `version`, `command`, `command_line`, `model` (absent for files
/// about no single model), `units` (the unit header, e.g. `energy meV, length nm, field T,
/// kz 1/nm`), `conventions`, `notes`, `columns` (every column of the CSV in order), `shard`
/// (only for a shard of a sweep, see [`crate::shard`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CsvMeta {
    /// Always `ladderfan`.
    pub tool: String,
    /// The version that wrote the file.
    pub version: String,
    /// The command (`levels`, `fan`, `dos`, ...).
    pub command: String,
    /// The command line as given (program name first).
    pub command_line: Vec<String>,
    /// The model the numbers are of.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub model: Option<ModelMeta>,
    /// The unit header of the model's unit system (empty when units vary per row).
    #[serde(default)]
    pub units: String,
    /// Sign and reference conventions of the numbers (energy reference, polarisations, ...).
    #[serde(default)]
    pub conventions: Vec<String>,
    /// Further notes: the point, cutoff, grid, broadening and the like.
    #[serde(default)]
    pub notes: Vec<String>,
    /// Every column of the CSV, in order.
    pub columns: Vec<Column>,
    /// For a shard of a sweep: which shard and how `ladderfan merge` joins it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard: Option<ShardHeader>,
}

impl CsvMeta {
    /// An empty sidecar of `command` run as `command_line`, with tool and version filled in.
    pub fn new(command: &str, command_line: Vec<String>) -> Self {
        CsvMeta {
            tool: "ladderfan".into(),
            version: env!("CARGO_PKG_VERSION").into(),
            command: command.into(),
            command_line,
            model: None,
            units: String::new(),
            conventions: Vec::new(),
            notes: Vec::new(),
            columns: Vec::new(),
            shard: None,
        }
    }

    /// The column names in order.
    pub fn column_names(&self) -> Vec<&str> {
        self.columns.iter().map(|c| c.name.as_str()).collect()
    }

    /// Pretty JSON with a final newline.
    ///
    /// # Errors
    /// [`Error::Unsupported`] if serialisation fails (it cannot for these plain fields).
    pub fn to_json(&self) -> Result<String> {
        let mut s = serde_json::to_string_pretty(self)
            .map_err(|e| Error::Unsupported(format!("cannot serialise the CSV metadata: {e}")))?;
        s.push('\n');
        Ok(s)
    }

    /// Read a sidecar; `name` locates errors.
    ///
    /// # Errors
    /// [`Error::Parse`] naming `name` when the text is not a sidecar written by ladderfan.
    pub fn from_json(text: &str, name: &str) -> Result<CsvMeta> {
        serde_json::from_str(text).map_err(|e| Error::Parse {
            location: name.to_string(),
            message: format!(
                "not a ladderfan CSV metadata file ({e}); use the `.meta.json` file written \
                 beside the CSV, unedited"
            ),
        })
    }
}

/// The sidecar name of a CSV file name: `NAME.csv` -> `NAME.meta.json` (a name without
/// `.csv` gets `.meta.json` appended).
pub fn sidecar_name(csv_name: &str) -> String {
    let stem = csv_name.strip_suffix(".csv").unwrap_or(csv_name);
    format!("{stem}.meta.json")
}

/// The unit parts of column names and the units they stand for, for one unit system: the one
/// place where `energy_meV`, `field_T`, `kz_invnm` (or `energy_mc2`, `field_Bc`, `kz_mc`) are
/// spelled.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ColumnUnits {
    /// Energy suffix (`meV`, `mc2`).
    pub energy: &'static str,
    /// The energy unit as printed (`meV`, `m c^2`).
    pub energy_unit: &'static str,
    /// Field suffix (`T`, `Bc`).
    pub field: &'static str,
    /// The field unit as printed (`T`, `B_c`).
    pub field_unit: &'static str,
    /// Wave-number suffix (`invnm`, `mc`).
    pub kz: &'static str,
    /// The wave-number unit as printed (`1/nm`, `m c/hbar`).
    pub kz_unit: &'static str,
}

impl ColumnUnits {
    /// The column units of a unit system (energies in its own energy unit).
    pub fn of(u: Units) -> Self {
        let (energy, field, kz) = match u {
            Units::Lab => ("meV", "T", "invnm"),
            Units::Natural => ("mc2", "Bc", "mc"),
        };
        ColumnUnits {
            energy,
            energy_unit: u.energy_unit(),
            field,
            field_unit: u.field_unit(),
            kz,
            kz_unit: u.wavenumber_unit(),
        }
    }

    /// The column units of an output shown in `o` (the `--energy-unit` / `--field-unit` of a
    /// command): energy and field suffixes from [`crate::units::EnergyUnit::suffix`] and
    /// [`crate::units::FieldUnit::suffix`], the wave number in the model's own unit.
    pub fn shown(o: crate::units::OutputUnits) -> Self {
        ColumnUnits {
            energy: o.energy.suffix(),
            energy_unit: o.energy.label(),
            field: o.field.suffix(),
            field_unit: o.field.label(),
            ..ColumnUnits::of(o.system)
        }
    }

    /// `energy_<unit>`: the energy of a level or grid point.
    pub fn energy_column(&self) -> String {
        format!("energy_{}", self.energy)
    }

    /// `<quantity>_<energy unit>` for another energy-valued quantity (`bound`, `width`,
    /// `fermi_energy`, ...).
    pub fn energy_valued(&self, quantity: &str) -> String {
        format!("{quantity}_{}", self.energy)
    }

    /// `field_<unit>`.
    pub fn field_column(&self) -> String {
        format!("field_{}", self.field)
    }

    /// `kz_<unit>`.
    pub fn kz_column(&self) -> String {
        format!("kz_{}", self.kz)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn natural_units_spell_their_suffixes_without_symbols() {
        // the suffixes must survive numpy's name sanitising (no space, ^ or /): common practice
        let cu = ColumnUnits::of(Units::Natural);
        assert_eq!(cu.energy_column(), "energy_mc2");
        assert_eq!(cu.field_column(), "field_Bc");
        assert_eq!(cu.kz_column(), "kz_mc");
        assert_eq!(cu.energy_valued("bound"), "bound_mc2");
        assert_eq!(cu.energy_unit, "m c^2");
    }

    #[test]
    fn a_foreign_json_is_refused_with_the_file_name() {
        let e = CsvMeta::from_json("{\"tool\": 3}", "x.meta.json");
        match e {
            Ok(_) => panic!("a foreign JSON was accepted"),
            Err(e) => assert!(e.to_string().contains("x.meta.json")),
        }
    }
}
