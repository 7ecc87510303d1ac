//! Sustained-yield curves: the equilibrium catch of one harvested species against fishing
//! effort or against a constant quota, with the maximum sustainable yield, the collapse point,
//! and, where price and cost are given, the open-access (bionomic) equilibrium and the maximum
//! economic yield.
//!
//! The harvest rule is the one of [`crate::harvest`] (catch q·E·x, or H·(1 − exp(−x/s))), so
//! the curve describes exactly the model the rest of the tool analyses. The equilibria are
//! followed over the harvest parameter by the continuation of [`crate::sweep`]; at each value
//! the attracting equilibrium with the largest harvested stock is kept (the one a stock fished
//! from high abundance settles on), and its catch is the rule's catch there. Where nothing
//! attracts (a cycle, say), the point says so and carries no catch.
//!
//! The optima are located on the curve itself, not at grid values: along a continuous piece of
//! the curve the equilibrium moves with the parameter as dx/dv = −J⁻¹ ∂F/∂v (exact Jacobian and
//! symbolic ∂F/∂v), so the slope of the catch dC/dv = ∂C/∂v + ∇C · dx/dv is exact too, and the
//! MSY and the MEY are roots of a slope found by Brent's method on freshly corrected
//! equilibria; the open-access point is the root of the profit. The collapse point is the
//! fold or transcritical point [`crate::sweep::sweep`] locates where the kept equilibrium ends.
//!
//! These are simplified illustrations, not a stock assessment ([`crate::harvest::CAUTION`]).

use crate::compiled::{Backend, Formulas};
use crate::expr::{Expr, parse};
use crate::harvest::{Economics, Harvest, HarvestError, HarvestRule};
use crate::linear::Class;
use crate::model::{Model, ModelError, ModelSpec};
use crate::sweep::{BifurcationKind, Sweep, SweepError, SweepOptions, sweep};

/// A harvested stock at or below this fraction of the window's extent along its axis counts as
/// collapsed (the stock has reached zero).
pub const COLLAPSED_FRACTION: f64 = 1e-6;
/// Two equilibria at the same value within this scaled distance are the same.
const SAME_TOL: f64 = 1e-6;
/// Newton iterations when correcting an equilibrium.
const NEWTON_MAX_ITER: usize = 40;
/// A Newton step below this (scaled) ends the iteration.
const NEWTON_TOL: f64 = 1e-14;
/// A final Newton step below this (scaled) is still accepted (rounding near a fold).
const NEWTON_ACCEPT: f64 = 1e-9;
/// Iterations of Brent's method.
const BRENT_MAX_ITER: usize = 100;

/// Which harvest parameter the curve runs over.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum YieldRule {
    /// Proportional harvest q·E·x over the effort E.
    Effort {
        /// Catchability q.
        catchability: f64,
    },
    /// Constant quota H·(1 − exp(−x/s)) over the quota H.
    Quota {
        /// Taper s; `None` for the default of [`crate::harvest`].
        taper: Option<f64>,
    },
}

impl YieldRule {
    /// `"effort"` or `"quota"`.
    pub fn as_str(self) -> &'static str {
        match self {
            YieldRule::Effort { .. } => "effort",
            YieldRule::Quota { .. } => "quota",
        }
    }

    /// The harvest rule at one value of its parameter.
    pub fn harvest_rule(self, value: f64) -> HarvestRule {
        match self {
            YieldRule::Effort { catchability } => HarvestRule::Proportional {
                effort: value,
                catchability,
            },
            YieldRule::Quota { taper } => HarvestRule::Quota {
                quota: value,
                taper,
            },
        }
    }

    /// The name of the rule's parameter in the harvested model for species `var`
    /// (`E_var` or `H_var`, as [`crate::harvest`] names them).
    pub fn param_name(self, var: &str) -> String {
        match self {
            YieldRule::Effort { .. } => format!("E_{var}"),
            YieldRule::Quota { .. } => format!("H_{var}"),
        }
    }
}

/// What to compute.
#[derive(Clone, Debug, PartialEq)]
pub struct YieldOptions {
    /// The harvested species: 0 for the first variable, 1 for the second.
    pub species: usize,
    /// The rule and its fixed settings.
    pub rule: YieldRule,
    /// First value of effort or quota (≥ 0).
    pub from: f64,
    /// Last value (above `from`).
    pub to: f64,
    /// Values from `from` to `to`, both included; at least 2.
    pub steps: usize,
    /// Price per unit catch and cost per unit effort; `None` for no economics.
    pub economics: Option<Economics>,
}

impl YieldOptions {
    /// A curve over `steps` values from `from` to `to`, without economics.
    pub fn new(species: usize, rule: YieldRule, from: f64, to: f64, steps: usize) -> Self {
        Self {
            species,
            rule,
            from,
            to,
            steps,
            economics: None,
        }
    }
}

/// Why a yield curve could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum YieldError {
    /// The harvest rule cannot be applied to the model.
    #[error(transparent)]
    Harvest(#[from] HarvestError),
    /// The harvested model does not build.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// The continuation failed or was cancelled.
    #[error(transparent)]
    Sweep(#[from] SweepError),
    /// The species index is not 0 or 1.
    #[error("species {0}: a model has species 0 and 1")]
    BadSpecies(usize),
    /// The range is not finite, negative or empty.
    #[error("the range {from} to {to} must be finite, start at 0 or above and increase")]
    BadRange {
        /// Start.
        from: f64,
        /// End.
        to: f64,
    },
    /// Price or cost is not a finite number ≥ 0.
    #[error("economics: {0}")]
    BadEconomics(String),
    /// The catch formula could not be compiled.
    #[error("the catch formula could not be compiled: {0}")]
    Compile(String),
}

/// What the curve has at one value.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PointStatus {
    /// An attracting equilibrium: its catch is the sustained yield.
    Stable,
    /// Only an equilibrium with a zero eigenvalue (exactly at a bifurcation); its catch is
    /// given, but linear stability cannot be claimed.
    NonHyperbolic,
    /// Equilibria, but none attracts (e.g. a limit cycle around an unstable focus): no
    /// sustained equilibrium catch.
    NoStableEquilibrium,
    /// No equilibrium in the window.
    NoEquilibrium,
}

impl PointStatus {
    /// A short name for people and JSON.
    pub fn as_str(self) -> &'static str {
        match self {
            PointStatus::Stable => "stable",
            PointStatus::NonHyperbolic => "non_hyperbolic",
            PointStatus::NoStableEquilibrium => "no_stable_equilibrium",
            PointStatus::NoEquilibrium => "no_equilibrium",
        }
    }
}

/// One value of the curve.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct YieldPoint {
    /// Effort or quota.
    pub value: f64,
    /// What there is at this value.
    pub status: PointStatus,
    /// The kept equilibrium (both variables); `None` unless stable or non-hyperbolic.
    pub state: Option<[f64; 2]>,
    /// The equilibrium catch; `None` when there is no kept equilibrium.
    pub catch: Option<f64>,
    /// Price × catch − cost × effort (the quota rule has no effort cost); `None` without
    /// economics or without a kept equilibrium.
    pub profit: Option<f64>,
    /// The continuous piece of the curve this point is on (0, 1, …): consecutive points with
    /// the same piece lie on one branch of equilibria; a new piece starts after a jump.
    pub piece: usize,
    /// Whether the harvested stock is at zero (at most [`COLLAPSED_FRACTION`] of the window).
    pub collapsed: bool,
}

impl YieldPoint {
    /// Whether the point has an attracting equilibrium.
    pub fn stable(&self) -> bool {
        self.status == PointStatus::Stable
    }
}

/// A located optimum (MSY, MEY) or the open-access point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Optimum {
    /// Effort or quota.
    pub value: f64,
    /// The equilibrium there.
    pub state: [f64; 2],
    /// The equilibrium catch.
    pub catch: f64,
    /// The profit, with economics.
    pub profit: Option<f64>,
    /// True when the optimum is the collapse point itself (the catch keeps rising up to the
    /// fold, as under a constant quota): the edge of a cliff, not a place to fish at.
    pub at_collapse: bool,
}

/// Where the kept equilibrium ends.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Collapse {
    /// A fold (the equilibrium disappears) or a transcritical point (the stock reaches 0).
    pub kind: BifurcationKind,
    /// Effort or quota.
    pub value: f64,
    /// The equilibrium at the bifurcation.
    pub state: [f64; 2],
    /// The catch there.
    pub catch: f64,
}

/// A sustained-yield curve and what is read off it.
#[derive(Clone, Debug, PartialEq)]
pub struct YieldCurve {
    /// The harvested species' name.
    pub species: String,
    /// Its index (0 or 1).
    pub species_index: usize,
    /// The rule.
    pub rule: YieldRule,
    /// The rule's parameter in the harvested model (`E_cod`, `H_cod`, …).
    pub param: String,
    /// Price and cost, when given.
    pub economics: Option<Economics>,
    /// One point per value, `steps` of them from `from` to `to`.
    pub points: Vec<YieldPoint>,
    /// Maximum sustainable yield: the largest equilibrium catch on the curve.
    pub msy: Option<Optimum>,
    /// The first fold or transcritical point (in increasing effort or quota) at which the kept
    /// equilibrium ends and the stock collapses.
    pub collapse: Option<Collapse>,
    /// Open-access (bionomic) equilibrium: the largest effort at which profit falls to zero
    /// (effort rule with a price).
    pub open_access: Option<Optimum>,
    /// Maximum economic yield: the effort of largest profit (effort rule with a price).
    pub mey: Option<Optimum>,
    /// The continuation the curve was read from (equilibria and bifurcations of the harvested
    /// model over the same range).
    pub sweep: Sweep,
}

/// Rates, catch and their derivatives in (x, y, v) for the harvested model.
struct Evaluator {
    code: Formulas,
    params: Vec<f64>,
    p_index: usize,
    /// Window width and height (scales of x and y).
    scale: [f64; 2],
}

/// Everything at one point.
#[derive(Clone, Copy, Debug)]
struct At {
    f: [f64; 2],
    jac: [[f64; 2]; 2],
    /// ∂F/∂v.
    fv: [f64; 2],
    catch: f64,
    /// ∂C/∂x, ∂C/∂y.
    cx: [f64; 2],
    /// ∂C/∂v.
    cv: f64,
}

impl At {
    /// dx/dv along the branch, `None` where J is singular.
    fn tangent(&self) -> Option<[f64; 2]> {
        let [[a, b], [c, d]] = self.jac;
        let det = a * d - b * c;
        let t = [
            -(d * self.fv[0] - b * self.fv[1]) / det,
            -(-c * self.fv[0] + a * self.fv[1]) / det,
        ];
        (t[0].is_finite() && t[1].is_finite()).then_some(t)
    }

    /// dC/dv along the branch.
    fn catch_slope(&self) -> Option<f64> {
        let t = self.tangent()?;
        Some(self.cv + self.cx[0] * t[0] + self.cx[1] * t[1])
    }
}

impl Evaluator {
    fn new(model: &Model, catch: &Expr, param: &str) -> Result<Self, YieldError> {
        let spec = model.spec();
        let [x, y] = model.variables();
        let [f, g] = model.rate_exprs();
        let exprs: Vec<Expr> = vec![
            f.clone(),
            g.clone(),
            f.derivative(x),
            f.derivative(y),
            g.derivative(x),
            g.derivative(y),
            f.derivative(param),
            g.derivative(param),
            catch.clone(),
            catch.derivative(x),
            catch.derivative(y),
            catch.derivative(param),
        ];
        let refs: Vec<&Expr> = exprs.iter().collect();
        let mut inputs: Vec<&str> = vec![x, y];
        inputs.extend(spec.parameters.iter().map(|p| p.name.as_str()));
        let code = Formulas::compile(&refs, &inputs, 2, Backend::Auto)
            .map_err(|e| YieldError::Compile(e.to_string()))?;
        let p_index = spec
            .parameters
            .iter()
            .position(|p| p.name == param)
            .ok_or_else(|| ModelError::UnknownParameter {
                name: param.to_owned(),
                known: spec
                    .parameters
                    .iter()
                    .map(|p| p.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
            })?;
        let w = model.window();
        Ok(Self {
            code,
            params: model.params().to_vec(),
            p_index,
            scale: [w.width(), w.height()],
        })
    }

    fn at(&mut self, u: [f64; 2], v: f64) -> Option<At> {
        let mut out = [0.0; 12];
        self.params[self.p_index] = v;
        self.code.eval(&u, &self.params, &mut out);
        if !out.iter().all(|o| o.is_finite()) {
            return None;
        }
        Some(At {
            f: [out[0], out[1]],
            jac: [[out[2], out[3]], [out[4], out[5]]],
            fv: [out[6], out[7]],
            catch: out[8],
            cx: [out[9], out[10]],
            cv: out[11],
        })
    }

    /// The equilibrium at `v` by Newton's method from `guess`.
    fn solve(&mut self, v: f64, guess: [f64; 2]) -> Option<([f64; 2], At)> {
        let mut u = guess;
        let mut last = f64::INFINITY;
        for _ in 0..NEWTON_MAX_ITER {
            let e = self.at(u, v)?;
            if e.f == [0.0, 0.0] {
                return Some((u, e));
            }
            let [[a, b], [c, d]] = e.jac;
            let det = a * d - b * c;
            let du = [
                -(d * e.f[0] - b * e.f[1]) / det,
                -(-c * e.f[0] + a * e.f[1]) / det,
            ];
            if !(du[0].is_finite() && du[1].is_finite()) {
                break;
            }
            u = [u[0] + du[0], u[1] + du[1]];
            last = (du[0] / self.scale[0])
                .abs()
                .max((du[1] / self.scale[1]).abs());
            if last < NEWTON_TOL {
                break;
            }
        }
        if last < NEWTON_ACCEPT {
            let e = self.at(u, v)?;
            return Some((u, e));
        }
        None
    }

    fn scaled_dist(&self, a: [f64; 2], b: [f64; 2]) -> f64 {
        ((a[0] - b[0]) / self.scale[0])
            .abs()
            .max(((a[1] - b[1]) / self.scale[1]).abs())
    }
}

fn is_stable(c: Class) -> bool {
    matches!(
        c,
        Class::StableNode | Class::StableSpiral | Class::StableDegenerateNode | Class::StableStar
    )
}

/// A root of `f` in `[a, b]` with `fa`, `fb` of opposite signs (or one zero), by Brent's method
/// (Brent, "Algorithms for Minimization without Derivatives", ch. 4). `None` when `f` cannot
/// be evaluated somewhere on the way.
fn brent(mut f: impl FnMut(f64) -> Option<f64>, a: f64, b: f64, fa: f64, fb: f64) -> Option<f64> {
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    if fa == 0.0 {
        return Some(a);
    }
    if fb == 0.0 {
        return Some(b);
    }
    if (fa > 0.0) == (fb > 0.0) {
        return None;
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..BRENT_MAX_ITER {
        if (fb > 0.0) == (fc > 0.0) {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            (a, b, c) = (b, c, b);
            (fa, fb, fc) = (fb, fc, fb);
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 1e-300;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Some(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qq = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qq * (qq - r) - (b - a) * (r - 1.0));
                q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b)?;
    }
    Some(b)
}

/// The equilibrium, its evaluation and value at each kept point, for refinement.
struct Kept {
    value: f64,
    u: [f64; 2],
    at: At,
    piece: usize,
}

/// Computes the sustained-yield curve of `opts.species` in `spec`, harvested by `opts.rule`
/// (any other species keeps its rule from `harvest`).
///
/// `cancelled` is polled often; `progress` gets fractions in [0, 1].
pub fn sustained_yield(
    spec: &ModelSpec,
    harvest: &Harvest,
    opts: &YieldOptions,
    cancelled: &dyn Fn() -> bool,
    progress: &dyn Fn(f32),
) -> Result<YieldCurve, YieldError> {
    let i = opts.species;
    if i > 1 {
        return Err(YieldError::BadSpecies(i));
    }
    if !(opts.from.is_finite() && opts.to.is_finite() && opts.from >= 0.0 && opts.to > opts.from) {
        return Err(YieldError::BadRange {
            from: opts.from,
            to: opts.to,
        });
    }
    if let Some(e) = opts.economics {
        for (what, v) in [("price", e.price), ("cost", e.cost_per_effort)] {
            if !(v.is_finite() && v >= 0.0) {
                return Err(YieldError::BadEconomics(format!(
                    "the {what} must be a finite number ≥ 0, got {v}"
                )));
            }
        }
    }
    let var = spec.variables[i].clone();
    let mut h = *harvest;
    h.rules[i] = opts.rule.harvest_rule(opts.from);
    h.economics[i] = opts.economics.unwrap_or_default();
    let harvested = h.apply(spec)?;
    let model = Model::new(&harvested)?;
    let param = opts.rule.param_name(&var);
    let catch_text = h
        .catch_term(spec, i)?
        .map(|(text, _)| text)
        .ok_or_else(|| YieldError::Compile("no catch term".into()))?;
    let catch = parse(&catch_text).map_err(|e| YieldError::Compile(e.to_string()))?;
    let mut ev = Evaluator::new(&model, &catch, &param)?;

    let mut sweep_opts = SweepOptions::new(&param, opts.from, opts.to, opts.steps);
    sweep_opts.cycle_samples = 0;
    let swept = sweep(&model, &sweep_opts, cancelled, &|f| progress(0.9 * f))?;

    let economics = opts.economics;
    let is_effort = matches!(opts.rule, YieldRule::Effort { .. });
    let profit_of = |value: f64, catch: f64| {
        economics.map(|e| {
            e.price * catch
                - if is_effort {
                    e.cost_per_effort * value
                } else {
                    0.0
                }
        })
    };
    let extent = ev.scale[i];
    let collapsed_at = |u: [f64; 2]| u[i].abs() <= COLLAPSED_FRACTION * extent;

    // The kept equilibrium at each value and the pieces of the curve.
    let mut points = Vec::with_capacity(swept.points.len());
    let mut kept: Vec<Option<Kept>> = Vec::with_capacity(swept.points.len());
    let mut piece = 0usize;
    let mut prev: Option<usize> = None;
    for (k, sp) in swept.points.iter().enumerate() {
        if k % 64 == 0 && cancelled() {
            return Err(YieldError::Sweep(SweepError::Cancelled));
        }
        let largest = |filter: &dyn Fn(&crate::sweep::BranchPoint) -> bool| {
            sp.equilibria
                .iter()
                .filter(|e| filter(e))
                .max_by(|a, b| {
                    let (sa, sb) = ([a.x, a.y][i], [b.x, b.y][i]);
                    sa.total_cmp(&sb)
                })
                .copied()
        };
        let (status, chosen) = if let Some(e) = largest(&|e| is_stable(e.linear.class)) {
            (PointStatus::Stable, Some(e))
        } else if let Some(e) =
            largest(&|e| e.linear.class == Class::ZeroEigenvalue && e.linear.trace <= 0.0)
        {
            (PointStatus::NonHyperbolic, Some(e))
        } else if sp.equilibria.is_empty() {
            (PointStatus::NoEquilibrium, None)
        } else {
            (PointStatus::NoStableEquilibrium, None)
        };
        let entry = chosen.and_then(|e| {
            let u = [e.x, e.y];
            ev.at(u, sp.value).map(|at| (u, at))
        });
        let Some((u, at)) = entry else {
            let status = if chosen.is_some() {
                PointStatus::NoStableEquilibrium
            } else {
                status
            };
            points.push(YieldPoint {
                value: sp.value,
                status,
                state: None,
                catch: None,
                profit: None,
                piece,
                collapsed: false,
            });
            kept.push(None);
            prev = None;
            continue;
        };
        // Same piece when continuing the previous kept equilibrium lands on this one.
        let continues = prev.and_then(|j| kept[j].as_ref()).is_some_and(|p: &Kept| {
            let dv = sp.value - p.value;
            let guess = match p.at.tangent() {
                Some(t) => [p.u[0] + t[0] * dv, p.u[1] + t[1] * dv],
                None => p.u,
            };
            ev.solve(sp.value, guess)
                .is_some_and(|(c, _)| ev.scaled_dist(c, u) < SAME_TOL)
        });
        if prev.is_some() && !continues {
            piece += 1;
        }
        if prev.is_none() && !points.is_empty() {
            piece += 1;
        }
        points.push(YieldPoint {
            value: sp.value,
            status,
            state: Some(u),
            catch: Some(at.catch),
            profit: profit_of(sp.value, at.catch),
            piece,
            collapsed: collapsed_at(u),
        });
        kept.push(Some(Kept {
            value: sp.value,
            u,
            at,
            piece,
        }));
        prev = Some(k);
    }
    // Pieces numbered from 0 in order.
    renumber(&mut points, &mut kept);
    progress(0.93);

    // Collapse: the first fold or transcritical point that ends the kept equilibrium.
    let mut collapse = None;
    let mut bifs: Vec<_> = swept
        .bifurcations
        .iter()
        .filter(|b| {
            matches!(
                b.kind,
                BifurcationKind::Fold | BifurcationKind::Transcritical
            )
        })
        .collect();
    bifs.sort_by(|a, b| a.value.total_cmp(&b.value));
    let tiny = 1e-12 * (opts.to - opts.from);
    for b in bifs {
        let Some(kb) = points.iter().rposition(|p| p.value < b.value - tiny) else {
            continue;
        };
        let Some(before) = kept[kb].as_ref() else {
            continue;
        };
        if collapsed_at(before.u) {
            continue;
        }
        let bu = [b.x, b.y];
        if !on_one_branch(&swept, &ev, (before.value, before.u), (b.value, bu)) {
            continue;
        }
        let ka = points.iter().position(|p| p.value > b.value + tiny);
        let ends = match ka.map(|k| &kept[k]) {
            None => false,
            Some(None) => true,
            Some(Some(after)) => after.piece != before.piece || collapsed_at(after.u),
        };
        if !ends {
            continue;
        }
        let Some(at) = ev.at(bu, b.value) else {
            continue;
        };
        collapse = Some(Collapse {
            kind: b.kind,
            value: b.value,
            state: bu,
            catch: at.catch,
        });
        break;
    }

    // Refinement on the curve: roots of a slope or of the profit between kept neighbours.
    let slope_catch = |a: &At| a.catch_slope();
    let cost = economics.map_or(0.0, |e| if is_effort { e.cost_per_effort } else { 0.0 });
    let price = economics.map_or(0.0, |e| e.price);
    let slope_profit = |a: &At| a.catch_slope().map(|g| price * g - cost);
    let optimum_at = |value: f64, u: [f64; 2], at: &At, at_collapse: bool| Optimum {
        value,
        state: u,
        catch: at.catch,
        profit: profit_of(value, at.catch),
        at_collapse,
    };

    let refine = |ev: &mut Evaluator,
                  target: &dyn Fn(f64, &At) -> Option<f64>,
                  pick: &dyn Fn(f64, f64) -> bool|
     -> Vec<Optimum> {
        let mut out = Vec::new();
        for k in 1..kept.len() {
            let (Some(a), Some(b)) = (&kept[k - 1], &kept[k]) else {
                continue;
            };
            if a.piece != b.piece {
                continue;
            }
            let (Some(fa), Some(fb)) = (target(a.value, &a.at), target(b.value, &b.at)) else {
                continue;
            };
            if !pick(fa, fb) {
                continue;
            }
            let (va, vb, ua, ub) = (a.value, b.value, a.u, b.u);
            let mut solve_at = |v: f64| -> Option<([f64; 2], At)> {
                let t = (v - va) / (vb - va);
                let guess = [ua[0] + t * (ub[0] - ua[0]), ua[1] + t * (ub[1] - ua[1])];
                ev.solve(v, guess)
            };
            let root = brent(
                |v| solve_at(v).and_then(|(_, at)| target(v, &at)),
                va,
                vb,
                fa,
                fb,
            );
            if let Some(v) = root
                && let Some((u, at)) = solve_at(v)
            {
                out.push(optimum_at(v, u, &at, false));
            }
        }
        out
    };
    let falls = |fa: f64, fb: f64| fa > 0.0 && fb <= 0.0;

    // MSY: the largest catch among the kept points, the slope roots and the fold edge.
    let best = |cands: Vec<Optimum>, key: &dyn Fn(&Optimum) -> f64| {
        cands
            .into_iter()
            .filter(|o| key(o).is_finite())
            .max_by(|a, b| key(a).total_cmp(&key(b)))
    };
    let mut cands: Vec<Optimum> = kept
        .iter()
        .flatten()
        .map(|k| optimum_at(k.value, k.u, &k.at, false))
        .collect();
    cands.extend(refine(&mut ev, &|_, a| slope_catch(a), &falls));
    let fold_edge = collapse
        .filter(|c| c.kind == BifurcationKind::Fold)
        .and_then(|c| {
            ev.at(c.state, c.value)
                .map(|at| optimum_at(c.value, c.state, &at, true))
        });
    cands.extend(fold_edge);
    let msy = best(cands, &|o| o.catch);
    progress(0.96);

    // Open access and MEY, for the effort rule with a price.
    let (open_access, mey) = if is_effort && price > 0.0 {
        let profit_target = |v: f64, a: &At| profit_of(v, a.catch);
        let roots = refine(&mut ev, &profit_target, &falls);
        let open = roots
            .into_iter()
            .filter(|o| o.value > 0.0)
            .max_by(|a, b| a.value.total_cmp(&b.value));
        let mut cands: Vec<Optimum> = kept
            .iter()
            .flatten()
            .map(|k| optimum_at(k.value, k.u, &k.at, false))
            .collect();
        cands.extend(refine(&mut ev, &|_, a| slope_profit(a), &falls));
        let mey = best(cands, &|o| o.profit.unwrap_or(f64::NEG_INFINITY));
        (open, mey)
    } else {
        (None, None)
    };
    progress(1.0);

    Ok(YieldCurve {
        species: var,
        species_index: i,
        rule: opts.rule,
        param,
        economics,
        points,
        msy,
        collapse,
        open_access,
        mey,
        sweep: swept,
    })
}

/// Numbers the pieces 0, 1, … in order of first appearance.
fn renumber(points: &mut [YieldPoint], kept: &mut [Option<Kept>]) {
    let mut map: Vec<(usize, usize)> = Vec::new();
    for (p, k) in points.iter_mut().zip(kept.iter_mut()) {
        let Some(k) = k else {
            continue;
        };
        let n = match map.iter().find(|(old, _)| *old == k.piece) {
            Some(&(_, n)) => n,
            None => {
                let n = map.len();
                map.push((k.piece, n));
                n
            }
        };
        k.piece = n;
        p.piece = n;
    }
}

/// Whether one branch of the sweep passes through both (value, state) pairs.
fn on_one_branch(s: &Sweep, ev: &Evaluator, a: (f64, [f64; 2]), b: (f64, [f64; 2])) -> bool {
    let range = s.points.first().zip(s.points.last()).map_or(1.0, |(f, l)| {
        (l.value - f.value).abs().max(f64::MIN_POSITIVE)
    });
    let hits = |p: &crate::sweep::BranchPoint, q: (f64, [f64; 2])| {
        ((p.value - q.0) / range).abs() < SAME_TOL && ev.scaled_dist([p.x, p.y], q.1) < SAME_TOL
    };
    s.branches
        .iter()
        .any(|br| br.points.iter().any(|p| hits(p, a)) && br.points.iter().any(|p| hits(p, b)))
}

#[cfg(test)]
mod tests {
    use std::cell::Cell;

    use super::*;
    use crate::library;
    use crate::model::{Parameter, Window};

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    /// The built-in Schaefer stock with its own effort at 0, so the effort comes from the
    /// harvest rule alone (r = 0.5, K = 100).
    fn schaefer() -> ModelSpec {
        let mut spec = library::builtin("schaefer").expect("built in").spec();
        for p in &mut spec.parameters {
            if p.name == "E" {
                p.value = 0.0;
            }
        }
        spec
    }

    fn logistic(r: f64, k: f64) -> ModelSpec {
        ModelSpec {
            name: "logistic".into(),
            variables: ["x".into(), "y".into()],
            rates: ["r*x*(1 - x/K)".into(), "-y".into()],
            parameters: vec![Parameter::new("r", r), Parameter::new("K", k)],
            invariant: None,
            window: Window {
                x_min: 0.0,
                x_max: 1.2 * k,
                y_min: -1.0,
                y_max: 1.0,
            },
        }
    }

    fn curve(spec: &ModelSpec, opts: &YieldOptions) -> YieldCurve {
        sustained_yield(spec, &Harvest::default(), opts, &|| false, &|_| {}).expect("curve")
    }

    #[test]
    fn schaefer_curve_msy_and_collapse_follow_the_closed_forms() {
        // Schaefer 1954: equilibrium catch qEK(1 − qE/r), MSY = rK/4 at E = r/(2q),
        // collapse (x* = 0, transcritical) at E = r/q. Here r = 0.5, K = 100, q = 0.01.
        let (r, k, q) = (0.5, 100.0, 0.01);
        let opts = YieldOptions::new(0, YieldRule::Effort { catchability: q }, 0.0, 80.0, 81);
        let c = curve(&schaefer(), &opts);
        assert_eq!(c.param, "E_x");
        assert_eq!(c.points.len(), 81);
        for p in &c.points {
            let e = p.value;
            let want = (q * e * k * (1.0 - q * e / r)).max(0.0);
            let got = p.catch.expect("a kept equilibrium at every effort");
            assert!(
                (got - want).abs() < 1e-8 * (r * k / 4.0),
                "E = {e}: {got} vs {want}"
            );
            if e < r / q - 1e-9 {
                assert!(p.stable() && !p.collapsed, "{p:?}");
            } else if e > r / q + 1e-9 {
                assert!(p.stable() && p.collapsed, "{p:?}");
            }
        }
        let msy = c.msy.expect("msy");
        assert!(rel(msy.catch, r * k / 4.0) < 1e-12, "{msy:?}");
        assert!(rel(msy.value, r / (2.0 * q)) < 1e-8, "{msy:?}");
        assert!(!msy.at_collapse);
        // Off the grid too: a grid of 80 values puts no point at E = 25.
        let off = curve(
            &schaefer(),
            &YieldOptions::new(0, YieldRule::Effort { catchability: q }, 0.0, 80.0, 80),
        );
        let msy = off.msy.expect("msy");
        assert!(rel(msy.value, r / (2.0 * q)) < 1e-8, "{msy:?}");
        assert!(
            off.points
                .iter()
                .all(|p| (p.value - r / (2.0 * q)).abs() > 1e-3)
        );
        let col = c.collapse.expect("collapse");
        assert_eq!(col.kind, BifurcationKind::Transcritical);
        assert!(rel(col.value, r / q) < 1e-8, "{col:?}");
        assert!(c.open_access.is_none() && c.mey.is_none());
    }

    #[test]
    fn gordon_schaefer_open_access_and_mey() {
        // Gordon 1954: open access where price × catch = cost × effort, at stock
        // x∞ = c/(pq) and effort E∞ = (r/q)(1 − c/(pqK)). MEY: profit
        // π(E) = pqEK(1 − qE/r) − cE has π'(E) = pqK(1 − 2qE/r) − c = 0 at
        // E = (r/(2q))(1 − c/(pqK)) (Clark, Mathematical Bioeconomics, from memory; derived
        // here), half the open-access effort.
        let (r, k, q, p, cost) = (0.5, 100.0, 0.01, 2.0, 0.8);
        let opts = YieldOptions {
            economics: Some(Economics {
                price: p,
                cost_per_effort: cost,
            }),
            ..YieldOptions::new(0, YieldRule::Effort { catchability: q }, 0.0, 70.0, 71)
        };
        let c = curve(&schaefer(), &opts);
        let oa = c.open_access.expect("open access");
        let e_inf = r / q * (1.0 - cost / (p * q * k));
        assert!(rel(oa.value, e_inf) < 1e-8, "{oa:?} vs {e_inf}");
        assert!(rel(oa.state[0], cost / (p * q)) < 1e-8, "{oa:?}");
        assert!(oa.profit.expect("profit").abs() < 1e-9);
        let mey = c.mey.expect("mey");
        let e_mey = r / (2.0 * q) * (1.0 - cost / (p * q * k));
        assert!(rel(mey.value, e_mey) < 1e-8, "{mey:?} vs {e_mey}");
        let pi = |e: f64| p * q * e * k * (1.0 - q * e / r) - cost * e;
        assert!(rel(mey.profit.expect("profit"), pi(e_mey)) < 1e-10);
        // The profit of every point matches the closed form.
        for pt in c.points.iter().filter(|pt| pt.value < r / q - 1e-9) {
            assert!((pt.profit.expect("profit") - pi(pt.value)).abs() < 1e-8);
        }
    }

    #[test]
    fn constant_quota_catch_is_the_quota_up_to_the_fold_at_rk_over_4() {
        // Common practice: a logistic stock under a constant quota H has the equilibrium catch
        // H while H ≤ rK/4 and collapses at the fold H = rK/4, x = K/2.
        let (r, k) = (0.8, 50.0);
        let h_f = r * k / 4.0;
        let opts = YieldOptions::new(0, YieldRule::Quota { taper: None }, 0.0, 15.0, 61);
        let c = curve(&logistic(r, k), &opts);
        assert_eq!(c.param, "H_x");
        for p in &c.points {
            if p.value < h_f - 1e-9 {
                assert!(p.stable() && !p.collapsed, "{p:?}");
                let got = p.catch.expect("catch");
                assert!((got - p.value).abs() <= 1e-12 * h_f, "{p:?}");
                let x_up = 0.5 * k * (1.0 + (1.0 - p.value / h_f).sqrt());
                assert!(rel(p.state.expect("state")[0], x_up) < 1e-8, "{p:?}");
            } else {
                // Past the fold only the empty stock remains, and it catches nothing.
                assert!(p.catch.is_none_or(|c| c.abs() < 1e-9), "{p:?}");
            }
        }
        let col = c.collapse.expect("collapse");
        assert_eq!(col.kind, BifurcationKind::Fold);
        assert!(rel(col.value, h_f) < 1e-8, "{col:?}");
        assert!(rel(col.state[0], k / 2.0) < 1e-4, "{col:?}");
        let msy = c.msy.expect("msy");
        assert!(msy.at_collapse, "{msy:?}");
        assert!(rel(msy.value, h_f) < 1e-8 && rel(msy.catch, h_f) < 1e-8);
    }

    #[test]
    fn cycles_give_points_without_a_catch() {
        // Rosenzweig 1971: with K = 8 (past K_H = 3) the coexistence point of the built-in
        // Holling II model is an unstable focus at low predator harvest: no stable equilibrium,
        // so no equilibrium catch is claimed there.
        let spec = library::builtin("holling-ii").expect("built in").spec();
        let opts = YieldOptions::new(1, YieldRule::Effort { catchability: 1.0 }, 0.0, 0.05, 6);
        let c = curve(&spec, &opts);
        let first = &c.points[0];
        assert_eq!(first.status, PointStatus::NoStableEquilibrium, "{first:?}");
        assert!(first.catch.is_none() && first.state.is_none());
    }

    #[test]
    fn bad_input_is_an_error_and_cancel_stops() {
        let spec = schaefer();
        let rule = YieldRule::Effort { catchability: 0.01 };
        let run =
            |o: &YieldOptions| sustained_yield(&spec, &Harvest::default(), o, &|| false, &|_| {});
        assert!(matches!(
            run(&YieldOptions::new(2, rule, 0.0, 1.0, 5)),
            Err(YieldError::BadSpecies(2))
        ));
        for (a, b) in [(-1.0, 1.0), (1.0, 1.0), (0.0, f64::NAN), (2.0, 1.0)] {
            assert!(matches!(
                run(&YieldOptions::new(0, rule, a, b, 5)),
                Err(YieldError::BadRange { .. })
            ));
        }
        let mut o = YieldOptions::new(0, rule, 0.0, 1.0, 5);
        o.economics = Some(Economics {
            price: f64::NAN,
            cost_per_effort: 0.0,
        });
        assert!(matches!(run(&o), Err(YieldError::BadEconomics(_))));
        assert!(matches!(
            run(&YieldOptions::new(
                0,
                YieldRule::Effort { catchability: -1.0 },
                0.0,
                1.0,
                5
            )),
            Err(YieldError::Harvest(_))
        ));
        let calls = Cell::new(0);
        let err = sustained_yield(
            &spec,
            &Harvest::default(),
            &YieldOptions::new(0, rule, 0.0, 80.0, 5000),
            &|| {
                calls.set(calls.get() + 1);
                calls.get() > 2
            },
            &|_| {},
        );
        assert_eq!(err, Err(YieldError::Sweep(SweepError::Cancelled)));
        // Progress runs from 0 to 1 without going back.
        let last = Cell::new(0.0_f32);
        let ok = sustained_yield(
            &spec,
            &Harvest::default(),
            &YieldOptions::new(0, rule, 0.0, 80.0, 21),
            &|| false,
            &|f| {
                assert!(f >= last.get(), "{f} after {}", last.get());
                last.set(f);
            },
        );
        assert!(ok.is_ok());
        assert_eq!(last.get(), 1.0);
    }
}
