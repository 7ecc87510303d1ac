//! The page every figure shares: the figure scale and text sizes, the vertical layout (title,
//! plot, tick labels, axis name, caption), and the SVG for the header, grid, frame, ticks, tick
//! labels, axis names, title and caption.
//!
//! The phase portrait, the x–y charts (branch diagram, yield curve) and the time series all
//! draw these pieces from here, so the figures of one report look alike.

use std::fmt::Write as _;

use crate::MAX_SIZE;
use crate::geometry::{Frame, Rect};
use crate::style;
use crate::svg::{escape, num};
use crate::text::{fit_attrs, text_width, wrap};
use crate::ticks::{Tick, TickLabel};

/// Reference width (px) at which the figure scale is 1.
const REFERENCE_WIDTH: f64 = 900.0;

/// Length of a tick mark at figure scale 1 (px).
const TICK_LEN: f64 = 5.0;

/// The figure scale: 1 at `REFERENCE_WIDTH`×`ref_height`, growing and shrinking gently with
/// the size so text stays readable when the figure is placed at report width.
pub fn figure_scale(w: f64, h: f64, ref_height: f64) -> f64 {
    (w / REFERENCE_WIDTH)
        .min(h / ref_height)
        .sqrt()
        .clamp(0.6, 3.0)
}

/// Sizes of the text (px) at one figure scale.
#[derive(Clone, Copy, Debug)]
pub struct Fonts {
    /// The title.
    pub title: f64,
    /// Axis names.
    pub axis: f64,
    /// Tick labels (and marker labels).
    pub tick: f64,
    /// The caption.
    pub caption: f64,
}

impl Fonts {
    /// The sizes at figure scale `s`.
    pub fn new(s: f64) -> Self {
        Self {
            title: 18.0 * s,
            axis: 14.0 * s,
            tick: 12.0 * s,
            caption: 11.0 * s,
        }
    }
}

/// Estimated width of a tick label (px).
pub fn label_width(l: &TickLabel, size: f64) -> f64 {
    let mut w = text_width(&l.mantissa, size);
    if let Some(e) = l.exponent {
        w += text_width("×10", size) + text_width(&format!("−{}", e.abs()), size * 0.72);
    }
    w
}

/// The widest of some tick labels (px), 0 for none.
pub fn max_label_width<'a>(labels: impl IntoIterator<Item = &'a TickLabel>, size: f64) -> f64 {
    labels
        .into_iter()
        .map(|l| label_width(l, size))
        .fold(0.0, f64::max)
}

/// The tick label as SVG text content (exponent raised and smaller).
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

/// How many ticks to ask for along `len_px` with about `spacing_px` between them.
pub fn tick_target(len_px: f64, spacing_px: f64) -> usize {
    ((len_px / spacing_px).round() as usize).clamp(2, 10)
}

/// Line pitch of a two-line title, in title font sizes.
const TITLE_LEADING: f64 = 1.2;

/// The page: size, scale, text sizes, title and caption, and the band left for the plot.
pub struct Page {
    /// Width (px).
    pub w: f64,
    /// Height (px).
    pub h: f64,
    /// Figure scale.
    pub s: f64,
    /// Text sizes.
    pub fonts: Fonts,
    /// Margin round the page (px).
    pub pad: f64,
    /// The title, trimmed; `None` when there is none.
    pub title: Option<String>,
    /// The title wrapped to the page's width, at most two lines.
    pub title_lines: Vec<String>,
    /// The caption, wrapped to the page's width.
    pub caption: Vec<String>,
    /// Top of the plot (below the title).
    pub top: f64,
    /// Bottom of the plot (above the tick labels, the axis name and the caption).
    pub bottom: f64,
}

impl Page {
    /// Lays out a `width`×`height` page (clamped into 1..=[`MAX_SIZE`]) whose scale is 1 at
    /// 900×`ref_height`.
    pub fn new(
        width: u32,
        height: u32,
        ref_height: f64,
        title: Option<&str>,
        caption: Option<&str>,
    ) -> Self {
        let w = f64::from(width.clamp(1, MAX_SIZE));
        let h = f64::from(height.clamp(1, MAX_SIZE));
        let s = figure_scale(w, h, ref_height);
        let fonts = Fonts::new(s);
        let pad = 14.0 * s;
        let title = title
            .map(str::trim)
            .filter(|t| !t.is_empty())
            .map(str::to_owned);
        let caption = caption
            .map(|c| wrap(c, fonts.caption, (w - 2.0 * pad).max(1.0), 4))
            .unwrap_or_default();
        // NOTE: the title starts at the plot's left edge, about 90 px (at scale 1) in from the
        // page's; wrapping to that width keeps a long scenario title on the page.
        let title_lines = title
            .as_deref()
            .map(|t| wrap(t, fonts.title, (w - pad - 90.0 * s).max(1.0), 2))
            .unwrap_or_default();
        let top = pad
            + if title_lines.is_empty() {
                4.0 * s
            } else {
                fonts.title
                    + 14.0 * s
                    + (title_lines.len() - 1) as f64 * TITLE_LEADING * fonts.title
            };
        let caption_h = if caption.is_empty() {
            0.0
        } else {
            caption.len() as f64 * fonts.caption * 1.35 + 8.0 * s
        };
        let bottom = h - pad - caption_h - (fonts.tick + 10.0 * s) - (fonts.axis + 10.0 * s);
        Self {
            w,
            h,
            s,
            fonts,
            pad,
            title,
            title_lines,
            caption,
            top,
            bottom,
        }
    }

    /// Left edge of a plot whose y tick labels are `y_label_w` px wide.
    pub fn plot_left(&self, y_label_w: f64) -> f64 {
        self.pad + self.fonts.axis + 12.0 * self.s + y_label_w + 9.0 * self.s
    }

    /// Length of the tick marks (px).
    pub fn tick_len(&self) -> f64 {
        TICK_LEN * self.s
    }

    /// Drops the title and caption (for a page too small to decorate).
    pub fn undecorated(&mut self) {
        self.title = None;
        self.title_lines.clear();
        self.caption.clear();
    }

    /// The document's start: `<svg>`, the title for viewers, the clip paths (id, rectangle)
    /// and the white background.
    pub fn open(&self, out: &mut String, clips: &[(String, Rect)]) {
        let (w, h) = (self.w, self.h);
        let _ = write!(
            out,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" font-family=\"{}\">",
            style::FONT_FAMILY
        );
        if let Some(t) = &self.title {
            let _ = write!(out, "<title>{}</title>", escape(t));
        }
        out.push_str("<defs>");
        for (id, r) in clips {
            let _ = write!(
                out,
                "<clipPath id=\"{id}\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>",
                num(r.left),
                num(r.top),
                num(r.width),
                num(r.height)
            );
        }
        let _ = write!(
            out,
            "</defs><rect width=\"{w}\" height=\"{h}\" fill=\"#ffffff\"/>"
        );
    }

    /// The title, left-aligned at `x`, if there is one.
    pub fn draw_title(&self, out: &mut String, x: f64) {
        for (i, t) in self.title_lines.iter().enumerate() {
            let y = 14.0 * self.s + self.fonts.title * (0.8 + TITLE_LEADING * i as f64);
            let _ = write!(
                out,
                "<text class=\"title\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\"{}>{}</text>",
                num(x),
                num(y),
                num(self.fonts.title),
                style::INK,
                fit_attrs(t, self.fonts.title),
                escape(t)
            );
        }
    }

    /// The caption lines at the foot of the page.
    pub fn draw_caption(&self, out: &mut String) {
        let (s, fc) = (self.s, self.fonts.caption);
        let lh = fc * 1.35;
        let y0 = self.h - 14.0 * s - (self.caption.len() as f64 - 1.0) * lh - 0.25 * fc;
        for (i, line) in self.caption.iter().enumerate() {
            let _ = write!(
                out,
                "<text class=\"caption\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\"{}>{}</text>",
                num(self.pad),
                num(y0 + i as f64 * lh),
                num(fc),
                style::INK_SOFT,
                fit_attrs(line, fc),
                escape(line)
            );
        }
    }

    /// Faint grid lines at the interior ticks of a plot.
    pub fn grid(&self, out: &mut String, f: &Frame, x_ticks: &[Tick], y_ticks: &[Tick]) {
        let p = &f.plot;
        let mut d = String::new();
        for t in x_ticks {
            let x = f.screen_x(t.value);
            if x > p.left + 0.5 && x < p.right() - 0.5 {
                let _ = write!(d, "M{} {}V{}", num(x), num(p.top), num(p.bottom()));
            }
        }
        for t in y_ticks {
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

    /// The plot's frame and its tick marks.
    pub fn frame_and_ticks(&self, out: &mut String, f: &Frame, ticks: &AxisTicks<'_>) {
        let s = self.s;
        let p = &f.plot;
        let tl = self.tick_len();
        let mut d = String::new();
        for (side, at, _) in ticks.places(f) {
            let (x, y, dir, len) = match side {
                Side::Bottom => (at, p.bottom(), 'v', tl),
                Side::Left => (p.left, at, 'h', -tl),
                Side::Right => (p.right(), at, 'h', tl),
            };
            let _ = write!(d, "M{} {}{dir}{}", num(x), num(y), num(len));
        }
        let _ = write!(
            out,
            "<rect class=\"frame\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{}\"/>",
            num(p.left),
            num(p.top),
            num(p.width),
            num(p.height),
            style::FRAME,
            num(s)
        );
        if !d.is_empty() {
            let _ = write!(
                out,
                "<path class=\"ticks\" d=\"{d}\" stroke=\"{}\" stroke-width=\"{}\" fill=\"none\"/>",
                style::FRAME,
                num(s)
            );
        }
    }

    /// The tick labels, in the same places as [`Page::frame_and_ticks`] puts the marks.
    pub fn tick_labels(&self, out: &mut String, f: &Frame, ticks: &AxisTicks<'_>) {
        let s = self.s;
        let p = &f.plot;
        let tl = self.tick_len();
        let fs = self.fonts.tick;
        let _ = write!(
            out,
            "<g class=\"tick-labels\" font-size=\"{}\" fill=\"{}\">",
            num(fs),
            style::INK_SOFT
        );
        for (side, at, t) in ticks.places(f) {
            let (x, y, anchor) = match side {
                Side::Bottom => (at, p.bottom() + tl + 3.0 * s + fs * 0.8, "middle"),
                Side::Left => (p.left - tl - 4.0 * s, at + fs * 0.35, "end"),
                Side::Right => (p.right() + tl + 4.0 * s, at + fs * 0.35, "start"),
            };
            let _ = write!(
                out,
                "<text x=\"{}\" y=\"{}\" text-anchor=\"{anchor}\">{}</text>",
                num(x),
                num(y),
                label_svg(&t.label, fs)
            );
        }
        out.push_str("</g>");
    }

    /// The horizontal axis's name, centred under the tick labels of `p`.
    pub fn x_axis_name(&self, out: &mut String, p: &Rect, text: &str) {
        let (s, fa) = (self.s, self.fonts.axis);
        let y = p.bottom() + self.tick_len() + 3.0 * s + self.fonts.tick + 10.0 * s + fa * 0.8;
        axis_name(out, p.left + 0.5 * p.width, y, fa, None, text);
    }

    /// The vertical axis's name at `size` px, turned up the left side of `p`, clear of tick
    /// labels `label_w` px wide.
    pub fn y_axis_name(&self, out: &mut String, p: &Rect, label_w: f64, size: f64, text: &str) {
        let s = self.s;
        let x = p.left - self.tick_len() - 4.0 * s - label_w - 10.0 * s - size * 0.25;
        axis_name(out, x, p.top + 0.5 * p.height, size, Some(-90), text);
    }

    /// A right-hand axis's name, turned down the right side of `p`, clear of tick labels
    /// `label_w` px wide.
    pub fn right_axis_name(&self, out: &mut String, p: &Rect, label_w: f64, text: &str) {
        let (s, fa) = (self.s, self.fonts.axis);
        let x = p.right() + self.tick_len() + 4.0 * s + label_w + 10.0 * s + fa * 0.75;
        axis_name(out, x, p.top + 0.5 * p.height, fa, Some(90), text);
    }
}

/// Which side of the plot a tick stands on.
#[derive(Clone, Copy)]
enum Side {
    Bottom,
    Left,
    Right,
}

/// The ticks of one plot.
pub struct AxisTicks<'a> {
    /// Along the bottom.
    pub x: &'a [Tick],
    /// Up the left side.
    pub y: &'a [Tick],
    /// Up the right side: y in the plot's units, and the tick of the right-hand scale.
    pub right: &'a [(f64, Tick)],
}

impl AxisTicks<'_> {
    /// Every tick with its side and its screen position along that side.
    fn places<'b>(&'b self, f: &'b Frame) -> impl Iterator<Item = (Side, f64, &'b Tick)> {
        let bottom = self
            .x
            .iter()
            .map(|t| (Side::Bottom, f.screen_x(t.value), t));
        let left = self.y.iter().map(|t| (Side::Left, f.screen_y(t.value), t));
        let right = self
            .right
            .iter()
            .map(|(v, t)| (Side::Right, f.screen_y(*v), t));
        bottom.chain(left).chain(right)
    }
}

/// An axis name centred at (`x`, `y`), turned by `rotate` degrees about that point.
fn axis_name(out: &mut String, x: f64, y: f64, size: f64, rotate: Option<i32>, text: &str) {
    let tr = rotate
        .map(|a| format!(" transform=\"rotate({a} {} {})\"", num(x), num(y)))
        .unwrap_or_default();
    let _ = write!(
        out,
        "<text class=\"axis-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\"{tr}{}>{}</text>",
        num(x),
        num(y),
        num(size),
        style::INK,
        fit_attrs(text, size),
        escape(text)
    );
}
