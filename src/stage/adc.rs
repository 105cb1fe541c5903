//! A converter with a differential input, as the last stage of a chain.
//!
//! Its output, in volts at its input, is `(v_p − v_n) + c(jf) (v_p + v_n)/2`
//! with `c(jf) = c0 (1 + j f/f_c)`, `c0 = ±1/CMRR_dc` a bound of unknown
//! sign; its pins present R and C to ground. Because its differential gain
//! is 1, the chain's error referred to the output is the error at the
//! converter's input, which divided by the LSB (`span / 2^bits`) gives the
//! error in codes. Its own conversion is referred to the sensor through the
//! gain ahead of it, like any later stage's.

use super::{PinShunt, Point, SingularStage, StageSolve};
use crate::engine::linalg::{Mat2, C64, ONE, ZERO};
use crate::model::ParamId;

/// A differential-input converter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Adc {
    /// The signed reciprocal of its DC CMRR.
    pub cmrr_reciprocal: Option<ParamId>,
    /// The corner above which its CMRR falls 20 dB/decade.
    pub cmrr_corner_hz: Option<ParamId>,
    /// Its input pins' shunts to ground.
    pub pins: [PinShunt; 2],
    /// The full differential input span in volts (e.g. 5 V for ±2.5 V).
    pub span_volts: f64,
    /// Its resolution in bits.
    pub bits: u32,
}

impl Adc {
    /// The size of one code, in volts at the converter's input.
    pub fn lsb_volts(&self) -> f64 {
        self.span_volts / 2f64.powi(self.bits as i32)
    }
}

impl StageSolve for Adc {
    fn input_admittance(&self, point: &Point, _load: &Mat2) -> Mat2 {
        PinShunt::pair_admittance(&self.pins, point)
    }

    fn transfer(&self, point: &Point, _load: &Mat2) -> Result<Mat2, SingularStage> {
        let c = self.cmrr_reciprocal.map_or(ZERO, |id| {
            let corner = self
                .cmrr_corner_hz
                .map_or(ZERO, |fc| C64::new(0.0, point.freq_hz / point.value(fc)));
            C64::new(point.value(id), 0.0) * (ONE + corner)
        });
        Ok(Mat2::new(ONE + c / 2.0, -(ONE - c / 2.0), ZERO, ZERO))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lsb() {
        let adc = Adc {
            cmrr_reciprocal: None,
            cmrr_corner_hz: None,
            pins: [PinShunt::default(); 2],
            span_volts: 5.0,
            bits: 16,
        };
        assert!((adc.lsb_volts() - 5.0 / 65536.0).abs() < 1e-18);
    }
}
