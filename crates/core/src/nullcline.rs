//! Nullclines: the curves where one rate is zero, found by marching squares on a grid spanning
//! the window and refined onto the exact zero set with the model's exact Jacobian.
//!
//! Population models put a factor of the variable in front of its rate (ẋ = x·(…)), so a
//! nullcline often lies on an axis, and the axis is often the window's edge. There the rate
//! does not change sign inside the window and marching squares cannot see it. So each window
//! edge, and each axis crossing the window, is checked for a rate that vanishes identically
//! along it (relative to the rate's typical size over the window), and the stretches where it
//! does are added as lines of their own. Marching-squares segments that run along such a
//! stretch are dropped so it is not drawn twice.

use crate::field::{eval_grid, recycle};
use crate::marching::{Grid, Sampled, level_curves, sample_stride};
use crate::model::Model;
use crate::scene::{Nullcline, Point, Polyline};

/// A rate counts as vanishing at a point when its magnitude is at most this fraction of its
/// typical magnitude over the window.
pub const VANISH_RTOL: f64 = 1e-10;

/// About this many grid values are used to estimate a rate's typical magnitude.
const TYPICAL_SAMPLES: usize = 4096;

/// A marching-squares vertex within this fraction of a cell of a vanishing line lies on it.
const ON_LINE_CELLS: f64 = 1e-6;

/// The nullclines of both rates on an `n × n` grid whose outer vertices lie on the window's
/// edges: entry 0 is dx/dt = 0, entry 1 is dy/dt = 0. Fewer than two vertices a side, a rate
/// that is zero everywhere, or one undefined everywhere give no lines.
pub fn nullclines(model: &Model, n: usize) -> Vec<Nullcline> {
    let empty = |variable| Nullcline {
        variable,
        lines: Vec::new(),
    };
    let Some(grid) = Grid::spanning(&model.window(), n, n) else {
        return vec![empty(0), empty(1)];
    };
    let cols = eval_grid(model.rate_formulas(), model.params(), &grid, 2);
    let (Some(f), Some(g)) = (cols.first(), cols.get(1)) else {
        return vec![empty(0), empty(1)];
    };
    let (a, b) = rayon::join(
        || nullcline_of(model, &grid, f, 0),
        || nullcline_of(model, &grid, g, 1),
    );
    recycle(cols);
    vec![a, b]
}

/// The zero set of rate `k`, whose values on `grid` are `values`.
fn nullcline_of(model: &Model, grid: &Grid, values: &[f64], k: usize) -> Nullcline {
    let mut out = Nullcline {
        variable: k,
        lines: Vec::new(),
    };
    let Some(typical) = typical_magnitude(values, grid.nx) else {
        return out;
    };
    let Some(field) = Sampled::new(*grid, values) else {
        return out;
    };
    let exact = |p: Point| {
        let (r, jac) = model.rates_and_jacobian(p[0], p[1]);
        (r[k], jac[k])
    };
    let lines = level_curves(&field, 0.0, Some(&exact));
    let vanishing = vanishing_stretches(model, grid, values, k, VANISH_RTOL * typical);
    out.lines = if vanishing.is_empty() {
        lines
    } else {
        drop_covered(lines, &vanishing, grid)
    };
    out.lines.extend(vanishing.into_iter().map(|s| Polyline {
        points: s.points,
        closed: false,
    }));
    out
}

/// The median of the finite, nonzero magnitudes among (a strided subset of) `values`; `None`
/// when there is none (the rate is zero or undefined everywhere).
fn typical_magnitude(values: &[f64], nx: usize) -> Option<f64> {
    let stride = sample_stride(values.len(), nx, TYPICAL_SAMPLES);
    let mut mags: Vec<f64> = values
        .iter()
        .step_by(stride)
        .map(|v| v.abs())
        .filter(|m| m.is_finite() && *m > 0.0)
        .collect();
    if mags.is_empty() {
        // The subset may have missed a small region where the rate is nonzero.
        mags = values
            .iter()
            .map(|v| v.abs())
            .filter(|m| m.is_finite() && *m > 0.0)
            .collect();
    }
    if mags.is_empty() {
        return None;
    }
    let mid = mags.len() / 2;
    let (_, m, _) = mags.select_nth_unstable_by(mid, f64::total_cmp);
    Some(*m)
}

/// Which line a vanishing stretch lies on.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Line {
    /// x = constant.
    Vertical(f64),
    /// y = constant.
    Horizontal(f64),
}

/// A stretch of a window edge or axis along which a rate vanishes identically.
#[derive(Clone, Debug, PartialEq)]
struct Stretch {
    line: Line,
    /// Range of the other coordinate.
    from: f64,
    to: f64,
    points: Vec<Point>,
}

/// Stretches of at least two consecutive vertices of each window edge, and of each axis strictly
/// inside the window, where |rate k| ≤ `tol`.
fn vanishing_stretches(
    model: &Model,
    grid: &Grid,
    values: &[f64],
    k: usize,
    tol: f64,
) -> Vec<Stretch> {
    let (nx, ny) = (grid.nx, grid.ny);
    let mut out = Vec::new();
    let mut scan = |line: Line, count: usize, at: &dyn Fn(usize) -> (Point, f64)| {
        let mut run: Vec<Point> = Vec::new();
        let mut flush = |run: &mut Vec<Point>| {
            if run.len() >= 2 {
                let along = |p: &Point| match line {
                    Line::Vertical(_) => p[1],
                    Line::Horizontal(_) => p[0],
                };
                out.push(Stretch {
                    line,
                    from: along(&run[0]),
                    to: along(&run[run.len() - 1]),
                    points: std::mem::take(run),
                });
            }
            run.clear();
        };
        for m in 0..count {
            let (p, v) = at(m);
            if v.abs() <= tol {
                run.push(p);
            } else {
                flush(&mut run);
            }
        }
        flush(&mut run);
    };
    let w = model.window();
    let value = |i: usize, j: usize| values[j * nx + i];
    // Bottom, top, left, right, in the grid's own coordinates (exactly the edges).
    scan(Line::Horizontal(grid.y(0)), nx, &|i| {
        ([grid.x(i), grid.y(0)], value(i, 0))
    });
    scan(Line::Horizontal(grid.y(ny - 1)), nx, &|i| {
        ([grid.x(i), grid.y(ny - 1)], value(i, ny - 1))
    });
    scan(Line::Vertical(grid.x(0)), ny, &|j| {
        ([grid.x(0), grid.y(j)], value(0, j))
    });
    scan(Line::Vertical(grid.x(nx - 1)), ny, &|j| {
        ([grid.x(nx - 1), grid.y(j)], value(nx - 1, j))
    });
    // NOTE: the axes are evaluated afresh (they rarely fall on a grid line), at the grid's
    // rows and columns so the stretches line up with the marching-squares crossings.
    if w.x_min < 0.0 && 0.0 < w.x_max {
        scan(Line::Vertical(0.0), ny, &|j| {
            let y = grid.y(j);
            ([0.0, y], model.rates(0.0, y)[k])
        });
    }
    if w.y_min < 0.0 && 0.0 < w.y_max {
        scan(Line::Horizontal(0.0), nx, &|i| {
            let x = grid.x(i);
            ([x, 0.0], model.rates(x, 0.0)[k])
        });
    }
    out
}

/// Removes the segments of `lines` that run along one of the `stretches` (both ends on it),
/// splitting the polylines there.
fn drop_covered(lines: Vec<Polyline>, stretches: &[Stretch], grid: &Grid) -> Vec<Polyline> {
    let (dx, dy) = (grid.dx().abs(), grid.dy().abs());
    let on = |p: &Point| {
        stretches.iter().any(|s| match s.line {
            Line::Vertical(x) => {
                (p[0] - x).abs() <= ON_LINE_CELLS * dx
                    && p[1] >= s.from - 0.5 * dy
                    && p[1] <= s.to + 0.5 * dy
            }
            Line::Horizontal(y) => {
                (p[1] - y).abs() <= ON_LINE_CELLS * dy
                    && p[0] >= s.from - 0.5 * dx
                    && p[0] <= s.to + 0.5 * dx
            }
        })
    };
    let mut out = Vec::with_capacity(lines.len());
    for line in lines {
        let flags: Vec<bool> = line.points.iter().map(on).collect();
        let n = line.points.len();
        let n_seg = if line.closed { n } else { n - 1 };
        let dropped = |s: usize| flags[s] && flags[(s + 1) % n];
        let Some(first_drop) = (0..n_seg).find(|&s| dropped(s)) else {
            out.push(line);
            continue;
        };
        // Walk the segments starting after a dropped one (for a closed line the start is
        // arbitrary), emitting runs of kept segments.
        let start = if line.closed { first_drop + 1 } else { 0 };
        let mut piece: Vec<Point> = Vec::new();
        for m in 0..n_seg {
            let s = (start + m) % n.max(1);
            if s >= n_seg {
                continue;
            }
            if dropped(s) {
                if piece.len() >= 2 {
                    out.push(Polyline {
                        points: std::mem::take(&mut piece),
                        closed: false,
                    });
                }
                piece.clear();
            } else {
                if piece.is_empty() {
                    piece.push(line.points[s]);
                }
                piece.push(line.points[(s + 1) % n]);
            }
        }
        if piece.len() >= 2 {
            out.push(Polyline {
                points: piece,
                closed: false,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn builtin(key: &str) -> Model {
        crate::test_support::builtin(key)
    }

    fn custom(rates: [&str; 2], window: [f64; 4]) -> Model {
        crate::test_support::model(rates, &[("k", 2.0)], None, window)
    }

    /// Largest relative distance accepted between a refined vertex and the analytic curve.
    const CURVE_RTOL: f64 = 1e-9;

    /// The vertices of `lines` lying on the component `dist(p) ≈ 0`, projected by `along`;
    /// checks they run from `lo` to `hi` with no gap wider than `gap`.
    fn assert_covers(
        lines: &[Polyline],
        dist: impl Fn(Point) -> f64,
        along: impl Fn(Point) -> f64,
        (lo, hi): (f64, f64),
        gap: f64,
    ) {
        let mut t: Vec<f64> = lines
            .iter()
            .flat_map(|l| l.points.iter().copied())
            .filter(|&p| dist(p) <= CURVE_RTOL)
            .map(along)
            .collect();
        t.sort_by(f64::total_cmp);
        assert!(!t.is_empty(), "component missing");
        assert!(t[0] - lo <= gap, "starts at {} not {lo}", t[0]);
        assert!(
            hi - t[t.len() - 1] <= gap,
            "ends at {} not {hi}",
            t[t.len() - 1]
        );
        let widest = t.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max);
        assert!(widest <= gap, "gap of {widest}");
    }

    #[test]
    fn lotka_volterra_nullclines_lie_on_the_closed_form_and_include_the_edges() {
        // Closed form: dx/dt = x(a − αy) = 0 on x = 0 and y = a/α = 10; dy/dt = y(γx − c) = 0
        // on y = 0 and x = c/γ = 20. Window 0..60 × 0..40: x = 0 and y = 0 are its edges.
        let model = builtin("lotka-volterra");
        let n = 256;
        let ncs = nullclines(&model, n);
        assert_eq!(ncs.len(), 2);
        assert_eq!((ncs[0].variable, ncs[1].variable), (0, 1));
        let (dx, dy) = (60.0 / (n - 1) as f64, 40.0 / (n - 1) as f64);
        let gap = 2.0 * dx.max(dy);

        let d_x0 = |p: Point| (p[0] / 60.0).abs();
        let d_y10 = |p: Point| ((p[1] - 10.0) / 40.0).abs();
        for p in ncs[0].lines.iter().flat_map(|l| &l.points) {
            assert!(d_x0(*p).min(d_y10(*p)) <= CURVE_RTOL, "{p:?}");
        }
        assert_covers(&ncs[0].lines, d_x0, |p| p[1], (0.0, 40.0), gap);
        assert_covers(&ncs[0].lines, d_y10, |p| p[0], (0.0, 60.0), gap);

        let d_y0 = |p: Point| (p[1] / 40.0).abs();
        let d_x20 = |p: Point| ((p[0] - 20.0) / 60.0).abs();
        for p in ncs[1].lines.iter().flat_map(|l| &l.points) {
            assert!(d_y0(*p).min(d_x20(*p)) <= CURVE_RTOL, "{p:?}");
        }
        assert_covers(&ncs[1].lines, d_y0, |p| p[0], (0.0, 60.0), gap);
        assert_covers(&ncs[1].lines, d_x20, |p| p[1], (0.0, 40.0), gap);
        // The edge x = 0 is drawn once, not also by marching squares along the first column.
        let on_axis = ncs[0]
            .lines
            .iter()
            .filter(|l| l.points.iter().filter(|p| p[0] == 0.0).count() >= 2)
            .count();
        assert_eq!(on_axis, 1);
    }

    #[test]
    fn rosenzweig_macarthur_nullclines_lie_on_the_closed_form() {
        // Closed form for r x(1 − x/K) − a x y/(1 + a h x) and b a x y/(1 + a h x) − m y:
        // prey: x = 0 and y = (r/a)(1 − x/K)(1 + a h x) (inside the window for 0 ≤ x ≤ K);
        // predator: y = 0 and x = m/(a(b − m h)).
        let model = builtin("holling-ii");
        let p = |name: &str| model.param(name).expect("parameter");
        let (r, k, a, h, b, m) = (p("r"), p("K"), p("a"), p("h"), p("b"), p("m"));
        let n = 256;
        let ncs = nullclines(&model, n);
        let (dx, dy) = (10.0 / (n - 1) as f64, 5.0 / (n - 1) as f64);
        let gap = 2.0 * dx.max(dy);

        let prey = move |x: f64| (r / a) * (1.0 - x / k) * (1.0 + a * h * x);
        let d_x0 = |q: Point| (q[0] / 10.0).abs();
        let d_prey = |q: Point| ((q[1] - prey(q[0])) / 5.0).abs();
        for q in ncs[0].lines.iter().flat_map(|l| &l.points) {
            assert!(d_x0(*q).min(d_prey(*q)) <= CURVE_RTOL, "{q:?}");
        }
        assert_covers(&ncs[0].lines, d_x0, |q| q[1], (0.0, 5.0), gap);
        assert_covers(&ncs[0].lines, d_prey, |q| q[0], (0.0, k), gap);

        let x_star = m / (a * (b - m * h));
        let d_y0 = |q: Point| (q[1] / 5.0).abs();
        let d_pred = |q: Point| ((q[0] - x_star) / 10.0).abs();
        for q in ncs[1].lines.iter().flat_map(|l| &l.points) {
            assert!(d_y0(*q).min(d_pred(*q)) <= CURVE_RTOL, "{q:?}");
        }
        assert_covers(&ncs[1].lines, d_y0, |q| q[0], (0.0, 10.0), gap);
        assert_covers(&ncs[1].lines, d_pred, |q| q[1], (0.0, 5.0), gap);
    }

    #[test]
    fn a_nullcline_through_a_saddle_cell_is_joined_into_two_corners() {
        // f = (x − 1)(y − 1): closed form, the cross x = 1 ∪ y = 1. On a 20-vertex grid over
        // 0..2 the point (1, 1) is the centre of a cell, whose corners alternate in sign. The
        // decider's saddle value is exactly 0, counted as above, so the cross splits into two
        // L-shaped polylines, each continuous (no step longer than a cell's diagonal).
        let model = custom(["(x - 1)*(y - 1)", "1"], [0.0, 2.0, 0.0, 2.0]);
        let n = 20;
        let ncs = nullclines(&model, n);
        let lines = &ncs[0].lines;
        assert_eq!(lines.len(), 2, "{lines:?}");
        let h = 2.0 / (n - 1) as f64;
        for l in lines {
            for p in &l.points {
                assert!((p[0] - 1.0).abs().min((p[1] - 1.0).abs()) < 1e-14, "{p:?}");
            }
            for w in l.points.windows(2) {
                let step = (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]);
                assert!(step <= h * 2f64.sqrt() + 1e-12, "jump of {step}");
            }
            // Each runs edge to edge, turning once near (1, 1).
            let (a, b) = (l.points[0], l.points[l.points.len() - 1]);
            let on_edge = |p: Point| {
                p.iter()
                    .any(|&c| c.abs() < 1e-12 || (c - 2.0).abs() < 1e-12)
            };
            assert!(on_edge(a) && on_edge(b), "{a:?} {b:?}");
        }
        assert_covers(lines, |p| (p[0] - 1.0).abs(), |p| p[1], (0.0, 2.0), 2.0 * h);
        assert_covers(lines, |p| (p[1] - 1.0).abs(), |p| p[0], (0.0, 2.0), 2.0 * h);
        // The constant rate has no nullcline.
        assert!(ncs[1].lines.is_empty());
    }

    #[test]
    fn a_nullcline_on_an_axis_inside_the_window_appears_once() {
        // dx/dt = x²(y − 1) has the double zero x = 0 (no sign change, invisible to marching
        // squares) and y = 1; dy/dt = y(x − 0.5) changes sign across y = 0, which marching
        // squares sees and the axis test finds too. Closed form for both.
        let model = custom(["x^2*(y - 1)", "y*(x - 0.5)"], [-1.3, 2.1, -1.7, 2.3]);
        let n = 101;
        let ncs = nullclines(&model, n);
        let gap = 2.0 * (3.4_f64 / 100.0).max(4.0 / 100.0);
        let d_x0 = |p: Point| p[0].abs() / 3.4;
        let d_y1 = |p: Point| (p[1] - 1.0).abs() / 4.0;
        for p in ncs[0].lines.iter().flat_map(|l| &l.points) {
            assert!(d_x0(*p).min(d_y1(*p)) <= CURVE_RTOL, "{p:?}");
        }
        assert_covers(&ncs[0].lines, d_x0, |p| p[1], (-1.7, 2.3), gap);
        assert_covers(&ncs[0].lines, d_y1, |p| p[0], (-1.3, 2.1), gap);
        let d_y0 = |p: Point| p[1].abs() / 4.0;
        assert_covers(&ncs[1].lines, d_y0, |p| p[0], (-1.3, 2.1), gap);
        // y = 0 once: the vertices on it are not repeated by a second line.
        let mut on: Vec<f64> = ncs[1]
            .lines
            .iter()
            .flat_map(|l| &l.points)
            .filter(|p| d_y0(**p) <= CURVE_RTOL)
            .map(|p| p[0])
            .collect();
        on.sort_by(f64::total_cmp);
        let repeats = on.windows(2).filter(|w| w[1] - w[0] < 1e-9).count();
        assert!(repeats <= 2, "{repeats} repeated vertices on y = 0");
    }

    #[test]
    fn undefined_constant_and_zero_rates_do_not_panic() {
        // ln x is undefined for x ≤ 0: the zero set y = ln x (closed form) in x > 0 only.
        let model = custom(["ln(x) - y", "0"], [-2.0, 3.0, -2.0, 2.0]);
        let ncs = nullclines(&model, 64);
        assert!(!ncs[0].lines.is_empty());
        for p in ncs[0].lines.iter().flat_map(|l| &l.points) {
            assert!(p[0] > 0.0 && (p[1] - p[0].ln()).abs() < 1e-9, "{p:?}");
        }
        // Identically zero: the zero set is everything, and nothing is drawn.
        assert!(ncs[1].lines.is_empty());
        for rates in [
            ["1/x", "1/(x*y)"],
            ["k", "-k"],
            ["sqrt(-1 - x^2)", "ln(0*x)"],
            ["exp(1000*x)", "x/0"],
        ] {
            let model = custom(rates, [-1.0, 1.0, -1.0, 1.0]);
            for n in [0, 1, 2, 3, 17] {
                let ncs = nullclines(&model, n);
                assert_eq!(ncs.len(), 2);
            }
        }
    }
}
