//! A bracketed root of a real function of one variable: regula falsi with the Illinois
//! modification, the one root finder behind the semiclassical contours, Onsager levels and fan
//! crossings, and the 3D Fermi level at a temperature (and any other sign change that must stay
//! bracketed).
//!
//! # References
//! M. Dowell and P. Jarratt, "A modified regula falsi method for computing the root of an
//! equation", BIT 11, 168-174 (1971) (the Illinois method: halve the function value kept at
//! an end that stays twice in a row; superlinear, order about 1.44, never leaves the bracket).

/// When [`illinois`] stops.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stop {
    /// Stop once the bracket is at most this wide relative to its larger end: |b - a| <=
    /// `rel_width` max(|a|, |b|).
    pub rel_width: f64,
    /// Stop after this many evaluations of the function.
    pub max_steps: usize,
    /// Stop as soon as |f| <= `small` at a new point (0: only an exact zero stops early).
    pub small: f64,
}

/// A root of `f` in the bracket `[a, b]` given f(a) = `fa` and f(b) = `fb` of opposite signs
/// (or one of them zero), by regula falsi with the Illinois modification; the bracket is
/// kept at every step (a step that would leave it bisects instead).
///
/// # Formula
/// m = (a f(b) - b f(a)) / (f(b) - f(a)); m replaces the end whose f has the sign of f(m); when
/// the same end is kept twice in a row its stored f is halved (Illinois).
///
/// Returns an end or a point where |f| <= `stop.small` (the ends are looked at first), or, when the bracket is narrow enough
/// or the steps are spent, the end of the bracket with the smaller |f|. Ends of equal sign are
/// not a bracket: then the end with the smaller |f| is returned without any evaluation.
///
/// # Errors
/// The first error of `f`, unchanged.
///
/// # Complexity
/// At most `stop.max_steps` evaluations of `f`; superlinear convergence (order about 1.44) for
/// a smooth simple root.
///
/// # Examples
/// ```
/// use ladderfan::numeric::root::{illinois, Stop};
/// let f = |x: f64| -> Result<f64, ()> { Ok(x * x - 2.0) };
/// let stop = Stop { rel_width: 4.0 * f64::EPSILON, max_steps: 100, small: 0.0 };
/// let r = illinois(f, (1.0, -1.0), (2.0, 2.0), stop).unwrap();
/// assert!((r - 2f64.sqrt()).abs() <= 4.0 * f64::EPSILON * 2.0);
/// ```
pub fn illinois<E>(
    mut f: impl FnMut(f64) -> Result<f64, E>,
    (a, fa): (f64, f64),
    (b, fb): (f64, f64),
    stop: Stop,
) -> Result<f64, E> {
    let (mut a, mut fa, mut b, mut fb) = (a, fa, b, fb);
    if fa.abs() <= stop.small || fa == 0.0 {
        return Ok(a);
    }
    if fb.abs() <= stop.small || fb == 0.0 {
        return Ok(b);
    }
    if (fa < 0.0) == (fb < 0.0) {
        return Ok(if fa.abs() < fb.abs() { a } else { b });
    }
    let mut side = 0i8;
    for _ in 0..stop.max_steps {
        if (b - a).abs() <= stop.rel_width * b.abs().max(a.abs()) {
            break;
        }
        let mut m = (a * fb - b * fa) / (fb - fa);
        if !(m > a.min(b) && m < a.max(b)) {
            m = 0.5 * (a + b);
        }
        let fm = f(m)?;
        if fm.abs() <= stop.small || fm == 0.0 {
            return Ok(m);
        }
        if (fm < 0.0) == (fa < 0.0) {
            a = m;
            fa = fm;
            if side == -1 {
                fb *= 0.5;
            }
            side = -1;
        } else {
            b = m;
            fb = fm;
            if side == 1 {
                fa *= 0.5;
            }
            side = 1;
        }
    }
    Ok(if fa.abs() < fb.abs() { a } else { b })
}

#[cfg(test)]
mod tests {
    use super::*;

    const TIGHT: Stop = Stop {
        rel_width: 4.0 * f64::EPSILON,
        max_steps: 200,
        small: 0.0,
    };

    #[test]
    fn roots_of_smooth_functions_to_a_few_ulp() {
        // cos x = x at 0.739085133215160641655312087673873 (the Dottie number, from memory)
        let r = illinois(
            |x: f64| Ok::<_, ()>(x.cos() - x),
            (0.0, 1.0),
            (1.0, 1f64.cos() - 1.0),
            TIGHT,
        );
        assert!((r.unwrap() - 0.739_085_133_215_160_6).abs() < 1e-15);
        // a decreasing function, bracket given high end first
        let r = illinois(
            |x: f64| Ok::<_, ()>(1.0 - x.powi(3)),
            (3.0, -26.0),
            (0.0, 1.0),
            TIGHT,
        );
        assert!((r.unwrap() - 1.0).abs() < 1e-15);
    }

    #[test]
    fn no_bracket_returns_the_better_end_and_errors_pass_through() {
        let calls = std::cell::Cell::new(0);
        let f = |x: f64| {
            calls.set(calls.get() + 1);
            Ok::<_, ()>(x)
        };
        assert_eq!(illinois(f, (1.0, 1.0), (2.0, 2.0), TIGHT), Ok(1.0));
        assert_eq!(calls.get(), 0);
        let r = illinois(|_| Err("broken"), (-1.0, -1.0), (1.0, 1.0), TIGHT);
        assert_eq!(r, Err("broken"));
    }

    #[test]
    fn the_illinois_step_beats_plain_regula_falsi_on_a_convex_function() {
        // plain regula falsi keeps one end of e^x - 2 on [0, 4] for ever and needs hundreds of
        // steps; the Illinois halving converges in a few dozen (common practice)
        let count = std::cell::Cell::new(0);
        let r = illinois(
            |x: f64| {
                count.set(count.get() + 1);
                Ok::<_, ()>(x.exp() - 2.0)
            },
            (0.0, -1.0),
            (4.0, 4f64.exp() - 2.0),
            TIGHT,
        )
        .unwrap();
        assert!((r - 2f64.ln()).abs() < 1e-15);
        assert!(count.get() < 40, "{} evaluations", count.get());
    }
}
