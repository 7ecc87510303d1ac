//! The plane geometry of the default Lotka–Volterra scene (window 0..60 × 0..40): the 32×32
//! direction field, nullclines on a 256×256 grid, the 10 default first-integral contours on a
//! 256×256 grid (levels chosen then traced: two calls, or `default_contours` sharing one
//! evaluation of H), and evenly spaced streamlines at the default
//! separation. Targets: nullclines ≤ 1.5 ms, contours ≤ 2 ms median on the 2-core machine.
//!
//! Run: `cargo bench -p quarry-core --bench geometry` (medians in
//! `target/criterion/geometry/*/new/estimates.json`).

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::contour::{contours, default_contours, default_levels};
use quarry_core::field::direction_field;
use quarry_core::library;
use quarry_core::model::Model;
use quarry_core::nullcline::nullclines;
use quarry_core::streamlines::{StreamlineOptions, streamlines};

fn geometry(c: &mut Criterion) {
    let model = Model::new(&library::default_model()).expect("default model compiles");
    let mut g = c.benchmark_group("geometry");
    g.bench_function("field_32x32", |b| {
        b.iter(|| direction_field(black_box(&model), 32, 32))
    });
    g.bench_function("nullclines_256", |b| {
        b.iter(|| nullclines(black_box(&model), 256))
    });
    g.bench_function("contours_10_on_256", |b| {
        b.iter(|| {
            let levels = default_levels(black_box(&model), 10, 256);
            contours(&model, &levels, 256)
        })
    });
    g.bench_function("default_contours_10_on_256", |b| {
        b.iter(|| default_contours(black_box(&model), 10, 256))
    });
    let levels = default_levels(&model, 10, 256);
    g.bench_function("contours_10_on_256_levels_given", |b| {
        b.iter(|| contours(black_box(&model), &levels, 256))
    });
    g.bench_function("streamlines_default", |b| {
        b.iter(|| streamlines(black_box(&model), &StreamlineOptions::default(), &|| false))
    });
    g.finish();
}

criterion_group!(benches, geometry);
criterion_main!(benches);
