//! Sweeps: how a model's equilibria move, change stability and appear or vanish as one
//! parameter moves, and a two-parameter map of their classes.
//!
//! A fisheries analyst asks "at which effort (or quota) does the stock tip into collapse?"; the
//! answer is a bifurcation on a branch of equilibria, and it has to be a number, not the nearest
//! grid value. [`sweep`] therefore does two things over the parameter range:
//!
//! 1. At each of `steps` grid values it lists every equilibrium in the window
//!    ([`find_equilibria`], in parallel), which says which branches exist.
//! 2. It follows every branch seen on that grid by **pseudo-arclength continuation** (Kuznetsov,
//!    "Elements of Applied Bifurcation Theory", ch. 10; Allgower & Georg): a tangent predictor
//!    and a Newton corrector on the bordered system `[F(x, y, p); t·(u − u_pred)] = 0` with the
//!    exact state Jacobian and the symbolic ∂F/∂p, with an adaptive step. Because the arclength
//!    rather than the parameter is the independent variable, a branch is followed around folds.
//!
//! Along each branch three test functions are watched between consecutive points: det J (zero
//! at folds and at branch points), the parameter component of the oriented tangent (changes
//! sign only at folds) and the trace of J while det J > 0 (zero at a Hopf point). A sign change
//! is located on the branch itself, to near machine precision, by a safeguarded secant
//! (Illinois) iteration on corrected points. A det J zero that is not a fold is reported as a
//! transcritical point only if another branch meets it there.
//!
//! All lengths are measured in scaled units: the window's width and height and the parameter
//! range each count as one.
//!
//! Optionally ([`SweepOptions::cycle_samples`]) the limit cycles born at each Hopf point are
//! sampled too: at parameter values past the Hopf point, where the equilibrium is an unstable
//! focus, the cycle around it is located by the return map ([`crate::cycle`]) and its range,
//! period and stability are recorded; for a subcritical Hopf point, where no cycle surrounds
//! the unstable focus, the repelling cycle around the stable focus on the other side is sought.

use rayon::prelude::*;

use crate::compiled::{Backend, Formulas};
use crate::cycle::{CANDIDATE_OFFSET, CycleOptions, find_limit_cycle};
use crate::equilibria::{EquilibriumOptions, find_equilibria};
use crate::expr::Expr;
use crate::linear::{CLASS_EPS, Class, Linearisation, linearise};
use crate::model::{Model, ModelError, Window};
use crate::scene::CycleStability;

/// Default largest continuation step, in scaled arclength.
pub const DEFAULT_MAX_STEP: f64 = 0.02;
/// Default smallest continuation step, in scaled arclength; a branch whose corrector fails even
/// at this step ends as [`BranchEnd::Failed`].
pub const DEFAULT_MIN_STEP: f64 = 1e-9;
/// Default margin, as a fraction of the window's size, by which a branch may leave the window
/// before it is stopped (so that bifurcations on the window's edges, such as extinction on an
/// axis, are bracketed and located).
pub const DEFAULT_WINDOW_MARGIN: f64 = 0.02;
/// Default cap on the number of branches one sweep follows.
pub const DEFAULT_MAX_BRANCHES: usize = 64;
/// Default cap on the points of one branch.
pub const DEFAULT_MAX_BRANCH_POINTS: usize = 50_000;

/// Default spacing, in grid values, of the thorough equilibrium searches.
///
/// Between them a quick search with [`DEFAULT_QUICK_SEEDS`] seeds per side catches branches
/// as they appear; every grid equilibrium a followed branch passes through is added to the grid
/// as well, so the quick search only has to find each branch once.
pub const DEFAULT_FULL_SEARCH_EVERY: usize = 50;
/// Default seeds per side of the quick equilibrium search.
pub const DEFAULT_QUICK_SEEDS: usize = 6;

/// Newton iterations per seed in the quick search: damped Newton from a seed that converges
/// at all does so well within this.
const QUICK_MAX_ITERATIONS: usize = 25;

/// A Newton correction smaller than this (scaled max-norm) ends the iteration.
const NEWTON_TOL: f64 = 1e-13;
/// A Newton correction below this that no longer shrinks ends the iteration too.
const NEWTON_STALL_TOL: f64 = 1e-9;
/// Newton iterations per correction.
const NEWTON_MAX_ITER: usize = 12;
/// Steps whose tangent turns by more than acos(this) are rejected and retried shorter (≈ 5.7°).
const MAX_TURN_COS: f64 = 0.995;
/// Steps turning by less than acos(this) with a quick corrector let the step grow (≈ 2.6°).
const EASY_TURN_COS: f64 = 0.999;
/// Step growth and shrink factors.
const STEP_GROW: f64 = 1.6;
const STEP_SHRINK: f64 = 0.5;
/// A location bracket shorter than this (scaled) is converged.
const LOCATE_TOL: f64 = 1e-14;
/// Iterations of the Illinois location.
const LOCATE_MAX_ITER: usize = 80;
/// A grid equilibrium within this scaled distance of a branch's point at the same grid value
/// lies on that branch.
const COVER_TOL: f64 = 1e-6;
/// Two located det J zeros on different branches within this scaled distance are one branch
/// point (the check that makes a det J zero a transcritical point).
const MEET_TOL: f64 = 1e-6;
/// Two bifurcations of one kind within this scaled distance are reported once.
const DEDUPE_TOL: f64 = 1e-6;
/// Points outside the window by less than this fraction still count as inside.
const EDGE_SLACK: f64 = 1e-9;
/// A real grid index within this of an integer is that grid value.
const GRID_SNAP: f64 = 1e-9;
/// Grid values handed to the thread pool at once; cancellation is checked between chunks.
const GRID_CHUNK: usize = 64;
/// Cycle searches handed to the thread pool at once; cancellation is checked between chunks.
const CYCLE_CHUNK: usize = 4;
/// When none of this many samples nearest an unstable focus's Hopf point has a cycle around
/// it, the Hopf point is taken as subcritical and the stable side is searched instead.
const SUBCRITICAL_PROBES: usize = 3;

/// What to sweep and how carefully.
#[derive(Clone, Debug)]
pub struct SweepOptions {
    /// The parameter swept; its value in the model is ignored.
    pub param: String,
    /// First grid value.
    pub from: f64,
    /// Last grid value (may be below `from`).
    pub to: f64,
    /// Grid values from `from` to `to`, both included; at least 2.
    pub steps: usize,
    /// A branch stops (as [`BranchEnd::PointLimit`]) after this many points. Default
    /// [`DEFAULT_MAX_BRANCH_POINTS`].
    pub max_branch_points: usize,
    /// At most this many branches are followed. Default [`DEFAULT_MAX_BRANCHES`].
    pub max_branches: usize,
    /// Largest continuation step, scaled arclength. Default [`DEFAULT_MAX_STEP`].
    pub max_step: f64,
    /// Smallest continuation step, scaled arclength. Default [`DEFAULT_MIN_STEP`].
    pub min_step: f64,
    /// How far outside the window (fraction of its size) a branch is still followed. Default
    /// [`DEFAULT_WINDOW_MARGIN`].
    pub window_margin: f64,
    /// The thorough equilibrium search, run at both ends of the range and every
    /// `full_search_every` grid values.
    pub equilibria: EquilibriumOptions,
    /// Grid values between two thorough searches (at least 1; 1 means every value). Default
    /// [`DEFAULT_FULL_SEARCH_EVERY`].
    pub full_search_every: usize,
    /// Seeds per side of the quick search at the other grid values. Default
    /// [`DEFAULT_QUICK_SEEDS`].
    pub quick_seeds_per_side: usize,
    /// Limit-cycle samples per Hopf point (0, the default, for none). The samples lie past
    /// the Hopf point on the side where the equilibrium is an unstable focus, spaced by the
    /// square of their index (so evenly in the √(distance) by which a cycle's amplitude grows).
    pub cycle_samples: usize,
    /// Settings of the limit-cycle searches.
    pub cycle_options: CycleOptions,
}

impl SweepOptions {
    /// A sweep of `param` over `steps` values from `from` to `to`, other settings by default.
    pub fn new(param: &str, from: f64, to: f64, steps: usize) -> Self {
        Self {
            param: param.to_owned(),
            from,
            to,
            steps,
            ..Self::default()
        }
    }
}

impl Default for SweepOptions {
    fn default() -> Self {
        Self {
            param: String::new(),
            from: 0.0,
            to: 1.0,
            steps: 101,
            max_branch_points: DEFAULT_MAX_BRANCH_POINTS,
            max_branches: DEFAULT_MAX_BRANCHES,
            max_step: DEFAULT_MAX_STEP,
            min_step: DEFAULT_MIN_STEP,
            window_margin: DEFAULT_WINDOW_MARGIN,
            equilibria: EquilibriumOptions::default(),
            full_search_every: DEFAULT_FULL_SEARCH_EVERY,
            quick_seeds_per_side: DEFAULT_QUICK_SEEDS,
            cycle_samples: 0,
            cycle_options: CycleOptions::default(),
        }
    }
}

/// Why a sweep or a map could not run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SweepError {
    /// The parameter is unknown or a value is unusable.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// Fewer than two grid values were asked for.
    #[error("a sweep needs at least 2 values, got {0}")]
    TooFewSteps(usize),
    /// The range is not finite or empty.
    #[error("the range {from} to {to} must be finite and not empty")]
    BadRange {
        /// Start of the range.
        from: f64,
        /// End of the range.
        to: f64,
    },
    /// Both axes of a map are the same parameter.
    #[error("the map's two axes are both '{0}'")]
    SameParameter(String),
    /// The caller cancelled.
    #[error("cancelled")]
    Cancelled,
}

/// One equilibrium at one parameter value.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BranchPoint {
    /// The swept parameter's value.
    pub value: f64,
    /// Position (first variable).
    pub x: f64,
    /// Position (second variable).
    pub y: f64,
    /// Eigenvalues, class and the rest of the linearisation.
    pub linear: Linearisation,
}

/// Why a branch ends where it does.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BranchEnd {
    /// The equilibrium left the window (grown by the margin).
    LeftWindow,
    /// The parameter reached the end of the range it was heading for.
    ReachedEnd,
    /// The branch turned back at a fold and reached the end of the range it came from.
    FoldTurnedBack,
    /// The branch came back to where it started (a closed curve of equilibria).
    Closed,
    /// The branch has [`SweepOptions::max_branch_points`] points.
    PointLimit,
    /// The corrector failed even at the smallest step.
    Failed(FailReason),
}

/// Why continuation failed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FailReason {
    /// The rates or their derivatives are NaN or infinite ahead.
    NonFinite,
    /// Newton's method did not converge, or the bordered system is singular.
    NoConvergence,
    /// The tangent is undefined (the rows of the Jacobian are parallel) at the start.
    SingularTangent,
}

impl BranchEnd {
    /// A short name for people and JSON.
    pub fn as_str(self) -> &'static str {
        match self {
            BranchEnd::LeftWindow => "left_window",
            BranchEnd::ReachedEnd => "reached_end",
            BranchEnd::FoldTurnedBack => "fold_turned_back",
            BranchEnd::Closed => "closed",
            BranchEnd::PointLimit => "point_limit",
            BranchEnd::Failed(FailReason::NonFinite) => "failed_non_finite",
            BranchEnd::Failed(FailReason::NoConvergence) => "failed_no_convergence",
            BranchEnd::Failed(FailReason::SingularTangent) => "failed_singular_tangent",
        }
    }
}

/// A continuous curve of equilibria, in order along its arclength.
#[derive(Clone, Debug, PartialEq)]
pub struct Branch {
    /// Continuation points, the branch's values at every grid value it crosses and its located
    /// bifurcation points, in order along the branch.
    pub points: Vec<BranchPoint>,
    /// Why the branch stops at its first point.
    pub start: BranchEnd,
    /// Why the branch stops at its last point.
    pub end: BranchEnd,
}

/// The kinds of codimension-one bifurcation of equilibria a sweep reports.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BifurcationKind {
    /// A turning point: two equilibria meet and vanish (saddle-node).
    Fold,
    /// Two branches cross and exchange stability.
    Transcritical,
    /// A complex pair of eigenvalues crosses the imaginary axis.
    Hopf,
}

impl BifurcationKind {
    /// `"fold"`, `"transcritical"` or `"hopf"`.
    pub fn as_str(self) -> &'static str {
        match self {
            BifurcationKind::Fold => "fold",
            BifurcationKind::Transcritical => "transcritical",
            BifurcationKind::Hopf => "hopf",
        }
    }
}

/// A located bifurcation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Bifurcation {
    /// Its kind.
    pub kind: BifurcationKind,
    /// The parameter value.
    pub value: f64,
    /// Position (first variable).
    pub x: f64,
    /// Position (second variable).
    pub y: f64,
}

/// Every equilibrium in the window at one grid value.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepPoint {
    /// The grid value.
    pub value: f64,
    /// The equilibria, sorted by x then y.
    pub equilibria: Vec<BranchPoint>,
}

/// A limit cycle found at one parameter value past a Hopf point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CycleSample {
    /// The swept parameter's value.
    pub value: f64,
    /// The Hopf point's value the cycle belongs to.
    pub hopf_value: f64,
    /// The equilibrium the cycle surrounds.
    pub equilibrium: [f64; 2],
    /// Smallest value of each variable on the cycle.
    pub min: [f64; 2],
    /// Largest value of each variable on the cycle.
    pub max: [f64; 2],
    /// The period (model time units).
    pub period: f64,
    /// The nontrivial Floquet multiplier (|m| < 1: attracting).
    pub multiplier: f64,
    /// Whether nearby orbits wind onto the cycle.
    pub stable: bool,
}

/// The result of [`sweep`].
#[derive(Clone, Debug, PartialEq)]
pub struct Sweep {
    /// The swept parameter.
    pub param: String,
    /// Exactly `steps` grid values from `from` to `to`, both included.
    pub points: Vec<SweepPoint>,
    /// The branches followed.
    pub branches: Vec<Branch>,
    /// Located bifurcations in the window, each once, sorted by value.
    pub bifurcations: Vec<Bifurcation>,
    /// True when [`SweepOptions::max_branches`] stopped the sweep from following every branch.
    pub branches_truncated: bool,
    /// Limit cycles past the Hopf points, sorted by value; empty unless
    /// [`SweepOptions::cycle_samples`] is positive.
    pub cycles: Vec<CycleSample>,
}

/// Classes of the equilibria over a grid of two parameters.
#[derive(Clone, Debug, PartialEq)]
pub struct StabilityMap {
    /// The two parameters: the first indexes rows, the second columns.
    pub params: [String; 2],
    /// Grid values of each parameter, both ends included.
    pub values: [Vec<f64>; 2],
    /// Per grid cell, row-major: `cells[i * values[1].len() + j]` holds the classes of the
    /// equilibria found at `(values[0][i], values[1][j])`, sorted by x then y.
    pub cells: Vec<Vec<Class>>,
}

/// `n` values from `from` to `to`, both ends exact.
fn grid_values(from: f64, to: f64, n: usize) -> Vec<f64> {
    (0..n)
        .map(|k| {
            if k + 1 == n {
                to
            } else {
                from + (to - from) * (k as f64 / (n - 1) as f64)
            }
        })
        .collect()
}

/// Checks a range and a count.
fn check_range(from: f64, to: f64, n: usize, allow_empty: bool) -> Result<(), SweepError> {
    if n < 2 {
        return Err(SweepError::TooFewSteps(n));
    }
    if !from.is_finite() || !to.is_finite() || (!allow_empty && from == to) {
        return Err(SweepError::BadRange { from, to });
    }
    Ok(())
}

/// Equilibria (x, y) at each value of `param`, in parallel chunks with cancellation between.
fn grid_equilibria(
    model: &Model,
    set: &(dyn Fn(&mut Model, usize) -> Result<(), ModelError> + Sync),
    n: usize,
    (full, quick, every): (&EquilibriumOptions, &EquilibriumOptions, usize),
    cancelled: &dyn Fn() -> bool,
    progress: &dyn Fn(f32),
    progress_span: (f32, f32),
) -> Result<Vec<Vec<(f64, f64)>>, SweepError> {
    let mut out = Vec::with_capacity(n);
    let mut start = 0;
    while start < n {
        if cancelled() {
            return Err(SweepError::Cancelled);
        }
        let end = (start + GRID_CHUNK).min(n);
        let chunk: Vec<Vec<(f64, f64)>> = (start..end)
            .into_par_iter()
            .map_init(
                || model.clone(),
                |m, k| {
                    if set(m, k).is_err() {
                        return Vec::new();
                    }
                    let thorough = k == 0 || k + 1 == n || k % every.max(1) == 0;
                    find_equilibria(m, if thorough { full } else { quick })
                        .roots
                        .iter()
                        .map(|r| (r.x, r.y))
                        .collect()
                },
            )
            .collect();
        out.extend(chunk);
        start = end;
        progress(progress_span.0 + (progress_span.1 - progress_span.0) * start as f32 / n as f32);
    }
    Ok(out)
}

/// Classes of the equilibria over a two-parameter grid.
///
/// `p1` and `p2` are `(name, from, to, count)`; each count is at least 2 and includes both
/// ends. Rows follow `p1`, columns `p2`.
pub fn stability_map(
    model: &Model,
    p1: (&str, f64, f64, usize),
    p2: (&str, f64, f64, usize),
    cancelled: &dyn Fn() -> bool,
    progress: &dyn Fn(f32),
) -> Result<StabilityMap, SweepError> {
    check_range(p1.1, p1.2, p1.3, true)?;
    check_range(p2.1, p2.2, p2.3, true)?;
    if p1.0 == p2.0 {
        return Err(SweepError::SameParameter(p1.0.to_owned()));
    }
    // Unknown names are reported before any work.
    let mut probe = model.clone();
    probe.set_param(p1.0, p1.1)?;
    probe.set_param(p2.0, p2.1)?;
    let v1 = grid_values(p1.1, p1.2, p1.3);
    let v2 = grid_values(p2.1, p2.2, p2.3);
    let n2 = v2.len();
    let set = |m: &mut Model, k: usize| -> Result<(), ModelError> {
        m.set_param(p1.0, v1[k / n2])?;
        m.set_param(p2.0, v2[k % n2])
    };
    let opts = EquilibriumOptions::default();
    let roots = grid_equilibria(
        model,
        &set,
        v1.len() * n2,
        (&opts, &opts, 1),
        cancelled,
        progress,
        (0.0, 1.0),
    )?;
    // Classes need the Jacobian at each cell's parameters.
    let mut m = model.clone();
    let mut cells = Vec::with_capacity(roots.len());
    for (k, rs) in roots.iter().enumerate() {
        set(&mut m, k)?;
        cells.push(
            rs.iter()
                .map(|&(x, y)| linearise(m.jacobian(x, y)).class)
                .collect(),
        );
    }
    Ok(StabilityMap {
        params: [p1.0.to_owned(), p2.0.to_owned()],
        values: [v1, v2],
        cells,
    })
}

/// The rates and their derivatives in (x, y, p), with p a runtime input.
struct Evaluator {
    /// Outputs f, g, ∂f/∂x, ∂f/∂y, ∂g/∂x, ∂g/∂y, ∂f/∂p, ∂g/∂p.
    code: Option<Formulas>,
    /// The model, for the central-difference fallback.
    model: Model,
    params: Vec<f64>,
    p_index: usize,
    /// Scales of x, y and p (window width, height, parameter range).
    scale: [f64; 3],
}

/// Rates and scaled derivatives at a point.
#[derive(Clone, Copy)]
struct Eval {
    f: [f64; 2],
    /// Rows ∇f, ∇g with respect to the scaled unknowns (x/sx, y/sy, p/sp).
    rows: [[f64; 3]; 2],
    /// Raw state Jacobian.
    jac: [[f64; 2]; 2],
}

/// Why a correction failed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum CorrectError {
    NonFinite,
    NoConvergence,
}

impl Evaluator {
    fn new(model: &Model, param: &str, scale: [f64; 3]) -> Result<Self, SweepError> {
        let mut model = model.clone();
        let current = model.param(param).unwrap_or(0.0);
        model.set_param(param, current)?;
        let spec = model.spec();
        let p_index = spec
            .parameters
            .iter()
            .position(|p| p.name == param)
            .unwrap_or(0);
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
        ];
        let refs: Vec<&Expr> = exprs.iter().collect();
        let mut inputs: Vec<&str> = vec![x, y];
        inputs.extend(spec.parameters.iter().map(|p| p.name.as_str()));
        let code = Formulas::compile(&refs, &inputs, 2, Backend::Auto).ok();
        let params = model.params().to_vec();
        Ok(Self {
            code,
            model,
            params,
            p_index,
            scale,
        })
    }

    /// Rates and derivatives at raw (x, y, p); `None` when anything is not finite.
    fn eval(&mut self, u: [f64; 3]) -> Option<Eval> {
        let [x, y, p] = u;
        let mut out = [0.0; 8];
        match &self.code {
            Some(code) => {
                self.params[self.p_index] = p;
                code.eval(&[x, y], &self.params, &mut out);
            }
            None => {
                // NOTE: only if the symbolic derivative could not be compiled: a central
                // difference in p with a step scaled to |p| and the range, whose truncation
                // error (h²) and rounding error (ε/h) balance near ε^(1/3).
                let h = 6e-6 * p.abs().max(self.scale[2]);
                let name = self.model.spec().parameters[self.p_index].name.clone();
                self.model.set_param(&name, p + h).ok()?;
                let fp = self.model.rates(x, y);
                self.model.set_param(&name, p - h).ok()?;
                let fm = self.model.rates(x, y);
                self.model.set_param(&name, p).ok()?;
                let (fv, j) = self.model.rates_and_jacobian(x, y);
                out = [
                    fv[0],
                    fv[1],
                    j[0][0],
                    j[0][1],
                    j[1][0],
                    j[1][1],
                    (fp[0] - fm[0]) / (2.0 * h),
                    (fp[1] - fm[1]) / (2.0 * h),
                ];
            }
        }
        if !out.iter().all(|v| v.is_finite()) {
            return None;
        }
        let [sx, sy, sp] = self.scale;
        Some(Eval {
            f: [out[0], out[1]],
            rows: [
                [out[2] * sx, out[3] * sy, out[6] * sp],
                [out[4] * sx, out[5] * sy, out[7] * sp],
            ],
            jac: [[out[2], out[3]], [out[4], out[5]]],
        })
    }

    /// Newton on `[F(u); n·(z − z_guess)] = 0` from `guess`, with `n` a scaled direction.
    fn correct(&mut self, guess: [f64; 3], n: [f64; 3]) -> Result<[f64; 3], CorrectError> {
        let s = self.scale;
        let mut u = guess;
        let mut prev = f64::INFINITY;
        for _ in 0..NEWTON_MAX_ITER {
            let e = self.eval(u).ok_or(CorrectError::NonFinite)?;
            let off: f64 = (0..3).map(|i| n[i] * (u[i] - guess[i]) / s[i]).sum();
            if e.f == [0.0, 0.0] && off == 0.0 {
                return Ok(u);
            }
            let d = solve3([e.rows[0], e.rows[1], n], [-e.f[0], -e.f[1], -off])
                .ok_or(CorrectError::NoConvergence)?;
            for i in 0..3 {
                u[i] += d[i] * s[i];
            }
            let size = d.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
            if !size.is_finite() {
                return Err(CorrectError::NonFinite);
            }
            // NOTE: near a branch point the system is ill-conditioned and rounding keeps the
            // correction above NEWTON_TOL; a correction that is small and no longer shrinking
            // is as converged as the conditioning allows.
            if size < NEWTON_TOL || (size < NEWTON_STALL_TOL && size > 0.25 * prev) {
                return Ok(u);
            }
            prev = size;
        }
        Err(CorrectError::NoConvergence)
    }

    /// The equilibrium at parameter `p` near `guess` (Newton in x, y only).
    fn correct_at(&mut self, guess: [f64; 3], p: f64) -> Result<[f64; 3], CorrectError> {
        let mut u = guess;
        u[2] = p;
        let u = self.correct(u, [0.0, 0.0, 1.0])?;
        // NOTE: the p row keeps p fixed up to rounding; pin it to the exact grid value.
        Ok([u[0], u[1], p])
    }

    /// A branch point at `u` with its tangent oriented along `along` (when given and the
    /// tangent is defined) or with a nonnegative p component.
    fn point(&mut self, u: [f64; 3], along: Option<[f64; 3]>) -> Option<Pt> {
        let e = self.eval(u)?;
        let [r1, r2] = e.rows;
        let c = [
            r1[1] * r2[2] - r1[2] * r2[1],
            r1[2] * r2[0] - r1[0] * r2[2],
            r1[0] * r2[1] - r1[1] * r2[0],
        ];
        let norm = dot(c, c).sqrt();
        let row_scale = dot(r1, r1).sqrt() * dot(r2, r2).sqrt();
        // NOTE: at a branch point the two rows are parallel and the cross product vanishes; its
        // direction is then noise, so the direction we came from is kept instead.
        let t = if norm > 1e-13 * row_scale && norm.is_finite() {
            let t = c.map(|v| v / norm);
            match along {
                Some(a) if dot(a, t) < 0.0 => t.map(|v| -v),
                Some(_) => t,
                None if t[2] < 0.0 => t.map(|v| -v),
                None => t,
            }
        } else {
            along?
        };
        let [[a, b], [cc, d]] = e.jac;
        Some(Pt {
            u,
            t,
            jac: e.jac,
            det: a * d - b * cc,
            trace: a + d,
        })
    }
}

/// Solves a 3×3 system by Gaussian elimination with partial pivoting.
fn solve3(mut m: [[f64; 3]; 3], mut r: [f64; 3]) -> Option<[f64; 3]> {
    for col in 0..3 {
        let piv = (col..3).max_by(|&i, &j| m[i][col].abs().total_cmp(&m[j][col].abs()))?;
        if m[piv][col] == 0.0 || !m[piv][col].is_finite() {
            return None;
        }
        m.swap(col, piv);
        r.swap(col, piv);
        for row in col + 1..3 {
            let f = m[row][col] / m[col][col];
            let pivot_row = m[col];
            for (v, pv) in m[row].iter_mut().zip(pivot_row).skip(col) {
                *v -= f * pv;
            }
            r[row] -= f * r[col];
        }
    }
    let mut x = [0.0; 3];
    for row in (0..3).rev() {
        let mut s = r[row];
        for k in row + 1..3 {
            s -= m[row][k] * x[k];
        }
        x[row] = s / m[row][row];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// A point on a branch with what the detection needs.
#[derive(Clone, Copy, Debug)]
struct Pt {
    /// Raw (x, y, p).
    u: [f64; 3],
    /// Unit tangent in scaled coordinates, oriented along the direction of travel.
    t: [f64; 3],
    jac: [[f64; 2]; 2],
    det: f64,
    trace: f64,
}

/// What a node of a branch is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum NodeKind {
    Step,
    Grid(usize),
    Fold,
    BranchPointCandidate,
    Hopf,
}

/// The test functions whose zeros are located.
#[derive(Clone, Copy)]
enum Test {
    Det,
    Trace,
    Param(f64),
}

impl Test {
    fn at(self, p: &Pt) -> f64 {
        match self {
            Test::Det => p.det,
            Test::Trace => p.trace,
            Test::Param(v) => p.u[2] - v,
        }
    }
}

/// Sign change between two test values, counting an exact zero at the far end only.
fn crosses(a: f64, b: f64) -> bool {
    (a < 0.0 && b >= 0.0) || (a > 0.0 && b <= 0.0)
}

/// Follows branches for one sweep.
struct Tracer<'a> {
    ev: Evaluator,
    opts: &'a SweepOptions,
    grid: Vec<f64>,
    window: Window,
    cancelled: &'a dyn Fn() -> bool,
}

/// One direction of a branch from its seed.
struct Half {
    nodes: Vec<(Pt, NodeKind)>,
    end: BranchEnd,
}

impl Tracer<'_> {
    fn scaled_diff(&self, a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
        let s = self.ev.scale;
        [
            (b[0] - a[0]) / s[0],
            (b[1] - a[1]) / s[1],
            (b[2] - a[2]) / s[2],
        ]
    }

    /// The real-valued grid index of a parameter value.
    fn kappa(&self, p: f64) -> f64 {
        let o = self.opts;
        (p - o.from) / (o.to - o.from) * (o.steps - 1) as f64
    }

    fn in_grown_window(&self, u: [f64; 3]) -> bool {
        self.window
            .contains_with_slack(u[0], u[1], self.opts.window_margin)
    }

    /// Locates a zero of `test` between `a` and `b` (opposite signs) on the branch, by an
    /// Illinois iteration on points corrected onto hyperplanes normal to the current chord.
    fn locate(&mut self, a: Pt, b: Pt, test: Test) -> Pt {
        let (mut a, mut b) = (a, b);
        let (mut fa, mut fb) = (test.at(&a), test.at(&b));
        if fa == 0.0 {
            return a;
        }
        if fb == 0.0 {
            return b;
        }
        let mut side = 0i8;
        for _ in 0..LOCATE_MAX_ITER {
            let d = self.scaled_diff(a.u, b.u);
            let len = dot(d, d).sqrt();
            if len < LOCATE_TOL || !len.is_finite() {
                break;
            }
            let n = d.map(|v| v / len);
            // NOTE: regula falsi with the Illinois halving, so a convex test function cannot
            // pin one end of the bracket; θ stays strictly inside so the bracket shrinks.
            let theta = (fa / (fa - fb)).clamp(1e-3, 1.0 - 1e-3);
            let guess = [0, 1, 2].map(|i| a.u[i] + theta * (b.u[i] - a.u[i]));
            let Ok(u) = self.ev.correct(guess, n) else {
                // NOTE: next to a branch point the bordered system is close to singular and
                // Newton may fail; the bracket is then short enough for the chord's root.
                if let Some(c) = self.ev.point(guess, Some(n)) {
                    return c;
                }
                break;
            };
            let Some(c) = self.ev.point(u, Some(n)) else {
                break;
            };
            let fc = test.at(&c);
            if fc == 0.0 {
                return c;
            }
            if (fc < 0.0) == (fa < 0.0) {
                a = c;
                fa = fc;
                if side == -1 {
                    fb *= 0.5;
                }
                side = -1;
            } else {
                b = c;
                fb = fc;
                if side == 1 {
                    fa *= 0.5;
                }
                side = 1;
            }
        }
        if test.at(&a).abs() <= test.at(&b).abs() {
            a
        } else {
            b
        }
    }

    /// The branch's equilibrium at grid index `k` between `a` and `b`.
    fn grid_point(&mut self, a: &Pt, b: &Pt, k: usize) -> Option<Pt> {
        let p = self.grid[k];
        let (ka, kb) = (self.kappa(a.u[2]), self.kappa(b.u[2]));
        let theta = if kb != ka {
            ((k as f64 - ka) / (kb - ka)).clamp(0.0, 1.0)
        } else {
            0.5
        };
        let guess = [0, 1, 2].map(|i| a.u[i] + theta * (b.u[i] - a.u[i]));
        let d = self.scaled_diff(a.u, b.u);
        let len = d.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let near = |tr: &Self, u: [f64; 3]| {
            let e = tr.scaled_diff(guess, u);
            e.iter().fold(0.0_f64, |m, v| m.max(v.abs())) <= 0.5 * len + 1e-12
        };
        let direct = self.ev.correct_at(guess, p).ok().filter(|&u| near(self, u));
        let u = match direct {
            Some(u) => u,
            None => {
                // NOTE: near a fold the straight guess may converge to the other half of the
                // branch; locating p = p_k on the branch itself cannot.
                let c = self.locate(*a, *b, Test::Param(p));
                self.ev.correct_at(c.u, p).ok().filter(|&u| near(self, u))?
            }
        };
        let along = self.scaled_diff(a.u, b.u);
        self.ev.point(u, Some(along))
    }

    /// Event points between `a` and `b`, in order along the segment.
    fn events(&mut self, a: &Pt, b: &Pt) -> Vec<(Pt, NodeKind)> {
        let mut out = Vec::new();
        if crosses(a.det, b.det) {
            let c = self.locate(*a, *b, Test::Det);
            // NOTE: t_p is det J times a positive factor up to orientation, and orientation is
            // kept continuous; so t_p changes sign with det J at a fold, whereas at a branch
            // point the cross product itself flips and the oriented t_p keeps its sign.
            let kind = if a.t[2] * b.t[2] < 0.0 {
                NodeKind::Fold
            } else {
                NodeKind::BranchPointCandidate
            };
            out.push((c, kind));
        }
        // NOTE: along a family of linear centres (Lotka–Volterra under any effort) the trace
        // stays within rounding of zero and flips sign by noise alone; that is no Hopf point,
        // so one end at least must have a trace the classification does not call zero.
        let noise =
            |p: &Pt| CLASS_EPS * p.jac.iter().flatten().fold(0.0_f64, |m, v| m.max(v.abs()));
        let real_trace = a.trace.abs() > noise(a) || b.trace.abs() > noise(b);
        if a.det > 0.0 && b.det > 0.0 && real_trace && crosses(a.trace, b.trace) {
            let c = self.locate(*a, *b, Test::Trace);
            let s = c
                .jac
                .iter()
                .flatten()
                .fold(0.0_f64, |m, v| m.max(v.abs()))
                .max(f64::MIN_POSITIVE);
            // A complex pair needs det − τ²/4 > 0 clearly, i.e. a nonzero imaginary part.
            if c.det - 0.25 * c.trace * c.trace > CLASS_EPS * s * s {
                out.push((c, NodeKind::Hopf));
            }
        }
        let d = self.scaled_diff(a.u, b.u);
        out.sort_by(|x, y| {
            dot(self.scaled_diff(a.u, x.0.u), d).total_cmp(&dot(self.scaled_diff(a.u, y.0.u), d))
        });
        out
    }

    /// Grid points strictly after `a` up to and including `b`.
    fn crossings(&mut self, a: &Pt, b: &Pt, out: &mut Vec<(Pt, NodeKind)>) {
        let (ka, kb) = (self.kappa(a.u[2]), self.kappa(b.u[2]));
        let last = (self.opts.steps - 1) as f64;
        let lo = ka.min(kb).max(0.0);
        let hi = ka.max(kb).min(last);
        if lo > hi {
            return;
        }
        let mut ks: Vec<usize> = Vec::new();
        let first = (lo - GRID_SNAP).ceil().max(0.0);
        let mut k = first;
        while k <= hi + GRID_SNAP {
            let at_a = (k - ka).abs() <= GRID_SNAP;
            if !at_a {
                ks.push(k as usize);
            }
            k += 1.0;
        }
        if kb < ka {
            ks.reverse();
        }
        for k in ks {
            let at_b = (k as f64 - kb).abs() <= GRID_SNAP;
            let p = if at_b {
                let mut q = *b;
                q.u[2] = self.grid[k];
                Some(q)
            } else {
                self.grid_point(a, b, k)
            };
            if let Some(p) = p {
                out.push((p, NodeKind::Grid(k)));
            }
        }
    }

    /// Adds the segment a → b (a already stored) with its events and grid points.
    fn add_segment(&mut self, a: &Pt, b: &Pt, nodes: &mut Vec<(Pt, NodeKind)>) {
        let events = self.events(a, b);
        let mut prev = *a;
        for (e, kind) in events {
            self.crossings(&prev, &e, nodes);
            nodes.push((e, kind));
            prev = e;
        }
        self.crossings(&prev, b, nodes);
        if !matches!(nodes.last(), Some((q, NodeKind::Grid(_))) if q.u == b.u) {
            nodes.push((*b, NodeKind::Step));
        }
    }

    /// Follows the branch from `seed` in the direction of `seed.t`.
    fn follow(&mut self, seed: Pt) -> Result<Half, SweepError> {
        let o = self.opts;
        let last = (o.steps - 1) as f64;
        let heading = seed.t[2];
        let mut nodes = Vec::new();
        let ks = self.kappa(seed.u[2]);
        let at_lo = ks <= GRID_SNAP && heading < 0.0;
        let at_hi = ks >= last - GRID_SNAP && heading > 0.0;
        // A seed on the end of the range heading out: nothing to follow.
        if at_lo || at_hi {
            return Ok(Half {
                nodes,
                end: BranchEnd::ReachedEnd,
            });
        }
        let mut a = seed;
        let mut h = (0.1 * o.max_step).max(o.min_step);
        let mut travelled = 0.0;
        let mut failure = FailReason::NoConvergence;
        loop {
            if (self.cancelled)() {
                return Err(SweepError::Cancelled);
            }
            if nodes.len() >= o.max_branch_points {
                return Ok(Half {
                    nodes,
                    end: BranchEnd::PointLimit,
                });
            }
            if h < o.min_step {
                return Ok(Half {
                    nodes,
                    end: BranchEnd::Failed(failure),
                });
            }
            let s = self.ev.scale;
            let pred = [0, 1, 2].map(|i| a.u[i] + h * a.t[i] * s[i]);
            let u = match self.ev.correct(pred, a.t) {
                Ok(u) => u,
                Err(e) => {
                    failure = match e {
                        CorrectError::NonFinite => FailReason::NonFinite,
                        CorrectError::NoConvergence => FailReason::NoConvergence,
                    };
                    h *= STEP_SHRINK;
                    continue;
                }
            };
            let Some(b) = self.ev.point(u, Some(a.t)) else {
                failure = FailReason::NonFinite;
                h *= STEP_SHRINK;
                continue;
            };
            let d = self.scaled_diff(a.u, b.u);
            let dist = dot(d, d).sqrt();
            let turn = dot(a.t, b.t);
            if (dist > 2.0 * h || turn < MAX_TURN_COS) && h > 2.0 * o.min_step {
                h *= STEP_SHRINK;
                continue;
            }
            if !self.in_grown_window(b.u) {
                return Ok(Half {
                    nodes,
                    end: BranchEnd::LeftWindow,
                });
            }
            let kb = self.kappa(b.u[2]);
            if kb < -GRID_SNAP || kb > last + GRID_SNAP {
                // Clip to the end of the range on the branch itself.
                let k_end = if kb < 0.0 { 0 } else { o.steps - 1 };
                let c = self.locate(a, b, Test::Param(self.grid[k_end]));
                let c = self
                    .ev
                    .correct_at(c.u, self.grid[k_end])
                    .ok()
                    .and_then(|u| self.ev.point(u, Some(d)))
                    .unwrap_or(c);
                self.add_segment(&a, &c, &mut nodes);
                let forward = (o.to - o.from) * heading;
                let end_forward = (self.grid[k_end] - seed.u[2]) * (o.to - o.from);
                let same_way = if end_forward == 0.0 {
                    // Back at the seed's own end of the range.
                    false
                } else {
                    (forward > 0.0) == (end_forward > 0.0)
                };
                return Ok(Half {
                    nodes,
                    end: if same_way {
                        BranchEnd::ReachedEnd
                    } else {
                        BranchEnd::FoldTurnedBack
                    },
                });
            }
            self.add_segment(&a, &b, &mut nodes);
            travelled += dist;
            // Back at the seed: a closed curve of equilibria.
            if travelled > 4.0 * dist {
                let ds = self.scaled_diff(a.u, seed.u);
                let along = dot(ds, d) / (dist * dist).max(f64::MIN_POSITIVE);
                if (0.0..=1.0).contains(&along) {
                    let off = [0, 1, 2].map(|i| ds[i] - along * d[i]);
                    if dot(off, off).sqrt() < 0.05 * dist + 1e-9 {
                        return Ok(Half {
                            nodes,
                            end: BranchEnd::Closed,
                        });
                    }
                }
            }
            if turn > EASY_TURN_COS && dist <= 1.2 * h {
                h = (h * STEP_GROW).min(o.max_step);
            }
            a = b;
        }
    }
}

impl Pt {
    fn to_branch_point(self) -> BranchPoint {
        BranchPoint {
            value: self.u[2],
            x: self.u[0],
            y: self.u[1],
            linear: linearise(self.jac),
        }
    }
}

/// A located det J zero or Hopf point, before verification and de-duplication.
struct Candidate {
    kind: NodeKind,
    u: [f64; 3],
    branch: usize,
}

/// Follows every equilibrium branch of `model` over a range of one parameter and locates
/// its folds, transcritical points and Hopf points.
///
/// The parameter's own value in `model` is ignored. `cancelled` is polled often (every
/// continuation step and every chunk of grid values); `progress` gets fractions in [0, 1].
pub fn sweep(
    model: &Model,
    opts: &SweepOptions,
    cancelled: &dyn Fn() -> bool,
    progress: &dyn Fn(f32),
) -> Result<Sweep, SweepError> {
    check_range(opts.from, opts.to, opts.steps, false)?;
    let mut probe = model.clone();
    probe.set_param(&opts.param, opts.from)?;
    let grid = grid_values(opts.from, opts.to, opts.steps);
    let param = opts.param.as_str();
    let set = |m: &mut Model, k: usize| m.set_param(param, grid[k]);
    let quick = EquilibriumOptions {
        seeds_per_side: opts.quick_seeds_per_side,
        max_iterations: opts.equilibria.max_iterations.min(QUICK_MAX_ITERATIONS),
        ..opts.equilibria
    };
    let roots = grid_equilibria(
        model,
        &set,
        opts.steps,
        (&opts.equilibria, &quick, opts.full_search_every),
        cancelled,
        progress,
        (0.0, 0.5),
    )?;

    let window = model.window();
    let scale = [window.width(), window.height(), (opts.to - opts.from).abs()];
    let mut tracer = Tracer {
        ev: Evaluator::new(model, param, scale)?,
        opts,
        grid: grid.clone(),
        window,
        cancelled,
    };

    // Refine each grid equilibrium at its exact grid value; keep the finder's point if Newton
    // fails there (a singular Jacobian).
    let mut grid_eq: Vec<Vec<[f64; 3]>> = roots
        .iter()
        .enumerate()
        .map(|(k, rs)| {
            rs.iter()
                .map(|&(x, y)| {
                    let u = [x, y, grid[k]];
                    tracer
                        .ev
                        .correct_at(u, grid[k])
                        .ok()
                        .filter(|r| {
                            let e = tracer.scaled_diff(u, *r);
                            e[0].abs().max(e[1].abs()) < 1e-4
                        })
                        .unwrap_or(u)
                })
                .collect()
        })
        .collect();
    let mut covered: Vec<Vec<bool>> = grid_eq.iter().map(|v| vec![false; v.len()]).collect();
    let mut on_branches: Vec<Vec<Pt>> = vec![Vec::new(); opts.steps];

    let mut branches: Vec<Branch> = Vec::new();
    let mut candidates: Vec<Candidate> = Vec::new();
    let mut truncated = false;
    // Progress reached when the branches are done; the cycle searches take the rest.
    let branch_span = if opts.cycle_samples > 0 { 0.8 } else { 1.0 };
    for k in 0..opts.steps {
        for i in 0..grid_eq[k].len() {
            if covered[k][i] {
                continue;
            }
            if branches.len() >= opts.max_branches {
                truncated = true;
                break;
            }
            covered[k][i] = true;
            let u = grid_eq[k][i];
            let Some(seed) = tracer.ev.point(u, None) else {
                continue;
            };
            let forward = tracer.follow(seed)?;
            let backward = if forward.end == BranchEnd::Closed {
                None
            } else {
                let mut back = seed;
                back.t = seed.t.map(|v| -v);
                Some(tracer.follow(back)?)
            };
            let mut nodes: Vec<(Pt, NodeKind)> = Vec::new();
            let start = match backward {
                Some(b) => {
                    nodes.extend(b.nodes.into_iter().rev().map(|(mut p, kind)| {
                        p.t = p.t.map(|v| -v);
                        (p, kind)
                    }));
                    b.end
                }
                None => BranchEnd::Closed,
            };
            nodes.push((seed, NodeKind::Grid(k)));
            nodes.extend(forward.nodes);
            let end = forward.end;
            let index = branches.len();
            for (p, kind) in &nodes {
                match kind {
                    NodeKind::Grid(j) => on_branches[*j].push(*p),
                    NodeKind::Fold | NodeKind::BranchPointCandidate | NodeKind::Hopf => candidates
                        .push(Candidate {
                            kind: *kind,
                            u: p.u,
                            branch: index,
                        }),
                    NodeKind::Step => {}
                }
            }
            // Mark the grid equilibria this branch passes through.
            for (j, pts) in on_branches.iter().enumerate() {
                for (c, q) in grid_eq[j].iter().zip(covered[j].iter_mut()) {
                    if *q {
                        continue;
                    }
                    *q = pts.iter().any(|p| {
                        let e = tracer.scaled_diff(p.u, *c);
                        e[0].abs().max(e[1].abs()) < COVER_TOL
                    });
                }
            }
            branches.push(trim(nodes, start, end, &window));
        }
        if k % 16 == 0 {
            progress(0.5 + (branch_span - 0.5) * k as f32 / opts.steps as f32);
        }
    }

    // Grid equilibria: the finder's, plus any branch point it missed.
    let merge = opts.equilibria.merge_tol.max(COVER_TOL);
    for (k, pts) in on_branches.iter().enumerate() {
        for p in pts {
            if !window.contains_with_slack(p.u[0], p.u[1], EDGE_SLACK) {
                continue;
            }
            let known = grid_eq[k].iter().any(|c| {
                let e = tracer.scaled_diff(p.u, *c);
                e[0].abs().max(e[1].abs()) < merge
            });
            if !known {
                grid_eq[k].push(p.u);
            }
        }
    }
    let points = grid_eq
        .into_iter()
        .enumerate()
        .map(|(k, mut us)| {
            us.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
            let equilibria = us
                .into_iter()
                .filter_map(|u| tracer.ev.eval(u).map(|e| (u, e)))
                .map(|(u, e)| BranchPoint {
                    value: grid[k],
                    x: u[0],
                    y: u[1],
                    linear: linearise(e.jac),
                })
                .collect();
            SweepPoint {
                value: grid[k],
                equilibria,
            }
        })
        .collect();

    let bifurcations = verify(&candidates, &tracer, &window);
    let cycles = if opts.cycle_samples > 0 {
        progress(branch_span);
        hopf_cycles(model, &mut tracer, &branches, &bifurcations, &|f| {
            progress(branch_span + (1.0 - branch_span) * f)
        })?
    } else {
        Vec::new()
    };
    progress(1.0);
    Ok(Sweep {
        param: opts.param.clone(),
        points,
        branches,
        bifurcations,
        branches_truncated: truncated,
        cycles,
    })
}

fn is_unstable_focus_or_node(c: Class) -> bool {
    matches!(
        c,
        Class::UnstableSpiral
            | Class::UnstableNode
            | Class::UnstableDegenerateNode
            | Class::UnstableStar
    )
}

/// The points of `branch` next to index `at` in direction `dir` (±1) while `keep` holds
/// (points at the same parameter value as the start, such as a grid value on the Hopf point
/// itself, are passed over: those within `same_value` of it).
fn run_from(
    branch: &Branch,
    at: usize,
    dir: isize,
    keep: fn(Class) -> bool,
    same_value: f64,
) -> Vec<BranchPoint> {
    let start = branch.points[at];
    let mut out = vec![start];
    let mut i = at as isize + dir;
    while let Some(p) = usize::try_from(i).ok().and_then(|i| branch.points.get(i)) {
        if out.len() == 1 && (p.value - start.value).abs() <= same_value {
            i += dir;
            continue;
        }
        if !keep(p.linear.class) {
            break;
        }
        out.push(*p);
        i += dir;
    }
    out
}

/// Parameter values and equilibria at which to look for a cycle, along `run` (which starts at
/// the Hopf point): `n` values spaced by the square of their index out to the run's far end.
fn sample_run(tracer: &mut Tracer, run: &[BranchPoint], n: usize) -> Vec<(f64, [f64; 2])> {
    let (Some(first), Some(far)) = (
        run.first(),
        run.iter().max_by(|a, b| {
            (a.value - run[0].value)
                .abs()
                .total_cmp(&(b.value - run[0].value).abs())
        }),
    ) else {
        return Vec::new();
    };
    let (h, end) = (first.value, far.value);
    if end == h {
        return Vec::new();
    }
    let mut out = Vec::new();
    for j in 1..=n {
        let f = j as f64 / n as f64;
        let v = h + (end - h) * f * f;
        // The first piece of the run that brackets v, interpolated and corrected at v.
        let Some(w) = run
            .windows(2)
            .find(|w| (w[0].value - v) * (w[1].value - v) <= 0.0 && w[0].value != w[1].value)
        else {
            continue;
        };
        let t = (v - w[0].value) / (w[1].value - w[0].value);
        let guess = [
            w[0].x + t * (w[1].x - w[0].x),
            w[0].y + t * (w[1].y - w[0].y),
            v,
        ];
        if let Ok(u) = tracer.ev.correct_at(guess, v) {
            out.push((v, [u[0], u[1]]));
        }
    }
    out
}

/// Looks for the cycle around each equilibrium in `at`, in parallel chunks with cancellation
/// between them.
fn search_cycles(
    model: &Model,
    tracer: &Tracer,
    hopf_value: f64,
    at: &[(f64, [f64; 2])],
    progress: &dyn Fn(f32),
) -> Result<Vec<Option<CycleSample>>, SweepError> {
    let param = tracer.opts.param.as_str();
    let copts = tracer.opts.cycle_options;
    let w = model.window();
    let d = CANDIDATE_OFFSET * std::f64::consts::FRAC_1_SQRT_2;
    let mut out = Vec::with_capacity(at.len());
    for chunk in at.chunks(CYCLE_CHUNK) {
        if (tracer.cancelled)() {
            return Err(SweepError::Cancelled);
        }
        let found: Vec<Option<CycleSample>> = chunk
            .par_iter()
            .map(|&(v, e)| {
                let mut m = model.clone();
                m.set_param(param, v).ok()?;
                // NOTE: off the equilibrium diagonally in window units, so an invariant axis
                // of a population model is not chosen.
                let start = [e[0] + d * w.width(), e[1] + d * w.height()];
                let r = find_limit_cycle(&m, start, &copts).ok()?;
                let c = r.cycle;
                let surrounds = (0..2).all(|k| c.min[k] < e[k] && e[k] < c.max[k]);
                surrounds.then_some(CycleSample {
                    value: v,
                    hopf_value,
                    equilibrium: e,
                    min: c.min,
                    max: c.max,
                    period: c.period,
                    multiplier: c.multiplier,
                    stable: c.stability == CycleStability::Attracting,
                })
            })
            .collect();
        out.extend(found);
        progress(out.len() as f32 / at.len().max(1) as f32);
    }
    Ok(out)
}

/// Limit-cycle samples past every Hopf point; see [`SweepOptions::cycle_samples`].
fn hopf_cycles(
    model: &Model,
    tracer: &mut Tracer,
    branches: &[Branch],
    bifurcations: &[Bifurcation],
    progress: &dyn Fn(f32),
) -> Result<Vec<CycleSample>, SweepError> {
    let n = tracer.opts.cycle_samples;
    let same_value = 1e-9 * tracer.ev.scale[2];
    let hopfs: Vec<&Bifurcation> = bifurcations
        .iter()
        .filter(|b| b.kind == BifurcationKind::Hopf)
        .collect();
    let mut out = Vec::new();
    for (i, b) in hopfs.iter().enumerate() {
        let span = |f: f32| progress((i as f32 + f) / hopfs.len() as f32);
        // The branch point the Hopf point was located at.
        let near = |p: &BranchPoint, tr: &Tracer| {
            let e = tr.scaled_diff([p.x, p.y, p.value], [b.x, b.y, b.value]);
            e.iter().fold(0.0_f64, |m, v| m.max(v.abs())) < DEDUPE_TOL
        };
        let Some((branch, at)) = branches.iter().find_map(|br| {
            br.points
                .iter()
                .position(|p| near(p, tracer))
                .map(|at| (br, at))
        }) else {
            continue;
        };
        for dir in [1isize, -1] {
            let run = run_from(branch, at, dir, is_unstable_focus_or_node, same_value);
            if run.len() < 2 {
                continue;
            }
            let samples = sample_run(tracer, &run, n);
            let probe = samples.len().min(SUBCRITICAL_PROBES);
            let first = search_cycles(model, tracer, b.value, &samples[..probe], &|_| {})?;

            if first.iter().all(Option::is_none) {
                // Subcritical: the cycle, if any, surrounds the stable focus on the other side.
                let run = run_from(branch, at, -dir, |c| c == Class::StableSpiral, same_value);
                if run.len() >= 2 {
                    let samples = sample_run(tracer, &run, n);
                    let found = search_cycles(model, tracer, b.value, &samples, &span)?;
                    out.extend(found.into_iter().flatten());
                }
                continue;
            }
            let rest = search_cycles(model, tracer, b.value, &samples[probe..], &span)?;
            out.extend(first.into_iter().chain(rest).flatten());
        }
        span(1.0);
    }
    out.sort_by(|a, b| a.value.total_cmp(&b.value));
    Ok(out)
}

/// Turns candidates into bifurcations: a det J zero that is not a fold counts only where
/// another branch meets it; everything is reported once, inside the window, sorted by value.
fn verify(candidates: &[Candidate], tracer: &Tracer, window: &Window) -> Vec<Bifurcation> {
    let dist = |a: [f64; 3], b: [f64; 3]| {
        let e = tracer.scaled_diff(a, b);
        e.iter().fold(0.0_f64, |m, v| m.max(v.abs()))
    };
    let mut out: Vec<(Bifurcation, [f64; 3])> = Vec::new();
    for c in candidates {
        if !window.contains_with_slack(c.u[0], c.u[1], EDGE_SLACK) {
            continue;
        }
        let kind = match c.kind {
            NodeKind::Fold => BifurcationKind::Fold,
            NodeKind::Hopf => BifurcationKind::Hopf,
            NodeKind::BranchPointCandidate => {
                let met = candidates.iter().any(|o| {
                    o.branch != c.branch
                        && matches!(o.kind, NodeKind::Fold | NodeKind::BranchPointCandidate)
                        && dist(o.u, c.u) < MEET_TOL
                });
                if !met {
                    continue;
                }
                BifurcationKind::Transcritical
            }
            NodeKind::Step | NodeKind::Grid(_) => continue,
        };
        if out
            .iter()
            .any(|(b, u)| b.kind == kind && dist(*u, c.u) < DEDUPE_TOL)
        {
            continue;
        }
        out.push((
            Bifurcation {
                kind,
                value: c.u[2],
                x: c.u[0],
                y: c.u[1],
            },
            c.u,
        ));
    }
    let mut out: Vec<Bifurcation> = out.into_iter().map(|(b, _)| b).collect();
    out.sort_by(|a, b| a.value.total_cmp(&b.value));
    out
}

/// Drops the leading and trailing nodes outside the window (followed only within the margin);
/// a branch trimmed at an end has left the window there.
fn trim(nodes: Vec<(Pt, NodeKind)>, start: BranchEnd, end: BranchEnd, window: &Window) -> Branch {
    let inside = |p: &Pt| window.contains_with_slack(p.u[0], p.u[1], EDGE_SLACK);
    let first = nodes.iter().position(|(p, _)| inside(p));
    let last = nodes.iter().rposition(|(p, _)| inside(p));
    let (Some(first), Some(last)) = (first, last) else {
        return Branch {
            points: Vec::new(),
            start: BranchEnd::LeftWindow,
            end: BranchEnd::LeftWindow,
        };
    };
    let start = if first > 0 {
        BranchEnd::LeftWindow
    } else {
        start
    };
    let end = if last + 1 < nodes.len() {
        BranchEnd::LeftWindow
    } else {
        end
    };
    Branch {
        points: nodes[first..=last]
            .iter()
            .map(|(p, _)| p.to_branch_point())
            .collect(),
        start,
        end,
    }
}

#[cfg(test)]
mod tests {
    use std::cell::Cell;
    use std::time::{Duration, Instant};

    use super::*;
    use crate::test_support::{builtin, model};

    fn run(m: &Model, opts: &SweepOptions) -> Sweep {
        sweep(m, opts, &|| false, &|_| {}).expect("sweep runs")
    }

    fn of_kind(s: &Sweep, kind: BifurcationKind) -> Vec<Bifurcation> {
        s.bifurcations
            .iter()
            .copied()
            .filter(|b| b.kind == kind)
            .collect()
    }

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn schaefer_interior_branch_meets_extinction_at_e_equals_r_over_q() {
        // Closed form (Schaefer 1954): x* = K(1 − qE/r) meets x = 0 at E = r/q = 50 with
        // r = 0.5, q = 0.01; there the two branches exchange stability (transcritical).
        let m = builtin("schaefer");
        let s = run(&m, &SweepOptions::new("E", 0.0, 100.0, 101));
        let tc = of_kind(&s, BifurcationKind::Transcritical);
        assert_eq!(tc.len(), 1, "{:?}", s.bifurcations);
        assert!(rel(tc[0].value, 50.0) < 1e-8, "{}", tc[0].value);
        assert!(tc[0].x.abs() < 1e-6 && tc[0].y.abs() < 1e-6);
        // No fold or Hopf in a Schaefer stock.
        assert_eq!(s.bifurcations.len(), 1, "{:?}", s.bifurcations);
        // The interior branch agrees with the closed form at every point.
        let interior = s
            .branches
            .iter()
            .find(|b| b.points.iter().any(|p| p.x > 1.0))
            .expect("interior branch");
        for p in &interior.points {
            let x = 100.0 * (1.0 - 0.01 * p.value / 0.5);
            assert!((p.x - x).abs() < 1e-8, "{p:?}");
        }
        assert_eq!(interior.end, BranchEnd::LeftWindow);
        // Stability exchange: the interior equilibrium is stable before E = 50 and the empty
        // stock is stable after.
        let at = |e: f64| {
            s.points
                .iter()
                .find(|p| (p.value - e).abs() < 1e-9)
                .expect("grid value")
        };
        let low = at(30.0);
        assert_eq!(low.equilibria.len(), 2);
        assert_eq!(low.equilibria[0].linear.class, Class::Saddle);
        assert_eq!(low.equilibria[1].linear.class, Class::StableNode);
        let high = at(70.0);
        assert_eq!(high.equilibria.len(), 1);
        assert_eq!(high.equilibria[0].linear.class, Class::StableNode);
    }

    #[test]
    fn schaefer_catch_peaks_at_msy_rk_over_4_at_e_equals_r_over_2q() {
        // Closed form (Schaefer 1954): the equilibrium catch qE·x* = qEK(1 − qE/r) peaks at
        // MSY = rK/4 = 12.5 at E = r/(2q) = 25.
        let m = builtin("schaefer");
        let s = run(&m, &SweepOptions::new("E", 0.0, 100.0, 201));
        let (mut best_e, mut best) = (f64::NAN, f64::NEG_INFINITY);
        for b in &s.branches {
            for p in &b.points {
                let catch = 0.01 * p.value * p.x;
                if catch > best {
                    (best_e, best) = (p.value, catch);
                }
            }
        }
        assert!(rel(best, 12.5) < 1e-9, "{best}");
        assert!((best_e - 25.0).abs() < 0.5, "{best_e}");
        // At the grid value E = 25 the catch equals the MSY; the y equation's equilibrium is
        // the catch itself.
        let at25 = &s.points[50];
        assert_eq!(at25.value, 25.0);
        let interior = at25
            .equilibria
            .iter()
            .find(|p| p.x > 1.0)
            .expect("interior");
        assert!(rel(interior.y, 12.5) < 1e-9);
    }

    fn quota_model() -> Model {
        model(
            ["r*x*(1 - x/K) - H", "-y"],
            &[("r", 1.0), ("K", 1.0), ("H", 0.1)],
            None,
            [0.0, 1.2, -1.0, 1.0],
        )
    }

    #[test]
    fn constant_quota_fold_at_rk_over_4() {
        // Closed form: x' = r x (1 − x/K) − H has equilibria only while H ≤ rK/4; the two
        // meet in a fold at H = rK/4 = 0.25, x = K/2.
        let m = quota_model();
        let s = run(&m, &SweepOptions::new("H", 0.0, 0.5, 51));
        let folds = of_kind(&s, BifurcationKind::Fold);
        assert_eq!(folds.len(), 1, "{:?}", s.bifurcations);
        assert!(rel(folds[0].value, 0.25) < 1e-8, "{}", folds[0].value);
        assert!((folds[0].x - 0.5).abs() < 1e-4);
        // One branch: from the empty stock at H = 0 round the fold back to x = K at H = 0.
        assert_eq!(s.branches.len(), 1, "{:?}", s.branches.len());
        assert_eq!(s.branches[0].end, BranchEnd::FoldTurnedBack);
        // No equilibria past the fold.
        assert!(
            s.points
                .iter()
                .filter(|p| p.value > 0.2501)
                .all(|p| p.equilibria.is_empty())
        );
        assert_eq!(s.points[20].equilibria.len(), 2);
    }

    #[test]
    fn brusselator_hopf_at_b_equals_one_plus_a_squared() {
        // Closed form (e.g. Strogatz, "Nonlinear Dynamics and Chaos", §8.3): the equilibrium
        // (a, b/a) loses stability in a Hopf bifurcation at b = 1 + a².
        for a in [1.0, 1.5] {
            let mut m = builtin("brusselator");
            m.set_param("a", a).expect("a");
            let b_h = 1.0 + a * a;
            let s = run(&m, &SweepOptions::new("b", 1.0, 3.5, 26));
            let hopf = of_kind(&s, BifurcationKind::Hopf);
            assert_eq!(hopf.len(), 1, "a = {a}: {:?}", s.bifurcations);
            assert!(rel(hopf[0].value, b_h) < 1e-8, "{} vs {b_h}", hopf[0].value);
            assert!((hopf[0].x - a).abs() < 1e-8);
        }
    }

    #[test]
    fn rosenzweig_macarthur_hopf_at_the_hump_k_equals_3() {
        // Closed form (Rosenzweig 1971): the Hopf point is where x* = m/(a(b − m h)) meets the
        // hump of the prey nullcline, K_H = 2x* + 1/(a h); with the built-in defaults x* = 0.5
        // and K_H = 3.
        let m = builtin("holling-ii");
        let s = run(&m, &SweepOptions::new("K", 1.0, 20.0, 1000));
        let hopf = of_kind(&s, BifurcationKind::Hopf);
        assert_eq!(hopf.len(), 1, "{:?}", s.bifurcations);
        let (a, h, b, mm) = (1.0, 0.5, 0.5, 0.2);
        let x_star = mm / (a * (b - mm * h));
        let k_h = 2.0 * x_star + 1.0 / (a * h);
        assert!(rel(hopf[0].value, k_h) < 1e-8, "{}", hopf[0].value);
        assert!((hopf[0].x - x_star).abs() < 1e-8);
        // Stable spiral before, unstable after.
        let class_at = |k: f64| {
            let p = s
                .points
                .iter()
                .min_by(|p, q| (p.value - k).abs().total_cmp(&(q.value - k).abs()))
                .expect("grid");
            p.equilibria
                .iter()
                .find(|e| (e.x - x_star).abs() < 1e-6 && e.y > 0.1)
                .expect("interior")
                .linear
                .class
        };
        assert_eq!(class_at(2.5), Class::StableSpiral);
        assert_eq!(class_at(4.0), Class::UnstableSpiral);
    }

    #[test]
    fn hopf_normal_form_cycles_have_amplitude_sqrt_mu_and_period_two_pi() {
        // Closed form (common practice): the Hopf normal form r' = μr − r³, θ' = 1, written in
        // x, y, has the attracting cycle r = √μ with period 2π for μ > 0 and none for μ < 0.
        let m = model(
            ["mu*x - y - x*(x^2 + y^2)", "x + mu*y - y*(x^2 + y^2)"],
            &[("mu", 0.1)],
            None,
            [-1.5, 1.5, -1.5, 1.5],
        );
        let plain = run(&m, &SweepOptions::new("mu", -0.5, 1.0, 31));
        assert!(plain.cycles.is_empty(), "cycles are off by default");
        let opts = SweepOptions {
            cycle_samples: 6,
            ..SweepOptions::new("mu", -0.5, 1.0, 31)
        };
        let s = run(&m, &opts);
        let hopf = of_kind(&s, BifurcationKind::Hopf);
        assert_eq!(hopf.len(), 1, "{:?}", s.bifurcations);
        assert!(hopf[0].value.abs() < 1e-10, "{}", hopf[0].value);
        assert_eq!(s.cycles.len(), 6, "{:?}", s.cycles);
        for c in &s.cycles {
            assert!(c.value > 0.0, "{c:?}");
            let r = c.value.sqrt();
            for k in 0..2 {
                assert!((c.max[k] - r).abs() < 1e-7, "{c:?}");
                assert!((c.min[k] + r).abs() < 1e-7, "{c:?}");
            }
            assert!(rel(c.period, std::f64::consts::TAU) < 1e-8, "{c:?}");
            assert!(c.stable);
            assert_eq!(c.hopf_value, hopf[0].value);
        }
        // The samples run out to the end of the range, spaced by the square of their index.
        let last = s.cycles.last().expect("a sample");
        assert_eq!(last.value, 1.0);
        assert!(rel(s.cycles[0].value, 1.0 / 36.0) < 1e-12);
    }

    #[test]
    fn a_family_of_centres_has_no_hopf_point() {
        // Volterra's principle (common practice): Lotka–Volterra with equal effort E on both
        // species keeps a linear centre at ((c+E)/γ, (a−E)/α) for every E < a, with trace 0
        // exactly; rounding must not be read as Hopf points.
        let m = model(
            ["a*x - alpha*x*y - E*x", "-c*y + gamma*x*y - E*y"],
            &[
                ("a", 1.0),
                ("alpha", 0.1),
                ("c", 1.5),
                ("gamma", 0.075),
                ("E", 0.3),
            ],
            None,
            [0.0, 60.0, 0.0, 40.0],
        );
        let s = run(&m, &SweepOptions::new("E", 0.0, 0.9, 50));
        assert!(s.bifurcations.is_empty(), "{:?}", s.bifurcations);
        let centres: Vec<&BranchPoint> = s
            .branches
            .iter()
            .flat_map(|b| &b.points)
            .filter(|p| p.x > 1.0)
            .collect();
        assert!(!centres.is_empty());
        for p in centres {
            assert_eq!(p.linear.class, Class::Center, "{p:?}");
            assert!(rel(p.x, (1.5 + p.value) / 0.075) < 1e-9, "{p:?}");
            assert!(rel(p.y, (1.0 - p.value) / 0.1) < 1e-9, "{p:?}");
        }
    }

    #[test]
    fn subcritical_hopf_cycles_are_found_round_the_stable_focus_and_repel() {
        // Closed form (common practice): the subcritical normal form r' = μr + r³, θ' = 1 has
        // the repelling cycle r = √(−μ) with period 2π for μ < 0, around the stable focus,
        // and none for μ > 0; its multiplier is exp(2π · d(μr + r³)/dr) = exp(−4πμ) > 1.
        let m = model(
            ["mu*x - y + x*(x^2 + y^2)", "x + mu*y + y*(x^2 + y^2)"],
            &[("mu", -0.1)],
            None,
            [-1.5, 1.5, -1.5, 1.5],
        );
        let opts = SweepOptions {
            cycle_samples: 5,
            ..SweepOptions::new("mu", -1.0, 0.5, 31)
        };
        let s = run(&m, &opts);
        let hopf = of_kind(&s, BifurcationKind::Hopf);
        assert_eq!(hopf.len(), 1, "{:?}", s.bifurcations);
        assert!(hopf[0].value.abs() < 1e-10, "{}", hopf[0].value);
        // Five samples spaced by the square of their index: r = 0.2, 0.4, …, 1.0.
        assert_eq!(s.cycles.len(), 5, "{:?}", s.cycles);
        for c in &s.cycles {
            assert!(c.value < 0.0, "{c:?}");
            let r = (-c.value).sqrt();
            for k in 0..2 {
                assert!((c.max[k] - r).abs() < 1e-7, "{c:?}");
                assert!((c.min[k] + r).abs() < 1e-7, "{c:?}");
            }
            assert!(rel(c.period, std::f64::consts::TAU) < 1e-8, "{c:?}");
            assert!(!c.stable, "{c:?}");
            let expected = (-4.0 * std::f64::consts::PI * c.value).exp();
            assert!(rel(c.multiplier, expected) < 1e-5, "{c:?} vs {expected}");
        }
    }

    #[test]
    fn rosenzweig_macarthur_cycle_is_born_at_k_h_with_zero_amplitude() {
        // Rosenzweig 1971: past the hump, K > K_H = 3 with the built-in defaults, the
        // coexistence equilibrium is an unstable focus surrounded by an attracting cycle that
        // grows from zero amplitude; near a supercritical Hopf point the amplitude grows as
        // √(K − K_H) (common practice), so samples at K_H + δ and K_H + 4δ differ twofold.
        let m = builtin("holling-ii");
        let opts = SweepOptions {
            cycle_samples: 10,
            ..SweepOptions::new("K", 1.0, 5.0, 81)
        };
        let s = run(&m, &opts);
        let k_h = 3.0;
        assert!(!s.cycles.is_empty());
        assert!(s.cycles.iter().all(|c| c.value > k_h && c.stable));
        let amp = |c: &CycleSample| c.max[0] - c.min[0];
        let (c1, c2) = (&s.cycles[0], &s.cycles[1]);
        assert!(rel(c1.value - k_h, 0.02) < 1e-6 && rel(c2.value - k_h, 0.08) < 1e-6);
        let ratio = amp(c1) / amp(c2);
        assert!((ratio - 0.5).abs() < 0.05, "amplitude ratio {ratio}");
        // Amplitude grows along the samples and is small next to the Hopf point.
        assert!(s.cycles.windows(2).all(|w| amp(&w[1]) > amp(&w[0])));
        let last = s.cycles.last().expect("sample");
        assert!(amp(c1) < 0.2 * amp(last));
        // The cycle surrounds the equilibrium x* = 0.5 (Rosenzweig 1971).
        for c in &s.cycles {
            assert!((c.equilibrium[0] - 0.5).abs() < 1e-9);
            assert!(c.min[0] < 0.5 && c.max[0] > 0.5);
        }
    }

    #[test]
    fn s_curve_is_followed_round_both_folds() {
        // Closed form: x' = p + x − x³ has folds where 1 − 3x² = 0, at x = ∓1/√3,
        // p = ±2/(3√3).
        let m = model(
            ["p + x - x^3", "-y"],
            &[("p", 0.0)],
            None,
            [-2.0, 2.0, -1.0, 1.0],
        );
        let s = run(&m, &SweepOptions::new("p", -1.0, 1.0, 41));
        let p_f = 2.0 / (3.0 * 3.0_f64.sqrt());
        let folds = of_kind(&s, BifurcationKind::Fold);
        assert_eq!(folds.len(), 2, "{:?}", s.bifurcations);
        assert!(rel(folds[0].value, -p_f) < 1e-8, "{}", folds[0].value);
        assert!(rel(folds[1].value, p_f) < 1e-8, "{}", folds[1].value);
        // One branch from p = −1 to p = 1 through all three sheets.
        assert_eq!(s.branches.len(), 1);
        let b = &s.branches[0];
        assert_eq!(b.end, BranchEnd::ReachedEnd);
        assert_eq!(b.points.first().map(|p| p.value), Some(-1.0));
        assert_eq!(b.points.last().map(|p| p.value), Some(1.0));
        assert!(
            b.points
                .iter()
                .any(|p| p.x.abs() < 0.3 && p.value.abs() < 0.1)
        );
        // Three equilibria at p = 0 (x = −1, 0, 1), all on that branch.
        let mid = &s.points[20];
        assert_eq!(mid.value, 0.0);
        let xs: Vec<f64> = mid.equilibria.iter().map(|e| e.x).collect();
        assert_eq!(xs.len(), 3, "{xs:?}");
        for (x, want) in xs.iter().zip([-1.0, 0.0, 1.0]) {
            assert!((x - want).abs() < 1e-9);
        }
        // The middle sheet is a saddle (x unstable, y stable).
        assert_eq!(mid.equilibria[1].linear.class, Class::Saddle);
    }

    #[test]
    fn steps_gives_exactly_n_values_with_both_ends() {
        let m = builtin("brusselator");
        for (n, from, to) in [(2, 1.0, 3.0), (7, 3.0, 1.0), (333, 1.0, 3.0)] {
            let s = run(&m, &SweepOptions::new("b", from, to, n));
            assert_eq!(s.points.len(), n);
            assert_eq!(s.points[0].value, from);
            assert_eq!(s.points[n - 1].value, to);
            assert!(
                s.points
                    .windows(2)
                    .all(|w| (w[1].value - w[0].value) * (to - from) > 0.0)
            );
        }
        let err = sweep(&m, &SweepOptions::new("b", 1.0, 3.0, 1), &|| false, &|_| {});
        assert_eq!(err, Err(SweepError::TooFewSteps(1)));
        let err = sweep(
            &m,
            &SweepOptions::new("nope", 1.0, 3.0, 5),
            &|| false,
            &|_| {},
        );
        assert!(matches!(err, Err(SweepError::Model(_))));
        let err = sweep(
            &m,
            &SweepOptions::new("b", 1.0, f64::NAN, 5),
            &|| false,
            &|_| {},
        );
        assert!(matches!(err, Err(SweepError::BadRange { .. })));
    }

    #[test]
    fn cancellation_returns_promptly() {
        let m = builtin("holling-ii");
        let opts = SweepOptions::new("K", 1.0, 20.0, 200_000);
        let t0 = Instant::now();
        let err = sweep(&m, &opts, &|| true, &|_| {});
        assert_eq!(err, Err(SweepError::Cancelled));
        // Cancelled after a few polls, i.e. in the middle of the work.
        let calls = Cell::new(0);
        let err = sweep(
            &m,
            &opts,
            &|| {
                calls.set(calls.get() + 1);
                calls.get() > 3
            },
            &|_| {},
        );
        assert_eq!(err, Err(SweepError::Cancelled));
        assert!(t0.elapsed() < Duration::from_secs(2), "{:?}", t0.elapsed());
        // And during continuation (the grid is done, the branches are not).
        let calls = Cell::new(0);
        let small = SweepOptions::new("K", 1.0, 20.0, 64);
        let err = sweep(
            &m,
            &small,
            &|| {
                calls.set(calls.get() + 1);
                calls.get() > 5
            },
            &|_| {},
        );
        assert_eq!(err, Err(SweepError::Cancelled));
    }

    #[test]
    fn nan_regions_end_branches_without_panicking() {
        // sqrt(p) is NaN for p < 0: the branch x = sqrt(p) only exists from p = 0 on.
        let m = model(
            ["sqrt(p) - x", "-y"],
            &[("p", 1.0)],
            None,
            [-1.0, 2.0, -1.0, 1.0],
        );
        let s = run(&m, &SweepOptions::new("p", -1.0, 1.0, 21));
        assert_eq!(s.points.len(), 21);
        assert!(s.points[..10].iter().all(|p| p.equilibria.is_empty()));
        assert!(s.points[11..].iter().all(|p| p.equilibria.len() == 1));
        assert!(!s.branches.is_empty());
        // Rates NaN everywhere: nothing found, nothing followed.
        let m = model(
            ["ln(-1) + x + p", "y"],
            &[("p", 1.0)],
            None,
            [0.0, 1.0, 0.0, 1.0],
        );
        let s = run(&m, &SweepOptions::new("p", -1.0, 1.0, 11));
        assert!(s.branches.is_empty() && s.bifurcations.is_empty());
        // A rate NaN on part of the window only (ln of a negative number left of x = 1).
        let m = model(
            ["ln(x - 1) + p", "-y"],
            &[("p", 1.0)],
            None,
            [0.0, 10.0, -1.0, 1.0],
        );
        let s = run(&m, &SweepOptions::new("p", -2.0, 2.0, 21));
        assert_eq!(s.points.len(), 21);
        for b in &s.branches {
            for p in &b.points {
                assert!((p.x - (1.0 + (-p.value).exp())).abs() < 1e-9);
            }
        }
    }

    #[test]
    fn stability_map_splits_the_brusselator_plane_at_b_equals_one_plus_a_squared() {
        // Closed form (Strogatz, §8.3): (a, b/a) is stable for b < 1 + a², unstable above.
        let m = builtin("brusselator");
        let map = stability_map(
            &m,
            ("a", 0.5, 1.5, 5),
            ("b", 0.5, 4.0, 8),
            &|| false,
            &|_| {},
        )
        .expect("map");
        assert_eq!(map.values[0].len(), 5);
        assert_eq!(map.values[1].len(), 8);
        assert_eq!(map.cells.len(), 40);
        for (i, &a) in map.values[0].iter().enumerate() {
            for (j, &b) in map.values[1].iter().enumerate() {
                let cell = &map.cells[i * 8 + j];
                // The equilibrium can leave the 4×4 window when b/a > 4.
                if b / a > 3.9 {
                    continue;
                }
                assert_eq!(cell.len(), 1, "a = {a}, b = {b}");
                let stable = matches!(
                    cell[0],
                    Class::StableSpiral | Class::StableNode | Class::StableDegenerateNode
                );
                let margin = b - (1.0 + a * a);
                if margin.abs() > 0.05 {
                    assert_eq!(stable, margin < 0.0, "a = {a}, b = {b}: {:?}", cell[0]);
                }
            }
        }
        let err = stability_map(
            &m,
            ("a", 0.5, 1.5, 5),
            ("a", 0.5, 4.0, 8),
            &|| false,
            &|_| {},
        );
        assert!(matches!(err, Err(SweepError::SameParameter(_))));
        let err = stability_map(
            &m,
            ("a", 0.5, 1.5, 5),
            ("b", 0.5, 4.0, 8),
            &|| true,
            &|_| {},
        );
        assert_eq!(err, Err(SweepError::Cancelled));
    }
}
