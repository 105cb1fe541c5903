//! The small complex linear algebra the engine needs: 2x2 matrices for
//! stage transfers and admittances at a single point.

use num_complex::Complex64;
use std::ops::{Add, Mul, Sub};

/// A complex number in the engine's precision.
pub type C64 = Complex64;

/// The complex zero.
pub const ZERO: C64 = C64::new(0.0, 0.0);
/// The complex one.
pub const ONE: C64 = C64::new(1.0, 0.0);

/// A 2x2 complex matrix, row-major: `m[row][column]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mat2(pub [[C64; 2]; 2]);

impl Mat2 {
    /// The zero matrix (an open circuit when used as an admittance).
    pub const ZERO: Mat2 = Mat2([[ZERO, ZERO], [ZERO, ZERO]]);
    /// The identity matrix.
    pub const IDENTITY: Mat2 = Mat2([[ONE, ZERO], [ZERO, ONE]]);

    /// Build from four entries, row by row.
    pub fn new(a: C64, b: C64, c: C64, d: C64) -> Mat2 {
        Mat2([[a, b], [c, d]])
    }

    /// The matrix applied to a column vector.
    pub fn apply(&self, v: [C64; 2]) -> [C64; 2] {
        [
            self.0[0][0] * v[0] + self.0[0][1] * v[1],
            self.0[1][0] * v[0] + self.0[1][1] * v[1],
        ]
    }

    /// Whether every entry is finite.
    pub fn is_finite(&self) -> bool {
        self.0
            .iter()
            .flatten()
            .all(|z| z.re.is_finite() && z.im.is_finite())
    }
}

impl Mul for Mat2 {
    type Output = Mat2;
    fn mul(self, rhs: Mat2) -> Mat2 {
        let a = &self.0;
        let b = &rhs.0;
        Mat2([
            [
                a[0][0] * b[0][0] + a[0][1] * b[1][0],
                a[0][0] * b[0][1] + a[0][1] * b[1][1],
            ],
            [
                a[1][0] * b[0][0] + a[1][1] * b[1][0],
                a[1][0] * b[0][1] + a[1][1] * b[1][1],
            ],
        ])
    }
}

impl Add for Mat2 {
    type Output = Mat2;
    fn add(self, rhs: Mat2) -> Mat2 {
        let mut out = self;
        for (row, rhs_row) in out.0.iter_mut().zip(rhs.0.iter()) {
            for (entry, rhs_entry) in row.iter_mut().zip(rhs_row.iter()) {
                *entry += rhs_entry;
            }
        }
        out
    }
}

impl Sub for Mat2 {
    type Output = Mat2;
    fn sub(self, rhs: Mat2) -> Mat2 {
        let mut out = self;
        for (row, rhs_row) in out.0.iter_mut().zip(rhs.0.iter()) {
            for (entry, rhs_entry) in row.iter_mut().zip(rhs_row.iter()) {
                *entry -= rhs_entry;
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matrix_product() {
        let a = Mat2::new(ONE, C64::new(2.0, 0.0), ZERO, ONE);
        let b = Mat2::new(ONE, ZERO, C64::new(3.0, 0.0), ONE);
        let c = a * b;
        assert_eq!(c.0[0][0], C64::new(7.0, 0.0));
        assert_eq!(c.0[0][1], C64::new(2.0, 0.0));
        assert_eq!(c.0[1][0], C64::new(3.0, 0.0));
        assert_eq!(c.0[1][1], ONE);
        assert_eq!(Mat2::IDENTITY * a, a);
        assert_eq!((a + b) - b, a);
    }
}
