//! `ladderfan orbits`: the semiclassical picture of a model next to its exact levels: the
//! zero-field orbit at a Fermi energy (area, cyclotron mass, Berry phase), Onsager levels against
//! exact levels, and the index-vs-1/B fan an experiment would fit, with the DOS Fourier frequency.

use super::common::{self, emit, emit_json, load_model, CliResult, LoadedModel, ModelArgs};
use super::common::{csv_file, csv_meta, CsvFile, OutputArgs, OutputFiles};
use clap::Args;
use ladderfan::observables::dos::Broadening;
use ladderfan::records::meta::Column;
use ladderfan::records::UnitsRecord;
use ladderfan::semiclassics::fan::{
    crossings, exact_levels, fit_fan, onsager_frequency, predicted_intercept, FanSetup,
};
use ladderfan::semiclassics::fft::{dominant_frequency, dos_trace};
use ladderfan::semiclassics::figure::{fan_plot, levels_plot};
use ladderfan::semiclassics::onsager::{band_edge, semiclassical_levels, Quantisation};
use ladderfan::semiclassics::orbit::{
    area_slope, cyclotron_mass, energy_for_area, orbit, Orbit, Resolution,
};
use ladderfan::semiclassics::{Bands, Search};
use ladderfan::units::{FieldValue, OutputUnits, Units};
use serde::Serialize;
use std::f64::consts::PI;

/// Flags of `ladderfan orbits`.
#[derive(Debug, Clone, Args)]
pub struct OrbitsArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Band, counted from 0 (lowest) at the centre (default: the lowest band of the upper half).
    #[arg(long)]
    pub band: Option<usize>,
    /// Centre of the orbits, kx (band extremum), in the model's inverse length unit.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub center_kx: f64,
    /// Centre of the orbits, ky.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub center_ky: f64,
    /// Wave number along the field.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub kz: f64,
    /// Fermi energy in the model's energy unit.
    #[arg(long, allow_negative_numbers = true, conflicts_with = "density")]
    pub energy: Option<f64>,
    /// Carrier density in cm^-2 (lab units) or per (hbar/mc)^2 (natural units), counting the
    /// model's spin/valley degeneracy; sets the Fermi energy from the zero-field orbit.
    #[arg(long)]
    pub density: Option<f64>,
    /// Field of the level-by-level table: a plain number in the model's field unit, or with a
    /// suffix (`5T`, `1e-3Bc`) (default 5 T or 0.1 B_c).
    #[arg(long, allow_negative_numbers = true, value_parser = crate::cli::parse::parse_field)]
    pub field: Option<FieldValue>,
    /// Add the orbital magnetic moment of the Bloch states to the bands of the level table
    /// (the second first-order correction besides the Zeeman terms).
    #[arg(long)]
    pub orbital_moment: bool,
    /// Number of Onsager levels in the table (1 to 500).
    #[arg(long, default_value_t = 12)]
    pub levels: usize,
    /// Lowest |B| of the fan, model field unit or with a suffix (default F / 25, F the Onsager
    /// frequency).
    #[arg(long, value_parser = crate::cli::parse::parse_field)]
    pub b_min: Option<FieldValue>,
    /// Highest |B| of the fan, model field unit or with a suffix (default F / 3).
    #[arg(long, value_parser = crate::cli::parse::parse_field)]
    pub b_max: Option<FieldValue>,
    /// Lorentzian half width of the levels for the DOS, energy unit (default 0.15 hbar omega_c
    /// at the lowest field).
    #[arg(long)]
    pub broadening: Option<f64>,
    /// Orbital cutoff of the exact solves (default 4 F / B_min + 60).
    #[arg(long)]
    pub cutoff: Option<usize>,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The zero-field orbit at the Fermi energy.
#[derive(Debug, Serialize)]
struct OrbitRecord {
    fermi_energy: f64,
    band_edge: f64,
    area: f64,
    area_error: f64,
    area_slope: f64,
    cyclotron_mass: f64,
    mass_error: f64,
    berry_phase: f64,
    phase_error: f64,
    rays: usize,
    onsager_frequency: f64,
}

/// One row of the level table.
#[derive(Debug, Serialize)]
struct LevelRow {
    n: usize,
    semiclassical: f64,
    exact: f64,
    miss_over_spacing: f64,
}

/// The fan fit.
#[derive(Debug, Serialize)]
struct FanRecord {
    b_min: f64,
    b_max: f64,
    crossings: Vec<(usize, f64)>,
    frequency: f64,
    frequency_error: f64,
    intercept: f64,
    intercept_error: f64,
    predicted_intercept: f64,
    fft_frequency: f64,
    fft_uncertainty: f64,
    broadening: f64,
}

/// The whole result (JSON), in the output units of `units`.
#[derive(Debug, Serialize)]
struct OrbitsRecord {
    model: String,
    origin: String,
    units: UnitsRecord,
    band: usize,
    field: f64,
    orbital_moment: bool,
    orbit: OrbitRecord,
    levels: Vec<LevelRow>,
    fan: FanRecord,
}

impl OrbitsRecord {
    /// The record in the output units `o`: energies (Fermi energy, band edge, levels,
    /// broadening) times [`OutputUnits::energy_factor`], dA/dE divided by it, fields (table
    /// field, fan range, crossings, frequencies F and their errors) times
    /// [`OutputUnits::field_factor`]; areas, masses, phases and indices unchanged. Applied once,
    /// to a record in the model's units.
    fn in_units(mut self, o: OutputUnits) -> Self {
        let (e, f) = (o.energy_factor(), o.field_factor());
        self.units = self.units.shown(o);
        self.field *= f;
        let orbit = &mut self.orbit;
        orbit.fermi_energy *= e;
        orbit.band_edge *= e;
        orbit.area_slope /= e;
        orbit.onsager_frequency *= f;
        for l in &mut self.levels {
            l.semiclassical *= e;
            l.exact *= e;
        }
        let fan = &mut self.fan;
        fan.b_min *= f;
        fan.b_max *= f;
        for c in &mut fan.crossings {
            c.1 *= f;
        }
        fan.frequency *= f;
        fan.frequency_error *= f;
        fan.fft_frequency *= f;
        fan.fft_uncertainty *= f;
        fan.broadening *= e;
        self
    }
}

fn bad(flag: &str, m: &str) -> common::CliError {
    common::bad_flag(flag, m)
}

/// The Fermi energy from --energy or --density.
fn fermi_energy(a: &OrbitsArgs, lm: &LoadedModel, bands: &Bands, s: &Search) -> CliResult<f64> {
    let edge = band_edge(bands, s)?;
    if let Some(e) = a.energy {
        let e = common::finite_flag("--energy", e)?;
        if edge.direction * (e - edge.energy) <= 0.0 {
            let side = if edge.direction > 0.0 {
                "above"
            } else {
                "below"
            };
            return Err(bad(
                "--energy",
                &format!(
                    "{e} is not inside band {} (its edge at the centre is {}); give an energy                      {side} the edge, or another --band",
                    s.band, edge.energy
                ),
            ));
        }
        return Ok(e);
    }
    let n = a.density.ok_or_else(|| {
        bad(
            "--energy",
            "give the Fermi energy (--energy) or a density (--density)",
        )
    })?;
    let per_area = match lm.model.units() {
        Units::Lab => n * 1e-14,
        Units::Natural => n,
    };
    let target = 4.0 * PI * PI * per_area / f64::from(lm.model.degeneracy());
    let mut span = (bands.energy(s.band, s.center.0 + s.k_max, s.center.1)? - edge.energy).abs();
    for _ in 0..60 {
        let r = energy_for_area(bands, s, 0, target, edge.energy, edge.direction, span, 128);
        match r {
            Ok(e) => return Ok(e),
            Err(ladderfan::Error::BadNumber { .. }) => span *= 2.0,
            Err(e) => return Err(e.into()),
        }
    }
    Err(bad(
        "--density",
        "no orbit of that area in the band; give a smaller density",
    ))
}

fn zero_field_orbit(
    lm: &LoadedModel,
    s: &Search,
    a: &OrbitsArgs,
) -> CliResult<(Orbit, OrbitRecord)> {
    let bands = Bands::new(&lm.model, a.kz, 0.0)?;
    let ef = fermi_energy(a, lm, &bands, s)?;
    let edge = band_edge(&bands, s)?;
    let o = orbit(&bands, s, ef, 0, &Resolution::default())?;
    let h = 1e-2 * (ef - edge.energy).abs();
    let (da, da_err) = area_slope(&bands, s, ef, 0, h, o.contour.rays())?;
    let u = lm.model.units();
    let rec = OrbitRecord {
        fermi_energy: ef,
        band_edge: edge.energy,
        area: o.area,
        area_error: o.area_error,
        area_slope: da,
        cyclotron_mass: cyclotron_mass(u, da),
        mass_error: cyclotron_mass(u, da_err).abs(),
        berry_phase: o.berry_phase,
        phase_error: o.phase_error,
        rays: o.contour.rays(),
        onsager_frequency: onsager_frequency(u, o.area, lm.model.charge()),
    };
    Ok((o, rec))
}

/// Onsager levels at `field` against the nearest exact levels.
fn level_table(
    lm: &LoadedModel,
    s: &Search,
    a: &OrbitsArgs,
    field: f64,
    cutoff: usize,
) -> CliResult<Vec<LevelRow>> {
    let bands = if a.orbital_moment {
        Bands::with_orbital_moment(&lm.model, a.kz, field)?
    } else {
        Bands::new(&lm.model, a.kz, field)?
    };
    let q = Quantisation {
        units: lm.model.units(),
        charge: lm.model.charge(),
        field,
        index: 0,
        count: a.levels,
    };
    let semi = semiclassical_levels(&bands, s, &q, &Resolution::default()).map_err(|e| {
        if a.orbital_moment {
            bad(
                "--orbital-moment",
                &format!(
                    "{e}; the moment correction is first order in B and can bend the band near                      its edge at this field: use a lower --field"
                ),
            )
        } else {
            e.into()
        }
    })?;
    let span = semi.levels.iter().map(|l| l.energy);
    let lo = span.clone().fold(f64::INFINITY, f64::min);
    let hi = span.fold(f64::NEG_INFINITY, f64::max);
    let exact = exact_levels(&lm.model, field, a.kz, cutoff, (lo, hi))?;
    let rows = semi
        .levels
        .iter()
        .filter_map(|l| {
            let i = (0..exact.len()).min_by(|&x, &y| {
                (exact[x] - l.energy)
                    .abs()
                    .total_cmp(&(exact[y] - l.energy).abs())
            })?;
            let up = exact.get(i + 1).map(|e| e - exact[i]);
            let down = i.checked_sub(1).map(|j| exact[i] - exact[j]);
            let spacing = up.into_iter().chain(down).fold(f64::INFINITY, f64::min);
            Some(LevelRow {
                n: l.n,
                semiclassical: l.energy,
                exact: exact[i],
                miss_over_spacing: (l.energy - exact[i]).abs() / spacing,
            })
        })
        .collect();
    Ok(rows)
}

fn verdict(x: f64) -> &'static str {
    if x < 0.02 {
        "accurate"
    } else if x < 0.2 {
        "fair"
    } else {
        "fails"
    }
}

/// The fan: crossings, fit, prediction and the DOS Fourier frequency.
fn fan(
    lm: &LoadedModel,
    a: &OrbitsArgs,
    rec: &OrbitRecord,
    direction: f64,
    (b_min, b_max): (f64, f64),
    cutoff: usize,
) -> CliResult<FanRecord> {
    let setup = FanSetup {
        edge: rec.band_edge,
        direction,
        fermi_energy: rec.fermi_energy,
        kz: a.kz,
        cutoff,
    };
    let sign = common::default_field(&lm.model).signum();
    let c = crossings(&lm.model, &setup, sign * b_min, sign * b_max, 80)?;
    let fit = fit_fan(&c, 0)?;
    // hbar omega_c = 2 pi / (l_B^2 |dA/dE|) at the lowest field
    let hw_min =
        2.0 * PI * inverse_lb2(lm.model.units(), b_min, lm.model.charge()) / rec.area_slope.abs();
    let width = match a.broadening {
        Some(w) => common::finite_flag("--broadening", w)?,
        None => 0.15 * hw_min,
    };
    let tr = dos_trace(
        &lm.model,
        a.kz,
        rec.fermi_energy,
        &Broadening::lorentzian(width),
        (sign * b_min, sign * b_max),
        256,
        cutoff,
    )?;
    let peak = dominant_frequency(&tr, 0.3 * rec.onsager_frequency)?;
    let record = FanRecord {
        b_min,
        b_max,
        crossings: c.iter().map(|x| (x.index, x.field)).collect(),
        frequency: fit.slope,
        frequency_error: fit.slope_error,
        intercept: fit.intercept,
        intercept_error: fit.intercept_error,
        predicted_intercept: predicted_intercept(
            -(lm.model.charge() * sign * direction).signum() * rec.berry_phase,
            fit.intercept,
        ),
        fft_frequency: peak.frequency,
        fft_uncertainty: peak.uncertainty,
        broadening: width,
    };
    Ok(record)
}

/// 1 / l_B^2 at `field`.
fn inverse_lb2(u: Units, field: f64, charge: f64) -> f64 {
    let lb = u.magnetic_length(field, charge);
    1.0 / (lb * lb)
}

/// The default band: the lowest band of the upper half (the conduction band of a two-band
/// model; band 0 of a one-component model).
fn default_band(lm: &LoadedModel) -> usize {
    lm.model.dim() / 2
}

/// Run `ladderfan orbits`.
pub fn run(a: &OrbitsArgs) -> CliResult {
    let mut lm = load_model(&a.model)?;
    lm.show_in(&a.output)?;
    let u = lm.model.units();
    let band = a.band.unwrap_or_else(|| default_band(&lm));
    let s = Search {
        band,
        center: (
            common::finite_flag("--center-kx", a.center_kx)?,
            common::finite_flag("--center-ky", a.center_ky)?,
        ),
        k_max: match u {
            Units::Lab => 0.5,
            Units::Natural => 1.0,
        },
    };
    if a.levels == 0 || a.levels > 500 {
        return Err(bad(
            "--levels",
            "ask for 1 to 500 levels (each Onsager level costs a few contours)",
        ));
    }
    // three stages: the zero-field orbit, the level table, the fan of exact crossings
    let bar = super::progress::Progress::new("orbits", 3, "stages");
    let (_, rec) = zero_field_orbit(&lm, &s, a)?;
    bar.tick();
    let direction = band_edge(&Bands::new(&lm.model, a.kz, 0.0)?, &s)?.direction;
    let f = rec.onsager_frequency;
    let b_min = common::field_in(&lm, a.b_min).unwrap_or(f / 25.0);
    let b_max = common::field_in(&lm, a.b_max).unwrap_or(f / 3.0);
    let b_min = common::finite_flag("--b-min", b_min)?.abs();
    let b_max = common::finite_flag("--b-max", b_max)?.abs();
    if !(b_min > 0.0 && b_max > b_min) {
        return Err(bad("--b-min", "give 0 < --b-min < --b-max"));
    }
    let field = common::finite_flag(
        "--field",
        common::field_in(&lm, a.field)
            .or(lm.defaults.field)
            .unwrap_or(common::default_field(&lm.model)),
    )?;
    let n_max = (f / b_min).max(f / field.abs()).max(a.levels as f64);
    let cutoff = a.cutoff.unwrap_or((4.0 * n_max) as usize + 60);
    let rows = level_table(&lm, &s, a, field, cutoff)?;
    bar.tick();
    let fan_rec = fan(&lm, a, &rec, direction, (b_min, b_max), cutoff)?;
    bar.tick();
    bar.finish();
    let record = OrbitsRecord {
        model: lm.model.name().to_string(),
        origin: lm.origin.clone(),
        units: UnitsRecord::new(&lm.model),
        band,
        field,
        orbital_moment: a.orbital_moment,
        orbit: rec,
        levels: rows,
        fan: fan_rec,
    }
    .in_units(lm.shown);
    if let Some(dir) = &a.output.out {
        let mut files = OutputFiles::default();
        files.add_csv("orbits_levels.csv", levels_csv(&lm, &record)?)?;
        files.add_csv("orbits_fan.csv", fan_csv(&lm, &record)?)?;
        let pts: Vec<(f64, f64)> = record
            .fan
            .crossings
            .iter()
            .map(|&(n, field)| (1.0 / field.abs(), n as f64))
            .collect();
        let formats = super::plot::formats(&a.output)?;
        let fan = fan_plot(
            &pts,
            record.fan.frequency,
            record.fan.intercept,
            record.fan.predicted_intercept,
            &record.units.field,
        );
        super::plot::add_figure(&mut files, "orbits_fan", &fan, &formats)?;
        let ex: Vec<(f64, f64)> = record
            .levels
            .iter()
            .map(|r| (r.n as f64, r.exact))
            .collect();
        let se: Vec<(f64, f64)> = record
            .levels
            .iter()
            .map(|r| (r.n as f64, r.semiclassical))
            .collect();
        let levels = levels_plot(&ex, &se, &record.units.energy);
        super::plot::add_figure(&mut files, "orbits_levels", &levels, &formats)?;
        files.write_all(dir)?;
    }
    if a.output.json {
        emit_json(&record)
    } else {
        emit(&to_text(&record))
    }
}

/// `orbits_levels.csv`: exact against Onsager levels, level by level; model and point in the
/// sidecar.
fn levels_csv(lm: &LoadedModel, r: &OrbitsRecord) -> CliResult<CsvFile> {
    let cu = common::column_units(lm);
    let e = cu.energy_unit;
    let meta = csv_meta(
        lm,
        "orbits",
        vec![format!(
            "energies absolute (not relative to the reference energy), {e}; Onsager levels with \
             the Berry phase{}",
            if r.orbital_moment {
                " and the orbital moment"
            } else {
                ""
            }
        )],
        vec![format!(
            "field {} {}, band {}",
            r.field, cu.field_unit, r.band
        )],
    );
    let columns = vec![
        Column::new("landau_index", "1", "Landau index n"),
        Column::new(cu.energy_column(), e, "exact level energy"),
        Column::new(
            cu.energy_valued("energy_semiclassical"),
            e,
            "Onsager (semiclassical) level energy",
        ),
        Column::new(
            "miss_over_spacing",
            "1",
            "(semiclassical - exact) over the local level spacing",
        ),
    ];
    let rows: Vec<Vec<String>> = r
        .levels
        .iter()
        .map(|l| {
            vec![
                l.n.to_string(),
                format!("{:e}", l.exact),
                format!("{:e}", l.semiclassical),
                format!("{:e}", l.miss_over_spacing),
            ]
        })
        .collect();
    csv_file(meta, columns, &rows)
}

/// `orbits_fan.csv`: the fields where exact level n crosses the Fermi energy.
fn fan_csv(lm: &LoadedModel, r: &OrbitsRecord) -> CliResult<CsvFile> {
    let cu = common::column_units(lm);
    let meta = csv_meta(
        lm,
        "orbits",
        vec!["index n of the exact level crossing the Fermi energy at that field".into()],
        vec![format!(
            "fit n = F/B + beta: F = {} {}, beta = {}",
            r.fan.frequency, cu.field_unit, r.fan.intercept
        )],
    );
    let columns = vec![
        Column::new("landau_index", "1", "Landau index n of the crossing level"),
        Column::new(cu.field_column(), cu.field_unit, "field of the crossing"),
        Column::new(
            format!("inverse_field_per_{}", cu.field),
            format!("1/{}", cu.field_unit),
            "1/|B| of the crossing",
        ),
    ];
    let rows: Vec<Vec<String>> = r
        .fan
        .crossings
        .iter()
        .map(|(n, f)| {
            vec![
                n.to_string(),
                format!("{f:e}"),
                format!("{:e}", 1.0 / f.abs()),
            ]
        })
        .collect();
    csv_file(meta, columns, &rows)
}

fn to_text(r: &OrbitsRecord) -> String {
    let (eu, lu, fu) = (&r.units.energy, &r.units.length, &r.units.field);
    let mass_unit = match r.units.system {
        Units::Lab => "m_e",
        Units::Natural => "m",
    };
    let o = &r.orbit;
    // significant digits, not fixed decimals: the same text reads right in meV, eV or K
    let g = |x: f64, sig: usize| common::fmt_num(x, sig);
    let mut t = format!("model: {} ({}), band {}\n", r.model, r.origin, r.band);
    t.push_str(&format!("units: {}\n", r.units.header));
    t.push_str(&format!(
        "zero-field orbit at E_F = {} {eu} (band edge {} {eu}), {} rays:\n",
        g(o.fermi_energy, 7),
        g(o.band_edge, 7),
        o.rays
    ));
    t.push_str(&format!(
        "  area A = {:.9e} 1/{lu}^2 (+- {:.1e})\n  cyclotron mass m* = {:.7} {mass_unit} (+- {:.1e})\n",
        o.area, o.area_error, o.cyclotron_mass, o.mass_error
    ));
    t.push_str(&format!(
        "  Berry phase {:.6} rad = {:.6} pi (+- {:.1e} rad, modulo 2 pi)\n  Onsager frequency F = hbar A / (2 pi e) = {} {fu}\n",
        o.berry_phase,
        o.berry_phase / PI,
        o.phase_error,
        g(o.onsager_frequency, 7)
    ));
    let moment = if r.orbital_moment {
        ", orbital moment"
    } else {
        "; no orbital moment"
    };
    t.push_str(&format!(
        "levels at B = {} {fu}: Onsager (with Berry phase, Zeeman terms{moment}) against exact, {eu}\n",
        g(r.field, 7)
    ));
    t.push_str(&format!(
        "  {:>4} {:>14} {:>14} {:>13}  verdict\n",
        "n", "E_semi", "E_exact", "miss/spacing"
    ));
    for l in &r.levels {
        t.push_str(&format!(
            "  {:>4} {:>14} {:>14} {:>13.4}  {}\n",
            l.n,
            g(l.semiclassical, 8),
            g(l.exact, 8),
            l.miss_over_spacing,
            verdict(l.miss_over_spacing)
        ));
    }
    let f = &r.fan;
    t.push_str(&format!(
        "fan at E_F: {} exact crossings for |B| in [{}, {}] {fu}\n",
        f.crossings.len(),
        g(f.b_min, 5),
        g(f.b_max, 5)
    ));
    t.push_str(&format!(
        "  fit n = F/B + beta: F = {} +- {:.1e} {fu} (Onsager {}), beta = {:.4} +- {:.1e} (Berry-phase prediction {:.4})\n",
        g(f.frequency, 7), f.frequency_error, g(o.onsager_frequency, 7), f.intercept, f.intercept_error, f.predicted_intercept
    ));
    t.push_str(&format!(
        "  Fourier transform of the DOS at E_F against 1/B (Lorentzian half width {} {eu}, 256 fields): F = {} +- {} {fu}\n",
        g(f.broadening, 4), g(f.fft_frequency, 5), g(f.fft_uncertainty, 4)
    ));
    t
}
