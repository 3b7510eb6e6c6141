//! Filling against direct quadrature: integrating the density of states to the Fermi level
//! returns the density (parabolic and Dirac bands), thermal occupation of Lorentzian lines and
//! the quantum oscillations of the Fermi level.
//! Every expected value names its source beside it; helpers in tests/common/observables.rs.

use ladderfan::models::{self, MassParams};
use ladderfan::observables::dos::{
    from_per_cm2, landau_degeneracy_per_area, Broadening, LevelDensity,
};
use ladderfan::observables::filling::{
    fermi_level, fermi_sweep, thermal_energy, FermiSettings, Neutrality,
};
use ladderfan::units::Units;
use ladderfan::{FieldPoint, Settings, Spectrum};

mod common;
use common::observables::*;

/// Simpson's rule on [a, b] with an even number of panels.
fn simpson(f: &dyn Fn(f64) -> f64, a: f64, b: f64, panels: usize) -> f64 {
    let n = panels + panels % 2;
    let h = (b - a) / n as f64;
    let mut s = f(a) + f(b);
    for k in 1..n {
        s += f(a + k as f64 * h) * if k % 2 == 1 { 4.0 } else { 2.0 };
    }
    s * h / 3.0
}

/// Fermi-Dirac occupation; at T = 0 a step that is 1 up to and including x = 0 (the
/// integrals below end at the Fermi level, where the limit from below is wanted).
fn fermi_dirac(x: f64, kt: f64) -> f64 {
    if kt == 0.0 {
        if x <= 0.0 {
            1.0
        } else {
            0.0
        }
    } else {
        1.0 / ((x / kt).exp() + 1.0)
    }
}

#[test]
fn integrating_the_dos_to_the_fermi_level_returns_the_density_parabolic() {
    // n = int g(E) f(E - mu) dE for a band empty at neutrality (definition of the DOS); the
    // integral is done here by Simpson's rule on the broadened DOS, independently of the
    // closed-form cumulative lines and the thermal quadrature the library uses.
    let mass = 0.067;
    let m = models::schrodinger(MassParams {
        mass_ratio: mass,
        charge: -1.0,
    })
    .unwrap();
    for field in [1.0, 4.0] {
        let spec =
            Spectrum::compute(&m, FieldPoint::field(field), &Settings::with_cutoff(120)).unwrap();
        let hw = cyclotron_mev(mass, field);
        let sigma = 0.2 * hw;
        let b = Broadening::gaussian(sigma);
        let dos = LevelDensity::new(&m, &spec, b).unwrap();
        for n_cm2 in [3e10, 2.2e11, 1e12] {
            for t_k in [0.0, 4.2, 40.0] {
                let target = from_per_cm2(Units::Lab, n_cm2);
                let fs = FermiSettings {
                    carrier_density: target,
                    temperature_k: t_k,
                    broadening: b,
                    neutrality: Neutrality::Auto,
                };
                let sol = fermi_level(&m, &spec, &fs).unwrap();
                let kt = thermal_energy(Units::Lab, t_k);
                let lo = spec.levels[0].energy - 12.0 * sigma;
                let hi = sol.fermi_energy + if t_k > 0.0 { 45.0 * kt } else { 0.0 };
                let integral = simpson(
                    &|e| dos.dos(e) * fermi_dirac(e - sol.fermi_energy, kt),
                    lo,
                    hi,
                    40_000,
                );
                assert!(
                    (integral / target - 1.0).abs() < 1e-7,
                    "B = {field}, n = {n_cm2}, T = {t_k}: {integral} vs {target}"
                );
                // filling factor nu = n h / (e B)
                let nu = target / landau_degeneracy_per_area(Units::Lab, field, -1.0);
                assert!((sol.filling_factor / nu - 1.0).abs() < 1e-9);
            }
        }
    }
}

#[test]
fn integrating_the_dos_to_the_fermi_level_returns_the_density_dirac() {
    // Dirac model, density from neutrality at E = 0: by the electron-hole symmetry of the
    // massless spectrum (McClure 1956) the broadened DOS integrates to the neutrality count at
    // E = 0, so n = int_0^mu g(E) dE at T = 0, negative for holes. Simpson's rule, independent
    // of the library's closed-form cumulative lines.
    let v = 1.0e6;
    let field = 8.0;
    let m = dirac(v, -1.0);
    let spec =
        Spectrum::compute(&m, FieldPoint::field(field), &Settings::with_cutoff(300)).unwrap();
    let e1 = dirac_e1_mev(v, field);
    for b in [
        Broadening::gaussian(0.1 * e1),
        Broadening::lorentzian(0.05 * e1),
    ] {
        let dos = LevelDensity::new(&m, &spec, b).unwrap();
        for n_cm2 in [-5e12, -1e11, 2e11, 3e12] {
            let target = from_per_cm2(Units::Lab, n_cm2);
            let fs = FermiSettings {
                carrier_density: target,
                temperature_k: 0.0,
                broadening: b,
                neutrality: Neutrality::Auto,
            };
            let sol = fermi_level(&m, &spec, &fs).unwrap();
            assert_eq!(sol.neutrality_energy, Some(0.0));
            let integral = simpson(&|e| dos.dos(e), 0.0, sol.fermi_energy, 40_000);
            // levels at +-E share a sector, so the converged set is symmetric too and
            // C(-E) + C(E) = 1 holds for both symmetric line shapes
            let tol = 1e-7;
            assert!(
                (integral / target - 1.0).abs() < tol,
                "{b:?} n = {n_cm2}: {integral} vs {target}"
            );
        }
    }
}

/// The library's thermal occupation of lines of shape `b` (width `w`) against the definition
/// o = int L(E - E_l) f(E - mu) dE, by Simpson's rule over +-(60 widths + 45 kT) with the tails
/// beyond added in closed form (f = 1 below, 0 above, up to e^-45): the line's cumulative
/// C(x) below, nothing above (a Lorentzian's atan tail, 1/2 - atan(X/w)/pi, or a Gaussian's
/// erfc tail, below 1e-300 there). `offsets` are E_l - mu, besides those of every test.
fn assert_thermal_occupation_matches_direct_quadrature(b: Broadening, w: f64, offsets: &[f64]) {
    let m = models::schrodinger(MassParams::default()).unwrap();
    let spec = Spectrum::compute(&m, FieldPoint::field(10.0), &Settings::with_cutoff(200)).unwrap();
    for t_k in [0.5, 5.0, 50.0] {
        let kt = thermal_energy(Units::Lab, t_k);
        let fs = FermiSettings {
            carrier_density: 2.5 * landau_degeneracy_per_area(Units::Lab, 10.0, -1.0),
            temperature_k: t_k,
            broadening: b,
            neutrality: Neutrality::EmptyBand,
        };
        let sol = fermi_level(&m, &spec, &fs).unwrap();
        let mu = sol.fermi_energy;
        for off in [-0.3, -0.01, 0.0, 0.02, 1.0].iter().chain(offsets) {
            let el = mu + off;
            let reach = 60.0 * w + 45.0 * kt;
            let (a, z) = (mu - reach, mu + reach);
            let core = simpson(
                &|e| b.line(e - el, w) * fermi_dirac(e - mu, kt),
                a,
                z,
                200_000,
            );
            let below = b.cumulative(a - el, w);
            let o = core + below;
            let lib = sol.occupation.of_level(el);
            assert!(
                (lib - o).abs() < 1e-8,
                "{:?} T = {t_k}, E_l - mu = {off}: {lib} vs {o}",
                b.shape
            );
        }
    }
}

#[test]
fn thermal_occupation_matches_direct_quadrature_for_lorentzian_lines() {
    assert_thermal_occupation_matches_direct_quadrature(Broadening::lorentzian(0.05), 0.05, &[]);
}

#[test]
fn thermal_occupation_matches_direct_quadrature_for_gaussian_lines() {
    // the library integrates a Gaussian line only within 9 w of its centre: levels just inside
    // and just outside that reach of mu, and far beyond the thermal window's edge
    let w = 0.05;
    let offsets = [9.0 * w * 0.99, -9.0 * w * 1.01, 2.0 * w, -0.7, 3.5];
    assert_thermal_occupation_matches_direct_quadrature(Broadening::gaussian(w), w, &offsets);
    // a line wider than kT at every temperature tested but the highest
    assert_thermal_occupation_matches_direct_quadrature(
        Broadening::gaussian(2.0),
        2.0,
        &[-15.0, 12.0],
    );
}

#[test]
fn quantum_oscillations_of_the_fermi_level() {
    // At fixed density the Fermi level pins to the partially filled Landau level and jumps
    // between levels at even filling factors (spin-degenerate band): at nu = 2k + 1 it sits at
    // the centre of level k, (k + 1/2) hbar omega_c (Landau 1930; Shubnikov-de Haas).
    let mass = 0.067;
    let m = models::schrodinger(MassParams {
        mass_ratio: mass,
        charge: -1.0,
    })
    .unwrap();
    let n = from_per_cm2(Units::Lab, 3e11);
    let unit_nu = landau_degeneracy_per_area(Units::Lab, 1.0, -1.0);
    // fields where nu = n / (eB/h) is 7, 5, 3
    let fields: Vec<f64> = [7.0, 5.0, 3.0]
        .iter()
        .map(|nu| n / (nu * unit_nu))
        .collect();
    let pts: Vec<FieldPoint> = fields.iter().map(|&b| FieldPoint::field(b)).collect();
    let fs = FermiSettings {
        carrier_density: n,
        temperature_k: 0.0,
        broadening: Broadening::gaussian(0.1),
        neutrality: Neutrality::Auto,
    };
    let out = fermi_sweep(&m, &pts, &Settings::with_cutoff(80), &fs).unwrap();
    for (p, k) in out.iter().zip([3.0, 2.0, 1.0]) {
        let hw = cyclotron_mev(mass, p.solution.field);
        let want = (k + 0.5) * hw;
        assert!(
            (p.solution.fermi_energy - want).abs() < 1e-6 * hw,
            "B = {}: {} vs {want}",
            p.solution.field,
            p.solution.fermi_energy
        );
        assert!((p.solution.filling_factor - (2.0 * k + 1.0)).abs() < 1e-9);
    }
}
