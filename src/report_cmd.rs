//! `quarry report`: a one-page, self-contained HTML report of a model (formulas, equilibria,
//! phase portrait, time series, harvest and yield, cautions), the same page the desktop app
//! exports.

use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime, UNIX_EPOCH};

use clap::Args;
use quarry_core::library;
use quarry_core::scenario::{DEFAULT_ORBIT_TIME, Scenario};
use quarry_figure::report::{self, MAX_REPORT_ORBITS, ReportRequest};

use crate::Failure;
use crate::model_args::{ModelArgs, parse_list, parse_number};
use crate::output::write_stdout;
use crate::tables;

/// Arguments of `quarry report`.
#[derive(Args, Debug)]
pub struct ReportArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// The report file (`.html`).
    #[arg(long, value_name = "FILE.html")]
    pub out: PathBuf,
    /// Start an orbit at `X,Y` (repeatable; default: the scenario's orbits, else starts
    /// around the equilibria).
    #[arg(long = "from", value_name = "X,Y", allow_hyphen_values = true)]
    pub from: Vec<String>,
    /// How long each orbit runs (default: the scenario's orbit time, else 30).
    #[arg(long = "t-end", value_name = "T", allow_hyphen_values = true)]
    pub t_end: Option<String>,
    /// Title (default: the scenario's or model's).
    #[arg(long)]
    pub title: Option<String>,
}

fn check_extension(path: &Path) -> Result<(), Failure> {
    match path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .as_deref()
    {
        Some("html" | "htm") => Ok(()),
        _ => Err(Failure::Usage(format!(
            "--out {}: the report is HTML; the file name must end in .html",
            path.display()
        ))),
    }
}

/// The time stamped on the report: now, or `SOURCE_DATE_EPOCH` when set (reproducible
/// output, as reproducible-builds.org specifies it).
fn report_time() -> SystemTime {
    std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<u64>().ok())
        .map_or_else(SystemTime::now, |s| UNIX_EPOCH + Duration::from_secs(s))
}

/// Runs the subcommand.
pub fn run(args: &ReportArgs) -> Result<(), Failure> {
    check_extension(&args.out)?;
    let (_, harvest, base) = args.model.harvested()?;
    let file_scenario = tables::scenario_of(&args.model);
    let mut scenario = file_scenario
        .clone()
        .unwrap_or_else(|| Scenario::from_spec(&base));
    if file_scenario.is_none()
        && let Some(b) = args.model.model.as_deref().and_then(library::builtin)
    {
        scenario.notes = format!(
            "Built-in model: {}. Its default numbers are invented round values chosen to show the typical behaviour, not estimates for any real population.",
            b.summary
        );
    }
    if let Some(t) = &args.title {
        scenario.title = t.clone();
    }
    let mut starts = Vec::new();
    for f in &args.from {
        starts.push(parse_list::<2>(f, "--from")?);
    }
    if starts.is_empty() {
        starts = scenario
            .orbits
            .iter()
            .filter(|o| !o.hidden)
            .map(|o| [o.x, o.y])
            .collect();
    }
    if starts.len() > MAX_REPORT_ORBITS {
        return Err(Failure::Usage(format!(
            "--from: a report draws at most {MAX_REPORT_ORBITS} orbits, got {}",
            starts.len()
        )));
    }
    let t_end = match &args.t_end {
        Some(t) => parse_number(t, "--t-end")?,
        None if file_scenario.is_some() => scenario.orbit_time,
        None => DEFAULT_ORBIT_TIME,
    };
    if t_end <= 0.0 {
        return Err(Failure::Usage(format!(
            "--t-end {t_end}: a report runs orbits forward; give a positive time"
        )));
    }
    let input = report::prepare_report(&ReportRequest {
        scenario: &scenario,
        base: &base,
        harvest: &harvest,
        starts,
        t_end,
        generated_utc: report::iso_utc(report_time()),
    })
    .map_err(|e| Failure::Usage(format!("report: {e}")))?;
    let html = report::report_html(&input);
    tables::write_file(&args.out, html.as_bytes(), "--out")?;
    let mut msg = format!("wrote the report to {}\n", args.out.display());
    if harvest.is_active() {
        msg.push_str(&format!("{}\n", quarry_core::harvest::CAUTION));
    }
    write_stdout(&msg)
}
