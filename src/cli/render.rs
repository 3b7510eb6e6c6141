//! Rendering helpers shared by the commands: the `#` header of CSV files, aligned text tables,
//! number formats, level characters and branch names, and which levels a table shows.

use super::common::{CliError, CliResult, LoadedModel};
use ladderfan::{Error, Model, Spectrum};

/// `#` comment lines for CSV headers: tool, model, origin, units and extra lines.
pub fn csv_header(lm: &LoadedModel, what: &str, extra: &[String]) -> String {
    let mut s = format!("# ladderfan {} {what}\n", env!("CARGO_PKG_VERSION"));
    s.push_str(&format!(
        "# model: {} ({}), {} component(s), charge {} e\n",
        lm.model.name(),
        lm.origin,
        lm.model.dim(),
        lm.model.charge()
    ));
    if !lm.model.params().is_empty() {
        let p: Vec<String> = lm
            .model
            .params()
            .iter()
            .map(|(k, v)| format!("{k} = {v}"))
            .collect();
        s.push_str(&format!("# parameters: {}\n", p.join(", ")));
    }
    let u = lm.model.units();
    s.push_str(&format!(
        "# units: energy {}, length {}, field {}, kz {}\n",
        lm.shown.energy.label(),
        u.length_unit(),
        lm.shown.field.label(),
        u.wavenumber_unit()
    ));
    for e in extra {
        s.push_str(&format!("# {e}\n"));
    }
    s
}

/// Format rows as an aligned text table (first row is the header; numeric-looking cells right-aligned).
pub fn table(rows: &[Vec<String>]) -> String {
    let ncol = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut width = vec![0; ncol];
    for r in rows {
        for (i, c) in r.iter().enumerate() {
            width[i] = width[i].max(c.chars().count());
        }
    }
    let mut s = String::new();
    for r in rows {
        let cells: Vec<String> = r
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let numeric = c
                    .chars()
                    .next()
                    .is_some_and(|ch| ch.is_ascii_digit() || ch == '-' || ch == '+');
                // padded by hand: a format width above 65535 panics
                let pad = " ".repeat(width[i] - c.chars().count());
                if numeric {
                    format!("{pad}{c}")
                } else {
                    format!("{c}{pad}")
                }
            })
            .collect();
        s.push_str(cells.join("  ").trim_end());
        s.push('\n');
    }
    s
}

/// CSV text of `records` (header row first) after the `#` header lines.
pub fn csv_text(header: &str, records: &[Vec<String>]) -> CliResult<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    for r in records {
        w.write_record(r)
            .map_err(|e| CliError::Input(Error::Unsupported(format!("csv: {e}"))))?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| CliError::Input(Error::Unsupported(format!("csv: {e}"))))?;
    Ok(format!("{header}{}", String::from_utf8_lossy(&bytes)))
}

/// A number with `sig` significant digits: fixed notation for moderate magnitudes, else
/// scientific.
pub fn fmt_num(x: f64, sig: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let mag = x.abs().log10().floor() as i32;
    if (-3..6).contains(&mag) {
        let decimals = (sig as i32 - 1 - mag).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.prec$e}", prec = sig.saturating_sub(1))
    }
}

/// Which levels a table shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shown {
    /// Only converged levels.
    Converged,
    /// Genuine levels, converged or not (cutoff artefacts hidden; the `levels` default).
    Genuine,
    /// Converged and unconverged levels (cutoff artefacts included).
    All,
}

/// Indices of the `count` levels closest to the reference energy (all when `count` is 0),
/// among the converged levels unless `shown` is [`Shown::All`], in ascending energy order.
pub fn nearest_levels(s: &Spectrum, count: usize, shown: Shown) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..s.levels.len())
        .filter(|&i| match shown {
            Shown::All => true,
            Shown::Genuine => s.levels[i].is_genuine(),
            Shown::Converged => s.levels[i].is_converged(),
        })
        .collect();
    if count > 0 && count < idx.len() {
        idx.sort_by(|&a, &b| {
            s.levels[a]
                .energy
                .abs()
                .total_cmp(&s.levels[b].energy.abs())
                .then(a.cmp(&b))
        });
        idx.truncate(count);
        idx.sort_unstable();
    }
    idx
}

/// The wave-number unit of a unit system, e.g. `1/nm` or `m c/hbar`.
pub fn inverse_length(u: ladderfan::units::Units) -> String {
    u.wavenumber_unit().to_string()
}

/// Component character as printed: the weights of the components above 1 %, largest first,
/// e.g. `A 0.93 B 0.07`.
pub fn character_text(model: &Model, weights: &[f64]) -> String {
    let names = model.component_names();
    let mut w: Vec<(usize, f64)> = weights.iter().copied().enumerate().collect();
    w.sort_by(|a, b| b.1.total_cmp(&a.1));
    w.iter()
        .filter(|(_, x)| *x >= 0.01)
        .map(|&(a, x)| {
            let name = names.get(a).cloned().unwrap_or_else(|| a.to_string());
            format!("{name} {x:.2}")
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// A Landau branch as printed in tables and CSV: `+` / `-` for the level nearest the gap on
/// each side, `+2` / `-2` for the second, `0` unpaired.
pub fn landau_branch_text(b: ladderfan::levels::Branch) -> String {
    use ladderfan::levels::Branch;
    match b {
        Branch::Upper(1) => "+".into(),
        Branch::Lower(1) => "-".into(),
        Branch::Upper(k) => format!("+{k}"),
        Branch::Lower(k) => format!("-{k}"),
        Branch::Unpaired => "0".into(),
    }
}

/// A Klein-Gordon branch (+1, -1; 0 for a direct Hamiltonian) as printed.
pub fn branch_text(b: i8) -> String {
    if b == 0 {
        "0".into()
    } else {
        format!("{b:+}")
    }
}
