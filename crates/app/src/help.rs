//! The help panel: how to use the plane, and every keyboard shortcut.

use egui::{RichText, Ui};

/// Every shortcut: keys, what they do. Shortcuts act while no text field has the keyboard.
pub const SHORTCUTS: &[(&str, &str)] = &[
    ("Ctrl+N", "New scenario (asks first over unsaved changes)"),
    ("Ctrl+O", "Open a scenario file (or drop one on the window)"),
    ("Ctrl+S", "Save the scenario to its file"),
    ("Ctrl+Shift+S", "Save the scenario as a new file"),
    ("Ctrl+Z", "Undo a model, parameter or orbit change"),
    ("Ctrl+Shift+Z  or  Ctrl+Y", "Redo"),
    ("Home", "Show the model's whole window"),
    ("F", "New orbits run forward in time"),
    ("B", "New orbits run backward in time"),
    ("T", "New orbits run both ways"),
    ("Delete", "Delete the newest orbit"),
    ("Space", "Play or pause the selected orbits"),
    ("E", "Open or close the model editor"),
    ("F1", "Open or close this help"),
];

/// The help panel.
#[derive(Debug, Default)]
pub struct HelpPanel;

impl HelpPanel {
    /// Draws the help.
    pub fn ui(&mut self, ui: &mut Ui) {
        ui.label(RichText::new("On the plane").strong());
        for line in [
            "Click: start an orbit from that state.",
            "Drag an orbit's start point: move the orbit (one undo step per drag).",
            "Hover an orbit that is selected: its time is marked in the time series, and back.",
            "Drag: pan.  Scroll or pinch: zoom.  Ctrl+scroll: zoom one axis.",
            "Click a legend entry to hide or show that layer.",
            "The grey frame is the model's window, where the field and curves are computed; \
             \"Use view as window\" recomputes over what you see.",
        ] {
            ui.label(line);
        }
        ui.add_space(6.0);
        ui.label(RichText::new("Keys").strong());
        egui::Grid::new("shortcuts")
            .num_columns(2)
            .striped(true)
            .show(ui, |ui| {
                for (keys, what) in SHORTCUTS {
                    ui.label(RichText::new(*keys).monospace());
                    ui.label(*what);
                    ui.end_row();
                }
            });
    }
}
