//! A two-species model: two named state variables, their rates as formulas, parameters with
//! values, an optional first integral, and the window it is looked at in.
//!
//! [`ModelSpec`] is what a user writes (text); [`Model`] is its validated, compiled form. Every
//! analysis takes a `Model`. Parameter values are inputs of the compiled program, not baked into
//! it, so moving a slider is [`Model::set_param`] and never a recompilation.

use std::sync::OnceLock;

use serde::{Deserialize, Serialize};

use crate::compiled::{Backend, Formulas};
use crate::expr::{self, Expr};
use crate::integrate::System;

/// Names the formula language reserves; no variable or parameter may take them.
pub const RESERVED_NAMES: &[&str] = &[
    "pi", "e", "exp", "ln", "log10", "sqrt", "abs", "sin", "cos", "tan", "min", "max",
];

/// A named parameter and its value.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Parameter {
    /// Name as used in the formulas.
    pub name: String,
    /// Current value.
    pub value: f64,
}

impl Parameter {
    /// A parameter with a value.
    pub fn new(name: &str, value: f64) -> Self {
        Self {
            name: name.to_owned(),
            value,
        }
    }
}

/// The rectangle of the phase plane under study, in the model's own units.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Window {
    /// Left edge (first variable).
    pub x_min: f64,
    /// Right edge (first variable).
    pub x_max: f64,
    /// Bottom edge (second variable).
    pub y_min: f64,
    /// Top edge (second variable).
    pub y_max: f64,
}

impl Default for Window {
    fn default() -> Self {
        Self {
            x_min: 0.0,
            x_max: 10.0,
            y_min: 0.0,
            y_max: 10.0,
        }
    }
}

/// Largest magnitude of a window edge: beyond it grids, tolerances and plots lose meaning.
pub const MAX_WINDOW_EDGE: f64 = 1e15;

/// Smallest extent of a window axis relative to its edges' magnitude (a few million
/// distinguishable f64 values across it).
pub const MIN_WINDOW_EXTENT: f64 = 1e-9;

impl Window {
    /// A window from its edges; rejects non-finite edges and empty extents.
    pub fn new(x_min: f64, x_max: f64, y_min: f64, y_max: f64) -> Result<Self, ModelError> {
        let w = Self {
            x_min,
            x_max,
            y_min,
            y_max,
        };
        w.validate()?;
        Ok(w)
    }

    /// Checks that all edges are finite and within ±[`MAX_WINDOW_EDGE`], and that each extent
    /// is positive and not below [`MIN_WINDOW_EXTENT`] of its edges' magnitude.
    pub fn validate(&self) -> Result<(), ModelError> {
        let edges = [self.x_min, self.x_max, self.y_min, self.y_max];
        if edges.iter().any(|v| !v.is_finite()) {
            return Err(ModelError::BadWindow(
                "every edge must be a finite number".into(),
            ));
        }
        if self.x_min >= self.x_max {
            return Err(ModelError::BadWindow(format!(
                "x_min ({}) must be less than x_max ({})",
                self.x_min, self.x_max
            )));
        }
        if self.y_min >= self.y_max {
            return Err(ModelError::BadWindow(format!(
                "y_min ({}) must be less than y_max ({})",
                self.y_min, self.y_max
            )));
        }
        if edges.iter().any(|v| v.abs() > MAX_WINDOW_EDGE) {
            return Err(ModelError::BadWindow(format!(
                "every edge must lie within ±{MAX_WINDOW_EDGE:e} (rescale the variables' units)"
            )));
        }
        for (name, lo, hi) in [("x", self.x_min, self.x_max), ("y", self.y_min, self.y_max)] {
            if hi - lo < MIN_WINDOW_EXTENT * lo.abs().max(hi.abs()) {
                return Err(ModelError::BadWindow(format!(
                    "the {name} extent {lo} to {hi} is too narrow for its offset to compute in"
                )));
            }
        }
        Ok(())
    }

    /// Width of the window.
    pub fn width(&self) -> f64 {
        self.x_max - self.x_min
    }

    /// Height of the window.
    pub fn height(&self) -> f64 {
        self.y_max - self.y_min
    }

    /// Whether a point lies in the window grown by `slack` times its size on each side.
    pub fn contains_with_slack(&self, x: f64, y: f64, slack: f64) -> bool {
        let sx = slack * self.width();
        let sy = slack * self.height();
        x >= self.x_min - sx && x <= self.x_max + sx && y >= self.y_min - sy && y <= self.y_max + sy
    }
}

/// A model as a user writes it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ModelSpec {
    /// A short title.
    pub name: String,
    /// Names of the two state variables; the first is on the horizontal axis.
    pub variables: [String; 2],
    /// The two rates d(variables[0])/dt and d(variables[1])/dt as formulas.
    pub rates: [String; 2],
    /// Parameters and their values.
    pub parameters: Vec<Parameter>,
    /// A first integral H(x, y), if one is known.
    pub invariant: Option<String>,
    /// The window the model is studied in.
    pub window: Window,
}

/// Which of a model's texts an error concerns.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Field {
    /// The rate of the state variable with this index.
    Rate(usize, String),
    /// The first integral.
    Invariant,
}

impl std::fmt::Display for Field {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Field::Rate(_, var) => write!(f, "rate of {var} (d{var}/dt)"),
            Field::Invariant => write!(f, "first integral"),
        }
    }
}

/// Why a model could not be built or changed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    /// A formula failed to parse or names something undefined.
    #[error("{field}: column {column}: {message}")]
    Formula {
        /// Which formula.
        field: Field,
        /// 1-based column within the formula.
        column: usize,
        /// What is wrong.
        message: String,
    },
    /// A variable or parameter name is not allowed.
    #[error("name '{name}': {reason}")]
    BadName {
        /// The offending name.
        name: String,
        /// Why it is rejected.
        reason: String,
    },
    /// A parameter value is NaN or infinite.
    #[error("parameter '{name}' = {value} is not a finite number")]
    NonFiniteParameter {
        /// The parameter.
        name: String,
        /// Its value.
        value: f64,
    },
    /// No parameter of that name exists.
    #[error("unknown parameter '{name}' (the model has: {known})")]
    UnknownParameter {
        /// The name asked for.
        name: String,
        /// The parameters the model has, comma separated.
        known: String,
    },
    /// The window is unusable.
    #[error("window: {0}")]
    BadWindow(String),
}

/// Validates one identifier for use as a variable or parameter name.
fn check_name(name: &str) -> Result<(), ModelError> {
    let bad = |reason: &str| ModelError::BadName {
        name: name.to_owned(),
        reason: reason.to_owned(),
    };
    let mut chars = name.chars();
    match chars.next() {
        None => return Err(bad("a name cannot be empty")),
        Some(c) if !(c.is_ascii_alphabetic() || c == '_') => {
            return Err(bad("a name must start with a letter or '_'"));
        }
        _ => {}
    }
    if !chars.all(|c| c.is_ascii_alphanumeric() || c == '_') {
        return Err(bad("a name may hold only letters, digits and '_'"));
    }
    if RESERVED_NAMES.contains(&name) {
        return Err(bad("this name is reserved for a constant or function"));
    }
    Ok(())
}

/// Exact derivatives of both rates up to third order at a point, for the nonlinear tests on
/// linear centres. Index order within each array: value, ∂x, ∂y, ∂xx, ∂xy, ∂yy, ∂xxx, ∂xxy,
/// ∂xyy, ∂yyy.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Taylor3 {
    /// The first rate and its derivatives.
    pub f: [f64; 10],
    /// The second rate and its derivatives.
    pub g: [f64; 10],
}

/// A validated, compiled model.
#[derive(Clone, Debug)]
pub struct Model {
    spec: ModelSpec,
    rates: [Expr; 2],
    invariant: Option<Expr>,
    params: Vec<f64>,
    backend: Backend,
    /// Outputs: f, g.
    rhs: Formulas,
    /// Outputs: f, g, ∂f/∂x, ∂f/∂y, ∂g/∂x, ∂g/∂y.
    rhs_jac: Formulas,
    /// Outputs: H, ∂H/∂x, ∂H/∂y.
    invariant_code: Option<Formulas>,
    /// Built on first use: [`Taylor3`] outputs.
    taylor: OnceLock<Formulas>,
}

/// Parses one formula, naming the field on failure.
fn parse_field(src: &str, field: Field) -> Result<Expr, ModelError> {
    expr::parse(src).map_err(|e| ModelError::Formula {
        field,
        column: e.column,
        message: e.message,
    })
}

impl Model {
    /// Validates and compiles a model with the fastest available evaluator.
    pub fn new(spec: &ModelSpec) -> Result<Self, ModelError> {
        Self::with_backend(spec, Backend::Auto)
    }

    /// Validates and compiles a model with a chosen evaluator.
    pub fn with_backend(spec: &ModelSpec, backend: Backend) -> Result<Self, ModelError> {
        spec.window.validate()?;
        for v in &spec.variables {
            check_name(v)?;
        }
        if spec.variables[0] == spec.variables[1] {
            return Err(ModelError::BadName {
                name: spec.variables[0].clone(),
                reason: "the two variables need different names".into(),
            });
        }
        for (i, p) in spec.parameters.iter().enumerate() {
            check_name(&p.name)?;
            if spec.variables.contains(&p.name) {
                return Err(ModelError::BadName {
                    name: p.name.clone(),
                    reason: "a parameter cannot share a variable's name".into(),
                });
            }
            if spec.parameters[..i].iter().any(|q| q.name == p.name) {
                return Err(ModelError::BadName {
                    name: p.name.clone(),
                    reason: "the parameter is defined twice".into(),
                });
            }
            if !p.value.is_finite() {
                return Err(ModelError::NonFiniteParameter {
                    name: p.name.clone(),
                    value: p.value,
                });
            }
        }
        let rate_fields = [0, 1].map(|i| Field::Rate(i, spec.variables[i].clone()));
        let rates = [
            parse_field(&spec.rates[0], rate_fields[0].clone())?,
            parse_field(&spec.rates[1], rate_fields[1].clone())?,
        ];
        let invariant = match &spec.invariant {
            Some(src) if !src.trim().is_empty() => Some(parse_field(src, Field::Invariant)?),
            _ => None,
        };

        let x = spec.variables[0].as_str();
        let y = spec.variables[1].as_str();
        let mut inputs: Vec<&str> = vec![x, y];
        inputs.extend(spec.parameters.iter().map(|p| p.name.as_str()));
        let compile_err = |fields: &[Field]| {
            let fields = fields.to_vec();
            move |e: expr::CompileError| ModelError::Formula {
                field: fields.get(e.formula).cloned().unwrap_or(Field::Invariant),
                column: e.column,
                message: format!("unknown name '{}'", e.name),
            }
        };

        let rhs = Formulas::compile(&[&rates[0], &rates[1]], &inputs, 2, backend)
            .map_err(compile_err(&rate_fields))?;
        let jac = [
            rates[0].derivative(x),
            rates[0].derivative(y),
            rates[1].derivative(x),
            rates[1].derivative(y),
        ];
        let rhs_jac = Formulas::compile(
            &[&rates[0], &rates[1], &jac[0], &jac[1], &jac[2], &jac[3]],
            &inputs,
            2,
            backend,
        )
        .map_err(compile_err(&[
            rate_fields[0].clone(),
            rate_fields[1].clone(),
            rate_fields[0].clone(),
            rate_fields[0].clone(),
            rate_fields[1].clone(),
            rate_fields[1].clone(),
        ]))?;
        let invariant_code = match &invariant {
            Some(h) => {
                let hx = h.derivative(x);
                let hy = h.derivative(y);
                Some(
                    Formulas::compile(&[h, &hx, &hy], &inputs, 2, backend).map_err(compile_err(
                        &[Field::Invariant, Field::Invariant, Field::Invariant],
                    ))?,
                )
            }
            None => None,
        };
        Ok(Self {
            spec: spec.clone(),
            rates,
            invariant,
            params: spec.parameters.iter().map(|p| p.value).collect(),
            backend,
            rhs,
            rhs_jac,
            invariant_code,
            taylor: OnceLock::new(),
        })
    }

    /// The specification this model was built from, with current parameter values.
    pub fn spec(&self) -> &ModelSpec {
        &self.spec
    }

    /// The two variable names.
    pub fn variables(&self) -> [&str; 2] {
        [&self.spec.variables[0], &self.spec.variables[1]]
    }

    /// The parsed rates.
    pub fn rate_exprs(&self) -> &[Expr; 2] {
        &self.rates
    }

    /// The parsed first integral, if any.
    pub fn invariant_expr(&self) -> Option<&Expr> {
        self.invariant.as_ref()
    }

    /// Current parameter values, in the order of [`ModelSpec::parameters`].
    pub fn params(&self) -> &[f64] {
        &self.params
    }

    /// The window.
    pub fn window(&self) -> Window {
        self.spec.window
    }

    /// Replaces the window.
    pub fn set_window(&mut self, window: Window) -> Result<(), ModelError> {
        window.validate()?;
        self.spec.window = window;
        Ok(())
    }

    /// The value of a parameter by name.
    pub fn param(&self, name: &str) -> Option<f64> {
        self.spec
            .parameters
            .iter()
            .position(|p| p.name == name)
            .map(|i| self.params[i])
    }

    /// Sets a parameter by name. The model keeps its old value on error.
    pub fn set_param(&mut self, name: &str, value: f64) -> Result<(), ModelError> {
        let Some(i) = self.spec.parameters.iter().position(|p| p.name == name) else {
            return Err(ModelError::UnknownParameter {
                name: name.to_owned(),
                known: self
                    .spec
                    .parameters
                    .iter()
                    .map(|p| p.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
            });
        };
        if !value.is_finite() {
            return Err(ModelError::NonFiniteParameter {
                name: name.to_owned(),
                value,
            });
        }
        self.params[i] = value;
        self.spec.parameters[i].value = value;
        Ok(())
    }

    /// Both rates at a point.
    #[inline]
    pub fn rates(&self, x: f64, y: f64) -> [f64; 2] {
        self.rhs.eval_planar(x, y, &self.params)
    }

    /// Both rates and the exact Jacobian `[[∂f/∂x, ∂f/∂y], [∂g/∂x, ∂g/∂y]]` at a point.
    #[inline]
    pub fn rates_and_jacobian(&self, x: f64, y: f64) -> ([f64; 2], [[f64; 2]; 2]) {
        let mut out = [0.0; 6];
        self.rhs_jac.eval(&[x, y], &self.params, &mut out);
        ([out[0], out[1]], [[out[2], out[3]], [out[4], out[5]]])
    }

    /// The exact Jacobian at a point.
    pub fn jacobian(&self, x: f64, y: f64) -> [[f64; 2]; 2] {
        self.rates_and_jacobian(x, y).1
    }

    /// Whether the model has a first integral.
    pub fn has_invariant(&self) -> bool {
        self.invariant_code.is_some()
    }

    /// H and its gradient at a point, if the model has a first integral.
    pub fn invariant_and_gradient(&self, x: f64, y: f64) -> Option<(f64, [f64; 2])> {
        let code = self.invariant_code.as_ref()?;
        let mut out = [0.0; 3];
        code.eval(&[x, y], &self.params, &mut out);
        Some((out[0], [out[1], out[2]]))
    }

    /// H at a point, if the model has a first integral.
    pub fn invariant(&self, x: f64, y: f64) -> Option<f64> {
        self.invariant_and_gradient(x, y).map(|(h, _)| h)
    }

    /// The rates and their exact derivatives up to third order at a point.
    pub fn taylor3(&self, x: f64, y: f64) -> Taylor3 {
        let code = self.taylor.get_or_init(|| self.compile_taylor());
        let mut out = [0.0; 20];
        code.eval(&[x, y], &self.params, &mut out);
        let mut t = Taylor3 {
            f: [0.0; 10],
            g: [0.0; 10],
        };
        t.f.copy_from_slice(&out[..10]);
        t.g.copy_from_slice(&out[10..]);
        t
    }

    fn compile_taylor(&self) -> Formulas {
        let [x, y] = self.variables();
        let mut exprs = Vec::with_capacity(20);
        for r in &self.rates {
            let rx = r.derivative(x);
            let ry = r.derivative(y);
            let rxx = rx.derivative(x);
            let rxy = rx.derivative(y);
            let ryy = ry.derivative(y);
            let rxxx = rxx.derivative(x);
            let rxxy = rxx.derivative(y);
            let rxyy = rxy.derivative(y);
            let ryyy = ryy.derivative(y);
            exprs.extend([r.clone(), rx, ry, rxx, rxy, ryy, rxxx, rxxy, rxyy, ryyy]);
        }
        let mut inputs: Vec<&str> = vec![x, y];
        inputs.extend(self.spec.parameters.iter().map(|p| p.name.as_str()));
        let refs: Vec<&Expr> = exprs.iter().collect();
        // The rates compiled before over the same names, and derivatives introduce no new
        // names, so this cannot fail; an empty program would only give NaN.
        Formulas::compile(&refs, &inputs, 2, self.backend).unwrap_or_else(|_| self.rhs.clone())
    }

    /// Whether the rates run as native code.
    pub fn is_native(&self) -> bool {
        self.rhs.is_native()
    }

    /// The compiled first integral (outputs H, ∂H/∂x, ∂H/∂y), for batch evaluation over grids.
    pub fn invariant_formulas(&self) -> Option<&Formulas> {
        self.invariant_code.as_ref()
    }

    /// The compiled rates (outputs f, g), for batch evaluation over grids.
    pub fn rate_formulas(&self) -> &Formulas {
        &self.rhs
    }
}

impl System<2> for Model {
    #[inline]
    fn rhs(&self, _t: f64, y: &[f64; 2], dy: &mut [f64; 2]) {
        *dy = self.rhs.eval_planar(y[0], y[1], &self.params);
    }
}
