//! `ladderfan verify`: check a level formula (or a CSV of expected levels) against the exact
//! spectrum, level by level; exit 0 when it passes, 1 when it fails, 2 for bad input.
//! The expression syntax is documented in the README, section Verifying a level formula.

use super::common::{
    self, bad_flag, emit, emit_json, fmt_num, load_model, CliError, CliResult, LoadedModel,
    ModelArgs, SolveArgs,
};
use clap::Args;
use ladderfan::records::VerifyJson;
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::verify::{
    self, Agreement, EnergyScale, ExpectedList, LevelFormula, Outcome, Verdict, VerifySettings,
    Window,
};
use ladderfan::{Error, Reference, Spectrum};
use std::path::PathBuf;

/// Flags of `ladderfan verify`.
#[derive(Debug, Clone, Args)]
pub struct VerifyArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    #[command(flatten)]
    pub solve: SolveArgs,
    /// The expected energy E(n, s) as an expression (see the README, section Verifying a level formula), e.g.
    /// "s*sqrt(2*n)*hbar*velocity_m_per_s*metre/second/l_B".
    #[arg(
        long,
        value_name = "EXPR",
        conflicts_with = "expected",
        allow_hyphen_values = true
    )]
    pub formula: Option<String>,
    /// A separate expression for the n = 0 level, evaluated once (with s = 0).
    #[arg(
        long,
        value_name = "EXPR",
        requires = "formula",
        allow_hyphen_values = true
    )]
    pub formula_n0: Option<String>,
    /// A conditional case "CONDITION => EXPR", tried in order before --formula (repeatable),
    /// e.g. "n < 2 => if(s > 0, 0, none)".
    #[arg(
        long = "case",
        value_name = "COND => EXPR",
        requires = "formula",
        allow_hyphen_values = true
    )]
    pub cases: Vec<String>,
    /// Multiplicity of each level as an expression (default 1), e.g. "if(n == 0, 1, 2)".
    #[arg(
        long,
        value_name = "EXPR",
        requires = "formula",
        allow_hyphen_values = true
    )]
    pub multiplicity: Option<String>,
    /// Landau indices: a range with both ends included (0..40) and/or a list (0,1,5).
    #[arg(
        long = "n",
        value_name = "RANGE",
        requires = "formula",
        allow_hyphen_values = true
    )]
    pub n_values: Option<String>,
    /// Values of the spin or branch sign s (default 0), e.g. -1,1.
    #[arg(
        long = "s",
        value_name = "LIST",
        requires = "formula",
        allow_hyphen_values = true
    )]
    pub s_values: Option<String>,
    /// CSV of expected levels instead of a formula: header row with `energy_<unit>` (e.g.
    /// `energy_meV`; `energy` also read) and optionally `landau_index` (or `n`), `s`,
    /// `multiplicity`, `label`.
    #[arg(long, value_name = "FILE.csv")]
    pub expected: Option<PathBuf>,
    /// The expected energies are relative to the model's reference energy (m c^2 for the
    /// relativistic models) instead of absolute.
    #[arg(long)]
    pub relative: bool,
    /// Only check levels in this energy window, "LO,HI" (same origin as the expected
    /// energies; inf and -inf open a side).
    #[arg(long, value_name = "LO,HI", allow_hyphen_values = true)]
    pub window: Option<String>,
    /// Relative tolerance: a level agrees when |deviation| <= bound + TOL x energy scale +
    /// rounding of the formula.
    #[arg(long, value_name = "TOL", default_value_t = 1e-8)]
    pub tolerance: f64,
    /// Energy scale the tolerance multiplies (default: the spectrum's typical Landau spacing).
    #[arg(long, value_name = "ENERGY")]
    pub energy_scale: Option<f64>,
    /// List only the levels that fail (and the verdict).
    #[arg(long)]
    pub only_failures: bool,
    /// Print a machine-readable JSON result on stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub units: common::UnitArgs,
}

fn parse_window(text: &str) -> CliResult<Window> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    let num = |t: &str| -> CliResult<f64> {
        t.parse::<f64>().map_err(|_| {
            bad_flag(
                "--window",
                format!("'{t}' is not a number; write e.g. --window -50,50 or --window 0,inf"),
            )
        })
    };
    if parts.len() != 2 {
        return Err(bad_flag(
            "--window",
            format!("'{text}' is not LO,HI; write e.g. --window -50,50"),
        ));
    }
    let (lo, hi) = (num(parts[0])?, num(parts[1])?);
    if lo.is_nan() || hi.is_nan() || lo > hi {
        return Err(bad_flag(
            "--window",
            format!("'{text}' is empty or reversed; write the lower end first"),
        ));
    }
    Ok(Window::closed(lo, hi))
}

fn parse_case(text: &str, i: usize) -> CliResult<(String, String)> {
    match text.split_once("=>") {
        Some((c, e)) if !c.trim().is_empty() && !e.trim().is_empty() => {
            Ok((c.trim().to_string(), e.trim().to_string()))
        }
        _ => Err(bad_flag(
            &format!("--case #{i}"),
            format!("'{text}' is not \"CONDITION => EXPR\"; write e.g. --case \"n == 0 => 0\""),
        )),
    }
}

/// Run `ladderfan verify`.
///
/// # Errors
/// Bad input (exit 2): model, flags, formula syntax, CSV. A failed or inconclusive verification
/// is [`CliError::Verification`] (exit 1) after the report has been printed.
pub fn run(args: &VerifyArgs) -> CliResult {
    let mut lm = load_model(&args.model)?;
    lm.shown = args.units.units(&lm)?;
    // the one set-up of this run (memory checked), solved below once the expected list is read
    let (r, problem) = common::resolve_problem(
        &lm,
        &args.solve,
        common::default_field(&lm.model),
        common::Resolved::settings,
    )?;
    let point = r.point();
    let origin = if args.relative {
        Reference::Model
    } else {
        Reference::Zero
    };
    let (mut list, source) = expected_list(args, &lm, point, origin)?;
    if let Some(w) = &args.window {
        list = list.with_window(parse_window(w)?);
    }
    let spectrum = super::levels::solve(&problem)?;
    let settings = VerifySettings {
        tolerance: common::finite_flag("--tolerance", args.tolerance)?,
        scale: match args.energy_scale {
            Some(e) => EnergyScale::Value(common::finite_flag("--energy-scale", e)?),
            None => EnergyScale::Spectrum,
        },
        ..VerifySettings::default()
    };
    let verdict = verify::check(&spectrum, &list, &settings).map_err(|e| match e {
        Error::BadNumber { name, value, fix } => bad_flag(
            &format!("--{}", name.replace(['_', ' '], "-")),
            format!("{value}: {fix}"),
        ),
        other => CliError::Input(other),
    })?;
    // the outcome is decided in the model's units; only what is shown is converted
    let verdict = verdict.in_units(lm.shown);
    let unit = lm.shown.energy.label();
    let line = verdict.verdict_line(unit);
    if args.json {
        emit_json(&VerifyJson {
            command: "verify",
            model: ModelRecord::new(&lm.model, &lm.origin),
            units: UnitsRecord::new(&lm.model).shown(lm.shown),
            field: point.field * lm.shown.field_factor(),
            kz: point.kz,
            cutoff: r.cutoff,
            expected_source: source,
            expected_levels: list.levels.len(),
            verdict_line: line.clone(),
            verdict: verdict.clone(),
        })?;
    } else {
        emit(&report(
            &lm,
            &spectrum,
            &list,
            &source,
            &verdict,
            args.only_failures,
        ))?;
    }
    match verdict.outcome {
        Outcome::Pass => Ok(()),
        Outcome::Fail => Err(CliError::Verification(
            "the expected levels do not match the spectrum (see the verdict line)".into(),
        )),
        Outcome::Inconclusive => Err(CliError::Verification(
            "not every expected level could be compared (see the verdict line)".into(),
        )),
    }
}

fn fmt_edge(x: f64) -> String {
    if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.into()
    } else {
        fmt_num(x, 8)
    }
}

/// The expected levels and a description of where they came from: `--formula` (with its
/// indices, cases and multiplicity) or `--expected FILE.csv`.
fn expected_list(
    args: &VerifyArgs,
    lm: &LoadedModel,
    point: ladderfan::FieldPoint,
    origin: Reference,
) -> CliResult<(ExpectedList, String)> {
    match (&args.formula, &args.expected) {
        (Some(f), None) => formula_list(args, lm, point, origin, f),
        (None, Some(path)) => {
            let text = std::fs::read_to_string(path).map_err(|source| Error::Io {
                action: "read expected levels".into(),
                path: path.display().to_string(),
                source,
            })?;
            let origin_energy = match origin {
                Reference::Model => lm.model.reference_energy(),
                _ => 0.0,
            };
            let name = path.display().to_string();
            let list = ExpectedList::from_csv(&text, &name, origin_energy)?;
            Ok((list, format!("file {name}")))
        }
        _ => Err(bad_flag(
            "--formula",
            "nothing to verify; pass --formula EXPR --n RANGE [--s LIST] or --expected FILE.csv",
        )),
    }
}

/// The expected levels of `--formula f` over the `--n` and `--s` values, and their description.
fn formula_list(
    args: &VerifyArgs,
    lm: &LoadedModel,
    point: ladderfan::FieldPoint,
    origin: Reference,
    f: &str,
) -> CliResult<(ExpectedList, String)> {
    let n_text = args.n_values.as_deref().ok_or_else(|| {
        bad_flag(
            "--n",
            "a formula needs the Landau indices it covers; pass e.g. --n 0..40",
        )
    })?;
    let ns = common::parse_int_list(n_text, "--n")?;
    let s_text = args.s_values.as_deref().unwrap_or("0");
    let ss: Vec<i8> = common::parse_int_list(s_text, "--s")?
        .into_iter()
        .map(|s| {
            i8::try_from(s).map_err(|_| {
                bad_flag(
                    "--s",
                    format!("s = {s} is out of range; use small integers"),
                )
            })
        })
        .collect::<CliResult<_>>()?;
    let cases = args
        .cases
        .iter()
        .enumerate()
        .map(|(i, c)| parse_case(c, i + 1))
        .collect::<CliResult<Vec<_>>>()?;
    let formula = LevelFormula {
        formula: f.to_string(),
        n0: args.formula_n0.clone(),
        cases,
        multiplicity: args.multiplicity.clone(),
        variables: Vec::new(),
    };
    let list = ExpectedList::from_formula(&lm.model, point, origin, &formula, &ns, &ss)?;
    let mut source = format!("formula \"{f}\" for n = {n_text}, s = {s_text}");
    if let Some(z) = &args.formula_n0 {
        source.push_str(&format!("; n = 0: \"{z}\""));
    }
    for c in &args.cases {
        source.push_str(&format!("; case \"{c}\""));
    }
    if let Some(m) = &args.multiplicity {
        source.push_str(&format!("; multiplicity \"{m}\""));
    }
    Ok((list, source))
}

/// The text report: header, one row per checked level (ascending energy), verdict line.
fn report(
    lm: &LoadedModel,
    spectrum: &Spectrum,
    list: &ExpectedList,
    source: &str,
    v: &Verdict,
    only_failures: bool,
) -> String {
    let unit = lm.shown.energy.label();
    let mut out = report_header(lm, spectrum, list, source, v);
    let mut table = vec![vec![
        "expected level".to_string(),
        format!("expected [{unit}]"),
        format!("numerical [{unit}]"),
        "deviation".into(),
        "allowed".into(),
        "LL".into(),
        "component".into(),
        "verdict".into(),
    ]];
    table.extend(report_rows(&lm.model, v, only_failures));
    out.push_str(&common::table(&table));
    out.push('\n');
    out.push_str(&v.verdict_line(unit));
    out.push('\n');
    out
}

/// The header block of the report: model, point, expected source and the window checked.
fn report_header(
    lm: &LoadedModel,
    spectrum: &Spectrum,
    list: &ExpectedList,
    source: &str,
    v: &Verdict,
) -> String {
    let m = &lm.model;
    let u = m.units();
    let o = lm.shown;
    let (unit, e) = (o.energy.label(), o.energy_factor());
    let mut out = format!(
        "verify: model {} ({}), {} components, charge {} e\n",
        m.name(),
        lm.origin,
        m.dim(),
        m.charge()
    );
    out.push_str(&format!(
        "field {} {}, kz {} 1/{}, cutoff {}; energies in {unit} relative to {} {unit}\n",
        spectrum.point.field * o.field_factor(),
        o.field.label(),
        spectrum.point.kz,
        u.length_unit(),
        spectrum.cutoff,
        spectrum.reference_energy * e
    ));
    out.push_str(&format!(
        "expected: {source} ({} levels, energies {})\n",
        list.levels.len(),
        if list.origin == 0.0 {
            "absolute".to_string()
        } else {
            format!("relative to {} {unit}", list.origin * e)
        }
    ));
    out.push_str(&format!(
        "window checked: {}{}, {}{} {unit}; allowed |deviation| = bound + {:e} x {} {unit} + rounding\n\n",
        if v.window_ends_included.0 { "[" } else { "(" },
        fmt_edge(v.window.0),
        fmt_edge(v.window.1),
        if v.window_ends_included.1 { "]" } else { ")" },
        v.tolerance,
        fmt_num(v.energy_scale, 6)
    ));
    out
}

/// The report's rows in ascending energy: matched pairs (all, or only the disagreeing ones),
/// numerical levels without an expected partner, expected levels without a numerical one.
fn report_rows(m: &ladderfan::Model, v: &Verdict, only_failures: bool) -> Vec<Vec<String>> {
    let comp = |c: usize| {
        m.component_names()
            .get(c)
            .cloned()
            .unwrap_or_else(|| c.to_string())
    };
    // (energy for sorting, row)
    let mut rows: Vec<(f64, Vec<String>)> = Vec::new();
    for p in &v.pairs {
        if only_failures && p.agreement == Agreement::Agrees {
            continue;
        }
        rows.push((
            p.expected.energy,
            vec![
                p.expected.label.clone(),
                fmt_num(p.expected.energy, 10),
                fmt_num(p.numerical.energy, 10),
                format!("{:+.2e}", p.deviation),
                format!("{:.2e}", p.allowed),
                p.numerical.label.to_string(),
                comp(p.numerical.component),
                match p.agreement {
                    Agreement::Agrees => "agrees".into(),
                    Agreement::Disagrees => "DISAGREES".into(),
                },
            ],
        ));
    }
    for l in &v.unmatched_numerical {
        rows.push((
            l.energy,
            vec![
                "(none)".into(),
                "".into(),
                fmt_num(l.energy, 10),
                "".into(),
                format!("{:.2e}", l.bound),
                l.label.to_string(),
                comp(l.component),
                "NO EXPECTED PARTNER".into(),
            ],
        ));
    }
    for (what, list) in [
        ("NO NUMERICAL PARTNER", &v.missing_expected),
        ("unresolved (partner not converged)", &v.unresolved_expected),
    ] {
        for e in list {
            rows.push((
                e.expected.energy,
                vec![
                    e.expected.label.clone(),
                    fmt_num(e.expected.energy, 10),
                    String::new(),
                    String::new(),
                    format!("{:.2e}", e.expected.allowance),
                    String::new(),
                    String::new(),
                    what.into(),
                ],
            ));
        }
    }
    rows.sort_by(|a, b| a.0.total_cmp(&b.0));
    rows.into_iter().map(|r| r.1).collect()
}
