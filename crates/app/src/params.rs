//! The parameters panel: a slider and a numeric field per parameter, reset, and the sliders'
//! ranges and scales.

use egui::{Button, DragValue, RichText, Slider, SliderClamping, Ui};

use crate::command::Command;
use crate::scenario::Scenario;
use crate::style;

/// Slider steps across its range for the numeric field's drag speed.
const DRAG_STEPS: f64 = 400.0;

/// The parameters panel.
#[derive(Debug, Default)]
pub struct ParamsPanel;

impl ParamsPanel {
    /// Draws the sliders; every change is a [`Command::SetParam`].
    pub fn ui(&mut self, ui: &mut Ui, scenario: &Scenario, out: &mut Vec<Command>) {
        let spec = &scenario.spec;
        ui.horizontal(|ui| {
            ui.heading("Parameters");
            ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                let any_moved = spec
                    .parameters
                    .iter()
                    .zip(&scenario.params)
                    .any(|(p, s)| p.value != s.default);
                if ui
                    .add_enabled(any_moved, Button::new("Reset all").small())
                    .on_hover_text("Every parameter back to its default")
                    .clicked()
                {
                    out.push(Command::ResetAllParams);
                }
            });
        });
        if spec.parameters.is_empty() {
            ui.weak("This model has no parameters.");
            return;
        }
        ui.spacing_mut().slider_width = 130.0;
        egui::Grid::new("params")
            .num_columns(4)
            .spacing([6.0, 6.0])
            .show(ui, |ui| {
                for (index, (p, setting)) in
                    spec.parameters.iter().zip(&scenario.params).enumerate()
                {
                    let mut label = ui.label(RichText::new(&p.name).monospace().strong());
                    let about = match (setting.description.trim(), setting.unit.trim()) {
                        ("", "") => String::new(),
                        (d, "") => d.to_owned(),
                        ("", u) => format!("unit: {u}"),
                        (d, u) => format!("{d} (unit: {u})"),
                    };
                    if !about.is_empty() {
                        label = label.on_hover_text(about);
                    }
                    let (lo, hi) = setting.slider_range();
                    let mut v = p.value;
                    let slider = ui
                        .add(
                            Slider::new(&mut v, lo..=hi)
                                .show_value(false)
                                .logarithmic(setting.logarithmic)
                                .clamping(SliderClamping::Edits),
                        )
                        .labelled_by(label.id);
                    if slider.changed() && v.is_finite() && v != p.value {
                        out.push(Command::SetParam { index, value: v });
                    }
                    if slider.drag_stopped() {
                        out.push(Command::EndGesture);
                    }
                    let mut typed = p.value;
                    let field = ui.add(
                        DragValue::new(&mut typed)
                            .speed((hi - lo) / DRAG_STEPS)
                            .max_decimals(6)
                            .min_decimals(2)
                            .custom_formatter(style::field_text),
                    );
                    style::accessible_name(ui, &field, format!("{} value", p.name));
                    if field.changed() && typed.is_finite() && typed != p.value {
                        out.push(Command::SetParam {
                            index,
                            value: typed,
                        });
                    }
                    if field.drag_stopped() || field.lost_focus() {
                        out.push(Command::EndGesture);
                    }
                    let moved = p.value != setting.default;
                    if ui
                        .add_enabled(moved, Button::new("↺").small())
                        .on_hover_text(format!("Back to {}", style::num(setting.default)))
                        .clicked()
                    {
                        out.push(Command::ResetParam(index));
                    }
                    ui.end_row();
                }
            });
        ui.add_space(2.0);
        egui::CollapsingHeader::new("Slider ranges")
            .id_salt("slider-ranges")
            .default_open(false)
            .show(ui, |ui| self.ranges_ui(ui, scenario, out));
    }

    fn ranges_ui(&mut self, ui: &mut Ui, scenario: &Scenario, out: &mut Vec<Command>) {
        ui.weak("Unset ranges run from 0 to twice the default.");
        egui::Grid::new("param-ranges")
            .num_columns(4)
            .spacing([6.0, 4.0])
            .show(ui, |ui| {
                for (index, (p, setting)) in scenario
                    .spec
                    .parameters
                    .iter()
                    .zip(&scenario.params)
                    .enumerate()
                {
                    ui.label(RichText::new(&p.name).monospace());
                    let (mut lo, mut hi) = setting.slider_range();
                    let speed = ((hi - lo) / DRAG_STEPS).max(1e-9);
                    let a = ui.add(
                        DragValue::new(&mut lo)
                            .speed(speed)
                            .prefix("from ")
                            .custom_formatter(style::field_text),
                    );
                    style::accessible_name(ui, &a, format!("{} slider from", p.name));
                    let b = ui.add(
                        DragValue::new(&mut hi)
                            .speed(speed)
                            .prefix("to ")
                            .custom_formatter(style::field_text),
                    );
                    style::accessible_name(ui, &b, format!("{} slider to", p.name));
                    if (a.changed() || b.changed()) && lo.is_finite() && hi.is_finite() && lo < hi {
                        out.push(Command::SetParamRange {
                            index,
                            range: Some((lo, hi)),
                        });
                    }
                    let mut log = setting.logarithmic;
                    let r = ui
                        .checkbox(&mut log, "log")
                        .on_hover_text("Move the slider on a logarithmic scale");
                    style::accessible_name(ui, &r, format!("{} logarithmic", p.name));
                    if r.changed() {
                        out.push(Command::SetParamLogarithmic {
                            index,
                            logarithmic: log,
                        });
                    }
                    ui.end_row();
                }
            });
        if ui.small_button("Default ranges").clicked() {
            for index in 0..scenario.params.len() {
                out.push(Command::SetParamRange { index, range: None });
            }
        }
    }
}
