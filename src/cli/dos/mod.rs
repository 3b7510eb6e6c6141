//! `ladderfan dos`: density of states at one field, the Fermi level and filling factor for a
//! carrier density, and (with `--b-max`) the Fermi level against the field.

use super::common::{
    self, bad_flag, csv_file, csv_meta, emit, emit_json, fmt_num, load_model, CliResult, CsvFile,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use super::progress::Progress;
use clap::{Args, ValueEnum};
use ladderfan::observables::dos::{
    from_per_cm2, per_cm2, Broadening, LevelDensity, LineShape, WidthScaling,
};
use ladderfan::observables::filling::{
    carrier_density, fermi_level, fermi_sweep_stream, FermiSettings, FermiSolution, Neutrality,
    Occupation,
};
use ladderfan::observables::volume::{
    fermi_sweep_with as volume_fermi_sweep, from_per_cm3, per_cm3, VolumeDensity, VolumeSettings,
};
use ladderfan::plot::{Curve, LegendEntry, LinePlot, Rgb, Stroke};
use ladderfan::records::meta::Column;
use ladderfan::records::{
    DosRecord, FermiRecord, ModelRecord, UnitsRecord, VolumeFermiRecord, VolumeFermiSweepRecord,
    VolumeRecord,
};
use ladderfan::{FieldPoint, Settings, Spectrum};

mod render;
use render::{
    dos3d_csv, dos3d_plot, dos_csv, dos_plot_of, fermi3d_csv, fermi3d_plot, fermi_csv, fermi_plot,
    summary, LevelLines,
};

/// Line shape flag.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ShapeFlag {
    /// Gaussian, width = standard deviation.
    Gaussian,
    /// Lorentzian, width = half width at half maximum.
    Lorentzian,
}

/// Broadening, temperature, density and neutrality flags (shared with `optics`).
#[derive(Debug, Clone, Args)]
pub struct FermiArgs {
    /// Line shape of each broadened level.
    #[arg(long, value_enum, default_value_t = ShapeFlag::Gaussian)]
    pub shape: ShapeFlag,
    /// Broadening width in the model's energy unit (default: 5 % of the typical Landau spacing
    /// at --field).
    #[arg(long, allow_negative_numbers = true)]
    pub width: Option<f64>,
    /// Let the width grow as sqrt(|B| / B_REF) (B_REF in the model's field unit).
    #[arg(long, value_name = "B_REF")]
    pub width_sqrt_b: Option<f64>,
    /// Carrier density from neutrality in cm^-2 (negative: holes), e.g. 1e12.
    #[arg(long, allow_negative_numbers = true, conflicts_with = "filling")]
    pub density_cm2: Option<f64>,
    /// Filling factor nu = n h/(|q| e B) at --field instead of a density (single field only).
    #[arg(long, allow_negative_numbers = true)]
    pub filling: Option<f64>,
    /// Temperature in kelvin (Fermi-Dirac occupation).
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub temperature: f64,
    /// Charge neutrality: `auto` (empty band for spectra bounded below, else E = 0 absolute),
    /// `empty`, or an energy in the model's unit relative to the reference energy.
    #[arg(long, default_value = "auto", allow_hyphen_values = true)]
    pub neutrality: String,
}

impl FermiArgs {
    /// The broadening for a spectrum whose typical Landau spacing is `scale`.
    pub fn broadening(&self, scale: f64) -> CliResult<Broadening> {
        let width = common::finite_flag("--width", self.width.unwrap_or(0.05 * scale))?;
        if width <= 0.0 {
            return Err(bad_flag(
                "--width",
                format!("{width}: the width must be positive (model energy unit)"),
            ));
        }
        let scaling = match self.width_sqrt_b {
            None => WidthScaling::Constant,
            Some(b) if b.is_finite() && b > 0.0 => WidthScaling::SqrtField { reference_field: b },
            Some(b) => {
                return Err(bad_flag(
                    "--width-sqrt-b",
                    format!("{b}: give a positive reference field"),
                ))
            }
        };
        Ok(Broadening {
            shape: match self.shape {
                ShapeFlag::Gaussian => LineShape::Gaussian,
                ShapeFlag::Lorentzian => LineShape::Lorentzian,
            },
            width,
            scaling,
        })
    }

    /// The neutrality choice.
    pub fn neutrality(&self) -> CliResult<Neutrality> {
        match self.neutrality.trim() {
            "auto" => Ok(Neutrality::Auto),
            "empty" => Ok(Neutrality::EmptyBand),
            s => s
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .map(Neutrality::Energy)
                .ok_or_else(|| {
                    bad_flag(
                        "--neutrality",
                        format!("'{s}' is not auto, empty or a finite energy"),
                    )
                }),
        }
    }

    /// The temperature, checked.
    pub fn temperature(&self) -> CliResult<f64> {
        let t = common::finite_flag("--temperature", self.temperature)?;
        if t < 0.0 {
            return Err(bad_flag(
                "--temperature",
                format!("{t} K; give 0 or a positive temperature"),
            ));
        }
        Ok(t)
    }

    /// Carrier density in 1/(model length unit)^2 at `field`, if one was asked for.
    pub fn density(&self, lm: &LoadedModel, field: f64) -> CliResult<Option<f64>> {
        let u = lm.model.units();
        if let Some(n) = self.density_cm2 {
            let n = common::finite_flag("--density-cm2", n)?;
            return Ok(Some(from_per_cm2(u, n)));
        }
        if let Some(nu) = self.filling {
            let nu = common::finite_flag("--filling", nu)?;
            let d = ladderfan::observables::dos::landau_degeneracy_per_area(
                u,
                field,
                lm.model.charge(),
            );
            return Ok(Some(nu * d));
        }
        Ok(None)
    }

    /// Fermi settings for a density.
    pub fn settings(&self, density: f64, broadening: Broadening) -> CliResult<FermiSettings> {
        Ok(FermiSettings {
            carrier_density: density,
            temperature_k: self.temperature()?,
            broadening,
            neutrality: self.neutrality()?,
        })
    }
}

/// Flags of `ladderfan dos`.
#[derive(Debug, Clone, Args)]
pub struct DosArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    #[command(flatten)]
    pub solve: SolveArgs,
    #[command(flatten)]
    pub fermi: FermiArgs,
    /// Lower end of the DOS energy grid (default: 3 widths below the 12th level below the
    /// reference).
    #[arg(long, allow_negative_numbers = true)]
    pub emin: Option<f64>,
    /// Upper end of the DOS energy grid.
    #[arg(long, allow_negative_numbers = true)]
    pub emax: Option<f64>,
    /// Points of the DOS energy grid.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 2000)]
    pub energy_points: usize,
    /// Sweep the Fermi level from --b-min to --b-max at fixed --density-cm2 (or, with
    /// --kz-integrate, at fixed --density-cm3).
    /// A suffix picks the unit (`10T`, `2e-9Bc`); a plain number is in the model's unit.
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub b_max: Option<ladderfan::units::FieldValue>,
    /// Lowest field of the Fermi-level sweep (default: a tenth of --b-max).
    #[arg(long, allow_negative_numbers = true, requires = "b_max", value_parser = crate::cli::parse::parse_field)]
    pub b_min: Option<ladderfan::units::FieldValue>,
    /// Points of the Fermi-level sweep.
    #[arg(value_parser = crate::cli::common::parse_count, long, default_value_t = 200)]
    pub points: usize,
    /// 3D models: also integrate the kz sheets over kz, giving the DOS and carrier density per
    /// unit volume on the same energy grid (Gaussian lines only).
    #[arg(long)]
    pub kz_integrate: bool,
    /// Limit K of the kz integral (model wave-number unit); default: chosen so that no
    /// converged level at ±K or ±2K comes near the energy grid.
    #[arg(long, requires = "kz_integrate")]
    pub kz_max: Option<f64>,
    /// With --kz-integrate: the Fermi level for this 3D carrier density from neutrality, in
    /// cm^-3 (negative: holes).
    #[arg(long, allow_negative_numbers = true, requires = "kz_integrate")]
    pub density_cm3: Option<f64>,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Default DOS window: the 12 converged levels on each side of the reference energy, padded
/// by 3 widths.
fn default_window(ld: &LevelDensity, width: f64) -> (f64, f64) {
    let below: Vec<f64> = ld.energies.iter().copied().filter(|&e| e < 0.0).collect();
    let above: Vec<f64> = ld.energies.iter().copied().filter(|&e| e >= 0.0).collect();
    let lo = if below.len() >= 12 {
        below[below.len() - 12]
    } else {
        below.first().copied().unwrap_or(ld.window.0)
    };
    let hi = above
        .get(11)
        .copied()
        .or(above.last().copied())
        .unwrap_or(ld.window.1);
    (lo - 3.0 * width, hi + 3.0 * width)
}

/// Run `ladderfan dos`.
pub fn run(a: &DosArgs) -> CliResult {
    if a.energy_points > ladderfan::limits::MAX_ENERGY_POINTS {
        return Err(bad_flag(
            "--energy-points",
            format!(
                "{} points is more than the limit of {}; use fewer points (2000 resolve a \
                 line width of 1/1000 of the window)",
                a.energy_points,
                ladderfan::limits::MAX_ENERGY_POINTS
            ),
        ));
    }
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let u = lm.model.units();
    let (r, problem) = common::resolve_problem(
        &lm,
        &a.solve,
        common::default_field(&lm.model),
        common::Resolved::settings,
    )?;
    // the sweep's flags and memory are checked before anything is solved
    let sweep_fields = sweep_fields(a, &lm, &r)?;
    let spec = crate::cli::levels::solve(&problem)?;
    let broadening = a.fermi.broadening(spec.energy_scale)?;
    let ld = LevelDensity::new(&lm.model, &spec, broadening)?;
    let (emin, emax, curve) = dos_curve(a, &lm, &ld)?;
    let fermi = match a.fermi.density(&lm, r.field)? {
        Some(n) => Some(fermi_level(
            &lm.model,
            &spec,
            &a.fermi.settings(n, broadening)?,
        )?),
        None => None,
    };
    let sweep = match &sweep_fields {
        Some(fields) if a.fermi.density_cm2.is_some() => {
            fermi_sweep_2d(a, &lm, &r, fields, broadening)?
        }
        _ => FermiSweep::default(),
    };
    let volume = if a.kz_integrate {
        Some(volume_json(
            a,
            &lm,
            &r,
            broadening,
            (emin, emax),
            sweep_fields.as_deref(),
        )?)
    } else {
        None
    };
    let json = DosRecord {
        command: "dos",
        model: ModelRecord::new(&lm.model, &lm.origin),
        units: UnitsRecord::new(&lm.model),
        field: r.field,
        kz: r.kz,
        cutoff: r.cutoff,
        reference_energy: spec.reference_energy,
        landau_degeneracy_cm2: per_cm2(u, ld.landau_degeneracy),
        model_degeneracy: ld.model_degeneracy,
        states_per_level_cm2: per_cm2(u, ld.per_level),
        shape: broadening.shape,
        width: ld.width,
        temperature_k: a.fermi.temperature()?,
        levels_used: ld.energies.len(),
        converged_window: ld.window,
        dos: curve.iter().map(|&(e, g)| (e, per_cm2(u, g))).collect(),
        fermi: fermi.as_ref().map(|f| FermiRecord::new(u, f)),
        fermi_sweep: sweep
            .solutions
            .iter()
            .map(|p| FermiRecord::new(u, p))
            .collect(),
        volume,
    }
    .in_units(lm.shown);
    let written = write_files(a, &lm, &json, &spec, &ld, &sweep.lines, &broadening)?;
    if a.output.json {
        return emit_json(&json);
    }
    let mut text = summary(&lm, &json);
    for p in written {
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&text)
}

/// The files of `--out`: the DOS (2D and, with `--kz-integrate`, 3D) and the Fermi-level
/// sweep, as CSV and SVG.
fn write_files(
    a: &DosArgs,
    lm: &LoadedModel,
    json: &DosRecord,
    spec: &Spectrum,
    ld: &LevelDensity,
    level_lines: &[Vec<(f64, f64)>],
    broadening: &Broadening,
) -> CliResult<Vec<std::path::PathBuf>> {
    let Some(dir) = &a.output.out else {
        return Ok(Vec::new());
    };
    let mut files = OutputFiles::default();
    let neutrality = a.fermi.neutrality()?.resolve(spec, ld);
    files.add_csv("dos.csv", dos_csv(lm, json, ld, neutrality)?)?;
    let formats = super::plot::formats(&a.output)?;
    let fig = |files: &mut OutputFiles, stem: &str, p: &LinePlot| {
        super::plot::add_figure(files, stem, p, &formats)
    };
    fig(&mut files, "dos", &dos_plot_of(lm, json))?;
    if let Some(v) = &json.volume {
        files.add_csv("dos3d.csv", dos3d_csv(lm, json, v)?)?;
        fig(&mut files, "dos3d", &dos3d_plot(lm, json, v))?;
        if !v.fermi_sweep.is_empty() {
            files.add_csv("fermi3d.csv", fermi3d_csv(lm, json, v)?)?;
            fig(&mut files, "fermi3d", &fermi3d_plot(lm, json, v))?;
        }
    }
    if !json.fermi_sweep.is_empty() {
        files.add_csv("fermi.csv", fermi_csv(lm, json)?)?;
        fig(
            &mut files,
            "fermi",
            &fermi_plot(lm, json, level_lines, broadening),
        )?;
    }
    files.write_all(dir)
}

/// The lower and upper end of the energy grid and the DOS on it, (energy, DOS) pairs.
type EnergyGrid = (f64, f64, Vec<(f64, f64)>);

/// The energy grid (flags or the converged window widened by three widths) and the DOS on it.
fn dos_curve(a: &DosArgs, lm: &LoadedModel, ld: &LevelDensity) -> CliResult<EnergyGrid> {
    let u = lm.model.units();
    let (wlo, whi) = default_window(ld, ld.width);
    let emin = common::finite_flag("--emin", a.emin.unwrap_or(wlo))?;
    let emax = common::finite_flag("--emax", a.emax.unwrap_or(whi))?;
    if emax <= emin || a.energy_points < 2 {
        return Err(bad_flag(
            "--emax",
            format!(
                "energy grid from {emin} to {emax} with {} points; need --emax > --emin and at least 2 points",
                a.energy_points
            ),
        ));
    }
    let curve = ld.curve(emin, emax, a.energy_points)?;
    if let Some(&(e, g)) = curve.iter().find(|p| !per_cm2(u, p.1).is_finite()) {
        // in the units the command shows (a DOS per energy divides by the energy factor)
        let (f, eu) = (lm.shown.energy_factor(), lm.shown.energy.label());
        return Err(common::CliError::Input(ladderfan::Error::BadNumber {
            name: format!("the DOS at {:e} {eu} in 1/({eu} cm^2)", e * f),
            value: per_cm2(u, g) / f,
            fix: format!(
                "the line width {:e} is too small for double precision (the peak height goes \
                 as 1/width); give a larger --width",
                ld.width
            ),
        }));
    }
    Ok((emin, emax, curve))
}

/// The fields of the `--b-max` sweep (checked: one sign, a fixed density given), `None`
/// without `--b-max`; for a 2D density (`--density-cm2`) the memory of the streamed sweep is
/// checked too (two batches of spectra in flight and the figure's thinned lines,
/// src/memory.rs), before anything is solved.
fn sweep_fields(
    a: &DosArgs,
    lm: &LoadedModel,
    r: &common::Resolved,
) -> CliResult<Option<Vec<f64>>> {
    let Some(values) = common::field_sweep_grid(lm, a.b_min, a.b_max, a.points)? else {
        return Ok(None);
    };
    let b_max = values.last().copied().unwrap_or(r.field);
    let per_volume = a.kz_integrate && a.density_cm3.is_some();
    if a.fermi.density_cm2.is_none() && !per_volume {
        return Err(bad_flag(
            "--b-max",
            "a Fermi-level sweep needs a fixed density: --density-cm2, or --kz-integrate with --density-cm3",
        ));
    }
    if a.fermi.density_cm2.is_some() {
        let (cutoff, mem) = common::resolve_trunc(lm, &a.solve.trunc)?;
        let n = values.len();
        let held_values = LevelLines::new(&values).decimation().max_values().min(n) as u64;
        common::check_memory(
            lm,
            "dos --b-max",
            "--points",
            FieldPoint {
                field: b_max,
                kz: r.kz,
            },
            &sweep_settings(cutoff, mem),
            &ladderfan::memory::Footprint::Stream {
                points: n as u64,
                in_flight: (2 * ladderfan::sweep::default_batch()).min(n) as u64,
                held_points: held_values,
                extra_per_level: ladderfan::memory::fermi_line_bytes(held_values),
                per_level: ladderfan::memory::FERMI_LINE_ENTRY_BYTES,
                buffer_bytes: 0,
            },
            None,
        )?;
    }
    Ok(Some(values))
}

/// What a 2D Fermi-level sweep (`--b-max` with `--density-cm2`) keeps: the solution at each
/// field and the converged levels thinned to the figure ([`LevelLines`]); the spectra are
/// dropped as the points finish.
#[derive(Default)]
struct FermiSweep {
    solutions: Vec<FermiSolution>,
    lines: Vec<Vec<(f64, f64)>>,
}

/// The Fermi level at fixed 2D density at every field of `fields`, streamed
/// ([`fermi_sweep_stream`]): memory flat in the number of fields.
/// Solver settings of a Fermi-level sweep over fields: energies, bounds and labels only (the
/// component weights are not read).
fn sweep_settings(cutoff: usize, memory_limit_mib: u64) -> Settings {
    let mut s = Settings::with_cutoff(cutoff);
    s.memory_limit_mib = memory_limit_mib;
    s
}

fn fermi_sweep_2d(
    a: &DosArgs,
    lm: &LoadedModel,
    r: &common::Resolved,
    fields: &[f64],
    broadening: Broadening,
) -> CliResult<FermiSweep> {
    let (cutoff, mem) = common::resolve_trunc(lm, &a.solve.trunc)?;
    // the grid runs from --b-min to --b-max
    let b_max = fields.last().copied().unwrap_or(r.field);
    let n = a.fermi.density(lm, b_max)?.unwrap_or(0.0);
    let pts: Vec<FieldPoint> = fields
        .iter()
        .map(|&field| FieldPoint { field, kz: r.kz })
        .collect();
    let s = sweep_settings(cutoff, mem);
    let fermi = a.fermi.settings(n, broadening)?;
    let mut lines = LevelLines::new(fields);
    let mut solutions = Vec::with_capacity(pts.len());
    let bar = Progress::new("dos --b-max", pts.len(), "fields");
    let swept = fermi_sweep_stream(&lm.model, &pts, &s, &fermi, &|| bar.tick(), &mut |i, p| {
        lines.add(i, &p.spectrum);
        solutions.push(p.solution);
        Ok(())
    });
    bar.finish();
    swept?;
    Ok(FermiSweep {
        solutions,
        lines: lines.finish(),
    })
}

/// The kz-integrated densities on the DOS energy grid, and the 3D Fermi level if asked for.
fn volume_json(
    a: &DosArgs,
    lm: &LoadedModel,
    r: &common::Resolved,
    broadening: Broadening,
    range: (f64, f64),
    sweep_fields: Option<&[f64]>,
) -> CliResult<VolumeRecord> {
    let u = lm.model.units();
    let mut vs = VolumeSettings::new(broadening, range);
    vs.temperature_k = a.fermi.temperature()?;
    vs.neutrality = a.fermi.neutrality()?;
    vs.kz_max = match a.kz_max {
        Some(k) => Some(common::finite_flag("--kz-max", k)?),
        None => None,
    };
    let s = r.settings();
    if broadening.shape != LineShape::Gaussian {
        return Err(bad_flag(
            "--shape",
            "kz-integrated densities need a Gaussian line: a Lorentzian's tails make the 3D \
             carrier density diverge with the kz limit; use --shape gaussian",
        ));
    }
    // the library says why a model cannot be integrated; the flag that asked for it is this one
    let v = Progress::while_running("dos --kz-integrate", || {
        VolumeDensity::compute(&lm.model, r.field, &s, &vs)
    })
    .map_err(|e| match e {
        ladderfan::Error::Unsupported(m) => bad_flag("--kz-integrate", m),
        e => e.into(),
    })?;
    let curve = v.curve(range.0, range.1, a.energy_points)?;
    let peak = curve.iter().map(|p| p.1).fold(0.0, f64::max);
    let fermi = match a.density_cm3 {
        Some(n) => {
            let n = common::finite_flag("--density-cm3", n)?;
            let ef = v.fermi_level(from_per_cm3(u, n))?;
            Some(VolumeFermiRecord {
                density_cm3: n,
                fermi_energy: ef,
                dos_at_fermi_per_cm3: per_cm3(u, v.dos(ef)),
            })
        }
        None => None,
    };
    let mut fermi_sweep = Vec::new();
    if let (Some(n), Some(fields)) = (a.density_cm3, sweep_fields) {
        let bar = Progress::new("dos --kz-integrate --b-max", fields.len(), "fields");
        let swept = volume_fermi_sweep(&lm.model, fields, &s, &vs, from_per_cm3(u, n), &|| {
            bar.tick()
        });
        bar.finish();
        let pts = swept?;
        fermi_sweep = pts
            .iter()
            .map(|p| VolumeFermiSweepRecord {
                field: p.field,
                fermi_energy: p.fermi_energy,
                dos_at_fermi_per_cm3: per_cm3(u, p.dos_at_fermi),
                kz_points: p.kz_points,
            })
            .collect();
    }
    Ok(VolumeRecord {
        fermi_sweep,
        kz_max: v.kz_max,
        kz_points: v.kz.len(),
        even_in_kz: v.even_in_kz,
        quadrature_change: v.quadrature_error / peak.max(f64::MIN_POSITIVE),
        temperature_k: vs.temperature_k,
        neutrality_energy: v.neutrality_energy,
        dos: curve
            .iter()
            .map(|&(e, g)| (e, per_cm3(u, g), per_cm3(u, v.carrier_density(e))))
            .collect(),
        fermi,
    })
}
