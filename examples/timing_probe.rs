//! Quick wall-clock probe of the main solver paths (release build; not a test).
use ladderfan::matrix::pauli;
use ladderfan::*;
use std::time::Instant;

fn main() -> Result<()> {
    let m = builtin::dirac(builtin::RelativisticParams::default())?;
    let mut s = Settings::with_cutoff(1_000_000);
    s.precision = solve::Precision::Double;
    let t = Instant::now();
    let sp = Spectrum::compute(
        &m,
        FieldPoint {
            field: 1e-3,
            kz: 0.05,
        },
        &s,
    )?;
    println!(
        "split Dirac N=1e6: {:.3} s, {} levels",
        t.elapsed().as_secs_f64(),
        sp.levels.len()
    );
    // invented two-band model with cubic warping (J mod 3 only)
    let w = Model::builder("warped (invented)", 2)
        .term("mass", 20.0, pauli("z")?, Monomial::ONE)
        .term("kx2", 400.0, pauli("z")?, Monomial::new(2, 0, 0))
        .term("ky2", 400.0, pauli("z")?, Monomial::new(0, 2, 0))
        .term("vx", 300.0, pauli("x")?, Monomial::KX)
        .term("vy", 300.0, pauli("y")?, Monomial::KY)
        .term("w1", 900.0, pauli("z")?, Monomial::new(3, 0, 0))
        .term("w2", -2700.0, pauli("z")?, Monomial::new(1, 2, 0))
        .build()?;
    for n in [100_000usize, 1_000_000] {
        for split in [Splitting::Auto, Splitting::Off] {
            let mut s = Settings::with_cutoff(n);
            s.target = Target::Nearest {
                energy: 100.0,
                count: 20,
            };
            s.splitting = split;
            let t = Instant::now();
            let sp = Spectrum::compute(&w, FieldPoint::field(10.0), &s)?;
            println!(
                "window N={n} {split:?}: {:.3} s, {} levels, first {:.6}",
                t.elapsed().as_secs_f64(),
                sp.levels.len(),
                sp.levels[0].energy
            );
        }
    }
    Ok(())
}
