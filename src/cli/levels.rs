//! `ladderfan levels`: the spectrum at one field and kz as a labelled table.

use super::common::{
    self, column_units, csv_file, csv_meta, emit, emit_json, fmt_num, load_model, nearest_levels,
    CliResult, CsvFile, LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use clap::Args;
use ladderfan::levels::Convergence;
use ladderfan::model::SpectrumForm;
use ladderfan::problem::Problem;
use ladderfan::records::meta::Column;
use ladderfan::records::{count_state, warnings, SpectrumRecord};
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
    /// Also report each level's mean orbital index <n> = sum n |psi_n|^2 (column `mean_n`)
    /// and its component weights in the table (JSON and CSV always carry the weights).
    #[arg(long)]
    pub character: bool,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The JSON result for a spectrum and the shown level indices, in the model's units.
pub fn to_json(lm: &LoadedModel, s: &Spectrum, idx: &[usize]) -> SpectrumRecord {
    SpectrumRecord::new(&lm.model, &lm.origin, s, idx)
}

/// The component names as column suffixes (`weight_<name>`; the index for an unnamed one).
pub fn weight_columns(lm: &LoadedModel) -> Vec<String> {
    lm.model
        .component_names()
        .iter()
        .enumerate()
        .map(|(a, name)| {
            if name.is_empty() {
                format!("weight_{a}")
            } else {
                format!("weight_{name}")
            }
        })
        .collect()
}

/// Solve the one set-up problem of a command (no second assembly), refusing a spectrum that
/// overflowed ([`common::finite_spectrum`]).
pub fn solve(problem: &Problem<'_>) -> CliResult<Spectrum> {
    // one library call with no steps to count: a spinner on a terminal if it runs long
    let s = super::progress::Progress::while_running("solve", || Spectrum::solve(problem))?;
    common::finite_spectrum(s)
}

/// The aligned text table with a header block, from the record `rec` of `s` (energies and
/// field in the record's output units); `character` adds <n> and the weight columns.
pub fn to_table(lm: &LoadedModel, s: &Spectrum, rec: &SpectrumRecord, character: bool) -> String {
    let artefacts = count_state(s, Convergence::CutoffArtefact);
    let u = lm.model.units();
    let (eu, fu) = (rec.units.energy.as_str(), rec.units.field.as_str());
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
        rec.field,
        fu,
        s.point.kz,
        common::inverse_length(u),
        s.cutoff,
        fmt_num(s.magnetic_length, 6),
        u.length_unit()
    ));
    out.push_str(&format!("symmetry: {}\n", s.symmetry.describe()));
    out.push_str(&format!(
        "energies in {} relative to {} {}; {} of {} levels shown (closest to the reference); in total {} converged, {} genuine but not converged (raise the cutoff), {} cutoff artefacts{}\n\n",
        eu,
        rec.reference_energy,
        eu,
        rec.levels.len(),
        s.levels.len(),
        s.converged().count(),
        count_state(s, Convergence::NotConverged),
        artefacts,
        if artefacts > 0 && rec.levels.iter().all(|l| l.state != Convergence::CutoffArtefact) {
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
        format!("energy [{eu}]"),
        format!("bound [{eu}]"),
        "from".into(),
        "state".into(),
    ]);
    if character {
        rows[0].push("mean_n".into());
        rows[0].extend(weight_columns(lm));
    }
    for l in &rec.levels {
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
        if character {
            r.push(l.mean_n.map_or_else(|| "-".into(), |m| fmt_num(m, 4)));
            r.extend(l.weights.iter().map(|w| fmt_num(*w, 4)));
        }
        rows.push(r);
    }
    out.push_str(&common::table(&rows));
    out
}

/// The columns of `levels.csv` (also written by `demo`), in order.
fn level_columns(lm: &LoadedModel) -> Vec<Column> {
    let cu = column_units(lm);
    let e = cu.energy_unit;
    let mut c = vec![
        Column::new("sector", "", "sector `class:J` of the conserved J = n + s"),
        Column::new(
            "label",
            "",
            "Landau label as printed (+n above the gap, -n below)",
        ),
        Column::new(
            "landau_index",
            "1",
            "Landau index n (empty when unlabelled)",
        ),
        Column::new(
            "landau_branch",
            "",
            "+ / - nearest the gap, +2 / -2 the next, 0 unpaired",
        ),
        Column::new(
            "label_origin",
            "",
            "exact_sector, continuation or unlabelled",
        ),
        Column::new(
            "branch",
            "1",
            "Klein-Gordon branch +1 / -1; 0 for a direct Hamiltonian",
        ),
        Column::new(
            "rank",
            "1",
            "rank within the (sector, branch) by ascending energy",
        ),
        Column::new(
            "orbital",
            "1",
            "dominant orbital (largest weight); not the Landau index",
        ),
        Column::new("component", "", "dominant component name"),
        Column::new(
            cu.energy_column(),
            e,
            "level energy relative to the reference energy",
        ),
        Column::new(
            cu.energy_valued("bound"),
            e,
            "deciding error bound of the energy",
        ),
        Column::new(
            cu.energy_valued("residual_bound"),
            e,
            "residual (Weinstein) bound",
        ),
        Column::new(
            cu.energy_valued("kato_temple_bound"),
            e,
            "Kato-Temple bound (empty where its gap condition was not certified)",
        ),
        Column::new(
            "bound_from",
            "",
            "which bound decided: residual or kato_temple",
        ),
        Column::new("state", "", "converged, not_converged or cutoff_artefact"),
        Column::new("converged", "", "true when state is converged"),
    ];
    c.extend(common::weight_columns(&lm.model));
    c
}

/// `levels.csv` of the shown levels of the record `rec` of `s` (energies and field in the
/// record's output units); model, point, units and conventions go to its sidecar; `mean_n`
/// when the solve computed it.
pub fn to_csv(lm: &LoadedModel, s: &Spectrum, rec: &SpectrumRecord) -> CliResult<CsvFile> {
    let u = lm.model.units();
    let meta = csv_meta(
        lm,
        "levels",
        vec![
            format!(
                "energies relative to {} {}",
                rec.reference_energy, rec.units.energy
            ),
            format!("symmetry: {}", s.symmetry.describe()),
        ],
        vec![format!(
            "field {} {}, kz {} {}, cutoff {}",
            rec.field,
            rec.units.field,
            s.point.kz,
            common::inverse_length(u),
            s.cutoff
        )],
    );
    let mean_n = s.mean_n.is_some();
    let mut columns = level_columns(lm);
    if mean_n {
        columns.push(Column::new(
            "mean_n",
            "1",
            "mean orbital index <n> = sum_n n |psi_n|^2 of the state",
        ));
    }
    let mut rows = Vec::new();
    for l in rec.levels.iter().cloned() {
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
        if mean_n {
            row.push(l.mean_n.map_or_else(String::new, |m| format!("{m:e}")));
        }
        rows.push(row);
    }
    csv_file(meta, columns, &rows)
}

/// Run `ladderfan levels`.
pub fn run(a: &LevelsArgs) -> CliResult {
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let r = common::resolve_unchecked(&lm, &a.solve, common::default_field(&lm.model))?;
    // the one set-up of this run: its footprint is checked, then it is solved
    let mut settings = r.settings();
    if a.character {
        settings.character = ladderfan::Character::Compute;
    }
    let problem = common::set_up(&lm, a.solve.trunc.cutoff, r.point(), &settings)?;
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
    let rec = to_json(&lm, &s, &idx).in_units(lm.shown);
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("levels.csv", to_csv(&lm, &s, &rec)?)?;
        let fig = level_figure(&lm, &s, &idx, &rec);
        let formats = super::plot::formats(&a.output)?;
        super::plot::add_figure(&mut files, "levels", &fig, &formats)?;
        written = files.write_all(dir)?;
    }
    if a.output.json {
        emit_json(&rec)
    } else {
        let mut text = to_table(&lm, &s, &rec, a.character);
        for p in written {
            text.push_str(&format!("wrote {}\n", p.display()));
        }
        emit(&text)
    }
}

/// The level diagram of `levels.csv`: each listed level (`idx` into `s`, records `rec` in the
/// output units) a bar at its Landau index n.
pub fn level_figure(
    lm: &LoadedModel,
    s: &Spectrum,
    idx: &[usize],
    rec: &SpectrumRecord,
) -> ladderfan::plot::LinePlot {
    ladderfan::plot::level_plot(&ladderfan::plot::LevelDiagram {
        title: format!(
            "{}: levels at {} {}",
            lm.model.name(),
            rec.field,
            rec.units.field
        ),
        energy_unit: rec.units.energy.clone(),
        levels: idx
            .iter()
            .zip(&rec.levels)
            .map(|(&i, l)| (s.levels[i].label.n.max(0) as f64, l.energy))
            .collect(),
    })
}
