//! The four-resistor difference amplifier.
//!
//! R1 from the n input to the inverting input, R2 from there to the output,
//! R3 from the p input to the non-inverting input, R4 from there to the
//! reference (ground), optionally through a reference source resistance
//! Rref that adds to R4. The output is single-ended against the reference.
//!
//! Exact solve with the op-amp model of [`OpAmp`]: with
//! `x = v_p R4'/(R3 + R4')` (R4' = R4 + Rref), `y = α v_n + β v_o`
//! (α = R2/(R1+R2), β = R1/(R1+R2)) and `v_o/A = (1 + c/2) x − (1 − c/2) y`
//! (c = 1/CMRR of the op-amp, signed),
//!
//! `v_o = [(1 + c/2) x − (1 − c/2) α v_n] / (1/A + β (1 − c/2))`.
//!
//! With an ideal op-amp this reduces to the textbook common-mode gain
//! `Acm = (R1 R4 − R2 R3) / (R1 (R3 + R4))` and differential gain R2/R1 for
//! matched ratios; with four resistors each within ±t the worst case is
//! `CMRR ≈ (1 + G)/(4t)`, and the op-amp's own CMRR adds as
//! `1/CMRR ≈ 1/CMRR_R + 1/CMRR_op` (checked in the tests against the
//! published formulas).
//!
//! Input admittance: the p pin sees R3 + R4' to ground; the n pin draws
//! `(v_n − v_o)/(R1 + R2)`, which depends on both inputs through `v_o`.

use super::opamp::OpAmpValues;
use super::{
    Admittance, Frequency, Lane, OpAmp, Point, Probe, Rows, SmallSignal, Solved, StageSolve,
    Transfer,
};
use crate::engine::linalg::{Mat2, C64, ZERO};
use crate::model::ParamId;

/// A difference amplifier: four resistors and one op-amp.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DifferenceAmp {
    /// n input to inverting input.
    pub r1: ParamId,
    /// Inverting input to output (feedback).
    pub r2: ParamId,
    /// p input to non-inverting input.
    pub r3: ParamId,
    /// Non-inverting input to the reference.
    pub r4: ParamId,
    /// Source resistance of the reference, in series with R4 (none: an
    /// ideal reference).
    pub reference_resistance: Option<ParamId>,
    /// The DC voltage at the reference, in volts: where the output rests
    /// (for the headroom check; it carries no signal).
    pub reference_voltage: f64,
    /// The op-amp.
    pub opamp: OpAmp,
}

impl DifferenceAmp {
    /// R4 with the reference's source resistance in series: the whole
    /// resistance from the non-inverting input to the reference voltage.
    pub(crate) fn r4_to_reference(&self, point: &Point) -> f64 {
        point.value(self.r4) + point.value_or(self.reference_resistance, 0.0)
    }

    /// Its frequency-independent values for one set of parameter values.
    pub fn values(&self, v: &[f64]) -> DifferenceValues {
        let (r1, r2, r3) = (v[self.r1.0], v[self.r2.0], v[self.r3.0]);
        let r4 = v[self.r4.0] + self.reference_resistance.map_or(0.0, |id| v[id.0]);
        DifferenceValues {
            k3: r4 / (r3 + r4),
            alpha: r2 / (r1 + r2),
            beta: r1 / (r1 + r2),
            feedback: 1.0 / (r1 + r2),
            p_conductance: 1.0 / (r3 + r4),
            opamp: self.opamp.values(v),
        }
    }

    /// The output voltage per volt at the p and n pins: `(m_p, m_n)`.
    pub(crate) fn output_gains(&self, point: &Point) -> (C64, C64) {
        let gains: ScaledGains<C64> = self
            .values(point.values)
            .gains(&Frequency::new(point.freq_hz));
        (gains.p / gains.scale, gains.n / gains.scale)
    }
}

/// A difference stage's frequency-independent values.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct DifferenceValues {
    k3: f64,
    alpha: f64,
    beta: f64,
    feedback: f64,
    p_conductance: f64,
    opamp: OpAmpValues,
}

/// The output per volt at each pin over a common denominator:
/// `m_p = p/scale`, `m_n = n/scale`.
#[derive(Debug, Clone, Copy)]
pub struct ScaledGains<N> {
    /// The p pin's numerator.
    pub p: N,
    /// The n pin's numerator.
    pub n: N,
    /// The denominator.
    pub scale: N,
}

impl DifferenceValues {
    /// `m_p = (1 + c/2) k3 / (1/A + (1 − c/2) β)` and
    /// `m_n = −(1 − c/2) α / (1/A + (1 − c/2) β)`, kept as numerators over
    /// their common denominator.
    #[inline(always)]
    pub fn gains<N: Lane>(&self, w: &Frequency<N>) -> ScaledGains<N> {
        let (a_inv, c) = self.opamp.at(w);
        let half_c = c * 0.5;
        let minus = N::one() - half_c;
        ScaledGains {
            p: (N::one() + half_c) * self.k3,
            n: -(minus * self.alpha),
            scale: a_inv + minus * self.beta,
        }
    }
}

impl SmallSignal for DifferenceValues {
    /// The output is an ideal source, so the load does not matter. The p
    /// pin sees R3 + R4' to ground; the n pin draws `(v_n − v_o)/(R1 + R2)`,
    /// which times the gains' denominator s is
    /// `(−p v_p + (s − n) v_n)/(R1 + R2)`.
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, _load: &Admittance<N>) -> Solved<N> {
        let g = self.gains(w);
        Solved {
            input: Admittance {
                own: [N::real(self.p_conductance), (g.scale - g.n) * self.feedback],
                across: [None, Some(-(g.p * self.feedback))],
                den: [None, Some(g.scale)],
            },
            transfer: Transfer {
                rows: Rows::Single([g.p, g.n]),
                den: Some(g.scale),
            },
        }
    }
}

impl DifferenceAmp {
    /// The op-amp's input and output nodes to keep within its ranges, per
    /// volt at this stage's pins; `prefix` names the op-amp.
    pub(crate) fn opamp_probes(&self, point: &Point, prefix: &str) -> Vec<Probe> {
        let mut probes = Vec::new();
        let r3 = point.value(self.r3);
        let r4 = self.r4_to_reference(point);
        if let Some(range) = self.opamp.input_range {
            let k3 = C64::new(r4 / (r3 + r4), 0.0);
            // The reference reaches the non-inverting input through the
            // R4–R3 divider.
            let rest = self.reference_voltage * r3 / (r3 + r4);
            probes.push(range.probe(format!("{prefix} inputs"), [k3, ZERO], rest));
        }
        if let Some(range) = self.opamp.output_swing {
            let (m_p, m_n) = self.output_gains(point);
            probes.push(range.probe(
                format!("{prefix} output"),
                [m_p, m_n],
                self.output_level(point),
            ));
        }
        probes
    }

    /// Where the output rests, in volts: the reference voltage as the
    /// stage amplifies it from the bottom of R4, exactly as the p pin's
    /// signal from the top of R3 but through R3/R4 instead of R4/R3.
    pub(crate) fn output_level(&self, point: &Point) -> f64 {
        if self.reference_voltage == 0.0 {
            return 0.0;
        }
        let at_dc = Point::new(0.0, point.values);
        let r3 = point.value(self.r3);
        let r4 = self.r4_to_reference(point);
        let (m_p, _) = self.output_gains(&at_dc);
        (m_p * (r3 / r4)).re * self.reference_voltage
    }
}

impl StageSolve for DifferenceAmp {
    type Values = DifferenceValues;
    const NAME: &'static str = "difference amplifier";

    fn values(&self, values: &[f64]) -> DifferenceValues {
        DifferenceAmp::values(self, values)
    }

    fn probes(&self, point: &Point, _load: &Mat2) -> Vec<Probe> {
        self.opamp_probes(point, "op-amp")
    }

    fn output_levels(&self, point: &Point, _load: &Mat2) -> [f64; 2] {
        [self.output_level(point), 0.0]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn ideal(values: &[f64]) -> (C64, C64) {
        let amp = DifferenceAmp {
            r1: ParamId(0),
            r2: ParamId(1),
            r3: ParamId(2),
            r4: ParamId(3),
            reference_resistance: None,
            reference_voltage: 0.0,
            opamp: OpAmp::default(),
        };
        amp.output_gains(&Point::new(0.0, values))
    }

    #[test]
    fn exact_common_mode_gain_with_ideal_opamp() {
        // Acm = (R1 R4 - R2 R3) / (R1 (R3 + R4)) for an ideal op-amp.
        // Pallas-Areny and Webster, "Common mode rejection ratio in
        // differential amplifiers", IEEE Trans. Instrum. Meas. 40(4), 1991,
        // eq. for the four-resistor stage (equation number from memory).
        let values = [10e3, 100.3e3, 9.98e3, 99.7e3];
        let (m_p, m_n) = ideal(&values);
        let [r1, r2, r3, r4] = values;
        let expected = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4));
        assert_relative_eq!((m_p + m_n).re, expected, max_relative = 1e-9);
        assert_relative_eq!((m_p + m_n).im, 0.0);
    }

    #[test]
    fn matched_stage_has_zero_common_mode_gain() {
        let (m_p, m_n) = ideal(&[10e3, 100e3, 10e3, 100e3]);
        assert_eq!(m_p + m_n, ZERO);
        assert_relative_eq!(m_p.re, 10.0, max_relative = 1e-12);
    }
}
