//! `ladderfan export`: the assembled truncated matrix, or one sector of it, as a MatrixMarket
//! file (`%%MatrixMarket matrix coordinate complex hermitian`: lower triangle, 1-based).

use super::common::{
    self, bad_flag, emit, emit_json, load_model, CliError, CliResult, ModelArgs, ModelJson,
    SolveArgs, UnitsJson,
};
use clap::Args;
use ladderfan::hamiltonian::LadderHamiltonian;
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
    pub model: ModelJson,
    /// Units.
    pub units: UnitsJson,
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
    element: impl Fn(usize, usize) -> Complex64,
) -> (String, usize) {
    let mut body = String::new();
    let mut count = 0;
    for j in 0..n {
        for i in j..n {
            let z = element(i, j);
            if z.re == 0.0 && z.im == 0.0 {
                continue;
            }
            let im = if i == j { 0.0 } else { z.im };
            body.push_str(&format!("{} {} {:e} {:e}\n", i + 1, j + 1, z.re, im));
            count += 1;
        }
    }
    let mut s = String::from("%%MatrixMarket matrix coordinate complex hermitian\n");
    for c in comments {
        s.push_str(&format!("% {c}\n"));
    }
    s.push_str(&format!("{n} {n} {count}\n"));
    s.push_str(&body);
    (s, count)
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
    let mut out = Vec::new();
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

/// Run `ladderfan export`.
pub fn run(a: &ExportArgs) -> CliResult {
    let lm = load_model(&a.model)?;
    let r = common::resolve(&lm, &a.solve, common::default_field(&lm.model))?;
    let h = LadderHamiltonian::assemble(&lm.model, r.point(), 0.0)?;
    let d = h.dim;
    let states: Vec<(usize, usize)> = match &a.sector {
        None => {
            let size = r.cutoff * d;
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
            let ids = plan.sectors();
            if !ids.contains(&id) {
                let labels: Vec<String> = ids
                    .iter()
                    .take(8)
                    .map(|s| format!("{}:{}", s.class, s.label))
                    .collect();
                return Err(bad_flag(
                    "--sector",
                    format!(
                        "sector {spec} does not exist for this model and cutoff (symmetry: {}); sectors are {}{}",
                        plan.symmetry.describe(),
                        labels.join(", "),
                        if ids.len() > 8 { ", ..." } else { "" }
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
    let (text, count) = matrix_market(&comments, states.len(), element);
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
            model: ModelJson::new(&lm),
            units: UnitsJson::new(&lm.model),
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
        let (text, count) = matrix_market(&["c".into()], 2, |i, j| m[i][j]);
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
