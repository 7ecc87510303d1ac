//! Every change the UI asks for, as data.
//!
//! Panels never change the scenario while they draw: they push [`Command`]s, and the app
//! applies them after the pass. That keeps one frame's picture consistent, gives undo/redo one
//! place to record from, and lets tests drive the app with the same commands a click makes.

use std::path::PathBuf;

use quarry_core::harvest::Harvest;
use quarry_core::model::ModelSpec;
use quarry_core::scene::TimeDirection;

use crate::export::{ExportKind, ExportRequest};
use crate::files::FileAction;
use crate::scenario::Layer;

/// A change asked for by the UI.
#[derive(Clone, Debug, PartialEq)]
pub enum Command {
    /// Replace the model with one typed in the editor (already checked to compile).
    EditModel(ModelSpec),
    /// Load a built-in model by its index in [`quarry_core::library::BUILTINS`].
    LoadBuiltin(usize),
    /// Set a parameter, by index, to a value.
    SetParam {
        /// Index in the model's parameter list.
        index: usize,
        /// The new value.
        value: f64,
    },
    /// Set a parameter back to its default.
    ResetParam(usize),
    /// Set every parameter back to its default.
    ResetAllParams,
    /// Change a parameter's slider range (`None`: back to 0..2×default).
    SetParamRange {
        /// Index in the model's parameter list.
        index: usize,
        /// The range.
        range: Option<(f64, f64)>,
    },
    /// Switch a parameter's slider between linear and logarithmic.
    SetParamLogarithmic {
        /// Index in the model's parameter list.
        index: usize,
        /// Logarithmic when true.
        logarithmic: bool,
    },
    /// A drag or a typing burst ended: the next change starts a new undo step.
    EndGesture,
    /// Start an orbit at a point of the plane.
    AddOrbit([f64; 2]),
    /// Delete an orbit by seed id.
    RemoveOrbit(u64),
    /// Show or hide an orbit by seed id.
    SetOrbitVisible(u64, bool),
    /// Delete every orbit.
    ClearOrbits,
    /// Which way new orbits run.
    SetOrbitDirection(TimeDirection),
    /// How long orbits run (model time units).
    SetOrbitTime(f64),
    /// Turn a layer on or off.
    SetLayer(Layer, bool),
    /// Make the current view the model's window (recomputes over it).
    UseViewAsWindow([f64; 4]),
    /// Undo the last change.
    Undo,
    /// Redo the last undone change.
    Redo,
    /// Show the model's whole window again.
    ResetView,
    /// Open or close a panel.
    ShowPanel(PanelKind, bool),
    /// Start a new scenario on the default model (asks first over unsaved changes).
    New,
    /// Open a scenario file (asks first over unsaved changes).
    Open(PathBuf),
    /// Save to the scenario's file, or ask for one if it has none.
    Save,
    /// Save to a new file, which becomes the scenario's file.
    SaveAs(PathBuf),
    /// Show the file window to open or save as.
    ShowFileWindow(FileAction),
    /// Move an orbit's start (dragging its start point).
    MoveOrbit(u64, [f64; 2]),
    /// Select an orbit for the time series: alone, or added to (removed from) the selection.
    SelectOrbit {
        /// The seed id.
        id: u64,
        /// Toggle it in the selection instead of selecting it alone.
        toggle: bool,
    },
    /// Start or pause playback.
    TogglePlayback,
    /// Put the playback point at a time.
    SetPlaybackTime(f64),
    /// Model time units per second of playback.
    SetPlaybackSpeed(f64),
    /// Whether playback starts again at the end.
    SetPlaybackLoop(bool),
    /// Change the harvest rules or their economics.
    SetHarvest(Harvest),
    /// Show the export window for a kind of export.
    ShowExport(ExportKind),
    /// Write an export.
    Export(ExportRequest),
    /// Replace the scenario's free-text notes.
    SetNotes(String),
}

/// Panels that can be opened and closed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PanelKind {
    /// The model editor.
    Editor,
    /// The equilibria table.
    Equilibria,
    /// The cautions about what the models are.
    Cautions,
    /// Keyboard shortcuts and how to use the plane.
    Help,
    /// Both variables against time.
    TimeSeries,
    /// The parameter sweep.
    Sweep,
    /// The sustained-yield curve.
    Yield,
}

/// Which consecutive changes merge into one undo step.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MergeKey {
    /// Dragging or typing one parameter's value.
    Param(usize),
    /// Typing in the model editor.
    Editor,
    /// Dragging one orbit's start point.
    Orbit(u64),
    /// Dragging or typing a harvest number.
    Harvest,
    /// Typing in the notes.
    Notes,
}

impl Command {
    /// Whether undo/redo records this command (changes to the model, parameters or orbits).
    pub fn is_undoable(&self) -> bool {
        matches!(
            self,
            Command::EditModel(_)
                | Command::LoadBuiltin(_)
                | Command::SetParam { .. }
                | Command::ResetParam(_)
                | Command::ResetAllParams
                | Command::SetParamRange { .. }
                | Command::SetParamLogarithmic { .. }
                | Command::AddOrbit(_)
                | Command::RemoveOrbit(_)
                | Command::SetOrbitVisible(..)
                | Command::ClearOrbits
                | Command::SetOrbitTime(_)
                | Command::UseViewAsWindow(_)
                | Command::MoveOrbit(..)
                | Command::SetHarvest(_)
                | Command::SetNotes(_)
        )
    }

    /// Consecutive commands with the same key make one undo step.
    pub fn merge_key(&self) -> Option<MergeKey> {
        match self {
            Command::SetParam { index, .. } => Some(MergeKey::Param(*index)),
            Command::EditModel(_) => Some(MergeKey::Editor),
            Command::MoveOrbit(id, _) => Some(MergeKey::Orbit(*id)),
            Command::SetHarvest(_) => Some(MergeKey::Harvest),
            Command::SetNotes(_) => Some(MergeKey::Notes),
            _ => None,
        }
    }
}
