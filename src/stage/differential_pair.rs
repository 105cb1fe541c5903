//! The discrete long-tailed differential pair, BJT or MOSFET.
//!
//! Two devices with bases (gates) on the p and n pins, optional emitter
//! (source) degeneration RE to a common tail node, the tail impedance
//! `Z_EE = R_out ∥ C_tail` from there to ground, and load resistors RC from
//! each collector (drain) to the supply (AC ground).
//!
//! Bias, per evaluation: the tail current splits by the input offset `d`
//! (a Vbe or Vth mismatch, a bound of unknown sign): for a BJT the emitter
//! currents split as `I_E1/I_E2 = exp(d/V_T)`, `V_T = kT/q`, and each
//! collector carries `β/(β + 1)` of its emitter current; for a MOSFET in saturation with
//! a common current factor, `Vov1 − Vov2 = d` at a fixed total current.
//! Small-signal: `gm = I_C/V_T`, `r_π = β/gm`, `r_o = V_A/I_C` (BJT);
//! `gm = 2 I_D/Vov`, no gate current, `r_o = V_A/I_D` with `V_A = 1/λ`
//! (MOSFET); or gm, r_π, r_o given directly. A further transconductance
//! mismatch δ (unknown sign) scales gm1 by `1 + δ/2` and gm2 by `1 − δ/2`.
//!
//! Exact nodal solve of the collectors, emitters and tail node with each
//! device as `i_ce = gm (v_b − v_e) + (v_c − v_e)/r_o` and
//! `i_b = (v_b − v_e)/r_π`, loaded by the next stage. Output: the two
//! collectors (differential, ordered (c2, c1) so the gain is positive) or
//! the n-side collector against ground (single-ended).
//!
//! In the limit: single-ended `CMRR ≈ 1/2 + gm Z_EE (1 + 1/β)`; differential
//! output with mismatch `CMRR ≈ 2 gm Z_EE / |ΔRC/RC + Δgm/gm|`; above
//! `1/(2π R_out C_tail)` the CMRR falls 20 dB/decade (checked in the tests).
//!
//! Tail output resistance, from the tail device's own small-signal values
//! at the tail current: a resistor R; a transistor current source r_o; an
//! emitter-degenerated source `r_o (1 + gm RE') + RE'`, `RE' = RE ∥ r_π`
//! (`r_o (1 + gm RS) + RS` for a MOSFET); a cascode
//! `r_o2 (1 + gm2 (r_o1 ∥ r_π2)) + (r_o1 ∥ r_π2)` (`r_o2 (1 + gm2 r_o1) + r_o1`
//! for a MOSFET); or a stated output resistance.

use super::{Point, Probe, SingularStage, StageSolve};
use crate::engine::linalg::{Mat2, NodalSystem, Node, C64, ZERO};
use crate::model::ParamId;

/// Boltzmann's constant over the elementary charge, V/K (CODATA 2018 exact
/// values: k = 1.380649e-23 J/K, q = 1.602176634e-19 C).
pub const K_OVER_Q: f64 = 1.380649e-23 / 1.602176634e-19;

/// What the pair's devices are and how their small-signal values are set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PairDevice {
    /// Bipolar transistors: gm from the collector current.
    Bjt {
        /// Current gain per device.
        beta: [ParamId; 2],
        /// Early voltage per device.
        early_voltage: [ParamId; 2],
    },
    /// MOSFETs in saturation: gm from the drain current and overdrive.
    Mosfet {
        /// Overdrive voltage at an even split.
        overdrive: ParamId,
        /// Early voltage (1/λ) per device.
        early_voltage: [ParamId; 2],
    },
    /// gm, r_π and r_o given directly.
    SmallSignal {
        /// Transconductance per device.
        gm: [ParamId; 2],
        /// Base input resistance per device (none: no base current).
        r_pi: [Option<ParamId>; 2],
        /// Output resistance per device (none: infinite).
        ro: [Option<ParamId>; 2],
    },
}

/// How the tail current is made.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TailKind {
    /// A resistor to the negative supply.
    Resistor(ParamId),
    /// One transistor: its r_o.
    CurrentSource {
        /// The tail device's Early voltage.
        early_voltage: ParamId,
    },
    /// A transistor with emitter (source) degeneration.
    Degenerated {
        /// The tail device's Early voltage.
        early_voltage: ParamId,
        /// Its degeneration resistor.
        degeneration: ParamId,
        /// Its current gain (BJT).
        beta: Option<ParamId>,
        /// Its overdrive (MOSFET).
        overdrive: Option<ParamId>,
    },
    /// A cascode of two transistors.
    Cascode {
        /// The Early voltage of each tail device.
        early_voltage: ParamId,
        /// Their current gain (BJT).
        beta: Option<ParamId>,
        /// Their overdrive (MOSFET).
        overdrive: Option<ParamId>,
    },
    /// A stated output resistance.
    OutputResistance(ParamId),
}

/// The tail: its kind and its output capacitance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tail {
    /// How its output resistance arises.
    pub kind: TailKind,
    /// Its output capacitance to ground.
    pub capacitance: Option<ParamId>,
}

/// Which output the next stage sees.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PairOutput {
    /// Both collectors, (c2, c1).
    Differential,
    /// The n-side collector against ground.
    SingleEnded,
}

/// A long-tailed differential pair.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DifferentialPair {
    /// The devices.
    pub device: PairDevice,
    /// The tail current (needed for biased devices and transistor tails).
    pub tail_current: Option<ParamId>,
    /// Input offset voltage (Vbe or Vth mismatch), a signed bound.
    pub offset: Option<ParamId>,
    /// Relative transconductance mismatch, a signed bound.
    pub gm_mismatch: Option<ParamId>,
    /// Emitter (source) degeneration per side.
    pub degeneration: [Option<ParamId>; 2],
    /// Collector (drain) load resistor per side.
    pub load: [ParamId; 2],
    /// The tail.
    pub tail: Tail,
    /// Which output is used.
    pub output: PairOutput,
    /// Device temperature in kelvin, for V_T (follows the ambient when the
    /// budget gives a temperature range).
    pub temperature: ParamId,
    /// Supply and device drops for the headroom check, when given.
    pub headroom: Option<PairHeadroom>,
}

/// What the headroom check needs to know about a pair's operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairHeadroom {
    /// The rail the load resistors return to, in volts.
    pub supply: f64,
    /// Base-emitter (gate-source) voltage at the bias current.
    pub input_drop: f64,
    /// The least collector-emitter (drain-source) voltage that keeps a
    /// device out of saturation (triode).
    pub saturation: f64,
}

/// What drives the pair's nodal system.
#[derive(Debug, Clone, Copy)]
enum Drive {
    /// A unit voltage at each input in turn (the two right-hand sides).
    Inputs,
    /// The inputs at rest and the load drawing current at these output
    /// levels, in volts (one right-hand side).
    LoadAtLevels([f64; 2]),
}

/// The pair's DC node voltages, in volts.
#[derive(Debug, Clone, Copy)]
struct DcLevels {
    collectors: [f64; 2],
    emitters: [f64; 2],
}

/// The pair's node voltages per unit of each input, `[from v_p, from v_n]`.
struct PairNodes {
    /// c1, c2.
    collectors: [[C64; 2]; 2],
    /// e1, e2 (the tail node when undegenerated).
    emitters: [[C64; 2]; 2],
}

/// Small-signal conductances of the two devices.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairSmallSignal {
    /// Transconductance.
    pub gm: [f64; 2],
    /// 1/r_π (zero for a MOSFET).
    pub g_pi: [f64; 2],
    /// 1/r_o.
    pub g_o: [f64; 2],
    /// DC collector (drain) currents, when the bias is known.
    pub bias_current: Option<[f64; 2]>,
}

impl DifferentialPair {
    /// The thermal voltage kT/q at `point`.
    pub fn thermal_voltage(&self, point: &Point) -> f64 {
        K_OVER_Q * point.value(self.temperature)
    }

    /// The devices' small-signal values at `point`.
    pub fn small_signal(&self, point: &Point) -> PairSmallSignal {
        let offset = point.value_or(self.offset, 0.0);
        let current = point.value_or(self.tail_current, 0.0);
        let mut values = match self.device {
            PairDevice::Bjt {
                beta,
                early_voltage,
            } => {
                let vt = self.thermal_voltage(point);
                // The tail current is the sum of the emitter currents; the
                // collectors carry β/(β + 1) of each.
                let first = current / (1.0 + (-offset / vt).exp());
                let alpha = |b: ParamId| point.value(b) / (point.value(b) + 1.0);
                let ic = [first * alpha(beta[0]), (current - first) * alpha(beta[1])];
                let gm = [ic[0] / vt, ic[1] / vt];
                PairSmallSignal {
                    gm,
                    bias_current: Some(ic),
                    g_pi: [gm[0] / point.value(beta[0]), gm[1] / point.value(beta[1])],
                    g_o: [
                        ic[0] / point.value(early_voltage[0]),
                        ic[1] / point.value(early_voltage[1]),
                    ],
                }
            }
            PairDevice::Mosfet {
                overdrive,
                early_voltage,
            } => {
                // I/2 = K Vov0²; Vov1,2 = x ± d/2 with K (Vov1² + Vov2²) = I.
                let vov0 = point.value(overdrive);
                let k = current / (2.0 * vov0 * vov0);
                let x = ((current / k - offset * offset / 2.0) / 2.0)
                    .max(0.0)
                    .sqrt();
                let vov = [x + offset / 2.0, x - offset / 2.0];
                let id = [k * vov[0] * vov[0], k * vov[1] * vov[1]];
                PairSmallSignal {
                    gm: [2.0 * k * vov[0], 2.0 * k * vov[1]],
                    bias_current: Some(id),
                    g_pi: [0.0, 0.0],
                    g_o: [
                        id[0] / point.value(early_voltage[0]),
                        id[1] / point.value(early_voltage[1]),
                    ],
                }
            }
            PairDevice::SmallSignal { gm, r_pi, ro } => PairSmallSignal {
                gm: [point.value(gm[0]), point.value(gm[1])],
                bias_current: self.tail_current.map(|_| [current / 2.0; 2]),
                g_pi: [
                    r_pi[0].map_or(0.0, |r| 1.0 / point.value(r)),
                    r_pi[1].map_or(0.0, |r| 1.0 / point.value(r)),
                ],
                g_o: [
                    ro[0].map_or(0.0, |r| 1.0 / point.value(r)),
                    ro[1].map_or(0.0, |r| 1.0 / point.value(r)),
                ],
            },
        };
        if let Some(mismatch) = self.gm_mismatch {
            let delta = point.value(mismatch);
            values.gm[0] *= 1.0 + delta / 2.0;
            values.gm[1] *= 1.0 - delta / 2.0;
        }
        values
    }

    /// The tail's output resistance at `point` (without its capacitance).
    pub fn tail_resistance(&self, point: &Point) -> f64 {
        let current = point.value_or(self.tail_current, 0.0);
        let vt = self.thermal_voltage(point);
        // The tail device's gm and r_π at the tail current.
        let device = |beta: Option<ParamId>, overdrive: Option<ParamId>| -> (f64, f64) {
            match (beta, overdrive) {
                (Some(beta), _) => {
                    let gm = current / vt;
                    (gm, point.value(beta) / gm)
                }
                (None, Some(overdrive)) => (2.0 * current / point.value(overdrive), f64::INFINITY),
                (None, None) => (current / vt, f64::INFINITY),
            }
        };
        let parallel = |a: f64, b: f64| if b.is_infinite() { a } else { a * b / (a + b) };
        match self.tail.kind {
            TailKind::Resistor(r) | TailKind::OutputResistance(r) => point.value(r),
            TailKind::CurrentSource { early_voltage } => point.value(early_voltage) / current,
            TailKind::Degenerated {
                early_voltage,
                degeneration,
                beta,
                overdrive,
            } => {
                let ro = point.value(early_voltage) / current;
                let (gm, r_pi) = device(beta, overdrive);
                let re = parallel(point.value(degeneration), r_pi);
                ro * (1.0 + gm * re) + re
            }
            TailKind::Cascode {
                early_voltage,
                beta,
                overdrive,
            } => {
                let ro = point.value(early_voltage) / current;
                let (gm, r_pi) = device(beta, overdrive);
                let lower = parallel(ro, r_pi);
                ro * (1.0 + gm * lower) + lower
            }
        }
    }

    /// The tail's admittance at `point`.
    pub fn tail_admittance(&self, point: &Point) -> C64 {
        C64::new(1.0 / self.tail_resistance(point), 0.0)
            + point.s * point.value_or(self.tail.capacitance, 0.0)
    }

    /// Solve the pair: node voltages per unit of each input.
    fn solve(&self, point: &Point, load: &Mat2) -> Result<PairNodes, SingularStage> {
        self.solve_driven(point, load, Drive::Inputs)
    }

    /// Solve the pair's nodal system driven as `drive` says; with
    /// [`Drive::LoadAtLevels`] the answer is in the first column.
    fn solve_driven(
        &self,
        point: &Point,
        load: &Mat2,
        drive: Drive,
    ) -> Result<PairNodes, SingularStage> {
        let small = self.small_signal(point);
        let collectors = [Node::At(0), Node::At(1)];
        let tail = Node::At(2);
        let mut next = 3;
        let mut emitters = [tail; 2];
        for (side, emitter) in emitters.iter_mut().enumerate() {
            if self.degeneration[side].is_some() {
                *emitter = Node::At(next);
                next += 1;
            }
        }
        let driven_by_inputs = matches!(drive, Drive::Inputs);
        let mut system = NodalSystem::new(next);
        for side in 0..2 {
            let (c, e) = (collectors[side], emitters[side]);
            let gm = C64::new(small.gm[side], 0.0);
            let g_o = C64::new(small.g_o[side], 0.0);
            let g_pi = C64::new(small.g_pi[side], 0.0);
            // Load resistor to AC ground.
            system.admittance(
                c,
                Node::Ground,
                C64::new(1.0 / point.value(self.load[side]), 0.0),
            );
            // Output resistance between collector and emitter.
            system.admittance(c, e, g_o);
            // Controlled current gm (v_b − v_e) from collector to emitter.
            system.coupling(c, e, -gm);
            system.coupling(e, e, gm);
            if driven_by_inputs {
                system.input_term(c, side, -gm);
                system.input_term(e, side, gm);
                // Base current (v_b − v_e)/r_π into the emitter node.
                system.admittance_to_input(e, side, g_pi);
            } else {
                // The base held at its DC level: r_π to AC ground.
                system.admittance(e, Node::Ground, g_pi);
            }
            if let Some(re) = self.degeneration[side] {
                system.admittance(e, tail, C64::new(1.0 / point.value(re), 0.0));
            }
        }
        system.admittance(tail, Node::Ground, self.tail_admittance(point));
        let (out_p, out_n) = self.output_nodes(collectors);
        system.admittance_matrix(out_p, out_n, load);
        if let Drive::LoadAtLevels(levels) = drive {
            // The load draws load · (levels + v); the part at the levels is
            // a current taken from the output nodes.
            let drawn = load.apply([C64::new(levels[0], 0.0), C64::new(levels[1], 0.0)]);
            system.input_term(out_p, 0, -drawn[0]);
            system.input_term(out_n, 0, -drawn[1]);
        }
        let solution = system.solve().ok_or(SingularStage {
            stage: "differential pair",
            freq_hz: point.freq_hz,
        })?;
        let at = |node: Node| match node {
            Node::At(i) => solution[i],
            Node::Ground => [ZERO; 2],
        };
        Ok(PairNodes {
            collectors: [at(collectors[0]), at(collectors[1])],
            emitters: [at(emitters[0]), at(emitters[1])],
        })
    }

    /// The DC voltages of the collectors and emitters with the inputs at
    /// 0 V and the outputs driving `load`, when the supply is stated:
    /// unloaded, the collectors sit at the supply less I_C R_C and the
    /// emitters one input drop below the bases; the load's pull at those
    /// levels then moves every node as the small-signal circuit says.
    /// Meaningful at DC (`point` at 0 Hz, `load` its DC admittance).
    fn dc_levels(&self, point: &Point, load: &Mat2) -> Option<DcLevels> {
        let headroom = self.headroom?;
        let currents = self.small_signal(point).bias_current?;
        let unloaded =
            [0, 1].map(|side| headroom.supply - currents[side] * point.value(self.load[side]));
        let at_outputs = match self.output {
            PairOutput::Differential => [unloaded[1], unloaded[0]],
            PairOutput::SingleEnded => [unloaded[1], 0.0],
        };
        let shift = self
            .solve_driven(point, load, Drive::LoadAtLevels(at_outputs))
            .ok()?;
        Some(DcLevels {
            collectors: [0, 1].map(|side| unloaded[side] + shift.collectors[side][0].re),
            emitters: [0, 1].map(|side| -headroom.input_drop + shift.emitters[side][0].re),
        })
    }

    fn output_nodes(&self, collectors: [Node; 2]) -> (Node, Node) {
        match self.output {
            PairOutput::Differential => (collectors[1], collectors[0]),
            PairOutput::SingleEnded => (collectors[1], Node::Ground),
        }
    }
}

impl StageSolve for DifferentialPair {
    fn input_admittance(&self, point: &Point, load: &Mat2) -> Mat2 {
        let small = self.small_signal(point);
        if small.g_pi == [0.0, 0.0] {
            return Mat2::ZERO;
        }
        let Ok(PairNodes { emitters, .. }) = self.solve(point, load) else {
            return Mat2::ZERO;
        };
        // i_b = (v_b − v_e)/r_π per side.
        let row = |side: usize| {
            let g = small.g_pi[side];
            let own = [
                if side == 0 { 1.0 } else { 0.0 },
                if side == 1 { 1.0 } else { 0.0 },
            ];
            [
                (C64::new(own[0], 0.0) - emitters[side][0]) * g,
                (C64::new(own[1], 0.0) - emitters[side][1]) * g,
            ]
        };
        let (p, n) = (row(0), row(1));
        Mat2::new(p[0], p[1], n[0], n[1])
    }

    fn probes(&self, point: &Point, load: &Mat2) -> Vec<Probe> {
        let (Some(headroom), Some(levels)) = (self.headroom, self.dc_levels(point, load)) else {
            return Vec::new();
        };
        let Ok(nodes) = self.solve(point, load) else {
            return Vec::new();
        };
        (0..2)
            .map(|side| {
                // V_CE at rest, loaded; the signal adds through the
                // small-signal path.
                let c = nodes.collectors[side];
                let e = nodes.emitters[side];
                Probe {
                    name: format!("Q{} collector-emitter", side + 1),
                    coefficients: [c[0] - e[0], c[1] - e[1]],
                    bias: levels.collectors[side] - levels.emitters[side],
                    low: headroom.saturation,
                    high: f64::INFINITY,
                }
            })
            .collect()
    }

    fn output_levels(&self, point: &Point, load: &Mat2) -> [f64; 2] {
        let Some(levels) = self.dc_levels(point, load) else {
            return [0.0; 2];
        };
        match self.output {
            PairOutput::Differential => [levels.collectors[1], levels.collectors[0]],
            PairOutput::SingleEnded => [levels.collectors[1], 0.0],
        }
    }

    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        let PairNodes { collectors, .. } = self.solve(point, load)?;
        Ok(match self.output {
            PairOutput::Differential => Mat2::new(
                collectors[1][0],
                collectors[1][1],
                collectors[0][0],
                collectors[0][1],
            ),
            PairOutput::SingleEnded => Mat2::new(collectors[1][0], collectors[1][1], ZERO, ZERO),
        })
    }
}
