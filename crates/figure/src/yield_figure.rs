//! The sustained-yield figure: equilibrium catch against effort or quota, with the MSY and the
//! collapse point marked, and with price and cost the open-access point and the MEY. With
//! economics a right-hand axis reads revenue (price × catch), so the catch curve doubles as the
//! revenue curve; the cost line and, optionally, the profit are drawn against it. Value ranges
//! without a stable equilibrium are shaded, and the caution is always printed underneath.

use quarry_core::harvest::CAUTION;
use quarry_core::sustained::{PointStatus, YieldCurve, YieldRule};

use crate::chart::{
    Axis, COST, CURVE, Chart, ChartSpec, Marker, NO_STABLE_FILL, PROFIT, Swatch, padded,
};
use crate::text::short_number;
use crate::{FigureError, raster};

/// How the yield figure is drawn.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct YieldFigure {
    /// Width in px. Default 900.
    pub width: u32,
    /// Height in px. Default 650.
    pub height: u32,
    /// Title; `None` for "Sustained yield of SPECIES", empty for none.
    pub title: Option<String>,
    /// The profit curve (with economics). Default on.
    pub show_profit: bool,
    /// The legend. Default on.
    pub show_legend: bool,
    /// More small print, put before the caution (which is always printed).
    pub caption: Option<String>,
}

impl Default for YieldFigure {
    fn default() -> Self {
        Self {
            width: 900,
            height: 650,
            title: None,
            show_profit: true,
            show_legend: true,
            caption: None,
        }
    }
}

const CATCH: Swatch = Swatch::Line(CURVE, 2.4, None);
const COST_LINE: Swatch = Swatch::Line(COST, 1.6, Some((7.0, 5.0)));
const PROFIT_LINE: Swatch = Swatch::Line(PROFIT, 1.8, Some((0.1, 4.5)));

/// The yield figure as a standalone SVG document.
pub fn render_yield_svg(curve: &YieldCurve, opts: &YieldFigure) -> String {
    let effort = matches!(curve.rule, YieldRule::Effort { .. });
    let what = if effort { "effort" } else { "quota" };
    let price = curve.economics.map_or(0.0, |e| e.price);
    let cost = curve.economics.map_or(0.0, |e| e.cost_per_effort);
    let money = effort && price > 0.0;

    let (mut xlo, mut xhi) = (f64::INFINITY, f64::NEG_INFINITY);
    for p in &curve.points {
        xlo = xlo.min(p.value);
        xhi = xhi.max(p.value);
    }
    let (xlo, xhi) = if xlo.is_finite() {
        (xlo, xhi)
    } else {
        (0.0, 1.0)
    };
    let top = curve
        .points
        .iter()
        .filter_map(|p| p.catch)
        .chain(curve.msy.map(|m| m.catch))
        .filter(|c| c.is_finite())
        .fold(0.0_f64, f64::max);
    let top = if top > 0.0 { top } else { 1.0 };
    // Profit in catch units (profit / price) reaches below zero; show a little of it.
    let low = if money && opts.show_profit {
        curve
            .points
            .iter()
            .filter_map(|p| p.profit)
            .map(|v| v / price)
            .filter(|v| v.is_finite())
            .fold(0.0_f64, f64::min)
            .max(-0.5 * top)
    } else {
        0.0
    };
    let (ylo, yhi) = padded(low, top, 0.06);
    let (xlo, xhi) = padded(xlo, xhi, 0.0);

    // Curve pieces, with the exact MSY and fold points put in their places.
    let mut pieces: Vec<Vec<[f64; 2]>> = Vec::new();
    let mut last_piece = None;
    for p in &curve.points {
        let Some(c) = p.catch else {
            last_piece = None;
            continue;
        };
        if last_piece != Some(p.piece) {
            pieces.push(Vec::new());
            last_piece = Some(p.piece);
        }
        if let Some(run) = pieces.last_mut() {
            run.push([p.value, c]);
        }
    }
    let mut extra: Vec<[f64; 2]> = Vec::new();
    if let Some(m) = curve.msy {
        extra.push([m.value, m.catch]);
    }
    if let Some(c) = curve.collapse {
        extra.push([c.value, c.catch]);
    }
    for q in extra {
        // Into the piece that ends just before it or spans it.
        let Some(run) = pieces.iter_mut().find(|r| {
            r.first().is_some_and(|a| a[0] <= q[0])
                && r.last().is_some_and(|b| {
                    b[0] >= q[0] || (q[0] - b[0]) <= (xhi - xlo) / curve.points.len().max(1) as f64
                })
        }) else {
            continue;
        };
        let at = run.partition_point(|a| a[0] < q[0]);
        if run.get(at).is_none_or(|a| a[0] != q[0]) {
            run.insert(at, q);
        }
    }

    // Shaded ranges where nothing stable holds.
    let half = if curve.points.len() > 1 {
        0.5 * (xhi - xlo) / (curve.points.len() - 1) as f64
    } else {
        0.0
    };
    let mut bands: Vec<(f64, f64)> = Vec::new();
    for p in &curve.points {
        if matches!(
            p.status,
            PointStatus::NoStableEquilibrium | PointStatus::NoEquilibrium
        ) {
            let (a, b) = (p.value - half, p.value + half);
            match bands.last_mut() {
                Some(last) if a <= last.1 + 1e-12 * (xhi - xlo) => last.1 = b,
                _ => bands.push((a, b)),
            }
        }
    }

    let mut legend = Vec::new();
    if opts.show_legend {
        legend.push((
            CATCH,
            if money {
                "equilibrium catch (= revenue ÷ price)".to_owned()
            } else {
                "equilibrium catch".to_owned()
            },
        ));
        if money {
            legend.push((COST_LINE, "cost of effort ÷ price".to_owned()));
            if opts.show_profit {
                legend.push((PROFIT_LINE, "profit ÷ price".to_owned()));
            }
        }
        if !bands.is_empty() {
            legend.push((
                Swatch::Fill(NO_STABLE_FILL),
                "no stable equilibrium".to_owned(),
            ));
        }
        if curve.msy.is_some() {
            legend.push((
                Swatch::Marker(Marker::Msy),
                "maximum sustainable yield".to_owned(),
            ));
        }
        if curve.collapse.is_some() {
            legend.push((Swatch::Marker(Marker::Collapse), "collapse".to_owned()));
        }
        if curve.open_access.is_some() {
            legend.push((Swatch::Marker(Marker::OpenAccess), "open access".to_owned()));
        }
        if curve.mey.is_some() {
            legend.push((
                Swatch::Marker(Marker::Mey),
                "maximum economic yield".to_owned(),
            ));
        }
    }
    let caption = match &opts.caption {
        Some(c) if !c.trim().is_empty() => format!("{} {CAUTION}", c.trim()),
        _ => CAUTION.to_owned(),
    };
    let avoid: Vec<[f64; 2]> = pieces.iter().flatten().copied().collect();
    let spec = ChartSpec {
        width: opts.width,
        height: opts.height,
        title: Some(
            opts.title
                .clone()
                .unwrap_or_else(|| format!("Sustained yield of {} against {what}", curve.species)),
        ),
        caption: Some(caption),
        x: Axis {
            lo: xlo,
            hi: xhi,
            label: format!("{what} ({})", curve.param),
        },
        y: Axis {
            lo: ylo,
            hi: yhi,
            label: format!("equilibrium catch of {} per unit time", curve.species),
        },
        right: money.then(|| (price, "revenue, cost, profit (price × catch)".to_owned())),
        legend,
        avoid,
    };
    let chart = Chart::new(&spec);
    let mut out = String::with_capacity(32 * 1024);
    chart.open(&mut out);
    for (a, b) in &bands {
        chart.band(&mut out, *a, *b);
    }
    if money {
        chart.line(
            &mut out,
            "cost",
            &[[xlo, cost * xlo / price], [xhi, cost * xhi / price]],
            &COST_LINE,
        );
        if opts.show_profit {
            for run in &pieces {
                let pts: Vec<[f64; 2]> = run
                    .iter()
                    .map(|q| [q[0], q[1] - cost * q[0] / price])
                    .collect();
                chart.line(&mut out, "profit", &pts, &PROFIT_LINE);
            }
        }
    }
    for run in &pieces {
        chart.line(&mut out, "catch", run, &CATCH);
    }
    let mut overlay = String::new();
    if let Some(c) = curve.collapse {
        let label = format!("collapse, {what} {}", short_number(c.value));
        chart.marker(
            &mut overlay,
            Marker::Collapse,
            [c.value, c.catch],
            &label,
            true,
        );
    }
    if let Some(o) = curve.open_access {
        let label = format!("open access, effort {}", short_number(o.value));
        chart.marker(
            &mut overlay,
            Marker::OpenAccess,
            [o.value, o.catch],
            &label,
            true,
        );
    }
    if let Some(m) = curve.mey {
        let label = format!("MEY, effort {}", short_number(m.value));
        chart.marker(&mut overlay, Marker::Mey, [m.value, m.catch], &label, true);
    }
    if let Some(m) = curve.msy {
        let label = format!(
            "MSY {} at {what} {}",
            short_number(m.catch),
            short_number(m.value)
        );
        chart.marker(&mut overlay, Marker::Msy, [m.value, m.catch], &label, false);
    }
    chart.close(&mut out, &spec, &overlay);
    out
}

/// The yield figure as a `width`×`height` PNG.
pub fn render_yield_png(curve: &YieldCurve, opts: &YieldFigure) -> Result<Vec<u8>, FigureError> {
    raster::figure_png(opts.width, opts.height, || render_yield_svg(curve, opts))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tests::{assert_text_is_fitted, doc_texts, inked_in_middle};
    use quarry_core::harvest::{Economics, Harvest};
    use quarry_core::library;
    use quarry_core::sustained::{YieldOptions, sustained_yield};

    fn schaefer_curve(economics: Option<Economics>) -> YieldCurve {
        let mut spec = library::builtin("schaefer").expect("built in").spec();
        for p in &mut spec.parameters {
            if p.name == "E" {
                p.value = 0.0;
            }
        }
        let opts = YieldOptions {
            economics,
            ..YieldOptions::new(0, YieldRule::Effort { catchability: 0.01 }, 0.0, 70.0, 36)
        };
        sustained_yield(&spec, &Harvest::default(), &opts, &|| false, &|_| {}).expect("curve")
    }

    fn texts(svg: &str) -> Vec<String> {
        doc_texts(&roxmltree::Document::parse(svg).expect("well-formed SVG"))
    }

    #[test]
    fn the_yield_figure_marks_msy_and_collapse_and_carries_the_caution() {
        let c = schaefer_curve(None);
        let svg = render_yield_svg(&c, &YieldFigure::default());
        let t = texts(&svg);
        // Schaefer 1954: MSY rK/4 = 12.5 at E = r/(2q) = 25, collapse at r/q = 50.
        assert!(t.iter().any(|s| s == "MSY 12.5 at effort 25"), "{t:?}");
        assert!(t.iter().any(|s| s == "collapse, effort 50"), "{t:?}");
        assert!(!t.iter().any(|s| s.contains("open access")));
        let caption: String = t
            .iter()
            .filter(|s| !s.is_empty())
            .cloned()
            .collect::<Vec<_>>()
            .join(" ");
        assert!(caption.contains("not a stock assessment"), "{caption}");
    }

    #[test]
    fn with_economics_the_figure_adds_cost_profit_open_access_and_mey() {
        let c = schaefer_curve(Some(Economics {
            price: 2.0,
            cost_per_effort: 0.8,
        }));
        let svg = render_yield_svg(&c, &YieldFigure::default());
        let t = texts(&svg);
        // Gordon 1954: open access at E = (r/q)(1 − c/(pqK)) = 30; MEY at half of it.
        assert!(t.iter().any(|s| s == "open access, effort 30"), "{t:?}");
        assert!(t.iter().any(|s| s == "MEY, effort 15"), "{t:?}");
        assert!(svg.contains("class=\"cost\"") && svg.contains("class=\"profit\""));
        let without = render_yield_svg(
            &c,
            &YieldFigure {
                show_profit: false,
                ..YieldFigure::default()
            },
        );
        assert!(!without.contains("class=\"profit\""));
        // Three axis names, title, legend, marker labels and caution keep their length.
        assert!(assert_text_is_fitted(&svg) >= 12);
    }

    #[test]
    fn marker_labels_next_to_each_other_do_not_overlap() {
        // A cost far below p·q·K puts open access (E = 49.8) beside collapse (E = 50), and
        // MEY (E = 24.9) beside MSY (E = 25) (Gordon 1954, Schaefer 1954).
        let c = schaefer_curve(Some(Economics {
            price: 2.0,
            cost_per_effort: 0.008,
        }));
        let svg = render_yield_svg(&c, &YieldFigure::default());
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        let attr = |n: &roxmltree::Node, a: &str| -> f64 {
            n.attribute(a).and_then(|v| v.parse().ok()).expect(a)
        };
        let boxes: Vec<(String, [f64; 4])> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("marker-label"))
            .map(|n| {
                let (x, y, w, fs) = (
                    attr(&n, "x"),
                    attr(&n, "y"),
                    attr(&n, "textLength"),
                    attr(&n, "font-size"),
                );
                let left = if n.attribute("text-anchor") == Some("end") {
                    x - w
                } else {
                    x
                };
                let text = n.text().unwrap_or_default().to_owned();
                (text, [left, y - 0.8 * fs, left + w, y + 0.2 * fs])
            })
            .collect();
        assert_eq!(boxes.len(), 4, "{boxes:?}");
        for (i, (ta, a)) in boxes.iter().enumerate() {
            for (tb, b) in &boxes[i + 1..] {
                let apart = a[2] <= b[0] || b[2] <= a[0] || a[3] <= b[1] || b[3] <= a[1];
                assert!(apart, "'{ta}' {a:?} overlaps '{tb}' {b:?}");
            }
        }
    }

    #[test]
    fn the_yield_png_has_the_asked_size_and_ink_in_the_plot() {
        let c = schaefer_curve(None);
        let fig = YieldFigure {
            width: 500,
            height: 360,
            ..YieldFigure::default()
        };
        let png = render_yield_png(&c, &fig).expect("png");
        let (size, inked) = inked_in_middle(&png, 5);
        assert_eq!(size, (500, 360));
        assert!(inked > 200, "{inked} inked pixels");
    }
}
