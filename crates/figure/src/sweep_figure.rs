//! The branch diagram of a sweep: the swept parameter across, one variable up; equilibria
//! stable (solid) and unstable (dashed), the located bifurcations marked and named, and the
//! extremes of the limit cycles past each Hopf point as their own curves.

use quarry_core::linear::Stability;
use quarry_core::sweep::{BifurcationKind, Sweep};

use crate::chart::{Axis, CURVE, CYCLE_RANGE, Chart, ChartSpec, Marker, Swatch, padded};
use crate::style;
use crate::text::{name_or, short_number};
use crate::{FigureError, raster};

/// How the branch diagram is drawn.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SweepFigure {
    /// Width in px. Default 900.
    pub width: u32,
    /// Height in px. Default 650.
    pub height: u32,
    /// Title; `None` for "Equilibria along PARAM", empty for none.
    pub title: Option<String>,
    /// The variable drawn up the page: 0 or 1. Default 0.
    pub variable: usize,
    /// Names of the two variables (axis label). Default "x", "y".
    pub variable_names: [String; 2],
    /// Name of the parameter axis; `None` for the swept parameter's name.
    pub param_label: Option<String>,
    /// Small print under the plot.
    pub caption: Option<String>,
    /// The legend.
    pub show_legend: bool,
}

impl Default for SweepFigure {
    fn default() -> Self {
        Self {
            width: 900,
            height: 650,
            title: None,
            variable: 0,
            variable_names: ["x".into(), "y".into()],
            param_label: None,
            caption: None,
            show_legend: true,
        }
    }
}

const STABLE: Swatch = Swatch::Line(CURVE, 2.4, None);
const UNSTABLE: Swatch = Swatch::Line(CURVE, 1.6, Some((7.0, 5.0)));
const NEUTRAL: Swatch = Swatch::Line(style::INK_SOFT, 1.8, Some((1.5, 3.5)));

/// The line of a branch piece with this stability.
fn branch_style(s: Stability) -> &'static Swatch {
    match s {
        Stability::Stable => &STABLE,
        Stability::Unstable => &UNSTABLE,
        Stability::Neutral => &NEUTRAL,
    }
}
const CYCLE_ATTRACTING: Swatch = Swatch::Line(CYCLE_RANGE, 1.8, None);
const CYCLE_REPELLING: Swatch = Swatch::Line(CYCLE_RANGE, 1.8, Some((0.1, 4.5)));

fn kind_marker(k: BifurcationKind) -> (Marker, &'static str) {
    match k {
        BifurcationKind::Fold => (Marker::Fold, "fold"),
        BifurcationKind::Transcritical => (Marker::Transcritical, "transcritical"),
        BifurcationKind::Hopf => (Marker::Hopf, "Hopf"),
    }
}

/// The branch diagram as a standalone SVG document.
pub fn render_sweep_svg(sweep: &Sweep, opts: &SweepFigure) -> String {
    let v = opts.variable.min(1);
    let pick = |x: f64, y: f64| if v == 0 { x } else { y };
    // Ranges: the swept values across; branches and cycles up.
    let (mut xlo, mut xhi) = (f64::INFINITY, f64::NEG_INFINITY);
    for p in &sweep.points {
        xlo = xlo.min(p.value);
        xhi = xhi.max(p.value);
    }
    let (mut ylo, mut yhi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut avoid = Vec::new();
    for b in &sweep.branches {
        for p in &b.points {
            let y = pick(p.x, p.y);
            if y.is_finite() {
                ylo = ylo.min(y);
                yhi = yhi.max(y);
                avoid.push([p.value, y]);
            }
        }
    }
    for c in &sweep.cycles {
        for y in [c.min[v], c.max[v]] {
            if y.is_finite() {
                ylo = ylo.min(y);
                yhi = yhi.max(y);
                avoid.push([c.value, y]);
            }
        }
    }
    let (xlo, xhi) = if xlo.is_finite() {
        (xlo, xhi)
    } else {
        (0.0, 1.0)
    };
    let (xlo, xhi) = padded(xlo, xhi, 0.0);
    let (ylo, yhi) = if ylo.is_finite() {
        padded(ylo, yhi, 0.06)
    } else {
        (0.0, 1.0)
    };

    let present = |s: Stability| {
        sweep
            .branches
            .iter()
            .flat_map(|b| &b.points)
            .any(|p| p.linear.class.stability() == s)
    };
    let mut legend = Vec::new();
    if opts.show_legend {
        for (s, name) in [
            (Stability::Stable, "stable equilibria"),
            (Stability::Unstable, "unstable equilibria"),
            (
                Stability::Neutral,
                "linear centres (undecided by the linearisation)",
            ),
        ] {
            if present(s) {
                legend.push((branch_style(s).clone(), name.to_owned()));
            }
        }
        if sweep.cycles.iter().any(|c| c.stable) {
            legend.push((CYCLE_ATTRACTING, "attracting cycle, min and max".to_owned()));
        }
        if sweep.cycles.iter().any(|c| !c.stable) {
            legend.push((CYCLE_REPELLING, "repelling cycle, min and max".to_owned()));
        }
        for kind in [
            BifurcationKind::Fold,
            BifurcationKind::Transcritical,
            BifurcationKind::Hopf,
        ] {
            if sweep.bifurcations.iter().any(|b| b.kind == kind) {
                let (m, name) = kind_marker(kind);
                legend.push((Swatch::Marker(m), format!("{name} point")));
            }
        }
    }
    let var_name = name_or(&opts.variable_names[v], if v == 0 { "x" } else { "y" });
    let param_name = opts
        .param_label
        .clone()
        .unwrap_or_else(|| name_or(&sweep.param, "parameter"));
    let spec = ChartSpec {
        width: opts.width,
        height: opts.height,
        title: Some(
            opts.title
                .clone()
                .unwrap_or_else(|| format!("Equilibria of {var_name} along {param_name}")),
        ),
        caption: opts.caption.clone(),
        x: Axis {
            lo: xlo,
            hi: xhi,
            label: param_name,
        },
        y: Axis {
            lo: ylo,
            hi: yhi,
            label: var_name,
        },
        right: None,
        legend,
        avoid,
    };
    let chart = Chart::new(&spec);
    let mut out = String::with_capacity(32 * 1024);
    chart.open(&mut out);

    // Branches, split where stability changes (each piece shares its end point with the next).
    for b in &sweep.branches {
        let mut run: Vec<[f64; 2]> = Vec::new();
        let mut stable = None;
        for p in &b.points {
            let s = p.linear.class.stability();
            let q = [p.value, pick(p.x, p.y)];
            run.push(q);
            if let Some(t) = stable.filter(|t| *t != s) {
                chart.line(&mut out, "branch", &run, branch_style(t));
                run = vec![q];
            }
            stable = Some(s);
        }
        if let Some(t) = stable {
            chart.line(&mut out, "branch", &run, branch_style(t));
        }
    }

    // Cycle extremes, one pair of curves per Hopf point and stability, from the Hopf point.
    let mut groups: Vec<(f64, bool)> = Vec::new();
    for c in &sweep.cycles {
        if !groups.contains(&(c.hopf_value, c.stable)) {
            groups.push((c.hopf_value, c.stable));
        }
    }
    let mut dots = String::new();
    for (h, stable) in groups {
        let mut cs: Vec<_> = sweep
            .cycles
            .iter()
            .filter(|c| c.hopf_value == h && c.stable == stable)
            .collect();
        cs.sort_by(|a, b| (a.value - h).abs().total_cmp(&(b.value - h).abs()));
        let start = sweep
            .bifurcations
            .iter()
            .find(|b| b.kind == BifurcationKind::Hopf && b.value == h)
            .map(|b| [b.value, pick(b.x, b.y)]);
        let style = if stable {
            &CYCLE_ATTRACTING
        } else {
            &CYCLE_REPELLING
        };
        for side in [0, 1] {
            let mut pts: Vec<[f64; 2]> = start.into_iter().collect();
            pts.extend(
                cs.iter()
                    .map(|c| [c.value, if side == 0 { c.min[v] } else { c.max[v] }]),
            );
            chart.line(&mut out, "cycle-range", &pts, style);
            for p in pts.iter().skip(usize::from(start.is_some())) {
                if let Some(q) = chart.frame.screen_from_plot(*p)
                    && chart.frame.plot.contains(q)
                {
                    dots.push_str(&format!(
                        "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{CYCLE_RANGE}\"/>",
                        crate::svg::num(q[0]),
                        crate::svg::num(q[1]),
                        crate::svg::num(2.2 * chart.s)
                    ));
                }
            }
        }
    }
    out.push_str(&dots);

    let mut overlay = String::new();
    for b in &sweep.bifurcations {
        let (m, name) = kind_marker(b.kind);
        let label = format!("{name} {}", short_number(b.value));
        chart.marker(&mut overlay, m, [b.value, pick(b.x, b.y)], &label, false);
    }
    chart.close(&mut out, &spec, &overlay);
    out
}

/// The branch diagram as a `width`×`height` PNG.
pub fn render_sweep_png(sweep: &Sweep, opts: &SweepFigure) -> Result<Vec<u8>, FigureError> {
    raster::figure_png(opts.width, opts.height, || render_sweep_svg(sweep, opts))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tests::{assert_text_is_fitted, doc_texts, inked_in_middle};
    use quarry_core::library;
    use quarry_core::model::Model;
    use quarry_core::sweep::{SweepOptions, sweep};

    fn holling_sweep() -> Sweep {
        let m =
            Model::new(&library::builtin("holling-ii").expect("built in").spec()).expect("model");
        let opts = SweepOptions {
            cycle_samples: 4,
            ..SweepOptions::new("K", 1.0, 6.0, 51)
        };
        sweep(&m, &opts, &|| false, &|_| {}).expect("sweep")
    }

    #[test]
    fn the_branch_diagram_parses_and_shows_what_is_there() {
        let s = holling_sweep();
        let fig = SweepFigure {
            variable: 1,
            variable_names: ["prey".into(), "predator".into()],
            ..SweepFigure::default()
        };
        let svg = render_sweep_svg(&s, &fig);
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        let class = |c: &str| {
            doc.descendants()
                .filter(|n| n.attribute("class") == Some(c))
                .count()
        };
        assert!(class("branch") >= 3, "stable and unstable pieces");
        assert_eq!(class("cycle-range"), 2, "min and max of one cycle family");
        let texts = doc_texts(&doc);
        for want in ["predator", "K", "Hopf 3", "stable equilibria", "Hopf point"] {
            assert!(texts.iter().any(|t| t == want), "{want}: {texts:?}");
        }
        assert!(
            !texts.iter().any(|t| t.contains("fold")),
            "no fold in this sweep"
        );
        // Dashed pieces are the unstable ones.
        assert!(svg.contains("stroke-dasharray"));
        // Title, axis names, legend entries and the Hopf label keep their measured length.
        assert!(assert_text_is_fitted(&svg) >= 6);
    }

    #[test]
    fn a_family_of_linear_centres_is_drawn_as_such_without_hopf_points() {
        // Volterra's principle (common practice): Lotka–Volterra fished at E on both species
        // keeps a linear centre for every E < a; the branch is neither stable nor unstable.
        let mut spec = library::builtin("lotka-volterra").expect("built in").spec();
        spec.rates = [
            format!("({}) - E*x", spec.rates[0]),
            format!("({}) - E*y", spec.rates[1]),
        ];
        spec.invariant = None;
        spec.parameters
            .push(quarry_core::model::Parameter::new("E", 0.0));
        let m = Model::new(&spec).expect("model");
        let a = spec.parameters[0].value;
        let s = sweep(
            &m,
            &SweepOptions::new("E", 0.0, 0.9 * a, 40),
            &|| false,
            &|_| {},
        )
        .expect("sweep");
        let svg = render_sweep_svg(&s, &SweepFigure::default());
        let texts = doc_texts(&roxmltree::Document::parse(&svg).expect("SVG"));
        let centres = "linear centres (undecided by the linearisation)";
        assert!(texts.iter().any(|t| t == centres), "{texts:?}");
        assert!(!texts.iter().any(|t| t.contains("Hopf")), "{texts:?}");
    }

    #[test]
    fn the_branch_diagram_png_has_the_asked_size_and_ink_in_the_plot() {
        let s = holling_sweep();
        let fig = SweepFigure {
            width: 640,
            height: 420,
            ..SweepFigure::default()
        };
        let png = render_sweep_png(&s, &fig).expect("png");
        // The middle of the page is the plot: some of its pixels are not white.
        let (size, inked) = inked_in_middle(&png, 4);
        assert_eq!(size, (640, 420));
        assert!(inked > 200, "{inked} inked pixels");
        assert!(render_sweep_png(&s, &SweepFigure { width: 0, ..fig }).is_err());
    }

    #[test]
    fn an_empty_sweep_still_draws() {
        let s = Sweep {
            param: String::new(),
            points: Vec::new(),
            branches: Vec::new(),
            bifurcations: Vec::new(),
            branches_truncated: false,
            cycles: Vec::new(),
        };
        let svg = render_sweep_svg(&s, &SweepFigure::default());
        roxmltree::Document::parse(&svg).expect("well-formed");
    }
}
