//! The text tables of `converge`: the study (levels against the cutoff) and the automatic
//! search.

use super::*;

fn needed(n: NeededCutoff) -> String {
    match n {
        NeededCutoff::Observed(c) => c.to_string(),
        NeededCutoff::Extrapolated(c) => format!("~{c}"),
        NeededCutoff::Unknown => "?".into(),
    }
}

fn opt_sci(x: Option<f64>) -> String {
    x.map_or_else(|| "-".into(), |v| format!("{v:.2e}"))
}

/// One cell of the study table: the deciding bound at one cutoff, marked K (Kato-Temple) or R
/// (residual), then the state (c converged, n not converged, - no genuine level matched).
fn bound_cell(e: &ladderfan::trust::converge::StudyEntry) -> String {
    let b = match (e.bound, e.kato_temple) {
        (Some(b), Some(k)) if k < b => format!("{k:.2e} K"),
        (Some(b), _) => format!("{b:.2e} R"),
        _ => "-".into(),
    };
    let st = match e.state {
        Some(ladderfan::levels::Convergence::Converged) => "c",
        Some(_) => "n",
        None => "-",
    };
    format!("{b} {st}")
}

/// The study as an aligned table: one row per tracked level, the bound at each cutoff, the
/// actual error at the second-largest cutoff, rates and the needed cutoff.
pub fn study_table(
    st: &Study,
    origin: &str,
    units: ladderfan::units::Units,
    shown: ladderfan::units::OutputUnits,
) -> String {
    let mut out = format!(
        "model: {} ({}), field {} {}, kz {} {}\nconvergence study over cutoffs {:?}, tolerance {:e} (relative); \
         energies in {} relative to the reference energy\n\
         actual error against {}; p: change ~ N^-p, kappa: change ~ exp(-kappa N); ~N: extrapolated\n\
         bound N=...: the deciding bound (K Kato-Temple, certified gap; R residual) and the state (c converged, \
         n genuine but not converged, - no genuine level matched; cutoff artefacts are never tracked)\n\n",
        st.model,
        origin,
        st.point.field,
        shown.field.label(),
        st.point.kz,
        units.wavenumber_unit(),
        st.cutoffs,
        st.tolerance,
        st.energy_unit,
        if st.levels.iter().any(|l| l.exact == ladderfan::trust::converge::ReferenceKind::Exact) {
            "the closed form"
        } else {
            "the largest cutoff"
        }
    );
    let mut header = vec![
        "sector".to_string(),
        "orbital".into(),
        format!("energy [{}]", st.energy_unit),
    ];
    for n in &st.cutoffs {
        header.push(format!("bound N={n}"));
    }
    let penultimate = st.cutoffs.len().saturating_sub(2);
    header.extend([
        format!(
            "error N={}",
            st.cutoffs.get(penultimate).copied().unwrap_or(0)
        ),
        "p".into(),
        "kappa".into(),
        "needed N".into(),
    ]);
    let mut rows = vec![header];
    for l in &st.levels {
        let mut r = vec![
            format!("{}:{}", l.sector.class, l.sector.label),
            l.orbital.to_string(),
            fmt_num(l.reference_value, 12),
        ];
        r.extend(l.entries.iter().map(bound_cell));
        r.push(opt_sci(
            l.entries.get(penultimate).and_then(|e| e.actual_error),
        ));
        r.push(
            l.change_exponent
                .map_or_else(|| "-".into(), |p| format!("{p:.2}")),
        );
        r.push(
            l.change_rate_per_orbital
                .map_or_else(|| "-".into(), |k| format!("{k:.3}")),
        );
        r.push(needed(l.needed_cutoff));
        rows.push(r);
    }
    out.push_str(&common::table(&rows));
    for w in &st.warnings {
        out.push_str(&format!("warning: {}\n", w.message));
    }
    out
}

/// The automatic run as text: summary, steps, selected levels, warnings.
pub fn auto_table(
    res: &AutoResult,
    unit: &str,
    field_unit: &str,
    origin: &str,
    tol: f64,
) -> String {
    let s = &res.spectrum;
    let mut out = format!(
        "model: {} ({}), field {} {}, kz {} {}\ntolerance {tol:e} met at cutoff {} (first met at {}, confirmed), \
         matrix dimension {}, {:.3} s in total\nenergies in {unit} relative to {}\n\n",
        s.model,
        origin,
        s.point.field,
        field_unit,
        s.point.kz,
        s.units.wavenumber_unit(),
        res.cutoff,
        res.first_converged_cutoff,
        res.matrix_dimension,
        res.seconds,
        s.reference_energy
    );
    let mut rows = vec![vec![
        "cutoff".to_string(),
        "matrix dim".into(),
        "selected".into(),
        "unconverged".into(),
        "worst bound/tol".into(),
        "agrees".into(),
        "seconds".into(),
    ]];
    for h in &res.history {
        rows.push(vec![
            h.cutoff.to_string(),
            h.matrix_dimension.to_string(),
            h.selected.to_string(),
            h.unconverged.to_string(),
            format!("{:.2e}", h.worst_bound_over_tolerance),
            if h.agrees_with_previous { "yes" } else { "no" }.into(),
            format!("{:.4}", h.seconds),
        ]);
    }
    out.push_str(&common::table(&rows));
    out.push('\n');
    let mut rows = vec![vec![
        "sector".to_string(),
        "orbital".into(),
        format!("energy [{unit}]"),
        format!("bound [{unit}]"),
        format!("Kato-Temple [{unit}]"),
        "decided by".into(),
        "state".into(),
    ]];
    for &i in &res.selected {
        let l = &s.levels[i];
        rows.push(vec![
            format!("{}:{}", l.sector.class, l.sector.label),
            l.orbital.to_string(),
            fmt_num(l.energy, 12),
            format!("{:.2e}", l.bound),
            opt_sci(l.kato_temple),
            l.deciding_bound().1.name().into(),
            l.convergence.word().into(),
        ]);
    }
    out.push_str(&common::table(&rows));
    for w in &res.warnings {
        out.push_str(&format!("warning: {}\n", w.message));
    }
    out
}
