//! An integrated instrumentation amplifier, seen as a block from its data
//! sheet.
//!
//! `v_o = G(jf) [ (v_p − v_n) + c(jf) (v_p + v_n)/2 ]` with
//! `G(jf) = G / (1 + j f/f_bw)` (a single pole at the stated bandwidth, none
//! when not given) and `c(jf) = c0 (1 + j f/f_c)`: `c0 = ±1/CMRR_dc` at the
//! configured gain, a bound of unknown sign, rising 20 dB/decade above the
//! corner f_c. The gain is set directly or by a gain resistor through
//! `G = base + constant/RG`. Each input pin presents a common-mode
//! resistance and capacitance to ground, which load the source network.
//! The output is single-ended against the reference (ground).

use super::two_port::Rejection;
use super::{
    Admittance, Frequency, Lane, PinShunt, PinValues, Point, Probe, Rows, SmallSignal, Solved,
    StageSolve, Transfer, VoltageRange,
};
use crate::engine::linalg::{Mat2, ONE, ZERO};
use crate::model::ParamId;

/// How the gain is set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum GainSetting {
    /// The gain itself, V/V.
    Direct(ParamId),
    /// A gain resistor through `G = base + constant / RG`.
    Resistor {
        /// The gain resistor.
        rg: ParamId,
        /// The gain with no resistor fitted (usually 1).
        base: f64,
        /// The constant of the gain law, in ohms.
        constant_ohms: f64,
    },
}

impl GainSetting {
    /// The gain at `point`.
    pub fn gain(&self, point: &Point) -> f64 {
        match *self {
            GainSetting::Direct(id) => point.value(id),
            GainSetting::Resistor {
                rg,
                base,
                constant_ohms,
            } => base + constant_ohms / point.value(rg),
        }
    }
}

/// An integrated instrumentation amplifier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IntegratedInAmp {
    /// How the gain is set.
    pub gain: GainSetting,
    /// The signed reciprocal of the DC CMRR at the configured gain.
    pub cmrr_reciprocal: Option<ParamId>,
    /// The corner above which the CMRR falls 20 dB/decade.
    pub cmrr_corner_hz: Option<ParamId>,
    /// The −3 dB bandwidth of the differential gain.
    pub bandwidth_hz: Option<ParamId>,
    /// The input pins' shunts to ground.
    pub pins: [PinShunt; 2],
    /// The input common-mode range, for the headroom check.
    pub input_range: Option<VoltageRange>,
    /// The output swing, for the headroom check.
    pub output_swing: Option<VoltageRange>,
    /// The DC voltage at the reference pin, in volts: where the output
    /// rests (for the headroom check; it carries no signal).
    pub reference_voltage: f64,
    /// The largest input bias current, A.
    pub input_bias_current: Option<f64>,
    /// The largest input offset current, A.
    pub input_offset_current: Option<f64>,
}

impl StageSolve for IntegratedInAmp {
    type Values = IntegratedValues;
    const NAME: &'static str = "integrated instrumentation amplifier";

    fn values(&self, v: &[f64]) -> IntegratedValues {
        IntegratedValues {
            gain: self.gain.gain(&Point::new(0.0, v)),
            rejection: Rejection::of(self.cmrr_reciprocal, self.cmrr_corner_hz, v),
            inverse_bandwidth: self.bandwidth_hz.map(|id| 1.0 / v[id.0]),
            pins: PinShunt::values(&self.pins, v),
        }
    }

    fn probes(&self, point: &Point, load: &Mat2) -> Vec<Probe> {
        let mut probes = Vec::new();
        if let Some(range) = self.input_range {
            probes.push(range.probe("p input", [ONE, ZERO], 0.0));
            probes.push(range.probe("n input", [ZERO, ONE], 0.0));
        }
        if let (Some(range), Ok(transfer)) = (self.output_swing, self.transfer(point, load)) {
            probes.push(range.probe("output", transfer.0[0], self.reference_voltage));
        }
        probes
    }

    fn output_levels(&self, _point: &Point, _load: &Mat2) -> [f64; 2] {
        [self.reference_voltage, 0.0]
    }
}

/// An integrated in-amp's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct IntegratedValues {
    gain: f64,
    rejection: Rejection,
    inverse_bandwidth: Option<f64>,
    pins: [PinValues; 2],
}

impl SmallSignal for IntegratedValues {
    /// `G [(1 + c/2) v_p − (1 − c/2) v_n] / (1 + j f/f_bw)`, the roll-off
    /// kept as the denominator.
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, _load: &Admittance<N>) -> Solved<N> {
        let [p, n] = self.rejection.row(w);
        Solved {
            input: PinValues::admittance(&self.pins, w),
            transfer: Transfer {
                rows: Rows::Single([p * self.gain, n * self.gain]),
                den: self
                    .inverse_bandwidth
                    .map(|inverse| N::with_imaginary(1.0, w.hz * inverse)),
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::MixedMode;
    use approx::assert_relative_eq;

    #[test]
    fn conversion_is_the_stated_cmrr() {
        let values = [100.0, 1e-5, 1e3];
        let amp = IntegratedInAmp {
            gain: GainSetting::Direct(ParamId(0)),
            cmrr_reciprocal: Some(ParamId(1)),
            cmrr_corner_hz: Some(ParamId(2)),
            bandwidth_hz: None,
            pins: [PinShunt::default(); 2],
            input_range: None,
            output_swing: None,
            reference_voltage: 0.0,
            input_bias_current: None,
            input_offset_current: None,
        };
        let dc = MixedMode::from_nodes(
            &amp.transfer(&Point::new(0.0, &values), &Mat2::ZERO)
                .unwrap(),
        );
        assert_relative_eq!(dc.dd.re, 100.0);
        assert_relative_eq!(dc.conversion().re, 1e-5, max_relative = 1e-12);
        let high = MixedMode::from_nodes(
            &amp.transfer(&Point::new(1e5, &values), &Mat2::ZERO)
                .unwrap(),
        );
        assert_relative_eq!(
            high.conversion().norm(),
            1e-5 * (1.0f64 + 1e4).sqrt(),
            max_relative = 1e-9
        );
    }

    #[test]
    fn gain_law() {
        let values = [499.0];
        let setting = GainSetting::Resistor {
            rg: ParamId(0),
            base: 1.0,
            constant_ohms: 40e3,
        };
        assert_relative_eq!(setting.gain(&Point::new(0.0, &values)), 1.0 + 40e3 / 499.0);
    }
}
