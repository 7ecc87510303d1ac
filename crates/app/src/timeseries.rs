//! Both variables against time for the selected orbits, linked to the plane: a time hovered
//! here is marked on the orbits in the plane, and a point hovered on an orbit in the plane is
//! marked here. Playback moves a point along the selected orbits with this plot's cursor in
//! step.

use std::time::Instant;

use egui::{Button, DragValue, Ui};
use egui_plot::{Line, LineStyle, Plot, Points, VLine};
use quarry_core::scene::{Scene, SceneOrbit};

use crate::command::Command;
use crate::plane::match_orbits;
use crate::scenario::{OrbitSeed, Scenario};
use crate::style;

/// The state of an orbit at time `t`, interpolated linearly between its stored points;
/// `None` outside the orbit's time span.
pub fn state_at(orbit: &SceneOrbit, t: f64) -> Option<[f64; 2]> {
    let times = &orbit.times;
    let (first, last) = (*times.first()?, *times.last()?);
    if !(t >= first && t <= last) || times.len() != orbit.points.len() {
        return None;
    }
    let i = times.partition_point(|&s| s <= t);
    if i == 0 {
        return orbit.points.first().copied();
    }
    if i >= times.len() {
        return orbit.points.last().copied();
    }
    let (t0, t1) = (times[i - 1], times[i]);
    let (p0, p1) = (orbit.points[i - 1], orbit.points[i]);
    let w = if t1 > t0 { (t - t0) / (t1 - t0) } else { 0.0 };
    Some([p0[0] + w * (p1[0] - p0[0]), p0[1] + w * (p1[1] - p0[1])])
}

/// The selected orbits that are shown, with their seeds, in list order.
pub fn selected_orbits<'a>(
    scenario: &'a Scenario,
    scene: &'a Scene,
    selection: &[u64],
) -> Vec<(&'a OrbitSeed, &'a SceneOrbit)> {
    scenario
        .seeds
        .iter()
        .zip(match_orbits(&scenario.seeds, scene))
        .filter(|(s, _)| s.visible && selection.contains(&s.id))
        .filter_map(|(s, o)| o.map(|o| (s, o)))
        .collect()
}

/// The time span covered by some orbits.
pub fn time_span<'a>(orbits: impl IntoIterator<Item = &'a SceneOrbit>) -> Option<(f64, f64)> {
    let mut span: Option<(f64, f64)> = None;
    for o in orbits {
        if let (Some(&a), Some(&b)) = (o.times.first(), o.times.last()) {
            span = Some(match span {
                Some((lo, hi)) => (lo.min(a), hi.max(b)),
                None => (a, b),
            });
        }
    }
    span
}

/// Playback: a time that moves at the scenario's speed while playing.
#[derive(Debug, Default)]
pub struct Player {
    /// Whether time is moving.
    pub playing: bool,
    /// The current playback time, when playback has been used.
    pub time: Option<f64>,
    last_tick: Option<Instant>,
}

impl Player {
    /// Starts or pauses; starting at the end (or before any time is set) goes back to the
    /// start.
    pub fn toggle(&mut self, span: Option<(f64, f64)>) {
        self.playing = !self.playing;
        self.last_tick = None;
        if self.playing
            && let Some((lo, hi)) = span
            && self.time.is_none_or(|t| t >= hi || t < lo)
        {
            self.time = Some(lo);
        }
    }

    /// Moves time on by the wall-clock time since the last tick, times `speed`; loops or
    /// stops at the end of `span`.
    pub fn tick(&mut self, now: Instant, speed: f64, looped: bool, span: Option<(f64, f64)>) {
        let Some((lo, hi)) = span else {
            self.playing = false;
            return;
        };
        if !self.playing {
            self.last_tick = None;
            return;
        }
        let dt = self
            .last_tick
            .map_or(0.0, |last| now.duration_since(last).as_secs_f64());
        self.last_tick = Some(now);
        let mut t = self.time.unwrap_or(lo).clamp(lo, hi) + dt * speed;
        if t > hi {
            if looped && hi > lo {
                t = lo + (t - hi) % (hi - lo);
            } else {
                t = hi;
                self.playing = false;
            }
        }
        self.time = Some(t);
    }
}

/// The time-series panel.
#[derive(Debug, Default)]
pub struct TimeSeriesPanel {
    /// The time under the pointer on the last frame, if the plot was hovered.
    pub hover_time: Option<f64>,
}

impl TimeSeriesPanel {
    /// Draws the playback bar and the plot. `cursor` is the time to mark (playback or a
    /// point hovered in the plane).
    #[allow(clippy::too_many_arguments)]
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        scene: Option<&Scene>,
        selection: &[u64],
        player: &Player,
        cursor: Option<f64>,
        out: &mut Vec<Command>,
    ) {
        let orbits = scene
            .map(|s| selected_orbits(scenario, s, selection))
            .unwrap_or_default();
        let span = time_span(orbits.iter().map(|(_, o)| *o));
        let [xn, yn] = &scenario.spec.variables;
        ui.horizontal(|ui| {
            ui.strong("Against time");
            ui.separator();
            let play_text = if player.playing {
                "⏸ Pause"
            } else {
                "▶ Play"
            };
            if ui
                .add_enabled(span.is_some(), Button::new(play_text))
                .on_hover_text("Move a point along the selected orbits (Space)")
                .clicked()
            {
                out.push(Command::TogglePlayback);
            }
            if let Some((lo, hi)) = span {
                let mut t = player.time.unwrap_or(lo).clamp(lo, hi);
                let r = ui.add(
                    egui::Slider::new(&mut t, lo..=hi)
                        .text("t")
                        .max_decimals(2)
                        .clamping(egui::SliderClamping::Always),
                );
                style::accessible_name(ui, &r, "playback time");
                if r.changed() {
                    out.push(Command::SetPlaybackTime(t));
                }
            }
            let l = ui.label("speed");
            let mut speed = scenario.playback.speed;
            let r = ui
                .add(
                    DragValue::new(&mut speed)
                        .range(0.01..=10_000.0)
                        .speed(0.05)
                        .max_decimals(2)
                        .suffix(" per s"),
                )
                .labelled_by(l.id)
                .on_hover_text("Model time units per second of playback");
            style::accessible_name(ui, &r, "playback speed");
            if r.changed() && speed.is_finite() && speed > 0.0 {
                out.push(Command::SetPlaybackSpeed(speed));
            }
            let mut looped = scenario.playback.looped;
            if ui.checkbox(&mut looped, "Loop").changed() {
                out.push(Command::SetPlaybackLoop(looped));
            }
            if span.is_some() {
                // The key: line style tells the variable, colour the orbit (as in the plane).
                ui.separator();
                line_key(ui, false);
                ui.label(xn.as_str());
                line_key(ui, true);
                ui.label(yn.as_str());
                ui.weak("· colour: orbit");
            }
        });
        if orbits.is_empty() {
            ui.weak(
                "Select orbits in the list (click a row; Ctrl+click adds) to see them against \
                 time. A new orbit is selected as it starts.",
            );
            self.hover_time = None;
            return;
        }
        let units: Vec<&str> = scenario
            .variable_info
            .iter()
            .map(|v| v.unit.as_str())
            .collect();
        let y_label = if !units[0].is_empty() && units[0] == units[1] {
            units[0].to_owned()
        } else {
            format!("{xn}, {yn}")
        };
        let plot = Plot::new("time-series")
            .custom_x_axes(style::x_axis("time"))
            .y_axis_label(y_label)
            .allow_double_click_reset(true)
            .show_crosshair(false)
            .label_formatter(|_| None);
        let response = plot.show(ui, |pui| {
            for (seed, orbit) in &orbits {
                let colour = style::orbit_colour(seed.id);
                for (k, name, line_style) in [
                    (0, xn.clone(), LineStyle::Solid),
                    (1, yn.clone(), LineStyle::Dashed { length: 8.0 }),
                ] {
                    let pts: Vec<[f64; 2]> = orbit
                        .times
                        .iter()
                        .zip(&orbit.points)
                        .map(|(t, p)| [*t, p[k]])
                        .collect();
                    pui.line(
                        Line::new(format!("{name} · #{}", seed.id), pts)
                            .color(colour)
                            .width(1.8)
                            .style(line_style)
                            .allow_hover(false),
                    );
                }
                if let Some(t) = cursor
                    && let Some(p) = state_at(orbit, t)
                {
                    pui.points(
                        Points::new("", vec![[t, p[0]], [t, p[1]]])
                            .color(colour)
                            .filled(true)
                            .radius(4.0)
                            .allow_hover(false),
                    );
                }
            }
            if let Some(t) = cursor {
                pui.vline(
                    VLine::new("", t)
                        .color(egui::Color32::from_gray(90))
                        .width(1.0)
                        .allow_hover(false),
                );
            }
            if pui.response().hovered() {
                pui.pointer_coordinate().map(|p| p.x)
            } else {
                None
            }
        });
        self.hover_time = response.inner.filter(|t| t.is_finite());
    }
}

/// A short sample of a time-series line, solid or dashed, for the key.
fn line_key(ui: &mut Ui, dashed: bool) {
    let (rect, _) = ui.allocate_exact_size(egui::vec2(26.0, 12.0), egui::Sense::hover());
    let stroke = egui::Stroke::new(1.8, ui.visuals().strong_text_color());
    let (a, b) = (rect.left_center(), rect.right_center());
    if dashed {
        ui.painter()
            .extend(egui::Shape::dashed_line(&[a, b], stroke, 8.0, 4.0));
    } else {
        ui.painter().line_segment([a, b], stroke);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::scene::OrbitSummary;

    fn orbit() -> SceneOrbit {
        SceneOrbit {
            seed: [0.0, 0.0],
            times: vec![-1.0, 0.0, 2.0],
            points: vec![[1.0, 10.0], [0.0, 0.0], [4.0, 2.0]],
            summary: OrbitSummary::default(),
        }
    }

    #[test]
    fn the_state_at_a_time_interpolates_between_stored_points() {
        let o = orbit();
        assert_eq!(state_at(&o, -1.0), Some([1.0, 10.0]));
        assert_eq!(state_at(&o, 1.0), Some([2.0, 1.0]));
        assert_eq!(state_at(&o, 2.0), Some([4.0, 2.0]));
        assert_eq!(state_at(&o, 2.5), None);
        assert_eq!(state_at(&o, f64::NAN), None);
    }

    #[test]
    fn playback_loops_or_stops_at_the_end() {
        let span = Some((0.0, 10.0));
        let t0 = Instant::now();
        let mut p = Player::default();
        p.toggle(span);
        assert_eq!(p.time, Some(0.0));
        p.tick(t0, 4.0, true, span);
        p.tick(t0 + std::time::Duration::from_secs(3), 4.0, true, span);
        // 12 time units on a 10-long loop: back at 2.
        assert!(
            (p.time.unwrap_or(f64::NAN) - 2.0).abs() < 1e-9,
            "{:?}",
            p.time
        );
        assert!(p.playing);
        p.tick(t0 + std::time::Duration::from_secs(6), 4.0, false, span);
        assert_eq!(p.time, Some(10.0));
        assert!(!p.playing, "stops at the end without looping");
        // Playing again from the end starts over.
        p.toggle(span);
        assert_eq!(p.time, Some(0.0));
    }
}
