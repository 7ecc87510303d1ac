//! Adaptive explicit Runge–Kutta integration with dense output and events.
//!
//! Every orbit Quarry draws, every return map and every quadrature along an orbit comes out of
//! this module, so it favours predictable, documented behaviour over cleverness:
//!
//! * two embedded Dormand–Prince pairs, [`Method::Dopri5`] (5(4), 4th-order dense output) and
//!   [`Method::Dop853`] (8th order with a 5(3) error estimate, 7th-order dense output), with the
//!   step-size control, initial-step heuristic and stiffness test of Hairer's DOPRI5/DOP853;
//! * the state is a fixed-size array `[f64; N]` (2 for an orbit, 4 with the quadratures
//!   ∫x dt and ∫y dt, 6 with the variational equation), so nothing is allocated per step;
//! * integration runs forward or backward in time (`t_end < t0`);
//! * a steppable [`Solver`] whose [`Solver::step`] says what happened (an accepted step, an event,
//!   the end) so a caller can spend a budget per frame; a failure is an [`IntegrationError`] that
//!   carries the time where it happened, and the last good state is kept;
//! * events `g(t, y) = 0` ([`Event`]) located on the dense output with a bracketing root finder;
//! * a convenience driver [`integrate`] that records a [`Trajectory`] which can be sampled
//!   anywhere in the integrated interval.
//!
//! ```
//! use quarry_core::integrate::{integrate, FnSystem, Options, Stop};
//!
//! // Lotka–Volterra predator–prey.
//! let lv = FnSystem(|_t: f64, y: &[f64; 2], dy: &mut [f64; 2]| {
//!     dy[0] = y[0] * (1.0 - 0.1 * y[1]);
//!     dy[1] = -y[1] * (1.5 - 0.075 * y[0]);
//! });
//! let traj = integrate(&lv, 0.0, [10.0, 5.0], 20.0, &Options::default(), &[]).unwrap();
//! assert_eq!(traj.stop(), Stop::ReachedEnd);
//! let mid = traj.sample(7.3).unwrap();
//! assert!(mid[0] > 0.0 && mid[1] > 0.0);
//! ```

mod controller;
mod dense;
mod dop853;
mod dopri5;
mod events;
mod rk;
mod solver;
mod trajectory;

#[cfg(test)]
mod order_conditions;
#[cfg(test)]
mod tests;

pub use dense::Dense;
pub use events::{Direction, EVENT_T_RTOL, Event, EventHit, FnEvent, WindowExit};
pub use solver::{Finish, STEP_TOO_SMALL_ULPS, Solver, StepResult};
pub use trajectory::{MAX_RESAMPLE_ROWS, Stop, Trajectory, integrate};

/// A system of ordinary differential equations `y' = f(t, y)` with a state of dimension `N`.
///
/// The derivative is written into an out-parameter so that no allocation happens per
/// evaluation. Implementations should be pure: the solver may call `rhs` at trial points that
/// it later rejects. Non-finite results (NaN, ±inf) are allowed and make the solver shrink the
/// step or stop with [`IntegrationError::NonFinite`]; they never cause a panic.
pub trait System<const N: usize> {
    /// Writes `f(t, y)` into `dy`. `t` is the independent variable (time), `y` the state.
    fn rhs(&self, t: f64, y: &[f64; N], dy: &mut [f64; N]);
}

impl<S: System<N> + ?Sized, const N: usize> System<N> for &S {
    #[inline(always)]
    fn rhs(&self, t: f64, y: &[f64; N], dy: &mut [f64; N]) {
        (**self).rhs(t, y, dy);
    }
}

/// Adapter that makes a closure `|t, y: &[f64; N], dy: &mut [f64; N]|` a [`System`].
///
/// ```
/// use quarry_core::integrate::{FnSystem, System};
/// let decay = FnSystem(|_t: f64, y: &[f64; 1], dy: &mut [f64; 1]| dy[0] = -y[0]);
/// let mut dy = [0.0];
/// decay.rhs(0.0, &[2.0], &mut dy);
/// assert_eq!(dy, [-2.0]);
/// ```
#[derive(Clone, Copy, Debug)]
pub struct FnSystem<F>(pub F);

impl<F, const N: usize> System<N> for FnSystem<F>
where
    F: Fn(f64, &[f64; N], &mut [f64; N]),
{
    #[inline(always)]
    fn rhs(&self, t: f64, y: &[f64; N], dy: &mut [f64; N]) {
        (self.0)(t, y, dy);
    }
}

/// The Runge–Kutta pair used to advance the solution.
#[derive(
    Clone, Copy, Debug, PartialEq, Eq, Hash, Default, serde::Serialize, serde::Deserialize,
)]
pub enum Method {
    /// Dormand–Prince 5(4): 6 evaluations per step (FSAL), 4th-order dense output from
    /// 5 coefficient vectors per step. Efficient for loose tolerances (rtol ≳ 1e-6).
    Dopri5,
    /// Dormand–Prince 8(5,3) as in Hairer's DOP853: 12 evaluations per step plus 3 for the
    /// 7th-order dense output. Efficient for tight tolerances; the default.
    #[default]
    Dop853,
}

impl Method {
    /// Classical order of the propagated solution (5 or 8).
    pub const fn order(self) -> u32 {
        match self {
            Self::Dopri5 => 5,
            Self::Dop853 => 8,
        }
    }
}

/// Default relative tolerance of [`Options::rtol`].
pub const DEFAULT_RTOL: f64 = 1e-8;
/// Default absolute tolerance of [`Options::atol`].
pub const DEFAULT_ATOL: f64 = 1e-10;
/// Default step limit of [`Options::max_steps`] (attempted steps, accepted plus rejected).
pub const DEFAULT_MAX_STEPS: usize = 500_000;
/// Default bound of [`Options::blow_up`]: a component larger than this in magnitude stops the
/// integration with [`IntegrationError::BlowUp`].
pub const DEFAULT_BLOW_UP: f64 = 1e12;
/// Default period of the stiffness test of [`Options::stiffness_check`] (Hairer's NSTIFF).
pub const DEFAULT_STIFFNESS_CHECK: usize = 1000;
/// Default number of sub-intervals per step on which events are sampled
/// ([`Options::event_subintervals`]).
pub const DEFAULT_EVENT_SUBINTERVALS: usize = 4;
/// Smallest accepted relative tolerance. Below about ten units of roundoff the error estimate is
/// dominated by rounding and the step size collapses (Hairer's codes refuse `rtol ≤ 10·ε`).
pub const MIN_RTOL: f64 = 10.0 * f64::EPSILON;

/// Integration settings. [`Options::default`] documents every default.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Options {
    /// The Runge–Kutta pair. Default [`Method::Dop853`].
    pub method: Method,
    /// Relative tolerance, at least [`MIN_RTOL`]. Default [`DEFAULT_RTOL`] (1e-8).
    pub rtol: f64,
    /// Absolute tolerance, strictly positive (population sizes reach zero, where a purely
    /// relative test is meaningless). Default [`DEFAULT_ATOL`] (1e-10).
    pub atol: f64,
    /// Magnitude of the first step (its sign follows the direction of integration). `None`
    /// chooses it automatically with Hairer's `hinit` (2 extra evaluations). Default `None`.
    pub h_init: Option<f64>,
    /// Largest step magnitude, positive, may be infinite. Default `f64::INFINITY` (the whole
    /// interval `|t_end − t0|`).
    pub h_max: f64,
    /// Largest number of attempted steps (accepted plus rejected) before
    /// [`IntegrationError::MaxSteps`]. Default [`DEFAULT_MAX_STEPS`] (500 000).
    pub max_steps: usize,
    /// A state component larger than this in magnitude stops with
    /// [`IntegrationError::BlowUp`]. Positive, may be infinite to disable. Default
    /// [`DEFAULT_BLOW_UP`] (1e12).
    pub blow_up: f64,
    /// Run Hairer's stiffness test every this many accepted steps; `None` disables it. Fifteen
    /// consecutive positive tests stop with [`IntegrationError::Stiff`]. Default
    /// `Some(`[`DEFAULT_STIFFNESS_CHECK`]`)`.
    pub stiffness_check: Option<usize>,
    /// Each accepted step is cut into this many equal sub-intervals on which every event
    /// function is sampled (through the dense output), so that two crossings inside one step
    /// are still seen. 1 only compares the step end points. Must be ≥ 1. Default
    /// [`DEFAULT_EVENT_SUBINTERVALS`] (4).
    pub event_subintervals: usize,
    /// Compute the full dense output. For [`Method::Dop853`] this costs 3 evaluations per step;
    /// when `false` the interpolant degrades to the cubic Hermite polynomial through both step
    /// ends (3rd order). No effect for [`Method::Dopri5`], whose dense output is free.
    /// Default `true`.
    pub dense_output: bool,
}

impl Default for Options {
    fn default() -> Self {
        Self {
            method: Method::Dop853,
            rtol: DEFAULT_RTOL,
            atol: DEFAULT_ATOL,
            h_init: None,
            h_max: f64::INFINITY,
            max_steps: DEFAULT_MAX_STEPS,
            blow_up: DEFAULT_BLOW_UP,
            stiffness_check: Some(DEFAULT_STIFFNESS_CHECK),
            event_subintervals: DEFAULT_EVENT_SUBINTERVALS,
            dense_output: true,
        }
    }
}

impl Options {
    /// The defaults with another method.
    pub fn with_method(method: Method) -> Self {
        Self {
            method,
            ..Self::default()
        }
    }

    /// The defaults with other tolerances.
    pub fn with_tolerances(rtol: f64, atol: f64) -> Self {
        Self {
            rtol,
            atol,
            ..Self::default()
        }
    }

    /// Checks every field; the error names the first offending one.
    pub fn validate(&self) -> Result<(), SetupError> {
        let bad = |field: &'static str, requirement: &'static str| {
            Err(SetupError::InvalidOption { field, requirement })
        };
        if !(self.rtol.is_finite() && self.rtol >= MIN_RTOL) {
            return bad("rtol", "finite and at least 10·ε");
        }
        if !(self.atol.is_finite() && self.atol > 0.0) {
            return bad("atol", "finite and positive");
        }
        if let Some(h) = self.h_init
            && !(h.is_finite() && h != 0.0)
        {
            return bad("h_init", "finite and non-zero");
        }
        if self.h_max.is_nan() || self.h_max <= 0.0 {
            return bad("h_max", "positive");
        }
        if self.max_steps == 0 {
            return bad("max_steps", "at least 1");
        }
        if self.blow_up.is_nan() || self.blow_up <= 0.0 {
            return bad("blow_up", "positive");
        }
        if self.stiffness_check == Some(0) {
            return bad("stiffness_check", "None or at least 1");
        }
        if self.event_subintervals == 0 {
            return bad("event_subintervals", "at least 1");
        }
        Ok(())
    }
}

/// Counters of the work done so far.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Stats {
    /// Accepted steps.
    pub accepted_steps: usize,
    /// Rejected steps (error too large, or a non-finite trial value).
    pub rejected_steps: usize,
    /// Evaluations of the right-hand side, including the initial-step heuristic and the extra
    /// stages of the dense output.
    pub rhs_evals: usize,
}

/// A problem that cannot be started: bad options or a bad initial value.
#[derive(Clone, Copy, Debug, PartialEq, thiserror::Error)]
pub enum SetupError {
    /// An [`Options`] field is out of range.
    #[error("option `{field}` must be {requirement}")]
    InvalidOption {
        /// The field's name.
        field: &'static str,
        /// What it must satisfy.
        requirement: &'static str,
    },
    /// `t0` or `t_end` is NaN or infinite.
    #[error("the time interval must be finite")]
    NonFiniteTime,
    /// A component of the initial state is NaN or infinite.
    #[error("initial state component {index} is not finite")]
    NonFiniteInitialState {
        /// The component.
        index: usize,
    },
}

/// Why an integration stopped early. Each variant carries the time `t` where it happened; the
/// solver keeps the last good state (see [`Solver::t`], [`Solver::y`]).
#[derive(Clone, Copy, Debug, PartialEq, thiserror::Error)]
pub enum IntegrationError {
    /// [`Options::max_steps`] steps were attempted.
    #[error("step limit of {max_steps} reached at t = {t}")]
    MaxSteps {
        /// Time of the last good state.
        t: f64,
        /// The limit.
        max_steps: usize,
    },
    /// The state or its derivative became NaN or infinite and shrinking the step did not help.
    #[error("state or derivative is not finite at t = {t}")]
    NonFinite {
        /// Time of the last good state.
        t: f64,
    },
    /// A component exceeded [`Options::blow_up`] in magnitude.
    #[error("solution exceeds the blow-up bound at t = {t}")]
    BlowUp {
        /// End of the step at which the bound was exceeded (the state there is not kept).
        t: f64,
    },
    /// The step size fell below roundoff relative to `t` (`|h| < 16·ε·|t|`), typically at a
    /// singularity.
    #[error("step size {h} too small at t = {t}")]
    StepTooSmall {
        /// Time of the last good state.
        t: f64,
        /// The step that was too small.
        h: f64,
    },
    /// Hairer's stiffness test was positive 15 times in a row: an explicit method would crawl.
    #[error("the problem appears stiff at t = {t}")]
    Stiff {
        /// Time of the last good state.
        t: f64,
    },
}

impl IntegrationError {
    /// The time carried by the error.
    pub fn t(&self) -> f64 {
        match *self {
            Self::MaxSteps { t, .. }
            | Self::NonFinite { t }
            | Self::BlowUp { t }
            | Self::StepTooSmall { t, .. }
            | Self::Stiff { t } => t,
        }
    }
}
