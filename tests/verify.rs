//! Verification of level formulas against the exact spectrum (src/verify/).
//!
//! * Every built-in and catalogue model: its closed form (src/models/, each model file's closed form with
//!   its published source) passes through the API, at both signs of qB.
//! * The same physics typed as expressions of the verify language (the README, section Verifying a level formula) and as Rust
//!   closures passes: Landau 1930 (Schrodinger, Pauli), Rabi 1928 / Johnson & Lippmann 1949
//!   (3+1 Dirac), McClure 1956 (2D Dirac), Nielsen & Ninomiya 1983 (Weyl chiral level),
//!   Goerbig et al. PRB 78, 045415 (2008) (tilted cone), Bychkov & Rashba 1984 (Rashba),
//!   McCann & Fal'ko PRL 96, 086805 (2006) (bilayer).
//! * Deliberately wrong formulas are caught and the offending levels listed: a spin term
//!   dropped (Pauli, Rashba), a factor 2 wrong in the field term, the n = 0 level of 2D Dirac
//!   omitted, a forgotten lowest Landau level, a wrong multiplicity.
//! * The command line: one passing (exit 0) and one failing (exit 1) run, and bad input (exit 2).
//!
//! Model parameters are invented.

use ladderfan::closed_form::{cyclotron_energy_mev, dirac_energy_mev};
use ladderfan::models::{
    self, BhzParams, BilayerParams, Dirac2dParams, DiracAmmParams, MassParams, PauliParams,
    RashbaParams, RelativisticParams, Valley,
};
use ladderfan::units::BOHR_MAGNETON_MEV_PER_T;
use ladderfan::verify::{
    self, Agreement, ExpectedList, LevelFormula, Outcome, Verdict, VerifySettings,
};
use ladderfan::{FieldPoint, Model, Reference, Settings, Spectrum};
use std::process::Command;

fn ok<T>(r: ladderfan::Result<T>) -> T {
    match r {
        Ok(v) => v,
        Err(e) => panic!("{e}"),
    }
}

fn spectrum(m: &Model, pt: FieldPoint, cutoff: usize) -> Spectrum {
    ok(Spectrum::compute(m, pt, &Settings::with_cutoff(cutoff)))
}

fn run(m: &Model, pt: FieldPoint, cutoff: usize, list: &ExpectedList) -> Verdict {
    let s = spectrum(m, pt, cutoff);
    ok(verify::check(&s, list, &VerifySettings::default()))
}

fn describe(v: &Verdict) -> String {
    let mut out = v.verdict_line("(unit)");
    for p in v.disagreeing().take(5) {
        out.push_str(&format!(
            "\n  {} expected {} numerical {} dev {:e} allowed {:e}",
            p.expected.label, p.expected.energy, p.numerical.energy, p.deviation, p.allowed
        ));
    }
    for u in v.unmatched_numerical.iter().take(5) {
        out.push_str(&format!("\n  numerical without partner {}", u.energy));
    }
    for u in v.missing_expected.iter().take(5) {
        out.push_str(&format!(
            "\n  expected without partner {} {}",
            u.expected.label, u.expected.energy
        ));
    }
    out
}

fn assert_pass(v: &Verdict, what: &str, min_pairs: usize) {
    assert!(v.passed(), "{what}: {}", describe(v));
    assert!(
        v.pairs.len() >= min_pairs,
        "{what}: only {} pairs checked: {}",
        v.pairs.len(),
        describe(v)
    );
    assert!(v.pairs.iter().all(|p| p.agreement == Agreement::Agrees));
    assert!(v.verdict_line("meV").starts_with("verdict: PASS"));
    assert!(v.passed()); // the CLI exits 0 (tests/cli_e2e.rs)
}

fn range(a: i64, b: i64) -> Vec<i64> {
    (a..=b).collect()
}

fn formula(f: &str) -> LevelFormula {
    LevelFormula {
        formula: f.into(),
        ..Default::default()
    }
}

fn from_formula(
    m: &Model,
    pt: FieldPoint,
    f: &LevelFormula,
    ns: &[i64],
    ss: &[i8],
) -> ExpectedList {
    ok(ExpectedList::from_formula(
        m,
        pt,
        Reference::Zero,
        f,
        ns,
        ss,
    ))
}

/// Every model of src/models/ with a cutoff that converges its low
/// levels.
fn all_models() -> Vec<(&'static str, Model, FieldPoint, usize)> {
    let lab = FieldPoint {
        field: 3.0,
        kz: 0.0,
    };
    let lab_kz = FieldPoint {
        field: 3.0,
        kz: 0.03,
    };
    let nat = FieldPoint {
        field: 0.1,
        kz: 0.2,
    };
    vec![
        (
            "schrodinger",
            ok(models::schrodinger(MassParams {
                mass_ratio: 0.067,
                charge: -1.0,
            })),
            lab_kz,
            60,
        ),
        (
            "pauli",
            ok(models::pauli(PauliParams {
                mass_ratio: 0.2,
                g_factor: -0.44,
                charge: -1.0,
            })),
            lab_kz,
            60,
        ),
        (
            "dirac",
            ok(models::dirac(RelativisticParams::default())),
            nat,
            60,
        ),
        (
            "klein-gordon",
            ok(models::klein_gordon(RelativisticParams::default())),
            nat,
            60,
        ),
        (
            "dirac2d",
            ok(models::dirac2d(Dirac2dParams {
                mass_mev: 12.0,
                ..Default::default()
            })),
            lab,
            80,
        ),
        (
            "weyl",
            ok(models::weyl(models::WeylParams::default())),
            lab_kz,
            80,
        ),
        (
            "dirac-amm",
            ok(models::dirac_amm(DiracAmmParams::default())),
            nat,
            60,
        ),
        (
            "tilted-dirac2d",
            ok(models::tilted_dirac2d(models::TiltedDiracParams::default())),
            lab,
            160,
        ),
        (
            "rashba",
            ok(models::rashba(RashbaParams::default())),
            lab,
            80,
        ),
        (
            "bilayer",
            ok(models::bilayer(BilayerParams::default())),
            lab,
            60,
        ),
        ("bhz", ok(models::bhz(BhzParams::default())), lab, 60),
    ]
}

#[test]
fn every_catalogue_closed_form_passes_at_both_signs_of_qb() {
    for (what, model, pt, cutoff) in all_models() {
        for sign in [1.0, -1.0] {
            let p = FieldPoint {
                field: sign * pt.field,
                kz: pt.kz,
            };
            let list = match ExpectedList::from_closed_form(&model, p, cutoff / 2) {
                Some(l) => l,
                None => panic!("{what}: no closed form"),
            };
            let v = run(&model, p, cutoff, &list);
            assert_pass(&v, &format!("{what} B={}", p.field), 8);
            eprintln!(
                "{what:<15} B={:+}: {} pairs, {} unresolved, {} not checked, worst |dev| {:.1e} = {:.1e} of the scale",
                p.field,
                v.pairs.len(),
                v.unresolved_expected.len(),
                v.not_checked,
                v.worst_deviation,
                v.worst_deviation / v.energy_scale
            );
        }
    }
}

/// Correct formulas in the expression language for the built-ins and most of the catalogue.
fn correct_formulas() -> Vec<(&'static str, LevelFormula, Vec<i8>)> {
    let pm = vec![-1i8, 1];
    let hw = "hbar*e*abs(q*B)/(mass_ratio*m_e)";
    let kz2 = "hbar^2*kz^2/(2*mass_ratio*m_e)";
    let hv = "hbar*velocity_m_per_s*metre/second";
    vec![
        (
            "schrodinger",
            formula(&format!("{hw}*(n + 1/2) + {kz2}")),
            vec![0],
        ),
        (
            "pauli",
            formula(&format!("{hw}*(n + 1/2) + s*g_factor/2*mu_B*B + {kz2}")),
            pm.clone(),
        ),
        (
            "dirac",
            LevelFormula {
                formula: "s*sqrt((mass*speed^2)^2 + (speed*hbar*kz)^2 \
                          + 2*n*hbar*speed^2*e*abs(q*B))"
                    .into(),
                multiplicity: Some("if(n == 0, 1, 2)".into()),
                ..Default::default()
            },
            pm.clone(),
        ),
        (
            "klein-gordon",
            formula(
                "s*sqrt((mass*speed^2)^2 + (speed*hbar*kz)^2 + (2*n + 1)*hbar*speed^2*e*abs(q*B))",
            ),
            pm.clone(),
        ),
        (
            "dirac2d",
            LevelFormula {
                formula: format!("s*sqrt(mass_mev^2 + 2*n*({hv}/l_B)^2)"),
                n0: Some("valley*sign(q*B)*mass_mev".into()),
                ..Default::default()
            },
            pm.clone(),
        ),
        (
            "weyl",
            LevelFormula {
                formula: format!("s*{hv}*sqrt(kz^2 + 2*n/l_B^2)"),
                n0: Some(format!("chirality*sign(q*B)*{hv}*kz")),
                ..Default::default()
            },
            pm.clone(),
        ),
        (
            "tilted-dirac2d",
            LevelFormula {
                formula: format!("s*(1 - (tilt_velocity_m_per_s/velocity_m_per_s)^2)^(3/4)*sqrt(2*n)*{hv}/l_B"),
                n0: Some("0".into()),
                ..Default::default()
            },
            pm.clone(),
        ),
        (
            "rashba",
            LevelFormula {
                formula: format!(
                    "{hw}*n + s*sqrt(({hw}/2 + sign(q*B)*g_factor/2*mu_B*B)^2 + 2*n*rashba_mev_nm^2/l_B^2)"
                ),
                n0: Some(format!("{hw}/2 + sign(q*B)*g_factor/2*mu_B*B")),
                ..Default::default()
            },
            pm.clone(),
        ),
        (
            "bilayer",
            LevelFormula {
                formula: format!("s*{hw}*sqrt(n*(n - 1))"),
                cases: vec![("n < 2".into(), "if(s > 0, 0, none)".into())],
                ..Default::default()
            },
            pm,
        ),
    ]
}

#[test]
fn expression_formulas_pass_for_builtins_and_catalogue() {
    let models = all_models();
    for (what, f, ss) in correct_formulas() {
        let (_, model, pt, cutoff) = match models.iter().find(|m| m.0 == what) {
            Some(m) => m.clone(),
            None => panic!("{what} missing"),
        };
        for sign in [1.0, -1.0] {
            let p = FieldPoint {
                field: sign * pt.field,
                kz: pt.kz,
            };
            let list = from_formula(&model, p, &f, &range(0, cutoff as i64 / 2), &ss);
            let v = run(&model, p, cutoff, &list);
            assert_pass(&v, &format!("{what} (expression) B={}", p.field), 8);
        }
    }
}

#[test]
fn rust_closures_pass_for_pauli_dirac2d_and_dirac_amm() {
    // Pauli, Landau 1930 + Zeeman: (n + 1/2) hbar omega_c + s (g/2) mu_B B
    let (mr, g, b) = (0.3, 5.0, 4.0);
    let m = ok(models::pauli(PauliParams {
        mass_ratio: mr,
        g_factor: g,
        charge: -1.0,
    }));
    let pt = FieldPoint::field(b);
    let w = cyclotron_energy_mev(mr, b, -1.0);
    let z = 0.5 * g * BOHR_MAGNETON_MEV_PER_T * b;
    let list = ok(ExpectedList::from_fn(
        &m,
        pt,
        Reference::Zero,
        &range(0, 30),
        &[-1, 1],
        |v| Some(w * (v.n as f64 + 0.5) + v.s as f64 * z),
    ));
    assert_pass(&run(&m, pt, 80, &list), "pauli closure", 30);

    // 2D Dirac (McClure 1956): the n = 0 level only once, at tau sign(qB) Delta
    let p = Dirac2dParams {
        mass_mev: -7.0,
        valley: Valley::Minus,
        ..Default::default()
    };
    let m = ok(models::dirac2d(p));
    for field in [2.0, -2.0] {
        let pt = FieldPoint::field(field);
        let e1 = dirac_energy_mev(p.velocity_m_per_s, field, -1.0);
        let list = ok(ExpectedList::from_fn(
            &m,
            pt,
            Reference::Zero,
            &range(0, 30),
            &[-1, 1],
            |v| match (v.n, v.s) {
                (0, 1) => Some(-v.sign_qb() * p.mass_mev), // tau = -1
                (0, _) => None,
                (n, s) => Some(s as f64 * (p.mass_mev.powi(2) + n as f64 * e1 * e1).sqrt()),
            },
        ));
        assert_pass(&run(&m, pt, 80, &list), "dirac2d closure", 30);
    }

    // Dirac with anomalous moment via try_from_fn with multiplicities: the crate's typed closed
    // form, split into (energy, multiplicity) per (nu, branch) by the closure
    let pa = DiracAmmParams::default();
    let m = ok(models::dirac_amm(pa));
    let pt = FieldPoint {
        field: 0.2,
        kz: 0.1,
    };
    let all = ok(ladderfan::models::dirac_amm::levels(pa, pt, 31));
    let list = ok(ExpectedList::try_from_fn(
        &m,
        pt,
        Reference::Model,
        &range(0, 30),
        &[-2, -1, 1, 2],
        |v| {
            // s = ±1: zeta = +, s = ±2: zeta = -; sign(s) is the branch
            let branch = v.s.signum();
            let zeta = if v.s.abs() == 1 { "zeta=+" } else { "zeta=-" };
            Ok(all
                .iter()
                .find(|l| l.n == v.n && l.s == branch && l.label.contains(zeta))
                .map(|l| (l.energy, l.multiplicity)))
        },
    ));
    assert_pass(&run(&m, pt, 60, &list), "dirac-amm closure", 30);
}

#[test]
fn csv_list_with_explicit_window_passes_and_without_partner_fails() {
    // Landau 1930 levels of the effective-mass model written as CSV
    let m = ok(models::schrodinger(MassParams {
        mass_ratio: 0.1,
        charge: -1.0,
    }));
    let pt = FieldPoint::field(2.0);
    let w = cyclotron_energy_mev(0.1, 2.0, -1.0);
    let mut text = String::from("n,energy\n# Landau 1930\n");
    for n in 0..=10 {
        text.push_str(&format!("{n},{:.17e}\n", w * (n as f64 + 0.5)));
    }
    let list = ok(ExpectedList::from_csv(&text, "landau.csv", 0.0));
    assert_pass(&run(&m, pt, 60, &list), "csv", 11);
    // drop n = 4: the numerical level at 4.5 hbar omega_c is unaccounted for
    let holed: String = text
        .lines()
        .filter(|l| !l.starts_with("4,"))
        .map(|l| format!("{l}\n"))
        .collect();
    let list = ok(ExpectedList::from_csv(&holed, "landau.csv", 0.0));
    let v = run(&m, pt, 60, &list);
    assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
    assert_eq!(v.unmatched_numerical.len(), 1);
    assert!((v.unmatched_numerical[0].energy - 4.5 * w).abs() < 1e-9 * w);
    // bad CSV: located errors
    for (bad, want) in [
        ("n,e\n0,1\n", "no 'energy' column"),
        ("energy\nabc\n", "landau.csv:2"),
        ("energy\ninf\n", "not finite"),
    ] {
        match ExpectedList::from_csv(bad, "landau.csv", 0.0) {
            Ok(_) => panic!("{bad} accepted"),
            Err(e) => assert!(e.to_string().contains(want), "{e}"),
        }
    }
}

#[test]
fn dropped_pauli_spin_term_is_caught_level_by_level() {
    let (mr, g, b) = (0.2, 2.0023, 3.0);
    let m = ok(models::pauli(PauliParams {
        mass_ratio: mr,
        g_factor: g,
        charge: -1.0,
    }));
    let pt = FieldPoint::field(b);
    // the spin term s (g/2) mu_B B forgotten: each orbital level listed twice (s = ±1)
    let f = formula("hbar*e*abs(q*B)/(mass_ratio*m_e)*(n + 1/2)");
    let list = from_formula(&m, pt, &f, &range(0, 30), &[-1, 1]);
    let v = run(&m, pt, 60, &list);
    assert_eq!(v.outcome, Outcome::Fail);
    assert!(v.verdict_line("meV").starts_with("verdict: FAIL"));
    assert!(!v.passed()); // the CLI exits 1 (tests/cli_e2e.rs)
                          // every low level disagrees by the Zeeman energy (g/2) mu_B B, from the closed form
    let zeeman = 0.5 * g * BOHR_MAGNETON_MEV_PER_T * b;
    let bad: Vec<_> = v.disagreeing().collect();
    assert!(bad.len() >= 40, "{}", describe(&v));
    for p in &bad {
        assert!(
            (p.deviation.abs() - zeeman).abs() < 1e-9 * zeeman,
            "{}: deviation {} vs Zeeman {zeeman}",
            p.expected.label,
            p.deviation
        );
    }
    // the lowest offender is n = 0, numerically (1/2) hbar omega_c - Zeeman
    let w = cyclotron_energy_mev(mr, b, -1.0);
    assert_eq!(bad[0].expected.n, 0);
    assert!((bad[0].numerical.energy - (0.5 * w - zeeman)).abs() < 1e-9 * w);
}

#[test]
fn dropped_rashba_zeeman_term_is_caught() {
    let p = RashbaParams::default(); // g = -8
    let m = ok(models::rashba(p));
    let pt = FieldPoint::field(3.0);
    let hw = "hbar*e*abs(q*B)/(mass_ratio*m_e)";
    // Zeeman term g/2 mu_B B dropped from h = hbar omega_c/2 + sign(qB) Z
    let f = LevelFormula {
        formula: format!("{hw}*n + s*sqrt(({hw}/2)^2 + 2*n*rashba_mev_nm^2/l_B^2)"),
        n0: Some(format!("{hw}/2")),
        ..Default::default()
    };
    let list = from_formula(&m, pt, &f, &range(0, 40), &[-1, 1]);
    let v = run(&m, pt, 80, &list);
    assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
    // the unpaired level moves by exactly sign(qB) Z = -(g/2) mu_B B: listed as an offender
    let z = 0.5 * p.g_factor * BOHR_MAGNETON_MEV_PER_T * 3.0;
    let n0 = v.disagreeing().find(|p| p.expected.n == 0);
    match n0 {
        Some(pair) => assert!(
            (pair.deviation - (-z)).abs() < 1e-9 * z.abs(),
            "{} vs {}",
            pair.deviation,
            -z
        ),
        None => panic!("n = 0 not listed: {}", describe(&v)),
    }
    assert!(v.disagreeing().count() >= 20, "{}", describe(&v));
}

#[test]
fn factor_two_in_the_field_term_is_caught() {
    // effective mass: 2 hbar omega_c (n + 1/2) instead of hbar omega_c (n + 1/2)
    let m = ok(models::schrodinger(MassParams {
        mass_ratio: 0.067,
        charge: -1.0,
    }));
    let pt = FieldPoint::field(2.0);
    let f = formula("2*hbar*e*abs(q*B)/(mass_ratio*m_e)*(n + 1/2)");
    let list = from_formula(&m, pt, &f, &range(0, 20), &[0]);
    let v = run(&m, pt, 80, &list);
    assert_eq!(v.outcome, Outcome::Fail);
    // no expected value (n + 1/2) 2 w equals a numerical (k + 1/2) w: nothing agrees
    assert!(v.pairs.iter().all(|p| p.agreement == Agreement::Disagrees));
    let w = cyclotron_energy_mev(0.067, 2.0, -1.0);
    // the lowest offender: expected w, half a spacing from its numerical partner
    // (w/2 and 3w/2 are equally near)
    let first = &v.pairs[0];
    assert!((first.expected.energy - w).abs() < 1e-9 * w);
    assert!((first.deviation.abs() - 0.5 * w).abs() < 1e-9 * w);
    // and the numerical ground state w/2 is reported, paired or left over
    let ground_reported = v
        .unmatched_numerical
        .iter()
        .chain(v.pairs.iter().map(|p| &p.numerical))
        .any(|l| (l.energy - 0.5 * w).abs() < 1e-9 * w);
    assert!(ground_reported, "{}", describe(&v));

    // 2D Dirac: 4 n (hbar v / l_B)^2 instead of 2 n: sqrt(2) E_n = E_2n agrees by accident,
    // the odd levels are left without partner
    let m = ok(models::dirac2d(Dirac2dParams::default()));
    let f = LevelFormula {
        formula: "s*sqrt(mass_mev^2 + 4*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)".into(),
        n0: Some("0".into()),
        ..Default::default()
    };
    let list = from_formula(&m, pt, &f, &range(0, 40), &[-1, 1]);
    let v = run(&m, pt, 120, &list);
    assert_eq!(v.outcome, Outcome::Fail);
    let e1 = dirac_energy_mev(1.0e6, 2.0, -1.0);
    let odd_left = v
        .unmatched_numerical
        .iter()
        .chain(v.disagreeing().map(|p| &p.numerical))
        .any(|l| (l.energy - e1).abs() < 1e-9 * e1);
    assert!(odd_left, "E_1 not reported: {}", describe(&v));
}

#[test]
fn omitted_dirac2d_zero_level_is_an_unmatched_numerical_level() {
    for (mass, valley, field) in [
        (0.0, Valley::Plus, 2.0),
        (9.0, Valley::Plus, 2.0),
        (9.0, Valley::Minus, -3.0),
    ] {
        let m = ok(models::dirac2d(Dirac2dParams {
            mass_mev: mass,
            valley,
            ..Default::default()
        }));
        let pt = FieldPoint::field(field);
        // McClure's n >= 1 levels only; the n = 0 level at tau sign(qB) Delta forgotten
        let f = formula("s*sqrt(mass_mev^2 + 2*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)");
        let list = from_formula(&m, pt, &f, &range(1, 40), &[-1, 1]);
        let v = run(&m, pt, 100, &list);
        assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
        assert_eq!(v.disagreeing().count(), 0, "{}", describe(&v));
        assert!(v.missing_expected.is_empty());
        assert_eq!(v.unmatched_numerical.len(), 1, "{}", describe(&v));
        let e0 = valley.sign() * (-field).signum() * mass; // q = -1
        assert!(
            (v.unmatched_numerical[0].energy - e0).abs() < 1e-6,
            "{} vs {e0}",
            v.unmatched_numerical[0].energy
        );
        assert!(v
            .verdict_line("meV")
            .contains("1 numerical level(s) have no expected partner"));
    }
}

#[test]
fn forgotten_lowest_level_and_wrong_multiplicity_are_caught() {
    // Pauli with n starting at 1: both n = 0 spin levels are reported (the window is open below)
    let m = ok(models::pauli(PauliParams {
        mass_ratio: 0.5,
        g_factor: 2.0,
        charge: -1.0,
    }));
    let pt = FieldPoint::field(1.5);
    let f = formula("hbar*e*abs(q*B)/(mass_ratio*m_e)*(n + 1/2) + s*g_factor/2*mu_B*B");
    let list = from_formula(&m, pt, &f, &range(1, 30), &[-1, 1]);
    let v = run(&m, pt, 60, &list);
    assert_eq!(v.outcome, Outcome::Fail);
    let w = cyclotron_energy_mev(0.5, 1.5, -1.0);
    let z = BOHR_MAGNETON_MEV_PER_T * 1.5;
    let mut got: Vec<f64> = v.unmatched_numerical.iter().map(|l| l.energy).collect();
    got.sort_by(f64::total_cmp);
    assert_eq!(got.len(), 2, "{}", describe(&v));
    assert!((got[0] - (0.5 * w - z)).abs() < 1e-9 * w);
    assert!((got[1] - (0.5 * w + z)).abs() < 1e-9 * w);

    // 3+1 Dirac with every level listed once: the spin partners of nu >= 1 are left over
    let m = ok(models::dirac(RelativisticParams::default()));
    let pt = FieldPoint {
        field: 0.1,
        kz: 0.0,
    };
    let f = formula("s*sqrt(1 + 2*n*abs(q*B))");
    let list = from_formula(&m, pt, &f, &range(0, 20), &[-1, 1]);
    let v = run(&m, pt, 60, &list);
    assert_eq!(v.outcome, Outcome::Fail);
    assert!(v.pairs.iter().all(|p| p.agreement == Agreement::Agrees));
    // one leftover per listed nu >= 1 level inside the window
    let listed_nu_ge_1 = v.pairs.iter().filter(|p| p.expected.n >= 1).count();
    assert_eq!(v.unmatched_numerical.len(), listed_nu_ge_1);
    // with the multiplicity given it passes
    let f = LevelFormula {
        multiplicity: Some("if(n == 0, 1, 2)".into()),
        ..f
    };
    let list = from_formula(&m, pt, &f, &range(0, 20), &[-1, 1]);
    assert_pass(&run(&m, pt, 60, &list), "dirac multiplicity", 20);
}

#[test]
fn relativistic_levels_at_one_tesla_pass_with_the_rounding_allowance() {
    // b = 1 T / B_c ~ 2.3e-10: the absolute formula sqrt(1 + 2 nu b) carries a rounding error
    // of eps ~ 1e-6 of the spacing, which the allowance covers; a 1e-3 error of the spacing
    // (1 + 1e-3 in the field term) is still caught.
    let m = ok(models::dirac(RelativisticParams::default()));
    let b = 1.0 / ladderfan::units::ELECTRON_CRITICAL_FIELD_T;
    let pt = FieldPoint::field(b);
    let f = LevelFormula {
        formula: "s*sqrt(1 + 2*n*abs(q*B))".into(),
        multiplicity: Some("if(n == 0, 1, 2)".into()),
        ..Default::default()
    };
    let list = from_formula(&m, pt, &f, &range(0, 10), &[-1, 1]);
    assert_pass(&run(&m, pt, 40, &list), "dirac at 1 T", 10);
    let f = LevelFormula {
        formula: "s*sqrt(1 + 2*n*abs(q*B)*(1 + 1e-3))".into(),
        ..f
    };
    let list = from_formula(&m, pt, &f, &range(0, 10), &[-1, 1]);
    let v = run(&m, pt, 40, &list);
    assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
    assert!(v
        .disagreeing()
        .any(|p| p.expected.n == 1 && p.expected.s == 1));
}

#[test]
fn formula_errors_are_reported_with_their_location() {
    let m = ok(models::dirac2d(Dirac2dParams::default()));
    let pt = FieldPoint::field(1.0);
    for (f, want) in [
        (
            formula("s*sqrt(mas^2)"),
            "--formula: column 8: unknown variable 'mas'",
        ),
        (formula("sqrt(-1 - n)"), "gives NaN at n = 0"),
        (
            LevelFormula {
                formula: "s".into(),
                multiplicity: Some("1.5".into()),
                ..Default::default()
            },
            "--multiplicity",
        ),
        (
            LevelFormula {
                formula: "s".into(),
                cases: vec![("n".into(), "0".into())],
                ..Default::default()
            },
            "--case #1",
        ),
    ] {
        match ExpectedList::from_formula(&m, pt, Reference::Zero, &f, &range(0, 3), &[-1, 1]) {
            Ok(_) => panic!("{f:?} accepted"),
            Err(e) => assert!(e.to_string().contains(want), "{e}"),
        }
    }
}

#[test]
fn empty_window_is_inconclusive_not_a_pass() {
    let m = ok(models::schrodinger(MassParams::default()));
    let pt = FieldPoint::field(1.0);
    let s = spectrum(&m, pt, 40);
    let list =
        ExpectedList::from_levels(Vec::new(), 0.0).with_window(verify::Window::closed(1e6, 2e6));
    let v = ok(verify::check(&s, &list, &VerifySettings::default()));
    assert_eq!(v.outcome, Outcome::Inconclusive);
    assert!(!v.passed()); // the CLI exits 1 (tests/cli_e2e.rs)
    let bad = VerifySettings {
        tolerance: -1.0,
        ..Default::default()
    };
    assert!(verify::check(&s, &list, &bad).is_err());
}

// ---------------------------------------------------------------------------------------------
// The command line

fn ladderfan(args: &[&str]) -> (i32, String, String) {
    let out = match Command::new(env!("CARGO_BIN_EXE_ladderfan"))
        .args(args)
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("cannot run ladderfan: {e}"),
    };
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const DIRAC2D_N: &str = "s*sqrt(mass_mev^2 + 2*n*(hbar*velocity_m_per_s*metre/second/l_B)^2)";

#[test]
fn cli_passing_formula_exits_zero_with_a_pass_verdict() {
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=5",
        "--field",
        "3",
        "--cutoff",
        "160",
        "--formula",
        DIRAC2D_N,
        "--formula-n0",
        "valley*sign(q*B)*mass_mev",
        "--n",
        "0..40",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    let last = out.lines().last().unwrap_or_default();
    assert!(
        last.starts_with("verdict: PASS: all 81 levels in the window agree"),
        "{last}"
    );
    // the n = 0 level at tau sign(qB) Delta = -5 meV is listed as agreeing
    assert!(out
        .lines()
        .any(|l| l.starts_with("n=0 ") && l.contains("-5.000000000") && l.contains("agrees")));
}

#[test]
fn cli_failing_formula_exits_one_and_lists_the_forgotten_level() {
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "dirac2d",
        "--set",
        "mass_mev=5",
        "--field",
        "3",
        "--cutoff",
        "160",
        "--formula",
        DIRAC2D_N,
        "--n",
        "1..40",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 1, "{out}\n{err}");
    let last = out.lines().last().unwrap_or_default();
    assert_eq!(
        last,
        "verdict: FAIL: 0 of 80 paired levels disagree, 1 numerical level(s) have no expected \
         partner, 0 expected level(s) have no numerical partner"
    );
    let row: Vec<&str> = out
        .lines()
        .filter(|l| l.contains("NO EXPECTED PARTNER"))
        .collect();
    assert_eq!(row.len(), 1, "{out}");
    assert!(row[0].contains("-5.000000000"), "{}", row[0]);
    assert!(err.contains("verification failed"), "{err}");

    // JSON: the same verdict, machine-readable, same exit code
    let (code, json, _) = ladderfan(&[
        "verify",
        "--builtin",
        "pauli",
        "--set",
        "mass_ratio=0.2",
        "--field",
        "3",
        "--cutoff",
        "60",
        "--formula",
        "hbar*e*abs(q*B)/(mass_ratio*m_e)*(n + 1/2)",
        "--n",
        "0..10",
        "--s",
        "-1,1",
        "--json",
    ]);
    assert_eq!(code, 1);
    let v: serde_json::Value = match serde_json::from_str(&json) {
        Ok(v) => v,
        Err(e) => panic!("{e}: {json}"),
    };
    assert_eq!(v["verdict"]["outcome"], "fail");
    // the dropped Zeeman term (g/2) mu_B B, g = 2 (built-in default): every pair disagrees by it
    let z = BOHR_MAGNETON_MEV_PER_T * 3.0;
    let pairs = v["verdict"]["pairs"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    assert_eq!(pairs.len(), 22);
    for p in &pairs {
        assert_eq!(p["agreement"], "disagrees");
        let d = p["deviation"].as_f64().unwrap_or(0.0).abs();
        assert!((d - z).abs() < 1e-9, "{d} vs {z}");
    }
}

#[test]
fn cli_csv_and_bad_input() {
    // CSV of Landau 1930 levels for the free electron at 2 T (hbar omega_c = 2 mu_B B)
    let w = 2.0 * BOHR_MAGNETON_MEV_PER_T * 2.0;
    let mut text = String::from("n,energy\n");
    for n in 0..=8 {
        text.push_str(&format!("{n},{:.17e}\n", w * (n as f64 + 0.5)));
    }
    let path = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("verify_landau.csv");
    if let Err(e) = std::fs::write(&path, text) {
        panic!("{e}");
    }
    let p = path.display().to_string();
    let (code, out, err) = ladderfan(&[
        "verify",
        "--builtin",
        "schrodinger",
        "--field",
        "2",
        "--cutoff",
        "40",
        "--expected",
        &p,
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    assert!(out.contains("verdict: PASS: all 9 levels"), "{out}");
    // bad input: exit 2 with one located error line
    for (args, want) in [
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--formula",
                "n +",
                "--n",
                "0..3",
            ],
            "--formula: column",
        ),
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--formula",
                "n",
                "--n",
                "3..1",
            ],
            "--n",
        ),
        (
            vec!["verify", "--builtin", "schrodinger"],
            "nothing to verify",
        ),
        (
            vec![
                "verify",
                "--builtin",
                "schrodinger",
                "--expected",
                "/no/such/file.csv",
            ],
            "/no/such/file.csv",
        ),
    ] {
        let (code, _, err) = ladderfan(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(want), "{args:?}: {err}");
        assert_eq!(err.lines().count(), 1, "{err}");
    }
}

#[test]
fn doubly_listed_zero_level_is_not_excused_by_the_cutoff_artefact() {
    // Massless 2D Dirac: s*sqrt(2n) hbar v / l_B for s = ±1 lists n = 0 twice, the spectrum
    // has one zero level (McClure 1956); the second zero eigenvalue of the truncated matrix
    // lives on the top orbital (a cutoff artefact) and must not count as a partner.
    let m = ok(models::dirac2d(Dirac2dParams::default()));
    let pt = FieldPoint::field(3.0);
    let f = formula("s*sqrt(2*n)*hbar*velocity_m_per_s*metre/second/l_B");
    let list = from_formula(&m, pt, &f, &range(0, 30), &[-1, 1]);
    let s = spectrum(&m, pt, 100);
    // the artefact is there: an unconverged level at 0 (both zero modes are exact zeros)
    assert!(s
        .levels
        .iter()
        .any(|l| !l.is_converged() && l.energy.abs() < 1e-9));
    let v = ok(verify::check(&s, &list, &VerifySettings::default()));
    assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
    assert_eq!(v.missing_expected.len(), 1, "{}", describe(&v));
    assert_eq!(v.missing_expected[0].expected.n, 0);
    assert!(v.unresolved_expected.is_empty());
}

#[test]
fn a_level_with_only_an_unconverged_candidate_makes_the_verdict_inconclusive() {
    // Landau 1930 levels; the numerical n = 3 level is marked unconverged by hand (as if the
    // cutoff had not resolved it): the formula is not verified there, so no PASS.
    let m = ok(models::schrodinger(MassParams::default()));
    let pt = FieldPoint::field(2.0);
    let w = cyclotron_energy_mev(1.0, 2.0, -1.0);
    let list = ok(ExpectedList::from_fn(
        &m,
        pt,
        Reference::Zero,
        &range(0, 10),
        &[0],
        |v| Some(w * (v.n as f64 + 0.5)),
    ));
    let mut s = spectrum(&m, pt, 40);
    assert_pass(
        &ok(verify::check(&s, &list, &VerifySettings::default())),
        "schrodinger",
        11,
    );
    let i = s
        .levels
        .iter()
        .position(|l| (l.energy - 3.5 * w).abs() < 1e-9 * w)
        .unwrap_or(usize::MAX);
    s.levels[i].convergence = ladderfan::levels::Convergence::NotConverged;
    s.levels[i].bound = 1e-3 * w;
    s.levels[i].top_weight = 0.0;
    let v = ok(verify::check(&s, &list, &VerifySettings::default()));
    assert_eq!(v.outcome, Outcome::Inconclusive, "{}", describe(&v));
    assert_eq!(v.unresolved_expected.len(), 1);
    assert_eq!(v.unresolved_expected[0].expected.n, 3);
    assert!(!v.passed()); // the CLI exits 1 (tests/cli_e2e.rs)
                          // as a cutoff artefact (weight on the top orbitals) it is no candidate: the level is missing
    s.levels[i].top_weight = 0.9;
    let v = ok(verify::check(&s, &list, &VerifySettings::default()));
    assert_eq!(v.outcome, Outcome::Fail, "{}", describe(&v));
    assert_eq!(v.missing_expected.len(), 1);
}

#[test]
fn cli_model_file_parameters_are_formula_variables() {
    // tests/data/pauli_zeeman.toml: [parameters] m = 0.2, g = -4.4 (invented); Landau 1930 plus
    // the Zeeman term, written with the file's own parameter names
    let file = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/pauli_zeeman.toml");
    let (code, out, err) = ladderfan(&[
        "verify",
        "--model",
        file,
        "--field",
        "4",
        "--cutoff",
        "60",
        "--formula",
        "hbar*e*abs(q*B)/(m*m_e)*(n + 1/2) + s*g/2*mu_B*B",
        "--n",
        "0..20",
        "--s",
        "-1,1",
    ]);
    assert_eq!(code, 0, "{out}\n{err}");
    assert!(out.contains("verdict: PASS: all 42 levels"), "{out}");
}
