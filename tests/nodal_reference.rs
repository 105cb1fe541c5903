//! An independent check of the engine: random instances of every stage,
//! built as one flat modified-nodal-analysis (MNA) system and solved with a
//! general-purpose linear-algebra library (nalgebra's LU), compared with the
//! engine's stage-by-stage solve through the public API. The two share no
//! code beyond the budget-file reader.

use cmrr_budget::budget::parse_budget;
use cmrr_budget::engine::chain_response;
use cmrr_budget::stage::Point;
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64 as C;
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use std::f64::consts::PI;

/// One random front end: optional source network, difference amplifier.
#[derive(Debug)]
struct Instance {
    source: Option<Source>,
    r: [f64; 4],
    r_ref: Option<f64>,
    a0: f64,
    gbw: f64,
    inverse_cmrr: f64,
    cmrr_corner: f64,
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

fn log_uniform(rng: &mut StdRng, low: f64, high: f64) -> f64 {
    (rng.random_range(low.ln()..high.ln())).exp()
}

/// A pair around a log-uniform nominal in [low, high), each within ±fraction.
fn pair(rng: &mut StdRng, low: f64, high: f64, fraction: f64) -> [f64; 2] {
    let nominal = log_uniform(rng, low, high);
    spread(rng, nominal, fraction)
}

fn spread(rng: &mut StdRng, nominal: f64, fraction: f64) -> [f64; 2] {
    [
        nominal * (1.0 + rng.random_range(-fraction..fraction)),
        nominal * (1.0 + rng.random_range(-fraction..fraction)),
    ]
}

fn random_instance(rng: &mut StdRng, with_source: bool) -> Instance {
    let r1 = log_uniform(rng, 1e3, 100e3);
    let gain = log_uniform(rng, 0.5, 100.0);
    let source = with_source.then(|| {
        let rs = log_uniform(rng, 10.0, 100e3);
        let has_cs = rng.random_bool(0.5);
        Source {
            rs: spread(rng, rs, 0.2),
            cs: if has_cs {
                let c = log_uniform(rng, 1e-9, 100e-9);
                let [a, b] = spread(rng, c, 0.2);
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
        }
    });
    Instance {
        source,
        r: [
            r1,
            r1 * gain,
            r1 * (1.0 + rng.random_range(-0.01..0.01)),
            r1 * gain * (1.0 + rng.random_range(-0.01..0.01)),
        ],
        r_ref: rng.random_bool(0.5).then(|| log_uniform(rng, 0.1, 100.0)),
        a0: log_uniform(rng, 1e4, 1e7),
        gbw: log_uniform(rng, 1e5, 1e8),
        inverse_cmrr: rng.random_range(-1e-3..1e-3),
        cmrr_corner: log_uniform(rng, 10.0, 1e5),
    }
}

/// The instance as a budget file, every value at full precision. The
/// op-amp CMRR goes in as its magnitude; its sign is set in the parameter
/// values afterwards.
fn budget_text(instance: &Instance) -> String {
    let v = |x: f64| format!("{x:.17e}");
    let legs = |pair: [f64; 2], unit: &str| {
        format!("{{p: {} {unit}, n: {} {unit}}}", v(pair[0]), v(pair[1]))
    };
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
    text.push_str("  - difference_amp:\n");
    for (name, value) in ["r1", "r2", "r3", "r4"].iter().zip(instance.r) {
        text.push_str(&format!("      {name}: {}\n", v(value)));
    }
    if let Some(r_ref) = instance.r_ref {
        text.push_str(&format!("      reference_resistance: {}\n", v(r_ref)));
    }
    text.push_str(&format!(
        "      opamp:\n        open_loop_gain: {}\n        gain_bandwidth: {} Hz\n        cmrr: {} dB\n        cmrr_corner: {} Hz\n",
        v(instance.a0),
        v(instance.gbw),
        v(-20.0 * instance.inverse_cmrr.abs().log10()),
        v(instance.cmrr_corner)
    ));
    text.push_str("interference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n");
    text
}

/// A flat MNA system: node voltages, then voltage-source currents.
struct Mna {
    matrix: DMatrix<C>,
    rhs: DVector<C>,
    next_source: usize,
}

const GROUND: usize = usize::MAX;

impl Mna {
    fn new(nodes: usize, sources: usize) -> Mna {
        let size = nodes + sources;
        Mna {
            matrix: DMatrix::zeros(size, size),
            rhs: DVector::zeros(size),
            next_source: nodes,
        }
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

    /// A zero-volt source between `a` and `b` (a wire that carries a
    /// current unknown).
    fn short(&mut self, a: usize, b: usize) {
        let row = self.next_source;
        self.next_source += 1;
        let one = C::new(1.0, 0.0);
        self.matrix[(a, row)] += one;
        self.matrix[(b, row)] -= one;
        self.matrix[(row, a)] += one;
        self.matrix[(row, b)] -= one;
    }

    /// Solve; unused source slots become dummy unknowns fixed at zero.
    fn solve(mut self) -> DVector<C> {
        for row in self.next_source..self.matrix.nrows() {
            self.matrix[(row, row)] = C::new(1.0, 0.0);
        }
        self.matrix
            .lu()
            .solve(&self.rhs)
            .expect("reference MNA system is regular")
    }
}

/// The output voltage for sensor EMFs (e_p, e_n), solved flat.
fn reference_output(instance: &Instance, freq: f64, sign: f64, e: [C; 2]) -> C {
    let s = C::new(0.0, 2.0 * PI * freq);
    // Nodes: 0 e_p, 1 e_n, 2 a_p, 3 a_n, 4 b_p, 5 b_n, 6 shield, 7 x, 8 y, 9 out, 10 ref.
    let (ep, en, ap, an, bp, bn, shield, x, y, out, reference) = (0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10);
    let mut mna = Mna::new(11, 8);
    let (pin_p, pin_n) = match &instance.source {
        None => (ep, en),
        Some(_) => (bp, bn),
    };
    mna.voltage_source(ep, e[0], &[]);
    mna.voltage_source(en, e[1], &[]);
    match &instance.source {
        None => {
            // Unused nodes tied down so the system stays regular.
            for node in [ap, an, bp, bn, shield] {
                mna.admittance(node, GROUND, C::new(1.0, 0.0));
            }
        }
        Some(src) => {
            for (leg, (e_node, a, b)) in [(ep, ap, bp), (en, an, bn)].into_iter().enumerate() {
                let ys = C::new(1.0 / src.rs[leg], 0.0) + s * src.cs[leg].unwrap_or(0.0);
                mna.admittance(e_node, a, ys);
                mna.admittance(a, shield, s * src.cable[leg]);
                match src.series {
                    Some(series) => mna.admittance(a, b, C::new(1.0 / series[leg], 0.0)),
                    None => mna.short(a, b),
                }
                mna.admittance(
                    b,
                    GROUND,
                    s * (src.filter[leg] + src.input_c[leg]) + 1.0 / src.input_r[leg],
                );
            }
            mna.admittance(bp, bn, s * src.differential);
            let half = C::new(src.guard / 2.0, 0.0);
            mna.voltage_source(shield, C::new(0.0, 0.0), &[(bp, half), (bn, half)]);
        }
    }
    let [r1, r2, r3, r4] = instance.r;
    mna.admittance(pin_p, x, C::new(1.0 / r3, 0.0));
    mna.admittance(x, reference, C::new(1.0 / r4, 0.0));
    match instance.r_ref {
        Some(r_ref) => {
            mna.admittance(reference, GROUND, C::new(1.0 / r_ref, 0.0));
        }
        None => mna.voltage_source(reference, C::new(0.0, 0.0), &[]),
    }
    mna.admittance(pin_n, y, C::new(1.0 / r1, 0.0));
    mna.admittance(y, out, C::new(1.0 / r2, 0.0));
    // Op-amp: out = A(jf) [ (x − y) + (x + y)/2 · c (1 + j f/fc) ].
    let gain = 1.0 / (C::new(1.0 / instance.a0, 0.0) + C::new(0.0, freq / instance.gbw));
    let c =
        C::new(sign * instance.inverse_cmrr.abs(), 0.0) * C::new(1.0, freq / instance.cmrr_corner);
    let x_gain = gain * (1.0 + c / 2.0);
    let y_gain = -gain * (1.0 - c / 2.0);
    mna.voltage_source(out, C::new(0.0, 0.0), &[(x, x_gain), (y, y_gain)]);
    mna.solve()[out]
}

#[test]
fn engine_matches_a_flat_nodal_solve() {
    let mut rng = StdRng::seed_from_u64(0x5eed_c0de);
    let mut worst_relative = 0.0f64;
    for trial in 0..400 {
        let instance = random_instance(&mut rng, trial % 4 != 0);
        let text = budget_text(&instance);
        let budget =
            parse_budget(&text, "reference.yaml").unwrap_or_else(|e| panic!("{e}\n{text}"));
        let mut values = budget.parameters.nominal_values();
        // Set the op-amp CMRR's sign: the file gives its magnitude only.
        let sign = if instance.inverse_cmrr < 0.0 {
            -1.0
        } else {
            1.0
        };
        for (id, parameter) in budget.parameters.iter() {
            if parameter.name == "op-amp CMRR" {
                values[id.0] = sign * instance.inverse_cmrr.abs();
            }
        }
        for freq in [0.0, 50.0, 1e3, 1e5] {
            let engine = chain_response(&budget.chain, &Point::new(freq, &values)).unwrap();
            let one = C::new(1.0, 0.0);
            let dm = reference_output(&instance, freq, sign, [one / 2.0, -one / 2.0]);
            let cm = reference_output(&instance, freq, sign, [one, one]);
            for (got, want, what) in [(engine.dd, dm, "Add"), (engine.dc, cm, "Adc")] {
                let relative = (got - want).norm() / want.norm().max(1e-300);
                worst_relative = worst_relative.max(relative);
                assert!(
                    relative < 1e-7,
                    "trial {trial}, {freq} Hz, {what}: engine {got}, reference {want}\n{instance:#?}"
                );
            }
        }
    }
    eprintln!("largest relative difference from the flat solve: {worst_relative:e}");
}
