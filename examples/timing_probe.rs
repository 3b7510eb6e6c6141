use ladderfan::*;
use std::time::Instant;
fn main() -> Result<()> {
    let m = builtin::dirac(builtin::RelativisticParams::default())?;
    for prec in [solve::Precision::Double, solve::Precision::Extended] {
        let mut s = Settings::with_cutoff(1_000_000);
        s.precision = prec;
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
            "{prec:?} N=1e6: {:.3} s, {} levels",
            t.elapsed().as_secs_f64(),
            sp.levels.len()
        );
    }
    let mut s = Settings::with_cutoff(500);
    s.splitting = Splitting::Off;
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
        "dense 2000: {:.3} s, {} levels",
        t.elapsed().as_secs_f64(),
        sp.levels.len()
    );
    Ok(())
}
