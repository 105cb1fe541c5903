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

use super::{Point, VoltageRange};
use crate::engine::linalg::{C64, ZERO};
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
    /// `1 / A(jf)`: zero for an ideal amplifier.
    pub fn inverse_gain(&self, point: &Point) -> C64 {
        let dc = self.open_loop_gain.map_or(0.0, |id| 1.0 / point.value(id));
        let pole = self
            .gain_bandwidth_hz
            .map_or(ZERO, |id| C64::new(0.0, point.freq_hz / point.value(id)));
        C64::new(dc, 0.0) + pole
    }

    /// `1 / CMRR(jf)`, signed: zero for an ideal amplifier.
    pub fn inverse_cmrr(&self, point: &Point) -> C64 {
        let Some(id) = self.cmrr_reciprocal else {
            return ZERO;
        };
        let dc = point.value(id);
        let corner = self.cmrr_corner_hz.map_or(ZERO, |corner| {
            C64::new(0.0, point.freq_hz / point.value(corner))
        });
        C64::new(dc, 0.0) * (C64::new(1.0, 0.0) + corner)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

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
        let at_pole = opamp.inverse_gain(&Point::new(10.0, &values));
        assert_relative_eq!(
            1.0 / at_pole.norm(),
            1e5 / 2f64.sqrt(),
            max_relative = 1e-12
        );
        let at_1k = opamp.inverse_gain(&Point::new(1e3, &values));
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
        let dc = opamp.inverse_cmrr(&Point::new(0.0, &values));
        assert_relative_eq!(dc.re, 1e-5);
        // A decade above the corner the CMRR is 20 dB lower (to within 0.05 dB).
        let high = opamp.inverse_cmrr(&Point::new(1e3, &values)).norm();
        assert_relative_eq!(20.0 * (high / 1e-5).log10(), 20.0, epsilon = 0.05);
        let ideal = OpAmp::default();
        assert_eq!(ideal.inverse_gain(&Point::new(1e3, &values)), ZERO);
        assert_eq!(ideal.inverse_cmrr(&Point::new(1e3, &values)), ZERO);
    }
}
