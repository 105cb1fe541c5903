//! The shunt an amplifier's input pins present to ground: a common-mode
//! input resistance in parallel with a capacitance, per pin.

use super::{Admittance, Frequency, Lane};
use crate::model::ParamId;

/// One pin's shunt to ground; absent parts are open.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PinShunt {
    /// Resistance to ground, Ω.
    pub resistance: Option<ParamId>,
    /// Capacitance to ground, F.
    pub capacitance: Option<ParamId>,
}

impl PinShunt {
    /// Both pins' values for one set of parameter values.
    pub fn values(pins: &[PinShunt; 2], v: &[f64]) -> [PinValues; 2] {
        pins.map(|pin| PinValues {
            conductance: pin.resistance.map_or(0.0, |r| 1.0 / v[r.0]),
            capacitance: pin.capacitance.map_or(0.0, |c| v[c.0]),
        })
    }
}

/// A pin's shunt as values: conductance, S, and capacitance, F.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PinValues {
    /// Conductance to ground, S.
    pub conductance: f64,
    /// Capacitance to ground, F.
    pub capacitance: f64,
}

impl PinValues {
    /// Both pins as shunt admittances `G + jωC`.
    #[inline(always)]
    pub fn admittance<N: Lane>(pins: &[PinValues; 2], w: &Frequency<N>) -> Admittance<N> {
        Admittance::shunts(
            pins.map(|pin| N::with_imaginary(pin.conductance, w.omega * pin.capacitance)),
        )
    }
}
