//! Built-in models, written in the formula language.
//!
//! The default parameter values and windows are invented round numbers chosen to show each
//! model's typical behaviour; they are not estimates for any real population.

use crate::model::{ModelSpec, Parameter, Window};

/// A built-in model: a key for the command line, a title, and its specification.
#[derive(Clone, Copy, Debug)]
pub struct Builtin {
    /// Identifier used on the command line (`quarry analyze lotka-volterra`).
    pub key: &'static str,
    /// A title for figures and windows.
    pub title: &'static str,
    /// One line on what the model is.
    pub summary: &'static str,
    /// Variable names.
    variables: [&'static str; 2],
    /// The two rates.
    rates: [&'static str; 2],
    /// Default parameters.
    params: &'static [(&'static str, f64)],
    /// A known first integral.
    invariant: Option<&'static str>,
    /// Default window (x_min, x_max, y_min, y_max).
    window: [f64; 4],
}

impl Builtin {
    /// The model's specification with its default parameters.
    pub fn spec(&self) -> ModelSpec {
        ModelSpec {
            name: self.title.to_owned(),
            variables: self.variables.map(str::to_owned),
            rates: self.rates.map(str::to_owned),
            parameters: self
                .params
                .iter()
                .map(|&(n, v)| Parameter::new(n, v))
                .collect(),
            invariant: self.invariant.map(str::to_owned),
            window: Window {
                x_min: self.window[0],
                x_max: self.window[1],
                y_min: self.window[2],
                y_max: self.window[3],
            },
        }
    }
}

/// Every built-in model. The first is the default.
pub const BUILTINS: &[Builtin] = &[
    Builtin {
        key: "lotka-volterra",
        title: "Lotka–Volterra predator–prey",
        summary: "predator–prey with linear feeding: closed cycles around a centre",
        variables: ["x", "y"],
        rates: ["a*x - alpha*x*y", "-c*y + gamma*x*y"],
        params: &[("a", 1.0), ("alpha", 0.1), ("c", 1.5), ("gamma", 0.075)],
        invariant: Some("gamma*x - c*ln(x) + alpha*y - a*ln(y)"),
        window: [0.0, 60.0, 0.0, 40.0],
    },
    Builtin {
        key: "logistic-prey",
        title: "Logistic prey, linear predator",
        summary: "logistic prey, linear predator: a damped spiral to coexistence",
        variables: ["x", "y"],
        rates: ["r*x*(1 - x/K) - alpha*x*y", "-c*y + gamma*x*y"],
        params: &[
            ("r", 1.0),
            ("K", 60.0),
            ("alpha", 0.1),
            ("c", 1.5),
            ("gamma", 0.075),
        ],
        invariant: None,
        window: [0.0, 70.0, 0.0, 20.0],
    },
    Builtin {
        key: "holling-ii",
        title: "Logistic prey, Holling type II predator",
        summary: "logistic prey, saturating (Holling type II) predator: spiral or limit cycle",
        variables: ["x", "y"],
        rates: [
            "r*x*(1 - x/K) - a*x*y/(1 + a*h*x)",
            "b*a*x*y/(1 + a*h*x) - m*y",
        ],
        params: &[
            ("r", 1.0),
            ("K", 8.0),
            ("a", 1.0),
            ("h", 0.5),
            ("b", 0.5),
            ("m", 0.2),
        ],
        invariant: None,
        window: [0.0, 10.0, 0.0, 5.0],
    },
    Builtin {
        key: "holling-iii",
        title: "Logistic prey, Holling type III predator",
        summary: "logistic prey, sigmoid (Holling type III) predator",
        variables: ["x", "y"],
        rates: [
            "r*x*(1 - x/K) - a*x^2*y/(1 + a*h*x^2)",
            "b*a*x^2*y/(1 + a*h*x^2) - m*y",
        ],
        params: &[
            ("r", 1.0),
            ("K", 10.0),
            ("a", 0.5),
            ("h", 0.5),
            ("b", 0.4),
            ("m", 0.15),
        ],
        invariant: None,
        window: [0.0, 12.0, 0.0, 8.0],
    },
    Builtin {
        key: "beddington-deangelis",
        title: "Beddington–DeAngelis predator interference",
        summary: "predator interference (Beddington–DeAngelis feeding)",
        variables: ["x", "y"],
        rates: [
            "r*x*(1 - x/K) - a*x*y/(1 + a*h*x + w*y)",
            "b*a*x*y/(1 + a*h*x + w*y) - m*y",
        ],
        params: &[
            ("r", 1.0),
            ("K", 8.0),
            ("a", 1.0),
            ("h", 0.5),
            ("w", 0.3),
            ("b", 0.5),
            ("m", 0.2),
        ],
        invariant: None,
        window: [0.0, 10.0, 0.0, 5.0],
    },
    Builtin {
        key: "leslie-gower",
        title: "Leslie–Gower predator–prey",
        summary: "predator whose carrying capacity follows the prey (Leslie–Gower)",
        variables: ["x", "y"],
        rates: ["r*x*(1 - x/K) - a*x*y", "s*y*(1 - y/(n*x))"],
        params: &[("r", 1.0), ("K", 10.0), ("a", 0.2), ("s", 0.3), ("n", 0.5)],
        invariant: None,
        window: [0.0, 12.0, 0.0, 8.0],
    },
    Builtin {
        key: "competition",
        title: "Two competing stocks",
        summary: "two stocks competing for one resource (Lotka–Volterra competition)",
        variables: ["x", "y"],
        rates: ["r1*x*(1 - (x + a12*y)/K1)", "r2*y*(1 - (y + a21*x)/K2)"],
        params: &[
            ("r1", 1.0),
            ("r2", 0.8),
            ("K1", 10.0),
            ("K2", 8.0),
            ("a12", 0.6),
            ("a21", 0.7),
        ],
        invariant: None,
        window: [0.0, 12.0, 0.0, 10.0],
    },
    Builtin {
        key: "schaefer",
        title: "Schaefer harvested stock",
        summary: "one logistic stock under fishing effort E; y relaxes to the catch rate",
        variables: ["x", "y"],
        rates: ["r*x*(1 - x/K) - q*E*x", "q*E*x - y"],
        params: &[("r", 0.5), ("K", 100.0), ("q", 0.01), ("E", 20.0)],
        invariant: None,
        window: [0.0, 120.0, 0.0, 20.0],
    },
    Builtin {
        key: "van-der-pol",
        title: "Van der Pol oscillator",
        summary: "reference oscillator (not a population model): one attracting limit cycle",
        variables: ["x", "y"],
        rates: ["y", "mu*(1 - x^2)*y - x"],
        params: &[("mu", 1.0)],
        invariant: None,
        window: [-3.0, 3.0, -3.0, 3.0],
    },
    Builtin {
        key: "brusselator",
        title: "Brusselator",
        summary: "reference chemical oscillator: Hopf point at b = 1 + a^2",
        variables: ["x", "y"],
        rates: ["a - (b + 1)*x + x^2*y", "b*x - x^2*y"],
        params: &[("a", 1.0), ("b", 1.5)],
        invariant: None,
        window: [0.0, 4.0, 0.0, 4.0],
    },
];

/// Looks a built-in model up by key (case-insensitive, '_' and '-' alike).
pub fn builtin(key: &str) -> Option<&'static Builtin> {
    let norm = |s: &str| s.to_ascii_lowercase().replace('_', "-");
    let key = norm(key);
    BUILTINS.iter().find(|b| norm(b.key) == key)
}

/// The model `cargo run` opens with.
pub fn default_model() -> ModelSpec {
    BUILTINS[0].spec()
}
