//! The full scene of the default Lotka–Volterra scenario: 32×32 field, nullclines on a 256×256
//! grid, 8 orbits over 3 periods each, equilibria (with separatrices and the limit-cycle
//! search), 10 first-integral contours on a 256×256 grid. Target: ≤ 8 ms median on the
//! 2-core reference machine, so a slider drag redraws every frame.
//!
//! Run: `cargo bench -p quarry-core --bench scene`.

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::library;
use quarry_core::model::Model;
use quarry_core::scene::{Cancel, ContourLevels, SceneRequest, Seed, TimeDirection, build_scene};

/// The request the benchmark measures.
pub fn default_request() -> SceneRequest {
    // Linear period 2π/√(ac) with a = 1, c = 1.5: three periods of the small cycles.
    let three_periods = 3.0 * std::f64::consts::TAU / 1.5_f64.sqrt();
    SceneRequest {
        field: Some((32, 32)),
        streamlines: false,
        nullcline_grid: Some(256),
        contours: Some(ContourLevels::Count(10)),
        contour_grid: 256,
        separatrices: true,
        limit_cycles: true,
        seeds: (0..8)
            .map(|k| Seed {
                at: [22.0 + 3.0 * k as f64, 10.0],
                direction: TimeDirection::Forward,
            })
            .collect(),
        orbit_time: three_periods,
        orbit_rtol: 1e-9,
        points_per_step: 8,
        linear_overlays: false,
    }
}

fn scene(c: &mut Criterion) {
    let model = Model::new(&library::default_model()).expect("default model compiles");
    let request = default_request();
    let cancel = Cancel::new();
    c.bench_function("default_scene", |b| {
        b.iter(|| build_scene(&model, &request, &cancel).expect("not cancelled"))
    });
}

criterion_group!(benches, scene);
criterion_main!(benches);
