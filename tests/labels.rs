//! Quantum numbers of the levels (src/labelling/) against the quantum numbers the closed forms
//! list (src/models/, each model file's formula with its published source in its doc comment), for
//! every built-in and catalogue model at several fields and both charge signs.
//!
//! For each model the computed converged levels with Landau index n <= N_WIN are grouped by
//! (n, sign of the branch) and compared with the closed-form levels grouped the same way
//! (multiplicities expanded): the same groups, the same number of levels in each, the same
//! energies within the level's bound plus 1e-8 of the energy scale. For the Pauli model the
//! closed form's `s` is the spin, read here from the dominant component (`up` = +1).

use ladderfan::levels::{Branch, LabelOrigin};
use ladderfan::models::{
    self, BhzParams, BilayerParams, Dirac2dParams, DiracAmmParams, MassParams, PauliParams,
    RashbaParams, RelativisticParams, TiltedDiracParams, WeylParams,
};
use ladderfan::units::Units;
use ladderfan::{FieldPoint, Model, Settings, Spectrum};
use std::collections::BTreeMap;

fn ok<T>(r: ladderfan::Result<T>) -> T {
    match r {
        Ok(v) => v,
        Err(e) => panic!("{e}"),
    }
}

/// Landau indices compared.
const N_WIN: i64 = 4;

fn models(charge: f64) -> Vec<(Model, usize)> {
    vec![
        (
            ok(models::schrodinger(MassParams {
                charge,
                ..Default::default()
            })),
            40,
        ),
        (
            ok(models::pauli(PauliParams {
                charge,
                ..Default::default()
            })),
            40,
        ),
        (
            ok(models::dirac(RelativisticParams {
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::klein_gordon(RelativisticParams {
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::dirac2d(Dirac2dParams {
                mass_mev: 10.0,
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::weyl(WeylParams {
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::dirac_amm(DiracAmmParams {
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::tilted_dirac2d(TiltedDiracParams {
                charge,
                ..Default::default()
            })),
            200,
        ),
        (
            ok(models::rashba(RashbaParams {
                charge,
                ..Default::default()
            })),
            80,
        ),
        (
            ok(models::bilayer(BilayerParams {
                charge,
                ..Default::default()
            })),
            60,
        ),
        (
            ok(models::bhz(BhzParams {
                charge,
                ..Default::default()
            })),
            80,
        ),
    ]
}

fn field(m: &Model, b: f64) -> f64 {
    // natural units: fields are in B_c; keep hbar omega_c well below m c^2 but not tiny
    if m.units() == Units::Natural {
        0.05 * b
    } else {
        b
    }
}

type Groups = BTreeMap<(i64, i8), Vec<f64>>;

fn computed_groups(m: &Model, s: &Spectrum) -> Groups {
    let mut g: Groups = BTreeMap::new();
    for (i, l) in s.levels.iter().enumerate() {
        if !l.is_converged() || !l.label.is_known() || l.label.n > N_WIN {
            continue;
        }
        let sign = if m.name() == "pauli" {
            // spin from the dominant component: component 0 is `up`
            let w = s.weights_of(i);
            if w[0] >= w[1] {
                1
            } else {
                -1
            }
        } else {
            l.label.branch.sign()
        };
        g.entry((l.label.n, sign)).or_default().push(l.energy);
    }
    g
}

fn expected_groups(m: &Model, s: &Spectrum) -> Groups {
    let list = models::expected_levels(m, s.point, s.reference_energy, N_WIN as usize)
        .unwrap_or_else(|| panic!("no closed form for {}", m.name()));
    let mut g: Groups = BTreeMap::new();
    for x in list {
        for _ in 0..x.multiplicity {
            g.entry((x.n, x.s)).or_default().push(x.energy);
        }
    }
    g
}

#[test]
fn labels_equal_the_closed_form_quantum_numbers_for_every_built_in_model() {
    for charge in [-1.0, 1.0] {
        for (m, cutoff) in models(charge) {
            for b in [0.7, 2.0, 6.5] {
                let point = FieldPoint {
                    field: field(&m, b),
                    kz: 0.0,
                };
                // the Pauli spin is read from the component weights
                let settings = Settings {
                    weights: ladderfan::Weights::Compute,
                    ..Settings::with_cutoff(cutoff)
                };
                let s = ok(Spectrum::compute(&m, point, &settings));
                let got = computed_groups(&m, &s);
                let want = expected_groups(&m, &s);
                let ctx = format!("{} q = {charge} B = {b}", m.name());
                assert_eq!(
                    got.keys().collect::<Vec<_>>(),
                    want.keys().collect::<Vec<_>>(),
                    "{ctx}: labels"
                );
                for (key, e_want) in &want {
                    let mut e_got = got[key].clone();
                    let mut e_want = e_want.clone();
                    e_got.sort_by(f64::total_cmp);
                    e_want.sort_by(f64::total_cmp);
                    assert_eq!(e_got.len(), e_want.len(), "{ctx}: count of {key:?}");
                    for (a, w) in e_got.iter().zip(&e_want) {
                        let tol = 1e-8 * w.abs().max(s.energy_scale);
                        assert!((a - w).abs() <= tol, "{ctx}: {key:?} {a} vs {w}");
                    }
                }
            }
        }
    }
}

#[test]
fn plus_and_minus_e_n_of_the_gapped_2d_dirac_model_share_n() {
    // E_n = ± sqrt(Delta^2 + n (36.28 meV)^2 B/T) (McClure 1956, massive form common practice);
    // the lone level n = 0 sits at tau sign(qB) Delta.
    for charge in [-1.0, 1.0] {
        let m = ok(models::dirac2d(Dirac2dParams {
            mass_mev: 10.0,
            charge,
            ..Default::default()
        }));
        let s = ok(Spectrum::compute(
            &m,
            FieldPoint::field(1.0),
            &Settings::with_cutoff(80),
        ));
        let conv: Vec<_> = s.converged().collect();
        for n in 1..=5 {
            let plus: Vec<_> = conv
                .iter()
                .filter(|l| l.label.n == n && l.label.branch == Branch::Upper(1))
                .collect();
            let minus: Vec<_> = conv
                .iter()
                .filter(|l| l.label.n == n && l.label.branch == Branch::Lower(1))
                .collect();
            assert_eq!((plus.len(), minus.len()), (1, 1), "n = {n}");
            assert!((plus[0].energy + minus[0].energy).abs() < 1e-9 * plus[0].energy);
            let want = (100.0 + n as f64 * 36.28f64.powi(2)).sqrt();
            assert!(
                (plus[0].energy - want).abs() < 0.02 * n as f64,
                "{}",
                plus[0].energy
            );
        }
        let zero: Vec<_> = conv.iter().filter(|l| l.label.n == 0).collect();
        assert_eq!(zero.len(), 1);
        assert_eq!(zero[0].label.branch, Branch::Unpaired);
        assert_eq!(zero[0].label.origin, LabelOrigin::ExactSector);
        assert!((zero[0].energy.abs() - 10.0).abs() < 1e-9);
        assert_eq!(zero[0].label.to_string(), "0");
    }
}

#[test]
fn three_plus_one_dirac_labels_do_not_depend_on_kz() {
    // nu = 0 has one level on each side of the gap at every kz (Johnson & Lippmann, Phys. Rev.
    // 76, 828 (1949)); kz = 0 splits the 4x4 problem into two blocks, which must not change it.
    let m = ok(models::dirac(RelativisticParams::default()));
    for kz in [0.0, 0.3] {
        let s = ok(Spectrum::compute(
            &m,
            FieldPoint { field: 0.1, kz },
            &Settings::with_cutoff(40),
        ));
        let nu0: Vec<_> = s.converged().filter(|l| l.label.n == 0).collect();
        assert_eq!(nu0.len(), 2, "kz = {kz}");
        assert_eq!(nu0[0].label.branch, Branch::Lower(1));
        assert_eq!(nu0[1].label.branch, Branch::Upper(1));
    }
}

#[test]
fn continued_labels_of_a_warping_model_match_the_symmetric_model_at_weak_warping() {
    // Invented parameters (meV, nm): a gapped cone with cubic warping lam (kx^3 - 3 kx ky^2)
    // sigma_z. Only J mod 3 survives; the labels come from continuation. At a warping this weak
    // (second order shift ~ (lam / l_B^3)^2 / spacing << spacing) every low level stays within a
    // tenth of a spacing of the symmetric level with the same label (perturbation theory, common
    // practice), so the label is checked against the warping-free closed form of the gapped cone.
    use ladderfan::matrix::pauli;
    use ladderfan::Monomial;
    let build = |lam: f64| {
        ok(Model::builder("warped cone (invented)", 2)
            .term("mass", 10.0, ok(pauli("z")), Monomial::ONE)
            .term("vx", 658.2, ok(pauli("x")), Monomial::KX)
            .term("vy", 658.2, ok(pauli("y")), Monomial::KY)
            .term("w1", lam, ok(pauli("z")), Monomial::new(3, 0, 0))
            .term("w2", -3.0 * lam, ok(pauli("z")), Monomial::new(1, 2, 0))
            .build())
    };
    let warped = build(200.0);
    let s = ok(Spectrum::compute(
        &warped,
        FieldPoint::field(4.0),
        &Settings::with_cutoff(200),
    ));
    assert!(!s.symmetry.is_exact(), "{}", s.symmetry.describe());
    let plain = ok(Spectrum::compute(
        &build(0.0),
        FieldPoint::field(4.0),
        &Settings::with_cutoff(200),
    ));
    let mut checked = 0;
    for l in s.converged().filter(|l| l.energy.abs() < 200.0) {
        assert_eq!(l.label.origin, LabelOrigin::Continuation, "{l:?}");
        let twin = plain
            .converged()
            .find(|p| p.label.n == l.label.n && p.label.branch == l.label.branch)
            .unwrap_or_else(|| panic!("no symmetric level {}", l.label));
        let spacing = 20.0; // well below the smallest gap between these levels (~ 25 meV)
        assert!(
            (twin.energy - l.energy).abs() < 0.1 * spacing,
            "{} {} {}",
            l.label,
            l.energy,
            twin.energy
        );
        assert!(l.label.to_string().ends_with('~'));
        checked += 1;
    }
    assert!(checked >= 7, "{checked}");
}
