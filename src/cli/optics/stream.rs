//! The streamed transition fan (`optics --b-max` without `--json`): each field's transitions
//! are written as the field is handed on, in field order, and dropped; what the figure and the
//! summary need is kept in a [`FanOutline`] and a few counts, so the memory of a run does not
//! grow with its number of fields.

use super::*;
use crate::cli::common::{CliError, SpilledRows};
use ladderfan::observables::optics::transition_stream;

/// What is solved: the fields and the settings of the solves, the Fermi level and the
/// transitions.
pub(super) struct Job<'a> {
    /// The fields (with their kz), in sweep order.
    pub points: &'a [FieldPoint],
    /// Solver settings (eigenvectors are switched on by the transition sweep).
    pub settings: &'a Settings,
    /// Carrier density, temperature, width.
    pub fermi: &'a FermiSettings,
    /// Energy window and strength threshold of the transitions.
    pub optics: &'a OpticsSettings,
}

/// Name of the table.
const TABLE: &str = "transitions.csv";

/// Run the sweep `job` streamed; `head` is the run's record in the output units without its
/// points. The files equal those of the whole-record run ([`super::output`]): the table byte
/// for byte (each row's relative strength is written as the absolute strength and divided by
/// the run's strongest when the rows are copied into the table), the figure too.
pub(super) fn run(a: &OpticsArgs, lm: &LoadedModel, head: OpticsRecord, job: &Job) -> CliResult {
    let u = lm.model.units();
    let (ef, ff) = (lm.shown.energy_factor(), lm.shown.field_factor());
    let xs: Vec<f64> = job.points.iter().map(|p| p.field * ff).collect();
    let mut spill = match &a.output.out {
        Some(dir) => Some(SpilledRows::create(dir, TABLE)?),
        None => None,
    };
    let mut outline = FanOutline::new(&xs);
    // the unit of the relative strengths: the run's strongest transition (as
    // `OpticsPointRecord::fan` finds it for the whole record)
    let mut strongest = 0.0f64;
    let mut transitions = 0usize;
    let mut density = f64::NAN;
    let mut failed: Option<CliError> = None;
    let bar = Progress::new("optics", job.points.len(), "fields");
    let result = transition_stream(
        &lm.model,
        job.points,
        job.settings,
        job.fermi,
        job.optics,
        &|| bar.tick(),
        &mut |i, p| {
            strongest = strongest.max(ladderfan::records::strongest(p.transitions.iter()));
            // strengths relative to 1: the absolute strength, divided at the end
            let mut rec = OpticsPointRecord::new(&p, u, 1.0);
            rec.scale(ef, ff);
            transitions += rec.transitions.len();
            if i == 0 {
                density = rec.fermi.density_cm2;
            }
            outline.add(i, &rec);
            if let Some(spill) = spill.as_mut() {
                for row in point_rows(&rec) {
                    if let Err(e) = spill.push(i, &common::csv_line(&row)) {
                        failed = Some(e);
                        // stops the stream; the output error above is the one reported
                        return Err(ladderfan::Error::Unsupported("an output error".into()));
                    }
                }
            }
            Ok(())
        },
    );
    bar.finish();
    if let Some(e) = failed {
        return Err(e);
    }
    result?;
    let strongest = strongest.max(f64::MIN_POSITIVE);
    let first = xs.first().copied().unwrap_or(f64::NAN);
    let last = xs.last().copied().unwrap_or(f64::NAN);
    let mut text = super::summary_head(lm, &head);
    text.push_str(&super::fan_line(
        lm,
        &head,
        first,
        last,
        xs.len(),
        transitions,
    ));
    if let (Some(dir), Some(spill)) = (&a.output.out, spill) {
        let columns = transition_columns(lm, head.velocity_unit);
        let names: Vec<&str> = columns.iter().map(|c| c.name.as_str()).collect();
        let header = common::csv_line(&names);
        let mut meta = table::table_meta(lm, &head);
        meta.columns = columns;
        let order: Vec<usize> = (0..xs.len()).collect();
        let table = spill.finish_rewriting(&header, &order, &|row| relative(row, strongest))?;
        let mut files = OutputFiles::default();
        files.add_staged_csv(TABLE, table, &meta)?;
        let fig = fan_plot(lm, &head, density, outline, strongest);
        let formats = super::super::plot::formats(&a.output)?;
        super::super::plot::add_figure(&mut files, "transitions", &fig, &formats)?;
        for p in files.write_all(dir)? {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
    }
    emit(&text)
}

/// The row `row` with its absolute strength (column [`table::RELATIVE_COLUMN`], written by
/// `{:e}`, which reads back exactly) divided by `strongest`: the cell the whole-record run
/// writes. Cells never hold a comma ([`common::csv_line`] writes it as `;`).
fn relative(row: &str, strongest: f64) -> String {
    row.split(',')
        .enumerate()
        .map(|(k, cell)| match (k, cell.parse::<f64>()) {
            (table::RELATIVE_COLUMN, Ok(v)) => format!("{:e}", v / strongest),
            _ => cell.to_string(),
        })
        .collect::<Vec<_>>()
        .join(",")
}
