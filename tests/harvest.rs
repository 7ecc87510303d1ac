//! Harvest rules against closed forms of the fisheries literature.

use quarry_core::analysis::analyze;
use quarry_core::harvest::{Economics, Harvest, HarvestRule, yield_along};
use quarry_core::library;
use quarry_core::model::{Model, ModelSpec, Parameter, Window};
use quarry_core::orbit::{OrbitOptions, run_orbit};

fn logistic(r: f64, k: f64) -> ModelSpec {
    ModelSpec {
        name: "logistic stock".into(),
        variables: ["x".into(), "y".into()],
        rates: ["r*x*(1 - x/K)".into(), "-y".into()],
        parameters: vec![Parameter::new("r", r), Parameter::new("K", k)],
        invariant: None,
        window: Window::new(0.0, 1.2 * k, -1.0, 1.0).expect("window"),
    }
}

fn harvest(rule: HarvestRule) -> Harvest {
    Harvest {
        rules: [rule, HarvestRule::None],
        ..Harvest::default()
    }
}

fn interior_x(model: &Model) -> Vec<f64> {
    analyze(model)
        .equilibria
        .iter()
        .filter(|e| e.x > 1e-9)
        .map(|e| e.x)
        .collect()
}

/// Schaefer (1954), closed form: under catch qEx the logistic stock settles at
/// x* = K(1 − qE/r), the sustained catch qE·x* is largest, rK/4, at E = r/(2q), and the stock
/// collapses (x* = 0) at E = r/q.
#[test]
fn schaefer_equilibrium_msy_and_collapse() {
    let (r, k, q) = (0.5, 100.0, 0.01);
    let spec = logistic(r, k);
    let at = |e: f64| {
        let h = harvest(HarvestRule::Proportional {
            effort: e,
            catchability: q,
        });
        Model::new(&h.apply(&spec).expect("applies")).expect("compiles")
    };
    for e in [5.0, 20.0, 40.0] {
        let xs = interior_x(&at(e));
        assert_eq!(xs.len(), 1);
        assert!(
            (xs[0] - k * (1.0 - q * e / r)).abs() < 1e-9 * k,
            "E = {e}: {xs:?}"
        );
    }
    let e_msy = r / (2.0 * q);
    let x = interior_x(&at(e_msy))[0];
    assert!((q * e_msy * x - r * k / 4.0).abs() < 1e-9 * r * k);
    // Beyond E = r/q only the empty stock remains.
    assert!(interior_x(&at(1.01 * r / q)).is_empty());
}

/// A logistic stock under a constant quota H < rK/4 has two equilibria,
/// x = (K/2)(1 ± √(1 − 4H/(rK))) (closed form), the lower a threshold (saddle-like in 1-D:
/// unstable), the upper stable; above rK/4 there is none and the stock collapses. The smooth
/// cut-off keeps the stock from going negative.
#[test]
fn constant_quota_threshold_and_collapse() {
    let (r, k) = (0.5, 100.0);
    let spec = logistic(r, k);
    let h = 0.8 * r * k / 4.0;
    let model = Model::new(
        &harvest(HarvestRule::Quota {
            quota: h,
            taper: None,
        })
        .apply(&spec)
        .expect("applies"),
    )
    .expect("compiles");
    let d = (1.0 - 4.0 * h / (r * k)).sqrt();
    let mut xs = interior_x(&model);
    xs.sort_by(f64::total_cmp);
    assert_eq!(xs.len(), 2, "{xs:?}");
    assert!((xs[0] - 0.5 * k * (1.0 - d)).abs() < 1e-8 * k);
    assert!((xs[1] - 0.5 * k * (1.0 + d)).abs() < 1e-8 * k);
    let over = Model::new(
        &harvest(HarvestRule::Quota {
            quota: 1.05 * r * k / 4.0,
            taper: None,
        })
        .apply(&spec)
        .expect("applies"),
    )
    .expect("compiles");
    assert!(
        interior_x(&over).iter().all(|&x| x < 1.0),
        "no sustained stock past rK/4"
    );
    // From a stock below the threshold the stock falls to zero without going negative
    // (beyond the integration tolerance).
    let r = run_orbit(
        &model,
        [0.5 * xs[0], 0.0],
        &OrbitOptions {
            t_end: 200.0,
            ..Default::default()
        },
    )
    .expect("orbit");
    assert!(
        r.final_state[0] < 1e-3 && r.min[0] > -1e-6,
        "{:?} {:?}",
        r.final_state,
        r.min
    );
}

/// Volterra's principle (closed form): equal proportional harvest E of both species moves the
/// Lotka–Volterra coexistence point from (c/γ, a/α) to ((c+E)/γ, (a−E)/α): more prey, fewer
/// predators; and the mean catch over whole cycles is E times the mean stock, which equals the
/// equilibrium.
#[test]
fn volterra_principle_and_mean_catch_over_cycles() {
    let spec = library::builtin("lotka-volterra").expect("built in").spec();
    let (a, alpha, c, gamma, e) = (1.0, 0.1, 1.5, 0.075, 0.3);
    let rule = HarvestRule::Proportional {
        effort: e,
        catchability: 1.0,
    };
    let h = Harvest {
        rules: [rule, rule],
        economics: [
            Economics {
                price: 2.0,
                cost_per_effort: 1.0,
            },
            Economics::default(),
        ],
    };
    let applied = h.apply(&spec).expect("applies");
    let model = Model::new(&applied).expect("compiles");
    let eq = analyze(&model).equilibria;
    let coexist = eq.iter().find(|q| q.x > 1.0).expect("coexistence");
    assert!((coexist.x - (c + e) / gamma).abs() < 1e-9);
    assert!((coexist.y - (a - e) / alpha).abs() < 1e-9);
    let report = run_orbit(
        &model,
        [10.0, 5.0],
        &OrbitOptions {
            t_end: 60.0,
            ..Default::default()
        },
    )
    .expect("orbit");
    assert!(report.closed);
    let y = yield_along(&model, &h, &spec, &report).expect("yield");
    assert!(
        (y.mean_catch[0] - e * (c + e) / gamma).abs() < 1e-6,
        "{:?}",
        y.mean_catch
    );
    assert!(
        (y.mean_catch[1] - e * (a - e) / alpha).abs() < 1e-6,
        "{:?}",
        y.mean_catch
    );
    assert!((y.mean_profit - (2.0 * y.mean_catch[0] - 1.0 * e)).abs() < 1e-12);
}

/// The threshold control rule: no fishing below the lower level, the target rate above the
/// upper level, linear in between (common practice in fisheries management).
#[test]
fn threshold_rule_shape() {
    let spec = logistic(0.5, 100.0);
    let rule = HarvestRule::Threshold {
        lower: 20.0,
        upper: 60.0,
        target_rate: 0.2,
    };
    let model = Model::new(&harvest(rule).apply(&spec).expect("applies")).expect("compiles");
    let base = Model::new(&spec).expect("compiles");
    let catch = |x: f64| base.rates(x, 0.0)[0] - model.rates(x, 0.0)[0];
    assert_eq!(catch(10.0), 0.0);
    assert!((catch(40.0) - 0.2 * 0.5 * 40.0).abs() < 1e-12);
    assert!((catch(80.0) - 0.2 * 80.0).abs() < 1e-12);
}

#[test]
fn bad_harvest_settings_are_errors() {
    let spec = logistic(0.5, 100.0);
    for rule in [
        HarvestRule::Proportional {
            effort: f64::NAN,
            catchability: 1.0,
        },
        HarvestRule::Quota {
            quota: -1.0,
            taper: None,
        },
        HarvestRule::Quota {
            quota: 1.0,
            taper: Some(0.0),
        },
        HarvestRule::Threshold {
            lower: 50.0,
            upper: 10.0,
            target_rate: 0.1,
        },
    ] {
        assert!(harvest(rule).apply(&spec).is_err(), "{rule:?}");
    }
}
