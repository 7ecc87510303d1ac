//! The benchmark pair: the whole Lotka–Volterra orbit (a=1, α=0.1, c=1.5, γ=0.075 from
//! (10, 5), t ∈ [0, 1000], rtol 1e-9, DOP853) with the rates as compiled formulas (native code
//! and the tape interpreter) against the same integration with a native Rust closure; and both
//! rates on a 256×256 grid, native loop against batch evaluation.
//!
//! Run: `cargo bench -p quarry-core --bench orbit`.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::compiled::Backend;
use quarry_core::integrate::{self, FnSystem, Options};
use quarry_core::library;
use quarry_core::model::Model;

const A: f64 = 1.0;
const ALPHA: f64 = 0.1;
const C: f64 = 1.5;
const GAMMA: f64 = 0.075;

fn options() -> Options {
    Options {
        rtol: 1e-9,
        atol: 1e-9,
        ..Options::default()
    }
}

fn lv_model(backend: Backend) -> Model {
    let spec = library::builtin("lotka-volterra").expect("built in").spec();
    Model::with_backend(&spec, backend).expect("compiles")
}

fn orbit(c: &mut Criterion) {
    let native = FnSystem(|_t: f64, y: &[f64; 2], dy: &mut [f64; 2]| {
        dy[0] = A * y[0] - ALPHA * y[0] * y[1];
        dy[1] = -C * y[1] + GAMMA * y[0] * y[1];
    });
    let jit = lv_model(Backend::Auto);
    assert!(jit.is_native(), "the JIT is not available on this host");
    let interp = lv_model(Backend::Interpreter);
    let opts = options();
    let mut g = c.benchmark_group("lv_orbit_t1000");
    g.bench_function("native_closure", |b| {
        b.iter(|| integrate::integrate(native, 0.0, black_box([10.0, 5.0]), 1000.0, &opts, &[]))
    });
    g.bench_function("compiled_jit", |b| {
        b.iter(|| integrate::integrate(&jit, 0.0, black_box([10.0, 5.0]), 1000.0, &opts, &[]))
    });
    g.bench_function("compiled_interpreter", |b| {
        b.iter(|| integrate::integrate(&interp, 0.0, black_box([10.0, 5.0]), 1000.0, &opts, &[]))
    });
    g.finish();
}

fn grid(c: &mut Criterion) {
    const N: usize = 256;
    let (mut xs, mut ys) = (Vec::with_capacity(N * N), Vec::with_capacity(N * N));
    for i in 0..N {
        for j in 0..N {
            xs.push(60.0 * i as f64 / (N - 1) as f64);
            ys.push(40.0 * j as f64 / (N - 1) as f64);
        }
    }
    let model = lv_model(Backend::Auto);
    let params = model.params().to_vec();
    let mut f = vec![0.0; N * N];
    let mut gv = vec![0.0; N * N];
    let mut g = c.benchmark_group("lv_grid_256x256");
    g.bench_function("native_loop", |b| {
        b.iter(|| {
            let (xs, ys) = (black_box(&xs), black_box(&ys));
            // Iterators without bounds checks, so the compiler can vectorise the loop.
            for ((fk, gk), (&x, &y)) in f.iter_mut().zip(gv.iter_mut()).zip(xs.iter().zip(ys)) {
                *fk = A * x - ALPHA * x * y;
                *gk = -C * y + GAMMA * x * y;
            }
            black_box((&f, &gv));
        })
    });
    g.bench_function("compiled_batch", |b| {
        b.iter(|| {
            let mut outs: [&mut [f64]; 2] = [&mut f, &mut gv];
            model
                .rate_formulas()
                .eval_batch(&[black_box(&xs), black_box(&ys)], &params, &mut outs);
        })
    });
    g.bench_function("compiled_per_point", |b| {
        b.iter(|| {
            for k in 0..xs.len() {
                let r = model.rates(black_box(xs[k]), ys[k]);
                f[k] = r[0];
                gv[k] = r[1];
            }
            black_box((&f, &gv));
        })
    });
    g.finish();
}

criterion_group!(benches, orbit, grid);
criterion_main!(benches);
