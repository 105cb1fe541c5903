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
//! `i_b = (v_b − v_e)/r_π`, loaded by the next stage: each emitter and then
//! the tail node substituted out (the coefficients, real and computed once
//! per set of values, in their cancelled forms), leaving two equations in
//! the collectors solved by the adjugate. Output: the two
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

use super::{
    Admittance, Frequency, Lane, Point, Probe, Rows, SmallSignal, Solved, StageSolve, Transfer,
};
use crate::engine::linalg::{Mat2, C64, ZERO};
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

    /// The pair's node voltages per unit of each input, driving `load`.
    fn nodes(&self, point: &Point, load: &Mat2) -> Option<PairNodes> {
        let values = self.values(point.values);
        let w = Frequency::new(point.freq_hz);
        let system = values.system(&w, &Admittance::from_matrix(load));
        let collectors = system.collectors();
        let emitters = values.emitters(&system, &collectors);
        let (over_det, over_tail_det) = (system.det.inv(), (system.tail * system.det).inv());
        let nodes = PairNodes {
            collectors: collectors.map(|row| row.map(|z| z * over_det)),
            emitters: emitters.map(|row| row.map(|z| z * over_tail_det)),
        };
        let finite = nodes
            .collectors
            .iter()
            .chain(&nodes.emitters)
            .flatten()
            .all(|z| z.re.is_finite() && z.im.is_finite());
        finite.then_some(nodes)
    }

    /// The DC node levels with the bases at rest, the collectors at the
    /// supply less their load resistors' drop, and what the next stage
    /// draws at those levels taken from the outputs.
    fn dc_levels(&self, point: &Point, load: &Mat2) -> Option<DcLevels> {
        let headroom = self.headroom?;
        let currents = self.small_signal(point).bias_current?;
        let unloaded =
            [0, 1].map(|side| headroom.supply - currents[side] * point.value(self.load[side]));
        let at_outputs = match self.output {
            PairOutput::Differential => [unloaded[1], unloaded[0]],
            PairOutput::SingleEnded => [unloaded[1], 0.0],
        };
        // The load draws load · (levels + v); the part at the levels is a
        // current taken from the output nodes.
        let drawn = load.apply([C64::new(at_outputs[0], 0.0), C64::new(at_outputs[1], 0.0)]);
        let values = self.values(point.values);
        let w = Frequency::new(0.0);
        let system = values.system(&w, &Admittance::from_matrix(load));
        let at_collector = values
            .output_rows()
            .map(|row| row.map_or(ZERO, |r| drawn[r]));
        let shift = system.collectors_for(at_collector.map(|i| i * system.tail));
        let tail = values.tail_from(&system, &shift, [ZERO; 2]) / (system.tail * system.det);
        let collectors = shift.map(|c| c / system.det);
        let emitters = [0, 1].map(|side| {
            let side_values = &values.sides[side];
            (collectors[side] * side_values.emitter_from_collector
                + tail * side_values.emitter_from_tail)
                .re
        });
        let finite =
            collectors.iter().all(|z| z.re.is_finite()) && emitters.iter().all(|e| e.is_finite());
        finite.then_some(DcLevels {
            collectors: [0, 1].map(|side| unloaded[side] + collectors[side].re),
            emitters: [0, 1].map(|side| -headroom.input_drop + emitters[side]),
        })
    }
}

/// One device's frequency-independent coefficients, its emitter (when
/// degenerated) substituted out: with D = gm + g_o + g_π + g_RE,
///
/// - collector current: `α_c v_c + α_t v_t + α_b v_b` plus what the load
///   draws, zero; undegenerated `α = (g_L + g_o, −(gm + g_o), gm)`,
///   degenerated `(g_L + g_o (g_π + g_RE)/D, −(gm + g_o) g_RE/D,
///   (gm g_RE − g_o g_π)/D)`;
/// - its share of the tail node's current: `τ_t v_t + τ_c v_c + τ_b v_b`;
///   undegenerated `(gm + g_o + g_π, −g_o, −(gm + g_π))`, degenerated
///   `g_RE (gm + g_o + g_π)/D, −g_RE g_o/D, −g_RE (gm + g_π)/D`;
/// - its emitter: `ε_c v_c + ε_t v_t + ε_b v_b`; undegenerated the tail
///   node, degenerated `(g_o, g_RE, gm + g_π)/D`.
///
/// Each difference of products is written in its cancelled form, so no
/// digits are lost to it.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct SideValues {
    collector_own: f64,
    collector_from_tail: f64,
    collector_from_base: f64,
    tail_own: f64,
    tail_from_collector: f64,
    tail_from_base: f64,
    emitter_from_collector: f64,
    emitter_from_tail: f64,
    emitter_from_base: f64,
    g_pi: f64,
}

impl SideValues {
    fn of(gm: f64, g_pi: f64, g_o: f64, g_load: f64, g_re: Option<f64>) -> SideValues {
        match g_re {
            None => SideValues {
                collector_own: g_load + g_o,
                collector_from_tail: -(gm + g_o),
                collector_from_base: gm,
                tail_own: gm + g_o + g_pi,
                tail_from_collector: -g_o,
                tail_from_base: -(gm + g_pi),
                emitter_from_collector: 0.0,
                emitter_from_tail: 1.0,
                emitter_from_base: 0.0,
                g_pi,
            },
            Some(g_re) => {
                let d = gm + g_o + g_pi + g_re;
                SideValues {
                    collector_own: g_load + g_o * (g_pi + g_re) / d,
                    collector_from_tail: -(gm + g_o) * g_re / d,
                    collector_from_base: (gm * g_re - g_o * g_pi) / d,
                    tail_own: g_re * (gm + g_o + g_pi) / d,
                    tail_from_collector: -g_re * g_o / d,
                    tail_from_base: -g_re * (gm + g_pi) / d,
                    emitter_from_collector: g_o / d,
                    emitter_from_tail: g_re / d,
                    emitter_from_base: (gm + g_pi) / d,
                    g_pi,
                }
            }
        }
    }
}

/// A differential pair's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairValues {
    sides: [SideValues; 2],
    /// `1/R_out` of the tail plus both devices' `τ_t`.
    tail_conductance: f64,
    tail_capacitance: f64,
    output: PairOutput,
    /// Whether either device draws base current.
    base_current: bool,
}

/// The pair's collector equations, the tail substituted out and every row
/// multiplied through by the tail node's total admittance T (and by its
/// load row's denominator): `K c + B b = 0`.
struct PairSystem<N> {
    k: [[N; 2]; 2],
    b: [[N; 2]; 2],
    det: N,
    tail: N,
}

impl<N: Lane> PairSystem<N> {
    /// The collectors per unit base voltage, times det K: `−adj(K) B`.
    #[inline(always)]
    fn collectors(&self) -> [[N; 2]; 2] {
        let k = &self.k;
        let adjugate = [[k[1][1], -k[0][1]], [-k[1][0], k[0][0]]];
        [0, 1].map(|i| {
            [0, 1].map(|col| -(adjugate[i][0] * self.b[0][col] + adjugate[i][1] * self.b[1][col]))
        })
    }

    /// The collectors, times det K, for currents `injected` leaving them
    /// (times T), the bases at rest: `−adj(K) injected`.
    fn collectors_for(&self, injected: [N; 2]) -> [N; 2] {
        let k = &self.k;
        [
            -(k[1][1] * injected[0] - k[0][1] * injected[1]),
            -(k[0][0] * injected[1] - k[1][0] * injected[0]),
        ]
    }
}

impl PairValues {
    /// For each collector (c1, c2), the row of the load's admittance that
    /// draws from it: the outputs are (c2, c1) differential, (c2, ground)
    /// single-ended.
    #[inline(always)]
    fn output_rows(&self) -> [Option<usize>; 2] {
        match self.output {
            PairOutput::Differential => [Some(1), Some(0)],
            PairOutput::SingleEnded => [None, Some(0)],
        }
    }

    /// The collector equations at `w`, driving `load`.
    #[inline(always)]
    fn system<N: Lane>(&self, w: &Frequency<N>, load: &Admittance<N>) -> PairSystem<N> {
        let tail = N::with_imaginary(self.tail_conductance, w.omega * self.tail_capacitance);
        let rows = self.output_rows();
        let mut k = [[N::zero(); 2]; 2];
        let mut b = [[N::zero(); 2]; 2];
        for i in 0..2 {
            let j = 1 - i;
            let (side, other) = (&self.sides[i], &self.sides[j]);
            // α_c c_i + α_t t + α_b b_i with t = −(Σ τ_c c + Σ τ_b b)/T,
            // times T.
            let own = tail * side.collector_own
                - N::real(side.collector_from_tail * side.tail_from_collector);
            let across = N::real(-(side.collector_from_tail * other.tail_from_collector));
            let base_own = tail * side.collector_from_base
                - N::real(side.collector_from_tail * side.tail_from_base);
            let base_across = N::real(-(side.collector_from_tail * other.tail_from_base));
            let (load_own, load_across, den) = match rows[i] {
                Some(r) => {
                    let (own, across, den) = load.row(r);
                    // Single-ended, the row's other node is ground.
                    let across = across.filter(|_| self.output == PairOutput::Differential);
                    (Some(own), across, den)
                }
                None => (None, None, None),
            };
            let scaled = |value: N| match den {
                Some(d) => value * d,
                None => value,
            };
            k[i][i] = scaled(own);
            k[i][j] = scaled(across);
            if let Some(load_own) = load_own {
                k[i][i] = k[i][i] + tail * load_own;
            }
            if let Some(load_across) = load_across {
                k[i][j] = k[i][j] + tail * load_across;
            }
            b[i][i] = scaled(base_own);
            b[i][j] = scaled(base_across);
        }
        let det = k[0][0] * k[1][1] - k[0][1] * k[1][0];
        PairSystem { k, b, det, tail }
    }

    /// The tail node, times T det K, from the collectors (times det K)
    /// and the bases (as given): `−(Σ τ_c c + det K Σ τ_b b)`.
    #[inline(always)]
    fn tail_from<N: Lane>(&self, system: &PairSystem<N>, collectors: &[N; 2], bases: [N; 2]) -> N {
        let [s0, s1] = &self.sides;
        -(collectors[0] * s0.tail_from_collector
            + collectors[1] * s1.tail_from_collector
            + system.det * (bases[0] * s0.tail_from_base + bases[1] * s1.tail_from_base))
    }

    /// Each emitter per unit base voltage, times T det K.
    #[inline(always)]
    fn emitters<N: Lane>(&self, system: &PairSystem<N>, collectors: &[[N; 2]; 2]) -> [[N; 2]; 2] {
        let tail_det = system.tail * system.det;
        let tails = [0, 1].map(|col| {
            let unit = [0, 1].map(|k| if k == col { N::one() } else { N::zero() });
            self.tail_from(system, &[collectors[0][col], collectors[1][col]], unit)
        });
        [0, 1].map(|i| {
            let side = &self.sides[i];
            [0, 1].map(|col| {
                let mut e = collectors[i][col] * system.tail * side.emitter_from_collector
                    + tails[col] * side.emitter_from_tail;
                if i == col {
                    e = e + tail_det * side.emitter_from_base;
                }
                e
            })
        })
    }
}

impl SmallSignal for PairValues {
    /// The collectors from the 2×2 by its adjugate; the base currents
    /// `g_π (v_b − v_e)` from the emitters, all over `T det K`.
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, load: &Admittance<N>) -> Solved<N> {
        let system = self.system(w, load);
        let c = system.collectors();
        let rows = match self.output {
            PairOutput::Differential => Rows::Both([c[1], c[0]]),
            PairOutput::SingleEnded => Rows::Single(c[1]),
        };
        let input = if self.base_current {
            let e = self.emitters(&system, &c);
            let tail_det = system.tail * system.det;
            let [g0, g1] = [self.sides[0].g_pi, self.sides[1].g_pi];
            Admittance {
                own: [(tail_det - e[0][0]) * g0, (tail_det - e[1][1]) * g1],
                across: [Some(-(e[0][1] * g0)), Some(-(e[1][0] * g1))],
                den: [Some(tail_det), Some(tail_det)],
            }
        } else {
            Admittance::open()
        };
        Solved {
            input,
            transfer: Transfer {
                rows,
                den: Some(system.det),
            },
        }
    }
}

impl StageSolve for DifferentialPair {
    type Values = PairValues;
    const NAME: &'static str = "differential pair";

    fn values(&self, v: &[f64]) -> PairValues {
        let point = Point::new(0.0, v);
        let small = self.small_signal(&point);
        let sides = [0, 1].map(|side| {
            SideValues::of(
                small.gm[side],
                small.g_pi[side],
                small.g_o[side],
                1.0 / v[self.load[side].0],
                self.degeneration[side].map(|re| 1.0 / v[re.0]),
            )
        });
        PairValues {
            sides,
            tail_conductance: 1.0 / self.tail_resistance(&point)
                + sides[0].tail_own
                + sides[1].tail_own,
            tail_capacitance: self.tail.capacitance.map_or(0.0, |c| v[c.0]),
            output: self.output,
            base_current: small.g_pi != [0.0, 0.0],
        }
    }

    fn probes(&self, point: &Point, load: &Mat2) -> Vec<Probe> {
        let (Some(headroom), Some(levels)) = (self.headroom, self.dc_levels(point, load)) else {
            return Vec::new();
        };
        let Some(nodes) = self.nodes(point, load) else {
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
}
