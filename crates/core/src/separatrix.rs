//! Separatrices: the four branches of the stable and unstable manifolds of every saddle.
//!
//! A saddle's stable manifold is the boundary between basins of attraction, and its unstable
//! manifold shows where the flow goes after passing close to the saddle, so these curves are
//! what makes a phase portrait readable. Each branch starts a small distance from the saddle
//! along an eigenvector of the linearisation and is integrated forward (unstable) or backward
//! (stable) in time until it leaves the window, settles, or runs out of budget.

use rayon::prelude::*;

use crate::analysis::Equilibrium;
use crate::integrate::{self, IntegrationError, Options, Solver, StepResult, WindowExit};
use crate::linear::Class;
use crate::model::{Model, Window};
use crate::scene::{BranchEnd, ManifoldKind, Point, Polyline, Separatrix};

/// Default [`SeparatrixOptions::offset`]: start 1e-4 of the window's size from the saddle.
pub const DEFAULT_OFFSET: f64 = 1e-4;
/// Default [`SeparatrixOptions::t_max`] (model time units).
pub const DEFAULT_T_MAX: f64 = 200.0;
/// Default [`SeparatrixOptions::margin`]: stop 5% of the window's size outside it.
pub const DEFAULT_MARGIN: f64 = 0.05;
/// Default [`SeparatrixOptions::max_points`].
pub const DEFAULT_MAX_POINTS: usize = 4000;
/// Relative tolerance of the branch integrations.
pub const SEPARATRIX_RTOL: f64 = 1e-9;
/// Absolute tolerance of the branch integrations, as a fraction of the window's size. It must
/// stay far below the start offset, or the start would be lost in the error control.
pub const SEPARATRIX_ATOL_FRACTION: f64 = 1e-12;
/// A branch counts as settled once its speed, measured in window sizes per unit time, falls
/// below this fraction of the saddle's largest rate |λ| (and after it has moved away from the
/// saddle, see [`SETTLE_ARM_FACTOR`]).
pub const SETTLE_SPEED_FRACTION: f64 = 1e-7;
/// The speed test is armed only once the branch is this many start offsets away from the saddle
/// (it starts slow, close to the saddle).
pub const SETTLE_ARM_FACTOR: f64 = 10.0;
/// A branch counts as settled once it comes within this fraction of the window's size of an
/// equilibrium that attracts in the direction of integration.
pub const SETTLE_RADIUS: f64 = 1e-4;
/// Consecutive vertices of a drawn branch are at most this fraction of the window's size apart
/// (longer steps are subdivided on the dense output).
pub const MAX_SEGMENT_FRACTION: f64 = 0.01;
/// Step limit per branch, far above what a branch needs to cross the window.
pub const MAX_BRANCH_STEPS: usize = 100_000;

/// Settings for [`separatrices`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SeparatrixOptions {
    /// Start distance from the saddle as a fraction of the window's size, measured in window
    /// units (x over the width, y over the height). Default [`DEFAULT_OFFSET`] (1e-4).
    pub offset: f64,
    /// Time budget per branch, in model time units. Default [`DEFAULT_T_MAX`] (200).
    pub t_max: f64,
    /// Stop once the branch is this fraction of the window's size outside it. Default
    /// [`DEFAULT_MARGIN`] (0.05).
    pub margin: f64,
    /// Most vertices per branch; a longer branch ends with [`BranchEnd::Budget`]. Default
    /// [`DEFAULT_MAX_POINTS`] (4000).
    pub max_points: usize,
}

impl Default for SeparatrixOptions {
    fn default() -> Self {
        Self {
            offset: DEFAULT_OFFSET,
            t_max: DEFAULT_T_MAX,
            margin: DEFAULT_MARGIN,
            max_points: DEFAULT_MAX_POINTS,
        }
    }
}

/// One branch to trace: from `saddle` along `direction` (model units, already scaled).
#[derive(Clone, Copy, Debug)]
struct BranchStart {
    saddle: Point,
    kind: ManifoldKind,
    start: Point,
    /// The saddle's largest |eigenvalue|, the rate scale of the settling test.
    rate: f64,
}

/// The four branches of every saddle in `equilibria`, ordered saddle by saddle: unstable +v,
/// unstable −v, stable +v, stable −v. A saddle whose eigen-data is not finite is skipped; a
/// branch whose integration cannot start ends with [`BranchEnd::Failed`] and holds only the
/// saddle and its start point. Never panics, and every branch is bounded by the options'
/// time and point budgets.
pub fn separatrices(
    model: &Model,
    equilibria: &[Equilibrium],
    opts: &SeparatrixOptions,
) -> Vec<Separatrix> {
    let w = model.window();
    let valid = opts.offset.is_finite()
        && opts.offset > 0.0
        && opts.t_max.is_finite()
        && opts.t_max > 0.0
        && opts.margin.is_finite()
        && opts.margin >= 0.0
        && opts.max_points >= 2;
    if !valid {
        return Vec::new();
    }
    let mut starts = Vec::new();
    for eq in equilibria.iter().filter(|e| e.class() == Class::Saddle) {
        let saddle = [eq.x, eq.y];
        let lin = &eq.linear;
        let unstable = [lin.eigenvectors[0][0].re, lin.eigenvectors[0][1].re];
        let stable = [lin.eigenvectors[1][0].re, lin.eigenvectors[1][1].re];
        let rate = lin.eigenvalues[0].re.abs().max(lin.eigenvalues[1].re.abs());
        let finite = saddle
            .iter()
            .chain(&unstable)
            .chain(&stable)
            .all(|v| v.is_finite())
            && rate.is_finite()
            && rate > 0.0;
        if !finite {
            continue;
        }
        for (kind, v) in [
            (ManifoldKind::Unstable, unstable),
            (ManifoldKind::Stable, stable),
        ] {
            let Some(d) = scaled_step(&w, v, opts.offset) else {
                continue;
            };
            for sign in [1.0, -1.0] {
                starts.push(BranchStart {
                    saddle,
                    kind,
                    start: [saddle[0] + sign * d[0], saddle[1] + sign * d[1]],
                    rate,
                });
            }
        }
    }
    let attractors: Vec<(Point, Class)> =
        equilibria.iter().map(|e| ([e.x, e.y], e.class())).collect();
    starts
        .par_iter()
        .map(|b| trace_branch(model, &w, b, &attractors, opts))
        .collect()
}

/// `offset` window-sizes along `v`, with `v` measured in window units (x over the width, y over
/// the height) so that the start distance means the same on both axes.
fn scaled_step(w: &Window, v: [f64; 2], offset: f64) -> Option<[f64; 2]> {
    // NOTE: an eigenvector normalised in model units can be almost parallel to the axis with
    // the larger extent; normalising in window units makes `offset` the same visible distance
    // whatever the axes' units.
    let u = [v[0] / w.width(), v[1] / w.height()];
    let n = u[0].hypot(u[1]);
    if !(n.is_finite() && n > 0.0) {
        return None;
    }
    Some([
        offset * u[0] / n * w.width(),
        offset * u[1] / n * w.height(),
    ])
}

/// Distance between two points in window units.
fn scaled_distance(w: &Window, p: Point, q: Point) -> f64 {
    ((p[0] - q[0]) / w.width()).hypot((p[1] - q[1]) / w.height())
}

/// Whether an equilibrium of class `c` attracts when integrating in direction `forward`.
fn attracts(c: Class, forward: bool) -> bool {
    let stable = matches!(
        c,
        Class::StableNode | Class::StableSpiral | Class::StableDegenerateNode | Class::StableStar
    );
    let unstable = matches!(
        c,
        Class::UnstableNode
            | Class::UnstableSpiral
            | Class::UnstableDegenerateNode
            | Class::UnstableStar
    );
    if forward { stable } else { unstable }
}

/// Integrates one branch and records it.
fn trace_branch(
    model: &Model,
    w: &Window,
    b: &BranchStart,
    equilibria: &[(Point, Class)],
    opts: &SeparatrixOptions,
) -> Separatrix {
    let forward = b.kind == ManifoldKind::Unstable;
    let t_end = if forward { opts.t_max } else { -opts.t_max };
    let size = w.width().max(w.height());
    let options = Options {
        rtol: SEPARATRIX_RTOL,
        atol: SEPARATRIX_ATOL_FRACTION * size,
        max_steps: MAX_BRANCH_STEPS,
        ..Options::default()
    };
    let mut points = vec![b.saddle, b.start];
    let finish = |points: Vec<Point>, end: BranchEnd| Separatrix {
        saddle: b.saddle,
        kind: b.kind,
        line: Polyline {
            points,
            closed: false,
        },
        end,
    };
    let Ok(mut solver) = Solver::new(model, options, 0.0, b.start, t_end) else {
        return finish(points, BranchEnd::Failed);
    };
    let (mx, my) = (opts.margin * w.width(), opts.margin * w.height());
    solver.add_event(WindowExit::new(
        w.x_min - mx,
        w.x_max + mx,
        w.y_min - my,
        w.y_max + my,
    ));
    let arm_distance = SETTLE_ARM_FACTOR * opts.offset;
    let mut armed = false;
    let end = loop {
        match solver.step() {
            Ok(StepResult::Accepted { t_prev, t }) => {
                let last = points.last().copied().unwrap_or(b.start);
                let p = solver.y();
                // Subdivide long steps on the dense output so the drawn curve stays smooth.
                let pieces = (scaled_distance(w, last, p) / MAX_SEGMENT_FRACTION)
                    .ceil()
                    .clamp(1.0, opts.max_points as f64) as usize;
                for k in 1..pieces {
                    let s = t_prev + (t - t_prev) * (k as f64 / pieces as f64);
                    points.push(solver.interpolate(s));
                }
                points.push(p);
                if points.len() >= opts.max_points {
                    points.truncate(opts.max_points);
                    break BranchEnd::Budget;
                }
                if !armed && scaled_distance(w, p, b.saddle) > arm_distance {
                    armed = true;
                }
                let r = model.rates(p[0], p[1]);
                let speed = (r[0] / w.width()).hypot(r[1] / w.height());
                if armed && speed < SETTLE_SPEED_FRACTION * b.rate {
                    break BranchEnd::Settled;
                }
                let near_attractor = equilibria.iter().any(|&(q, c)| {
                    attracts(c, forward) && scaled_distance(w, p, q) < SETTLE_RADIUS
                });
                if near_attractor {
                    break BranchEnd::Settled;
                }
            }
            Ok(StepResult::Event(_)) => {}
            Ok(StepResult::Finished(integrate::Finish::ReachedEnd)) => break BranchEnd::Budget,
            Ok(StepResult::Finished(integrate::Finish::TerminalEvent { .. })) => {
                break BranchEnd::LeftWindow;
            }
            Err(IntegrationError::MaxSteps { .. } | IntegrationError::Stiff { .. }) => {
                break BranchEnd::Budget;
            }
            Err(_) => break BranchEnd::Failed,
        }
    };
    finish(points, end)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Equilibrium, analyze};
    use crate::integrate::{Options, integrate};

    use crate::linear::linearise;

    fn builtin(key: &str) -> Model {
        crate::test_support::builtin(key)
    }

    fn custom(rates: [&str; 2], window: [f64; 4]) -> Model {
        crate::test_support::model(rates, &[], None, window)
    }

    fn equilibrium_at(model: &Model, x: f64, y: f64) -> Equilibrium {
        Equilibrium {
            x,
            y,
            residual: 0.0,
            linear: linearise(model.jacobian(x, y)),
            nonlinear: None,
        }
    }

    #[test]
    fn lotka_volterra_saddle_manifolds_lie_on_the_axes() {
        // Closed form: at the origin of x' = x(a − αy), y' = −y(c − γx) the axes are invariant;
        // the x-axis (y = 0) is the unstable manifold and the y-axis (x = 0) the stable one.
        let model = builtin("lotka-volterra");
        let analysis = analyze(&model);
        let branches = separatrices(&model, &analysis.equilibria, &SeparatrixOptions::default());
        assert_eq!(branches.len(), 4, "one saddle, four branches");
        let w = model.window();
        for b in &branches {
            assert_eq!(b.saddle, [0.0, 0.0]);
            assert_eq!(b.line.points[0], b.saddle, "begins at the saddle");
            assert!(b.line.points.len() > 10);
            assert_eq!(b.end, BranchEnd::LeftWindow, "{:?}", b.kind);
            let (on, off) = match b.kind {
                ManifoldKind::Unstable => (0, 1),
                ManifoldKind::Stable => (1, 0),
            };
            for p in &b.line.points {
                assert!(p[off].abs() <= 1e-12, "{:?} off its axis at {p:?}", b.kind);
            }
            // Ordered outward along the axis, ending beyond the window's margin.
            let d: Vec<f64> = b.line.points.iter().map(|p| p[on].abs()).collect();
            assert!(
                d.windows(2).all(|s| s[1] >= s[0]),
                "{:?} not outward",
                b.kind
            );
            let last = b.line.points[b.line.points.len() - 1];
            assert!(!w.contains_with_slack(last[0], last[1], 0.049), "{last:?}");
        }
        let unstable = branches
            .iter()
            .filter(|b| b.kind == ManifoldKind::Unstable)
            .count();
        assert_eq!(unstable, 2);
    }

    #[test]
    fn a_curved_unstable_manifold_is_followed_closely() {
        // Closed form: x' = x, y' = −y + x² has the invariant parabola y = x²/3 as its unstable
        // manifold through the saddle at the origin (d/dt(y − x²/3) = −(y − x²/3)), and the
        // y-axis as its stable manifold.
        let model = custom(["x", "-y + x^2"], [-2.0, 2.0, -2.0, 2.0]);
        let eq = [equilibrium_at(&model, 0.0, 0.0)];
        let branches = separatrices(&model, &eq, &SeparatrixOptions::default());
        assert_eq!(branches.len(), 4);
        for b in branches.iter().filter(|b| b.kind == ManifoldKind::Unstable) {
            assert_eq!(b.end, BranchEnd::LeftWindow);
            let worst = b
                .line
                .points
                .iter()
                .map(|p| (p[1] - p[0] * p[0] / 3.0).abs())
                .fold(0.0, f64::max);
            // The start is off the parabola by (offset·size)²/3 ≈ 5e-8 and the error shrinks
            // along the branch (the transverse direction contracts).
            assert!(worst < 1e-7, "off the parabola by {worst:e}");
            let last = b.line.points[b.line.points.len() - 1];
            assert!(last[0].abs() > 2.0 || last[1] > 2.0, "{last:?}");
        }
    }

    fn competition() -> Model {
        let mut model = builtin("competition");
        model.set_param("a12", 1.5).expect("parameter");
        model.set_param("a21", 1.5).expect("parameter");
        model
    }

    /// Where an orbit from `p` ends after a long time.
    fn fate(model: &Model, p: Point) -> Point {
        let traj = integrate(model, 0.0, p, 400.0, &Options::default(), &[]).expect("starts");
        let y = traj.y_final();
        [y[0], y[1]]
    }

    #[test]
    fn competition_stable_manifold_separates_the_two_basins() {
        // Closed form: with r1 = 1, r2 = 0.8, K1 = 10, K2 = 8, a12 = a21 = 1.5 the interior
        // equilibrium solves x + 1.5y = 10, y + 1.5x = 8: (1.6, 5.6), a saddle; (10, 0) and
        // (0, 8) are both stable (strong competition), and the origin is an unstable node.
        let model = competition();
        let analysis = analyze(&model);
        let saddle = analysis
            .equilibria
            .iter()
            .find(|e| e.class() == Class::Saddle && e.x > 0.5 && e.y > 0.5)
            .expect("an interior saddle");
        assert!((saddle.x - 1.6).abs() < 1e-9 && (saddle.y - 5.6).abs() < 1e-9);
        let branches = separatrices(&model, &analysis.equilibria, &SeparatrixOptions::default());
        let interior: Vec<&Separatrix> = branches
            .iter()
            .filter(|b| (b.saddle[0] - 1.6).abs() < 1e-6)
            .collect();
        assert_eq!(interior.len(), 4);

        // The unstable branches settle on the two stable equilibria, one each.
        let mut ends: Vec<Point> = interior
            .iter()
            .filter(|b| b.kind == ManifoldKind::Unstable)
            .map(|b| {
                assert_eq!(b.end, BranchEnd::Settled);
                b.line.points[b.line.points.len() - 1]
            })
            .collect();
        ends.sort_by(|p, q| p[0].total_cmp(&q[0]));
        assert!(
            (ends[0][0]).abs() < 1e-2 && (ends[0][1] - 8.0).abs() < 1e-2,
            "{ends:?}"
        );
        assert!(
            (ends[1][0] - 10.0).abs() < 1e-2 && ends[1][1].abs() < 1e-2,
            "{ends:?}"
        );

        // Points just either side of the stable manifold go to different stable equilibria.
        let w = model.window();
        let mut checked = 0;
        for b in interior.iter().filter(|b| b.kind == ManifoldKind::Stable) {
            let pts = &b.line.points;
            for &i in &[pts.len() / 4, pts.len() / 2] {
                let (p, q) = (pts[i], pts[i + 1]);
                if !w.contains_with_slack(p[0], p[1], 0.0) || p[0] < 0.2 || p[1] < 0.2 {
                    continue;
                }
                // Unit normal to the branch in window units.
                let t = [(q[0] - p[0]) / w.width(), (q[1] - p[1]) / w.height()];
                let n = t[0].hypot(t[1]);
                let nrm = [-t[1] / n * w.width(), t[0] / n * w.height()];
                let eps = 1e-3;
                let a = fate(&model, [p[0] + eps * nrm[0], p[1] + eps * nrm[1]]);
                let c = fate(&model, [p[0] - eps * nrm[0], p[1] - eps * nrm[1]]);
                let to_x = |s: Point| (s[0] - 10.0).abs() < 1e-3 && s[1].abs() < 1e-3;
                let to_y = |s: Point| s[0].abs() < 1e-3 && (s[1] - 8.0).abs() < 1e-3;
                assert!(
                    (to_x(a) && to_y(c)) || (to_y(a) && to_x(c)),
                    "either side of {p:?}: {a:?} and {c:?}"
                );
                checked += 1;
            }
        }
        assert!(checked >= 2, "checked only {checked} points");
    }

    #[test]
    fn bad_options_and_models_give_empty_or_failed_branches_without_panicking() {
        let model = builtin("lotka-volterra");
        let analysis = analyze(&model);
        let bad = SeparatrixOptions {
            offset: f64::NAN,
            ..SeparatrixOptions::default()
        };
        assert!(separatrices(&model, &analysis.equilibria, &bad).is_empty());
        // A saddle of a model that blows up in finite time along its unstable manifold:
        // x' = x + x³ (x(t) reaches infinity in finite time), y' = −y.
        let blow = custom(["x + x^3", "-y"], [-1e13, 1e13, -1e13, 1e13]);
        let eq = [equilibrium_at(&blow, 0.0, 0.0)];
        let branches = separatrices(&blow, &eq, &SeparatrixOptions::default());
        assert_eq!(branches.len(), 4);
        for b in branches.iter().filter(|b| b.kind == ManifoldKind::Unstable) {
            assert!(
                matches!(b.end, BranchEnd::Failed | BranchEnd::LeftWindow),
                "{:?}",
                b.end
            );
        }
    }
}
