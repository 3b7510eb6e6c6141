//! Observables against closed forms and sum rules: Landau degeneracy, Dirac and Schrodinger
//! magneto-optics, the f-sum rule, expectation values and tracking.
//! Every expected value names its source beside it; helpers in tests/common/observables.rs.

use ladderfan::models::{self, Dirac2dParams, MassParams, PauliParams};
use ladderfan::observables::dos::{
    from_per_cm2, landau_degeneracy_per_area, per_cm2, Broadening, LevelDensity, WidthScaling,
};
use ladderfan::observables::filling::{fermi_level, FermiSettings, Neutrality};
use ladderfan::observables::labels::{
    matrix_expectation, orbital_content, pattern_expectation, tracks,
};
use ladderfan::observables::optics::{
    transition_sweep, transitions, OpticsSettings, Polarisation, VelocityOperator,
};
use ladderfan::units::{Units, ELECTRON_MASS, ELEMENTARY_CHARGE, MEV, PLANCK};
use ladderfan::{FieldPoint, Settings, Spectrum, Vectors};

mod common;
use common::observables::*;

#[test]
fn landau_degeneracy_is_e_b_over_h() {
    // eB/h = 2.417 989 242e10 cm^-2 per tesla (CODATA 2018: e and h exact; Landau 1930)
    let expected = 2.417_989_242e10;
    let d1 = per_cm2(
        Units::Lab,
        landau_degeneracy_per_area(Units::Lab, 1.0, -1.0),
    );
    assert!((d1 / expected - 1.0).abs() < 1e-9, "{d1}");
    // linear in |qB|, independent of the signs
    let d = landau_degeneracy_per_area(Units::Lab, -7.5, 2.0);
    assert!((per_cm2(Units::Lab, d) / (15.0 * expected) - 1.0).abs() < 1e-9);
    // the same from SI directly: |q| e B / h in m^-2, 1 m^-2 = 1e-18 nm^-2
    let si = ELEMENTARY_CHARGE * 3.0 / PLANCK * 1e-18;
    assert!((landau_degeneracy_per_area(Units::Lab, 3.0, -1.0) / si - 1.0).abs() < 1e-12);
    assert!((from_per_cm2(Units::Lab, 1e12) - 0.01).abs() < 1e-15); // 1e12 cm^-2 = 0.01 nm^-2
                                                                    // per level: times the model's declared degeneracy (2 for spin in the schrodinger model)
    let m = models::schrodinger(MassParams::default()).unwrap();
    let s = Spectrum::compute(&m, FieldPoint::field(1.0), &Settings::with_cutoff(20)).unwrap();
    let ld = LevelDensity::new(&m, &s, Broadening::gaussian(0.01)).unwrap();
    assert_eq!(ld.model_degeneracy, 2);
    assert!((per_cm2(Units::Lab, ld.per_level) / (2.0 * expected) - 1.0).abs() < 1e-9);
}

#[test]
fn sqrt_field_width_scales() {
    let b = Broadening {
        scaling: WidthScaling::SqrtField {
            reference_field: 1.0,
        },
        ..Broadening::gaussian(0.5)
    };
    // w(B) = w sqrt(B / B_ref) (Ando & Uemura 1974 form)
    assert!((b.width_at(4.0).unwrap() - 1.0).abs() < 1e-15);
    assert!(Broadening::gaussian(-1.0).width_at(1.0).is_err());
}

#[test]
fn massless_dirac_transitions_change_abs_n_by_one() {
    // v = 1.03e6 m/s: Sadowski, Martinez, Potemski, Berger & de Heer, Phys. Rev. Lett. 97,
    // 266405 (2006) (abstract: c* = 1.03 x 10^6 m/s). Transition energies
    // E1 (sqrt(n+1) ± sqrt(n)) with E1 = v sqrt(2 e hbar B), |n| -> |n| ± 1 only.
    let v = 1.03e6;
    let field = 5.0;
    let m = dirac(v, -1.0);
    let spec = Spectrum::compute(&m, FieldPoint::field(field), &with_vectors(200)).unwrap();
    let e1 = dirac_e1_mev(v, field);
    // filling factor 1 from neutrality: the zero level (declared degeneracy 2, half filled at
    // neutrality) becomes full, so the Fermi level lies in the gap between 0 and E1
    let landau = landau_degeneracy_per_area(Units::Lab, field, -1.0);
    let fs = FermiSettings {
        carrier_density: 1.0 * landau,
        temperature_k: 0.0,
        broadening: Broadening::gaussian(0.3),
        neutrality: Neutrality::Auto,
    };
    let sol = fermi_level(&m, &spec, &fs).unwrap();
    assert!(
        sol.fermi_energy > 0.1 * e1 && sol.fermi_energy < 0.9 * e1,
        "{sol:?}"
    );
    let opts = OpticsSettings {
        max_energy: Some(10.0 * e1),
        min_relative_strength: 1e-12,
    };
    let lines = transitions(&m, &spec, &sol.occupation, &opts).unwrap();
    assert!(lines.len() >= 10, "{} lines", lines.len());
    for t in &lines {
        let (ni, ri) = dirac_index(t.from_energy, e1);
        let (nf, rf) = dirac_index(t.to_energy, e1);
        assert!(ri < 1e-6 && rf < 1e-6, "levels off the closed form: {t:?}");
        assert_eq!(
            (nf.abs() - ni.abs()).abs(),
            1,
            "forbidden transition listed: {ni} -> {nf}, strength {}",
            t.relative_strength
        );
        let (a, b) = (ni.unsigned_abs() as f64, nf.unsigned_abs() as f64);
        let expected = if (ni < 0) != (nf < 0) && ni != 0 && nf != 0 {
            e1 * (a.sqrt() + b.sqrt()) // interband -n -> n+1 or -(n+1) -> n
        } else {
            e1 * (a.sqrt() - b.sqrt()).abs() // intraband or through the zero level
        };
        assert!(
            (t.energy - expected).abs() < 1e-9 * e1,
            "{ni} -> {nf}: {} vs {expected}",
            t.energy
        );
        // circular: one of sigma± only (from the matrix elements, not imposed)
        assert_ne!(t.polarisation, Polarisation::Mixed, "{t:?}");
    }
    // the expected lines are present: interband E1 (sqrt(n+1) + sqrt(n)), n = 1..5, and the
    // intraband 0 -> 1 line at E1 (the zero level is full, the first level empty)
    for n in 1..=5 {
        let e = e1 * ((n as f64 + 1.0).sqrt() + (n as f64).sqrt());
        assert!(
            lines.iter().any(|t| (t.energy - e).abs() < 1e-9 * e1),
            "missing interband line {n} at {e}"
        );
    }
    assert!(lines
        .iter()
        .any(|t| (t.energy - e1).abs() < 1e-9 * e1 && t.from_energy.abs() < 1e-6 * e1));
    // -1 -> 0 is Pauli-blocked (the zero level is full): no line from E = -E1 to 0
    assert!(!lines
        .iter()
        .any(|t| (t.from_energy + e1).abs() < 1e-6 * e1 && t.to_energy.abs() < 1e-6 * e1));
}

#[test]
fn dirac_velocity_closure_gives_v_squared() {
    // v_x = (1/hbar) dH/dkx = v tau sigma_x for the massless 2D Dirac model, so v_x^2 = v^2:
    // sum over all f of |<f|v_x|i>|^2 = v^2 for every level (closure within the truncated
    // basis, exact because sigma_x does not change the orbital). v = 1.03e6 m/s (Sadowski 2006).
    let v = 1.03e6;
    let m = dirac(v, 1.0);
    let spec = Spectrum::compute(&m, FieldPoint::field(-3.0), &with_vectors(60)).unwrap();
    let vecs = spec.vectors.as_ref().unwrap();
    let vop = VelocityOperator::new(&m, spec.point).unwrap();
    assert_eq!(vop.unit(), "m/s");
    for i in (0..spec.levels.len()).step_by(7) {
        let applied = vop.apply(&vecs[i]);
        let (sx, sy): (f64, f64) = vecs.iter().fold((0.0, 0.0), |acc, f| {
            let e = applied.project(f);
            (acc.0 + e.x.norm_sqr(), acc.1 + e.y.norm_sqr())
        });
        let (nx, ny) = applied.norms_squared();
        assert!((sx / (v * v) - 1.0).abs() < 1e-10, "level {i}: {sx}");
        assert!((sy / (v * v) - 1.0).abs() < 1e-10, "level {i}: {sy}");
        assert!((nx / (v * v) - 1.0).abs() < 1e-12 && (ny / (v * v) - 1.0).abs() < 1e-12);
    }
}

#[test]
fn schrodinger_single_cyclotron_line_at_any_filling() {
    // Kohn, Phys. Rev. 123, 1242 (1961): a parabolic band absorbs at hbar omega_c only,
    // whatever the filling and temperature. m* = 0.067 (GaAs-like, common practice).
    let mass = 0.067;
    for charge in [-1.0, 1.0] {
        let m = models::schrodinger(MassParams {
            mass_ratio: mass,
            charge,
        })
        .unwrap();
        for field in [3.0, 7.0] {
            let spec = Spectrum::compute(&m, FieldPoint::field(field), &with_vectors(80)).unwrap();
            let hw = cyclotron_mev(mass, field);
            let landau = landau_degeneracy_per_area(Units::Lab, field, charge);
            for (nu, t_k) in [(0.5, 0.0), (1.3, 0.0), (2.0, 0.0), (4.7, 10.0), (9.0, 30.0)] {
                let fs = FermiSettings {
                    carrier_density: nu * landau,
                    temperature_k: t_k,
                    broadening: Broadening::gaussian(0.05 * hw),
                    neutrality: Neutrality::Auto,
                };
                let sol = fermi_level(&m, &spec, &fs).unwrap();
                assert!((sol.filling_factor - nu).abs() < 1e-9 * nu.max(1.0));
                let lines =
                    transitions(&m, &spec, &sol.occupation, &OpticsSettings::default()).unwrap();
                assert!(!lines.is_empty());
                for t in &lines {
                    assert!(
                        (t.energy - hw).abs() < 1e-9 * hw,
                        "B = {field}, nu = {nu}: line at {} vs hbar omega_c = {hw}",
                        t.energy
                    );
                    // electrons (q < 0) with B along +z circle counter-clockwise seen from +z
                    // and absorb sigma+ = (x + i y)/sqrt2 e^{-i omega t}; holes the other one
                    // (classical cyclotron motion, common practice)
                    let want = if charge < 0.0 {
                        Polarisation::SigmaPlus
                    } else {
                        Polarisation::SigmaMinus
                    };
                    assert_eq!(t.polarisation, want);
                }
            }
        }
    }
}

#[test]
fn f_sum_rule_and_closure_for_the_parabolic_band() {
    // Thomas-Reiche-Kuhn f-sum rule: sum_f 2 m_e |<f|v_x|i>|^2 / (E_f - E_i) = m_e/m*
    // (Thomas 1925, Reiche & Kuhn 1925; with v = p/m*). Closure: sum_f |<f|v_x|i>|^2 =
    // <i|v_x^2|i> = hbar omega_c (n + 1/2) / m* (virial: half the kinetic energy in x).
    let mass = 0.2;
    let field = 2.0;
    let m = models::schrodinger(MassParams {
        mass_ratio: mass,
        charge: -1.0,
    })
    .unwrap();
    let spec = Spectrum::compute(&m, FieldPoint::field(field), &with_vectors(60)).unwrap();
    let vecs = spec.vectors.as_ref().unwrap();
    let vop = VelocityOperator::new(&m, spec.point).unwrap();
    let hw_j = cyclotron_mev(mass, field) * MEV;
    for i in 0..=10 {
        let li = &spec.levels[i];
        assert!(li.is_converged());
        let applied = vop.apply(&vecs[i]);
        let (mut fsum, mut closure) = (0.0, 0.0);
        for (f, lf) in spec.levels.iter().enumerate() {
            if f == i {
                continue;
            }
            let e = applied.project(&vecs[f]);
            let de_j = (lf.energy - li.energy) * MEV;
            fsum += 2.0 * ELECTRON_MASS * e.x.norm_sqr() / de_j;
            closure += e.x.norm_sqr();
        }
        assert!((fsum - 1.0 / mass).abs() < 1e-9 / mass, "level {i}: {fsum}");
        let expected = hw_j * (i as f64 + 0.5) / (mass * ELECTRON_MASS);
        assert!((closure / expected - 1.0).abs() < 1e-9, "level {i}");
        assert!((applied.norms_squared().0 / expected - 1.0).abs() < 1e-9);
    }
}

#[test]
fn transition_fan_against_field_follows_sqrt_b() {
    // massless Dirac: every line scales as sqrt(B) (McClure 1956; Sadowski et al. 2006), so
    // a fan line (same from/to track keys) at 4 B is twice the energy at B, for the interband
    // lines which stay allowed at neutrality.
    let m = dirac(1.03e6, -1.0);
    let pts = [FieldPoint::field(1.0), FieldPoint::field(4.0)];
    let fs = FermiSettings {
        carrier_density: 0.0,
        temperature_k: 1.5,
        broadening: Broadening::gaussian(0.2),
        neutrality: Neutrality::Auto,
    };
    let e1 = dirac_e1_mev(1.03e6, 1.0);
    let opts = OpticsSettings {
        max_energy: Some(20.0 * e1),
        ..OpticsSettings::default()
    };
    let fan = transition_sweep(&m, &pts, &Settings::with_cutoff(150), &fs, &opts).unwrap();
    let mut matched = 0;
    for t in &fan[0].transitions {
        if let Some(u) = fan[1]
            .transitions
            .iter()
            .find(|u| u.from_key == t.from_key && u.to_key == t.to_key)
        {
            assert!((u.energy / t.energy - 2.0).abs() < 1e-9, "{t:?} / {u:?}");
            matched += 1;
        }
    }
    assert!(matched >= 5, "{matched}");
}

#[test]
fn spin_and_pseudospin_expectations() {
    // Pauli model: every level is a pure spin state, <sigma_z> = ±1 (Pauli 1927).
    let m = models::pauli(PauliParams {
        mass_ratio: 0.5,
        g_factor: 3.0,
        charge: -1.0,
    })
    .unwrap();
    let settings = Settings {
        weights: ladderfan::Weights::Compute,
        ..with_vectors(30)
    };
    let s = Spectrum::compute(&m, FieldPoint::field(2.0), &settings).unwrap();
    let sz = pattern_expectation(&s, &[1.0, -1.0]).unwrap();
    let sz_m = matrix_expectation(&s, &ladderfan::matrix::pauli("z").unwrap()).unwrap();
    let sx = matrix_expectation(&s, &ladderfan::matrix::pauli("x").unwrap()).unwrap();
    for i in 0..s.levels.len() {
        assert!((sz[i].abs() - 1.0).abs() < 1e-12);
        assert!((sz[i] - sz_m[i]).abs() < 1e-12);
        assert!(sx[i].abs() < 1e-12);
    }
    // hbar omega_c = 4 mu_B B (m* = 0.5) and Zeeman +(g/2) mu_B B sigma_z = ±1.5 mu_B B: the
    // lowest level is n = 0 spin down at 0.5 mu_B B (builtin convention)
    assert!(sz[0] < 0.0);
    // massless 2D Dirac: the n = 0 level lives on one sublattice (<sigma_z> = ±1), every other
    // level equally on both (<sigma_z> = 0) (McClure 1956; common practice)
    let d = dirac(1.0e6, -1.0);
    let with_weights = Settings {
        weights: ladderfan::Weights::Compute,
        ..Settings::with_cutoff(50)
    };
    let s = Spectrum::compute(&d, FieldPoint::field(1.0), &with_weights).unwrap();
    let pz = pattern_expectation(&s, &[1.0, -1.0]).unwrap();
    let e1 = dirac_e1_mev(1.0e6, 1.0);
    for (l, p) in s.levels.iter().zip(&pz) {
        if !l.is_converged() {
            continue;
        }
        if l.energy.abs() < 1e-6 * e1 {
            assert!((p.abs() - 1.0).abs() < 1e-12);
        } else {
            assert!(p.abs() < 1e-12, "{l:?}: {p}");
        }
    }
    assert!(pattern_expectation(&s, &[1.0]).is_err());
    // orbital content: massless Dirac level n >= 1 has equal weight on orbitals n and n - 1
    // (McClure 1956), so <n> = |n| - 1/2 with spread 1/2; the zero level is orbital 0 only
    let mut sv = Settings::with_cutoff(50);
    sv.vectors = Vectors::Compute;
    let s = Spectrum::compute(&d, FieldPoint::field(1.0), &sv).unwrap();
    let oc = orbital_content(&s).unwrap();
    for (l, o) in s.levels.iter().zip(&oc) {
        if !l.is_converged() {
            continue;
        }
        let (n, _) = dirac_index(l.energy, e1);
        let n = n.unsigned_abs() as f64;
        if n == 0.0 {
            assert!(o.mean.abs() < 1e-12 && o.spread < 1e-6);
        } else {
            assert!((o.mean - (n - 0.5)).abs() < 1e-10, "{l:?} {o:?}");
            assert!((o.spread - 0.5).abs() < 1e-10, "{l:?} {o:?}");
        }
    }
    assert!(orbital_content(
        &Spectrum::compute(&d, FieldPoint::field(1.0), &Settings::with_cutoff(10)).unwrap()
    )
    .is_err());
}

#[test]
fn tracks_follow_levels_across_the_sweep() {
    // 2D Dirac with a mass: levels sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2) (McClure 1956 with
    // mass); a track keeps its |n| across fields, so E^2 - Delta^2 is linear in B along it.
    let m = models::dirac2d(Dirac2dParams {
        velocity_m_per_s: 5e5,
        mass_mev: 10.0,
        valley: ladderfan::models::Valley::Plus,
        charge: -1.0,
    })
    .unwrap();
    let pts: Vec<FieldPoint> = [1.0, 2.0, 3.0]
        .iter()
        .map(|&b| FieldPoint::field(b))
        .collect();
    let spectra = ladderfan::sweep::run(&m, &pts, &Settings::with_cutoff(80)).unwrap();
    let t = tracks(&spectra);
    let mut checked = 0;
    for tr in &t {
        if tr.points.len() == 3 && tr.points.iter().all(|p| p.converged) {
            let y: Vec<f64> = tr
                .points
                .iter()
                .map(|p| p.energy * p.energy - 100.0)
                .collect();
            // linear in B: y(2) - y(1) = y(3) - y(2)
            let scale = y[2].abs().max(1.0);
            assert!((y[1] - y[0] - (y[2] - y[1])).abs() < 1e-8 * scale, "{tr:?}");
            checked += 1;
        }
    }
    assert!(checked > 50, "{checked}");
}

#[test]
fn relativistic_dirac_optics_in_natural_units() {
    // 3+1 Dirac, natural units: v_x = c alpha_x and alpha_x^2 = 1, so sum_f |<f|v_x|i>|^2 = c^2
    // = 1 for every level (closure; Dirac 1928). Levels E^2 = 1 + 2 nu b at kz = 0 (Johnson &
    // Lippmann, Phys. Rev. 76, 828 (1949)); intraband transitions change nu by one.
    let m = models::dirac(models::RelativisticParams::default()).unwrap();
    let b = 0.1;
    let spec = Spectrum::compute(&m, FieldPoint::field(b), &with_vectors(40)).unwrap();
    let vecs = spec.vectors.as_ref().unwrap();
    let vop = VelocityOperator::new(&m, spec.point).unwrap();
    assert_eq!(vop.unit(), "c");
    for i in (0..spec.levels.len()).step_by(11) {
        let applied = vop.apply(&vecs[i]);
        let sx: f64 = vecs.iter().map(|f| applied.project(f).x.norm_sqr()).sum();
        assert!((sx - 1.0).abs() < 1e-10, "level {i}: {sx}");
    }
    // filling 1.5: nu = 0 (one state) full, nu = 1 (two states) half full
    let fs = FermiSettings {
        carrier_density: 1.5 * landau_degeneracy_per_area(Units::Natural, b, -1.0),
        temperature_k: 0.0,
        broadening: Broadening::gaussian(1e-3),
        neutrality: Neutrality::Auto,
    };
    let sol = fermi_level(&m, &spec, &fs).unwrap();
    assert_eq!(sol.neutrality_energy, Some(-1.0)); // absolute zero, mid-gap
    let opts = OpticsSettings {
        max_energy: Some(1.0),
        ..OpticsSettings::default()
    };
    let lines = transitions(&m, &spec, &sol.occupation, &opts).unwrap();
    let nu_of = |e: f64| ((e + 1.0).powi(2) - 1.0) / (2.0 * b);
    let mut seen = [false; 2];
    for t in &lines {
        let (ni, nf) = (nu_of(t.from_energy), nu_of(t.to_energy));
        assert!((ni - ni.round()).abs() < 1e-8 && (nf - nf.round()).abs() < 1e-8);
        assert_eq!((nf.round() - ni.round()).abs(), 1.0, "{t:?}");
        if ni.round() <= 1.0 {
            seen[ni.round() as usize] = true;
        }
    }
    assert!(
        seen[0] && seen[1],
        "0 -> 1 and 1 -> 2 lines expected: {lines:?}"
    );
}
