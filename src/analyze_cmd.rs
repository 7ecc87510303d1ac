//! `quarry analyze`: every equilibrium in the window with its linearisation, class and, for a
//! linear centre, the nonlinear verdict.

use std::path::PathBuf;

use clap::Args;
use quarry_core::analysis::{self, Analysis, Equilibrium};
use quarry_core::model::Model;
use serde_json::{Value, json};

use crate::Failure;
use crate::model_args::ModelArgs;
use crate::output::{fmt, json_text, num, write_stdout};
use crate::tables;

/// Arguments of `quarry analyze`.
#[derive(Args, Debug)]
pub struct AnalyzeArgs {
    #[command(flatten)]
    pub model: ModelArgs,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Write the equilibria as CSV (position, trace, determinant, eigenvalues, class,
    /// verdict, explanation): to FILE (the table or JSON still goes to stdout), or, with no
    /// FILE or `-`, to stdout instead of the table.
    #[arg(
        long,
        value_name = "FILE",
        num_args = 0..=1,
        default_missing_value = "-"
    )]
    pub csv: Option<PathBuf>,
}

/// Runs the subcommand.
pub fn run(args: &AnalyzeArgs) -> Result<(), Failure> {
    let (model, harvest, _) = args.model.harvested()?;
    let csv_to_stdout = args.csv.as_deref().is_some_and(tables::is_stdout);
    if csv_to_stdout && args.json {
        return Err(Failure::Usage(
            "--json and --csv without a FILE both write to stdout: give --csv FILE".into(),
        ));
    }
    let analysis = analysis::analyze(&model);
    let mut csv_note = None;
    if let Some(path) = &args.csv {
        let units = tables::units_of(&args.model);
        let text = quarry_core::export::equilibria_csv(model.variables(), &analysis, Some(&units));
        if csv_to_stdout {
            if harvest.is_active() {
                // stdout holds only the table; the caution goes beside it.
                eprintln!("{}", quarry_core::harvest::CAUTION);
            }
            return write_stdout(&text);
        }
        tables::write_file(path, text.as_bytes(), "--csv")?;
        csv_note = Some(path.display().to_string());
    }
    let text = if args.json {
        let mut v = to_json(&model, &analysis);
        if harvest.is_active() {
            v["caution"] = quarry_core::harvest::CAUTION.into();
        }
        if let Some(path) = &csv_note {
            v["csv"] = json!({ "file": path, "rows": analysis.equilibria.len() });
        }
        json_text(&v)
    } else {
        let mut t = table(&model, &analysis);
        if harvest.is_active() {
            t.push_str(&format!("\n{}\n", quarry_core::harvest::CAUTION));
        }
        if let Some(path) = &csv_note {
            t.push_str(&format!(
                "wrote {} equilibria to {path}\n",
                analysis.equilibria.len()
            ));
        }
        t
    };
    write_stdout(&text)
}

fn equilibrium_json(e: &Equilibrium) -> Value {
    let l = &e.linear;
    let j = l.jacobian;
    json!({
        "x": num(e.x),
        "y": num(e.y),
        "residual": num(e.residual),
        "jacobian": [[num(j[0][0]), num(j[0][1])], [num(j[1][0]), num(j[1][1])]],
        "trace": num(l.trace),
        "det": num(l.det),
        "discriminant": num(l.discriminant),
        "eigenvalues": l.eigenvalues.iter().map(|z| json!([num(z.re), num(z.im)])).collect::<Vec<_>>(),
        "eigenvectors": l.eigenvectors.iter().map(|v| {
            v.iter().map(|z| json!([num(z.re), num(z.im)])).collect::<Vec<_>>()
        }).collect::<Vec<_>>(),
        "class": l.class.as_str(),
        "nonlinear": e.nonlinear.as_ref().map(|v| Value::from(v.verdict.as_str())),
        "decided_by": e.nonlinear.as_ref().map(|v| serde_json::to_value(&v.decided_by).unwrap_or(Value::Null)),
        "sentence": e.sentence(),
    })
}

/// The JSON document of the command-line contract.
pub fn to_json(model: &Model, analysis: &Analysis) -> Value {
    let [x, y] = model.variables();
    json!({
        "model": model.spec().name,
        "variables": [x, y],
        "equilibria": analysis.equilibria.iter().map(equilibrium_json).collect::<Vec<_>>(),
        "truncated": analysis.truncated,
        "invariant_verified": analysis.invariant.map(|c| c.verified),
    })
}

fn table(model: &Model, analysis: &Analysis) -> String {
    let spec = model.spec();
    let [x, y] = model.variables();
    let w = spec.window;
    let mut s = String::new();
    s.push_str(&format!("Model: {}\n", spec.name));
    s.push_str(&format!(
        "  d{x}/dt = {}\n  d{y}/dt = {}\n",
        spec.rates[0], spec.rates[1]
    ));
    if !spec.parameters.is_empty() {
        let ps: Vec<String> = spec
            .parameters
            .iter()
            .map(|p| format!("{} = {}", p.name, fmt(p.value)))
            .collect();
        s.push_str(&format!("  parameters: {}\n", ps.join(", ")));
    }
    s.push_str(&format!(
        "  window: {} ≤ {x} ≤ {}, {} ≤ {y} ≤ {}\n\n",
        fmt(w.x_min),
        fmt(w.x_max),
        fmt(w.y_min),
        fmt(w.y_max)
    ));
    if analysis.equilibria.is_empty() {
        s.push_str("No equilibrium in the window.\n");
        return s;
    }
    s.push_str(&format!(
        "{:>3}  {:>12} {:>12}  {:<24} {:>11} {:>11}  eigenvalues\n",
        "#", x, y, "class", "trace", "det"
    ));
    for (i, e) in analysis.equilibria.iter().enumerate() {
        let l = &e.linear.for_display();
        let eig: Vec<String> = l
            .eigenvalues
            .iter()
            .map(|z| {
                if z.im == 0.0 {
                    fmt(z.re)
                } else {
                    format!(
                        "{} {} {}i",
                        fmt(z.re),
                        if z.im < 0.0 { "-" } else { "+" },
                        fmt(z.im.abs())
                    )
                }
            })
            .collect();
        let class = match &e.nonlinear {
            Some(v) => format!("linear {} → {}", l.class.as_str(), v.verdict.as_str()),
            None => l.class.as_str().to_owned(),
        };
        s.push_str(&format!(
            "{:>3}  {:>12} {:>12}  {:<24} {:>11} {:>11}  {}\n",
            i + 1,
            fmt(e.x),
            fmt(e.y),
            class,
            fmt(l.trace),
            fmt(l.det),
            eig.join(", ")
        ));
        s.push_str(&format!("     {}\n", e.sentence()));
    }
    if analysis.truncated {
        s.push_str("\nMore equilibria than listed: the model may have a curve of equilibria.\n");
    }
    s
}
