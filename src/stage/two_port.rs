//! What a stage's per-frequency solve gives, in the division-free form one
//! code uses for a single point and for the Monte Carlo alike.
//!
//! A stage is a two-port on node voltages (see the [module](super) text).
//! Its transfer is returned as a numerator over a denominator kept apart
//! ([`Transfer`]), and what its inputs draw as rows each over their own
//! denominator ([`Admittance`]). A consumer multiplies its equations
//! through by those denominators instead of dividing by them; at a single
//! point the engine divides once at the end, and in the Monte Carlo the
//! denominators cancel from the conversion `ε = Adc/Add` (a ratio of two
//! entries of one product) and are never formed.

use super::{Lane, SingularStage};
use crate::engine::linalg::{Mat2, C64};
use crate::model::ParamId;

/// The frequency of a solve, in hertz and as `ω = 2π f`, one value or one
/// per lane.
#[derive(Debug, Clone, Copy)]
pub struct Frequency<N: Lane> {
    /// Frequency, Hz.
    pub hz: N::Real,
    /// Angular frequency, rad/s.
    pub omega: N::Real,
}

impl<N: Lane> Frequency<N> {
    /// From hertz.
    #[inline(always)]
    pub fn new(hz: N::Real) -> Frequency<N> {
        Frequency {
            hz,
            omega: hz * (2.0 * std::f64::consts::PI),
        }
    }
}

/// The currents a stage's input pins draw per volt at them: current into
/// pin i (p = 0, n = 1) is `(own[i] v_i + across[i] v_j) / den[i]`, an
/// absent `across` being zero and an absent `den` one.
#[derive(Debug, Clone, Copy)]
pub struct Admittance<N> {
    /// Each pin's own term.
    pub own: [N; 2],
    /// Each pin's term in the other pin's voltage.
    pub across: [Option<N>; 2],
    /// Each row's denominator.
    pub den: [Option<N>; 2],
}

impl<N: Lane> Admittance<N> {
    /// Inputs that draw nothing.
    #[inline(always)]
    pub fn open() -> Admittance<N> {
        Admittance::shunts([N::zero(), N::zero()])
    }

    /// Each pin a shunt to ground.
    #[inline(always)]
    pub fn shunts(own: [N; 2]) -> Admittance<N> {
        Admittance {
            own,
            across: [None, None],
            den: [None, None],
        }
    }

    /// Row `i`, `j` the other pin: (own, across, den).
    #[inline(always)]
    pub fn row(&self, i: usize) -> (N, Option<N>, Option<N>) {
        (self.own[i], self.across[i], self.den[i])
    }
}

impl Admittance<C64> {
    /// From a 2×2 admittance matrix, `[i_p, i_n] = Y [v_p, v_n]`.
    pub fn from_matrix(y: &Mat2) -> Admittance<C64> {
        let [[a, b], [c, d]] = y.0;
        Admittance {
            own: [a, d],
            across: [Some(b), Some(c)],
            den: [None, None],
        }
    }

    /// As a 2×2 admittance matrix, each row divided by its denominator.
    pub fn matrix(&self) -> Mat2 {
        let row = |i: usize| {
            let (own, across, den) = self.row(i);
            let den = den.unwrap_or(C64::new(1.0, 0.0));
            (own / den, across.unwrap_or_default() / den)
        };
        let (p_own, p_across) = row(0);
        let (n_own, n_across) = row(1);
        Mat2::new(p_own, p_across, n_across, n_own)
    }
}

/// The rows of a transfer from input pin voltages to output node voltages.
#[derive(Debug, Clone, Copy)]
pub enum Rows<N> {
    /// A single-ended output against ground: only the first row, the second
    /// being zero.
    Single([N; 2]),
    /// Two output nodes.
    Both([[N; 2]; 2]),
}

/// A transfer as rows over a common denominator (absent: one).
#[derive(Debug, Clone, Copy)]
pub struct Transfer<N> {
    /// The numerator.
    pub rows: Rows<N>,
    /// The denominator shared by every entry.
    pub den: Option<N>,
}

impl<N: Lane> Transfer<N> {
    /// The identity: outputs equal to inputs.
    #[inline(always)]
    pub fn identity() -> Transfer<N> {
        Transfer {
            rows: Rows::Both([[N::one(), N::zero()], [N::zero(), N::one()]]),
            den: None,
        }
    }

    /// `self` applied after `earlier`: the transfer of the two in cascade.
    #[inline(always)]
    pub fn after(&self, earlier: &Transfer<N>) -> Transfer<N> {
        let rows = match (&self.rows, &earlier.rows) {
            (Rows::Single(r), Rows::Single(s)) => Rows::Single([r[0] * s[0], r[0] * s[1]]),
            (Rows::Single(r), Rows::Both(m)) => Rows::Single([
                r[0] * m[0][0] + r[1] * m[1][0],
                r[0] * m[0][1] + r[1] * m[1][1],
            ]),
            (Rows::Both(a), Rows::Single(s)) => Rows::Both([
                [a[0][0] * s[0], a[0][0] * s[1]],
                [a[1][0] * s[0], a[1][0] * s[1]],
            ]),
            (Rows::Both(a), Rows::Both(m)) => Rows::Both([
                [
                    a[0][0] * m[0][0] + a[0][1] * m[1][0],
                    a[0][0] * m[0][1] + a[0][1] * m[1][1],
                ],
                [
                    a[1][0] * m[0][0] + a[1][1] * m[1][0],
                    a[1][0] * m[0][1] + a[1][1] * m[1][1],
                ],
            ]),
        };
        let den = match (self.den, earlier.den) {
            (Some(a), Some(b)) => Some(a * b),
            (a, b) => a.or(b),
        };
        Transfer { rows, den }
    }

    /// The numerator's common-mode-to-differential and differential
    /// responses `(Adc, Add)`, both times the denominator; their ratio is
    /// the conversion `ε` (mixed-mode convention of
    /// [`MixedMode`](crate::engine::MixedMode)).
    #[inline(always)]
    pub fn conversion_parts(&self) -> (N, N) {
        match &self.rows {
            Rows::Single([a, b]) => (*a + *b, (*a - *b) * 0.5),
            Rows::Both([[a, b], [c, d]]) => ((*a + *b) - (*c + *d), (((*a - *b) - *c) + *d) * 0.5),
        }
    }

    /// Whether the numerator's entries are finite and the denominator
    /// usable (see [`Lane::usable_denominator`]).
    #[inline(always)]
    pub fn usable(&self) -> bool {
        let rows_finite = match &self.rows {
            Rows::Single(r) => r.iter().all(|z| z.finite()),
            Rows::Both(m) => m.iter().flatten().all(|z| z.finite()),
        };
        rows_finite && self.den.is_none_or(N::usable_denominator)
    }
}

impl Transfer<C64> {
    /// As a 2×2 node-voltage transfer, the denominator divided out; a stage
    /// whose numerator or denominator is unusable has no unique solution.
    pub fn matrix(&self, stage: &'static str, freq_hz: f64) -> Result<Mat2, SingularStage> {
        if !self.usable() {
            return Err(SingularStage { stage, freq_hz });
        }
        let scale = self.den.map_or(C64::new(1.0, 0.0), |d| d.inv());
        let zero = C64::new(0.0, 0.0);
        let matrix = match self.rows {
            Rows::Single([a, b]) => Mat2::new(a * scale, b * scale, zero, zero),
            Rows::Both([[a, b], [c, d]]) => Mat2::new(a * scale, b * scale, c * scale, d * scale),
        };
        if matrix.is_finite() {
            Ok(matrix)
        } else {
            Err(SingularStage { stage, freq_hz })
        }
    }
}

/// A common-mode rejection of unknown sign that falls above a corner, as
/// values: `1/CMRR(jf) = c0 (1 + j f/fc)`, kept as `c0` and `c0/fc` (zero
/// where ideal: no CMRR given, or no corner).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Rejection {
    c0: f64,
    c0_per_corner: f64,
}

impl Rejection {
    /// From the signed reciprocal of the DC CMRR and the corner, Hz.
    pub fn of(reciprocal: Option<ParamId>, corner_hz: Option<ParamId>, v: &[f64]) -> Rejection {
        let c0 = reciprocal.map_or(0.0, |id| v[id.0]);
        Rejection {
            c0,
            c0_per_corner: corner_hz.map_or(0.0, |id| c0 / v[id.0]),
        }
    }

    /// `c = 1/CMRR(jf) = c0 + j f c0/fc`.
    #[inline(always)]
    pub fn at<N: Lane>(&self, w: &Frequency<N>) -> N {
        N::with_imaginary(self.c0, w.hz * self.c0_per_corner)
    }

    /// The row of a differential input that converts its common mode by
    /// it: `(1 + c/2) v_p − (1 − c/2) v_n`.
    #[inline(always)]
    pub fn row<N: Lane>(&self, w: &Frequency<N>) -> [N; 2] {
        let half_c = self.at(w) * 0.5;
        [N::one() + half_c, -(N::one() - half_c)]
    }
}

/// One stage's solve at one frequency: what its inputs draw and what it
/// passes on, given what it drives.
#[derive(Debug, Clone, Copy)]
pub struct Solved<N> {
    /// What the stage's input pins draw.
    pub input: Admittance<N>,
    /// Its transfer.
    pub transfer: Transfer<N>,
}

/// A stage's values for one set of parameter values: everything that does
/// not depend on frequency, computed once, and the exact per-frequency
/// solve from them.
pub trait SmallSignal {
    /// The stage solved at `frequency`, driving `load`.
    fn solve<N: Lane>(&self, frequency: &Frequency<N>, load: &Admittance<N>) -> Solved<N>;
}
