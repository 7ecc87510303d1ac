//! `quarry orbit`: integrate one orbit and measure it, and write it as CSV rows.

use std::path::PathBuf;

use clap::Args;
use quarry_core::export::{self, CatchRates};
use quarry_core::harvest;
use quarry_core::orbit::{self, OrbitOptions, OrbitReport, shown_near_zero};
use serde_json::json;

use crate::Failure;
use crate::model_args::{ModelArgs, parse_list, parse_number};
use crate::output::{fmt, json_text, num, write_stdout};
use crate::tables;

/// Largest number of CSV rows `--csv --dt` may ask for.
const MAX_CSV_ROWS: f64 = 10_000_000.0;

/// Rows per run, less one, when `--csv` is given without `--dt`.
const DEFAULT_CSV_INTERVALS: f64 = 1000.0;

/// Arguments of `quarry orbit`.
#[derive(Args, Debug)]
pub struct OrbitArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Start point `X,Y`.
    #[arg(long, value_name = "X,Y", allow_hyphen_values = true)]
    pub from: String,
    /// End time; negative integrates backward.
    #[arg(
        long = "t-end",
        value_name = "T",
        allow_hyphen_values = true,
        default_value = "100"
    )]
    pub t_end: String,
    /// Relative tolerance.
    #[arg(long, value_name = "R", default_value_t = orbit::DEFAULT_ORBIT_RTOL)]
    pub rtol: f64,
    /// Stop when the orbit leaves the window.
    #[arg(long)]
    pub clip: bool,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Write the orbit as CSV rows every --dt: time, both variables and the catch of each
    /// harvested species. To FILE (the measurements still go to stdout), or, with no FILE or
    /// `-`, to stdout instead of the measurements.
    #[arg(
        long,
        value_name = "FILE",
        num_args = 0..=1,
        default_missing_value = "-"
    )]
    pub csv: Option<PathBuf>,
    /// Time between CSV rows (default: a thousandth of the run).
    #[arg(long, value_name = "DT")]
    pub dt: Option<f64>,
}

/// Runs the subcommand.
pub fn run(args: &OrbitArgs) -> Result<(), Failure> {
    let (model, harvest, base_spec) = args.model.harvested()?;
    let [x0, y0] = parse_list::<2>(&args.from, "--from")?;
    let t_end = parse_number(&args.t_end, "--t-end")?;
    if t_end == 0.0 {
        return Err(Failure::Usage("--t-end: must be nonzero".into()));
    }
    if !(args.rtol.is_finite() && args.rtol >= 1e-14 && args.rtol < 1.0) {
        return Err(Failure::Usage(format!(
            "--rtol {}: must be between 1e-14 and 1",
            args.rtol
        )));
    }
    if let Some(dt) = args.dt {
        if !(dt.is_finite() && dt > 0.0) {
            return Err(Failure::Usage(format!(
                "--dt {dt}: must be a positive number"
            )));
        }
        if t_end.abs() / dt > MAX_CSV_ROWS {
            return Err(Failure::Usage(format!(
                "--dt {dt}: would write more than {MAX_CSV_ROWS} rows; choose a larger step"
            )));
        }
    }
    let opts = OrbitOptions {
        t_end,
        rtol: args.rtol,
        clip: args.clip,
        ..OrbitOptions::default()
    };
    let report = orbit::run_orbit(&model, [x0, y0], &opts)
        .map_err(|e| Failure::Usage(format!("orbit: {e}")))?;
    let [xn, yn] = model.variables();
    let yields = if harvest.is_active() {
        Some(
            harvest::yield_along(&model, &harvest, &base_spec, &report)
                .map_err(|e| Failure::Usage(format!("--harvest: {e}")))?,
        )
    } else {
        None
    };
    let csv_to_stdout = args.csv.as_deref().is_some_and(tables::is_stdout);
    if csv_to_stdout && args.json {
        return Err(Failure::Usage(
            "--json and --csv without a FILE both write to stdout: give --csv FILE".into(),
        ));
    }
    let mut csv_note = None;
    if let Some(path) = &args.csv {
        let dt = args
            .dt
            .unwrap_or(report.t_final.abs() / DEFAULT_CSV_INTERVALS);
        let rows: Vec<(f64, [f64; 2])> = report
            .rows(dt)
            .into_iter()
            .map(|[t, x, y]| (t, [x, y]))
            .collect();
        let catch = if harvest.is_active() {
            Some(
                CatchRates::new(&model, &harvest, &base_spec)
                    .map_err(|e| Failure::Usage(format!("--harvest: {e}")))?,
            )
        } else {
            None
        };
        let units = tables::units_of(&args.model);
        let text = export::orbit_csv([xn, yn], &rows, catch.as_ref(), Some(&units));
        if csv_to_stdout {
            if harvest.is_active() {
                // stdout holds only the table; the caution goes beside it.
                eprintln!("{}", harvest::CAUTION);
            }
            return write_stdout(&text);
        }
        tables::write_file(path, text.as_bytes(), "--csv")?;
        csv_note = Some((path.display().to_string(), rows.len()));
    }
    let text = if args.json {
        let mut v = to_json(&report);
        if let Some((path, rows)) = &csv_note {
            v["csv"] = json!({ "file": path, "rows": rows });
        }
        if let Some(y) = &yields {
            v["harvest"] = json!({
                "mean_catch": [num(y.mean_catch[0]), num(y.mean_catch[1])],
                "mean_profit": num(y.mean_profit),
                "over_time": num(y.span),
                "caution": harvest::CAUTION,
            });
        }
        json_text(&v)
    } else {
        let w = model.spec().window;
        let mut t = table(&report, [w.width(), w.height()], xn, yn);
        if let Some(y) = &yields {
            t.push_str(&format!(
                "mean catch per unit time: {xn} {}, {yn} {}; mean profit {}\n{}\n",
                fmt(y.mean_catch[0]),
                fmt(y.mean_catch[1]),
                fmt(y.mean_profit),
                harvest::CAUTION
            ));
        }
        if let Some((path, rows)) = &csv_note {
            t.push_str(&format!("wrote {rows} rows to {path}\n"));
        }
        t
    };
    write_stdout(&text)
}

/// The JSON document of the command-line contract.
pub fn to_json(r: &OrbitReport) -> serde_json::Value {
    let pair = |v: [f64; 2]| json!([num(v[0]), num(v[1])]);
    json!({
        "t_end": num(r.t_final),
        "steps": r.steps,
        "rhs_evals": r.rhs_evals,
        "final": pair(r.final_state),
        "min": pair(r.min),
        "max": pair(r.max),
        "mean": pair(r.mean),
        "amplitude": pair([0.5 * (r.max[0] - r.min[0]), 0.5 * (r.max[1] - r.min[1])]),
        "closed": r.closed,
        "period": r.period.map(num),
        "lag_fraction": r.lag_fraction.map(num),
        "invariant_drift": r.invariant_drift.map(num),
        "stopped": r.stopped.as_str(),
        "stop_detail": r.stop_detail,
    })
}

fn table(r: &OrbitReport, extent: [f64; 2], xn: &str, yn: &str) -> String {
    let opt = |v: Option<f64>| v.map_or_else(|| "—".to_owned(), fmt);
    let mut s = String::new();
    s.push_str(&format!(
        "ran to t = {} ({}), {} steps, {} rate evaluations\n",
        fmt(r.t_final),
        r.stopped.as_str(),
        r.steps,
        r.rhs_evals
    ));
    if let Some(d) = &r.stop_detail {
        s.push_str(&format!("stopped early: {d}\n"));
    }
    s.push_str(&format!("{:<10} {:>14} {:>14}\n", "", xn, yn));
    for (label, v) in [
        ("final", r.final_state),
        ("min", r.min),
        ("max", r.max),
        ("mean", r.mean),
    ] {
        let shown = |k: usize| fmt(shown_near_zero(v[k], extent[k]));
        s.push_str(&format!(
            "{:<10} {:>14} {:>14}\n",
            label,
            shown(0),
            shown(1)
        ));
    }
    s.push_str(&format!(
        "closed: {}   period: {}   lag of {yn} behind {xn}: {} of a period\n",
        if r.closed { "yes" } else { "no" },
        opt(r.period),
        opt(r.lag_fraction)
    ));
    if let Some(d) = r.invariant_drift {
        s.push_str(&format!("first-integral drift: {}\n", fmt(d)));
    }
    if r.closed {
        s.push_str("mean taken over whole periods\n");
    }
    s
}
