//! The legend: only what the figure actually shows, in two groups (equilibria by class, then
//! curves), each entry a small sample drawn exactly as in the plot.

use std::fmt::Write as _;

use crate::geometry::Px;
use crate::style::{self, Mark};
use crate::svg::{dasharray, escape, num};
use crate::text::{fit_attrs, fit_length, spaced_width, text_width};

/// What an entry's sample looks like.
#[derive(Clone, Debug, PartialEq)]
pub enum Swatch {
    /// A line segment.
    Line {
        /// Colour.
        stroke: &'static str,
        /// Width at figure scale 1 (px).
        width: f64,
        /// Dash pattern at figure scale 1, if any.
        dash: Option<(f64, f64)>,
        /// Round caps (gives dots with a near-zero dash).
        round: bool,
    },
    /// An equilibrium mark.
    Mark(Mark),
    /// An orbit: start square, line, arrowhead.
    Orbit(&'static str),
    /// A field arrow.
    Arrow,
}

/// One legend entry.
#[derive(Clone, Debug, PartialEq)]
pub struct Entry {
    /// The sample.
    pub swatch: Swatch,
    /// The words.
    pub label: String,
}

/// The legend's content.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Legend {
    /// Equilibrium classes present.
    pub equilibria: Vec<Entry>,
    /// Curve layers present.
    pub curves: Vec<Entry>,
}

/// Sizes of a legend at one figure scale.
#[derive(Clone, Copy, Debug)]
pub struct Metrics {
    /// Figure scale.
    pub s: f64,
    /// Entry text size (px).
    pub font: f64,
    /// Group heading size (px).
    pub heading: f64,
    /// Row pitch (px).
    pub row: f64,
    /// Sample width (px).
    pub swatch: f64,
    /// Gap between sample and text (px).
    pub gap: f64,
}

impl Metrics {
    /// Metrics at figure scale `s`.
    pub fn new(s: f64) -> Self {
        Self {
            s,
            font: 12.0 * s,
            heading: 10.5 * s,
            row: 19.0 * s,
            swatch: 30.0 * s,
            gap: 8.0 * s,
        }
    }
}

const HEADINGS: [&str; 2] = ["EQUILIBRIA", "CURVES"];

impl Legend {
    /// Whether there is nothing to list.
    pub fn is_empty(&self) -> bool {
        self.equilibria.is_empty() && self.curves.is_empty()
    }

    fn groups(&self) -> impl Iterator<Item = (&'static str, &[Entry])> {
        HEADINGS
            .into_iter()
            .zip([self.equilibria.as_slice(), self.curves.as_slice()])
            .filter(|(_, g)| !g.is_empty())
    }

    /// Width and height (px) of the legend's content.
    pub fn size(&self, m: &Metrics) -> (f64, f64) {
        let mut w: f64 = 0.0;
        let mut h = 0.0;
        for (i, (head, entries)) in self.groups().enumerate() {
            if i > 0 {
                h += 0.6 * m.row;
            }
            w = w.max(heading_width(head, m.heading));
            h += m.row;
            for e in entries {
                w = w.max(m.swatch + m.gap + text_width(&e.label, m.font));
                h += m.row;
            }
        }
        (w, h)
    }

    /// SVG for the legend with its top-left corner at (`x`, `y`); with `boxed`, on a white
    /// panel with a thin border (for a legend placed over the plot).
    pub fn svg(&self, x: f64, y: f64, m: &Metrics, boxed: bool) -> String {
        let mut out = String::new();
        let (w, h) = self.size(m);
        if boxed {
            panel(&mut out, [x, y], (w, h), m.s, 0.9);
        }
        out.push_str("<g class=\"legend\">");
        let mut cy = y;
        for (i, (head, entries)) in self.groups().enumerate() {
            if i > 0 {
                cy += 0.6 * m.row;
            }
            heading_text(&mut out, x, cy + 0.72 * m.row, m.heading, head);
            cy += m.row;
            for e in entries {
                let mid = cy + 0.5 * m.row;
                out.push_str(&swatch_svg(&e.swatch, x, mid, m));
                entry_text(&mut out, x + m.swatch + m.gap, mid, m.font, &e.label);
                cy += m.row;
            }
        }
        out.push_str("</g>");
        out
    }
}

/// The white panel (a little larger than `size`, corner at `at`) behind a legend that sits
/// over the plot.
pub fn panel(out: &mut String, at: Px, size: (f64, f64), s: f64, opacity: f64) {
    let p = 7.0 * s;
    let _ = write!(
        out,
        "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" rx=\"{}\" fill=\"#ffffff\" fill-opacity=\"{}\" stroke=\"#d4d4d4\" stroke-width=\"{}\"/>",
        num(at[0] - p),
        num(at[1] - p),
        num(size.0 + 2.0 * p),
        num(size.1 + 2.0 * p),
        num(3.0 * s),
        num(opacity),
        num(0.8 * s)
    );
}

/// Letter spacing of a group heading, in em.
const HEADING_SPACING: f64 = 0.08;

/// Width (px) of a group heading at `size` px, letter spacing included.
pub fn heading_width(text: &str, size: f64) -> f64 {
    spaced_width(text, size, HEADING_SPACING * size)
}

/// A group heading (capitals, spaced out) with its baseline at `y`.
pub fn heading_text(out: &mut String, x: f64, y: f64, size: f64, text: &str) {
    let _ = write!(
        out,
        "<text class=\"legend-heading\" x=\"{}\" y=\"{}\" font-size=\"{}\" letter-spacing=\"{}\" fill=\"{}\"{}>{}</text>",
        num(x),
        num(y),
        num(size),
        num(HEADING_SPACING * size),
        style::INK_SOFT,
        fit_length(heading_width(text, size)),
        escape(text)
    );
}

/// An entry's words starting at `x`, centred on the row whose middle is `mid`.
pub fn entry_text(out: &mut String, x: f64, mid: f64, size: f64, label: &str) {
    let _ = write!(
        out,
        "<text class=\"legend-entry\" x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\"{}>{}</text>",
        num(x),
        num(mid + 0.36 * size),
        num(size),
        style::INK,
        fit_attrs(label, size),
        escape(label)
    );
}

fn swatch_svg(sw: &Swatch, x: f64, mid: f64, m: &Metrics) -> String {
    let s = m.s;
    let (x0, x1) = (x + 1.0 * s, x + m.swatch - 1.0 * s);
    match sw {
        Swatch::Line {
            stroke,
            width,
            dash,
            round,
        } => {
            let dash = dasharray(*dash, s);
            let cap = if *round {
                " stroke-linecap=\"round\""
            } else {
                ""
            };
            format!(
                "<path d=\"M{} {}H{}\" stroke=\"{stroke}\" stroke-width=\"{}\" fill=\"none\"{dash}{cap}/>",
                num(x0),
                num(mid),
                num(x1),
                num(width * s)
            )
        }
        Swatch::Mark(mark) => style::mark_svg(*mark, [x + 0.5 * m.swatch, mid], 5.0 * s),
        Swatch::Orbit(colour) => {
            let q = 3.0 * s;
            format!(
                "<path d=\"M{} {}H{}\" stroke=\"{colour}\" stroke-width=\"{}\" fill=\"none\"/><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{colour}\" stroke=\"#ffffff\" stroke-width=\"{}\"/><path d=\"{}\" fill=\"{colour}\"/>",
                num(x0),
                num(mid),
                num(x1 - 4.0 * s),
                num(1.6 * s),
                num(x0 - q + 2.0 * s),
                num(mid - q),
                num(2.0 * q),
                num(2.0 * q),
                num(0.8 * s),
                style::arrowhead_data([x1, mid], [1.0, 0.0], 9.0 * s)
            )
        }
        Swatch::Arrow => {
            let tip = [x1 - 4.0 * s, mid];
            let h = 5.0 * s;
            format!(
                "<path d=\"M{} {}H{}M{} {}L{} {}L{} {}\" stroke=\"{}\" stroke-width=\"{}\" fill=\"none\" stroke-linecap=\"round\" stroke-linejoin=\"round\"/>",
                num(x0 + 5.0 * s),
                num(mid),
                num(tip[0]),
                num(tip[0] - h),
                num(mid - 0.55 * h),
                num(tip[0]),
                num(mid),
                num(tip[0] - h),
                num(mid + 0.55 * h),
                style::FIELD,
                num(1.1 * s)
            )
        }
    }
}
