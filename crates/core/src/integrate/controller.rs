//! Step-size control and the automatic initial step, as in Hairer's DOPRI5 and DOP853.
//!
//! The new step is `h_new = h / fac` with `fac = err^α / err_old^β / safety` clamped to
//! `[1/fac_max, 1/fac_min]`. DOPRI5 uses the PI ("Lund") stabilisation `β = 0.04`,
//! `α = 1/5 − 0.75β`; DOP853 the plain controller `β = 0`, `α = 1/8`. Hairer–Nørsett–Wanner,
//! "Solving ODEs I", Sec. II.4 (automatic step size control, starting step) and IV.2 (PI control).

use super::rk::scale;
use super::{Method, System};

/// Safety factor on the optimal step (both codes).
const SAFETY: f64 = 0.9;
/// Lund stabilisation exponent β of DOPRI5.
const DOPRI5_BETA: f64 = 0.04;
/// Smallest step ratio `h_new/h` of DOPRI5.
const DOPRI5_FAC_MIN: f64 = 0.2;
/// Largest step ratio `h_new/h` of DOPRI5.
const DOPRI5_FAC_MAX: f64 = 10.0;
/// Smallest step ratio `h_new/h` of DOP853.
const DOP853_FAC_MIN: f64 = 0.333;
/// Largest step ratio `h_new/h` of DOP853.
const DOP853_FAC_MAX: f64 = 6.0;
/// Lower bound on the remembered error of the previous accepted step (Hairer's `FACOLD`).
const ERR_OLD_FLOOR: f64 = 1e-4;
/// Norm below which `hinit` treats the state or its derivative as zero.
const HINIT_TINY_SQUARED: f64 = 1e-10;
/// Derivative scale below which `hinit` falls back to [`HINIT_FALLBACK`].
const HINIT_TINY_DERIVATIVE: f64 = 1e-15;
/// First guess of `hinit` when the state or its derivative vanishes.
const HINIT_FALLBACK: f64 = 1e-6;
/// `hinit` aims at `h^p · max(‖f‖, ‖f'‖) = HINIT_TARGET`.
const HINIT_TARGET: f64 = 0.01;

/// The step-size controller of one method.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Controller {
    alpha: f64,
    beta: f64,
    fac_min: f64,
    fac_max: f64,
    err_old: f64,
    /// The previous attempt was rejected: the next accepted step may not grow.
    rejected: bool,
}

impl Controller {
    /// Hairer's defaults for `method`.
    pub(crate) fn new(method: Method) -> Self {
        let (alpha, beta, fac_min, fac_max) = match method {
            Method::Dopri5 => (
                0.2 - DOPRI5_BETA * 0.75,
                DOPRI5_BETA,
                DOPRI5_FAC_MIN,
                DOPRI5_FAC_MAX,
            ),
            Method::Dop853 => (1.0 / 8.0, 0.0, DOP853_FAC_MIN, DOP853_FAC_MAX),
        };
        Self {
            alpha,
            beta,
            fac_min,
            fac_max,
            err_old: ERR_OLD_FLOOR,
            rejected: false,
        }
    }

    /// Decides on a trial step of size `h` with finite error `err`. Returns whether it is
    /// accepted and the next step to try (same sign as `h`, magnitude at most `h_max`).
    #[inline]
    pub(crate) fn decide(&mut self, err: f64, h: f64, h_max: f64) -> (bool, f64) {
        let fac11 = err.powf(self.alpha);
        if err <= 1.0 {
            let fac = if self.beta == 0.0 {
                fac11
            } else {
                fac11 / self.err_old.powf(self.beta)
            };
            let fac = (fac / SAFETY).clamp(1.0 / self.fac_max, 1.0 / self.fac_min);
            let mut h_new = h / fac;
            if h_new.abs() > h_max {
                h_new = h_max.copysign(h);
            }
            if self.rejected {
                h_new = h_new.abs().min(h.abs()).copysign(h);
            }
            self.err_old = err.max(ERR_OLD_FLOOR);
            self.rejected = false;
            (true, h_new)
        } else {
            self.rejected = true;
            (false, h / (fac11 / SAFETY).min(1.0 / self.fac_min))
        }
    }

    /// Records a rejection for a reason other than the error estimate (a non-finite trial).
    pub(crate) fn force_reject(&mut self) {
        self.rejected = true;
    }
}

/// Hairer's `hinit`: a first step such that an explicit Euler step and the order-`order` error
/// model give an error near [`HINIT_TARGET`]. `f0 = f(t0, y0)`; `direction` is ±1. Spends one
/// evaluation. The result is finite, non-zero, signed and at most `h_max` in magnitude.
#[allow(clippy::too_many_arguments)]
pub(crate) fn initial_step<S: System<N>, const N: usize>(
    sys: &S,
    t0: f64,
    y0: &[f64; N],
    f0: &[f64; N],
    direction: f64,
    h_max: f64,
    rtol: f64,
    atol: f64,
    order: u32,
) -> f64 {
    let mut dnf = 0.0;
    let mut dny = 0.0;
    for i in 0..N {
        let sk = scale(atol, rtol, y0[i], y0[i]);
        dnf += (f0[i] / sk).powi(2);
        dny += (y0[i] / sk).powi(2);
    }
    let mut h = if dnf <= HINIT_TINY_SQUARED || dny <= HINIT_TINY_SQUARED {
        HINIT_FALLBACK
    } else {
        (dny / dnf).sqrt() * HINIT_TARGET
    };
    h = h.min(h_max).copysign(direction);

    let mut y1 = [0.0; N];
    for i in 0..N {
        y1[i] = y0[i] + h * f0[i];
    }
    let mut f1 = [0.0; N];
    sys.rhs(t0 + h, &y1, &mut f1);
    let mut der2 = 0.0;
    for i in 0..N {
        let sk = scale(atol, rtol, y0[i], y0[i]);
        der2 += ((f1[i] - f0[i]) / sk).powi(2);
    }
    let der2 = der2.sqrt() / h.abs();
    let der12 = der2.max(dnf.sqrt());
    // NOTE: `f64::max` ignores NaN, so a non-finite Euler probe must be tested explicitly;
    // then keep the first guess and let the step loop shrink it.
    let h1 = if !der2.is_finite() {
        h.abs()
    } else if der12 <= HINIT_TINY_DERIVATIVE {
        HINIT_FALLBACK.max(h.abs() * 1e-3)
    } else {
        (HINIT_TARGET / der12).powf(1.0 / f64::from(order))
    };
    let h = (100.0 * h.abs()).min(h1).min(h_max);
    if h.is_finite() && h > 0.0 {
        h.copysign(direction)
    } else {
        HINIT_FALLBACK.min(h_max).copysign(direction)
    }
}
