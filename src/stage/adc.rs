//! A converter with a differential input, as the last stage of a chain.
//!
//! Its output, in volts at its input, is `(v_p − v_n) + c(jf) (v_p + v_n)/2`
//! with `c(jf) = c0 (1 + j f/f_c)`, `c0 = ±1/CMRR_dc` a bound of unknown
//! sign; its pins present R and C to ground. Because its differential gain
//! is 1, the chain's error referred to the output is the error at the
//! converter's input, which divided by the LSB (`span / 2^bits`) gives the
//! error in codes. Its own conversion is referred to the sensor through the
//! gain ahead of it, like any later stage's.

use super::two_port::Rejection;
use super::{
    Admittance, Frequency, Lane, PinShunt, PinValues, Rows, SmallSignal, Solved, StageSolve,
    Transfer,
};
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
    type Values = AdcValues;
    const NAME: &'static str = "converter";

    fn values(&self, v: &[f64]) -> AdcValues {
        AdcValues {
            rejection: Rejection::of(self.cmrr_reciprocal, self.cmrr_corner_hz, v),
            pins: PinShunt::values(&self.pins, v),
        }
    }
}

/// A converter's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AdcValues {
    rejection: Rejection,
    pins: [PinValues; 2],
}

impl SmallSignal for AdcValues {
    /// `(1 + c/2) v_p − (1 − c/2) v_n`, `c = c0 + j f c0/fc`.
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, _load: &Admittance<N>) -> Solved<N> {
        Solved {
            input: PinValues::admittance(&self.pins, w),
            transfer: Transfer {
                rows: Rows::Single(self.rejection.row(w)),
                den: None,
            },
        }
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
