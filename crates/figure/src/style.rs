//! The look of a figure in one place: colours, line styles and the marker scheme for
//! equilibria.
//!
//! Equilibrium marks carry two cues that survive black-and-white printing: fill for stability
//! (filled = stable, open = unstable, half-filled = saddle) and shape for the kind (a plain disc
//! for a node, a disc inside a thin ring for a spiral, a ring with a dot for a true centre, a
//! diamond where the analysis could not decide, a square where the linearisation is degenerate).

use quarry_core::analysis::Equilibrium;
use quarry_core::linear::Class;
use quarry_core::verdict::Verdict;

use crate::geometry::Px;
use crate::svg::{num, polygon_data};

/// Text and marker ink.
pub const INK: &str = "#1c1c1c";
/// Secondary text (tick labels, caption).
pub const INK_SOFT: &str = "#4a4a4a";
/// Plot frame and ticks.
pub const FRAME: &str = "#555555";
/// Grid lines at the major ticks.
pub const GRID: &str = "#ececec";
/// Level curves of the first integral.
pub const CONTOUR: &str = "#c4ced8";
/// Direction field arrows and streamlines.
pub const FIELD: &str = "#7d7d7d";
/// Nullcline colours: dx/dt = 0 (solid), dy/dt = 0 (dashed).
pub const NULLCLINE: [&str; 2] = ["#15898f", "#d3862a"];
/// Dash pattern of the dy/dt = 0 nullcline, in units of the figure scale.
pub const NULLCLINE_DASH: f64 = 6.0;
/// Separatrices (stable ones dotted, unstable ones solid).
pub const SEPARATRIX: &str = "#5e3c8f";
/// Limit cycles (attracting solid, repelling dashed).
pub const CYCLE: &str = "#262626";
/// Orbit colours, used in turn.
pub const ORBIT_PALETTE: [&str; 6] = [
    "#3b4fa1", "#b2364e", "#2e7b47", "#7a4f2c", "#4a7190", "#8f3f87",
];

/// The families used for text, first one registered for the PNG.
pub const FONT_FAMILY: &str = "Ubuntu, 'Helvetica Neue', Arial, sans-serif";

/// How an equilibrium is marked.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Mark {
    /// Filled disc: stable node, degenerate node or star.
    Stable,
    /// Filled disc in a thin ring: stable spiral or weak stable focus.
    StableSpiral,
    /// Open circle: unstable node, degenerate node or star.
    Unstable,
    /// Open circle in a thin ring: unstable spiral or weak unstable focus.
    UnstableSpiral,
    /// Half-filled circle: saddle.
    Saddle,
    /// Ring with a dot: a centre, closed orbits around it.
    Centre,
    /// Open diamond: a linear centre nothing could decide.
    Undecided,
    /// Open square: a zero eigenvalue.
    NonHyperbolic,
}

/// The mark and the legend words for an equilibrium.
pub fn mark_of(eq: &Equilibrium) -> (Mark, String) {
    if let Some(v) = &eq.nonlinear {
        return match v.verdict {
            Verdict::Center => (Mark::Centre, "centre (closed orbits)".into()),
            Verdict::StableFocus => (Mark::StableSpiral, "weak stable focus".into()),
            Verdict::UnstableFocus => (Mark::UnstableSpiral, "weak unstable focus".into()),
            Verdict::Undetermined => (Mark::Undecided, "linear centre, undecided".into()),
        };
    }
    let class = eq.linear.class;
    let mark = match class {
        Class::StableNode | Class::StableDegenerateNode | Class::StableStar => Mark::Stable,
        Class::UnstableNode | Class::UnstableDegenerateNode | Class::UnstableStar => Mark::Unstable,
        Class::StableSpiral => Mark::StableSpiral,
        Class::UnstableSpiral => Mark::UnstableSpiral,
        Class::Saddle => Mark::Saddle,
        Class::Center => Mark::Undecided,
        Class::ZeroEigenvalue => Mark::NonHyperbolic,
    };
    let label = match class {
        Class::Center => "linear centre, undecided".to_owned(),
        Class::ZeroEigenvalue => "non-hyperbolic (zero eigenvalue)".to_owned(),
        c => c.describe().to_owned(),
    };
    (mark, label)
}

/// SVG for `mark` centred at `c` with radius `r` (px).
pub fn mark_svg(mark: Mark, c: Px, r: f64) -> String {
    let sw = num((r * 0.26).max(0.8));
    let thin = num((r * 0.2).max(0.6));
    let circle = |rad: f64, fill: &str| {
        format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{fill}\" stroke=\"{INK}\" stroke-width=\"{sw}\"/>",
            num(c[0]),
            num(c[1]),
            num(rad)
        )
    };
    let ring = || {
        format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"{INK}\" stroke-width=\"{thin}\"/>",
            num(c[0]),
            num(c[1]),
            num(r * 1.45)
        )
    };
    match mark {
        Mark::Stable => circle(r, INK),
        Mark::Unstable => circle(r, "#ffffff"),
        Mark::StableSpiral => format!("{}{}", ring(), circle(r * 0.8, INK)),
        Mark::UnstableSpiral => format!("{}{}", ring(), circle(r * 0.8, "#ffffff")),
        Mark::Saddle => {
            let (x, y) = (c[0], c[1]);
            format!(
                "{}<path d=\"M{} {}A{} {} 0 0 0 {} {}Z\" fill=\"{INK}\"/>{}",
                circle(r, "#ffffff"),
                num(x),
                num(y - r),
                num(r),
                num(r),
                num(x),
                num(y + r),
                circle(r, "none")
            )
        }
        Mark::Centre => format!(
            "{}<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{INK}\"/>",
            circle(r, "#ffffff"),
            num(c[0]),
            num(c[1]),
            num(r * 0.38)
        ),
        Mark::Undecided => {
            let d = r * 1.3;
            let pts = [
                [c[0], c[1] - d],
                [c[0] + d, c[1]],
                [c[0], c[1] + d],
                [c[0] - d, c[1]],
            ];
            format!(
                "<path d=\"{}\" fill=\"#ffffff\" stroke=\"{INK}\" stroke-width=\"{sw}\" stroke-linejoin=\"round\"/>",
                polygon_data(&pts)
            )
        }
        Mark::NonHyperbolic => {
            let h = r * 0.9;
            let pts = [
                [c[0] - h, c[1] - h],
                [c[0] + h, c[1] - h],
                [c[0] + h, c[1] + h],
                [c[0] - h, c[1] + h],
            ];
            format!(
                "<path d=\"{}\" fill=\"#ffffff\" stroke=\"{INK}\" stroke-width=\"{sw}\"/>",
                polygon_data(&pts)
            )
        }
    }
}

/// A filled arrowhead with its tip at `tip`, pointing along unit `dir`, `len` px long.
pub fn arrowhead_data(tip: Px, dir: Px, len: f64) -> String {
    let half = len * 0.42;
    let base = [tip[0] - dir[0] * len, tip[1] - dir[1] * len];
    let normal = [-dir[1], dir[0]];
    let notch = [tip[0] - dir[0] * len * 0.72, tip[1] - dir[1] * len * 0.72];
    polygon_data(&[
        tip,
        [base[0] + normal[0] * half, base[1] + normal[1] * half],
        notch,
        [base[0] - normal[0] * half, base[1] - normal[1] * half],
    ])
}
