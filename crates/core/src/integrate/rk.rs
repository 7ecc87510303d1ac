//! Small kernels shared by both Runge–Kutta pairs: stage combinations and the error norm.

/// Outcome of one trial step, before the controller decides on it.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Trial<const N: usize> {
    /// The propagated (higher-order) solution at `t + h`.
    pub y_new: [f64; N],
    /// Weighted RMS error estimate; the step is acceptable when `err ≤ 1`.
    pub err: f64,
    /// Input of the last stage evaluated at `t + h` before `y_new` (for the stiffness test).
    pub y_stiff: [f64; N],
}

/// `y + h·Σ_j a_j k[idx_j]`, the input of a stage (or the new solution).
///
/// With constant `a` and `idx` and `#[inline(always)]` the loops unroll and the indices fold,
/// so only the non-zero tableau entries cost anything.
#[inline(always)]
pub(crate) fn combine<const N: usize, const M: usize, const S: usize>(
    y: &[f64; N],
    h: f64,
    a: &[f64; M],
    idx: &[usize; M],
    k: &[[f64; N]; S],
) -> [f64; N] {
    let mut out = [0.0; N];
    for i in 0..N {
        let mut s = 0.0;
        for j in 0..M {
            s += a[j] * k[idx[j]][i];
        }
        out[i] = y[i] + h * s;
    }
    out
}

/// `Σ_j a_j k[idx_j]` without the base point.
#[inline(always)]
pub(crate) fn weighted<const N: usize, const M: usize, const S: usize>(
    a: &[f64; M],
    idx: &[usize; M],
    k: &[[f64; N]; S],
) -> [f64; N] {
    combine(&[0.0; N], 1.0, a, idx, k)
}

/// Scale of component `i` in the error norm: `atol + rtol·max(|y_i|, |y_new_i|)`.
#[inline(always)]
pub(crate) fn scale(atol: f64, rtol: f64, y: f64, y_new: f64) -> f64 {
    atol + rtol * y.abs().max(y_new.abs())
}

/// Whether every component is finite.
#[inline(always)]
pub(crate) fn all_finite<const N: usize>(v: &[f64; N]) -> bool {
    v.iter().all(|x| x.is_finite())
}

/// Hairer's stiffness ratio `|h|·‖k_last − k_prev‖ / ‖y_new − y_stiff‖` (`HLAMB`), from the last
/// two stages evaluated at the same point in time.
#[inline]
pub(crate) fn stiffness_ratio<const N: usize>(
    h: f64,
    k_last: &[f64; N],
    k_prev: &[f64; N],
    trial: &Trial<N>,
) -> f64 {
    let squared =
        |p: &[f64; N], q: &[f64; N]| -> f64 { p.iter().zip(q).map(|(p, q)| (p - q).powi(2)).sum() };
    let num = squared(k_last, k_prev);
    let den = squared(&trial.y_new, &trial.y_stiff);
    if den > 0.0 {
        h.abs() * (num / den).sqrt()
    } else {
        0.0
    }
}
