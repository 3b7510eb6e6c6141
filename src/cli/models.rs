//! `ladderfan models`: the built-in models, their parameters with defaults, and sources.

use super::common::{self, emit, emit_json, CliResult, CsvFile};
use clap::Args;
use ladderfan::models::Origin;
use ladderfan::records::meta::{Column, CsvMeta};
use ladderfan::records::{ModelEntry, ParamJson};

/// Flags of `ladderfan models`.
#[derive(Debug, Clone, Args)]
pub struct ModelsArgs {
    /// Print JSON instead of the text listing.
    #[arg(long)]
    pub json: bool,
    /// Directory for models.csv (one row per model parameter).
    #[arg(long, value_name = "DIR")]
    pub out: Option<std::path::PathBuf>,
}

/// `models.csv`: one row per (model, parameter); the units of each model in its own column.
/// Commas inside texts (units, meanings, sources) are written as `;` (see
/// `csv_cell` in `cli/render.rs`).
pub fn to_csv(e: &[ModelEntry]) -> CliResult<CsvFile> {
    let mut meta = CsvMeta::new("models", std::env::args().collect());
    meta.conventions = vec![
        "units: per model, see the units column (the unit header of its unit system)".into(),
        "commas inside the texts are written as ;".into(),
    ];
    let columns = vec![
        Column::new("model", "", "model name (--builtin NAME)"),
        Column::new(
            "units",
            "",
            "unit system of the model: energy, length, field, kz units",
        ),
        Column::new("parameter", "", "parameter name (--set NAME=VALUE)"),
        Column::new("default", "", "default value, in the parameter's unit"),
        Column::new("unit", "", "unit of the parameter"),
        Column::new("meaning", "", "what the parameter is"),
        Column::new("source", "", "published source of the model"),
    ];
    let mut rec = Vec::new();
    for m in e {
        for p in &m.parameters {
            rec.push(vec![
                m.name.into(),
                m.units_header.clone(),
                p.name.into(),
                p.default.to_string(),
                p.unit.into(),
                p.meaning.into(),
                m.source.into(),
            ]);
        }
    }
    common::csv_file(meta, columns, &rec)
}

/// The listing.
pub fn entries() -> Vec<ModelEntry> {
    Origin::registry()
        .iter()
        .map(|o| {
            let b = o.info();
            ModelEntry {
                name: b.name,
                summary: b.summary,
                units: b.units,
                units_header: b.units.header(),
                source: b.source,
                parameters: b
                    .params
                    .iter()
                    .zip(o.values())
                    .map(|(p, (_, default))| ParamJson {
                        name: p.name,
                        default,
                        unit: p.unit,
                        meaning: p.meaning,
                    })
                    .collect(),
            }
        })
        .collect()
}

/// Run `ladderfan models`.
pub fn run(a: &ModelsArgs) -> CliResult {
    let e = entries();
    let mut written = Vec::new();
    if let Some(dir) = &a.out {
        let mut files = common::OutputFiles::default();
        files.add_csv("models.csv", to_csv(&e)?)?;
        written = files.write_all(dir)?;
    }
    if a.json {
        return emit_json(&e);
    }
    let mut s = String::new();
    for m in &e {
        s.push_str(&format!("{}: {}\n", m.name, m.summary));
        let system = match m.units {
            ladderfan::units::Units::Lab => "lab",
            ladderfan::units::Units::Natural => "natural",
        };
        s.push_str(&format!("  units: {system} ({})\n", m.units_header));
        s.push_str(&format!("  source: {}\n", m.source));
        let mut rows = vec![vec![
            "  parameter".to_string(),
            "default".into(),
            "unit".into(),
            "meaning".into(),
        ]];
        for p in &m.parameters {
            rows.push(vec![
                format!("  {}", p.name),
                p.default.to_string(),
                format!("[{}]", p.unit),
                p.meaning.into(),
            ]);
        }
        s.push_str(&common::table(&rows));
        s.push('\n');
    }
    s.push_str(
        "use one with --builtin NAME [--set KEY=VALUE ...] or builtin = \"NAME\" in a model file\n",
    );
    for p in written {
        s.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&s)
}
