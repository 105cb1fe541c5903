//! An independent check of the engine: random instances of every stage,
//! built as one flat modified-nodal-analysis (MNA) system and solved with a
//! general-purpose linear-algebra library (nalgebra's LU), compared with the
//! engine's stage-by-stage solve through the public API. The two share no
//! code beyond the budget-file reader. Method: C.-W. Ho, A. E. Ruehli and
//! P. A. Brennan, "The modified nodal approach to network analysis", IEEE
//! Trans. Circuits and Systems CAS-22(6), 1975 (from memory); op-amps enter
//! as the usual single-pole voltage-controlled sources.

use cmrr_budget::budget::parse_budget;
use cmrr_budget::engine::chain_response;
use cmrr_budget::stage::Point;
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64 as C;
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use std::collections::HashMap;
use std::f64::consts::PI;

/// One random front end: an optional source network, then one amplifier.
#[derive(Debug)]
struct Instance {
    source: Option<Source>,
    amplifier: Amplifier,
}

#[derive(Debug)]
struct Source {
    rs: [f64; 2],
    cs: [Option<f64>; 2],
    cable: [f64; 2],
    guard: f64,
    series: Option<[f64; 2]>,
    filter: [f64; 2],
    input_r: [f64; 2],
    input_c: [f64; 2],
    differential: f64,
}

#[derive(Debug, Clone, Copy)]
struct OpAmpData {
    a0: f64,
    gbw: f64,
    /// Signed 1/CMRR at DC.
    inverse_cmrr: f64,
    cmrr_corner: f64,
}

#[derive(Debug)]
struct DifferenceData {
    r: [f64; 4],
    r_ref: Option<f64>,
    opamp: OpAmpData,
}

#[derive(Debug)]
struct Pins {
    r: [f64; 2],
    c: [f64; 2],
}

#[derive(Debug)]
enum Amplifier {
    Difference(DifferenceData),
    ThreeOpAmp {
        rg: f64,
        rf: [f64; 2],
        first: [OpAmpData; 2],
        pins: Pins,
        difference: DifferenceData,
    },
    Integrated {
        gain: f64,
        inverse_cmrr: f64,
        cmrr_corner: f64,
        bandwidth: f64,
        pins: Pins,
    },
    Pair(PairData),
}

#[derive(Debug)]
struct PairData {
    gm: [f64; 2],
    r_pi: Option<[f64; 2]>,
    ro: Option<[f64; 2]>,
    degeneration: Option<[f64; 2]>,
    load: [f64; 2],
    tail_r: f64,
    tail_c: f64,
    differential: bool,
    /// A difference amplifier after the pair, loading its collectors.
    follower: Option<DifferenceData>,
}

fn log_uniform(rng: &mut StdRng, low: f64, high: f64) -> f64 {
    (rng.random_range(low.ln()..high.ln())).exp()
}

/// A pair around a log-uniform nominal in [low, high), each within ±fraction.
fn pair(rng: &mut StdRng, low: f64, high: f64, fraction: f64) -> [f64; 2] {
    let nominal = log_uniform(rng, low, high);
    [
        nominal * (1.0 + rng.random_range(-fraction..fraction)),
        nominal * (1.0 + rng.random_range(-fraction..fraction)),
    ]
}

fn random_opamp(rng: &mut StdRng) -> OpAmpData {
    OpAmpData {
        a0: log_uniform(rng, 1e4, 1e7),
        gbw: log_uniform(rng, 1e5, 1e8),
        inverse_cmrr: rng.random_range(-1e-3..1e-3),
        cmrr_corner: log_uniform(rng, 10.0, 1e5),
    }
}

fn random_difference(rng: &mut StdRng) -> DifferenceData {
    let r1 = log_uniform(rng, 1e3, 100e3);
    let gain = log_uniform(rng, 0.5, 100.0);
    DifferenceData {
        r: [
            r1,
            r1 * gain,
            r1 * (1.0 + rng.random_range(-0.01..0.01)),
            r1 * gain * (1.0 + rng.random_range(-0.01..0.01)),
        ],
        r_ref: rng.random_bool(0.5).then(|| log_uniform(rng, 0.1, 100.0)),
        opamp: random_opamp(rng),
    }
}

fn random_pins(rng: &mut StdRng) -> Pins {
    Pins {
        r: pair(rng, 1e6, 1e10, 0.3),
        c: pair(rng, 1e-12, 20e-12, 0.3),
    }
}

fn random_instance(rng: &mut StdRng, trial: usize) -> Instance {
    let source = (trial % 4 != 0).then(|| Source {
        rs: pair(rng, 10.0, 100e3, 0.2),
        cs: if rng.random_bool(0.5) {
            let [a, b] = pair(rng, 1e-9, 100e-9, 0.2);
            [Some(a), Some(b)]
        } else {
            [None, None]
        },
        cable: pair(rng, 50e-12, 5e-9, 0.1),
        guard: if rng.random_bool(0.5) {
            rng.random_range(0.5..0.999)
        } else {
            0.0
        },
        series: rng.random_bool(0.6).then(|| pair(rng, 10.0, 10e3, 0.05)),
        filter: pair(rng, 100e-12, 10e-9, 0.1),
        input_r: pair(rng, 1e6, 1e10, 0.3),
        input_c: pair(rng, 1e-12, 20e-12, 0.3),
        differential: log_uniform(rng, 1e-9, 100e-9),
    });
    let amplifier = match trial % 4 {
        3 => Amplifier::Pair(PairData {
            gm: pair(rng, 1e-3, 100e-3, 0.1),
            r_pi: rng.random_bool(0.7).then(|| pair(rng, 1e3, 100e3, 0.2)),
            ro: rng.random_bool(0.7).then(|| pair(rng, 10e3, 1e6, 0.2)),
            degeneration: rng.random_bool(0.5).then(|| pair(rng, 10.0, 1e3, 0.05)),
            load: pair(rng, 1e3, 50e3, 0.05),
            tail_r: log_uniform(rng, 1e3, 10e6),
            tail_c: log_uniform(rng, 0.1e-12, 100e-12),
            differential: rng.random_bool(0.5),
            follower: rng.random_bool(0.5).then(|| random_difference(rng)),
        }),
        0 => Amplifier::Difference(random_difference(rng)),
        1 => {
            let rf = log_uniform(rng, 5e3, 50e3);
            Amplifier::ThreeOpAmp {
                rg: log_uniform(rng, 10.0, 1e6),
                rf: [
                    rf * (1.0 + rng.random_range(-0.01..0.01)),
                    rf * (1.0 + rng.random_range(-0.01..0.01)),
                ],
                first: [random_opamp(rng), random_opamp(rng)],
                pins: random_pins(rng),
                difference: random_difference(rng),
            }
        }
        _ => Amplifier::Integrated {
            gain: log_uniform(rng, 1.0, 1000.0),
            inverse_cmrr: rng.random_range(-1e-3..1e-3),
            cmrr_corner: log_uniform(rng, 10.0, 1e5),
            bandwidth: log_uniform(rng, 1e3, 1e6),
            pins: random_pins(rng),
        },
    };
    Instance { source, amplifier }
}

fn v(x: f64) -> String {
    format!("{x:.17e}")
}

fn legs(pair: [f64; 2], unit: &str) -> String {
    format!("{{p: {} {unit}, n: {} {unit}}}", v(pair[0]), v(pair[1]))
}

fn cmrr_text(inverse: f64) -> String {
    format!("{} dB", v(-20.0 * inverse.abs().log10()))
}

fn opamp_text(opamp: &OpAmpData, indent: &str) -> String {
    format!(
        "{indent}open_loop_gain: {}\n{indent}gain_bandwidth: {} Hz\n{indent}cmrr: {}\n{indent}cmrr_corner: {} Hz\n",
        v(opamp.a0),
        v(opamp.gbw),
        cmrr_text(opamp.inverse_cmrr),
        v(opamp.cmrr_corner)
    )
}

fn difference_text(d: &DifferenceData, indent: &str) -> String {
    let mut text = String::new();
    for (name, value) in ["r1", "r2", "r3", "r4"].iter().zip(d.r) {
        text.push_str(&format!("{indent}{name}: {}\n", v(value)));
    }
    if let Some(r_ref) = d.r_ref {
        text.push_str(&format!("{indent}reference_resistance: {}\n", v(r_ref)));
    }
    text.push_str(&format!(
        "{indent}opamp:\n{}",
        opamp_text(&d.opamp, &format!("{indent}  "))
    ));
    text
}

fn pins_text(pins: &Pins) -> String {
    format!(
        "      input_resistance: {}\n      input_capacitance: {}\n",
        legs(pins.r, ""),
        legs(pins.c, "")
    )
}

/// The instance as a budget file. Op-amp CMRRs go in as magnitudes; signs
/// and the second first-stage op-amp's own data are set in the parameter
/// values afterwards (see [`overrides`]).
fn budget_text(instance: &Instance) -> String {
    let mut text = String::from("name: reference\nchain:\n");
    if let Some(s) = &instance.source {
        text.push_str("  - source:\n");
        text.push_str(&format!("      resistance: {}\n", legs(s.rs, "")));
        if let [Some(p), Some(n)] = s.cs {
            text.push_str(&format!("      capacitance: {}\n", legs([p, n], "")));
        }
        text.push_str(&format!(
            "      cable:\n        capacitance: {}\n        length: 1 m\n        guard_drive: {} %\n",
            legs(s.cable, "F/m"),
            v(s.guard * 100.0)
        ));
        if let Some(series) = s.series {
            text.push_str(&format!("      series_resistance: {}\n", legs(series, "")));
        }
        text.push_str(&format!(
            "      filter_capacitance: {}\n",
            legs(s.filter, "")
        ));
        text.push_str(&format!(
            "      input_resistance: {}\n",
            legs(s.input_r, "")
        ));
        text.push_str(&format!(
            "      input_capacitance: {}\n",
            legs(s.input_c, "")
        ));
        text.push_str(&format!(
            "      differential_capacitance: {}\n",
            v(s.differential)
        ));
    }
    match &instance.amplifier {
        Amplifier::Difference(d) => {
            text.push_str("  - difference_amp:\n");
            text.push_str(&difference_text(d, "      "));
        }
        Amplifier::ThreeOpAmp {
            rg,
            rf,
            first,
            pins,
            difference,
        } => {
            text.push_str("  - three_opamp_inamp:\n");
            text.push_str(&format!(
                "      rg: {}\n      rf1: {}\n      rf2: {}\n",
                v(*rg),
                v(rf[0]),
                v(rf[1])
            ));
            text.push_str(&pins_text(pins));
            text.push_str(&format!(
                "      first_stage_opamps:\n{}",
                opamp_text(&first[0], "        ")
            ));
            text.push_str("      difference_stage:\n");
            text.push_str(&difference_text(difference, "        "));
        }
        Amplifier::Integrated {
            gain,
            inverse_cmrr,
            cmrr_corner,
            bandwidth,
            pins,
        } => {
            text.push_str("  - integrated_inamp:\n");
            text.push_str(&format!(
                "      gain: {}\n      cmrr: {}\n      cmrr_corner: {} Hz\n      bandwidth: {} Hz\n",
                v(*gain),
                cmrr_text(*inverse_cmrr),
                v(*cmrr_corner),
                v(*bandwidth)
            ));
            text.push_str(&pins_text(pins));
        }
        Amplifier::Pair(p) => {
            text.push_str("  - differential_pair:\n      device: small_signal\n");
            text.push_str(&format!("      gm: {}\n", legs(p.gm, "S")));
            if let Some(r_pi) = p.r_pi {
                text.push_str(&format!("      r_pi: {}\n", legs(r_pi, "")));
            }
            if let Some(ro) = p.ro {
                text.push_str(&format!("      ro: {}\n", legs(ro, "")));
            }
            if let Some(re) = p.degeneration {
                text.push_str(&format!("      degeneration: {}\n", legs(re, "")));
            }
            text.push_str(&format!(
                "      load_resistance: {}\n      output: {}\n      tail: {{output_resistance: {}, capacitance: {}}}\n",
                legs(p.load, ""),
                if p.differential { "differential" } else { "single_ended" },
                v(p.tail_r),
                v(p.tail_c)
            ));
            if let Some(d) = &p.follower {
                text.push_str("  - difference_amp:\n");
                text.push_str(&difference_text(d, "      "));
            }
        }
    }
    text.push_str("interference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n");
    text
}

/// Parameter values the file cannot carry, by parameter name.
fn overrides(instance: &Instance) -> HashMap<&'static str, f64> {
    match &instance.amplifier {
        Amplifier::Difference(d) => HashMap::from([("op-amp CMRR", d.opamp.inverse_cmrr)]),
        Amplifier::ThreeOpAmp {
            first, difference, ..
        } => HashMap::from([
            ("A1 CMRR", first[0].inverse_cmrr),
            ("A2 CMRR", first[1].inverse_cmrr),
            ("A2 open-loop gain", first[1].a0),
            ("A2 gain-bandwidth", first[1].gbw),
            ("A2 CMRR corner", first[1].cmrr_corner),
            ("A3 CMRR", difference.opamp.inverse_cmrr),
        ]),
        Amplifier::Integrated { inverse_cmrr, .. } => {
            HashMap::from([("in-amp CMRR", *inverse_cmrr)])
        }
        Amplifier::Pair(p) => match &p.follower {
            Some(d) => HashMap::from([("op-amp CMRR", d.opamp.inverse_cmrr)]),
            None => HashMap::new(),
        },
    }
}

/// A flat MNA system: node voltages, then voltage-source currents.
struct Mna {
    matrix: DMatrix<C>,
    rhs: DVector<C>,
    next_node: usize,
    next_source: usize,
    nodes: usize,
}

const GROUND: usize = usize::MAX;
const MAX_NODES: usize = 24;
const MAX_SOURCES: usize = 12;

impl Mna {
    fn new() -> Mna {
        let size = MAX_NODES + MAX_SOURCES;
        Mna {
            matrix: DMatrix::zeros(size, size),
            rhs: DVector::zeros(size),
            next_node: 0,
            next_source: MAX_NODES,
            nodes: MAX_NODES,
        }
    }

    fn node(&mut self) -> usize {
        self.next_node += 1;
        assert!(self.next_node <= self.nodes);
        self.next_node - 1
    }

    fn admittance(&mut self, a: usize, b: usize, y: C) {
        if a != GROUND {
            self.matrix[(a, a)] += y;
        }
        if b != GROUND {
            self.matrix[(b, b)] += y;
        }
        if a != GROUND && b != GROUND {
            self.matrix[(a, b)] -= y;
            self.matrix[(b, a)] -= y;
        }
    }

    /// A voltage source from `node` to ground whose voltage is
    /// `value + Σ gain_k v(node_k)`.
    fn voltage_source(&mut self, node: usize, value: C, controls: &[(usize, C)]) {
        let row = self.next_source;
        self.next_source += 1;
        self.matrix[(node, row)] += C::new(1.0, 0.0);
        self.matrix[(row, node)] += C::new(1.0, 0.0);
        for (control, gain) in controls {
            self.matrix[(row, *control)] -= gain;
        }
        self.rhs[row] = value;
    }

    /// An op-amp: out = A(jf) [ (p − n) + (p + n)/2 · c (1 + j f/fc) ].
    fn opamp(&mut self, out: usize, plus: usize, minus: usize, data: &OpAmpData, freq: f64) {
        let gain = 1.0 / (C::new(1.0 / data.a0, 0.0) + C::new(0.0, freq / data.gbw));
        let c = C::new(data.inverse_cmrr, 0.0) * C::new(1.0, freq / data.cmrr_corner);
        self.voltage_source(
            out,
            C::new(0.0, 0.0),
            &[
                (plus, gain * (1.0 + c / 2.0)),
                (minus, -gain * (1.0 - c / 2.0)),
            ],
        );
    }

    /// Solve; unused rows become dummy unknowns fixed at zero.
    fn solve(mut self) -> DVector<C> {
        for row in (self.next_node..self.nodes).chain(self.next_source..self.matrix.nrows()) {
            self.matrix[(row, row)] = C::new(1.0, 0.0);
        }
        self.matrix
            .lu()
            .solve(&self.rhs)
            .expect("reference MNA system is regular")
    }
}

/// The four-resistor stage from nodes `p` and `n`; returns its output node.
fn difference_stage(mna: &mut Mna, d: &DifferenceData, p: usize, n: usize, freq: f64) -> usize {
    let (x, y, out) = (mna.node(), mna.node(), mna.node());
    let [r1, r2, r3, r4] = d.r;
    mna.admittance(p, x, C::new(1.0 / r3, 0.0));
    match d.r_ref {
        Some(r_ref) => {
            let reference = mna.node();
            mna.admittance(x, reference, C::new(1.0 / r4, 0.0));
            mna.admittance(reference, GROUND, C::new(1.0 / r_ref, 0.0));
        }
        None => mna.admittance(x, GROUND, C::new(1.0 / r4, 0.0)),
    }
    mna.admittance(n, y, C::new(1.0 / r1, 0.0));
    mna.admittance(y, out, C::new(1.0 / r2, 0.0));
    mna.opamp(out, x, y, &d.opamp, freq);
    out
}

/// The output voltage for sensor EMFs (e_p, e_n), solved flat.
fn reference_output(instance: &Instance, freq: f64, e: [C; 2]) -> C {
    let s = C::new(0.0, 2.0 * PI * freq);
    let mut mna = Mna::new();
    let (ep, en) = (mna.node(), mna.node());
    mna.voltage_source(ep, e[0], &[]);
    mna.voltage_source(en, e[1], &[]);
    let (pin_p, pin_n) = match &instance.source {
        None => (ep, en),
        Some(src) => {
            let (ap, an, shield) = (mna.node(), mna.node(), mna.node());
            let pins = match src.series {
                Some(_) => (mna.node(), mna.node()),
                None => (ap, an),
            };
            for (leg, (e_node, a, b)) in
                [(ep, ap, pins.0), (en, an, pins.1)].into_iter().enumerate()
            {
                let ys = C::new(1.0 / src.rs[leg], 0.0) + s * src.cs[leg].unwrap_or(0.0);
                mna.admittance(e_node, a, ys);
                mna.admittance(a, shield, s * src.cable[leg]);
                if let Some(series) = src.series {
                    mna.admittance(a, b, C::new(1.0 / series[leg], 0.0));
                }
                mna.admittance(
                    b,
                    GROUND,
                    s * (src.filter[leg] + src.input_c[leg]) + 1.0 / src.input_r[leg],
                );
            }
            mna.admittance(pins.0, pins.1, s * src.differential);
            let half = C::new(src.guard / 2.0, 0.0);
            mna.voltage_source(shield, C::new(0.0, 0.0), &[(pins.0, half), (pins.1, half)]);
            pins
        }
    };
    let shunt_pins = |mna: &mut Mna, pins: &Pins| {
        for (leg, node) in [pin_p, pin_n].into_iter().enumerate() {
            mna.admittance(node, GROUND, 1.0 / pins.r[leg] + s * pins.c[leg]);
        }
    };
    let out = match &instance.amplifier {
        Amplifier::Difference(d) => (difference_stage(&mut mna, d, pin_p, pin_n, freq), None),
        Amplifier::ThreeOpAmp {
            rg,
            rf,
            first,
            pins,
            difference,
        } => {
            shunt_pins(&mut mna, pins);
            let (o1, y1, o2, y2) = (mna.node(), mna.node(), mna.node(), mna.node());
            mna.admittance(o1, y1, C::new(1.0 / rf[0], 0.0));
            mna.admittance(o2, y2, C::new(1.0 / rf[1], 0.0));
            mna.admittance(y1, y2, C::new(1.0 / rg, 0.0));
            mna.opamp(o1, pin_p, y1, &first[0], freq);
            mna.opamp(o2, pin_n, y2, &first[1], freq);
            (difference_stage(&mut mna, difference, o1, o2, freq), None)
        }
        Amplifier::Integrated {
            gain,
            inverse_cmrr,
            cmrr_corner,
            bandwidth,
            pins,
        } => {
            shunt_pins(&mut mna, pins);
            let out = mna.node();
            let g = C::new(*gain, 0.0) / C::new(1.0, freq / bandwidth);
            let c = C::new(*inverse_cmrr, 0.0) * C::new(1.0, freq / cmrr_corner);
            mna.voltage_source(
                out,
                C::new(0.0, 0.0),
                &[(pin_p, g * (1.0 + c / 2.0)), (pin_n, -g * (1.0 - c / 2.0))],
            );
            (out, None)
        }
        Amplifier::Pair(p) => {
            let tail = mna.node();
            let collectors = [mna.node(), mna.node()];
            for (side, base) in [pin_p, pin_n].into_iter().enumerate() {
                let c = collectors[side];
                let e = match p.degeneration {
                    Some(re) => {
                        let e = mna.node();
                        mna.admittance(e, tail, C::new(1.0 / re[side], 0.0));
                        e
                    }
                    None => tail,
                };
                // Controlled current gm (v_b − v_e) from collector to emitter.
                let gm = C::new(p.gm[side], 0.0);
                mna.matrix[(c, base)] += gm;
                mna.matrix[(c, e)] -= gm;
                mna.matrix[(e, base)] -= gm;
                mna.matrix[(e, e)] += gm;
                if let Some(r_pi) = p.r_pi {
                    mna.admittance(base, e, C::new(1.0 / r_pi[side], 0.0));
                }
                if let Some(ro) = p.ro {
                    mna.admittance(c, e, C::new(1.0 / ro[side], 0.0));
                }
                mna.admittance(c, GROUND, C::new(1.0 / p.load[side], 0.0));
            }
            mna.admittance(tail, GROUND, 1.0 / p.tail_r + s * p.tail_c);
            let (out_p, out_n) = (collectors[1], collectors[0]);
            match (&p.follower, p.differential) {
                (Some(d), true) => (difference_stage(&mut mna, d, out_p, out_n, freq), None),
                (Some(d), false) => {
                    // Single-ended: the follower's n input sits at ground.
                    let ground_node = mna.node();
                    mna.voltage_source(ground_node, C::new(0.0, 0.0), &[]);
                    (
                        difference_stage(&mut mna, d, out_p, ground_node, freq),
                        None,
                    )
                }
                (None, true) => (out_p, Some(out_n)),
                (None, false) => (out_p, None),
            }
        }
    };
    let solution = mna.solve();
    solution[out.0] - out.1.map_or(C::new(0.0, 0.0), |n| solution[n])
}

#[test]
fn engine_matches_a_flat_nodal_solve() {
    let mut rng = StdRng::seed_from_u64(0x5eed_c0de);
    let mut worst_relative = 0.0f64;
    for trial in 0..600 {
        let instance = random_instance(&mut rng, trial);
        let text = budget_text(&instance);
        let budget =
            parse_budget(&text, "reference.yaml").unwrap_or_else(|e| panic!("{e}\n{text}"));
        let mut values = budget.parameters.nominal_values();
        let overrides = overrides(&instance);
        for (id, parameter) in budget.parameters.iter() {
            if let Some(value) = overrides.get(parameter.name.as_str()) {
                values[id.0] = *value;
            }
        }
        let overridden = budget
            .parameters
            .iter()
            .filter(|(_, p)| overrides.contains_key(p.name.as_str()))
            .count();
        assert_eq!(
            overridden,
            overrides.len(),
            "every override names a parameter"
        );
        for freq in [0.0, 50.0, 1e3, 1e5] {
            let engine = chain_response(&budget.chain, &Point::new(freq, &values)).unwrap();
            let one = C::new(1.0, 0.0);
            let dm = reference_output(&instance, freq, [one / 2.0, -one / 2.0]);
            let cm = reference_output(&instance, freq, [one, one]);
            // Add to 1e-9 relative; Adc to 1e-9 relative or, where it is a
            // small difference of large terms, to 1e-11 of Add — a CMRR
            // resolved to 220 dB.
            let add_error = (engine.dd - dm).norm() / dm.norm();
            let adc_error = (engine.dc - cm).norm() / (cm.norm() + 1e-2 * dm.norm());
            worst_relative = worst_relative.max(add_error).max(adc_error);
            assert!(
                add_error < 1e-9 && adc_error < 1e-9,
                "trial {trial}, {freq} Hz: Add engine {} reference {dm}; Adc engine {} reference {cm}\n{instance:#?}",
                engine.dd,
                engine.dc
            );
        }
    }
    eprintln!("largest scaled difference from the flat solve: {worst_relative:e}");
}
