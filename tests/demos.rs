//! Every demo scenario does what its notes promise, checked against closed forms. The demos'
//! numbers are invented; the facts they illustrate are not, and each check names its source.

use std::path::Path;

use quarry_core::analysis::{Equilibrium, analyze};
use quarry_core::linear::Class;
use quarry_core::model::{Model, ModelSpec};
use quarry_core::orbit::{OrbitOptions, run_orbit};
use quarry_core::scenario::Scenario;
use quarry_core::sweep::{BifurcationKind, SweepOptions, sweep};
use quarry_core::verdict::Verdict;

fn demo(name: &str) -> ModelSpec {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("scenarios")
        .join(name);
    Scenario::load(&path)
        .expect("the demo loads")
        .analysed_spec()
        .expect("the demo's model applies")
}

fn param(spec: &ModelSpec, name: &str) -> f64 {
    spec.parameters
        .iter()
        .find(|p| p.name == name)
        .map(|p| p.value)
        .expect("parameter")
}

/// Several parameters' values at once, in the order named.
fn params<const N: usize>(spec: &ModelSpec, names: [&str; N]) -> [f64; N] {
    names.map(|n| param(spec, n))
}

/// The orbit from `from` over 40 time units (several cycles of every demo that cycles).
fn orbit(spec: &ModelSpec, from: [f64; 2]) -> quarry_core::orbit::OrbitReport {
    let opts = OrbitOptions {
        t_end: 40.0,
        ..Default::default()
    };
    run_orbit(&model(spec), from, &opts).expect("orbit")
}

fn with(spec: &ModelSpec, name: &str, value: f64) -> ModelSpec {
    let mut s = spec.clone();
    for p in &mut s.parameters {
        if p.name == name {
            p.value = value;
        }
    }
    s
}

fn model(spec: &ModelSpec) -> Model {
    Model::new(spec).expect("compiles")
}

/// The equilibrium nearest `at`.
fn nearest(eq: &[Equilibrium], at: [f64; 2]) -> &Equilibrium {
    eq.iter()
        .min_by(|a, b| {
            let d = |e: &Equilibrium| (e.x - at[0]).hypot(e.y - at[1]);
            d(a).total_cmp(&d(b))
        })
        .expect("an equilibrium")
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Closed form (common practice): Lotka–Volterra has a true centre at (c/γ, a/α), and the
/// mean over a whole cycle equals it.
#[test]
fn lake_varrow_cycles_round_a_true_centre_whose_cycle_mean_it_is() {
    let spec = demo("varrow-perch-and-pike.ron");
    let [a, alpha, c, gamma] = params(&spec, ["a", "alpha", "c", "gamma"]);
    let m = model(&spec);
    let centre = [c / gamma, a / alpha];
    let eq = analyze(&m).equilibria;
    let e = nearest(&eq, centre);
    assert!(
        rel(e.x, centre[0]) < 1e-12 && rel(e.y, centre[1]) < 1e-12,
        "{e:?}"
    );
    assert_eq!(e.class(), Class::Center);
    assert_eq!(
        e.nonlinear.as_ref().map(|v| v.verdict),
        Some(Verdict::Center)
    );
    let r = orbit(&spec, [10.0, 5.0]);
    assert!(r.closed);
    for k in 0..2 {
        assert!(
            rel(r.mean[k], centre[k]) < 1e-6,
            "{:?} vs {centre:?}",
            r.mean
        );
    }
}

/// Volterra's principle (common practice): equal proportional harvest E of both species moves
/// the cycle mean to ((c+E)/γ, (a−E)/α): more prey, fewer predators than unfished.
#[test]
fn lake_varrow_under_fishing_has_more_perch_and_fewer_pike_on_average() {
    let spec = demo("varrow-harvested.ron");
    let [a, alpha, c, gamma, e] = params(&spec, ["a", "alpha", "c", "gamma", "E"]);
    assert!(e > 0.0, "the demo fishes");
    let fished = orbit(&spec, [10.0, 5.0]);
    let unfished = orbit(&with(&spec, "E", 0.0), [10.0, 5.0]);
    assert!(fished.closed && unfished.closed);
    assert!(
        rel(fished.mean[0], (c + e) / gamma) < 1e-6,
        "{:?}",
        fished.mean
    );
    assert!(
        rel(fished.mean[1], (a - e) / alpha) < 1e-6,
        "{:?}",
        fished.mean
    );
    assert!(fished.mean[0] > unfished.mean[0] && fished.mean[1] < unfished.mean[1]);
}

/// Rosenzweig 1971: with logistic prey and a Holling type II predator the coexistence point
/// x* = m/(a(b − mh)) is a stable spiral below K_H = 2x* + 1/(ah) and an unstable one above,
/// with a Hopf point at K_H.
#[test]
fn brenmoor_turns_from_a_stable_spiral_to_a_cycle_past_k_h() {
    let spec = demo("brenmoor-voles-and-owls.ron");
    let [a, h, b, m_] = params(&spec, ["a", "h", "b", "m"]);
    let x_star = m_ / (a * (b - m_ * h));
    let k_h = 2.0 * x_star + 1.0 / (a * h);
    let k = param(&spec, "K");
    assert!(k < k_h, "the demo opens below the Hopf point");
    let class_at = |k: f64| {
        let eq = analyze(&model(&with(&spec, "K", k))).equilibria;
        let e = nearest(&eq, [x_star, 1.0]);
        assert!(rel(e.x, x_star) < 1e-10, "{e:?}");
        e.class()
    };
    assert_eq!(class_at(k), Class::StableSpiral);
    assert_eq!(class_at(k_h + 1.0), Class::UnstableSpiral);
    let s = sweep(
        &model(&spec),
        &SweepOptions::new("K", k, k_h + 1.0, 41),
        &|| false,
        &|_| {},
    )
    .expect("sweep");
    let hopf: Vec<_> = s
        .bifurcations
        .iter()
        .filter(|b| b.kind == BifurcationKind::Hopf)
        .collect();
    assert_eq!(hopf.len(), 1, "{:?}", s.bifurcations);
    assert!(rel(hopf[0].value, k_h) < 1e-8, "{} vs {k_h}", hopf[0].value);
}

/// Closed form (common practice for the logistic stock under a constant catch): with the catch
/// H·x/(x + s) the stock's positive equilibria solve H = r(1 − x/K)(x + s), whose largest value
/// r(K + s)²/(4K), at x = (K − s)/2, is the quota at which they meet and the stock collapses
/// (rK/4 as s → 0).
#[test]
fn skarholm_cod_collapses_at_the_closed_form_quota() {
    let spec = demo("skarholm-cod-quota.ron");
    let [r, k, s] = params(&spec, ["r", "K", "s"]);
    let h_fold = r * (k + s) * (k + s) / (4.0 * k);
    assert!(
        param(&spec, "H") < h_fold,
        "the demo opens below the threshold"
    );
    let sw = sweep(
        &model(&spec),
        &SweepOptions::new("H", 0.0, 1.5 * h_fold, 61),
        &|| false,
        &|_| {},
    )
    .expect("sweep");
    let folds: Vec<_> = sw
        .bifurcations
        .iter()
        .filter(|b| b.kind == BifurcationKind::Fold)
        .collect();
    assert_eq!(folds.len(), 1, "{:?}", sw.bifurcations);
    assert!(
        rel(folds[0].value, h_fold) < 1e-8,
        "{} vs {h_fold}",
        folds[0].value
    );
    assert!(rel(folds[0].x, (k - s) / 2.0) < 1e-6, "{:?}", folds[0]);
    // Below the threshold: a stable stock and the threshold between it and collapse.
    let eq = analyze(&model(&spec)).equilibria;
    let classes: Vec<Class> = eq.iter().filter(|e| e.x > 1.0).map(|e| e.class()).collect();
    assert!(classes.contains(&Class::StableNode) && classes.contains(&Class::Saddle));
    // Past it, no stock survives: only the collapsed state is left.
    let past = analyze(&model(&with(&spec, "H", 1.1 * h_fold))).equilibria;
    assert!(past.iter().all(|e| e.x.abs() < 1e-9), "{past:?}");
}

/// Closed form (Lotka–Volterra competition, common practice): (K1, 0) is stable when
/// a21·K1 > K2, (0, K2) is a saddle when a12·K2 < K1, and with both the coexistence point
/// ((K1 − a12K2)/(1 − a12a21), (K2 − a21K1)/(1 − a12a21)) has y < 0: x excludes y.
#[test]
fn dunmere_stock_x_excludes_stock_y() {
    let spec = demo("dunmere-competing-stocks.ron");
    let [k1, k2, a12, a21] = params(&spec, ["K1", "K2", "a12", "a21"]);
    assert!(
        a21 * k1 > k2 && a12 * k2 < k1,
        "the demo's numbers are in the exclusion case"
    );
    assert!((k2 - a21 * k1) / (1.0 - a12 * a21) < 0.0);
    let eq = analyze(&model(&spec)).equilibria;
    assert_eq!(nearest(&eq, [k1, 0.0]).class(), Class::StableNode);
    assert_eq!(nearest(&eq, [0.0, k2]).class(), Class::Saddle);
    assert_eq!(nearest(&eq, [0.0, 0.0]).class(), Class::UnstableNode);
    assert!(
        eq.iter().all(|e| e.x == 0.0 || e.y == 0.0),
        "no coexistence: {eq:?}"
    );
}

/// Closed form (common practice): logistic prey with a linear predator has its coexistence
/// point at (c/γ, (r/α)(1 − c/(γK))) with trace −r·x*/K < 0 and determinant αγ·x*·y* > 0; with
/// trace² < 4·det it is a stable spiral.
#[test]
fn orrin_fen_spirals_in_to_coexistence() {
    let spec = demo("orrin-fen-damped-spiral.ron");
    let [r, k, alpha, c, gamma] = params(&spec, ["r", "K", "alpha", "c", "gamma"]);
    let x = c / gamma;
    let y = (r / alpha) * (1.0 - x / k);
    let (trace, det) = (-r * x / k, alpha * gamma * x * y);
    assert!(trace * trace < 4.0 * det);
    let eq = analyze(&model(&spec)).equilibria;
    let e = nearest(&eq, [x, y]);
    assert!(rel(e.x, x) < 1e-12 && rel(e.y, y) < 1e-12, "{e:?}");
    assert_eq!(e.class(), Class::StableSpiral);
    assert!(rel(e.linear.trace, trace) < 1e-12 && rel(e.linear.det, det) < 1e-12);
}
