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

use crate::FigureError;
use crate::axes::{AxisTicks, Page, max_label_width, tick_target};
use crate::geometry::{CLIP_SLACK_PX, Frame, Px, Rect, screen_runs};
use crate::legend;
use crate::style;
use crate::svg::{num, path_data};
use crate::text::{fit_attrs, name_or, short_number, text_width};
use crate::ticks::{Tick, ticks};

/// At most this many orbits are listed in the legend; the rest are summed up in one line.
const MAX_LEGEND_ENTRIES: usize = 12;

/// What an empty figure says.
const NO_ORBIT: &str = "no orbit to show";

/// Size of the legend's heading at figure scale 1 (px).
const LEGEND_HEADING: f64 = 10.5;

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
                    label: format!(
                        "from ({}, {})",
                        short_number(o.seed[0]),
                        short_number(o.seed[1])
                    ),
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

/// `name (unit)`, or the name alone.
fn with_unit(name: &str, unit: &str) -> String {
    let unit = unit.trim();
    if unit.is_empty() {
        name.to_owned()
    } else {
        format!("{name} ({unit})")
    }
}

/// Height (px) at which the figure scale is 1 (at 900 px wide).
const REFERENCE_HEIGHT: f64 = 560.0;

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
    let page = Page::new(
        opts.width,
        opts.height,
        REFERENCE_HEIGHT,
        Some(opts.title.as_deref().unwrap_or(&series.title)),
        opts.caption.as_deref(),
    );
    let (w, s, pad, top) = (page.w, page.s, page.pad, page.top);
    let (f_axis, f_tick, f_legend) = (page.fonts.axis, page.fonts.tick, 12.0 * s);

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
        .fold(
            legend::heading_width("ORBITS", LEGEND_HEADING * s),
            f64::max,
        );
    let show_legend = opts.show_legend && !entries.is_empty() && legend_w + 20.0 * s < 0.35 * w;

    // Vertical layout: title, two panels with a gap, time ticks and label, caption.
    let bottom = page.bottom;
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
    let y_label_w = max_label_width(y_ticks.iter().flatten().map(|t| &t.label), f_tick);
    let left = page.plot_left(y_label_w);
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
    let clips: Vec<(String, Rect)> = panels
        .iter()
        .enumerate()
        .map(|(i, f)| (format!("quarry-series-{i}"), f.plot))
        .collect();
    page.open(&mut out, &clips);

    for (i, f) in panels.iter().enumerate() {
        let p = f.plot;
        if decorated {
            page.grid(&mut out, f, &t_ticks, &y_ticks[i]);
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
        let mut ticks = AxisTicks {
            x: &t_ticks,
            y: &y_ticks[i],
            right: &[],
        };
        page.frame_and_ticks(&mut out, f, &ticks);
        // Time is labelled once, under the lower panel.
        if i == 0 {
            ticks.x = &[];
        }
        page.tick_labels(&mut out, f, &ticks);
        // The variable's name and unit, turned along the panel's side; smaller when long.
        let name = name_or(&series.variables[i], ["x", "y"][i]);
        let label = with_unit(&name, &series.units[i]);
        let natural = text_width(&label, f_axis);
        let fa = if natural > p.height * 0.98 {
            (f_axis * p.height * 0.98 / natural).max(7.0 * s)
        } else {
            f_axis
        };
        page.y_axis_name(&mut out, &p, y_label_w, fa, &label);
    }
    if decorated {
        page.x_axis_name(
            &mut out,
            &panels[1].plot,
            &with_unit("time", &series.time_unit),
        );
    }
    if series.orbits.is_empty() && decorated {
        let p = panels[0].plot;
        let _ = write!(
            out,
            "<text class=\"note\" x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"middle\" fill=\"{}\"{}>{NO_ORBIT}</text>",
            num(p.left + 0.5 * p.width),
            num(p.top + 0.5 * p.height),
            num(f_axis),
            style::INK_SOFT,
            fit_attrs(NO_ORBIT, f_axis)
        );
    }
    if show_legend && decorated {
        let x = right + 20.0 * s;
        let mut y = top + 2.0 * s;
        let row = 19.0 * s;
        out.push_str("<g class=\"legend\">");
        legend::heading_text(&mut out, x, y + 0.72 * row, LEGEND_HEADING * s, "ORBITS");
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
            legend::entry_text(&mut out, x + swatch + 8.0 * s, mid, f_legend, label);
            y += row;
        }
        out.push_str("</g>");
    }
    if decorated {
        page.draw_title(&mut out, left);
        page.draw_caption(&mut out);
    }
    out.push_str("</svg>");
    out
}

/// The same figure as a PNG of `opts.width`×`opts.height` pixels.
pub fn render_time_series_png(
    series: &TimeSeries,
    opts: &TimeSeriesOptions,
) -> Result<Vec<u8>, FigureError> {
    crate::raster::figure_png(opts.width, opts.height, || {
        render_time_series_svg(series, opts)
    })
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

    use crate::tests::doc_texts;

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
        let t = doc_texts(&doc);
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
        // Title, axis names, legend and caption keep their measured length in any font.
        assert!(crate::tests::assert_text_is_fitted(&svg) >= 8);
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
        let t = doc_texts(&doc);
        assert!(t.contains(&"… and 3 more".to_owned()), "{t:?}");
    }
}
