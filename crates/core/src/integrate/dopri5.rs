//! Dormand–Prince 5(4) with Hairer's 4th-order continuous extension.
//!
//! Coefficients: the tableau `A`, `B`, `C` and error weights `E` are those of scipy's
//! `scipy/integrate/_ivp/rk.py` (class `RK45`), identical to Hairer's `dopri5.f`; the dense-output
//! weights `D` are those of Hairer's `dopri5.f` (as transcribed in ode_solvers 0.6.2,
//! `src/butcher_tableau.rs`, module `dopri54`). Stage 7 (index 6) is `f(t + h, y_new)`, reused as
//! stage 1 of the next step (FSAL). Hairer–Nørsett–Wanner, "Solving ODEs I", Sec. II.5 (Table 5.2)
//! and II.6 (dense output).

use super::System;
use super::rk::{Trial, combine, scale, weighted};

/// Stages per step including the FSAL stage.
pub(crate) const STAGES: usize = 7;

/// Nodes `c_i`.
pub(crate) const C: [f64; STAGES] = [0.0, 1.0 / 5.0, 3.0 / 10.0, 4.0 / 5.0, 8.0 / 9.0, 1.0, 1.0];

pub(crate) const A1: [f64; 1] = [1.0 / 5.0];
pub(crate) const A1_IDX: [usize; 1] = [0];
pub(crate) const A2: [f64; 2] = [3.0 / 40.0, 9.0 / 40.0];
pub(crate) const A2_IDX: [usize; 2] = [0, 1];
pub(crate) const A3: [f64; 3] = [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0];
pub(crate) const A3_IDX: [usize; 3] = [0, 1, 2];
pub(crate) const A4: [f64; 4] = [
    19372.0 / 6561.0,
    -25360.0 / 2187.0,
    64448.0 / 6561.0,
    -212.0 / 729.0,
];
pub(crate) const A4_IDX: [usize; 4] = [0, 1, 2, 3];
pub(crate) const A5: [f64; 5] = [
    9017.0 / 3168.0,
    -355.0 / 33.0,
    46732.0 / 5247.0,
    49.0 / 176.0,
    -5103.0 / 18656.0,
];
pub(crate) const A5_IDX: [usize; 5] = [0, 1, 2, 3, 4];
/// 5th-order weights `b_j` (also row 7 of `A`: the FSAL stage is evaluated at `y_new`).
pub(crate) const B: [f64; 5] = [
    35.0 / 384.0,
    500.0 / 1113.0,
    125.0 / 192.0,
    -2187.0 / 6784.0,
    11.0 / 84.0,
];
pub(crate) const B_IDX: [usize; 5] = [0, 2, 3, 4, 5];
/// Error weights `b_j − b̂_j` (sign as in Hairer; scipy stores the negative).
pub(crate) const E: [f64; 6] = [
    71.0 / 57600.0,
    -71.0 / 16695.0,
    71.0 / 1920.0,
    -17253.0 / 339200.0,
    22.0 / 525.0,
    -1.0 / 40.0,
];
pub(crate) const E_IDX: [usize; 6] = [0, 2, 3, 4, 5, 6];
/// Dense-output weights `d_j` of Hairer's `dopri5.f`.
pub(crate) const D: [f64; 6] = [
    -12715105075.0 / 11282082432.0,
    87487479700.0 / 32700410799.0,
    -10690763975.0 / 1880347072.0,
    701980252875.0 / 199316789632.0,
    -1453857185.0 / 822651844.0,
    69997945.0 / 29380423.0,
];
pub(crate) const D_IDX: [usize; 6] = [0, 2, 3, 4, 5, 6];

/// Rows of the full tableau `A` (rows 1..=6, row 6 being `B`) for the tests.
#[cfg(test)]
pub(crate) const ROWS: [(&[f64], &[usize]); 6] = [
    (&A1, &A1_IDX),
    (&A2, &A2_IDX),
    (&A3, &A3_IDX),
    (&A4, &A4_IDX),
    (&A5, &A5_IDX),
    (&B, &B_IDX),
];

/// Stability-boundary estimate above which a step counts as stiff (Hairer's `dopri5.f`).
pub(crate) const STIFF_THRESHOLD: f64 = 3.25;

/// One trial step from `(t, y)` with `k[0] = f(t, y)`; the stage array needs `S ≥ STAGES`. Fills `k[1..7]` (6 evaluations); `k[6]` is
/// `f(t + h, y_new)`, so an accepted step needs no further evaluation.
#[inline(always)]
pub(crate) fn attempt<Sys: System<N>, const N: usize, const S: usize>(
    sys: &Sys,
    t: f64,
    y: &[f64; N],
    h: f64,
    rtol: f64,
    atol: f64,
    k: &mut [[f64; N]; S],
) -> Trial<N> {
    const { assert!(S >= STAGES, "stage array too short") };
    let yt = combine(y, h, &A1, &A1_IDX, k);
    sys.rhs(t + C[1] * h, &yt, &mut k[1]);
    let yt = combine(y, h, &A2, &A2_IDX, k);
    sys.rhs(t + C[2] * h, &yt, &mut k[2]);
    let yt = combine(y, h, &A3, &A3_IDX, k);
    sys.rhs(t + C[3] * h, &yt, &mut k[3]);
    let yt = combine(y, h, &A4, &A4_IDX, k);
    sys.rhs(t + C[4] * h, &yt, &mut k[4]);
    let y_stiff = combine(y, h, &A5, &A5_IDX, k);
    // Stages 6 and 7 sit at c = 1; the FSAL stage must be at exactly the accepted time.
    sys.rhs(t + h, &y_stiff, &mut k[5]);
    let y_new = combine(y, h, &B, &B_IDX, k);
    sys.rhs(t + h, &y_new, &mut k[6]);

    let e = weighted(&E, &E_IDX, k);
    let mut sum = 0.0;
    for i in 0..N {
        let r = h * e[i] / scale(atol, rtol, y[i], y_new[i]);
        sum += r * r;
    }
    Trial {
        y_new,
        err: (sum / N as f64).sqrt(),
        y_stiff,
    }
}

/// Stiffness estimate `|h|·‖k₇ − k₆‖ / ‖y_new − y_stiff‖` (Hairer's `HLAMB`).
#[inline]
pub(crate) fn stiffness_estimate<const N: usize, const S: usize>(
    h: f64,
    trial: &Trial<N>,
    k: &[[f64; N]; S],
) -> f64 {
    super::rk::stiffness_ratio(h, &k[6], &k[5], trial)
}

/// Coefficients `r₀..r₄` of the continuous extension of an accepted step.
#[inline(always)]
#[allow(clippy::needless_range_loop)]
pub(crate) fn dense_coefficients<const N: usize, const S: usize>(
    y: &[f64; N],
    y_new: &[f64; N],
    h: f64,
    k: &[[f64; N]; S],
) -> [[f64; N]; 8] {
    let mut r = [[0.0; N]; 8];
    let d = weighted(&D, &D_IDX, k);
    for i in 0..N {
        let dy = y_new[i] - y[i];
        let bspl = h * k[0][i] - dy;
        r[0][i] = y[i];
        r[1][i] = dy;
        r[2][i] = bspl;
        r[3][i] = dy - h * k[6][i] - bspl;
        r[4][i] = h * d[i];
    }
    r
}
