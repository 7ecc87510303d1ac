//! Choosing a model on the command line: a built-in or a scenario file as the first argument,
//! or `--var`, `--param` and `--window`; `--set` overrides a parameter. A scenario's harvest
//! applies unless `--harvest` gives that species another rule (`VAR:none` for none).

use clap::Args;
use quarry_core::harvest::{Harvest, HarvestRule};
use quarry_core::library;
use quarry_core::model::{Model, ModelSpec, Parameter, Window};
use quarry_core::scenario::Scenario;

use crate::Failure;

/// Model selection, shared by every subcommand.
#[derive(Args, Debug, Clone)]
pub struct ModelArgs {
    /// A scenario file (`FILE.ron`) or a built-in model (see `quarry models`). Omit it to give
    /// the model with --var.
    #[arg(value_name = "MODEL")]
    pub model: Option<String>,

    /// A state variable and its rate, `NAME=EXPR`; exactly two, the first on the horizontal
    /// axis.
    #[arg(long = "var", value_name = "NAME=EXPR", allow_hyphen_values = true)]
    pub vars: Vec<String>,

    /// A parameter and its value, `NAME=VALUE` (repeatable).
    #[arg(long = "param", value_name = "NAME=VALUE", allow_hyphen_values = true)]
    pub params: Vec<String>,

    /// Override a parameter of the chosen model, `NAME=VALUE` (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE", allow_hyphen_values = true)]
    pub sets: Vec<String>,

    /// The window `XMIN,XMAX,YMIN,YMAX` (default 0,10,0,10, or the built-in model's own).
    #[arg(long, value_name = "XMIN,XMAX,YMIN,YMAX", allow_hyphen_values = true)]
    pub window: Option<String>,

    /// Harvest one species: `VAR:proportional:E=..,q=..`, `VAR:quota:H=..[,s=..]`,
    /// `VAR:threshold:lower=..,upper=..,rate=..` or `VAR:none` (repeatable, one per species;
    /// overrides a scenario file's rule for that species).
    #[arg(long = "harvest", value_name = "VAR:RULE:ARGS")]
    pub harvest: Vec<String>,

    /// Price per unit catch for a species, `VAR=PRICE` (for profit along orbits).
    #[arg(long = "price", value_name = "VAR=PRICE")]
    pub price: Vec<String>,

    /// Cost per unit effort for a species, `VAR=COST`.
    #[arg(long = "cost", value_name = "VAR=COST")]
    pub cost: Vec<String>,

    /// A first integral H(x, y) to use (verified before it is trusted).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub invariant: Option<String>,
}

/// Whether a MODEL argument names a scenario file rather than a built-in model.
fn looks_like_file(name: &str) -> bool {
    name.ends_with(".ron") || name.contains('/') || std::path::Path::new(name).is_file()
}

/// Splits `NAME=VALUE` at the first '='.
fn split_assignment<'a>(arg: &'a str, option: &str) -> Result<(&'a str, &'a str), Failure> {
    match arg.split_once('=') {
        Some((name, value)) if !name.trim().is_empty() => Ok((name.trim(), value)),
        _ => Err(Failure::Usage(format!(
            "{option} '{arg}': expected NAME=VALUE"
        ))),
    }
}

/// Parses a finite number, naming the option on failure.
pub fn parse_number(text: &str, what: &str) -> Result<f64, Failure> {
    match text.trim().parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(Failure::Usage(format!(
            "{what}: '{text}' is not a finite number"
        ))),
        Err(_) => Err(Failure::Usage(format!("{what}: '{text}' is not a number"))),
    }
}

/// Parses `N` comma-separated finite numbers.
pub fn parse_list<const N: usize>(text: &str, what: &str) -> Result<[f64; N], Failure> {
    let parts: Vec<&str> = text.split(',').collect();
    if parts.len() != N {
        return Err(Failure::Usage(format!(
            "{what} '{text}': expected {N} comma-separated numbers, got {}",
            parts.len()
        )));
    }
    let mut out = [0.0; N];
    for (o, p) in out.iter_mut().zip(parts) {
        *o = parse_number(p, what)?;
    }
    Ok(out)
}

impl ModelArgs {
    /// Builds the model these arguments describe (with any harvest applied).
    pub fn model(&self) -> Result<Model, Failure> {
        let (model, _, _) = self.harvested()?;
        Ok(model)
    }

    /// The harvested model, the harvest, and the unharvested specification.
    pub fn harvested(&self) -> Result<(Model, Harvest, ModelSpec), Failure> {
        let (mut spec, base) = self.spec()?;
        if let Some(h) = &self.invariant {
            spec.invariant = Some(h.clone());
        }
        let harvest = self.harvest_rules(&spec, base)?;
        let applied = harvest
            .apply(&spec)
            .map_err(|e| Failure::Usage(format!("--harvest: {e}")))?;
        let model = Model::new(&applied).map_err(|e| Failure::Usage(e.to_string()))?;
        Ok((model, harvest, spec))
    }

    /// The harvest: `base` (a scenario's) with the command line's rules and prices on top.
    fn harvest_rules(&self, spec: &ModelSpec, base: Harvest) -> Result<Harvest, Failure> {
        let mut harvest = base;
        let mut given = [false; 2];
        let index = |var: &str, option: &str| {
            spec.variables.iter().position(|v| v == var).ok_or_else(|| {
                Failure::Usage(format!(
                    "{option}: '{var}' is not a variable of the model (it has {} and {})",
                    spec.variables[0], spec.variables[1]
                ))
            })
        };
        for arg in &self.harvest {
            let mut parts = arg.splitn(3, ':');
            let (Some(var), Some(rule)) = (parts.next(), parts.next()) else {
                return Err(Failure::Usage(format!(
                    "--harvest '{arg}': expected VAR:RULE:ARGS, e.g. x:proportional:E=0.3,q=1"
                )));
            };
            let i = index(var, "--harvest")?;
            let mut values = std::collections::BTreeMap::new();
            for kv in parts
                .next()
                .unwrap_or("")
                .split(',')
                .filter(|s| !s.trim().is_empty())
            {
                let (k, v) = split_assignment(kv, "--harvest")?;
                values.insert(
                    k.to_owned(),
                    parse_number(v, &format!("--harvest {var} {k}"))?,
                );
            }
            let take = |values: &mut std::collections::BTreeMap<String, f64>, k: &str| {
                values.remove(k).ok_or_else(|| {
                    Failure::Usage(format!(
                        "--harvest '{arg}': the {rule} rule needs {k}=VALUE"
                    ))
                })
            };
            let r = match rule {
                "proportional" => HarvestRule::Proportional {
                    effort: take(&mut values, "E")?,
                    catchability: values.remove("q").unwrap_or(1.0),
                },
                "quota" => HarvestRule::Quota {
                    quota: take(&mut values, "H")?,
                    taper: values.remove("s"),
                },
                "threshold" => HarvestRule::Threshold {
                    lower: take(&mut values, "lower")?,
                    upper: take(&mut values, "upper")?,
                    target_rate: take(&mut values, "rate")?,
                },
                "none" => HarvestRule::None,
                other => {
                    return Err(Failure::Usage(format!(
                        "--harvest '{arg}': unknown rule '{other}' (proportional, quota, threshold or none)"
                    )));
                }
            };
            if let Some(extra) = values.keys().next() {
                return Err(Failure::Usage(format!(
                    "--harvest '{arg}': the {rule} rule takes no '{extra}'"
                )));
            }
            if given[i] {
                return Err(Failure::Usage(format!(
                    "--harvest: {var} is harvested twice"
                )));
            }
            given[i] = true;
            harvest.rules[i] = r;
        }
        for (list, option, is_price) in [
            (&self.price, "--price", true),
            (&self.cost, "--cost", false),
        ] {
            for arg in list {
                let (var, v) = split_assignment(arg, option)?;
                let i = index(var, option)?;
                let v = parse_number(v, &format!("{option} {var}"))?;
                if is_price {
                    harvest.economics[i].price = v;
                } else {
                    harvest.economics[i].cost_per_effort = v;
                }
            }
        }
        Ok(harvest)
    }

    /// The unharvested model and the scenario file's harvest (none for other sources).
    fn spec(&self) -> Result<(ModelSpec, Harvest), Failure> {
        let mut base = Harvest::default();
        let mut spec = match (&self.model, self.vars.is_empty()) {
            (Some(_), false) => {
                return Err(Failure::Usage(
                    "give either a MODEL or --var formulas, not both".into(),
                ));
            }
            (Some(name), true) if looks_like_file(name) => {
                let scenario = Scenario::load(std::path::Path::new(name))
                    .map_err(|e| Failure::Usage(format!("{name}: {e}")))?;
                base = scenario.harvest;
                scenario.model_spec()
            }
            (Some(name), true) => match library::builtin(name) {
                Some(b) => b.spec(),
                None => {
                    let known: Vec<&str> = library::BUILTINS.iter().map(|b| b.key).collect();
                    return Err(Failure::Usage(format!(
                        "unknown model '{name}': not a file, and not a built-in model ({})",
                        known.join(", ")
                    )));
                }
            },
            (None, true) => {
                return Err(Failure::Usage(
                    "no model: name a built-in model (see `quarry models`) or give two --var NAME=EXPR"
                        .into(),
                ));
            }
            (None, false) => self.spec_from_vars()?,
        };
        // On a built-in, --param acts like --set.
        let overrides = if self.model.is_some() {
            self.params.iter().chain(&self.sets).collect::<Vec<_>>()
        } else {
            self.sets.iter().collect()
        };
        for arg in overrides {
            let (name, value) = split_assignment(arg, "--set")?;
            let value = parse_number(value, &format!("--set {name}"))?;
            match spec.parameters.iter_mut().find(|p| p.name == name) {
                Some(p) => p.value = value,
                None => {
                    let known: Vec<&str> =
                        spec.parameters.iter().map(|p| p.name.as_str()).collect();
                    return Err(Failure::Usage(format!(
                        "--set {name}: the model has no parameter '{name}' (it has: {})",
                        known.join(", ")
                    )));
                }
            }
        }
        if let Some(w) = &self.window {
            let [a, b, c, d] = parse_list::<4>(w, "--window")?;
            spec.window =
                Window::new(a, b, c, d).map_err(|e| Failure::Usage(format!("--window: {e}")))?;
        }
        Ok((spec, base))
    }

    fn spec_from_vars(&self) -> Result<ModelSpec, Failure> {
        if self.vars.len() != 2 {
            return Err(Failure::Usage(format!(
                "--var: expected exactly two (one per state variable), got {}",
                self.vars.len()
            )));
        }
        let mut names = Vec::new();
        let mut rates = Vec::new();
        for v in &self.vars {
            let (name, rate) = split_assignment(v, "--var")?;
            names.push(name.to_owned());
            rates.push(rate.to_owned());
        }
        let mut parameters: Vec<Parameter> = Vec::new();
        for p in &self.params {
            let (name, value) = split_assignment(p, "--param")?;
            let value = parse_number(value, &format!("--param {name}"))?;
            if parameters.iter().any(|q| q.name == name) {
                return Err(Failure::Usage(format!("--param {name}: given twice")));
            }
            parameters.push(Parameter::new(name, value));
        }
        Ok(ModelSpec {
            name: "command line".into(),
            variables: [names[0].clone(), names[1].clone()],
            rates: [rates[0].clone(), rates[1].clone()],
            parameters,
            invariant: None,
            window: Window::default(),
        })
    }
}
