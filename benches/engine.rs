//! Speed of the engine on the example budgets, measured with criterion;
//! targets and figures in DEVELOPERS.md ("Benchmarks"). The ratio to a
//! vectorised numpy implementation of the same model is measured by
//! `benches/numpy_reference.py`, by hand.
//!
//! `sweep_1000`: a sweep of about 1000 frequencies with every contributor
//! over a three-stage chain (source network, three-op-amp in-amp,
//! converter). Target: well under 100 ms on the 2-core reference machine.

use cmrr_budget::budget::load_budget;
use cmrr_budget::montecarlo::{run_yield, TemperatureMode, YieldOptions};
use cmrr_budget::sweep::{run_sweep, SweepSpec};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;
use std::path::Path;
use std::sync::atomic::AtomicBool;

fn sweep_1000(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("budgets/bridge-three-opamp.yaml");
    let budget = load_budget(&path).expect("the example loads");
    let spec = SweepSpec {
        from_hz: 1.0,
        to_hz: 1e6,
        per_decade: 166,
    };
    assert_eq!(spec.frequencies().unwrap().len(), 997);
    c.bench_function("sweep_1000_three_stage_with_contributions", |b| {
        b.iter(|| run_sweep(black_box(&budget), spec).expect("the sweep runs"))
    });
}

/// 100 log-spaced frequencies, 1 Hz to 1 MHz.
fn hundred_frequencies() -> Vec<f64> {
    (0..100)
        .map(|i| 10f64.powf(i as f64 * 6.0 / 99.0))
        .collect()
}

/// One Monte Carlo run of `trials` trials at `frequencies`, histograms
/// included, with no requirement checks.
fn run(budget: &cmrr_budget::model::Budget, frequencies: &[f64], trials: u64) {
    let options = YieldOptions {
        trials,
        seed: 1,
        temperature: TemperatureMode::Reference,
    };
    run_yield(
        black_box(budget),
        frequencies,
        &[],
        options,
        &|_| {},
        &AtomicBool::new(false),
    )
    .expect("the run finishes");
}

/// `monte_carlo/<family>`: 20,000 trials at 100 frequencies through the
/// Monte Carlo (values drawn and settled, every stage solved by the
/// many-frequency kernel, histograms counted), on every core, counted in
/// trial-frequency evaluations per second; one benchmark per chain family.
/// `ratio_model` is the model `benches/numpy_reference.py` compares with
/// numpy (its own 100 frequencies, 1 Hz to 100 kHz). Enough trials that
/// per-run costs (waking threads, growing and merging histograms) fade
/// from a throughput.
fn monte_carlo(c: &mut Criterion) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let load = |path: &str| load_budget(&root.join(path)).expect("the example loads");
    let trials = 20_000;
    let mut group = c.benchmark_group("monte_carlo");
    group.sample_size(10);
    let ratio = load("benches/ratio-model.yaml");
    let ratio_frequencies = ratio.extra_frequencies_hz.clone();
    assert_eq!(ratio_frequencies.len(), 100);
    group.throughput(Throughput::Elements(trials * 100));
    group.bench_function("ratio_model", |b| {
        b.iter(|| run(&ratio, &ratio_frequencies, trials))
    });
    let frequencies = hundred_frequencies();
    let mut three_opamp = load("budgets/bridge-three-opamp.yaml");
    three_opamp.chain.pop(); // source network and in-amp only
    let mut pair_alone = load("budgets/bjt-pair-resistor-tail.yaml");
    pair_alone.chain.pop(); // source network and pair only
    let families = [
        ("three_opamp_with_source", three_opamp),
        (
            "integrated_inamp_with_source_and_converter",
            load("budgets/bridge-integrated-inamp.yaml"),
        ),
        (
            "difference_amp_with_source",
            load("budgets/motor-shunt.yaml"),
        ),
        ("pair_with_source", pair_alone),
        (
            "pair_then_difference_amp",
            load("budgets/bjt-pair-current-source-tail.yaml"),
        ),
    ];
    for (name, budget) in &families {
        group.bench_function(*name, |b| b.iter(|| run(budget, &frequencies, trials)));
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = sweep_1000, monte_carlo
}
criterion_main!(benches);
