//! `ladderfan levels`: the spectrum at one field and kz as a labelled table.

use super::common::{
    self, csv_header, csv_text, emit, emit_json, fmt_num, load_model, nearest_levels, CliResult,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use clap::Args;
use ladderfan::levels::Convergence;
use ladderfan::model::SpectrumForm;
use ladderfan::problem::Problem;
use ladderfan::records::{count_state, level_records, warnings, SpectrumRecord};
use ladderfan::Spectrum;

/// Flags of `ladderfan levels`.
#[derive(Debug, Clone, Args)]
pub struct LevelsArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    #[command(flatten)]
    pub solve: SolveArgs,
    /// Number of levels to show, those closest to the reference energy (0: all).
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 20)]
    pub count: usize,
    /// Also show the cutoff artefacts (hidden by default; genuine levels that are not converged
    /// are always shown, marked `not converged`).
    #[arg(long)]
    pub show_unconverged: bool,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The JSON result for a spectrum and the shown level indices.
pub fn to_json(lm: &LoadedModel, s: &Spectrum, idx: &[usize]) -> SpectrumRecord {
    SpectrumRecord::new(&lm.model, &lm.origin, s, idx)
}

/// Solve the one set-up problem of a command (no second assembly), refusing a spectrum that
/// overflowed ([`common::finite_spectrum`]).
pub fn solve(problem: &Problem<'_>) -> CliResult<Spectrum> {
    common::finite_spectrum(Spectrum::solve(problem)?)
}

/// The aligned text table with a header block.
pub fn to_table(lm: &LoadedModel, s: &Spectrum, idx: &[usize]) -> String {
    let artefacts = count_state(s, Convergence::CutoffArtefact);
    let u = lm.model.units();
    let kg = matches!(lm.model.form(), SpectrumForm::KleinGordon { .. });
    let mut out = format!(
        "model: {} ({}), {} component(s), charge {} e\n",
        lm.model.name(),
        lm.origin,
        lm.model.dim(),
        lm.model.charge()
    );
    out.push_str(&format!(
        "field {} {}, kz {} {}, cutoff {}, magnetic length {} {}\n",
        s.point.field,
        u.field_unit(),
        s.point.kz,
        common::inverse_length(u),
        s.cutoff,
        fmt_num(s.magnetic_length, 6),
        u.length_unit()
    ));
    out.push_str(&format!("symmetry: {}\n", s.symmetry.describe()));
    out.push_str(&format!(
        "energies in {} relative to {} {}; {} of {} levels shown (closest to the reference); in total {} converged, {} genuine but not converged (raise the cutoff), {} cutoff artefacts{}\n\n",
        u.energy_unit(),
        s.reference_energy,
        u.energy_unit(),
        idx.len(),
        s.levels.len(),
        s.converged().count(),
        count_state(s, Convergence::NotConverged),
        artefacts,
        if artefacts > 0 && idx.iter().all(|&i| s.levels[i].is_genuine()) {
            " (artefacts hidden; --show-unconverged lists them)"
        } else {
            ""
        }
    ));
    out.push_str(
        "state: converged / not converged (genuine, bound above the tolerance) / artefact (weight on the top orbitals); bound: the sharper certified one (KT: Kato-Temple, res: residual)\n\n",
    );
    let mut rows = vec![vec!["sector".to_string(), "LL".into(), "character".into()]];
    if kg {
        rows[0].push("branch".into());
    }
    rows[0].extend([
        format!("energy [{}]", u.energy_unit()),
        format!("bound [{}]", u.energy_unit()),
        "from".into(),
        "state".into(),
    ]);
    for l in level_records(&lm.model, s, idx) {
        let mut r = vec![
            l.sector.clone(),
            l.label.clone(),
            common::character_text(&lm.model, &l.weights),
        ];
        if kg {
            r.push(common::branch_text(l.branch));
        }
        r.extend([
            fmt_num(l.energy, 10),
            format!("{:.2e}", l.bound),
            if l.bound_from == "kato_temple" {
                "KT"
            } else {
                "res"
            }
            .into(),
            l.state.word().into(),
        ]);
        rows.push(r);
    }
    out.push_str(&common::table(&rows));
    out
}

/// CSV of the shown levels, with `#` header lines stating the model and the units.
pub fn to_csv(lm: &LoadedModel, s: &Spectrum, idx: &[usize]) -> CliResult<String> {
    let u = lm.model.units();
    let header = csv_header(
        lm,
        "levels",
        &[
            format!(
                "field {} {}, kz {} {}, cutoff {}",
                s.point.field,
                u.field_unit(),
                s.point.kz,
                common::inverse_length(u),
                s.cutoff
            ),
            format!(
                "energies relative to {} {}",
                s.reference_energy,
                u.energy_unit()
            ),
            format!("symmetry: {}", s.symmetry.describe()),
        ],
    );
    let names = lm.model.component_names();
    let mut rec = vec![vec![
        "sector".to_string(),
        "label".into(),
        "n".into(),
        "landau_branch".into(),
        "label_origin".into(),
        "branch".into(),
        "rank".into(),
        "orbital".into(),
        "component".into(),
        format!("energy_{}", u.energy_unit().replace(' ', "")),
        format!("bound_{}", u.energy_unit().replace(' ', "")),
        format!("residual_bound_{}", u.energy_unit().replace(' ', "")),
        format!("kato_temple_bound_{}", u.energy_unit().replace(' ', "")),
        "bound_from".into(),
        "state".into(),
        "converged".into(),
    ]];
    for (a, name) in names.iter().enumerate() {
        let name = if name.is_empty() {
            a.to_string()
        } else {
            name.clone()
        };
        rec[0].push(format!("weight_{name}"));
    }
    for l in level_records(&lm.model, s, idx) {
        let origin = match l.label_origin {
            ladderfan::levels::LabelOrigin::ExactSector => "exact_sector",
            ladderfan::levels::LabelOrigin::Continuation => "continuation",
            ladderfan::levels::LabelOrigin::Unlabelled => "unlabelled",
        };
        let mut row = vec![
            l.sector,
            l.label,
            l.landau_n.map(|n| n.to_string()).unwrap_or_default(),
            common::landau_branch_text(l.landau_branch),
            origin.into(),
            l.branch.to_string(),
            l.rank.to_string(),
            l.orbital.to_string(),
            l.component_name,
            format!("{:e}", l.energy),
            format!("{:e}", l.bound),
            format!("{:e}", l.residual_bound),
            l.kato_temple_bound
                .map_or_else(String::new, |k| format!("{k:e}")),
            l.bound_from.into(),
            l.state.word().replace(' ', "_"),
            l.converged.to_string(),
        ];
        row.extend(l.weights.iter().map(|w| format!("{w:e}")));
        rec.push(row);
    }
    csv_text(&header, &rec)
}

/// Run `ladderfan levels`.
pub fn run(a: &LevelsArgs) -> CliResult {
    let lm = load_model(&a.model)?;
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    // the one set-up of this run: its footprint is checked, then it is solved
    let problem = common::set_up(&lm, a.solve.trunc.cutoff, r.point(), &r.settings())?;
    // the listed levels cost memory too (`--count 0` lists all of them): src/memory.rs
    let files = if a.output.out.is_some() {
        ladderfan::memory::FILES_BYTES_PER_LEVEL
    } else {
        0
    };
    common::check_footprint(
        &lm,
        &problem,
        "levels",
        "--count",
        &ladderfan::memory::Footprint::Table {
            shown: if a.count == 0 {
                u64::MAX
            } else {
                a.count as u64
            },
            bytes_per_shown: ladderfan::memory::TABLE_BYTES_PER_LEVEL + files,
        },
        None,
    )?;
    let s = solve(&problem)?;
    let shown = if a.show_unconverged {
        common::Shown::All
    } else {
        common::Shown::Genuine
    };
    let idx = nearest_levels(&s, a.count, shown);
    for w in warnings(&s) {
        eprintln!("ladderfan: warning: {w}");
    }
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add("levels.csv", to_csv(&lm, &s, &idx)?);
        let fig = ladderfan::plot::level_plot(&ladderfan::plot::LevelDiagram {
            title: format!(
                "{}: levels at {} {}",
                lm.model.name(),
                s.point.field,
                lm.model.units().field_unit()
            ),
            energy_unit: lm.model.units().energy_unit().to_string(),
            levels: idx
                .iter()
                .map(|&i| {
                    let l = &s.levels[i];
                    (l.label.n.max(0) as f64, l.energy)
                })
                .collect(),
        });
        let formats = super::plot::formats(&a.output)?;
        super::plot::add_figure(&mut files, "levels", &fig, &formats)?;
        written = files.write_all(dir)?;
    }
    if a.output.json {
        emit_json(&to_json(&lm, &s, &idx))
    } else {
        let mut text = to_table(&lm, &s, &idx);
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        emit(&text)
    }
}
