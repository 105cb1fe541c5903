//! Speed of the engine on the example budgets, measured with criterion.
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

/// `monte_carlo_100_frequencies`: 20,000 trials over a source network and a
/// three-op-amp in-amp at 100 frequencies, histograms and checks included,
/// counted in trial-frequency evaluations per second. Target: at least 5e7
/// per second on 2 cores, aiming at 1e8. Enough trials that per-run costs
/// (waking threads, growing and merging histograms) fade from a throughput.
fn monte_carlo(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("budgets/bridge-three-opamp.yaml");
    let mut budget = load_budget(&path).expect("the example loads");
    budget.chain.pop(); // source network and in-amp only
    let frequencies: Vec<f64> = (0..100)
        .map(|i| 10f64.powf(i as f64 * 6.0 / 99.0))
        .collect();
    let trials = 20_000;
    let mut group = c.benchmark_group("monte_carlo");
    group.throughput(Throughput::Elements(trials * frequencies.len() as u64));
    group.sample_size(10);
    group.bench_function("three_opamp_with_source_100_frequencies", |b| {
        b.iter(|| {
            let options = YieldOptions {
                trials,
                seed: 1,
                temperature: TemperatureMode::Reference,
            };
            run_yield(
                black_box(&budget),
                &frequencies,
                &[],
                options,
                &|_| {},
                &AtomicBool::new(false),
            )
            .expect("the run finishes")
        })
    });
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = sweep_1000, monte_carlo
}
criterion_main!(benches);
