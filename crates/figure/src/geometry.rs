//! From plot space to pixels: the plot rectangle, a window made safe to divide by, clipping of
//! polylines to (a little more than) the plot area, and decimation of sub-pixel detail.
//!
//! Everything the SVG writer receives has passed through here, so it is finite and near the
//! plot: no NaN, no 1e300-pixel coordinates, no runs of points closer than [`DECIMATE_PX`].

use quarry_core::model::Window;

use crate::ticks::MIN_RANGE;

/// Consecutive points closer than this (px) are merged when drawing a curve.
pub const DECIMATE_PX: f64 = 0.3;

/// How far past the plot rectangle (px) curves are kept before the clip path takes over;
/// enough that line caps and joins at the edge are cut by the clip path, not by the geometry.
pub const CLIP_SLACK_PX: f64 = 4.0;

/// Largest magnitude kept for a window edge; beyond it the width would overflow.
const MAX_EDGE: f64 = 1e300;

/// A pixel position (x right, y down).
pub type Px = [f64; 2];

/// An axis-aligned rectangle in pixels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rect {
    /// Left edge.
    pub left: f64,
    /// Top edge.
    pub top: f64,
    /// Width (≥ 0).
    pub width: f64,
    /// Height (≥ 0).
    pub height: f64,
}

impl Rect {
    /// Right edge.
    pub fn right(&self) -> f64 {
        self.left + self.width
    }

    /// Bottom edge.
    pub fn bottom(&self) -> f64 {
        self.top + self.height
    }

    /// The rectangle grown by `d` on every side.
    pub fn grown(&self, d: f64) -> Rect {
        Rect {
            left: self.left - d,
            top: self.top - d,
            width: self.width + 2.0 * d,
            height: self.height + 2.0 * d,
        }
    }

    /// Whether `p` lies inside (edges included).
    pub fn contains(&self, p: Px) -> bool {
        p[0] >= self.left && p[0] <= self.right() && p[1] >= self.top && p[1] <= self.bottom()
    }
}

/// One axis range made drawable: finite, increasing, not narrower than [`MIN_RANGE`] and
/// not so narrow against its offset that neighbouring values collapse.
pub fn sanitize_range(lo: f64, hi: f64) -> (f64, f64) {
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0);
    }
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    let (lo, hi) = (lo.clamp(-MAX_EDGE, MAX_EDGE), hi.clamp(-MAX_EDGE, MAX_EDGE));
    let mid = 0.5 * lo + 0.5 * hi;
    // NOTE: 1e-9 of the magnitude keeps a few hundred thousand distinguishable f64 values
    // across the range, far more than there are pixels.
    let least = (mid.abs() * 1e-9).max(MIN_RANGE);
    if hi - lo >= least {
        (lo, hi)
    } else if mid == 0.0 {
        (-1.0, 1.0)
    } else {
        (mid - least, mid + least)
    }
}

/// The map from plot space to pixels for one figure.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// The plot area in pixels.
    pub plot: Rect,
    /// Left edge of the (sanitised) window.
    pub x0: f64,
    /// Right edge.
    pub x1: f64,
    /// Bottom edge.
    pub y0: f64,
    /// Top edge.
    pub y1: f64,
}

impl Frame {
    /// A frame drawing `window` (sanitised) into `plot`.
    pub fn new(window: &Window, plot: Rect) -> Self {
        let (x0, x1) = sanitize_range(window.x_min, window.x_max);
        let (y0, y1) = sanitize_range(window.y_min, window.y_max);
        Self {
            plot,
            x0,
            x1,
            y0,
            y1,
        }
    }

    /// Horizontal pixel of plot-space `x` (may be far outside the plot; NaN stays NaN).
    pub fn screen_x(&self, x: f64) -> f64 {
        self.plot.left + (x - self.x0) / (self.x1 - self.x0) * self.plot.width
    }

    /// Vertical pixel of plot-space `y`.
    pub fn screen_y(&self, y: f64) -> f64 {
        self.plot.bottom() - (y - self.y0) / (self.y1 - self.y0) * self.plot.height
    }

    /// The pixel of a plot-space point, `None` unless finite.
    pub fn screen_from_plot(&self, p: [f64; 2]) -> Option<Px> {
        let q = [self.screen_x(p[0]), self.screen_y(p[1])];
        (q[0].is_finite() && q[1].is_finite()).then_some(q)
    }

    /// A plot-space rate (dx/dt, dy/dt) as a unit direction in pixels, `None` where it has no
    /// direction (zero, NaN).
    pub fn screen_direction(&self, rate: [f64; 2]) -> Option<Px> {
        if !(rate[0].is_finite() && rate[1].is_finite()) {
            return None;
        }
        let k = rate[0].abs().max(rate[1].abs());
        if !(k.is_finite() && k > 0.0) {
            return None;
        }
        // NOTE: normalise before scaling: px-per-unit can reach 1e303 for a tiny window, and
        // a large rate times that would overflow.
        let a = rate[0] / k * (self.plot.width / (self.x1 - self.x0));
        let b = -rate[1] / k * (self.plot.height / (self.y1 - self.y0));
        unit([a, b])
    }
}

/// `v / |v|`, `None` for a zero or non-finite vector.
pub fn unit(v: Px) -> Option<Px> {
    if !(v[0].is_finite() && v[1].is_finite()) {
        return None;
    }
    let k = v[0].abs().max(v[1].abs());
    if !(k.is_finite() && k > 0.0) {
        return None;
    }
    let (a, b) = (v[0] / k, v[1] / k);
    let n = a.hypot(b);
    Some([a / n, b / n])
}

fn dist(a: Px, b: Px) -> f64 {
    (a[0] - b[0]).hypot(a[1] - b[1])
}

/// Clips segment `a`–`b` to `r` (Liang–Barsky); the parts of the segment inside, if any.
fn clip_segment(a: Px, b: Px, r: &Rect) -> Option<(Px, Px)> {
    let d = [b[0] - a[0], b[1] - a[1]];
    let mut t0 = 0.0_f64;
    let mut t1 = 1.0_f64;
    let checks = [
        (-d[0], a[0] - r.left),
        (d[0], r.right() - a[0]),
        (-d[1], a[1] - r.top),
        (d[1], r.bottom() - a[1]),
    ];
    for (p, q) in checks {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let t = q / p;
            if p < 0.0 {
                t0 = t0.max(t);
            } else {
                t1 = t1.min(t);
            }
            if t0 > t1 {
                return None;
            }
        }
    }
    let at = |t: f64| {
        if t == 0.0 {
            a
        } else if t == 1.0 {
            b
        } else {
            [a[0] + t * d[0], a[1] + t * d[1]]
        }
    };
    Some((at(t0), at(t1)))
}

/// Builds decimated runs of pixels, starting a new run wherever the curve leaves the clip
/// rectangle or hits a non-finite point.
struct RunBuilder {
    runs: Vec<Vec<Px>>,
    current: Vec<Px>,
    pending: Option<Px>,
}

impl RunBuilder {
    fn new() -> Self {
        Self {
            runs: Vec::new(),
            current: Vec::new(),
            pending: None,
        }
    }

    fn push(&mut self, p: Px) {
        match self.current.last() {
            Some(&last) if dist(last, p) < DECIMATE_PX => self.pending = Some(p),
            _ => {
                self.current.push(p);
                self.pending = None;
            }
        }
    }

    fn finish(&mut self) {
        if let Some(p) = self.pending.take() {
            self.current.push(p);
        }
        let run = std::mem::take(&mut self.current);
        if run.len() >= 2 {
            self.runs.push(run);
        }
    }
}

/// A plot-space curve as pixel runs clipped to `clip` and decimated; a closed curve gets its
/// closing segment. Non-finite points break the curve.
pub fn screen_runs(points: &[[f64; 2]], closed: bool, frame: &Frame, clip: &Rect) -> Vec<Vec<Px>> {
    let mut b = RunBuilder::new();
    let mut prev: Option<Px> = None;
    let closing = if closed && points.len() > 2 {
        points.first()
    } else {
        None
    };
    for p in points.iter().chain(closing) {
        let Some(cur) = frame.screen_from_plot(*p) else {
            b.finish();
            prev = None;
            continue;
        };
        if let Some(pr) = prev {
            match clip_segment(pr, cur, clip) {
                Some((s, e)) => {
                    if s != pr || b.current.is_empty() {
                        b.finish();
                        b.push(s);
                    }
                    b.push(e);
                    if e != cur {
                        b.finish();
                    }
                }
                None => b.finish(),
            }
        }
        prev = Some(cur);
    }
    b.finish();
    b.runs
}

/// Total length (px) of a set of runs.
pub fn runs_length(runs: &[Vec<Px>]) -> f64 {
    runs.iter()
        .map(|r| r.windows(2).map(|w| dist(w[0], w[1])).sum::<f64>())
        .sum()
}

/// The point at fraction `frac` of the runs' total length and the unit tangent there
/// (averaged over about ±`spread` px so a kink does not turn the arrow).
pub fn point_and_tangent_at(runs: &[Vec<Px>], frac: f64, spread: f64) -> Option<(Px, Px)> {
    let total = runs_length(runs);
    if !(total.is_finite() && total > 0.0) {
        return None;
    }
    let mut want = total * frac.clamp(0.0, 1.0);
    for run in runs {
        let len: f64 = run.windows(2).map(|w| dist(w[0], w[1])).sum();
        if want > len {
            want -= len;
            continue;
        }
        let at = |s: f64| -> Px {
            let s = s.clamp(0.0, len);
            let mut acc = 0.0;
            for w in run.windows(2) {
                let d = dist(w[0], w[1]);
                if acc + d >= s && d > 0.0 {
                    let t = (s - acc) / d;
                    return [
                        w[0][0] + t * (w[1][0] - w[0][0]),
                        w[0][1] + t * (w[1][1] - w[0][1]),
                    ];
                }
                acc += d;
            }
            run.last().copied().unwrap_or([0.0, 0.0])
        };
        let p = at(want);
        let a = at(want - spread);
        let c = at(want + spread);
        let t = unit([c[0] - a[0], c[1] - a[1]])?;
        return Some((p, t));
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    fn frame() -> Frame {
        Frame::new(
            &Window {
                x_min: 0.0,
                x_max: 10.0,
                y_min: 0.0,
                y_max: 10.0,
            },
            Rect {
                left: 0.0,
                top: 0.0,
                width: 100.0,
                height: 100.0,
            },
        )
    }

    #[test]
    fn a_curve_crossing_the_plot_is_cut_at_the_clip_rectangle() {
        let f = frame();
        let runs = screen_runs(&[[-5.0, 5.0], [15.0, 5.0]], false, &f, &f.plot);
        assert_eq!(runs, vec![vec![[0.0, 50.0], [100.0, 50.0]]]);
    }

    #[test]
    fn nan_breaks_a_curve_into_two_runs() {
        let f = frame();
        let pts = [
            [1.0, 1.0],
            [2.0, 2.0],
            [f64::NAN, 0.0],
            [3.0, 3.0],
            [4.0, 4.0],
        ];
        assert_eq!(screen_runs(&pts, false, &f, &f.plot).len(), 2);
    }

    #[test]
    fn sub_pixel_steps_are_merged_but_the_end_is_kept() {
        let f = frame();
        let pts: Vec<[f64; 2]> = (0..=1000).map(|i| [i as f64 * 0.001, 5.0]).collect();
        let runs = screen_runs(&pts, false, &f, &f.plot);
        assert_eq!(runs.len(), 1);
        assert!(runs[0].len() < 40, "{}", runs[0].len());
        assert_eq!(runs[0].last(), Some(&[10.0, 50.0]));
    }

    #[test]
    fn degenerate_ranges_are_widened() {
        assert!(sanitize_range(5.0, 5.0).0 < 5.0);
        assert_eq!(sanitize_range(0.0, 0.0), (-1.0, 1.0));
        assert_eq!(sanitize_range(f64::NAN, 1.0), (0.0, 1.0));
        assert_eq!(sanitize_range(0.0, 1e-300), (0.0, 1e-300));
        let (lo, hi) = sanitize_range(-1e308, 1e308);
        assert!((hi - lo).is_finite());
        assert_eq!(sanitize_range(3.0, 1.0), (1.0, 3.0));
    }

    #[test]
    fn directions_survive_tiny_windows_and_huge_rates() {
        let f = Frame::new(
            &Window {
                x_min: 0.0,
                x_max: 1e-300,
                y_min: 0.0,
                y_max: 1e-300,
            },
            Rect {
                left: 0.0,
                top: 0.0,
                width: 600.0,
                height: 400.0,
            },
        );
        let d = f.screen_direction([1e300, 1e300]);
        assert!(d.is_some_and(|d| d[0] > 0.0 && d[1] < 0.0));
        assert!(f.screen_direction([0.0, 0.0]).is_none());
        assert!(f.screen_direction([f64::NAN, 1.0]).is_none());
    }
}
