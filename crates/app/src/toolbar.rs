//! The bar across the top: the model, undo/redo, the view, and which panels are open.

use std::path::PathBuf;

use egui::{Button, RichText, Ui};
use quarry_core::library::BUILTINS;

use crate::command::{Command, PanelKind};
use crate::export::ExportKind;
use crate::files::FileAction;
use crate::scenario::Scenario;

/// Which panels are open.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct OpenPanels {
    /// The model editor.
    pub editor: bool,
    /// The equilibria table.
    pub equilibria: bool,
    /// The cautions.
    pub cautions: bool,
    /// The help.
    pub help: bool,
    /// The time series under the plane.
    pub time_series: bool,
    /// The parameter sweep window.
    pub sweep: bool,
    /// The sustained-yield window.
    pub yield_curve: bool,
}

impl Default for OpenPanels {
    fn default() -> Self {
        Self {
            editor: false,
            equilibria: true,
            cautions: false,
            help: false,
            time_series: true,
            sweep: false,
            yield_curve: false,
        }
    }
}

impl OpenPanels {
    /// Whether a panel is open.
    pub fn is_open(&self, kind: PanelKind) -> bool {
        match kind {
            PanelKind::Editor => self.editor,
            PanelKind::Equilibria => self.equilibria,
            PanelKind::Cautions => self.cautions,
            PanelKind::Help => self.help,
            PanelKind::TimeSeries => self.time_series,
            PanelKind::Sweep => self.sweep,
            PanelKind::Yield => self.yield_curve,
        }
    }

    /// Opens or closes a panel.
    pub fn set(&mut self, kind: PanelKind, open: bool) {
        match kind {
            PanelKind::Editor => self.editor = open,
            PanelKind::Equilibria => self.equilibria = open,
            PanelKind::Cautions => self.cautions = open,
            PanelKind::Help => self.help = open,
            PanelKind::TimeSeries => self.time_series = open,
            PanelKind::Sweep => self.sweep = open,
            PanelKind::Yield => self.yield_curve = open,
        }
    }
}

/// What the toolbar needs to know besides the scenario.
#[derive(Clone, Copy, Debug)]
pub struct ToolbarState<'a> {
    /// Files opened or saved lately, newest first.
    pub recent: &'a [PathBuf],
    /// Whether undo has something to do.
    pub can_undo: bool,
    /// Whether redo has something to do.
    pub can_redo: bool,
    /// The plot's visible bounds, for "use view as window".
    pub view: Option<[f64; 4]>,
    /// Which panels are open.
    pub panels: OpenPanels,
}

/// The top bar.
#[derive(Debug, Default)]
pub struct Toolbar;

impl Toolbar {
    /// Draws the bar.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        state: ToolbarState<'_>,
        out: &mut Vec<Command>,
    ) {
        ui.horizontal(|ui| {
            ui.label(RichText::new("Quarry").strong().size(16.0));
            ui.separator();
            ui.menu_button("File", |ui| {
                let item = |ui: &mut Ui, text: &str, keys: &str| {
                    ui.add(Button::new(text).shortcut_text(keys)).clicked()
                };
                if item(ui, "New scenario", "Ctrl+N") {
                    out.push(Command::New);
                }
                if item(ui, "Open…", "Ctrl+O") {
                    out.push(Command::ShowFileWindow(FileAction::Open));
                }
                ui.menu_button("Open recent", |ui| {
                    if state.recent.is_empty() {
                        ui.weak("No recent files");
                    }
                    for p in state.recent {
                        let name = p
                            .file_name()
                            .map(|n| n.to_string_lossy().into_owned())
                            .unwrap_or_else(|| p.display().to_string());
                        if ui
                            .button(name)
                            .on_hover_text(p.display().to_string())
                            .clicked()
                        {
                            out.push(Command::Open(p.clone()));
                        }
                    }
                });
                ui.separator();
                if item(ui, "Save", "Ctrl+S") {
                    out.push(Command::Save);
                }
                if item(ui, "Save as…", "Ctrl+Shift+S") {
                    out.push(Command::ShowFileWindow(FileAction::SaveAs));
                }
            });
            ui.menu_button("Export", |ui| {
                for kind in ExportKind::ALL {
                    if ui.button(kind.label()).clicked() {
                        out.push(Command::ShowExport(kind));
                    }
                }
            });
            ui.separator();
            let l = ui.label("Model");
            let combo = egui::ComboBox::from_id_salt("toolbar-library")
                .selected_text(scenario.spec.name.as_str())
                .width(170.0)
                .show_ui(ui, |ui| {
                    for (i, b) in BUILTINS.iter().enumerate() {
                        if ui
                            .selectable_label(scenario.spec.name == b.key, b.key)
                            .on_hover_text(b.summary)
                            .clicked()
                        {
                            out.push(Command::LoadBuiltin(i));
                        }
                    }
                });
            combo.response.labelled_by(l.id);
            ui.separator();
            if ui
                .add_enabled(state.can_undo, Button::new("Undo"))
                .on_hover_text("Ctrl+Z")
                .clicked()
            {
                out.push(Command::Undo);
            }
            if ui
                .add_enabled(state.can_redo, Button::new("Redo"))
                .on_hover_text("Ctrl+Shift+Z")
                .clicked()
            {
                out.push(Command::Redo);
            }
            ui.separator();
            ui.menu_button("View", |ui| {
                if ui
                    .add(Button::new("Reset view").shortcut_text("Home"))
                    .on_hover_text("Show the model's whole window")
                    .clicked()
                {
                    out.push(Command::ResetView);
                }
                if ui
                    .add_enabled(state.view.is_some(), Button::new("Use view as window"))
                    .on_hover_text("Recompute the field, curves and equilibria over what you see")
                    .clicked()
                    && let Some(v) = state.view
                {
                    out.push(Command::UseViewAsWindow(v));
                }
            });
            ui.separator();
            for (kind, text, hint) in [
                (
                    PanelKind::Editor,
                    "Edit model",
                    "Formulas, names, parameters (E)",
                ),
                (
                    PanelKind::TimeSeries,
                    "Time series",
                    "Both variables against time, with playback",
                ),
                (
                    PanelKind::Sweep,
                    "Sweep",
                    "Equilibria and bifurcations over a range of one parameter",
                ),
                (
                    PanelKind::Yield,
                    "Yield",
                    "Sustained catch against effort or quota: MSY, collapse, open access, MEY",
                ),
                (
                    PanelKind::Equilibria,
                    "Equilibria",
                    "The table under the plane",
                ),
                (
                    PanelKind::Cautions,
                    "Cautions",
                    "What these pictures are and are not",
                ),
                (
                    PanelKind::Help,
                    "Help",
                    "How to use the plane, and shortcuts (F1)",
                ),
            ] {
                let open = state.panels.is_open(kind);
                if ui
                    .selectable_label(open, text)
                    .on_hover_text(hint)
                    .clicked()
                {
                    out.push(Command::ShowPanel(kind, !open));
                }
            }
        });
    }
}
