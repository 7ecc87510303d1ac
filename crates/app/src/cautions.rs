//! What the models are and are not: shown in full on request, and in one line in the status
//! bar at all times.

use egui::{RichText, Ui};

/// The one-line reminder in the status bar.
pub const SHORT: &str = "Illustrative models, not a stock assessment";

/// The cautions panel.
#[derive(Debug, Default)]
pub struct CautionsPanel;

impl CautionsPanel {
    /// Draws the cautions.
    pub fn ui(&mut self, ui: &mut Ui) {
        ui.set_max_width(460.0);
        ui.label(RichText::new("What these pictures are").strong());
        ui.label(
            "The models here are simplified illustrations of how two populations can interact. \
             Their default numbers are invented round values chosen to show typical behaviour; \
             they are not estimates for any real stock.",
        );
        ui.add_space(6.0);
        ui.label(RichText::new("What they are not").strong());
        ui.label(
            "Nothing Quarry draws or computes is a stock assessment. Equilibria, cycles and \
             harvest scenarios shown here leave out age structure, the environment, \
             uncertainty in the data and much else that real assessments account for.",
        );
        ui.add_space(6.0);
        ui.label(
            "Management decisions rest on assessed data, local regulations and licensed \
             scientific advice — not on these illustrations.",
        );
    }
}
