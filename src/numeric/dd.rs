//! Double-double ("compensated") arithmetic: a value is an unevaluated sum hi + lo of two
//! f64 with |lo| <= ulp(hi)/2, about 32 significant digits.
//!
//! # References
//! T. J. Dekker, "A floating-point technique for extending the available precision",
//! Numer. Math. 18, 224 (1971); D. E. Knuth, TAOCP vol. 2 (TwoSum). TwoProd uses the
//! fused-multiply-add-free splitting of Dekker (1971), exact for finite inputs far from overflow.

use num_complex::Complex64;
use std::ops::{Add, Mul, Neg, Sub};

/// A double-double number hi + lo.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Dd {
    /// Leading part.
    pub hi: f64,
    /// Trailing part, |lo| <= ulp(hi)/2.
    pub lo: f64,
}

#[inline]
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

#[inline]
fn quick_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    (s, b - (s - a))
}

/// Veltkamp split: a = hi + lo with hi holding the upper 26 bits (exact).
#[inline]
fn split(a: f64) -> (f64, f64) {
    const SPLITTER: f64 = 134_217_729.0; // 2^27 + 1
    let t = SPLITTER * a;
    let hi = t - (t - a);
    (hi, a - hi)
}

/// Dekker's TwoProd: p + e = a * b exactly (no fused multiply-add needed, so it stays fast on
/// targets where `mul_add` is a library call). Valid while |a b| is far from overflow.
#[inline]
fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    let (ah, al) = split(a);
    let (bh, bl) = split(b);
    let e = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
    (p, e)
}

impl Dd {
    /// Exact conversion of an f64.
    pub const fn from_f64(x: f64) -> Self {
        Dd { hi: x, lo: 0.0 }
    }
    /// Rounded to the nearest f64.
    pub fn to_f64(self) -> f64 {
        self.hi + self.lo
    }
    /// The exact sum of two f64 as a double-double.
    pub fn sum(a: f64, b: f64) -> Self {
        let (hi, lo) = two_sum(a, b);
        Dd { hi, lo }
    }
    /// The exact product of two f64 as a double-double.
    pub fn prod(a: f64, b: f64) -> Self {
        let (hi, lo) = two_prod(a, b);
        Dd { hi, lo }
    }
}

impl Add for Dd {
    type Output = Dd;
    #[inline]
    fn add(self, o: Dd) -> Dd {
        let (s, e) = two_sum(self.hi, o.hi);
        let (t, f) = two_sum(self.lo, o.lo);
        let (s, e) = quick_two_sum(s, e + t);
        let (hi, lo) = quick_two_sum(s, e + f);
        Dd { hi, lo }
    }
}

impl Neg for Dd {
    type Output = Dd;
    fn neg(self) -> Dd {
        Dd {
            hi: -self.hi,
            lo: -self.lo,
        }
    }
}

impl Sub for Dd {
    type Output = Dd;
    #[inline]
    fn sub(self, o: Dd) -> Dd {
        self + (-o)
    }
}

impl Mul for Dd {
    type Output = Dd;
    #[inline]
    fn mul(self, o: Dd) -> Dd {
        let (p, e) = two_prod(self.hi, o.hi);
        let e = e + (self.hi * o.lo + self.lo * o.hi);
        let (hi, lo) = quick_two_sum(p, e);
        Dd { hi, lo }
    }
}

/// A complex number with double-double real and imaginary parts.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct DdComplex {
    /// Real part.
    pub re: Dd,
    /// Imaginary part.
    pub im: Dd,
}

impl DdComplex {
    /// Exact conversion.
    pub fn from_c64(z: Complex64) -> Self {
        DdComplex {
            re: Dd::from_f64(z.re),
            im: Dd::from_f64(z.im),
        }
    }
    /// Rounded to Complex64.
    pub fn to_c64(self) -> Complex64 {
        Complex64::new(self.re.to_f64(), self.im.to_f64())
    }
    /// Complex conjugate.
    pub fn conj(self) -> Self {
        DdComplex {
            re: self.re,
            im: -self.im,
        }
    }
}

impl Add for DdComplex {
    type Output = DdComplex;
    #[inline]
    fn add(self, o: DdComplex) -> DdComplex {
        DdComplex {
            re: self.re + o.re,
            im: self.im + o.im,
        }
    }
}

impl Sub for DdComplex {
    type Output = DdComplex;
    #[inline]
    fn sub(self, o: DdComplex) -> DdComplex {
        DdComplex {
            re: self.re - o.re,
            im: self.im - o.im,
        }
    }
}

impl Mul for DdComplex {
    type Output = DdComplex;
    #[inline]
    fn mul(self, o: DdComplex) -> DdComplex {
        DdComplex {
            re: self.re * o.re - self.im * o.im,
            im: self.re * o.im + self.im * o.re,
        }
    }
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // these tests check exact (bitwise) results on purpose
mod tests {
    use super::*;

    #[test]
    fn recovers_the_low_part_that_plain_doubles_lose() {
        // 1 + 2^-60 is not representable in f64; (1 + 2^-60) - 1 must still be 2^-60.
        let tiny = 2f64.powi(-60);
        let x = Dd::sum(1.0, tiny);
        let d = x - Dd::from_f64(1.0);
        assert_eq!(d.to_f64(), tiny);
        assert_eq!((1.0 + tiny) - 1.0, 0.0);
    }

    #[test]
    fn product_is_exact_to_double_double_precision() {
        // (1 + 2^-30)^2 = 1 + 2^-29 + 2^-60
        let a = Dd::from_f64(1.0 + 2f64.powi(-30));
        let p = a * a - Dd::from_f64(1.0) - Dd::from_f64(2f64.powi(-29));
        assert_eq!(p.to_f64(), 2f64.powi(-60));
    }
}
