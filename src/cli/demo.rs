//! `ladderfan demo` (also what a bare `ladderfan` runs): an invented scenario, a hypothetical
//! gapped Dirac film, solved at one field and over a field sweep; prints a table and writes a
//! fan diagram SVG, CSV files and the model file into `--out`.

use super::common::{self, CliResult, LoadedModel};
use super::sweep::{self, Plan, SweepArgs, Swept};
use clap::Args;
use ladderfan::records::DemoJson;
use ladderfan::{modelfile, FieldPoint};
use std::path::PathBuf;

/// The demo's model file. Every number is INVENTED for the demonstration; it describes no
/// real material.
pub const DEMO_MODEL: &str = r#"# ladderfan demo model: a hypothetical gapped Dirac film.
# INVENTED parameters (no real material): velocity 4.6e5 m/s, mass term 9 meV (gap 18 meV).
description = "hypothetical gapped Dirac film (invented parameters)"
builtin = "dirac2d"

[set]
velocity_m_per_s = 4.6e5   # invented
mass_mev = 9.0             # invented: half of the gap, meV
valley = 1
charge = -1

[defaults]
field = 6.0    # T
cutoff = 200
"#;

/// Flags of `ladderfan demo`.
#[derive(Debug, Clone, Args)]
pub struct DemoArgs {
    /// Directory for the demo's files.
    #[arg(long, value_name = "DIR", default_value = "ladderfan-demo")]
    pub out: PathBuf,
    /// Print a JSON result on stdout instead of the text.
    #[arg(long)]
    pub json: bool,
    /// Comma-separated figure formats: svg, png, pdf (PNG at twice the SVG's size; text in
    /// the shipped DejaVu Sans font).
    #[arg(long, value_name = "LIST", default_value = "svg")]
    pub format: String,
}

impl Default for DemoArgs {
    fn default() -> Self {
        DemoArgs {
            out: PathBuf::from("ladderfan-demo"),
            json: false,
            format: "svg".into(),
        }
    }
}

/// The text result of the demo: the levels table, the fan's size, both closed-form checks
/// (at the demo field and over the fan) and the files written.
fn demo_text(
    levels_table: &str,
    fan: &sweep::SweepJson,
    check: Option<&ladderfan::verify::ClosedFormCheck>,
    written: &[String],
) -> String {
    let mut text = String::from(
        "ladderfan demo: a hypothetical gapped Dirac film with INVENTED parameters\n\
         (velocity 4.6e5 m/s, mass term 9 meV); see model.toml in the output directory.\n\n",
    );
    text.push_str(levels_table);
    text.push_str(&format!(
        "\nfan: {} fields from 0.25 to 10 T, {} levels tracked in [-80, 80] meV\n",
        fan.values.len(),
        fan.tracks.len()
    ));
    // closed form: E_n = ±sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2), n = 0 at tau sign(qB) Delta
    // (ladderfan::closed_form::dirac2d; McClure 1956 for Delta = 0)
    for (what, c) in [
        ("at 6 T", check),
        ("over the fan", fan.closed_form.as_ref()),
    ] {
        match c {
            Some(c) => text.push_str(&format!(
                "closed-form check {what}: {} ({} computed and {} closed-form levels, max deviation {:.2e} meV)\n",
                if c.passed { "passed" } else { "FAILED" },
                c.computed_compared,
                c.expected_compared,
                c.max_deviation
            )),
            None => text.push_str(&format!("closed-form check {what}: not available\n")),
        }
    }
    for w in written {
        text.push_str(&format!("wrote {w}\n"));
    }
    text
}

/// Run the demo.
pub fn run(a: &DemoArgs) -> CliResult {
    let f = modelfile::parse("demo-model.toml", DEMO_MODEL)?;
    let lm = LoadedModel {
        shown: ladderfan::units::OutputUnits::native(f.model.units()),
        model: f.model,
        defaults: f.defaults,
        origin: "invented demo: hypothetical gapped Dirac film".into(),
        file: None,
    };
    let field = lm.defaults.field.unwrap_or(6.0);
    let cutoff = lm.defaults.cutoff.unwrap_or(modelfile::DEFAULT_CUTOFF);
    let r = common::Resolved {
        field,
        kz: 0.0,
        cutoff,
        memory_limit_mib: modelfile::DEFAULT_MEMORY_LIMIT_MIB,
    };
    let s = super::levels::solve(&common::set_up(&lm, None, r.point(), &r.settings())?)?;
    let idx = common::nearest_levels(&s, 11, common::Shown::Converged);
    let sweep_args = SweepArgs {
        points: Some(80),
        grid: common::Grid::Linear,
        emin: Some(-80.0),
        emax: Some(80.0),
        count: 16,
        threads: None,
        shard: None,
        character: false,
    };
    let values = common::grid_values("--b-min", 0.25, 10.0, 80, sweep_args.grid)?;
    let plan = Plan {
        command: "fan",
        swept: Swept::Field,
        points: values
            .iter()
            .map(|&field| FieldPoint { field, kz: 0.0 })
            .collect(),
        reference_point: values.len() - 1,
        values,
        cutoff,
        memory_limit_mib: modelfile::DEFAULT_MEMORY_LIMIT_MIB,
    };
    let o = sweep::execute(&lm, &plan, &sweep_args)?;
    let win = (-80.0, 80.0);
    let closed_form_check = ladderfan::verify::closed_form_check(&lm.model, &[&s], win);
    let mut files = common::OutputFiles::default();
    files.add("model.toml", DEMO_MODEL);
    let rec = super::levels::to_json(&lm, &s, &idx);
    files.add_csv("levels.csv", super::levels::to_csv(&lm, &s, &rec)?)?;
    files.add_csv("fan.csv", sweep::csv(&lm, &o.json)?)?;
    let fig = sweep::figure(
        &lm,
        &o.json,
        sweep::outlines_of(&o.json),
        o.closed.as_deref(),
        false,
    );
    let formats = ladderfan::plot::Format::parse_list(&a.format)
        .map_err(|e| common::bad_flag("--format", e.to_string()))?;
    super::plot::add_figure(&mut files, "fan", &fig, &formats)?;
    let levels_fig = super::levels::level_figure(&lm, &s, &idx, &rec);
    super::plot::add_figure(&mut files, "levels", &levels_fig, &formats)?;
    let written: Vec<String> = files
        .write_all(&a.out)?
        .iter()
        .map(|p| p.display().to_string())
        .collect();
    if a.json {
        let fan_check = o.json.closed_form.clone();
        common::emit_json(&DemoJson {
            command: "demo",
            levels: rec,
            fan: o.json,
            closed_form_check: closed_form_check.clone(),
            files: written,
        })?;
        sweep::verdict(closed_form_check.as_ref())?;
        return sweep::verdict(fan_check.as_ref());
    }
    let text = demo_text(
        &super::levels::to_table(&lm, &s, &rec, false),
        &o.json,
        closed_form_check.as_ref(),
        &written,
    );
    common::emit(&text)?;
    sweep::verdict(closed_form_check.as_ref())?;
    sweep::verdict(o.json.closed_form.as_ref())
}
