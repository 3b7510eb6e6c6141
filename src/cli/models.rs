//! `ladderfan models`: the built-in models, their parameters with defaults, and sources.

use super::common::{self, emit, emit_json, CliResult};
use clap::Args;
use ladderfan::models::Origin;
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

/// CSV listing: one row per (model, parameter); the units of each model in its own column.
pub fn to_csv(e: &[ModelEntry]) -> CliResult<String> {
    let header = format!(
        "# ladderfan {} models\n# units: per model, see the units column (Units::header of its unit system)\n",
        env!("CARGO_PKG_VERSION")
    );
    let mut rec = vec![vec![
        "model".to_string(),
        "units".into(),
        "parameter".into(),
        "default".into(),
        "unit".into(),
        "meaning".into(),
        "source".into(),
    ]];
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
    common::csv_text(&header, &rec)
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
        files.add("models.csv", to_csv(&e)?);
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
