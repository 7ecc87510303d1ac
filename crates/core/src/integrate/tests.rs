//! Behaviour of the integrator against closed forms, conserved quantities and an independent
//! implementation. Every reference is named beside its use.

use super::*;

const BOTH: [Method; 2] = [Method::Dopri5, Method::Dop853];

/// Lotka–Volterra rates of the benchmark: x' = a x − α x y, y' = −c y + γ x y.
const LV_A: f64 = 1.0;
const LV_ALPHA: f64 = 0.1;
const LV_C: f64 = 1.5;
const LV_GAMMA: f64 = 0.075;

fn lotka_volterra(_t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
    dy[0] = LV_A * y[0] - LV_ALPHA * y[0] * y[1];
    dy[1] = -LV_C * y[1] + LV_GAMMA * y[0] * y[1];
}

/// First integral of Lotka–Volterra (common practice): V = γx − c ln x + αy − a ln y.
fn lv_invariant(y: &[f64; 2]) -> f64 {
    LV_GAMMA * y[0] - LV_C * y[0].ln() + LV_ALPHA * y[1] - LV_A * y[1].ln()
}

fn oscillator(_t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
    dy[0] = y[1];
    dy[1] = -y[0];
}

/// Hopf normal form x' = −y + x(1 − r²), y' = x + y(1 − r²): a nonlinear system with a closed
/// form (polar coordinates: r' = r(1 − r²), θ' = 1, solved by separation of variables).
fn hopf(_t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
    let s = 1.0 - (y[0] * y[0] + y[1] * y[1]);
    dy[0] = -y[1] + y[0] * s;
    dy[1] = y[0] + y[1] * s;
}

/// Closed form of [`hopf`] from (r0, 0) at t = 0.
fn hopf_exact(r0: f64, t: f64) -> [f64; 2] {
    let r = 1.0 / (1.0 + (1.0 / (r0 * r0) - 1.0) * (-2.0 * t).exp()).sqrt();
    [r * t.cos(), r * t.sin()]
}

/// max_i |y_i − exact_i| / (atol + rtol·max_j |exact_j|): the error in units of the tolerance,
/// relative to the size of the state (a component passing through zero is not judged by `atol`
/// alone).
fn scaled_error<const N: usize>(y: &[f64; N], exact: &[f64; N], rtol: f64, atol: f64) -> f64 {
    let size = exact.iter().fold(0.0, |m: f64, e| m.max(e.abs()));
    y.iter()
        .zip(exact)
        .map(|(y, e)| (y - e).abs() / (atol + rtol * size))
        .fold(0.0, f64::max)
}

fn opts(method: Method, rtol: f64, atol: f64) -> Options {
    Options {
        method,
        rtol,
        atol,
        ..Options::default()
    }
}

/// Options that make every step exactly `h` long: the tolerance is so loose that every trial
/// is accepted, and `h_max = h` caps the growth.
fn fixed_step(method: Method, h: f64) -> Options {
    Options {
        method,
        rtol: 1e6,
        atol: 1e6,
        h_init: Some(h),
        h_max: h,
        stiffness_check: None,
        ..Options::default()
    }
}

fn run<S: System<N>, const N: usize>(
    sys: S,
    t0: f64,
    y0: [f64; N],
    t_end: f64,
    options: &Options,
) -> Trajectory<N> {
    match integrate(sys, t0, y0, t_end, options, &[]) {
        Ok(traj) => traj,
        Err(e) => panic!("setup failed: {e}"),
    }
}

// ---------------------------------------------------------------- closed forms

#[test]
fn exponential_growth_and_decay_match_the_closed_form_within_the_tolerance() {
    // Reference: y(t) = y0·e^{λt}.
    for method in BOTH {
        for lambda in [-0.7, 0.5] {
            let (rtol, atol) = (1e-9, 1e-12);
            let sys =
                FnSystem(move |_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = lambda * y[0]);
            let traj = run(sys, 0.0, [2.0], 10.0, &opts(method, rtol, atol));
            assert_eq!(traj.stop(), Stop::ReachedEnd);
            assert_eq!(traj.t_final(), 10.0);
            for (t, y) in traj.ts().iter().zip(traj.ys()) {
                let exact = [2.0 * (lambda * t).exp()];
                let e = scaled_error(y, &exact, rtol, atol);
                assert!(e < 20.0, "{method:?} λ={lambda} t={t}: {e} tolerances");
            }
        }
    }
}

#[test]
fn harmonic_oscillator_keeps_its_energy_and_returns_after_ten_periods_of_two_pi() {
    // Reference: (cos t, −sin t); energy (x² + y²)/2 = 1/2; period 2π.
    for method in BOTH {
        let (rtol, atol) = (1e-10, 1e-12);
        let t_end = 20.0 * std::f64::consts::PI;
        let traj = run(
            FnSystem(oscillator),
            0.0,
            [1.0, 0.0],
            t_end,
            &opts(method, rtol, atol),
        );
        assert_eq!(traj.stop(), Stop::ReachedEnd);
        let worst_energy = traj
            .ys()
            .iter()
            .map(|y| (0.5 * (y[0] * y[0] + y[1] * y[1]) - 0.5).abs())
            .fold(0.0, f64::max);
        assert!(
            worst_energy < 200.0 * rtol,
            "{method:?}: energy drift {worst_energy}"
        );
        let end = traj.y_final();
        assert!(
            (end[0] - 1.0).abs() < 1e-7 && end[1].abs() < 1e-7,
            "{method:?}: {end:?}"
        );
    }
}

#[test]
fn backward_integration_runs_with_negative_steps_and_returns_to_the_start() {
    // Reference: forward then backward over the same interval recovers y0 (to the tolerance).
    for method in BOTH {
        let o = opts(method, 1e-11, 1e-13);
        let fwd = run(FnSystem(lotka_volterra), 0.0, [10.0, 5.0], 10.0, &o);
        let back = run(FnSystem(lotka_volterra), 10.0, fwd.y_final(), 0.0, &o);
        assert_eq!(back.stop(), Stop::ReachedEnd);
        assert_eq!(back.t_final(), 0.0);
        assert!(back.ts().windows(2).all(|w| w[1] < w[0]), "times decrease");
        let y = back.y_final();
        assert!(
            scaled_error(&y, &[10.0, 5.0], 1e-11, 1e-13) < 1000.0,
            "{method:?}: {y:?}"
        );
    }
    // Reference: y' = y from y(1) = e back to t = 0 gives 1.
    let sys = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = y[0]);
    let traj = run(
        sys,
        1.0,
        [std::f64::consts::E],
        0.0,
        &opts(Method::Dop853, 1e-10, 1e-12),
    );
    assert!((traj.y_final()[0] - 1.0).abs() < 1e-9);
}

#[test]
fn global_error_is_proportional_to_the_tolerance() {
    // Reference: closed form of the Hopf normal form; error ≲ C·rtol over a tolerance sweep.
    for method in BOTH {
        for rtol in [1e-5, 1e-7, 1e-9, 1e-11] {
            let atol = rtol * 1e-2;
            let traj = run(
                FnSystem(hopf),
                0.0,
                [0.3, 0.0],
                8.0,
                &opts(method, rtol, atol),
            );
            let worst = traj
                .ts()
                .iter()
                .zip(traj.ys())
                .map(|(t, y)| scaled_error(y, &hopf_exact(0.3, *t), rtol, atol))
                .fold(0.0, f64::max);
            assert!(worst < 30.0, "{method:?} rtol={rtol}: {worst} tolerances");
        }
    }
}

/// Global error at t = 1 of fixed steps of size `h` on the Hopf system.
fn fixed_step_error(method: Method, h: f64) -> f64 {
    let traj = run(FnSystem(hopf), 0.0, [0.3, 0.0], 1.0, &fixed_step(method, h));
    assert_eq!(traj.stats().rejected_steps, 0);
    assert_eq!(
        traj.stats().accepted_steps,
        (1.0 / h).round() as usize,
        "fixed steps"
    );
    let exact = hopf_exact(0.3, 1.0);
    let y = traj.y_final();
    (y[0] - exact[0]).hypot(y[1] - exact[1])
}

#[test]
fn observed_orders_of_convergence_are_five_and_eight() {
    // Reference: Hopf closed form; slope of log(error) against log(h) with fixed steps. (The
    // interval is kept short: later the attracting limit cycle damps the radial error and the
    // rotation's phase error is of one order higher, which hides the true order.)
    for (method, hs, lo, hi) in [
        (Method::Dopri5, [0.05, 0.025, 0.0125], 4.7, 5.6),
        (Method::Dop853, [0.4, 0.2, 0.1], 7.2, 8.6),
    ] {
        let e: Vec<f64> = hs.iter().map(|&h| fixed_step_error(method, h)).collect();
        for w in e.windows(2) {
            let order = (w[0] / w[1]).log2();
            assert!(
                order > lo && order < hi,
                "{method:?}: order {order} from {e:?}"
            );
        }
    }
}

// ---------------------------------------------------------------- dense output

#[test]
fn dense_output_between_steps_matches_the_closed_form() {
    // Reference: Hopf closed form at the quarter points of every step.
    for method in BOTH {
        let (rtol, atol) = (1e-9, 1e-11);
        let traj = run(
            FnSystem(hopf),
            0.0,
            [0.3, 0.0],
            8.0,
            &opts(method, rtol, atol),
        );
        let mut worst = 0.0_f64;
        for w in traj.ts().windows(2) {
            for frac in [0.25, 0.5, 0.75] {
                let t = w[0] + frac * (w[1] - w[0]);
                let y = traj.sample(t).expect("inside");
                worst = worst.max(scaled_error(&y, &hopf_exact(0.3, t), rtol, atol));
            }
        }
        assert!(worst < 30.0, "{method:?}: dense error {worst} tolerances");
    }
}

#[test]
fn dense_output_local_error_has_orders_five_and_eight() {
    // Reference: Hopf closed form at θ = 1/4 of a single first step of size h; the local
    // interpolation error is O(h^{p*+1}) with p* = 4 (DOPRI5) and 7 (DOP853).
    for (method, hs, lo, hi) in [
        (Method::Dopri5, [0.2, 0.1, 0.05], 4.6, 5.4),
        (Method::Dop853, [0.8, 0.4, 0.2], 7.6, 8.7),
    ] {
        let e: Vec<f64> = hs
            .iter()
            .map(|&h| {
                let mut s =
                    Solver::new(FnSystem(hopf), fixed_step(method, h), 0.0, [0.3, 0.0], 1.0)
                        .expect("valid");
                assert!(matches!(s.step(), Ok(StepResult::Accepted { .. })));
                let y = s.interpolate(0.25 * h);
                let exact = hopf_exact(0.3, 0.25 * h);
                (y[0] - exact[0]).hypot(y[1] - exact[1])
            })
            .collect();
        for w in e.windows(2) {
            let order = (w[0] / w[1]).log2();
            assert!(
                order > lo && order < hi,
                "{method:?}: dense order {order} from {e:?}"
            );
        }
    }
}

#[test]
fn dense_output_reproduces_both_ends_of_each_step() {
    // Reference: the interpolant is built to pass through y_old (θ = 0) and y_new (θ = 1).
    for method in BOTH {
        for dense_output in [true, false] {
            let o = Options {
                dense_output,
                ..opts(method, 1e-8, 1e-10)
            };
            let traj = run(FnSystem(lotka_volterra), 0.0, [10.0, 5.0], 30.0, &o);
            for (i, d) in traj.interpolants().iter().enumerate() {
                for (t, y) in [
                    (traj.ts()[i], traj.ys()[i]),
                    (traj.ts()[i + 1], traj.ys()[i + 1]),
                ] {
                    let p = d.eval(t);
                    assert!(
                        scaled_error(&p, &y, 1e-14, 1e-14) < 10.0,
                        "{method:?} step {i}"
                    );
                }
            }
        }
    }
}

#[test]
fn dop853_without_full_dense_output_saves_three_evaluations_per_step() {
    // Reference: 12 evaluations per accepted step instead of 15 (Hairer's DOP853 cost).
    let full = run(
        FnSystem(hopf),
        0.0,
        [0.3, 0.0],
        8.0,
        &opts(Method::Dop853, 1e-9, 1e-11),
    );
    let lean_opts = Options {
        dense_output: false,
        ..opts(Method::Dop853, 1e-9, 1e-11)
    };
    let lean = run(FnSystem(hopf), 0.0, [0.3, 0.0], 8.0, &lean_opts);
    assert_eq!(full.ts(), lean.ts(), "same steps");
    let steps = full.stats().accepted_steps;
    assert_eq!(full.stats().rhs_evals - lean.stats().rhs_evals, 3 * steps);
}

// ---------------------------------------------------------------- events

#[test]
fn oscillator_crossings_of_the_axis_are_located_at_multiples_of_pi() {
    // Reference: y = −sin t vanishes at t = kπ; rising at odd k, falling at even k.
    for method in BOTH {
        let axis = FnEvent::new(|_t: f64, y: &[f64; 2]| y[1]);
        let events: [&dyn Event<2>; 1] = [&axis];
        let o = opts(method, 1e-12, 1e-14);
        let traj = integrate(FnSystem(oscillator), 0.0, [1.0, 0.0], 31.0, &o, &events).expect("ok");
        let hits = traj.events();
        assert_eq!(hits.len(), 9, "{method:?}: k = 1..=9, not the start");
        for (k, hit) in (1..).zip(hits) {
            let exact = k as f64 * std::f64::consts::PI;
            assert!(
                (hit.t - exact).abs() < 1e-10,
                "{method:?} k={k}: {}",
                hit.t - exact
            );
            let want = if k % 2 == 1 {
                Direction::Rising
            } else {
                Direction::Falling
            };
            assert_eq!(hit.crossing, want);
            assert!(hit.y[1].abs() < 1e-10);
        }
    }
}

#[test]
fn directional_events_keep_only_their_direction_and_work_backward() {
    // Reference: y = −sin t; backward from 0 to −10 it vanishes at −π, −2π, −3π.
    let rising = FnEvent::new(|_t: f64, y: &[f64; 2]| y[1]).with_direction(Direction::Rising);
    let events: [&dyn Event<2>; 1] = [&rising];
    let o = opts(Method::Dop853, 1e-12, 1e-14);
    let fwd = integrate(FnSystem(oscillator), 0.0, [1.0, 0.0], 31.0, &o, &events).expect("ok");
    assert_eq!(fwd.events().len(), 5);
    assert!(fwd.events().iter().all(|h| h.crossing == Direction::Rising));

    let either = FnEvent::new(|_t: f64, y: &[f64; 2]| y[1]);
    let events: [&dyn Event<2>; 1] = [&either];
    let back = integrate(FnSystem(oscillator), 0.0, [1.0, 0.0], -10.0, &o, &events).expect("ok");
    let ts: Vec<f64> = back.events().iter().map(|h| h.t).collect();
    assert_eq!(ts.len(), 3);
    for (k, t) in (1..).zip(&ts) {
        assert!(
            (t + k as f64 * std::f64::consts::PI).abs() < 1e-10,
            "{ts:?}"
        );
    }
}

#[test]
fn several_events_in_one_step_are_reported_in_time_order_after_the_step() {
    // Reference: y' = 1 is integrated exactly (zero error estimate), so one step spans [0, 5];
    // y = t crosses 3, 2, 4 (event order) at t = 2, 3, 4 (time order).
    let sys = FnSystem(|_t: f64, _y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = 1.0);
    let o = Options {
        h_init: Some(5.0),
        ..opts(Method::Dopri5, 1e-8, 1e-10)
    };
    let mut s = Solver::new(sys, o, 0.0, [0.0], 5.0).expect("valid");
    s.add_event(FnEvent::new(|_t: f64, y: &[f64; 1]| y[0] - 3.0));
    s.add_event(FnEvent::new(|_t: f64, y: &[f64; 1]| y[0] - 2.0));
    s.add_event(FnEvent::new(|_t: f64, y: &[f64; 1]| y[0] - 4.0));
    assert_eq!(
        s.step(),
        Ok(StepResult::Accepted {
            t_prev: 0.0,
            t: 5.0
        })
    );
    let mut order = Vec::new();
    for _ in 0..3 {
        match s.step() {
            Ok(StepResult::Event(hit)) => order.push((hit.index, hit.t)),
            other => panic!("expected an event, got {other:?}"),
        }
    }
    assert_eq!(order.iter().map(|p| p.0).collect::<Vec<_>>(), [1, 0, 2]);
    for (&(_, t), exact) in order.iter().zip([2.0, 3.0, 4.0]) {
        assert!((t - exact).abs() < 1e-12);
    }
    assert_eq!(s.step(), Ok(StepResult::Finished(Finish::ReachedEnd)));
    assert_eq!(
        s.step(),
        Ok(StepResult::Finished(Finish::ReachedEnd)),
        "idempotent"
    );
    assert_eq!(s.stats().accepted_steps, 1);
}

#[test]
fn two_crossings_inside_one_step_are_found_by_sub_sampling() {
    // Reference: y' = 2t − 2 gives y = t² − 2t (DOPRI5 and its dense output are exact for it);
    // y + 1/2 vanishes at t = 1 ∓ √½, both inside one step over [0, 2] with g > 0 at both ends.
    let sys = FnSystem(|t: f64, _y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = 2.0 * t - 2.0);
    let dip = FnEvent::new(|_t: f64, y: &[f64; 1]| y[0] + 0.5);
    let events: [&dyn Event<1>; 1] = [&dip];
    for (subintervals, expected) in [(1, 0), (4, 2)] {
        let o = Options {
            h_init: Some(2.0),
            event_subintervals: subintervals,
            ..opts(Method::Dopri5, 1e-8, 1e-10)
        };
        let traj = integrate(sys, 0.0, [0.0], 2.0, &o, &events).expect("ok");
        assert_eq!(traj.stats().accepted_steps, 1);
        assert_eq!(
            traj.events().len(),
            expected,
            "{subintervals} sub-intervals"
        );
        if expected == 2 {
            let r = 0.5f64.sqrt();
            assert!((traj.events()[0].t - (1.0 - r)).abs() < 1e-12);
            assert!((traj.events()[1].t - (1.0 + r)).abs() < 1e-12);
        }
    }
}

#[test]
fn a_terminal_event_ends_the_run_at_the_event_point() {
    // Reference: the event's own defining equation, prey x = 20 while rising.
    for method in BOTH {
        let prey20 = FnEvent::new(|_t: f64, y: &[f64; 2]| y[0] - 20.0)
            .with_direction(Direction::Rising)
            .terminating();
        let events: [&dyn Event<2>; 1] = [&prey20];
        let o = opts(method, 1e-10, 1e-12);
        let traj = integrate(
            FnSystem(lotka_volterra),
            0.0,
            [10.0, 5.0],
            100.0,
            &o,
            &events,
        )
        .expect("ok");
        let Stop::TerminalEvent { index: 0, t } = traj.stop() else {
            panic!("{method:?}: {:?}", traj.stop());
        };
        assert_eq!(traj.t_final(), t);
        assert!(t > 0.0 && t < 100.0);
        assert!(
            (traj.y_final()[0] - 20.0).abs() < 1e-9,
            "{:?}",
            traj.y_final()
        );
        assert_eq!(traj.events().len(), 1);
        assert!(traj.events()[0].terminal);
        assert_eq!(
            traj.sample(t + 1e-9),
            None,
            "nothing recorded past the event"
        );
    }
}

#[test]
fn leaving_a_window_stops_on_the_wall_crossed() {
    // Reference: from (0, 1) the oscillator is (sin t, cos t); it leaves x ≤ 1/2 at t = π/6.
    for method in BOTH {
        let window = WindowExit::new(-2.0, 0.5, -2.0, 2.0);
        let events: [&dyn Event<2>; 1] = [&window];
        let o = opts(method, 1e-12, 1e-14);
        let traj = integrate(FnSystem(oscillator), 0.0, [0.0, 1.0], 10.0, &o, &events).expect("ok");
        let Stop::TerminalEvent { t, .. } = traj.stop() else {
            panic!("{:?}", traj.stop());
        };
        assert!(
            (t - std::f64::consts::FRAC_PI_6).abs() < 1e-11,
            "{method:?}: {t}"
        );
        assert!((traj.y_final()[0] - 0.5).abs() < 1e-11);
    }
    // Lotka–Volterra from (10, 5) in the window [1, 25]²: it exits through some wall, and every
    // recorded state before is inside.
    let window = WindowExit::new(1.0, 25.0, 1.0, 25.0);
    let events: [&dyn Event<2>; 1] = [&window];
    let o = opts(Method::Dop853, 1e-10, 1e-12);
    let traj = integrate(
        FnSystem(lotka_volterra),
        0.0,
        [10.0, 5.0],
        100.0,
        &o,
        &events,
    )
    .expect("ok");
    assert!(matches!(traj.stop(), Stop::TerminalEvent { index: 0, .. }));
    let g_end = Event::<2>::value(&window, 0.0, &traj.y_final());
    assert!(g_end.abs() < 1e-9 && g_end <= 0.0, "on the wall: {g_end}");
    let ys = traj.ys();
    assert!(
        ys[..ys.len() - 1]
            .iter()
            .all(|y| Event::<2>::value(&window, 0.0, y) > 0.0)
    );
}

#[test]
fn returns_to_a_section_give_the_period_and_the_volterra_averages() {
    // Reference: over one Lotka–Volterra cycle the time averages of x and y equal the
    // equilibrium (c/γ, a/α) = (20, 10) (Volterra's averaging law, closed form). The state is
    // extended with the quadratures ∫x dt and ∫y dt (N = 4).
    let sys = FnSystem(|_t: f64, y: &[f64; 4], dy: &mut [f64; 4]| {
        dy[0] = LV_A * y[0] - LV_ALPHA * y[0] * y[1];
        dy[1] = -LV_C * y[1] + LV_GAMMA * y[0] * y[1];
        dy[2] = y[0];
        dy[3] = y[1];
    });
    let section = FnEvent::new(|_t: f64, y: &[f64; 4]| y[1] - LV_A / LV_ALPHA)
        .with_direction(Direction::Rising);
    let events: [&dyn Event<4>; 1] = [&section];
    let o = opts(Method::Dop853, 1e-11, 1e-12);
    let traj = integrate(sys, 0.0, [10.0, 5.0, 0.0, 0.0], 40.0, &o, &events).expect("ok");
    let hits = traj.events();
    assert!(hits.len() >= 3, "{} returns", hits.len());
    let mut periods = Vec::new();
    for w in hits.windows(2) {
        let period = w[1].t - w[0].t;
        periods.push(period);
        let mean_x = (w[1].y[2] - w[0].y[2]) / period;
        let mean_y = (w[1].y[3] - w[0].y[3]) / period;
        assert!((mean_x - LV_C / LV_GAMMA).abs() < 1e-8, "mean x {mean_x}");
        assert!((mean_y - LV_A / LV_ALPHA).abs() < 1e-8, "mean y {mean_y}");
        // The section point recurs (periodic orbit).
        assert!((w[1].y[0] - w[0].y[0]).abs() < 1e-7);
    }
    assert!((periods[0] - periods[1]).abs() < 1e-9, "{periods:?}");
}

#[test]
fn root_finder_converges_to_the_relative_tolerance_on_a_steep_function() {
    // Reference: the root of (t − 0.3)^3 + 1e-3 (t − 0.3) is 0.3 exactly.
    let g = |t: f64| (t - 0.3).powi(3) + 1e-3 * (t - 0.3);
    let t = events::locate_root(g, 0.0, g(0.0), 1.0, g(1.0));
    assert!((t - 0.3).abs() < 1e-13, "{t}");
    assert!(g(t) >= 0.0, "the far side of the crossing");
    // A NaN inside the bracket does not hang or panic.
    let nan = |t: f64| {
        if t > 0.2 && t < 0.4 {
            f64::NAN
        } else {
            t - 0.5
        }
    };
    let t = events::locate_root(nan, 0.0, -0.5, 1.0, 0.5);
    assert!((0.0..=1.0).contains(&t));
}

// ---------------------------------------------------------------- stops

#[test]
fn finite_time_blow_up_of_y_squared_stops_with_blow_up_near_one() {
    // Reference: y' = y², y(0) = 1 has y = 1/(1 − t), which passes 1e12 at t = 1 − 1e-12.
    for method in BOTH {
        let sys = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = y[0] * y[0]);
        let traj = run(sys, 0.0, [1.0], 2.0, &opts(method, 1e-8, 1e-10));
        let Stop::Failed(IntegrationError::BlowUp { t }) = traj.stop() else {
            panic!("{method:?}: {:?}", traj.stop());
        };
        assert!((t - 1.0).abs() < 1e-6, "{method:?}: t = {t}");
        assert!(traj.y_final()[0].is_finite() && traj.y_final()[0] <= DEFAULT_BLOW_UP);
        assert!(traj.stats().accepted_steps < 5_000, "{:?}", traj.stats());
    }
}

#[test]
fn non_finite_rates_stop_with_non_finite_and_keep_the_last_good_state() {
    // Reference: the rates' own definitions (NaN everywhere; NaN after t = 0.5).
    for method in BOTH {
        let o = opts(method, 1e-8, 1e-10);
        let always = FnSystem(|_t: f64, _y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = f64::NAN);
        let traj = run(always, 0.0, [1.0], 1.0, &o);
        assert_eq!(
            traj.stop(),
            Stop::Failed(IntegrationError::NonFinite { t: 0.0 })
        );
        assert_eq!(traj.ys(), &[[1.0]]);

        let later = FnSystem(|t: f64, _y: &[f64; 1], dy: &mut [f64; 1]| {
            dy[0] = if t > 0.5 { f64::INFINITY } else { 1.0 }
        });
        let traj = run(later, 0.0, [0.0], 1.0, &o);
        let Stop::Failed(IntegrationError::NonFinite { t }) = traj.stop() else {
            panic!("{method:?}: {:?}", traj.stop());
        };
        assert!(t <= 0.5 && t > 0.5 - 1e-6, "{method:?}: t = {t}");
        assert_eq!(traj.t_final(), t);
        assert!(
            (traj.y_final()[0] - t).abs() < 1e-12,
            "last good state y = t"
        );
    }
}

#[test]
fn a_square_root_running_dry_stops_near_the_dry_point_without_hanging() {
    // Reference: y' = −√y, y(0) = 1 gives y = (1 − t/2)², which reaches 0 at t = 2; past it
    // the rate is NaN for the negative overshoots.
    for method in BOTH {
        let sys = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = -y[0].sqrt());
        let traj = run(sys, 0.0, [1.0], 3.0, &opts(method, 1e-8, 1e-10));
        let Stop::Failed(error) = traj.stop() else {
            panic!("{method:?}: {:?}", traj.stop());
        };
        assert!(
            error.t() > 1.99 && error.t() <= 2.0 + 1e-6,
            "{method:?}: {error}"
        );
        assert!(traj.stats().accepted_steps + traj.stats().rejected_steps < 10_000);
    }
}

#[test]
fn the_step_limit_stops_with_max_steps_at_the_last_good_time() {
    let o = Options {
        max_steps: 10,
        ..opts(Method::Dop853, 1e-9, 1e-12)
    };
    let traj = run(FnSystem(lotka_volterra), 0.0, [10.0, 5.0], 1000.0, &o);
    let Stop::Failed(IntegrationError::MaxSteps { t, max_steps: 10 }) = traj.stop() else {
        panic!("{:?}", traj.stop());
    };
    assert_eq!(traj.t_final(), t);
    let s = traj.stats();
    assert_eq!(s.accepted_steps + s.rejected_steps, 10);
}

#[test]
fn a_stiff_problem_is_detected_instead_of_crawling() {
    // Reference: y' = −1e5 (y − cos t) is stiff (eigenvalue −1e5) on [0, 10].
    for method in BOTH {
        let sys =
            FnSystem(|t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = -1e5 * (y[0] - t.cos()));
        let traj = run(sys, 0.0, [1.0], 10.0, &opts(method, 1e-6, 1e-8));
        assert!(
            matches!(traj.stop(), Stop::Failed(IntegrationError::Stiff { .. })),
            "{method:?}: {:?}",
            traj.stop()
        );
        let off = Options {
            stiffness_check: None,
            max_steps: 3000,
            ..opts(method, 1e-6, 1e-8)
        };
        let traj = run(sys, 0.0, [1.0], 10.0, &off);
        assert!(matches!(
            traj.stop(),
            Stop::Failed(IntegrationError::MaxSteps { .. })
        ));
    }
}

#[test]
fn step_size_underflow_at_a_singularity_stops_with_step_too_small() {
    // Reference: y' = −1/(2y) with y(0) = 1 has y = √(1 − t): the slope is infinite at t = 1
    // while y stays bounded, so there is no blow-up; the step size collapses instead.
    let sys = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = -0.5 / y[0]);
    let o = Options {
        blow_up: f64::INFINITY,
        ..opts(Method::Dopri5, 1e-8, 1e-10)
    };
    let traj = run(sys, 0.0, [1.0], 2.0, &o);
    let Stop::Failed(error) = traj.stop() else {
        panic!("{:?}", traj.stop());
    };
    assert!(
        matches!(
            error,
            IntegrationError::StepTooSmall { .. } | IntegrationError::NonFinite { .. }
        ),
        "{error}"
    );
    assert!((error.t() - 1.0).abs() < 1e-6, "{error}");
}

// ---------------------------------------------------------------- long-run quality

#[test]
fn lotka_volterra_first_integral_is_conserved_over_two_hundred_periods() {
    // Reference: V = γx − c ln x + αy − a ln y is constant along exact solutions (common
    // practice). The drift of a non-symplectic method grows about linearly with time.
    for (method, rtol) in [(Method::Dop853, 1e-9), (Method::Dopri5, 1e-9)] {
        let traj = run(
            FnSystem(lotka_volterra),
            0.0,
            [10.0, 5.0],
            1000.0,
            &opts(method, rtol, 1e-12),
        );
        assert_eq!(traj.stop(), Stop::ReachedEnd);
        let v0 = lv_invariant(&[10.0, 5.0]);
        let drift = traj
            .ys()
            .iter()
            .map(|y| ((lv_invariant(y) - v0) / v0).abs())
            .fold(0.0, f64::max);
        assert!(drift < 200.0 * rtol, "{method:?}: relative drift {drift}");
    }
}

struct OdeSolversLv;

impl ode_solvers::System<f64, ode_solvers::Vector2<f64>> for OdeSolversLv {
    fn system(&self, _x: f64, y: &ode_solvers::Vector2<f64>, dy: &mut ode_solvers::Vector2<f64>) {
        dy[0] = LV_A * y[0] - LV_ALPHA * y[0] * y[1];
        dy[1] = -LV_C * y[1] + LV_GAMMA * y[0] * y[1];
    }
}

#[test]
fn lotka_volterra_at_fifty_agrees_with_ode_solvers_dop853() {
    // Reference: ode_solvers 0.6 `Dop853`, an independent implementation of the same method
    // and controller. (Its `OutputType::Dense` mis-reports the final point; `Sparse` records
    // the accepted steps themselves.)
    let (rtol, atol) = (1e-12, 1e-14);
    let mut other = ode_solvers::Dop853::new(
        OdeSolversLv,
        0.0,
        50.0,
        1.0,
        ode_solvers::Vector2::new(10.0, 5.0),
        rtol,
        atol,
    );
    other.set_output(ode_solvers::OutputType::Sparse);
    let Ok(other_stats) = other.integrate() else {
        panic!("ode_solvers failed");
    };
    let (Some(&x_last), Some(y_last)) = (other.x_out().last(), other.y_out().last()) else {
        panic!("ode_solvers produced no output");
    };
    assert_eq!(x_last, 50.0);
    let reference = [y_last[0], y_last[1]];
    let ours = run(
        FnSystem(lotka_volterra),
        0.0,
        [10.0, 5.0],
        50.0,
        &opts(Method::Dop853, rtol, atol),
    );
    // Same method and controller: the same steps, and agreement far below the tolerance.
    assert_eq!(
        ours.stats().accepted_steps,
        other_stats.accepted_steps as usize
    );
    assert_eq!(
        ours.stats().rejected_steps,
        other_stats.rejected_steps as usize
    );
    let e = scaled_error(&ours.y_final(), &reference, rtol, atol);
    assert!(
        e < 1.0,
        "{:?} vs {reference:?}: {e} tolerances",
        ours.y_final()
    );
    // DOPRI5 at a looser tolerance lands on the same point within that tolerance's accuracy.
    let dopri = run(
        FnSystem(lotka_volterra),
        0.0,
        [10.0, 5.0],
        50.0,
        &opts(Method::Dopri5, 1e-10, 1e-12),
    );
    let e = scaled_error(&dopri.y_final(), &reference, 1e-10, 1e-12);
    assert!(e < 100.0, "DOPRI5 {:?}: {e} tolerances", dopri.y_final());
}

// ---------------------------------------------------------------- API details

#[test]
fn invalid_setups_are_refused_with_the_reason() {
    let sys = FnSystem(oscillator);
    let bad = |o: Options| Solver::new(sys, o, 0.0, [1.0, 0.0], 1.0).err();
    assert!(matches!(
        bad(Options {
            rtol: 0.0,
            ..Options::default()
        }),
        Some(SetupError::InvalidOption { field: "rtol", .. })
    ));
    assert!(matches!(
        bad(Options {
            atol: -1.0,
            ..Options::default()
        }),
        Some(SetupError::InvalidOption { field: "atol", .. })
    ));
    assert!(matches!(
        bad(Options {
            h_max: f64::NAN,
            ..Options::default()
        }),
        Some(SetupError::InvalidOption { field: "h_max", .. })
    ));
    assert!(matches!(
        bad(Options {
            event_subintervals: 0,
            ..Options::default()
        }),
        Some(SetupError::InvalidOption {
            field: "event_subintervals",
            ..
        })
    ));
    assert_eq!(
        Solver::new(sys, Options::default(), 0.0, [1.0, f64::NAN], 1.0).err(),
        Some(SetupError::NonFiniteInitialState { index: 1 })
    );
    assert_eq!(
        Solver::new(sys, Options::default(), f64::INFINITY, [1.0, 0.0], 1.0).err(),
        Some(SetupError::NonFiniteTime)
    );
    assert!(Options::default().validate().is_ok());
}

#[test]
fn an_empty_interval_finishes_at_once_with_one_evaluation() {
    let mut s = Solver::new(
        FnSystem(oscillator),
        Options::default(),
        2.0,
        [1.0, 0.0],
        2.0,
    )
    .expect("valid");
    assert_eq!(s.step(), Ok(StepResult::Finished(Finish::ReachedEnd)));
    assert_eq!(s.stats().rhs_evals, 1);
    assert_eq!(s.y(), [1.0, 0.0]);
    let traj = run(
        FnSystem(oscillator),
        2.0,
        [1.0, 0.0],
        2.0,
        &Options::default(),
    );
    assert_eq!(traj.sample(2.0), Some([1.0, 0.0]));
    assert_eq!(traj.resample(0.1), vec![(2.0, [1.0, 0.0])]);
}

#[test]
fn steps_respect_h_max_and_end_exactly_at_t_end() {
    let o = Options {
        h_max: 0.25,
        ..opts(Method::Dop853, 1e-6, 1e-8)
    };
    let traj = run(FnSystem(oscillator), 0.0, [1.0, 0.0], 10.0, &o);
    assert!(traj.ts().windows(2).all(|w| w[1] - w[0] <= 0.25 + 1e-15));
    assert_eq!(traj.t_final(), 10.0);
}

#[test]
fn trajectory_sampling_and_resampling_follow_the_closed_form_both_ways() {
    // Reference: oscillator closed form (cos t, −sin t).
    let o = opts(Method::Dop853, 1e-10, 1e-12);
    for t_end in [10.0, -10.0] {
        let traj = run(FnSystem(oscillator), 0.0, [1.0, 0.0], t_end, &o);
        assert_eq!(traj.sample(t_end * 1.01), None);
        assert_eq!(traj.sample(-t_end * 0.01), None);
        let rows = traj.resample(0.5);
        assert_eq!(rows.len(), 21);
        for (k, (t, y)) in rows.iter().enumerate() {
            assert_eq!(*t, 0.5 * k as f64 * t_end.signum());
            assert!((y[0] - t.cos()).abs() < 1e-8 && (y[1] + t.sin()).abs() < 1e-8);
        }
        for t in [0.123, 3.3, 9.99] {
            let t = t * t_end.signum();
            let y = traj.sample(t).expect("inside");
            assert!((y[0] - t.cos()).abs() < 1e-8, "t = {t}");
        }
        assert!(traj.resample(0.0).is_empty());
        assert!(traj.resample(f64::NAN).is_empty());
        assert!(traj.resample(1e-300).is_empty(), "row cap");
    }
}

#[test]
fn interpolation_is_available_after_each_accepted_step() {
    // Reference: oscillator closed form, at the middle of each step while stepping.
    let mut s = Solver::new(
        FnSystem(oscillator),
        opts(Method::Dopri5, 1e-9, 1e-12),
        0.0,
        [1.0, 0.0],
        5.0,
    )
    .expect("valid");
    let mut steps = 0;
    while let Ok(StepResult::Accepted { t_prev, t }) = s.step() {
        steps += 1;
        let mid = 0.5 * (t_prev + t);
        assert!(s.interpolant().contains(mid));
        let y = s.interpolate(mid);
        assert!((y[0] - mid.cos()).abs() < 1e-8, "t = {mid}");
        assert_eq!(s.t(), t);
    }
    assert!(steps > 5);
    assert_eq!(s.outcome(), Some(Ok(Finish::ReachedEnd)));
}

#[test]
fn a_failed_solver_keeps_reporting_the_same_error() {
    let sys = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = y[0] * y[0]);
    let mut s = Solver::new(sys, Options::default(), 0.0, [1.0], 2.0).expect("valid");
    let error = loop {
        match s.step() {
            Ok(_) => {}
            Err(e) => break e,
        }
    };
    assert_eq!(s.step(), Err(error));
    assert!(s.y()[0].is_finite());
}
