//! The bar along the bottom: the state under the pointer and its rates, whether a scene is
//! being computed, and the standing caution.

use egui::{RichText, Ui};
use quarry_core::model::Model;

use crate::cautions;
use crate::command::{Command, PanelKind};
use crate::style::num;

/// What the status bar shows besides the model.
#[derive(Clone, Debug, Default)]
pub struct StatusState {
    /// The pointer on the plane, in plot space.
    pub hover: Option<[f64; 2]>,
    /// Whether a newer scene is being computed.
    pub busy: bool,
    /// How long the shown scene took, in milliseconds.
    pub scene_ms: Option<f64>,
    /// A problem met at start-up.
    pub notice: Option<String>,
}

/// The hover readout: both variables and both rates at a point.
pub fn readout(model: &Model, at: [f64; 2]) -> String {
    let [x, y] = model.variables();
    let [u, v] = model.rates(at[0], at[1]);
    format!(
        "{x} = {}   {y} = {}      d{x}/dt = {}   d{y}/dt = {}",
        num(at[0]),
        num(at[1]),
        num(u),
        num(v)
    )
}

/// The status bar.
#[derive(Debug, Default)]
pub struct StatusBar;

impl StatusBar {
    /// Draws the bar.
    pub fn ui(&mut self, ui: &mut Ui, model: &Model, state: &StatusState, out: &mut Vec<Command>) {
        ui.horizontal(|ui| {
            if let Some(n) = &state.notice {
                ui.colored_label(crate::style::ERROR, n);
                ui.separator();
            }
            match state.hover {
                Some(at) => ui.label(RichText::new(readout(model, at)).monospace()),
                None => ui.weak("Point at the plane to read the state and its rates."),
            };
            ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                if ui
                    .link(format!("{} — read more", cautions::SHORT))
                    .clicked()
                {
                    out.push(Command::ShowPanel(PanelKind::Cautions, true));
                }
                ui.separator();
                if state.busy {
                    ui.spinner();
                    ui.weak("computing…");
                } else if let Some(ms) = state.scene_ms {
                    ui.weak(format!("scene in {ms:.0} ms"));
                }
            });
        });
    }
}
