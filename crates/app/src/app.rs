//! The app: the scenario, its caches, the panels, and the loop that applies their commands.

use std::path::{Path, PathBuf};
use std::time::Instant;

use egui::{Key, KeyboardShortcut, Modifiers, Panel, RichText, Ui};
use quarry_core::library::{BUILTINS, default_model};
use quarry_core::model::{Model, ModelError, ModelSpec, Window};
use quarry_core::scenario::{Scenario as ScenarioFile, default_scenario};
use quarry_core::scene::{Scene, TimeDirection};

use crate::cautions::CautionsPanel;
use crate::command::{Command, PanelKind};
use crate::document::{Document, RecentFiles, Recovery, find_recovery, state_dir};
use crate::editor::ModelEditor;
use crate::equilibria::EquilibriaPanel;
use crate::export::{ExportKind, ExportOutcome, ExportRequest, ExportWindow};
use crate::files::{FileAction, FileWindow, FileWindowOutcome, GuardAnswer, Pending};
use crate::harvest_panel::HarvestPanel;
use crate::help::HelpPanel;
use crate::history::History;
use crate::layers::LayersPanel;
use crate::map_view::MapView;
use crate::orbits::OrbitsPanel;
use crate::params::ParamsPanel;
use crate::plane::{PlanePanel, PlaneView};
use crate::scenario::{LayerSwitch, Scenario, compile_harvested};
use crate::status::{StatusBar, StatusState};
use crate::sweep_view::SweepView;
use crate::timeseries::{Player, TimeSeriesPanel, selected_orbits, time_span};
use crate::toolbar::{OpenPanels, Toolbar, ToolbarState};
use crate::worker::SceneSource;
use crate::yield_view::YieldView;

/// The window title: the scenario's title, its file, and whether it has unsaved changes.
pub fn title_for(spec: &ModelSpec, file: Option<&str>, dirty: bool) -> String {
    let name = spec.name.trim();
    let name = if name.is_empty() {
        "untitled model"
    } else {
        name
    };
    let file = file.unwrap_or("not saved to a file");
    let mark = if dirty { " — unsaved changes" } else { "" };
    format!("Quarry — {name} ({file}){mark}")
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
    /// A problem met at start-up, or the outcome of the last file operation, shown in the
    /// status bar.
    notice: Option<String>,
    /// The scenario's file and save state.
    document: Document,
    recent: RecentFiles,
    /// The open or save-as window, when shown.
    file_window: Option<FileWindow>,
    /// An action waiting for the answer to "unsaved changes?".
    pending: Option<Pending>,
    /// An action to carry out once the save-as window has saved.
    after_save: Option<Pending>,
    /// Recovered work offered at start-up.
    recovery: Option<Recovery>,
    /// Whether "Browse…" may start the system's file dialog (not in tests).
    native_dialogs: bool,
    /// Set once the user has agreed to close.
    closing: bool,
    timeseries: TimeSeriesPanel,
    /// Orbits selected for the time series and playback, by seed id.
    selection: Vec<u64>,
    player: Player,
    harvest: HarvestPanel,
    /// Why the last harvest change could not be applied.
    harvest_error: Option<String>,
    sweep: SweepView,
    map: MapView,
    /// Whether the sweep window shows the two-parameter map.
    map_tab: bool,
    yield_view: YieldView,
    /// The export window, when shown.
    export_window: Option<ExportWindow>,
    /// Where long jobs repaint; `None` runs them in place (tests).
    jobs_ctx: Option<egui::Context>,
}

impl QuarryApp {
    /// The app on a scenario read from `path` (or the built-in one), computing scenes on a
    /// background thread that repaints `ctx`, with autosave and the recovery offer.
    pub fn new(file: ScenarioFile, path: Option<PathBuf>, ctx: &egui::Context) -> Self {
        ctx.set_theme(egui::Theme::Light);
        let dir = state_dir();
        let mut app = Self::with_source(
            Scenario::from_file(&file),
            path,
            SceneSource::background(ctx.clone()),
            dir,
        );
        app.native_dialogs = true;
        app.jobs_ctx = Some(ctx.clone());
        app
    }

    /// The app on `spec`, computing each scene before the frame ends (for tests); no
    /// autosave, no native dialogs.
    pub fn new_synchronous(spec: ModelSpec) -> Self {
        Self::with_source(Scenario::new(spec), None, SceneSource::synchronous(), None)
    }

    /// The app on a scenario file, synchronous like [`Self::new_synchronous`], keeping its
    /// state (recent files, recovery files) in `state_dir` when given.
    pub fn from_file_synchronous(
        file: &ScenarioFile,
        path: Option<PathBuf>,
        state_dir: Option<PathBuf>,
    ) -> Self {
        Self::with_source(
            Scenario::from_file(file),
            path,
            SceneSource::synchronous(),
            state_dir,
        )
    }

    fn with_source(
        scenario: Scenario,
        path: Option<PathBuf>,
        scenes: SceneSource,
        state_dir: Option<PathBuf>,
    ) -> Self {
        let (scenario, model, notice) = match scenario.compile() {
            Ok(model) => (scenario, model, None),
            Err(e) => {
                let fallback = default_model();
                let model = Model::new(&fallback).expect("the built-in default model compiles");
                let notice = format!("{e}; opened {} instead", fallback.name);
                (Scenario::new(fallback), model, Some(notice))
            }
        };
        let recovery = state_dir.as_deref().and_then(find_recovery);
        let recent = RecentFiles::load(state_dir.as_deref());
        let document = Document::new(scenario.to_file(), path, state_dir);
        let mut app = Self {
            editor: ModelEditor::new(&scenario.spec),
            scenario,
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
            document,
            recent,
            file_window: None,
            pending: None,
            after_save: None,
            recovery,
            native_dialogs: false,
            closing: false,
            timeseries: TimeSeriesPanel::default(),
            selection: Vec::new(),
            player: Player::default(),
            harvest: HarvestPanel,
            harvest_error: None,
            sweep: SweepView::default(),
            map: MapView::default(),
            map_tab: false,
            yield_view: YieldView::default(),
            export_window: None,
            jobs_ctx: None,
        };
        app.select_all();
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

    /// Where a state of the plane was drawn on screen on the last frame.
    pub fn plane_screen_pos(&self, at: [f64; 2]) -> Option<egui::Pos2> {
        self.plane.screen_pos(at)
    }

    /// The time hovered in the time series, or on a selected orbit in the plane, on the last
    /// frame.
    pub fn hovered_time(&self) -> (Option<f64>, Option<f64>) {
        (self.timeseries.hover_time, self.plane.hover_time)
    }

    /// Why the model editor's text does not compile, if it does not.
    pub fn editor_error(&self) -> Option<&ModelError> {
        self.editor.error()
    }

    /// The window title.
    pub fn title(&self) -> String {
        title_for(
            &self.scenario.spec,
            self.document.file_name().as_deref(),
            self.is_dirty(),
        )
    }

    /// Whether the scenario has changes not saved to its file.
    pub fn is_dirty(&self) -> bool {
        self.document.is_dirty(&self.scenario.to_file())
    }

    /// The scenario's file, if it has one.
    pub fn path(&self) -> Option<&Path> {
        self.document.path.as_deref()
    }

    /// The orbits selected for the time series, by seed id.
    pub fn selection(&self) -> &[u64] {
        &self.selection
    }

    /// The playback time, once playback has been used.
    pub fn playback_time(&self) -> Option<f64> {
        self.player.time
    }

    /// Whether playback is running.
    pub fn is_playing(&self) -> bool {
        self.player.playing
    }

    /// Selects every orbit (after opening a scenario).
    fn select_all(&mut self) {
        self.selection = self.scenario.seeds.iter().map(|s| s.id).collect();
    }

    /// The time span of the selected orbits in the scene on screen.
    fn playback_span(&self) -> Option<(f64, f64)> {
        let scene = self.scenes.shown().map(|s| &s.scene)?;
        time_span(
            selected_orbits(&self.scenario, scene, &self.selection)
                .into_iter()
                .map(|(_, o)| o),
        )
    }

    /// The sustained-yield view (its settings and last curve).
    pub fn yield_view(&mut self) -> &mut YieldView {
        &mut self.yield_view
    }

    /// The sweep view (its settings and last result).
    pub fn sweep_view(&mut self) -> &mut SweepView {
        &mut self.sweep
    }

    /// The two-parameter map view (its settings and last map).
    pub fn map_view(&mut self) -> &mut MapView {
        &mut self.map
    }

    /// The message of the last file operation or start-up problem.
    pub fn notice(&self) -> Option<&str> {
        self.notice.as_deref()
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

        let span = self.playback_span();
        let pb = self.scenario.playback;
        self.player.tick(Instant::now(), pb.speed, pb.looped, span);
        if self.player.playing {
            ui.ctx().request_repaint();
        }
        // A time hovered in one plot is marked in the other; playback wins while it runs.
        let hovered = self.timeseries.hover_time.or(self.plane.hover_time);
        let cursor = if self.player.playing {
            self.player.time
        } else {
            hovered.or(self.player.time)
        };

        let shown = self.scenes.shown();
        let scene = shown.map(|s| &s.scene);
        let busy = self.scenes.is_busy();

        let toolbar_state = ToolbarState {
            recent: &self.recent.paths,
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
                        egui::CollapsingHeader::new(RichText::new("Harvest").heading())
                            .default_open(self.scenario.harvest.is_active())
                            .show(ui, |ui| {
                                self.harvest.ui(
                                    ui,
                                    &self.scenario,
                                    scene,
                                    self.harvest_error.as_deref(),
                                    &mut out,
                                );
                            });
                        ui.separator();
                        egui::CollapsingHeader::new(RichText::new("Notes").heading())
                            .default_open(false)
                            .show(ui, |ui| {
                                let mut text = self.scenario.notes.clone();
                                let r = ui.add(
                                    egui::TextEdit::multiline(&mut text)
                                        .desired_rows(4)
                                        .desired_width(f32::INFINITY)
                                        .hint_text("Free-text notes, saved with the scenario"),
                                );
                                crate::style::accessible_name(ui, &r, "scenario notes");
                                if r.changed() {
                                    out.push(Command::SetNotes(text));
                                }
                                if r.lost_focus() {
                                    out.push(Command::EndGesture);
                                }
                            });
                        ui.separator();
                        self.orbits
                            .ui(ui, &self.scenario, scene, &self.selection, busy, &mut out);
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
            if self.panels.time_series {
                Panel::bottom("time-series")
                    .resizable(true)
                    .default_size(170.0)
                    .min_size(120.0)
                    .show(ui, |ui| {
                        // NOTE: a panel takes the size of what it drew last frame; before
                        // the first scene the content is one line, so fill the panel or it
                        // would shrink to its minimum for good.
                        ui.set_min_height(ui.available_height());
                        ui.add_space(4.0);
                        self.timeseries.ui(
                            ui,
                            &self.scenario,
                            scene,
                            &self.selection,
                            &self.player,
                            cursor,
                            &mut out,
                        );
                    });
            } else {
                self.timeseries.hover_time = None;
            }
            let view = PlaneView {
                selection: &self.selection,
                marker_time: cursor,
            };
            self.plane.ui(ui, &self.scenario, scene, view, &mut out);
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
        let mut open = self.panels.sweep;
        egui::Window::new("Parameter sweep")
            .open(&mut open)
            .default_pos([520.0, 70.0])
            .default_size([640.0, 520.0])
            .resizable(true)
            .show(&ctx, |ui| {
                ui.horizontal(|ui| {
                    ui.selectable_value(&mut self.map_tab, false, "One parameter");
                    ui.selectable_value(&mut self.map_tab, true, "Two-parameter map");
                });
                ui.separator();
                if self.map_tab {
                    self.map.ui(
                        ui,
                        &self.scenario,
                        &self.model,
                        self.jobs_ctx.clone(),
                        &mut out,
                    );
                } else {
                    self.sweep.ui(
                        ui,
                        &self.scenario,
                        &self.model,
                        self.jobs_ctx.clone(),
                        &mut out,
                    );
                }
            });
        if open != self.panels.sweep {
            out.push(Command::ShowPanel(PanelKind::Sweep, open));
        }
        let mut open = self.panels.yield_curve;
        egui::Window::new("Sustained yield")
            .open(&mut open)
            .default_pos([560.0, 110.0])
            .default_size([640.0, 540.0])
            .resizable(true)
            .show(&ctx, |ui| {
                self.yield_view
                    .ui(ui, &self.scenario, self.jobs_ctx.clone(), &mut out);
            });
        if open != self.panels.yield_curve {
            out.push(Command::ShowPanel(PanelKind::Yield, open));
        }
        let mut open = self.panels.help;
        egui::Window::new("Help")
            .open(&mut open)
            .resizable(false)
            .show(&ctx, |ui| self.help.ui(ui));
        if open != self.panels.help {
            out.push(Command::ShowPanel(PanelKind::Help, open));
        }

        self.files_ui(&ctx, &mut out);
        let dropped: Vec<PathBuf> = ctx.input(|i| {
            i.raw
                .dropped_files
                .iter()
                .map(|f| f.path().to_owned())
                .filter(|p| !p.as_os_str().is_empty())
                .collect()
        });
        if let Some(path) = dropped.into_iter().next() {
            out.push(Command::Open(path));
        }
        if ctx.input(|i| i.viewport().close_requested()) && !self.closing && self.is_dirty() {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.pending = Some(Pending::Quit);
        }

        for command in out {
            self.apply(command);
        }
        if self.closing {
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
        }
        self.request_scene();
        if let Some(wait) = self
            .document
            .autosave(&self.scenario.to_file(), Instant::now())
        {
            ctx.request_repaint_after(wait);
        }
        let title = self.title();
        if title != self.title {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title = title;
        }
    }

    /// The file window, the unsaved-changes question and the recovery offer.
    fn files_ui(&mut self, ctx: &egui::Context, out: &mut Vec<Command>) {
        if let Some(recovery) = &self.recovery {
            match crate::files::recovery_ui(ctx, recovery) {
                Some(true) => self.restore_recovery(),
                Some(false) => {
                    let _ = std::fs::remove_file(&recovery.file);
                    self.recovery = None;
                }
                None => {}
            }
            return;
        }
        if let Some(pending) = &self.pending {
            let file = self.document.file_name();
            match crate::files::guard_ui(ctx, pending, file.as_deref()) {
                Some(GuardAnswer::Save) => {
                    let pending = self.pending.take();
                    match self.document.path.clone() {
                        Some(path) => {
                            if self.save_to(&path) {
                                self.carry_out(pending);
                            }
                        }
                        None => {
                            self.after_save = pending;
                            self.open_file_window(FileAction::SaveAs);
                        }
                    }
                }
                Some(GuardAnswer::Discard) => {
                    let pending = self.pending.take();
                    self.carry_out(pending);
                }
                Some(GuardAnswer::Cancel) => self.pending = None,
                None => {}
            }
            return;
        }
        if let Some(window) = &mut self.export_window {
            let mut open = true;
            let mut outcome = ExportOutcome::Open;
            egui::Window::new(format!(
                "Export: {}",
                window.kind.label().trim_end_matches('…')
            ))
            .collapsible(false)
            .resizable(false)
            .open(&mut open)
            .show(ctx, |ui| outcome = window.ui(ui, self.native_dialogs));
            match outcome {
                ExportOutcome::Confirm(r) => out.push(Command::Export(r)),
                ExportOutcome::Cancel => self.export_window = None,
                ExportOutcome::Open if !open => self.export_window = None,
                ExportOutcome::Open => {}
            }
        }
        let Some(window) = &mut self.file_window else {
            return;
        };
        let title = match window.action {
            FileAction::Open => "Open a scenario",
            FileAction::SaveAs => "Save the scenario as",
        };
        let start_dir = self
            .document
            .path
            .as_deref()
            .and_then(Path::parent)
            .map(Path::to_owned);
        let mut outcome = FileWindowOutcome::Open;
        let mut open = true;
        egui::Window::new(title)
            .collapsible(false)
            .resizable(false)
            .open(&mut open)
            .show(ctx, |ui| {
                outcome = window.ui(ui, &self.recent.paths, self.native_dialogs, start_dir);
            });
        match outcome {
            FileWindowOutcome::Confirm(c) => out.push(c),
            FileWindowOutcome::Cancel => {
                self.file_window = None;
                self.after_save = None;
            }
            FileWindowOutcome::Open if !open => {
                self.file_window = None;
                self.after_save = None;
            }
            FileWindowOutcome::Open => {}
        }
    }

    fn open_file_window(&mut self, action: FileAction) {
        let path = match action {
            FileAction::Open => None,
            FileAction::SaveAs => self.document.path.clone(),
        };
        self.file_window = Some(FileWindow::new(action, path.as_deref()));
    }

    /// Does what was waiting on the unsaved-changes question.
    fn carry_out(&mut self, pending: Option<Pending>) {
        match pending {
            Some(Pending::New) => self.start_new(),
            Some(Pending::Open(path)) => self.open_now(&path),
            Some(Pending::Quit) => {
                self.document.discard_recovery();
                self.closing = true;
            }
            None => {}
        }
    }

    /// Replaces the scenario with a fresh one, forgetting undo history and the view.
    fn install(&mut self, scenario: Scenario, model: Model, path: Option<PathBuf>) {
        self.document.reset(scenario.to_file(), path);
        self.scenario = scenario;
        self.model = model;
        self.history = History::new();
        self.editor.reset_to(&self.scenario.spec);
        self.plane.reset_view();
        self.player = Player::default();
        self.select_all();
    }

    fn start_new(&mut self) {
        let file = default_scenario();
        let scenario = Scenario::from_file(&file);
        let Ok(model) = scenario.compile() else {
            return;
        };
        self.install(scenario, model, None);
        self.notice = None;
    }

    /// Opens a file now; on failure the current scenario stays and the message is shown
    /// (in the file window when it is up, else in the status bar).
    fn open_now(&mut self, path: &Path) {
        let result = std::fs::read_to_string(path)
            .map_err(|e| e.to_string())
            .and_then(|text| Scenario::from_ron(&text).map_err(|e| e.to_string()));
        match result {
            Ok((scenario, model)) => {
                self.install(scenario, model, Some(path.to_owned()));
                self.recent.add(path);
                self.file_window = None;
                self.notice = None;
            }
            Err(e) => {
                if !path.exists() {
                    self.recent.remove(path);
                }
                let message = format!("{}: {e}", path.display());
                match &mut self.file_window {
                    Some(w) => w.error = Some(message),
                    None => self.notice = Some(message),
                }
            }
        }
    }

    /// Saves to `path`; reports a failure where the user will see it.
    fn save_to(&mut self, path: &Path) -> bool {
        match self.document.save(&self.scenario.to_file(), path) {
            Ok(()) => {
                self.recent.add(path);
                self.file_window = None;
                self.notice = Some(format!("Saved {}", path.display()));
                true
            }
            Err(e) => {
                let message = format!("Could not save: {e}");
                match &mut self.file_window {
                    Some(w) => w.error = Some(message),
                    None => self.notice = Some(message),
                }
                false
            }
        }
    }

    fn restore_recovery(&mut self) {
        let Some(recovery) = self.recovery.take() else {
            return;
        };
        match Scenario::from_ron(&recovery.text) {
            Ok((scenario, model)) => {
                let saved = recovery
                    .origin
                    .as_deref()
                    .and_then(|p| ScenarioFile::load(p).ok());
                self.install(scenario, model, recovery.origin.clone());
                // Unsaved changes count against the file as it is on disk.
                if let Some(saved) = saved {
                    self.document.reset(saved, recovery.origin.clone());
                }
                self.document.mark_dirty();
                self.notice = Some("Restored unsaved work; save it to keep it.".to_owned());
                let _ = std::fs::remove_file(&recovery.file);
            }
            Err(e) => {
                self.notice = Some(format!(
                    "The recovery file {} could not be read: {e}",
                    recovery.file.display()
                ));
            }
        }
    }

    /// Writes an export atomically; the message says what went wrong and where.
    fn export(&self, request: &ExportRequest) -> Result<(), String> {
        let format = request.format()?;
        let bytes = self.export_bytes(request, format)?;
        quarry_core::scenario::write_atomically(&request.path, &bytes).map_err(|e| e.to_string())
    }

    /// The scene on screen with only the orbits that are shown (and, given a selection, only
    /// the selected ones). Empty before the first scene arrives.
    fn shown_scene(&self, selection: Option<&[u64]>) -> Scene {
        let Some(scene) = self.scene() else {
            return Scene::default();
        };
        let mut scene = scene.clone();
        let shown: Vec<[f64; 2]> = self
            .scenario
            .seeds
            .iter()
            .filter(|s| s.visible && selection.is_none_or(|sel| sel.contains(&s.id)))
            .map(|s| s.at)
            .collect();
        scene.orbits.retain(|o| shown.contains(&o.seed));
        scene
    }

    /// The bytes of an export in `format` (`png`, `svg`, `csv` or `html`).
    fn export_bytes(&self, request: &ExportRequest, format: &str) -> Result<Vec<u8>, String> {
        if self.scene().is_none() {
            return Err("The scene is still being computed; try again in a moment.".into());
        }
        let [width, height] = request.size;
        let svg = match request.kind {
            ExportKind::PlaneFigure => {
                let scene = self.shown_scene(None);
                let l = self.scenario.layers;
                let opts = quarry_figure::FigureOptions {
                    width,
                    height,
                    title: Some(self.scenario.spec.name.clone()),
                    show_field: l.field,
                    show_streamlines: l.streamlines,
                    show_nullclines: l.nullclines,
                    show_separatrices: l.separatrices,
                    show_contours: l.contours,
                    show_orbits: l.orbits,
                    show_legend: true,
                    caption: Some(quarry_figure::CAUTION.to_owned()),
                };
                quarry_figure::render_svg(&scene, &opts)
            }
            ExportKind::SweepFigure => {
                let sweep = self
                    .sweep
                    .result()
                    .ok_or("Run a sweep first (Sweep in the toolbar).")?;
                let [x, y] = self.model.variables();
                let opts = quarry_figure::SweepFigure {
                    width,
                    height,
                    title: Some(format!(
                        "{}: equilibria against {}",
                        self.scenario.spec.name, sweep.param
                    )),
                    variable: self.sweep.variable,
                    variable_names: [x.to_owned(), y.to_owned()],
                    caption: Some(quarry_figure::CAUTION.to_owned()),
                    ..quarry_figure::SweepFigure::default()
                };
                quarry_figure::render_sweep_svg(sweep, &opts)
            }
            ExportKind::YieldFigure => {
                let curve = self
                    .yield_view
                    .result()
                    .ok_or("Compute a sustained-yield curve first (Yield in the toolbar).")?;
                let opts = quarry_figure::YieldFigure {
                    width,
                    height,
                    title: Some(format!(
                        "{}: sustained yield of {}",
                        self.scenario.spec.name, curve.species
                    )),
                    ..quarry_figure::YieldFigure::default()
                };
                quarry_figure::render_yield_svg(curve, &opts)
            }
            ExportKind::TimeSeriesFigure => {
                let mut series = quarry_figure::time_series::TimeSeries::from_scene(
                    &self.shown_scene(Some(&self.selection)),
                );
                if series.orbits.is_empty() {
                    return Err("Select an orbit for the time series first (click its row).".into());
                }
                let file = self.scenario.to_file();
                series.title = self.scenario.spec.name.clone();
                series.units = file.variables.clone().map(|v| v.unit);
                let opts = quarry_figure::time_series::TimeSeriesOptions {
                    width,
                    height,
                    caption: Some(quarry_figure::CAUTION.to_owned()),
                    ..Default::default()
                };
                quarry_figure::time_series::render_time_series_svg(&series, &opts)
            }
            ExportKind::OrbitsCsv => {
                let scene = self.shown_scene(None);
                if scene.orbits.is_empty() {
                    return Err(
                        "There are no orbits to export: click the plane to start one.".into(),
                    );
                }
                let units = quarry_core::export::Units::from_scenario(&self.scenario.to_file());
                let catch = if self.scenario.harvest.is_active() {
                    Some(
                        quarry_core::export::CatchRates::new(
                            &self.model,
                            &self.scenario.harvest,
                            &self.scenario.spec,
                        )
                        .map_err(|e| e.to_string())?,
                    )
                } else {
                    None
                };
                return Ok(quarry_core::export::scene_orbits_csv(
                    &scene,
                    catch.as_ref(),
                    Some(&units),
                )
                .into_bytes());
            }
            ExportKind::EquilibriaCsv => {
                let units = quarry_core::export::Units::from_scenario(&self.scenario.to_file());
                let analysis = quarry_core::analysis::analyze(&self.model);
                return Ok(quarry_core::export::equilibria_csv(
                    self.model.variables(),
                    &analysis,
                    Some(&units),
                )
                .into_bytes());
            }
            ExportKind::SweepCsv => {
                let sweep = self
                    .sweep
                    .result()
                    .ok_or("Run a sweep first (Sweep in the toolbar).")?;
                let units = quarry_core::export::Units::from_scenario(&self.scenario.to_file());
                let vars = self.model.variables();
                // The bifurcation points go beside the branches, in a file of their own.
                let side = bifurcations_path(&request.path);
                let table = quarry_core::export::bifurcations_csv(vars, sweep, Some(&units));
                quarry_core::scenario::write_atomically(&side, table.as_bytes())
                    .map_err(|e| e.to_string())?;
                return Ok(quarry_core::export::sweep_csv(vars, sweep, Some(&units)).into_bytes());
            }
            ExportKind::MapCsv => {
                let map = self
                    .map
                    .result()
                    .ok_or("Make a stability map first (Sweep, then Two-parameter map).")?;
                let units = quarry_core::export::Units::from_scenario(&self.scenario.to_file());
                return Ok(quarry_core::export::stability_map_csv(map, Some(&units)).into_bytes());
            }
            ExportKind::Report => {
                let file = self.scenario.to_file();
                let starts: Vec<[f64; 2]> = self
                    .scenario
                    .seeds
                    .iter()
                    .filter(|s| s.visible)
                    .map(|s| s.at)
                    .collect();
                let req = quarry_figure::report::ReportRequest {
                    scenario: &file,
                    base: &self.scenario.spec,
                    harvest: &self.scenario.harvest,
                    starts,
                    t_end: self.scenario.orbit_time,
                    generated_utc: quarry_figure::report::iso_utc(std::time::SystemTime::now()),
                };
                let input =
                    quarry_figure::report::prepare_report(&req).map_err(|e| e.to_string())?;
                return Ok(quarry_figure::report::report_html(&input).into_bytes());
            }
        };
        match format {
            "svg" => Ok(svg.into_bytes()),
            _ => quarry_figure::svg_to_png(&svg, width, height).map_err(|e| e.to_string()),
        }
    }

    /// Runs an action that would drop unsaved changes, asking first when there are some.
    fn guarded(&mut self, action: Pending) {
        if self.is_dirty() {
            self.pending = Some(action);
        } else {
            self.carry_out(Some(action));
        }
    }

    fn shortcuts(&self, ctx: &egui::Context, out: &mut Vec<Command>) {
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        let redo_shift = KeyboardShortcut::new(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z);
        let redo_y = KeyboardShortcut::new(Modifiers::COMMAND, Key::Y);
        let undo = KeyboardShortcut::new(Modifiers::COMMAND, Key::Z);
        let save_as = KeyboardShortcut::new(Modifiers::COMMAND | Modifiers::SHIFT, Key::S);
        let save = KeyboardShortcut::new(Modifiers::COMMAND, Key::S);
        let open = KeyboardShortcut::new(Modifiers::COMMAND, Key::O);
        let new = KeyboardShortcut::new(Modifiers::COMMAND, Key::N);
        ctx.input_mut(|i| {
            if i.consume_shortcut(&save_as) {
                out.push(Command::ShowFileWindow(FileAction::SaveAs));
            } else if i.consume_shortcut(&save) {
                out.push(Command::Save);
            }
            if i.consume_shortcut(&open) {
                out.push(Command::ShowFileWindow(FileAction::Open));
            }
            if i.consume_shortcut(&new) {
                out.push(Command::New);
            }
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
            if plain(i, Key::Space) {
                out.push(Command::TogglePlayback);
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
            Command::New => self.guarded(Pending::New),
            Command::Open(path) => self.guarded(Pending::Open(path)),
            Command::Save => match self.document.path.clone() {
                Some(path) => {
                    self.save_to(&path);
                }
                None => self.open_file_window(FileAction::SaveAs),
            },
            Command::SaveAs(path) if self.save_to(&path) => {
                let next = self.after_save.take();
                self.carry_out(next);
            }
            Command::ShowFileWindow(action) => self.open_file_window(action),
            Command::ShowExport(kind) => {
                // Beside the scenario file, else in the working folder, shown in full so the
                // user sees where the file goes.
                let dir = self
                    .document
                    .path
                    .as_deref()
                    .and_then(Path::parent)
                    .filter(|d| !d.as_os_str().is_empty())
                    .map(|d| std::path::absolute(d).unwrap_or_else(|_| d.to_path_buf()))
                    .or_else(|| std::env::current_dir().ok());
                self.export_window = Some(ExportWindow::new(kind, dir.as_deref()));
            }
            Command::Export(request) => match self.export(&request) {
                Ok(()) => {
                    self.notice = Some(format!("Exported {}", request.path.display()));
                    self.export_window = None;
                }
                Err(e) => match &mut self.export_window {
                    Some(w) => w.error = Some(e),
                    None => self.notice = Some(e),
                },
            },
            Command::SelectOrbit { id, toggle } => {
                if toggle {
                    if let Some(k) = self.selection.iter().position(|s| *s == id) {
                        self.selection.remove(k);
                    } else {
                        self.selection.push(id);
                    }
                } else {
                    self.selection = vec![id];
                }
            }
            Command::TogglePlayback => {
                let span = self.playback_span();
                self.player.toggle(span);
            }
            Command::SetPlaybackTime(t) if t.is_finite() => self.player.time = Some(t),
            Command::SetPlaybackSpeed(v) if v.is_finite() && v > 0.0 => {
                self.scenario.playback.speed = v;
            }
            Command::SetPlaybackLoop(on) => self.scenario.playback.looped = on,
            _ => {}
        }
    }

    /// Puts back a snapshot from the history, keeping the view settings (layers, the
    /// direction of new orbits) as they are now.
    fn restore(&mut self, mut snapshot: Scenario) {
        let Ok(model) = snapshot.compile() else {
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
        let Ok(model) = compile_harvested(&spec, &self.scenario.harvest) else {
            return false;
        };
        if spec.window != self.scenario.spec.window {
            self.plane.reset_view();
        }
        self.scenario.replace_model(spec);
        self.model = model;
        true
    }

    /// Changes the harvest. A change of numbers only sets the harvested model's parameters
    /// (no recompiling while a number is dragged); a change of rule recompiles. A harvest
    /// that cannot be applied is refused with its reason, and the last one stays.
    fn set_harvest(&mut self, h: quarry_core::harvest::Harvest) -> bool {
        use quarry_core::harvest::HarvestRule;
        if h == self.scenario.harvest {
            return false;
        }
        let shape = |r: &HarvestRule| {
            (
                std::mem::discriminant(r),
                matches!(r, HarvestRule::Quota { taper: Some(_), .. }),
            )
        };
        let old = &self.scenario.harvest;
        let same_shape = (0..2).all(|i| shape(&h.rules[i]) == shape(&old.rules[i]));
        if same_shape
            && h.is_active()
            && let Ok(spec) = h.apply(&self.scenario.spec)
            && spec
                .parameters
                .iter()
                .all(|p| self.model.set_param(&p.name, p.value).is_ok())
        {
            self.scenario.harvest = h;
            self.harvest_error = None;
            return true;
        }
        match compile_harvested(&self.scenario.spec, &h) {
            Ok(model) => {
                self.scenario.harvest = h;
                self.model = model;
                self.harvest_error = None;
                true
            }
            Err(e) => {
                self.harvest_error = Some(e);
                false
            }
        }
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
                let mut fresh = Scenario::new(spec);
                let Ok(model) = fresh.compile() else {
                    return false;
                };
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
            Command::SetHarvest(h) => self.set_harvest(*h),
            Command::SetNotes(text) if *text != self.scenario.notes => {
                self.scenario.notes = text.clone();
                true
            }
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
                let id = self.scenario.add_seed(*at);
                self.selection = vec![id];
                true
            }
            Command::MoveOrbit(id, at) if at.iter().all(|v| v.is_finite()) => {
                match self.scenario.seeds.iter_mut().find(|s| s.id == *id) {
                    Some(s) if s.at != *at => {
                        s.at = *at;
                        true
                    }
                    _ => false,
                }
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

/// Where the bifurcation points of a sweep exported to `path` go: `NAME-bifurcations.csv`.
pub fn bifurcations_path(path: &Path) -> PathBuf {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "sweep".to_owned());
    path.with_file_name(format!("{stem}-bifurcations.csv"))
}

impl eframe::App for QuarryApp {
    fn ui(&mut self, ui: &mut Ui, _frame: &mut eframe::Frame) {
        self.frame_ui(ui);
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        // A clean exit after the user chose to close: nothing to recover. Should the user
        // close over unsaved changes some other way (the guard normally prevents it), the
        // recovery file stays and is offered next time.
        if !self.is_dirty() || self.closing {
            self.document.discard_recovery();
        }
    }
}
