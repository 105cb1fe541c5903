//! The shunt an amplifier's input pins present to ground: a common-mode
//! input resistance in parallel with a capacitance, per pin.

use super::Point;
use crate::engine::linalg::{Mat2, C64, ZERO};
use crate::model::ParamId;

/// One pin's shunt to ground; absent parts are open circuits.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PinShunt {
    /// Resistance to ground.
    pub resistance: Option<ParamId>,
    /// Capacitance to ground.
    pub capacitance: Option<ParamId>,
}

impl PinShunt {
    /// The shunt's admittance at `point`.
    pub fn admittance(&self, point: &Point) -> C64 {
        let conductance = self.resistance.map_or(0.0, |r| 1.0 / point.value(r));
        C64::new(conductance, 0.0) + point.s * point.value_or(self.capacitance, 0.0)
    }

    /// The 2x2 admittance matrix of a pair of pin shunts (no coupling).
    pub fn pair_admittance(pins: &[PinShunt; 2], point: &Point) -> Mat2 {
        Mat2::new(
            pins[0].admittance(point),
            ZERO,
            ZERO,
            pins[1].admittance(point),
        )
    }
}
