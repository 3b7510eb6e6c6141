//! Probe: print the labels of a few models (not asserted; skipped by CI by its name).
use ladderfan::{builtin, catalogue, FieldPoint, Settings, Spectrum};
fn main() -> ladderfan::Result<()> {
    let models = vec![
        builtin::dirac2d(builtin::Dirac2dParams {
            mass_mev: 10.0,
            ..Default::default()
        })?,
        builtin::dirac(builtin::RelativisticParams::default())?,
        catalogue::tilted_dirac2d(catalogue::TiltedDiracParams::default())?,
        catalogue::bilayer(catalogue::BilayerParams::default())?,
    ];
    for m in &models {
        let b = if m.units() == ladderfan::units::Units::Natural {
            0.3
        } else {
            2.0
        };
        let s = Spectrum::compute(m, FieldPoint::field(b), &Settings::with_cutoff(120))?;
        println!("{} {}", m.name(), s.symmetry.describe());
        let mut v: Vec<_> = s.levels.iter().filter(|l| l.is_converged()).collect();
        v.sort_by(|a, b| a.energy.abs().total_cmp(&b.energy.abs()));
        for l in v.iter().take(9) {
            println!(
                "  {:>14.6} {:>6} sector {:?}",
                l.energy,
                l.label.to_string(),
                l.sector
            );
        }
    }
    Ok(())
}
