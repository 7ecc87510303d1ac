//! The continuous extension ("dense output") of one accepted step.
//!
//! Both Dormand–Prince pairs provide a polynomial in `θ = (t − t_old)/h` that matches the step's
//! end points, so the solution can be evaluated anywhere inside a step at the cost of a few
//! multiply-adds. Events are located on it and a [`super::Trajectory`] keeps one per step.

use super::Method;

/// The interpolating polynomial of one accepted step, in Hairer's nested form
/// `y(θ) = r₀ + θ(r₁ + (1−θ)(r₂ + θ(r₃ + (1−θ)(r₄ + θ(r₅ + (1−θ)(r₆ + θ r₇))))))`.
///
/// DOPRI5 uses `r₀..r₄` (4th order), DOP853 `r₀..r₇` (7th order).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Dense<const N: usize> {
    pub(crate) method: Method,
    /// Start of the step.
    pub(crate) t_old: f64,
    /// The step size the coefficients were built for (`θ = (t − t_old)/h`).
    pub(crate) h: f64,
    /// End of the valid range: `t_old + h`, or an earlier terminal event.
    pub(crate) t_new: f64,
    pub(crate) r: [[f64; N]; 8],
}

impl<const N: usize> Dense<N> {
    /// A constant "interpolant" at one point, used before the first step.
    pub(crate) fn constant(method: Method, t: f64, y: [f64; N]) -> Self {
        let mut r = [[0.0; N]; 8];
        r[0] = y;
        Self {
            method,
            t_old: t,
            h: 0.0,
            t_new: t,
            r,
        }
    }

    /// Start of the step.
    pub fn t_start(&self) -> f64 {
        self.t_old
    }

    /// End of the step (an earlier time if a terminal event cut it short).
    pub fn t_end(&self) -> f64 {
        self.t_new
    }

    /// Whether `t` lies in the step (either orientation), end points included.
    pub fn contains(&self, t: f64) -> bool {
        let (lo, hi) = if self.t_old <= self.t_new {
            (self.t_old, self.t_new)
        } else {
            (self.t_new, self.t_old)
        };
        lo <= t && t <= hi
    }

    /// Evaluates the interpolant at `t`. Meant for `t` inside the step; outside it the
    /// polynomial is extrapolated and quickly loses accuracy.
    #[inline]
    pub fn eval(&self, t: f64) -> [f64; N] {
        if self.h == 0.0 {
            return self.r[0];
        }
        let s = (t - self.t_old) / self.h;
        let s1 = 1.0 - s;
        let r = &self.r;
        let mut y = [0.0; N];
        match self.method {
            Method::Dopri5 => {
                for i in 0..N {
                    y[i] = r[0][i] + s * (r[1][i] + s1 * (r[2][i] + s * (r[3][i] + s1 * r[4][i])));
                }
            }
            Method::Dop853 => {
                for i in 0..N {
                    let inner = r[4][i] + s * (r[5][i] + s1 * (r[6][i] + s * r[7][i]));
                    y[i] = r[0][i] + s * (r[1][i] + s1 * (r[2][i] + s * (r[3][i] + s1 * inner)));
                }
            }
        }
        y
    }
}
