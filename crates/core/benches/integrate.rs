//! Orbit benchmark of the integrator: Lotka–Volterra (a = 1, α = 0.1, c = 1.5, γ = 0.075) from
//! (10, 5) over t ∈ [0, 1000] at rtol 1e-9, atol 1e-12, with DOP853 and DOPRI5.
//!
//! `*_solver` drives the steppable solver without storing anything (the integrator's own
//! cost); `*_trajectory` records every step with its dense output; `dop853_fn_pointer` calls the
//! rates through an opaque function pointer, as a JIT-compiled formula will be called, so the
//! ratio to `dop853_solver` bounds the integrator's share of the per-step cost.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use quarry_core::integrate::{FnSystem, Method, Options, Solver, StepResult, System, integrate};

const T_END: f64 = 1000.0;
const Y0: [f64; 2] = [10.0, 5.0];

fn lotka_volterra(_t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
    dy[0] = y[0] - 0.1 * y[0] * y[1];
    dy[1] = -1.5 * y[1] + 0.075 * y[0] * y[1];
}

/// The rates behind a function pointer the optimiser cannot see through.
#[inline(never)]
extern "C" fn lotka_volterra_opaque(t: f64, y: *const [f64; 2], dy: *mut [f64; 2]) {
    // SAFETY: called only below with valid, non-aliasing references.
    let (y, dy) = unsafe { (&*y, &mut *dy) };
    lotka_volterra(t, y, dy);
}

struct Opaque(extern "C" fn(f64, *const [f64; 2], *mut [f64; 2]));

impl System<2> for Opaque {
    fn rhs(&self, t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
        (self.0)(t, y, dy);
    }
}

fn options(method: Method) -> Options {
    Options {
        method,
        rtol: 1e-9,
        atol: 1e-12,
        ..Options::default()
    }
}

/// Runs the solver to the end and returns the final state (to keep the work observable).
fn solve<S: System<2>>(sys: S, method: Method) -> [f64; 2] {
    let Ok(mut solver) = Solver::new(sys, options(method), 0.0, Y0, T_END) else {
        return [f64::NAN; 2];
    };
    while let Ok(StepResult::Accepted { .. }) = solver.step() {}
    solver.y()
}

fn bench(c: &mut Criterion) {
    for method in [Method::Dop853, Method::Dopri5] {
        // Print the work once so the report can quote steps and evaluations.
        if let Ok(traj) = integrate(
            FnSystem(lotka_volterra),
            0.0,
            Y0,
            T_END,
            &options(method),
            &[],
        ) {
            eprintln!("{method:?}: {:?}, stop {:?}", traj.stats(), traj.stop());
        }
    }
    let mut group = c.benchmark_group("lotka_volterra_orbit");
    group.bench_function("dop853_solver", |b| {
        b.iter(|| solve(black_box(FnSystem(lotka_volterra)), Method::Dop853))
    });
    group.bench_function("dopri5_solver", |b| {
        b.iter(|| solve(black_box(FnSystem(lotka_volterra)), Method::Dopri5))
    });
    group.bench_function("dop853_fn_pointer", |b| {
        b.iter(|| solve(black_box(Opaque(lotka_volterra_opaque)), Method::Dop853))
    });
    group.bench_function("dop853_trajectory", |b| {
        b.iter(|| {
            integrate(
                FnSystem(lotka_volterra),
                0.0,
                black_box(Y0),
                T_END,
                &options(Method::Dop853),
                &[],
            )
            .map(|t| t.y_final())
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
