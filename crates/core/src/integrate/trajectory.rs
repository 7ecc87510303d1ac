//! The convenience driver: run a [`Solver`] to the end and keep every accepted step with its
//! dense output, so the orbit can be drawn, sampled anywhere or resampled on a grid.
//!
//! For long runs where only running sums are needed (quadratures, return maps), drive a
//! [`Solver`] directly instead: its `step` loop is the streaming interface and stores nothing.

use super::dense::Dense;
use super::events::{Event, EventHit};
use super::solver::{Finish, Solver, StepResult};
use super::{IntegrationError, Options, SetupError, Stats, System};

/// [`Trajectory::resample`] refuses to produce more rows than this (a too small `dt` would
/// otherwise exhaust memory).
pub const MAX_RESAMPLE_ROWS: usize = 10_000_000;

/// Why a recorded integration stopped.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Stop {
    /// The solution reached `t_end`.
    ReachedEnd,
    /// A terminal event ended the run.
    TerminalEvent {
        /// The event's index in the slice given to [`integrate`].
        index: usize,
        /// The event time (the trajectory's last time).
        t: f64,
    },
    /// The integration failed; the trajectory ends at the last good state.
    Failed(IntegrationError),
}

impl Stop {
    /// Whether the run ended normally (end time or terminal event).
    pub fn is_success(&self) -> bool {
        !matches!(self, Self::Failed(_))
    }
}

impl From<Finish> for Stop {
    fn from(finish: Finish) -> Self {
        match finish {
            Finish::ReachedEnd => Self::ReachedEnd,
            Finish::TerminalEvent { index, t } => Self::TerminalEvent { index, t },
        }
    }
}

/// A recorded solution: the accepted step points, one dense interpolant per step, the events
/// met and why the run stopped.
#[derive(Clone, Debug, PartialEq)]
pub struct Trajectory<const N: usize> {
    ts: Vec<f64>,
    ys: Vec<[f64; N]>,
    steps: Vec<Dense<N>>,
    stop: Stop,
    events: Vec<EventHit<N>>,
    stats: Stats,
}

/// Integrates `system` from `(t0, y0)` to `t_end` (backward if `t_end < t0`) and records every
/// accepted step. `events` are watched, reported in [`Trajectory::events`] by index into the
/// slice; a terminal one ends the run. Runtime failures do not make this an `Err`: they end
/// the trajectory with [`Stop::Failed`] at the last good state. Only invalid setups are errors.
pub fn integrate<S: System<N>, const N: usize>(
    system: S,
    t0: f64,
    y0: [f64; N],
    t_end: f64,
    options: &Options,
    events: &[&dyn Event<N>],
) -> Result<Trajectory<N>, SetupError> {
    let mut solver = Solver::new(system, *options, t0, y0, t_end)?;
    for &event in events {
        solver.add_event(event);
    }
    let mut traj = Trajectory {
        ts: vec![t0],
        ys: vec![y0],
        steps: Vec::new(),
        stop: Stop::ReachedEnd,
        events: Vec::new(),
        stats: Stats::default(),
    };
    traj.stop = loop {
        match solver.step() {
            Ok(StepResult::Accepted { t, .. }) => {
                traj.ts.push(t);
                traj.ys.push(solver.y());
                traj.steps.push(*solver.interpolant());
            }
            Ok(StepResult::Event(hit)) => traj.events.push(hit),
            Ok(StepResult::Finished(finish)) => break finish.into(),
            Err(error) => break Stop::Failed(error),
        }
    };
    traj.stats = solver.stats();
    Ok(traj)
}

impl<const N: usize> Trajectory<N> {
    /// Times of the initial point and of every accepted step end (monotone in the direction of
    /// integration).
    pub fn ts(&self) -> &[f64] {
        &self.ts
    }

    /// States at [`Trajectory::ts`].
    pub fn ys(&self) -> &[[f64; N]] {
        &self.ys
    }

    /// The dense interpolant of each step; `interpolants()[i]` spans `ts()[i]..=ts()[i + 1]`.
    pub fn interpolants(&self) -> &[Dense<N>] {
        &self.steps
    }

    /// Why the run stopped.
    pub fn stop(&self) -> Stop {
        self.stop
    }

    /// Events met, in time order.
    pub fn events(&self) -> &[EventHit<N>] {
        &self.events
    }

    /// Work done.
    pub fn stats(&self) -> Stats {
        self.stats
    }

    /// Initial time.
    pub fn t_start(&self) -> f64 {
        self.ts[0]
    }

    /// Last time reached (`t_end`, a terminal event, or the last good time before a failure).
    pub fn t_final(&self) -> f64 {
        self.ts[self.ts.len() - 1]
    }

    /// Last state.
    pub fn y_final(&self) -> [f64; N] {
        self.ys[self.ys.len() - 1]
    }

    /// +1 for a forward trajectory, −1 for a backward one.
    fn direction(&self) -> f64 {
        if self.t_final() < self.t_start() {
            -1.0
        } else {
            1.0
        }
    }

    /// The solution at `t` from the dense output of the step containing it (binary search), or
    /// `None` outside `[t_start, t_final]`.
    pub fn sample(&self, t: f64) -> Option<[f64; N]> {
        let dir = self.direction();
        let s = (t - self.t_start()) * dir;
        if !(s >= 0.0 && (self.t_final() - t) * dir >= 0.0) {
            return None;
        }
        if self.steps.is_empty() {
            return Some(self.ys[0]);
        }
        let i = self.steps.partition_point(|d| (d.t_new - t) * dir < 0.0);
        self.steps
            .get(i.min(self.steps.len() - 1))
            .map(|d| d.eval(t))
    }

    /// Rows `(t, y(t))` at `t = t_start ± k·|dt|`, `k = 0, 1, …`, up to `t_final`. Empty if `dt`
    /// is zero or not finite, or if more than [`MAX_RESAMPLE_ROWS`] rows would result.
    pub fn resample(&self, dt: f64) -> Vec<(f64, [f64; N])> {
        let dir = self.direction();
        let span = (self.t_final() - self.t_start()).abs();
        let step = dt.abs();
        if !(step.is_finite() && step > 0.0) {
            return Vec::new();
        }
        let count = (span / step).floor() + 1.0;
        if count > MAX_RESAMPLE_ROWS as f64 {
            return Vec::new();
        }
        let count = count as usize;
        let mut rows = Vec::with_capacity(count);
        let mut i = 0;
        for k in 0..count {
            // NOTE: t₀ + k·dt rather than accumulating dt, so rounding does not drift.
            let t = self.t_start() + dir * step * k as f64;
            if (self.t_final() - t) * dir < 0.0 {
                break;
            }
            let y = if self.steps.is_empty() {
                self.ys[0]
            } else {
                while i + 1 < self.steps.len() && (self.steps[i].t_new - t) * dir < 0.0 {
                    i += 1;
                }
                self.steps[i].eval(t)
            };
            rows.push((t, y));
        }
        rows
    }
}
