//! Finding every equilibrium in the window.
//!
//! Multi-start Newton with the exact Jacobian from a grid of seeds that includes the window's
//! edges (so equilibria on the axes x = 0 and y = 0, which matter most in population models,
//! are seeded on their own line). Each Newton step is damped (Levenberg–Marquardt) so a singular
//! Jacobian does not throw the iterate away. Candidates are de-duplicated and each is confirmed
//! by its residual before it is reported.

use crate::model::Model;

/// Options for [`find_equilibria`].
#[derive(Clone, Copy, Debug)]
pub struct EquilibriumOptions {
    /// Seeds per side of the grid (the grid includes the window's edges). Default 24.
    pub seeds_per_side: usize,
    /// Newton iterations per seed. Default 60.
    pub max_iterations: usize,
    /// Relative residual a root must reach, against the typical rate in the window. Default 1e-10.
    pub residual_tol: f64,
    /// Two roots closer than this fraction of the window's size are one. Default 1e-6.
    pub merge_tol: f64,
    /// Points outside the closed window by less than this fraction still count. Default 1e-9.
    pub edge_slack: f64,
    /// At most this many equilibria are reported (a curve of equilibria would give endless
    /// points). Default 64.
    pub max_count: usize,
}

impl Default for EquilibriumOptions {
    fn default() -> Self {
        Self {
            seeds_per_side: 24,
            max_iterations: 60,
            residual_tol: 1e-10,
            merge_tol: 1e-6,
            edge_slack: 1e-9,
            max_count: 64,
        }
    }
}

/// An equilibrium found by [`find_equilibria`], before classification.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Root {
    /// Position (first variable).
    pub x: f64,
    /// Position (second variable).
    pub y: f64,
    /// Max-norm of both rates at the point.
    pub residual: f64,
}

/// The result of a search.
#[derive(Clone, Debug, PartialEq)]
pub struct Roots {
    /// The equilibria, sorted by x then y.
    pub roots: Vec<Root>,
    /// True when more than `max_count` were found (likely a curve of equilibria).
    pub truncated: bool,
    /// The rate scale residuals were judged against.
    pub rate_scale: f64,
}

/// Finds all equilibria of `model` in its window.
pub fn find_equilibria(model: &Model, opts: &EquilibriumOptions) -> Roots {
    let w = model.window();
    let n = opts.seeds_per_side.max(2);
    let (sx, sy) = (w.width(), w.height());

    // The typical size of the rates over the window sets what "zero" means.
    let mut seeds = Vec::with_capacity(n * n);
    let mut magnitudes = Vec::with_capacity(n * n);
    for i in 0..n {
        for j in 0..n {
            let x = w.x_min + sx * i as f64 / (n - 1) as f64;
            let y = w.y_min + sy * j as f64 / (n - 1) as f64;
            let [f, g] = model.rates(x, y);
            if f.is_finite() && g.is_finite() {
                magnitudes.push(f.abs().max(g.abs()));
            }
            seeds.push((x, y));
        }
    }
    // Seeds on the axes when they cross the window but are not on the grid.
    for k in 0..n {
        let t = k as f64 / (n - 1) as f64;
        if w.x_min < 0.0 && w.x_max > 0.0 {
            seeds.push((0.0, w.y_min + sy * t));
        }
        if w.y_min < 0.0 && w.y_max > 0.0 {
            seeds.push((w.x_min + sx * t, 0.0));
        }
    }
    magnitudes.sort_by(f64::total_cmp);
    let rate_scale = magnitudes
        .get(magnitudes.len() / 2)
        .copied()
        .unwrap_or(1.0)
        .max(f64::MIN_POSITIVE);
    // NOTE: the residual bar is relative to the median rate over the window but never below an
    // absolute 1e-14, so a model whose rates are all tiny still has a meaningful test.
    let residual_bar = (opts.residual_tol * rate_scale).max(1e-14);

    let mut roots: Vec<Root> = Vec::new();
    let mut truncated = false;
    for (x0, y0) in seeds {
        let Some((x, y)) = newton(model, x0, y0, opts.max_iterations, sx, sy) else {
            continue;
        };
        if !w.contains_with_slack(x, y, opts.edge_slack) {
            continue;
        }
        // Snap points that are on an edge to it (axes equilibria come out as 1e-17 or -0).
        let x = snap(x, &[w.x_min, w.x_max, 0.0], sx * 1e-12);
        let y = snap(y, &[w.y_min, w.y_max, 0.0], sy * 1e-12);
        let [f, g] = model.rates(x, y);
        let residual = f.abs().max(g.abs());
        // NaN residuals fail this test too.
        if residual > residual_bar || residual.is_nan() {
            continue;
        }
        let dup = roots.iter().position(|r| {
            ((r.x - x) / sx).abs() < opts.merge_tol && ((r.y - y) / sy).abs() < opts.merge_tol
        });
        match dup {
            Some(k) => {
                if residual < roots[k].residual {
                    roots[k] = Root { x, y, residual };
                }
            }
            None if roots.len() < opts.max_count => roots.push(Root { x, y, residual }),
            None => truncated = true,
        }
    }
    roots.sort_by(|a, b| a.x.total_cmp(&b.x).then(a.y.total_cmp(&b.y)));
    Roots {
        roots,
        truncated,
        rate_scale,
    }
}

/// Moves `v` onto the first of `targets` within `tol`, and turns -0 into 0.
fn snap(v: f64, targets: &[f64], tol: f64) -> f64 {
    for &t in targets {
        if (v - t).abs() <= tol {
            return t + 0.0;
        }
    }
    v + 0.0
}

/// Damped Newton (Levenberg–Marquardt) from one seed; `None` when it does not converge.
fn newton(
    model: &Model,
    mut x: f64,
    mut y: f64,
    iters: usize,
    sx: f64,
    sy: f64,
) -> Option<(f64, f64)> {
    let (mut fv, mut jac) = model.rates_and_jacobian(x, y);
    let norm = |f: [f64; 2]| f[0] * f[0] + f[1] * f[1];
    let mut lambda = 0.0_f64;
    for _ in 0..iters {
        if !(fv[0].is_finite() && fv[1].is_finite()) {
            return None;
        }
        let [[a, b], [c, d]] = jac;
        if ![a, b, c, d].iter().all(|v| v.is_finite()) {
            return None;
        }
        let f0 = norm(fv);
        if f0 == 0.0 {
            return Some((x, y));
        }
        // Solve (JᵀJ + λ·diag(JᵀJ)) δ = −Jᵀ F; λ = 0 is the plain Newton step.
        let (mut accepted, mut step_size) = (false, 0.0);
        for _ in 0..12 {
            let m11 = a * a + c * c;
            let m22 = b * b + d * d;
            let m12 = a * b + c * d;
            let r1 = -(a * fv[0] + c * fv[1]);
            let r2 = -(b * fv[0] + d * fv[1]);
            let (dx, dy) = if lambda == 0.0 {
                let det = a * d - b * c;
                if det != 0.0 && det.is_finite() {
                    // Plain Newton: J δ = −F.
                    (
                        (-fv[0] * d + fv[1] * b) / det,
                        (-fv[1] * a + fv[0] * c) / det,
                    )
                } else {
                    lambda = 1e-3;
                    continue;
                }
            } else {
                let p11 = m11 * (1.0 + lambda) + 1e-300;
                let p22 = m22 * (1.0 + lambda) + 1e-300;
                let det = p11 * p22 - m12 * m12;
                if det == 0.0 || !det.is_finite() {
                    return None;
                }
                ((r1 * p22 - r2 * m12) / det, (r2 * p11 - r1 * m12) / det)
            };
            let (xn, yn) = (x + dx, y + dy);
            let (fn_, jn) = model.rates_and_jacobian(xn, yn);
            if fn_[0].is_finite() && fn_[1].is_finite() && norm(fn_) < f0 {
                x = xn;
                y = yn;
                fv = fn_;
                jac = jn;
                lambda *= 0.1;
                if lambda < 1e-12 {
                    lambda = 0.0;
                }
                accepted = true;
                step_size = (dx / sx).abs().max((dy / sy).abs());
                break;
            }
            lambda = if lambda == 0.0 { 1e-3 } else { lambda * 10.0 };
        }
        if !accepted {
            // No descent: either converged to rounding level or stuck.
            return Some((x, y));
        }
        if step_size < 1e-15 {
            return Some((x, y));
        }
        // Far outside the window: give up on this seed.
        if (x.abs() / sx).max(y.abs() / sy) > 1e6 {
            return None;
        }
    }
    Some((x, y))
}
