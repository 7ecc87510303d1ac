//! Harvest rules per species, added to the model's rates as formulas.
//!
//! A rule becomes a catch term `C(x)` written in the formula language with its own parameters
//! (named after the species, e.g. `E_cod`, `q_cod`), and the rate becomes `(rate) - (C)`. So
//! every analysis — equilibria and their classes, orbits, the scene, sweeps — applies to the
//! harvested system unchanged, with exact Jacobians, and the harvest parameters can be swept
//! like any other.
//!
//! The rules:
//! - **proportional**: catch q·E·x (effort E, catchability q);
//! - **constant quota**: catch H·(1 − exp(−x/s)). NOTE: the factor makes the cut-off smooth
//!   so the catch can never exceed what is there (it vanishes with the stock, and dx/dt ≥ 0 at
//!   x = 0, so the stock never goes negative), while for x ≫ s the catch is H to within
//!   exp(−x/s): with the default s = 1e-3 × the window's width the fold of a logistic stock
//!   stays at H = rK/4 to machine precision;
//! - **threshold control rule**: fishing mortality zero below a lower stock level, rising
//!   linearly to a target rate at an upper level and held there above it; catch F(x)·x.
//!
//! These are simplified illustrations, not a stock assessment: decisions on quotas and effort
//! rest on assessed data, local regulations and qualified scientific advice.

use serde::{Deserialize, Serialize};

use crate::model::{ModelSpec, Parameter};

/// The caution shown beside every harvest output.
pub const CAUTION: &str = "Illustration of a simplified model, not a stock assessment: \
decisions on quotas and effort rest on assessed data, local regulations and qualified \
scientific advice.";

/// Default taper of the quota rule as a fraction of the window's width for that species.
pub const QUOTA_TAPER_FRACTION: f64 = 1e-3;

/// How one species is harvested.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum HarvestRule {
    /// No harvest.
    #[default]
    None,
    /// Catch q·E·x.
    Proportional {
        /// Fishing effort E.
        effort: f64,
        /// Catchability q.
        catchability: f64,
    },
    /// Catch H·(1 − exp(−x/s)): the quota H whenever the stock is well above s.
    Quota {
        /// The quota H (catch per unit time).
        quota: f64,
        /// Taper s (stock level below which the catch falls away); `None` for the default.
        taper: Option<f64>,
    },
    /// Catch F(x)·x with F = 0 below `lower`, rising linearly to `target_rate` at `upper`,
    /// and `target_rate` above.
    Threshold {
        /// Stock level below which there is no fishing.
        lower: f64,
        /// Stock level from which the target rate applies.
        upper: f64,
        /// Target fishing mortality rate.
        target_rate: f64,
    },
}

/// Economics of one species' fishery.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Economics {
    /// Price per unit of catch.
    pub price: f64,
    /// Cost per unit of effort (proportional rule) per unit time.
    pub cost_per_effort: f64,
}

/// Harvest of both species.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Harvest {
    /// The rule for each species, in variable order.
    pub rules: [HarvestRule; 2],
    /// Price and cost for each species.
    pub economics: [Economics; 2],
}

/// A harvest rule that cannot be applied.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum HarvestError {
    /// A number is NaN, infinite or out of range.
    #[error("harvest of {species}: {what}")]
    Invalid {
        /// The species (variable name).
        species: String,
        /// What is wrong.
        what: String,
    },
    /// A harvest parameter's name is already used by the model.
    #[error("harvest of {species}: the model already has a parameter named '{name}'")]
    NameTaken {
        /// The species.
        species: String,
        /// The clashing name.
        name: String,
    },
}

impl Harvest {
    /// Whether any species is harvested.
    pub fn is_active(&self) -> bool {
        self.rules.iter().any(|r| *r != HarvestRule::None)
    }

    /// The model with the catch terms subtracted from the rates and the harvest parameters
    /// appended. A first integral of the unharvested model no longer holds and is dropped.
    pub fn apply(&self, spec: &ModelSpec) -> Result<ModelSpec, HarvestError> {
        let mut out = spec.clone();
        for i in 0..2 {
            let var = spec.variables[i].clone();
            let Some((catch, params)) = self.catch_term(spec, i)? else {
                continue;
            };
            for p in &params {
                if out.parameters.iter().any(|q| q.name == p.name)
                    || out.variables.contains(&p.name)
                {
                    return Err(HarvestError::NameTaken {
                        species: var,
                        name: p.name.clone(),
                    });
                }
            }
            out.rates[i] = format!("({}) - ({catch})", spec.rates[i]);
            out.parameters.extend(params);
            out.invariant = None;
        }
        Ok(out)
    }

    /// The catch rate of each species at a state, evaluated directly from the rules (the
    /// same functions [`Harvest::catch_term`] writes as formulas). `window` sets the quota
    /// rule's default taper, as in [`Harvest::apply`].
    pub fn catch_at(&self, window: &crate::model::Window, state: [f64; 2]) -> [f64; 2] {
        let mut out = [0.0; 2];
        for (i, rule) in self.rules.iter().enumerate() {
            let x = state[i];
            let width = if i == 0 {
                window.width()
            } else {
                window.height()
            };
            out[i] = match *rule {
                HarvestRule::None => 0.0,
                HarvestRule::Proportional {
                    effort,
                    catchability,
                } => catchability * effort * x,
                HarvestRule::Quota { quota, taper } => {
                    let s = taper.unwrap_or(QUOTA_TAPER_FRACTION * width);
                    quota * (1.0 - (-x / s).exp())
                }
                HarvestRule::Threshold {
                    lower,
                    upper,
                    target_rate,
                } => target_rate * ((x - lower) / (upper - lower)).clamp(0.0, 1.0) * x,
            };
        }
        out
    }

    /// Mean catch rate of each species along a sampled orbit, by the trapezoidal rule on the
    /// samples: over the whole periods from the start when `period` is given (and the orbit
    /// spans at least one), else over the whole span. `None` when there are fewer than two
    /// samples or the span is empty. Meant for display beside an orbit drawn from dense
    /// output; [`yield_along`] integrates exactly on the integrator's steps.
    pub fn mean_catch_along(
        &self,
        window: &crate::model::Window,
        times: &[f64],
        points: &[[f64; 2]],
        period: Option<f64>,
    ) -> Option<[f64; 2]> {
        let (&t0, &t_last) = (times.first()?, times.last()?);
        if times.len() < 2 || times.len() != points.len() || t_last <= t0 {
            return None;
        }
        let end = match period {
            Some(p) if p > 0.0 && t_last - t0 >= p => t0 + p * ((t_last - t0) / p).floor(),
            _ => t_last,
        };
        let mut sum = [0.0; 2];
        for k in 1..times.len() {
            let (ta, tb) = (times[k - 1], times[k].min(end));
            if tb <= ta {
                break;
            }
            let ca = self.catch_at(window, points[k - 1]);
            // Cut the last interval at `end` by linear interpolation of the state.
            let w = (tb - ta) / (times[k] - ta);
            let pb = [
                points[k - 1][0] + w * (points[k][0] - points[k - 1][0]),
                points[k - 1][1] + w * (points[k][1] - points[k - 1][1]),
            ];
            let cb = self.catch_at(window, pb);
            for i in 0..2 {
                sum[i] += 0.5 * (ca[i] + cb[i]) * (tb - ta);
            }
        }
        let span = end - t0;
        Some(sum.map(|s| s / span))
    }

    /// Revenue less cost per unit time for a catch rate: price × catch − cost × effort,
    /// summed over the species (effort counts for the proportional rule only).
    pub fn profit(&self, catch: [f64; 2]) -> f64 {
        (0..2)
            .map(|i| {
                let e = &self.economics[i];
                let effort = match self.rules[i] {
                    HarvestRule::Proportional { effort, .. } => effort,
                    _ => 0.0,
                };
                e.price * catch[i] - e.cost_per_effort * effort
            })
            .sum()
    }

    /// The catch formula of species `i` and the parameters it needs, or `None` if unharvested.
    ///
    /// The default quota taper is [`QUOTA_TAPER_FRACTION`] × the window's extent along that
    /// species' axis.
    pub fn catch_term(
        &self,
        spec: &ModelSpec,
        i: usize,
    ) -> Result<Option<(String, Vec<Parameter>)>, HarvestError> {
        let var = spec.variables[i].as_str();
        let name = |base: &str| format!("{base}_{var}");
        let bad = |what: &str| HarvestError::Invalid {
            species: var.to_owned(),
            what: what.to_owned(),
        };
        let finite_nonneg = |v: f64, what: &str| {
            if v.is_finite() && v >= 0.0 {
                Ok(v)
            } else {
                Err(bad(&format!("{what} must be a finite number ≥ 0, got {v}")))
            }
        };
        let width = if i == 0 {
            spec.window.width()
        } else {
            spec.window.height()
        };
        Ok(match self.rules[i] {
            HarvestRule::None => None,
            HarvestRule::Proportional {
                effort,
                catchability,
            } => {
                let (e, q) = (name("E"), name("q"));
                Some((
                    format!("{q}*{e}*{var}"),
                    vec![
                        Parameter::new(&e, finite_nonneg(effort, "effort")?),
                        Parameter::new(&q, finite_nonneg(catchability, "catchability")?),
                    ],
                ))
            }
            HarvestRule::Quota { quota, taper } => {
                let s_default = QUOTA_TAPER_FRACTION * width;
                let s = taper.unwrap_or(s_default);
                if !(s.is_finite() && s > 0.0) {
                    return Err(bad(&format!("the quota taper must be positive, got {s}")));
                }
                let (h, sn) = (name("H"), name("s"));
                Some((
                    format!("{h}*(1 - exp(-{var}/{sn}))"),
                    vec![
                        Parameter::new(&h, finite_nonneg(quota, "quota")?),
                        Parameter::new(&sn, s),
                    ],
                ))
            }
            HarvestRule::Threshold {
                lower,
                upper,
                target_rate,
            } => {
                let lower = finite_nonneg(lower, "lower stock level")?;
                let upper = finite_nonneg(upper, "upper stock level")?;
                if upper <= lower {
                    return Err(bad("the upper stock level must be above the lower one"));
                }
                let (lo, hi, f) = (name("Blim"), name("Btrig"), name("F"));
                Some((
                    format!("{f}*min(max(({var} - {lo})/({hi} - {lo}), 0), 1)*{var}"),
                    vec![
                        Parameter::new(&lo, lower),
                        Parameter::new(&hi, upper),
                        Parameter::new(&f, finite_nonneg(target_rate, "target rate")?),
                    ],
                ))
            }
        })
    }
}

/// Catch and revenue measured along an orbit.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize)]
pub struct YieldSummary {
    /// Mean catch per unit time of each species, over whole periods when the orbit closes,
    /// else over the run.
    pub mean_catch: [f64; 2],
    /// Mean revenue per unit time: price × catch − cost × effort, summed over species.
    pub mean_profit: f64,
    /// The time span the means are over.
    pub span: f64,
}

/// Mean catch and profit along an orbit, by 4-point Gauss–Legendre quadrature on every step's
/// dense output (exact for polynomials of degree 7, the order of the DOP853 interpolant).
pub fn yield_along(
    harvested: &crate::model::Model,
    harvest: &Harvest,
    spec: &ModelSpec,
    report: &crate::orbit::OrbitReport,
) -> Result<YieldSummary, HarvestError> {
    let mut catch_code = Vec::new();
    let [xn, yn] = harvested.variables();
    let mut inputs: Vec<&str> = vec![xn, yn];
    inputs.extend(harvested.spec().parameters.iter().map(|p| p.name.as_str()));
    for i in 0..2 {
        let code = match harvest.catch_term(spec, i)? {
            Some((text, _)) => crate::expr::parse(&text).ok().and_then(|e| {
                crate::compiled::Formulas::compile(&[&e], &inputs, 2, Default::default()).ok()
            }),
            None => None,
        };
        catch_code.push(code);
    }
    let params = harvested.params();
    let catch_at = |s: &[f64; 4]| -> [f64; 2] {
        let mut c = [0.0; 2];
        for (k, code) in catch_code.iter().enumerate() {
            if let Some(code) = code {
                let mut out = [0.0];
                code.eval(&s[..2], params, &mut out);
                c[k] = out[0];
            }
        }
        c
    };
    let span_end = match report.period {
        Some(p) if report.t_final.abs() >= p => {
            report.t_final.signum() * p * (report.t_final.abs() / p).floor()
        }
        _ => report.t_final,
    };
    // Gauss–Legendre nodes and weights on [-1, 1].
    const NODES: [f64; 4] = [
        -0.861_136_311_594_052_6,
        -0.339_981_043_584_856_3,
        0.339_981_043_584_856_3,
        0.861_136_311_594_052_6,
    ];
    const WEIGHTS: [f64; 4] = [
        0.347_854_845_137_453_9,
        0.652_145_154_862_546_1,
        0.652_145_154_862_546_1,
        0.347_854_845_137_453_9,
    ];
    let mut total = [0.0; 2];
    for d in report.trajectory.interpolants() {
        let (a, b) = (d.t_start(), d.t_end());
        // Clip the step to [0, span_end] in the direction of integration.
        let (lo, hi) = if span_end >= 0.0 {
            (a.max(0.0).min(span_end), b.min(span_end).max(0.0))
        } else {
            (a.min(0.0).max(span_end), b.max(span_end).min(0.0))
        };
        let h = hi - lo;
        if h == 0.0 {
            continue;
        }
        for (node, w) in NODES.iter().zip(WEIGHTS) {
            let t = lo + 0.5 * h * (node + 1.0);
            let c = catch_at(&d.eval(t));
            total[0] += 0.5 * h * w * c[0];
            total[1] += 0.5 * h * w * c[1];
        }
    }
    let mean_catch = if span_end != 0.0 {
        [total[0] / span_end, total[1] / span_end]
    } else {
        [0.0, 0.0]
    };
    let mut profit = 0.0;
    for ((econ, rule), catch) in harvest.economics.iter().zip(&harvest.rules).zip(mean_catch) {
        profit += econ.price * catch;
        if let HarvestRule::Proportional { effort, .. } = rule {
            profit -= econ.cost_per_effort * effort;
        }
    }
    Ok(YieldSummary {
        mean_catch,
        mean_profit: profit,
        span: span_end,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::Model;

    #[test]
    fn catch_at_is_what_the_harvested_rates_take_away() {
        let spec = crate::library::default_model();
        let base = Model::new(&spec).expect("compiles");
        let rules = [
            HarvestRule::Proportional {
                effort: 0.4,
                catchability: 0.5,
            },
            HarvestRule::Quota {
                quota: 2.0,
                taper: None,
            },
            HarvestRule::Threshold {
                lower: 5.0,
                upper: 25.0,
                target_rate: 0.3,
            },
        ];
        for (a, b) in rules.iter().zip(rules.iter().rev()) {
            let h = Harvest {
                rules: [*a, *b],
                economics: Default::default(),
            };
            let harvested = Model::new(&h.apply(&spec).expect("applies")).expect("compiles");
            for state in [[0.01, 3.0], [4.0, 0.02], [12.0, 30.0], [40.0, 8.0]] {
                let [u0, v0] = base.rates(state[0], state[1]);
                let [u1, v1] = harvested.rates(state[0], state[1]);
                let c = h.catch_at(&spec.window, state);
                for (taken, c) in [(u0 - u1, c[0]), (v0 - v1, c[1])] {
                    assert!(
                        (taken - c).abs() <= 1e-12 * (1.0 + c.abs()),
                        "{a:?}/{b:?} at {state:?}: {taken} vs {c}"
                    );
                }
            }
        }
    }

    #[test]
    fn mean_catch_over_whole_cycles_follows_volterras_principle() {
        use crate::scene::{SceneRequest, Seed, TimeDirection, build_scene};
        // Lotka–Volterra with equal proportional harvest E (q = 1) of both species: the cycle
        // mean of the prey is (c + E)/γ, of the predator (a − E)/α (Volterra's principle), so
        // the mean catches are E·(c + E)/γ and E·(a − E)/α (common practice).
        let spec = crate::library::default_model();
        let e = 0.3;
        let rule = HarvestRule::Proportional {
            effort: e,
            catchability: 1.0,
        };
        let h = Harvest {
            rules: [rule, rule],
            economics: Default::default(),
        };
        let model = Model::new(&h.apply(&spec).expect("applies")).expect("compiles");
        let request = SceneRequest {
            seeds: vec![Seed {
                at: [12.0, 4.0],
                direction: TimeDirection::Forward,
            }],
            orbit_time: 60.0,
            ..SceneRequest::default()
        };
        let scene = build_scene(&model, &request, &crate::scene::Cancel::new()).expect("scene");
        let o = &scene.orbits[0];
        let period = o.summary.period.expect("closed");
        let mean = h
            .mean_catch_along(&spec.window, &o.times, &o.points, Some(period))
            .expect("a mean");
        let (a, alpha, c, gamma) = (1.0, 0.1, 1.5, 0.075);
        let want = [e * (c + e) / gamma, e * (a - e) / alpha];
        for i in 0..2 {
            assert!(
                (mean[i] - want[i]).abs() < 1e-4 * want[i],
                "{i}: {} vs {}",
                mean[i],
                want[i]
            );
        }
    }

    #[test]
    fn profit_is_revenue_less_the_cost_of_effort() {
        let h = Harvest {
            rules: [
                HarvestRule::Proportional {
                    effort: 2.0,
                    catchability: 0.1,
                },
                HarvestRule::None,
            ],
            economics: [
                Economics {
                    price: 3.0,
                    cost_per_effort: 0.5,
                },
                Economics::default(),
            ],
        };
        assert_eq!(h.profit([4.0, 0.0]), 3.0 * 4.0 - 0.5 * 2.0);
    }
}
