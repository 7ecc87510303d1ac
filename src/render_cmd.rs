//! `quarry render`: a phase portrait as SVG or PNG, drawn in-process from the same scene the
//! desktop app shows.

use std::path::{Path, PathBuf};

use clap::{Args, ValueEnum};
use quarry_core::scene::{self, Cancel, ContourLevels, SceneRequest, Seed, TimeDirection};
use quarry_figure::FigureOptions;

use crate::Failure;
use crate::model_args::{ModelArgs, parse_list, parse_number};

/// Largest figure side in pixels.
const MAX_SIDE: u32 = 16384;

/// The caution printed under every figure (shared with the app's export).
pub use quarry_figure::CAUTION;

/// How the flow is shown.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Flow {
    /// Arrows on a grid.
    Arrows,
    /// Evenly spaced streamlines.
    Streamlines,
    /// Neither.
    None,
}

/// Which way orbits run from their start points.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Direction {
    /// Forward in time.
    Forward,
    /// Backward in time.
    Backward,
    /// Both ways.
    Both,
}

/// Arguments of `quarry render`.
#[derive(Args, Debug)]
pub struct RenderArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Output file; the format follows the extension (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Start an orbit at `X,Y` (repeatable).
    #[arg(long = "from", value_name = "X,Y", allow_hyphen_values = true)]
    pub from: Vec<String>,
    /// How long each orbit runs.
    #[arg(
        long = "t-end",
        value_name = "T",
        allow_hyphen_values = true,
        default_value = "30"
    )]
    pub t_end: String,
    /// Which way orbits run.
    #[arg(long, value_enum, default_value_t = Direction::Forward)]
    pub direction: Direction,
    /// How the flow is shown.
    #[arg(long, value_enum, default_value_t = Flow::Arrows)]
    pub flow: Flow,
    /// Width in pixels.
    #[arg(long, default_value_t = 900)]
    pub width: u32,
    /// Height in pixels.
    #[arg(long, default_value_t = 650)]
    pub height: u32,
    /// Title (default: the model's name).
    #[arg(long)]
    pub title: Option<String>,
    /// Leave out the nullclines.
    #[arg(long)]
    pub no_nullclines: bool,
    /// Leave out the separatrices.
    #[arg(long)]
    pub no_separatrices: bool,
    /// Leave out the first-integral contours.
    #[arg(long)]
    pub no_contours: bool,
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Format {
    Svg,
    Png,
}

fn format_of(path: &Path) -> Result<Format, Failure> {
    match path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .as_deref()
    {
        Some("svg") => Ok(Format::Svg),
        Some("png") => Ok(Format::Png),
        _ => Err(Failure::Usage(format!(
            "--out {}: the file name must end in .svg or .png",
            path.display()
        ))),
    }
}

/// Runs the subcommand.
pub fn run(args: &RenderArgs) -> Result<(), Failure> {
    let format = format_of(&args.out)?;
    let model = args.model.model()?;
    for (side, v) in [("--width", args.width), ("--height", args.height)] {
        if !(16..=MAX_SIDE).contains(&v) {
            return Err(Failure::Usage(format!(
                "{side} {v}: must be between 16 and {MAX_SIDE} pixels"
            )));
        }
    }
    let t_end = parse_number(&args.t_end, "--t-end")?;
    if t_end == 0.0 {
        return Err(Failure::Usage("--t-end: must be nonzero".into()));
    }
    let mut seeds = Vec::new();
    for f in &args.from {
        let at = parse_list::<2>(f, "--from")?;
        // A negative --t-end flips the chosen direction.
        let direction = match (args.direction, t_end < 0.0) {
            (Direction::Both, _) => TimeDirection::Both,
            (Direction::Forward, false) | (Direction::Backward, true) => TimeDirection::Forward,
            (Direction::Forward, true) | (Direction::Backward, false) => TimeDirection::Backward,
        };
        seeds.push(Seed { at, direction });
    }
    let request = SceneRequest {
        field: (args.flow == Flow::Arrows).then_some((24, 24)),
        streamlines: args.flow == Flow::Streamlines,
        nullcline_grid: (!args.no_nullclines).then_some(256),
        contours: (!args.no_contours).then_some(ContourLevels::Count(8)),
        separatrices: !args.no_separatrices,
        seeds,
        orbit_time: t_end.abs(),
        ..SceneRequest::default()
    };
    let scene = scene::build_scene(&model, &request, &Cancel::new())
        .map_err(|e| Failure::Io(e.to_string()))?;
    let opts = FigureOptions {
        width: args.width,
        height: args.height,
        title: args.title.clone(),
        caption: Some(CAUTION.to_owned()),
        ..FigureOptions::default()
    };
    let bytes = match format {
        Format::Svg => quarry_figure::render_svg(&scene, &opts).into_bytes(),
        Format::Png => quarry_figure::render_png(&scene, &opts)
            .map_err(|e| Failure::Io(format!("rendering PNG: {e}")))?,
    };
    quarry_core::scenario::write_atomically(&args.out, &bytes)
        .map_err(|e| Failure::Io(e.to_string()))
}
