//! `ladderfan dos`: density of states at one field, the Fermi level and filling factor for a
//! carrier density, and (with `--b-max`) the Fermi level against the field.

use super::common::{
    self, bad_flag, csv_header, csv_text, emit, emit_json, fmt_num, load_model, CliResult,
    LoadedModel, ModelArgs, OutputArgs, OutputFiles, SolveArgs,
};
use clap::{Args, ValueEnum};
use ladderfan::observables::dos::{
    from_per_cm2, per_cm2, Broadening, LevelDensity, LineShape, WidthScaling,
};
use ladderfan::observables::filling::{
    carrier_density, fermi_level, fermi_sweep, FermiSettings, FermiSolution, Neutrality, Occupation,
};
use ladderfan::observables::volume::{
    fermi_sweep as volume_fermi_sweep, from_per_cm3, per_cm3, VolumeDensity, VolumeSettings,
};
use ladderfan::plot::{line_plot, Curve, LinePlot, Stroke};
use ladderfan::records::{ModelRecord, UnitsRecord};
use ladderfan::{FieldPoint, Settings, Spectrum};
use serde::Serialize;

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
    #[arg(long, allow_negative_numbers = true)]
    pub b_max: Option<f64>,
    /// Lowest field of the Fermi-level sweep (default: a tenth of --b-max).
    #[arg(long, allow_negative_numbers = true, requires = "b_max")]
    pub b_min: Option<f64>,
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

/// The kz-integrated (per volume) part of the `dos` result.
#[derive(Debug, Serialize)]
pub struct VolumeJson {
    /// Limit K of the kz integral, model wave-number unit.
    pub kz_max: f64,
    /// kz points solved (on [-K, K], or [0, K] for a spectrum even in kz).
    pub kz_points: usize,
    /// Whether the spectrum is even in kz.
    pub even_in_kz: bool,
    /// Largest change of the DOS between the last two kz grids, relative to its largest value.
    pub quadrature_change: f64,
    /// Temperature of the density column, K.
    pub temperature_k: f64,
    /// Neutrality energy the density is counted from (null: band empty at neutrality).
    pub neutrality_energy: Option<f64>,
    /// (energy, DOS per (energy unit cm^3), carrier density from neutrality in cm^-3).
    pub dos: Vec<(f64, f64, f64)>,
    /// The Fermi level for --density-cm3.
    pub fermi: Option<VolumeFermiJson>,
    /// The Fermi level for --density-cm3 against the field, with --b-max.
    pub fermi_sweep: Vec<VolumeFermiSweepJson>,
}

/// One field of the 3D Fermi-level sweep.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct VolumeFermiSweepJson {
    /// Field.
    pub field: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// DOS there, 1/(energy unit cm^3).
    pub dos_at_fermi_per_cm3: f64,
    /// kz points needed at this field.
    pub kz_points: usize,
}

/// Fermi level for a 3D density.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct VolumeFermiJson {
    /// Carrier density from neutrality, cm^-3.
    pub density_cm3: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// DOS there, 1/(energy unit cm^3).
    pub dos_at_fermi_per_cm3: f64,
}

/// One Fermi-level point in the JSON result.
#[derive(Debug, Clone, Serialize)]
pub struct FermiJson {
    /// Field.
    pub field: f64,
    /// Fermi level relative to the reference energy.
    pub fermi_energy: f64,
    /// Filling factor nu = n h / (|q| e B).
    pub filling_factor: f64,
    /// Carrier density from neutrality, cm^-2.
    pub density_cm2: f64,
    /// DOS at the Fermi level, 1/(energy unit cm^2).
    pub dos_at_fermi_per_cm2: f64,
    /// Broadening width there.
    pub width: f64,
    /// Neutrality energy used (null: band empty at neutrality).
    pub neutrality_energy: Option<f64>,
}

impl FermiJson {
    /// From a solution (densities converted to cm^-2).
    pub fn new(u: ladderfan::units::Units, s: &FermiSolution) -> Self {
        FermiJson {
            field: s.field,
            fermi_energy: s.fermi_energy,
            filling_factor: s.filling_factor,
            density_cm2: per_cm2(u, s.carrier_density),
            dos_at_fermi_per_cm2: per_cm2(u, s.dos_at_fermi),
            width: s.width,
            neutrality_energy: s.neutrality_energy,
        }
    }
}

/// The JSON result of `dos`.
#[derive(Debug, Serialize)]
pub struct DosJson {
    /// Always `dos`.
    pub command: &'static str,
    /// The model.
    pub model: ModelRecord,
    /// Units.
    pub units: UnitsRecord,
    /// Field.
    pub field: f64,
    /// kz (a 3D model's DOS is that of one kz sheet).
    pub kz: f64,
    /// Cutoff.
    pub cutoff: usize,
    /// Energies are relative to this.
    pub reference_energy: f64,
    /// Landau degeneracy |qB|/h, cm^-2.
    pub landau_degeneracy_cm2: f64,
    /// The model's extra degeneracy g.
    pub model_degeneracy: u32,
    /// States per level, g |qB|/h, cm^-2.
    pub states_per_level_cm2: f64,
    /// Line shape.
    pub shape: LineShape,
    /// Width at this field, model energy unit.
    pub width: f64,
    /// Temperature, K.
    pub temperature_k: f64,
    /// Number of converged levels used (unconverged ones never count).
    pub levels_used: usize,
    /// Energy window of the converged levels.
    pub converged_window: (f64, f64),
    /// DOS grid: energy and DOS in 1/(energy unit cm^2).
    pub dos: Vec<(f64, f64)>,
    /// Fermi level at this field, when a density or filling was given.
    pub fermi: Option<FermiJson>,
    /// Fermi level against field, when --b-max was given.
    pub fermi_sweep: Vec<FermiJson>,
    /// Densities per unit volume, with --kz-integrate.
    pub volume: Option<VolumeJson>,
}

fn spectrum(lm: &LoadedModel, point: FieldPoint, cutoff: usize, mem: u64) -> CliResult<Spectrum> {
    let mut s = Settings::with_cutoff(cutoff);
    s.memory_limit_mib = mem;
    common::finite_spectrum(Spectrum::compute(&lm.model, point, &s)?)
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
    let lm = load_model(&a.model)?;
    let u = lm.model.units();
    let r = common::resolve(&lm, &a.solve, common::default_field(&lm.model))?;
    let spec = spectrum(&lm, r.point(), r.cutoff, r.memory_limit_mib)?;
    let broadening = a.fermi.broadening(spec.energy_scale)?;
    let ld = LevelDensity::new(&lm.model, &spec, broadening)?;
    let (wlo, whi) = default_window(&ld, ld.width);
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
        return Err(common::CliError::Input(ladderfan::Error::BadNumber {
            name: format!("the DOS at {e:e} {} in 1/(meV cm^2)", u.energy_unit()),
            value: per_cm2(u, g),
            fix: format!(
                "the line width {:e} is too small for double precision (the peak height goes \
                 as 1/width); give a larger --width",
                ld.width
            ),
        }));
    }
    let fermi = match a.fermi.density(&lm, r.field)? {
        Some(n) => Some(fermi_level(
            &lm.model,
            &spec,
            &a.fermi.settings(n, broadening)?,
        )?),
        None => None,
    };
    let mut sweep_points = Vec::new();
    let mut sweep_fields = None;
    if let Some(b_max) = a.b_max {
        let b_max = common::finite_flag("--b-max", b_max)?;
        let b_min = common::finite_flag("--b-min", a.b_min.unwrap_or(b_max / 10.0))?;
        let values = common::grid_values("--b-min", b_min, b_max, a.points, common::Grid::Linear)?;
        if values.contains(&0.0) || b_min.signum() != b_max.signum() {
            return Err(bad_flag(
                "--b-min",
                "the sweep crosses B = 0, where there are no Landau levels; choose --b-min and --b-max of one sign",
            ));
        }
        let per_volume = a.kz_integrate && a.density_cm3.is_some();
        if a.fermi.density_cm2.is_none() && !per_volume {
            return Err(bad_flag(
                "--b-max",
                "a Fermi-level sweep needs a fixed density: --density-cm2, or --kz-integrate with --density-cm3",
            ));
        }
        if a.fermi.density_cm2.is_some() {
            let (cutoff, mem) = common::resolve_trunc(&lm, &a.solve.trunc)?;
            let n = a.fermi.density(&lm, b_max)?.unwrap_or(0.0);
            let pts: Vec<FieldPoint> = values
                .iter()
                .map(|&field| FieldPoint { field, kz: r.kz })
                .collect();
            // every point's spectrum is kept with its Fermi level (src/memory.rs)
            common::check_memory(
                &lm,
                "dos --b-max",
                "--points",
                FieldPoint {
                    field: b_max,
                    kz: r.kz,
                },
                cutoff,
                mem,
                &ladderfan::memory::Footprint::Sweep {
                    points: pts.len() as u64,
                    extra_per_level: 0,
                },
                None,
            )?;
            let mut s = Settings::with_cutoff(cutoff);
            s.memory_limit_mib = mem;
            sweep_points = fermi_sweep(&lm.model, &pts, &s, &a.fermi.settings(n, broadening)?)?;
        }
        sweep_fields = Some(values);
    }
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
    let json = DosJson {
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
        fermi: fermi.as_ref().map(|f| FermiJson::new(u, f)),
        fermi_sweep: sweep_points
            .iter()
            .map(|p| FermiJson::new(u, &p.solution))
            .collect(),
        volume,
    };
    let mut written = Vec::new();
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        let neutrality = a.fermi.neutrality()?.resolve(&spec, &ld);
        files.add("dos.csv", dos_csv(&lm, &json, &ld, neutrality)?);
        files.add("dos.svg", dos_svg(&lm, &json)?);
        if let Some(v) = &json.volume {
            files.add("dos3d.csv", dos3d_csv(&lm, &json, v)?);
            files.add("dos3d.svg", dos3d_svg(&lm, &json, v)?);
            if !v.fermi_sweep.is_empty() {
                files.add("fermi3d.csv", fermi3d_csv(&lm, &json, v)?);
            }
        }
        if !sweep_points.is_empty() {
            files.add("fermi.csv", fermi_csv(&lm, &json)?);
            let spectra: Vec<&Spectrum> = sweep_points.iter().map(|p| &p.spectrum).collect();
            files.add("fermi.svg", fermi_svg(&lm, &json, &spectra, &broadening)?);
        }
        written = files.write_all(dir)?;
    }
    if a.output.json {
        return emit_json(&json);
    }
    let mut text = summary(&lm, &json);
    for p in written {
        text.push_str(&format!("wrote {}\n", p.display()));
    }
    emit(&text)
}

fn energy_unit(lm: &LoadedModel) -> String {
    lm.model.units().energy_unit().replace(' ', "")
}

fn summary(lm: &LoadedModel, j: &DosJson) -> String {
    let u = lm.model.units();
    let eu = u.energy_unit();
    let mut s = format!(
        "model: {} ({}), field {} {}, kz {} {}, cutoff {}\n",
        lm.model.name(),
        lm.origin,
        j.field,
        u.field_unit(),
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
        Some(v) => {
            s.push_str(&format!(
                "kz-integrated (per volume): kz limit {} {}, {} kz points{}, last grid change {:.1e} of the peak DOS\n",
                fmt_num(v.kz_max, 6),
                u.wavenumber_unit(),
                v.kz_points,
                if v.even_in_kz { " (spectrum even in kz: kz >= 0 solved)" } else { "" },
                v.quadrature_change
            ));
            let peak = v.dos.iter().map(|p| p.1).fold(0.0, f64::max);
            s.push_str(&format!(
                "  DOS per volume up to {} /({eu} cm^3) on the grid; density from neutrality {} to {} cm^-3 at {} K\n",
                fmt_num(peak, 5),
                fmt_num(v.dos.first().map(|p| p.2).unwrap_or(0.0), 5),
                fmt_num(v.dos.last().map(|p| p.2).unwrap_or(0.0), 5),
                v.temperature_k
            ));
            if let (Some(first), Some(last)) = (v.fermi_sweep.first(), v.fermi_sweep.last()) {
                s.push_str(&format!(
                    "  3D Fermi-level sweep: {} fields from {} to {} {}; E_F from {} to {} {eu}\n",
                    v.fermi_sweep.len(),
                    first.field,
                    last.field,
                    u.field_unit(),
                    fmt_num(first.fermi_energy, 6),
                    fmt_num(last.fermi_energy, 6)
                ));
            }
            if let Some(f) = &v.fermi {
                s.push_str(&format!(
                    "  density {} cm^-3: Fermi level {} {eu}, DOS there {} /({eu} cm^3)\n",
                    fmt_num(f.density_cm3, 6),
                    fmt_num(f.fermi_energy, 8),
                    fmt_num(f.dos_at_fermi_per_cm3, 5)
                ));
            }
        }
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
            u.field_unit(),
            fmt_num(first.filling_factor, 5),
            fmt_num(last.filling_factor, 5)
        ));
    }
    s
}

fn dos_csv(
    lm: &LoadedModel,
    j: &DosJson,
    ld: &LevelDensity,
    neutrality: Option<f64>,
) -> CliResult<String> {
    let eu = energy_unit(lm);
    let header = csv_header(
        lm,
        "dos",
        &[
            format!(
                "field {} {}, kz {}, cutoff {}",
                j.field,
                lm.model.units().field_unit(),
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
            format!("energies relative to {} {eu}", j.reference_energy),
            format!(
                "density_from_neutrality: n(E) at T = 0 with the Fermi level at E, counted from {} \
                 (electrons above minus holes below)",
                neutrality
                    .map(|e| format!("neutrality at {e} {eu}"))
                    .unwrap_or_else(|| "an empty band".into())
            ),
        ],
    );
    let mut rec = vec![vec![
        format!("energy_{eu}"),
        format!("dos_per_{eu}_per_cm2"),
        "density_from_neutrality_per_cm2".to_string(),
    ]];
    for &(e, g) in &j.dos {
        let occ = Occupation {
            chemical_potential: e,
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
    csv_text(&header, &rec)
}

fn dos_svg(lm: &LoadedModel, j: &DosJson) -> CliResult<String> {
    let eu = lm.model.units().energy_unit();
    let note = format!(
        "{}, {} {}; {:?} width {} {eu}; {} converged levels",
        lm.model.name(),
        j.field,
        lm.model.units().field_unit(),
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
fn dos_plot(
    lm: &LoadedModel,
    title: String,
    per: &str,
    dos: &[(f64, f64)],
    fermi: Option<(f64, String)>,
    note: String,
) -> CliResult<String> {
    let eu = lm.model.units().energy_unit();
    let peak = dos.iter().map(|p| p.1).fold(0.0, f64::max);
    let p = if peak > 0.0 {
        peak.log10().floor()
    } else {
        0.0
    };
    let unit = 10f64.powf(p);
    let mut notes = vec![note];
    let mut curves = vec![Curve {
        label: None,
        color_key: 1,
        stroke: Stroke::Solid,
        points: dos.iter().map(|&(e, g)| (e, g / unit)).collect(),
    }];
    if let Some((ef, text)) = fermi {
        curves.push(Curve {
            label: None,
            color_key: 0,
            stroke: Stroke::Dashed,
            points: vec![(ef, 0.0), (ef, peak / unit)],
        });
        notes.push(text);
    }
    Ok(line_plot(&LinePlot {
        title,
        x_label: format!("E [{eu}]"),
        y_label: format!("DOS [1e{p} / ({eu} {per})]"),
        curves,
        y_range: None,
        notes,
    })?)
}

/// The kz-integrated densities on the DOS energy grid, and the 3D Fermi level if asked for.
fn volume_json(
    a: &DosArgs,
    lm: &LoadedModel,
    r: &common::Resolved,
    broadening: Broadening,
    range: (f64, f64),
    sweep_fields: Option<&[f64]>,
) -> CliResult<VolumeJson> {
    let u = lm.model.units();
    let mut vs = VolumeSettings::new(broadening, range);
    vs.temperature_k = a.fermi.temperature()?;
    vs.neutrality = a.fermi.neutrality()?;
    vs.kz_max = match a.kz_max {
        Some(k) => Some(common::finite_flag("--kz-max", k)?),
        None => None,
    };
    let s = r.settings();
    let v = VolumeDensity::compute(&lm.model, r.field, &s, &vs)?;
    let curve = v.curve(range.0, range.1, a.energy_points)?;
    let peak = curve.iter().map(|p| p.1).fold(0.0, f64::max);
    let fermi = match a.density_cm3 {
        Some(n) => {
            let n = common::finite_flag("--density-cm3", n)?;
            let ef = v.fermi_level(from_per_cm3(u, n))?;
            Some(VolumeFermiJson {
                density_cm3: n,
                fermi_energy: ef,
                dos_at_fermi_per_cm3: per_cm3(u, v.dos(ef)),
            })
        }
        None => None,
    };
    let mut fermi_sweep = Vec::new();
    if let (Some(n), Some(fields)) = (a.density_cm3, sweep_fields) {
        let pts = volume_fermi_sweep(&lm.model, fields, &s, &vs, from_per_cm3(u, n))?;
        fermi_sweep = pts
            .iter()
            .map(|p| VolumeFermiSweepJson {
                field: p.field,
                fermi_energy: p.fermi_energy,
                dos_at_fermi_per_cm3: per_cm3(u, p.dos_at_fermi),
                kz_points: p.kz_points,
            })
            .collect();
    }
    Ok(VolumeJson {
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

fn dos3d_csv(lm: &LoadedModel, j: &DosJson, v: &VolumeJson) -> CliResult<String> {
    let eu = energy_unit(lm);
    let u = lm.model.units();
    let header = csv_header(
        lm,
        "dos per volume (kz-integrated)",
        &[
            format!(
                "field {} {}, cutoff {}, kz integrated over [{}, {}] {} with {} points (trapezoid, \
                 last grid change {:e} of the peak DOS)",
                j.field,
                u.field_unit(),
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
            format!("energies relative to {} {eu}", j.reference_energy),
            format!(
                "density_from_neutrality: at {} K with the chemical potential at E, counted from {}",
                v.temperature_k,
                v.neutrality_energy
                    .map(|e| format!("neutrality at {e} {eu}"))
                    .unwrap_or_else(|| "an empty band".into())
            ),
        ],
    );
    let mut rec = vec![vec![
        format!("energy_{eu}"),
        format!("dos_per_{eu}_per_cm3"),
        "density_from_neutrality_per_cm3".to_string(),
    ]];
    for &(e, g, n) in &v.dos {
        rec.push(vec![format!("{e:e}"), format!("{g:e}"), format!("{n:e}")]);
    }
    csv_text(&header, &rec)
}

fn dos3d_svg(lm: &LoadedModel, j: &DosJson, v: &VolumeJson) -> CliResult<String> {
    let eu = lm.model.units().energy_unit();
    let note = format!(
        "{}, {} {}; {:?} width {} {eu}; kz integrated, {} points",
        lm.model.name(),
        j.field,
        lm.model.units().field_unit(),
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

fn fermi3d_csv(lm: &LoadedModel, j: &DosJson, v: &VolumeJson) -> CliResult<String> {
    let eu = energy_unit(lm);
    let fu = lm.model.units().field_unit();
    let header = csv_header(
        lm,
        "fermi level sweep per volume (kz-integrated)",
        &[
            format!(
                "density {:e} cm^-3 from neutrality, {:?} broadening, temperature {} K, cutoff {}",
                v.fermi.map(|f| f.density_cm3).unwrap_or(f64::NAN),
                j.shape,
                v.temperature_k,
                j.cutoff
            ),
            format!("energies relative to {} {eu}", j.reference_energy),
        ],
    );
    let mut rec = vec![vec![
        format!("field_{fu}"),
        format!("fermi_energy_{eu}"),
        format!("dos_at_fermi_per_{eu}_per_cm3"),
        "kz_points".to_string(),
    ]];
    for p in &v.fermi_sweep {
        rec.push(vec![
            format!("{:e}", p.field),
            format!("{:e}", p.fermi_energy),
            format!("{:e}", p.dos_at_fermi_per_cm3),
            p.kz_points.to_string(),
        ]);
    }
    csv_text(&header, &rec)
}

fn fermi_csv(lm: &LoadedModel, j: &DosJson) -> CliResult<String> {
    let eu = energy_unit(lm);
    let fu = lm.model.units().field_unit();
    let header = csv_header(
        lm,
        "fermi level sweep",
        &[
            format!(
                "{:?} broadening, temperature {} K; density from neutrality (electrons minus holes)",
                j.shape, j.temperature_k
            ),
            format!("energies relative to {} {eu}", j.reference_energy),
        ],
    );
    let mut rec = vec![vec![
        format!("field_{fu}"),
        format!("fermi_energy_{eu}"),
        "filling_factor".to_string(),
        "density_per_cm2".into(),
        format!("dos_at_fermi_per_{eu}_per_cm2"),
        format!("width_{eu}"),
    ]];
    for f in &j.fermi_sweep {
        rec.push(vec![
            format!("{:e}", f.field),
            format!("{:e}", f.fermi_energy),
            format!("{:e}", f.filling_factor),
            format!("{:e}", f.density_cm2),
            format!("{:e}", f.dos_at_fermi_per_cm2),
            format!("{:e}", f.width),
        ]);
    }
    csv_text(&header, &rec)
}

fn fermi_svg(
    lm: &LoadedModel,
    j: &DosJson,
    spectra: &[&Spectrum],
    broadening: &Broadening,
) -> CliResult<String> {
    let u = lm.model.units();
    let eu = u.energy_unit();
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
    let pad = 0.25 * (hi - lo).max(1e-9) + 2.0 * j.width;
    let (ylo, yhi) = (lo - pad, hi + pad);
    // the converged Landau levels in the window, thin, followed by their track keys
    let owned: Vec<Spectrum> = spectra.iter().map(|s| (*s).clone()).collect();
    let mut curves: Vec<Curve> = ladderfan::observables::labels::tracks(&owned)
        .into_iter()
        .filter(|t| {
            t.points
                .iter()
                .any(|p| p.converged && p.energy > ylo && p.energy < yhi)
        })
        .map(|t| Curve {
            label: None,
            color_key: 3,
            stroke: Stroke::Dashed,
            points: t
                .points
                .iter()
                .map(|p| {
                    // outside the frame: break the line (plotters would clamp it to the border)
                    let inside = p.converged && p.energy > ylo && p.energy < yhi;
                    (p.field, if inside { p.energy } else { f64::NAN })
                })
                .collect(),
        })
        .collect();
    curves.push(Curve {
        label: None,
        color_key: 1,
        stroke: Stroke::Solid,
        points: ef,
    });
    Ok(line_plot(&LinePlot {
        title: format!("Fermi level at fixed density: {}", lm.model.name()),
        x_label: format!("B [{}]", u.field_unit()),
        y_label: format!("E [{eu}]"),
        curves,
        y_range: Some((ylo, yhi)),
        notes: vec![
            format!(
                "solid: Fermi level, n = {} cm^-2, T = {} K, {:?} width {}",
                fmt_num(
                    j.fermi_sweep.first().map(|f| f.density_cm2).unwrap_or(0.0),
                    4
                ),
                j.temperature_k,
                j.shape,
                match broadening.scaling {
                    WidthScaling::Constant => format!("{} {eu}", fmt_num(broadening.width, 4)),
                    WidthScaling::SqrtField { reference_field } => format!(
                        "{} {eu} x sqrt(B / {reference_field} {})",
                        fmt_num(broadening.width, 4),
                        u.field_unit()
                    ),
                }
            ),
            "dashed: Landau levels (converged)".into(),
        ],
    })?)
}
