//! Differential/common-mode (mixed-mode) responses.
//!
//! Convention: `vdm = vp − vn`, `vcm = (vp + vn)/2`. A node-voltage transfer
//! `N` (output nodes from input nodes) becomes `M = T N T⁻¹` with
//! `T = [[1, −1], [½, ½]]`, `T⁻¹ = [[½, 1], [−½, 1]]`, so that
//! `(vdm, vcm)_out = [[Add, Adc], [Acd, Acc]] (vdm, vcm)_in`.

use super::linalg::{Mat2, C64};

/// A mixed-mode response: `[[Add, Adc], [Acd, Acc]]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MixedMode {
    /// Differential in to differential out.
    pub dd: C64,
    /// Common mode in to differential out (the conversion).
    pub dc: C64,
    /// Differential in to common mode out.
    pub cd: C64,
    /// Common mode in to common mode out.
    pub cc: C64,
}

impl MixedMode {
    /// Convert a node-voltage transfer matrix.
    pub fn from_nodes(n: &Mat2) -> MixedMode {
        let [[a, b], [c, d]] = n.0;
        MixedMode {
            dd: (a - b - c + d) / 2.0,
            dc: (a + b) - (c + d),
            cd: (a - b + c - d) / 4.0,
            cc: (a + b + c + d) / 2.0,
        }
    }

    /// The CM-to-DM conversion referred to the input, `ε = Adc / Add`.
    pub fn conversion(&self) -> C64 {
        self.dc / self.dd
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::linalg::{ONE, ZERO};

    #[test]
    fn identity_is_identity() {
        let m = MixedMode::from_nodes(&Mat2::IDENTITY);
        assert_eq!((m.dd, m.dc, m.cd, m.cc), (ONE, ZERO, ZERO, ONE));
    }

    #[test]
    fn matches_the_explicit_similarity_transform() {
        let n = Mat2::new(
            C64::new(1.5, 0.2),
            C64::new(-0.7, 0.1),
            C64::new(0.3, -0.4),
            C64::new(0.9, 0.05),
        );
        let t = Mat2::new(ONE, -ONE, C64::new(0.5, 0.0), C64::new(0.5, 0.0));
        let t_inv = Mat2::new(C64::new(0.5, 0.0), ONE, C64::new(-0.5, 0.0), ONE);
        let m = t * n * t_inv;
        let mm = MixedMode::from_nodes(&n);
        for (got, want) in [
            (mm.dd, m.0[0][0]),
            (mm.dc, m.0[0][1]),
            (mm.cd, m.0[1][0]),
            (mm.cc, m.0[1][1]),
        ] {
            assert!((got - want).norm() < 1e-14);
        }
    }
}
