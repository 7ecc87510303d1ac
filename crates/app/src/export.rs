//! Export: what is on screen leaves the tool as a figure (SVG or PNG, through the same
//! renderer as `quarry render`), as CSV data, or as a one-page HTML report.

use std::path::PathBuf;
use std::sync::mpsc::Receiver;

use egui::{Button, DragValue, Ui};

use crate::files::{DialogSpec, native_dialog, poll_native};
use crate::style;

/// Something that can be exported.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ExportKind {
    /// The phase plane as drawn (layers and visible orbits).
    PlaneFigure,
    /// The selected orbits against time.
    TimeSeriesFigure,
    /// The last sweep's branch diagram.
    SweepFigure,
    /// The last sustained-yield curve.
    YieldFigure,
    /// The visible orbits: time, both variables and the catch where harvested.
    OrbitsCsv,
    /// The equilibria table.
    EquilibriaCsv,
    /// The last sweep's branches and bifurcation points.
    SweepCsv,
    /// The last two-parameter stability map, a row per grid cell.
    MapCsv,
    /// A one-page HTML report of the scenario.
    Report,
}

impl ExportKind {
    /// Every kind, in menu order.
    pub const ALL: [ExportKind; 9] = [
        ExportKind::PlaneFigure,
        ExportKind::TimeSeriesFigure,
        ExportKind::SweepFigure,
        ExportKind::YieldFigure,
        ExportKind::OrbitsCsv,
        ExportKind::EquilibriaCsv,
        ExportKind::SweepCsv,
        ExportKind::MapCsv,
        ExportKind::Report,
    ];

    /// The menu entry.
    pub fn label(self) -> &'static str {
        match self {
            ExportKind::PlaneFigure => "Phase-plane figure…",
            ExportKind::TimeSeriesFigure => "Time-series figure…",
            ExportKind::SweepFigure => "Sweep figure…",
            ExportKind::YieldFigure => "Sustained-yield figure…",
            ExportKind::OrbitsCsv => "Orbits as CSV…",
            ExportKind::EquilibriaCsv => "Equilibria as CSV…",
            ExportKind::SweepCsv => "Sweep as CSV…",
            ExportKind::MapCsv => "Stability map as CSV…",
            ExportKind::Report => "Report (HTML)…",
        }
    }

    /// Whether the kind is a figure (with a size, as SVG or PNG).
    pub fn is_figure(self) -> bool {
        matches!(
            self,
            ExportKind::PlaneFigure
                | ExportKind::TimeSeriesFigure
                | ExportKind::SweepFigure
                | ExportKind::YieldFigure
        )
    }

    /// The file extensions the kind can be written as; the first is the default.
    pub fn extensions(self) -> &'static [&'static str] {
        match self {
            k if k.is_figure() => &["png", "svg"],
            ExportKind::Report => &["html"],
            _ => &["csv"],
        }
    }

    fn default_name(self) -> &'static str {
        match self {
            ExportKind::PlaneFigure => "phase-plane.png",
            ExportKind::TimeSeriesFigure => "time-series.png",
            ExportKind::SweepFigure => "sweep.png",
            ExportKind::YieldFigure => "sustained-yield.png",
            ExportKind::OrbitsCsv => "orbits.csv",
            ExportKind::EquilibriaCsv => "equilibria.csv",
            ExportKind::SweepCsv => "sweep.csv",
            ExportKind::MapCsv => "stability-map.csv",
            ExportKind::Report => "report.html",
        }
    }
}

/// A request to export, as the window confirms it.
#[derive(Clone, Debug, PartialEq)]
pub struct ExportRequest {
    /// What.
    pub kind: ExportKind,
    /// Where; the extension picks the format.
    pub path: PathBuf,
    /// Figure size in pixels (SVG user units).
    pub size: [u32; 2],
}

impl ExportRequest {
    /// The format from the path's extension, when the kind can be written so.
    pub fn format(&self) -> Result<&'static str, String> {
        let ext = self
            .path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase)
            .unwrap_or_default();
        self.kind
            .extensions()
            .iter()
            .find(|e| **e == ext)
            .copied()
            .ok_or_else(|| {
                format!(
                    "{}: end the file name with .{} to choose the format",
                    self.path.display(),
                    self.kind.extensions().join(" or .")
                )
            })
    }
}

/// What the export window asks for after a frame.
#[derive(Clone, Debug, PartialEq)]
pub enum ExportOutcome {
    /// Nothing yet.
    Open,
    /// Write this.
    Confirm(ExportRequest),
    /// Close the window.
    Cancel,
}

/// The export window: a path field (a native dialog where there is one), the figure size,
/// and the last error.
#[derive(Debug)]
pub struct ExportWindow {
    /// What is exported.
    pub kind: ExportKind,
    /// The path typed or picked.
    pub path: String,
    /// Figure width and height in pixels.
    pub size: [u32; 2],
    /// Why the last attempt failed.
    pub error: Option<String>,
    native: Option<Receiver<Option<PathBuf>>>,
}

impl ExportWindow {
    /// A window for `kind`, the path field filled with a name in `dir`.
    pub fn new(kind: ExportKind, dir: Option<&std::path::Path>) -> Self {
        let name = kind.default_name();
        let path = dir.map_or_else(|| PathBuf::from(name), |d| d.join(name));
        Self {
            kind,
            path: path.display().to_string(),
            size: [1200, 800],
            error: None,
            native: None,
        }
    }

    /// Draws the window's contents.
    pub fn ui(&mut self, ui: &mut Ui, native_dialogs: bool) -> ExportOutcome {
        let mut confirmed = false;
        if let Some(Some(p)) = poll_native(&mut self.native) {
            self.path = p.display().to_string();
        }
        let label = ui.label(format!("File (.{}):", self.kind.extensions().join(" or .")));
        ui.horizontal(|ui| {
            let field = ui
                .add(egui::TextEdit::singleline(&mut self.path).desired_width(380.0))
                .labelled_by(label.id);
            if field.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter)) {
                confirmed = true;
            }
            if native_dialogs
                && ui
                    .add_enabled(self.native.is_none(), Button::new("Browse…"))
                    .clicked()
            {
                let path = PathBuf::from(self.path.trim());
                let name = path
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_else(|| self.kind.default_name().to_owned());
                let spec = DialogSpec {
                    title: "Export",
                    filter: ("Export", self.kind.extensions()),
                    save_as: Some(name),
                };
                self.native = native_dialog(ui.ctx(), spec, path.parent().map(Into::into));
            }
        });
        if self.kind.is_figure() {
            ui.horizontal(|ui| {
                let l = ui.label("Size");
                let r = ui
                    .add(
                        DragValue::new(&mut self.size[0])
                            .range(64..=8000)
                            .suffix(" px"),
                    )
                    .labelled_by(l.id);
                style::accessible_name(ui, &r, "figure width");
                ui.label("×");
                let r = ui.add(
                    DragValue::new(&mut self.size[1])
                        .range(64..=8000)
                        .suffix(" px"),
                );
                style::accessible_name(ui, &r, "figure height");
            });
        }
        if let Some(e) = &self.error {
            ui.colored_label(style::ERROR, e);
        }
        let mut cancelled = false;
        ui.horizontal(|ui| {
            if ui
                .add_enabled(!self.path.trim().is_empty(), Button::new("Export"))
                .clicked()
            {
                confirmed = true;
            }
            if ui.button("Cancel").clicked() {
                cancelled = true;
            }
        });
        if cancelled {
            return ExportOutcome::Cancel;
        }
        if !confirmed || self.path.trim().is_empty() {
            return ExportOutcome::Open;
        }
        ExportOutcome::Confirm(ExportRequest {
            kind: self.kind,
            path: PathBuf::from(self.path.trim()),
            size: self.size,
        })
    }
}
