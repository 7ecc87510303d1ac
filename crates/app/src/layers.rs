//! The layer list: one checkbox per thing the plane can draw.

use egui::{Color32, Ui, Vec2};

use crate::command::Command;
use crate::scenario::{Layer, LayerSwitch, Scenario};
use crate::style;

/// The layer list.
#[derive(Debug, Default)]
pub struct LayersPanel;

/// The colour a layer is drawn in, for the swatch beside its checkbox.
fn layer_colour(layer: Layer) -> Color32 {
    match layer {
        Layer::Field => style::FIELD[2],
        Layer::Streamlines => style::STREAMLINE,
        Layer::Nullclines => style::NULLCLINE_X,
        Layer::Equilibria => Color32::from_rgb(21, 128, 61),
        Layer::Separatrices => style::SEPARATRIX,
        Layer::LimitCycles => style::LIMIT_CYCLE,
        Layer::Orbits => style::ORBITS[0],
        Layer::Contours => style::CONTOUR,
        Layer::Linearisation => style::LINEARISED,
    }
}

impl LayersPanel {
    /// Draws the checkboxes; a toggle is a [`Command::SetLayer`].
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        has_first_integral: bool,
        out: &mut Vec<Command>,
    ) {
        ui.heading("Layers");
        egui::Grid::new("layers")
            .num_columns(2)
            .spacing([16.0, 2.0])
            .show(ui, |ui| {
                for (k, layer) in Layer::ALL.into_iter().enumerate() {
                    let mut on = scenario.layers.is_on(layer);
                    let enabled = layer != Layer::Contours || has_first_integral;
                    ui.horizontal(|ui| {
                        let (rect, _) =
                            ui.allocate_exact_size(Vec2::new(12.0, 12.0), egui::Sense::hover());
                        ui.painter()
                            .rect_filled(rect.shrink(2.0), 1.0, layer_colour(layer));
                        let mut r = ui
                            .add_enabled(enabled, egui::Checkbox::new(&mut on, layer.label()))
                            .on_disabled_hover_text(
                                "This model has no first integral; add one in the model editor.",
                            );
                        if layer == Layer::Linearisation {
                            r = r.on_hover_text(
                                "The linearised solution from each orbit's start, about the \
                                 nearest equilibrium that is not a saddle: where it parts from \
                                 the orbit, the linear picture stops holding.",
                            );
                        }
                        if r.changed() {
                            out.push(Command::SetLayer(layer, on));
                        }
                    });
                    if k % 2 == 1 {
                        ui.end_row();
                    }
                }
            });
    }
}
