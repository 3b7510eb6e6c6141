//! Quick wall-clock probe of the main solver paths (release build; not a test):
//! `cargo bench --bench timing_probe`.
#[path = "shared/warping.rs"]
mod warping;
use ladderfan::*;
use std::time::Instant;

fn main() -> Result<()> {
    let m = models::dirac(models::RelativisticParams::default())?;
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
    // split vs unsplit dense at 4N = 2000 (N = 500), same model and point, same run
    let p = FieldPoint {
        field: 1e-3,
        kz: 0.05,
    };
    let mut split = Settings::with_cutoff(500);
    split.precision = solve::Precision::Double;
    let mut unsplit = split.clone();
    unsplit.splitting = Splitting::Off;
    let t = Instant::now();
    for _ in 0..100 {
        Spectrum::compute(&m, p, &split)?;
    }
    let t_split = t.elapsed().as_secs_f64() / 100.0;
    let t = Instant::now();
    Spectrum::compute(&m, p, &unsplit)?;
    let t_dense = t.elapsed().as_secs_f64();
    println!(
        "N=500: split {t_split:.5} s, dense unsplit 2000 {t_dense:.3} s, ratio {:.0}",
        t_dense / t_split
    );
    // invented two-band model with cubic warping (J mod 3 only)
    let w = warping::warped()?;
    for n in [100_000usize, 1_000_000] {
        for split in [Splitting::Auto, Splitting::Off] {
            let s = warping::window_settings(n, split);
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
