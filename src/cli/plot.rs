//! `ladderfan plot FILE.(csv|json)`: re-draw a table or record the tools wrote, with other
//! axes (linear, log, 1/x), another colour quantity, labels on or off, another size or
//! format, without recomputing; and [`add_figure`], which every drawing command uses to queue
//! its figure in each `--format`.

use super::common::{bad_flag, CliResult, OutputArgs, OutputFiles};
use clap::Args;
use ladderfan::plot::{render, Colouring, Curve, Format, LegendEntry, LinePlot, Scale};
use std::path::PathBuf;

/// The formats of `--format`.
pub fn formats(out: &OutputArgs) -> CliResult<Vec<Format>> {
    Format::parse_list(&out.format).map_err(|e| bad_flag("--format", e.to_string()))
}

/// Queue `STEM.svg` / `.png` / `.pdf` of a figure, one per format.
pub fn add_figure(
    files: &mut OutputFiles,
    stem: &str,
    plot: &LinePlot,
    formats: &[Format],
) -> CliResult {
    let svg = ladderfan::plot::line_plot(plot)?;
    let mut svg = Some(svg);
    for (k, &f) in formats.iter().enumerate() {
        let name = format!("{stem}.{}", f.extension());
        // the last format, an SVG: the text itself is the file, moved rather than copied (a
        // long sweep's figure is megabytes)
        match svg.take_if(|_| f == Format::Svg && k + 1 == formats.len()) {
            Some(text) => files.add(&name, text),
            None => files.add(&name, render(svg.as_deref().unwrap_or_default(), f)?),
        }
    }
    Ok(())
}

/// Flags of `ladderfan plot`.
#[derive(Debug, Clone, Args)]
pub struct PlotArgs {
    /// A CSV or JSON file written by ladderfan (fan, dispersion, dos, optics, converge, levels).
    #[arg(value_name = "FILE.(csv|json)")]
    pub file: PathBuf,
    /// Directory for the figure (created if needed).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Comma-separated figure formats: svg, png, pdf.
    #[arg(long, value_name = "LIST", default_value = "svg")]
    pub format: String,
    /// Column (or quantity prefix, e.g. `field`, `kz`, `energy`) on the x axis; default: the
    /// field, kz or cutoff column.
    #[arg(long)]
    pub x: Option<String>,
    /// Column (or quantity prefix) on the y axis; default: the energy column.
    #[arg(long)]
    pub y: Option<String>,
    /// x-axis scale: linear, log or inverse (1/x, e.g. 1/B for quantum oscillations).
    #[arg(long, default_value = "linear")]
    pub x_scale: String,
    /// y-axis scale: linear, log or inverse.
    #[arg(long, default_value = "linear")]
    pub y_scale: String,
    /// Column whose per-point values colour the lines on a continuous scale with a colour bar
    /// (e.g. `n`, `landau_index`, `branch`, `weight_1`); default: the Landau index if present.
    #[arg(long, value_name = "COLUMN")]
    pub colour: Option<String>,
    /// Leave out the labels at the lines' ends.
    #[arg(long)]
    pub no_labels: bool,
    /// Figure size in pixels, `WIDTHxHEIGHT`.
    #[arg(long, default_value = "960x680")]
    pub size: String,
    /// Output file name without extension (default: the input's stem).
    #[arg(long)]
    pub name: Option<String>,
}

/// A table read from a CSV file: header and numeric-or-text cells.
pub(crate) struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

impl Table {
    /// Index of the column `q`: an exact name, or the first `q_<unit>` column.
    pub fn find(&self, q: &str) -> Option<usize> {
        self.header.iter().position(|h| h == q).or_else(|| {
            self.header
                .iter()
                .position(|h| h.starts_with(&format!("{q}_")))
        })
    }

    fn num(&self, row: &[String], c: usize) -> f64 {
        row.get(c)
            .and_then(|v| v.trim().parse().ok())
            .unwrap_or(f64::NAN)
    }
}

fn parse_size(s: &str) -> CliResult<(u32, u32)> {
    let bad = || {
        bad_flag(
            "--size",
            format!("`{s}` is not WIDTHxHEIGHT with each 200 to 8000 pixels (e.g. 960x680)"),
        )
    };
    let (w, h) = s.split_once(['x', 'X']).ok_or_else(bad)?;
    let (w, h): (u32, u32) = (
        w.trim().parse().map_err(|_| bad())?,
        h.trim().parse().map_err(|_| bad())?,
    );
    if !(200..=8000).contains(&w) || !(200..=8000).contains(&h) {
        return Err(bad());
    }
    Ok((w, h))
}

/// `quantity_unit` -> `quantity [unit]`.
fn axis_name(col: &str, scale: Scale) -> String {
    let (q, u) = match col.split_once('_') {
        Some((q, u)) => (q.to_string(), Some(u.to_string())),
        None => (col.to_string(), None),
    };
    match (scale, u) {
        (Scale::Inverse, Some(u)) => format!("1/{q} [1/{u}]"),
        (Scale::Inverse, None) => format!("1/{q}"),
        (_, Some(u)) => format!("{q} [{u}]"),
        (_, None) => q,
    }
}

fn read_table(path: &std::path::Path, text: &str) -> CliResult<Table> {
    let mut rd = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .flexible(true)
        .from_reader(text.as_bytes());
    let bad = |e: csv::Error| {
        bad_flag(
            "FILE",
            format!(
                "{} is not a CSV table ladderfan can read: {e}",
                path.display()
            ),
        )
    };
    let header: Vec<String> = rd
        .headers()
        .map_err(bad)?
        .iter()
        .map(|h| h.trim().to_string())
        .collect();
    let mut rows = Vec::new();
    for r in rd.records() {
        rows.push(r.map_err(bad)?.iter().map(str::to_string).collect());
    }
    Ok(Table { header, rows })
}

/// The figure of a table: one line per track/level/transition group, x and y by quantity.
pub(crate) fn table_plot(t: &Table, a: &PlotArgs, title: &str) -> CliResult<LinePlot> {
    let pick = |flag: &str, given: &Option<String>, defaults: &[&str]| -> CliResult<usize> {
        match given {
            Some(q) => t.find(q).ok_or_else(|| {
                bad_flag(
                    flag,
                    format!(
                        "no column `{q}` in the file; its columns: {}",
                        t.header.join(", ")
                    ),
                )
            }),
            None => defaults.iter().find_map(|q| t.find(q)).ok_or_else(|| {
                bad_flag(
                    flag,
                    format!(
                        "say which column to draw; the file's columns: {}",
                        t.header.join(", ")
                    ),
                )
            }),
        }
    };
    let xc = pick("--x", &a.x, &["field", "kz", "cutoff", "energy"])?;
    let ydefaults: Vec<&str> = [
        "energy",
        "dos",
        "error",
        "bound",
        "relative_strength",
        "fermi_energy",
    ]
    .into_iter()
    .filter(|q| t.find(q) != Some(xc))
    .collect();
    let yc = pick("--y", &a.y, &ydefaults)?;
    let group = ["track", "level", "transition"]
        .iter()
        .find_map(|q| t.find(q));
    let label_col = ["label", "level", "transition"]
        .iter()
        .find_map(|q| t.find(q))
        .or(group);
    let colour_col = match &a.colour {
        Some(q) => Some(pick("--colour", &Some(q.clone()), &[])?),
        None => ["landau_index", "n"].iter().find_map(|q| t.find(q)),
    };
    let mut groups: Vec<(String, Curve)> = Vec::new();
    for row in &t.rows {
        let key = group.and_then(|g| row.get(g).cloned()).unwrap_or_default();
        let idx = match groups.iter().position(|g| g.0 == key) {
            Some(i) => i,
            None => {
                let label = label_col
                    .and_then(|l| row.get(l).cloned())
                    .filter(|l| !l.is_empty());
                groups.push((
                    key.clone(),
                    Curve {
                        label,
                        values: Some(vec![]),
                        ..Curve::default()
                    },
                ));
                groups.len() - 1
            }
        };
        let c = &mut groups[idx].1;
        c.points.push((t.num(row, xc), t.num(row, yc)));
        if let (Some(v), Some(cc)) = (c.values.as_mut(), colour_col) {
            v.push(t.num(row, cc).abs());
        }
    }
    let (x_scale, y_scale) = (
        scale("--x-scale", &a.x_scale)?,
        scale("--y-scale", &a.y_scale)?,
    );
    let colouring = match colour_col {
        Some(cc) => Colouring::Values {
            name: t.header[cc].clone(),
            range: None,
        },
        None => Colouring::default(),
    };
    let legend = vec![match colour_col {
        Some(cc) => LegendEntry::solid(
            format!("{} (colour: {})", t.header[yc], t.header[cc]),
            ladderfan::plot::Rgb(120, 120, 120),
        ),
        None => LegendEntry::solid(
            t.header[yc].clone(),
            ladderfan::plot::colour::categorical(0),
        ),
    }];
    Ok(LinePlot {
        title: title.to_string(),
        x_label: axis_name(&t.header[xc], x_scale),
        y_label: axis_name(&t.header[yc], y_scale),
        curves: groups.into_iter().map(|g| g.1).collect(),
        legend,
        colouring,
        x_scale,
        y_scale,
        labels: !a.no_labels,
        thin_px: 2.0,
        size: parse_size(&a.size)?,
        ..LinePlot::default()
    })
}

fn scale(flag: &str, s: &str) -> CliResult<Scale> {
    Scale::parse(s).map_err(|e| bad_flag(flag, e.to_string()))
}

/// Run `ladderfan plot`.
pub fn run(a: &PlotArgs) -> CliResult {
    let formats = Format::parse_list(&a.format).map_err(|e| bad_flag("--format", e.to_string()))?;
    let text = std::fs::read_to_string(&a.file).map_err(|e| {
        bad_flag(
            "FILE",
            format!(
                "cannot read {}: {e}; give a CSV or JSON file ladderfan wrote",
                a.file.display()
            ),
        )
    })?;
    let stem = a.name.clone().unwrap_or_else(|| {
        a.file
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "plot".into())
    });
    let title = format!(
        "{} (re-drawn)",
        a.file
            .file_name()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default()
    );
    let table = if text.trim_start().starts_with('{') {
        super::plot_json::table_from_json(&a.file, &text)?
    } else {
        read_table(&a.file, &text)?
    };
    let plot = table_plot(&table, a, &title)?;
    let mut files = OutputFiles::default();
    add_figure(&mut files, &stem, &plot, &formats)?;
    let mut out = String::new();
    for p in files.write_all(&a.out)? {
        out.push_str(&format!("wrote {}\n", p.display()));
    }
    super::common::emit(&out)
}
