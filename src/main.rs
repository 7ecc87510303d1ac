//! `quarry`: the phase-plane workbench's command line.
//!
//! With no arguments it will open the desktop app; the subcommands answer headless, as a
//! readable table or as JSON for scripts. Bad input of any kind prints a message naming what
//! and where to stderr and exits with status 2, writing nothing else.

mod analyze_cmd;
mod model_args;
mod orbit_cmd;
mod output;
mod render_cmd;
mod report_cmd;
mod scenario_cmd;
mod sweep_cmd;
mod tables;
mod yield_cmd;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Phase-plane workbench for two-species population models.
///
/// Simplified models for exploration and teaching: their outputs are not a stock assessment,
/// and management decisions rest on assessed data, local regulations and qualified scientific
/// advice.
#[derive(Parser, Debug)]
#[command(name = "quarry", version, about, long_about = None, args_conflicts_with_subcommands = true)]
struct Cli {
    /// A scenario file to open in the app (default: the built-in demo scenario).
    #[arg(value_name = "FILE.ron")]
    file: Option<std::path::PathBuf>,

    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Find, linearise and classify every equilibrium in the window.
    Analyze(analyze_cmd::AnalyzeArgs),
    /// Integrate one orbit and measure it (period, extremes, means, lag).
    Orbit(orbit_cmd::OrbitArgs),
    /// Follow the equilibria along one parameter and locate fold, transcritical and Hopf points.
    Sweep(sweep_cmd::SweepArgs),
    /// Equilibrium catch against effort or quota: MSY, collapse, open access and MEY.
    Yield(yield_cmd::YieldArgs),
    /// Draw the phase portrait as SVG or PNG.
    Render(render_cmd::RenderArgs),
    /// Write a one-page HTML report: formulas, equilibria, phase portrait, time series, yield.
    Report(report_cmd::ReportArgs),
    /// Check a scenario file: exit 0 when valid, 2 with line, column and field when not.
    Check(scenario_cmd::FileArgs),
    /// Rewrite a scenario file in canonical form.
    Fmt(scenario_cmd::FileArgs),
    /// List the built-in models.
    Models,
}

/// A failure with the exit status it maps to.
#[derive(Debug)]
pub enum Failure {
    /// Bad input: exit status 2.
    Usage(String),
    /// Could not write output: exit status 1.
    Io(String),
}

impl From<std::io::Error> for Failure {
    fn from(e: std::io::Error) -> Self {
        Failure::Io(e.to_string())
    }
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            // clap prints help and version to stdout with status 0, errors to stderr with 2.
            let _ = e.print();
            return ExitCode::from(e.exit_code().clamp(0, 255) as u8);
        }
    };
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Usage(msg)) => {
            eprintln!("quarry: {msg}");
            ExitCode::from(2)
        }
        Err(Failure::Io(msg)) => {
            eprintln!("quarry: {msg}");
            ExitCode::from(1)
        }
    }
}

fn run(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        None => {
            let scenario = match &cli.file {
                Some(path) => quarry_core::scenario::Scenario::load(path)
                    .map_err(|e| Failure::Usage(format!("{}: {e}", path.display())))?,
                None => quarry_core::scenario::default_scenario(),
            };
            quarry_app::run(scenario, cli.file.clone()).map_err(|e| {
                Failure::Io(format!(
                    "{e}. The subcommands (analyze, orbit, render, sweep, yield, report, check, fmt) need no display: see `quarry --help`."
                ))
            })
        }
        Some(Command::Analyze(args)) => analyze_cmd::run(&args),
        Some(Command::Orbit(args)) => orbit_cmd::run(&args),
        Some(Command::Render(args)) => render_cmd::run(&args),
        Some(Command::Report(args)) => report_cmd::run(&args),
        Some(Command::Sweep(args)) => sweep_cmd::run(&args),
        Some(Command::Yield(args)) => yield_cmd::run(&args),
        Some(Command::Check(args)) => scenario_cmd::check(&args),
        Some(Command::Fmt(args)) => scenario_cmd::fmt(&args),
        Some(Command::Models) => {
            let mut out = String::new();
            for b in quarry_core::library::BUILTINS {
                out.push_str(&format!("{:<22} {}\n", b.key, b.summary));
            }
            output::write_stdout(&out)
        }
    }
}
