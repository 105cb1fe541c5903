//! The source network: what lies between the sensor's two EMFs and the
//! first amplifier's input pins.
//!
//! Per leg (p and n): the source impedance (a resistance, a resistance in
//! parallel with a capacitance, or a bridge node: two arms in parallel),
//! then the cable, whose capacitance runs to the shield, then an optional
//! series resistor, then at the amplifier pin an optional filter capacitor
//! to ground and the pin's own shunt (resistance and capacitance to ground);
//! an optional capacitor joins the two pins. The first amplifier's input
//! admittance matrix loads the pins, so source and amplifier are solved
//! together.
//!
//! The shield is grounded, or driven at `g` times the common mode of the
//! two pins (a driven guard of effectiveness `g`), which divides the cable
//! capacitance's common-mode current by `1/(1 − g)`.
//!
//! Exact nodal analysis of up to four nodes per solve. In the limit of a
//! purely resistive source and a capacitive shunt, the conversion is
//! `vdm/vcm = Zc1/(Zc1 + Zs1) − Zc2/(Zc2 + Zs2)`, so `CMRR ≈ |Zc/ΔZs|`
//! (checked in the tests).

use super::{Point, SingularStage, StageSolve};
use crate::engine::linalg::{Mat2, NodalSystem, Node, C64};
use crate::model::ParamId;

/// The impedance of the sensor seen from one leg.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SourceImpedance {
    /// A resistance, optionally in parallel with a capacitance (an electrode,
    /// say).
    Resistive {
        /// The resistance.
        resistance: ParamId,
        /// The parallel capacitance.
        capacitance: Option<ParamId>,
    },
    /// The output node of a bridge: the arm to the excitation and the arm to
    /// ground, in parallel.
    BridgeNode {
        /// The arm from the excitation to this node.
        upper_arm: ParamId,
        /// The arm from this node to ground.
        lower_arm: ParamId,
    },
}

impl SourceImpedance {
    fn admittance(&self, point: &Point) -> C64 {
        match *self {
            SourceImpedance::Resistive {
                resistance,
                capacitance,
            } => {
                C64::new(1.0 / point.value(resistance), 0.0)
                    + point.s * point.value_or(capacitance, 0.0)
            }
            SourceImpedance::BridgeNode {
                upper_arm,
                lower_arm,
            } => C64::new(
                1.0 / point.value(upper_arm) + 1.0 / point.value(lower_arm),
                0.0,
            ),
        }
    }
}

/// The parts of one leg, in order from the sensor to the amplifier pin.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Leg {
    /// The sensor's output impedance on this leg.
    pub source: SourceImpedance,
    /// Total cable capacitance of this conductor to the shield.
    pub cable_capacitance: Option<ParamId>,
    /// A series resistor (protection, filter).
    pub series_resistance: Option<ParamId>,
    /// A filter capacitor from the pin to ground.
    pub filter_capacitance: Option<ParamId>,
    /// The pin's own resistance to ground (common-mode input resistance).
    pub input_resistance: Option<ParamId>,
    /// The pin's own capacitance to ground (common-mode input capacitance).
    pub input_capacitance: Option<ParamId>,
}

/// Source impedances, cable and input filter of both legs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SourceNetwork {
    /// The p leg, then the n leg.
    pub legs: [Leg; 2],
    /// A capacitor between the two pins.
    pub differential_capacitance: Option<ParamId>,
    /// Fraction of the pins' common mode driven onto the shield (0: the
    /// shield is grounded).
    pub guard_drive: f64,
}

impl StageSolve for SourceNetwork {
    /// The source network is driven by the sensor's ideal EMFs, so nothing
    /// upstream sees its input admittance; it is reported as an open
    /// circuit.
    fn input_admittance(&self, _point: &Point, _load: &Mat2) -> Mat2 {
        Mat2::ZERO
    }

    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        // Node numbering: each leg's cable node `a`, then its pin `b`
        // (the same node when there is no series resistor).
        let mut next = 0;
        let mut cable_nodes = [Node::Ground; 2];
        let mut pin_nodes = [Node::Ground; 2];
        for (leg_index, leg) in self.legs.iter().enumerate() {
            cable_nodes[leg_index] = Node::At(next);
            next += 1;
            pin_nodes[leg_index] = if leg.series_resistance.is_some() {
                next += 1;
                Node::At(next - 1)
            } else {
                cable_nodes[leg_index]
            };
        }
        let mut system = NodalSystem::new(next);
        for (leg_index, leg) in self.legs.iter().enumerate() {
            let a = cable_nodes[leg_index];
            let b = pin_nodes[leg_index];
            system.admittance_to_input(a, leg_index, leg.source.admittance(point));
            if let Some(cable) = leg.cable_capacitance {
                let y = point.s * point.value(cable);
                if self.guard_drive == 0.0 {
                    system.admittance(a, Node::Ground, y);
                } else {
                    system.coupling(a, a, y);
                    let driven = -y * (self.guard_drive / 2.0);
                    system.coupling(a, pin_nodes[0], driven);
                    system.coupling(a, pin_nodes[1], driven);
                }
            }
            if let Some(series) = leg.series_resistance {
                system.admittance(a, b, C64::new(1.0 / point.value(series), 0.0));
            }
            let mut shunt = point.s * point.value_or(leg.filter_capacitance, 0.0)
                + point.s * point.value_or(leg.input_capacitance, 0.0);
            if let Some(resistance) = leg.input_resistance {
                shunt += 1.0 / point.value(resistance);
            }
            system.admittance(b, Node::Ground, shunt);
        }
        if let Some(across) = self.differential_capacitance {
            system.admittance(pin_nodes[0], pin_nodes[1], point.s * point.value(across));
        }
        system.admittance_matrix(pin_nodes[0], pin_nodes[1], load);
        let solution = system.solve().ok_or(SingularStage {
            stage: "source network",
            freq_hz: point.freq_hz,
        })?;
        let pin = |node: Node| match node {
            Node::At(i) => solution[i],
            Node::Ground => [C64::new(0.0, 0.0); 2],
        };
        let p = pin(pin_nodes[0]);
        let n = pin(pin_nodes[1]);
        Ok(Mat2::new(p[0], p[1], n[0], n[1]))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn resistive_leg(r: usize, c: usize) -> Leg {
        Leg {
            source: SourceImpedance::Resistive {
                resistance: ParamId(r),
                capacitance: None,
            },
            cable_capacitance: Some(ParamId(c)),
            series_resistance: None,
            filter_capacitance: None,
            input_resistance: None,
            input_capacitance: None,
        }
    }

    #[test]
    fn divider_matches_the_closed_form() {
        // vdm/vcm = Zc1/(Zc1+Zs1) - Zc2/(Zc2+Zs2) exactly, for a resistive
        // source and a capacitive shunt per leg, no load.
        // Huhta and Webster, "60-Hz interference in electrocardiography",
        // IEEE Trans. Biomed. Eng. 20(2), 1973 (the potential-divider model).
        let values = [1e3, 1.1e3, 1e-9, 1e-9];
        let network = SourceNetwork {
            legs: [resistive_leg(0, 2), resistive_leg(1, 3)],
            differential_capacitance: None,
            guard_drive: 0.0,
        };
        let point = Point::new(1e3, &values);
        let t = network.transfer(&point, &Mat2::ZERO).unwrap();
        let zc = 1.0 / (point.s * 1e-9);
        let expected = zc / (zc + 1e3) - zc / (zc + 1.1e3);
        let common = t.apply([C64::new(1.0, 0.0), C64::new(1.0, 0.0)]);
        let got = common[0] - common[1];
        assert_relative_eq!(got.re, expected.re, max_relative = 1e-10);
        assert_relative_eq!(got.im, expected.im, max_relative = 1e-10);
    }

    #[test]
    fn perfect_guard_removes_cable_conversion() {
        let values = [1e3, 1.1e3, 1e-9, 1e-9];
        let network = SourceNetwork {
            legs: [resistive_leg(0, 2), resistive_leg(1, 3)],
            differential_capacitance: None,
            guard_drive: 1.0,
        };
        let point = Point::new(1e3, &values);
        let t = network.transfer(&point, &Mat2::ZERO).unwrap();
        let common = t.apply([C64::new(1.0, 0.0), C64::new(1.0, 0.0)]);
        assert!((common[0] - common[1]).norm() < 1e-15);
    }
}
