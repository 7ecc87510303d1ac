//! Orbit dynamics: the Van der Pol limit cycle (μ = 1, from (0.5, 0), with period and Floquet
//! multiplier) and the four separatrices of the Lotka–Volterra saddle at the origin.
//!
//! Run: `cargo bench -p quarry-core --bench dynamics`.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::analysis::analyze;
use quarry_core::cycle::{CycleOptions, limit_cycle_from};
use quarry_core::library;
use quarry_core::model::Model;
use quarry_core::separatrix::{SeparatrixOptions, separatrices};

fn model(key: &str) -> Model {
    let spec = library::builtin(key).expect("built in").spec();
    Model::new(&spec).expect("compiles")
}

fn dynamics(c: &mut Criterion) {
    let vdp = model("van-der-pol");
    let opts = CycleOptions::default();
    c.bench_function("limit_cycle_from van-der-pol", |b| {
        b.iter(|| limit_cycle_from(black_box(&vdp), black_box([0.5, 0.0]), &opts))
    });
    let lv = model("lotka-volterra");
    let equilibria = analyze(&lv).equilibria;
    let sep = SeparatrixOptions::default();
    c.bench_function("separatrices lotka-volterra", |b| {
        b.iter(|| separatrices(black_box(&lv), black_box(&equilibria), &sep))
    });
}

criterion_group!(benches, dynamics);
criterion_main!(benches);
