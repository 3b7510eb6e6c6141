//! `ladderfan export`: the assembled truncated matrix, or one sector of it, as a MatrixMarket
//! file (`%%MatrixMarket matrix coordinate complex hermitian`: lower triangle, 1-based).

use super::common::{
    self, bad_flag, emit, emit_json, load_model, CliError, CliResult, ModelArgs, SolveArgs,
};
use clap::Args;
use ladderfan::hamiltonian::LadderHamiltonian;
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::sectors::{SectorId, SectorPlan, Symmetry};
use num_complex::Complex64;
use serde::Serialize;
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

/// Description of the written file.
#[derive(Debug, Serialize)]
pub struct ExportJson {
    /// Always `export`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units.
    pub units: UnitsRecord,
    /// Field.
    pub field: f64,
    /// kz.
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Sector exported, or null for the whole matrix.
    pub sector: Option<String>,
    /// File written.
    pub file: String,
    /// Matrix size.
    pub rows: usize,
    /// Stored entries (lower triangle).
    pub entries: usize,
    /// Basis state (orbital n, component) of every row, in order.
    pub states: Vec<(usize, usize)>,
}

/// The MatrixMarket text of a Hermitian matrix given by its states and element function:
/// lower-triangle entries (i >= j), 1-based, zeros skipped, diagonal imaginary parts written
/// as 0 (the matrix is Hermitian).
pub fn matrix_market(
    comments: &[String],
    n: usize,
    half_bandwidth: usize,
    element: impl Fn(usize, usize) -> Complex64,
) -> (String, usize) {
    // entries beyond the half-bandwidth are zero: O(n b) element calls, not O(n^2)
    let rows = |j: usize| j..n.min(j.saturating_add(half_bandwidth).saturating_add(1));
    let nonzero = |z: Complex64| z.re != 0.0 || z.im != 0.0;
    // a first pass counts the entries, so the size line is written first and the text is built
    // in one buffer reserved at its longest (two indices, two numbers in `{:e}` form of at
    // most 24 characters): reserved pages that are never written cost no resident memory
    let count: usize = (0..n)
        .map(|j| rows(j).filter(|&i| nonzero(element(i, j))).count())
        .sum();
    let digits = n.max(1).ilog10() as usize + 1;
    let mut s = String::from("%%MatrixMarket matrix coordinate complex hermitian\n");
    for c in comments {
        s.push_str(&format!("% {c}\n"));
    }
    s.push_str(&format!("{n} {n} {count}\n"));
    s.reserve(count.saturating_mul(2 * digits + 2 * 24 + 4));
    for j in 0..n {
        for i in rows(j) {
            let z = element(i, j);
            if !nonzero(z) {
                continue;
            }
            let im = if i == j { 0.0 } else { z.im };
            s.push_str(&format!("{} {} {:e} {:e}\n", i + 1, j + 1, z.re, im));
        }
    }
    (s, count)
}

/// Stored entries of the lower triangle of the whole matrix at `cutoff` orbitals, at most, in
/// closed form: per orbital, the distinct (alpha, beta, shift) with a non-zero coupling and
/// shift > 0, or shift = 0 and alpha >= beta (rows are n d + alpha, so these are the entries on
/// or below the diagonal).
fn lower_entries_bound(h: &LadderHamiltonian, cutoff: usize) -> u64 {
    let mut seen: Vec<(usize, usize, i64)> = Vec::new();
    for op in &h.ops {
        let shift = op.shift();
        if shift < 0 {
            continue;
        }
        for alpha in 0..h.dim {
            for beta in 0..h.dim {
                let z = op.matrix[(alpha, beta)];
                if (z.re != 0.0 || z.im != 0.0) && (shift > 0 || alpha >= beta) {
                    seen.push((alpha, beta, shift));
                }
            }
        }
    }
    seen.sort_unstable();
    seen.dedup();
    (cutoff as u64).saturating_mul(seen.len() as u64)
}

/// Longest text line of one entry of a matrix of `rows` rows: two indices and two numbers in
/// `{:e}` form (at most 24 characters; 3 for an exact zero imaginary part of a real matrix).
fn line_bytes(rows: u64, real: bool) -> u64 {
    let digits = u64::from(rows.max(1).ilog10()) + 1;
    2 * digits + 24 + if real { 3 } else { 24 } + 3
}

/// A parsed MatrixMarket file: size and lower-triangle entries (i, j, value), 0-based.
pub type Parsed = (usize, Vec<(usize, usize, Complex64)>);

/// Parse a `coordinate complex hermitian` MatrixMarket text into (size, entries (i, j, z),
/// 0-based) and reject anything else.
///
/// # Errors
/// A message naming the line that does not parse.
pub fn parse_matrix_market(text: &str) -> std::result::Result<Parsed, String> {
    let mut lines = text.lines().enumerate();
    let (_, header) = lines.next().ok_or("empty file")?;
    if header.trim() != "%%MatrixMarket matrix coordinate complex hermitian" {
        return Err(format!("line 1: unexpected header '{header}'"));
    }
    let mut size = None;
    let mut expected = 0;
    let mut out: Vec<(usize, usize, Complex64)> = Vec::new();
    for (no, line) in lines {
        let line = line.trim();
        if line.is_empty() || line.starts_with('%') {
            continue;
        }
        let f: Vec<&str> = line.split_whitespace().collect();
        match size {
            None => {
                let nums: std::result::Result<Vec<usize>, _> =
                    f.iter().map(|x| x.parse::<usize>()).collect();
                match nums.as_deref() {
                    Ok([r, c, k]) if r == c => {
                        size = Some(*r);
                        expected = *k;
                        // one allocation of the announced size (bounded by the text's lines)
                        out.reserve_exact(expected.min(text.len() / 8));
                    }
                    _ => return Err(format!("line {}: bad size line '{line}'", no + 1)),
                }
            }
            Some(n) => {
                let bad = || format!("line {}: bad entry '{line}'", no + 1);
                if f.len() != 4 {
                    return Err(bad());
                }
                let i: usize = f[0].parse().map_err(|_| bad())?;
                let j: usize = f[1].parse().map_err(|_| bad())?;
                let re: f64 = f[2].parse().map_err(|_| bad())?;
                let im: f64 = f[3].parse().map_err(|_| bad())?;
                if i < j || i == 0 || j == 0 || i > n {
                    return Err(format!(
                        "line {}: entry ({i}, {j}) is outside the lower triangle of a {n}x{n} matrix",
                        no + 1
                    ));
                }
                out.push((i - 1, j - 1, Complex64::new(re, im)));
            }
        }
    }
    let n = size.ok_or("no size line")?;
    if out.len() != expected {
        return Err(format!(
            "{} entries but the size line announces {expected}",
            out.len()
        ));
    }
    Ok((n, out))
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
    match c.modulus {
        0 => id.label >= 0 && (id.label as i128) < plan.cutoff as i128 + max_s as i128,
        1 => id.label == 0,
        m => id.label >= 0 && (id.label as u64) < m,
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

/// Run `ladderfan export`.
pub fn run(a: &ExportArgs) -> CliResult {
    let lm = load_model(&a.model)?;
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    let h = LadderHamiltonian::assemble(&lm.model, r.point(), 0.0)?;
    let d = h.dim;
    // half-bandwidth of the exported matrix in rows: orbital-major rows n d + alpha couple only
    // within |m - n| <= band; a sector's rows are in banded order
    let mut half_bandwidth = (h.band + 1) * d - 1;
    let states: Vec<(usize, usize)> = match &a.sector {
        None => {
            let size = r.cutoff.saturating_mul(d);
            common::check_memory(
                &lm,
                "export",
                "--cutoff",
                r.point(),
                r.cutoff,
                r.memory_limit_mib,
                &ladderfan::memory::Footprint::Export {
                    entries: lower_entries_bound(&h, r.cutoff),
                    line_bytes: line_bytes(size as u64, h.is_real()),
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
            (0..r.cutoff)
                .flat_map(|n| (0..d).map(move |alpha| (n, alpha)))
                .collect()
        }
        Some(spec) => {
            let id = parse_sector(spec)?;
            let plan = SectorPlan::new(Symmetry::detect(&h), r.cutoff);
            let shape = ladderfan::memory::SolveShape::new(&plan.symmetry, r.cutoff, 1);
            half_bandwidth = plan
                .half_bandwidth(id, h.band)
                .min(shape.largest_sector as usize);
            common::check_memory(
                &lm,
                "export --sector",
                "--cutoff",
                r.point(),
                r.cutoff,
                r.memory_limit_mib,
                &ladderfan::memory::Footprint::Export {
                    entries: shape
                        .largest_sector
                        .saturating_mul((half_bandwidth + 1) as u64),
                    line_bytes: line_bytes(shape.largest_sector, h.is_real()),
                },
                None,
            )?;
            if !sector_exists(&plan, id) {
                let labels: Vec<String> = first_sectors(&plan, 8)
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
            let mut st = Vec::new();
            plan.states(id, &mut st);
            st
        }
    };
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
    let element = |i: usize, j: usize| {
        let (m, al) = states[i];
        let (n, be) = states[j];
        if m.abs_diff(n) > h.band {
            Complex64::new(0.0, 0.0)
        } else {
            h.element(m, al, n, be)
        }
    };
    let (text, count) = matrix_market(&comments, states.len(), half_bandwidth, element);
    // check the text parses back to the same matrix before writing it
    let (n2, entries) = parse_matrix_market(&text).map_err(|m| {
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
    if n2 != states.len() || entries.len() != count || mismatch.is_some() {
        return Err(CliError::Verification(
            "the MatrixMarket text does not reproduce the matrix".into(),
        ));
    }
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matrix_market_round_trip() {
        let m = [
            [Complex64::new(1.0, 0.0), Complex64::new(0.5, -0.25)],
            [Complex64::new(0.5, 0.25), Complex64::new(-3.0, 0.0)],
        ];
        let (text, count) = matrix_market(&["c".into()], 2, 1, |i, j| m[i][j]);
        assert_eq!(count, 3);
        assert!(
            text.starts_with("%%MatrixMarket matrix coordinate complex hermitian\n% c\n2 2 3\n")
        );
        let (n, e) = parse_matrix_market(&text).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(n, 2);
        for (i, j, z) in e {
            assert!(i >= j);
            assert!((m[i][j] - z).norm() < 1e-15);
        }
        assert!(
            parse_matrix_market("%%MatrixMarket matrix coordinate real general\n1 1 0\n").is_err()
        );
    }
}
