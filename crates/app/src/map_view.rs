//! The two-parameter map: every cell of a grid of two parameters coloured by what its
//! equilibria do (none, none stable, one stable, several stable), for the stability region
//! at a glance. Runs on its own thread with progress and Cancel; a click sets both
//! parameters in the plane.

use egui::{Button, Color32, DragValue, Ui};
use egui_plot::{Corner, Legend, MarkerShape, Plot, Points};
use quarry_core::linear::Class;
use quarry_core::model::Model;
use quarry_core::sweep::{StabilityMap, SweepError, stability_map};

use crate::command::Command;
use crate::job::Job;
use crate::scenario::Scenario;
use crate::style;
use crate::sweep_view::Stability;

/// Cells per side of a new map.
pub const DEFAULT_CELLS: usize = 40;

/// What the equilibria of one cell do together.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Regime {
    /// No equilibrium in the window.
    None,
    /// Equilibria, none attracting (orbits go to a cycle, or away).
    NoneStable,
    /// Only neutral ones besides unstable (a linear centre).
    Neutral,
    /// Exactly one attracting equilibrium.
    OneStable,
    /// Two or more attracting equilibria: the outcome depends on where orbits start.
    SeveralStable,
}

impl Regime {
    /// Every regime, in legend order.
    pub const ALL: [Regime; 5] = [
        Regime::OneStable,
        Regime::SeveralStable,
        Regime::NoneStable,
        Regime::Neutral,
        Regime::None,
    ];

    /// The legend entry.
    pub fn label(self) -> &'static str {
        match self {
            Regime::None => "no equilibrium in the window",
            Regime::NoneStable => "no stable equilibrium (cycles or escape)",
            Regime::Neutral => "neutral (linear centre)",
            Regime::OneStable => "one stable equilibrium",
            Regime::SeveralStable => "several stable equilibria (depends on the start)",
        }
    }

    fn colour(self) -> Color32 {
        match self {
            Regime::None => Color32::from_gray(225),
            Regime::NoneStable => Color32::from_rgb(214, 120, 90),
            Regime::Neutral => Color32::from_rgb(200, 190, 120),
            Regime::OneStable => Color32::from_rgb(120, 170, 200),
            Regime::SeveralStable => Color32::from_rgb(120, 90, 170),
        }
    }
}

/// The regime of a cell from its equilibria's classes.
pub fn regime(classes: &[Class]) -> Regime {
    if classes.is_empty() {
        return Regime::None;
    }
    let stable = classes
        .iter()
        .filter(|c| c.stability() == Stability::Stable)
        .count();
    match stable {
        0 if classes.contains(&Class::Center) => Regime::Neutral,
        0 => Regime::NoneStable,
        1 => Regime::OneStable,
        _ => Regime::SeveralStable,
    }
}

/// The map's settings, the running job and the last map.
#[derive(Debug)]
pub struct MapView {
    /// Parameter on the horizontal axis, and its range.
    pub across: (String, f64, f64),
    /// Parameter on the vertical axis, and its range.
    pub up: (String, f64, f64),
    /// Cells per side.
    pub cells: usize,
    job: Option<Job<Result<StabilityMap, SweepError>>>,
    done: Option<StabilityMap>,
    error: Option<String>,
    /// Screen points per unit on the last frame, to size the cells.
    points_per_unit: [f64; 2],
}

impl Default for MapView {
    fn default() -> Self {
        Self {
            across: (String::new(), 0.0, 1.0),
            up: (String::new(), 0.0, 1.0),
            cells: DEFAULT_CELLS,
            job: None,
            done: None,
            error: None,
            points_per_unit: [0.0, 0.0],
        }
    }
}

/// The slider range of a parameter, or 0..2×value for one the harvest adds.
fn range_of(scenario: &Scenario, model: &Model, name: &str) -> (f64, f64) {
    if let Some(i) = scenario.spec.parameters.iter().position(|p| p.name == name)
        && let Some(s) = scenario.params.get(i)
    {
        return s.slider_range();
    }
    match model.param(name) {
        Some(v) if v > 0.0 => (0.0, 2.0 * v),
        _ => (0.0, 1.0),
    }
}

impl MapView {
    /// The last map.
    pub fn result(&self) -> Option<&StabilityMap> {
        self.done.as_ref()
    }

    /// Starts the map for the current settings (in place when `ctx` is `None`).
    pub fn start(&mut self, model: &Model, ctx: Option<egui::Context>) {
        let model = model.clone();
        let n = self.cells.max(2);
        let (a, b) = (self.up.clone(), self.across.clone());
        self.error = None;
        self.job = Some(Job::start(ctx, move |cancelled, progress| {
            stability_map(
                &model,
                (&a.0, a.1, a.2, n),
                (&b.0, b.1, b.2, n),
                cancelled,
                progress,
            )
        }));
    }

    fn poll(&mut self) {
        let Some(job) = &mut self.job else { return };
        let Some(result) = job.take() else { return };
        self.job = None;
        match result {
            Ok(map) => self.done = Some(map),
            Err(SweepError::Cancelled) => self.error = Some("Cancelled.".into()),
            Err(e) => self.error = Some(format!("The map could not be computed: {e}")),
        }
    }

    /// Draws the settings, the progress and the map.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        model: &Model,
        ctx: Option<egui::Context>,
        out: &mut Vec<Command>,
    ) {
        self.poll();
        let names: Vec<String> = model
            .spec()
            .parameters
            .iter()
            .map(|p| p.name.clone())
            .collect();
        for (k, axis) in [&mut self.across, &mut self.up].into_iter().enumerate() {
            if !names.contains(&axis.0)
                && let Some(n) = names.get(k).or(names.first())
            {
                let (lo, hi) = range_of(scenario, model, n);
                *axis = (n.clone(), lo, hi);
            }
        }
        for (label, axis, salt) in [
            ("across", &mut self.across, "map-across"),
            ("up", &mut self.up, "map-up"),
        ] {
            ui.horizontal(|ui| {
                let l = ui.label(label);
                let mut chosen = None;
                egui::ComboBox::from_id_salt(salt)
                    .selected_text(axis.0.as_str())
                    .show_ui(ui, |ui| {
                        for n in &names {
                            if ui.selectable_label(*n == axis.0, n).clicked() {
                                chosen = Some(n.clone());
                            }
                        }
                    })
                    .response
                    .labelled_by(l.id);
                if let Some(n) = chosen {
                    let (lo, hi) = range_of(scenario, model, &n);
                    *axis = (n, lo, hi);
                }
                let l = ui.label("from");
                let r = ui
                    .add(DragValue::new(&mut axis.1).speed(0.01))
                    .labelled_by(l.id);
                style::accessible_name(ui, &r, format!("map {label} from"));
                let l = ui.label("to");
                let r = ui
                    .add(DragValue::new(&mut axis.2).speed(0.01))
                    .labelled_by(l.id);
                style::accessible_name(ui, &r, format!("map {label} to"));
            });
        }
        ui.horizontal(|ui| {
            let l = ui.label("cells per side");
            let r = ui
                .add(DragValue::new(&mut self.cells).range(2..=400))
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "map cells");
            let running = self.job.as_ref().is_some_and(Job::is_running);
            let valid = self.across.0 != self.up.0
                && [self.across.1, self.across.2, self.up.1, self.up.2]
                    .iter()
                    .all(|v| v.is_finite())
                && self.across.1 != self.across.2
                && self.up.1 != self.up.2;
            if ui
                .add_enabled(!running && valid, Button::new("Run map"))
                .on_disabled_hover_text("Choose two different parameters with ranges")
                .clicked()
            {
                self.start(model, ctx.clone());
                self.poll();
            }
        });
        if let Some(job) = &self.job {
            job.progress_ui(ui, |_| {});
        }
        if let Some(e) = &self.error {
            ui.colored_label(style::ERROR, e);
        }
        let Some(map) = &self.done else {
            ui.weak("Choose two parameters and their ranges, then run the map.");
            return;
        };
        let [rows, cols] = [&map.values[0], &map.values[1]];
        let step = |v: &[f64]| {
            if v.len() > 1 {
                ((v[v.len() - 1] - v[0]) / (v.len() - 1) as f64).abs()
            } else {
                1.0
            }
        };
        let (dx, dy) = (step(cols), step(rows));
        let ppu = self.points_per_unit;
        let radius = if ppu[0] > 0.0 && ppu[1] > 0.0 {
            (0.5 * (dx * ppu[0]).min(dy * ppu[1])) as f32
        } else {
            3.0
        };
        let response = Plot::new("stability-map")
            .custom_x_axes(style::x_axis(map.params[1].as_str()))
            .y_axis_label(map.params[0].as_str())
            .height((ui.available_height() - 10.0).max(180.0))
            .show_crosshair(false)
            .label_formatter(|_| None)
            .legend(Legend::default().position(Corner::RightTop))
            .show(ui, |pui| {
                for r in Regime::ALL {
                    let mut pts = Vec::new();
                    for (i, v1) in rows.iter().enumerate() {
                        for (j, v2) in cols.iter().enumerate() {
                            let classes = &map.cells[i * cols.len() + j];
                            if regime(classes) == r {
                                pts.push([*v2, *v1]);
                            }
                        }
                    }
                    if pts.is_empty() {
                        continue;
                    }
                    pui.points(
                        Points::new(r.label(), pts)
                            .shape(MarkerShape::Square)
                            .filled(true)
                            .color(r.colour())
                            .radius(radius.max(1.0))
                            .allow_hover(false),
                    );
                }
                if let (Some(a), Some(b)) =
                    (model.param(&map.params[1]), model.param(&map.params[0]))
                {
                    pui.points(
                        Points::new("now", vec![[a, b]])
                            .shape(MarkerShape::Cross)
                            .color(Color32::BLACK)
                            .radius(7.0),
                    );
                }
                pui.pointer_coordinate().map(|p| [p.x, p.y])
            });
        let t = &response.transform;
        self.points_per_unit = [t.dpos_dvalue_x().abs(), t.dpos_dvalue_y().abs()];
        let r = response
            .response
            .on_hover_text_at_pointer("Click: set both parameters here in the plane");
        if r.clicked()
            && let Some([a, b]) = response.inner
        {
            for (name, v) in [(&map.params[1], a), (&map.params[0], b)] {
                crate::sweep_view::set_param(scenario, name, v, out);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_map_of_rosenzweig_macarthur_has_cycles_exactly_past_the_hopf_curve() {
        // Rosenzweig–MacArthur: x* = m/(a(b − m·h)) and the Hopf curve K_H(m) = 2x* + 1/(a·h)
        // (Rosenzweig 1971); above it the coexistence equilibrium repels and orbits go to a
        // limit cycle, so no equilibrium is stable; below it (and above x*) it attracts.
        let spec = quarry_core::library::builtin("holling-ii")
            .expect("built in")
            .spec();
        let model = Model::new(&spec).expect("compiles");
        let (a, h, b) = (1.0, 0.5, 0.5);
        let map = stability_map(
            &model,
            ("K", 1.0, 8.0, 15),
            ("m", 0.1, 0.22, 7),
            &|| false,
            &|_| {},
        )
        .expect("map");
        let mut checked = 0;
        for (i, k) in map.values[0].iter().enumerate() {
            for (j, m) in map.values[1].iter().enumerate() {
                let x_star = m / (a * (b - m * h));
                let k_h = 2.0 * x_star + 1.0 / (a * h);
                // Skip cells within a grid step of either boundary.
                if (k - k_h).abs() < 0.5 || (k - x_star).abs() < 0.5 {
                    continue;
                }
                let got = regime(&map.cells[i * map.values[1].len() + j]);
                let want = if *k > k_h {
                    Regime::NoneStable
                } else {
                    Regime::OneStable
                };
                assert_eq!(got, want, "K = {k}, m = {m}, K_H = {k_h}");
                checked += 1;
            }
        }
        assert!(checked > 60, "{checked}");
    }
}
