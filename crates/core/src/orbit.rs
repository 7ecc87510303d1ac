//! One orbit and what can be measured on it: extremes, whether it closes and with what period,
//! time averages over whole periods (by quadrature integrated alongside the state), the lag of
//! the second variable's peak behind the first's, and the drift of a first integral.

use crate::integrate::{self, FnEvent, IntegrationError, Options, Stop, Trajectory, WindowExit};
use crate::model::Model;

/// Default relative tolerance for orbits.
pub const DEFAULT_ORBIT_RTOL: f64 = 1e-9;

/// A return to the section counts as closing the orbit when it lands within this fraction of
/// the orbit's extent from the start, or within `CLOSE_RTOL_FACTOR × rtol` if that is larger.
pub const CLOSE_TOL: f64 = 1e-6;

/// See [`CLOSE_TOL`].
pub const CLOSE_RTOL_FACTOR: f64 = 1000.0;

/// Settings for [`run_orbit`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OrbitOptions {
    /// End time; negative integrates backward from 0.
    pub t_end: f64,
    /// Relative tolerance. Default [`DEFAULT_ORBIT_RTOL`].
    pub rtol: f64,
    /// Absolute tolerance; default 1e-3 × rtol × the window's size.
    pub atol: Option<f64>,
    /// Stop when the orbit leaves the window.
    pub clip: bool,
    /// Step limit.
    pub max_steps: usize,
}

impl Default for OrbitOptions {
    fn default() -> Self {
        Self {
            t_end: 100.0,
            rtol: DEFAULT_ORBIT_RTOL,
            atol: None,
            clip: false,
            max_steps: integrate::DEFAULT_MAX_STEPS,
        }
    }
}

/// Why an orbit ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OrbitStop {
    /// It reached the end time.
    TEnd,
    /// The state grew without bound or became non-finite.
    BlowUp,
    /// It left the window (only with [`OrbitOptions::clip`]).
    LeftWindow,
    /// The step limit or the solver's work limit was reached.
    StepLimit,
}

impl OrbitStop {
    /// The name used in JSON output.
    pub fn as_str(self) -> &'static str {
        match self {
            OrbitStop::TEnd => "t_end",
            OrbitStop::BlowUp => "blow_up",
            OrbitStop::LeftWindow => "left_window",
            OrbitStop::StepLimit => "step_limit",
        }
    }
}

/// A bad request for an orbit.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum OrbitError {
    /// The start point is not finite.
    #[error("start point ({0}, {1}) is not finite")]
    BadStart(f64, f64),
    /// The end time is zero or not finite.
    #[error("end time {0} must be finite and nonzero")]
    BadTime(f64),
    /// The tolerance is out of range.
    #[error("{0}")]
    Setup(String),
}

/// An orbit and its measurements.
#[derive(Clone, Debug)]
pub struct OrbitReport {
    /// The time the orbit reached (t_end unless it stopped early).
    pub t_final: f64,
    /// Accepted steps.
    pub steps: usize,
    /// Evaluations of the rates.
    pub rhs_evals: usize,
    /// State at `t_final`.
    pub final_state: [f64; 2],
    /// Smallest value of each variable along the orbit.
    pub min: [f64; 2],
    /// Largest value of each variable along the orbit.
    pub max: [f64; 2],
    /// Time average of each variable: over whole periods when closed, else over the run.
    pub mean: [f64; 2],
    /// Whether the orbit returned to its start (within tolerance) through the section.
    pub closed: bool,
    /// The period, when closed.
    pub period: Option<f64>,
    /// ((time of a maximum of y − time of the preceding maximum of x) mod period) / period.
    pub lag_fraction: Option<f64>,
    /// |H(end) − H(start)| / max(|H(start)|, 1), for a model with a first integral.
    pub invariant_drift: Option<f64>,
    /// Why it ended.
    pub stopped: OrbitStop,
    /// The solver's message when it stopped early.
    pub stop_detail: Option<String>,
    /// The recorded solution: state, then ∫x dt and ∫y dt from the start.
    pub trajectory: Trajectory<4>,
}

impl OrbitReport {
    /// The state at time `t` within the run (dense output).
    pub fn state_at(&self, t: f64) -> Option<[f64; 2]> {
        self.trajectory.sample(t).map(|s| [s[0], s[1]])
    }

    /// Rows (t, x, y) every `dt` from the start to the end of the run.
    pub fn rows(&self, dt: f64) -> Vec<[f64; 3]> {
        self.trajectory
            .resample(dt)
            .into_iter()
            .map(|(t, s)| [t, s[0], s[1]])
            .collect()
    }
}

/// The model with the quadratures ∫x dt and ∫y dt appended to the state.
struct WithQuadrature<'a>(&'a Model);

impl integrate::System<4> for WithQuadrature<'_> {
    #[inline]
    fn rhs(&self, _t: f64, y: &[f64; 4], dy: &mut [f64; 4]) {
        let r = self.0.rates(y[0], y[1]);
        dy[0] = r[0];
        dy[1] = r[1];
        dy[2] = y[0];
        dy[3] = y[1];
    }
}

/// A value for a table people read: one below zero by less than 1e-7 of `extent` (the
/// window's size along that axis) is the integrator's rounding next to an invariant axis (a
/// stock that reaches zero stays there) and reads as 0. JSON and CSV keep computed values.
pub fn shown_near_zero(v: f64, extent: f64) -> f64 {
    if v < 0.0 && -v <= 1e-7 * extent {
        0.0
    } else {
        v
    }
}

/// Integrates one orbit from `start` and measures it.
pub fn run_orbit(
    model: &Model,
    start: [f64; 2],
    opts: &OrbitOptions,
) -> Result<OrbitReport, OrbitError> {
    if !(start[0].is_finite() && start[1].is_finite()) {
        return Err(OrbitError::BadStart(start[0], start[1]));
    }
    if !(opts.t_end.is_finite() && opts.t_end != 0.0) {
        return Err(OrbitError::BadTime(opts.t_end));
    }
    let w = model.window();
    let size = w.width().max(w.height());
    let options = Options {
        rtol: opts.rtol,
        atol: opts.atol.unwrap_or(1e-3 * opts.rtol * size),
        max_steps: opts.max_steps,
        ..Options::default()
    };
    let f0 = model.rates(start[0], start[1]);
    let speed = f0[0].hypot(f0[1]);
    // The section through the start, across the flow there.
    let normal = if speed > 0.0 && speed.is_finite() {
        [f0[0] / speed, f0[1] / speed]
    } else {
        [1.0, 0.0]
    };
    let section = FnEvent::new(move |_t: f64, y: &[f64; 4]| {
        normal[0] * (y[0] - start[0]) + normal[1] * (y[1] - start[1])
    });
    let x_turn = FnEvent::new(|_t: f64, y: &[f64; 4]| model.rates(y[0], y[1])[0]);
    let y_turn = FnEvent::new(|_t: f64, y: &[f64; 4]| model.rates(y[0], y[1])[1]);
    let exit = WindowExit::new(w.x_min, w.x_max, w.y_min, w.y_max);
    let mut events: Vec<&dyn integrate::Event<4>> = vec![&section, &x_turn, &y_turn];
    if opts.clip {
        events.push(&exit);
    }
    let sys = WithQuadrature(model);
    let y0 = [start[0], start[1], 0.0, 0.0];
    let traj = integrate::integrate(&sys, 0.0, y0, opts.t_end, &options, &events)
        .map_err(|e| OrbitError::Setup(e.to_string()))?;

    let (stopped, stop_detail) = match traj.stop() {
        Stop::ReachedEnd => (OrbitStop::TEnd, None),
        Stop::TerminalEvent { .. } => (OrbitStop::LeftWindow, None),
        Stop::Failed(e) => (
            match e {
                IntegrationError::MaxSteps { .. } | IntegrationError::Stiff { .. } => {
                    OrbitStop::StepLimit
                }
                IntegrationError::NonFinite { .. }
                | IntegrationError::BlowUp { .. }
                | IntegrationError::StepTooSmall { .. } => OrbitStop::BlowUp,
            },
            Some(e.to_string()),
        ),
    };

    // Extremes from the steps and from the located turning points.
    let mut min = [start[0], start[1]];
    let mut max = min;
    let mut see = |s: &[f64; 4]| {
        for k in 0..2 {
            if s[k].is_finite() {
                min[k] = min[k].min(s[k]);
                max[k] = max[k].max(s[k]);
            }
        }
    };
    for s in traj.ys() {
        see(s);
    }
    let hits = traj.events();
    for h in hits {
        if h.index == 1 || h.index == 2 {
            see(&h.y);
        }
    }
    let extent = (max[0] - min[0]).hypot(max[1] - min[1]);

    // First return through the section in the same sense as the start, close to the start.
    let close = CLOSE_TOL.max(CLOSE_RTOL_FACTOR * opts.rtol) * extent.max(f64::MIN_POSITIVE);
    let span = traj.t_final().abs();
    let period = hits
        .iter()
        .filter(|h| h.index == 0 && h.t.abs() > 1e-9 * span)
        .find(|h| {
            let f = model.rates(h.y[0], h.y[1]);
            let same_sense = normal[0] * f[0] + normal[1] * f[1] > 0.0;
            same_sense && (h.y[0] - start[0]).hypot(h.y[1] - start[1]) <= close
        })
        .map(|h| h.t.abs());

    let t_final = traj.t_final();
    let end = traj.y_final();
    let sign = t_final.signum();
    let mean = match period.map(|p| (p, (t_final.abs() / p).floor())) {
        Some((p, n)) if n >= 1.0 => {
            let t = sign * n * p;
            let q = traj.sample(t).unwrap_or(end);
            [q[2] / t, q[3] / t]
        }
        _ if t_final != 0.0 => [end[2] / t_final, end[3] / t_final],
        _ => start,
    };

    let lag_fraction = period.and_then(|p| {
        let is_max = |h: &&integrate::EventHit<4>, var: usize| {
            let (r, j) = model.rates_and_jacobian(h.y[0], h.y[1]);
            // At a turning point of x (f = 0), d f/dt = f_y·g; of y (g = 0), d g/dt = g_x·f.
            let curvature = if var == 0 {
                j[0][1] * r[1]
            } else {
                j[1][0] * r[0]
            };
            curvature < 0.0
        };
        let mut x_peaks: Vec<f64> = hits
            .iter()
            .filter(|h| h.index == 1 && is_max(h, 0))
            .map(|h| h.t)
            .collect();
        let mut y_peaks: Vec<f64> = hits
            .iter()
            .filter(|h| h.index == 2 && is_max(h, 1))
            .map(|h| h.t)
            .collect();
        x_peaks.sort_by(f64::total_cmp);
        y_peaks.sort_by(f64::total_cmp);
        let tx = *x_peaks.first()?;
        let ty = y_peaks
            .iter()
            .copied()
            .find(|&t| t >= tx)
            .or_else(|| y_peaks.first().copied())?;
        Some((ty - tx).rem_euclid(p) / p)
    });

    let invariant_drift = match (
        model.invariant(start[0], start[1]),
        model.invariant(end[0], end[1]),
    ) {
        (Some(h0), Some(h1)) => Some((h1 - h0).abs() / h0.abs().max(1.0)),
        _ => None,
    };

    let stats = traj.stats();
    Ok(OrbitReport {
        t_final,
        steps: stats.accepted_steps,
        rhs_evals: stats.rhs_evals,
        final_state: [end[0], end[1]],
        min,
        max,
        mean,
        closed: period.is_some(),
        period,
        lag_fraction,
        invariant_drift,
        stopped,
        stop_detail,
        trajectory: traj,
    })
}

/// The relative radial displacement after one turn around `centre` of the orbit started at
/// `centre + (r, 0)`: (x_return − x_start) / r at the next crossing of the half-line
/// y = y₀, x > x₀ in the same sense. `omega` is the linear frequency (it bounds the time
/// allowed for the turn). `None` when the orbit does not come around.
pub fn radial_return(
    model: &Model,
    centre: [f64; 2],
    r: f64,
    omega: f64,
    rtol: f64,
) -> Option<f64> {
    if !(r > 0.0 && omega > 0.0) {
        return None;
    }
    let start = [centre[0] + r, centre[1]];
    let g0 = model.rates(start[0], start[1])[1];
    if g0 == 0.0 || !g0.is_finite() {
        return None;
    }
    let options = Options {
        rtol,
        atol: rtol * r * 1e-3,
        ..Options::default()
    };
    let section = FnEvent::new(move |_t: f64, y: &[f64; 2]| y[1] - centre[1]);
    let events: Vec<&dyn integrate::Event<2>> = vec![&section];
    let t_max = 2.0 * std::f64::consts::TAU / omega;
    let traj = integrate::integrate(model, 0.0, start, t_max, &options, &events).ok()?;
    let period_guess = std::f64::consts::TAU / omega;
    traj.events()
        .iter()
        .filter(|h| h.t > 0.25 * period_guess && h.y[0] > centre[0])
        .find(|h| {
            let g = model.rates(h.y[0], h.y[1])[1];
            g.signum() == g0.signum()
        })
        .map(|h| (h.y[0] - start[0]) / r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_rounding_below_zero_reads_as_zero() {
        assert_eq!(shown_near_zero(-2.5e-8, 220.0), 0.0);
        assert_eq!(shown_near_zero(-0.5, 220.0), -0.5);
        assert_eq!(shown_near_zero(1e-9, 220.0), 1e-9);
        assert_eq!(shown_near_zero(-2.5e-8, 0.01), -2.5e-8);
    }
}
