//! The op-amp model shared by every stage built from op-amps.
//!
//! Single-pole open-loop gain `A(jf) = A0 / (1 + j f A0 / GBW)`, so
//! `1/A(jf) = 1/A0 + j f / GBW` exactly; a common-mode rejection of unknown
//! sign that falls above a corner, `1/CMRR(jf) = c0 (1 + j f / fc)`, where
//! `c0 = ±1/CMRR_dc` is a parameter bounded by the data-sheet minimum.
//!
//! The amplifier obeys `v_o = A(jf) [ (v+ − v−) + (v+ + v−)/2 · 1/CMRR(jf) ]`:
//! its own common-mode error is an input-referred voltage proportional to
//! the input common mode. The output is an ideal voltage source and the
//! inputs draw no current.

use super::two_port::Rejection;
use super::{Frequency, Lane, VoltageRange};
use crate::model::ParamId;

/// An op-amp's small-signal parameters. Absent parameters are ideal.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct OpAmp {
    /// DC open-loop gain, V/V (ideal: infinite).
    pub open_loop_gain: Option<ParamId>,
    /// Gain-bandwidth product, Hz (ideal: infinite).
    pub gain_bandwidth_hz: Option<ParamId>,
    /// The reciprocal of the DC CMRR, signed (ideal: zero).
    pub cmrr_reciprocal: Option<ParamId>,
    /// The frequency above which the CMRR falls 20 dB/decade (none: flat).
    pub cmrr_corner_hz: Option<ParamId>,
    /// The input common-mode range, for the headroom check.
    pub input_range: Option<VoltageRange>,
    /// The output swing, for the headroom check.
    pub output_swing: Option<VoltageRange>,
    /// The largest input bias current, A (for the offset it leaves through
    /// unequal source resistances; not a CMRR term).
    pub input_bias_current: Option<f64>,
    /// The largest input offset current, A.
    pub input_offset_current: Option<f64>,
}

impl OpAmp {
    /// Its frequency-independent values for one set of parameter values.
    pub fn values(&self, v: &[f64]) -> OpAmpValues {
        OpAmpValues {
            inverse_a0: self.open_loop_gain.map_or(0.0, |id| 1.0 / v[id.0]),
            inverse_gbw: self.gain_bandwidth_hz.map_or(0.0, |id| 1.0 / v[id.0]),
            rejection: Rejection::of(self.cmrr_reciprocal, self.cmrr_corner_hz, v),
        }
    }
}

/// An op-amp's frequency-independent values: `1/A0`, `1/GBW` (zero where
/// ideal) and its rejection.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct OpAmpValues {
    inverse_a0: f64,
    inverse_gbw: f64,
    rejection: Rejection,
}

impl OpAmpValues {
    /// `(1/A(jf), 1/CMRR(jf))`: `1/A0 + j f/GBW` and `c0 + j f c0/fc`.
    #[inline(always)]
    pub fn at<N: Lane>(&self, w: &Frequency<N>) -> (N, N) {
        (
            N::with_imaginary(self.inverse_a0, w.hz * self.inverse_gbw),
            self.rejection.at(w),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::linalg::{C64, ZERO};
    use approx::assert_relative_eq;

    /// (1/A(jf), 1/CMRR(jf)) at one point.
    fn at(opamp: &OpAmp, values: &[f64], freq_hz: f64) -> (C64, C64) {
        opamp.values(values).at(&Frequency::new(freq_hz))
    }

    #[test]
    fn single_pole_gain() {
        // A0 = 1e5, GBW = 1 MHz: the pole sits at 10 Hz, |A(1 kHz)| ~ 1000.
        // Single-pole op-amp model, A(s) = A0 / (1 + s/wp), GBW = A0 fp:
        // Sedra and Smith, Microelectronic Circuits, 7th ed., 2015, Sec. 2.8 (from memory).
        let values = [1e5, 1e6];
        let opamp = OpAmp {
            open_loop_gain: Some(ParamId(0)),
            gain_bandwidth_hz: Some(ParamId(1)),
            ..OpAmp::default()
        };
        let at_pole = at(&opamp, &values, 10.0).0;
        assert_relative_eq!(
            1.0 / at_pole.norm(),
            1e5 / 2f64.sqrt(),
            max_relative = 1e-12
        );
        let at_1k = at(&opamp, &values, 1e3).0;
        assert_relative_eq!(1.0 / at_1k.norm(), 1e3, max_relative = 1e-4);
    }

    #[test]
    fn cmrr_corner() {
        let values = [1e-5, 100.0];
        let opamp = OpAmp {
            cmrr_reciprocal: Some(ParamId(0)),
            cmrr_corner_hz: Some(ParamId(1)),
            ..OpAmp::default()
        };
        let dc = at(&opamp, &values, 0.0).1;
        assert_relative_eq!(dc.re, 1e-5);
        // A decade above the corner the CMRR is 20 dB lower (to within 0.05 dB).
        let high = at(&opamp, &values, 1e3).1.norm();
        assert_relative_eq!(20.0 * (high / 1e-5).log10(), 20.0, epsilon = 0.05);
        let ideal = OpAmp::default();
        assert_eq!(at(&ideal, &values, 1e3).0, ZERO);
        assert_eq!(at(&ideal, &values, 1e3).1, ZERO);
    }
}
