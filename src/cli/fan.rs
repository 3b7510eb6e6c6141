//! `ladderfan fan`: levels over a sweep of the magnetic field (a Landau fan diagram).

use super::common::{self, bad_flag, load_model, CliResult, ModelArgs, OutputArgs, TruncArgs};
use super::sweep::{self, Plan, SweepArgs, Swept};
use clap::Args;
use ladderfan::FieldPoint;

/// Flags of `ladderfan fan`.
#[derive(Debug, Clone, Args)]
pub struct FanArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Lowest field of the sweep (default: a twentieth of --b-max).
    /// A suffix picks the unit (`0.5T`, `1e-10Bc`); a plain number is in the model's unit.
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub b_min: Option<ladderfan::units::FieldValue>,
    /// Highest field of the sweep (default: the file's field, else 10 T or 0.2 B_c).
    /// A suffix picks the unit (`10T`, `2e-9Bc`).
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub b_max: Option<ladderfan::units::FieldValue>,
    /// Wave number along the field, in 1/length of the model's units.
    #[arg(long, allow_negative_numbers = true)]
    pub kz: Option<f64>,
    #[command(flatten)]
    pub trunc: TruncArgs,
    #[command(flatten)]
    pub sweep: SweepArgs,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The sweep plan of a fan.
pub fn plan(lm: &common::LoadedModel, a: &FanArgs) -> CliResult<Plan> {
    let default_max = lm.defaults.field.unwrap_or(match lm.model.units() {
        ladderfan::units::Units::Lab => 10.0,
        ladderfan::units::Units::Natural => 0.2,
    });
    let b_max = common::finite_flag(
        "--b-max",
        common::field_in(lm, a.b_max).unwrap_or(default_max),
    )?;
    let b_min = common::finite_flag(
        "--b-min",
        common::field_in(lm, a.b_min).unwrap_or(b_max / 20.0),
    )?;
    let kz = common::finite_flag("--kz", a.kz.or(lm.defaults.kz).unwrap_or(0.0))?;
    let values = common::grid_values(
        "--b-min",
        b_min,
        b_max,
        a.sweep.points.unwrap_or(60),
        a.sweep.grid,
    )?;
    if let Some(i) = values.iter().position(|&b| b == 0.0) {
        return Err(bad_flag(
            "--b-min",
            format!(
                "point {} of the sweep is B = 0, where there are no Landau levels; choose --b-min and --b-max of one sign",
                i + 1
            ),
        ));
    }
    let reference_point = values
        .iter()
        .enumerate()
        .max_by(|x, y| x.1.abs().total_cmp(&y.1.abs()))
        .map(|(i, _)| i)
        .unwrap_or(0);
    let (cutoff, memory_limit_mib) = common::resolve_trunc(lm, &a.trunc)?;
    Ok(Plan {
        command: "fan",
        swept: Swept::Field,
        points: values
            .iter()
            .map(|&field| FieldPoint { field, kz })
            .collect(),
        values,
        reference_point,
        cutoff,
        memory_limit_mib,
    })
}

/// Run `ladderfan fan`.
pub fn run(a: &FanArgs) -> CliResult {
    sweep::check_shard_output(&a.sweep, &a.output)?;
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let p = plan(&lm, a)?;
    sweep::run(&lm, &p, &a.sweep, &a.output, "fan")
}
