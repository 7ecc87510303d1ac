//! Model constructors shared by the unit tests.

use crate::library;
use crate::model::{Model, ModelSpec, Parameter, Window};

/// A built-in model with its default parameters.
pub(crate) fn builtin(key: &str) -> Model {
    Model::new(&library::builtin(key).expect("built in").spec()).expect("compiles")
}

/// A model in x and y from its rates, parameters, optional first integral and window
/// `[x_min, x_max, y_min, y_max]`.
pub(crate) fn model(
    rates: [&str; 2],
    params: &[(&str, f64)],
    invariant: Option<&str>,
    window: [f64; 4],
) -> Model {
    let spec = ModelSpec {
        name: "test".into(),
        variables: ["x".into(), "y".into()],
        rates: rates.map(str::to_owned),
        parameters: params.iter().map(|&(n, v)| Parameter::new(n, v)).collect(),
        invariant: invariant.map(str::to_owned),
        window: Window {
            x_min: window[0],
            x_max: window[1],
            y_min: window[2],
            y_max: window[3],
        },
    };
    Model::new(&spec).expect("model compiles")
}
