//! Quarry's desktop app: the phase plane with its layers, parameter sliders, orbits started
//! by clicking, the equilibria table and a model editor, in one window.
//!
//! The app holds no numerics: every number comes from `quarry-core`. What the user has set up
//! is a [`scenario::Scenario`]; panels turn clicks into [`command::Command`]s that the app
//! applies after each frame, and scenes are computed off the UI thread by [`worker`].

pub mod app;
pub mod cautions;
pub mod command;
pub mod document;
pub mod editor;
pub mod equilibria;
pub mod export;
pub mod files;
pub mod harvest_panel;
pub mod help;
pub mod history;
pub mod job;
pub mod layers;
pub mod map_view;
pub mod orbits;
pub mod params;
pub mod plane;
pub mod scenario;
pub mod status;
pub mod style;
pub mod sweep_view;
pub mod timeseries;
pub mod toolbar;
pub mod worker;
pub mod yield_view;

pub use app::QuarryApp;

use std::path::PathBuf;

use quarry_core::scenario::Scenario as ScenarioFile;

/// Opens the Quarry window on a scenario (read from `path`, when given) and returns when it
/// closes. Returns a one-line message
/// instead when no window can be opened (no display, no usable OpenGL).
pub fn run(file: ScenarioFile, path: Option<PathBuf>) -> Result<(), String> {
    if cfg!(all(unix, not(target_os = "macos")))
        && std::env::var_os("DISPLAY").is_none()
        && std::env::var_os("WAYLAND_DISPLAY").is_none()
    {
        return Err(
            "no display to open the window on (neither DISPLAY nor WAYLAND_DISPLAY is set)".into(),
        );
    }
    let file_name = path
        .as_deref()
        .and_then(|p| p.file_name())
        .map(|n| n.to_string_lossy().into_owned());
    let title = app::title_for(&file.model_spec(), file_name.as_deref(), false);
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_title(title)
            .with_app_id("quarry")
            .with_inner_size([1280.0, 800.0])
            .with_min_inner_size([820.0, 520.0]),
        ..Default::default()
    };
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        eframe::run_native(
            "Quarry",
            options,
            Box::new(move |cc| Ok(Box::new(QuarryApp::new(file, path, &cc.egui_ctx)))),
        )
    }));
    let one_line = |s: String| s.split_whitespace().collect::<Vec<_>>().join(" ");
    match result {
        Ok(Ok(())) => Ok(()),
        Ok(Err(e)) => Err(one_line(format!("could not open the window: {e}"))),
        Err(_) => Err("could not open the window: the windowing system failed".into()),
    }
}
