//! Speed of the engine on the example budgets, measured with criterion.
//!
//! `sweep_1000`: a sweep of about 1000 frequencies with every contributor
//! over a three-stage chain (source network, three-op-amp in-amp,
//! converter). Target: well under 100 ms on the 2-core reference machine.

use cmrr_budget::budget::load_budget;
use cmrr_budget::sweep::{run_sweep, SweepSpec};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use std::path::Path;

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

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = sweep_1000
}
criterion_main!(benches);
