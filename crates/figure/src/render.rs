//! Scene to SVG: layout (title, plot area, axes, legend, caption), then the layers in their
//! z-order, lightest and most numerous first, equilibria last.
//!
//! Layers inside the plot share one clip path, so an orbit leaving the window is cut at the
//! frame. Equilibria are drawn above the frame and unclipped: a marker on the boundary (the
//! origin of a population model, say) stays whole.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use quarry_core::scene::{CycleStability, DirectionField, ManifoldKind, Point, Scene};

use crate::FigureOptions;
use crate::RenderedLayers;
use crate::axes::{AxisTicks, Page, max_label_width, tick_target};
use crate::geometry::{CLIP_SLACK_PX, Frame, Px, Rect, point_and_tangent_at, screen_runs};
use crate::legend::{Entry, Legend, Metrics, Swatch};
use crate::style::{self, Mark};
use crate::svg::{dasharray, num, path_data};
use crate::text::name_or;
use crate::ticks::{Tick, ticks};

/// Id of the plot-area clip path.
const CLIP_ID: &str = "quarry-plot-area";

/// Below this plot size (px) the figure is only the plot: no axes, title or legend.
const MIN_DECORATED_PLOT: f64 = 40.0;

/// Height (px) at which the figure scale is 1 (at 900 px wide).
const REFERENCE_HEIGHT: f64 = 650.0;

/// Everything decided before drawing.
struct Layout {
    page: Page,
    frame: Frame,
    decorated: bool,
    x_ticks: Vec<Tick>,
    y_ticks: Vec<Tick>,
    legend: Legend,
    /// Top-left of the legend and whether it sits boxed over the plot.
    legend_at: Option<(Px, bool)>,
}

fn layout(scene: &Scene, mut page: Page, legend: Legend) -> Layout {
    let (w, h, s, pad, top) = (page.w, page.h, page.s, page.pad, page.top);
    let lm = Metrics::new(s);
    let (legend_w, legend_h) = legend.size(&lm);

    let plot_h = page.bottom - top;

    // The y tick labels depend only on the plot height; measure them to place the left edge.
    let window = Frame::new(
        &scene.window,
        Rect {
            left: 0.0,
            top: 0.0,
            width: 1.0,
            height: 1.0,
        },
    );
    let y_ticks = ticks(window.y0, window.y1, tick_target(plot_h, 60.0 * s));
    let y_label_w = max_label_width(y_ticks.iter().map(|t| &t.label), page.fonts.tick);
    let left = page.plot_left(y_label_w);
    let mut right = w - pad - 12.0 * s;
    let mut legend_at = None;
    let legend_outside = !legend.is_empty() && legend_w + 20.0 * s < 0.3 * w;
    if legend_outside {
        right = w - pad - legend_w - 20.0 * s;
    }
    let plot = Rect {
        left,
        top,
        width: (right - left).max(1.0),
        height: plot_h.max(1.0),
    };
    let decorated = plot.width >= MIN_DECORATED_PLOT && plot.height >= MIN_DECORATED_PLOT;
    if !decorated {
        let plot = Rect {
            left: 0.0,
            top: 0.0,
            width: w,
            height: h,
        };
        page.undecorated();
        return Layout {
            page,
            frame: Frame::new(&scene.window, plot),
            decorated,
            x_ticks: Vec::new(),
            y_ticks: Vec::new(),
            legend,
            legend_at: None,
        };
    }
    if !legend.is_empty() {
        if legend_outside {
            legend_at = Some(([right + 20.0 * s, top + 2.0 * s], false));
        } else if (legend_w + 14.0 * s) * (legend_h + 14.0 * s) < 0.2 * plot.width * plot.height
            && legend_w + 24.0 * s < plot.width
        {
            // NOTE: over the plot only while it hides little of it; a thumbnail goes without.
            legend_at = Some((
                [plot.right() - legend_w - 12.0 * s, plot.top + 12.0 * s],
                true,
            ));
        }
    }
    let frame = Frame::new(&scene.window, plot);
    let x_ticks = ticks(frame.x0, frame.x1, tick_target(plot.width, 90.0 * s));
    Layout {
        page,
        frame,
        decorated,
        x_ticks,
        y_ticks,
        legend,
        legend_at,
    }
}

/// Accumulates the SVG document.
struct Doc {
    out: String,
}

impl Doc {
    fn push(&mut self, s: &str) {
        self.out.push_str(s);
    }

    /// One `<path>` for a set of runs with the given presentation attributes; nothing if empty.
    fn path(&mut self, class: &str, runs: &[Vec<Px>], attrs: &str) -> bool {
        let d = path_data(runs);
        if d.is_empty() {
            return false;
        }
        let _ = write!(
            self.out,
            "<path class=\"{class}\" d=\"{d}\" fill=\"none\" {attrs}/>"
        );
        true
    }
}

fn stroke_attrs(colour: &str, width: f64, extra: &str) -> String {
    format!(
        "stroke=\"{colour}\" stroke-width=\"{}\" stroke-linejoin=\"round\"{extra}",
        num(width)
    )
}

/// An arrowhead centred at `frac` of the runs' length, pointing along them (or against them
/// with `reverse`).
fn mid_arrow(runs: &[Vec<Px>], frac: f64, reverse: bool, len: f64) -> Option<String> {
    let (p, t) = point_and_tangent_at(runs, frac, len * 0.6)?;
    let t = if reverse { [-t[0], -t[1]] } else { t };
    let tip = [p[0] + t[0] * len * 0.5, p[1] + t[1] * len * 0.5];
    Some(style::arrowhead_data(tip, t, len))
}

/// Renders the scene; see [`crate::render_svg`].
pub fn render(scene: &Scene, opts: &FigureOptions) -> (String, RenderedLayers) {
    let page = Page::new(
        opts.width,
        opts.height,
        REFERENCE_HEIGHT,
        Some(opts.title.as_deref().unwrap_or(&scene.title)),
        opts.caption.as_deref(),
    );
    let s = page.s;
    let probe = Frame::new(
        &scene.window,
        Rect {
            left: 0.0,
            top: 0.0,
            width: page.w,
            height: page.h,
        },
    );
    let mut drawn = RenderedLayers::default();
    let mut doc = Doc {
        out: String::with_capacity(64 * 1024),
    };
    // The layout needs the legend's size before anything is drawn, so the legend is planned
    // from what the scene holds, the options allow and the window shows.
    let legend = plan_legend(scene, opts, &probe);
    let lay = layout(scene, page, legend);
    let frame = lay.frame;
    let plot = frame.plot;
    let clip = plot.grown(CLIP_SLACK_PX * s);

    lay.page.open(&mut doc.out, &[(CLIP_ID.to_owned(), plot)]);
    if lay.decorated {
        lay.page
            .grid(&mut doc.out, &frame, &lay.x_ticks, &lay.y_ticks);
    }

    let _ = write!(doc.out, "<g clip-path=\"url(#{CLIP_ID})\">");
    body(&mut doc, scene, opts, &frame, &clip, s, &mut drawn);
    doc.push("</g>");

    if lay.decorated {
        axes(&mut doc, scene, &lay);
    }
    equilibria(&mut doc, scene, &frame, s, &mut drawn);

    if let Some((at, boxed)) = lay.legend_at {
        doc.push(&lay.legend.svg(at[0], at[1], &Metrics::new(s), boxed));
    }
    lay.page.draw_title(&mut doc.out, plot.left);
    lay.page.draw_caption(&mut doc.out);
    doc.push("</svg>");
    drawn.legend = lay.legend_at.is_some();
    (doc.out, drawn)
}

/// Frame, ticks, tick labels and axis labels.
fn axes(doc: &mut Doc, scene: &Scene, lay: &Layout) {
    let page = &lay.page;
    let f = &lay.frame;
    let ticks = AxisTicks {
        x: &lay.x_ticks,
        y: &lay.y_ticks,
        right: &[],
    };
    page.frame_and_ticks(&mut doc.out, f, &ticks);
    page.tick_labels(&mut doc.out, f, &ticks);
    let [xn, yn] = axis_names(scene);
    page.x_axis_name(&mut doc.out, &f.plot, &xn);
    let label_w = max_label_width(lay.y_ticks.iter().map(|t| &t.label), page.fonts.tick);
    page.y_axis_name(&mut doc.out, &f.plot, label_w, page.fonts.axis, &yn);
}

/// The variable names, with "x" and "y" standing in for blank ones.
fn axis_names(scene: &Scene) -> [String; 2] {
    [
        name_or(&scene.variables[0], "x"),
        name_or(&scene.variables[1], "y"),
    ]
}

/// Whether any of these curves leaves a drawable piece in the window (decides legend entries
/// before the layout is known, on a frame of the same window).
fn any_visible<'a>(lines: impl IntoIterator<Item = (&'a [Point], bool)>, f: &Frame) -> bool {
    lines
        .into_iter()
        .any(|(pts, closed)| !screen_runs(pts, closed, f, &f.plot).is_empty())
}

fn use_streamlines(scene: &Scene, opts: &FigureOptions) -> bool {
    opts.show_streamlines && !scene.streamlines.is_empty()
}

/// What the legend will list: classes and layers present, shown and (roughly) visible.
fn plan_legend(scene: &Scene, opts: &FigureOptions, f: &Frame) -> Legend {
    let mut legend = Legend::default();
    if !opts.show_legend {
        return legend;
    }
    let mut classes: BTreeMap<(Mark, String), ()> = BTreeMap::new();
    for eq in &scene.equilibria {
        if equilibrium_visible(eq.x, eq.y, f, 0.0) {
            classes.insert(style::mark_of(eq), ());
        }
    }
    legend.equilibria = classes
        .into_keys()
        .map(|(mark, label)| Entry {
            swatch: Swatch::Mark(mark),
            label,
        })
        .collect();

    let c = &mut legend.curves;
    if opts.show_orbits && any_visible(scene.orbits.iter().map(|o| (o.points.as_slice(), false)), f)
    {
        c.push(Entry {
            swatch: Swatch::Orbit(style::ORBIT_PALETTE[0]),
            label: "orbit (square: start)".into(),
        });
    }
    for (stab, label, dash) in [
        (CycleStability::Attracting, "attracting limit cycle", None),
        (
            CycleStability::Repelling,
            "repelling limit cycle",
            Some((7.0, 4.0)),
        ),
    ] {
        let lines = scene
            .limit_cycles
            .iter()
            .filter(|l| l.stability == stab)
            .map(|l| (l.line.points.as_slice(), true));
        if opts.show_orbits && any_visible(lines, f) {
            c.push(Entry {
                swatch: Swatch::Line {
                    stroke: style::CYCLE,
                    width: 2.6,
                    dash,
                    round: false,
                },
                label: label.into(),
            });
        }
    }
    for (kind, label) in [
        (ManifoldKind::Stable, "separatrix into a saddle"),
        (ManifoldKind::Unstable, "separatrix out of a saddle"),
    ] {
        let lines = scene
            .separatrices
            .iter()
            .filter(|sep| sep.kind == kind)
            .map(|sep| (sep.line.points.as_slice(), sep.line.closed));
        if opts.show_separatrices && any_visible(lines, f) {
            let (width, dash, round) = separatrix_style(kind);
            c.push(Entry {
                swatch: Swatch::Line {
                    stroke: style::SEPARATRIX,
                    width,
                    dash,
                    round,
                },
                label: label.into(),
            });
        }
    }
    if opts.show_nullclines {
        for (v, name) in axis_names(scene).iter().enumerate() {
            let lines = scene
                .nullclines
                .iter()
                .filter(|n| n.variable == v)
                .flat_map(|n| n.lines.iter().map(|l| (l.points.as_slice(), l.closed)));
            if any_visible(lines, f) {
                c.push(Entry {
                    swatch: Swatch::Line {
                        stroke: style::NULLCLINE[v],
                        width: 1.8,
                        dash: nullcline_dash(v),
                        round: false,
                    },
                    label: format!("d{}/dt = 0", rate_operand(name)),
                });
            }
        }
    }
    if use_streamlines(scene, opts) {
        if any_visible(
            scene
                .streamlines
                .iter()
                .map(|l| (l.points.as_slice(), l.closed)),
            f,
        ) {
            c.push(Entry {
                swatch: Swatch::Line {
                    stroke: style::FIELD,
                    width: 0.9,
                    dash: None,
                    round: false,
                },
                label: "streamlines (flow direction)".into(),
            });
        }
    } else if opts.show_field
        && scene
            .field
            .as_ref()
            .is_some_and(|fd| field_has_arrows(fd, f))
    {
        c.push(Entry {
            swatch: Swatch::Arrow,
            label: "flow direction (darker: faster)".into(),
        });
    }
    if opts.show_contours
        && any_visible(
            scene
                .contours
                .iter()
                .flat_map(|k| k.lines.iter().map(|l| (l.points.as_slice(), l.closed))),
            f,
        )
    {
        c.push(Entry {
            swatch: Swatch::Line {
                stroke: style::CONTOUR,
                width: 1.0,
                dash: None,
                round: false,
            },
            label: "level curves of the conserved quantity".into(),
        });
    }
    legend
}

/// A variable name as it stands after "d" in "dx/dt": bare when short and plain, else in
/// parentheses ("d(cod & co)/dt").
fn rate_operand(name: &str) -> String {
    let plain = name.chars().count() <= 4 && name.chars().all(|c| c.is_alphanumeric() || c == '_');
    if plain {
        name.to_owned()
    } else {
        format!("({name})")
    }
}

fn nullcline_dash(v: usize) -> Option<(f64, f64)> {
    (v == 1).then_some((style::NULLCLINE_DASH, 4.0))
}

fn separatrix_style(kind: ManifoldKind) -> (f64, Option<(f64, f64)>, bool) {
    match kind {
        ManifoldKind::Stable => (1.7, Some((0.01, 3.6)), true),
        ManifoldKind::Unstable => (1.3, None, false),
    }
}

fn field_has_arrows(field: &DirectionField, f: &Frame) -> bool {
    field.samples.iter().any(|q| {
        f.screen_direction(q.rate).is_some()
            && f.screen_from_plot(q.at).is_some_and(|c| f.plot.contains(c))
    })
}

fn dash_attr(dash: Option<(f64, f64)>, s: f64, round: bool) -> String {
    let mut a = dasharray(dash, s);
    if round {
        a.push_str(" stroke-linecap=\"round\"");
    }
    a
}

/// The clipped layers, bottom to top.
fn body(
    doc: &mut Doc,
    scene: &Scene,
    opts: &FigureOptions,
    f: &Frame,
    clip: &Rect,
    s: f64,
    drawn: &mut RenderedLayers,
) {
    if opts.show_contours {
        let runs: Vec<Vec<Px>> = scene
            .contours
            .iter()
            .flat_map(|k| k.lines.iter())
            .flat_map(|l| screen_runs(&l.points, l.closed, f, clip))
            .collect();
        drawn.contours = doc.path("contours", &runs, &stroke_attrs(style::CONTOUR, s, ""));
    }

    if use_streamlines(scene, opts) {
        let mut all = Vec::new();
        let mut heads = String::new();
        for l in &scene.streamlines {
            let runs = screen_runs(&l.points, l.closed, f, clip);
            if crate::geometry::runs_length(&runs) > 40.0 * s
                && let Some(a) = mid_arrow(&runs, 0.5, false, 6.5 * s)
            {
                heads.push_str(&a);
            }
            all.extend(runs);
        }
        drawn.streamlines = doc.path(
            "streamlines",
            &all,
            &stroke_attrs(style::FIELD, 0.9 * s, " stroke-opacity=\"0.8\""),
        );
        if !heads.is_empty() {
            let _ = write!(
                doc.out,
                "<path class=\"streamline-arrows\" d=\"{heads}\" fill=\"{}\"/>",
                style::FIELD
            );
        }
    } else if opts.show_field
        && let Some(field) = &scene.field
    {
        drawn.field = field_arrows(doc, field, f, s);
    }

    if opts.show_nullclines {
        for v in 0..2 {
            let runs: Vec<Vec<Px>> = scene
                .nullclines
                .iter()
                .filter(|n| n.variable == v)
                .flat_map(|n| n.lines.iter())
                .flat_map(|l| screen_runs(&l.points, l.closed, f, clip))
                .collect();
            let attrs = stroke_attrs(
                style::NULLCLINE[v],
                1.8 * s,
                &dash_attr(nullcline_dash(v), s, false),
            );
            drawn.nullclines += usize::from(doc.path("nullcline", &runs, &attrs));
        }
    }

    if opts.show_separatrices {
        let mut heads = String::new();
        for kind in [ManifoldKind::Stable, ManifoldKind::Unstable] {
            let (width, dash, round) = separatrix_style(kind);
            let mut all = Vec::new();
            for sep in scene.separatrices.iter().filter(|sep| sep.kind == kind) {
                let runs = screen_runs(&sep.line.points, sep.line.closed, f, clip);
                if crate::geometry::runs_length(&runs) > 50.0 * s
                    && let Some(a) = mid_arrow(&runs, 0.4, kind == ManifoldKind::Stable, 8.0 * s)
                {
                    heads.push_str(&a);
                }
                all.extend(runs);
            }
            let attrs = stroke_attrs(style::SEPARATRIX, width * s, &dash_attr(dash, s, round));
            drawn.separatrices += usize::from(doc.path("separatrix", &all, &attrs));
        }
        if !heads.is_empty() {
            let _ = write!(
                doc.out,
                "<path class=\"separatrix-arrows\" d=\"{heads}\" fill=\"{}\"/>",
                style::SEPARATRIX
            );
        }
    }

    if opts.show_orbits {
        for cycle in &scene.limit_cycles {
            let runs = screen_runs(&cycle.line.points, true, f, clip);
            let dash = match cycle.stability {
                CycleStability::Attracting => None,
                CycleStability::Repelling => Some((7.0, 4.0)),
            };
            let attrs = stroke_attrs(style::CYCLE, 2.6 * s, &dash_attr(dash, s, false));
            if doc.path("limit-cycle", &runs, &attrs) {
                drawn.limit_cycles += 1;
                if let Some(a) = mid_arrow(&runs, 0.25, false, 11.0 * s) {
                    let _ = write!(doc.out, "<path d=\"{a}\" fill=\"{}\"/>", style::CYCLE);
                }
            }
        }
        let mut colour_index = 0;
        for orbit in &scene.orbits {
            let runs = screen_runs(&orbit.points, false, f, clip);
            let colour = style::ORBIT_PALETTE[colour_index % style::ORBIT_PALETTE.len()];
            let attrs = stroke_attrs(colour, 1.6 * s, " stroke-linecap=\"round\"");
            if !doc.path("orbit", &runs, &attrs) {
                continue;
            }
            colour_index += 1;
            drawn.orbits += 1;
            let backward = runs_backward(&orbit.times);
            if let Some(a) = mid_arrow(&runs, 0.5, backward, 10.0 * s) {
                let _ = write!(
                    doc.out,
                    "<path class=\"orbit-arrow\" d=\"{a}\" fill=\"{colour}\"/>"
                );
            }
            let start = if orbit.seed.iter().all(|v| v.is_finite()) {
                Some(orbit.seed)
            } else {
                orbit.points.first().copied()
            };
            if let Some(q) = start.and_then(|p| f.screen_from_plot(p))
                && f.plot.contains(q)
            {
                let h = 3.4 * s;
                let _ = write!(
                    doc.out,
                    "<rect class=\"orbit-start\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{colour}\" stroke=\"#ffffff\" stroke-width=\"{}\"/>",
                    num(q[0] - h),
                    num(q[1] - h),
                    num(2.0 * h),
                    num(2.0 * h),
                    num(0.9 * s)
                );
            }
        }
    }
}

/// Whether an orbit's time runs backward along its points.
fn runs_backward(times: &[f64]) -> bool {
    let first = times.iter().find(|t| t.is_finite());
    let last = times.iter().rev().find(|t| t.is_finite());
    matches!((first, last), (Some(a), Some(b)) if b < a)
}

/// Direction-field arrows: uniform length, opacity by speed, one path per opacity band.
fn field_arrows(doc: &mut Doc, field: &DirectionField, f: &Frame, s: f64) -> bool {
    const BANDS: usize = 6;
    let p = &f.plot;
    let (nx, ny) = (field.nx.max(1), field.ny.max(1));
    let gridded = field.samples.len() == nx * ny;
    let (cell_w, cell_h) = if gridded {
        (p.width / nx as f64, p.height / ny as f64)
    } else {
        let a = (p.width * p.height / field.samples.len().max(1) as f64).sqrt();
        (a, a)
    };
    // NOTE: a very fine grid would draw a grey smear; keep arrows at least this far apart.
    let min_cell = 16.0 * s;
    let sx = (min_cell / cell_w).ceil().max(1.0) as usize;
    let sy = (min_cell / cell_h).ceil().max(1.0) as usize;
    let len = (0.7 * (cell_w * sx as f64).min(cell_h * sy as f64)).clamp(4.0 * s, 22.0 * s);
    let head = (len * 0.34).clamp(2.5 * s, 6.0 * s);
    let max_speed = if field.max_speed.is_finite() && field.max_speed > 0.0 {
        field.max_speed
    } else {
        field
            .samples
            .iter()
            .map(|q| q.speed)
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max)
    };
    let mut bands = vec![String::new(); BANDS];
    let (cos, sin) = (0.87_f64, 0.5_f64);
    for (k, sample) in field.samples.iter().enumerate() {
        if gridded && ((k % nx) % sx != 0 || (k / nx) % sy != 0) {
            continue;
        }
        let Some(c) = f.screen_from_plot(sample.at) else {
            continue;
        };
        if !p.contains(c) {
            continue;
        }
        let Some(d) = f.screen_direction(sample.rate) else {
            continue;
        };
        let speed = if sample.speed.is_finite() {
            sample.speed
        } else {
            sample.rate[0].hypot(sample.rate[1])
        };
        let t = if max_speed > 0.0 && speed.is_finite() {
            (speed / max_speed).clamp(0.0, 1.0).sqrt()
        } else {
            1.0
        };
        let band = ((t * BANDS as f64) as usize).min(BANDS - 1);
        let tail = [c[0] - d[0] * len * 0.5, c[1] - d[1] * len * 0.5];
        let tip = [c[0] + d[0] * len * 0.5, c[1] + d[1] * len * 0.5];
        // The two barbs: the reversed direction turned by ±30°.
        let b1 = [
            tip[0] - head * (d[0] * cos - d[1] * sin),
            tip[1] - head * (d[1] * cos + d[0] * sin),
        ];
        let b2 = [
            tip[0] - head * (d[0] * cos + d[1] * sin),
            tip[1] - head * (d[1] * cos - d[0] * sin),
        ];
        let out = &mut bands[band];
        let _ = write!(
            out,
            "M{} {}L{} {}M{} {}L{} {} {} {}",
            num(tail[0]),
            num(tail[1]),
            num(tip[0]),
            num(tip[1]),
            num(b1[0]),
            num(b1[1]),
            num(tip[0]),
            num(tip[1]),
            num(b2[0]),
            num(b2[1])
        );
    }
    let mut any = false;
    doc.push("<g class=\"field\">");
    for (i, d) in bands.iter().enumerate() {
        if d.is_empty() {
            continue;
        }
        any = true;
        let opacity = 0.2 + 0.62 * (i as f64 + 0.5) / BANDS as f64;
        let _ = write!(
            doc.out,
            "<path d=\"{d}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{}\" stroke-opacity=\"{}\" stroke-linecap=\"round\" stroke-linejoin=\"round\"/>",
            style::FIELD,
            num(1.05 * s),
            num(opacity)
        );
    }
    doc.push("</g>");
    any
}

fn equilibrium_visible(x: f64, y: f64, f: &Frame, slack_px: f64) -> bool {
    f.screen_from_plot([x, y])
        .is_some_and(|q| f.plot.grown(slack_px + 0.01).contains(q))
}

/// Equilibrium marks, on top of everything in the plot.
fn equilibria(doc: &mut Doc, scene: &Scene, f: &Frame, s: f64, drawn: &mut RenderedLayers) {
    let r = 5.5 * s;
    doc.push("<g class=\"equilibria\">");
    for eq in &scene.equilibria {
        if !equilibrium_visible(eq.x, eq.y, f, 0.0) {
            continue;
        }
        let Some(c) = f.screen_from_plot([eq.x, eq.y]) else {
            continue;
        };
        let (mark, _) = style::mark_of(eq);
        doc.push(&style::mark_svg(mark, c, r));
        drawn.equilibria += 1;
    }
    doc.push("</g>");
}
