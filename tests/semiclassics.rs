//! Semiclassics against closed forms and brute force: contour areas, cyclotron masses, Berry
//! phases, Onsager levels against exact levels, and the quantum-oscillation fan.
//! Every model parameter below is invented unless it is a default of a built-in model.

use ladderfan::model::Model;
use ladderfan::models::{self, Dirac2dParams, MassParams, RashbaParams};
use ladderfan::observables::dos::Broadening;
use ladderfan::semiclassics::fan::{
    crossings, exact_levels, fit_fan, fit_line, onsager_frequency, predicted_intercept, FanSetup,
};
use ladderfan::semiclassics::fft::{dominant_frequency, dos_trace};
use ladderfan::semiclassics::onsager::{
    semiclassical_level_near, semiclassical_levels, Quantisation, SemiSpectrum,
};
use ladderfan::semiclassics::orbit::{area_slope, cyclotron_mass, orbit, Orbit};
use ladderfan::semiclassics::{Bands, Resolution, Search};
use ladderfan::units::{hbar_v_mev_nm, Units, ELEMENTARY_CHARGE, HBAR, HBAR2_OVER_2ME_MEV_NM2};
use std::f64::consts::PI;

fn search(band: usize, k_max: f64) -> Search {
    Search {
        band,
        center: (0.0, 0.0),
        k_max,
    }
}

fn orbit_at(m: &Model, band: usize, e: f64, field: f64) -> Orbit {
    let b = Bands::new(m, 0.0, field).unwrap();
    orbit(&b, &search(band, 0.5), e, 0, &Resolution::default()).unwrap()
}

fn semi(m: &Model, band: usize, field: f64, count: usize) -> SemiSpectrum {
    let b = Bands::new(m, 0.0, field).unwrap();
    let q = Quantisation {
        units: m.units(),
        charge: m.charge(),
        field,
        index: 0,
        count,
    };
    semiclassical_levels(&b, &search(band, 0.5), &q, &Resolution::default()).unwrap()
}

/// Distance of a phase to a target modulo 2 pi.
fn phase_gap(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(2.0 * PI);
    d.min(2.0 * PI - d)
}

/// The nearest value of `list` to `e`.
fn nearest(list: &[f64], e: f64) -> f64 {
    list.iter()
        .copied()
        .min_by(|a, b| (a - e).abs().total_cmp(&(b - e).abs()))
        .unwrap()
}

// Schroedinger, m* = 0.1 m_e (invented), E_F = 20 meV: k_F^2 = 2 m* E_F / hbar^2, area pi k_F^2,
// m* recovered, Berry phase 0, levels hbar omega_c (n + 1/2) exactly, F = hbar k_F^2 / (2 e),
// intercept -1/2 (Onsager, Phil. Mag. 43, 1006 (1952); Lifshitz & Kosevich, JETP 2, 636 (1956);
// from memory).
#[test]
fn schrodinger_orbit_levels_and_fan() {
    let m = models::schrodinger(MassParams {
        mass_ratio: 0.1,
        charge: -1.0,
    })
    .unwrap();
    let ef = 20.0;
    let kf2 = ef * 0.1 / HBAR2_OVER_2ME_MEV_NM2;
    let o = orbit_at(&m, 0, ef, 0.0);
    assert!((o.area / (PI * kf2) - 1.0).abs() < 1e-9, "area {}", o.area);
    // a regular M-gon inscribed in a circle has area (M / 2 pi) sin(2 pi / M) of the circle's
    // (elementary geometry)
    let mm = o.contour.rays() as f64;
    let polygon = mm / (2.0 * PI) * (2.0 * PI / mm).sin();
    assert!((o.contour.shoelace_area() / o.area - polygon).abs() < 1e-9);
    assert!(phase_gap(o.berry_phase, 0.0) < 1e-9);
    let b = Bands::new(&m, 0.0, 0.0).unwrap();
    let (da, err) = area_slope(&b, &search(0, 0.5), ef, 0, 1e-2 * ef, 64).unwrap();
    let mass = cyclotron_mass(Units::Lab, da);
    assert!(
        (mass - 0.1).abs() < 1e-7 && err < 1e-6,
        "m* {mass} err {err}"
    );

    let s = semi(&m, 0, 2.0, 8);
    let hw = 2.0 * HBAR2_OVER_2ME_MEV_NM2 / 0.1 / (m.units().magnetic_length(2.0, -1.0)).powi(2);
    assert_eq!(s.levels.len(), 8);
    for l in &s.levels {
        let want = hw * (l.n as f64 + 0.5);
        assert!(
            (l.energy - want).abs() < 1e-7 * hw,
            "n {} {} vs {want}",
            l.n,
            l.energy
        );
    }

    // the fan: F = hbar k_F^2 / (2 e) in tesla (k_F in 1/m)
    let f_want = HBAR * kf2 * 1e18 / (2.0 * ELEMENTARY_CHARGE);
    assert!((onsager_frequency(Units::Lab, o.area, -1.0) / f_want - 1.0).abs() < 1e-9);
    let setup = FanSetup {
        edge: 0.0,
        direction: 1.0,
        fermi_energy: ef,
        kz: 0.0,
        cutoff: 80,
    };
    let c = crossings(&m, &setup, 1.5, 8.0, 40).unwrap();
    assert!(c.len() >= 8, "{} crossings", c.len());
    let fit = fit_fan(&c, 0).unwrap();
    assert!(
        (fit.slope / f_want - 1.0).abs() < 1e-8,
        "F {} vs {f_want}",
        fit.slope
    );
    assert!(
        (fit.intercept + 0.5).abs() < 1e-7,
        "intercept {}",
        fit.intercept
    );
    assert!((predicted_intercept(o.berry_phase, fit.intercept) + 0.5).abs() < 1e-9);

    // the DOS at E_F against 1/B oscillates at F (Lorentzian, half width 0.1 meV)
    let tr = dos_trace(
        &m,
        0.0,
        ef,
        &Broadening::lorentzian(0.1),
        (1.5, 8.0),
        256,
        80,
    )
    .unwrap();
    let p = dominant_frequency(&tr, 0.3 * f_want).unwrap();
    assert!(
        (p.frequency - f_want).abs() < p.uncertainty,
        "FFT F {} +- {} vs {f_want}",
        p.frequency,
        p.uncertainty
    );
}

// Massless 2D Dirac (built-in defaults, v = 1e6 m/s): Berry phase pi, semiclassical levels equal
// the exact sqrt(2 n) hbar v / l_B with the pi shift, fan intercept 0 (common practice in
// graphene quantum-oscillation work; McClure, Phys. Rev. 104, 666 (1956) for the levels).
#[test]
fn massless_dirac_phase_pi_levels_exact_intercept_zero() {
    let m = models::dirac2d(Dirac2dParams::default()).unwrap();
    let ef = 100.0;
    let o = orbit_at(&m, 1, ef, 0.0);
    let kf = ef / hbar_v_mev_nm(1e6);
    assert!((o.area / (PI * kf * kf) - 1.0).abs() < 1e-9);
    assert!(
        phase_gap(o.berry_phase, PI) < 1e-9,
        "phase {}",
        o.berry_phase
    );

    let field = 1.0;
    let s = semi(&m, 1, field, 10);
    let exact = exact_levels(&m, field, 0.0, 200, (-1.0, 200.0)).unwrap();
    assert!(s.levels[0].at_edge && s.levels[0].n == 0);
    for l in &s.levels {
        let e = nearest(&exact, l.energy);
        assert!(
            (l.energy - e).abs() < 1e-6 * e.abs().max(1.0),
            "n {}: {} vs {e}",
            l.n,
            l.energy
        );
    }

    let setup = FanSetup {
        edge: 0.0,
        direction: 1.0,
        fermi_energy: ef,
        kz: 0.0,
        cutoff: 120,
    };
    let c = crossings(&m, &setup, 0.5, 3.0, 40).unwrap();
    let fit = fit_fan(&c, 0).unwrap();
    let f_want = HBAR * kf * kf * 1e18 / (2.0 * ELEMENTARY_CHARGE);
    assert!(
        (fit.slope / f_want - 1.0).abs() < 1e-8,
        "F {} vs {f_want}",
        fit.slope
    );
    assert!(fit.intercept.abs() < 1e-7, "intercept {}", fit.intercept);
    assert!(predicted_intercept(o.berry_phase, 0.0).abs() < 1e-9);
}

// Gapped 2D Dirac, Delta = 20 meV (invented): conduction-band Berry phase pi (1 - Delta / E)
// (common practice: the pseudospin cone of half-angle theta has Berry phase pi (1 - cos theta),
// cos theta = Delta / E). Without the orbital moment Onsager misses the exact levels by
// (E_semi^2 - E_exact^2) / (2 hbar^2 v^2 / l_B^2) = Delta / (2 E) in index units, which falls
// as E grows: the semiclassical levels approach the exact ones.
#[test]
fn gapped_dirac_berry_phase_and_approach() {
    let delta = 20.0;
    let m = models::dirac2d(Dirac2dParams {
        mass_mev: delta,
        ..Dirac2dParams::default()
    })
    .unwrap();
    for e in [25.0, 60.0, 150.0] {
        let o = orbit_at(&m, 1, e, 0.0);
        let want = PI * (1.0 - delta / e);
        let got = phase_gap(o.berry_phase, want).min(phase_gap(o.berry_phase, -want));
        assert!(got < 1e-5, "E {e}: phase {} vs ±{want}", o.berry_phase);
    }
    let field = 1.0;
    let e1sq = {
        let hv = hbar_v_mev_nm(1e6);
        let lb = Units::Lab.magnetic_length(field, -1.0);
        2.0 * hv * hv / (lb * lb)
    };
    let s = semi(&m, 1, field, 16);
    let exact: Vec<f64> = exact_levels(&m, field, 0.0, 200, (-1.0, 400.0))
        .unwrap()
        .into_iter()
        .filter(|&e| e > 0.0)
        .collect();
    // q = -1, B > 0, valley +1: the unpaired level sits at -Delta, so no exact level is near
    // +Delta and the lowest semiclassical conduction level is the n = 1 one
    assert!(s.levels[0].energy > delta + 0.5 * (e1sq / (2.0 * delta)).min(10.0));
    let mut last = f64::INFINITY;
    for l in &s.levels {
        let e = nearest(&exact, l.energy);
        let miss = (l.energy * l.energy - e * e) / e1sq;
        assert!(
            (miss.abs() - delta / (2.0 * l.energy)).abs() < 0.02,
            "E {}: miss {miss} vs Delta/2E {}",
            l.energy,
            delta / (2.0 * l.energy)
        );
        assert!(miss.abs() < last + 1e-9);
        last = miss.abs();
    }
}

// Chiral bilayer (built-in defaults): Berry phase 2 pi, which a Wilson loop reads as 0 modulo
// 2 pi; the fan intercept of the exact levels E = hbar omega_c sqrt(n (n - 1)) tends to +1/2,
// the same modulo 1 as the trivial Schroedinger -1/2 (McCann & Fal'ko, PRL 96, 086805 (2006);
// the failure of the naive intercept: common practice).
#[test]
fn bilayer_two_pi_and_naive_intercept() {
    let m = models::bilayer(models::BilayerParams::default()).unwrap();
    let ef = 20.0;
    let o = orbit_at(&m, 1, ef, 0.0);
    assert!(
        phase_gap(o.berry_phase, 2.0 * PI) < 1e-6,
        "phase {}",
        o.berry_phase
    );
    // area of a parabolic band with m = 0.035 m_e
    let kf2 = ef * 0.035 / HBAR2_OVER_2ME_MEV_NM2;
    assert!((o.area / (PI * kf2) - 1.0).abs() < 1e-9);
    let setup = FanSetup {
        edge: 0.0,
        direction: 1.0,
        fermi_energy: ef,
        kz: 0.0,
        cutoff: 160,
    };
    let c = crossings(&m, &setup, 0.4, 2.0, 60).unwrap();
    let fit = fit_fan(&c, 8).unwrap();
    // exact crossings obey n (n - 1) = x^2 with x = F / B, F = hbar k_F^2 / (2 e): the same fit
    // of n = 1/2 + sqrt(1/4 + x^2) at the same fields gives the same line
    let f = HBAR * kf2 * 1e18 / (2.0 * ELEMENTARY_CHARGE);
    let xs: Vec<f64> = c
        .iter()
        .filter(|x| x.index >= 8)
        .map(|x| 1.0 / x.field)
        .collect();
    let ns: Vec<f64> = c
        .iter()
        .filter(|x| x.index >= 8)
        .map(|x| {
            let y = f / x.field;
            0.5 + (0.25 + y * y).sqrt()
        })
        .collect();
    let want = fit_line(&xs, &ns).unwrap();
    assert!(
        (fit.intercept - want.intercept).abs() < 1e-6,
        "{} vs {}",
        fit.intercept,
        want.intercept
    );
    // n = x + 1/2 + 1/(8x) + ...: over x = 8..15 the fit lands within 0.03 of +1/2 (0.524
    // measured), the same modulo 1 as the trivial -1/2 that the Wilson-loop phase (0 = 2 pi)
    // predicts: the intercept cannot reveal the 2 pi
    assert!(
        (fit.intercept - 0.5).abs() < 0.03,
        "intercept {}",
        fit.intercept
    );
    let naive = predicted_intercept(o.berry_phase, fit.intercept);
    assert!((naive - 0.5).abs() < 1e-6);
}

/// Brute-force area of {E_b(k) < e} (or > e when `below` is false) on an n x n grid over
/// [-k, k]^2: cell centres counted (midpoint rule on the indicator).
fn grid_area(b: &Bands, band: usize, e: f64, k: f64, n: usize, below: bool) -> f64 {
    let h = 2.0 * k / n as f64;
    let mut count = 0usize;
    for i in 0..n {
        for j in 0..n {
            let kx = -k + (i as f64 + 0.5) * h;
            let ky = -k + (j as f64 + 0.5) * h;
            let v = b.energy(band, kx, ky).unwrap();
            if (v < e) == below {
                count += 1;
            }
        }
    }
    count as f64 * h * h
}

/// Area and mass of contour 0 against the brute-force grid (n = 1000 cells a side): area to
/// 2e-3, mass (difference of grid areas over +-10 % in energy) to 2 %.
fn check_against_grid(b: &Bands, band: usize, e: f64, k: f64) {
    let o = orbit(b, &search(band, 0.5), e, 0, &Resolution::default()).unwrap();
    let brute = grid_area(b, band, e, k, 1000, true);
    assert!(
        (o.area / brute - 1.0).abs() < 2e-3,
        "area {} vs grid {brute}",
        o.area
    );
    let (da, _) = area_slope(b, &search(band, 0.5), e, 0, 0.05 * e, 256).unwrap();
    let de = 0.1 * e;
    let brute_da = (grid_area(b, band, e + de, k, 1000, true)
        - grid_area(b, band, e - de, k, 1000, true))
        / (2.0 * de);
    assert!(
        (da / brute_da - 1.0).abs() < 2e-2,
        "dA/dE {da} vs grid {brute_da}"
    );
}

// Rashba with Zeeman (built-in invented defaults m* = 0.05, alpha = 20 meV nm, g = -8) at 2 T and a
// hexagonally warped Dirac cone H = hbar v (kx sigma_y - ky sigma_x) + lambda (kx^3 - 3 kx ky^2)
// sigma_z (form: L. Fu, PRL 103, 266801 (2009), from memory; hbar v = 200 meV nm and lambda =
// 250 meV nm^3 invented): no closed form used; areas and masses against brute-force grid
// integration.
#[test]
fn rashba_zeeman_and_warping_against_grid() {
    let r = models::rashba(RashbaParams::default()).unwrap();
    let b = Bands::new(&r, 0.0, 2.0).unwrap();
    check_against_grid(&b, 0, 10.0, 1.0);
    check_against_grid(&b, 1, 10.0, 1.0);
    let w = warped();
    let b = Bands::new(&w, 0.0, 0.0).unwrap();
    check_against_grid(&b, 1, 120.0, 1.0);
}

fn warped() -> Model {
    use ladderfan::matrix::pauli;
    use ladderfan::Monomial;
    Model::builder("warped-cone (invented)", 2)
        .term(
            "hbar v kx sigma_y",
            200.0,
            pauli("y").unwrap(),
            Monomial::KX,
        )
        .term(
            "-hbar v ky sigma_x",
            -200.0,
            pauli("x").unwrap(),
            Monomial::KY,
        )
        .term(
            "lambda kx^3 sigma_z",
            250.0,
            pauli("z").unwrap(),
            Monomial::new(3, 0, 0),
        )
        .term(
            "-3 lambda kx ky^2 sigma_z",
            -750.0,
            pauli("z").unwrap(),
            Monomial::new(1, 2, 0),
        )
        .build()
        .unwrap()
}

/// |E_semi - E_exact| / local exact spacing for each semiclassical level (nearest exact level).
fn misses(s: &SemiSpectrum, exact: &[f64]) -> Vec<(f64, f64)> {
    s.levels
        .iter()
        .filter(|l| !l.at_edge)
        .map(|l| {
            let i = exact
                .iter()
                .enumerate()
                .min_by(|a, b| (a.1 - l.energy).abs().total_cmp(&(b.1 - l.energy).abs()))
                .unwrap()
                .0;
            let spacing = if i + 1 < exact.len() {
                exact[i + 1] - exact[i]
            } else {
                exact[i] - exact[i - 1]
            };
            (l.n as f64, (l.energy - exact[i]).abs() / spacing)
        })
        .collect()
}

/// Slope of log(miss) against log(n) over the points with n >= 3: the convergence rate.
fn rate(points: &[(f64, f64)]) -> f64 {
    let p: Vec<(f64, f64)> = points
        .iter()
        .filter(|p| p.0 >= 3.0 && p.1 > 0.0)
        .map(|p| (p.0.ln(), p.1.ln()))
        .collect();
    let n = p.len() as f64;
    let mx = p.iter().map(|q| q.0).sum::<f64>() / n;
    let my = p.iter().map(|q| q.1).sum::<f64>() / n;
    p.iter().map(|q| (q.0 - mx) * (q.1 - my)).sum::<f64>()
        / p.iter().map(|q| (q.0 - mx).powi(2)).sum::<f64>()
}

// The warped cone: at fixed energy (100 meV) and falling field, so that the orbit keeps its shape
// and the level index n ~ F / B grows, the exact level nearest 100 meV approaches the Onsager
// level; the miss in units of the level spacing falls like n^rate (measured and printed; the
// first correction to Onsager is one order higher in B, so common practice expects rate -1).
// At fixed field the miss instead grows slowly with n (the warping grows with energy).
#[test]
fn warping_exact_approaches_semiclassical() {
    let m = warped();
    let e_ref = 100.0;
    let zero = Bands::new(&m, 0.0, 0.0).unwrap();
    let o = orbit(&zero, &search(1, 0.5), e_ref, 0, &Resolution::default()).unwrap();
    let f = onsager_frequency(Units::Lab, o.area, -1.0);
    let mut p = Vec::new();
    for field in [4.0, 2.0, 1.0, 0.5] {
        let q = Quantisation {
            units: Units::Lab,
            charge: -1.0,
            field,
            index: 0,
            count: 1,
        };
        let b = Bands::new(&m, 0.0, field).unwrap();
        let l = semiclassical_level_near(&b, &search(1, 0.5), &q, &Resolution::default(), e_ref)
            .unwrap();
        let cutoff = (4.0 * f / field) as usize + 80;
        let exact =
            exact_levels(&m, field, 0.0, cutoff, (l.energy - 10.0, l.energy + 10.0)).unwrap();
        let i = exact
            .iter()
            .enumerate()
            .min_by(|a, b| (a.1 - l.energy).abs().total_cmp(&(b.1 - l.energy).abs()))
            .unwrap()
            .0;
        let spacing = (exact[i + 1] - exact[i]).min(exact[i] - exact[i - 1]);
        p.push((f / field, (l.energy - exact[i]).abs() / spacing));
    }
    let k = rate(&p);
    println!("warped cone at 100 meV: (n ~ F/B, miss/spacing) {p:?}; rate n^{k:.2}");
    for w in p.windows(2) {
        assert!(w[1].1 < w[0].1, "{w:?}");
    }
    assert!(k < -0.5, "rate {k}");
}

// Rashba + Zeeman at 1 T, upper spin branch: the exact levels (ladder diagonalization) approach the
// Onsager levels with Zeeman in the bands; rate measured and printed.
#[test]
fn rashba_exact_approaches_semiclassical() {
    let m = models::rashba(RashbaParams::default()).unwrap();
    let field = 1.0;
    let s = semi(&m, 1, field, 20);
    let exact: Vec<f64> = models::rashba::levels(
        RashbaParams::default(),
        ladderfan::FieldPoint::field(field),
        200,
    )
    .unwrap()
    .into_iter()
    .filter(|l| l.s == 1)
    .map(|l| l.energy)
    .collect();
    let p = misses(&s, &exact);
    let k = rate(&p);
    println!("rashba+zeeman: miss/spacing by n {p:?}; rate n^{k:.2}");
    // the orbital-moment-like hbar omega_c / 2 inside the exact square root is missing from the
    // bands, so the miss falls only like n^-0.4 here (measured): it falls monotonically from n = 1
    for w in p.windows(2).skip(1) {
        assert!(w[1].1 < w[0].1, "{w:?}");
    }
    assert!(p.last().unwrap().1 < 0.06);
    assert!(k < -0.3, "rate {k}");
}

/// Runs the binary; returns (exit code, stdout, stderr).
fn ladderfan(args: &[&str]) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_ladderfan"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

// `ladderfan orbits` at a density: spin-degenerate parabolic band (the built-in declares
// degeneracy 2), so F = n h / (2 e) (Onsager 1952; common practice), intercept -1/2; and its
// bad-input lines.
#[test]
fn orbits_command_density_and_errors() {
    let (code, out, err) = ladderfan(&[
        "orbits",
        "--builtin",
        "schrodinger",
        "--set",
        "mass_ratio=0.1",
        "--density",
        "1e12",
        "--field",
        "2",
        "--levels",
        "3",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let h = 2.0 * PI * HBAR;
    let f_want = 1e16 * h / (2.0 * ELEMENTARY_CHARGE);
    let f = v["fan"]["frequency"].as_f64().unwrap();
    let beta = v["fan"]["intercept"].as_f64().unwrap();
    assert!((f / f_want - 1.0).abs() < 1e-9, "F {f} vs {f_want}");
    assert!((beta + 0.5).abs() < 1e-7, "intercept {beta}");
    let onsager = v["orbit"]["onsager_frequency"].as_f64().unwrap();
    assert!((onsager / f_want - 1.0).abs() < 1e-9);

    for args in [
        &["orbits", "--builtin", "schrodinger"][..],
        &["orbits", "--builtin", "dirac2d", "--energy", "-5"][..],
        &[
            "orbits",
            "--builtin",
            "dirac2d",
            "--energy",
            "50",
            "--band",
            "7",
        ][..],
        &[
            "orbits",
            "--builtin",
            "dirac2d",
            "--energy",
            "50",
            "--levels",
            "100000",
        ][..],
        &[
            "orbits",
            "--builtin",
            "schrodinger",
            "--energy",
            "20",
            "--cutoff",
            "1000000000",
        ][..],
    ] {
        let (code, out, err) = ladderfan(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty());
        assert!(
            err.starts_with("ladderfan: error: ") && err.trim_end().lines().count() == 1,
            "{err}"
        );
    }
}

fn semi_with_moment(m: &Model, band: usize, field: f64, count: usize) -> SemiSpectrum {
    let b = Bands::with_orbital_moment(m, 0.0, field).unwrap();
    let q = Quantisation {
        units: m.units(),
        charge: m.charge(),
        field,
        index: 0,
        count,
    };
    semiclassical_levels(&b, &search(band, 0.5), &q, &Resolution::default()).unwrap()
}

// Gapped 2D Dirac (Delta = 60 meV, invented; at 1 T the moment shift (hbar v)^2 Delta /
// (2 E^2 l_B^2) stays below the band's own rise, (hbar v / l_B)^2 < Delta^2) with the orbital
// moment of the Bloch states in the bands: the shift cancels the Delta / (2 E) miss of
// Berry-phase-only Onsager to first order (Xiao, Chang & Niu, RMP 82, 1959 (2010), from memory),
// so the miss drops well below the Berry-only one at every level.
#[test]
fn gapped_dirac_orbital_moment_removes_the_miss() {
    let delta = 60.0;
    let m = models::dirac2d(Dirac2dParams {
        mass_mev: delta,
        ..Dirac2dParams::default()
    })
    .unwrap();
    let field = 1.0;
    let exact: Vec<f64> = exact_levels(&m, field, 0.0, 200, (-1.0, 400.0))
        .unwrap()
        .into_iter()
        .filter(|&e| e > 0.0)
        .collect();
    let without = misses(&semi(&m, 1, field, 12), &exact);
    let with = misses(&semi_with_moment(&m, 1, field, 12), &exact);
    println!("gapped Dirac, miss/spacing without {without:?}\n with moment {with:?}");
    for (a, b) in without.iter().zip(&with) {
        assert!(b.1 < 0.05 * a.1, "with moment {b:?} vs without {a:?}");
    }
}

// Rashba + Zeeman with the orbital moment, at fixed energy (15 meV) and falling field (away from
// the Zeeman gap at k = 0, where the moment shift is large and the bands lose their simple
// shape): the miss of the level nearest 15 meV against the exact upper-branch level (Bychkov &
// Rashba closed form), with and without the moment (measured and printed).
#[test]
fn rashba_orbital_moment_measured() {
    let p = RashbaParams::default();
    let m = models::rashba(p).unwrap();
    let mut rows = Vec::new();
    for field in [1.0, 0.5, 0.25] {
        let exact: Vec<f64> = models::rashba::levels(p, ladderfan::FieldPoint::field(field), 400)
            .unwrap()
            .into_iter()
            .filter(|l| l.s == 1)
            .map(|l| l.energy)
            .collect();
        let q = Quantisation {
            units: Units::Lab,
            charge: -1.0,
            field,
            index: 0,
            count: 1,
        };
        let miss = |b: &Bands| {
            let l = semiclassical_level_near(b, &search(1, 0.5), &q, &Resolution::default(), 15.0)
                .unwrap();
            let e = nearest(&exact, l.energy);
            let i = exact.iter().position(|&x| x == e).unwrap();
            (l.energy - e).abs() / (exact[i + 1] - exact[i])
        };
        let without = miss(&Bands::new(&m, 0.0, field).unwrap());
        let with = miss(&Bands::with_orbital_moment(&m, 0.0, field).unwrap());
        rows.push((field, without, with));
    }
    println!("rashba+zeeman at 15 meV: (B, miss/spacing without, with moment) {rows:?}");
    // measured: the moment changes the miss by under 10 % here (it does not remove it); with it
    // the miss still falls in proportion to B (the semiclassical limit)
    for w in rows.windows(2) {
        assert!(w[1].2 < 0.6 * w[0].2, "{w:?}");
    }
    for r in &rows {
        assert!((r.2 / r.1 - 1.0).abs() < 0.1, "{r:?}");
    }
}
