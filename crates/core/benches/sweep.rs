//! Continuation of the Rosenzweig–MacArthur (`holling-ii`) equilibria in the carrying capacity
//! K from 1 to 20 on a 1,000-value grid, with stability and bifurcation location.
//!
//! Run: `cargo bench -p quarry-core --bench sweep`.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::library;
use quarry_core::model::Model;
use quarry_core::sweep::{SweepOptions, sweep};

fn sweeps(c: &mut Criterion) {
    let spec = library::builtin("holling-ii").expect("built in").spec();
    let model = Model::new(&spec).expect("compiles");
    let opts = SweepOptions::new("K", 1.0, 20.0, 1000);
    c.bench_function("sweep holling-ii K 1..20, 1000 values", |b| {
        b.iter(|| sweep(black_box(&model), black_box(&opts), &|| false, &|_| {}))
    });
}

criterion_group!(benches, sweeps);
criterion_main!(benches);
