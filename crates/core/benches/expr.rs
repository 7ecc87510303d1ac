//! The compiled Lotka–Volterra rates against the same rates written in Rust.
//!
//! `point/*` times one evaluation (what an integrator step needs); `grid/*` evaluates both rates
//! on a 256×256 grid (what a direction field or a nullcline contour needs), per point and with
//! `eval_batch`.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::expr::{Expr, Tape, compile, parse};

const NAMES: [&str; 6] = ["x", "y", "a", "alpha", "c", "gamma"];
const PARAMS: [f64; 4] = [1.1, 0.4, 0.9, 0.3];
const N: usize = 256;

fn lv_tape() -> Tape {
    let parsed = ["a*x - alpha*x*y", "-c*y + gamma*x*y"].map(parse);
    let [Ok(f), Ok(g)] = parsed else {
        panic!("the benchmark formulas parse");
    };
    let exprs: [&Expr; 2] = [&f, &g];
    match compile(&exprs, &NAMES, 2) {
        Ok(t) => t,
        Err(e) => panic!("{e}"),
    }
}

#[inline(always)]
fn native(s: &[f64], p: &[f64], out: &mut [f64]) {
    let (x, y) = (s[0], s[1]);
    let (a, alpha, c, gamma) = (p[0], p[1], p[2], p[3]);
    out[0] = a * x - alpha * x * y;
    out[1] = -c * y + gamma * x * y;
}

fn grid() -> (Vec<f64>, Vec<f64>) {
    let mut xs = Vec::with_capacity(N * N);
    let mut ys = Vec::with_capacity(N * N);
    for i in 0..N {
        for j in 0..N {
            xs.push(0.1 + 4.0 * j as f64 / N as f64);
            ys.push(0.1 + 4.0 * i as f64 / N as f64);
        }
    }
    (xs, ys)
}

fn point(c: &mut Criterion) {
    let tape = lv_tape();
    let mut g = c.benchmark_group("point");
    let closure = |s: &[f64], p: &[f64], out: &mut [f64]| native(s, p, out);
    g.bench_function("native_closure", |b| {
        let mut out = [0.0; 2];
        b.iter(|| {
            closure(black_box(&[1.3, 0.7]), black_box(&PARAMS), &mut out);
            black_box(out)
        });
    });
    g.bench_function("tape_eval", |b| {
        let mut out = [0.0; 2];
        b.iter(|| {
            tape.eval(black_box(&[1.3, 0.7]), black_box(&PARAMS), &mut out);
            black_box(out)
        });
    });
    g.finish();
}

fn grid_256(c: &mut Criterion) {
    let tape = lv_tape();
    let (xs, ys) = grid();
    let mut fx = vec![0.0; N * N];
    let mut fy = vec![0.0; N * N];
    let mut g = c.benchmark_group("grid_256x256");
    g.bench_function("native_loop", |b| {
        b.iter(|| {
            let p = black_box(&PARAMS);
            let (a, alpha, cc, gamma) = (p[0], p[1], p[2], p[3]);
            // Zipped iterators, so the loop has no bounds checks and vectorises.
            for (((u, v), &x), &y) in fx.iter_mut().zip(fy.iter_mut()).zip(&xs).zip(&ys) {
                *u = a * x - alpha * x * y;
                *v = -cc * y + gamma * x * y;
            }
            black_box((&fx, &fy));
        });
    });
    g.bench_function("native_closure_per_point", |b| {
        let closure = |s: &[f64], p: &[f64], out: &mut [f64]| native(s, p, out);
        b.iter(|| {
            let p = black_box(&PARAMS);
            let mut out = [0.0; 2];
            for k in 0..N * N {
                closure(&[xs[k], ys[k]], p, &mut out);
                fx[k] = out[0];
                fy[k] = out[1];
            }
            black_box((&fx, &fy));
        });
    });
    g.bench_function("tape_eval_per_point", |b| {
        b.iter(|| {
            let p = black_box(&PARAMS);
            let mut out = [0.0; 2];
            for k in 0..N * N {
                tape.eval(&[xs[k], ys[k]], p, &mut out);
                fx[k] = out[0];
                fy[k] = out[1];
            }
            black_box((&fx, &fy));
        });
    });
    g.bench_function("tape_eval_batch", |b| {
        b.iter(|| {
            let mut cols: [&mut [f64]; 2] = [&mut fx, &mut fy];
            tape.eval_batch(&[&xs, &ys], black_box(&PARAMS), &mut cols);
            black_box(&cols);
        });
    });
    g.finish();
}

criterion_group!(benches, point, grid_256);
criterion_main!(benches);
