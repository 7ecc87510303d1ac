//! The linearised solution around an equilibrium, drawn over the real orbit from the same start.
//!
//! The classification of an equilibrium is a statement about `u' = J u` with `u = p − p*`. This
//! module solves that linear system exactly, with the 2×2 matrix exponential in closed form, so
//! a view can overlay it on the true orbit and show where the linear picture stops holding; it
//! also compares the linear period 2π/ω with the period measured on the real orbit.

use crate::analysis::Equilibrium;
use crate::model::Model;
use crate::orbit::{OrbitOptions, run_orbit};

/// Below this value of |δ t| (δ² the quarter discriminant) the hyperbolic or trigonometric
/// factor sinh(δt)/δ or sin(δt)/δ is taken from its Taylor series.
pub const SERIES_THRESHOLD: f64 = 1e-3;
/// The real orbit is integrated for at least this many linear periods when measuring its
/// period, so that an orbit somewhat slower than the linearisation still closes.
pub const NONLINEAR_PERIOD_SPAN: f64 = 4.0;

/// The linearised solution from a start, and the two periods.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct LinearOverlay {
    /// Sample times, from 0 to `t_end` (which may be negative).
    pub times: Vec<f64>,
    /// `p* + exp(J t)(start − p*)` at `times`.
    pub points: Vec<[f64; 2]>,
    /// 2π/ω when the eigenvalues are complex.
    pub linear_period: Option<f64>,
    /// The period measured on the real orbit from the same start, if it closes.
    pub nonlinear_period: Option<f64>,
}

/// The exponential `exp(J t)` of a 2×2 matrix in closed form.
///
/// With τ the trace and δ² = ((a − d)/2)² + bc the quarter discriminant, Cayley–Hamilton gives
/// `exp(J t) = e^{τt/2} (C(t) I + S(t) (J − τ/2 I))` with `C = cosh δt`, `S = sinh(δt)/δ` for
/// real distinct eigenvalues (δ² > 0), `C = cos ωt`, `S = sin(ωt)/ω` for a complex pair
/// (δ² = −ω² < 0) and `C = 1`, `S = t` for a repeated eigenvalue (δ = 0). Non-finite entries
/// (NaN) when `J` or `t` is not finite.
pub fn exp_jt(j: [[f64; 2]; 2], t: f64) -> [[f64; 2]; 2] {
    let [[a, b], [c, d]] = j;
    let half_tr = 0.5 * (a + d);
    // NOTE: the quarter discriminant as ((a−d)/2)² + bc (not τ²/4 − Δ), which does not cancel
    // when the eigenvalues are close (as in linear.rs).
    let half_diff = 0.5 * (a - d);
    let q = half_diff * half_diff + b * c;
    // e^{τt/2}·C and e^{τt/2}·S.
    let (ec, es) = if q > 0.0 {
        let delta = q.sqrt();
        let x = delta * t;
        if x.abs() < SERIES_THRESHOLD {
            let e = (half_tr * t).exp();
            let x2 = x * x;
            (
                e * (1.0 + x2 / 2.0 * (1.0 + x2 / 12.0)),
                e * t * (1.0 + x2 / 6.0 * (1.0 + x2 / 20.0)),
            )
        } else {
            // NOTE: e^{τt/2}·cosh δt as (e^{(τ/2+δ)t} + e^{(τ/2−δ)t})/2 so that neither factor
            // overflows on its own when their product is finite (a saddle over a long time).
            let up = ((half_tr + delta) * t).exp();
            let down = ((half_tr - delta) * t).exp();
            (0.5 * (up + down), 0.5 * (up - down) / delta)
        }
    } else if q < 0.0 {
        let omega = (-q).sqrt();
        let x = omega * t;
        let e = (half_tr * t).exp();
        let s = if x.abs() < SERIES_THRESHOLD {
            let x2 = x * x;
            t * (1.0 - x2 / 6.0 * (1.0 - x2 / 20.0))
        } else {
            x.sin() / omega
        };
        (e * x.cos(), e * s)
    } else {
        let e = (half_tr * t).exp();
        (e, e * t)
    };
    [[ec + es * half_diff, es * b], [es * c, ec - es * half_diff]]
}

/// The linearised solution around `equilibrium` from `start` at `samples` times evenly spaced
/// from 0 to `t_end`, and the linear and measured periods. Empty (no samples, no periods) when
/// the start, the equilibrium or `t_end` is not finite or `samples < 2`.
pub fn linear_overlay(
    model: &Model,
    equilibrium: &Equilibrium,
    start: [f64; 2],
    t_end: f64,
    samples: usize,
) -> LinearOverlay {
    let centre = [equilibrium.x, equilibrium.y];
    let finite = start
        .iter()
        .chain(&centre)
        .chain(&[t_end])
        .all(|v| v.is_finite());
    if !finite || samples < 2 || t_end == 0.0 {
        return LinearOverlay::default();
    }
    let j = equilibrium.linear.jacobian;
    let u0 = [start[0] - centre[0], start[1] - centre[1]];
    let mut times = Vec::with_capacity(samples);
    let mut points = Vec::with_capacity(samples);
    for k in 0..samples {
        // NOTE: t = t_end·k/(n − 1) rather than accumulating a step, so the last time is t_end.
        let t = t_end * (k as f64 / (samples - 1) as f64);
        let e = exp_jt(j, t);
        times.push(t);
        points.push([
            centre[0] + e[0][0] * u0[0] + e[0][1] * u0[1],
            centre[1] + e[1][0] * u0[0] + e[1][1] * u0[1],
        ]);
    }
    let omega = equilibrium.linear.eigenvalues[0].im.abs();
    let linear_period = (omega > 0.0 && omega.is_finite()).then(|| std::f64::consts::TAU / omega);
    let span = linear_period.map_or(t_end.abs(), |p| t_end.abs().max(NONLINEAR_PERIOD_SPAN * p));
    let nonlinear_period = run_orbit(
        model,
        start,
        &OrbitOptions {
            t_end: span,
            ..OrbitOptions::default()
        },
    )
    .ok()
    .and_then(|r| r.period);
    LinearOverlay {
        times,
        points,
        linear_period,
        nonlinear_period,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyze;
    use crate::integrate::{Options, integrate};
    use crate::library;
    use crate::linear::{Class, linearise};
    use crate::model::{ModelSpec, Parameter, Window};

    fn linear_model(j: [[f64; 2]; 2]) -> Model {
        let spec = ModelSpec {
            name: "linear".into(),
            variables: ["x".into(), "y".into()],
            rates: ["a*x + b*y".into(), "c*x + d*y".into()],
            parameters: vec![
                Parameter::new("a", j[0][0]),
                Parameter::new("b", j[0][1]),
                Parameter::new("c", j[1][0]),
                Parameter::new("d", j[1][1]),
            ],
            invariant: None,
            window: Window {
                x_min: -3.0,
                x_max: 3.0,
                y_min: -3.0,
                y_max: 3.0,
            },
        };
        Model::new(&spec).expect("compiles")
    }

    #[test]
    fn for_a_linear_system_the_overlay_is_the_orbit() {
        // Closed form: for u' = Ju the linearisation is the system itself, so the overlay must
        // equal an accurate integration (DOP853 at rtol 1e-12) in every eigenvalue case.
        let cases = [
            ([[1.0, 2.0], [3.0, -4.0]], Class::Saddle),
            ([[-0.5, 0.2], [0.1, -0.3]], Class::StableNode),
            ([[0.1, -2.0], [1.5, -0.3]], Class::StableSpiral),
            ([[0.0, -1.0], [1.0, 0.0]], Class::Center),
            ([[-1.0, 1.0], [0.0, -1.0]], Class::StableDegenerateNode),
            ([[-0.7, 0.0], [0.0, -0.7]], Class::StableStar),
            (
                [[-1.0 + 1e-7, 1.0], [0.0, -1.0]],
                Class::StableDegenerateNode,
            ),
        ];
        for (j, class) in cases {
            let model = linear_model(j);
            let eq = Equilibrium {
                x: 0.0,
                y: 0.0,
                residual: 0.0,
                linear: linearise(model.jacobian(0.0, 0.0)),
                nonlinear: None,
            };
            assert_eq!(eq.class(), class, "{j:?}");
            let start = [0.8, -0.4];
            let t_end = 3.0;
            let overlay = linear_overlay(&model, &eq, start, t_end, 31);
            assert_eq!(overlay.times.len(), 31);
            assert_eq!(overlay.times[30], t_end);
            let traj = integrate(
                &model,
                0.0,
                start,
                t_end,
                &Options::with_tolerances(1e-12, 1e-14),
                &[],
            )
            .expect("starts");
            for (t, p) in overlay.times.iter().zip(&overlay.points) {
                let q = traj.sample(*t).expect("inside");
                let scale = 1.0 + q[0].abs().max(q[1].abs());
                assert!(
                    (p[0] - q[0]).abs() < 1e-9 * scale && (p[1] - q[1]).abs() < 1e-9 * scale,
                    "{class:?} at t = {t}: {p:?} vs {q:?}"
                );
            }
        }
    }

    #[test]
    fn the_exponential_is_continuous_across_a_repeated_eigenvalue() {
        // Closed form: exp(Jt) for J = [[λ, 1], [0, λ]] is e^{λt}[[1, t], [0, 1]]; a tiny
        // positive or negative bc must give nearly the same matrix.
        let t = 2.5_f64;
        let exact = [[(-t).exp(), t * (-t).exp()], [0.0, (-t).exp()]];
        for eps in [1e-12, -1e-12, 1e-7, -1e-7, 0.0] {
            let e = exp_jt([[-1.0, 1.0], [eps, -1.0]], t);
            for r in 0..2 {
                for c in 0..2 {
                    assert!((e[r][c] - exact[r][c]).abs() < 1e-6, "ε {eps}: {e:?}");
                }
            }
        }
        // A long time on a saddle stays finite while the product is representable.
        let e = exp_jt([[2.0, 0.0], [0.0, -2.0]], 300.0);
        assert!(e[0][0].is_finite() && e[0][0] > 1e260 && e[1][1] < 1e-260);
    }

    #[test]
    fn lotka_volterra_linear_period_and_the_nonlinear_period_as_the_start_nears_the_centre() {
        // Closed form: at (c/γ, a/α) the linear period is 2π/√(ac). Common practice: the
        // nonlinear period tends to it as the amplitude shrinks, with a correction of order
        // the amplitude squared.
        let spec = library::builtin("lotka-volterra").expect("built in").spec();
        let model = Model::new(&spec).expect("compiles");
        let (a, c) = (1.0_f64, 1.5_f64);
        let analysis = analyze(&model);
        let centre = analysis
            .equilibria
            .iter()
            .find(|e| e.x > 1.0)
            .expect("the centre");
        let t_lin = std::f64::consts::TAU / (a * c).sqrt();
        let mut errors = Vec::new();
        for r in [0.2, 0.05, 0.0125] {
            let start = [centre.x * (1.0 + r), centre.y];
            let o = linear_overlay(&model, centre, start, 10.0, 50);
            let lp = o.linear_period.expect("complex eigenvalues");
            assert!((lp - t_lin).abs() < 1e-12 * t_lin);
            let tn = o.nonlinear_period.expect("LV orbits close");
            errors.push((tn - t_lin).abs() / t_lin);
        }
        assert!(errors[0] > errors[1] && errors[1] > errors[2], "{errors:?}");
        // Quartering the amplitude divides the error by about 16.
        for k in 0..2 {
            let ratio = errors[k + 1] / errors[k];
            assert!(ratio > 1.0 / 25.0 && ratio < 1.0 / 10.0, "{errors:?}");
        }
        assert!(errors[2] < 1e-3, "{errors:?}");
    }

    #[test]
    fn unusable_inputs_give_an_empty_overlay() {
        let model = linear_model([[0.0, -1.0], [1.0, 0.0]]);
        let eq = Equilibrium {
            x: 0.0,
            y: 0.0,
            residual: 0.0,
            linear: linearise(model.jacobian(0.0, 0.0)),
            nonlinear: None,
        };
        assert_eq!(
            linear_overlay(&model, &eq, [f64::NAN, 0.0], 1.0, 10),
            LinearOverlay::default()
        );
        assert_eq!(
            linear_overlay(&model, &eq, [1.0, 0.0], f64::INFINITY, 10),
            LinearOverlay::default()
        );
        assert_eq!(
            linear_overlay(&model, &eq, [1.0, 0.0], 1.0, 1),
            LinearOverlay::default()
        );
        // Backward in time works too: the centre turns back.
        let o = linear_overlay(&model, &eq, [1.0, 0.0], -1.0, 3);
        let last = o.points[2];
        assert!((last[0] - 1f64.cos()).abs() < 1e-14 && (last[1] + 1f64.sin()).abs() < 1e-14);
        assert!((o.linear_period.expect("centre") - std::f64::consts::TAU).abs() < 1e-14);
    }
}
