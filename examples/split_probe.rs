//! Profile target: the split 3+1 Dirac path at N = 1e6 (release; not a test).
use ladderfan::*;
fn main() -> Result<()> {
    let m = builtin::dirac(builtin::RelativisticParams::default())?;
    let mut s = Settings::with_cutoff(1_000_000);
    s.precision = solve::Precision::Double;
    let t = std::time::Instant::now();
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
    Ok(())
}
