//! `quarry yield`: the sustained-yield curve of one species under effort or a quota, with
//! the MSY, the collapse point, and with price and cost the open-access point and the MEY.

use std::path::{Path, PathBuf};

use clap::{Args, ValueEnum};
use quarry_core::harvest::{CAUTION, Economics};
use quarry_core::sustained::{self, Optimum, YieldOptions, YieldRule};
use serde_json::{Value, json};

use crate::Failure;
use crate::model_args::{ModelArgs, parse_number};
use crate::output::{fmt, json_text, num, write_stdout};

/// Most values one curve may ask for.
const MAX_STEPS: usize = 100_000;
/// Largest figure side in pixels.
const MAX_SIDE: u32 = 16384;

/// The harvest parameter the curve runs over.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Rule {
    /// Proportional harvest q·E·x against the effort E.
    Effort,
    /// Constant quota H against H.
    Quota,
}

/// Arguments of `quarry yield`.
#[derive(Args, Debug)]
pub struct YieldArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// The harvested species (a variable name).
    #[arg(long, value_name = "NAME")]
    pub species: String,
    /// Effort or quota.
    #[arg(long, value_enum)]
    pub rule: Rule,
    /// First effort or quota.
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: String,
    /// Last effort or quota.
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: String,
    /// Number of values from A to B, both ends included.
    #[arg(long, value_name = "N", default_value_t = 101)]
    pub steps: usize,
    /// Catchability q of the effort rule.
    #[arg(
        long,
        value_name = "Q",
        default_value = "1",
        allow_hyphen_values = true
    )]
    pub catchability: String,
    /// Taper s of the quota rule (default: 1e-3 of the window).
    #[arg(long, value_name = "S", allow_hyphen_values = true)]
    pub taper: Option<String>,
    /// Print JSON instead of text.
    #[arg(long)]
    pub json: bool,
    /// Also draw the curve to FILE (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Figure width in pixels.
    #[arg(long, default_value_t = 900)]
    pub width: u32,
    /// Figure height in pixels.
    #[arg(long, default_value_t = 650)]
    pub height: u32,
}

/// A figure format, from the file name.
#[derive(Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// SVG text.
    Svg,
    /// PNG pixels.
    Png,
}

/// The format an `--out` file name asks for.
pub fn format_of(path: &Path) -> Result<Format, Failure> {
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

/// Checks figure sides.
pub fn check_size(width: u32, height: u32) -> Result<(), Failure> {
    for (side, v) in [("--width", width), ("--height", height)] {
        if !(16..=MAX_SIDE).contains(&v) {
            return Err(Failure::Usage(format!(
                "{side} {v}: must be between 16 and {MAX_SIDE} pixels"
            )));
        }
    }
    Ok(())
}

/// Writes a figure atomically: SVG as is, PNG rasterised at `width`×`height`.
pub fn write_figure(
    path: &Path,
    format: Format,
    svg: String,
    width: u32,
    height: u32,
) -> Result<(), Failure> {
    let bytes = match format {
        Format::Svg => svg.into_bytes(),
        Format::Png => quarry_figure::svg_to_png(&svg, width, height)
            .map_err(|e| Failure::Io(format!("rendering PNG: {e}")))?,
    };
    quarry_core::scenario::write_atomically(path, &bytes).map_err(|e| Failure::Io(e.to_string()))
}

fn optimum_json(o: &Optimum) -> Value {
    json!({
        "value": num(o.value),
        "stock": [num(o.state[0]), num(o.state[1])],
        "catch": num(o.catch),
        "profit": o.profit.map_or(Value::Null, num),
        "at_collapse": o.at_collapse,
    })
}

/// Runs the subcommand.
pub fn run(args: &YieldArgs) -> Result<(), Failure> {
    let format = args.out.as_deref().map(format_of).transpose()?;
    check_size(args.width, args.height)?;
    // `--price P` and `--cost C` (no '=') are for the harvested species; `VAR=VALUE` as usual.
    let mut model_args = args.model.clone();
    let (bare_price, price): (Vec<String>, Vec<String>) =
        model_args.price.drain(..).partition(|p| !p.contains('='));
    let (bare_cost, cost): (Vec<String>, Vec<String>) =
        model_args.cost.drain(..).partition(|p| !p.contains('='));
    model_args.price = price;
    model_args.cost = cost;
    let (_, harvest, spec) = model_args.harvested()?;
    let Some(i) = spec.variables.iter().position(|v| *v == args.species) else {
        return Err(Failure::Usage(format!(
            "--species {}: not a variable of the model (it has {} and {})",
            args.species, spec.variables[0], spec.variables[1]
        )));
    };
    let one = |list: &[String], what: &str| -> Result<Option<f64>, Failure> {
        match list {
            [] => Ok(None),
            [v] => parse_number(v, what).map(Some),
            _ => Err(Failure::Usage(format!("{what}: given more than once"))),
        }
    };
    let mut econ = harvest.economics[i];
    if let Some(p) = one(&bare_price, "--price")? {
        econ.price = p;
    }
    if let Some(c) = one(&bare_cost, "--cost")? {
        econ.cost_per_effort = c;
    }
    for (what, v) in [("--price", econ.price), ("--cost", econ.cost_per_effort)] {
        if v < 0.0 {
            return Err(Failure::Usage(format!("{what} {v}: must be 0 or more")));
        }
    }
    let economics = (econ != Economics::default()).then_some(econ);
    let from = parse_number(&args.from, "--from")?;
    let to = parse_number(&args.to, "--to")?;
    if from < 0.0 || to <= from {
        return Err(Failure::Usage(format!(
            "--from {} --to {}: the range must start at 0 or above and increase",
            args.from, args.to
        )));
    }
    if !(2..=MAX_STEPS).contains(&args.steps) {
        return Err(Failure::Usage(format!(
            "--steps {}: must be between 2 and {MAX_STEPS}",
            args.steps
        )));
    }
    let rule = match args.rule {
        Rule::Effort => {
            let q = parse_number(&args.catchability, "--catchability")?;
            if q <= 0.0 {
                return Err(Failure::Usage(format!(
                    "--catchability {q}: must be positive"
                )));
            }
            if args.taper.is_some() {
                return Err(Failure::Usage(
                    "--taper: only the quota rule has a taper".into(),
                ));
            }
            YieldRule::Effort { catchability: q }
        }
        Rule::Quota => {
            let taper = args
                .taper
                .as_deref()
                .map(|s| parse_number(s, "--taper"))
                .transpose()?;
            if let Some(s) = taper
                && s <= 0.0
            {
                return Err(Failure::Usage(format!("--taper {s}: must be positive")));
            }
            YieldRule::Quota { taper }
        }
    };
    let opts = YieldOptions {
        economics,
        ..YieldOptions::new(i, rule, from, to, args.steps)
    };
    let curve = sustained::sustained_yield(&spec, &harvest, &opts, &|| false, &|_| {})
        .map_err(|e| Failure::Usage(format!("yield: {e}")))?;

    if let (Some(path), Some(format)) = (&args.out, format) {
        let fig = quarry_figure::YieldFigure {
            width: args.width,
            height: args.height,
            ..quarry_figure::YieldFigure::default()
        };
        let svg = quarry_figure::render_yield_svg(&curve, &fig);
        write_figure(path, format, svg, args.width, args.height)?;
    }

    let what = rule.as_str();
    let no_stable = curve.points.iter().filter(|p| p.catch.is_none()).count();
    let text = if args.json {
        let v = json!({
            "species": curve.species,
            "rule": what,
            "param": curve.param,
            "catchability": match rule { YieldRule::Effort { catchability } => num(catchability), YieldRule::Quota { .. } => Value::Null },
            "economics": economics.map_or(Value::Null, |e| json!({"price": num(e.price), "cost": num(e.cost_per_effort)})),
            "points": curve.points.iter().map(|p| json!({
                "value": num(p.value),
                "status": p.status.as_str(),
                "stable": p.stable(),
                "stock": p.state.map_or(Value::Null, |s| json!([num(s[0]), num(s[1])])),
                "catch": p.catch.map_or(Value::Null, num),
                "profit": p.profit.map_or(Value::Null, num),
                "collapsed": p.collapsed,
            })).collect::<Vec<_>>(),
            "msy": curve.msy.as_ref().map_or(Value::Null, optimum_json),
            "collapse": curve.collapse.map_or(Value::Null, |c| json!({
                "kind": c.kind.as_str(),
                "value": num(c.value),
                "stock": [num(c.state[0]), num(c.state[1])],
                "catch": num(c.catch),
            })),
            "open_access": curve.open_access.as_ref().map_or(Value::Null, optimum_json),
            "mey": curve.mey.as_ref().map_or(Value::Null, optimum_json),
            "caution": CAUTION,
        });
        json_text(&v)
    } else {
        let [xn, yn] = [&spec.variables[0], &spec.variables[1]];
        let stock = |s: [f64; 2]| format!("{xn} = {}, {yn} = {}", fmt(s[0]), fmt(s[1]));
        let mut s = format!(
            "sustained yield of {} under {what} ({}) from {} to {} in {} values\n",
            curve.species,
            curve.param,
            fmt(from),
            fmt(to),
            args.steps
        );
        match &curve.msy {
            Some(m) => {
                s.push_str(&format!(
                    "MSY          {} at {what} {}   ({})\n",
                    fmt(m.catch),
                    fmt(m.value),
                    stock(m.state)
                ));
                if m.at_collapse {
                    s.push_str(
                        "             the catch rises up to the collapse point: the MSY is the edge of the collapse\n",
                    );
                }
            }
            None => s.push_str("MSY          none: no stable equilibrium in the range\n"),
        }
        match &curve.collapse {
            Some(c) => s.push_str(&format!(
                "collapse     {} at {what} {}   ({})\n",
                c.kind.as_str(),
                fmt(c.value),
                stock(c.state)
            )),
            None => s.push_str("collapse     none in the range\n"),
        }
        if economics.is_some() {
            match &curve.open_access {
                Some(o) => s.push_str(&format!(
                    "open access  effort {}, catch {}   ({})\n",
                    fmt(o.value),
                    fmt(o.catch),
                    stock(o.state)
                )),
                None if rule.as_str() == "effort" => {
                    s.push_str("open access  none in the range (profit does not fall to zero)\n")
                }
                None => s.push_str("open access  not defined for a quota (no effort cost)\n"),
            }
            match &curve.mey {
                Some(m) => s.push_str(&format!(
                    "MEY          effort {}, catch {}, profit {}   ({})\n",
                    fmt(m.value),
                    fmt(m.catch),
                    fmt(m.profit.unwrap_or(f64::NAN)),
                    stock(m.state)
                )),
                None => s.push_str("MEY          not defined here\n"),
            }
        }
        if no_stable > 0 {
            s.push_str(&format!(
                "no stable equilibrium at {no_stable} of the {} values (e.g. a limit cycle): no equilibrium catch is given there\n",
                curve.points.len()
            ));
        }
        s.push_str(&format!(
            "\n{:>12} {:>12} {:>12} {:>12}{}  status\n",
            what,
            xn,
            yn,
            "catch",
            if economics.is_some() {
                format!(" {:>12}", "profit")
            } else {
                String::new()
            }
        ));
        for p in &curve.points {
            let cell = |v: Option<f64>| v.map_or("—".to_owned(), fmt);
            s.push_str(&format!(
                "{:>12} {:>12} {:>12} {:>12}{}  {}\n",
                fmt(p.value),
                cell(p.state.map(|s| s[0])),
                cell(p.state.map(|s| s[1])),
                cell(p.catch),
                if economics.is_some() {
                    format!(" {:>12}", cell(p.profit))
                } else {
                    String::new()
                },
                p.status.as_str()
            ));
        }
        s.push_str(&format!("\n{CAUTION}\n"));
        s
    };
    write_stdout(&text)
}
