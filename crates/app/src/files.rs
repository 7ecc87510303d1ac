//! Opening and saving scenario files: the file window with its path field (which works where
//! no native dialog service exists), the native dialog run on its own thread, the question
//! asked before unsaved changes are dropped, and the offer to restore recovered work.

use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, Receiver};

use egui::{RichText, Ui};

use crate::command::Command;
use crate::document::Recovery;
use crate::style;

/// What a native file dialog shows.
#[derive(Clone, Debug)]
pub struct DialogSpec {
    /// The dialog's title.
    pub title: &'static str,
    /// The file type offered: a name and its extensions.
    pub filter: (&'static str, &'static [&'static str]),
    /// `Some(file name)` for a save dialog, `None` to pick an existing file.
    pub save_as: Option<String>,
}

/// Runs the system's file dialog on a thread of its own; the receiver gets the picked path
/// (or `None` when cancelled or when no dialog service exists).
pub fn native_dialog(
    ctx: &egui::Context,
    spec: DialogSpec,
    start_dir: Option<PathBuf>,
) -> Option<Receiver<Option<PathBuf>>> {
    let (tx, rx) = mpsc::channel();
    let ctx = ctx.clone();
    std::thread::Builder::new()
        .name("quarry-file-dialog".into())
        .spawn(move || {
            let mut dialog = rfd::FileDialog::new()
                .set_title(spec.title)
                .add_filter(spec.filter.0, spec.filter.1)
                .add_filter("All files", &["*"]);
            if let Some(dir) = start_dir {
                dialog = dialog.set_directory(dir);
            }
            let picked = match spec.save_as {
                Some(name) => dialog.set_file_name(name).save_file(),
                None => dialog.pick_file(),
            };
            let _ = tx.send(picked);
            ctx.request_repaint();
        })
        .ok()?;
    Some(rx)
}

/// A path picked by a native dialog, once it is there: `Some(Some(path))` picked,
/// `Some(None)` cancelled or unavailable, `None` still open.
pub fn poll_native(native: &mut Option<Receiver<Option<PathBuf>>>) -> Option<Option<PathBuf>> {
    let rx = native.as_ref()?;
    match rx.try_recv() {
        Ok(picked) => {
            *native = None;
            Some(picked)
        }
        Err(mpsc::TryRecvError::Disconnected) => {
            *native = None;
            Some(None)
        }
        Err(mpsc::TryRecvError::Empty) => None,
    }
}

/// What a file window is for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FileAction {
    /// Open a scenario.
    Open,
    /// Save the scenario under a new name.
    SaveAs,
}

/// Something that would drop unsaved changes, waiting for the user's answer.
#[derive(Clone, Debug, PartialEq)]
pub enum Pending {
    /// Start a new scenario.
    New,
    /// Open a file.
    Open(PathBuf),
    /// Close the window.
    Quit,
}

impl Pending {
    fn describe(&self) -> String {
        match self {
            Pending::New => "Starting a new scenario".to_owned(),
            Pending::Open(p) => format!("Opening {}", p.display()),
            Pending::Quit => "Closing Quarry".to_owned(),
        }
    }
}

/// How the user answered the unsaved-changes question.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum GuardAnswer {
    /// Save first, then go on.
    Save,
    /// Go on and drop the changes.
    Discard,
    /// Do nothing.
    Cancel,
}

/// What the file window asks for after a frame.
#[derive(Clone, Debug, PartialEq)]
pub enum FileWindowOutcome {
    /// Nothing yet.
    Open,
    /// Run this command (open or save the path).
    Confirm(Command),
    /// Close the window.
    Cancel,
}

/// The file window: a path field, a button for the native dialog, recent files, and the
/// last error (a file that would not open keeps the window up with the message).
#[derive(Debug)]
pub struct FileWindow {
    /// What the window does.
    pub action: FileAction,
    /// The path typed or picked.
    pub path: String,
    /// Why the last attempt failed.
    pub error: Option<String>,
    /// A native dialog running on its own thread.
    native: Option<Receiver<Option<PathBuf>>>,
}

impl FileWindow {
    /// A window for `action`, its path field filled with `path`.
    pub fn new(action: FileAction, path: Option<&Path>) -> Self {
        Self {
            action,
            path: path.map(|p| p.display().to_string()).unwrap_or_default(),
            error: None,
            native: None,
        }
    }

    /// Starts the system's file dialog on a thread of its own, so the window keeps drawing.
    /// Where no dialog service exists it returns nothing and the path field stays.
    pub fn start_native(&mut self, ctx: &egui::Context, start_dir: Option<PathBuf>) {
        if self.native.is_some() {
            return;
        }
        let spec = match self.action {
            FileAction::Open => DialogSpec {
                title: "Open a scenario",
                filter: ("Quarry scenario", &["ron"]),
                save_as: None,
            },
            FileAction::SaveAs => DialogSpec {
                title: "Save the scenario as",
                filter: ("Quarry scenario", &["ron"]),
                save_as: Some("scenario.ron".to_owned()),
            },
        };
        self.native = native_dialog(ctx, spec, start_dir);
    }

    /// Draws the window's contents; returns the command to run when the user confirms.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        recent: &[PathBuf],
        native_dialogs: bool,
        start_dir: Option<PathBuf>,
    ) -> FileWindowOutcome {
        let mut confirmed = false;
        let mut cancelled = false;
        if let Some(Some(p)) = poll_native(&mut self.native) {
            self.path = p.display().to_string();
            confirmed = true;
        }
        let verb = match self.action {
            FileAction::Open => "Open",
            FileAction::SaveAs => "Save",
        };
        let label = ui.label("Scenario file (.ron):");
        ui.horizontal(|ui| {
            let field = ui
                .add(
                    egui::TextEdit::singleline(&mut self.path)
                        .hint_text("path/to/scenario.ron")
                        .desired_width(380.0),
                )
                .labelled_by(label.id);
            if field.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter)) {
                confirmed = true;
            }
            if native_dialogs {
                let browsing = self.native.is_some();
                if ui
                    .add_enabled(!browsing, egui::Button::new("Browse…"))
                    .on_hover_text("The system's file dialog, where there is one")
                    .clicked()
                {
                    self.start_native(ui.ctx(), start_dir.clone());
                }
                if browsing {
                    ui.spinner();
                }
            }
        });
        if self.action == FileAction::Open && !recent.is_empty() {
            ui.add_space(4.0);
            ui.label("Recent:");
            for p in recent.iter().take(6) {
                if ui
                    .link(p.display().to_string())
                    .on_hover_text("Put this file in the path field")
                    .clicked()
                {
                    self.path = p.display().to_string();
                }
            }
        }
        if let Some(e) = &self.error {
            ui.add_space(4.0);
            ui.colored_label(style::ERROR, e);
        }
        ui.add_space(6.0);
        ui.horizontal(|ui| {
            let ready = !self.path.trim().is_empty();
            if ui.add_enabled(ready, egui::Button::new(verb)).clicked() {
                confirmed = true;
            }
            if ui.button("Cancel").clicked() {
                cancelled = true;
            }
        });
        if cancelled {
            return FileWindowOutcome::Cancel;
        }
        if !confirmed || self.path.trim().is_empty() {
            return FileWindowOutcome::Open;
        }
        let path = PathBuf::from(self.path.trim());
        FileWindowOutcome::Confirm(match self.action {
            FileAction::Open => Command::Open(path),
            FileAction::SaveAs => Command::SaveAs(path),
        })
    }
}

/// The unsaved-changes question, as a modal.
pub fn guard_ui(ctx: &egui::Context, pending: &Pending, file: Option<&str>) -> Option<GuardAnswer> {
    let mut answer = None;
    egui::Modal::new(egui::Id::unique("unsaved-guard")).show(ctx, |ui| {
        ui.set_max_width(420.0);
        ui.heading("Unsaved changes");
        ui.add_space(4.0);
        let name = file.unwrap_or("This scenario");
        ui.label(format!(
            "{name} has changes that are not saved. {} would lose them.",
            pending.describe()
        ));
        ui.add_space(8.0);
        ui.horizontal(|ui| {
            if ui.button("Save").clicked() {
                answer = Some(GuardAnswer::Save);
            }
            if ui.button("Discard changes").clicked() {
                answer = Some(GuardAnswer::Discard);
            }
            if ui.button("Cancel").clicked() {
                answer = Some(GuardAnswer::Cancel);
            }
        });
    });
    answer
}

/// The offer to restore work a previous session did not save: `Some(true)` to restore,
/// `Some(false)` to discard it.
pub fn recovery_ui(ctx: &egui::Context, recovery: &Recovery) -> Option<bool> {
    let mut answer = None;
    egui::Modal::new(egui::Id::unique("recovery-offer")).show(ctx, |ui| {
        ui.set_max_width(460.0);
        ui.heading("Recover unsaved work?");
        ui.add_space(4.0);
        let what = match &recovery.origin {
            Some(p) => format!("changes to {}", p.display()),
            None => "a scenario that was never saved".to_owned(),
        };
        let when = recovery
            .written
            .and_then(|t| t.elapsed().ok())
            .map(|d| format!(" (kept {} ago)", human_duration(d.as_secs())))
            .unwrap_or_default();
        ui.label(format!(
            "Quarry did not close cleanly last time. It kept {what}{when}."
        ));
        ui.label(
            RichText::new(format!("Recovery file: {}", recovery.file.display()))
                .small()
                .weak(),
        );
        ui.add_space(8.0);
        ui.horizontal(|ui| {
            if ui.button("Restore").clicked() {
                answer = Some(true);
            }
            if ui.button("Discard").clicked() {
                answer = Some(false);
            }
        });
    });
    answer
}

fn human_duration(secs: u64) -> String {
    match secs {
        s if s < 90 => format!("{s} s"),
        s if s < 90 * 60 => format!("{} min", s / 60),
        s if s < 48 * 3600 => format!("{} h", s / 3600),
        s => format!("{} days", s / 86400),
    }
}
