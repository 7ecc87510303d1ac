//! A plain x–y chart shared by the branch diagram and the yield curve: layout (title, plot
//! area, axes with nice ticks, an optional right-hand axis, legend, caption), markers for
//! located points, and the plumbing from model units to clipped pixel runs.
//!
//! It follows the phase-portrait figure's look (same fonts, frame, grid and tick labels) so
//! the figures of one report sit together.

use std::fmt::Write as _;

use quarry_core::model::Window;

use crate::MAX_SIZE;
use crate::geometry::{CLIP_SLACK_PX, Frame, Px, Rect, screen_runs};
use crate::style;
use crate::svg::{escape, num, path_data, polygon_data};
use crate::text::{text_width, wrap};
use crate::ticks::{Tick, TickLabel, ticks};

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

/// The figure scale: 1 at 900×650, as the phase portrait's.
pub fn figure_scale(w: f64, h: f64) -> f64 {
    (w / 900.0).min(h / 650.0).sqrt().clamp(0.6, 3.0)
}

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
    clip: Rect,
    w: f64,
    h: f64,
    decorated: bool,
    title: Option<String>,
    caption: Vec<String>,
    x_ticks: Vec<Tick>,
    y_ticks: Vec<Tick>,
    right_ticks: Vec<(f64, Tick)>,
    legend_at: Option<(Px, bool)>,
    font_title: f64,
    font_axis: f64,
    font_tick: f64,
    font_caption: f64,
}

fn label_width(l: &TickLabel, size: f64) -> f64 {
    let mut w = text_width(&l.mantissa, size);
    if let Some(e) = l.exponent {
        w += text_width("×10", size) + text_width(&format!("−{}", e.abs()), size * 0.72);
    }
    w
}

fn label_svg(l: &TickLabel, size: f64) -> String {
    let mut s = escape(&l.mantissa);
    if let Some(e) = l.exponent {
        let exp = if e < 0 {
            format!("\u{2212}{}", e.unsigned_abs())
        } else {
            e.to_string()
        };
        let _ = write!(
            s,
            "×10<tspan dy=\"{}\" font-size=\"{}\">{exp}</tspan>",
            num(-0.42 * size),
            num(0.72 * size)
        );
    }
    s
}

fn tick_target(len_px: f64, spacing_px: f64) -> usize {
    ((len_px / spacing_px).round() as usize).clamp(2, 10)
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
        let w = f64::from(spec.width.clamp(1, MAX_SIZE));
        let h = f64::from(spec.height.clamp(1, MAX_SIZE));
        let s = figure_scale(w, h);
        let (ft, fa, fk, fc) = (18.0 * s, 14.0 * s, 12.0 * s, 11.0 * s);
        let pad = 14.0 * s;
        let title = spec
            .title
            .as_deref()
            .map(str::trim)
            .filter(|t| !t.is_empty())
            .map(str::to_owned);
        let caption = spec
            .caption
            .as_deref()
            .map(|c| wrap(c, fc, (w - 2.0 * pad).max(1.0), 4))
            .unwrap_or_default();
        let window = Window {
            x_min: spec.x.lo,
            x_max: spec.x.hi,
            y_min: spec.y.lo,
            y_max: spec.y.hi,
        };
        let top = pad
            + if title.is_some() {
                ft + 14.0 * s
            } else {
                4.0 * s
            };
        let caption_h = if caption.is_empty() {
            0.0
        } else {
            caption.len() as f64 * fc * 1.35 + 8.0 * s
        };
        let bottom = h - pad - caption_h - (fk + 10.0 * s) - (fa + 10.0 * s);
        let plot_h = bottom - top;
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
        let y_label_w = y_ticks
            .iter()
            .map(|t| label_width(&t.label, fk))
            .fold(0.0, f64::max);
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
            right_ticks
                .iter()
                .map(|(_, t)| label_width(&t.label, fk))
                .fold(0.0, f64::max)
                + fa
                + 22.0 * s
        };
        let left = pad + fa + 12.0 * s + y_label_w + 9.0 * s;
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
        Self {
            s,
            frame,
            clip: plot.grown(CLIP_SLACK_PX * s),
            w,
            h,
            decorated,
            title: if decorated { title } else { None },
            caption: if decorated { caption } else { Vec::new() },
            y_ticks: if decorated { y_ticks } else { Vec::new() },
            x_ticks,
            right_ticks: if decorated { right_ticks } else { Vec::new() },
            legend_at,
            font_title: ft,
            font_axis: fa,
            font_tick: fk,
            font_caption: fc,
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
        let dash = dash
            .map(|(a, b)| {
                format!(
                    " stroke-dasharray=\"{} {}\"",
                    num((a * s).max(0.01)),
                    num(b * s)
                )
            })
            .unwrap_or_default();
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
        let fs = self.font_tick;
        let tw = text_width(label, fs);
        let left_side = c[0] + 1.6 * r + tw > self.frame.plot.right() - 4.0 * self.s;
        let (x, anchor) = if left_side {
            (c[0] - 1.6 * r, "end")
        } else {
            (c[0] + 1.6 * r, "start")
        };
        let mut y = if below {
            c[1] + 1.4 * r + 0.8 * fs
        } else {
            c[1] - 1.4 * r
        };
        y = y.clamp(
            self.frame.plot.top + fs,
            self.frame.plot.bottom() - 3.0 * self.s,
        );
        let _ = write!(
            out,
            "<text class=\"marker-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{anchor}\" fill=\"{}\" stroke=\"#ffffff\" stroke-width=\"{}\" paint-order=\"stroke\">{}</text>",
            num(x),
            num(y),
            num(fs),
            style::INK,
            num(3.0 * self.s),
            escape(label)
        );
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
        let (w, h) = (self.w, self.h);
        let p = &self.frame.plot;
        let _ = write!(
            out,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" font-family=\"{}\">",
            style::FONT_FAMILY
        );
        if let Some(t) = &self.title {
            let _ = write!(out, "<title>{}</title>", escape(t));
        }
        let _ = write!(
            out,
            "<defs><clipPath id=\"{CLIP_ID}\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath></defs><rect width=\"{w}\" height=\"{h}\" fill=\"#ffffff\"/>",
            num(p.left),
            num(p.top),
            num(p.width),
            num(p.height)
        );
        if self.decorated {
            let f = &self.frame;
            let mut d = String::new();
            for t in &self.x_ticks {
                let x = f.screen_x(t.value);
                if x > p.left + 0.5 && x < p.right() - 0.5 {
                    let _ = write!(d, "M{} {}V{}", num(x), num(p.top), num(p.bottom()));
                }
            }
            for t in &self.y_ticks {
                let y = f.screen_y(t.value);
                if y > p.top + 0.5 && y < p.bottom() - 0.5 {
                    let _ = write!(d, "M{} {}H{}", num(p.left), num(y), num(p.right()));
                }
            }
            if !d.is_empty() {
                let _ = write!(
                    out,
                    "<path class=\"grid\" d=\"{d}\" stroke=\"{}\" stroke-width=\"{}\" fill=\"none\"/>",
                    style::GRID,
                    num(0.8 * self.s)
                );
            }
        }
        let _ = write!(out, "<g class=\"plot\" clip-path=\"url(#{CLIP_ID})\">");
    }

    /// Closes the clipped group and draws the frame, axes, title, caption and legend.
    /// `overlay` (markers and their labels) goes above the frame, unclipped.
    pub fn close(&self, out: &mut String, spec: &ChartSpec, overlay: &str) {
        out.push_str("</g>");
        let s = self.s;
        let f = &self.frame;
        let p = &f.plot;
        if self.decorated {
            let tl = 5.0 * s;
            let mut d = String::new();
            for t in &self.x_ticks {
                let _ = write!(
                    d,
                    "M{} {}v{}",
                    num(f.screen_x(t.value)),
                    num(p.bottom()),
                    num(tl)
                );
            }
            for t in &self.y_ticks {
                let _ = write!(
                    d,
                    "M{} {}h{}",
                    num(p.left),
                    num(f.screen_y(t.value)),
                    num(-tl)
                );
            }
            for (v, _) in &self.right_ticks {
                let _ = write!(d, "M{} {}h{}", num(p.right()), num(f.screen_y(*v)), num(tl));
            }
            let _ = write!(
                out,
                "<rect class=\"frame\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{}\"/><path class=\"ticks\" d=\"{d}\" stroke=\"{}\" stroke-width=\"{}\" fill=\"none\"/>",
                num(p.left),
                num(p.top),
                num(p.width),
                num(p.height),
                style::FRAME,
                num(s),
                style::FRAME,
                num(s)
            );
            let fs = self.font_tick;
            let _ = write!(
                out,
                "<g class=\"tick-labels\" font-size=\"{}\" fill=\"{}\">",
                num(fs),
                style::INK_SOFT
            );
            for t in &self.x_ticks {
                let _ = write!(
                    out,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">{}</text>",
                    num(f.screen_x(t.value)),
                    num(p.bottom() + tl + 3.0 * s + fs * 0.8),
                    label_svg(&t.label, fs)
                );
            }
            for t in &self.y_ticks {
                let _ = write!(
                    out,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>",
                    num(p.left - tl - 4.0 * s),
                    num(f.screen_y(t.value) + fs * 0.35),
                    label_svg(&t.label, fs)
                );
            }
            for (v, t) in &self.right_ticks {
                let _ = write!(
                    out,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"start\">{}</text>",
                    num(p.right() + tl + 4.0 * s),
                    num(f.screen_y(*v) + fs * 0.35),
                    label_svg(&t.label, fs)
                );
            }
            out.push_str("</g>");
            let fa = self.font_axis;
            let axis_text = |out: &mut String, x: f64, y: f64, rotate: Option<i32>, text: &str| {
                let tr = rotate
                    .map(|a| format!(" transform=\"rotate({a} {} {})\"", num(x), num(y)))
                    .unwrap_or_default();
                let _ = write!(
                    out,
                    "<text class=\"axis-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\"{tr}>{}</text>",
                    num(x),
                    num(y),
                    num(fa),
                    style::INK,
                    escape(text)
                );
            };
            axis_text(
                out,
                p.left + 0.5 * p.width,
                p.bottom() + tl + 3.0 * s + fs + 10.0 * s + fa * 0.8,
                None,
                &spec.x.label,
            );
            let yw = self
                .y_ticks
                .iter()
                .map(|t| label_width(&t.label, fs))
                .fold(0.0, f64::max);
            let yx = p.left - tl - 4.0 * s - yw - 10.0 * s - fa * 0.25;
            axis_text(out, yx, p.top + 0.5 * p.height, Some(-90), &spec.y.label);
            if let (Some((_, name)), false) = (&spec.right, self.right_ticks.is_empty()) {
                let rw = self
                    .right_ticks
                    .iter()
                    .map(|(_, t)| label_width(&t.label, fs))
                    .fold(0.0, f64::max);
                let rx = p.right() + tl + 4.0 * s + rw + 10.0 * s + fa * 0.75;
                axis_text(out, rx, p.top + 0.5 * p.height, Some(90), name);
            }
        }
        out.push_str(overlay);
        if let Some((at, boxed)) = self.legend_at {
            self.legend(out, &spec.legend, at, boxed);
        }
        if let Some(t) = &self.title {
            let _ = write!(
                out,
                "<text class=\"title\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
                num(p.left),
                num(14.0 * s + self.font_title * 0.8),
                num(self.font_title),
                style::INK,
                escape(t)
            );
        }
        let lh = self.font_caption * 1.35;
        let y0 =
            self.h - 14.0 * s - (self.caption.len() as f64 - 1.0) * lh - 0.25 * self.font_caption;
        for (i, line) in self.caption.iter().enumerate() {
            let _ = write!(
                out,
                "<text class=\"caption\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
                num(14.0 * s),
                num(y0 + i as f64 * lh),
                num(self.font_caption),
                style::INK_SOFT,
                escape(line)
            );
        }
        out.push_str("</svg>");
    }

    fn legend(&self, out: &mut String, items: &[(Swatch, String)], at: Px, boxed: bool) {
        let s = self.s;
        let (row, sw, gap, font) = legend_metrics(s);
        let (w, h) = legend_size(items, s);
        if boxed {
            let p = 7.0 * s;
            let _ = write!(
                out,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" rx=\"{}\" fill=\"#ffffff\" fill-opacity=\"0.92\" stroke=\"#d4d4d4\" stroke-width=\"{}\"/>",
                num(at[0] - p),
                num(at[1] - p),
                num(w + 2.0 * p),
                num(h + 2.0 * p),
                num(3.0 * s),
                num(0.8 * s)
            );
        }
        out.push_str("<g class=\"legend\">");
        for (k, (swatch, label)) in items.iter().enumerate() {
            let mid = at[1] + (k as f64 + 0.5) * row;
            let (x0, x1) = (at[0] + s, at[0] + sw - s);
            match swatch {
                Swatch::Line(colour, width, dash) => {
                    let dash = dash
                        .map(|(a, b)| {
                            format!(
                                " stroke-dasharray=\"{} {}\"",
                                num((a * s).max(0.01)),
                                num(b * s)
                            )
                        })
                        .unwrap_or_default();
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
            let _ = write!(
                out,
                "<text class=\"legend-entry\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
                num(at[0] + sw + gap),
                num(mid + 0.36 * font),
                num(font),
                style::INK,
                escape(label)
            );
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
