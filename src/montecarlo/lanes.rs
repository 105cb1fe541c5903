//! Complex arithmetic on a few values at once, laid out so the compiler
//! turns each operation into one vector instruction per part: the Monte
//! Carlo's closed forms run on [`LANES`] analysis frequencies together.
//!
//! Every operation is the plain IEEE one on each lane (no fused
//! multiply-add, no reassociation), so a lane gives bit for bit what the
//! same expression gives on one `f64`, whatever instructions carry it.

use std::ops::{Add, Div, Mul, Neg, Sub};

/// How many values travel together.
pub(crate) const LANES: usize = 4;

/// [`LANES`] real numbers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Reals(pub [f64; LANES]);

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
pub(crate) struct Complexes {
    /// Real parts.
    pub re: Reals,
    /// Imaginary parts.
    pub im: Reals,
}

/// 1 + 0j in every lane.
pub(crate) const ONE: Complexes = Complexes {
    re: Reals([1.0; LANES]),
    im: Reals([0.0; LANES]),
};

/// 0 in every lane.
pub(crate) const ZERO: Complexes = Complexes {
    re: Reals([0.0; LANES]),
    im: Reals([0.0; LANES]),
};

impl Complexes {
    /// From real and imaginary parts.
    #[inline(always)]
    pub fn new(re: Reals, im: Reals) -> Complexes {
        Complexes { re, im }
    }

    /// A real constant in every lane.
    #[inline(always)]
    pub fn real(value: f64) -> Complexes {
        Complexes::new(Reals::splat(value), Reals::splat(0.0))
    }

    /// `real` + j·`imaginary`, the real part the same in every lane.
    #[inline(always)]
    pub fn with_imaginary(real: f64, imaginary: Reals) -> Complexes {
        Complexes::new(Reals::splat(real), imaginary)
    }

    /// z × j·`imaginary` per lane.
    #[inline(always)]
    pub fn times_imaginary(self, imaginary: Reals) -> Complexes {
        Complexes::new(-(self.im * imaginary), self.re * imaginary)
    }

    /// |z|² per lane.
    #[inline(always)]
    pub fn norm_sqr(self) -> Reals {
        self.re * self.re + self.im * self.im
    }
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
