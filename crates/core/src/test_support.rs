//! Model constructors shared by the unit tests.

use crate::library;
use crate::model::{Model, ModelSpec, Parameter, Window};
use crate::scene::Point;

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

/// Distance from `p` to the segment from `a` to `b`.
pub(crate) fn distance_to_segment(p: Point, a: Point, b: Point) -> f64 {
    let (ux, uy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = ux * ux + uy * uy;
    let t = if len2 > 0.0 {
        (((p[0] - a[0]) * ux + (p[1] - a[1]) * uy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (p[0] - a[0] - t * ux).hypot(p[1] - a[1] - t * uy)
}
