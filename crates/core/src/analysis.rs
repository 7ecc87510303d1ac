//! Equilibria with everything known about them: position, linearisation, class and, for a
//! linear centre, the nonlinear verdict.

use crate::equilibria::{EquilibriumOptions, find_equilibria};
use crate::linear::{Class, Linearisation, linearise};
use crate::model::Model;
use crate::verdict::{self, InvariantCheck, NonlinearVerdict};

/// One classified equilibrium.
#[derive(Clone, Debug, PartialEq)]
pub struct Equilibrium {
    /// Position (first variable).
    pub x: f64,
    /// Position (second variable).
    pub y: f64,
    /// Max-norm of the rates at the point.
    pub residual: f64,
    /// The linearisation and its class.
    pub linear: Linearisation,
    /// For a linear centre, what the full model does; `None` otherwise.
    pub nonlinear: Option<NonlinearVerdict>,
}

impl Equilibrium {
    /// The linear class.
    pub fn class(&self) -> Class {
        self.linear.class
    }

    /// One plain sentence for people.
    pub fn sentence(&self) -> String {
        let lin = &self.linear;
        match (&self.nonlinear, lin.class) {
            (Some(v), _) => v.sentence(),
            (None, Class::Saddle) => {
                "A saddle: orbits approach along one direction and leave along the other.".into()
            }
            (None, Class::StableNode | Class::StableDegenerateNode | Class::StableStar) => {
                "Stable: nearby orbits approach it without turning around it.".into()
            }
            (None, Class::UnstableNode | Class::UnstableDegenerateNode | Class::UnstableStar) => {
                "Unstable: nearby orbits move away without turning around it.".into()
            }
            (None, Class::StableSpiral) => format!(
                "Stable: nearby orbits spiral in, turning with period {:.4} and shrinking by a factor {:.3} per turn.",
                period(lin),
                (lin.trace * 0.5 * period(lin)).exp()
            ),
            (None, Class::UnstableSpiral) => format!(
                "Unstable: nearby orbits spiral out, turning with period {:.4} and growing by a factor {:.3} per turn.",
                period(lin),
                (lin.trace * 0.5 * period(lin)).exp()
            ),
            (None, Class::Center) => "A linear centre.".into(),
            (None, Class::ZeroEigenvalue) => {
                "A zero eigenvalue: the linearisation cannot decide stability (not hyperbolic)."
                    .into()
            }
        }
    }
}

/// The period 2π/ω of the linearised rotation, infinite for real eigenvalues.
pub fn period(lin: &Linearisation) -> f64 {
    let w = lin.eigenvalues[0].im.abs();
    if w > 0.0 {
        std::f64::consts::TAU / w
    } else {
        f64::INFINITY
    }
}

/// The whole analysis of a model's equilibria.
#[derive(Clone, Debug, PartialEq)]
pub struct Analysis {
    /// Every equilibrium in the window, sorted by x then y.
    pub equilibria: Vec<Equilibrium>,
    /// True when the search stopped at its maximum count (likely a curve of equilibria).
    pub truncated: bool,
    /// The result of checking the model's first integral, if it has one.
    pub invariant: Option<InvariantCheck>,
}

/// Finds, linearises and classifies every equilibrium of `model` in its window.
pub fn analyze(model: &Model) -> Analysis {
    let roots = find_equilibria(model, &EquilibriumOptions::default());
    let invariant = verdict::check_invariant(model);
    let equilibria = roots
        .roots
        .iter()
        .map(|r| {
            let linear = linearise(model.jacobian(r.x, r.y));
            let nonlinear = (linear.class == Class::Center)
                .then(|| verdict::decide(model, r.x, r.y, &linear, invariant));
            Equilibrium {
                x: r.x,
                y: r.y,
                residual: r.residual,
                linear,
                nonlinear,
            }
        })
        .collect();
    Analysis {
        equilibria,
        truncated: roots.truncated,
        invariant,
    }
}
