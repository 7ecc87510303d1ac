//! Both variables against time for one or more orbits: two panels stacked over one shared
//! time axis, so the lag of a predator's peaks behind its prey's reads straight off the page.
//!
//! Two panels rather than one with two vertical scales: the variables usually have different
//! units and magnitudes (thousand fish against breeding pairs), and a second scale on the
//! right invites comparing heights that mean nothing. Each orbit keeps one colour in both
//! panels, the same colours, in the same order, as the orbits of the phase portrait
//! ([`crate::render_svg`]), so a reader can match the two figures.
//!
//! Like the phase portrait, nothing here panics on odd data: non-finite values break a curve,
//! empty or flat series get a usable range, and text is escaped.

use std::fmt::Write as _;

use quarry_core::model::Window;
use quarry_core::scene::Scene;

use crate::geometry::{CLIP_SLACK_PX, Frame, Px, Rect, screen_runs};
use crate::style;
use crate::svg::{escape, num, path_data};
use crate::text::{text_width, wrap};
use crate::ticks::{Tick, TickLabel, ticks};
use crate::{FigureError, MAX_SIZE};

/// At most this many orbits are listed in the legend; the rest are summed up in one line.
const MAX_LEGEND_ENTRIES: usize = 12;

/// Longest legend label (characters) before it is shortened with "…".
const MAX_LABEL_CHARS: usize = 32;

/// One orbit as a time series.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct SeriesOrbit {
    /// Legend words, e.g. "from (10, 5)".
    pub label: String,
    /// Times, in the order drawn (may run backward).
    pub times: Vec<f64>,
    /// The state at each time (first variable, second variable).
    pub values: Vec<[f64; 2]>,
}

/// What a time-series figure shows.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct TimeSeries {
    /// Title (the model's or scenario's name).
    pub title: String,
    /// Names of the two variables.
    pub variables: [String; 2],
    /// Units of the two variables ("" for none).
    pub units: [String; 2],
    /// Unit of time ("" for none).
    pub time_unit: String,
    /// The orbits, drawn in order.
    pub orbits: Vec<SeriesOrbit>,
}

impl TimeSeries {
    /// The orbits of a scene, each labelled by its start point (no units).
    pub fn from_scene(scene: &Scene) -> Self {
        Self {
            title: scene.title.clone(),
            variables: scene.variables.clone(),
            units: [String::new(), String::new()],
            time_unit: String::new(),
            orbits: scene
                .orbits
                .iter()
                .map(|o| SeriesOrbit {
                    label: format!("from ({}, {})", short(o.seed[0]), short(o.seed[1])),
                    times: o.times.clone(),
                    values: o.points.clone(),
                })
                .collect(),
        }
    }
}

/// Size and text of a time-series figure.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TimeSeriesOptions {
    /// Width in px (SVG user units and PNG pixels). Default 900.
    pub width: u32,
    /// Height in px. Default 560.
    pub height: u32,
    /// Title; `None` uses the series' title, an empty string draws none.
    pub title: Option<String>,
    /// The legend of orbits.
    pub show_legend: bool,
    /// Small print under the plot (e.g. a caution line); wrapped, at most four lines.
    pub caption: Option<String>,
}

impl Default for TimeSeriesOptions {
    fn default() -> Self {
        Self {
            width: 900,
            height: 560,
            title: None,
            show_legend: true,
            caption: None,
        }
    }
}

/// A number for a legend label: about four significant digits, no trailing zeros.
fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{}", if v == 0.0 { 0.0 } else { v });
    }
    let digits = (3 - v.abs().log10().floor() as i32).clamp(0, 8) as usize;
    let s = format!("{v:.digits$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        s.as_str()
    };
    s.replace('-', "\u{2212}")
}

/// `name (unit)`, or the name alone.
fn with_unit(name: &str, unit: &str) -> String {
    let unit = unit.trim();
    if unit.is_empty() {
        name.to_owned()
    } else {
        format!("{name} ({unit})")
    }
}

/// The figure scale: 1 at 900×560, as the phase portrait's (see `render::figure_scale`).
fn figure_scale(w: f64, h: f64) -> f64 {
    (w / 900.0).min(h / 560.0).sqrt().clamp(0.6, 3.0)
}

/// Estimated width of a tick label (px), as the phase portrait measures it.
fn label_width(l: &TickLabel, size: f64) -> f64 {
    let mut w = text_width(&l.mantissa, size);
    if let Some(e) = l.exponent {
        w += text_width("×10", size) + text_width(&format!("−{}", e.abs()), size * 0.72);
    }
    w
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

fn tick_target(len_px: f64, spacing_px: f64) -> usize {
    ((len_px / spacing_px).round() as usize).clamp(2, 10)
}

/// The range of the finite values, or `None`.
fn finite_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let mut r: Option<(f64, f64)> = None;
    for v in values.filter(|v| v.is_finite()) {
        r = Some(match r {
            None => (v, v),
            Some((lo, hi)) => (lo.min(v), hi.max(v)),
        });
    }
    r
}

/// The plotted range of one variable: the data padded by 5 %, from zero when the values are
/// all non-negative and the smallest is near zero against the largest (population sizes read
/// honestly from a zero baseline, common practice).
fn value_range(lo: f64, hi: f64) -> (f64, f64) {
    let span = hi - lo;
    if !(span.is_finite() && span > 0.0) {
        let m = lo.abs().max(1.0) * 0.1;
        return (lo - m, lo + m);
    }
    if lo >= 0.0 && lo <= 0.25 * hi {
        (0.0, hi + 0.05 * hi)
    } else {
        (lo - 0.05 * span, hi + 0.05 * span)
    }
}

/// Shortens a label to [`MAX_LABEL_CHARS`] characters.
fn clip_label(s: &str) -> String {
    if s.chars().count() <= MAX_LABEL_CHARS {
        s.to_owned()
    } else {
        let mut t: String = s.chars().take(MAX_LABEL_CHARS - 1).collect();
        t.push('…');
        t
    }
}

/// Both variables against time as a standalone SVG document, `opts.width`×`opts.height`
/// user units (sizes outside 1..=[`MAX_SIZE`] are clamped). Deterministic.
pub fn render_time_series_svg(series: &TimeSeries, opts: &TimeSeriesOptions) -> String {
    let w = f64::from(opts.width.clamp(1, MAX_SIZE));
    let h = f64::from(opts.height.clamp(1, MAX_SIZE));
    let s = figure_scale(w, h);
    let (f_title, f_axis, f_tick, f_caption, f_legend) =
        (18.0 * s, 14.0 * s, 12.0 * s, 11.0 * s, 12.0 * s);
    let pad = 14.0 * s;

    let title = opts
        .title
        .clone()
        .unwrap_or_else(|| series.title.clone())
        .trim()
        .to_owned();
    let title = (!title.is_empty()).then_some(title);
    let caption = opts
        .caption
        .as_deref()
        .map(|c| wrap(c, f_caption, (w - 2.0 * pad).max(1.0), 4))
        .unwrap_or_default();

    // Legend entries and width.
    let mut entries: Vec<(String, &'static str)> = series
        .orbits
        .iter()
        .enumerate()
        .take(MAX_LEGEND_ENTRIES)
        .map(|(k, o)| {
            let label = if o.label.trim().is_empty() {
                format!("orbit {}", k + 1)
            } else {
                clip_label(o.label.trim())
            };
            (label, palette(k))
        })
        .collect();
    if series.orbits.len() > MAX_LEGEND_ENTRIES {
        entries.push((
            format!("… and {} more", series.orbits.len() - MAX_LEGEND_ENTRIES),
            "",
        ));
    }
    let swatch = 26.0 * s;
    let legend_w = entries
        .iter()
        .map(|(l, _)| swatch + 8.0 * s + text_width(l, f_legend))
        .fold(text_width("ORBITS", 10.5 * s) * 1.1, f64::max);
    let show_legend = opts.show_legend && !entries.is_empty() && legend_w + 20.0 * s < 0.35 * w;

    // Vertical layout: title, two panels with a gap, time ticks and label, caption.
    let top = pad
        + if title.is_some() {
            f_title + 14.0 * s
        } else {
            4.0 * s
        };
    let caption_h = if caption.is_empty() {
        0.0
    } else {
        caption.len() as f64 * f_caption * 1.35 + 8.0 * s
    };
    let tick_len = 5.0 * s;
    let bottom = h - pad - caption_h - (f_tick + 10.0 * s) - (f_axis + 10.0 * s);
    let gap = 16.0 * s;
    let panel_h = ((bottom - top - gap) / 2.0).max(1.0);

    // Ranges.
    let t_range = finite_range(series.orbits.iter().flat_map(|o| o.times.iter().copied()))
        .map(|(a, b)| if a < b { (a, b) } else { (a, a + 1.0) })
        .unwrap_or((0.0, 1.0));
    let v_range = |i: usize| {
        finite_range(
            series
                .orbits
                .iter()
                .flat_map(|o| o.values.iter().map(move |v| v[i])),
        )
        .map(|(a, b)| value_range(a, b))
        .unwrap_or((0.0, 1.0))
    };
    let ranges = [v_range(0), v_range(1)];
    let y_ticks: [Vec<Tick>; 2] = [0, 1].map(|i| {
        let (a, b) = crate::geometry::sanitize_range(ranges[i].0, ranges[i].1);
        ticks(a, b, tick_target(panel_h, 42.0 * s))
    });
    let y_label_w = y_ticks
        .iter()
        .flatten()
        .map(|t| label_width(&t.label, f_tick))
        .fold(0.0, f64::max);
    let left = pad + f_axis + 12.0 * s + y_label_w + 9.0 * s;
    let right = if show_legend {
        w - pad - legend_w - 20.0 * s
    } else {
        w - pad - 12.0 * s
    };
    let plot_w = (right - left).max(1.0);
    let panels = [0, 1].map(|i| {
        let rect = Rect {
            left,
            top: top + i as f64 * (panel_h + gap),
            width: plot_w,
            height: panel_h,
        };
        let window = Window {
            x_min: t_range.0,
            x_max: t_range.1,
            y_min: ranges[i].0,
            y_max: ranges[i].1,
        };
        Frame::new(&window, rect)
    });
    let t_ticks = ticks(panels[0].x0, panels[0].x1, tick_target(plot_w, 90.0 * s));
    let decorated = plot_w >= 40.0 && panel_h >= 30.0;

    let mut out = String::with_capacity(32 * 1024);
    let _ = write!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" font-family=\"{}\">",
        style::FONT_FAMILY
    );
    if let Some(t) = &title {
        let _ = write!(out, "<title>{}</title>", escape(t));
    }
    out.push_str("<defs>");
    for (i, f) in panels.iter().enumerate() {
        let _ = write!(
            out,
            "<clipPath id=\"quarry-series-{i}\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>",
            num(f.plot.left),
            num(f.plot.top),
            num(f.plot.width),
            num(f.plot.height)
        );
    }
    out.push_str("</defs>");
    let _ = write!(out, "<rect width=\"{w}\" height=\"{h}\" fill=\"#ffffff\"/>");

    for (i, f) in panels.iter().enumerate() {
        let p = f.plot;
        if decorated {
            // Grid.
            let mut d = String::new();
            for t in &t_ticks {
                let x = f.screen_x(t.value);
                if x > p.left + 0.5 && x < p.right() - 0.5 {
                    let _ = write!(d, "M{} {}V{}", num(x), num(p.top), num(p.bottom()));
                }
            }
            for t in &y_ticks[i] {
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
                    num(0.8 * s)
                );
            }
        }
        // Curves.
        let clip = p.grown(CLIP_SLACK_PX * s);
        let _ = write!(out, "<g clip-path=\"url(#quarry-series-{i})\">");
        for (k, o) in series.orbits.iter().enumerate() {
            let pts: Vec<[f64; 2]> = o
                .times
                .iter()
                .zip(&o.values)
                .map(|(&t, v)| [t, v[i]])
                .collect();
            let runs: Vec<Vec<Px>> = screen_runs(&pts, false, f, &clip);
            let d = path_data(&runs);
            if d.is_empty() {
                continue;
            }
            let _ = write!(
                out,
                "<path class=\"series\" d=\"{d}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{}\" stroke-linejoin=\"round\" stroke-linecap=\"round\"/>",
                palette(k),
                num(1.6 * s)
            );
        }
        out.push_str("</g>");
        if !decorated {
            continue;
        }
        // Frame and ticks.
        let mut d = String::new();
        for t in &t_ticks {
            let _ = write!(
                d,
                "M{} {}v{}",
                num(f.screen_x(t.value)),
                num(p.bottom()),
                num(tick_len)
            );
        }
        for t in &y_ticks[i] {
            let _ = write!(
                d,
                "M{} {}h{}",
                num(p.left),
                num(f.screen_y(t.value)),
                num(-tick_len)
            );
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
        let _ = write!(
            out,
            "<g class=\"tick-labels\" font-size=\"{}\" fill=\"{}\">",
            num(f_tick),
            style::INK_SOFT
        );
        if i == 1 {
            for t in &t_ticks {
                let _ = write!(
                    out,
                    "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">{}</text>",
                    num(f.screen_x(t.value)),
                    num(p.bottom() + tick_len + 3.0 * s + f_tick * 0.8),
                    label_svg(&t.label, f_tick)
                );
            }
        }
        for t in &y_ticks[i] {
            let _ = write!(
                out,
                "<text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>",
                num(p.left - tick_len - 4.0 * s),
                num(f.screen_y(t.value) + f_tick * 0.35),
                label_svg(&t.label, f_tick)
            );
        }
        out.push_str("</g>");
        // The variable's name and unit, turned along the panel's side; smaller when long.
        let name = series.variables[i].trim();
        let name = if name.is_empty() { ["x", "y"][i] } else { name };
        let label = with_unit(name, &series.units[i]);
        let natural = text_width(&label, f_axis);
        let fa = if natural > p.height * 0.98 {
            (f_axis * p.height * 0.98 / natural).max(7.0 * s)
        } else {
            f_axis
        };
        let yx = left - tick_len - 4.0 * s - y_label_w - 10.0 * s - fa * 0.25;
        let yy = p.top + 0.5 * p.height;
        let _ = write!(
            out,
            "<text class=\"axis-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\" transform=\"rotate(-90 {} {})\">{}</text>",
            num(yx),
            num(yy),
            num(fa),
            style::INK,
            num(yx),
            num(yy),
            escape(&label)
        );
    }
    if decorated {
        let p = panels[1].plot;
        let _ = write!(
            out,
            "<text class=\"axis-label\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\">{}</text>",
            num(p.left + 0.5 * p.width),
            num(p.bottom() + tick_len + 3.0 * s + f_tick + 10.0 * s + f_axis * 0.8),
            num(f_axis),
            style::INK,
            escape(&with_unit("time", &series.time_unit))
        );
    }
    if series.orbits.is_empty() && decorated {
        let p = panels[0].plot;
        let _ = write!(
            out,
            "<text class=\"note\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\">no orbit to show</text>",
            num(p.left + 0.5 * p.width),
            num(p.top + 0.5 * p.height),
            num(f_axis),
            style::INK_SOFT
        );
    }
    if show_legend && decorated {
        let x = right + 20.0 * s;
        let mut y = top + 2.0 * s;
        let row = 19.0 * s;
        out.push_str("<g class=\"legend\">");
        let _ = write!(
            out,
            "<text x=\"{}\" y=\"{}\" font-size=\"{}\" letter-spacing=\"{}\" fill=\"{}\">ORBITS</text>",
            num(x),
            num(y + 0.72 * row),
            num(10.5 * s),
            num(0.84 * s),
            style::INK_SOFT
        );
        y += row;
        for (label, colour) in &entries {
            let mid = y + 0.5 * row;
            if !colour.is_empty() {
                let _ = write!(
                    out,
                    "<path d=\"M{} {}H{}\" stroke=\"{colour}\" stroke-width=\"{}\" stroke-linecap=\"round\" fill=\"none\"/>",
                    num(x + s),
                    num(mid),
                    num(x + swatch - s),
                    num(2.2 * s)
                );
            }
            let _ = write!(
                out,
                "<text class=\"legend-entry\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
                num(x + swatch + 8.0 * s),
                num(mid + 0.36 * f_legend),
                num(f_legend),
                style::INK,
                escape(label)
            );
            y += row;
        }
        out.push_str("</g>");
    }
    if let Some(t) = &title
        && decorated
    {
        let _ = write!(
            out,
            "<text class=\"title\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
            num(left),
            num(14.0 * s + f_title * 0.8),
            num(f_title),
            style::INK,
            escape(t)
        );
    }
    if decorated && !caption.is_empty() {
        let lh = f_caption * 1.35;
        let y0 = h - 14.0 * s - (caption.len() as f64 - 1.0) * lh - 0.25 * f_caption;
        for (i, line) in caption.iter().enumerate() {
            let _ = write!(
                out,
                "<text class=\"caption\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\">{}</text>",
                num(pad),
                num(y0 + i as f64 * lh),
                num(f_caption),
                style::INK_SOFT,
                escape(line)
            );
        }
    }
    out.push_str("</svg>");
    out
}

/// The same figure as a PNG of `opts.width`×`opts.height` pixels.
pub fn render_time_series_png(
    series: &TimeSeries,
    opts: &TimeSeriesOptions,
) -> Result<Vec<u8>, FigureError> {
    crate::raster::check_size(opts.width, opts.height)?;
    crate::svg_to_png(
        &render_time_series_svg(series, opts),
        opts.width,
        opts.height,
    )
}

fn palette(k: usize) -> &'static str {
    style::ORBIT_PALETTE[k % style::ORBIT_PALETTE.len()]
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::library::builtin;
    use quarry_core::model::Model;
    use quarry_core::orbit::{OrbitOptions, run_orbit};
    use resvg::tiny_skia::Pixmap;

    fn lv_series(starts: &[[f64; 2]], t_end: f64) -> TimeSeries {
        let m = Model::new(&builtin("lotka-volterra").expect("builtin").spec()).expect("model");
        let orbits = starts
            .iter()
            .map(|&s| {
                let r = run_orbit(
                    &m,
                    s,
                    &OrbitOptions {
                        t_end,
                        ..OrbitOptions::default()
                    },
                )
                .expect("orbit");
                let rows = r.rows(t_end / 600.0);
                SeriesOrbit {
                    label: format!("from ({}, {})", s[0], s[1]),
                    times: rows.iter().map(|r| r[0]).collect(),
                    values: rows.iter().map(|r| [r[1], r[2]]).collect(),
                }
            })
            .collect();
        TimeSeries {
            title: "Lotka–Volterra <test> & \"co\"".into(),
            variables: m.variables().map(str::to_owned),
            units: ["thousand fish".into(), "pairs".into()],
            time_unit: "year".into(),
            orbits,
        }
    }

    fn texts(doc: &roxmltree::Document) -> Vec<String> {
        doc.descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| {
                n.descendants()
                    .filter(|d| d.is_text())
                    .filter_map(|d| d.text())
                    .collect::<String>()
            })
            .collect()
    }

    #[test]
    fn the_svg_parses_and_names_axes_units_orbits_and_caution() {
        let ts = lv_series(&[[10.0, 5.0], [30.0, 10.0]], 30.0);
        let svg = render_time_series_svg(
            &ts,
            &TimeSeriesOptions {
                caption: Some(quarry_core::harvest::CAUTION.into()),
                ..TimeSeriesOptions::default()
            },
        );
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        let t = texts(&doc);
        let [xn, yn] = [&ts.variables[0], &ts.variables[1]];
        assert!(t.contains(&format!("{xn} (thousand fish)")), "{t:?}");
        assert!(t.contains(&format!("{yn} (pairs)")));
        assert!(t.contains(&"time (year)".to_owned()));
        assert!(t.contains(&"from (10, 5)".to_owned()));
        assert!(t.contains(&"from (30, 10)".to_owned()));
        assert!(t.contains(&"Lotka–Volterra <test> & \"co\"".to_owned()));
        let caption: String = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("caption"))
            .filter_map(|n| n.text())
            .collect::<Vec<_>>()
            .join(" ");
        assert_eq!(caption, quarry_core::harvest::CAUTION);
        // Two orbits × two panels.
        let series = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("series"))
            .count();
        assert_eq!(series, 4);
        // Tick labels on the time axis are the nice values 0, 5, …, 30 (1–2–5 steps).
        assert!(t.contains(&"30".to_owned()) && t.contains(&"0".to_owned()));
    }

    #[test]
    fn the_png_has_the_asked_size_and_ink_in_both_panels() {
        let ts = lv_series(&[[10.0, 5.0]], 20.0);
        let opts = TimeSeriesOptions {
            width: 640,
            height: 420,
            ..TimeSeriesOptions::default()
        };
        let png = render_time_series_png(&ts, &opts).expect("png");
        let pix = Pixmap::decode_png(&png).expect("decodes");
        assert_eq!((pix.width(), pix.height()), (640, 420));
        // Count pixels of the first orbit colour in the upper and lower halves of the plot.
        let colour = [0x3b, 0x4f, 0xa1];
        let mut counts = [0usize; 2];
        for (i, p) in pix.pixels().iter().enumerate() {
            let c = p.demultiply();
            let near = (i32::from(c.red()) - colour[0]).abs()
                + (i32::from(c.green()) - colour[1]).abs()
                + (i32::from(c.blue()) - colour[2]).abs()
                < 60;
            if near {
                let y = i / 640;
                counts[usize::from(y >= 210)] += 1;
            }
        }
        assert!(counts[0] > 300 && counts[1] > 300, "{counts:?}");
    }

    #[test]
    fn odd_data_never_breaks_the_figure() {
        let cases = [
            TimeSeries::default(),
            TimeSeries {
                orbits: vec![SeriesOrbit {
                    label: String::new(),
                    times: vec![0.0, 1.0, f64::NAN, 3.0],
                    values: vec![
                        [1.0, 1.0],
                        [f64::INFINITY, 2.0],
                        [3.0, 3.0],
                        [1e300, -1e300],
                    ],
                }],
                ..TimeSeries::default()
            },
            TimeSeries {
                orbits: vec![SeriesOrbit {
                    label: "x".repeat(200),
                    times: vec![5.0, 5.0],
                    values: vec![[2.0, 2.0], [2.0, 2.0]],
                }],
                ..TimeSeries::default()
            },
        ];
        for ts in &cases {
            for (w, h) in [(900, 560), (30, 20), (1, 1)] {
                let svg = render_time_series_svg(
                    ts,
                    &TimeSeriesOptions {
                        width: w,
                        height: h,
                        ..TimeSeriesOptions::default()
                    },
                );
                roxmltree::Document::parse(&svg).expect("well-formed");
                assert!(!svg.contains("NaN") && !svg.contains("inf"));
            }
        }
        assert!(matches!(
            render_time_series_png(
                &TimeSeries::default(),
                &TimeSeriesOptions {
                    width: 0,
                    ..TimeSeriesOptions::default()
                }
            ),
            Err(FigureError::BadSize { .. })
        ));
    }

    #[test]
    fn many_orbits_are_summed_up_in_the_legend() {
        let starts: Vec<[f64; 2]> = (0..15).map(|k| [5.0 + k as f64, 5.0]).collect();
        let ts = lv_series(&starts, 5.0);
        let svg = render_time_series_svg(&ts, &TimeSeriesOptions::default());
        let doc = roxmltree::Document::parse(&svg).expect("svg");
        let t = texts(&doc);
        assert!(t.contains(&"… and 3 more".to_owned()), "{t:?}");
    }

    #[test]
    fn legend_numbers_are_short() {
        assert_eq!(short(10.0), "10");
        assert_eq!(short(0.123456), "0.1235");
        assert_eq!(short(-2.5), "\u{2212}2.5");
        assert_eq!(short(12345.678), "12346");
    }
}
