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
//! Exact nodal analysis: each leg's cable node substituted out, leaving
//! two equations in the two pins, solved by the adjugate. In the limit of a
//! purely resistive source and a capacitive shunt, the conversion is
//! `vdm/vcm = Zc1/(Zc1 + Zs1) − Zc2/(Zc2 + Zs2)`, so `CMRR ≈ |Zc/ΔZs|`
//! (checked in the tests).

use super::{Admittance, Frequency, Lane, Rows, SmallSignal, Solved, StageSolve, Transfer};
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
    type Values = SourceValues;
    const NAME: &'static str = "source network";

    fn values(&self, v: &[f64]) -> SourceValues {
        let optional = |id: Option<ParamId>| id.map_or(0.0, |id| v[id.0]);
        SourceValues {
            guard: self.guard_drive / 2.0,
            differential_c: optional(self.differential_capacitance),
            legs: self.legs.each_ref().map(|leg| {
                let (gs, cs) = match leg.source {
                    SourceImpedance::Resistive {
                        resistance,
                        capacitance,
                    } => (1.0 / v[resistance.0], optional(capacitance)),
                    SourceImpedance::BridgeNode {
                        upper_arm,
                        lower_arm,
                    } => (1.0 / v[upper_arm.0] + 1.0 / v[lower_arm.0], 0.0),
                };
                LegValues {
                    gs,
                    cs,
                    cable: optional(leg.cable_capacitance),
                    series: leg.series_resistance.map(|id| 1.0 / v[id.0]),
                    shunt_c: optional(leg.filter_capacitance) + optional(leg.input_capacitance),
                    shunt_g: leg.input_resistance.map_or(0.0, |id| 1.0 / v[id.0]),
                }
            }),
        }
    }
}

/// One leg's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct LegValues {
    /// Source conductance, S.
    gs: f64,
    /// Source capacitance, F.
    cs: f64,
    /// Cable capacitance, F.
    cable: f64,
    /// Series resistor's conductance, S (none: no resistor).
    series: Option<f64>,
    /// Filter and input capacitance at the pin, F.
    shunt_c: f64,
    /// Input conductance at the pin, S.
    shunt_g: f64,
}

/// A source network's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SourceValues {
    legs: [LegValues; 2],
    /// Half the guard drive: the guard follows this times each pin.
    guard: f64,
    differential_c: f64,
}

/// `value` × `den`, or `value` where there is no denominator.
#[inline(always)]
fn times<N: Lane>(value: N, den: Option<N>) -> N {
    match den {
        Some(d) => value * d,
        None => value,
    }
}

impl SmallSignal for SourceValues {
    /// The nodal equations in the two pins, `M v = diag(drive) e` (e the
    /// sensor's two node voltages), solved by the adjugate. A leg with a
    /// series resistor has its cable node substituted out, its pin row
    /// multiplied through by the node's total admittance S; each row is
    /// multiplied through by the load row's denominator, so nothing is
    /// divided. The network presents nothing to drive (it is first).
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, load: &Admittance<N>) -> Solved<N> {
        let omega = w.omega;
        let yd = omega * self.differential_c;
        let mut m = [[N::zero(); 2]; 2];
        let mut drive = [N::zero(); 2];
        for (i, leg) in self.legs.iter().enumerate() {
            let j = 1 - i;
            let ys = N::with_imaginary(leg.gs, omega * leg.cs);
            let yc = omega * leg.cable;
            let k = yc * self.guard;
            let shunt = N::with_imaginary(leg.shunt_g, omega * leg.shunt_c);
            let (load_own, load_across, den) = load.row(i);
            let (own, across, source, load_scale) = match leg.series {
                Some(gr) => {
                    // Cable node a = (ys e + gr v + k (v_0 + v_1)) / S.
                    let total = ys + N::new(N::constant(gr), yc);
                    let own = (shunt + N::new(N::constant(gr), yd)) * total
                        - N::new(N::constant(gr * gr), k * gr);
                    let across = -total.times_imaginary(yd) - N::new(N::constant(0.0), k * gr);
                    (own, across, ys * gr, Some(total))
                }
                None => {
                    let own = ys + shunt + N::new(N::constant(0.0), yc - k + yd);
                    let across = N::new(N::constant(0.0), -(k + yd));
                    (own, across, ys, None)
                }
            };
            m[i][i] = times(own, den) + times(load_own, load_scale);
            m[i][j] = times(across, den);
            if let Some(load_across) = load_across {
                m[i][j] = m[i][j] + times(load_across, load_scale);
            }
            drive[i] = times(source, den);
        }
        Solved {
            input: Admittance::open(),
            transfer: Transfer {
                rows: Rows::Both([
                    [m[1][1] * drive[0], -(m[0][1] * drive[1])],
                    [-(m[1][0] * drive[0]), m[0][0] * drive[1]],
                ]),
                den: Some(m[0][0] * m[1][1] - m[0][1] * m[1][0]),
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::linalg::{Mat2, C64};
    use crate::stage::Point;
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
        let zc = 1.0 / (C64::new(0.0, 2.0 * std::f64::consts::PI * 1e3) * 1e-9);
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
