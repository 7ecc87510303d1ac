//! Evenly spaced streamlines (Jobard and Lefer, "Creating evenly-spaced streamlines of
//! arbitrary density", 1997): a picture of the flow that neither crowds nor leaves holes.
//!
//! Lines are traced in *screen space*, the window mapped to a box whose larger side is 1 (the
//! axes scaled by the window's aspect ratio, clamped to [`MAX_SCREEN_ASPECT`]), so a window of
//! 0..60 × 0..40 is treated isotropically. They follow the *normalised* field F/|F| there, so
//! every fixed Runge–Kutta step covers the same distance and slow and fast regions get the
//! same spacing. Each line grows both ways from its seed until it comes within `d_test` of
//! another line (or of itself, further back than a few steps), leaves the window, reaches a
//! point where the field is zero, undefined or reverses within a step, or runs out of points.
//! New seeds are taken at `d_sep` on either side of every vertex of the lines drawn so far,
//! first-in first-out; when none is left, a lattice over the window supplies seeds for regions
//! the flow does not reach. Proximity is tested through a uniform grid of cells of side `d_sep`.

use crate::model::Model;
use crate::scene::{Point, Polyline};

/// The screen box's aspect ratio is the window's, clamped to [1/this, this] (a plot is never
/// drawn more elongated than this).
pub const MAX_SCREEN_ASPECT: f64 = 3.0;

/// The smallest separation honoured, as a fraction of the window's larger side (finer requests
/// are raised to it, so a typed 0 cannot ask for millions of lines).
pub const MIN_SEPARATION: f64 = 2e-3;

/// Smallest and largest `d_test/d_sep` honoured.
pub const TEST_RATIO_RANGE: (f64, f64) = (0.05, 1.0);

/// The Runge–Kutta step as a fraction of `d_sep`.
pub const STEP_FRACTION: f64 = 0.2;

/// A step whose first and last stage directions differ by more than 60° ends the line: the
/// normalised field turns that fast only across an equilibrium or a singularity.
const MIN_STAGE_COS: f64 = 0.5;

/// The field counts as zero where its screen speed is below this fraction of the median speed.
const ZERO_SPEED_RTOL: f64 = 1e-9;

/// A seed is accepted at a distance of at least `d_sep·(1 − SEED_SLACK)` from every line (it
/// is placed at exactly `d_sep` from its parent, up to rounding).
const SEED_SLACK: f64 = 1e-9;

/// A line ignores its own vertices within this many `d_test` of arc length when testing
/// proximity.
const SELF_SKIP_TESTS: f64 = 2.0;

/// Lines with fewer vertices are discarded.
const MIN_LINE_POINTS: usize = 3;

/// `cancelled()` is consulted at least once per this many Runge–Kutta steps.
const CANCEL_EVERY_STEPS: usize = 256;

/// Samples per side of the grid on which the typical speed is measured.
const SPEED_GRID: usize = 16;

/// Settings of [`streamlines`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StreamlineOptions {
    /// `d_sep`, the distance between neighbouring lines, as a fraction of the window's larger
    /// side (in screen space). Default 0.04; at least [`MIN_SEPARATION`].
    pub separation: f64,
    /// `d_test/d_sep`: a line stops when it comes this close (relative to `d_sep`) to another.
    /// Default 0.5; clamped to [`TEST_RATIO_RANGE`].
    pub test_ratio: f64,
    /// Most vertices in one line (both directions together). Default 2000.
    pub max_points_per_line: usize,
    /// Most lines. Default 2000.
    pub max_lines: usize,
}

impl Default for StreamlineOptions {
    fn default() -> Self {
        Self {
            separation: 0.04,
            test_ratio: 0.5,
            max_points_per_line: 2000,
            max_lines: 2000,
        }
    }
}

/// Evenly spaced streamlines of the model's field over its window, in plot coordinates.
/// Returns when no seed is left, `max_lines` is reached, or `cancelled()` turns true (then
/// with the lines finished so far). A field that is zero or undefined everywhere has none.
pub fn streamlines(
    model: &Model,
    opts: &StreamlineOptions,
    cancelled: &dyn Fn() -> bool,
) -> Vec<Polyline> {
    let Some(mut tracer) = Tracer::new(model, opts) else {
        return Vec::new();
    };
    tracer.run(cancelled);
    tracer
        .lines
        .iter()
        .map(|line| Polyline {
            points: line
                .iter()
                .map(|&s| tracer.map.plot_from_screen(s))
                .collect(),
            closed: false,
        })
        .collect()
}

/// The affine map between plot space and the screen box `[0, w] × [0, h]`.
#[derive(Clone, Copy, Debug)]
struct ScreenMap {
    origin: Point,
    /// Screen units per plot unit along each axis.
    scale: [f64; 2],
    /// The box's size.
    size: [f64; 2],
}

impl ScreenMap {
    fn new(model: &Model) -> Self {
        let w = model.window();
        let aspect = (w.width() / w.height()).clamp(1.0 / MAX_SCREEN_ASPECT, MAX_SCREEN_ASPECT);
        let size = if aspect >= 1.0 {
            [1.0, 1.0 / aspect]
        } else {
            [aspect, 1.0]
        };
        Self {
            origin: [w.x_min, w.y_min],
            scale: [size[0] / w.width(), size[1] / w.height()],
            size,
        }
    }

    fn plot_from_screen(&self, s: Point) -> Point {
        [
            self.origin[0] + s[0] / self.scale[0],
            self.origin[1] + s[1] / self.scale[1],
        ]
    }

    fn inside(&self, s: Point) -> bool {
        s[0] >= 0.0 && s[0] <= self.size[0] && s[1] >= 0.0 && s[1] <= self.size[1]
    }

    /// Where the segment from `a` (inside) to `b` (outside) leaves the box.
    fn exit(&self, a: Point, b: Point) -> Point {
        let mut t = 1.0_f64;
        for c in 0..2 {
            let d = b[c] - a[c];
            if b[c] > self.size[c] && d > 0.0 {
                t = t.min((self.size[c] - a[c]) / d);
            } else if b[c] < 0.0 && d < 0.0 {
                t = t.min(-a[c] / d);
            }
        }
        let t = t.clamp(0.0, 1.0);
        let p = [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])];
        // NOTE: clamp so rounding cannot leave the point a hair outside the box.
        [p[0].clamp(0.0, self.size[0]), p[1].clamp(0.0, self.size[1])]
    }
}

/// A vertex in the proximity grid.
#[derive(Clone, Copy, Debug)]
struct Vertex {
    at: Point,
    line: u32,
    /// Signed index along its line from the seed (0), for the self-proximity test.
    index: i32,
}

/// Uniform grid of square cells holding the vertices of all lines.
struct Cells {
    side: f64,
    nx: usize,
    ny: usize,
    cells: Vec<Vec<u32>>,
    vertices: Vec<Vertex>,
}

impl Cells {
    fn new(size: [f64; 2], side: f64) -> Self {
        let nx = (size[0] / side).ceil() as usize + 1;
        let ny = (size[1] / side).ceil() as usize + 1;
        Self {
            side,
            nx,
            ny,
            cells: vec![Vec::new(); nx * ny],
            vertices: Vec::new(),
        }
    }

    fn cell_of(&self, p: Point) -> (usize, usize) {
        let i = ((p[0] / self.side).floor().max(0.0) as usize).min(self.nx - 1);
        let j = ((p[1] / self.side).floor().max(0.0) as usize).min(self.ny - 1);
        (i, j)
    }

    fn insert(&mut self, v: Vertex) {
        let (i, j) = self.cell_of(v.at);
        self.cells[j * self.nx + i].push(self.vertices.len() as u32);
        self.vertices.push(v);
    }

    /// Removes the last `count` vertices inserted.
    fn pop(&mut self, count: usize) {
        for _ in 0..count {
            let Some(v) = self.vertices.pop() else {
                return;
            };
            let (i, j) = self.cell_of(v.at);
            self.cells[j * self.nx + i].pop();
        }
    }

    /// Whether every vertex is at least `radius` (≤ the cell side) from `p`, ignoring those of
    /// line `line` within `skip` indices of `index`.
    fn clear_of(&self, p: Point, radius: f64, own: Option<(u32, i32, i32)>) -> bool {
        let (ci, cj) = self.cell_of(p);
        let r2 = radius * radius;
        for j in cj.saturating_sub(1)..=(cj + 1).min(self.ny - 1) {
            for i in ci.saturating_sub(1)..=(ci + 1).min(self.nx - 1) {
                for &k in &self.cells[j * self.nx + i] {
                    let v = self.vertices[k as usize];
                    if let Some((line, index, skip)) = own
                        && v.line == line
                        && (v.index - index).abs() <= skip
                    {
                        continue;
                    }
                    let (dx, dy) = (v.at[0] - p[0], v.at[1] - p[1]);
                    if dx * dx + dy * dy < r2 {
                        return false;
                    }
                }
            }
        }
        true
    }
}

/// A step onto the window's edge shorter than this fraction of `d_sep` adds no vertex.
const EDGE_REPEAT: f64 = 1e-9;

/// The caller asked to stop.
#[derive(Clone, Copy, Debug)]
struct Cancelled;

/// The state of one run of the algorithm.
struct Tracer<'a> {
    model: &'a Model,
    map: ScreenMap,
    d_sep: f64,
    d_test: f64,
    step: f64,
    self_skip: i32,
    zero_speed: f64,
    max_points: usize,
    max_lines: usize,
    cells: Cells,
    lines: Vec<Vec<Point>>,
    steps_since_check: usize,
}

impl<'a> Tracer<'a> {
    fn new(model: &'a Model, opts: &StreamlineOptions) -> Option<Self> {
        let map = ScreenMap::new(model);
        let d_sep = if opts.separation.is_finite() {
            opts.separation.max(MIN_SEPARATION)
        } else {
            StreamlineOptions::default().separation
        };
        let ratio = if opts.test_ratio.is_finite() {
            opts.test_ratio
                .clamp(TEST_RATIO_RANGE.0, TEST_RATIO_RANGE.1)
        } else {
            StreamlineOptions::default().test_ratio
        };
        let d_test = ratio * d_sep;
        let step = STEP_FRACTION * d_sep;
        let typical = typical_screen_speed(model, &map)?;
        Some(Self {
            model,
            map,
            d_sep,
            d_test,
            step,
            self_skip: (SELF_SKIP_TESTS * d_test / step).ceil() as i32,
            zero_speed: ZERO_SPEED_RTOL * typical,
            max_points: opts.max_points_per_line.max(MIN_LINE_POINTS),
            max_lines: opts.max_lines,
            cells: Cells::new(map.size, d_sep),
            lines: Vec::new(),
            steps_since_check: 0,
        })
    }

    /// The unit direction of the field at screen point `s`, if it is defined and not zero.
    #[inline]
    fn direction(&self, s: Point) -> Option<Point> {
        let p = self.map.plot_from_screen(s);
        let r = self.model.rates(p[0], p[1]);
        let v = [r[0] * self.map.scale[0], r[1] * self.map.scale[1]];
        let speed = v[0].hypot(v[1]);
        if speed.is_finite() && speed > self.zero_speed {
            Some([v[0] / speed, v[1] / speed])
        } else {
            None
        }
    }

    /// One classical Runge–Kutta step of length `h` (negative: backward) in the normalised field.
    fn rk4(&self, p: Point, h: f64) -> Option<Point> {
        let at = |k: Point, f: f64| [p[0] + f * h * k[0], p[1] + f * h * k[1]];
        let k1 = self.direction(p)?;
        let k2 = self.direction(at(k1, 0.5))?;
        let k3 = self.direction(at(k2, 0.5))?;
        let k4 = self.direction(at(k3, 1.0))?;
        if k1[0] * k4[0] + k1[1] * k4[1] < MIN_STAGE_COS {
            return None;
        }
        Some([
            p[0] + h / 6.0 * (k1[0] + 2.0 * (k2[0] + k3[0]) + k4[0]),
            p[1] + h / 6.0 * (k1[1] + 2.0 * (k2[1] + k3[1]) + k4[1]),
        ])
    }

    /// Whether `s` can seed a line.
    fn seed_ok(&self, s: Point) -> bool {
        self.map.inside(s)
            && self.direction(s).is_some()
            && self
                .cells
                .clear_of(s, self.d_sep * (1.0 - SEED_SLACK), None)
    }

    /// Grows a line from `seed` both ways; keeps it (and returns its index) if it has at least
    /// [`MIN_LINE_POINTS`] vertices. `Err(Cancelled)` when cancelled mid-way (the line is
    /// dropped).
    fn grow(
        &mut self,
        seed: Point,
        cancelled: &dyn Fn() -> bool,
    ) -> Result<Option<usize>, Cancelled> {
        let id = self.lines.len() as u32;
        self.cells.insert(Vertex {
            at: seed,
            line: id,
            index: 0,
        });
        let mut inserted = 1;
        let mut halves: [Vec<Point>; 2] = [Vec::new(), Vec::new()];
        let mut stopped = false;
        for (half, sign) in [(0usize, 1.0f64), (1, -1.0)] {
            let mut p = seed;
            let mut index = 0i32;
            while inserted < self.max_points {
                self.steps_since_check += 1;
                if self.steps_since_check >= CANCEL_EVERY_STEPS {
                    self.steps_since_check = 0;
                    if cancelled() {
                        stopped = true;
                        break;
                    }
                }
                let Some(next) = self.rk4(p, sign * self.step) else {
                    break;
                };
                let leaving = !self.map.inside(next);
                let next = if leaving {
                    self.map.exit(p, next)
                } else {
                    next
                };
                if leaving && (next[0] - p[0]).hypot(next[1] - p[1]) <= EDGE_REPEAT * self.d_sep {
                    // Already on the edge, heading out: nothing to add.
                    break;
                }
                index += sign as i32;
                let own = Some((id, index, self.self_skip));
                if !self.cells.clear_of(next, self.d_test, own) {
                    break;
                }
                self.cells.insert(Vertex {
                    at: next,
                    line: id,
                    index,
                });
                inserted += 1;
                halves[half].push(next);
                p = next;
                if leaving {
                    break;
                }
            }
            if stopped {
                break;
            }
        }
        if stopped {
            self.cells.pop(inserted);
            return Err(Cancelled);
        }
        if inserted < MIN_LINE_POINTS {
            self.cells.pop(inserted);
            return Ok(None);
        }
        let [forward, mut backward] = halves;
        backward.reverse();
        backward.push(seed);
        backward.extend(forward);
        self.lines.push(backward);
        Ok(Some(id as usize))
    }

    fn run(&mut self, cancelled: &dyn Fn() -> bool) {
        let mut queue = std::collections::VecDeque::new();
        // Fallback seeds: the centre, then a lattice of spacing d_sep, row by row.
        let d = self.d_sep;
        let lattice_nx = (self.map.size[0] / d).floor() as usize + 1;
        let lattice_ny = (self.map.size[1] / d).floor() as usize + 1;
        let centre = [0.5 * self.map.size[0], 0.5 * self.map.size[1]];
        let mut fallback = std::iter::once(centre).chain((0..lattice_ny).flat_map(move |j| {
            (0..lattice_nx).map(move |i| [(i as f64 + 0.5) * d, (j as f64 + 0.5) * d])
        }));
        while self.lines.len() < self.max_lines {
            if cancelled() {
                return;
            }
            let Some(parent) = queue.pop_front() else {
                // No line left to seed from: the next free lattice point.
                let Some(seed) = fallback.by_ref().find(|&s| self.seed_ok(s)) else {
                    return;
                };
                match self.grow(seed, cancelled) {
                    Ok(Some(id)) => queue.push_back(id),
                    Ok(None) => {}
                    Err(Cancelled) => return,
                }
                continue;
            };
            let n = self.lines[parent].len();
            for v in 0..n {
                if self.lines.len() >= self.max_lines {
                    return;
                }
                let line = &self.lines[parent];
                let (a, b) = (line[v.saturating_sub(1)], line[(v + 1).min(n - 1)]);
                let t = [b[0] - a[0], b[1] - a[1]];
                let len = t[0].hypot(t[1]);
                if len.is_nan() || len <= 0.0 {
                    continue;
                }
                let normal = [-t[1] / len, t[0] / len];
                let p = line[v];
                for side in [1.0, -1.0] {
                    let seed = [
                        p[0] + side * self.d_sep * normal[0],
                        p[1] + side * self.d_sep * normal[1],
                    ];
                    if self.seed_ok(seed) {
                        match self.grow(seed, cancelled) {
                            Ok(Some(id)) => queue.push_back(id),
                            Ok(None) => {}
                            Err(Cancelled) => return,
                        }
                    }
                }
            }
        }
    }
}

/// The median screen speed of the field over a coarse grid (finite, nonzero speeds only);
/// `None` when the field is zero or undefined at every sample.
fn typical_screen_speed(model: &Model, map: &ScreenMap) -> Option<f64> {
    let n = SPEED_GRID;
    let mut speeds: Vec<f64> = (0..n * n)
        .filter_map(|k| {
            let s = [
                ((k % n) as f64 + 0.5) / n as f64 * map.size[0],
                ((k / n) as f64 + 0.5) / n as f64 * map.size[1],
            ];
            let p = map.plot_from_screen(s);
            let r = model.rates(p[0], p[1]);
            let v = (r[0] * map.scale[0]).hypot(r[1] * map.scale[1]);
            (v.is_finite() && v > 0.0).then_some(v)
        })
        .collect();
    if speeds.is_empty() {
        return None;
    }
    let mid = speeds.len() / 2;
    let (_, m, _) = speeds.select_nth_unstable_by(mid, f64::total_cmp);
    Some(*m)
}

#[cfg(test)]
mod tests {
    use super::*;

    use std::cell::Cell;

    fn builtin(key: &str) -> Model {
        crate::test_support::builtin(key)
    }

    fn custom(rates: [&str; 2], window: [f64; 4]) -> Model {
        crate::test_support::model(rates, &[], None, window)
    }

    fn never() -> bool {
        false
    }

    fn to_screen(model: &Model, lines: &[Polyline]) -> Vec<Vec<Point>> {
        let map = ScreenMap::new(model);
        lines
            .iter()
            .map(|l| {
                l.points
                    .iter()
                    .map(|p| {
                        [
                            (p[0] - map.origin[0]) * map.scale[0],
                            (p[1] - map.origin[1]) * map.scale[1],
                        ]
                    })
                    .collect()
            })
            .collect()
    }

    use crate::test_support::distance_to_segment;

    /// Smallest distance from a vertex of one line to a segment of another, brute force.
    fn closest_approach(lines: &[Vec<Point>]) -> f64 {
        let mut best = f64::INFINITY;
        for (a, la) in lines.iter().enumerate() {
            for (b, lb) in lines.iter().enumerate() {
                if a == b {
                    continue;
                }
                for &p in la {
                    for w in lb.windows(2) {
                        best = best.min(distance_to_segment(p, w[0], w[1]));
                    }
                }
            }
        }
        best
    }

    /// Fraction of a fine lattice over the screen box within `radius` of some vertex.
    fn coverage(model: &Model, lines: &[Vec<Point>], radius: f64) -> f64 {
        let size = ScreenMap::new(model).size;
        let n = 80;
        let (mut hit, mut total) = (0, 0);
        for j in 0..n {
            for i in 0..n {
                let s = [
                    (i as f64 + 0.5) / n as f64 * size[0],
                    (j as f64 + 0.5) / n as f64 * size[1],
                ];
                total += 1;
                let near = lines
                    .iter()
                    .flatten()
                    .any(|v| (v[0] - s[0]).hypot(v[1] - s[1]) <= radius);
                hit += usize::from(near);
            }
        }
        hit as f64 / total as f64
    }

    /// Every vertex pair of two lines is at least d_test apart by construction (the later vertex
    /// was tested against the earlier). A segment has length at most the step h, so a vertex
    /// can come nearer a segment whose ends are both ≥ d_test away only by the chord's half
    /// length: the distance is ≥ √(d_test² − (h/2)²) = d_test·√(1 − (0.2/(2·0.5))²) ≈
    /// 0.98·d_test with the defaults. This allows 0.97.
    const APPROACH_FRACTION: f64 = 0.97;

    #[test]
    fn lotka_volterra_lines_keep_their_distance_and_fill_the_window() {
        let model = builtin("lotka-volterra");
        let opts = StreamlineOptions::default();
        let lines = streamlines(&model, &opts, &never);
        assert!(lines.len() > 20, "{} lines", lines.len());
        let screen = to_screen(&model, &lines);
        let d_test = opts.test_ratio * opts.separation;
        let closest = closest_approach(&screen);
        assert!(
            closest >= APPROACH_FRACTION * d_test,
            "closest approach {closest} < {}",
            APPROACH_FRACTION * d_test
        );
        // Coverage: a point of the window farther than d_sep from every line would have been
        // a valid seed for one more line, except where lines end near the centre (20, 10) and
        // near the window's corners, where the flow is nearly at rest. Measured: see report.
        let cov = coverage(&model, &screen, opts.separation);
        assert!(cov >= 0.97, "coverage {cov}");
        // Every vertex is inside the window and where the field is defined.
        let w = model.window();
        for p in lines.iter().flat_map(|l| &l.points) {
            assert!(w.contains_with_slack(p[0], p[1], 1e-12), "{p:?}");
        }
    }

    #[test]
    fn a_uniform_flow_gives_parallel_lines_d_sep_apart() {
        // dx/dt = 1, dy/dt = 0 on a square: closed form, horizontal lines; Jobard–Lefer seeds
        // each at d_sep from the previous, so neighbouring ordinates differ by d_sep.
        let model = custom(["1", "0"], [0.0, 2.0, 0.0, 2.0]);
        let opts = StreamlineOptions::default();
        let lines = streamlines(&model, &opts, &never);
        let mut ys: Vec<f64> = lines.iter().map(|l| l.points[0][1] / 2.0).collect();
        ys.sort_by(f64::total_cmp);
        assert!(lines.len() >= 24, "{}", lines.len());
        for w in ys.windows(2) {
            assert!((w[1] - w[0] - opts.separation).abs() < 1e-9, "{w:?}");
        }
        for l in &lines {
            assert!(l.points.iter().all(|p| p[1] == l.points[0][1]));
            // Each runs across the whole window.
            assert!(l.points[0][0] < 1e-12 && l.points[l.points.len() - 1][0] > 2.0 - 1e-12);
        }
        let cov = coverage(&model, &to_screen(&model, &lines), opts.separation);
        assert!(cov > 0.999, "{cov}");
    }

    #[test]
    fn a_wide_window_is_treated_isotropically_on_screen() {
        // The same uniform flow on 0..60 × 0..40 (aspect 1.5): lines d_sep·60 apart in plot
        // units (closed form: the larger side is 1 screen unit).
        let model = custom(["0", "1"], [0.0, 60.0, 0.0, 40.0]);
        let opts = StreamlineOptions::default();
        let lines = streamlines(&model, &opts, &never);
        let mut xs: Vec<f64> = lines.iter().map(|l| l.points[0][0]).collect();
        xs.sort_by(f64::total_cmp);
        for w in xs.windows(2) {
            assert!((w[1] - w[0] - 0.04 * 60.0).abs() < 1e-6, "{w:?}");
        }
    }

    #[test]
    fn cancellation_returns_promptly() {
        let model = builtin("holling-ii");
        let fine = StreamlineOptions {
            separation: 0.005,
            ..StreamlineOptions::default()
        };
        let calls = Cell::new(0usize);
        let cancel_after = 5;
        let lines = streamlines(&model, &fine, &|| {
            calls.set(calls.get() + 1);
            calls.get() > cancel_after
        });
        // It stopped at the first `true`, and did at most CANCEL_EVERY_STEPS steps (one vertex
        // each, plus a seed per line) between two questions.
        assert_eq!(calls.get(), cancel_after + 1);
        let vertices: usize = lines.iter().map(|l| l.points.len()).sum();
        assert!(
            vertices <= calls.get() * CANCEL_EVERY_STEPS + lines.len(),
            "{vertices}"
        );
        let full = streamlines(&model, &fine, &never);
        let all: usize = full.iter().map(|l| l.points.len()).sum();
        assert!(all > 10 * vertices, "{all} vs {vertices}");
        // Cancelled before starting: nothing.
        assert!(streamlines(&model, &fine, &|| true).is_empty());
    }

    #[test]
    fn undefined_zero_and_limited_fields_do_not_panic() {
        // sqrt(x) undefined on the left half: lines stay where the field is defined.
        let model = custom(["sqrt(x)", "1"], [-1.0, 1.0, -1.0, 1.0]);
        let lines = streamlines(&model, &StreamlineOptions::default(), &never);
        assert!(!lines.is_empty());
        for p in lines.iter().flat_map(|l| &l.points) {
            assert!(p[0] >= 0.0, "{p:?}");
        }
        assert!(
            streamlines(
                &custom(["0", "0"], [0.0, 1.0, 0.0, 1.0]),
                &StreamlineOptions::default(),
                &never
            )
            .is_empty()
        );
        assert!(
            streamlines(
                &custom(["ln(-1-x^2)", "y"], [0.0, 1.0, 0.0, 1.0]),
                &StreamlineOptions::default(),
                &never
            )
            .is_empty()
        );
        for opts in [
            StreamlineOptions {
                separation: 0.0,
                test_ratio: f64::NAN,
                max_points_per_line: 0,
                max_lines: 3,
            },
            StreamlineOptions {
                separation: f64::INFINITY,
                ..StreamlineOptions::default()
            },
            StreamlineOptions {
                separation: 5.0,
                test_ratio: 7.0,
                ..StreamlineOptions::default()
            },
        ] {
            let lines = streamlines(&builtin("van-der-pol"), &opts, &never);
            assert!(lines.len() <= opts.max_lines);
            for l in &lines {
                assert!(l.points.len() >= MIN_LINE_POINTS);
                assert!(l.points.len() <= opts.max_points_per_line.max(MIN_LINE_POINTS));
            }
        }
        // Singular along x = 0 (1/x) and blowing up: no panic.
        let _ = streamlines(
            &custom(["1/x", "exp(100*y)"], [-1.0, 1.0, -1.0, 1.0]),
            &StreamlineOptions::default(),
            &never,
        );
    }
}
