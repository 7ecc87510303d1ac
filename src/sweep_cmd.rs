//! `quarry sweep`: equilibria along one parameter, with their stability and the bifurcations
//! between grid values located precisely; limit cycles sampled past each Hopf point; the
//! branch diagram as SVG or PNG.

use std::path::PathBuf;

use clap::Args;
use quarry_core::sweep::{self, SweepOptions};
use serde_json::json;

use crate::Failure;
use crate::model_args::{ModelArgs, parse_number};
use crate::output::{fmt, json_text, num, write_stdout};
use crate::yield_cmd::{check_size, format_of, write_figure};

/// Most grid values one sweep may ask for.
const MAX_STEPS: usize = 1_000_000;

/// Arguments of `quarry sweep`.
#[derive(Args, Debug)]
pub struct SweepArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// First value.
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: String,
    /// Last value.
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: String,
    /// Number of values from A to B, both ends included.
    #[arg(long, value_name = "N", default_value_t = 101)]
    pub steps: usize,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Limit-cycle samples past each Hopf point (0 for none).
    #[arg(long, value_name = "N", default_value_t = 12)]
    pub cycles: usize,
    /// Also draw the branch diagram to FILE (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// The variable drawn up the branch diagram (default: the first).
    #[arg(long, value_name = "NAME")]
    pub variable: Option<String>,
    /// Figure width in pixels.
    #[arg(long, default_value_t = 900)]
    pub width: u32,
    /// Figure height in pixels.
    #[arg(long, default_value_t = 650)]
    pub height: u32,
}

/// Most cycle samples per Hopf point.
const MAX_CYCLES: usize = 1000;

/// Runs the subcommand.
pub fn run(args: &SweepArgs) -> Result<(), Failure> {
    // `--param NAME` (no '=') names the swept parameter; `--param NAME=VALUE` defines one as
    // usual, and the swept parameter's own value is ignored (the sweep sets it).
    let (named, defined): (Vec<&String>, Vec<&String>) =
        args.model.params.iter().partition(|p| !p.contains('='));
    let param = match named.as_slice() {
        [one] => one.trim().to_owned(),
        [] => {
            return Err(Failure::Usage(
                "--param NAME: name the parameter to sweep (without '=')".into(),
            ));
        }
        _ => {
            return Err(Failure::Usage(
                "--param: name only one parameter to sweep (without '=')".into(),
            ));
        }
    };
    let from = parse_number(&args.from, "--from")?;
    let mut model_args = args.model.clone();
    model_args.params = defined.into_iter().cloned().collect();
    let defines_it = model_args
        .params
        .iter()
        .any(|p| p.split_once('=').is_some_and(|(n, _)| n.trim() == param));
    if model_args.model.is_none() && !defines_it {
        model_args.params.push(format!("{param}={from}"));
    }
    let (model, harvest, _) = model_args.harvested()?;
    let to = parse_number(&args.to, "--to")?;
    if !(2..=MAX_STEPS).contains(&args.steps) {
        return Err(Failure::Usage(format!(
            "--steps {}: must be between 2 and {MAX_STEPS}",
            args.steps
        )));
    }
    if model.param(&param).is_none() {
        let known: Vec<&str> = model
            .spec()
            .parameters
            .iter()
            .map(|p| p.name.as_str())
            .collect();
        return Err(Failure::Usage(format!(
            "--param {}: the model has no parameter '{}' (it has: {})",
            param,
            param,
            known.join(", ")
        )));
    }
    let format = args.out.as_deref().map(format_of).transpose()?;
    check_size(args.width, args.height)?;
    if args.cycles > MAX_CYCLES {
        return Err(Failure::Usage(format!(
            "--cycles {}: at most {MAX_CYCLES}",
            args.cycles
        )));
    }
    let variable = match &args.variable {
        None => 0,
        Some(v) => model
            .variables()
            .iter()
            .position(|n| n == v)
            .ok_or_else(|| {
                let [a, b] = model.variables();
                Failure::Usage(format!(
                    "--variable {v}: not a variable of the model (it has {a} and {b})"
                ))
            })?,
    };
    let opts = SweepOptions {
        cycle_samples: args.cycles,
        ..SweepOptions::new(&param, from, to, args.steps)
    };
    let result = sweep::sweep(&model, &opts, &|| false, &|_| {})
        .map_err(|e| Failure::Usage(format!("sweep: {e}")))?;
    if let (Some(path), Some(format)) = (&args.out, format) {
        let [a, b] = model.variables();
        let fig = quarry_figure::SweepFigure {
            width: args.width,
            height: args.height,
            variable,
            variable_names: [a.to_owned(), b.to_owned()],
            caption: harvest
                .is_active()
                .then(|| quarry_core::harvest::CAUTION.to_owned()),
            ..quarry_figure::SweepFigure::default()
        };
        let svg = quarry_figure::render_sweep_svg(&result, &fig);
        write_figure(path, format, svg, args.width, args.height)?;
    }
    let text = if args.json {
        let mut v = json!({
            "param": result.param,
            "points": result.points.iter().map(|p| json!({
                "value": num(p.value),
                "equilibria": p.equilibria.iter().map(|e| json!({
                    "x": num(e.x),
                    "y": num(e.y),
                    "class": e.linear.class.as_str(),
                    "eigenvalues": e.linear.eigenvalues.iter().map(|z| json!([num(z.re), num(z.im)])).collect::<Vec<_>>(),
                })).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
            "bifurcations": result.bifurcations.iter().map(|b| json!({
                "kind": b.kind.as_str(),
                "value": num(b.value),
                "x": num(b.x),
                "y": num(b.y),
            })).collect::<Vec<_>>(),
        });
        v["cycles"] = result
            .cycles
            .iter()
            .map(|c| {
                json!({
                    "value": num(c.value),
                    "hopf": num(c.hopf_value),
                    "min": [num(c.min[0]), num(c.min[1])],
                    "max": [num(c.max[0]), num(c.max[1])],
                    "period": num(c.period),
                    "multiplier": num(c.multiplier),
                    "stable": c.stable,
                })
            })
            .collect::<Vec<_>>()
            .into();
        if harvest.is_active() {
            v["caution"] = quarry_core::harvest::CAUTION.into();
        }
        json_text(&v)
    } else {
        let [xn, yn] = model.variables();
        let mut s = format!(
            "sweep of {} from {} to {} in {} values\n",
            result.param,
            fmt(from),
            fmt(to),
            args.steps
        );
        if result.bifurcations.is_empty() {
            s.push_str("no bifurcation in the range\n");
        }
        for b in &result.bifurcations {
            s.push_str(&format!(
                "{:<14} at {} = {}   ({xn}, {yn}) = ({}, {})\n",
                b.kind.as_str(),
                result.param,
                fmt(b.value),
                fmt(b.x),
                fmt(b.y)
            ));
        }
        if !result.cycles.is_empty() {
            s.push_str(&format!(
                "limit cycles past the Hopf points ({} samples):\n{:>14} {:>12} {:>12} {:>12} {:>12} {:>12}  stability\n",
                result.cycles.len(),
                result.param,
                format!("{xn} min"),
                format!("{xn} max"),
                format!("{yn} min"),
                format!("{yn} max"),
                "period"
            ));
            for c in &result.cycles {
                s.push_str(&format!(
                    "{:>14} {:>12} {:>12} {:>12} {:>12} {:>12}  {}\n",
                    fmt(c.value),
                    fmt(c.min[0]),
                    fmt(c.max[0]),
                    fmt(c.min[1]),
                    fmt(c.max[1]),
                    fmt(c.period),
                    if c.stable { "attracting" } else { "repelling" }
                ));
            }
        }
        if harvest.is_active() {
            s.push_str(&format!("{}\n", quarry_core::harvest::CAUTION));
        }
        s
    };
    write_stdout(&text)
}
