//! Events: functions `g(t, y)` whose sign changes mark something worth stopping or recording
//! at (crossing a line, leaving a window, returning to a section).
//!
//! After each accepted step every event function is sampled at the step end and at
//! [`super::Options::event_subintervals`]` − 1` interior points of the dense output. A sign change
//! between two samples is bracketed and its root located on the dense output by the
//! Anderson–Björck variant of regula falsi, safeguarded by bisection, to [`EVENT_T_RTOL`]
//! relative in `t`. So the located time is as accurate as the interpolant, and no extra
//! right-hand-side evaluations are spent.
//!
//! Conventions: a zero at the start of the integration (or exactly at a step end that was
//! already reported) is not reported again; the reported point is the end of the final
//! bracket on the far side of the crossing, so `g` has already changed sign there (or is zero).

use super::dense::Dense;

/// Relative accuracy in `t` of located events: the final bracket is at most
/// `EVENT_T_RTOL·max(|t_a|, |t_b|)` wide.
pub const EVENT_T_RTOL: f64 = 1e-13;
/// Iteration cap of the root finder, far above the ~10–60 iterations it needs; only a
/// pathological event function reaches it, and then the best bracket end is reported.
const MAX_ROOT_ITERATIONS: usize = 200;
/// Every this many iterations the root finder checks that the bracket at least halved, and
/// bisects otherwise.
const BISECTION_CHECK_PERIOD: usize = 3;

/// Which sign changes of an event function count.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum Direction {
    /// From negative to non-negative.
    Rising,
    /// From positive to non-positive.
    Falling,
    /// Both.
    Either,
}

impl Direction {
    /// Whether a crossing in direction `crossing` (`Rising` or `Falling`) is wanted.
    fn accepts(self, crossing: Direction) -> bool {
        self == Direction::Either || self == crossing
    }
}

/// An event function `g(t, y)`; a zero of `g` is an event.
///
/// `value` should be continuous along the solution; it may return NaN (the samples around a
/// NaN are simply not compared). Use interior mutability if an event must keep state.
pub trait Event<const N: usize> {
    /// The value of `g` at time `t` and state `y`.
    fn value(&self, t: f64, y: &[f64; N]) -> f64;
    /// Which crossings count. Default [`Direction::Either`].
    fn direction(&self) -> Direction {
        Direction::Either
    }
    /// Whether the integration ends at this event. Default `false`.
    fn terminal(&self) -> bool {
        false
    }
}

impl<E: Event<N> + ?Sized, const N: usize> Event<N> for &E {
    fn value(&self, t: f64, y: &[f64; N]) -> f64 {
        (**self).value(t, y)
    }
    fn direction(&self) -> Direction {
        (**self).direction()
    }
    fn terminal(&self) -> bool {
        (**self).terminal()
    }
}

impl<E: Event<N> + ?Sized, const N: usize> Event<N> for Box<E> {
    fn value(&self, t: f64, y: &[f64; N]) -> f64 {
        (**self).value(t, y)
    }
    fn direction(&self) -> Direction {
        (**self).direction()
    }
    fn terminal(&self) -> bool {
        (**self).terminal()
    }
}

/// Adapter that makes a closure `|t, y: &[f64; N]| -> f64` an [`Event`], by default
/// non-terminal and counting both directions.
///
/// ```
/// use quarry_core::integrate::{Direction, Event, FnEvent};
/// // Prey falls below 2 (a harvest threshold); stop there.
/// let low = FnEvent::new(|_t, y: &[f64; 2]| y[0] - 2.0)
///     .with_direction(Direction::Falling)
///     .terminating();
/// assert!(low.terminal());
/// ```
#[derive(Clone, Copy, Debug)]
pub struct FnEvent<F> {
    f: F,
    direction: Direction,
    terminal: bool,
}

impl<F> FnEvent<F> {
    /// An event on the zeros of `f`, both directions, non-terminal.
    pub fn new(f: F) -> Self {
        Self {
            f,
            direction: Direction::Either,
            terminal: false,
        }
    }

    /// Counts only crossings in `direction`.
    #[must_use]
    pub fn with_direction(mut self, direction: Direction) -> Self {
        self.direction = direction;
        self
    }

    /// Makes the event end the integration.
    #[must_use]
    pub fn terminating(mut self) -> Self {
        self.terminal = true;
        self
    }
}

impl<F, const N: usize> Event<N> for FnEvent<F>
where
    F: Fn(f64, &[f64; N]) -> f64,
{
    fn value(&self, t: f64, y: &[f64; N]) -> f64 {
        (self.f)(t, y)
    }
    fn direction(&self) -> Direction {
        self.direction
    }
    fn terminal(&self) -> bool {
        self.terminal
    }
}

/// Leaving the axis-aligned window `[x_min, x_max] × [y_min, y_max]` of the components
/// `ix`, `iy` (the plot window, or a region of biological sense such as "both populations
/// positive"). Terminal by default.
///
/// `g` is the signed distance to the nearest wall, `min(x − x_min, x_max − x, y − y_min,
/// y_max − y)`: positive inside, and it falls through zero exactly where the first wall is
/// crossed. An index beyond the state gives NaN, so the event never fires.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct WindowExit {
    /// Component plotted horizontally.
    pub ix: usize,
    /// Component plotted vertically.
    pub iy: usize,
    /// Left wall.
    pub x_min: f64,
    /// Right wall.
    pub x_max: f64,
    /// Bottom wall.
    pub y_min: f64,
    /// Top wall.
    pub y_max: f64,
    /// Whether leaving ends the integration (default `true`).
    pub terminal: bool,
}

impl WindowExit {
    /// Leaving `[x_min, x_max] × [y_min, y_max]` in components 0 and 1, terminal.
    pub fn new(x_min: f64, x_max: f64, y_min: f64, y_max: f64) -> Self {
        Self {
            ix: 0,
            iy: 1,
            x_min,
            x_max,
            y_min,
            y_max,
            terminal: true,
        }
    }
}

impl<const N: usize> Event<N> for WindowExit {
    fn value(&self, _t: f64, y: &[f64; N]) -> f64 {
        let (Some(&x), Some(&v)) = (y.get(self.ix), y.get(self.iy)) else {
            return f64::NAN;
        };
        (x - self.x_min)
            .min(self.x_max - x)
            .min(v - self.y_min)
            .min(self.y_max - v)
    }
    fn direction(&self) -> Direction {
        Direction::Falling
    }
    fn terminal(&self) -> bool {
        self.terminal
    }
}

/// One located event.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EventHit<const N: usize> {
    /// Position of the event in the order it was added to the solver (or in the slice given
    /// to [`super::integrate`]).
    pub index: usize,
    /// Time of the event.
    pub t: f64,
    /// State at the event (from the dense output).
    pub y: [f64; N],
    /// Direction of this crossing: [`Direction::Rising`] or [`Direction::Falling`].
    pub crossing: Direction,
    /// Whether the event was terminal (the run ended here).
    pub terminal: bool,
}

/// Locates a sign change of `g` in the bracket `(ta, tb]` where `ga ≠ 0` and `gb` is zero or has
/// the opposite sign. Returns the end of the final bracket on `tb`'s side.
pub(crate) fn locate_root(
    mut g: impl FnMut(f64) -> f64,
    ta: f64,
    ga: f64,
    tb: f64,
    gb: f64,
) -> f64 {
    if gb == 0.0 {
        return tb;
    }
    let tol = EVENT_T_RTOL * ta.abs().max(tb.abs());
    let (mut a, mut fa, mut b, mut fb) = (ta, ga, tb, gb);
    // +1: the last new point replaced `b`; −1: it replaced `a`.
    let mut side = 0i8;
    let mut width_at_check = (b - a).abs();
    for iteration in 1..=MAX_ROOT_ITERATIONS {
        let width = (b - a).abs();
        if width <= tol {
            break;
        }
        let mid = 0.5 * (a + b);
        let mut x = b - fb * (b - a) / (fb - fa);
        if iteration % BISECTION_CHECK_PERIOD == 0 {
            if width > 0.5 * width_at_check {
                x = mid;
            }
            width_at_check = width;
        }
        // NOTE: keep the new point at least tol/2 inside the bracket: regula falsi otherwise
        // creeps towards the root from one side and the bracket never becomes narrow.
        let margin = (0.5 * tol).min(0.25 * width);
        let (lo, hi) = if a < b { (a, b) } else { (b, a) };
        if !(x > lo + margin && x < hi - margin) {
            x = if x.is_finite() {
                x.clamp(lo + margin, hi - margin)
            } else {
                mid
            };
        }
        let fx = g(x);
        if fx == 0.0 {
            return x;
        }
        if !fx.is_finite() {
            break;
        }
        if (fx > 0.0) == (fb > 0.0) {
            if side == 1 {
                // Anderson–Björck: `a` retained twice, scale its value down.
                let m = 1.0 - fx / fb;
                fa *= if m > 0.0 { m } else { 0.5 };
            }
            b = x;
            fb = fx;
            side = 1;
        } else {
            if side == -1 {
                let m = 1.0 - fx / fa;
                fb *= if m > 0.0 { m } else { 0.5 };
            }
            a = x;
            fa = fx;
            side = -1;
        }
    }
    b
}

/// Crossing between samples `ga` (at the earlier time) and `gb`, if any.
#[inline]
pub(crate) fn crossing(ga: f64, gb: f64) -> Option<Direction> {
    if ga < 0.0 && gb >= 0.0 {
        Some(Direction::Rising)
    } else if ga > 0.0 && gb <= 0.0 {
        Some(Direction::Falling)
    } else {
        None
    }
}

/// Scans one accepted step for events. `g` holds each event's value at the step start on entry
/// and at the step end (`y_end`, exact) on exit. Hits are appended to `hits` sorted by time
/// along the integration, and truncated after the first terminal one.
pub(crate) fn scan_step<const N: usize>(
    events: &[Box<dyn Event<N> + '_>],
    g: &mut [f64],
    dense: &Dense<N>,
    y_end: &[f64; N],
    subintervals: usize,
    hits: &mut Vec<EventHit<N>>,
) {
    let t0 = dense.t_old;
    let h = dense.t_new - dense.t_old;
    let mut t_prev = t0;
    for j in 1..=subintervals {
        let (t, y) = if j == subintervals {
            (dense.t_new, *y_end)
        } else {
            let t = t0 + h * (j as f64 / subintervals as f64);
            (t, dense.eval(t))
        };
        for (index, (event, gk)) in events.iter().zip(g.iter_mut()).enumerate() {
            let ga = *gk;
            let gb = event.value(t, &y);
            *gk = gb;
            let Some(dir) = crossing(ga, gb) else {
                continue;
            };
            if !event.direction().accepts(dir) {
                continue;
            }
            let t_hit = locate_root(|s| event.value(s, &dense.eval(s)), t_prev, ga, t, gb);
            let y_hit = if t_hit == t { y } else { dense.eval(t_hit) };
            hits.push(EventHit {
                index,
                t: t_hit,
                y: y_hit,
                crossing: dir,
                terminal: event.terminal(),
            });
        }
        t_prev = t;
    }
    // NOTE: hits were found sub-interval by sub-interval but event by event inside each, so
    // sort by the signed distance from the step start (time order in either direction). The
    // sort is stable, so simultaneous hits stay in event order.
    let sign = if h < 0.0 { -1.0 } else { 1.0 };
    hits.sort_by(|p, q| ((p.t - t0) * sign).total_cmp(&((q.t - t0) * sign)));
    if let Some(first_terminal) = hits.iter().position(|hit| hit.terminal) {
        hits.truncate(first_terminal + 1);
    }
}
