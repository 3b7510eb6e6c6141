//! Wall-clock probe of the window solver on the invented warping model of
//! `tools/shared/warping.rs` (release build; not a test, asserts nothing):
//! `cargo bench --bench warp_probe -- N [auto|off] [REPEATS]`.
//! Prints one line per run: time, level count, first level.
#[path = "shared/warping.rs"]
mod warping;
use ladderfan::*;
use std::time::Instant;

fn main() -> Result<()> {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let n: usize = args
        .first()
        .and_then(|a| a.parse().ok())
        .unwrap_or(1_000_000);
    let split = match args.get(1).map(String::as_str) {
        Some("off") => Splitting::Off,
        _ => Splitting::Auto,
    };
    let repeats: usize = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(1);
    // invented two-band model with cubic warping (J mod 3 only), as in timing_probe
    let w = warping::warped()?;
    for _ in 0..repeats {
        let s = warping::window_settings(n, split);
        let t = Instant::now();
        let sp = Spectrum::compute(&w, FieldPoint::field(10.0), &s)?;
        let e: Vec<String> = sp
            .levels
            .iter()
            .map(|l| format!("{:.9}", l.energy))
            .collect();
        println!(
            "window N={n} {split:?}: {:.3} s, {} levels, {}",
            t.elapsed().as_secs_f64(),
            sp.levels.len(),
            e.join(" ")
        );
    }
    Ok(())
}
