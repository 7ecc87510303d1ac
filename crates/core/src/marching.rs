//! Marching squares: the level curves of a function sampled on a regular grid, joined into
//! polylines and refined onto the exact curve.
//!
//! Nullclines (zero sets of a rate) and contours (level sets of a first integral) are the same
//! problem, so both go through here. The steps:
//!
//! 1. every vertex is classified as *above* (`v ≥ level`, so a vertex exactly on the curve
//!    counts as above, consistently) or *below*; a cell with a non-finite corner is skipped;
//! 2. each cell whose corners differ gives one segment, or two in a saddle cell (corners
//!    alternate), where the **asymptotic decider** chooses the pairing: the value of the
//!    bilinear interpolant at its saddle point says whether the two *above* corners are
//!    connected through the cell;
//! 3. segments are joined through the grid edges they share into polylines (closed when the
//!    chain returns to its start);
//! 4. each crossing, first linearly interpolated along its grid edge, is refined onto the curve
//!    by Newton projection along the exact gradient, `p ← p − φ(p)∇φ/|∇φ|²`, falling back to a
//!    bracketed root search along the edge (Illinois) and finally to the interpolated point.
//!
//! Blocks of cells carry the range of their values, so a level touches only the blocks
//! it can cross: ten contours on a 256×256 grid look at a few thousand cells, not 650 000.

use crate::model::Window;
use crate::scene::{Point, Polyline};

/// Cells per side of a block whose value range is kept for skipping.
const BLOCK: usize = 8;

/// Largest number of Newton steps when projecting a crossing onto the curve.
const NEWTON_MAX_STEPS: usize = 6;

/// After a Newton step shorter than this fraction of the cell size the point is accepted
/// without another evaluation (see the note in [`newton_project`]).
const NEWTON_QUADRATIC_CELLS: f64 = 1e-7;

/// Largest number of Illinois (modified regula falsi) steps in the fallback along an edge.
const BRACKET_MAX_STEPS: usize = 60;

/// The bracketed search stops when the bracket is shorter than this fraction of the edge.
const BRACKET_TOL: f64 = 1e-14;

/// Two consecutive vertices closer than this fraction of the cell size are merged (crossings
/// at a grid vertex that lies exactly on the curve come from two edges at once).
const DUPLICATE_CELLS: f64 = 1e-12;

/// Largest number of vertices per side accepted for a grid; larger requests are clamped so a
/// typed number cannot exhaust memory (4096² vertices hold 128 MiB per sampled function).
pub const MAX_GRID_SIDE: usize = 4096;

/// A stride for taking about `target` of `len` grid values (rows of `nx`) that is prime to
/// `nx`, so the values taken spread over every column instead of a few.
pub fn sample_stride(len: usize, nx: usize, target: usize) -> usize {
    let mut stride = (len / target.max(1)).max(1);
    while stride > 1 && gcd(stride, nx) != 1 {
        stride += 1;
    }
    stride
}

fn gcd(mut a: usize, mut b: usize) -> usize {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

/// A regular grid of vertices over a rectangle.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Grid {
    /// Abscissa of the first column.
    pub x_first: f64,
    /// Abscissa of the last column.
    pub x_last: f64,
    /// Ordinate of the first row.
    pub y_first: f64,
    /// Ordinate of the last row.
    pub y_last: f64,
    /// Vertices across (at least 2).
    pub nx: usize,
    /// Vertices up (at least 2).
    pub ny: usize,
}

impl Grid {
    /// `nx × ny` vertices with the outer ones on the window's edges; `None` when fewer than two
    /// either way. Sides are clamped to [`MAX_GRID_SIDE`].
    pub fn spanning(window: &Window, nx: usize, ny: usize) -> Option<Self> {
        if nx < 2 || ny < 2 {
            return None;
        }
        Some(Self {
            x_first: window.x_min,
            x_last: window.x_max,
            y_first: window.y_min,
            y_last: window.y_max,
            nx: nx.min(MAX_GRID_SIDE),
            ny: ny.min(MAX_GRID_SIDE),
        })
    }

    /// `nx × ny` vertices at the centres of an `nx × ny` tiling of the window (half a cell in
    /// from every edge, where formulas such as ln x are often singular); `None` when fewer than
    /// two either way.
    pub fn inset(window: &Window, nx: usize, ny: usize) -> Option<Self> {
        if nx < 2 || ny < 2 {
            return None;
        }
        let (nx, ny) = (nx.min(MAX_GRID_SIDE), ny.min(MAX_GRID_SIDE));
        let hx = 0.5 * window.width() / nx as f64;
        let hy = 0.5 * window.height() / ny as f64;
        Some(Self {
            x_first: window.x_min + hx,
            x_last: window.x_max - hx,
            y_first: window.y_min + hy,
            y_last: window.y_max - hy,
            nx,
            ny,
        })
    }

    /// Abscissa of column `i`.
    #[inline]
    pub fn x(&self, i: usize) -> f64 {
        lerp(self.x_first, self.x_last, i, self.nx)
    }

    /// Ordinate of row `j`.
    #[inline]
    pub fn y(&self, j: usize) -> f64 {
        lerp(self.y_first, self.y_last, j, self.ny)
    }

    /// Width of a cell.
    pub fn dx(&self) -> f64 {
        (self.x_last - self.x_first) / (self.nx - 1) as f64
    }

    /// Height of a cell.
    pub fn dy(&self) -> f64 {
        (self.y_last - self.y_first) / (self.ny - 1) as f64
    }

    /// Number of vertices.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// Whether the grid has no vertices (never, for a constructed grid).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The vertex coordinates as two columns, row-major from the bottom-left (`k = j·nx + i`),
    /// ready for batch evaluation.
    pub fn columns(&self) -> (Vec<f64>, Vec<f64>) {
        let row: Vec<f64> = (0..self.nx).map(|i| self.x(i)).collect();
        let mut xs = Vec::with_capacity(self.len());
        let mut ys = Vec::with_capacity(self.len());
        for j in 0..self.ny {
            let y = self.y(j);
            xs.extend_from_slice(&row);
            ys.extend(std::iter::repeat_n(y, self.nx));
        }
        (xs, ys)
    }
}

/// `a + (b − a)·i/(n − 1)`, exact at both ends.
#[inline]
fn lerp(a: f64, b: f64, i: usize, n: usize) -> f64 {
    // NOTE: written as a weighted mean so that the last vertex is exactly `b` (the window's
    // edge), which the edge tests of the nullclines rely on.
    let t = i as f64 / (n - 1) as f64;
    a * (1.0 - t) + b * t
}

/// Samples of one function on a [`Grid`], with the value range of each block of cells.
#[derive(Clone, Debug)]
pub struct Sampled<'a> {
    grid: Grid,
    values: &'a [f64],
    /// Blocks across.
    bx: usize,
    /// Minimum and maximum of each block's vertices, NaN ignored (`+inf, −inf` when all NaN).
    ranges: Vec<(f64, f64)>,
}

impl<'a> Sampled<'a> {
    /// Wraps values sampled at `grid`'s vertices (`values[j·nx + i]`); `None` if the length is
    /// wrong.
    pub fn new(grid: Grid, values: &'a [f64]) -> Option<Self> {
        if values.len() != grid.len() {
            return None;
        }
        let (cx, cy) = (grid.nx - 1, grid.ny - 1);
        let bx = cx.div_ceil(BLOCK);
        let by = cy.div_ceil(BLOCK);
        let mut ranges = vec![(f64::INFINITY, f64::NEG_INFINITY); bx * by];
        let nx = grid.nx;
        let mut col_lo = vec![f64::INFINITY; nx];
        let mut col_hi = vec![f64::NEG_INFINITY; nx];
        for b_j in 0..by {
            let j0 = b_j * BLOCK;
            let j1 = (j0 + BLOCK).min(cy);
            // Column-wise over the block row's vertex rows first (contiguous, vectorisable),
            // then across each block's columns.
            col_lo.fill(f64::INFINITY);
            col_hi.fill(f64::NEG_INFINITY);
            for row in values[j0 * nx..(j1 + 1) * nx].chunks_exact(nx) {
                // NOTE: comparisons with NaN are false, so NaN is ignored; an infinity only
                // widens the range, and the cells holding it are skipped when traced.
                for ((lo, hi), &v) in col_lo.iter_mut().zip(col_hi.iter_mut()).zip(row) {
                    *lo = if v < *lo { v } else { *lo };
                    *hi = if v > *hi { v } else { *hi };
                }
            }
            for b_i in 0..bx {
                let i0 = b_i * BLOCK;
                let i1 = (i0 + BLOCK).min(cx);
                let lo = col_lo[i0..=i1].iter().fold(f64::INFINITY, |a, &b| a.min(b));
                let hi = col_hi[i0..=i1]
                    .iter()
                    .fold(f64::NEG_INFINITY, |a, &b| a.max(b));
                ranges[b_j * bx + b_i] = (lo, hi);
            }
        }
        Some(Self {
            grid,
            values,
            bx,
            ranges,
        })
    }

    /// The grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// The samples.
    pub fn values(&self) -> &[f64] {
        self.values
    }
}

/// A function whose level curves are traced: its value and exact gradient at a point, for the
/// Newton refinement. Non-finite results are allowed (the crossing then keeps its
/// interpolated position).
pub trait Exact: Sync {
    /// `(φ(p), ∇φ(p))`.
    fn value_and_gradient(&self, p: Point) -> (f64, [f64; 2]);
}

impl<F: Fn(Point) -> (f64, [f64; 2]) + Sync> Exact for F {
    fn value_and_gradient(&self, p: Point) -> (f64, [f64; 2]) {
        self(p)
    }
}

/// The polylines on which the sampled function equals `level`, each vertex refined onto the
/// curve `exact(p) = level` when `exact` is given (it must be the function that was sampled).
pub fn level_curves(field: &Sampled<'_>, level: f64, exact: Option<&dyn Exact>) -> Vec<Polyline> {
    if !level.is_finite() {
        return Vec::new();
    }
    let segments = cell_segments(field, level);
    if segments.is_empty() {
        return Vec::new();
    }
    let joined = join(&segments);
    let points: Vec<Point> = joined
        .edges
        .iter()
        .map(|&e| crossing(field, e, level, exact))
        .collect();
    let g = &field.grid;
    let tiny = DUPLICATE_CELLS * g.dx().abs().max(g.dy().abs());
    let mut lines = Vec::with_capacity(joined.chains.len());
    for (chain, closed) in joined.chains {
        let mut pts: Vec<Point> = Vec::with_capacity(chain.len());
        for k in chain {
            let p = points[k];
            if pts.last().is_none_or(|q| !near(*q, p, tiny)) {
                pts.push(p);
            }
        }
        if closed && pts.len() > 1 && near(pts[0], pts[pts.len() - 1], tiny) {
            pts.pop();
        }
        let closed = closed && pts.len() > 2;
        if pts.len() >= 2 {
            lines.push(Polyline {
                points: pts,
                closed,
            });
        }
    }
    lines
}

#[inline]
fn near(a: Point, b: Point, tol: f64) -> bool {
    (a[0] - b[0]).abs() <= tol && (a[1] - b[1]).abs() <= tol
}

/// Identifies a grid edge: horizontal edges `(i, j)–(i+1, j)` first, then vertical
/// `(i, j)–(i, j+1)`.
type EdgeId = u32;

#[inline]
fn h_edge(g: &Grid, i: usize, j: usize) -> EdgeId {
    (j * (g.nx - 1) + i) as EdgeId
}

#[inline]
fn v_edge(g: &Grid, i: usize, j: usize) -> EdgeId {
    ((g.nx - 1) * g.ny + j * g.nx + i) as EdgeId
}

/// The two vertices `(i, j)` of an edge.
fn edge_vertices(g: &Grid, e: EdgeId) -> [(usize, usize); 2] {
    let e = e as usize;
    let nh = (g.nx - 1) * g.ny;
    if e < nh {
        let (j, i) = (e / (g.nx - 1), e % (g.nx - 1));
        [(i, j), (i + 1, j)]
    } else {
        let e = e - nh;
        let (j, i) = (e / g.nx, e % g.nx);
        [(i, j), (i, j + 1)]
    }
}

/// Every segment of every cell the level crosses, as pairs of grid edges.
fn cell_segments(field: &Sampled<'_>, level: f64) -> Vec<[EdgeId; 2]> {
    let g = &field.grid;
    let v = field.values;
    let nx = g.nx;
    let (cx, cy) = (g.nx - 1, g.ny - 1);
    let mut segs = Vec::new();
    for (b, &(lo, hi)) in field.ranges.iter().enumerate() {
        // A block is crossed only if some finite vertex is above and some below.
        if !(hi >= level && lo < level) {
            continue;
        }
        let (b_j, b_i) = (b / field.bx, b % field.bx);
        for j in b_j * BLOCK..((b_j + 1) * BLOCK).min(cy) {
            for i in b_i * BLOCK..((b_i + 1) * BLOCK).min(cx) {
                let k = j * nx + i;
                // Corners counter-clockwise from the bottom-left, relative to the level.
                let d = [
                    v[k] - level,
                    v[k + 1] - level,
                    v[k + nx + 1] - level,
                    v[k + nx] - level,
                ];
                if !d.iter().all(|x| x.is_finite()) {
                    continue;
                }
                let above = d.map(|x| x >= 0.0);
                let code = above
                    .iter()
                    .enumerate()
                    .fold(0u8, |c, (n, &a)| c | (u8::from(a) << n));
                if code == 0 || code == 15 {
                    continue;
                }
                // Edges counter-clockwise: bottom (corners 0–1), right (1–2), top (2–3),
                // left (3–0).
                let edges = [
                    h_edge(g, i, j),
                    v_edge(g, i + 1, j),
                    h_edge(g, i, j + 1),
                    v_edge(g, i, j),
                ];
                if code == 0b0101 || code == 0b1010 {
                    // NOTE: asymptotic decider. The bilinear interpolant's value at its saddle
                    // point is (d0·d2 − d1·d3)/(d0 + d2 − d1 − d3); with alternating signs the
                    // denominator is a sum of terms of one sign with at least two nonzero, so it
                    // never vanishes. A saddle value ≥ 0 counts as above, like a vertex.
                    let saddle = (d[0] * d[2] - d[1] * d[3]) / (d[0] + d[2] - d[1] - d[3]);
                    let centre_above = saddle >= 0.0;
                    // Corners 0 and 2 above (code 0b0101) with the centre above: the above
                    // corners connect, so cut off corners 1 and 3; otherwise cut off 0 and 2.
                    let cut_odd = (code == 0b0101) == centre_above;
                    if cut_odd {
                        segs.push([edges[0], edges[1]]);
                        segs.push([edges[2], edges[3]]);
                    } else {
                        segs.push([edges[3], edges[0]]);
                        segs.push([edges[1], edges[2]]);
                    }
                    continue;
                }
                let mut pair = [0; 2];
                let mut n = 0;
                for (e, &edge) in edges.iter().enumerate() {
                    if above[e] != above[(e + 1) % 4] && n < 2 {
                        pair[n] = edge;
                        n += 1;
                    }
                }
                segs.push(pair);
            }
        }
    }
    segs
}

/// Segments joined into chains of crossing indices.
struct Joined {
    /// The crossing edges, one per distinct edge.
    edges: Vec<EdgeId>,
    /// Chains of indices into `edges`, with whether each closes.
    chains: Vec<(Vec<usize>, bool)>,
}

const NONE: u32 = u32::MAX;

/// Joins segments through shared edges. An edge lies in two cells and each cell has at most one
/// segment ending on it, so an edge joins at most two segment ends.
fn join(segs: &[[EdgeId; 2]]) -> Joined {
    let n_ends = 2 * segs.len();
    let mut ends: Vec<(EdgeId, u32)> = segs
        .iter()
        .enumerate()
        .flat_map(|(s, e)| [(e[0], 2 * s as u32), (e[1], 2 * s as u32 + 1)])
        .collect();
    ends.sort_unstable();
    let mut partner = vec![NONE; n_ends];
    let mut point_of = vec![0usize; n_ends];
    let mut edges = Vec::with_capacity(n_ends / 2 + 1);
    let mut k = 0;
    while k < ends.len() {
        let (edge, end) = ends[k];
        point_of[end as usize] = edges.len();
        if k + 1 < ends.len() && ends[k + 1].0 == edge {
            let other = ends[k + 1].1;
            point_of[other as usize] = edges.len();
            partner[end as usize] = other;
            partner[other as usize] = end;
            k += 2;
        } else {
            k += 1;
        }
        edges.push(edge);
    }

    let mut used = vec![false; segs.len()];
    let mut chains = Vec::new();
    for s in 0..segs.len() {
        if used[s] {
            continue;
        }
        used[s] = true;
        let start = 2 * s;
        let mut forward = vec![point_of[start], point_of[start + 1]];
        let mut closed = false;
        let mut cur = start + 1;
        loop {
            let p = partner[cur];
            if p == NONE {
                break;
            }
            let p = p as usize;
            if p == start {
                closed = true;
                break;
            }
            let t = p / 2;
            if used[t] {
                break;
            }
            used[t] = true;
            cur = p ^ 1;
            forward.push(point_of[cur]);
        }
        if !closed {
            let mut backward = Vec::new();
            let mut cur = start;
            loop {
                let p = partner[cur];
                if p == NONE {
                    break;
                }
                let p = p as usize;
                let t = p / 2;
                if used[t] {
                    break;
                }
                used[t] = true;
                cur = p ^ 1;
                backward.push(point_of[cur]);
            }
            backward.reverse();
            backward.extend(forward);
            forward = backward;
        }
        chains.push((forward, closed));
    }
    Joined { edges, chains }
}

/// The crossing on edge `e`: linear interpolation, then refinement onto the exact curve.
fn crossing(field: &Sampled<'_>, e: EdgeId, level: f64, exact: Option<&dyn Exact>) -> Point {
    let g = &field.grid;
    let [(ia, ja), (ib, jb)] = edge_vertices(g, e);
    let pa = [g.x(ia), g.y(ja)];
    let pb = [g.x(ib), g.y(jb)];
    let da = field.values[ja * g.nx + ia] - level;
    let db = field.values[jb * g.nx + ib] - level;
    // One end is above (≥ 0) and the other below, so da − db ≠ 0 and t ∈ [0, 1].
    let t = (da / (da - db)).clamp(0.0, 1.0);
    let p = [pa[0] + t * (pb[0] - pa[0]), pa[1] + t * (pb[1] - pa[1])];
    match exact {
        Some(f) => refine(f, level, p, pa, pb, [g.dx().abs(), g.dy().abs()]),
        None => p,
    }
}

/// Moves `p` onto `φ = level` by Newton projection, or, failing that, by a bracketed search on
/// the edge `pa–pb`; keeps `p` if both fail.
pub fn refine(f: &dyn Exact, level: f64, p: Point, pa: Point, pb: Point, cell: [f64; 2]) -> Point {
    if let Some(q) = newton_project(f, level, p, cell) {
        return q;
    }
    bracket_on_edge(f, level, pa, pb).unwrap_or(p)
}

/// Newton projection `p ← p − (φ(p) − level)∇φ/|∇φ|²`. `None` if a value or gradient is not
/// finite, the gradient vanishes, the point wanders more than a cell from where it started, or
/// it has not converged after [`NEWTON_MAX_STEPS`].
pub fn newton_project(f: &dyn Exact, level: f64, p0: Point, cell: [f64; 2]) -> Option<Point> {
    let mut p = p0;
    let size = cell[0].max(cell[1]);
    for _ in 0..NEWTON_MAX_STEPS {
        let (v, grad) = f.value_and_gradient(p);
        let r = v - level;
        if r == 0.0 {
            return Some(p);
        }
        let g2 = grad[0] * grad[0] + grad[1] * grad[1];
        if !(r.is_finite() && g2.is_finite() && g2 > 0.0) {
            return None;
        }
        let step = [r * grad[0] / g2, r * grad[1] / g2];
        p = [p[0] - step[0], p[1] - step[1]];
        // NOTE: a cell's width in each direction separately: in a cell of 0.23 × 0.16 the
        // crossing may move along x by more than the height of the cell, never by more than
        // its width.
        if (p[0] - p0[0]).abs() > cell[0] || (p[1] - p0[1]).abs() > cell[1] {
            return None;
        }
        // NOTE: Newton converges quadratically, so after a step of length s the distance left
        // is about s²·|∇²φ|/|∇φ|: a step below NEWTON_QUADRATIC_CELLS of a cell leaves
        // ~1e-14 of a cell on a curve whose radius of curvature is at least a cell, and the
        // evaluation that would confirm it is saved (a third of the cost of refinement).
        let tol = NEWTON_QUADRATIC_CELLS * size;
        if step[0] * step[0] + step[1] * step[1] <= tol * tol {
            return Some(p);
        }
    }
    None
}

/// The Illinois method on the edge `pa–pb`, where `φ − level` changes sign (or is zero at an
/// end). `None` if the exact values at the ends do not bracket a root.
fn bracket_on_edge(f: &dyn Exact, level: f64, pa: Point, pb: Point) -> Option<Point> {
    let at = |t: f64| [pa[0] + t * (pb[0] - pa[0]), pa[1] + t * (pb[1] - pa[1])];
    let phi = |t: f64| f.value_and_gradient(at(t)).0 - level;
    let (mut a, mut b) = (0.0_f64, 1.0_f64);
    let (mut fa, mut fb) = (phi(a), phi(b));
    if fa == 0.0 {
        return Some(pa);
    }
    if fb == 0.0 {
        return Some(pb);
    }
    // NOTE: the grid values came from batch evaluation and these from native code; they agree
    // to rounding, but a sign may still differ right at the curve, hence the check here.
    if !(fa.is_finite() && fb.is_finite()) || fa.signum() == fb.signum() {
        return None;
    }
    let mut side = 0i8;
    for _ in 0..BRACKET_MAX_STEPS {
        let t = (a * fb - b * fa) / (fb - fa);
        let ft = phi(t);
        if !ft.is_finite() {
            return None;
        }
        if ft == 0.0 || (b - a) <= BRACKET_TOL {
            return Some(at(t));
        }
        if ft.signum() == fb.signum() {
            b = t;
            fb = ft;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = t;
            fa = ft;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
    }
    Some(at(0.5 * (a + b)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(g: &Grid, f: impl Fn(f64, f64) -> f64) -> Vec<f64> {
        let (xs, ys) = g.columns();
        xs.iter().zip(&ys).map(|(&x, &y)| f(x, y)).collect()
    }

    fn unit_window(x_max: f64, y_max: f64) -> Window {
        Window {
            x_min: 0.0,
            x_max,
            y_min: 0.0,
            y_max,
        }
    }

    #[test]
    fn a_sample_stride_visits_every_column() {
        // 65 536 values in rows of 256: a stride of 64 would see 4 columns only.
        let stride = sample_stride(256 * 256, 256, 1024);
        let mut seen = [false; 256];
        for k in (0..256 * 256).step_by(stride) {
            seen[k % 256] = true;
        }
        assert!(seen.iter().all(|&s| s), "stride {stride}");
        assert_eq!(sample_stride(10, 7, 100), 1);
    }

    #[test]
    fn a_circle_is_one_closed_polyline_on_the_circle() {
        // Reference: closed form, x² + y² = 1.
        let g = Grid::spanning(&Window::new(-2.0, 2.0, -2.0, 2.0).expect("window"), 41, 37)
            .expect("grid");
        let values = sample(&g, |x, y| x * x + y * y);
        let field = Sampled::new(g, &values).expect("sizes");
        let exact = |p: Point| (p[0] * p[0] + p[1] * p[1], [2.0 * p[0], 2.0 * p[1]]);
        let lines = level_curves(&field, 1.0, Some(&exact));
        assert_eq!(lines.len(), 1);
        assert!(lines[0].closed);
        assert!(lines[0].points.len() > 40);
        for p in &lines[0].points {
            assert!((p[0].hypot(p[1]) - 1.0).abs() < 1e-13, "{p:?}");
        }
        // Without refinement the chord points sit inside the circle by O(h²).
        let rough = level_curves(&field, 1.0, None);
        let worst = rough[0]
            .points
            .iter()
            .map(|p| (p[0].hypot(p[1]) - 1.0).abs())
            .fold(0.0, f64::max);
        assert!(worst > 1e-4 && worst < 1e-2, "{worst}");
    }

    #[test]
    fn the_asymptotic_decider_keeps_hyperbola_branches_apart() {
        // f = (x − 1)(y − 1) − c is bilinear, so its level curves' topology is exactly what the
        // decider computes (closed form: two branches, in the quadrants where (x−1)(y−1) > 0).
        let g = Grid::spanning(&unit_window(2.03, 1.97), 20, 20).expect("grid");
        for c in [1e-3, -1e-3] {
            let f = move |x: f64, y: f64| (x - 1.0) * (y - 1.0) - c;
            let values = sample(&g, f);
            // Precondition: the cell around (1, 1) is a saddle cell (alternating corners).
            let (i, j) = ((1.0 / g.dx()) as usize, (1.0 / g.dy()) as usize);
            let k = j * g.nx + i;
            let corners = [
                values[k],
                values[k + 1],
                values[k + g.nx + 1],
                values[k + g.nx],
            ];
            let signs = corners.map(|v| v >= 0.0);
            assert!(signs[0] == signs[2] && signs[1] == signs[3] && signs[0] != signs[1]);
            let field = Sampled::new(g, &values).expect("sizes");
            let exact = move |p: Point| (f(p[0], p[1]), [p[1] - 1.0, p[0] - 1.0]);
            let lines = level_curves(&field, 0.0, Some(&exact));
            assert_eq!(lines.len(), 2, "c = {c}");
            for line in &lines {
                let q = |p: &Point| ((p[0] > 1.0), (p[1] > 1.0));
                let first = q(&line.points[0]);
                assert!(
                    line.points.iter().all(|p| q(p) == first),
                    "c = {c}: branch mixes quadrants"
                );
                for p in &line.points {
                    assert!(f(p[0], p[1]).abs() < 1e-14);
                }
            }
        }
    }

    #[test]
    fn a_vertex_exactly_on_the_curve_gives_no_gap_or_duplicate() {
        // x − 1 = 0 on a grid whose column 5 is exactly x = 1 (closed form: the line x = 1).
        let g = Grid::spanning(&unit_window(2.0, 1.0), 11, 5).expect("grid");
        assert_eq!(g.x(5), 1.0);
        let values = sample(&g, |x, _| x - 1.0);
        let field = Sampled::new(g, &values).expect("sizes");
        let lines = level_curves(&field, 0.0, None);
        assert_eq!(lines.len(), 1);
        let pts = &lines[0].points;
        assert_eq!(pts.len(), 5, "{pts:?}");
        assert!(pts.iter().all(|p| p[0] == 1.0));
    }

    #[test]
    fn cells_with_nan_corners_are_skipped_and_the_rest_traced() {
        // y = 0.5 with the left half of the grid undefined.
        let g = Grid::spanning(&unit_window(2.0, 1.0), 21, 11).expect("grid");
        let values = sample(&g, |x, y| if x < 0.95 { f64::NAN } else { y - 0.5 });
        let field = Sampled::new(g, &values).expect("sizes");
        let lines = level_curves(&field, 0.0, None);
        assert_eq!(lines.len(), 1);
        let xs: Vec<f64> = lines[0].points.iter().map(|p| p[0]).collect();
        let lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        assert!(
            (lo - 1.0).abs() < 1e-12 && (hi - 2.0).abs() < 1e-12,
            "{lo} {hi}"
        );
    }

    #[test]
    fn newton_failure_falls_back_to_the_edge_and_then_to_the_interpolated_point() {
        // φ = x³ − 1/8 has a root at 0.5 (closed form); its gradient is zero at x = 0, where
        // Newton cannot start.
        let phi = |p: Point| (p[0].powi(3) - 0.125, [3.0 * p[0] * p[0], 0.0]);
        let q = refine(&phi, 0.0, [0.0, 0.0], [0.0, 0.0], [1.0, 0.0], [1.0, 1.0]);
        assert!((q[0] - 0.5).abs() < 1e-14, "{q:?}");
        // Nothing finite anywhere: the point stays.
        let nan = |_: Point| (f64::NAN, [f64::NAN; 2]);
        let q = refine(&nan, 0.0, [0.3, 0.0], [0.0, 0.0], [1.0, 0.0], [1.0, 1.0]);
        assert_eq!(q, [0.3, 0.0]);
    }
}
