//! Publication-quality figures of a phase-plane [`Scene`]: an SVG written directly from the
//! scene's plain data, and the same picture as a PNG rasterised in-process.
//!
//! The figure is built for reports read by people who are not modellers: a white page, a thin
//! frame, ticks at round numbers, the variables named on the axes, curves in restrained colours
//! that stay distinguishable in grey print (nullclines solid against dashed, separatrices dotted
//! against solid), equilibria marked by class with fill for stability, and a legend that lists
//! only what is on the page.
//!
//! Nothing a scene holds can make rendering panic: non-finite points break curves, degenerate
//! windows are widened, curves are clipped, and text is escaped.
//!
//! ```
//! use quarry_core::scene::Scene;
//! use quarry_figure::{FigureOptions, render_svg};
//! let svg = render_svg(&Scene::default(), &FigureOptions::default());
//! assert!(svg.starts_with("<svg"));
//! ```

mod axes;
mod chart;
mod geometry;
mod legend;
mod raster;
mod render;
pub mod report;
mod style;
mod svg;
mod sweep_figure;
mod text;
pub mod ticks;
mod yield_figure;

pub use sweep_figure::{SweepFigure, render_sweep_png, render_sweep_svg};
pub use yield_figure::{YieldFigure, render_yield_png, render_yield_svg};
pub mod time_series;

#[cfg(test)]
mod tests;

use quarry_core::scene::Scene;

pub use report::{ReportInput, ReportRequest, prepare_report, report_html};
pub use time_series::{
    SeriesOrbit, TimeSeries, TimeSeriesOptions, render_time_series_png, render_time_series_svg,
};

/// Largest width or height (px) of a figure.
pub const MAX_SIZE: u32 = 16384;

/// The caution printed under every phase-plane figure, from the command line and the app.
pub const CAUTION: &str = "Simplified model for illustration, not a stock assessment; \
decisions rest on assessed data, local regulations and qualified scientific advice.";

/// What to draw and how big.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct FigureOptions {
    /// Width in px (SVG user units and PNG pixels). Default 900.
    pub width: u32,
    /// Height in px. Default 650.
    pub height: u32,
    /// Title; `None` uses the scene's title, an empty string draws none.
    pub title: Option<String>,
    /// Direction-field arrows (skipped when streamlines are drawn).
    pub show_field: bool,
    /// Streamlines (drawn instead of the field arrows when the scene has any).
    pub show_streamlines: bool,
    /// Nullclines.
    pub show_nullclines: bool,
    /// Separatrices.
    pub show_separatrices: bool,
    /// Level curves of the first integral.
    pub show_contours: bool,
    /// Orbits and limit cycles.
    pub show_orbits: bool,
    /// The legend.
    pub show_legend: bool,
    /// Small print under the plot (e.g. a caution line); wrapped to the figure's width, at
    /// most four lines.
    pub caption: Option<String>,
}

impl Default for FigureOptions {
    fn default() -> Self {
        Self {
            width: 900,
            height: 650,
            title: None,
            show_field: true,
            show_streamlines: true,
            show_nullclines: true,
            show_separatrices: true,
            show_contours: true,
            show_orbits: true,
            show_legend: true,
            caption: None,
        }
    }
}

/// Why a figure could not be made.
#[derive(Debug, thiserror::Error)]
pub enum FigureError {
    /// Width or height is 0 or above [`MAX_SIZE`].
    #[error("figure size {width}×{height} px is out of range (1 to {MAX_SIZE} each way)")]
    BadSize {
        /// Requested width (px).
        width: u32,
        /// Requested height (px).
        height: u32,
    },
    /// The SVG could not be parsed.
    #[error("could not read the SVG: {0}")]
    Parse(String),
    /// The PNG could not be encoded.
    #[error("could not encode the PNG: {0}")]
    Encode(String),
}

/// What a rendering actually drew (for tests and diagnostics).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub(crate) struct RenderedLayers {
    pub contours: bool,
    pub field: bool,
    pub streamlines: bool,
    pub nullclines: usize,
    pub separatrices: usize,
    pub limit_cycles: usize,
    pub orbits: usize,
    pub equilibria: usize,
    pub legend: bool,
}

/// The scene as a standalone SVG document, `opts.width`×`opts.height` user units.
///
/// Sizes outside 1..=[`MAX_SIZE`] are clamped into it (use [`render_png`] to have them
/// rejected). The output is deterministic.
pub fn render_svg(scene: &Scene, opts: &FigureOptions) -> String {
    render::render(scene, opts).0
}

/// Rasterises an SVG (any, typically from [`render_svg`]) to a `width`×`height` PNG on white,
/// scaling it to fit exactly. Text uses the bundled sans-serif font.
pub fn svg_to_png(svg: &str, width: u32, height: u32) -> Result<Vec<u8>, FigureError> {
    raster::svg_to_png(svg, width, height)
}

/// The scene as a PNG of `opts.width`×`opts.height` pixels.
pub fn render_png(scene: &Scene, opts: &FigureOptions) -> Result<Vec<u8>, FigureError> {
    raster::figure_png(opts.width, opts.height, || render_svg(scene, opts))
}
