//! The steppable solver: one [`Solver::step`] call advances by one accepted step (or reports an
//! event or the end), so a caller can spend a budget per frame and stop whenever it likes.

use super::controller::{Controller, initial_step};
use super::dense::Dense;
use super::events::{Event, EventHit, scan_step};
use super::rk::{Trial, all_finite};
use super::{IntegrationError, Method, Options, SetupError, Stats, System, dop853, dopri5};

/// A step is too small when `|h| < STEP_TOO_SMALL_ULPS·ε·|t|`: `t + h` then barely differs
/// from `t` in floating point.
pub const STEP_TOO_SMALL_ULPS: f64 = 16.0;
/// Factor applied to the step after a trial produced a non-finite value (an overshoot into a
/// region where the rates are undefined, e.g. `ln` of a negative population).
const NONFINITE_SHRINK: f64 = 0.1;
/// Consecutive non-finite trials from one point before giving up with
/// [`IntegrationError::NonFinite`] (the step has then shrunk by `0.1^12`).
const MAX_NONFINITE_RETRIES: usize = 12;
/// Consecutive positive stiffness tests that stop the integration (Hairer's 15).
const STIFF_TESTS_TO_STOP: usize = 15;
/// Consecutive negative stiffness tests that reset the count (Hairer's 6).
const NONSTIFF_TESTS_TO_RESET: usize = 6;
/// The last step is stretched to `t_end` when `t + LAST_STEP_STRETCH·h` would pass it, which
/// avoids a sliver of a final step (Hairer).
const LAST_STEP_STRETCH: f64 = 1.01;
/// Largest stage count of both methods (DOP853 with its dense-output stages).
const MAX_STAGES: usize = dop853::STAGES;

/// How a run ended successfully.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Finish {
    /// The solution reached `t_end`.
    ReachedEnd,
    /// A terminal event ended the run at `t`.
    TerminalEvent {
        /// The event's index.
        index: usize,
        /// The event time (the solver's final time).
        t: f64,
    },
}

/// What one call of [`Solver::step`] did.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum StepResult<const N: usize> {
    /// A step from `t_prev` to `t` was accepted; [`Solver::interpolate`] is valid on it. If a
    /// terminal event cut the step short, `t` is the event time.
    Accepted {
        /// Start of the step.
        t_prev: f64,
        /// End of the step (the solver's new time).
        t: f64,
    },
    /// An event located inside the last accepted step. Events of one step are reported by
    /// successive calls in time order, after its `Accepted`, before the next step is taken.
    Event(EventHit<N>),
    /// The run is over. Further calls return the same value without doing any work.
    Finished(Finish),
}

/// Adaptive Dormand–Prince integration of `system` from `(t0, y0)` towards `t_end`, one step per
/// call of [`Solver::step`].
///
/// ```
/// use quarry_core::integrate::{FnSystem, Options, Solver, StepResult};
/// let osc = FnSystem(|_t: f64, y: &[f64; 2], dy: &mut [f64; 2]| {
///     dy[0] = y[1];
///     dy[1] = -y[0];
/// });
/// let mut solver = Solver::new(osc, Options::default(), 0.0, [1.0, 0.0], 10.0).unwrap();
/// loop {
///     match solver.step() {
///         Ok(StepResult::Accepted { .. } | StepResult::Event(_)) => {}
///         Ok(StepResult::Finished(_)) => break,
///         Err(e) => panic!("{e}"),
///     }
/// }
/// assert!((solver.y()[0] - 10f64.cos()).abs() < 1e-6);
/// ```
pub struct Solver<'a, S, const N: usize> {
    system: S,
    options: Options,
    t_end: f64,
    /// +1 forward, −1 backward.
    direction: f64,
    /// `min(h_max, |t_end − t0|)`.
    h_max: f64,
    t: f64,
    y: [f64; N],
    /// `f(t, y)`, reused as the first stage of the next step.
    f: [f64; N],
    /// Next step to try (signed); 0 before the start.
    h: f64,
    controller: Controller,
    dense: Dense<N>,
    stats: Stats,
    attempts: usize,
    stiff_tests: usize,
    nonstiff_tests: usize,
    nonfinite_retries: usize,
    last_reject_nonfinite: bool,
    started: bool,
    events: Vec<Box<dyn Event<N> + 'a>>,
    g: Vec<f64>,
    pending: Vec<EventHit<N>>,
    next_pending: usize,
    outcome: Option<Result<Finish, IntegrationError>>,
}

impl<'a, S: System<N>, const N: usize> Solver<'a, S, N> {
    /// Prepares an integration from `(t0, y0)` to `t_end` (backward if `t_end < t0`). No
    /// right-hand-side evaluation happens until the first [`Solver::step`].
    pub fn new(
        system: S,
        options: Options,
        t0: f64,
        y0: [f64; N],
        t_end: f64,
    ) -> Result<Self, SetupError> {
        const { assert!(N > 0, "the state needs at least one component") };
        options.validate()?;
        if !(t0.is_finite() && t_end.is_finite()) {
            return Err(SetupError::NonFiniteTime);
        }
        if let Some(index) = y0.iter().position(|v| !v.is_finite()) {
            return Err(SetupError::NonFiniteInitialState { index });
        }
        let direction = if t_end < t0 { -1.0 } else { 1.0 };
        Ok(Self {
            system,
            options,
            t_end,
            direction,
            h_max: options.h_max.min((t_end - t0).abs()),
            t: t0,
            y: y0,
            f: [0.0; N],
            h: 0.0,
            controller: Controller::new(options.method),
            dense: Dense::constant(options.method, t0, y0),
            stats: Stats::default(),
            attempts: 0,
            stiff_tests: 0,
            nonstiff_tests: 0,
            nonfinite_retries: 0,
            last_reject_nonfinite: false,
            started: false,
            events: Vec::new(),
            g: Vec::new(),
            pending: Vec::new(),
            next_pending: 0,
            outcome: None,
        })
    }

    /// Adds an event and returns its index (as reported in [`EventHit::index`]). An event added
    /// mid-run is watched from the current state on.
    pub fn add_event(&mut self, event: impl Event<N> + 'a) -> usize {
        self.g.push(event.value(self.t, &self.y));
        self.events.push(Box::new(event));
        self.events.len() - 1
    }

    /// Current time: the end of the last accepted step (or an event that ended the run).
    pub fn t(&self) -> f64 {
        self.t
    }

    /// Current state, at [`Solver::t`]. After a failure it is the last good state.
    pub fn y(&self) -> [f64; N] {
        self.y
    }

    /// The target time.
    pub fn t_end(&self) -> f64 {
        self.t_end
    }

    /// The options the solver runs with.
    pub fn options(&self) -> &Options {
        &self.options
    }

    /// Work done so far.
    pub fn stats(&self) -> Stats {
        self.stats
    }

    /// The step size the next step will try (signed; 0 before the first step).
    pub fn next_step_size(&self) -> f64 {
        self.h
    }

    /// How the run ended, once it has.
    pub fn outcome(&self) -> Option<Result<Finish, IntegrationError>> {
        self.outcome
    }

    /// The dense output of the last accepted step (a constant at `t0` before the first step).
    pub fn interpolant(&self) -> &Dense<N> {
        &self.dense
    }

    /// The solution at `t` from the last accepted step's dense output. Meant for `t` within
    /// that step ([`Dense::contains`]); outside it the polynomial is extrapolated.
    pub fn interpolate(&self, t: f64) -> [f64; N] {
        self.dense.eval(t)
    }

    /// Advances the integration: reports a pending event of the last step if there is one,
    /// otherwise takes one accepted step (retrying rejected trials internally). Once the run is
    /// over every call returns the same final result. Never panics; the work of one call is
    /// bounded by [`Options::max_steps`].
    pub fn step(&mut self) -> Result<StepResult<N>, IntegrationError> {
        if let Some(hit) = self.pending.get(self.next_pending) {
            self.next_pending += 1;
            return Ok(StepResult::Event(*hit));
        }
        if let Some(outcome) = self.outcome {
            return outcome.map(StepResult::Finished);
        }
        if !self.started {
            self.start()?;
            if let Some(outcome) = self.outcome {
                return outcome.map(StepResult::Finished);
            }
        }
        self.advance()
    }

    fn fail(&mut self, error: IntegrationError) -> Result<StepResult<N>, IntegrationError> {
        self.outcome = Some(Err(error));
        Err(error)
    }

    /// Evaluates `f(t0, y0)` and chooses the first step.
    fn start(&mut self) -> Result<(), IntegrationError> {
        self.started = true;
        self.system.rhs(self.t, &self.y, &mut self.f);
        self.stats.rhs_evals += 1;
        if !all_finite(&self.f) {
            let error = IntegrationError::NonFinite { t: self.t };
            self.outcome = Some(Err(error));
            return Err(error);
        }
        if self.t == self.t_end {
            self.outcome = Some(Ok(Finish::ReachedEnd));
            return Ok(());
        }
        self.h = match self.options.h_init {
            Some(h) => h.abs().min(self.h_max).copysign(self.direction),
            None => {
                self.stats.rhs_evals += 1;
                initial_step(
                    &self.system,
                    self.t,
                    &self.y,
                    &self.f,
                    self.direction,
                    self.h_max,
                    self.options.rtol,
                    self.options.atol,
                    self.options.method.order(),
                )
            }
        };
        Ok(())
    }

    /// A trial produced NaN or ±inf: shrink and retry, or give up.
    fn reject_nonfinite(&mut self, h: f64) -> Result<(), IntegrationError> {
        self.stats.rejected_steps += 1;
        self.controller.force_reject();
        self.last_reject_nonfinite = true;
        self.nonfinite_retries += 1;
        if self.nonfinite_retries > MAX_NONFINITE_RETRIES {
            return Err(IntegrationError::NonFinite { t: self.t });
        }
        self.h = h * NONFINITE_SHRINK;
        Ok(())
    }

    /// Whether the stiffness test (if due) says the problem has become stiff.
    fn stiffness_says_stop(&mut self, h_lambda: impl FnOnce() -> f64, threshold: f64) -> bool {
        let Some(period) = self.options.stiffness_check else {
            return false;
        };
        if !(self.stats.accepted_steps.is_multiple_of(period) || self.stiff_tests > 0) {
            return false;
        }
        if h_lambda() > threshold {
            self.nonstiff_tests = 0;
            self.stiff_tests += 1;
            self.stiff_tests >= STIFF_TESTS_TO_STOP
        } else {
            self.nonstiff_tests += 1;
            if self.nonstiff_tests >= NONSTIFF_TESTS_TO_RESET {
                self.stiff_tests = 0;
            }
            false
        }
    }

    /// Takes one accepted step.
    fn advance(&mut self) -> Result<StepResult<N>, IntegrationError> {
        let mut k = [[0.0; N]; MAX_STAGES];
        loop {
            if self.attempts >= self.options.max_steps {
                return self.fail(IntegrationError::MaxSteps {
                    t: self.t,
                    max_steps: self.options.max_steps,
                });
            }
            let remaining = self.t_end - self.t;
            let too_small = STEP_TOO_SMALL_ULPS * f64::EPSILON * self.t.abs();
            if remaining.abs() <= too_small {
                // NOTE: only reachable after rounding left `t` a few ulps short of `t_end`;
                // the state differs from y(t_end) by ~|f|·16ε|t|, below any tolerance.
                self.t = self.t_end;
                self.outcome = Some(Ok(Finish::ReachedEnd));
                return Ok(StepResult::Finished(Finish::ReachedEnd));
            }
            let mut h = self.h;
            if h.abs() > self.h_max {
                h = self.h_max.copysign(self.direction);
            }
            let last = (self.t + LAST_STEP_STRETCH * h - self.t_end) * self.direction >= 0.0;
            if last {
                h = remaining;
            }
            if h.is_nan() || h.abs() < too_small || h == 0.0 {
                let t = self.t;
                return self.fail(if self.last_reject_nonfinite {
                    IntegrationError::NonFinite { t }
                } else {
                    IntegrationError::StepTooSmall { t, h }
                });
            }
            self.attempts += 1;
            k[0] = self.f;
            let (rtol, atol) = (self.options.rtol, self.options.atol);
            let trial: Trial<N> = match self.options.method {
                Method::Dopri5 => {
                    self.stats.rhs_evals += 6;
                    dopri5::attempt(&self.system, self.t, &self.y, h, rtol, atol, &mut k)
                }
                Method::Dop853 => {
                    self.stats.rhs_evals += 11;
                    dop853::attempt(&self.system, self.t, &self.y, h, rtol, atol, &mut k)
                }
            };
            let t_new = if last { self.t_end } else { self.t + h };
            if !(trial.err.is_finite() && all_finite(&trial.y_new)) {
                if let Err(e) = self.reject_nonfinite(h) {
                    return self.fail(e);
                }
                continue;
            }
            let (accepted, h_new) = self.controller.decide(trial.err, h, self.h_max);
            if !accepted {
                self.stats.rejected_steps += 1;
                self.last_reject_nonfinite = false;
                self.h = h_new;
                continue;
            }
            // The derivative at the new point (DOPRI5 already has it as its 7th stage).
            let f_index = match self.options.method {
                Method::Dopri5 => 6,
                Method::Dop853 => {
                    self.stats.rhs_evals += 1;
                    self.system.rhs(t_new, &trial.y_new, &mut k[12]);
                    12
                }
            };
            if !all_finite(&k[f_index]) {
                if let Err(e) = self.reject_nonfinite(h) {
                    return self.fail(e);
                }
                continue;
            }
            if trial.y_new.iter().any(|v| v.abs() > self.options.blow_up) {
                return self.fail(IntegrationError::BlowUp { t: t_new });
            }
            self.stats.accepted_steps += 1;
            self.nonfinite_retries = 0;
            self.last_reject_nonfinite = false;
            let stiff = match self.options.method {
                Method::Dopri5 => self.stiffness_says_stop(
                    || dopri5::stiffness_estimate(h, &trial, &k),
                    dopri5::STIFF_THRESHOLD,
                ),
                Method::Dop853 => self.stiffness_says_stop(
                    || dop853::stiffness_estimate(h, &trial, &k),
                    dop853::STIFF_THRESHOLD,
                ),
            };
            let r = match self.options.method {
                Method::Dopri5 => dopri5::dense_coefficients(&self.y, &trial.y_new, h, &k),
                Method::Dop853 => {
                    let (r, evals) = dop853::dense_coefficients(
                        &self.system,
                        self.t,
                        &self.y,
                        &trial.y_new,
                        h,
                        &mut k,
                        self.options.dense_output,
                    );
                    self.stats.rhs_evals += evals;
                    r
                }
            };
            let t_prev = self.t;
            self.dense = Dense {
                method: self.options.method,
                t_old: t_prev,
                h,
                t_new,
                r,
            };
            self.t = t_new;
            self.y = trial.y_new;
            self.f = k[f_index];
            self.h = h_new;
            if !self.events.is_empty() {
                self.pending.clear();
                self.next_pending = 0;
                scan_step(
                    &self.events,
                    &mut self.g,
                    &self.dense,
                    &self.y,
                    self.options.event_subintervals,
                    &mut self.pending,
                );
                if let Some(hit) = self.pending.last().filter(|hit| hit.terminal) {
                    self.t = hit.t;
                    self.y = hit.y;
                    self.dense.t_new = hit.t;
                    self.outcome = Some(Ok(Finish::TerminalEvent {
                        index: hit.index,
                        t: hit.t,
                    }));
                    return Ok(StepResult::Accepted { t_prev, t: self.t });
                }
            }
            if stiff {
                self.outcome = Some(Err(IntegrationError::Stiff { t: self.t }));
            } else if last {
                self.outcome = Some(Ok(Finish::ReachedEnd));
            }
            return Ok(StepResult::Accepted { t_prev, t: self.t });
        }
    }
}
