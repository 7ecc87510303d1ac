//! A plain x–y chart shared by the branch diagram and the yield curve: layout (title, plot
//! area, axes with nice ticks, an optional right-hand axis, legend, caption), markers for
//! located points, and the plumbing from model units to clipped pixel runs.
//!
//! It follows the phase-portrait figure's look (same fonts, frame, grid and tick labels) so
//! the figures of one report sit together.

use std::fmt::Write as _;

use quarry_core::model::Window;

use crate::axes::{AxisTicks, Page, max_label_width, tick_target};
use crate::geometry::{CLIP_SLACK_PX, Frame, Px, Rect, screen_runs};
use crate::legend;
use crate::style;
use crate::svg::{dasharray, escape, num, path_data, polygon_data};
use crate::text::{fit_length, text_width};
use crate::ticks::{Tick, ticks};

/// Id of the plot-area clip path.
const CLIP_ID: &str = "quarry-chart-area";

/// Colour of equilibrium branches and the yield curve.
pub const CURVE: &str = "#1f4e8c";
/// Colour of limit-cycle extremes.
pub const CYCLE_RANGE: &str = "#b2364e";
/// Colour of the cost line.
pub const COST: &str = "#d3862a";
/// Colour of the profit curve.
pub const PROFIT: &str = "#2e7b47";
/// Fill of value ranges without a stable equilibrium.
pub const NO_STABLE_FILL: &str = "#eeeeee";

/// Height (px) at which the figure scale is 1 (at 900 px wide), as the phase portrait's.
const REFERENCE_HEIGHT: f64 = 650.0;

/// A located point's marker.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Marker {
    /// Filled upward triangle.
    Fold,
    /// Open square.
    Transcritical,
    /// Filled diamond.
    Hopf,
    /// Filled disc.
    Msy,
    /// A bold cross.
    Collapse,
    /// Open disc.
    OpenAccess,
    /// Filled square.
    Mey,
}

/// SVG for a marker centred at `c` with size `r` (px).
pub fn marker_svg(m: Marker, c: Px, r: f64) -> String {
    let sw = num((0.28 * r).max(0.8));
    let ink = style::INK;
    let poly = |pts: &[Px], fill: &str| {
        format!(
            "<path d=\"{}\" fill=\"{fill}\" stroke=\"{ink}\" stroke-width=\"{sw}\" stroke-linejoin=\"round\"/>",
            polygon_data(pts)
        )
    };
    let (x, y) = (c[0], c[1]);
    match m {
        Marker::Fold => poly(
            &[
                [x, y - 1.25 * r],
                [x + 1.1 * r, y + 0.75 * r],
                [x - 1.1 * r, y + 0.75 * r],
            ],
            ink,
        ),
        Marker::Transcritical => poly(
            &[
                [x - 0.9 * r, y - 0.9 * r],
                [x + 0.9 * r, y - 0.9 * r],
                [x + 0.9 * r, y + 0.9 * r],
                [x - 0.9 * r, y + 0.9 * r],
            ],
            "#ffffff",
        ),
        Marker::Hopf => poly(
            &[
                [x, y - 1.3 * r],
                [x + 1.0 * r, y],
                [x, y + 1.3 * r],
                [x - 1.0 * r, y],
            ],
            ink,
        ),
        Marker::Mey => poly(
            &[
                [x - 0.85 * r, y - 0.85 * r],
                [x + 0.85 * r, y - 0.85 * r],
                [x + 0.85 * r, y + 0.85 * r],
                [x - 0.85 * r, y + 0.85 * r],
            ],
            ink,
        ),
        Marker::Msy | Marker::OpenAccess => format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{}\" stroke=\"{ink}\" stroke-width=\"{sw}\"/>",
            num(x),
            num(y),
            num(r),
            if m == Marker::Msy { ink } else { "#ffffff" }
        ),
        Marker::Collapse => {
            let d = 0.95 * r;
            format!(
                "<path d=\"M{} {}L{} {}M{} {}L{} {}\" stroke=\"{ink}\" stroke-width=\"{}\" stroke-linecap=\"round\" fill=\"none\"/>",
                num(x - d),
                num(y - d),
                num(x + d),
                num(y + d),
                num(x - d),
                num(y + d),
                num(x + d),
                num(y - d),
                num(0.5 * r)
            )
        }
    }
}

/// What a legend entry's sample looks like.
#[derive(Clone, Debug, PartialEq)]
pub enum Swatch {
    /// A line: colour, width at scale 1, dash at scale 1.
    Line(&'static str, f64, Option<(f64, f64)>),
    /// A marker.
    Marker(Marker),
    /// A filled block.
    Fill(&'static str),
}

/// One axis: range and name.
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    /// Lower end (model units).
    pub lo: f64,
    /// Upper end.
    pub hi: f64,
    /// Name.
    pub label: String,
}

/// What the chart frames.
#[derive(Clone, Debug, PartialEq)]
pub struct ChartSpec {
    /// Size (px).
    pub width: u32,
    /// Size (px).
    pub height: u32,
    /// Title; none drawn when `None` or empty.
    pub title: Option<String>,
    /// Small print under the plot.
    pub caption: Option<String>,
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// A right-hand axis reading `factor × y`, with its name.
    pub right: Option<(f64, String)>,
    /// Legend entries.
    pub legend: Vec<(Swatch, String)>,
    /// Data points (model units) the legend should avoid when it sits over the plot.
    pub avoid: Vec<[f64; 2]>,
}

/// A laid-out chart.
pub struct Chart {
    /// Figure scale.
    pub s: f64,
    /// Model units to pixels.
    pub frame: Frame,
    page: Page,
    clip: Rect,
    decorated: bool,
    x_ticks: Vec<Tick>,
    y_ticks: Vec<Tick>,
    right_ticks: Vec<(f64, Tick)>,
    legend_at: Option<(Px, bool)>,
    /// Boxes of the marker labels placed so far, so later ones move clear of them.
    labels: std::cell::RefCell<Vec<Rect>>,
}

/// Legend metrics at scale `s`: row pitch, sample width, gap, font.
fn legend_metrics(s: f64) -> (f64, f64, f64, f64) {
    (19.0 * s, 30.0 * s, 8.0 * s, 12.0 * s)
}

fn legend_size(items: &[(Swatch, String)], s: f64) -> (f64, f64) {
    let (row, sw, gap, font) = legend_metrics(s);
    let w = items
        .iter()
        .map(|(_, l)| sw + gap + text_width(l, font))
        .fold(0.0, f64::max);
    (w, row * items.len() as f64)
}

impl Chart {
    /// Lays the chart out.
    pub fn new(spec: &ChartSpec) -> Self {
        let mut page = Page::new(
            spec.width,
            spec.height,
            REFERENCE_HEIGHT,
            spec.title.as_deref(),
            spec.caption.as_deref(),
        );
        let (w, h, s, pad, top) = (page.w, page.h, page.s, page.pad, page.top);
        let fk = page.fonts.tick;
        let fa = page.fonts.axis;
        let window = Window {
            x_min: spec.x.lo,
            x_max: spec.x.hi,
            y_min: spec.y.lo,
            y_max: spec.y.hi,
        };
        let plot_h = page.bottom - top;
        let unit = Frame::new(
            &window,
            Rect {
                left: 0.0,
                top: 0.0,
                width: 1.0,
                height: 1.0,
            },
        );
        let y_ticks = ticks(unit.y0, unit.y1, tick_target(plot_h, 60.0 * s));
        let y_label_w = max_label_width(y_ticks.iter().map(|t| &t.label), fk);
        let right_ticks: Vec<(f64, Tick)> = match &spec.right {
            Some((k, _)) if k.is_finite() && *k > 0.0 => {
                ticks(k * unit.y0, k * unit.y1, tick_target(plot_h, 60.0 * s))
                    .into_iter()
                    .map(|t| (t.value / k, t))
                    .collect()
            }
            _ => Vec::new(),
        };
        let right_w = if right_ticks.is_empty() {
            0.0
        } else {
            max_label_width(right_ticks.iter().map(|(_, t)| &t.label), fk) + fa + 22.0 * s
        };
        let left = page.plot_left(y_label_w);
        let mut right = w - pad - 12.0 * s - right_w;
        let (lw, lh) = legend_size(&spec.legend, s);
        let outside = !spec.legend.is_empty() && lw + 20.0 * s < 0.28 * w;
        if outside {
            right -= lw + 20.0 * s;
        }
        let plot = Rect {
            left,
            top,
            width: (right - left).max(1.0),
            height: plot_h.max(1.0),
        };
        let decorated = plot.width >= 40.0 && plot.height >= 40.0;
        let plot = if decorated {
            plot
        } else {
            Rect {
                left: 0.0,
                top: 0.0,
                width: w,
                height: h,
            }
        };
        let frame = Frame::new(&window, plot);
        let x_ticks = if decorated {
            ticks(frame.x0, frame.x1, tick_target(plot.width, 90.0 * s))
        } else {
            Vec::new()
        };
        let mut legend_at = None;
        if decorated && !spec.legend.is_empty() {
            if outside {
                legend_at = Some(([right + right_w + 20.0 * s, top + 2.0 * s], false));
            } else if (lw + 14.0 * s) * (lh + 14.0 * s) < 0.25 * plot.width * plot.height {
                // NOTE: over the plot, in the corner that covers the fewest data points.
                let m = 12.0 * s;
                let corners = [
                    [plot.right() - lw - m, plot.top + m],
                    [plot.left + m + 7.0 * s, plot.top + m],
                    [plot.right() - lw - m, plot.bottom() - lh - m],
                    [plot.left + m + 7.0 * s, plot.bottom() - lh - m],
                ];
                let covered = |c: &Px| {
                    let r = Rect {
                        left: c[0],
                        top: c[1],
                        width: lw,
                        height: lh,
                    }
                    .grown(8.0 * s);
                    spec.avoid
                        .iter()
                        .filter_map(|p| frame.screen_from_plot(*p))
                        .filter(|p| r.contains(*p))
                        .count()
                };
                let best = corners
                    .iter()
                    .min_by_key(|c| covered(c))
                    .copied()
                    .unwrap_or(corners[0]);
                legend_at = Some((best, true));
            }
        }
        if !decorated {
            page.undecorated();
        }
        Self {
            s,
            frame,
            page,
            clip: plot.grown(CLIP_SLACK_PX * s),
            decorated,
            y_ticks: if decorated { y_ticks } else { Vec::new() },
            x_ticks,
            right_ticks: if decorated { right_ticks } else { Vec::new() },
            legend_at,
            labels: std::cell::RefCell::new(Vec::new()),
        }
    }

    /// Pixel runs of a polyline in model units, clipped to the plot.
    pub fn runs(&self, pts: &[[f64; 2]]) -> Vec<Vec<Px>> {
        screen_runs(pts, false, &self.frame, &self.clip)
    }

    /// A stroked path of `pts`; nothing when nothing is visible.
    pub fn line(&self, out: &mut String, class: &str, pts: &[[f64; 2]], style: &Swatch) {
        let Swatch::Line(colour, width, dash) = style else {
            return;
        };
        let d = path_data(&self.runs(pts));
        if d.is_empty() {
            return;
        }
        let s = self.s;
        let dash = dasharray(*dash, s);
        let _ = write!(
            out,
            "<path class=\"{class}\" d=\"{d}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"{}\" stroke-linejoin=\"round\" stroke-linecap=\"round\"{dash}/>",
            num(width * s)
        );
    }

    /// A marker at a model point with a label beside it (above right, or above left near the
    /// right edge, or below with `below`); nothing when the point is off the plot.
    pub fn marker(&self, out: &mut String, m: Marker, at: [f64; 2], label: &str, below: bool) {
        let Some(c) = self.frame.screen_from_plot(at) else {
            return;
        };
        let p = self.frame.plot.grown(2.0 * self.s);
        if !p.contains(c) {
            return;
        }
        let r = 5.5 * self.s;
        out.push_str(&marker_svg(m, c, r));
        if label.is_empty() {
            return;
        }
        let fs = self.page.fonts.tick;
        let tw = text_width(label, fs);
        let left_side = c[0] + 1.6 * r + tw > self.frame.plot.right() - 4.0 * self.s;
        let (x, anchor) = if left_side {
            (c[0] - 1.6 * r, "end")
        } else {
            (c[0] + 1.6 * r, "start")
        };
        let y = if below {
            c[1] + 1.4 * r + 0.8 * fs
        } else {
            c[1] - 1.4 * r
        };
        let (lo, hi) = (
            self.frame.plot.top + fs,
            self.frame.plot.bottom() - 3.0 * self.s,
        );
        let y = self.place_label(x, y.clamp(lo, hi), tw, anchor == "end", fs, below, (lo, hi));
        let _ = write!(
            out,
            "<text class=\"marker-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{anchor}\" fill=\"{}\" stroke=\"#ffffff\" stroke-width=\"{}\" paint-order=\"stroke\"{}>{}</text>",
            num(x),
            num(y),
            num(fs),
            style::INK,
            num(3.0 * self.s),
            fit_length(tw),
            escape(label)
        );
    }

    /// The baseline for a marker label near `y` whose box misses the labels placed before:
    /// stepped a line at a time away from the marker (down when `below`), then the other
    /// way, within `range`; the first try when nothing is free. Records the box.
    #[allow(clippy::too_many_arguments)]
    fn place_label(
        &self,
        x: f64,
        y: f64,
        width: f64,
        from_right: bool,
        fs: f64,
        below: bool,
        range: (f64, f64),
    ) -> f64 {
        let left = if from_right { x - width } else { x };
        let boxed = |y: f64| Rect {
            left,
            top: y - 0.85 * fs,
            width,
            height: 1.1 * fs,
        };
        let overlaps = |a: &Rect, b: &Rect| {
            a.left < b.right() && b.left < a.right() && a.top < b.bottom() && b.top < a.bottom()
        };
        let mut placed = self.labels.borrow_mut();
        let free = |y: f64| {
            let b = boxed(y);
            !placed.iter().any(|p| overlaps(p, &b))
        };
        let step = 1.15 * fs * if below { 1.0 } else { -1.0 };
        let chosen = (0..8)
            .map(|k| y + k as f64 * step)
            .chain((1..8).map(|k| y - k as f64 * step))
            .filter(|t| (range.0..=range.1).contains(t))
            .find(|t| free(*t))
            .unwrap_or(y);
        placed.push(boxed(chosen));
        chosen
    }

    /// A light band over the values `lo..hi` (model units), full height.
    pub fn band(&self, out: &mut String, lo: f64, hi: f64) {
        let p = &self.frame.plot;
        let a = self.frame.screen_x(lo).clamp(p.left, p.right());
        let b = self.frame.screen_x(hi).clamp(p.left, p.right());
        if !(a.is_finite() && b.is_finite()) || b - a <= 0.0 {
            return;
        }
        let _ = write!(
            out,
            "<rect class=\"band\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{NO_STABLE_FILL}\"/>",
            num(a),
            num(p.top),
            num(b - a),
            num(p.height)
        );
    }

    /// The document's start: header, clip path, background, grid; opens the clipped group.
    pub fn open(&self, out: &mut String) {
        self.page
            .open(out, &[(CLIP_ID.to_owned(), self.frame.plot)]);
        if self.decorated {
            self.page
                .grid(out, &self.frame, &self.x_ticks, &self.y_ticks);
        }
        let _ = write!(out, "<g class=\"plot\" clip-path=\"url(#{CLIP_ID})\">");
    }

    /// Closes the clipped group and draws the frame, axes, title, caption and legend.
    /// `overlay` (markers and their labels) goes above the frame, unclipped.
    pub fn close(&self, out: &mut String, spec: &ChartSpec, overlay: &str) {
        out.push_str("</g>");
        let page = &self.page;
        let f = &self.frame;
        let p = &f.plot;
        if self.decorated {
            let (y, right) = (&self.y_ticks, &self.right_ticks);
            let ticks = AxisTicks {
                x: &self.x_ticks,
                y,
                right,
            };
            page.frame_and_ticks(out, f, &ticks);
            page.tick_labels(out, f, &ticks);
            let fs = page.fonts.tick;
            page.x_axis_name(out, p, &spec.x.label);
            let yw = max_label_width(y.iter().map(|t| &t.label), fs);
            page.y_axis_name(out, p, yw, page.fonts.axis, &spec.y.label);
            if let (Some((_, name)), false) = (&spec.right, right.is_empty()) {
                let rw = max_label_width(right.iter().map(|(_, t)| &t.label), fs);
                page.right_axis_name(out, p, rw, name);
            }
        }
        out.push_str(overlay);
        if let Some((at, boxed)) = self.legend_at {
            self.legend(out, &spec.legend, at, boxed);
        }
        page.draw_title(out, p.left);
        page.draw_caption(out);
        out.push_str("</svg>");
    }

    fn legend(&self, out: &mut String, items: &[(Swatch, String)], at: Px, boxed: bool) {
        let s = self.s;
        let (row, sw, gap, font) = legend_metrics(s);
        let (w, h) = legend_size(items, s);
        if boxed {
            legend::panel(out, at, (w, h), s, 0.92);
        }
        out.push_str("<g class=\"legend\">");
        for (k, (swatch, label)) in items.iter().enumerate() {
            let mid = at[1] + (k as f64 + 0.5) * row;
            let (x0, x1) = (at[0] + s, at[0] + sw - s);
            match swatch {
                Swatch::Line(colour, width, dash) => {
                    let dash = dasharray(*dash, s);
                    let _ = write!(
                        out,
                        "<path d=\"M{} {}H{}\" stroke=\"{colour}\" stroke-width=\"{}\" fill=\"none\" stroke-linecap=\"round\"{dash}/>",
                        num(x0),
                        num(mid),
                        num(x1),
                        num(width * s)
                    );
                }
                Swatch::Marker(m) => {
                    out.push_str(&marker_svg(*m, [at[0] + 0.5 * sw, mid], 5.0 * s))
                }
                Swatch::Fill(colour) => {
                    let _ = write!(
                        out,
                        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{colour}\" stroke=\"#cfcfcf\" stroke-width=\"{}\"/>",
                        num(x0),
                        num(mid - 0.3 * row),
                        num(x1 - x0),
                        num(0.6 * row),
                        num(0.8 * s)
                    );
                }
            }
            legend::entry_text(out, at[0] + sw + gap, mid, font, label);
        }
        out.push_str("</g>");
    }
}

/// `lo..hi` widened by `frac` of its length each side, never empty.
pub fn padded(lo: f64, hi: f64, frac: f64) -> (f64, f64) {
    if !(lo.is_finite() && hi.is_finite()) || lo > hi {
        return (0.0, 1.0);
    }
    let span = hi - lo;
    if span <= 1e-12 * lo.abs().max(hi.abs()).max(1e-300) {
        let d = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
        return (lo - d, hi + d);
    }
    (lo - frac * span, hi + frac * span)
}
