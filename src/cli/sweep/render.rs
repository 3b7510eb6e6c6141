//! The views of a sweep: the CSV file, the SVG fan (or dispersion) plot and the text summary.

use super::*;
use ladderfan::plot::decimate::{Decimation, FIGURE_COLUMNS};
use ladderfan::records::meta::CsvMeta;
use ladderfan::records::TrackOutline;

/// The columns of a sweep's CSV (`fan.csv`, `dispersion.csv`), in order.
pub fn sweep_columns(lm: &LoadedModel, swept: Swept) -> Vec<Column> {
    let cu = common::column_units(lm);
    let x = match swept {
        Swept::Field => Column::new(cu.field_column(), cu.field_unit, "magnetic field B"),
        Swept::Kz => Column::new(cu.kz_column(), cu.kz_unit, "wave number kz along B"),
    };
    vec![
        x,
        Column::new(
            "track",
            "",
            "identity of the tracked level (sector:branch:family:copy)",
        ),
        Column::new(
            "label",
            "",
            "Landau label as printed (+n above the gap, -n below; @f<family>, *<copy>)",
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
            cu.energy_column(),
            cu.energy_unit,
            "level energy relative to the reference energy",
        ),
        Column::new(
            cu.energy_valued("bound"),
            cu.energy_unit,
            "deciding error bound of the energy",
        ),
    ]
}

/// The sidecar and columns of a sweep's CSV (its notes from the record `j`; its tracks are
/// not read), with the `weight_<component>` and `mean_n` columns when `character`.
pub fn csv_parts(lm: &LoadedModel, j: &SweepJson, character: bool) -> (CsvMeta, Vec<Column>) {
    let u = lm.model.units();
    let (xname, xunit) = match j.swept {
        Swept::Field => ("field", j.units.field.clone()),
        Swept::Kz => ("kz", common::inverse_length(u)),
    };
    let fixed = match j.swept {
        Swept::Field => format!("kz {} {}", j.kz.unwrap_or(0.0), common::inverse_length(u)),
        Swept::Kz => format!("field {} {}", j.field.unwrap_or(0.0), j.units.field),
    };
    let meta = csv_meta(
        lm,
        j.command,
        vec![
            format!(
                "energies in {} relative to {}",
                j.units.energy, j.reference_energy
            ),
            "label = Landau label (+n above the gap, -n below, n unpaired, ' a further level on \
             the same side, ~ continued from the symmetric model, @f<family>, *<copy> (the JSON \
             writes #<copy>)); tracked by quantum numbers"
                .into(),
        ],
        vec![
            format!(
                "{fixed}, cutoff {}, {} {} points ({xname} in {xunit})",
                j.cutoff,
                j.values.len(),
                match j.grid {
                    ladderfan::sweep::Spacing::Linear => "linear",
                    ladderfan::sweep::Spacing::Log => "log",
                }
            ),
            format!(
                "window [{}, {}] (values kept up to half a window beyond); only converged values",
                j.window.0, j.window.1
            ),
        ],
    );
    let mut columns = sweep_columns(lm, j.swept);
    if character {
        columns.extend(common::weight_columns(&lm.model));
        columns.push(Column::new(
            "mean_n",
            "1",
            "mean orbital index <n> = sum_n n |psi_n|^2 of the state",
        ));
    }
    (meta, columns)
}

/// The CSV of a sweep (long format: one row per point and track, grouped by track in the
/// order of the record, points in order within a track); grid, window and conventions go to
/// its sidecar. A streamed sweep writes the same bytes row by row ([`row`], [`super::run_streamed`]).
pub fn csv(lm: &LoadedModel, j: &SweepJson) -> CliResult<CsvFile> {
    let character = j.tracks.iter().any(|t| t.weights.is_some());
    let (meta, columns) = csv_parts(lm, j, character);
    // rows made as the text is written: a long sweep never holds all its cells
    let dim = lm.model.dim();
    let rows = j.tracks.iter().flat_map(|t| {
        j.values.iter().enumerate().filter_map(move |(i, &x)| {
            let (en, b) = (t.energies[i]?, t.bounds[i]?);
            let mut row = row_cells(x, &t.track, &t.label, t.n, t.branch, en, b);
            if character {
                row.extend(character_cells(t, i, dim));
            }
            Some(row)
        })
    });
    common::csv_file_from_iter(meta, columns, rows)
}

/// The cells of one row of a sweep's CSV before the character cells: swept value, track,
/// label, Landau index, branch, energy and bound (in the output units).
pub fn row_cells(
    x: f64,
    track: &str,
    label: &str,
    n: Option<i64>,
    branch: ladderfan::levels::Branch,
    energy: f64,
    bound: f64,
) -> Vec<String> {
    vec![
        format!("{x:e}"),
        track.to_string(),
        label.to_string(),
        n.map(|n| n.to_string()).unwrap_or_default(),
        common::landau_branch_text(branch),
        format!("{energy:e}"),
        format!("{bound:e}"),
    ]
}

/// The character cells of one row: the `weights` of the level (empty cells when `None`,
/// `dim` of them) and its <n> (empty when `None` or NaN).
pub fn weight_cells(weights: Option<&[f64]>, mean_n: Option<f64>, dim: usize) -> Vec<String> {
    let mut cells = match weights {
        Some(w) => w.iter().map(|x| format!("{x:e}")).collect(),
        None => vec![String::new(); dim],
    };
    cells.push(
        mean_n
            .filter(|m| !m.is_nan())
            .map_or_else(String::new, |m| format!("{m:e}")),
    );
    cells
}

/// The weight cells (`dim` of them) and the <n> cell of track `t` at point `i` (empty where
/// the track carries no character there).
fn character_cells(t: &TrackRecord, i: usize, dim: usize) -> Vec<String> {
    weight_cells(
        t.weights.as_ref().and_then(|w| w[i].as_deref()),
        t.mean_n.as_ref().and_then(|m| m[i]),
        dim,
    )
}

/// The outlines of the tracks of a whole sweep record (figure and summary of a sweep whose
/// record is kept, as for JSON), lines thinned as a streamed sweep thins them.
pub fn outlines_of(j: &SweepJson) -> Vec<TrackOutline> {
    let d = Decimation::new(&j.values, FIGURE_COLUMNS);
    j.tracks
        .iter()
        .enumerate()
        .map(|(k, t)| TrackOutline::from_record(t, k, &j.values, j.reference_point, &d))
        .collect()
}

/// The figure of the tracks (`tracks`, in the order of the record; `j` gives the axes,
/// window and caption): lines labelled by their Landau labels at the right edge, coloured by
/// |n| or, with `colour_by_weight` and tracks that carry the character, by the weight of the
/// model's first component on a colour bar; the closed form dashed when given; lines thinned
/// where they crowd closer than 2 px (the low-field corner of a fan).
pub fn figure(
    lm: &LoadedModel,
    j: &SweepJson,
    tracks: Vec<TrackOutline>,
    closed: Option<&[Vec<(f64, f64)>]>,
    colour_by_weight: bool,
) -> LinePlot {
    let u = lm.model.units();
    let x_label = match j.swept {
        Swept::Field => format!("B [{}]", j.units.field),
        Swept::Kz => format!("kz [{}]", common::inverse_length(u)),
    };
    let colour_name = (colour_by_weight && tracks.iter().any(|t| t.colours.is_some())).then(|| {
        format!(
            "weight of component {}",
            lm.model
                .component_names()
                .first()
                .map_or("0", String::as_str)
        )
    });
    let mut order: Vec<usize> = (0..tracks.len()).collect();
    order.sort_by_key(|&i| (tracks[i].n.map(|n| n.unsigned_abs()).unwrap_or(u64::MAX), i));
    // the lines move into the curves: a long sweep's figure holds them once
    let mut tracks: Vec<Option<TrackOutline>> = tracks.into_iter().map(Some).collect();
    let mut curves: Vec<Curve> = order
        .iter()
        .filter_map(|&i| {
            let t = tracks[i].take()?;
            Some(Curve {
                label: Some(t.label),
                color_key: t.n.map(|n| n.unsigned_abs() as usize).unwrap_or(0),
                points: t.line,
                values: colour_name.as_ref().and(t.colours),
                ..Curve::default()
            })
        })
        .collect();
    let notes = vec![format!(
        "{} ({}), cutoff {}; lines end where levels crowd closer than 2 px",
        lm.model.name(),
        lm.origin,
        j.cutoff
    )];
    let mut keys: Vec<usize> = curves.iter().map(|c| c.color_key).collect();
    keys.sort_unstable();
    keys.dedup();
    let mut legend: Vec<LegendEntry> = Vec::new();
    let colouring = match &colour_name {
        Some(c) => {
            legend.push(LegendEntry::solid(
                "level (colour: scale)",
                Rgb(120, 120, 120),
            ));
            Colouring::Values {
                name: c.clone(),
                range: None,
            }
        }
        None => {
            if keys.len() <= ladderfan::plot::colour::CATEGORICAL.len() {
                legend.extend(keys.iter().map(|&k| {
                    LegendEntry::solid(
                        format!("|n| = {k}"),
                        ladderfan::plot::colour::categorical(k),
                    )
                }));
            } else {
                legend.push(LegendEntry::solid(
                    "level (colour: |n|)",
                    Rgb(120, 120, 120),
                ));
            }
            Colouring::Key {
                name: "Landau index |n|".into(),
            }
        }
    };
    if let Some(cf) = closed {
        for c in cf {
            curves.push(Curve {
                stroke: Stroke::Dashed,
                points: c.clone(),
                ..Curve::default()
            });
        }
        legend.push(LegendEntry::dashed("closed form"));
    }
    let reference = if j.reference_energy != 0.0 {
        format!(" - {}", fmt_num(j.reference_energy, 6))
    } else {
        String::new()
    };
    let title = match j.swept {
        Swept::Field => format!("Landau fan: {}", lm.model.name()),
        Swept::Kz => format!(
            "Dispersion at {} {}: {}",
            j.field.unwrap_or(0.0),
            j.units.field,
            lm.model.name()
        ),
    };
    LinePlot {
        title,
        x_label,
        y_label: format!("E{reference} [{}]", j.units.energy),
        curves,
        y_range: Some(j.window),
        notes,
        legend,
        colouring,
        thin_px: 2.0,
        split_at_zero_x: j.swept == Swept::Field,
        ..LinePlot::default()
    }
}

/// The closed-form lines of the summary: the comparison's verdict and its note, or that none
/// is known.
fn closed_form_lines(j: &SweepJson, unit: &str) -> String {
    let mut out = String::new();
    match &j.closed_form {
        Some(c) => {
            out.push_str(&format!(
                "closed form: {} ({} levels compared one to one, max deviation {:.2e} {}, {} of the allowed)\n",
                if !c.passed {
                    "DISAGREES"
                } else if c.not_comparable_points > 0 {
                    "agrees where comparable"
                } else {
                    "agrees"
                },
                c.computed_compared,
                c.max_deviation,
                unit,
                fmt_num(c.worst_ratio, 3)
            ));
            if !c.note.is_empty() {
                out.push_str(&format!("note: closed form {}\n", c.note));
            }
        }
        None => out.push_str("closed form: none known for this model\n"),
    }
    out
}

/// The most tracks the summary's table lists.
const MAX_TRACK_ROWS: usize = 40;

/// The summary's table (header row first) of the tracks inside the window at the reference
/// point `x_ref`, in ascending energy there, at most [`MAX_TRACK_ROWS`]; and how many tracks
/// it lists.
fn track_rows(
    j: &SweepJson,
    tracks: &[TrackOutline],
    unit: &str,
    x_ref: f64,
) -> (Vec<Vec<String>>, usize) {
    let mut rows = vec![vec![
        "level".to_string(),
        "n".into(),
        "branch".into(),
        "component".into(),
        format!("E at {} [{}]", fmt_num(x_ref, 6), unit),
        format!("E min [{}]", unit),
        format!("E max [{}]", unit),
    ]];
    // the table lists the tracks inside the window at the reference point
    let (lo, hi) = j.window;
    let mut tracks: Vec<&TrackOutline> = tracks
        .iter()
        .filter(|t| t.at_reference.is_some_and(|e| e >= lo && e <= hi))
        .collect();
    tracks.sort_by(|a, b| {
        let ea = a.at_reference.unwrap_or(f64::INFINITY);
        let eb = b.at_reference.unwrap_or(f64::INFINITY);
        ea.total_cmp(&eb)
    });
    for t in tracks.iter().take(MAX_TRACK_ROWS) {
        let (lo, hi) = t.range.unwrap_or((f64::INFINITY, f64::NEG_INFINITY));
        rows.push(vec![
            t.label.clone(),
            t.n.map(|n| n.to_string()).unwrap_or_else(|| "?".into()),
            common::landau_branch_text(t.branch),
            t.component.clone().unwrap_or_default(),
            t.at_reference
                .map(|e| fmt_num(e, 8))
                .unwrap_or_else(|| "-".into()),
            fmt_num(lo, 8),
            fmt_num(hi, 8),
        ]);
    }
    let listed = tracks.len().min(MAX_TRACK_ROWS);
    (rows, listed)
}

/// Human-readable summary of the sweep `j` (its header; the tracks are `tracks`): model,
/// points, symmetry, window, the closed-form verdict and the tracks at the reference point.
pub fn summary(lm: &LoadedModel, j: &SweepJson, tracks: &[TrackOutline]) -> String {
    let u = lm.model.units();
    let mut s = format!(
        "model: {} ({}), cutoff {}, {} points from {} to {} ({})\n",
        lm.model.name(),
        lm.origin,
        j.cutoff,
        j.values.len(),
        j.values.first().copied().unwrap_or(0.0),
        j.values.last().copied().unwrap_or(0.0),
        match j.swept {
            Swept::Field => j.units.field.clone(),
            Swept::Kz => common::inverse_length(u),
        }
    );
    s.push_str(&format!(
        "symmetry: {}\n{} tracked levels in the window [{}, {}] {}\n",
        j.symmetry.description,
        tracks.len(),
        fmt_num(j.window.0, 6),
        fmt_num(j.window.1, 6),
        j.units.energy
    ));
    s.push_str(&closed_form_lines(j, &j.units.energy));
    let x_ref = j.values[j.reference_point];
    let (rows, listed) = track_rows(j, tracks, &j.units.energy, x_ref);
    s.push('\n');
    s.push_str(&common::table(&rows));
    let hidden = tracks.len() - listed;
    if hidden > 0 {
        s.push_str(&format!(
            "({hidden} more tracks, outside the window at {} or beyond {MAX_TRACK_ROWS} rows: see --json or --out)\n",
            fmt_num(x_ref, 6)
        ));
    }
    s
}
