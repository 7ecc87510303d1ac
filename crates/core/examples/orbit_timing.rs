//! Times the benchmark's Lotka–Volterra orbit (a=1, α=0.1, c=1.5, γ=0.075 from (10, 5),
//! t ∈ [0, 1000], DOP853) with compiled formulas and prints one JSON line:
//! `{"rtol":..,"median_s":..,"final":[x,y],"steps":..,"rhs_evals":..,"native":bool}`.
//! Used by `bench/scipy_compare.py`. Usage: `orbit_timing [RTOL] [REPEATS]`.

use std::time::Instant;

use quarry_core::integrate::{self, Options};
use quarry_core::library;
use quarry_core::model::Model;

fn main() {
    let mut args = std::env::args().skip(1);
    let rtol: f64 = args.next().and_then(|s| s.parse().ok()).unwrap_or(1e-9);
    let repeats: usize = args.next().and_then(|s| s.parse().ok()).unwrap_or(51);
    let spec = library::builtin("lotka-volterra").map(|b| b.spec());
    let Some(spec) = spec else {
        eprintln!("no built-in lotka-volterra model");
        std::process::exit(1);
    };
    let model = match Model::new(&spec) {
        Ok(m) => m,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(1);
        }
    };
    let opts = Options {
        rtol,
        atol: rtol,
        ..Options::default()
    };
    let mut times = Vec::with_capacity(repeats);
    let mut last = None;
    for _ in 0..repeats.max(1) {
        let t0 = Instant::now();
        let traj = integrate::integrate(&model, 0.0, [10.0, 5.0], 1000.0, &opts, &[]);
        times.push(t0.elapsed().as_secs_f64());
        last = traj.ok();
    }
    times.sort_by(f64::total_cmp);
    let Some(traj) = last else {
        eprintln!("integration failed to start");
        std::process::exit(1);
    };
    let y = traj.y_final();
    let s = traj.stats();
    println!(
        "{{\"rtol\":{rtol:e},\"median_s\":{:e},\"final\":[{:.17e},{:.17e}],\"steps\":{},\"rhs_evals\":{},\"native\":{}}}",
        times[times.len() / 2],
        y[0],
        y[1],
        s.accepted_steps,
        s.rhs_evals,
        model.is_native()
    );
}
