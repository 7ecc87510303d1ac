//! `quarry sweep`: equilibria along one parameter, with their stability and the bifurcations
//! between grid values located precisely.

use clap::Args;
use quarry_core::sweep::{self, SweepOptions};
use serde_json::json;

use crate::Failure;
use crate::model_args::{ModelArgs, parse_number};
use crate::output::{fmt, json_text, num, write_stdout};

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
}

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
    let opts = SweepOptions::new(&param, from, to, args.steps);
    let result = sweep::sweep(&model, &opts, &|| false, &|_| {})
        .map_err(|e| Failure::Usage(format!("sweep: {e}")))?;
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
        if harvest.is_active() {
            s.push_str(&format!("{}\n", quarry_core::harvest::CAUTION));
        }
        s
    };
    write_stdout(&text)
}
