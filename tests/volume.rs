//! Densities per unit volume of 3D models (kz sheets integrated over kz) against closed forms
//! and an independent quadrature. Every expected value names its source beside it.

use ladderfan::models::{self, MassParams, WeylParams};
use ladderfan::observables::dos::{landau_degeneracy_per_area, Broadening};
use ladderfan::observables::volume::{
    fermi_sweep, from_per_cm3, per_cm3, Quadrature, VolumeDensity, VolumeSettings,
};
use ladderfan::units::{Units, ELEMENTARY_CHARGE, HBAR, HBAR2_OVER_2ME_MEV_NM2, MEV};
use ladderfan::{Error, Settings};
use std::f64::consts::PI;

/// hbar omega_c = hbar e B / m_e in meV (Landau 1930).
fn cyclotron_mev(field: f64) -> f64 {
    HBAR * ELEMENTARY_CHARGE * field / ladderfan::units::ELECTRON_MASS / MEV
}

#[test]
fn weyl_node_below_the_first_landau_level_has_only_the_chiral_level() {
    // Nielsen & Ninomiya, Phys. Lett. B 130, 389 (1983): the n = 0 level of a Weyl node is
    // E = chi sign(qB) hbar v kz, a 1D band with DOS 1/(2 pi hbar v) per Landau degeneracy
    // |eB|/h; the n >= 1 levels start at ±hbar v sqrt(2)/l_B (34 meV here), so between them
    // g3 = |eB|/h / (2 pi hbar v) and n3(mu) = g3 mu from neutrality at E = 0.
    let p = WeylParams::default(); // v = 3e5 m/s (invented)
    let m = models::weyl(p).unwrap();
    let field = 10.0;
    let vs = VolumeSettings::new(Broadening::gaussian(1.0), (-10.0, 10.0));
    let v = VolumeDensity::compute(&m, field, &Settings::with_cutoff(200), &vs).unwrap();
    let hv = ladderfan::units::hbar_v_mev_nm(p.velocity_m_per_s);
    let landau = landau_degeneracy_per_area(Units::Lab, field, -1.0);
    let plateau = landau / (2.0 * PI * hv);
    assert!(!v.even_in_kz, "the chiral level is odd in kz");
    for e in [-10.0, -3.3, 0.0, 4.0, 10.0] {
        let g = v.dos(e);
        assert!(
            (g / plateau - 1.0).abs() < 1e-7,
            "E = {e}: {g:e} vs {plateau:e}"
        );
        let n = v.carrier_density(e);
        assert!(
            (n - plateau * e).abs() < 1e-7 * plateau * 10.0,
            "E = {e}: n3 {n:e} vs {:e}",
            plateau * e
        );
    }
    let target = plateau * 2.5;
    let mu = v.fermi_level(target).unwrap();
    assert!((mu - 2.5).abs() < 1e-6, "Fermi level {mu}");
    assert!(v.quadrature_error <= 1e-7 * plateau);
}

#[test]
fn broad_lines_recover_the_zero_field_density_of_states() {
    // With a Gaussian width s equal to hbar omega_c the Landau oscillations are damped by
    // exp(-2 pi^2) ~ 3e-9 (Poisson summation, common practice) and the 3D DOS is the
    // free-electron one with spin, g(E) = (1/(2 pi^2)) (2m/hbar^2)^(3/2) sqrt(E), with
    // n(E) = (1/(3 pi^2)) (2mE/hbar^2)^(3/2) (Ashcroft & Mermin, Solid State Physics (1976),
    // eqs. 2.61 and 2.21; equation numbers from memory), each convolved with the Gaussian:
    // to second order g (1 - s^2/(8 E^2)) and n (1 + 3 s^2/(8 E^2)) (Taylor expansion, the
    // fourth-order terms are below 1e-10 here). What remains is the smooth Landau (midpoint
    // sum) correction (hbar omega_c)^2/(96 E^2) ~ 6e-7 at 15 meV (Euler-Maclaurin).
    let m = models::schrodinger(MassParams::default()).unwrap();
    let field = 1.0;
    let hw = cyclotron_mev(field);
    let s2 = hw * hw;
    let vs = VolumeSettings::new(Broadening::gaussian(hw), (15.0, 25.0));
    let v = VolumeDensity::compute(&m, field, &Settings::with_cutoff(320), &vs).unwrap();
    assert!(v.even_in_kz);
    let c = HBAR2_OVER_2ME_MEV_NM2;
    for e in [15.0f64, 18.7, 20.0, 25.0] {
        let free = (1.0 / (2.0 * PI * PI)) * (1.0 / c).powf(1.5) * e.sqrt();
        let free = free * (1.0 - s2 / (8.0 * e * e));
        let g = v.dos(e);
        assert!((g / free - 1.0).abs() < 2e-6, "E = {e}: {g:e} vs {free:e}");
        let n_free = (1.0 / (3.0 * PI * PI)) * (e / c).powf(1.5);
        let n_free = n_free * (1.0 + 3.0 * s2 / (8.0 * e * e));
        let n = v.carrier_density(e);
        assert!(
            (n / n_free - 1.0).abs() < 2e-6,
            "E = {e}: {n:e} vs {n_free:e}"
        );
    }
    // units: 1 nm^-3 = 1e21 cm^-3 (common practice)
    let n20 = v.carrier_density(20.0);
    assert!((per_cm3(Units::Lab, n20) / (n20 * 1e21) - 1.0).abs() < 1e-15);
    assert!((from_per_cm3(Units::Lab, per_cm3(Units::Lab, n20)) / n20 - 1.0).abs() < 1e-15);
}

/// Reference: g3(E) = g |eB|/h sum_n int dkz/(2 pi) G(E - hbar omega_c (n + 1/2) - c kz^2),
/// from the closed-form levels (Landau 1930) and composite Simpson quadrature in kz, on a grid
/// unrelated to the library's.
fn schrodinger_reference(field: f64, w: f64, e: f64) -> f64 {
    let hw = cyclotron_mev(field);
    let c = HBAR2_OVER_2ME_MEV_NM2;
    let g = |x: f64| (-x * x / (2.0 * w * w)).exp() / (w * (2.0 * PI).sqrt());
    let per_level = 2.0 * landau_degeneracy_per_area(Units::Lab, field, -1.0);
    let mut total = 0.0;
    for n in 0.. {
        let en = hw * (n as f64 + 0.5);
        if en > e + 12.0 * w {
            break;
        }
        let kmax = ((e - en + 12.0 * w) / c).max(0.0).sqrt();
        let steps = 20_000;
        let h = kmax / steps as f64;
        let mut s = g(e - en) + g(e - en - c * kmax * kmax);
        for i in 1..steps {
            let k = i as f64 * h;
            s += if i % 2 == 1 { 4.0 } else { 2.0 } * g(e - en - c * k * k);
        }
        // both signs of kz
        total += 2.0 * s * h / 3.0 / (2.0 * PI);
    }
    per_level * total
}

#[test]
fn narrow_lines_match_an_independent_quadrature_of_the_closed_form() {
    let m = models::schrodinger(MassParams::default()).unwrap();
    let field = 5.0;
    let hw = cyclotron_mev(field);
    let w = 0.05 * hw;
    let vs = VolumeSettings::new(Broadening::gaussian(w), (1.2 * hw, 3.5 * hw));
    let v = VolumeDensity::compute(&m, field, &Settings::with_cutoff(60), &vs).unwrap();
    let curve = v.curve(1.2 * hw, 3.5 * hw, 47).unwrap();
    let peak = curve.iter().map(|p| p.1).fold(0.0, f64::max);
    for &(e, g) in &curve {
        let r = schrodinger_reference(field, w, e);
        assert!(
            (g - r).abs() < 1e-6 * peak,
            "E = {e}: {g:e} vs reference {r:e}"
        );
    }
    // the van Hove peaks of the n = 1, 2 levels are inside the range: the DOS just above
    // 1.5 and 2.5 hbar omega_c exceeds the DOS just below (Landau 1930)
    assert!(v.dos(1.55 * hw) > 2.0 * v.dos(1.45 * hw));
    assert!(v.dos(2.55 * hw) > 1.5 * v.dos(2.45 * hw));
}

#[test]
fn quantum_limit_fermi_level_follows_the_one_dimensional_formula() {
    // Only the n = 0 level occupied (Landau 1930): n3 = g |eB|/h (2 kF)/(2 pi) with spin
    // degeneracy g = 2, so kF = pi^2 l_B^2 n3 and E_F = hbar omega_c/2 + x0 with
    // x0 = hbar^2 kF^2/(2m). A Gaussian line of width s turns n ~ sqrt(x) into
    // sqrt(x) (1 - s^2/(8 x^2)) to second order (Taylor expansion), which moves E_F up by
    // s^2/(4 x0).
    let m = models::schrodinger(MassParams::default()).unwrap();
    let field = 5.0;
    let hw = cyclotron_mev(field);
    let s = 0.02 * hw;
    let mut vs = VolumeSettings::new(Broadening::gaussian(s), (0.3 * hw, 1.3 * hw));
    vs.tolerance = 1e-9;
    let v = VolumeDensity::compute(&m, field, &Settings::with_cutoff(40), &vs).unwrap();
    let lb2 = 1.0 / (2.0 * PI * landau_degeneracy_per_area(Units::Lab, field, -1.0));
    let kf = 0.08; // 1/nm, invented
    let n3 = kf / (PI * PI * lb2);
    let ef = v.fermi_level(n3).unwrap();
    let x0 = HBAR2_OVER_2ME_MEV_NM2 * kf * kf;
    let expected = 0.5 * hw + x0 + s * s / (4.0 * x0);
    assert!(
        (ef - expected).abs() < 2e-5 * hw,
        "E_F = {ef} vs {expected} meV"
    );
    // at 0.25 K (k_B T = x0 / 11) the Fermi level still holds the density, and it moves up:
    // the 1D density of states falls with energy (Sommerfeld expansion,
    // mu = E_F - (pi^2/6) (k_B T)^2 D'/D with D ~ 1/sqrt(x), common practice; measured 3 %
    // from the next orders here, 23 % at 1 K where the band bottom is 3 k_B T away)
    let mut warm = vs;
    warm.temperature_k = 0.25;
    let vw = VolumeDensity::compute(&m, field, &Settings::with_cutoff(40), &warm).unwrap();
    let efw = vw.fermi_level(n3).unwrap();
    assert!((vw.carrier_density(efw) / n3 - 1.0).abs() < 1e-9);
    let kt = ladderfan::observables::filling::thermal_energy(Units::Lab, 0.25);
    let sommerfeld = ef + PI * PI / 6.0 * kt * kt / (2.0 * x0);
    assert!(efw > ef, "{efw} vs {ef}");
    assert!(
        (efw - sommerfeld).abs() < 0.1 * (sommerfeld - ef),
        "warm E_F = {efw}, Sommerfeld {sommerfeld}, cold {ef}"
    );
}

#[test]
fn refusals_say_what_to_change() {
    let sch = models::schrodinger(MassParams::default()).unwrap();
    let flat = models::dirac2d(models::Dirac2dParams::default()).unwrap();
    let vs = VolumeSettings::new(Broadening::gaussian(0.05), (0.0, 1.0));
    match VolumeDensity::compute(&flat, 2.0, &Settings::with_cutoff(50), &vs) {
        Err(Error::Unsupported(msg)) => assert!(msg.contains("no kz term"), "{msg}"),
        other => panic!("a 2D model must be refused: {other:?}"),
    }
    let lor = VolumeSettings::new(Broadening::lorentzian(0.05), (0.0, 1.0));
    match VolumeDensity::compute(&sch, 2.0, &Settings::with_cutoff(50), &lor) {
        Err(Error::Unsupported(msg)) => assert!(msg.contains("Gaussian"), "{msg}"),
        other => panic!("a Lorentzian must be refused: {other:?}"),
    }
    // 20 orbitals reach 20 hbar omega_c = 2.3 meV at 1 T; 25 meV needs more
    let high = VolumeSettings::new(Broadening::gaussian(0.05), (20.0, 25.0));
    match VolumeDensity::compute(&sch, 1.0, &Settings::with_cutoff(20), &high) {
        Err(Error::NotConverged { detail, .. }) => {
            assert!(detail.contains("raise the cutoff"), "{detail}")
        }
        other => panic!("a short cutoff must be refused: {other:?}"),
    }
    let v = VolumeDensity::compute(&sch, 2.0, &Settings::with_cutoff(50), &vs).unwrap();
    assert!(v.curve(-1.0, 0.5, 10).is_err(), "outside the range");
    assert!(
        v.fermi_level(1e9).is_err(),
        "more carriers than the range holds"
    );
}

#[test]
fn weyl_quantum_limit_fermi_level_falls_as_one_over_the_field() {
    // In the quantum limit only the chiral level holds carriers (Nielsen & Ninomiya 1983):
    // n3 = (eB/h) E_F / (2 pi hbar v), so E_F B is constant at fixed density.
    let p = WeylParams::default(); // v = 3e5 m/s (invented)
    let m = models::weyl(p).unwrap();
    let vs = VolumeSettings::new(Broadening::gaussian(1.0), (-20.0, 20.0));
    let hv = ladderfan::units::hbar_v_mev_nm(p.velocity_m_per_s);
    let n3 = 1e-5; // 1/nm^3 = 1e16 cm^-3 (invented)
    let fields = [5.0, 6.5, 8.0, 10.0];
    let pts = fermi_sweep(&m, &fields, &Settings::with_cutoff(200), &vs, n3).unwrap();
    assert_eq!(pts.len(), fields.len());
    for p in &pts {
        let expected = n3 * 2.0 * PI * hv / landau_degeneracy_per_area(Units::Lab, p.field, -1.0);
        assert!(
            (p.fermi_energy / expected - 1.0).abs() < 1e-7,
            "B = {}: E_F = {} vs {expected}",
            p.field,
            p.fermi_energy
        );
    }
    // a density whose Fermi level leaves the range at the lowest field is refused, naming it
    let err = fermi_sweep(&m, &[1.0, 10.0], &Settings::with_cutoff(200), &vs, 5e-5).unwrap_err();
    assert!(err.to_string().contains("at field 1"), "{err}");
}

/// The largest |a - b| of the DOS and of the carrier density of two integrals on `count`
/// energies of the range, relative to the largest DOS and to the largest density (or that DOS
/// times the width of the range, the scale of the library's own check).
fn largest_differences(a: &VolumeDensity, b: &VolumeDensity, count: usize) -> (f64, f64) {
    let (lo, hi) = a.range;
    let es: Vec<f64> = (0..count)
        .map(|i| lo + (hi - lo) * i as f64 / (count - 1) as f64)
        .collect();
    let gmax = es.iter().map(|&e| a.dos(e).abs()).fold(0.0, f64::max);
    let nmax = es
        .iter()
        .map(|&e| a.carrier_density(e).abs())
        .fold(gmax * (hi - lo), f64::max);
    let dg = es
        .iter()
        .map(|&e| (a.dos(e) - b.dos(e)).abs())
        .fold(0.0, f64::max);
    let dn = es
        .iter()
        .map(|&e| (a.carrier_density(e) - b.carrier_density(e)).abs())
        .fold(0.0, f64::max);
    (dg / gmax, dn / nmax)
}

#[test]
fn adaptive_path_agrees_with_the_uniform_reference_on_a_weyl_node() {
    // Reference: Quadrature::Uniform (full solves, uniform grid halved until two grids agree
    // to 1e-7). Both paths stop at a change of 1e-7 of the peak, so they agree within 2e-7
    // (the sum of both stated errors); measured far below that.
    let m = models::weyl(WeylParams::default()).unwrap(); // v = 3e5 m/s (invented)
    let settings = Settings::with_cutoff(200);
    let fast = VolumeSettings::new(Broadening::gaussian(1.0), (-40.0, 40.0));
    assert_eq!(fast.quadrature, Quadrature::Adaptive, "the default");
    let reference = VolumeSettings {
        quadrature: Quadrature::Uniform,
        ..fast
    };
    let field = 4.0;
    let a = VolumeDensity::compute(&m, field, &settings, &reference).unwrap();
    let b = VolumeDensity::compute(&m, field, &settings, &fast).unwrap();
    assert!(
        !a.even_in_kz && !b.even_in_kz,
        "a Weyl node has no kz mirror"
    );
    let (dg, dn) = largest_differences(&a, &b, 161);
    assert!(dg < 2e-7, "DOS differs by {dg:e} of its peak");
    assert!(dn < 2e-7, "density differs by {dn:e} of its scale");
    // the sheets beyond the chiral level's reach (|kz| > 49 meV / hbar v) are frozen early
    assert!(
        b.kz.len() < a.kz.len(),
        "{} adaptive vs {} uniform points",
        b.kz.len(),
        a.kz.len()
    );
    // the Fermi level at 1e16 cm^-3 (invented) from both, within 1e-6 of the line width
    let n3 = from_per_cm3(Units::Lab, 1e16);
    let (ea, eb) = (a.fermi_level(n3).unwrap(), b.fermi_level(n3).unwrap());
    assert!((ea - eb).abs() < 1e-6, "E_F {ea} vs {eb} meV");
}

#[test]
fn adaptive_path_uses_the_mirror_of_a_gapped_dirac_model_and_agrees_with_the_reference() {
    // 3+1 Dirac, natural units (m c^2 = 1, invented field 0.05 B_c): levels
    // E = ±sqrt(1 + kz^2 + 2 nu B) - 1 relative to m c^2 (Johnson & Lippmann, Phys. Rev. 76,
    // 828 (1949)), a gap of 2 m c^2 below the reference. The model has an odd power of kz
    // (alpha_z kz) but a mirror U = alpha_x alpha_y beta, so only kz >= 0 is solved.
    let m = models::dirac(models::RelativisticParams::default()).unwrap();
    let settings = Settings::with_cutoff(80);
    let fast = VolumeSettings::new(Broadening::gaussian(0.005), (-0.05, 0.3));
    let reference = VolumeSettings {
        quadrature: Quadrature::Uniform,
        ..fast
    };
    let field = 0.05;
    let a = VolumeDensity::compute(&m, field, &settings, &reference).unwrap();
    let b = VolumeDensity::compute(&m, field, &settings, &fast).unwrap();
    assert!(!a.even_in_kz, "the reference only knows even powers");
    assert!(b.even_in_kz, "the mirror is detected");
    assert!(b.kz.iter().all(|&k| k >= 0.0));
    let (dg, dn) = largest_differences(&a, &b, 141);
    assert!(dg < 2e-7, "DOS differs by {dg:e} of its peak");
    assert!(dn < 2e-7, "density differs by {dn:e} of its scale");
    // inside the gap above the first level (E_0(kz) = sqrt(1 + kz^2) - 1 >= 0, each kz sheet
    // with (eB/h) states per area, Johnson & Lippmann 1949) the density at the bottom of the
    // range, below every level by 10 widths, is zero
    assert!(b.carrier_density(-0.05).abs() < 1e-9 * b.carrier_density(0.3));
}

/// Warped cone of tests/core.rs (J mod 3 sectors, invented parameters) with a tilt
/// `tilt` kz sigma_0 along the field (invented), which no kz mirror can undo.
fn tilted_warped_cone(tilt: f64) -> ladderfan::Model {
    use ladderfan::matrix::pauli;
    use ladderfan::Monomial;
    ladderfan::Model::builder("tilted warped cone (invented)", 2)
        .term("mass", 20.0, pauli("z").unwrap(), Monomial::ONE)
        .term("kx2", 400.0, pauli("z").unwrap(), Monomial::new(2, 0, 0))
        .term("ky2", 400.0, pauli("z").unwrap(), Monomial::new(0, 2, 0))
        .term("kz2", 400.0, pauli("z").unwrap(), Monomial::new(0, 0, 2))
        .term("vx", 300.0, pauli("x").unwrap(), Monomial::KX)
        .term("vy", 300.0, pauli("y").unwrap(), Monomial::KY)
        .term("tilt", tilt, pauli("0").unwrap(), Monomial::new(0, 0, 1))
        .term("w1", 900.0, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term("w2", -2700.0, pauli("z").unwrap(), Monomial::new(1, 2, 0))
        .build()
        .unwrap()
}

/// The models and points of the lean-path tests: a Weyl node (2x2 sectors, chiral level), the
/// gapped 3+1 Dirac model (4x4 sectors) and the tilted warped cone (dense J mod 3 sectors, odd
/// tilt), each with its cutoff.
fn lean_cases() -> [(ladderfan::Model, ladderfan::FieldPoint, usize); 3] {
    use ladderfan::FieldPoint;
    [
        (
            models::weyl(WeylParams::default()).unwrap(),
            FieldPoint {
                field: 4.0,
                kz: 0.1,
            },
            200,
        ),
        (
            models::dirac(models::RelativisticParams::default()).unwrap(),
            FieldPoint {
                field: 0.05,
                kz: 0.3,
            },
            80,
        ),
        (
            tilted_warped_cone(50.0),
            FieldPoint {
                field: 3.0,
                kz: -0.02,
            },
            60,
        ),
    ]
}

/// The oracle of the lean-path tests: the converged energies of `Spectrum::solve_unlabelled`
/// (the parallel solve with level records), ascending, and the largest of their magnitudes.
fn full_converged(problem: &ladderfan::solve::Problem<'_>) -> (Vec<f64>, f64) {
    let full: Vec<f64> = ladderfan::Spectrum::solve_unlabelled(problem)
        .unwrap()
        .converged()
        .map(|l| l.energy)
        .collect();
    assert!(!full.is_empty(), "{}", problem.model().name());
    let scale = full.iter().fold(0.0f64, |m, e| m.max(e.abs()));
    (full, scale)
}

#[test]
fn lean_sheet_energies_are_the_converged_levels_of_the_full_solve() {
    // Oracle: full_converged, whose converged levels the lean path must reproduce: same count
    // (same convergence flags) and the same energies within a few eps of the largest level
    // (same sector solves).
    use ladderfan::solve::{converged_energies, LeanBuffers, Problem};
    let mut buffers = LeanBuffers::default();
    let mut lean = Vec::new();
    for (model, point, cutoff) in lean_cases() {
        let problem = Problem::new(&model, point, &Settings::with_cutoff(cutoff)).unwrap();
        // twice through the same buffers: the second call must not see the first's levels
        for _ in 0..2 {
            converged_energies(&problem, &mut buffers, &mut lean).unwrap();
            let (full, scale) = full_converged(&problem);
            assert_eq!(lean.len(), full.len(), "{}", model.name());
            for (a, b) in lean.iter().zip(&full) {
                assert!(
                    (a - b).abs() <= 4.0 * f64::EPSILON * scale,
                    "{}: {a} vs {b}",
                    model.name()
                );
            }
        }
    }
}

#[test]
fn sheet_levels_near_a_window_are_those_of_the_full_solve() {
    // Oracle: full_converged. The lean path that leaves out sectors wholly outside a window
    // must keep every converged level inside it (same count, same energies within a few eps of
    // the largest level), keep only levels of the full solve, and answer "is there a converged
    // level at or beyond each end" as the full solve does; and it must leave something out
    // somewhere (or it tests nothing). Models of lean_cases; windows inside the spectrum,
    // straddling zero, off to one side, and above every converged level.
    use ladderfan::solve::{converged_energies_near, LeanBuffers, Problem};
    let windows = [
        [(-49.0, 49.0), (10.0, 30.0), (-3.0, 2.0), (1e6, 2e6)],
        [(-1.5, 1.5), (1.0, 1.2), (-0.2, 0.2), (1e6, 2e6)],
        [(-40.0, 40.0), (-60.0, -20.0), (5.0, 9.0), (1e7, 2e7)],
    ];
    let mut buffers = LeanBuffers::default();
    let mut near = Vec::new();
    let mut left_out_somewhere = false;
    for ((model, point, cutoff), windows) in lean_cases().into_iter().zip(windows) {
        let problem = Problem::new(&model, point, &Settings::with_cutoff(cutoff)).unwrap();
        let (full, scale) = full_converged(&problem);
        let close = |a: f64, b: f64| (a - b).abs() <= 4.0 * f64::EPSILON * scale;
        for (lo, hi) in windows {
            for below_too in [false, true] {
                converged_energies_near(&problem, &mut buffers, &mut near, (lo, hi), below_too)
                    .unwrap();
                let what = format!("{} in [{lo}, {hi}], below_too {below_too}", model.name());
                let inside = |v: &[f64]| {
                    let mut w: Vec<f64> =
                        v.iter().copied().filter(|&e| e >= lo && e <= hi).collect();
                    w.sort_by(f64::total_cmp);
                    w
                };
                let (a, b) = (inside(&near), inside(&full));
                assert_eq!(a.len(), b.len(), "{what}");
                assert!(a.iter().zip(&b).all(|(&x, &y)| close(x, y)), "{what}");
                assert!(
                    near.iter().all(|&x| full.iter().any(|&y| close(x, y))),
                    "{what}: a level not in the full solve"
                );
                let above = |v: &[f64]| v.iter().any(|&e| e >= hi);
                let below = |v: &[f64]| v.iter().any(|&e| e <= lo);
                assert_eq!(above(&near), above(&full), "{what}: cover above");
                if below_too {
                    assert_eq!(below(&near), below(&full), "{what}: cover below");
                } else {
                    // nothing below is left out: the same levels below as the full solve
                    let n = |v: &[f64]| v.iter().filter(|&&e| e < lo).count();
                    assert_eq!(n(&near), n(&full), "{what}: levels below");
                }
                left_out_somewhere |= near.len() < full.len();
            }
        }
    }
    assert!(left_out_somewhere, "no sector was ever left out");
}

#[test]
fn adaptive_path_agrees_with_the_uniform_reference_on_a_tilted_j_mod_3_model() {
    // Reference: Quadrature::Uniform (as the Weyl test above): both stop at a change of 1e-7
    // of the peak, so they agree within 2e-7. A third kind of model: sectors of J mod 3
    // (dense sectors, not 2x2), an even kz^2 mass and an odd tilt, so no kz mirror.
    let m = tilted_warped_cone(50.0);
    let settings = Settings::with_cutoff(60);
    let fast = VolumeSettings::new(Broadening::gaussian(1.0), (-40.0, 40.0));
    let reference = VolumeSettings {
        quadrature: Quadrature::Uniform,
        ..fast
    };
    let field = 3.0;
    let a = VolumeDensity::compute(&m, field, &settings, &reference).unwrap();
    let b = VolumeDensity::compute(&m, field, &settings, &fast).unwrap();
    assert!(!b.even_in_kz, "a tilt along the field has no kz mirror");
    let (dg, dn) = largest_differences(&a, &b, 161);
    assert!(dg < 2e-7, "DOS differs by {dg:e} of its peak");
    assert!(dn < 2e-7, "density differs by {dn:e} of its scale");
    // the integral is not empty: a level lies in the range
    assert!(a.dos(0.0).max(a.dos(30.0)).max(a.dos(-30.0)) > 0.0);
}

#[test]
fn adaptive_path_with_a_three_part_first_round_agrees_with_the_uniform_reference() {
    // Reference: Quadrature::Uniform (as above; both stop at a change of 1e-7 of the peak, so
    // they agree within 2e-7). At 2 T the first kz grid of the Weyl node (v = 3e5 m/s,
    // invented) has steps of 2.7 line widths in kz (w / hbar v), so the first round cuts each
    // interval into three (`first_parts`), not two: the grid must hold points at a third of
    // a first-grid step, and the Fermi levels of both paths agree.
    let m = models::weyl(WeylParams::default()).unwrap();
    let settings = Settings::with_cutoff(200);
    let fast = VolumeSettings::new(Broadening::gaussian(1.0), (-40.0, 40.0));
    let reference = VolumeSettings {
        quadrature: Quadrature::Uniform,
        ..fast
    };
    let field = 2.0;
    let a = VolumeDensity::compute(&m, field, &settings, &reference).unwrap();
    let b = VolumeDensity::compute(&m, field, &settings, &fast).unwrap();
    let h0 = 2.0 * b.kz_max / 64.0;
    let thirds =
        b.kz.iter()
            .filter(|&&k| {
                let f = ((k + b.kz_max) / h0).fract();
                (f - 1.0 / 3.0).abs() < 1e-9 || (f - 2.0 / 3.0).abs() < 1e-9
            })
            .count();
    assert!(thirds > 0, "no point at a third of a first-grid step");
    let (dg, dn) = largest_differences(&a, &b, 161);
    assert!(dg < 2e-7, "DOS differs by {dg:e} of its peak");
    assert!(dn < 2e-7, "density differs by {dn:e} of its scale");
    let n3 = from_per_cm3(Units::Lab, 1e16);
    let (ea, eb) = (a.fermi_level(n3).unwrap(), b.fermi_level(n3).unwrap());
    assert!((ea - eb).abs() < 1e-6, "E_F {ea} vs {eb} meV");
    // the reported error is the last change, within the tolerance of the peak DOS
    let peak = b
        .curve(-40.0, 40.0, 401)
        .unwrap()
        .iter()
        .map(|p| p.1)
        .fold(0.0, f64::max);
    assert!(
        b.quadrature_error <= 1.001e-7 * peak,
        "{:e}",
        b.quadrature_error
    );
}

#[test]
fn adaptive_path_agrees_with_the_uniform_reference_on_a_four_band_zeeman_model() {
    // Reference: Quadrature::Uniform (full solves, every sector; both stop at a change of
    // 1e-7 of the peak, so they agree within 2e-7). A model without a closed form, invented:
    // two Weyl cones of opposite chirality (tau_z kz sigma_z) offset in energy by +-8 meV,
    // coupled by 5 meV tau_x, with a tilt 60 kz and a Zeeman term 1.5 meV/T sigma_z: four
    // bands, level crossings between the blocks, no kz mirror. Both the densities and the
    // Fermi level at a fixed density must agree, and the reported quadrature error must be
    // at least the actual difference of the DOS (relative to its peak) less the reference's
    // own tolerance.
    use ladderfan::matrix::pauli;
    use ladderfan::Monomial;
    let m = ladderfan::Model::builder("two coupled Weyl cones with Zeeman (invented)", 4)
        .term("vx", 200.0, pauli("0⊗x").unwrap(), Monomial::KX)
        .term("vy", 200.0, pauli("0⊗y").unwrap(), Monomial::KY)
        .term("vz", 200.0, pauli("z⊗z").unwrap(), Monomial::new(0, 0, 1))
        .term("offset", 8.0, pauli("z⊗0").unwrap(), Monomial::ONE)
        .term("coupling", 5.0, pauli("x⊗0").unwrap(), Monomial::ONE)
        .term("tilt", 60.0, pauli("0⊗0").unwrap(), Monomial::new(0, 0, 1))
        .term("zeeman", 1.5, pauli("0⊗z").unwrap(), Monomial::B)
        .build()
        .unwrap();
    let settings = Settings::with_cutoff(100);
    let fast = VolumeSettings::new(Broadening::gaussian(1.0), (-40.0, 40.0));
    let reference = VolumeSettings {
        quadrature: Quadrature::Uniform,
        ..fast
    };
    let field = 3.0;
    let a = VolumeDensity::compute(&m, field, &settings, &reference).unwrap();
    let b = VolumeDensity::compute(&m, field, &settings, &fast).unwrap();
    assert!(!b.even_in_kz, "the tilt leaves no kz mirror");
    let (dg, dn) = largest_differences(&a, &b, 161);
    assert!(dg < 2e-7, "DOS differs by {dg:e} of its peak");
    assert!(dn < 2e-7, "density differs by {dn:e} of its scale");
    let peak = (0..161)
        .map(|i| a.dos(-40.0 + 0.5 * i as f64).abs())
        .fold(0.0, f64::max);
    assert!(peak > 0.0, "a level lies in the range");
    assert!(
        b.quadrature_error / peak + 1e-7 >= dg,
        "reported {:e} of the peak, actual {dg:e}",
        b.quadrature_error / peak
    );
    let target = 0.5 * (a.carrier_density(-20.0) + a.carrier_density(25.0));
    let (ea, eb) = (
        a.fermi_level(target).unwrap(),
        b.fermi_level(target).unwrap(),
    );
    assert!((ea - eb).abs() < 1e-5 * a.width, "Fermi level {ea} vs {eb}");
}
