//! The three-op-amp instrumentation amplifier.
//!
//! First stage: A1 follows the p pin, A2 the n pin; RF1 from A1's output
//! (o1) to its inverting input (y1), RF2 likewise for A2 (o2, y2), and RG
//! between y1 and y2. Second stage: a four-resistor difference amplifier
//! ([`DifferenceAmp`]) with o1 on its p side and o2 on its n side.
//!
//! Exact solve of the first stage, with each op-amp as in [`super::OpAmp`]
//! (`v_o/A = (1 + c/2) v+ − (1 − c/2) v−`), four unknowns o1, o2, y1, y2:
//!
//! - `o1/A1 + (1 − c1/2) y1 = (1 + c1/2) v_p`, likewise for A2 with v_n;
//! - `(y1 − o1)/RF1 + (y1 − y2)/RG = 0`, `(y2 − o2)/RF2 + (y2 − y1)/RG = 0`.
//!
//! With ideal op-amps the common-mode gain of the first stage is exactly 1
//! whatever RF1 and RF2 are, and the differential gain is
//! `G1 = 1 + (RF1 + RF2)/RG`; the difference stage's conversion is then
//! divided by G1 when referred to the input. The first stage's own
//! conversion comes from its op-amps differing:
//! `1/CMRR_first ≈ (c1 − c2) + (1/A1(jf) − 1/A2(jf))`, independent of G1
//! (checked in the tests). Op-amp outputs are ideal sources, so the
//! difference stage does not load the first.

use super::{
    Admittance, DifferenceAmp, DifferenceValues, Frequency, Lane, OpAmp, OpAmpValues, PinShunt,
    PinValues, Point, Probe, Rows, SingularStage, SmallSignal, Solved, StageSolve, Transfer,
};
use crate::engine::linalg::{Mat2, C64};
use crate::model::ParamId;

/// A three-op-amp instrumentation amplifier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThreeOpAmpInAmp {
    /// The gain resistor between the two inverting inputs.
    pub rg: ParamId,
    /// A1's feedback resistor.
    pub rf1: ParamId,
    /// A2's feedback resistor.
    pub rf2: ParamId,
    /// A1 (p side) and A2 (n side).
    pub first_stage: [OpAmp; 2],
    /// The input pins' shunts to ground (op-amp common-mode input R and C).
    pub pins: [PinShunt; 2],
    /// The output difference amplifier, with its op-amp A3.
    pub difference_stage: DifferenceAmp,
}

impl ThreeOpAmpInAmp {
    /// The first stage alone: its two outputs per volt at its two inputs.
    pub fn first_stage_transfer(&self, point: &Point) -> Result<Mat2, SingularStage> {
        self.values(point.values)
            .first_stage(&Frequency::new(point.freq_hz))
            .matrix(Self::NAME, point.freq_hz)
    }
}

/// A three-op-amp in-amp's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ThreeOpAmpValues {
    pins: [PinValues; 2],
    first: [OpAmpValues; 2],
    g_gain: f64,
    g_feedback: [f64; 2],
    difference: DifferenceValues,
}

impl ThreeOpAmpValues {
    /// The first stage as `M o = B v`, solved by the adjugate:
    /// `o = adj(M) B v / det M`.
    ///
    /// Each op-amp gives `D_i y_i = P_i v_i − a_i o_i`, with `D = 1 − c/2`,
    /// `P = 1 + c/2`, `a = 1/A` and y its inverting input; the two
    /// inverting-input currents, each multiplied through by `D_1 D_2` to
    /// substitute y out, are the two rows of `M o = B v`.
    #[inline(always)]
    fn first_stage_system<N: Lane>(&self, w: &Frequency<N>) -> ([[N; 2]; 2], [[N; 2]; 2]) {
        let g_g = self.g_gain;
        let [g1, g2] = self.g_feedback;
        let (a1, c1) = self.first[0].at(w);
        let (a2, c2) = self.first[1].at(w);
        let (d1, p1) = (N::one() - c1 * 0.5, N::one() + c1 * 0.5);
        let (d2, p2) = (N::one() - c2 * 0.5, N::one() + c2 * 0.5);
        let d12 = d1 * d2;
        let m = [
            [-(a1 * d2 * (g1 + g_g)) - d12 * g1, a2 * d1 * g_g],
            [a1 * d2 * g_g, -(a2 * d1 * (g2 + g_g)) - d12 * g2],
        ];
        let (p1d2, p2d1) = (p1 * d2, p2 * d1);
        let b = [
            [-(p1d2 * (g1 + g_g)), p2d1 * g_g],
            [p1d2 * g_g, -(p2d1 * (g2 + g_g))],
        ];
        (m, b)
    }

    /// The first stage's transfer, outputs (A1, A2) from inputs (p, n).
    #[inline(always)]
    pub fn first_stage<N: Lane>(&self, w: &Frequency<N>) -> Transfer<N> {
        let (m, b) = self.first_stage_system(w);
        let adjugate = [[m[1][1], -m[0][1]], [-m[1][0], m[0][0]]];
        let product = |i: usize, k: usize| adjugate[i][0] * b[0][k] + adjugate[i][1] * b[1][k];
        Transfer {
            rows: Rows::Both([
                [product(0, 0), product(0, 1)],
                [product(1, 0), product(1, 1)],
            ]),
            den: Some(m[0][0] * m[1][1] - m[0][1] * m[1][0]),
        }
    }
}

impl SmallSignal for ThreeOpAmpValues {
    /// Output `(m̃_p, m̃_n) · adj(M) · B · v / (s det M)`, the difference
    /// stage's gains `m̃/s` applied to the first stage's outputs. The outputs
    /// are ideal sources, so the load does not matter; the pins draw their
    /// shunts.
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, _load: &Admittance<N>) -> Solved<N> {
        let (m, b) = self.first_stage_system(w);
        let gains = self.difference.gains(w);
        // (m̃_p, m̃_n) · adj(M).
        let t = [
            gains.p * m[1][1] - gains.n * m[1][0],
            gains.n * m[0][0] - gains.p * m[0][1],
        ];
        Solved {
            input: PinValues::admittance(&self.pins, w),
            transfer: Transfer {
                rows: Rows::Single([
                    t[0] * b[0][0] + t[1] * b[1][0],
                    t[0] * b[0][1] + t[1] * b[1][1],
                ]),
                den: Some(gains.scale * (m[0][0] * m[1][1] - m[0][1] * m[1][0])),
            },
        }
    }
}

impl StageSolve for ThreeOpAmpInAmp {
    type Values = ThreeOpAmpValues;
    const NAME: &'static str = "three-op-amp instrumentation amplifier";

    fn values(&self, v: &[f64]) -> ThreeOpAmpValues {
        ThreeOpAmpValues {
            pins: PinShunt::values(&self.pins, v),
            first: self.first_stage.map(|opamp| opamp.values(v)),
            g_gain: 1.0 / v[self.rg.0],
            g_feedback: [1.0 / v[self.rf1.0], 1.0 / v[self.rf2.0]],
            difference: self.difference_stage.values(v),
        }
    }

    fn output_levels(&self, point: &Point, _load: &Mat2) -> [f64; 2] {
        [self.difference_stage.output_level(point), 0.0]
    }

    fn probes(&self, point: &Point, _load: &Mat2) -> Vec<Probe> {
        let Ok(first) = self.first_stage_transfer(point) else {
            return Vec::new();
        };
        let one = C64::new(1.0, 0.0);
        let zero = C64::new(0.0, 0.0);
        let mut probes = Vec::new();
        for (side, opamp) in self.first_stage.iter().enumerate() {
            let name = if side == 0 { "A1" } else { "A2" };
            if let Some(range) = opamp.input_range {
                let pin = if side == 0 { [one, zero] } else { [zero, one] };
                probes.push(range.probe(format!("{name} inputs"), pin, 0.0));
            }
            if let Some(range) = opamp.output_swing {
                probes.push(range.probe(format!("{name} output"), first.0[side], 0.0));
            }
        }
        // A3's nodes, per volt at o1 and o2, carried back to the pins.
        for probe in self.difference_stage.opamp_probes(point, "A3") {
            let [a, b] = probe.coefficients;
            let through = [
                a * first.0[0][0] + b * first.0[1][0],
                a * first.0[0][1] + b * first.0[1][1],
            ];
            probes.push(Probe {
                coefficients: through,
                ..probe
            });
        }
        probes
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::MixedMode;
    use approx::assert_relative_eq;

    fn inamp(opamps: [OpAmp; 2]) -> ThreeOpAmpInAmp {
        ThreeOpAmpInAmp {
            rg: ParamId(0),
            rf1: ParamId(1),
            rf2: ParamId(2),
            first_stage: opamps,
            pins: [PinShunt::default(); 2],
            difference_stage: DifferenceAmp {
                r1: ParamId(3),
                r2: ParamId(3),
                r3: ParamId(3),
                r4: ParamId(3),
                reference_resistance: None,
                reference_voltage: 0.0,
                opamp: OpAmp::default(),
            },
        }
    }

    #[test]
    fn first_stage_common_mode_gain_is_one_with_ideal_opamps() {
        // Whatever RF1 and RF2 are (mismatched here), common mode passes
        // with gain exactly 1 and the differential gain is 1 + (RF1+RF2)/RG
        // (common practice, no source; the classic three-op-amp result).
        let values = [1e3, 24.9e3, 25.3e3, 10e3];
        let stage = inamp([OpAmp::default(); 2]);
        let first = stage
            .first_stage_transfer(&Point::new(0.0, &values))
            .unwrap();
        let mm = MixedMode::from_nodes(&first);
        assert_relative_eq!(mm.cc.re, 1.0, max_relative = 1e-12);
        assert!(mm.dc.norm() < 1e-12);
        assert_relative_eq!(
            mm.dd.re,
            1.0 + (24.9e3 + 25.3e3) / 1e3,
            max_relative = 1e-12
        );
    }
}
