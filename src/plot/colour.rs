//! The palette (ten distinct categorical colours) and the continuous colour scale used for a
//! per-point quantity (Landau index, component weight, ...), both our own.

use super::svg::Rgb;

/// Categorical colours, chosen to stay apart from each other and from the black overlays.
pub const CATEGORICAL: [Rgb; 10] = [
    Rgb(27, 94, 158),
    Rgb(209, 73, 91),
    Rgb(42, 157, 97),
    Rgb(142, 95, 181),
    Rgb(224, 138, 30),
    Rgb(26, 163, 168),
    Rgb(122, 82, 48),
    Rgb(194, 67, 154),
    Rgb(95, 122, 18),
    Rgb(74, 74, 74),
];

/// Colour of category `k` (only used with at most [`CATEGORICAL`]`.len()` categories; more
/// are drawn on the continuous scale instead, so no two categories share a colour).
pub fn categorical(k: usize) -> Rgb {
    CATEGORICAL[k % CATEGORICAL.len()]
}

/// Anchors of the continuous scale at u = 0, 0.25, 0.5, 0.75, 1: deep indigo, steel blue,
/// green-teal, olive-yellow, light gold. Lightness rises monotonically, so the order survives a
/// grey-scale print.
const ANCHORS: [Rgb; 5] = [
    Rgb(45, 27, 105),
    Rgb(38, 104, 170),
    Rgb(40, 160, 130),
    Rgb(176, 196, 60),
    Rgb(250, 215, 90),
];

/// Colour of u in [0, 1] (clamped; NaN gives grey) on the continuous scale.
pub fn continuous(u: f64) -> Rgb {
    if !u.is_finite() {
        return Rgb(150, 150, 150);
    }
    let u = u.clamp(0.0, 1.0) * (ANCHORS.len() - 1) as f64;
    let i = (u.floor() as usize).min(ANCHORS.len() - 2);
    let f = u - i as f64;
    let (a, b) = (ANCHORS[i], ANCHORS[i + 1]);
    let mix = |x: u8, y: u8| (x as f64 + f * (y as f64 - x as f64)).round() as u8;
    Rgb(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Relative luminance (sRGB weights 0.2126, 0.7152, 0.0722; ITU-R BT.709) of a colour.
pub fn luminance(c: Rgb) -> f64 {
    let lin = |v: u8| {
        let s = v as f64 / 255.0;
        if s <= 0.04045 {
            s / 12.92
        } else {
            ((s + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn continuous_scale_gets_lighter_monotonically() {
        let l: Vec<f64> = (0..=20)
            .map(|i| luminance(continuous(i as f64 / 20.0)))
            .collect();
        assert!(l.windows(2).all(|w| w[1] > w[0]), "{l:?}");
        assert_eq!(continuous(-3.0), continuous(0.0));
    }

    #[test]
    fn categorical_colours_are_distinct() {
        for (i, a) in CATEGORICAL.iter().enumerate() {
            for (j, b) in CATEGORICAL.iter().enumerate().take(i) {
                let d = (a.0 as i32 - b.0 as i32).abs()
                    + (a.1 as i32 - b.1 as i32).abs()
                    + (a.2 as i32 - b.2 as i32).abs();
                assert!(d > 60, "{i} {j}");
            }
        }
    }
}
