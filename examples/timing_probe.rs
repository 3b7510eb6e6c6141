use ladderfan::*;
use std::time::Instant;
fn main() -> Result<()> {
    let m = builtin::dirac(builtin::RelativisticParams::default())?;
    let mut s = Settings::with_cutoff(1_000_000);
    s.precision = solve::Precision::Double;
    for _ in 0..2 {
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
            "Double N=1e6: {:.3} s, {} levels",
            t.elapsed().as_secs_f64(),
            sp.levels.len()
        );
    }
    Ok(())
}
