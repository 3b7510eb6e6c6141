//! Axis scales (linear, logarithmic, inverse: the 1/B axis of quantum oscillations), the map
//! from data to pixels and the tick positions.

/// How data values map onto an axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Scale {
    /// t = v.
    #[default]
    Linear,
    /// t = log10 v; values <= 0 are not drawn.
    Log,
    /// t = 1 / v (a 1/B axis); v = 0 is not drawn and no line joins v < 0 to v > 0.
    Inverse,
}

impl Scale {
    /// The axis coordinate t of a data value, NaN where the scale has none.
    pub fn forward(self, v: f64) -> f64 {
        match self {
            Scale::Linear => v,
            Scale::Log if v > 0.0 => v.log10(),
            Scale::Inverse if v != 0.0 => 1.0 / v,
            _ => f64::NAN,
        }
    }

    /// Parse `linear`, `log` or `inverse` (also `1/x`).
    ///
    /// # Errors
    /// [`crate::Error::Unsupported`] naming the accepted spellings.
    pub fn parse(s: &str) -> crate::error::Result<Scale> {
        match s.trim().to_ascii_lowercase().as_str() {
            "linear" | "lin" => Ok(Scale::Linear),
            "log" => Ok(Scale::Log),
            "inverse" | "1/x" | "inv" => Ok(Scale::Inverse),
            other => Err(crate::error::Error::Unsupported(format!(
                "axis scale `{other}` is not known; use linear, log or inverse"
            ))),
        }
    }
}

/// One axis: the range in axis coordinates t and the pixel interval it fills.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Axis {
    pub scale: Scale,
    pub t0: f64,
    pub t1: f64,
    /// Pixel of t0 and of t1 (y axes run downwards: p0 > p1).
    pub p0: f64,
    pub p1: f64,
}

impl Axis {
    /// Pixel of an axis coordinate.
    pub fn px_t(&self, t: f64) -> f64 {
        self.p0 + (t - self.t0) / (self.t1 - self.t0) * (self.p1 - self.p0)
    }

    /// Pixel of a data value (NaN where the scale has none).
    pub fn px(&self, v: f64) -> f64 {
        self.px_t(self.scale.forward(v))
    }

    /// Tick positions (axis coordinate) with their labels.
    pub fn ticks(&self) -> Vec<(f64, String)> {
        match self.scale {
            Scale::Log => log_ticks(self.t0, self.t1),
            Scale::Linear | Scale::Inverse => nice_ticks(self.t0, self.t1, 6),
        }
    }
}

/// The padded range (in axis coordinates) of the finite values, or (-1, 1) for none.
pub(crate) fn data_range(ts: impl Iterator<Item = f64>, pad: f64) -> (f64, f64) {
    let (a, b) = ts
        .filter(|t| t.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), t| {
            (a.min(t), b.max(t))
        });
    if !(a.is_finite() && b.is_finite()) {
        return (-1.0, 1.0);
    }
    if b - a <= 1e-12 * a.abs().max(b.abs()).max(1e-300) {
        let w = if a == 0.0 { 1.0 } else { 0.05 * a.abs() };
        return (a - w, b + w);
    }
    let p = pad * (b - a);
    (a - p, b + p)
}

/// A step of 1, 2 or 5 times a power of ten giving about `target` intervals over [a, b].
pub(crate) fn nice_step(a: f64, b: f64, target: usize) -> f64 {
    let raw = (b - a).abs() / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let f = raw / mag;
    let m = if f < 1.5 {
        1.0
    } else if f < 3.5 {
        2.0
    } else if f < 7.5 {
        5.0
    } else {
        10.0
    };
    m * mag
}

/// Linear ticks at multiples of a nice step inside [a, b], labelled with as few digits as the
/// step needs.
pub(crate) fn nice_ticks(a: f64, b: f64, target: usize) -> Vec<(f64, String)> {
    let (lo, hi) = (a.min(b), a.max(b));
    let step = nice_step(lo, hi, target);
    if !(step.is_finite() && step > 0.0) {
        return vec![];
    }
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    let big = hi.abs().max(lo.abs());
    let sci = big >= 1e5 || (big < 1e-3 && big > 0.0);
    let mut out = Vec::new();
    let mut k = (lo / step).ceil();
    while k * step <= hi + 1e-9 * step && out.len() < 40 {
        let v = k * step;
        let v = if v.abs() < 1e-12 * step { 0.0 } else { v };
        let label = if sci {
            format_sci(v)
        } else {
            format!("{v:.decimals$}")
        };
        out.push((v, label));
        k += 1.0;
    }
    out
}

fn format_sci(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let s = format!("{v:.1e}");
    s.replace(".0e", "e")
}

/// Ticks of a log axis (t = log10 v): every decade, plus 2 and 5 when the axis spans fewer
/// than three decades; decades are thinned to at most eight labels.
pub(crate) fn log_ticks(t0: f64, t1: f64) -> Vec<(f64, String)> {
    let (lo, hi) = (t0.min(t1), t0.max(t1));
    let span = hi - lo;
    let mut out = Vec::new();
    let every = ((span / 8.0).ceil() as i64).max(1);
    let (d0, d1) = (lo.floor() as i64, hi.ceil() as i64);
    for d in d0..=d1 {
        let mults: &[f64] = if span < 3.0 { &[1.0, 2.0, 5.0] } else { &[1.0] };
        for &m in mults {
            let t = d as f64 + m.log10();
            if t < lo - 1e-9 || t > hi + 1e-9 || (m == 1.0 && d.rem_euclid(every) != 0) {
                continue;
            }
            let v = m * 10f64.powi(d as i32);
            let label = if (-3..=4).contains(&d) {
                let dec = (-d).max(0) as usize;
                format!("{v:.dec$}")
            } else {
                format!("{m}e{d}")
            };
            out.push((t, label));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn linear_ticks_are_round_and_inside() {
        // 0..10 with about 6 intervals: step 2 (common practice, 1-2-5 steps)
        let t = nice_ticks(0.0, 10.0, 6);
        let v: Vec<f64> = t.iter().map(|p| p.0).collect();
        assert_eq!(v, vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        assert_eq!(t[1].1, "2");
        let t = nice_ticks(0.013, 0.071, 6);
        assert!(t.iter().all(|p| p.0 >= 0.013 && p.0 <= 0.071));
        // step 0.01 (1-2-5 rule), so two decimals
        assert_eq!(t[0].1, "0.02");
    }

    #[test]
    fn log_ticks_have_several_labels_on_a_short_axis() {
        // 10 to 300: decades 10, 100 plus 20, 50, 200 (from memory: 1-2-5 log ticks)
        let t = log_ticks(1.0, 300f64.log10());
        let labels: Vec<&str> = t.iter().map(|p| p.1.as_str()).collect();
        assert_eq!(labels, vec!["10", "20", "50", "100", "200"]);
        let t = log_ticks(-12.0, 0.0);
        assert!(t.len() >= 4 && t.len() <= 9, "{t:?}");
    }

    #[test]
    fn inverse_and_log_scales_refuse_what_they_cannot_show() {
        assert!(Scale::Inverse.forward(0.0).is_nan());
        assert!((Scale::Inverse.forward(4.0) - 0.25).abs() < 1e-15);
        assert!(Scale::Log.forward(-1.0).is_nan());
        assert!(Scale::parse("sideways").is_err());
    }
}
