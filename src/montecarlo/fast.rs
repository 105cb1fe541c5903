//! A faster exact evaluator for the Monte Carlo's most common chains: an
//! optional source network followed by one difference amplifier,
//! three-op-amp in-amp or integrated in-amp (and optionally a converter,
//! which scales the common-mode and differential responses of a
//! single-ended output alike and so leaves ε unchanged).
//!
//! The same equations as the general engine, eliminated by hand, and built
//! for speed by structure alone:
//!
//! - What does not depend on frequency (conductances, ratios, reciprocals)
//!   is computed once per trial by [`FastChain::prepare`].
//! - Each leg's cable node is substituted out of the source network, leaving
//!   a 2×2 in the two pins; the in-amp's inverting inputs are substituted
//!   out of its first stage, leaving a 2×2 in its two outputs.
//! - ε is a ratio of two responses of one linear system, so any factor
//!   common to both cancels: a 2×2 is solved by its adjugate without the
//!   determinant, an equation is multiplied through by its denominators
//!   instead of divided by them, and a gain shared by both responses (an
//!   integrated in-amp's gain and bandwidth) is left out. Per frequency
//!   there is one division, for |ε|² itself.
//! - The per-frequency work runs on [`LANES`] frequencies at once in
//!   structure-of-arrays form ([`super::lanes`]), compiled twice: for the
//!   baseline instruction set and, chosen when the processor reports it,
//!   for 256-bit vectors. Both give the same bits.
//!
//! The general engine stays the reference: tests compare the two on random
//! draws of every example.

use super::lanes::{Complexes, Reals, LANES, ONE, ZERO};
use crate::model::{Budget, ParamId};
use crate::stage::{DifferenceAmp, OpAmp, SourceImpedance, StageKind};

/// The chain shapes the fast evaluator handles.
#[derive(Debug, Clone)]
pub struct FastChain {
    source: Option<crate::stage::SourceNetwork>,
    amplifier: StageKind,
    /// Whether the processor runs the 256-bit build of the kernel.
    wide: bool,
}

/// An op-amp's frequency-independent values.
#[derive(Debug, Clone, Copy, Default)]
struct OpAmpValues {
    inverse_a0: f64,
    inverse_gbw: f64,
    c0: f64,
    c0_per_corner: f64,
}

impl OpAmpValues {
    fn of(opamp: &OpAmp, v: &[f64]) -> OpAmpValues {
        let c0 = opamp.cmrr_reciprocal.map_or(0.0, |id| v[id.0]);
        OpAmpValues {
            inverse_a0: opamp.open_loop_gain.map_or(0.0, |id| 1.0 / v[id.0]),
            inverse_gbw: opamp.gain_bandwidth_hz.map_or(0.0, |id| 1.0 / v[id.0]),
            c0,
            c0_per_corner: opamp.cmrr_corner_hz.map_or(0.0, |id| c0 / v[id.0]),
        }
    }

    /// (1/A(jf), 1/CMRR(jf)).
    #[inline(always)]
    fn at(&self, f: Reals) -> (Complexes, Complexes) {
        (
            Complexes::with_imaginary(self.inverse_a0, f * self.inverse_gbw),
            Complexes::with_imaginary(self.c0, f * self.c0_per_corner),
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

/// A difference stage's output per volt at each pin, both multiplied by
/// the same factor `1/scale`: (m_p·scale, m_n·scale, scale).
struct ScaledGains {
    p: Complexes,
    n: Complexes,
    scale: Complexes,
}

impl DifferenceValues {
    fn of(d: &DifferenceAmp, v: &[f64]) -> DifferenceValues {
        let (r1, r2, r3) = (v[d.r1.0], v[d.r2.0], v[d.r3.0]);
        let r4 = d.r4_to_reference(&crate::stage::Point::new(0.0, v));
        DifferenceValues {
            k3: r4 / (r3 + r4),
            alpha: r2 / (r1 + r2),
            beta: r1 / (r1 + r2),
            feedback: 1.0 / (r1 + r2),
            p_conductance: 1.0 / (r3 + r4),
            opamp: OpAmpValues::of(&d.opamp, v),
        }
    }

    /// m_p = (1 + c/2)·k3 / (1/A + (1 − c/2)·β) and
    /// m_n = −(1 − c/2)·α / (1/A + (1 − c/2)·β), kept as numerators over
    /// their common denominator.
    #[inline(always)]
    fn gains(&self, f: Reals) -> ScaledGains {
        let (a_inv, c) = self.opamp.at(f);
        let half_c = c * 0.5;
        let minus = ONE - half_c;
        ScaledGains {
            p: (ONE + half_c) * self.k3,
            n: -(minus * self.alpha),
            scale: a_inv + minus * self.beta,
        }
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

/// The amplifier's frequency-independent values.
#[derive(Debug, Clone, Copy)]
enum AmplifierValues {
    /// A difference amplifier driven straight from the pins.
    Difference(DifferenceValues),
    /// A three-op-amp in-amp.
    ThreeOpAmp {
        pins: [PinValues; 2],
        first: [OpAmpValues; 2],
        g_gain: f64,
        g_feedback: [f64; 2],
        difference: DifferenceValues,
    },
    /// An integrated in-amp: only its CMRR matters to ε, its gain and
    /// bandwidth being common to both responses.
    Block {
        pins: [PinValues; 2],
        c0: f64,
        c0_per_corner: f64,
    },
}

impl Default for AmplifierValues {
    fn default() -> AmplifierValues {
        AmplifierValues::Difference(DifferenceValues::default())
    }
}

/// A pin's shunt to ground: conductance and capacitance.
#[derive(Debug, Clone, Copy, Default)]
struct PinValues {
    conductance: f64,
    capacitance: f64,
}

/// The source network's frequency-independent values.
#[derive(Debug, Clone, Copy, Default)]
struct SourceValues {
    legs: [LegValues; 2],
    guard: f64,
    differential_c: f64,
}

/// Everything one trial needs, computed once.
#[derive(Debug, Clone, Default)]
pub struct Prepared {
    /// None when the amplifier is driven straight from the sensor.
    source: Option<SourceValues>,
    amplifier: AmplifierValues,
}

/// The amplifier seen from the source: output ∝ `row` · pin voltages, and
/// the current it draws from pin i, times `scale[i]` (when given), is
/// `own[i]` × pin i's voltage + `across[i]` (when given) × the other's.
struct Loaded {
    row: [Complexes; 2],
    own: [Complexes; 2],
    across: [Option<Complexes>; 2],
    scale: [Option<Complexes>; 2],
}

/// `value` × `scale`, or `value` where there is no scale.
#[inline(always)]
fn scaled(value: Complexes, scale: Option<Complexes>) -> Complexes {
    match scale {
        Some(s) => value * s,
        None => value,
    }
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
                wide: wide_vectors_available(),
            }),
            _ => None,
        }
    }

    /// The frequency-independent values of one trial's parameter values.
    pub fn prepare(&self, v: &[f64], prepared: &mut Prepared) {
        prepared.source = self.source.as_ref().map(|network| SourceValues {
            guard: network.guard_drive / 2.0,
            differential_c: optional(network.differential_capacitance, v),
            legs: network.legs.each_ref().map(|leg| {
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
                LegValues {
                    gs,
                    cs,
                    cable: optional(leg.cable_capacitance, v),
                    series: leg.series_resistance.map(|id| 1.0 / v[id.0]),
                    shunt_c: optional(leg.filter_capacitance, v)
                        + optional(leg.input_capacitance, v),
                    shunt_g: leg.input_resistance.map_or(0.0, |id| 1.0 / v[id.0]),
                }
            }),
        });
        let pin_values = |pins: &[crate::stage::PinShunt; 2]| {
            [0, 1].map(|i| PinValues {
                conductance: pins[i].resistance.map_or(0.0, |id| 1.0 / v[id.0]),
                capacitance: optional(pins[i].capacitance, v),
            })
        };
        prepared.amplifier = match &self.amplifier {
            StageKind::DifferenceAmp(d) => AmplifierValues::Difference(DifferenceValues::of(d, v)),
            StageKind::ThreeOpAmpInAmp(a) => AmplifierValues::ThreeOpAmp {
                pins: pin_values(&a.pins),
                first: [
                    OpAmpValues::of(&a.first_stage[0], v),
                    OpAmpValues::of(&a.first_stage[1], v),
                ],
                g_gain: 1.0 / v[a.rg.0],
                g_feedback: [1.0 / v[a.rf1.0], 1.0 / v[a.rf2.0]],
                difference: DifferenceValues::of(&a.difference_stage, v),
            },
            StageKind::IntegratedInAmp(a) => {
                let c0 = optional(a.cmrr_reciprocal, v);
                AmplifierValues::Block {
                    pins: pin_values(&a.pins),
                    c0,
                    c0_per_corner: a.cmrr_corner_hz.map_or(0.0, |id| c0 / v[id.0]),
                }
            }
            _ => unreachable!("FastChain::new admits only these amplifiers"),
        };
    }

    /// |ε|² at each of `frequencies` (Hz) for a prepared trial, into `out`
    /// (the same length).
    #[allow(unsafe_code)] // the one call into the AVX2 build, below
    pub fn conversions_squared(&self, p: &Prepared, frequencies: &[f64], out: &mut [f64]) {
        assert_eq!(frequencies.len(), out.len(), "one result per frequency");
        #[cfg(target_arch = "x86_64")]
        if self.wide {
            // SAFETY: `wide` is set only when the running processor reports
            // AVX2 (see `wide_vectors_available`).
            unsafe { conversions_squared_avx2(p, frequencies, out) };
            return;
        }
        each_block(p, frequencies, out);
    }
}

/// Whether this processor can run the 256-bit build of the kernel.
fn wide_vectors_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// The kernel compiled for 256-bit vectors.
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
#[allow(unsafe_code)]
unsafe fn conversions_squared_avx2(p: &Prepared, frequencies: &[f64], out: &mut [f64]) {
    each_block(p, frequencies, out);
}

/// The kernel over `frequencies` in blocks of [`LANES`]; a short last block
/// repeats its last frequency in the unused lanes.
#[inline(always)]
fn each_block(p: &Prepared, frequencies: &[f64], out: &mut [f64]) {
    let mut f_blocks = frequencies.chunks_exact(LANES);
    let mut out_blocks = out.chunks_exact_mut(LANES);
    for (f_block, out_block) in (&mut f_blocks).zip(&mut out_blocks) {
        let lanes: [f64; LANES] = f_block.try_into().expect("a whole block");
        let result = conversion_squared(p, Reals(lanes));
        out_block.copy_from_slice(&result.0);
    }
    let (f_rest, out_rest) = (f_blocks.remainder(), out_blocks.into_remainder());
    if let Some(&last) = f_rest.last() {
        let mut lanes = [last; LANES];
        for (lane, &f) in lanes.iter_mut().zip(f_rest) {
            *lane = f;
        }
        let result = conversion_squared(p, Reals(lanes));
        for (slot, value) in out_rest.iter_mut().zip(result.0) {
            *slot = value;
        }
    }
}

/// |ε|² at the frequencies `f` (Hz).
#[inline(always)]
fn conversion_squared(p: &Prepared, f: Reals) -> Reals {
    let omega = f * (2.0 * std::f64::consts::PI);
    let loaded = amplifier(&p.amplifier, f, omega);
    let [r0, r1] = loaded.row;
    // The output is a + b for a common-mode excitation and (a − b)/2 for a
    // differential one, both times the same factor. Driven through the
    // source network, M v = drive for common mode and M v = (drive_0,
    // −drive_1)/2 for differential, so with w = row · adj(M) the two parts
    // are w_0 drive_0 and w_1 drive_1.
    let (a, b) = if let Some(source) = &p.source {
        let (m, drive) = source_system(source, omega, &loaded);
        let w0 = r0 * m[1][1] - r1 * m[1][0];
        let w1 = r1 * m[0][0] - r0 * m[0][1];
        (w0 * drive[0], w1 * drive[1])
    } else {
        (r0, r1)
    };
    let out_cm = a + b;
    let out_dm = (a - b) * 0.5;
    out_cm.norm_sqr() / out_dm.norm_sqr()
}

/// The amplifier's output row and input admittance at `f` (Hz).
#[inline(always)]
fn amplifier(values: &AmplifierValues, f: Reals, omega: Reals) -> Loaded {
    match values {
        AmplifierValues::Difference(d) => {
            // Output = (m̃_p v_p + m̃_n v_n)/s; the inverting pin's current
            // (v_n − output)/(R1 + R2), times s, is (−m̃_p v_p + (s − m̃_n) v_n)/(R1 + R2).
            let gains = d.gains(f);
            Loaded {
                row: [gains.p, gains.n],
                own: [
                    Complexes::real(d.p_conductance),
                    (gains.scale - gains.n) * d.feedback,
                ],
                across: [None, Some(-(gains.p * d.feedback))],
                scale: [None, Some(gains.scale)],
            }
        }
        AmplifierValues::ThreeOpAmp {
            pins,
            first,
            g_gain,
            g_feedback,
            difference,
        } => {
            // Each first-stage op-amp: D_i y_i = P_i v_i − a_i o_i, with
            // D = 1 − c/2, P = 1 + c/2, a = 1/A, y the inverting input. The
            // two inverting-input KCLs, multiplied through by D_1 D_2:
            // M o = B v. Then output ∝ (m̃_p, m̃_n) · adj(M) · B · v.
            let g_g = *g_gain;
            let [g1, g2] = *g_feedback;
            let (a1, c1) = first[0].at(f);
            let (a2, c2) = first[1].at(f);
            let (d1, p1) = (ONE - c1 * 0.5, ONE + c1 * 0.5);
            let (d2, p2) = (ONE - c2 * 0.5, ONE + c2 * 0.5);
            let d12 = d1 * d2;
            let m = [
                [-(a1 * d2 * (g1 + g_g)) - d12 * g1, a2 * d1 * g_g],
                [a1 * d2 * g_g, -(a2 * d1 * (g2 + g_g)) - d12 * g2],
            ];
            let (p1d2, p2d1) = (p1 * d2, p2 * d1);
            let b = [
                [-(p1d2 * (g1 + g_g)), p2d1 * g_g],
                [p1d2 * g_g, -(p2d1 * (g2 + g_g))],
            ];
            let gains = difference.gains(f);
            // (m̃_p, m̃_n) · adj(M).
            let t = [
                gains.p * m[1][1] - gains.n * m[1][0],
                gains.n * m[0][0] - gains.p * m[0][1],
            ];
            Loaded {
                row: [
                    t[0] * b[0][0] + t[1] * b[1][0],
                    t[0] * b[0][1] + t[1] * b[1][1],
                ],
                own: pin_admittance(pins, omega),
                across: [None, None],
                scale: [None, None],
            }
        }
        AmplifierValues::Block {
            pins,
            c0,
            c0_per_corner,
        } => {
            let half_c = Complexes::with_imaginary(*c0, f * *c0_per_corner) * 0.5;
            Loaded {
                row: [ONE + half_c, -(ONE - half_c)],
                own: pin_admittance(pins, omega),
                across: [None, None],
                scale: [None, None],
            }
        }
    }
}

/// Each pin's shunt admittance to ground.
#[inline(always)]
fn pin_admittance(pins: &[PinValues; 2], omega: Reals) -> [Complexes; 2] {
    pins.map(|pin| Complexes::with_imaginary(pin.conductance, omega * pin.capacitance))
}

/// The source network's nodal equations in the two pins, loaded by the
/// amplifier, M v = drive for a common-mode excitation: each leg's cable
/// node eliminated, its row multiplied through by the node's total
/// admittance (and by the load's scale) so nothing is divided.
#[inline(always)]
fn source_system(
    p: &SourceValues,
    omega: Reals,
    loaded: &Loaded,
) -> ([[Complexes; 2]; 2], [Complexes; 2]) {
    let yd = omega * p.differential_c;
    let mut m = [[ZERO; 2]; 2];
    let mut drive = [ZERO; 2];
    for (i, leg) in p.legs.iter().enumerate() {
        let j = 1 - i;
        let ys = Complexes::with_imaginary(leg.gs, omega * leg.cs);
        let yc = omega * leg.cable;
        let k = yc * p.guard;
        let shunt = Complexes::with_imaginary(leg.shunt_g, omega * leg.shunt_c);
        let scale = loaded.scale[i];
        match leg.series {
            Some(gr) => {
                // Row times S = ys + yc + yr (and the load's scale).
                let total = Complexes::new(ys.re + Reals::splat(gr), ys.im + yc);
                let own = (shunt + Complexes::new(Reals::splat(gr), yd)) * total
                    - Complexes::new(Reals::splat(gr * gr), k * gr);
                let across = -total.times_imaginary(yd) - Complexes::new(Reals::splat(0.0), k * gr);
                m[i][i] = scaled(own, scale) + total * loaded.own[i];
                m[i][j] = scaled(across, scale);
                if let Some(load) = loaded.across[i] {
                    m[i][j] = m[i][j] + total * load;
                }
                drive[i] = scaled(ys * gr, scale);
            }
            None => {
                let own = Complexes::new(ys.re + shunt.re, ys.im + yc - k + yd + shunt.im);
                m[i][i] = scaled(own, scale) + loaded.own[i];
                m[i][j] = scaled(Complexes::new(Reals::splat(0.0), (k + yd) * -1.0), scale);
                if let Some(load) = loaded.across[i] {
                    m[i][j] = m[i][j] + load;
                }
                drive[i] = scaled(ys, scale);
            }
        }
    }
    (m, drive)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::budget::load_budget;
    use crate::montecarlo::{Sampler, SplitMix64};

    /// The 256-bit build and the baseline build of the kernel give the same
    /// bits: each lane runs the same IEEE operations in the same order.
    #[test]
    fn wide_and_baseline_builds_agree_to_the_bit() {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("budgets");
        let frequencies: Vec<f64> = (0..23).map(|i| 10f64.powf(i as f64 * 0.3)).collect();
        let mut checked = 0;
        for name in [
            "bridge-three-opamp.yaml",
            "load-cell-scale.yaml",
            "bridge-integrated-inamp.yaml",
        ] {
            let budget = load_budget(&root.join(name)).unwrap();
            let fast = FastChain::new(&budget).expect("a chain with a fast form");
            let sampler = Sampler::new(&budget);
            let mut values = budget.parameters.nominal_values();
            let mut prepared = Prepared::default();
            for trial in 0..50 {
                sampler.fill(&mut values, &mut SplitMix64::for_trial(3, trial));
                budget.parameters.resolve(&mut values, 0.0);
                fast.prepare(&values, &mut prepared);
                let mut baseline = vec![0.0; frequencies.len()];
                each_block(&prepared, &frequencies, &mut baseline);
                let mut chosen = vec![0.0; frequencies.len()];
                fast.conversions_squared(&prepared, &frequencies, &mut chosen);
                assert_eq!(baseline, chosen, "{name}, trial {trial}");
                // A frequency gives the same bits alone as in a block.
                for (index, &f) in frequencies.iter().enumerate() {
                    let mut alone = [0.0];
                    fast.conversions_squared(&prepared, &[f], &mut alone);
                    assert_eq!(alone[0], baseline[index]);
                }
                checked += 1;
            }
        }
        assert_eq!(checked, 150);
    }
}
