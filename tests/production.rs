//! Production spread: Monte Carlo percentiles against a distribution known
//! in closed form, determinism across thread counts, the worst corner
//! against the linear bound, and matched networks against separate parts.

use approx::assert_relative_eq;
use assert_cmd::Command;
use cmrr_budget::budget::parse_budget;
use cmrr_budget::engine::analyse_point;
use cmrr_budget::engine::worst_corner;
use cmrr_budget::model::Budget;
use cmrr_budget::montecarlo::{run_yield, TemperatureMode, YieldOptions};
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};

fn budget(chain: &str) -> Budget {
    let text = format!("name: spread\nchain:\n{chain}\ninterference:\n  - {{name: hum, amplitude: 1 V rms, frequency: 50 Hz}}\n");
    parse_budget(&text, "spread.yaml").unwrap_or_else(|e| panic!("{e}"))
}

fn options(trials: u64, seed: u64) -> YieldOptions {
    YieldOptions {
        trials,
        seed,
        temperature: TemperatureMode::Reference,
    }
}

fn run(b: &Budget, trials: u64, seed: u64) -> cmrr_budget::montecarlo::YieldRun {
    run_yield(
        b,
        &[0.0],
        &[],
        options(trials, seed),
        &|_| {},
        &AtomicBool::new(false),
    )
    .unwrap()
}

/// One resistor uniform within ±t in an ideal unity difference amplifier:
/// with R4 = R(1 + δ), the exact common-mode gain (R1 R4 − R2 R3)/(R1 (R3 +
/// R4)) (Pallas-Areny and Webster 1991) gives ε(δ), monotone in δ, so
/// P(CMRR < c) = 1 − (δ₊(c) − δ₋(c))/(2t) where ε(δ±) = ±10^(−c/20). The
/// Monte Carlo percentiles must match this to the histogram's bin width (at
/// most 0.034 dB) plus sampling spread.
#[test]
fn percentiles_follow_the_closed_form() {
    let t = 0.01;
    let b = budget("  - difference_amp: {r1: 10k, r2: 10k, r3: 10k, r4: 10k ±1 % uniform}");
    let epsilon = |d: f64| {
        let acm = d / (2.0 + d);
        let add = (1.0 + 2.0 * (1.0 + d) / (2.0 + d)) / 2.0;
        acm / add
    };
    // δ with ε(δ) = target, by bisection on the monotone map.
    let solve = |target: f64| {
        let (mut lo, mut hi) = (-0.5, 0.5);
        for _ in 0..200 {
            let mid = (lo + hi) / 2.0;
            if epsilon(mid) < target {
                lo = mid
            } else {
                hi = mid
            }
        }
        lo
    };
    let below = |c: f64| {
        let e = 10f64.powf(-c / 20.0);
        let width = solve(e).min(t) - solve(-e).max(-t);
        1.0 - width / (2.0 * t)
    };
    let quantile = |p: f64| {
        let (mut lo, mut hi) = (0.0, 200.0);
        for _ in 0..200 {
            let mid = (lo + hi) / 2.0;
            if below(mid) < p {
                lo = mid
            } else {
                hi = mid
            }
        }
        lo
    };
    let result = run(&b, 200_000, 7);
    let histogram = &result.histograms[0];
    for p in [0.01, 0.05, 0.5] {
        let expected = quantile(p);
        let got = histogram.quantile(p);
        assert!(
            (got - expected).abs() < 0.15,
            "p = {p}: {got} against {expected}"
        );
    }
    // The worst trial cannot beat the worst corner: |δ| = t.
    let worst = -20.0 * epsilon(-t).abs().max(epsilon(t).abs()).log10();
    assert!(histogram.worst().unwrap().0 >= worst - 1e-9);
}

#[test]
fn same_seed_same_numbers_on_one_and_two_threads() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets/bridge-three-opamp.yaml");
    let b = cmrr_budget::budget::load_budget(&path).unwrap();
    let frequencies = [0.0, 50.0, 1e3];
    let go = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| {
                let mut o = options(3_000, 42);
                o.temperature = TemperatureMode::Drawn;
                run_yield(&b, &frequencies, &[], o, &|_| {}, &AtomicBool::new(false)).unwrap()
            })
    };
    let one = go(1);
    let two = go(2);
    assert_eq!(one, two);
    assert_eq!(one.trials_run, 3_000);
    // Another seed gives other numbers.
    let other = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap()
        .install(|| {
            run_yield(
                &b,
                &frequencies,
                &[],
                options(3_000, 43),
                &|_| {},
                &AtomicBool::new(false),
            )
            .unwrap()
        });
    assert_ne!(one.histograms, other.histograms);
}

/// With small tolerances the conversion is linear in the deviations, so the
/// worst sign corner solved exactly equals the first-order worst case
/// (the sum of the contributions' magnitudes, as in #2's budget). Common
/// practice, no source.
#[test]
fn worst_corner_equals_the_linear_bound_for_small_tolerances() {
    let b = budget("  - difference_amp: {r1: 10k ±0.01 %, r2: 100k ±0.01 %, r3: 10k ±0.01 %, r4: 100k ±0.01 %, opamp: {cmrr: 110 dB}}");
    let analysis = analyse_point(&b, 0.0).unwrap();
    let corner = worst_corner(&b, &analysis).unwrap();
    assert!(corner.exhaustive);
    assert_eq!(corner.evaluated, 32);
    assert_relative_eq!(
        corner.magnitude(),
        analysis.worst_case(),
        max_relative = 1e-3
    );
}

/// A matched network's resistors share their absolute error, which cancels
/// in the ratios, so only the ratio tolerance T converts: each resistor's
/// own error within ±T/2 gives the (1 + G)/(4 t) worst case of four
/// resistors with t = T/2, i.e. (1 + G)/(2T) (Pallas-Areny and Webster
/// 1991 for the four-resistor form). Separate parts at the network's
/// absolute tolerance get no such credit.
#[test]
fn matched_network_is_ratio_limited() {
    let network = budget("  - difference_amp: {r1: 10k, r2: 100k, r3: 10k, r4: 100k, network: {tolerance: 1 %, ratio_tolerance: 0.02 %}}");
    let separate =
        budget("  - difference_amp: {r1: 10k ±1 %, r2: 100k ±1 %, r3: 10k ±1 %, r4: 100k ±1 %}");
    let matched = analyse_point(&network, 0.0).unwrap();
    assert_relative_eq!(
        1.0 / matched.worst_case(),
        11.0 / (2.0 * 2e-4),
        max_relative = 1e-3
    );
    let shared = matched
        .contributions
        .iter()
        .find(|c| network.parameters.get(c.param).name == "network error (shared)")
        .unwrap();
    assert!(shared.magnitude() < 1e-12);
    let loose = analyse_point(&separate, 0.0).unwrap();
    assert_relative_eq!(
        1.0 / loose.worst_case(),
        11.0 / (4.0 * 0.01),
        max_relative = 0.02
    );
    // In production too: the network's worst trial stays above the bound.
    let spread = run(&network, 20_000, 3);
    assert!(spread.histograms[0].worst().unwrap().0 >= 20.0 * (11.0f64 / 4e-4).log10() - 0.01);
}

#[test]
fn interruption_stops_cleanly() {
    let b = budget("  - difference_amp: {r1: 10k ±1 %, r2: 10k ±1 %, r3: 10k ±1 %, r4: 10k ±1 %}");
    let stop = AtomicBool::new(false);
    let result = run_yield(
        &b,
        &[0.0],
        &[],
        options(1_000_000, 1),
        &|done| {
            if done >= 1_000 {
                stop.store(true, Ordering::Relaxed);
            }
        },
        &stop,
    )
    .unwrap();
    assert!(result.interrupted);
    assert!(result.trials_run < 1_000_000 && result.trials_run >= 256);
    assert_eq!(result.histograms[0].count(), result.trials_run);
}

#[test]
fn yield_command_formats_and_refusals() {
    let cmrr = || Command::cargo_bin("cmrr").unwrap();
    let root = env!("CARGO_MANIFEST_DIR");
    let json = |threads: &str| {
        let output = cmrr()
            .current_dir(root)
            .args([
                "yield",
                "budgets/motor-shunt.yaml",
                "--trials",
                "2000",
                "--seed",
                "9",
                "--threads",
                threads,
                "--format",
                "json",
            ])
            .output()
            .unwrap();
        assert_eq!(output.status.code(), Some(0));
        serde_json::from_slice::<serde_json::Value>(&output.stdout).unwrap()
    };
    let one = json("1");
    assert_eq!(one, json("2"));
    assert_eq!(one["trials_run"], 2000);
    let overall = one["overall_yield"]["fraction"].as_f64().unwrap();
    assert!((0.0..=1.0).contains(&overall));
    let f = &one["frequencies"][1];
    for key in ["p0_1", "p1", "p5", "p50"] {
        assert!(f["cmrr_db"][key].is_number(), "{key}");
    }
    assert_eq!(f["worst_corner"]["search"], "exhaustive");
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("h.svg");
    cmrr()
        .current_dir(root)
        .args([
            "yield",
            "budgets/motor-shunt.yaml",
            "--trials",
            "500",
            "--plot",
            svg.to_str().unwrap(),
            "--format",
            "csv",
        ])
        .assert()
        .code(0)
        .stdout(predicates::str::starts_with("frequency_hz,cmrr_p0_1_db"));
    roxmltree::Document::parse(&std::fs::read_to_string(&svg).unwrap()).unwrap();
    cmrr()
        .current_dir(root)
        .args(["yield", "budgets/motor-shunt.yaml", "--trials", "100000001"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("1 to 100000000"));
    cmrr()
        .current_dir(root)
        .args(["yield", "budgets/motor-shunt.yaml", "--trials", "0"])
        .assert()
        .code(2);
    cmrr()
        .current_dir(root)
        .args([
            "yield",
            "budgets/motor-shunt.yaml",
            "--temperature",
            "hot",
            "--trials",
            "10",
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no temperature range"));
}

/// Every budget shape the tests below run the Monte Carlo's kernel on: the
/// examples, and shapes they lack (every pair device and tail form, a pair
/// alone and followed by an amplifier, two amplifier stages, a driven guard
/// without a series resistor, no source network, a reference resistance, a
/// block with a bandwidth).
fn every_chain_shape() -> Vec<(String, Budget)> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let mut budgets: Vec<(String, Budget)> = Vec::new();
    for entry in std::fs::read_dir(root.join("budgets")).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "yaml") {
            budgets.push((
                path.display().to_string(),
                cmrr_budget::budget::load_budget(&path).unwrap(),
            ));
        }
    }
    let opamp = "{open_loop_gain: 100 dB ±10 %, gain_bandwidth: 2 MHz ±20 %, cmrr: 90 dB, cmrr_corner: 300 Hz}";
    let difference = format!("  - difference_amp: {{r1: 10k ±0.1 %, r2: 20k ±0.1 %, r3: 10k ±0.1 %, r4: 20k ±0.1 %, reference_resistance: 50 ±10 %, opamp: {opamp}}}");
    let source = "  - source:\n      resistance: {p: 1k ±20 %, n: 1.2k ±20 %}\n      cable: {capacitance: 100 pF/m ±10 %, length: 2 m}\n      series_resistance: 100 ±1 %\n      filter_capacitance: 1n ±5 %";
    let shapes: Vec<(&str, String)> = vec![
        ("guarded, no series R", format!("  - source:\n      resistance: {{p: 10k ±20 %, n: 12k ±20 %}}\n      capacitance: 22n ±10 %\n      cable: {{capacitance: 100 pF/m ±10 %, length: 2 m, guard_drive: 98 %}}\n      filter_capacitance: 2.2n ±5 %\n      differential_capacitance: 10n ±10 %\n      input_resistance: 1G ±20 %\n  - three_opamp_inamp:\n      rg: 2k ±1 %\n      rf1: 20k ±1 %\n      rf2: 20k ±1 %\n      input_capacitance: 3p ±20 %\n      first_stage_opamps: {opamp}\n      difference_stage: {{r1: 10k ±0.1 %, r2: 20k ±0.1 %, r3: 10k ±0.1 %, r4: 20k ±0.1 %, reference_resistance: 50 ±10 %, opamp: {{open_loop_gain: 100 dB, gain_bandwidth: 5 MHz, cmrr: 95 dB}}}}")),
        ("no source", "  - difference_amp: {r1: 4.7k ±0.5 %, r2: 47k ±0.5 %, r3: 4.7k ±0.5 %, r4: 47k ±0.5 %, reference_resistance: 10 ±5 %, opamp: {open_loop_gain: 90 dB, gain_bandwidth: 1 MHz ±20 %, cmrr: 85 dB, cmrr_corner: 1 kHz}}".to_string()),
        ("block with bandwidth", "  - source:\n      bridge_arm: 1k ±0.5 %\n  - integrated_inamp: {gain: 200 ±0.5 %, cmrr: 120 dB, cmrr_corner: 100 Hz, bandwidth: 20 kHz, input_resistance: 5G ±10 %, input_capacitance: 5p ±20 %}".to_string()),
        ("two difference stages", format!("{source}\n{difference}\n{difference}")),
        ("in-amp then difference stage", format!("{source}\n  - integrated_inamp: {{gain: 10 ±0.5 %, cmrr: 100 dB}}\n{difference}")),
        ("MOSFET pair, cascode tail, single-ended", format!("{source}\n  - differential_pair: {{device: mosfet, tail_current: 200 uA ±5 %, overdrive: 200 mV ±10 %, early_voltage: 20 V ±20 %, offset: 5 mV, load_resistance: 20k ±1 %, output: single_ended, tail: {{cascode: {{early_voltage: 20 V ±20 %, overdrive: 300 mV ±10 %}}, capacitance: 2 pF ±20 %}}}}")),
        ("BJT pair, current source tail, alone", "  - differential_pair: {device: bjt, tail_current: 1 mA ±5 %, beta: 150 ±30 %, early_voltage: 60 V ±20 %, offset: 1 mV, gm_mismatch: 2 %, load_resistance: 10k ±1 %, output: differential, tail: {current_source: {early_voltage: 60 V ±20 %}, capacitance: 3 pF ±20 %}}".to_string()),
        ("small-signal pair, stated tail, difference stage", format!("{source}\n  - differential_pair: {{device: small_signal, gm: 40 mS ±5 %, r_pi: 5k ±10 %, ro: 100k ±20 %, degeneration: 47 ±1 %, load_resistance: 10k ±1 %, output: differential, tail: {{output_resistance: 2M ±10 %, capacitance: 4 pF ±20 %}}}}\n{difference}")),
        ("MOSFET pair, degenerated tail, difference stage", format!("{source}\n  - differential_pair: {{device: mosfet, tail_current: 500 uA ±5 %, overdrive: 150 mV ±10 %, early_voltage: 30 V ±20 %, load_resistance: 8.2k ±1 %, output: differential, tail: {{degenerated_source: {{early_voltage: 30 V ±20 %, degeneration: 2k ±1 %, overdrive: 250 mV ±10 %}}}}}}\n{difference}")),
        ("BJT pair, resistor tail, single-ended, converter", format!("{source}\n  - differential_pair: {{device: bjt, tail_current: 1 mA ±5 %, beta: 150 ±30 %, early_voltage: 60 V ±20 %, degeneration: 100 ±1 %, load_resistance: 10k ±1 %, output: single_ended, tail: {{resistor: 10k ±1 %}}}}\n  - adc: {{span: 5 V, bits: 16, cmrr: 80 dB, cmrr_corner: 1 kHz, input_capacitance: 10p ±10 %}}")),
    ];
    for (name, chain) in shapes {
        budgets.push((name.to_string(), budget(&chain)));
    }
    budgets
}

/// The physics is written once: the Monte Carlo's many-frequency kernel
/// and the single-point solve compose the same stage solves. On random
/// draws of every chain shape, and with every parameter of every stage
/// perturbed in turn by 0.1 % (drift included, at 20 K from the reference),
/// the two agree to 1e-9 and so move by the same amount; a parameter one
/// path read and the other ignored would show here.
#[test]
fn issue_11_kernel_and_single_point_move_together_for_every_parameter() {
    use cmrr_budget::engine::{chain_response, settle, ChainKernel};
    use cmrr_budget::montecarlo::{Sampler, SplitMix64};
    use cmrr_budget::stage::Point;
    let frequencies = [0.0, 50.0, 1e3, 2e4, 1e6];
    let kernel = ChainKernel::new();
    let mut stages = Vec::new();
    let mut compare = |name: &str, b: &Budget, values: &[f64]| -> [f64; 5] {
        kernel.prepare(&b.chain, values, &mut stages);
        let mut squared = [0.0; 5];
        kernel.conversions_squared(&stages, &frequencies, &mut squared);
        for (freq, quick) in frequencies.into_iter().zip(squared) {
            let single = chain_response(&b.chain, &Point::new(freq, values))
                .unwrap()
                .conversion()
                .norm_sqr();
            // |ε| to 1e-9 relative, or 1e-11 absolute (a CMRR resolved to
            // 220 dB) where ε is a small difference of large terms, as in
            // tests/nodal_reference.rs.
            let (quick, single) = (quick.sqrt(), single.sqrt());
            assert!(
                (quick - single).abs() <= 1e-9 * single + 1e-11,
                "{name}: {freq} Hz: kernel {quick:e} against single point {single:e}"
            );
        }
        squared
    };
    let (mut shapes, mut moved, mut perturbed) = (0, 0, 0);
    for (name, b) in &every_chain_shape() {
        shapes += 1;
        let sampler = Sampler::new(b);
        let mut values = b.parameters.nominal_values();
        for trial in 0..50 {
            sampler.fill(&mut values, &mut SplitMix64::for_trial(11, trial));
            settle(b, &mut values, 0.0).unwrap();
            compare(name, b, &values);
        }
        let delta_t = if b.temperature.is_some() { 20.0 } else { 0.0 };
        let raw = b.parameters.nominal_values();
        let mut nominal = raw.clone();
        settle(b, &mut nominal, delta_t).unwrap();
        let base = compare(name, b, &nominal);
        for (id, _) in b.parameters.iter() {
            let mut values = raw.clone();
            values[id.0] = if values[id.0] == 0.0 {
                1e-6
            } else {
                values[id.0] * (1.0 + 1e-3)
            };
            if settle(b, &mut values, delta_t).is_err() {
                continue;
            }
            perturbed += 1;
            let after = compare(name, b, &values);
            if after != base {
                moved += 1;
            }
        }
    }
    eprintln!(
        "{shapes} chain shapes; {moved} of {perturbed} perturbed parameters moved the conversion"
    );
    assert!(shapes >= 17, "{shapes} chain shapes");
    // Nearly every parameter reaches the conversion (those that do not are
    // headroom-only or cancel exactly at nominal).
    assert!(
        moved * 10 >= perturbed * 8,
        "{moved} of {perturbed} moved it"
    );
}

/// A run stopped before its first trial reports no figures (there are
/// none) rather than NaN percentiles.
#[test]
fn issue_17_a_run_stopped_at_once_reports_no_nan() {
    use cmrr_budget::montecarlo::production::{production_yield, YieldReportError};
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let b = cmrr_budget::budget::load_budget(&root.join("budgets/load-cell-scale.yaml")).unwrap();
    let options = YieldOptions {
        trials: 1000,
        seed: 1,
        temperature: TemperatureMode::Reference,
    };
    let stop = std::sync::atomic::AtomicBool::new(true);
    let result = production_yield(&b, options, &|_| {}, &stop);
    assert_eq!(result.unwrap_err(), YieldReportError::NoTrials);
}
