//! `ladderfan export`: the assembled truncated matrix, or one sector of it, as a MatrixMarket
//! file (`%%MatrixMarket matrix coordinate complex hermitian`: lower triangle, 1-based).

use super::common::{
    self, bad_flag, emit, emit_json, load_model, CliError, CliResult, LoadedModel, ModelArgs,
    Resolved, SolveArgs,
};
use clap::Args;
use ladderfan::mtx;
use ladderfan::problem::Problem;
use ladderfan::records::ExportJson;
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::sectors::{Conservation, SectorId, SectorPlan};
use num_complex::Complex64;
use std::path::PathBuf;

/// Flags of `ladderfan export`.
#[derive(Debug, Clone, Args)]
pub struct ExportArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    #[command(flatten)]
    pub solve: SolveArgs,
    /// Export only this sector, `CLASS:LABEL` as printed by `ladderfan levels` (e.g. 0:3).
    #[arg(long, value_name = "CLASS:LABEL")]
    pub sector: Option<String>,
    /// Print a JSON description of the written file on stdout.
    #[arg(long)]
    pub json: bool,
    /// Directory for the .mtx file (default: the current directory).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
}

fn parse_sector(s: &str) -> CliResult<SectorId> {
    let (c, l) = s.split_once(':').ok_or_else(|| {
        bad_flag(
            "--sector",
            format!("'{s}' is not CLASS:LABEL; write e.g. --sector 0:3 (as printed by `ladderfan levels`)"),
        )
    })?;
    let class = c.trim().parse::<usize>().map_err(|_| {
        bad_flag(
            "--sector",
            format!("class '{c}' is not a non-negative integer"),
        )
    })?;
    let label = l
        .trim()
        .parse::<i64>()
        .map_err(|_| bad_flag("--sector", format!("label '{l}' is not an integer")))?;
    Ok(SectorId { class, label })
}

/// Whether `id` is a sector of `plan`, in O(1) (the sector list of a huge cutoff is never
/// built).
fn sector_exists(plan: &SectorPlan, id: SectorId) -> bool {
    let Some(c) = plan.symmetry.classes.get(id.class) else {
        return false;
    };
    let max_s = c.shifts.iter().copied().max().unwrap_or(0);
    match c.conservation {
        Conservation::Exact => {
            id.label >= 0 && (id.label as i128) < plan.cutoff as i128 + max_s as i128
        }
        Conservation::None => id.label == 0,
        Conservation::Modulo(m) => id.label >= 0 && (id.label as u64) < m,
    }
}

/// The first `count` sectors of `plan` in its order, without building the whole list.
fn first_sectors(plan: &SectorPlan, count: usize) -> Vec<SectorId> {
    let mut out = Vec::new();
    for class in 0..plan.symmetry.classes.len() {
        let mut label = 0;
        while out.len() < count && sector_exists(plan, SectorId { class, label }) {
            out.push(SectorId { class, label });
            label += 1;
        }
    }
    out
}

/// The basis states (orbital n, component) of the exported rows and the half-bandwidth of the
/// exported matrix, after the memory check: every state for the whole matrix, the sector's
/// states in banded order for `--sector`.
fn exported_states(
    a: &ExportArgs,
    lm: &LoadedModel,
    problem: &Problem<'_>,
) -> CliResult<(Vec<(usize, usize)>, usize)> {
    match &a.sector {
        None => whole_matrix_states(lm, problem),
        Some(spec) => sector_states(lm, problem, spec),
    }
}

/// Every state of the whole matrix (orbital-major rows n d + alpha) and its half-bandwidth
/// (band + 1) d - 1, after the memory check and the size limit of a text export.
fn whole_matrix_states(
    lm: &LoadedModel,
    problem: &Problem<'_>,
) -> CliResult<(Vec<(usize, usize)>, usize)> {
    let h = problem.hamiltonian();
    let (d, cutoff) = (h.dim, problem.settings().cutoff);
    let size = cutoff.saturating_mul(d);
    common::check_footprint(
        lm,
        problem,
        "export",
        "--cutoff",
        &ladderfan::memory::Footprint::Export {
            entries: mtx::lower_entries_bound(h, cutoff),
            line_bytes: mtx::line_bytes(size as u64, h.is_real()),
        },
        None,
    )?;
    let mib = (size as u64).saturating_mul(size as u64) / (1 << 20);
    // the text file holds at most (2 band + 1) d entries per row; refuse absurd sizes
    let entries = size as u64 * ((2 * h.band + 1) * d) as u64;
    if entries > 50_000_000 {
        return Err(bad_flag(
            "--cutoff",
            format!(
                "the whole matrix ({size} rows, up to {entries} entries, ~{mib} MiB dense) is too large to export; lower the cutoff or pass --sector"
            ),
        ));
    }
    let states = (0..cutoff)
        .flat_map(|n| (0..d).map(move |alpha| (n, alpha)))
        .collect();
    Ok((states, (h.band + 1) * d - 1))
}

/// The states of sector `spec` in banded order and their half-bandwidth, after the memory
/// check; the sectors are the problem's plan (detected once at set-up).
fn sector_states(
    lm: &LoadedModel,
    problem: &Problem<'_>,
    spec: &str,
) -> CliResult<(Vec<(usize, usize)>, usize)> {
    let id = parse_sector(spec)?;
    let (h, plan, shape) = (problem.hamiltonian(), problem.plan(), problem.shape());
    let half_bandwidth = plan
        .half_bandwidth(id, h.band)
        .min(shape.largest_sector as usize);
    common::check_footprint(
        lm,
        problem,
        "export --sector",
        "--cutoff",
        &ladderfan::memory::Footprint::Export {
            entries: shape
                .largest_sector
                .saturating_mul((half_bandwidth + 1) as u64),
            line_bytes: mtx::line_bytes(shape.largest_sector, h.is_real()),
        },
        None,
    )?;
    if !sector_exists(plan, id) {
        let labels: Vec<String> = first_sectors(plan, 8)
            .iter()
            .map(|s| format!("{}:{}", s.class, s.label))
            .collect();
        return Err(bad_flag(
            "--sector",
            format!(
                "sector {spec} does not exist for this model and cutoff (symmetry: {}); sectors are {}, ...",
                plan.symmetry.describe(),
                labels.join(", "),
            ),
        ));
    }
    let mut states = Vec::new();
    plan.states(id, &mut states);
    Ok((states, half_bandwidth))
}

/// The `%` comment lines of the file: tool, model, units, point and the meaning of the rows.
fn comments(
    a: &ExportArgs,
    lm: &LoadedModel,
    r: &Resolved,
    states: &[(usize, usize)],
) -> Vec<String> {
    let u = lm.model.units();
    let mut comments = vec![
        format!(
            "ladderfan {} export: model {} ({})",
            env!("CARGO_PKG_VERSION"),
            lm.model.name(),
            lm.origin
        ),
        format!("units: {}", u.header()),
        format!(
            "field {} {}, kz {} {}, cutoff {}, absolute energies (no reference subtracted)",
            r.field,
            u.field_unit(),
            r.kz,
            common::inverse_length(u),
            r.cutoff
        ),
    ];
    if let ladderfan::model::SpectrumForm::KleinGordon { rest_energy } = lm.model.form() {
        comments.push(format!(
            "squared (Klein-Gordon) form: energies are +-sqrt(M^2 + 2 M lambda), M = {rest_energy}"
        ));
    }
    match &a.sector {
        None => comments.push("row index = n * components + component + 1".into()),
        Some(s) => {
            comments.push(format!("sector {s}; rows are the states (n, component):"));
            for (i, (n, c)) in states.iter().enumerate() {
                comments.push(format!("row {}: n = {n}, component {c}", i + 1));
            }
        }
    }
    comments
}

/// Check that `text` parses back to the matrix of `element` over `rows` rows with `count`
/// stored entries (a failure is a verification failure: a bug in the writer).
fn check_round_trip(
    text: &str,
    rows: usize,
    count: usize,
    element: impl Fn(usize, usize) -> Complex64,
) -> CliResult {
    let (n2, entries) = mtx::read(text).map_err(|m| {
        CliError::Verification(format!("the written matrix does not parse back: {m}"))
    })?;
    let scale = entries.iter().map(|e| e.2.norm()).fold(0.0, f64::max);
    let mismatch = entries.iter().find(|(i, j, z)| {
        let want = element(*i, *j);
        let want = if i == j {
            Complex64::new(want.re, 0.0)
        } else {
            want
        };
        (want - z).norm() > 1e-15 * scale
    });
    if n2 != rows || entries.len() != count || mismatch.is_some() {
        return Err(CliError::Verification(
            "the MatrixMarket text does not reproduce the matrix".into(),
        ));
    }
    Ok(())
}

/// Run `ladderfan export`.
pub fn run(a: &ExportArgs) -> CliResult {
    let lm = load_model(&a.model)?;
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    // the one set-up: absolute energies (no reference subtracted), sectors detected once
    let mut settings = r.settings();
    settings.reference = ladderfan::Reference::Zero;
    let problem = common::set_up(&lm, a.solve.trunc.cutoff, r.point(), &settings)?;
    let h = problem.hamiltonian();
    let (states, half_bandwidth) = exported_states(a, &lm, &problem)?;
    let comments = comments(a, &lm, &r, &states);
    let element = |i: usize, j: usize| {
        let (m, al) = states[i];
        let (n, be) = states[j];
        if m.abs_diff(n) > h.band {
            Complex64::new(0.0, 0.0)
        } else {
            h.element(m, al, n, be)
        }
    };
    let (text, count) = super::progress::Progress::while_running("export", || {
        mtx::write(&comments, states.len(), half_bandwidth, element)
    });
    // check the text parses back to the same matrix before writing it
    check_round_trip(&text, states.len(), count, element)?;
    let stem = match &a.sector {
        None => format!("{}-N{}", lm.model.name(), r.cutoff),
        Some(s) => format!(
            "{}-N{}-sector-{}",
            lm.model.name(),
            r.cutoff,
            s.replace(':', "_")
        ),
    };
    let dir = a.out.clone().unwrap_or_else(|| PathBuf::from("."));
    let mut files = common::OutputFiles::default();
    files.add(&format!("{stem}.mtx"), text);
    let written = files.write_all(&dir)?;
    let file = written
        .first()
        .map(|p| p.display().to_string())
        .unwrap_or_default();
    if a.json {
        emit_json(&ExportJson {
            command: "export",
            model: ModelRecord::new(&lm.model, &lm.origin),
            units: UnitsRecord::new(&lm.model),
            field: r.field,
            kz: r.kz,
            cutoff: r.cutoff,
            sector: a.sector.clone(),
            file,
            rows: states.len(),
            entries: count,
            states,
        })
    } else {
        emit(&format!(
            "wrote {file}: {} x {} Hermitian, {count} lower-triangle entries (checked: parses back to the same matrix)\n",
            states.len(),
            states.len()
        ))
    }
}
