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

use super::body::{Body, BodyValues, DriveGain};
use super::{Admittance, Frequency, Lane, Rows, SmallSignal, Solved, StageSolve, Transfer};
use crate::engine::linalg::{Mat2, C64};
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
    /// A patient's body behind the electrodes (the legs' sources), with
    /// its coupling to the mains and its reference electrode; none for a
    /// sensor whose EMFs stand against the common.
    pub body: Option<Body>,
}

impl StageSolve for SourceNetwork {
    type Values = SourceValues;
    const NAME: &'static str = "source network";

    /// The right-leg drive's output, against its output range.
    fn probes(&self, point: &super::Point, load: &Mat2) -> Vec<super::Probe> {
        let Some(range) = self.body.and_then(|b| b.drive).and_then(|d| d.output_range) else {
            return Vec::new();
        };
        // An integrator's gain is infinite at DC and the pins' average zero;
        // their product is continuous there, so DC is read at 1 µHz, where
        // it differs from the limit by less than a part in 1e9 for any
        // stated unity-gain frequency.
        let freq_hz = point.freq_hz.max(1e-6);
        match self.values(point.values).body_response(freq_hz, load) {
            Some(response) => {
                vec![range.probe("right-leg drive output", response.drive_output, 0.0)]
            }
            None => Vec::new(),
        }
    }

    fn values(&self, v: &[f64]) -> SourceValues {
        let optional = |id: Option<ParamId>| id.map_or(0.0, |id| v[id.0]);
        let sense_g = self.body.map_or(0.0, |b| b.sense_conductance(v));
        SourceValues {
            body: self.body.map(|b| b.values(v)),
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
                    shunt_g: leg.input_resistance.map_or(0.0, |id| 1.0 / v[id.0]) + sense_g,
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
    body: Option<BodyValues>,
}

/// `value` × `den`, or `value` where there is no denominator.
#[inline(always)]
fn times<N: Lane>(value: N, den: Option<N>) -> N {
    match den {
        Some(d) => value * d,
        None => value,
    }
}

/// One pin's nodal equation, multiplied through so nothing is divided:
/// `own·v_i + across·v_j + body·b = source·e_i`, with `e_i` the leg's EMF
/// against the body node b (against the common when there is no body, b
/// being 0 then).
#[derive(Clone, Copy)]
struct PinRow<N> {
    own: N,
    across: N,
    body: N,
    source: N,
}

/// What one leg draws from the body node, multiplied by `scale` (the leg's
/// cable-node total where a series resistor lets the node float, else 1):
/// `to_body·b + own·v_i + across·v_j + emf·e_i`.
#[derive(Clone, Copy)]
struct BodyTerms<N> {
    to_body: N,
    own: N,
    across: N,
    emf: N,
    scale: Option<N>,
}

/// The nodal equations of a source network with a body, in the pins and
/// the body node (columns `v_p, v_n, b`), and their drive per volt of the
/// sensor's two inputs `x_p, x_n`: `M [v_p, v_n, b] = D [x_p, x_n]`. With
/// a body, `x_p − x_n` is the biopotential (split evenly about b) and
/// `(x_p + x_n)/2` the mains voltage against earth.
#[derive(Clone, Copy)]
struct BodySystem<N> {
    m: [[N; 3]; 3],
    drive: [[N; 2]; 3],
    /// The body row's right-hand side per volt at the drive's output, when
    /// the drive's loop is broken there (see [`SourceValues::loop_gain`]).
    injection: N,
}

impl SourceValues {
    /// Each leg's pin row and what it draws from the body node.
    #[inline(always)]
    fn leg_rows<N: Lane>(
        &self,
        w: &Frequency<N>,
        load: &Admittance<N>,
    ) -> [(PinRow<N>, BodyTerms<N>); 2] {
        let omega = w.omega;
        let yd = omega * self.differential_c;
        let row = |i: usize| {
            let leg = &self.legs[i];
            let ys = N::with_imaginary(leg.gs, omega * leg.cs);
            let yc = omega * leg.cable;
            let k = yc * self.guard;
            let shunt = N::with_imaginary(leg.shunt_g, omega * leg.shunt_c);
            let (load_own, load_across, den) = load.row(i);
            let (own, across, body, source, terms) = match leg.series {
                Some(gr) => {
                    // Cable node a = (ys (b + e) + gr v + jk (v_0 + v_1)) / S.
                    let beyond = N::new(N::constant(gr), yc);
                    let total = ys + beyond;
                    let own = (shunt + N::new(N::constant(gr), yd)) * total
                        - N::new(N::constant(gr * gr), k * gr);
                    let across = -total.times_imaginary(yd) - N::new(N::constant(0.0), k * gr);
                    let terms = BodyTerms {
                        to_body: ys * beyond,
                        own: -(ys * N::new(N::constant(gr), k)),
                        across: -ys.times_imaginary(k),
                        emf: ys * beyond,
                        scale: Some(total),
                    };
                    (own, across, -(ys * gr), ys * gr, terms)
                }
                None => {
                    let own = ys + shunt + N::new(N::constant(0.0), yc - k + yd);
                    let across = N::new(N::constant(0.0), -(k + yd));
                    let terms = BodyTerms {
                        to_body: ys,
                        own: -ys,
                        across: N::zero(),
                        emf: ys,
                        scale: None,
                    };
                    (own, across, -ys, ys, terms)
                }
            };
            let load_scale = terms.scale;
            let mut across = times(across, den);
            if let Some(load_across) = load_across {
                across = across + times(load_across, load_scale);
            }
            let pin = PinRow {
                own: times(own, den) + times(load_own, load_scale),
                across,
                body: times(body, den),
                source: times(source, den),
            };
            (pin, terms)
        };
        [row(0), row(1)]
    }

    /// The equations with the body node; `broken` opens the drive's loop at
    /// its output (no gain, and a unit voltage injected there).
    #[inline(always)]
    fn body_system<N: Lane>(
        &self,
        body: &BodyValues,
        w: &Frequency<N>,
        load: &Admittance<N>,
        broken: bool,
    ) -> BodySystem<N> {
        let omega = w.omega;
        let [(pin0, legs0), (pin1, legs1)] = self.leg_rows(w, load);
        let one = N::one();
        let (s0, s1) = (legs0.scale.unwrap_or(one), legs1.scale.unwrap_or(one));
        let both = s0 * s1;
        // The reference electrode's path, Y_R = (g + jωC)/(1 + R_o (g + jωC)).
        let electrode = N::with_imaginary(body.electrode_g, omega * body.electrode_c);
        let electrode_den = one + electrode * body.output_r;
        let (gain, gain_den) = match (broken, body.gain) {
            (true, _) | (_, DriveGain::None) => (N::zero(), one),
            (
                _,
                DriveGain::SinglePole {
                    gain,
                    inverse_corner,
                },
            ) => (
                N::real(gain),
                N::with_imaginary(1.0, omega * inverse_corner),
            ),
            (_, DriveGain::Integrator { omega_u }) => {
                (N::real(omega_u), N::new(N::constant(0.0), omega))
            }
        };
        let through_legs = electrode_den * gain_den;
        let to_common = N::new(N::constant(0.0), omega * body.to_common);
        let electrode_terms = electrode * both;
        let sensed = electrode_terms * gain * 0.5;
        let body_own = (legs0.to_body * s1 + legs1.to_body * s0 + to_common * both) * through_legs
            + electrode_terms * gain_den;
        let body_p = (legs0.own * s1 + legs1.across * s0) * through_legs + sensed;
        let body_n = (legs1.own * s0 + legs0.across * s1) * through_legs + sensed;
        let emf = (legs0.emf * s1 - legs1.emf * s0) * through_legs * 0.5;
        let mains = N::new(N::constant(0.0), omega * (body.injection * 0.5)) * both * through_legs;
        let (half0, half1) = (pin0.source * 0.5, pin1.source * 0.5);
        BodySystem {
            m: [
                [pin0.own, pin0.across, pin0.body],
                [pin1.across, pin1.own, pin1.body],
                [body_p, body_n, body_own],
            ],
            drive: [[half0, -half0], [-half1, half1], [mains - emf, mains + emf]],
            injection: electrode_terms,
        }
    }
}

/// The adjugate and determinant of a 3×3 matrix.
#[inline(always)]
fn adjugate3<N: Lane>(m: &[[N; 3]; 3]) -> ([[N; 3]; 3], N) {
    let c =
        |r0: usize, r1: usize, c0: usize, c1: usize| m[r0][c0] * m[r1][c1] - m[r0][c1] * m[r1][c0];
    let adj = [
        [c(1, 2, 1, 2), -c(0, 2, 1, 2), c(0, 1, 1, 2)],
        [-c(1, 2, 0, 2), c(0, 2, 0, 2), -c(0, 1, 0, 2)],
        [c(1, 2, 0, 1), -c(0, 2, 0, 1), c(0, 1, 0, 1)],
    ];
    let det = m[0][0] * adj[0][0] + m[0][1] * adj[1][0] + m[0][2] * adj[2][0];
    (adj, det)
}

/// `adj · D` for the rows `rows` of the adjugate: each node's response per
/// volt of `x_p` and `x_n`, over the determinant.
#[inline(always)]
fn responses<N: Lane>(adj: &[[N; 3]; 3], drive: &[[N; 2]; 3], row: usize) -> [N; 2] {
    let at = |col: usize| {
        adj[row][0] * drive[0][col] + adj[row][1] * drive[1][col] + adj[row][2] * drive[2][col]
    };
    [at(0), at(1)]
}

impl SmallSignal for SourceValues {
    /// The nodal equations in the two pins, `M v = diag(drive) e` (e the
    /// sensor's two node voltages), solved by the adjugate. A leg with a
    /// series resistor has its cable node substituted out, its pin row
    /// multiplied through by the node's total admittance S; each row is
    /// multiplied through by the load row's denominator, so nothing is
    /// divided. With a body, its node is a third unknown (see
    /// [`body`](super::body)). The network presents nothing to drive (it is
    /// first).
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, load: &Admittance<N>) -> Solved<N> {
        let transfer = match &self.body {
            None => {
                let [(p, _), (n, _)] = self.leg_rows(w, load);
                Transfer {
                    rows: Rows::Both([
                        [n.own * p.source, -(p.across * n.source)],
                        [-(n.across * p.source), p.own * n.source],
                    ]),
                    den: Some(p.own * n.own - p.across * n.across),
                }
            }
            Some(body) => {
                let system = self.body_system(body, w, load, false);
                let (adj, det) = adjugate3(&system.m);
                Transfer {
                    rows: Rows::Both([
                        responses(&adj, &system.drive, 0),
                        responses(&adj, &system.drive, 1),
                    ]),
                    den: Some(det),
                }
            }
        };
        Solved {
            input: Admittance::open(),
            transfer,
        }
    }
}

/// What a body's node and its right-leg drive do at one frequency, per volt
/// of the sensor's inputs `x_p, x_n` (the mains being their average).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BodyResponse {
    /// The body's voltage against the common.
    pub body: [C64; 2],
    /// The drive's output (zero without a drive).
    pub drive_output: [C64; 2],
}

impl SourceValues {
    /// The body's and the drive's responses at one point; `None` without
    /// a body or where the network is singular.
    pub fn body_response(&self, freq_hz: f64, load: &Mat2) -> Option<BodyResponse> {
        let body = self.body.as_ref()?;
        let w = Frequency::new(freq_hz);
        let system = self.body_system(body, &w, &Admittance::from_matrix(load), false);
        let (adj, det) = adjugate3(&system.m);
        if !det.usable_denominator() {
            return None;
        }
        let per_volt = |row: usize| responses(&adj, &system.drive, row).map(|x| x / det);
        let pins = [per_volt(0), per_volt(1)];
        let (gain, den) = drive_gain(body, w.omega);
        let drive_output = [0, 1].map(|k| -(gain / den) * (pins[0][k] + pins[1][k]) * 0.5);
        Some(BodyResponse {
            body: per_volt(2),
            drive_output,
        })
    }

    /// The right-leg drive's loop gain at one point: the loop opened at the
    /// drive's output, a volt injected there, and `L = G·(v_p + v_n)/2`
    /// what comes back, negated (positive real for negative feedback at
    /// low frequency). `None` without a drive or where singular.
    pub fn loop_gain(&self, freq_hz: f64, load: &Mat2) -> Option<C64> {
        let body = self.body.as_ref().filter(|b| b.driven())?;
        let w = Frequency::new(freq_hz);
        let system = self.body_system(body, &w, &Admittance::from_matrix(load), true);
        let (adj, det) = adjugate3(&system.m);
        if !det.usable_denominator() {
            return None;
        }
        let pin = |row: usize| adj[row][2] * system.injection / det;
        let (gain, den) = drive_gain(body, w.omega);
        Some(gain / den * (pin(0) + pin(1)) * 0.5)
    }

    /// The same network with another body.
    pub fn with_body(&self, body: BodyValues) -> SourceValues {
        SourceValues {
            body: Some(body),
            ..*self
        }
    }

    /// The body's values, if the network has a body.
    pub fn body(&self) -> Option<&BodyValues> {
        self.body.as_ref()
    }
}

/// The drive's gain `G(jω)` as numerator and denominator.
fn drive_gain(body: &BodyValues, omega: f64) -> (C64, C64) {
    match body.gain {
        DriveGain::None => (C64::new(0.0, 0.0), C64::new(1.0, 0.0)),
        DriveGain::SinglePole {
            gain,
            inverse_corner,
        } => (C64::new(gain, 0.0), C64::new(1.0, omega * inverse_corner)),
        DriveGain::Integrator { omega_u } => (C64::new(omega_u, 0.0), C64::new(0.0, omega)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
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
            body: None,
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
            body: None,
        };
        let point = Point::new(1e3, &values);
        let t = network.transfer(&point, &Mat2::ZERO).unwrap();
        let common = t.apply([C64::new(1.0, 0.0), C64::new(1.0, 0.0)]);
        assert!((common[0] - common[1]).norm() < 1e-15);
    }
}
