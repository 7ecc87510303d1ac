//! Quarry's orbits against reference orbits computed with scipy.
//!
//! Source: `tests/reference/make_reference.py`, which integrates each model with
//! `scipy.integrate.solve_ivp(method="DOP853", rtol=1e-12, atol=1e-15)` from a right-hand side
//! written in plain Python, independently of Quarry's formula language. Here each model is
//! rebuilt from the formulas stored beside the numbers.

use quarry_core::integrate::{self, Options};
use quarry_core::model::{Model, ModelSpec, Parameter, Window};
use serde_json::Value;

fn load(name: &str) -> Value {
    let path = format!("{}/tests/reference/{name}.json", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

fn model_of(reference: &Value) -> Model {
    let rates = reference["rates"].as_array().expect("rates");
    let params = reference["params"].as_object().expect("params");
    let spec = ModelSpec {
        name: "reference".into(),
        variables: ["x".into(), "y".into()],
        rates: [
            rates[0].as_str().expect("rate").into(),
            rates[1].as_str().expect("rate").into(),
        ],
        parameters: params
            .iter()
            .map(|(k, v)| Parameter::new(k, v.as_f64().expect("value")))
            .collect(),
        invariant: None,
        window: Window::default(),
    };
    Model::new(&spec).expect("reference model compiles")
}

/// Integrates with Quarry at rtol 1e-11 and compares every reference sample. The reference is
/// accurate to about 1e-11 relative; agreement is required to 5e-9 relative (with 0.1 added to
/// the scale near zero), and was measured at 4e-10 at most, which leaves room for both errors
/// over the whole interval.
fn check(name: &str) {
    let reference = load(name);
    let model = model_of(&reference);
    let start = floats(&reference["start"]);
    let t = floats(&reference["t"]);
    let xs = floats(&reference["x"]);
    let ys = floats(&reference["y"]);
    let t_end = *t.last().expect("samples");
    let opts = Options {
        rtol: 1e-11,
        atol: 1e-15,
        ..Options::default()
    };
    let traj = integrate::integrate(&model, 0.0, [start[0], start[1]], t_end, &opts, &[])
        .expect("integration starts");
    let mut worst = 0.0_f64;
    for ((&ti, &xi), &yi) in t.iter().zip(&xs).zip(&ys) {
        let s = traj.sample(ti).expect("sample inside the run");
        for (got, want) in [(s[0], xi), (s[1], yi)] {
            let err = (got - want).abs() / (1e-1 + want.abs());
            worst = worst.max(err);
        }
    }
    assert!(
        worst < 5e-9,
        "{name}: worst relative deviation {worst:e} from scipy"
    );
}

#[test]
fn lotka_volterra_forward_matches_scipy_dop853() {
    check("lotka_volterra_forward");
}

#[test]
fn lotka_volterra_backward_matches_scipy_dop853() {
    check("lotka_volterra_backward");
}

#[test]
fn rosenzweig_macarthur_matches_scipy_dop853() {
    check("rosenzweig_macarthur");
}

#[test]
fn competition_matches_scipy_dop853() {
    check("competition");
}

#[test]
fn van_der_pol_matches_scipy_dop853() {
    check("van_der_pol");
}
