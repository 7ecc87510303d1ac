//! The orbit list: how new orbits run, and each orbit's colour, start, measurements, and
//! controls to hide or delete it.

use egui::{Button, DragValue, RichText, Ui};
use quarry_core::scene::{Scene, SceneOrbit, TimeDirection};

use crate::command::Command;
use crate::plane::match_orbits;
use crate::scenario::{OrbitSeed, Scenario};
use crate::style::{self, num};

/// The orbit list.
#[derive(Debug, Default)]
pub struct OrbitsPanel;

/// Which way in time, in words.
pub fn direction_text(d: TimeDirection) -> &'static str {
    match d {
        TimeDirection::Forward => "forward",
        TimeDirection::Backward => "backward",
        TimeDirection::Both => "both ways",
    }
}

/// One line of measurements for an orbit. `extent` is the window's size along each axis, for
/// [`quarry_core::orbit::shown_near_zero`].
pub fn summary_text(vars: &[String; 2], orbit: &SceneOrbit, extent: [f64; 2]) -> String {
    let s = &orbit.summary;
    let low = |k: usize| quarry_core::orbit::shown_near_zero(s.min[k], extent[k]);
    let [x, y] = vars;
    if s.closed
        && let Some(period) = s.period
    {
        let mut t = format!(
            "closed · period {} · mean {x} {}, {y} {}",
            num(period),
            num(s.mean[0]),
            num(s.mean[1])
        );
        if let Some(lag) = s.lag_fraction {
            let pct = 100.0 * lag;
            t.push_str(&format!(" · {y} peaks {pct:.0}% of a period after {x}"));
        }
        t
    } else {
        format!(
            "not closed · {x} {}…{}, {y} {}…{}",
            num(low(0)),
            num(s.max[0]),
            num(low(1)),
            num(s.max[1])
        )
    }
}

/// The mean catch (and profit) along a harvested orbit, over its whole cycles when it closes.
fn catch_text(scenario: &Scenario, orbit: &SceneOrbit) -> Option<String> {
    let h = &scenario.harvest;
    if !h.is_active() {
        return None;
    }
    let period = orbit.summary.period.filter(|_| orbit.summary.closed);
    let mean = h.mean_catch_along(&scenario.spec.window, &orbit.times, &orbit.points, period)?;
    let parts: Vec<String> = (0..2)
        .filter(|&i| h.rules[i] != quarry_core::harvest::HarvestRule::None)
        .map(|i| format!("{} {}", scenario.spec.variables[i], num(mean[i])))
        .collect();
    let over = if period.is_some() {
        "over whole cycles"
    } else {
        "to the end"
    };
    let mut text = format!("mean catch per unit time {over}: {}", parts.join(", "));
    if h.economics
        .iter()
        .any(|e| e.price > 0.0 || e.cost_per_effort > 0.0)
    {
        text.push_str(&format!(" · profit {}", num(h.profit(mean))));
    }
    Some(text)
}

/// The linearisation's period against the orbit's, when the linearisation layer computed
/// one for this seed.
fn linear_text(scene: &Scene, seed: &OrbitSeed) -> Option<String> {
    let o = crate::plane::overlay_for(scene, seed)?;
    Some(match (o.linear_period, o.nonlinear_period) {
        (Some(lin), Some(real)) => format!(
            "linearisation: period 2π/ω = {}, this orbit {} ({:+.1}%)",
            num(lin),
            num(real),
            100.0 * (real - lin) / lin
        ),
        (Some(lin), None) => format!("linearisation: period 2π/ω = {}", num(lin)),
        _ => "linearisation: no rotation (real eigenvalues)".to_owned(),
    })
}

impl OrbitsPanel {
    /// Draws the settings and the list.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        scene: Option<&Scene>,
        selection: &[u64],
        busy: bool,
        out: &mut Vec<Command>,
    ) {
        ui.horizontal(|ui| {
            ui.heading("Orbits");
            ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                if ui
                    .add_enabled(!scenario.seeds.is_empty(), Button::new("Clear").small())
                    .on_hover_text("Delete every orbit")
                    .clicked()
                {
                    out.push(Command::ClearOrbits);
                }
            });
        });
        ui.weak(
            "Click the plane to start an orbit there; drag its start point to move it. Click a \
             row to show that orbit against time (Ctrl+click adds it).",
        );
        ui.horizontal(|ui| {
            ui.label("Run");
            let mut d = scenario.new_orbit_direction;
            for (value, text) in [
                (TimeDirection::Forward, "forward"),
                (TimeDirection::Backward, "backward"),
                (TimeDirection::Both, "both ways"),
            ] {
                if ui.radio_value(&mut d, value, text).changed() {
                    out.push(Command::SetOrbitDirection(d));
                }
            }
        });
        ui.horizontal(|ui| {
            let l = ui.label("for");
            let mut t = scenario.orbit_time;
            let r = ui
                .add(
                    DragValue::new(&mut t)
                        .range(0.1..=100_000.0)
                        .speed(0.5)
                        .max_decimals(3),
                )
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "orbit run time");
            if r.changed() && t.is_finite() && t > 0.0 {
                out.push(Command::SetOrbitTime(t));
            }
            ui.label("time units each way");
        });
        if scenario.seeds.is_empty() {
            return;
        }
        let matched = scene
            .map(|s| match_orbits(&scenario.seeds, s))
            .unwrap_or_else(|| vec![None; scenario.seeds.len()]);
        ui.add_space(4.0);
        for (seed, orbit) in scenario.seeds.iter().zip(matched) {
            let selected = selection.contains(&seed.id);
            let overlay = scene.and_then(|s| linear_text(s, seed));
            self.row_ui(ui, scenario, seed, orbit, selected, overlay, busy, out);
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn row_ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        seed: &OrbitSeed,
        orbit: Option<&SceneOrbit>,
        selected: bool,
        linear: Option<String>,
        busy: bool,
        out: &mut Vec<Command>,
    ) {
        let [x, y] = &scenario.spec.variables;
        ui.horizontal(|ui| {
            style::colour_swatch(ui, style::orbit_colour(seed.id));
            let mut visible = seed.visible;
            let r = ui
                .checkbox(&mut visible, "")
                .on_hover_text("Show or hide this orbit");
            style::accessible_name(ui, &r, format!("show orbit #{}", seed.id));
            if r.changed() {
                out.push(Command::SetOrbitVisible(seed.id, visible));
            }
            let text = format!(
                "#{} {} from {x} {}, {y} {}",
                seed.id,
                direction_text(seed.direction),
                num(seed.at[0]),
                num(seed.at[1])
            );
            let r = ui
                .selectable_label(selected, RichText::new(text).strong())
                .on_hover_text("Show against time (Ctrl+click: add to the selection)");
            if r.clicked() {
                let toggle = ui.input(|i| i.modifiers.command || i.modifiers.shift);
                out.push(Command::SelectOrbit {
                    id: seed.id,
                    toggle,
                });
            }
            ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                let r = ui
                    .small_button("🗙")
                    .on_hover_text(format!("Delete orbit #{}", seed.id));
                style::accessible_name(ui, &r, format!("delete orbit #{}", seed.id));
                if r.clicked() {
                    out.push(Command::RemoveOrbit(seed.id));
                }
            });
        });
        let detail = match orbit {
            Some(o) => {
                let w = &scenario.spec.window;
                summary_text(&scenario.spec.variables, o, [w.width(), w.height()])
            }
            None if busy => "computing…".to_owned(),
            None => "no orbit from here: the rates are undefined at this start".to_owned(),
        };
        ui.horizontal(|ui| {
            ui.add_space(26.0);
            ui.add(egui::Label::new(RichText::new(detail).weak()).wrap());
        });
        if let Some(o) = orbit
            && let Some(text) = catch_text(scenario, o)
        {
            ui.horizontal(|ui| {
                ui.add_space(26.0);
                ui.add(egui::Label::new(RichText::new(text).weak()).wrap());
            });
        }
        if let Some(linear) = linear {
            ui.horizontal(|ui| {
                ui.add_space(26.0);
                ui.add(egui::Label::new(RichText::new(linear).weak().italics()).wrap());
            });
        }
        ui.add_space(2.0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::scene::OrbitSummary;

    #[test]
    fn rounding_below_an_invariant_axis_reads_as_zero_and_real_values_stay() {
        let vars = ["cod".to_owned(), "catch".to_owned()];
        let orbit = |min: [f64; 2]| SceneOrbit {
            seed: [20.0, 0.0],
            times: vec![0.0],
            points: vec![[20.0, 0.0]],
            summary: OrbitSummary {
                min,
                max: [20.0, 13.82],
                ..OrbitSummary::default()
            },
        };
        let t = summary_text(&vars, &orbit([-2.5e-8, -2.559e-10]), [220.0, 40.0]);
        assert_eq!(t, "not closed · cod 0…20, catch 0…13.82");
        // A true dip below zero, or a small positive minimum, is shown as it is.
        let t = summary_text(&vars, &orbit([-0.5, 1e-9]), [220.0, 40.0]);
        assert!(
            t.contains("cod −0.5…20") && t.contains("catch 1.000e−9…"),
            "{t}"
        );
    }
}
