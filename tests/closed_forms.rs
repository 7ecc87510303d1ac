//! The core against closed forms, textbook worked examples and facts of the trade.

use quarry_core::analysis::analyze;
use quarry_core::library;
use quarry_core::linear::Class;
use quarry_core::model::{Model, ModelSpec, Parameter, Window};
use quarry_core::orbit::{OrbitOptions, run_orbit};
use quarry_core::verdict::{DecidedBy, Verdict};

fn model(rates: [&str; 2], params: &[(&str, f64)], window: [f64; 4]) -> Model {
    let spec = ModelSpec {
        name: "test".into(),
        variables: ["x".into(), "y".into()],
        rates: rates.map(str::to_owned),
        parameters: params.iter().map(|&(n, v)| Parameter::new(n, v)).collect(),
        invariant: None,
        window: Window::new(window[0], window[1], window[2], window[3]).expect("window"),
    };
    Model::new(&spec).expect("model compiles")
}

fn lotka_volterra() -> Model {
    Model::new(&library::builtin("lotka-volterra").expect("built in").spec()).expect("compiles")
}

fn near(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol * (1.0 + b.abs())
}

/// Closed form (common practice): the equilibria of dx/dt = ax − αxy, dy/dt = −cy + γxy are
/// (0, 0), a saddle, and (c/γ, a/α), a linear centre that the first integral
/// γx − c ln x + αy − a ln y shows to be a true centre.
#[test]
fn lotka_volterra_has_a_saddle_at_the_origin_and_a_centre_at_c_over_gamma_a_over_alpha() {
    let m = lotka_volterra();
    let (a, alpha, c, gamma) = (1.0, 0.1, 1.5, 0.075);
    let eq = analyze(&m).equilibria;
    assert_eq!(eq.len(), 2, "{eq:?}");
    assert_eq!((eq[0].x, eq[0].y), (0.0, 0.0));
    assert_eq!(eq[0].class(), Class::Saddle);
    assert!(near(eq[1].x, c / gamma, 1e-12) && near(eq[1].y, a / alpha, 1e-12));
    assert_eq!(eq[1].class(), Class::Center);
    let v = eq[1]
        .nonlinear
        .as_ref()
        .expect("a verdict for a linear centre");
    assert_eq!(v.verdict, Verdict::Center);
    assert!(matches!(v.decided_by, DecidedBy::FirstIntegral { .. }));
    assert!(eq[0].nonlinear.is_none());
}

/// Closed form (common practice): small cycles around (c/γ, a/α) last 2π/√(ac); the relative
/// error of that approximation falls with the amplitude (quadratically, so a tenfold smaller
/// orbit is at least ~30× closer).
#[test]
fn small_lotka_volterra_cycles_approach_the_linear_period() {
    let m = lotka_volterra();
    let (a, c): (f64, f64) = (1.0, 1.5);
    let linear = std::f64::consts::TAU / (a * c).sqrt();
    let (xe, ye) = (20.0, 10.0);
    let mut errors = Vec::new();
    for eps in [0.1, 0.01] {
        let r = run_orbit(
            &m,
            [xe * (1.0 + eps), ye],
            &OrbitOptions {
                t_end: 30.0,
                ..Default::default()
            },
        )
        .expect("orbit");
        let p = r.period.expect("closed orbit has a period");
        errors.push((p - linear).abs() / linear);
    }
    assert!(errors[1] < 1e-3, "{errors:?}");
    assert!(errors[0] / errors[1] > 30.0, "{errors:?}");
}

/// Fact of the trade (common practice): the time average over a Lotka–Volterra cycle equals the
/// equilibrium (c/γ, a/α), for any amplitude.
#[test]
fn lotka_volterra_cycle_mean_equals_the_equilibrium() {
    let m = lotka_volterra();
    let r = run_orbit(
        &m,
        [10.0, 5.0],
        &OrbitOptions {
            t_end: 60.0,
            ..Default::default()
        },
    )
    .expect("orbit");
    assert!(r.closed);
    assert!(near(r.mean[0], 20.0, 1e-7), "{:?}", r.mean);
    assert!(near(r.mean[1], 10.0, 1e-7), "{:?}", r.mean);
}

/// Fact of the trade (common practice): the predator peak lags the prey peak by about a quarter
/// cycle for small cycles (exactly a quarter in the linearisation).
#[test]
fn predator_peak_lags_prey_peak_by_about_a_quarter_cycle() {
    let m = lotka_volterra();
    let r = run_orbit(
        &m,
        [21.0, 10.0],
        &OrbitOptions {
            t_end: 30.0,
            ..Default::default()
        },
    )
    .expect("orbit");
    let lag = r.lag_fraction.expect("lag for a closed orbit");
    assert!((lag - 0.25).abs() < 0.01, "lag fraction {lag}");
}

/// Closed form (common practice): the first integral is constant along orbits, so its drift is
/// of the order of the tolerance.
#[test]
fn lotka_volterra_first_integral_is_conserved_along_an_orbit() {
    let m = lotka_volterra();
    let r = run_orbit(
        &m,
        [10.0, 5.0],
        &OrbitOptions {
            t_end: 200.0,
            rtol: 1e-10,
            ..Default::default()
        },
    )
    .expect("orbit");
    let d = r.invariant_drift.expect("model has a first integral");
    assert!(d < 1e-8, "drift {d:e}");
}

/// Textbook worked example: Strogatz, "Nonlinear Dynamics and Chaos" (2nd ed.), §6.4, rabbits
/// versus sheep, dx/dt = x(3 − x − 2y), dy/dt = y(2 − x − y): (0,0) unstable node, (0,2) and
/// (3,0) stable nodes, (1,1) a saddle (from memory).
#[test]
fn strogatz_rabbits_and_sheep() {
    let m = model(
        ["x*(3 - x - 2*y)", "y*(2 - x - y)"],
        &[],
        [0.0, 4.0, 0.0, 4.0],
    );
    let eq = analyze(&m).equilibria;
    let found: Vec<(f64, f64, Class)> = eq.iter().map(|e| (e.x, e.y, e.class())).collect();
    let expect = [
        (0.0, 0.0, Class::UnstableNode),
        (0.0, 2.0, Class::StableNode),
        (1.0, 1.0, Class::Saddle),
        (3.0, 0.0, Class::StableNode),
    ];
    assert_eq!(found.len(), expect.len(), "{found:?}");
    for ((x, y, c), (ex, ey, ec)) in found.iter().zip(expect) {
        assert!(near(*x, ex, 1e-12) && near(*y, ey, 1e-12), "{found:?}");
        assert_eq!(*c, ec);
    }
}

/// Textbook worked example: Strogatz §6.3, Example 6.3.1, dx/dt = −x + x³, dy/dt = −2y:
/// a stable node at the origin and saddles at (±1, 0) (from memory).
#[test]
fn strogatz_example_6_3_1() {
    let m = model(["-x + x^3", "-2*y"], &[], [-2.0, 2.0, -2.0, 2.0]);
    let eq = analyze(&m).equilibria;
    let found: Vec<(f64, f64, Class)> = eq.iter().map(|e| (e.x, e.y, e.class())).collect();
    assert_eq!(
        found,
        vec![
            (-1.0, 0.0, Class::Saddle),
            (0.0, 0.0, Class::StableNode),
            (1.0, 0.0, Class::Saddle)
        ]
    );
}

/// Textbook worked example: Strogatz §6.3, Example 6.3.2, dx/dt = −y + a·x(x² + y²),
/// dy/dt = x + a·y(x² + y²): a linear centre that is really a stable spiral for a < 0 and an
/// unstable one for a > 0 (from memory). In polar form r' = a r³; in Kuznetsov's normalisation
/// (⟨q, q⟩ = 1) that is ℓ₁ = 2a for ω = 1 (closed form).
#[test]
fn strogatz_example_6_3_2_weak_foci_are_decided_by_the_lyapunov_coefficient() {
    for (a, want) in [(-1.0, Verdict::StableFocus), (0.5, Verdict::UnstableFocus)] {
        let m = model(
            ["-y + a*x*(x^2 + y^2)", "x + a*y*(x^2 + y^2)"],
            &[("a", a)],
            [-1.0, 1.0, -1.0, 1.0],
        );
        let eq = analyze(&m).equilibria;
        assert_eq!(eq.len(), 1, "{eq:?}");
        assert_eq!(eq[0].class(), Class::Center);
        let v = eq[0].nonlinear.as_ref().expect("verdict");
        assert_eq!(v.verdict, want);
        let DecidedBy::LyapunovCoefficient { l1 } = v.decided_by else {
            panic!("decided by {:?}", v.decided_by);
        };
        assert!(near(l1, 2.0 * a, 1e-10), "l1 = {l1}");
    }
}

/// Textbook worked example: Strogatz §6.6, Example 6.6.1, dx/dt = y − y³, dy/dt = −x − y²:
/// reversible under (x, y, t) → (x, −y, −t), so the linear centre at the origin is a true
/// centre (from memory).
#[test]
fn strogatz_example_6_6_1_reversible_centre() {
    let m = model(["y - y^3", "-x - y^2"], &[], [-0.5, 0.5, -0.5, 0.5]);
    let eq = analyze(&m).equilibria;
    let origin = eq
        .iter()
        .find(|e| e.x == 0.0 && e.y == 0.0)
        .expect("origin");
    assert_eq!(origin.class(), Class::Center);
    let v = origin.nonlinear.as_ref().expect("verdict");
    assert_eq!(v.verdict, Verdict::Center);
    assert_eq!(v.decided_by, DecidedBy::ReversingSymmetry { mirror: "y" });
}

/// Closed form: dx/dt = −y + x(x² + y²)², dy/dt = x + y(x² + y²)² has r' = r⁵ in polar form, so
/// ℓ₁ = 0 but orbits spiral out; only the return map can tell.
#[test]
fn a_focus_of_higher_order_is_decided_by_the_return_map() {
    let m = model(
        ["-y + x*(x^2 + y^2)^2", "x + y*(x^2 + y^2)^2"],
        &[],
        [-1.0, 1.0, -1.0, 1.0],
    );
    let eq = analyze(&m).equilibria;
    let v = eq[0].nonlinear.as_ref().expect("verdict");
    assert_eq!(v.verdict, Verdict::UnstableFocus, "{v:?}");
    assert!(matches!(v.decided_by, DecidedBy::ReturnMap { .. }), "{v:?}");
}

/// Without its first integral the Lotka–Volterra centre is not polynomial-symmetric and has
/// ℓ₁ = 0; the return map must still find it a centre (closed form: it is one).
#[test]
fn lotka_volterra_without_its_first_integral_is_still_a_centre_by_the_return_map() {
    let m = model(
        ["a*x - alpha*x*y", "-c*y + gamma*x*y"],
        &[("a", 1.0), ("alpha", 0.1), ("c", 1.5), ("gamma", 0.075)],
        [0.0, 60.0, 0.0, 40.0],
    );
    let eq = analyze(&m).equilibria;
    let v = eq[1].nonlinear.as_ref().expect("verdict");
    assert_eq!(v.verdict, Verdict::Center, "{v:?}");
    assert!(matches!(v.decided_by, DecidedBy::ReturnMap { .. }), "{v:?}");
}

/// A user-supplied first integral is trusted only when it is conserved.
#[test]
fn a_wrong_first_integral_is_not_trusted() {
    let mut spec = library::builtin("lotka-volterra").expect("built in").spec();
    spec.invariant = Some("x + y".into());
    let m = Model::new(&spec).expect("compiles");
    let analysis = analyze(&m);
    assert_eq!(analysis.invariant.map(|c| c.verified), Some(false));
    let v = analysis.equilibria[1].nonlinear.as_ref().expect("verdict");
    assert!(!matches!(v.decided_by, DecidedBy::FirstIntegral { .. }));
    assert_eq!(v.verdict, Verdict::Center);
}

/// Equilibria on the axes (x = 0 and y = 0 are invariant in population models) are found and
/// placed exactly; closed form for logistic prey with a linear predator: (0,0), (K,0) and
/// (c/γ, r(1 − c/(γK))/α).
#[test]
fn axis_equilibria_of_logistic_prey_are_exact() {
    let m =
        Model::new(&library::builtin("logistic-prey").expect("built in").spec()).expect("compiles");
    let (r, k, alpha, c, gamma) = (1.0, 60.0, 0.1, 1.5, 0.075);
    let eq = analyze(&m).equilibria;
    let pts: Vec<(f64, f64)> = eq.iter().map(|e| (e.x, e.y)).collect();
    assert_eq!(pts.len(), 3, "{pts:?}");
    assert_eq!(pts[0], (0.0, 0.0));
    assert!(
        near(pts[1].0, c / gamma, 1e-12)
            && near(pts[1].1, r * (1.0 - c / (gamma * k)) / alpha, 1e-12)
    );
    assert_eq!(pts[2], (k, 0.0));
    assert_eq!(eq[1].class(), Class::StableSpiral);
    assert_eq!(eq[2].class(), Class::Saddle);
}
