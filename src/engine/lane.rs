//! The number type every stage's per-frequency solve is written over: one
//! complex value ([`C64`], for a single analysis point) or [`LANES`] of them
//! in structure-of-arrays form ([`Complexes`], for the Monte Carlo and the
//! corner search, several frequencies at once), laid out so the compiler
//! turns each operation into one vector instruction per part.
//!
//! Every operation is the plain IEEE one on each lane (no fused
//! multiply-add, no reassociation), so a lane gives bit for bit what the
//! same expression gives on one [`C64`], whatever instructions carry it.

use super::linalg::C64;
use std::ops::{Add, Div, Mul, Neg, Sub};

/// A complex number, or several at once, as the stage solves use them.
///
/// Only ring operations: the solves are written free of division (a
/// transfer is a numerator over a denominator kept apart), so one code
/// serves both a single point, where the denominator is divided out at the
/// end, and the Monte Carlo, where it cancels from the conversion.
pub trait Lane:
    Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Neg<Output = Self>
    + Mul<f64, Output = Self>
{
    /// The real numbers alongside: `f64` or [`Reals`].
    type Real: Copy
        + Add<Output = Self::Real>
        + Sub<Output = Self::Real>
        + Mul<Output = Self::Real>
        + Mul<f64, Output = Self::Real>
        + Neg<Output = Self::Real>;

    /// From real and imaginary parts.
    fn new(re: Self::Real, im: Self::Real) -> Self;
    /// A real constant.
    fn real(value: f64) -> Self;
    /// `real` + j·`imaginary`, the real part a constant.
    fn with_imaginary(real: f64, imaginary: Self::Real) -> Self;
    /// z × j·`imaginary`.
    fn times_imaginary(self, imaginary: Self::Real) -> Self;
    /// |z|².
    fn norm_sqr(self) -> Self::Real;
    /// A real constant in the real type.
    fn constant(value: f64) -> Self::Real;
    /// Whether every part is finite and the value not zero: a usable
    /// denominator. Lanes are not checked one by one (the Monte Carlo
    /// checks its results instead), so for them this is always true.
    fn usable_denominator(self) -> bool;
    /// Whether every part is finite (always true for lanes, as above).
    fn finite(self) -> bool;

    /// Whether a composition of stages keeps their transfers'
    /// denominators: at a single point, to divide them out; not for lanes,
    /// whose conversion is a ratio in which they cancel.
    const DENOMINATORS: bool;

    /// Zero.
    #[inline(always)]
    fn zero() -> Self {
        Self::real(0.0)
    }

    /// One.
    #[inline(always)]
    fn one() -> Self {
        Self::real(1.0)
    }
}

impl Lane for C64 {
    type Real = f64;
    const DENOMINATORS: bool = true;

    #[inline(always)]
    fn new(re: f64, im: f64) -> C64 {
        C64::new(re, im)
    }

    #[inline(always)]
    fn real(value: f64) -> C64 {
        C64::new(value, 0.0)
    }

    #[inline(always)]
    fn with_imaginary(real: f64, imaginary: f64) -> C64 {
        C64::new(real, imaginary)
    }

    #[inline(always)]
    fn times_imaginary(self, imaginary: f64) -> C64 {
        C64::new(-(self.im * imaginary), self.re * imaginary)
    }

    #[inline(always)]
    fn norm_sqr(self) -> f64 {
        self.re * self.re + self.im * self.im
    }

    #[inline(always)]
    fn constant(value: f64) -> f64 {
        value
    }

    fn usable_denominator(self) -> bool {
        self.finite() && (self.re != 0.0 || self.im != 0.0)
    }

    fn finite(self) -> bool {
        self.re.is_finite() && self.im.is_finite()
    }
}

impl Lane for Complexes {
    type Real = Reals;
    const DENOMINATORS: bool = false;

    #[inline(always)]
    fn new(re: Reals, im: Reals) -> Complexes {
        Complexes { re, im }
    }

    #[inline(always)]
    fn real(value: f64) -> Complexes {
        Complexes::new(Reals::splat(value), Reals::splat(0.0))
    }

    #[inline(always)]
    fn with_imaginary(real: f64, imaginary: Reals) -> Complexes {
        Complexes::new(Reals::splat(real), imaginary)
    }

    #[inline(always)]
    fn times_imaginary(self, imaginary: Reals) -> Complexes {
        Complexes::new(-(self.im * imaginary), self.re * imaginary)
    }

    #[inline(always)]
    fn norm_sqr(self) -> Reals {
        self.re * self.re + self.im * self.im
    }

    #[inline(always)]
    fn constant(value: f64) -> Reals {
        Reals::splat(value)
    }

    #[inline(always)]
    fn usable_denominator(self) -> bool {
        true
    }

    #[inline(always)]
    fn finite(self) -> bool {
        true
    }
}

/// How many values travel together.
pub const LANES: usize = 4;

/// [`LANES`] real numbers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Reals(pub [f64; LANES]);

impl Reals {
    /// The same value in every lane.
    #[inline(always)]
    pub fn splat(value: f64) -> Reals {
        Reals([value; LANES])
    }

    #[inline(always)]
    fn zip(self, other: Reals, op: impl Fn(f64, f64) -> f64) -> Reals {
        let mut out = [0.0; LANES];
        for (k, slot) in out.iter_mut().enumerate() {
            *slot = op(self.0[k], other.0[k]);
        }
        Reals(out)
    }
}

impl Add for Reals {
    type Output = Reals;
    #[inline(always)]
    fn add(self, other: Reals) -> Reals {
        self.zip(other, |a, b| a + b)
    }
}

impl Sub for Reals {
    type Output = Reals;
    #[inline(always)]
    fn sub(self, other: Reals) -> Reals {
        self.zip(other, |a, b| a - b)
    }
}

impl Mul for Reals {
    type Output = Reals;
    #[inline(always)]
    fn mul(self, other: Reals) -> Reals {
        self.zip(other, |a, b| a * b)
    }
}

impl Div for Reals {
    type Output = Reals;
    #[inline(always)]
    fn div(self, other: Reals) -> Reals {
        self.zip(other, |a, b| a / b)
    }
}

impl Neg for Reals {
    type Output = Reals;
    #[inline(always)]
    fn neg(self) -> Reals {
        let mut out = self.0;
        for value in &mut out {
            *value = -*value;
        }
        Reals(out)
    }
}

impl Mul<f64> for Reals {
    type Output = Reals;
    #[inline(always)]
    fn mul(self, scale: f64) -> Reals {
        self * Reals::splat(scale)
    }
}

/// [`LANES`] complex numbers, real and imaginary parts apart.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Complexes {
    /// Real parts.
    pub re: Reals,
    /// Imaginary parts.
    pub im: Reals,
}

impl Add for Complexes {
    type Output = Complexes;
    #[inline(always)]
    fn add(self, other: Complexes) -> Complexes {
        Complexes::new(self.re + other.re, self.im + other.im)
    }
}

impl Sub for Complexes {
    type Output = Complexes;
    #[inline(always)]
    fn sub(self, other: Complexes) -> Complexes {
        Complexes::new(self.re - other.re, self.im - other.im)
    }
}

impl Mul for Complexes {
    type Output = Complexes;
    #[inline(always)]
    fn mul(self, other: Complexes) -> Complexes {
        Complexes::new(
            self.re * other.re - self.im * other.im,
            self.re * other.im + self.im * other.re,
        )
    }
}

impl Mul<f64> for Complexes {
    type Output = Complexes;
    #[inline(always)]
    fn mul(self, scale: f64) -> Complexes {
        Complexes::new(self.re * scale, self.im * scale)
    }
}

impl Neg for Complexes {
    type Output = Complexes;
    #[inline(always)]
    fn neg(self) -> Complexes {
        Complexes::new(-self.re, -self.im)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_complex::Complex64;

    fn lanes(values: [Complex64; LANES]) -> Complexes {
        Complexes::new(Reals(values.map(|z| z.re)), Reals(values.map(|z| z.im)))
    }

    /// Each lane's arithmetic is num-complex's, to the last bit.
    #[test]
    fn lanes_agree_with_num_complex() {
        let a = [
            Complex64::new(1.5, -2.25),
            Complex64::new(-3.0e-7, 4.0e5),
            Complex64::new(0.1, 0.2),
            Complex64::new(7.0, 0.0),
        ];
        let b = [
            Complex64::new(-0.5, 8.0),
            Complex64::new(2.0e3, -1.0e-4),
            Complex64::new(0.3, -0.7),
            Complex64::new(0.0, 1.0),
        ];
        let (x, y) = (lanes(a), lanes(b));
        let product = x * y;
        let sum = x + y;
        let difference = x - y;
        let scaled = x * 0.375;
        let negated = -x;
        let norms = x.norm_sqr();
        for k in 0..LANES {
            let expected = a[k] * b[k];
            assert_eq!(
                (product.re.0[k], product.im.0[k]),
                (expected.re, expected.im)
            );
            let expected = a[k] + b[k];
            assert_eq!((sum.re.0[k], sum.im.0[k]), (expected.re, expected.im));
            let expected = a[k] - b[k];
            assert_eq!(
                (difference.re.0[k], difference.im.0[k]),
                (expected.re, expected.im)
            );
            let expected = a[k] * 0.375;
            assert_eq!((scaled.re.0[k], scaled.im.0[k]), (expected.re, expected.im));
            assert_eq!((negated.re.0[k], negated.im.0[k]), (-a[k].re, -a[k].im));
            assert_eq!(norms.0[k], a[k].norm_sqr());
        }
    }
}
