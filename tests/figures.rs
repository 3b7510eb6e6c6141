//! Figures: every figure of every drawing command rendered to SVG, PNG and PDF and checked
//! for structure (label strings present, no text outside the canvas or over the data, a
//! colour bar when colouring by a per-point quantity, PNG size, PDF header and embedded font),
//! plus the library's drawing rules (breaks at B = 0 and at jumps, thinning, 1/B axis).
//! Parameters are invented unless a source is named.

mod common;
use common::cli::{run, scratch, with_flags, ORBITS_PARABOLIC};
use ladderfan::plot::{
    geometry, line_plot, render, Colouring, Curve, Format, LegendEntry, LinePlot, Rgb, Scale,
};
use std::path::{Path, PathBuf};

/// Width and height from a PNG's IHDR chunk (PNG specification, ISO/IEC 15948: bytes 16-23).
fn png_size(b: &[u8]) -> (u32, u32) {
    assert_eq!(&b[..8], b"\x89PNG\r\n\x1a\n", "not a PNG");
    let be = |i: usize| u32::from_be_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]);
    (be(16), be(20))
}

/// The structural checks of one figure in all three formats.
fn check_figure(dir: &Path, stem: &str, labels: &[&str]) -> String {
    let svg = std::fs::read_to_string(dir.join(format!("{stem}.svg")))
        .unwrap_or_else(|e| panic!("{stem}.svg: {e}"));
    assert!(
        svg.contains("font-family=\"DejaVu Sans\""),
        "{stem}: font family not named"
    );
    let problems = geometry::problems(&svg);
    assert!(problems.is_empty(), "{stem}: {problems:#?}");
    let texts: Vec<String> = geometry::text_boxes(&svg)
        .into_iter()
        .map(|t| t.text)
        .collect();
    for l in labels {
        assert!(
            texts.iter().any(|t| t == l),
            "{stem}: label `{l}` missing from {texts:?}"
        );
    }
    assert!(
        svg.contains("id=\"legend\"") || svg.contains("id=\"colour-bar\""),
        "{stem}: no key"
    );
    let (w, h) = geometry::canvas(&svg).unwrap_or_else(|| panic!("{stem}: no canvas"));
    let png = std::fs::read(dir.join(format!("{stem}.png")))
        .unwrap_or_else(|e| panic!("{stem}.png: {e}"));
    let k = f64::from(ladderfan::plot::render::PNG_SCALE);
    assert_eq!(
        png_size(&png),
        ((k * w).round() as u32, (k * h).round() as u32),
        "{stem}.png size"
    );
    let pdf = std::fs::read(dir.join(format!("{stem}.pdf")))
        .unwrap_or_else(|e| panic!("{stem}.pdf: {e}"));
    assert!(pdf.starts_with(b"%PDF"), "{stem}.pdf header");
    let has = |needle: &[u8]| pdf.windows(needle.len()).any(|x| x == needle);
    assert!(
        has(b"DejaVuSans") && has(b"/FontFile2"),
        "{stem}.pdf: font not embedded"
    );
    svg
}

fn ok(args: &[&str]) {
    let r = run(args);
    assert_eq!(r.code, 0, "ladderfan {args:?}: {}", r.stderr);
}

/// Run `args` with `--out` a fresh directory named `tag` and `--format svg,png,pdf`; the
/// directory.
fn figures_of(tag: &str, args: &[&str]) -> PathBuf {
    let d = scratch(tag);
    let ds = d.display().to_string();
    ok(&[args, &["--out", &ds, "--format", "svg,png,pdf"][..]].concat());
    d
}

/// The stems of the SVG files in `dir`.
fn svg_stems(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .map(|r| {
            r.flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter_map(|f| f.strip_suffix(".svg").map(str::to_string))
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v
}

/// Every CSV in `dir` has a figure of the same stem (`NAME.csv` -> `NAME.svg`).
fn every_csv_has_a_figure(dir: &Path) {
    let stems = svg_stems(dir);
    let csvs: Vec<String> = std::fs::read_dir(dir)
        .map(|r| {
            r.flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter_map(|f| f.strip_suffix(".csv").map(str::to_string))
                .collect()
        })
        .unwrap_or_default();
    assert!(!csvs.is_empty(), "no CSV in {}", dir.display());
    for c in csvs {
        assert!(
            stems.contains(&c),
            "{c}.csv has no figure; figures: {stems:?}"
        );
    }
}

/// The line labels of a figure (`class="line-label"`).
fn line_labels(svg: &str) -> Vec<geometry::TextBox> {
    geometry::text_boxes(svg)
        .into_iter()
        .filter(|t| t.line_label)
        .collect()
}

#[test]
fn fan_and_dispersion_figures_in_three_formats_with_labels() {
    let d = figures_of(
        "fig-fan",
        &[
            "fan",
            "--builtin",
            "dirac2d",
            "--set",
            "mass_mev=10",
            "--b-max",
            "5",
            "--points",
            "12",
            "--cutoff",
            "80",
            "--emin",
            "-130",
            "--emax",
            "130",
        ],
    );
    // +-1, +-2 reach the right edge inside the window (massive Dirac fan, E = +-sqrt(m^2 + 2n
    // (hbar v / l_B)^2): from memory, the levels below 130 meV at 5 T); higher levels leave
    // through the top and bottom edges and are labelled there
    let svg = check_figure(&d, "fan", &["+1", "-1", "+2", "-2", "B [T]"]);
    every_csv_has_a_figure(&d);
    let labels = line_labels(&svg);
    let (_, fy0, _, fy1) = geometry::plot_area(&svg).unwrap_or_default();
    assert!(
        labels.iter().any(|t| t.y1 <= fy0) && labels.iter().any(|t| t.y0 >= fy1),
        "no label above and below the frame: {labels:?}"
    );
    for (i, a) in labels.iter().enumerate() {
        for b in &labels[i + 1..] {
            assert!(!a.overlaps(b), "labels overlap: {a:?} {b:?}");
        }
    }
    let d2 = figures_of(
        "fig-disp",
        &[
            "dispersion",
            "--builtin",
            "weyl",
            "--field",
            "5",
            "--points",
            "9",
            "--cutoff",
            "60",
        ],
    );
    for stem in svg_stems(&d2) {
        check_figure(&d2, &stem, &[]);
    }
    every_csv_has_a_figure(&d2);
}

#[test]
fn levels_optics_and_converge_figures_in_three_formats() {
    let d = figures_of(
        "fig-levels",
        &[
            "levels",
            "--builtin",
            "dirac2d",
            "--field",
            "5",
            "--cutoff",
            "60",
        ],
    );
    check_figure(&d, "levels", &["Landau index n"]);
    every_csv_has_a_figure(&d);
    let optics = [
        "optics",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=10",
        "--cutoff",
        "80",
        "--field",
    ];
    let d = figures_of("fig-sticks", &[&optics[..], &["5"]].concat());
    let svg = check_figure(&d, "transitions", &["σ+", "σ−"]);
    // mirror: sticks go both up and down from the zero line (sigma+ up, sigma- down)
    assert!(svg.contains("id=\"plot-area\""));
    every_csv_has_a_figure(&d);
    let d = figures_of(
        "fig-optics-fan",
        &[&optics[..], &["1", "--b-max", "5", "--points", "6"]].concat(),
    );
    check_figure(&d, "transitions", &["σ+", "transition energy [meV]"]);
    let d = figures_of(
        "fig-converge",
        &[
            "converge",
            "--builtin",
            "dirac2d",
            "--field",
            "5",
            "--count",
            "3",
        ],
    );
    let svg = check_figure(&d, "converge", &["cutoff N (orbitals)"]);
    every_csv_has_a_figure(&d);
    // proper ticks: more than one labelled x tick below the frame
    let (_, _, _, y1) = geometry::plot_area(&svg).unwrap_or_default();
    let below = geometry::text_boxes(&svg)
        .into_iter()
        .filter(|t| t.y0 > y1 && t.y0 < y1 + 25.0)
        .count();
    assert!(below >= 2, "{below} x tick labels");
    let d = figures_of(
        "fig-converge-auto",
        &[
            "converge",
            "--builtin",
            "dirac2d",
            "--field",
            "5",
            "--mode",
            "auto",
            "--count",
            "4",
        ],
    );
    check_figure(&d, "converge-auto", &["residual bound", "E [meV]"]);
    every_csv_has_a_figure(&d);
}

#[test]
fn demo_and_orbits_figures_in_three_formats() {
    let d = figures_of("fig-demo", &["demo"]);
    check_figure(&d, "fan", &[]);
    check_figure(&d, "levels", &["Landau index n"]);
    every_csv_has_a_figure(&d);
    let d = figures_of(
        "fig-orbits",
        &with_flags(&ORBITS_PARABOLIC, &["--field", "2", "--levels", "3"]),
    );
    check_figure(&d, "orbits_fan", &["1/B [1/T]", "Landau index n"]);
    check_figure(&d, "orbits_levels", &["Landau index n"]);
    every_csv_has_a_figure(&d);
}

#[test]
fn dos_figures_including_the_3d_fermi_sweep() {
    let d = figures_of(
        "fig-dos3d",
        &[
            "dos",
            "--builtin",
            "weyl",
            "--field",
            "10",
            "--cutoff",
            "100",
            "--kz-integrate",
            "--width",
            "1",
            "--emin",
            "-40",
            "--emax",
            "40",
            "--energy-points",
            "41",
            "--density-cm3",
            "1e16",
            "--b-max",
            "10",
            "--b-min",
            "5",
            "--points",
            "3",
        ],
    );
    for stem in ["dos", "dos3d", "fermi3d"] {
        check_figure(&d, stem, &[]);
    }
    every_csv_has_a_figure(&d);
    let d = figures_of(
        "fig-fermi2d",
        &[
            "dos",
            "--builtin",
            "dirac2d",
            "--field",
            "5",
            "--cutoff",
            "60",
            "--density-cm2",
            "1e12",
            "--b-max",
            "8",
            "--points",
            "6",
            "--energy-unit",
            "eV",
        ],
    );
    check_figure(&d, "dos", &["E [eV]"]);
    check_figure(&d, "fermi", &["E [eV]"]);
    every_csv_has_a_figure(&d);
}

#[test]
fn plot_command_redraws_a_fan_against_inverse_field_with_a_colour_bar() {
    let d = scratch("fig-redraw");
    let ds = d.display().to_string();
    ok(&[
        "fan",
        "--builtin",
        "schrodinger",
        "--b-max",
        "5",
        "--points",
        "20",
        "--cutoff",
        "40",
        "--out",
        &ds,
        "--json",
    ]);
    let csv = std::fs::read_dir(&d)
        .ok()
        .and_then(|r| {
            r.flatten()
                .map(|e| e.path())
                .find(|p| p.extension().is_some_and(|x| x == "csv"))
        })
        .unwrap_or_else(|| panic!("no CSV in {ds}"));
    let out = d.join("re");
    let os = out.display().to_string();
    ok(&[
        "plot",
        &csv.display().to_string(),
        "--out",
        &os,
        "--x-scale",
        "inverse",
        "--format",
        "svg,png,pdf",
        "--name",
        "osc",
    ]);
    let svg = check_figure(&out, "osc", &[]);
    assert!(
        svg.contains("id=\"colour-bar\""),
        "colouring by the Landau index draws a colour bar"
    );
    let texts: Vec<String> = geometry::text_boxes(&svg)
        .into_iter()
        .map(|t| t.text)
        .collect();
    assert!(texts.iter().any(|t| t.starts_with("1/field")), "{texts:?}");
    let r = run(&[
        "plot",
        &csv.display().to_string(),
        "--out",
        &os,
        "--x-scale",
        "sideways",
    ]);
    assert_eq!(r.code, 2);
    assert_eq!(r.stderr.trim().lines().count(), 1, "{}", r.stderr);
    assert!(r.stderr.starts_with("ladderfan: error:"), "{}", r.stderr);
}

fn fan_curves(n: usize, b_max: f64) -> Vec<Curve> {
    // Schrodinger-like fan E = (k + 1/2) B (invented units), sampled at 200 fields
    (0..n)
        .map(|k| Curve {
            color_key: k,
            label: Some(format!("{k}")),
            points: (0..=200)
                .map(|i| {
                    let b = b_max * i as f64 / 200.0;
                    (b, (k as f64 + 0.5) * b)
                })
                .collect(),
            values: Some((0..=200).map(|i| i as f64 / 200.0).collect()),
            ..Curve::default()
        })
        .collect()
}

#[test]
fn weight_colouring_has_a_colour_bar_and_every_format_renders() {
    let p = LinePlot {
        title: "invented fan".into(),
        x_label: "B [T]".into(),
        y_label: "E [meV]".into(),
        curves: fan_curves(6, 1.0),
        colouring: Colouring::Values {
            name: "weight of component 1".into(),
            range: Some((0.0, 1.0)),
        },
        legend: vec![LegendEntry::solid("level", Rgb(120, 120, 120))],
        ..LinePlot::default()
    };
    let svg = line_plot(&p).unwrap_or_else(|e| panic!("{e}"));
    assert!(svg.contains("id=\"colour-bar\""));
    assert!(
        geometry::problems(&svg).is_empty(),
        "{:?}",
        geometry::problems(&svg)
    );
    let texts: Vec<String> = geometry::text_boxes(&svg)
        .into_iter()
        .map(|t| t.text)
        .collect();
    for k in 0..6 {
        assert!(
            texts.contains(&k.to_string()),
            "label {k} missing: {texts:?}"
        );
    }
    assert!(texts.contains(&"weight of component 1".to_string()));
    let png = render(&svg, Format::Png).unwrap_or_else(|e| panic!("{e}"));
    let k = f64::from(ladderfan::plot::render::PNG_SCALE);
    assert_eq!(
        png_size(&png),
        ((k * 960.0).round() as u32, (k * 680.0).round() as u32)
    );
    let pdf = render(&svg, Format::Pdf).unwrap_or_else(|e| panic!("{e}"));
    assert!(pdf.starts_with(b"%PDF"));
}

#[test]
fn crowded_low_field_lines_are_thinned_not_drawn_as_a_block() {
    // 150 levels E = (k + 1/2) B over 0..1 in a plot ~450 px tall: near B = 0 they are far
    // closer than 1.5 px, so with thinning the path data must hold fewer points there
    let base = LinePlot {
        curves: fan_curves(150, 1.0),
        y_range: Some((0.0, 40.0)),
        labels: false,
        ..LinePlot::default()
    };
    let count = |p: &LinePlot| {
        let svg = line_plot(p).unwrap_or_else(|e| panic!("{e}"));
        svg.matches(" L").count()
    };
    let full = count(&base);
    let thinned = count(&LinePlot {
        thin_px: 1.5,
        ..base.clone()
    });
    assert!(thinned * 10 < full * 9, "thinned {thinned} vs full {full}");
    assert!(thinned > 0);
}

#[test]
fn no_segment_across_zero_field_or_a_jump() {
    // a fan over B in [-1, 1] sampled so no point lies at B = 0, and a level with a jump
    let pts: Vec<(f64, f64)> = (0..20).map(|i| (-0.95 + 0.1 * i as f64, 1.0)).collect();
    let jump: Vec<(f64, f64)> = (0..20)
        .map(|i| {
            (
                -0.95 + 0.1 * i as f64,
                if i < 5 { 0.0 } else { 5.0 } + 0.01 * i as f64,
            )
        })
        .collect();
    let svg = line_plot(&LinePlot {
        curves: vec![
            Curve {
                points: pts,
                ..Curve::default()
            },
            Curve {
                points: jump,
                ..Curve::default()
            },
        ],
        y_range: Some((-1.0, 6.0)),
        labels: false,
        ..LinePlot::default()
    })
    .unwrap_or_else(|e| panic!("{e}"));
    // data paths: the flat line in two pieces (B < 0, B > 0), the jumping one in three
    let data = svg.split("<g id=\"data\">").nth(1).unwrap_or_default();
    let data = data.split("</g>").next().unwrap_or_default();
    assert_eq!(data.matches("<path").count(), 5, "{data}");
}

#[test]
fn inverse_axis_puts_high_fields_on_the_left() {
    let svg = line_plot(&LinePlot {
        curves: vec![Curve {
            points: vec![(1.0, 0.0), (2.0, 1.0), (4.0, 2.0)],
            ..Curve::default()
        }],
        x_scale: Scale::Inverse,
        x_label: "1/B [1/T]".into(),
        legend: vec![LegendEntry::solid("level", Rgb(0, 0, 0))],
        ..LinePlot::default()
    })
    .unwrap_or_else(|e| panic!("{e}"));
    // 1/B = 1, 0.5, 0.25: the point of B = 4 (y = 2, top) is leftmost
    let data = svg.split("<g id=\"data\">").nth(1).unwrap_or_default();
    let d = data.split("d=\"M").nth(1).unwrap_or_default();
    let first: Vec<f64> = d
        .split(" L")
        .map(|p| {
            p.split_whitespace()
                .next()
                .and_then(|x| x.parse().ok())
                .unwrap_or(f64::NAN)
        })
        .take(3)
        .collect();
    assert!(first[0] > first[1] && first[1] > first[2], "{first:?}");
}
