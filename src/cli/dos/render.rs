//! The views of a `dos` result: the text summary, the CSV files and the SVG plots.

use super::*;
use ladderfan::observables::labels::{self, TrackKey};
use ladderfan::plot::decimate::{DecimatedLine, Decimation, FIGURE_COLUMNS};
use std::collections::BTreeMap;

/// The energy unit as printed in the sidecars' notes.
pub(super) fn energy_unit(lm: &LoadedModel) -> String {
    lm.shown.energy.label().to_string()
}

/// `dos_<what>per_<energy>_<area or volume>`, e.g. `dos_per_meV_cm2`, and its unit.
fn dos_column(lm: &LoadedModel, what: &str, per: &str, meaning: &str) -> Column {
    let cu = common::column_units(lm);
    Column::new(
        format!("dos_{what}per_{}_{per}", cu.energy),
        format!("1/({} {})", cu.energy_unit, per.replace("cm", "cm^")),
        meaning,
    )
}

pub(super) fn summary(lm: &LoadedModel, j: &DosRecord) -> String {
    let u = lm.model.units();
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
    let mut s = format!(
        "model: {} ({}), field {} {}, kz {} {}, cutoff {}\n",
        lm.model.name(),
        lm.origin,
        j.field,
        fu,
        j.kz,
        u.wavenumber_unit(),
        j.cutoff
    );
    s.push_str(&format!(
        "Landau degeneracy |qB|/h = {} cm^-2 per level; x model degeneracy {} = {} cm^-2 per level\n",
        fmt_num(j.landau_degeneracy_cm2, 6),
        j.model_degeneracy,
        fmt_num(j.states_per_level_cm2, 6)
    ));
    s.push_str(&format!(
        "{:?} broadening, width {} {eu}; {} converged levels from {} to {} {eu} (unconverged levels never count)\n",
        j.shape,
        fmt_num(j.width, 6),
        j.levels_used,
        fmt_num(j.converged_window.0, 8),
        fmt_num(j.converged_window.1, 8)
    ));
    s.push_str(&format!(
        "energies relative to {} {eu}; DOS grid of {} points from {} to {} {eu}\n",
        j.reference_energy,
        j.dos.len(),
        fmt_num(j.dos.first().map(|p| p.0).unwrap_or(0.0), 6),
        fmt_num(j.dos.last().map(|p| p.0).unwrap_or(0.0), 6)
    ));
    match &j.volume {
        Some(v) => s.push_str(&volume_summary(lm, v)),
        None if lm.model.terms().iter().any(|t| t.monomial.kz > 0) => {
            s.push_str(&format!(
                "a 3D model: densities are per area of the kz = {} sheet (add --kz-integrate for per volume)\n",
                j.kz
            ));
        }
        None => {}
    }
    if let Some(f) = &j.fermi {
        s.push_str(&format!(
            "density {} cm^-2 at {} K: Fermi level {} {eu}, filling factor {}, DOS there {} /({eu} cm^2), neutrality {}\n",
            fmt_num(f.density_cm2, 6),
            j.temperature_k,
            fmt_num(f.fermi_energy, 8),
            fmt_num(f.filling_factor, 6),
            fmt_num(f.dos_at_fermi_per_cm2, 5),
            f.neutrality_energy
                .map(|e| format!("at {e} {eu}"))
                .unwrap_or_else(|| "empty band".into())
        ));
    }
    if !j.fermi_sweep.is_empty() {
        let first = &j.fermi_sweep[0];
        let last = &j.fermi_sweep[j.fermi_sweep.len() - 1];
        s.push_str(&format!(
            "Fermi-level sweep: {} fields from {} to {} {}; nu from {} to {}\n",
            j.fermi_sweep.len(),
            first.field,
            last.field,
            fu,
            fmt_num(first.filling_factor, 5),
            fmt_num(last.filling_factor, 5)
        ));
    }
    s
}

/// The per-volume lines of the summary (`--kz-integrate`): the kz quadrature, the DOS per
/// volume, the 3D Fermi-level sweep and the Fermi level at the given density.
fn volume_summary(lm: &LoadedModel, v: &VolumeRecord) -> String {
    let u = lm.model.units();
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
    let mut out = String::new();
    out.push_str(&format!(
        "kz-integrated (per volume): kz limit {} {}, {} kz points{}, last grid change {:.1e} of the peak DOS\n",
        fmt_num(v.kz_max, 6),
        u.wavenumber_unit(),
        v.kz_points,
        if v.even_in_kz { " (spectrum even in kz: kz >= 0 solved)" } else { "" },
        v.quadrature_change
    ));
    let peak = v.dos.iter().map(|p| p.1).fold(0.0, f64::max);
    out.push_str(&format!(
        "  DOS per volume up to {} /({eu} cm^3) on the grid; density from neutrality {} to {} cm^-3 at {} K\n",
        fmt_num(peak, 5),
        fmt_num(v.dos.first().map(|p| p.2).unwrap_or(0.0), 5),
        fmt_num(v.dos.last().map(|p| p.2).unwrap_or(0.0), 5),
        v.temperature_k
    ));
    if let (Some(first), Some(last)) = (v.fermi_sweep.first(), v.fermi_sweep.last()) {
        out.push_str(&format!(
            "  3D Fermi-level sweep: {} fields from {} to {} {}; E_F from {} to {} {eu}\n",
            v.fermi_sweep.len(),
            first.field,
            last.field,
            fu,
            fmt_num(first.fermi_energy, 6),
            fmt_num(last.fermi_energy, 6)
        ));
    }
    if let Some(f) = &v.fermi {
        out.push_str(&format!(
            "  density {} cm^-3: Fermi level {} {eu}, DOS there {} /({eu} cm^3)\n",
            fmt_num(f.density_cm3, 6),
            fmt_num(f.fermi_energy, 8),
            fmt_num(f.dos_at_fermi_per_cm3, 5)
        ));
    }
    out
}

pub(super) fn dos_csv(
    lm: &LoadedModel,
    j: &DosRecord,
    ld: &LevelDensity,
    neutrality: Option<f64>,
) -> CliResult<CsvFile> {
    let eu = energy_unit(lm);
    let cu = common::column_units(lm);
    let meta = csv_meta(
        lm,
        "dos",
        vec![
            format!("energies relative to {} {eu}", j.reference_energy),
            format!(
                "density_invcm2: n(E) at T = 0 with the Fermi level at E, counted from {} \
                 (electrons above minus holes below)",
                neutrality
                    .map(|e| format!("neutrality at {} {eu}", e * lm.shown.energy_factor()))
                    .unwrap_or_else(|| "an empty band".into())
            ),
        ],
        vec![
            format!(
                "field {} {}, kz {}, cutoff {}",
                j.field,
                lm.shown.field.label(),
                j.kz,
                j.cutoff
            ),
            format!(
                "Landau degeneracy {:e} cm^-2, model degeneracy {}, {:e} cm^-2 per level",
                j.landau_degeneracy_cm2, j.model_degeneracy, j.states_per_level_cm2
            ),
            format!(
                "{:?} broadening width {:e} {eu}; only the {} converged levels count",
                j.shape, j.width, j.levels_used
            ),
        ],
    );
    let columns = vec![
        Column::new(
            cu.energy_column(),
            cu.energy_unit,
            "energy of the grid point",
        ),
        dos_column(lm, "", "cm2", "broadened density of states per area"),
        Column::new(
            "density_invcm2",
            "1/cm^2",
            "carrier density with the Fermi level at this energy, from neutrality",
        ),
    ];
    let mut rec = Vec::new();
    // the grid is in the output unit; the occupation is computed in the model's
    let to_model = 1.0 / lm.shown.energy_factor();
    for &(e, g) in &j.dos {
        let occ = Occupation {
            chemical_potential: e * to_model,
            thermal_energy: 0.0,
            broadening: ld.broadening,
            width: ld.width,
        };
        rec.push(vec![
            format!("{e:e}"),
            format!("{g:e}"),
            format!(
                "{:e}",
                per_cm2(lm.model.units(), carrier_density(ld, &occ, neutrality))
            ),
        ]);
    }
    csv_file(meta, columns, &rec)
}

pub(super) fn dos_plot_of(lm: &LoadedModel, j: &DosRecord) -> LinePlot {
    let eu = lm.shown.energy.label();
    let note = format!(
        "{}, {} {}; {:?} width {} {eu}; {} converged levels",
        lm.model.name(),
        j.field,
        lm.shown.field.label(),
        j.shape,
        fmt_num(j.width, 4),
        j.levels_used
    );
    let fermi = j.fermi.as_ref().map(|f| {
        (
            f.fermi_energy,
            format!(
                "dashed: Fermi level {} {eu} (nu = {}, n = {} cm^-2)",
                fmt_num(f.fermi_energy, 6),
                fmt_num(f.filling_factor, 4),
                fmt_num(f.density_cm2, 4)
            ),
        )
    });
    dos_plot(
        lm,
        format!("Density of states: {}", lm.model.name()),
        "cm^2",
        &j.dos,
        fermi,
        note,
    )
}

/// A DOS curve against energy, scaled by a power of ten so that the axis labels stay short,
/// with an optional dashed Fermi level.
pub(super) fn dos_plot(
    lm: &LoadedModel,
    title: String,
    per: &str,
    dos: &[(f64, f64)],
    fermi: Option<(f64, String)>,
    note: String,
) -> LinePlot {
    let eu = lm.shown.energy.label();
    let peak = dos.iter().map(|p| p.1).fold(0.0, f64::max);
    let p = if peak > 0.0 {
        peak.log10().floor()
    } else {
        0.0
    };
    let unit = 10f64.powf(p);
    let mut curves = vec![Curve {
        color_key: 0,
        points: dos.iter().map(|&(e, g)| (e, g / unit)).collect(),
        ..Curve::default()
    }];
    let mut legend = vec![LegendEntry::solid(
        "density of states",
        ladderfan::plot::colour::categorical(0),
    )];
    if let Some((ef, text)) = fermi {
        curves.push(Curve {
            stroke: Stroke::Dashed,
            points: vec![(ef, 0.0), (ef, peak / unit)],
            ..Curve::default()
        });
        legend.push(LegendEntry::dashed("Fermi level"));
        return LinePlot {
            title,
            x_label: format!("E [{eu}]"),
            y_label: format!("DOS [1e{p} / ({eu} {per})]"),
            curves,
            notes: vec![note, text],
            legend,
            labels: false,
            split_jumps: false,
            split_at_zero_x: false,
            ..LinePlot::default()
        };
    }
    LinePlot {
        title,
        x_label: format!("E [{eu}]"),
        y_label: format!("DOS [1e{p} / ({eu} {per})]"),
        curves,
        notes: vec![note],
        legend,
        labels: false,
        split_jumps: false,
        split_at_zero_x: false,
        ..LinePlot::default()
    }
}

pub(super) fn dos3d_csv(lm: &LoadedModel, j: &DosRecord, v: &VolumeRecord) -> CliResult<CsvFile> {
    let eu = energy_unit(lm);
    let u = lm.model.units();
    let fu = lm.shown.field.label();
    let cu = common::column_units(lm);
    let meta = csv_meta(
        lm,
        "dos",
        vec![
            format!("energies relative to {} {eu}", j.reference_energy),
            format!(
                "density_invcm3: at {} K with the chemical potential at E, counted from {}",
                v.temperature_k,
                v.neutrality_energy
                    .map(|e| format!("neutrality at {e} {eu}"))
                    .unwrap_or_else(|| "an empty band".into())
            ),
        ],
        vec![
            "per volume (kz-integrated)".into(),
            format!(
                "field {} {}, cutoff {}, kz integrated over [{}, {}] {} with {} points (trapezoid; \
                 last grid change {:e} of the peak DOS)",
                j.field,
                fu,
                j.cutoff,
                -v.kz_max,
                v.kz_max,
                u.wavenumber_unit(),
                v.kz_points,
                v.quadrature_change
            ),
            format!(
                "{:?} broadening width {:e} {eu}; only converged levels count",
                j.shape, j.width
            ),
        ],
    );
    let columns = vec![
        Column::new(
            cu.energy_column(),
            cu.energy_unit,
            "energy of the grid point",
        ),
        dos_column(lm, "", "cm3", "broadened density of states per volume"),
        Column::new(
            "density_invcm3",
            "1/cm^3",
            "carrier density with the chemical potential at this energy, from neutrality",
        ),
    ];
    let rec: Vec<Vec<String>> = v
        .dos
        .iter()
        .map(|&(e, g, n)| vec![format!("{e:e}"), format!("{g:e}"), format!("{n:e}")])
        .collect();
    csv_file(meta, columns, &rec)
}

pub(super) fn dos3d_plot(lm: &LoadedModel, j: &DosRecord, v: &VolumeRecord) -> LinePlot {
    let eu = lm.shown.energy.label();
    let note = format!(
        "{}, {} {}; {:?} width {} {eu}; kz integrated, {} points",
        lm.model.name(),
        j.field,
        lm.shown.field.label(),
        j.shape,
        fmt_num(j.width, 4),
        v.kz_points
    );
    let fermi = v.fermi.as_ref().map(|f| {
        (
            f.fermi_energy,
            format!(
                "dashed: Fermi level {} {eu} (n = {} cm^-3)",
                fmt_num(f.fermi_energy, 6),
                fmt_num(f.density_cm3, 4)
            ),
        )
    });
    let dos: Vec<(f64, f64)> = v.dos.iter().map(|&(e, g, _)| (e, g)).collect();
    dos_plot(
        lm,
        format!("Density of states per volume: {}", lm.model.name()),
        "cm^3",
        &dos,
        fermi,
        note,
    )
}

pub(super) fn fermi3d_csv(lm: &LoadedModel, j: &DosRecord, v: &VolumeRecord) -> CliResult<CsvFile> {
    let eu = energy_unit(lm);
    let cu = common::column_units(lm);
    let meta = csv_meta(
        lm,
        "dos",
        vec![format!("energies relative to {} {eu}", j.reference_energy)],
        vec![
            "Fermi level sweep per volume (kz-integrated)".into(),
            format!(
                "density {:e} cm^-3 from neutrality, {:?} broadening, temperature {} K, cutoff {}",
                v.fermi.map(|f| f.density_cm3).unwrap_or(f64::NAN),
                j.shape,
                v.temperature_k,
                j.cutoff
            ),
        ],
    );
    let columns = vec![
        Column::new(cu.field_column(), cu.field_unit, "magnetic field B"),
        Column::new(
            cu.energy_valued("fermi_energy"),
            cu.energy_unit,
            "Fermi level at the fixed density",
        ),
        dos_column(
            lm,
            "at_fermi_",
            "cm3",
            "density of states per volume at the Fermi level",
        ),
        Column::new("kz_points", "1", "kz quadrature points used"),
    ];
    let rec: Vec<Vec<String>> = v
        .fermi_sweep
        .iter()
        .map(|p| {
            vec![
                format!("{:e}", p.field),
                format!("{:e}", p.fermi_energy),
                format!("{:e}", p.dos_at_fermi_per_cm3),
                p.kz_points.to_string(),
            ]
        })
        .collect();
    csv_file(meta, columns, &rec)
}

pub(super) fn fermi_csv(lm: &LoadedModel, j: &DosRecord) -> CliResult<CsvFile> {
    let eu = energy_unit(lm);
    let cu = common::column_units(lm);
    let meta = csv_meta(
        lm,
        "dos",
        vec![
            format!("energies relative to {} {eu}", j.reference_energy),
            "density from neutrality (electrons minus holes)".into(),
        ],
        vec![format!(
            "Fermi level sweep; {:?} broadening, temperature {} K",
            j.shape, j.temperature_k
        )],
    );
    let columns = vec![
        Column::new(cu.field_column(), cu.field_unit, "magnetic field B"),
        Column::new(
            cu.energy_valued("fermi_energy"),
            cu.energy_unit,
            "Fermi level at the fixed density",
        ),
        Column::new("filling_factor", "1", "filling factor nu"),
        Column::new(
            "density_invcm2",
            "1/cm^2",
            "carrier density from neutrality",
        ),
        dos_column(
            lm,
            "at_fermi_",
            "cm2",
            "density of states per area at the Fermi level",
        ),
        Column::new(
            cu.energy_valued("width"),
            cu.energy_unit,
            "broadening width",
        ),
    ];
    let rec: Vec<Vec<String>> = j
        .fermi_sweep
        .iter()
        .map(|f| {
            vec![
                format!("{:e}", f.field),
                format!("{:e}", f.fermi_energy),
                format!("{:e}", f.filling_factor),
                format!("{:e}", f.density_cm2),
                format!("{:e}", f.dos_at_fermi_per_cm2),
                format!("{:e}", f.width),
            ]
        })
        .collect();
    csv_file(meta, columns, &rec)
}

/// The converged Landau levels of a Fermi-level sweep as the figure draws them, built point by
/// point: each genuine level's energy is added to its track's line ([`TrackKey`] from
/// [`labels::track_keys`], as [`labels::tracks`] groups a whole sweep), thinned to the figure's
/// columns ([`Decimation`]), so the sweep's spectra can be dropped as they arrive and the
/// memory does not grow with the number of fields. A level that is not converged, or a track
/// absent at a point, breaks its line there.
pub(super) struct LevelLines {
    decimation: Decimation,
    lines: BTreeMap<TrackKey, DecimatedLine>,
}

impl LevelLines {
    /// Lines for a sweep over `fields` (in point order, model units).
    pub(super) fn new(fields: &[f64]) -> Self {
        LevelLines {
            decimation: Decimation::new(fields, FIGURE_COLUMNS),
            lines: BTreeMap::new(),
        }
    }

    /// The decimation of the lines (for the memory estimate: values held per line).
    pub(super) fn decimation(&self) -> &Decimation {
        &self.decimation
    }

    /// Add the converged genuine levels of point `index` (ascending over calls).
    pub(super) fn add(&mut self, index: usize, s: &Spectrum) {
        let d = &self.decimation;
        for (key, l) in labels::track_keys(s).into_iter().zip(&s.levels) {
            if labels::is_artefact(l) || !l.is_converged() {
                continue;
            }
            self.lines
                .entry(key)
                .or_default()
                .push(d, index, s.point.field, l.energy, f64::NAN);
        }
    }

    /// The finished lines, (field, energy) in model units, in track-key order.
    pub(super) fn finish(self) -> Vec<Vec<(f64, f64)>> {
        let d = self.decimation;
        self.lines.into_values().map(|l| l.finish(&d).0).collect()
    }
}

/// The Fermi level of a `--b-max` sweep against the field over the converged Landau levels
/// (`lines`: [`LevelLines::finish`], model units), framed around the Fermi levels.
pub(super) fn fermi_plot(
    lm: &LoadedModel,
    j: &DosRecord,
    lines: &[Vec<(f64, f64)>],
    broadening: &Broadening,
) -> LinePlot {
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
    let ef: Vec<(f64, f64)> = j
        .fermi_sweep
        .iter()
        .map(|f| (f.field, f.fermi_energy))
        .collect();
    let (lo, hi) = ef
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.1), b.max(p.1))
        });
    // the lines and the broadening are in the model's units, the record in the output's
    let (ke, kf) = (lm.shown.energy_factor(), lm.shown.field_factor());
    let pad = 0.25 * (hi - lo).max(1e-9 * ke) + 2.0 * j.width;
    let (ylo, yhi) = (lo - pad, hi + pad);
    // the converged Landau levels that cross the window, thin, in track-key order; the
    // renderer clips each segment at the frame (a thinned steep line may have no kept point
    // inside the window and still cross it)
    let crosses = |l: &[(f64, f64)]| {
        l.iter().any(|p| p.1 * ke > ylo && p.1 * ke < yhi)
            || l.windows(2).any(|w| {
                let (a, b) = (w[0].1 * ke, w[1].1 * ke);
                a.min(b) < yhi && a.max(b) > ylo
            })
    };
    let mut curves: Vec<Curve> = lines
        .iter()
        .filter(|l| crosses(l))
        .map(|l| Curve {
            colour: Some(Rgb(150, 150, 150)),
            width: 1.0,
            stroke: Stroke::Dotted,
            points: l.iter().map(|p| (p.0 * kf, p.1 * ke)).collect(),
            ..Curve::default()
        })
        .collect();
    curves.push(Curve {
        color_key: 1,
        width: 2.4,
        points: ef,
        ..Curve::default()
    });
    LinePlot {
        title: format!("Fermi level at fixed density: {}", lm.model.name()),
        x_label: format!("B [{}]", fu),
        y_label: format!("E [{eu}]"),
        curves,
        y_range: Some((ylo, yhi)),
        notes: vec![format!(
            "solid: Fermi level, n = {} cm^-2, T = {} K, {:?} width {}",
            fmt_num(
                j.fermi_sweep.first().map(|f| f.density_cm2).unwrap_or(0.0),
                4
            ),
            j.temperature_k,
            j.shape,
            match broadening.scaling {
                WidthScaling::Constant => format!("{} {eu}", fmt_num(broadening.width * ke, 4)),
                WidthScaling::SqrtField { reference_field } => format!(
                    "{} {eu} x sqrt(B / {} {})",
                    fmt_num(broadening.width * ke, 4),
                    reference_field * kf,
                    fu
                ),
            }
        )],
        legend: vec![
            LegendEntry::solid("Fermi level", ladderfan::plot::colour::categorical(1)),
            LegendEntry {
                text: "Landau levels (converged)".into(),
                colour: Some(Rgb(150, 150, 150)),
                stroke: Stroke::Dotted,
            },
        ],
        labels: false,
        split_jumps: false,
        ..LinePlot::default()
    }
}

/// The kz-integrated Fermi level at fixed 3D density against the field.
pub(super) fn fermi3d_plot(lm: &LoadedModel, j: &DosRecord, v: &VolumeRecord) -> LinePlot {
    let eu = lm.shown.energy.label();
    let fu = lm.shown.field.label();
    LinePlot {
        title: format!(
            "Fermi level at fixed density per volume: {}",
            lm.model.name()
        ),
        x_label: format!("B [{}]", fu),
        y_label: format!("E_F [{eu}]"),
        curves: vec![Curve {
            color_key: 1,
            width: 2.4,
            markers: v.fermi_sweep.len() < 40,
            points: v
                .fermi_sweep
                .iter()
                .map(|p| (p.field, p.fermi_energy))
                .collect(),
            ..Curve::default()
        }],
        notes: vec![format!(
            "{}; n = {} cm^-3, T = {} K, {:?} broadening, cutoff {}, kz integrated",
            lm.model.name(),
            fmt_num(v.fermi.map(|f| f.density_cm3).unwrap_or(f64::NAN), 4),
            v.temperature_k,
            j.shape,
            j.cutoff
        )],
        legend: vec![LegendEntry::solid(
            "Fermi level (kz integrated)",
            ladderfan::plot::colour::categorical(1),
        )],
        labels: false,
        split_jumps: false,
        ..LinePlot::default()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ladderfan::{models, sweep};

    /// The spectra of a sweep of `n` fields from 1 to 8 T of the built-in dirac2d model.
    fn spectra(n: usize, cutoff: usize) -> (Vec<f64>, Vec<Spectrum>) {
        let m = models::dirac2d(models::Dirac2dParams::default()).unwrap();
        let fields: Vec<f64> = (0..n)
            .map(|i| 1.0 + 7.0 * i as f64 / (n - 1) as f64)
            .collect();
        let pts: Vec<FieldPoint> = fields.iter().map(|&b| FieldPoint::field(b)).collect();
        let s = sweep::run(&m, &pts, &Settings::with_cutoff(cutoff)).unwrap();
        (fields, s)
    }

    /// The converged points of each track of the whole sweep with at least one, in key order.
    fn whole_sweep_lines(spectra: &[Spectrum]) -> Vec<Vec<(f64, f64, bool)>> {
        labels::tracks(spectra)
            .into_iter()
            .filter(|t| t.points.iter().any(|p| p.converged))
            .map(|t| {
                t.points
                    .iter()
                    .map(|p| (p.field, p.energy, p.converged))
                    .collect()
            })
            .collect()
    }

    #[test]
    fn level_lines_of_a_short_sweep_are_the_converged_tracks_point_by_point() {
        let (fields, spectra) = spectra(12, 60);
        let mut lines = LevelLines::new(&fields);
        for (i, s) in spectra.iter().enumerate() {
            lines.add(i, s);
        }
        let got = lines.finish();
        let want = whole_sweep_lines(&spectra);
        assert_eq!(got.len(), want.len());
        assert!(got.len() > 10, "{} lines", got.len());
        for (g, w) in got.iter().zip(&want) {
            // one value per field: the converged energy, NaN where the track is absent or
            // not converged
            assert_eq!(g.len(), fields.len());
            for (k, &(b, e)) in g.iter().enumerate() {
                assert_eq!(b, fields[k]);
                match w.iter().find(|p| p.0 == b && p.2) {
                    Some(p) => assert_eq!(e, p.1),
                    None => assert!(e.is_nan(), "field {b}: {e}"),
                }
            }
        }
    }

    #[test]
    fn level_lines_of_a_long_sweep_keep_each_columns_extremes_and_nothing_else() {
        let (fields, spectra) = spectra(1500, 24);
        let mut lines = LevelLines::new(&fields);
        let max = lines.decimation().max_values();
        for (i, s) in spectra.iter().enumerate() {
            lines.add(i, s);
        }
        let got = lines.finish();
        let want = whole_sweep_lines(&spectra);
        assert_eq!(got.len(), want.len());
        for (g, w) in got.iter().zip(&want) {
            assert!(g.len() <= max, "{} values, at most {max}", g.len());
            let converged: Vec<(f64, f64)> = w.iter().filter(|p| p.2).map(|p| (p.0, p.1)).collect();
            // every kept value is a converged point of the track
            for p in g.iter().filter(|p| p.1.is_finite()) {
                assert!(converged.contains(p), "{p:?} is not a point of the track");
            }
            // the track's lowest and highest converged energies are kept
            let lo = converged.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
            let hi = converged
                .iter()
                .map(|p| p.1)
                .fold(f64::NEG_INFINITY, f64::max);
            assert!(g.iter().any(|p| p.1 == lo) && g.iter().any(|p| p.1 == hi));
        }
    }
}
