//! How close compiled formulas come to a hand-written Rust closure.
//!
//! The model is Lotka–Volterra, `dx/dt = a·x − alpha·x·y`, `dy/dt = −c·y + gamma·x·y`, with
//! `x·y` shared, as a hand-built tape. Each group compares a native closure with
//! [`JitFunction`] (through the safe `eval`, through `eval_unchecked`, and through the
//! register-passing `planar` entry) and, for context, a minimal tape interpreter written here:
//! once per call, and inside a fixed-step RK4 loop of 10⁵ steps.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::expr::jit::JitFunction;
use quarry_core::expr::tape::{Op, Tape};

/// `[a, alpha, c, gamma]`, the textbook hare–lynx values.
const PARAMS: [f64; 4] = [1.0, 0.1, 1.5, 0.075];
const START: [f64; 2] = [10.0, 5.0];
const STEPS: usize = 100_000;
const DT: f64 = 1e-3;

fn lotka_volterra_tape() -> Tape {
    Tape {
        ops: vec![
            Op::Input(0),    // 0: x
            Op::Input(1),    // 1: y
            Op::Input(2),    // 2: a
            Op::Input(3),    // 3: alpha
            Op::Input(4),    // 4: c
            Op::Input(5),    // 5: gamma
            Op::Mul(0, 1),   // 6: x·y
            Op::Mul(2, 0),   // 7: a·x
            Op::Mul(3, 6),   // 8: alpha·x·y
            Op::Sub(7, 8),   // 9: dx/dt
            Op::Mul(4, 1),   // 10: c·y
            Op::Neg(10),     // 11: −c·y
            Op::Mul(5, 6),   // 12: gamma·x·y
            Op::Add(11, 12), // 13: dy/dt
        ],
        outputs: vec![9, 13],
        n_state: 2,
        n_params: 4,
    }
}

/// The same rates, in the same order of operations, as Rust code.
#[inline]
fn native(s: &[f64; 2], p: &[f64; 4], out: &mut [f64; 2]) {
    let [x, y] = *s;
    let [a, alpha, c, gamma] = *p;
    let xy = x * y;
    out[0] = a * x - alpha * xy;
    out[1] = -(c * y) + gamma * xy;
}

/// A straightforward interpreter, for scale only (the crate's own interpreter lives elsewhere).
fn interpret(tape: &Tape, slots: &mut Vec<f64>, s: &[f64], p: &[f64], out: &mut [f64]) {
    slots.clear();
    for op in &tape.ops {
        let v = |i: u32| slots[i as usize];
        let value = match *op {
            Op::Const(c) => c,
            Op::Input(i) if (i as usize) < s.len() => s[i as usize],
            Op::Input(i) => p[i as usize - s.len()],
            Op::Add(a, b) => v(a) + v(b),
            Op::Sub(a, b) => v(a) - v(b),
            Op::Mul(a, b) => v(a) * v(b),
            Op::Div(a, b) => v(a) / v(b),
            Op::Neg(a) => -v(a),
            _ => f64::NAN,
        };
        slots.push(value);
    }
    for (o, &slot) in out.iter_mut().zip(&tape.outputs) {
        *o = slots[slot as usize];
    }
}

/// Classical fixed-step RK4 from `y` over `steps` steps of `dt`.
#[inline]
fn rk4(
    mut f: impl FnMut(&[f64; 2], &mut [f64; 2]),
    mut y: [f64; 2],
    dt: f64,
    steps: usize,
) -> [f64; 2] {
    let (mut k1, mut k2, mut k3, mut k4) = ([0.0; 2], [0.0; 2], [0.0; 2], [0.0; 2]);
    let along = |y: &[f64; 2], k: &[f64; 2], h: f64| [y[0] + h * k[0], y[1] + h * k[1]];
    for _ in 0..steps {
        f(&y, &mut k1);
        f(&along(&y, &k1, dt / 2.0), &mut k2);
        f(&along(&y, &k2, dt / 2.0), &mut k3);
        f(&along(&y, &k3, dt), &mut k4);
        for i in 0..2 {
            y[i] += dt / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
    }
    y
}

fn benches(c: &mut Criterion) {
    let tape = lotka_volterra_tape();
    let jit = match JitFunction::compile(&tape) {
        Ok(jit) => jit,
        Err(e) => {
            eprintln!("skipping the JIT benchmarks: {e}");
            return;
        }
    };

    // The three evaluators agree before anything is timed.
    let (mut a, mut b, mut i) = ([0.0; 2], [0.0; 2], [0.0; 2]);
    native(&START, &PARAMS, &mut a);
    jit.eval(&START, &PARAMS, &mut b);
    interpret(&tape, &mut Vec::new(), &START, &PARAMS, &mut i);
    assert_eq!((a, a), (b, i));

    let mut group = c.benchmark_group("lv_rates_per_call");
    group.bench_function("native", |bench| {
        let mut out = [0.0; 2];
        bench.iter(|| {
            native(black_box(&START), black_box(&PARAMS), &mut out);
            black_box(out)
        });
    });
    group.bench_function("jit_eval", |bench| {
        let mut out = [0.0; 2];
        bench.iter(|| {
            jit.eval(black_box(&START), black_box(&PARAMS), &mut out);
            black_box(out)
        });
    });
    group.bench_function("jit_eval_unchecked", |bench| {
        let mut out = [0.0; 2];
        bench.iter(|| {
            let (s, p) = (black_box(&START), black_box(&PARAMS));
            // SAFETY: the arrays have exactly the tape's 2 states, 4 parameters and 2 outputs.
            unsafe { jit.eval_unchecked(s.as_ptr(), p.as_ptr(), out.as_mut_ptr()) };
            black_box(out)
        });
    });
    group.bench_function("jit_planar", |bench| {
        let Some(rates) = jit.planar(&PARAMS) else {
            return;
        };
        bench.iter(|| {
            let [x, y] = black_box(START);
            black_box(rates.eval(x, y))
        });
    });
    group.bench_function("interpreter", |bench| {
        let (mut out, mut slots) = ([0.0; 2], Vec::with_capacity(tape.ops.len()));
        bench.iter(|| {
            interpret(
                &tape,
                &mut slots,
                black_box(&START),
                black_box(&PARAMS),
                &mut out,
            );
            black_box(out)
        });
    });
    group.finish();

    let mut group = c.benchmark_group("lv_rk4_1e5_steps");
    group.sample_size(30);
    group.bench_function("native", |bench| {
        bench.iter(|| {
            let p = black_box(PARAMS);
            rk4(|s, out| native(s, &p, out), black_box(START), DT, STEPS)
        });
    });
    group.bench_function("jit_eval", |bench| {
        bench.iter(|| {
            let p = black_box(PARAMS);
            rk4(|s, out| jit.eval(s, &p, out), black_box(START), DT, STEPS)
        });
    });
    group.bench_function("jit_eval_unchecked", |bench| {
        bench.iter(|| {
            let p = black_box(PARAMS);
            rk4(
                // SAFETY: `s`, `p` and `out` are arrays of the tape's 2, 4 and 2 values.
                |s, out| unsafe { jit.eval_unchecked(s.as_ptr(), p.as_ptr(), out.as_mut_ptr()) },
                black_box(START),
                DT,
                STEPS,
            )
        });
    });
    group.bench_function("jit_planar", |bench| {
        bench.iter(|| {
            let p = black_box(PARAMS);
            let Some(rates) = jit.planar(&p) else {
                return START;
            };
            rk4(
                |s, out| *out = rates.eval(s[0], s[1]),
                black_box(START),
                DT,
                STEPS,
            )
        });
    });
    group.bench_function("interpreter", |bench| {
        let mut slots = Vec::with_capacity(tape.ops.len());
        bench.iter(|| {
            let p = black_box(PARAMS);
            rk4(
                |s, out| interpret(&tape, &mut slots, s, &p, out),
                black_box(START),
                DT,
                STEPS,
            )
        });
    });
    group.finish();

    // The loops integrate the same orbit.
    let p = PARAMS;
    let want = rk4(|s, out| native(s, &p, out), START, DT, 1000);
    let got = rk4(|s, out| jit.eval(s, &p, out), START, DT, 1000);
    assert_eq!(want, got);
    if let Some(rates) = jit.planar(&p) {
        let got = rk4(|s, out| *out = rates.eval(s[0], s[1]), START, DT, 1000);
        assert_eq!(want, got);
    }
}

criterion_group!(jit_benches, benches);
criterion_main!(jit_benches);
