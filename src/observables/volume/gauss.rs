//! The unit Gaussian line and its cumulative from a table and a Taylor polynomial, for the
//! check sums of the adaptive kz quadrature (about ten multiply-adds per value instead of an
//! `exp` and an `erfc`).
//!
//! # Formula
//! With phi(t) = exp(-t^2/2)/sqrt(2 pi) and Phi(t) = erfc(-t/sqrt 2)/2, on the grid
//! t_i = -T + i tau (tau = 1/32) and for t = t_i + d, |d| <= tau/2:
//!
//! phi(t) = sum_{n=0}^{N} a_n d^n, Phi(t) = Phi(t_i) + sum_{n=0}^{N} a_n d^{n+1}/(n+1),
//!
//! a_n = phi^(n)(t_i)/n! = (-1)^n He_n(t_i) phi(t_i)/n! with the probabilists' Hermite
//! polynomials He_0 = 1, He_1 = t, He_{n+1} = t He_n - n He_{n-1} (Taylor series of the
//! Gaussian, common practice). With N = 8 the first term left out is about
//! |He_9(t_i)| (1/64)^9/9! phi(t_i) = 1.5e-22 |He_9(t_i)| phi(t_i): under 1e-16 phi for
//! |t| <= 5 (|He_9| <= 6e5 there), and under 1e-13 phi up to |t| = 9.5 (|He_9(9.5)| is about
//! 4.1e8), where phi < 1e-19, so the absolute error is far below rounding of the sums it
//! enters; the test holds the table to 1e-13 relative and 4e-16 absolute against `exp` and
//! `erfc`.
//! The table covers |t| <= T = 9.5, beyond the 9 widths of a Gaussian line's reach.

use crate::observables::dos::erfc;
use std::f64::consts::{PI, SQRT_2};
use std::sync::OnceLock;

/// Degree of the Taylor polynomials.
const ORDER: usize = 8;
/// Grid points per unit of t.
const PER_UNIT: f64 = 32.0;
/// Half-width of the table in t.
pub(super) const COVER: f64 = 9.5;

/// The table (module docs).
pub(super) struct GaussTable {
    /// Taylor coefficients a_n of phi about each grid point.
    line: Vec<[f64; ORDER + 1]>,
    /// a_n / (n + 1), the coefficients of Phi(t) - Phi(t_i) over d.
    rise: Vec<[f64; ORDER + 1]>,
    /// Phi at each grid point.
    cumulative: Vec<f64>,
}

impl GaussTable {
    /// The shared table, built on first use (609 grid points).
    pub(super) fn get() -> &'static GaussTable {
        static TABLE: OnceLock<GaussTable> = OnceLock::new();
        TABLE.get_or_init(GaussTable::build)
    }

    fn build() -> GaussTable {
        let points = (2.0 * COVER * PER_UNIT).round() as usize + 1;
        let mut line = Vec::with_capacity(points);
        let mut rise = Vec::with_capacity(points);
        let mut cumulative = Vec::with_capacity(points);
        for i in 0..points {
            let t = -COVER + i as f64 / PER_UNIT;
            let phi = (-0.5 * t * t).exp() / (2.0 * PI).sqrt();
            // He_n(t) by the three-term recurrence, a_n = (-1)^n He_n phi / n!
            let mut a = [0.0; ORDER + 1];
            let (mut h_prev, mut h) = (0.0, 1.0);
            let mut factorial = 1.0;
            for (n, an) in a.iter_mut().enumerate() {
                if n > 0 {
                    factorial *= n as f64;
                    let next = t * h - (n - 1) as f64 * h_prev;
                    h_prev = h;
                    h = next;
                }
                let sign = if n % 2 == 0 { 1.0 } else { -1.0 };
                *an = sign * h * phi / factorial;
            }
            line.push(a);
            let mut r = a;
            for (n, rn) in r.iter_mut().enumerate() {
                *rn /= (n + 1) as f64;
            }
            rise.push(r);
            cumulative.push(0.5 * erfc(-t / SQRT_2));
        }
        GaussTable {
            line,
            rise,
            cumulative,
        }
    }

    /// (phi(t), Phi(t)) for |t| <= [`COVER`].
    #[inline]
    pub(super) fn at(&self, t: f64) -> (f64, f64) {
        let u = (t + COVER) * PER_UNIT;
        let i = (u.round() as usize).min(self.cumulative.len() - 1);
        let d = t - (-COVER + i as f64 / PER_UNIT);
        let (a, r) = (&self.line[i], &self.rise[i]);
        let (mut g, mut c) = (a[ORDER], r[ORDER]);
        for n in (0..ORDER).rev() {
            g = g * d + a[n];
            c = c * d + r[n];
        }
        (g, self.cumulative[i] + c * d)
    }
}

#[cfg(test)]
mod tests {
    use super::{GaussTable, COVER};
    use crate::observables::dos::erfc;
    use std::f64::consts::{PI, SQRT_2};

    #[test]
    fn table_values_are_exp_and_erfc_to_rounding() {
        // Oracle: the direct formulas exp(-t^2/2)/sqrt(2 pi) and erfc(-t/sqrt 2)/2 (libm),
        // on 40001 points across the table, grid points and midpoints between them included
        let tab = GaussTable::get();
        let count = 40_001;
        let mut worst = (0.0f64, 0.0f64);
        for k in 0..count {
            let t = -COVER + 2.0 * COVER * k as f64 / (count - 1) as f64;
            let (g, c) = tab.at(t);
            let g0 = (-0.5 * t * t).exp() / (2.0 * PI).sqrt();
            let c0 = 0.5 * erfc(-t / SQRT_2);
            worst.0 = worst.0.max((g - g0).abs() / g0.max(1e-300));
            worst.1 = worst.1.max((c - c0).abs());
        }
        assert!(worst.0 < 1e-13, "relative error of the line {:e}", worst.0);
        assert!(
            worst.1 < 4e-16,
            "absolute error of the cumulative {:e}",
            worst.1
        );
    }
}
