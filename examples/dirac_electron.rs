//! Numerical vs closed-form Landau levels of the 3+1 Dirac electron.
//!
//! Scenario (invented): an electron in the surface field of a hypothetical magnetar,
//! B = 0.05 B_c (about 2.2e8 T), moving along the field with kz = 0.1 m c / hbar. The exact
//! spectrum of the split ladder basis is compared with the Johnson-Lippmann formula
//! (Phys. Rev. 76, 828 (1949)), level by level, in natural units (m c^2 = 1).

use ladderfan::models::{self, RelativisticParams};
use ladderfan::{FieldPoint, Settings, Spectrum};

fn main() -> Result<(), ladderfan::Error> {
    let model = models::dirac(RelativisticParams::default())?;
    let point = FieldPoint {
        field: 0.05,
        kz: 0.1,
    };
    let spectrum = Spectrum::compute(&model, point, &Settings::with_cutoff(400))?;
    let expected = models::expected_levels(&model, point, spectrum.reference_energy, 12)
        .ok_or_else(|| ladderfan::Error::Unsupported("no closed form for this model".into()))?;

    println!("# 3+1 Dirac electron, B = 0.05 B_c, kz = 0.1 m c/hbar (invented scenario)");
    println!(
        "# units: energy relative to m c^2, in m c^2; {}",
        spectrum.symmetry.describe()
    );
    println!(
        "{:>6} {:>4} {:>22} {:>22} {:>10} {:>10}",
        "nu", "mult", "closed form", "numerical", "|diff|", "bound"
    );
    // positive branch, nu = 0..=12: each expected value must be matched by `multiplicity`
    // converged numerical levels
    let numerical: Vec<f64> = spectrum
        .converged()
        .filter(|l| l.energy > -1.0)
        .map(|l| l.energy)
        .collect();
    let mut cursor = 0;
    let mut worst: f64 = 0.0;
    for e in expected.iter().filter(|e| e.s == 1) {
        for _ in 0..e.multiplicity {
            let got = numerical[cursor];
            let bound = spectrum
                .converged()
                .find(|l| l.energy == got)
                .map_or(f64::NAN, |l| l.bound);
            cursor += 1;
            let diff = (got - e.energy).abs();
            worst = worst.max(diff / e.energy.abs().max(1e-3));
            println!(
                "{:>6} {:>4} {:>22.15e} {:>22.15e} {:>10.2e} {:>10.2e}",
                e.n, e.multiplicity, e.energy, got, diff, bound
            );
        }
    }
    println!("# worst relative deviation {worst:.2e}");
    assert!(
        worst < 1e-10,
        "numerical levels disagree with the closed form"
    );
    Ok(())
}
