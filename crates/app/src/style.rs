//! Colours, markers and number formats shared by the plane and the panels, so a thing looks
//! the same in the plot, its legend and the tables beside it.

use egui::{Color32, Pos2, Rect, Sense, Stroke, Ui, Vec2};
use egui_plot::MarkerShape;
use quarry_core::analysis::Equilibrium;
use quarry_core::linear::Class;
use quarry_core::verdict::Verdict;

/// Direction-field arrows, slowest third to fastest third.
pub const FIELD: [Color32; 3] = [
    Color32::from_rgb(196, 202, 212),
    Color32::from_rgb(150, 159, 175),
    Color32::from_rgb(98, 108, 126),
];
/// Streamlines.
pub const STREAMLINE: Color32 = Color32::from_rgb(140, 150, 168);
/// dx/dt = 0.
pub const NULLCLINE_X: Color32 = Color32::from_rgb(217, 119, 6);
/// dy/dt = 0.
pub const NULLCLINE_Y: Color32 = Color32::from_rgb(13, 148, 136);
/// First-integral level curves.
pub const CONTOUR: Color32 = Color32::from_rgb(170, 178, 150);
/// Separatrices (and saddles, which they belong to).
pub const SEPARATRIX: Color32 = Color32::from_rgb(124, 58, 237);
/// Limit cycles.
pub const LIMIT_CYCLE: Color32 = Color32::from_rgb(17, 24, 39);
/// The linearised solutions (drawn dotted in their orbit's colour; this is the swatch).
pub const LINEARISED: Color32 = Color32::from_rgb(100, 116, 139);
/// The parameter's current value marked on a sweep or yield plot.
pub const CURRENT_VALUE: Color32 = Color32::from_rgb(147, 51, 234);
/// Errors shown inline.
pub const ERROR: Color32 = Color32::from_rgb(200, 30, 30);
/// Stable equilibria.
const STABLE: Color32 = Color32::from_rgb(21, 128, 61);
/// Unstable equilibria.
const UNSTABLE: Color32 = Color32::from_rgb(200, 38, 38);
/// Centres.
const CENTRE: Color32 = Color32::from_rgb(29, 78, 216);
/// Undecided cases.
const UNDECIDED: Color32 = Color32::from_rgb(107, 114, 128);

/// Orbit colours, picked by seed id so deleting one orbit leaves the others' colours alone.
pub const ORBITS: [Color32; 8] = [
    Color32::from_rgb(37, 99, 235),
    Color32::from_rgb(220, 38, 38),
    Color32::from_rgb(22, 163, 74),
    Color32::from_rgb(147, 51, 234),
    Color32::from_rgb(161, 98, 7),
    Color32::from_rgb(219, 39, 119),
    Color32::from_rgb(8, 145, 178),
    Color32::from_rgb(101, 163, 13),
];

/// The colour of the orbit with this seed id.
pub fn orbit_colour(id: u64) -> Color32 {
    let n = ORBITS.len() as u64;
    ORBITS[(id.wrapping_sub(1) % n) as usize]
}

/// How an equilibrium is marked: the legend name, shape, colour and fill.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Marker {
    /// The legend entry, in plain words.
    pub name: &'static str,
    /// The marker's shape.
    pub shape: MarkerShape,
    /// Its colour.
    pub colour: Color32,
    /// Filled for attracting, hollow for repelling.
    pub filled: bool,
}

/// The marker of an equilibrium: by its linear class, or by the nonlinear verdict for a
/// linear centre.
pub fn marker(e: &Equilibrium) -> Marker {
    use MarkerShape::{Circle, Diamond, Plus, Square};
    let m = |name, shape, colour, filled| Marker {
        name,
        shape,
        colour,
        filled,
    };
    if let Some(v) = &e.nonlinear {
        return match v.verdict {
            Verdict::Center => m("centre", Plus, CENTRE, true),
            Verdict::StableFocus => m("weak stable focus", Diamond, STABLE, true),
            Verdict::UnstableFocus => m("weak unstable focus", Diamond, UNSTABLE, false),
            Verdict::Undetermined => m("centre or weak focus", Plus, UNDECIDED, true),
        };
    }
    match e.class() {
        Class::Saddle => m("saddle", Square, SEPARATRIX, true),
        Class::StableNode => m("stable node", Circle, STABLE, true),
        Class::StableDegenerateNode => m("stable degenerate node", Circle, STABLE, true),
        Class::StableStar => m("stable star", Circle, STABLE, true),
        Class::UnstableNode => m("unstable node", Circle, UNSTABLE, false),
        Class::UnstableDegenerateNode => m("unstable degenerate node", Circle, UNSTABLE, false),
        Class::UnstableStar => m("unstable star", Circle, UNSTABLE, false),
        Class::StableSpiral => m("stable spiral", Diamond, STABLE, true),
        Class::UnstableSpiral => m("unstable spiral", Diamond, UNSTABLE, false),
        Class::Center => m("linear centre", Plus, CENTRE, true),
        Class::ZeroEigenvalue => m("non-hyperbolic", Square, UNDECIDED, false),
    }
}

/// Paints a small marker inline (tables, lists), the same shape as on the plane.
pub fn marker_swatch(ui: &mut Ui, marker: &Marker) {
    let (rect, _) = ui.allocate_exact_size(Vec2::splat(14.0), Sense::hover());
    paint_marker(ui, rect, marker);
}

fn paint_marker(ui: &Ui, rect: Rect, marker: &Marker) {
    let p = ui.painter();
    let c = rect.center();
    let r = 5.0;
    let stroke = Stroke::new(1.6, marker.colour);
    let fill = if marker.filled {
        marker.colour
    } else {
        Color32::TRANSPARENT
    };
    match marker.shape {
        MarkerShape::Circle => {
            p.circle(c, r, fill, stroke);
        }
        MarkerShape::Diamond => {
            let pts = vec![
                Pos2::new(c.x, c.y - r - 1.0),
                Pos2::new(c.x + r + 1.0, c.y),
                Pos2::new(c.x, c.y + r + 1.0),
                Pos2::new(c.x - r - 1.0, c.y),
            ];
            p.add(egui::Shape::convex_polygon(pts, fill, stroke));
        }
        MarkerShape::Square => {
            let sq = Rect::from_center_size(c, Vec2::splat(2.0 * r - 1.0));
            p.rect(sq, 0.0, fill, stroke, egui::StrokeKind::Middle);
        }
        _ => {
            let s = Stroke::new(2.2, marker.colour);
            p.line_segment([Pos2::new(c.x - r, c.y), Pos2::new(c.x + r, c.y)], s);
            p.line_segment([Pos2::new(c.x, c.y - r), Pos2::new(c.x, c.y + r)], s);
        }
    }
}

/// A colour square for an orbit in the list.
pub fn colour_swatch(ui: &mut Ui, colour: Color32) {
    let (rect, _) = ui.allocate_exact_size(Vec2::new(18.0, 10.0), Sense::hover());
    ui.painter().rect_filled(rect.shrink(1.0), 2.0, colour);
}

/// A number with about four significant digits; scientific beyond 1e5 or below 1e-3.
pub fn num(v: f64) -> String {
    if !v.is_finite() {
        return if v.is_nan() {
            "undefined".into()
        } else if v > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    let s = if !(1e-3..1e5).contains(&a) {
        format!("{v:.3e}")
    } else {
        let decimals = (3 - a.log10().floor() as i32).clamp(0, 6) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_owned()
        } else {
            s
        }
    };
    // A true minus sign reads better in tables.
    s.replacen('-', "−", 1)
}

/// The text of a numeric field: fixed decimals for ordinary magnitudes, exponent form (which
/// the field parses back) for very large or small ones, so a field never grows to hundreds of
/// digits.
pub fn field_text(v: f64, decimals: std::ops::RangeInclusive<usize>) -> String {
    let a = v.abs();
    if a != 0.0 && a.is_finite() && !(1e-4..1e9).contains(&a) {
        format!("{v:e}")
    } else {
        egui::emath::format_with_decimals_in_range(v, decimals)
    }
}

/// The horizontal axis of a plot, named `label`, with tick labels from 40 px apart (egui_plot
/// wants 60 px, which leaves a 0..0.9 range on a narrow plot with the single label 0).
pub fn x_axis(label: impl Into<egui::WidgetText>) -> Vec<egui_plot::AxisHints<'static>> {
    vec![
        egui_plot::AxisHints::new_x()
            .label(label)
            .label_spacing(40.0..=60.0),
    ]
}

/// Gives a widget the name screen readers (and UI tests) know it by, for widgets whose
/// visible label is elsewhere or absent.
pub fn accessible_name(ui: &Ui, response: &egui::Response, name: impl Into<String>) {
    let name = name.into();
    ui.ctx()
        .accesskit_node_builder(response.id, |b| b.set_label(name));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn huge_and_tiny_field_values_read_in_exponent_form_and_parse_back() {
        for v in [1e200, -3.5e12, 2.5e-7] {
            let t = field_text(v, 2..=6);
            assert!(t.len() < 12, "{t}");
            assert_eq!(t.parse::<f64>(), Ok(v), "{t}");
        }
        assert_eq!(field_text(1.5, 2..=6), "1.50");
        assert_eq!(field_text(0.0, 2..=6), "0.00");
    }

    #[test]
    fn numbers_keep_four_significant_digits() {
        assert_eq!(num(20.0), "20");
        assert_eq!(num(1.23456), "1.235");
        assert_eq!(num(-0.075), "−0.075");
        assert_eq!(num(123456.0), "1.235e5");
        assert_eq!(num(0.0), "0");
        assert_eq!(num(f64::NAN), "undefined");
    }

    #[test]
    fn orbit_colours_cycle_by_id() {
        assert_eq!(orbit_colour(1), ORBITS[0]);
        assert_eq!(orbit_colour(9), ORBITS[0]);
        assert_eq!(orbit_colour(0), orbit_colour(8));
    }
}
