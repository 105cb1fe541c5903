//! The small complex linear algebra the engine needs: 2x2 matrices for
//! stage transfers and admittances, and a fixed-size nodal solver with no
//! heap allocation.

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

/// The largest nodal system any stage builds.
pub const MAX_NODES: usize = 5;

/// A dense complex nodal system `Y v = I` of at most [`MAX_NODES`] unknowns,
/// with two right-hand sides (one per driving input), solved in place by
/// Gaussian elimination with partial pivoting.
#[derive(Debug, Clone)]
pub struct NodalSystem {
    size: usize,
    matrix: [[C64; MAX_NODES]; MAX_NODES],
    rhs: [[C64; 2]; MAX_NODES],
}

/// A node of a [`NodalSystem`]: an unknown, or the ground reference.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Node {
    /// The reference node, at zero volts.
    Ground,
    /// An unknown node voltage, by index.
    At(usize),
}

impl NodalSystem {
    /// An empty system of `size` unknown node voltages.
    ///
    /// # Panics
    /// If `size` exceeds [`MAX_NODES`]; stage code builds fixed topologies, so
    /// this is a programming error, never an input error.
    pub fn new(size: usize) -> NodalSystem {
        assert!(size <= MAX_NODES, "nodal system larger than MAX_NODES");
        NodalSystem {
            size,
            matrix: [[ZERO; MAX_NODES]; MAX_NODES],
            rhs: [[ZERO; 2]; MAX_NODES],
        }
    }

    /// Stamp an admittance `y` between nodes `a` and `b`.
    pub fn admittance(&mut self, a: Node, b: Node, y: C64) {
        if a == b {
            return;
        }
        if let Node::At(i) = a {
            self.matrix[i][i] += y;
        }
        if let Node::At(j) = b {
            self.matrix[j][j] += y;
        }
        if let (Node::At(i), Node::At(j)) = (a, b) {
            self.matrix[i][j] -= y;
            self.matrix[j][i] -= y;
        }
    }

    /// Add `y` to the current leaving `row` per volt at `column` (a
    /// controlled source or a one-sided coupling term).
    pub fn coupling(&mut self, row: Node, column: Node, y: C64) {
        if let (Node::At(i), Node::At(j)) = (row, column) {
            self.matrix[i][j] += y;
        }
    }

    /// Stamp an admittance `y` from node `a` to a known source voltage that
    /// is input `input` (0 or 1) of the system, at unit amplitude per input.
    pub fn admittance_to_input(&mut self, a: Node, input: usize, y: C64) {
        if let Node::At(i) = a {
            self.matrix[i][i] += y;
            self.rhs[i][input] += y;
        }
    }

    /// Add `value` times input `input` to the right-hand side of `row` (a
    /// known source term in a controlled-source equation).
    pub fn input_term(&mut self, row: Node, input: usize, value: C64) {
        if let Node::At(i) = row {
            self.rhs[i][input] += value;
        }
    }

    /// Stamp a 2x2 admittance matrix (a load's input admittance) on nodes
    /// `p` and `n` against ground.
    pub fn admittance_matrix(&mut self, p: Node, n: Node, y: &Mat2) {
        let nodes = [p, n];
        for (r, row_node) in nodes.iter().enumerate() {
            for (c, column_node) in nodes.iter().enumerate() {
                self.coupling(*row_node, *column_node, y.0[r][c]);
            }
        }
    }

    /// Solve for both right-hand sides. Returns the node voltages per unit of
    /// each input, `solution[node][input]`, or `None` when the system is
    /// singular (no unique small-signal solution).
    // Elimination walks rows and columns by number; iterators would hide it.
    #[allow(clippy::needless_range_loop)]
    pub fn solve(&mut self) -> Option<[[C64; 2]; MAX_NODES]> {
        let n = self.size;
        // |re| + |im| ranks pivots as well as the modulus, without a square
        // root; the pivots' reciprocals serve the back substitution.
        let size = |z: C64| z.re.abs() + z.im.abs();
        let mut inverse = [ZERO; MAX_NODES];
        for col in 0..n {
            let pivot_row = (col..n)
                .max_by(|&a, &b| size(self.matrix[a][col]).total_cmp(&size(self.matrix[b][col])))?;
            let pivot = self.matrix[pivot_row][col];
            let magnitude = size(pivot);
            if magnitude == 0.0 || !magnitude.is_finite() {
                return None;
            }
            self.matrix.swap(col, pivot_row);
            self.rhs.swap(col, pivot_row);
            inverse[col] = pivot.inv();
            for row in col + 1..n {
                let factor = self.matrix[row][col] / pivot;
                if factor == ZERO {
                    continue;
                }
                for k in col..n {
                    let delta = factor * self.matrix[col][k];
                    self.matrix[row][k] -= delta;
                }
                for input in 0..2 {
                    let delta = factor * self.rhs[col][input];
                    self.rhs[row][input] -= delta;
                }
            }
        }
        let mut solution = [[ZERO; 2]; MAX_NODES];
        for row in (0..n).rev() {
            let mut sums = self.rhs[row];
            for (coefficient, known) in self.matrix[row][row + 1..n]
                .iter()
                .zip(&solution[row + 1..n])
            {
                sums[0] -= coefficient * known[0];
                sums[1] -= coefficient * known[1];
            }
            solution[row] = [sums[0] * inverse[row], sums[1] * inverse[row]];
        }
        let finite = solution[..n]
            .iter()
            .flatten()
            .all(|z| z.re.is_finite() && z.im.is_finite());
        finite.then_some(solution)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn divider_solves() {
        // A 1 kΩ / 3 kΩ divider from input 0: the node sits at 3/4.
        let mut system = NodalSystem::new(1);
        system.admittance_to_input(Node::At(0), 0, C64::new(1e-3, 0.0));
        system.admittance(Node::At(0), Node::Ground, C64::new(1.0 / 3e3, 0.0));
        let v = system.solve().unwrap();
        assert_relative_eq!(v[0][0].re, 0.75, max_relative = 1e-14);
        assert_eq!(v[0][1], ZERO);
    }

    #[test]
    fn singular_is_none() {
        let mut system = NodalSystem::new(2);
        system.admittance(Node::At(0), Node::At(1), ONE);
        assert!(system.solve().is_none());
    }

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
