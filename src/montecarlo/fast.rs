//! A faster exact evaluator for the Monte Carlo's most common chains: an
//! optional source network followed by one difference amplifier,
//! three-op-amp in-amp or integrated in-amp (and optionally a converter,
//! which scales the common-mode and differential responses of a
//! single-ended output alike and so leaves ε unchanged).
//!
//! The same equations as the general engine, eliminated by hand: each leg's
//! cable node is substituted out of the source network, leaving a 2×2 in
//! the two pins, and the in-amp's inverting inputs out of its first stage,
//! leaving a 2×2 in its two outputs; both are solved by Cramer's rule. What
//! does not depend on frequency (conductances, ratios, reciprocals) is
//! computed once per trial by [`FastChain::prepare`]; per frequency only a
//! few dozen complex operations remain, with no allocation. The general
//! engine stays the reference: tests compare the two on random draws.

use crate::engine::linalg::{C64, ONE, ZERO};
use crate::model::{Budget, ParamId};
use crate::stage::{DifferenceAmp, GainSetting, OpAmp, SourceImpedance, StageKind};

/// The chain shapes the fast evaluator handles.
#[derive(Debug, Clone)]
pub struct FastChain {
    source: Option<crate::stage::SourceNetwork>,
    amplifier: StageKind,
}

/// An op-amp's frequency-independent values.
#[derive(Debug, Clone, Copy, Default)]
struct OpAmpValues {
    inverse_a0: f64,
    inverse_gbw: f64,
    c0: f64,
    inverse_corner: f64,
}

impl OpAmpValues {
    fn of(opamp: &OpAmp, v: &[f64]) -> OpAmpValues {
        OpAmpValues {
            inverse_a0: opamp.open_loop_gain.map_or(0.0, |id| 1.0 / v[id.0]),
            inverse_gbw: opamp.gain_bandwidth_hz.map_or(0.0, |id| 1.0 / v[id.0]),
            c0: opamp.cmrr_reciprocal.map_or(0.0, |id| v[id.0]),
            inverse_corner: opamp.cmrr_corner_hz.map_or(0.0, |id| 1.0 / v[id.0]),
        }
    }

    /// (1/A(jf), 1/CMRR(jf)).
    fn at(&self, f: f64) -> (C64, C64) {
        (
            C64::new(self.inverse_a0, f * self.inverse_gbw),
            C64::new(self.c0, self.c0 * f * self.inverse_corner),
        )
    }
}

/// A difference stage's frequency-independent values.
#[derive(Debug, Clone, Copy, Default)]
struct DifferenceValues {
    k3: f64,
    alpha: f64,
    beta: f64,
    feedback: f64,
    p_conductance: f64,
    opamp: OpAmpValues,
}

impl DifferenceValues {
    fn of(d: &DifferenceAmp, v: &[f64]) -> DifferenceValues {
        let (r1, r2, r3) = (v[d.r1.0], v[d.r2.0], v[d.r3.0]);
        let r4 = v[d.r4.0] + d.reference_resistance.map_or(0.0, |id| v[id.0]);
        DifferenceValues {
            k3: r4 / (r3 + r4),
            alpha: r2 / (r1 + r2),
            beta: r1 / (r1 + r2),
            feedback: 1.0 / (r1 + r2),
            p_conductance: 1.0 / (r3 + r4),
            opamp: OpAmpValues::of(&d.opamp, v),
        }
    }

    /// The output per volt at each pin, (m_p, m_n).
    fn gains(&self, f: f64) -> (C64, C64) {
        let (a_inv, c) = self.opamp.at(f);
        let plus = ONE + c / 2.0;
        let minus = ONE - c / 2.0;
        let inverse = (a_inv + minus * self.beta).inv();
        (plus * self.k3 * inverse, -(minus * self.alpha) * inverse)
    }
}

/// One source leg's frequency-independent values.
#[derive(Debug, Clone, Copy, Default)]
struct LegValues {
    gs: f64,
    cs: f64,
    cable: f64,
    series: Option<f64>,
    shunt_c: f64,
    shunt_g: f64,
}

/// Everything one trial needs, computed once.
#[derive(Debug, Clone, Default)]
pub struct Prepared {
    legs: [LegValues; 2],
    guard: f64,
    differential_c: f64,
    has_source: bool,
    /// Pin admittances of an in-amp: conductance and capacitance.
    pins: [(f64, f64); 2],
    kind: u8,
    difference: DifferenceValues,
    first: [OpAmpValues; 2],
    g_gain: f64,
    g_feedback: [f64; 2],
    gain: f64,
    inverse_bandwidth: f64,
    block_c0: f64,
    block_inverse_corner: f64,
}

/// The inverse of a 2×2 (Cramer), to apply to several right-hand sides.
fn inverse2(m: [[C64; 2]; 2]) -> [[C64; 2]; 2] {
    let d = (m[0][0] * m[1][1] - m[0][1] * m[1][0]).inv();
    [[m[1][1] * d, -m[0][1] * d], [-m[1][0] * d, m[0][0] * d]]
}

fn apply2(m: &[[C64; 2]; 2], v: [C64; 2]) -> [C64; 2] {
    [
        m[0][0] * v[0] + m[0][1] * v[1],
        m[1][0] * v[0] + m[1][1] * v[1],
    ]
}

fn optional(id: Option<ParamId>, v: &[f64]) -> f64 {
    id.map_or(0.0, |id| v[id.0])
}

impl FastChain {
    /// The fast form of `budget`'s chain, when it has one.
    pub fn new(budget: &Budget) -> Option<FastChain> {
        let mut kinds: Vec<&StageKind> = budget.chain.iter().map(|s| &s.kind).collect();
        // A converter after a single-ended output multiplies the common-mode
        // and differential responses alike by (1 + c/2): it leaves ε as is.
        if matches!(kinds.last(), Some(StageKind::Adc(_))) {
            kinds.pop();
        }
        let (source, amplifier) = match kinds.as_slice() {
            [StageKind::SourceNetwork(s), amp] => (Some(*s), *amp),
            [amp] => (None, *amp),
            _ => return None,
        };
        match amplifier {
            StageKind::DifferenceAmp(_)
            | StageKind::ThreeOpAmpInAmp(_)
            | StageKind::IntegratedInAmp(_) => Some(FastChain {
                source,
                amplifier: amplifier.clone(),
            }),
            _ => None,
        }
    }

    /// The frequency-independent values of one trial's parameter values.
    pub fn prepare(&self, v: &[f64], prepared: &mut Prepared) {
        if let Some(network) = &self.source {
            prepared.has_source = true;
            prepared.guard = network.guard_drive / 2.0;
            prepared.differential_c = optional(network.differential_capacitance, v);
            for (slot, leg) in prepared.legs.iter_mut().zip(&network.legs) {
                let (gs, cs) = match leg.source {
                    SourceImpedance::Resistive {
                        resistance,
                        capacitance,
                    } => (1.0 / v[resistance.0], optional(capacitance, v)),
                    SourceImpedance::BridgeNode {
                        upper_arm,
                        lower_arm,
                    } => (1.0 / v[upper_arm.0] + 1.0 / v[lower_arm.0], 0.0),
                };
                *slot = LegValues {
                    gs,
                    cs,
                    cable: optional(leg.cable_capacitance, v),
                    series: leg.series_resistance.map(|id| 1.0 / v[id.0]),
                    shunt_c: optional(leg.filter_capacitance, v)
                        + optional(leg.input_capacitance, v),
                    shunt_g: leg.input_resistance.map_or(0.0, |id| 1.0 / v[id.0]),
                };
            }
        }
        let pin_values = |pins: &[crate::stage::PinShunt; 2]| {
            [0, 1].map(|i| {
                (
                    pins[i].resistance.map_or(0.0, |id| 1.0 / v[id.0]),
                    optional(pins[i].capacitance, v),
                )
            })
        };
        match &self.amplifier {
            StageKind::DifferenceAmp(d) => {
                prepared.kind = 0;
                prepared.difference = DifferenceValues::of(d, v);
            }
            StageKind::ThreeOpAmpInAmp(a) => {
                prepared.kind = 1;
                prepared.pins = pin_values(&a.pins);
                prepared.difference = DifferenceValues::of(&a.difference_stage, v);
                prepared.first = [
                    OpAmpValues::of(&a.first_stage[0], v),
                    OpAmpValues::of(&a.first_stage[1], v),
                ];
                prepared.g_gain = 1.0 / v[a.rg.0];
                prepared.g_feedback = [1.0 / v[a.rf1.0], 1.0 / v[a.rf2.0]];
            }
            StageKind::IntegratedInAmp(a) => {
                prepared.kind = 2;
                prepared.pins = pin_values(&a.pins);
                prepared.gain = match a.gain {
                    GainSetting::Direct(id) => v[id.0],
                    GainSetting::Resistor {
                        rg,
                        base,
                        constant_ohms,
                    } => base + constant_ohms / v[rg.0],
                };
                prepared.inverse_bandwidth = a.bandwidth_hz.map_or(0.0, |id| 1.0 / v[id.0]);
                prepared.block_c0 = optional(a.cmrr_reciprocal, v);
                prepared.block_inverse_corner = a.cmrr_corner_hz.map_or(0.0, |id| 1.0 / v[id.0]);
            }
            _ => unreachable!("FastChain::new admits only these amplifiers"),
        }
    }

    /// |ε| at frequency `f` (Hz) for a prepared trial.
    pub fn conversion(&self, p: &Prepared, f: f64) -> f64 {
        let omega = 2.0 * std::f64::consts::PI * f;
        // The amplifier as a row: output = row · pins; and its input
        // admittance as the source's load.
        let (row, load) = match p.kind {
            0 => {
                let d = &p.difference;
                let (m_p, m_n) = d.gains(f);
                let load = [
                    [C64::new(d.p_conductance, 0.0), ZERO],
                    [-m_p * d.feedback, (ONE - m_n) * d.feedback],
                ];
                ([m_p, m_n], load)
            }
            1 => {
                // y_i = q_i v_i − r_i o_i, into the two inverting-input KCLs:
                // M o = B v, so o = M⁻¹ B v.
                let g_g = p.g_gain;
                let [g1, g2] = p.g_feedback;
                let coefficients = |opamp: &OpAmpValues| {
                    let (a_inv, c) = opamp.at(f);
                    let minus = (ONE - c / 2.0).inv();
                    ((ONE + c / 2.0) * minus, a_inv * minus)
                };
                let (q1, r1) = coefficients(&p.first[0]);
                let (q2, r2) = coefficients(&p.first[1]);
                let m = inverse2([
                    [-(g1 + g_g) * r1 - g1, r2 * g_g],
                    [r1 * g_g, -(g2 + g_g) * r2 - g2],
                ]);
                let column_p = apply2(&m, [-(g1 + g_g) * q1, q1 * g_g]);
                let column_n = apply2(&m, [q2 * g_g, -(g2 + g_g) * q2]);
                let (m_p, m_n) = p.difference.gains(f);
                let row = [
                    m_p * column_p[0] + m_n * column_p[1],
                    m_p * column_n[0] + m_n * column_n[1],
                ];
                (row, pin_load(&p.pins, omega))
            }
            _ => {
                let gain = C64::new(p.gain, 0.0) / C64::new(1.0, f * p.inverse_bandwidth);
                let c = C64::new(p.block_c0, p.block_c0 * f * p.block_inverse_corner);
                (
                    [gain * (ONE + c / 2.0), -gain * (ONE - c / 2.0)],
                    pin_load(&p.pins, omega),
                )
            }
        };
        let half = C64::new(0.5, 0.0);
        let (cm, dm) = if p.has_source {
            source_pins(p, omega, &load)
        } else {
            ([ONE, ONE], [half, -half])
        };
        let out_cm = row[0] * cm[0] + row[1] * cm[1];
        let out_dm = row[0] * dm[0] + row[1] * dm[1];
        (out_cm.norm_sqr() / out_dm.norm_sqr()).sqrt()
    }
}

fn pin_load(pins: &[(f64, f64); 2], omega: f64) -> [[C64; 2]; 2] {
    [
        [C64::new(pins[0].0, omega * pins[0].1), ZERO],
        [ZERO, C64::new(pins[1].0, omega * pins[1].1)],
    ]
}

/// The source network's pin voltages for a common-mode and a differential
/// excitation, loaded by `load`: each leg's cable node eliminated, leaving
/// a 2×2 in the pins.
fn source_pins(p: &Prepared, omega: f64, load: &[[C64; 2]; 2]) -> ([C64; 2], [C64; 2]) {
    let yd = C64::new(0.0, omega * p.differential_c);
    let mut m = [[ZERO; 2]; 2];
    let mut drive = [ZERO; 2];
    for (i, leg) in p.legs.iter().enumerate() {
        let j = 1 - i;
        let ys = C64::new(leg.gs, omega * leg.cs);
        let yc = C64::new(0.0, omega * leg.cable);
        let k = yc * p.guard;
        let shunt = C64::new(leg.shunt_g, omega * leg.shunt_c);
        match leg.series {
            Some(gr) => {
                let yr = C64::new(gr, 0.0);
                let inverse = (ys + yc + yr).inv();
                m[i][i] = yr + shunt + yd + load[i][i] - yr * (yr + k) * inverse;
                m[i][j] = -yd + load[i][j] - yr * k * inverse;
                drive[i] = yr * ys * inverse;
            }
            None => {
                m[i][i] = ys + yc - k + shunt + yd + load[i][i];
                m[i][j] = -k - yd + load[i][j];
                drive[i] = ys;
            }
        }
    }
    let half = C64::new(0.5, 0.0);
    let inverse = inverse2(m);
    (
        apply2(&inverse, drive),
        apply2(&inverse, [drive[0] * half, -drive[1] * half]),
    )
}
