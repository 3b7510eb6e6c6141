//! Verify a hand-derived Landau-level formula against the exact spectrum, level by level.
//!
//! Scenario (invented): a Rashba two-dimensional electron gas with effective mass 0.05 m_e,
//! Rashba parameter 20 meV nm and g = -8 (all invented), at 3 T. The formula under test is the
//! Bychkov-Rashba result with the Zeeman term (Bychkov & Rashba, J. Phys. C 17, 6039 (1984);
//! journal details from memory), with s = sign(qB) and Z = (g/2) mu_B B:
//!   n >= 1: E = hbar omega_c n ± sqrt((hbar omega_c / 2 + s Z)^2 + 2 n alpha^2 / l_B^2),
//!   n = 0:  E = hbar omega_c / 2 + s Z (the unpaired level).
//! A version with the Zeeman term forgotten must fail, and the offending levels are listed.

use ladderfan::closed_form::cyclotron_energy_mev;
use ladderfan::models::{self, RashbaParams};
use ladderfan::units::BOHR_MAGNETON_MEV_PER_T;
use ladderfan::verify::{self, ExpectedList, VerifySettings};
use ladderfan::{FieldPoint, Reference, Settings, Spectrum};

fn main() -> Result<(), ladderfan::Error> {
    let p = RashbaParams {
        mass_ratio: 0.05,
        rashba_mev_nm: 20.0,
        g_factor: -8.0,
        charge: -1.0,
    };
    let model = models::rashba(p)?;
    let field = 3.0;
    let point = FieldPoint::field(field);
    let spectrum = Spectrum::compute(&model, point, &Settings::with_cutoff(300))?;
    let hw = cyclotron_energy_mev(p.mass_ratio, field, p.charge);
    let ns: Vec<i64> = (0..=30).collect();
    let formula = |zeeman: f64| {
        move |v: &verify::Vars| -> Option<f64> {
            let s = v.sign_qb();
            let l = v.magnetic_length();
            let z = 0.5 * p.g_factor * BOHR_MAGNETON_MEV_PER_T * field * zeeman;
            if v.n == 0 {
                // one unpaired level: listed once, with the branch s = +1 only
                return (v.s == 1).then_some(0.5 * hw + s * z);
            }
            let n = v.n as f64;
            let root =
                ((0.5 * hw + s * z).powi(2) + 2.0 * n * (p.rashba_mev_nm / l).powi(2)).sqrt();
            Some(hw * n + v.s as f64 * root)
        }
    };
    println!(
        "# Rashba 2DEG with Zeeman term (invented parameters), B = {field} T; energies in meV"
    );
    for (name, zeeman) in [
        ("with the Zeeman term", 1.0),
        ("Zeeman term forgotten", 0.0),
    ] {
        let expected = ExpectedList::from_fn(
            &model,
            point,
            Reference::Zero,
            &ns,
            &[-1, 1],
            formula(zeeman),
        )?;
        let verdict = verify::check(&spectrum, &expected, &VerifySettings::default())?;
        println!("{name}: {}", verdict.verdict_line("meV"));
        for pair in verdict.disagreeing().take(3) {
            println!(
                "   {:<10} expected {:>12.6} numerical {:>12.6}",
                pair.expected.label, pair.expected.energy, pair.numerical.energy
            );
        }
        assert_eq!(verdict.passed(), zeeman == 1.0, "{name}");
    }
    Ok(())
}
