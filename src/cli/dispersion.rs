//! `ladderfan dispersion`: levels over a sweep of kz at fixed field.

use super::common::{self, load_model, CliResult, ModelArgs, OutputArgs, TruncArgs};
use super::sweep::{self, Plan, SweepArgs, Swept};
use clap::Args;
use ladderfan::FieldPoint;

/// Flags of `ladderfan dispersion`.
#[derive(Debug, Clone, Args)]
pub struct DispersionArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Magnetic field along z, signed, in the model's field unit; a suffix picks the unit
    /// (`1T`, `2.2e-10Bc`).
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub field: Option<ladderfan::units::FieldValue>,
    /// Lowest kz (default: -3 / l_B).
    #[arg(long, allow_negative_numbers = true)]
    pub kz_min: Option<f64>,
    /// Highest kz (default: +3 / l_B).
    #[arg(long, allow_negative_numbers = true)]
    pub kz_max: Option<f64>,
    #[command(flatten)]
    pub trunc: TruncArgs,
    #[command(flatten)]
    pub sweep: SweepArgs,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The sweep plan of a dispersion.
pub fn plan(lm: &common::LoadedModel, a: &DispersionArgs) -> CliResult<Plan> {
    let field = common::finite_flag(
        "--field",
        common::field_in(lm, a.field)
            .or(lm.defaults.field)
            .unwrap_or(common::default_field(&lm.model)),
    )?;
    if field == 0.0 {
        return Err(common::bad_flag(
            "--field",
            "the field is 0; Landau levels need a non-zero magnetic field (pass e.g. --field 1)",
        ));
    }
    let lb = lm.model.units().magnetic_length(field, lm.model.charge());
    let kz_max = common::finite_flag("--kz-max", a.kz_max.unwrap_or(3.0 / lb))?;
    let kz_min = common::finite_flag("--kz-min", a.kz_min.unwrap_or(-kz_max))?;
    let values = common::grid_values(
        "--kz-min",
        kz_min,
        kz_max,
        a.sweep.points.unwrap_or(61),
        a.sweep.grid,
    )?;
    let reference_point = values
        .iter()
        .enumerate()
        .min_by(|x, y| x.1.abs().total_cmp(&y.1.abs()))
        .map(|(i, _)| i)
        .unwrap_or(0);
    let (cutoff, memory_limit_mib) = common::resolve_trunc(lm, &a.trunc)?;
    Ok(Plan {
        command: "dispersion",
        swept: Swept::Kz,
        points: values.iter().map(|&kz| FieldPoint { field, kz }).collect(),
        values,
        reference_point,
        cutoff,
        memory_limit_mib,
    })
}

/// Run `ladderfan dispersion`.
pub fn run(a: &DispersionArgs) -> CliResult {
    sweep::check_shard_output(&a.sweep, &a.output)?;
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let p = plan(&lm, a)?;
    sweep::run(&lm, &p, &a.sweep, &a.output, "dispersion")
}
