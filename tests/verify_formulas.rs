//! Verification of correct level formulas against the exact spectrum (src/verify/).
//!
//! * Every built-in and catalogue model: its closed form (src/models/, each model file's closed form with
//!   its published source) passes through the API, at both signs of qB.
//! * The same physics typed as expressions of the verify language (the README, section Verifying a level formula) and as Rust
//!   closures passes: Landau 1930 (Schrodinger, Pauli), Rabi 1928 / Johnson & Lippmann 1949
//!   (3+1 Dirac), McClure 1956 (2D Dirac), Nielsen & Ninomiya 1983 (Weyl chiral level),
//!   Goerbig et al. PRB 78, 045415 (2008) (tilted cone), Bychkov & Rashba 1984 (Rashba),
//!   McCann & Fal'ko PRL 96, 086805 (2006) (bilayer).
//! * Formula errors are located, an empty window is inconclusive.
//!
//! Model parameters are invented; helpers in tests/common/verdict.rs.

use ladderfan::closed_form::{cyclotron_energy_mev, dirac_energy_mev};
use ladderfan::models::{
    self, BhzParams, BilayerParams, Dirac2dParams, DiracAmmParams, MassParams, PauliParams,
    RashbaParams, RelativisticParams, Valley,
};
use ladderfan::units::BOHR_MAGNETON_MEV_PER_T;
use ladderfan::verify::{self, ExpectedList, LevelFormula, Outcome, VerifySettings};
use ladderfan::{FieldPoint, Model, Reference};

mod common;
use common::verdict::*;

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
        ("n,e\n0,1\n", "no energy column"),
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
    assert!(!v.passed()); // the CLI exits 1 (tests/verify_cli.rs)
    let bad = VerifySettings {
        tolerance: -1.0,
        ..Default::default()
    };
    assert!(verify::check(&s, &list, &bad).is_err());
}
