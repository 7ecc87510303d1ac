//! Level curves of a model's first integral H: conserved quantities make orbits closed curves,
//! and drawing a few of them shows the whole family of cycles at once.
//!
//! H is evaluated once on an `n × n` grid at the cell centres of the window (half a cell in
//! from the edges, where first integrals of population models usually contain ln x or ln y),
//! and every level is traced on that one grid by marching squares, each crossing refined onto
//! the exact level with H's exact gradient. Levels are traced in parallel.

use rayon::prelude::*;

use crate::field::{eval_grid, recycle};
use crate::marching::{Grid, Sampled, level_curves, sample_stride};
use crate::model::Model;
use crate::scene::{Contour, Point};

/// [`default_levels`] spaces the levels between H's interior extremum and the nearest of H's
/// values on the window's boundary, capped by this quantile of H over the window (from the
/// extremum's side), so a boundary that is everywhere far off still leaves closed curves.
pub const LEVEL_QUANTILE: f64 = 0.5;

/// Without an interior extremum the levels spread evenly between these quantiles of H.
pub const FALLBACK_QUANTILES: (f64, f64) = (0.1, 0.9);

/// Quantiles of H are taken over about this many grid values.
const QUANTILE_SAMPLES: usize = 1024;

/// The level curves of the first integral at each of `levels`, on an `n × n` grid; one
/// [`Contour`] per level, in order (a non-finite level has no lines). Empty when the model has
/// no first integral.
pub fn contours(model: &Model, levels: &[f64], n: usize) -> Vec<Contour> {
    if !model.has_invariant() {
        return Vec::new();
    }
    let Some((grid, h)) = sample_invariant(model, n) else {
        return levels
            .iter()
            .map(|&level| Contour {
                level,
                lines: Vec::new(),
            })
            .collect();
    };
    let out = trace_levels(model, grid, &h, levels);
    recycle(vec![h]);
    out
}

/// H at `point`, if the model has a first integral and it is finite there.
pub fn level_through(model: &Model, point: [f64; 2]) -> Option<f64> {
    model
        .invariant(point[0], point[1])
        .filter(|h| h.is_finite())
}

/// `count` levels of H, sampled on an `n × n` grid, that show the closed curves well.
///
/// When H has its smallest (or else largest) finite value at an interior grid vertex, the
/// levels run outward from that extremum to the cap `c`: the nearest of H's values on the
/// grid's boundary (beyond it a level curve leaves the window, so it is no longer closed
/// there), or the [`LEVEL_QUANTILE`] of H if that is nearer. They are placed at
/// `H_ext + (c − H_ext)·(k/(count+1))²`, `k = 1…count`: near a centre H grows like the square
/// of the distance, so the curves come out about evenly spaced. Otherwise the levels spread
/// evenly between the [`FALLBACK_QUANTILES`]. Non-finite values of H are ignored; no first
/// integral, or a constant one, gives no levels.
pub fn default_levels(model: &Model, count: usize, n: usize) -> Vec<f64> {
    if count == 0 {
        return Vec::new();
    }
    match sample_invariant(model, n) {
        Some((grid, h)) => {
            let levels = levels_on(&grid, &h, count);
            recycle(vec![h]);
            levels
        }
        None => Vec::new(),
    }
}

/// [`contours`] at [`default_levels`], evaluating H on the grid once for both (the two calls
/// in a row evaluate it twice, and H, full of logarithms, is the costly part).
pub fn default_contours(model: &Model, count: usize, n: usize) -> Vec<Contour> {
    if count == 0 {
        return Vec::new();
    }
    let Some((grid, h)) = sample_invariant(model, n) else {
        return Vec::new();
    };
    let levels = levels_on(&grid, &h, count);
    let out = trace_levels(model, grid, &h, &levels);
    recycle(vec![h]);
    out
}

/// The levels of [`default_levels`] from H sampled on `grid`.
fn levels_on(grid: &Grid, h: &[f64], count: usize) -> Vec<f64> {
    let (nx, ny) = (grid.nx, grid.ny);
    let on_boundary = |k: usize| {
        let (i, j) = (k % nx, k / nx);
        i == 0 || j == 0 || i == nx - 1 || j == ny - 1
    };
    // Extremes over finite values (the selects keep the loops free of branches), then where
    // they are; and the extremes over the boundary rows and columns.
    let lo_v = h.iter().fold(f64::INFINITY, |a, &v| {
        a.min(if v.is_finite() { v } else { f64::INFINITY })
    });
    let hi_v = h.iter().fold(f64::NEG_INFINITY, |a, &v| {
        a.max(if v.is_finite() { v } else { f64::NEG_INFINITY })
    });
    let lo = (lo_v, h.iter().position(|&v| v == lo_v).unwrap_or(0));
    let hi = (hi_v, h.iter().position(|&v| v == hi_v).unwrap_or(0));
    let (mut b_lo, mut b_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut boundary = |v: f64| {
        if v.is_finite() {
            b_lo = b_lo.min(v);
            b_hi = b_hi.max(v);
        }
    };
    for j in 0..ny {
        let row = &h[j * nx..(j + 1) * nx];
        if j == 0 || j == ny - 1 {
            row.iter().for_each(|&v| boundary(v));
        } else {
            boundary(row[0]);
            boundary(row[nx - 1]);
        }
    }
    // Also catches NaN extremes (no finite value at all).
    if hi.0.partial_cmp(&lo.0) != Some(std::cmp::Ordering::Greater) {
        return Vec::new();
    }
    // NOTE: quantiles from a strided subset of about QUANTILE_SAMPLES values: the quantile is
    // only a cap on where the levels stop, and sorting all 65 536 values would cost more than
    // tracing the curves. The stride is prime to the row length, so the subset visits every
    // column rather than a few.
    let stride = sample_stride(h.len(), nx, QUANTILE_SAMPLES);
    let mut sample: Vec<f64> = h
        .iter()
        .step_by(stride)
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if sample.is_empty() {
        sample = vec![lo.0, hi.0];
    }
    sample.sort_unstable_by(f64::total_cmp);
    let quantile = |q: f64| {
        let pos = q * (sample.len() - 1) as f64;
        let (i, frac) = (pos.floor() as usize, pos.fract());
        let a = sample[i.min(sample.len() - 1)];
        let b = sample[(i + 1).min(sample.len() - 1)];
        a + frac * (b - a)
    };
    let radial = |ext: f64, cap: f64| -> Vec<f64> {
        (1..=count)
            .map(|k| {
                let s = k as f64 / (count + 1) as f64;
                ext + (cap - ext) * s * s
            })
            .collect()
    };
    // NOTE: "interior" is judged on the grid: an extremum at a boundary vertex means H keeps
    // falling (or rising) beyond the window, and its level curves there are not closed.
    if !on_boundary(lo.1) {
        let cap = b_lo.min(quantile(LEVEL_QUANTILE));
        if cap > lo.0 {
            return radial(lo.0, cap);
        }
    }
    if !on_boundary(hi.1) {
        let cap = b_hi.max(quantile(1.0 - LEVEL_QUANTILE));
        if cap < hi.0 {
            return radial(hi.0, cap);
        }
    }
    let (q0, q1) = (
        quantile(FALLBACK_QUANTILES.0),
        quantile(FALLBACK_QUANTILES.1),
    );
    if q1.partial_cmp(&q0) != Some(std::cmp::Ordering::Greater) {
        return Vec::new();
    }
    (1..=count)
        .map(|k| q0 + (q1 - q0) * k as f64 / (count + 1) as f64)
        .collect()
}

/// Traces every level on H sampled at `grid`, in parallel.
fn trace_levels(model: &Model, grid: Grid, h: &[f64], levels: &[f64]) -> Vec<Contour> {
    let Some(field) = Sampled::new(grid, h) else {
        return Vec::new();
    };
    let exact = |p: Point| {
        model
            .invariant_and_gradient(p[0], p[1])
            .unwrap_or((f64::NAN, [f64::NAN; 2]))
    };
    levels
        .par_iter()
        .map(|&level| Contour {
            level,
            lines: level_curves(&field, level, Some(&exact)),
        })
        .collect()
}

/// H on the `n × n` cell-centre grid; `None` without a first integral or with `n < 2`.
fn sample_invariant(model: &Model, n: usize) -> Option<(Grid, Vec<f64>)> {
    let code = model.invariant_formulas()?;
    let grid = Grid::inset(&model.window(), n, n)?;
    let h = eval_grid(code, model.params(), &grid, 1)
        .into_iter()
        .next()?;
    Some((grid, h))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::integrate::{self, Options};
    use crate::library;

    use crate::scene::Polyline;

    fn lv() -> Model {
        Model::new(&library::default_model()).expect("compiles")
    }

    fn custom(rates: [&str; 2], invariant: Option<&str>, window: [f64; 4]) -> Model {
        crate::test_support::model(rates, &[], invariant, window)
    }

    /// Largest |H − level| accepted at a refined vertex. Newton stops after a step below 1e-7
    /// of a cell (0.23 here); by quadratic convergence the distance left is about that step
    /// squared times |∇²H|/|∇H| (≤ 1 on these curves), ~1e-15, and |∇H| ≤ 1.5 there; rounding
    /// of H's terms (about 10 in size) adds ~1e-15. 1e-11 leaves a wide margin.
    const LEVEL_ATOL: f64 = 1e-11;

    use crate::test_support::distance_to_segment;

    fn distance_to_polyline(p: Point, line: &Polyline) -> f64 {
        let n = line.points.len();
        let segs = if line.closed { n } else { n - 1 };
        (0..segs)
            .map(|s| distance_to_segment(p, line.points[s], line.points[(s + 1) % n]))
            .fold(f64::INFINITY, f64::min)
    }

    #[test]
    fn every_vertex_of_the_contour_through_a_point_is_on_its_level() {
        let model = lv();
        let level = level_through(&model, [10.0, 5.0]).expect("H is defined at (10, 5)");
        let cs = contours(&model, &[level], 256);
        assert_eq!(cs.len(), 1);
        assert_eq!(cs[0].level, level);
        assert_eq!(cs[0].lines.len(), 1);
        assert!(cs[0].lines[0].points.len() > 100);
        for p in &cs[0].lines[0].points {
            let h = model.invariant(p[0], p[1]).expect("invariant");
            assert!((h - level).abs() <= LEVEL_ATOL, "{p:?}: {}", h - level);
        }
    }

    #[test]
    fn default_levels_of_lotka_volterra_give_closed_curves_around_the_centre() {
        let model = lv();
        let levels = default_levels(&model, 10, 256);
        assert_eq!(levels.len(), 10);
        assert!(levels.windows(2).all(|w| w[1] > w[0]));
        // Closed form: H = γx − c ln x + αy − a ln y has its minimum at the centre
        // (c/γ, a/α) = (20, 10); the grid minimum is at most H's rise over half a cell above it.
        let h_min = model.invariant(20.0, 10.0).expect("invariant");
        assert!(levels[0] > h_min);
        for c in contours(&model, &levels, 256) {
            assert_eq!(c.lines.len(), 1, "level {}", c.level);
            let line = &c.lines[0];
            assert!(line.closed, "level {} is open", c.level);
            // Each curve winds around the centre: its vertices surround (20, 10).
            let x = line.points.iter().map(|p| p[0]);
            let y = line.points.iter().map(|p| p[1]);
            assert!(x.clone().fold(f64::INFINITY, f64::min) < 20.0);
            assert!(x.fold(f64::NEG_INFINITY, f64::max) > 20.0);
            assert!(y.clone().fold(f64::INFINITY, f64::min) < 10.0);
            assert!(y.fold(f64::NEG_INFINITY, f64::max) > 10.0);
            for p in &line.points {
                let h = model.invariant(p[0], p[1]).expect("invariant");
                assert!((h - c.level).abs() <= LEVEL_ATOL);
            }
        }
    }

    #[test]
    fn default_contours_equal_contours_at_the_default_levels() {
        // Reference: the two-call route, which evaluates H twice on the same grid.
        let model = lv();
        let levels = default_levels(&model, 7, 128);
        let two_calls = contours(&model, &levels, 128);
        assert_eq!(default_contours(&model, 7, 128), two_calls);
        assert_eq!(two_calls.len(), 7);
        assert!(default_contours(&model, 0, 128).is_empty());
    }

    #[test]
    fn an_integrated_orbit_stays_on_the_contour_through_its_start() {
        let model = lv();
        let seed = [10.0, 5.0];
        let level = level_through(&model, seed).expect("H at the seed");
        let line = contours(&model, &[level], 256)
            .pop()
            .and_then(|mut c| c.lines.pop())
            .expect("one curve");
        assert!(line.closed);
        let opts = Options {
            rtol: 1e-10,
            atol: 1e-10,
            ..Options::default()
        };
        // About two periods (the linearised period 2π/√(ac) ≈ 5.1 is a lower bound here).
        let traj = integrate::integrate(&model, 0.0, seed, 15.0, &opts, &[]).expect("setup");
        assert!(traj.stop().is_success());
        let samples: Vec<Point> = traj.resample(0.01).into_iter().map(|(_, y)| y).collect();
        // The bound, from two sources:
        // 1. the contour is a polygon whose vertices lie on the curve; between two vertices
        //    the curve leaves the chord by at most its sagitta κℓ²/8 (chord ℓ, curvature κ),
        //    with κ estimated from the polygon's turning angles (taking the larger at either
        //    end of a chord, and doubling it for safety);
        // 2. the orbit drifts off its level by the integration error: the largest |ΔH| along
        //    it divided by the smallest |∇H| there.
        let n = line.points.len();
        let mut sagitta = 0.0_f64;
        let turn = |i: usize| {
            let (a, b, c) = (
                line.points[(i + n - 1) % n],
                line.points[i],
                line.points[(i + 1) % n],
            );
            let (u, v) = ([b[0] - a[0], b[1] - a[1]], [c[0] - b[0], c[1] - b[1]]);
            let angle = (u[0] * v[1] - u[1] * v[0])
                .atan2(u[0] * v[0] + u[1] * v[1])
                .abs();
            angle / (0.5 * (u[0].hypot(u[1]) + v[0].hypot(v[1])))
        };
        for i in 0..n {
            let (a, b) = (line.points[i], line.points[(i + 1) % n]);
            let len = (b[0] - a[0]).hypot(b[1] - a[1]);
            let kappa = 2.0 * turn(i).max(turn((i + 1) % n));
            sagitta = sagitta.max(kappa * len * len / 8.0);
        }
        let (mut dh, mut grad_min) = (0.0_f64, f64::INFINITY);
        for p in &samples {
            let (h, g) = model.invariant_and_gradient(p[0], p[1]).expect("invariant");
            dh = dh.max((h - level).abs());
            grad_min = grad_min.min(g[0].hypot(g[1]));
        }
        let bound = sagitta + dh / grad_min + 1e-12;
        // Sanity of the bound itself: cells are 0.23 × 0.16, so it must be far below a cell.
        assert!(bound < 0.01, "bound {bound}");
        let worst = samples
            .iter()
            .map(|&p| distance_to_polyline(p, &line))
            .fold(0.0, f64::max);
        assert!(
            worst <= bound,
            "orbit is {worst} from the contour (bound {bound})"
        );
        // And the orbit goes all the way round: it passes near every vertex of the contour.
        let far = line
            .points
            .iter()
            .filter(|&&v| {
                samples
                    .iter()
                    .map(|s| (s[0] - v[0]).hypot(s[1] - v[1]))
                    .fold(f64::INFINITY, f64::min)
                    > 0.5
            })
            .count();
        assert_eq!(far, 0);
    }

    #[test]
    fn models_without_or_with_awkward_invariants_do_not_panic() {
        let none = Model::new(&library::builtin("holling-ii").expect("built in").spec())
            .expect("compiles");
        assert!(contours(&none, &[1.0], 64).is_empty());
        assert!(default_levels(&none, 5, 64).is_empty());
        assert_eq!(level_through(&none, [1.0, 1.0]), None);

        // Undefined on half the window (ln x, x ≤ 0), constant, and infinite levels.
        let half = custom(["y", "-x"], Some("ln(x) + y^2"), [-1.0, 1.0, -1.0, 1.0]);
        let levels = default_levels(&half, 4, 64);
        let cs = contours(&half, &levels, 64);
        assert_eq!(cs.len(), levels.len());
        for c in &cs {
            for p in c.lines.iter().flat_map(|l| &l.points) {
                assert!(p[0] > 0.0);
                let h = half.invariant(p[0], p[1]).expect("invariant");
                assert!((h - c.level).abs() < 1e-9, "{p:?}");
            }
        }
        let inf = contours(&half, &[f64::INFINITY, f64::NAN], 64);
        assert!(inf.iter().all(|c| c.lines.is_empty()));
        assert_eq!(level_through(&half, [-0.5, 0.0]), None);

        let constant = custom(["0", "0"], Some("3"), [0.0, 1.0, 0.0, 1.0]);
        assert!(default_levels(&constant, 5, 32).is_empty());
        assert!(contours(&constant, &[3.0], 32)[0].lines.is_empty());
        for n in [0, 1, 2] {
            let cs = contours(&half, &[0.0], n);
            assert_eq!(cs.len(), 1);
            let _ = default_levels(&half, 3, n);
        }
    }

    #[test]
    fn a_maximum_inside_the_window_is_found_too() {
        // H = −(x² + y²) has a maximum at the origin (closed form); levels lie below it, and
        // each contour is the circle of radius √(−level).
        let model = custom(["y", "-x"], Some("-(x^2 + y^2)"), [-1.0, 1.3, -1.1, 1.0]);
        let levels = default_levels(&model, 5, 128);
        assert_eq!(levels.len(), 5);
        assert!(levels.iter().all(|&l| l < 0.0 && l > -1.0));
        for c in contours(&model, &levels, 128) {
            assert_eq!(c.lines.len(), 1);
            assert!(c.lines[0].closed);
            let r = (-c.level).sqrt();
            for p in &c.lines[0].points {
                assert!((p[0].hypot(p[1]) - r).abs() < 1e-12);
            }
        }
    }
}
