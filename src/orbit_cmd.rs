//! `quarry orbit`: integrate one orbit and measure it, or write it as CSV rows.

use clap::Args;
use quarry_core::harvest;
use quarry_core::orbit::{self, OrbitOptions, OrbitReport};
use serde_json::json;

use crate::Failure;
use crate::model_args::{ModelArgs, parse_list, parse_number};
use crate::output::{fmt, json_text, num, write_stdout};

/// Largest number of CSV rows `--csv --dt` may ask for.
const MAX_CSV_ROWS: f64 = 10_000_000.0;

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
    #[arg(long, conflicts_with = "csv")]
    pub json: bool,
    /// Write rows `t,x,y` every --dt instead of the measurements.
    #[arg(long, requires = "dt")]
    pub csv: bool,
    /// Time between CSV rows.
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
    let text = if args.csv {
        let dt = args.dt.unwrap_or(1.0);
        let mut s = format!("t,{xn},{yn}\n");
        for [t, x, y] in report.rows(dt) {
            s.push_str(&format!("{t},{x},{y}\n"));
        }
        s
    } else if args.json {
        let mut v = to_json(&report);
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
        let mut t = table(&report, xn, yn);
        if let Some(y) = &yields {
            t.push_str(&format!(
                "mean catch per unit time: {xn} {}, {yn} {}; mean profit {}\n{}\n",
                fmt(y.mean_catch[0]),
                fmt(y.mean_catch[1]),
                fmt(y.mean_profit),
                harvest::CAUTION
            ));
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

fn table(r: &OrbitReport, xn: &str, yn: &str) -> String {
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
        s.push_str(&format!(
            "{:<10} {:>14} {:>14}\n",
            label,
            fmt(v[0]),
            fmt(v[1])
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
