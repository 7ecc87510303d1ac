//! The app: the scenario, its caches, the panels, and the loop that applies their commands.

use egui::{Key, KeyboardShortcut, Modifiers, Panel, Ui};
use quarry_core::library::{BUILTINS, default_model};
use quarry_core::model::{Model, ModelError, ModelSpec, Window};
use quarry_core::scene::{Scene, TimeDirection};

use crate::cautions::CautionsPanel;
use crate::command::{Command, PanelKind};
use crate::editor::ModelEditor;
use crate::equilibria::EquilibriaPanel;
use crate::help::HelpPanel;
use crate::history::History;
use crate::layers::LayersPanel;
use crate::orbits::OrbitsPanel;
use crate::params::ParamsPanel;
use crate::plane::PlanePanel;
use crate::scenario::Scenario;
use crate::status::{StatusBar, StatusState};
use crate::toolbar::{OpenPanels, Toolbar, ToolbarState};
use crate::worker::SceneSource;

/// The window title for a scenario.
pub fn title_for(spec: &ModelSpec) -> String {
    let name = spec.name.trim();
    if name.is_empty() {
        "Quarry — untitled model".to_owned()
    } else {
        format!("Quarry — {name}")
    }
}

/// The whole app.
pub struct QuarryApp {
    /// What the user has set up (undo/redo snapshots this).
    scenario: Scenario,
    history: History,
    /// The scenario's model, compiled (a cache of `scenario.spec`).
    model: Model,
    /// Scenes of the scenario (a cache).
    scenes: SceneSource,
    panels: OpenPanels,
    toolbar: Toolbar,
    plane: PlanePanel,
    params: ParamsPanel,
    layers: LayersPanel,
    orbits: OrbitsPanel,
    equilibria: EquilibriaPanel,
    editor: ModelEditor,
    cautions: CautionsPanel,
    help: HelpPanel,
    status: StatusBar,
    /// The title last sent to the window.
    title: String,
    /// A problem met at start-up, shown in the status bar.
    notice: Option<String>,
}

impl QuarryApp {
    /// The app on `spec`, computing scenes on a background thread that repaints `ctx`.
    pub fn new(spec: ModelSpec, ctx: &egui::Context) -> Self {
        ctx.set_theme(egui::Theme::Light);
        Self::with_source(spec, SceneSource::background(ctx.clone()))
    }

    /// The app on `spec`, computing each scene before the frame ends (for tests).
    pub fn new_synchronous(spec: ModelSpec) -> Self {
        Self::with_source(spec, SceneSource::synchronous())
    }

    fn with_source(spec: ModelSpec, scenes: SceneSource) -> Self {
        let (spec, model, notice) = match Model::new(&spec) {
            Ok(model) => (spec, model, None),
            Err(e) => {
                let fallback = default_model();
                let model = Model::new(&fallback).expect("the built-in default model compiles");
                let notice = format!("{e}; opened {} instead", fallback.name);
                (fallback, model, Some(notice))
            }
        };
        let mut app = Self {
            editor: ModelEditor::new(&spec),
            scenario: Scenario::new(spec),
            history: History::new(),
            model,
            scenes,
            panels: OpenPanels::default(),
            toolbar: Toolbar,
            plane: PlanePanel::default(),
            params: ParamsPanel,
            layers: LayersPanel,
            orbits: OrbitsPanel,
            equilibria: EquilibriaPanel,
            cautions: CautionsPanel,
            help: HelpPanel,
            status: StatusBar,
            title: String::new(),
            notice,
        };
        app.request_scene();
        app
    }

    /// What the user has set up.
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// The scene on screen, if one has been computed.
    pub fn scene(&self) -> Option<&Scene> {
        self.scenes.shown().map(|s| &s.scene)
    }

    /// Whether a newer scene than the one shown is being computed.
    pub fn is_busy(&self) -> bool {
        self.scenes.is_busy()
    }

    /// The plane's rectangle on screen on the last frame.
    pub fn plane_rect(&self) -> Option<egui::Rect> {
        self.plane.screen_rect
    }

    /// Why the model editor's text does not compile, if it does not.
    pub fn editor_error(&self) -> Option<&ModelError> {
        self.editor.error()
    }

    /// The window title.
    pub fn title(&self) -> String {
        title_for(&self.scenario.spec)
    }

    /// Opens or closes a panel, as its toolbar button does.
    pub fn show_panel(&mut self, kind: PanelKind, open: bool) {
        self.panels.set(kind, open);
    }

    /// Draws one frame and applies what the user asked for.
    pub fn frame_ui(&mut self, ui: &mut Ui) {
        self.scenes.poll();
        let mut out = Vec::new();
        self.shortcuts(ui.ctx(), &mut out);

        let shown = self.scenes.shown();
        let scene = shown.map(|s| &s.scene);
        let busy = self.scenes.is_busy();

        let toolbar_state = ToolbarState {
            can_undo: self.history.can_undo(),
            can_redo: self.history.can_redo(),
            view: self.plane.view,
            panels: self.panels,
        };
        Panel::top("toolbar").show(ui, |ui| {
            ui.add_space(2.0);
            self.toolbar.ui(ui, &self.scenario, toolbar_state, &mut out);
            ui.add_space(2.0);
        });

        let status_state = StatusState {
            hover: self.plane.hover,
            busy,
            scene_ms: shown.map(|s| s.elapsed.as_secs_f64() * 1000.0),
            notice: self.notice.clone(),
        };
        Panel::bottom("status").show(ui, |ui| {
            self.status.ui(ui, &self.model, &status_state, &mut out);
        });

        Panel::left("controls")
            .resizable(true)
            .default_size(340.0)
            .min_size(260.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical()
                    .auto_shrink([false, false])
                    .show(ui, |ui| {
                        ui.add_space(4.0);
                        self.params.ui(ui, &self.scenario, &mut out);
                        ui.separator();
                        self.layers
                            .ui(ui, &self.scenario, self.model.has_invariant(), &mut out);
                        ui.separator();
                        self.orbits.ui(ui, &self.scenario, scene, busy, &mut out);
                    });
            });

        if self.panels.editor {
            Panel::right("editor")
                .resizable(true)
                .default_size(380.0)
                .min_size(280.0)
                .show(ui, |ui| {
                    egui::ScrollArea::vertical()
                        .auto_shrink([false, false])
                        .show(ui, |ui| {
                            ui.add_space(4.0);
                            self.editor.ui(ui, &self.scenario.spec, &mut out);
                        });
                });
        }

        if self.panels.equilibria {
            Panel::bottom("equilibria")
                .resizable(true)
                .default_size(210.0)
                .min_size(90.0)
                .show(ui, |ui| {
                    ui.add_space(4.0);
                    ui.heading("Equilibria");
                    self.equilibria.ui(ui, scene, &self.scenario.spec.variables);
                });
        }

        egui::CentralPanel::default().show(ui, |ui| {
            self.plane.ui(ui, &self.scenario, scene, &mut out);
        });

        let ctx = ui.ctx().clone();
        let mut open = self.panels.cautions;
        egui::Window::new("About the models")
            .open(&mut open)
            .resizable(false)
            .collapsible(false)
            .show(&ctx, |ui| self.cautions.ui(ui));
        if open != self.panels.cautions {
            out.push(Command::ShowPanel(PanelKind::Cautions, open));
        }
        let mut open = self.panels.help;
        egui::Window::new("Help")
            .open(&mut open)
            .resizable(false)
            .show(&ctx, |ui| self.help.ui(ui));
        if open != self.panels.help {
            out.push(Command::ShowPanel(PanelKind::Help, open));
        }

        for command in out {
            self.apply(command);
        }
        self.request_scene();
        let title = self.title();
        if title != self.title {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title = title;
        }
    }

    fn shortcuts(&self, ctx: &egui::Context, out: &mut Vec<Command>) {
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        let redo_shift = KeyboardShortcut::new(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z);
        let redo_y = KeyboardShortcut::new(Modifiers::COMMAND, Key::Y);
        let undo = KeyboardShortcut::new(Modifiers::COMMAND, Key::Z);
        ctx.input_mut(|i| {
            if i.consume_shortcut(&redo_shift) || i.consume_shortcut(&redo_y) {
                out.push(Command::Redo);
            } else if i.consume_shortcut(&undo) {
                out.push(Command::Undo);
            }
            let plain = |i: &mut egui::InputState, key| i.consume_key(Modifiers::NONE, key);
            if plain(i, Key::Home) {
                out.push(Command::ResetView);
            }
            for (key, d) in [
                (Key::F, TimeDirection::Forward),
                (Key::B, TimeDirection::Backward),
                (Key::T, TimeDirection::Both),
            ] {
                if plain(i, key) {
                    out.push(Command::SetOrbitDirection(d));
                }
            }
            if plain(i, Key::Delete)
                && let Some(last) = self.scenario.seeds.last()
            {
                out.push(Command::RemoveOrbit(last.id));
            }
            if plain(i, Key::E) {
                out.push(Command::ShowPanel(PanelKind::Editor, !self.panels.editor));
            }
            if plain(i, Key::F1) {
                out.push(Command::ShowPanel(PanelKind::Help, !self.panels.help));
            }
        });
    }

    /// Applies one command; undoable ones that change something are recorded first.
    pub fn apply(&mut self, command: Command) {
        if command.is_undoable() {
            let before = self.scenario.clone();
            if self.change_scenario(&command) {
                self.history.record(&before, command.merge_key());
            }
            return;
        }
        match command {
            Command::Undo => {
                if let Some(s) = self.history.undo(&self.scenario) {
                    self.restore(s);
                }
            }
            Command::Redo => {
                if let Some(s) = self.history.redo(&self.scenario) {
                    self.restore(s);
                }
            }
            Command::EndGesture => self.history.close_step(),
            Command::SetOrbitDirection(d) => self.scenario.new_orbit_direction = d,
            Command::SetLayer(layer, on) => self.scenario.layers.set(layer, on),
            Command::ResetView => self.plane.reset_view(),
            Command::ShowPanel(kind, open) => self.panels.set(kind, open),
            _ => {}
        }
    }

    /// Puts back a snapshot from the history, keeping the view settings (layers, the
    /// direction of new orbits) as they are now.
    fn restore(&mut self, mut snapshot: Scenario) {
        let Ok(model) = Model::new(&snapshot.spec) else {
            return;
        };
        snapshot.layers = self.scenario.layers;
        snapshot.new_orbit_direction = self.scenario.new_orbit_direction;
        if snapshot.spec.window != self.scenario.spec.window {
            self.plane.reset_view();
        }
        self.scenario = snapshot;
        self.model = model;
        self.editor.reset_to(&self.scenario.spec);
    }

    /// Replaces the model with a spec that compiles; false (and no change) when it does not.
    fn replace_model(&mut self, spec: ModelSpec) -> bool {
        let Ok(model) = Model::new(&spec) else {
            return false;
        };
        if spec.window != self.scenario.spec.window {
            self.plane.reset_view();
        }
        self.scenario.replace_model(spec);
        self.model = model;
        true
    }

    fn set_param(&mut self, index: usize, value: f64) -> bool {
        let Some(p) = self.scenario.spec.parameters.get(index) else {
            return false;
        };
        if !value.is_finite() || p.value == value {
            return false;
        }
        let name = p.name.clone();
        if self.model.set_param(&name, value).is_err() {
            return false;
        }
        if let Some(p) = self.scenario.spec.parameters.get_mut(index) {
            p.value = value;
        }
        true
    }

    /// Applies an undoable command to the scenario; returns whether anything changed.
    fn change_scenario(&mut self, command: &Command) -> bool {
        match command {
            Command::EditModel(spec) => {
                *spec != self.scenario.spec && self.replace_model(spec.clone())
            }
            Command::LoadBuiltin(i) => {
                let Some(builtin) = BUILTINS.get(*i) else {
                    return false;
                };
                let spec = builtin.spec();
                let Ok(model) = Model::new(&spec) else {
                    return false;
                };
                let mut fresh = Scenario::new(spec);
                fresh.layers = self.scenario.layers;
                fresh.new_orbit_direction = self.scenario.new_orbit_direction;
                fresh.next_seed_id = self.scenario.next_seed_id;
                self.scenario = fresh;
                self.model = model;
                self.editor.reset_to(&self.scenario.spec);
                self.plane.reset_view();
                true
            }
            Command::SetParam { index, value } => self.set_param(*index, *value),
            Command::ResetParam(index) => {
                let Some(d) = self.scenario.params.get(*index).map(|s| s.default) else {
                    return false;
                };
                self.set_param(*index, d)
            }
            Command::ResetAllParams => {
                let defaults: Vec<f64> = self.scenario.params.iter().map(|s| s.default).collect();
                let mut changed = false;
                for (index, d) in defaults.into_iter().enumerate() {
                    changed |= self.set_param(index, d);
                }
                changed
            }
            Command::SetParamRange { index, range } => match self.scenario.params.get_mut(*index) {
                Some(s) if s.range != *range => {
                    s.range = *range;
                    true
                }
                _ => false,
            },
            Command::SetParamLogarithmic { index, logarithmic } => {
                match self.scenario.params.get_mut(*index) {
                    Some(s) if s.logarithmic != *logarithmic => {
                        s.logarithmic = *logarithmic;
                        true
                    }
                    _ => false,
                }
            }
            Command::AddOrbit(at) if at.iter().all(|v| v.is_finite()) => {
                self.scenario.add_seed(*at);
                true
            }
            Command::RemoveOrbit(id) => {
                let n = self.scenario.seeds.len();
                self.scenario.seeds.retain(|s| s.id != *id);
                self.scenario.seeds.len() != n
            }
            Command::SetOrbitVisible(id, visible) => {
                match self.scenario.seeds.iter_mut().find(|s| s.id == *id) {
                    Some(s) if s.visible != *visible => {
                        s.visible = *visible;
                        true
                    }
                    _ => false,
                }
            }
            Command::ClearOrbits => {
                let had = !self.scenario.seeds.is_empty();
                self.scenario.seeds.clear();
                had
            }
            Command::SetOrbitTime(t)
                if t.is_finite() && *t > 0.0 && *t != self.scenario.orbit_time =>
            {
                self.scenario.orbit_time = *t;
                true
            }
            Command::UseViewAsWindow([x_min, x_max, y_min, y_max]) => {
                let mut spec = self.scenario.spec.clone();
                spec.window = Window {
                    x_min: *x_min,
                    x_max: *x_max,
                    y_min: *y_min,
                    y_max: *y_max,
                };
                spec.window != self.scenario.spec.window && self.replace_model(spec)
            }
            _ => false,
        }
    }

    fn request_scene(&mut self) {
        let request = self.scenario.scene_request();
        self.scenes.request(&self.model, &request);
    }
}

impl eframe::App for QuarryApp {
    fn ui(&mut self, ui: &mut Ui, _frame: &mut eframe::Frame) {
        self.frame_ui(ui);
    }
}
