//! The phase plane: every layer of the scene drawn with egui_plot, and clicks that start
//! orbits.

use egui::{CursorIcon, Rect, Ui};
use egui_plot::{Arrows, Corner, Legend, Line, LineStyle, Plot, PlotPoints, Points};
use quarry_core::scene::{CycleStability, ManifoldKind, Polyline, Scene, SceneOrbit};

use crate::command::Command;
use crate::scenario::{OrbitSeed, Scenario};
use crate::style;

/// Direction-field arrow length as a fraction of a grid cell (on screen).
const ARROW_FILL: f64 = 0.72;
/// Radius of equilibrium markers, in points.
const MARKER_RADIUS: f32 = 7.5;
/// Length of the small arrow that shows which way an orbit runs, in points.
const ORBIT_ARROW_PX: f64 = 14.0;

/// The plane and what it remembers between frames (none of it is scenario state).
#[derive(Debug)]
pub struct PlanePanel {
    reset_pending: bool,
    /// Screen points per plot unit along each axis on the last frame, so arrows point the
    /// way they do on screen whatever the axes' scales.
    points_per_unit: [f64; 2],
    /// The pointer in plot space while it hovers the plane.
    pub hover: Option<[f64; 2]>,
    /// The plot's rectangle on screen on the last frame.
    pub screen_rect: Option<Rect>,
    /// The visible bounds on the last frame: x_min, x_max, y_min, y_max.
    pub view: Option<[f64; 4]>,
}

impl Default for PlanePanel {
    fn default() -> Self {
        Self {
            reset_pending: false,
            points_per_unit: [10.0, 10.0],
            hover: None,
            screen_rect: None,
            view: None,
        }
    }
}

/// For each seed, its orbit in `scene` if the scene has one. Orbits come in seed order but
/// unusable seeds have none, and the scene may be one step behind the seeds.
pub fn match_orbits<'a>(seeds: &[OrbitSeed], scene: &'a Scene) -> Vec<Option<&'a SceneOrbit>> {
    let mut next = 0;
    seeds
        .iter()
        .map(|seed| {
            let rest = scene.orbits.get(next..).unwrap_or_default();
            let found = rest.iter().position(|o| o.seed == seed.at)?;
            next += found + 1;
            rest.get(found)
        })
        .collect()
}

fn closed_points(line: &Polyline) -> Vec<[f64; 2]> {
    let mut pts = line.points.clone();
    if line.closed
        && let Some(first) = line.points.first()
    {
        pts.push(*first);
    }
    pts
}

impl PlanePanel {
    /// Shows the model's whole window on the next frame.
    pub fn reset_view(&mut self) {
        self.reset_pending = true;
    }

    /// Draws the plane; a click on it asks for an orbit there.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        scene: Option<&Scene>,
        out: &mut Vec<Command>,
    ) {
        let w = scenario.spec.window;
        let [xn, yn] = &scenario.spec.variables;
        let mut plot = Plot::new("plane")
            .x_axis_label(xn.as_str())
            .y_axis_label(yn.as_str())
            .default_x_bounds(w.x_min, w.x_max)
            .default_y_bounds(w.y_min, w.y_max)
            .allow_double_click_reset(false)
            .show_crosshair(false)
            .label_formatter(|_| None)
            .legend(
                Legend::default()
                    .position(Corner::RightTop)
                    .follow_insertion_order(true)
                    .background_alpha(0.85),
            );
        if self.reset_pending {
            plot = plot.reset();
            self.reset_pending = false;
        }
        let ppu = self.points_per_unit;
        let layers = scenario.layers;
        let response = plot.show(ui, |pui| {
            // The model's window, where everything is computed.
            pui.line(
                Line::new(
                    "",
                    vec![
                        [w.x_min, w.y_min],
                        [w.x_max, w.y_min],
                        [w.x_max, w.y_max],
                        [w.x_min, w.y_max],
                        [w.x_min, w.y_min],
                    ],
                )
                .color(egui::Color32::from_gray(200))
                .width(1.0)
                .allow_hover(false),
            );
            if let Some(scene) = scene {
                if layers.contours {
                    for line in scene.contours.iter().flat_map(|c| &c.lines) {
                        pui.line(
                            Line::new("first-integral levels", closed_points(line))
                                .color(style::CONTOUR)
                                .width(1.0)
                                .allow_hover(false),
                        );
                    }
                }
                if layers.streamlines {
                    for line in &scene.streamlines {
                        pui.line(
                            Line::new("streamlines", closed_points(line))
                                .color(style::STREAMLINE)
                                .width(1.0)
                                .allow_hover(false),
                        );
                    }
                }
                if layers.field {
                    field_ui(pui, scene, ppu);
                }
                if layers.nullclines {
                    for n in &scene.nullclines {
                        let (name, colour) = if n.variable == 0 {
                            (format!("nullcline d{xn}/dt = 0"), style::NULLCLINE_X)
                        } else {
                            (format!("nullcline d{yn}/dt = 0"), style::NULLCLINE_Y)
                        };
                        for line in &n.lines {
                            pui.line(
                                Line::new(name.as_str(), closed_points(line))
                                    .color(colour)
                                    .width(2.0)
                                    .allow_hover(false),
                            );
                        }
                    }
                }
                if layers.separatrices {
                    for s in &scene.separatrices {
                        let (name, style) = match s.kind {
                            ManifoldKind::Stable => ("separatrix (in)", LineStyle::Solid),
                            ManifoldKind::Unstable => {
                                ("separatrix (out)", LineStyle::Dashed { length: 8.0 })
                            }
                        };
                        pui.line(
                            Line::new(name, closed_points(&s.line))
                                .color(style::SEPARATRIX)
                                .width(1.8)
                                .style(style)
                                .allow_hover(false),
                        );
                    }
                }
                if layers.limit_cycles {
                    for c in &scene.limit_cycles {
                        let (name, style) = match c.stability {
                            CycleStability::Attracting => {
                                ("limit cycle (attracting)", LineStyle::Solid)
                            }
                            CycleStability::Repelling => (
                                "limit cycle (repelling)",
                                LineStyle::Dashed { length: 10.0 },
                            ),
                        };
                        pui.line(
                            Line::new(name, closed_points(&c.line))
                                .color(style::LIMIT_CYCLE)
                                .width(3.0)
                                .style(style),
                        );
                    }
                }
                if layers.orbits {
                    orbits_ui(pui, scenario, scene, ppu);
                }
                if layers.equilibria {
                    equilibria_ui(pui, scene);
                }
            }
            if pui.response().hovered() {
                pui.pointer_coordinate()
            } else {
                None
            }
        });

        self.hover = response
            .inner
            .filter(|p| p.x.is_finite() && p.y.is_finite())
            .map(|p| [p.x, p.y]);
        self.screen_rect = Some(response.response.rect);
        let bounds = response.transform.bounds();
        self.view = Some([
            bounds.min()[0],
            bounds.max()[0],
            bounds.min()[1],
            bounds.max()[1],
        ]);
        let t = &response.transform;
        let ppu = [t.dpos_dvalue_x().abs(), t.dpos_dvalue_y().abs()];
        if ppu.iter().all(|v| v.is_finite() && *v > 0.0) {
            self.points_per_unit = ppu;
        }
        let r = response.response.on_hover_cursor(CursorIcon::Crosshair);
        if r.clicked()
            && let Some(pos) = r.interact_pointer_pos()
        {
            let p = t.value_from_position(pos);
            if p.x.is_finite() && p.y.is_finite() {
                out.push(Command::AddOrbit([p.x, p.y]));
            }
        }
    }
}

/// Tails and tips of a set of arrows.
type ArrowSet = (Vec<[f64; 2]>, Vec<[f64; 2]>);

/// Arrows of equal length on screen, shaded by speed in three bands.
fn field_ui(pui: &mut egui_plot::PlotUi<'_>, scene: &Scene, ppu: [f64; 2]) {
    let Some(field) = &scene.field else {
        return;
    };
    let w = scene.window;
    let nx = field.nx.max(1) as f64;
    let ny = field.ny.max(1) as f64;
    let cell_pts = (w.width() / nx * ppu[0]).min(w.height() / ny * ppu[1]);
    let len = ARROW_FILL * cell_pts;
    // Per speed band: the arrows' tails and tips.
    let mut bands: [ArrowSet; 3] = Default::default();
    for s in &field.samples {
        let [u, v] = s.rate;
        let (sx, sy) = (u * ppu[0], v * ppu[1]);
        let n = sx.hypot(sy);
        if !n.is_finite() || n == 0.0 {
            continue;
        }
        let half = [0.5 * len * sx / n / ppu[0], 0.5 * len * sy / n / ppu[1]];
        let relative = if field.max_speed > 0.0 {
            (s.speed / field.max_speed).sqrt()
        } else {
            0.0
        };
        let band = ((relative * 3.0) as usize).min(2);
        let (origins, tips) = &mut bands[band];
        origins.push([s.at[0] - half[0], s.at[1] - half[1]]);
        tips.push([s.at[0] + half[0], s.at[1] + half[1]]);
    }
    let tip = (0.3 * len).clamp(3.0, 7.0) as f32;
    for (band, (origins, tips)) in bands.into_iter().enumerate() {
        pui.arrows(
            Arrows::new(
                "direction field",
                PlotPoints::from(origins),
                PlotPoints::from(tips),
            )
            .color(style::FIELD[band])
            .tip_length(tip)
            .allow_hover(false),
        );
    }
}

/// The user's orbits with their seeds and a small arrow for the direction of time.
fn orbits_ui(pui: &mut egui_plot::PlotUi<'_>, scenario: &Scenario, scene: &Scene, ppu: [f64; 2]) {
    let matched = match_orbits(&scenario.seeds, scene);
    for (seed, orbit) in scenario.seeds.iter().zip(matched) {
        if !seed.visible {
            continue;
        }
        let colour = style::orbit_colour(seed.id);
        pui.points(
            Points::new("", vec![seed.at])
                .color(colour)
                .radius(3.5)
                .filled(true)
                .allow_hover(false),
        );
        let Some(orbit) = orbit else {
            continue;
        };
        pui.line(
            Line::new("orbits", orbit.points.clone())
                .color(colour)
                .width(2.0)
                .allow_hover(false),
        );
        if let Some((origin, tip)) = direction_arrow(&orbit.points, ppu) {
            pui.arrows(
                Arrows::new("", vec![origin], vec![tip])
                    .color(colour)
                    .tip_length(9.0)
                    .allow_hover(false),
            );
        }
    }
}

/// A short arrow along the orbit a quarter of the way in, pointing forward in time.
fn direction_arrow(points: &[[f64; 2]], ppu: [f64; 2]) -> Option<([f64; 2], [f64; 2])> {
    let k = points.len() / 4;
    let a = *points.get(k)?;
    let b = points[k + 1..].iter().find(|p| {
        let dx = (p[0] - a[0]) * ppu[0];
        let dy = (p[1] - a[1]) * ppu[1];
        dx.hypot(dy) > 1.0
    })?;
    let (sx, sy) = ((b[0] - a[0]) * ppu[0], (b[1] - a[1]) * ppu[1]);
    let n = sx.hypot(sy);
    if !n.is_finite() || n == 0.0 {
        return None;
    }
    let tip = [
        a[0] + ORBIT_ARROW_PX * sx / n / ppu[0],
        a[1] + ORBIT_ARROW_PX * sy / n / ppu[1],
    ];
    Some((a, tip))
}

/// Equilibria grouped by marker, so the legend names each class once.
fn equilibria_ui(pui: &mut egui_plot::PlotUi<'_>, scene: &Scene) {
    let mut groups: Vec<(style::Marker, Vec<[f64; 2]>)> = Vec::new();
    for e in &scene.equilibria {
        let m = style::marker(e);
        match groups.iter_mut().find(|(g, _)| g.name == m.name) {
            Some((_, pts)) => pts.push([e.x, e.y]),
            None => groups.push((m, vec![[e.x, e.y]])),
        }
    }
    for (m, pts) in groups {
        // A white halo keeps markers readable where curves cross at them.
        pui.points(
            Points::new("", pts.clone())
                .shape(egui_plot::MarkerShape::Circle)
                .color(egui::Color32::WHITE)
                .filled(true)
                .radius(MARKER_RADIUS + 3.0)
                .allow_hover(false),
        );
        pui.points(
            Points::new(m.name, pts)
                .shape(m.shape)
                .color(m.colour)
                .filled(m.filled)
                .radius(MARKER_RADIUS),
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::scene::{OrbitSummary, TimeDirection};

    fn seed(id: u64, at: [f64; 2]) -> OrbitSeed {
        OrbitSeed {
            id,
            at,
            direction: TimeDirection::Forward,
            visible: true,
        }
    }

    fn orbit(at: [f64; 2]) -> SceneOrbit {
        SceneOrbit {
            seed: at,
            times: vec![0.0],
            points: vec![at],
            summary: OrbitSummary::default(),
        }
    }

    #[test]
    fn orbits_match_seeds_even_when_the_scene_is_a_step_behind() {
        let scene = Scene {
            orbits: vec![orbit([1.0, 1.0]), orbit([2.0, 2.0]), orbit([3.0, 3.0])],
            ..Scene::default()
        };
        // Seed 2 was deleted and seed 4 added since the scene was computed.
        let seeds = [
            seed(1, [1.0, 1.0]),
            seed(3, [3.0, 3.0]),
            seed(4, [4.0, 4.0]),
        ];
        let m = match_orbits(&seeds, &scene);
        assert_eq!(m[0].map(|o| o.seed), Some([1.0, 1.0]));
        assert_eq!(m[1].map(|o| o.seed), Some([3.0, 3.0]));
        assert!(m[2].is_none());
    }
}
