//! The phase plane: every layer of the scene drawn with egui_plot, and clicks that start
//! orbits.

use egui::{CursorIcon, Pos2, Rect, Ui};
use egui_plot::{
    Arrows, Corner, Legend, Line, LineStyle, Plot, PlotPoint, PlotPoints, PlotTransform, Points,
};
use quarry_core::linearised::LinearOverlay;
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
/// How near (in points) the pointer must be to an orbit's start to drag it, or to an orbit
/// to mark its time in the time series.
const PICK_RADIUS: f32 = 9.0;

/// What the plane shows besides the scenario and its scene.
#[derive(Clone, Copy, Debug, Default)]
pub struct PlaneView<'a> {
    /// Orbits selected for the time series (and playback).
    pub selection: &'a [u64],
    /// A time to mark on the selected orbits (playback, or hovered in the time series).
    pub marker_time: Option<f64>,
}

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
    /// The time on a selected orbit under the pointer, on the last frame.
    pub hover_time: Option<f64>,
    /// The plot's transform on the last frame, to pick seeds when a press starts.
    transform: Option<PlotTransform>,
    /// The orbit whose start point is being dragged.
    dragging: Option<u64>,
    /// Set when a press started on a start point, so that letting go is not a new orbit.
    press_on_seed: bool,
}

impl Default for PlanePanel {
    fn default() -> Self {
        Self {
            reset_pending: false,
            points_per_unit: [10.0, 10.0],
            hover: None,
            screen_rect: None,
            view: None,
            hover_time: None,
            transform: None,
            dragging: None,
            press_on_seed: false,
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

    /// Where a state was drawn on screen on the last frame.
    pub fn screen_pos(&self, at: [f64; 2]) -> Option<Pos2> {
        Some(
            self.transform?
                .position_from_point(&PlotPoint::new(at[0], at[1])),
        )
    }

    /// The seed whose start point is within reach of a screen position.
    fn seed_at(&self, scenario: &Scenario, pos: Pos2) -> Option<u64> {
        let t = self.transform?;
        scenario
            .seeds
            .iter()
            .filter(|s| s.visible && scenario.layers.orbits)
            .map(|s| {
                let p = t.position_from_point(&PlotPoint::new(s.at[0], s.at[1]));
                (s.id, p.distance(pos))
            })
            .filter(|(_, d)| *d <= PICK_RADIUS)
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(id, _)| id)
    }

    /// Starts, continues or ends dragging a start point; returns whether a drag is on.
    fn drag_seed(&mut self, ui: &Ui, scenario: &Scenario, out: &mut Vec<Command>) -> bool {
        let (pressed, down, pos) = ui.input(|i| {
            (
                i.pointer.primary_pressed(),
                i.pointer.primary_down(),
                i.pointer.interact_pos(),
            )
        });
        if pressed
            && let Some(pos) = pos
            && self.screen_rect.is_some_and(|r| r.contains(pos))
        {
            self.dragging = self.seed_at(scenario, pos);
            self.press_on_seed = self.dragging.is_some();
        }
        let Some(id) = self.dragging else {
            return false;
        };
        if !down {
            self.dragging = None;
            out.push(Command::EndGesture);
            return false;
        }
        if let (Some(t), Some(pos)) = (self.transform, pos) {
            let p = t.value_from_position(pos);
            let moved = scenario
                .seeds
                .iter()
                .find(|s| s.id == id)
                .is_some_and(|s| s.at != [p.x, p.y]);
            if moved && p.x.is_finite() && p.y.is_finite() {
                out.push(Command::MoveOrbit(id, [p.x, p.y]));
            }
        }
        true
    }

    /// The time on a selected orbit nearest the pointer, when one is within reach.
    fn time_under(
        t: &PlotTransform,
        scenario: &Scenario,
        scene: &Scene,
        selection: &[u64],
        pos: Pos2,
    ) -> Option<f64> {
        let mut best: Option<(f32, f64)> = None;
        for (seed, orbit) in scenario
            .seeds
            .iter()
            .zip(match_orbits(&scenario.seeds, scene))
        {
            let Some(orbit) = orbit else { continue };
            if !seed.visible || !selection.contains(&seed.id) {
                continue;
            }
            for (time, p) in orbit.times.iter().zip(&orbit.points) {
                let d = t
                    .position_from_point(&PlotPoint::new(p[0], p[1]))
                    .distance(pos);
                if d <= PICK_RADIUS && best.is_none_or(|(bd, _)| d < bd) {
                    best = Some((d, *time));
                }
            }
        }
        best.map(|(_, time)| time)
    }

    /// Draws the plane; a click on it asks for an orbit there, and dragging an orbit's start
    /// point moves the orbit.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        scene: Option<&Scene>,
        view: PlaneView<'_>,
        out: &mut Vec<Command>,
    ) {
        let dragging = self.drag_seed(ui, scenario, out);
        let w = scenario.spec.window;
        let [xn, yn] = &scenario.spec.variables;
        let mut plot = Plot::new("plane")
            .custom_x_axes(style::x_axis(xn.as_str()))
            .y_axis_label(yn.as_str())
            .default_x_bounds(w.x_min, w.x_max)
            .default_y_bounds(w.y_min, w.y_max)
            .allow_double_click_reset(false)
            .allow_drag(!dragging)
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
                if layers.linearisation {
                    overlays_ui(pui, scenario, scene);
                }
                if layers.orbits {
                    orbits_ui(pui, scenario, scene, ppu);
                    markers_ui(pui, scenario, scene, view);
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
        self.transform = Some(*t);
        let ppu = [t.dpos_dvalue_x().abs(), t.dpos_dvalue_y().abs()];
        if ppu.iter().all(|v| v.is_finite() && *v > 0.0) {
            self.points_per_unit = ppu;
        }
        let r = &response.response;
        self.hover_time = match (scene, r.hover_pos()) {
            (Some(scene), Some(pos)) if layers.orbits => {
                Self::time_under(t, scenario, scene, view.selection, pos)
            }
            _ => None,
        };
        let over_seed = r.hover_pos().and_then(|p| self.seed_at(scenario, p));
        let cursor = if dragging {
            CursorIcon::Grabbing
        } else if over_seed.is_some() {
            CursorIcon::Grab
        } else {
            CursorIcon::Crosshair
        };
        let r = response.response.on_hover_cursor(cursor);
        let press_on_seed = self.press_on_seed;
        if !ui.input(|i| i.pointer.any_down()) {
            self.press_on_seed = false;
        }
        if r.clicked()
            && !press_on_seed
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

/// A filled point where each selected orbit is at the marked time.
fn markers_ui(
    pui: &mut egui_plot::PlotUi<'_>,
    scenario: &Scenario,
    scene: &Scene,
    view: PlaneView<'_>,
) {
    let Some(time) = view.marker_time else {
        return;
    };
    for (seed, orbit) in crate::timeseries::selected_orbits(scenario, scene, view.selection) {
        let Some(p) = crate::timeseries::state_at(orbit, time) else {
            continue;
        };
        let colour = style::orbit_colour(seed.id);
        pui.points(
            Points::new("", vec![p])
                .color(egui::Color32::WHITE)
                .filled(true)
                .radius(7.0)
                .allow_hover(false),
        );
        pui.points(
            Points::new("", vec![p])
                .color(colour)
                .filled(true)
                .radius(5.0)
                .allow_hover(false),
        );
    }
}

/// The linearised solution from a seed, if the scene has one. Each starts at its seed (up to
/// rounding in p* + (start − p*)), which is how it is matched: the scene may be a step
/// behind the seeds.
pub fn overlay_for<'a>(scene: &'a Scene, seed: &OrbitSeed) -> Option<&'a LinearOverlay> {
    scene.linear_overlays.iter().flatten().find(|o| {
        o.points.first().is_some_and(|p| {
            (0..2).all(|k| (p[k] - seed.at[k]).abs() <= 1e-9 * (1.0 + seed.at[k].abs()))
        })
    })
}

/// The linearised solutions, dotted in their orbit's colour.
fn overlays_ui(pui: &mut egui_plot::PlotUi<'_>, scenario: &Scenario, scene: &Scene) {
    for seed in scenario.seeds.iter().filter(|s| s.visible) {
        let Some(overlay) = overlay_for(scene, seed) else {
            continue;
        };
        pui.line(
            Line::new("linearisation", overlay.points.clone())
                .color(style::orbit_colour(seed.id))
                .width(1.6)
                .style(LineStyle::Dotted { spacing: 5.0 })
                .allow_hover(false),
        );
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
