//! Limit cycles: located as fixed points of the return map on a section, then measured over one
//! period with the variational equation for the Floquet multiplier.
//!
//! A limit cycle is what a predator–prey model does when coexistence is not a steady state, so
//! its period, its range and how strongly it attracts are numbers analysts read off directly.
//! The search takes a line through a start point across the flow there (the section) and
//! follows the first-return map on it: forward in time for attracting cycles, backward in time
//! for repelling ones (which attract in reversed time). Plain iteration brings the iterate
//! close; Newton's method on the one-dimensional map, with its derivative from the variational
//! equation, then converges it. One more period of the state with the fundamental matrix
//! (`y' = F(y)`, `Φ' = J(y)Φ`, a 6-dimensional system) gives the monodromy matrix `M`, whose
//! eigenvalues are 1 (along the flow) and the nontrivial multiplier `m = det M`. By Liouville's
//! formula `det M = exp(∮ div F dt)`, which is computed too as a check.

use rayon::prelude::*;

use crate::analysis::Equilibrium;
use crate::integrate::{
    self, Direction, FnEvent, IntegrationError, Options, Solver, StepResult, System, WindowExit,
};
use crate::linear::Class;
use crate::model::{Model, Window};
use crate::scene::{CycleStability, LimitCycle, Point, Polyline};

/// Default [`CycleOptions::rtol`].
pub const DEFAULT_CYCLE_RTOL: f64 = 1e-11;
/// Default [`CycleOptions::max_iterations`].
pub const DEFAULT_MAX_ITERATIONS: usize = 1000;
/// Default [`CycleOptions::tol`].
pub const DEFAULT_CYCLE_TOL: f64 = 1e-10;
/// Default [`CycleOptions::max_period`] (model time units).
pub const DEFAULT_MAX_PERIOD: f64 = 1000.0;
/// Default [`CycleOptions::escape_margin`].
pub const DEFAULT_ESCAPE_MARGIN: f64 = 1.0;
/// Absolute tolerance of the integrations as a fraction of `rtol` × the window's size.
pub const ATOL_FRACTION: f64 = 1e-3;
/// Newton's method takes over from plain iteration once the iterates contract and the return
/// lands within this fraction of the orbit's extent from its launch point.
pub const NEWTON_SWITCH: f64 = 0.05;
/// Largest Newton step, as a fraction of the orbit's extent.
pub const NEWTON_MAX_STEP: f64 = 0.1;
/// Most evaluations of the variational return map in the Newton phase.
pub const MAX_NEWTON_STEPS: usize = 30;
/// An orbit whose extent falls below this fraction of the window's size is taken to be settling
/// onto an equilibrium.
pub const MIN_EXTENT_FRACTION: f64 = 1e-7;
/// An orbit whose speed falls below this fraction of the fastest speed seen on it (or of the
/// speed at the start, at launch) is taken to have settled onto an equilibrium.
pub const SETTLE_SPEED_FRACTION: f64 = 1e-9;
/// A closed orbit whose multiplier has |ln m| below this is not isolated (a centre's family of
/// closed orbits, as in Lotka–Volterra) and is not reported as a limit cycle.
pub const NEUTRAL_LOG_MULTIPLIER: f64 = 1e-7;
/// Vertices of the drawn cycle are at most this fraction of the window's size apart.
pub const MAX_SEGMENT_FRACTION: f64 = 0.005;
/// Fewest vertices of the drawn cycle.
pub const MIN_CYCLE_POINTS: usize = 64;
/// Most vertices of the drawn cycle.
pub const MAX_CYCLE_POINTS: usize = 20_000;
/// Step limit of one return.
pub const MAX_RETURN_STEPS: usize = 200_000;
/// Step limit of a whole search in one direction of time (all returns together), so that no
/// model can keep the search busy for long.
pub const MAX_SEARCH_STEPS: usize = 2_000_000;
/// [`limit_cycles_near`] starts this fraction of the window's size from each equilibrium.
pub const CANDIDATE_OFFSET: f64 = 1e-3;
/// Two cycles found by [`limit_cycles_near`] are the same when their periods agree to this
/// relative tolerance and their ranges to this fraction of the window's size.
pub const DEDUP_TOL: f64 = 1e-5;

/// Settings for the limit-cycle search.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CycleOptions {
    /// Relative tolerance of every integration. Default [`DEFAULT_CYCLE_RTOL`] (1e-11).
    pub rtol: f64,
    /// Most returns to the section per direction of time. Default [`DEFAULT_MAX_ITERATIONS`].
    pub max_iterations: usize,
    /// The fixed point is accepted when one return moves it by at most `tol` × the cycle's
    /// extent (the diagonal of its bounding box). Default [`DEFAULT_CYCLE_TOL`] (1e-10).
    pub tol: f64,
    /// Longest time allowed for one return, in model time units. Default
    /// [`DEFAULT_MAX_PERIOD`] (1000).
    pub max_period: f64,
    /// The search gives up once an orbit is this many window sizes outside the window. Default
    /// [`DEFAULT_ESCAPE_MARGIN`] (1).
    pub escape_margin: f64,
}

impl Default for CycleOptions {
    fn default() -> Self {
        Self {
            rtol: DEFAULT_CYCLE_RTOL,
            max_iterations: DEFAULT_MAX_ITERATIONS,
            tol: DEFAULT_CYCLE_TOL,
            max_period: DEFAULT_MAX_PERIOD,
            escape_margin: DEFAULT_ESCAPE_MARGIN,
        }
    }
}

/// The direction of time in which a cycle was found.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SearchDirection {
    /// Forward: the cycle attracts.
    Forward,
    /// Backward: the cycle repels (it attracts in reversed time).
    Backward,
}

impl SearchDirection {
    fn sign(self) -> f64 {
        match self {
            Self::Forward => 1.0,
            Self::Backward => -1.0,
        }
    }
}

/// Why one direction of the search found no cycle.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum Miss {
    /// The start or the options are unusable.
    #[error("bad input: {0}")]
    BadInput(&'static str),
    /// The rates are zero or not finite at the start (an equilibrium or outside the model's
    /// domain), so there is no section across the flow.
    #[error("no flow at the start (an equilibrium, or rates not finite)")]
    NoFlow,
    /// The orbit left the window by more than the escape margin.
    #[error("the orbit escaped the window")]
    Escaped,
    /// The orbit settled onto an equilibrium.
    #[error("the orbit settled onto an equilibrium")]
    Settled,
    /// The orbit did not come back to the section within the time allowed.
    #[error("no return to the section within {0} time units")]
    NoReturn(f64),
    /// The integration failed (blow-up, non-finite values, a step too small).
    #[error("integration failed: {0}")]
    Failed(String),
    /// An iterate landed where the flow crosses the section against the start's sense.
    #[error("an iterate left the part of the section crossed in the start's sense")]
    LostSection,
    /// The step budget of one return was spent (or the problem is stiff).
    #[error("step budget spent: {0}")]
    Budget(String),
    /// The iterates did not converge within the iteration limit.
    #[error("no convergence after {0} returns")]
    NotConverged(usize),
    /// The closed orbit found has multiplier 1: a member of a family of closed orbits, not an
    /// isolated limit cycle.
    #[error("the closed orbit is not isolated (multiplier {0})")]
    NotIsolated(f64),
}

/// Why [`find_limit_cycle`] found nothing: the reason in each direction of time.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("no limit cycle: forward, {forward}; backward, {backward}")]
pub struct NoCycle {
    /// Why the forward search failed.
    pub forward: Miss,
    /// Why the backward search failed.
    pub backward: Miss,
}

/// A limit cycle with the details of how it was found.
#[derive(Clone, Debug, PartialEq)]
pub struct CycleReport {
    /// The cycle.
    pub cycle: LimitCycle,
    /// The direction of time it was found in.
    pub direction: SearchDirection,
    /// The converged point on the section (the first vertex of `cycle.line`).
    pub fixed_point: Point,
    /// Returns to the section spent, over both phases.
    pub returns: usize,
    /// The forward-time monodromy matrix at `fixed_point` (eigenvalues 1 and the multiplier).
    pub monodromy: [[f64; 2]; 2],
    /// `exp(∮ div F dt)` over one period, which equals `det M` in exact arithmetic (Liouville).
    pub divergence_multiplier: f64,
}

/// Locates a limit cycle from `start`, forward in time first and then backward; `None` when
/// neither finds one (see [`find_limit_cycle`] for the reason).
pub fn limit_cycle_from(model: &Model, start: [f64; 2], opts: &CycleOptions) -> Option<LimitCycle> {
    find_limit_cycle(model, start, opts).ok().map(|r| r.cycle)
}

/// Locates a limit cycle from `start`, forward in time first and then backward, with the
/// reason for failure in each direction.
pub fn find_limit_cycle(
    model: &Model,
    start: [f64; 2],
    opts: &CycleOptions,
) -> Result<CycleReport, NoCycle> {
    let forward = match search(model, start, SearchDirection::Forward, opts) {
        Ok(r) => return Ok(r),
        Err(m) => m,
    };
    match search(model, start, SearchDirection::Backward, opts) {
        Ok(r) => Ok(r),
        Err(backward) => Err(NoCycle { forward, backward }),
    }
}

/// Limit cycles around the equilibria: from a point just off each unstable spiral or node
/// (searching forward) and each stable spiral (searching backward), de-duplicated.
pub fn limit_cycles_near(
    model: &Model,
    equilibria: &[Equilibrium],
    opts: &CycleOptions,
) -> Vec<LimitCycle> {
    let w = model.window();
    let candidates: Vec<(Point, SearchDirection)> = equilibria
        .iter()
        .filter_map(|e| {
            let dir = match e.class() {
                Class::UnstableSpiral
                | Class::UnstableNode
                | Class::UnstableDegenerateNode
                | Class::UnstableStar => SearchDirection::Forward,
                Class::StableSpiral => SearchDirection::Backward,
                _ => return None,
            };
            // NOTE: off the equilibrium diagonally in window units, so neither axis (often
            // invariant in population models) is chosen.
            let d = CANDIDATE_OFFSET * std::f64::consts::FRAC_1_SQRT_2;
            let p = [e.x + d * w.width(), e.y + d * w.height()];
            (p[0].is_finite() && p[1].is_finite()).then_some((p, dir))
        })
        .collect();
    let found: Vec<LimitCycle> = candidates
        .par_iter()
        .filter_map(|&(p, dir)| search(model, p, dir, opts).ok().map(|r| r.cycle))
        .collect();
    let mut unique: Vec<LimitCycle> = Vec::new();
    let size = w.width().max(w.height());
    for c in found {
        let same = unique.iter().any(|u| {
            let range = (0..2).all(|k| {
                (u.min[k] - c.min[k]).abs() <= DEDUP_TOL * size
                    && (u.max[k] - c.max[k]).abs() <= DEDUP_TOL * size
            });
            range && (u.period - c.period).abs() <= DEDUP_TOL * u.period
        });
        if !same {
            unique.push(c);
        }
    }
    unique
}

/// The state with the fundamental matrix Φ (row-major) appended: `Φ' = J(x, y) Φ`.
struct Variational<'a>(&'a Model);

impl System<6> for Variational<'_> {
    #[inline]
    fn rhs(&self, _t: f64, y: &[f64; 6], dy: &mut [f64; 6]) {
        let (r, j) = self.0.rates_and_jacobian(y[0], y[1]);
        dy[0] = r[0];
        dy[1] = r[1];
        dy[2] = j[0][0] * y[2] + j[0][1] * y[4];
        dy[3] = j[0][0] * y[3] + j[0][1] * y[5];
        dy[4] = j[1][0] * y[2] + j[1][1] * y[4];
        dy[5] = j[1][0] * y[3] + j[1][1] * y[5];
    }
}

/// The state with ∫ div F dt appended.
struct WithDivergence<'a>(&'a Model);

impl System<3> for WithDivergence<'_> {
    #[inline]
    fn rhs(&self, _t: f64, y: &[f64; 3], dy: &mut [f64; 3]) {
        let (r, j) = self.0.rates_and_jacobian(y[0], y[1]);
        dy[0] = r[0];
        dy[1] = r[1];
        dy[2] = j[0][0] + j[1][1];
    }
}

/// The section: the line through `origin` normal to the flow there, parametrised by the signed
/// distance `s` along `tangent`.
#[derive(Clone, Copy, Debug)]
struct Section {
    origin: Point,
    tangent: [f64; 2],
}

impl Section {
    fn point(&self, s: f64) -> Point {
        [
            self.origin[0] + s * self.tangent[0],
            self.origin[1] + s * self.tangent[1],
        ]
    }

    fn coord(&self, p: Point) -> f64 {
        self.tangent[0] * (p[0] - self.origin[0]) + self.tangent[1] * (p[1] - self.origin[1])
    }
}

/// Everything one search needs besides the model.
struct Context<'a> {
    model: &'a Model,
    window: Window,
    options: Options,
    dir: f64,
    max_period: f64,
    escape: WindowExit,
    /// Speed (window units per time) at the start.
    start_speed: f64,
}

/// One return to the section.
struct Return<const N: usize> {
    /// Time of the return (signed, negative backward).
    t: f64,
    /// State at the return.
    y: [f64; N],
    /// Diagonal of the bounding box of the orbit's step points, model units.
    extent: f64,
    /// Attempted steps spent.
    steps: usize,
}

impl Context<'_> {
    fn speed(&self, p: Point) -> f64 {
        let r = self.model.rates(p[0], p[1]);
        (r[0] / self.window.width()).hypot(r[1] / self.window.height())
    }

    /// Integrates `system` from `y0` (whose first two components are on the section at `q`)
    /// until it next crosses the section in the same sense.
    fn first_return<S: System<N>, const N: usize>(
        &self,
        system: S,
        y0: [f64; N],
        normal: [f64; 2],
    ) -> Result<Return<N>, Miss> {
        let q = [y0[0], y0[1]];
        let f = self.model.rates(q[0], q[1]);
        let across = normal[0] * f[0] + normal[1] * f[1];
        // NOTE: a Newton step can land where the flow crosses the section the other way, or on
        // an equilibrium; neither gives a return in the sense of the start.
        if !(across.is_finite() && across > 0.0) {
            return Err(Miss::LostSection);
        }
        if self.speed(q) < SETTLE_SPEED_FRACTION * self.start_speed {
            return Err(Miss::Settled);
        }
        let mut solver = Solver::new(system, self.options, 0.0, y0, self.dir * self.max_period)
            .map_err(|e| Miss::Failed(e.to_string()))?;
        // NOTE: the section is measured from the launch point itself, so the event function
        // is exactly zero at the start (not reported) instead of a rounding residue that could
        // fake an immediate return.
        let section = FnEvent::new(move |_t: f64, y: &[f64; N]| {
            normal[0] * (y[0] - q[0]) + normal[1] * (y[1] - q[1])
        })
        .with_direction(if self.dir > 0.0 {
            Direction::Rising
        } else {
            Direction::Falling
        })
        .terminating();
        solver.add_event(section);
        solver.add_event(self.escape);
        let (mut lo, mut hi) = (q, q);
        let mut max_speed = self.speed(q);
        let mut hit = None;
        loop {
            match solver.step() {
                Ok(StepResult::Accepted { .. }) => {
                    let y = solver.y();
                    for k in 0..2 {
                        lo[k] = lo[k].min(y[k]);
                        hi[k] = hi[k].max(y[k]);
                    }
                    let v = self.speed([y[0], y[1]]);
                    max_speed = max_speed.max(v);
                    if v < SETTLE_SPEED_FRACTION * max_speed {
                        return Err(Miss::Settled);
                    }
                }
                Ok(StepResult::Event(h)) => {
                    if h.index == 0 {
                        hit = Some(h);
                    }
                }
                Ok(StepResult::Finished(integrate::Finish::TerminalEvent { index, .. })) => {
                    if index != 0 {
                        return Err(Miss::Escaped);
                    }
                    break;
                }
                Ok(StepResult::Finished(integrate::Finish::ReachedEnd)) => {
                    return Err(Miss::NoReturn(self.max_period));
                }
                Err(e @ (IntegrationError::MaxSteps { .. } | IntegrationError::Stiff { .. })) => {
                    return Err(Miss::Budget(e.to_string()));
                }
                Err(e) => return Err(Miss::Failed(e.to_string())),
            }
        }
        let Some(h) = hit else {
            return Err(Miss::Failed("section event without a hit".into()));
        };
        let extent = (hi[0] - lo[0]).hypot(hi[1] - lo[1]);
        let stats = solver.stats();
        Ok(Return {
            t: h.t,
            y: h.y,
            extent,
            steps: stats.accepted_steps + stats.rejected_steps,
        })
    }
}

/// The search in one direction of time.
fn search(
    model: &Model,
    start: [f64; 2],
    direction: SearchDirection,
    opts: &CycleOptions,
) -> Result<CycleReport, Miss> {
    if !(start[0].is_finite() && start[1].is_finite()) {
        return Err(Miss::BadInput("the start is not finite"));
    }
    let valid = opts.rtol.is_finite()
        && opts.rtol >= integrate::MIN_RTOL
        && opts.tol.is_finite()
        && opts.tol > 0.0
        && opts.max_period.is_finite()
        && opts.max_period > 0.0
        && opts.escape_margin.is_finite()
        && opts.escape_margin >= 0.0
        && opts.max_iterations > 0;
    if !valid {
        return Err(Miss::BadInput("options out of range"));
    }
    let w = model.window();
    let size = w.width().max(w.height());
    let f0 = model.rates(start[0], start[1]);
    let speed = f0[0].hypot(f0[1]);
    if !(speed.is_finite() && speed > 0.0) {
        return Err(Miss::NoFlow);
    }
    let normal = [f0[0] / speed, f0[1] / speed];
    let section = Section {
        origin: start,
        tangent: [-normal[1], normal[0]],
    };
    let (mx, my) = (
        opts.escape_margin * w.width(),
        opts.escape_margin * w.height(),
    );
    let dir = direction.sign();
    let ctx = Context {
        model,
        window: w,
        options: Options {
            rtol: opts.rtol,
            atol: ATOL_FRACTION * opts.rtol * size,
            max_steps: MAX_RETURN_STEPS,
            ..Options::default()
        },
        dir,
        max_period: opts.max_period,
        escape: WindowExit::new(w.x_min - mx, w.x_max + mx, w.y_min - my, w.y_max + my),
        start_speed: (f0[0] / w.width()).hypot(f0[1] / w.height()),
    };
    let min_extent = MIN_EXTENT_FRACTION * size;

    // Phase 1: plain iteration of the return map until it contracts and is close.
    let mut s = 0.0;
    let mut prev_d: Option<f64> = None;
    let mut returns = 0;
    let mut steps = 0;
    loop {
        if returns >= opts.max_iterations {
            return Err(Miss::NotConverged(returns));
        }
        if steps >= MAX_SEARCH_STEPS {
            return Err(Miss::Budget(format!(
                "{steps} steps over {returns} returns"
            )));
        }
        let r = ctx.first_return(model, section.point(s), normal)?;
        returns += 1;
        steps += r.steps;
        if r.extent < min_extent {
            return Err(Miss::Settled);
        }
        let s_next = section.coord([r.y[0], r.y[1]]);
        let d = s_next - s;
        let contracting = prev_d.is_some_and(|p| p != 0.0 && (0.0..1.0).contains(&(d / p)));
        if d.abs() <= opts.tol * r.extent || (contracting && d.abs() < NEWTON_SWITCH * r.extent) {
            s = s_next;
            break;
        }
        prev_d = Some(d);
        s = s_next;
    }

    // Phase 2: Newton on D(s) = P(s) − s with P'(s) from the variational equation.
    // NOTE: with Φ the fundamental matrix at the return time t and p the return point, a
    // perturbation δ of the launch point moves the return by Φδ + F(p)δt with δt chosen to stay
    // on the section (n·(Φδ + Fδt) = 0), so P'(s) = τ·(Φτ − F (n·Φτ)/(n·F)).
    let tangent = section.tangent;
    let mut best: Option<(f64, f64)> = None; // (|d|, plain iterate from that point)
    let mut newton = 0;
    let (fixed, period, phi, extent) = loop {
        if newton >= MAX_NEWTON_STEPS || returns >= opts.max_iterations {
            return Err(Miss::NotConverged(returns));
        }
        let q = section.point(s);
        let y0 = [q[0], q[1], 1.0, 0.0, 0.0, 1.0];
        if steps >= MAX_SEARCH_STEPS {
            return Err(Miss::Budget(format!(
                "{steps} steps over {returns} returns"
            )));
        }
        let r = ctx.first_return(Variational(model), y0, normal)?;
        returns += 1;
        steps += r.steps;
        newton += 1;
        if r.extent < min_extent {
            return Err(Miss::Settled);
        }
        let p = [r.y[0], r.y[1]];
        let phi = [[r.y[2], r.y[3]], [r.y[4], r.y[5]]];
        let s_next = section.coord(p);
        let d = s_next - s;
        if d.abs() <= opts.tol * r.extent {
            break (q, r.t.abs(), phi, r.extent);
        }
        if let Some((best_d, fallback)) = best
            && d.abs() >= best_d
        {
            // The last Newton step did not help: continue plain iteration from the best point.
            s = fallback;
            best = None;
            continue;
        }
        best = Some((d.abs(), s_next));
        let fp = model.rates(p[0], p[1]);
        let phi_t = [
            phi[0][0] * tangent[0] + phi[0][1] * tangent[1],
            phi[1][0] * tangent[0] + phi[1][1] * tangent[1],
        ];
        let n_f = normal[0] * fp[0] + normal[1] * fp[1];
        let n_phi_t = normal[0] * phi_t[0] + normal[1] * phi_t[1];
        let dp = tangent[0] * (phi_t[0] - fp[0] * n_phi_t / n_f)
            + tangent[1] * (phi_t[1] - fp[1] * n_phi_t / n_f);
        let step = -d / (dp - 1.0);
        // Newton only towards a fixed point that attracts in this direction of time.
        s = if dp.is_finite() && (0.0..1.0).contains(&dp) && step.is_finite() {
            s + step.clamp(-NEWTON_MAX_STEP * r.extent, NEWTON_MAX_STEP * r.extent)
        } else {
            s_next
        };
    };

    // The multiplier in the direction of search is det Φ; in forward time it is its inverse.
    let det = phi[0][0] * phi[1][1] - phi[0][1] * phi[1][0];
    let monodromy = if dir > 0.0 {
        phi
    } else {
        [
            [phi[1][1] / det, -phi[0][1] / det],
            [-phi[1][0] / det, phi[0][0] / det],
        ]
    };
    let multiplier = if dir > 0.0 { det } else { 1.0 / det };
    if !(multiplier.is_finite() && multiplier > 0.0 && period.is_finite() && period > 0.0) {
        return Err(Miss::Failed(format!(
            "multiplier {multiplier} or period {period} not usable"
        )));
    }
    if multiplier.ln().abs() < NEUTRAL_LOG_MULTIPLIER {
        return Err(Miss::NotIsolated(multiplier));
    }
    let (line, min, max, divergence) = one_period(&ctx, fixed, period, extent)?;
    let stability = if multiplier < 1.0 {
        CycleStability::Attracting
    } else {
        CycleStability::Repelling
    };
    Ok(CycleReport {
        cycle: LimitCycle {
            line,
            period,
            multiplier,
            stability,
            min,
            max,
        },
        direction,
        fixed_point: fixed,
        returns,
        monodromy,
        divergence_multiplier: divergence,
    })
}

/// One period from the fixed point in the direction of search: the drawn curve (in forward
/// time order), the extremes (at the located turning points), and exp(∮ div F dt).
fn one_period(
    ctx: &Context<'_>,
    fixed: Point,
    period: f64,
    extent: f64,
) -> Result<(Polyline, Point, Point, f64), Miss> {
    let model = ctx.model;
    let w = ctx.window;
    let mut solver = Solver::new(
        WithDivergence(model),
        ctx.options,
        0.0,
        [fixed[0], fixed[1], 0.0],
        ctx.dir * period,
    )
    .map_err(|e| Miss::Failed(e.to_string()))?;
    solver.add_event(FnEvent::new(|_t: f64, y: &[f64; 3]| {
        model.rates(y[0], y[1])[0]
    }));
    solver.add_event(FnEvent::new(|_t: f64, y: &[f64; 3]| {
        model.rates(y[0], y[1])[1]
    }));
    // NOTE: vertices are spaced by a fraction of the cycle's own size as well as the window's,
    // so a small cycle near a Hopf point is still drawn round.
    let seg = (MAX_SEGMENT_FRACTION * w.width().max(w.height()))
        .min(extent * std::f64::consts::PI / MIN_CYCLE_POINTS as f64);
    let mut points = vec![fixed];
    let (mut lo, mut hi) = (fixed, fixed);
    let see = |p: &[f64; 3], lo: &mut Point, hi: &mut Point| {
        for k in 0..2 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
    };
    let integral = loop {
        match solver.step() {
            Ok(StepResult::Accepted { t_prev, t }) => {
                let y = solver.y();
                see(&y, &mut lo, &mut hi);
                let last = points.last().copied().unwrap_or(fixed);
                let chord = (y[0] - last[0]).hypot(y[1] - last[1]);
                let room = MAX_CYCLE_POINTS.saturating_sub(points.len()).max(1);
                let pieces = ((chord / seg).ceil() as usize).clamp(1, room);
                for k in 1..pieces {
                    let tk = t_prev + (t - t_prev) * (k as f64 / pieces as f64);
                    let yk = solver.interpolate(tk);
                    points.push([yk[0], yk[1]]);
                }
                points.push([y[0], y[1]]);
            }
            Ok(StepResult::Event(h)) => see(&h.y, &mut lo, &mut hi),
            Ok(StepResult::Finished(_)) => break solver.y()[2],
            Err(e) => return Err(Miss::Failed(e.to_string())),
        }
    };
    // The last vertex is the first again (one whole period): the polyline is closed instead.
    if points.len() > 1 {
        points.pop();
    }
    if ctx.dir < 0.0 {
        // Drawn in forward time, still starting at the fixed point.
        points[1..].reverse();
    }
    // NOTE: backward in time the quadrature runs over −T, so ∮ div F dt = dir × the integral.
    let divergence = (ctx.dir * integral).exp();
    Ok((
        Polyline {
            points,
            closed: true,
        },
        lo,
        hi,
        divergence,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyze;

    use std::f64::consts::TAU;
    use std::time::Instant;

    fn builtin(key: &str) -> Model {
        crate::test_support::builtin(key)
    }

    fn custom(rates: [&str; 2], params: &[(&str, f64)], window: [f64; 4]) -> Model {
        crate::test_support::model(rates, params, None, window)
    }

    /// The period in tests/reference/van_der_pol_period.json, parsed by hand.
    fn reference_period() -> f64 {
        let text = include_str!(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../tests/reference/van_der_pol_period.json"
        ));
        let key = "\"period\":";
        let at = text.find(key).expect("a period field") + key.len();
        let rest = &text[at..];
        let end = rest.find([',', '}', '\n']).unwrap_or(rest.len());
        rest[..end].trim().parse().expect("a number")
    }

    #[test]
    fn van_der_pol_cycle_matches_scipy_and_the_published_period() {
        let model = builtin("van-der-pol");
        let t0 = Instant::now();
        let report =
            find_limit_cycle(&model, [0.5, 0.0], &CycleOptions::default()).expect("a cycle");
        let elapsed = t0.elapsed();
        eprintln!("van der Pol: {elapsed:?}, {} returns", report.returns);
        let c = &report.cycle;
        // scipy DOP853 rtol 1e-12 (tests/reference/make_reference.py).
        let reference = reference_period();
        assert!(
            ((c.period - reference) / reference).abs() < 1e-8,
            "period {} vs scipy {reference}",
            c.period
        );
        // Published value for μ = 1 (from memory): T ≈ 6.6632868593.
        assert!((c.period - 6.663_286_859_3).abs() < 1e-8, "{}", c.period);
        // Amplitude for μ = 1 (from memory): max x ≈ 2.0086; the cycle is symmetric under
        // (x, y) → (−x, −y) (closed form), so min x = −max x.
        assert!((c.max[0] - 2.0086).abs() < 1e-4, "max x {}", c.max[0]);
        assert!((c.min[0] + c.max[0]).abs() < 1e-8);
        assert_eq!(report.direction, SearchDirection::Forward);
        assert_eq!(c.stability, CycleStability::Attracting);
        assert!(c.multiplier > 0.0 && c.multiplier < 1.0, "{}", c.multiplier);
        assert!(c.line.closed && c.line.points.len() >= MIN_CYCLE_POINTS);
        assert_eq!(c.line.points[0], report.fixed_point);
    }

    #[test]
    fn the_multiplier_agrees_with_the_divergence_integral_and_the_trace() {
        // Liouville (closed form): det M = exp(∮ div F dt); the monodromy matrix has the
        // eigenvalue 1 along the flow, so trace M = 1 + m.
        let model = builtin("van-der-pol");
        let r = find_limit_cycle(&model, [0.5, 0.0], &CycleOptions::default()).expect("a cycle");
        let m = r.cycle.multiplier;
        assert!(
            ((r.divergence_multiplier - m) / m).abs() < 1e-6,
            "{m} vs {}",
            r.divergence_multiplier
        );
        let tr = r.monodromy[0][0] + r.monodromy[1][1];
        assert!((tr - 1.0 - m).abs() < 1e-6, "trace {tr}, m {m}");
        // Independently of the integration the multiplier is well away from 0 and 1 for μ = 1.
        assert!(m > 1e-4 && m < 0.5, "{m}");
    }

    fn hopf(mu: f64, reversed: bool) -> Model {
        let sign = if reversed { "-" } else { "" };
        custom(
            [
                &format!("{sign}(mu*x - y - x*(x^2 + y^2))"),
                &format!("{sign}(x + mu*y - y*(x^2 + y^2))"),
            ],
            &[("mu", mu)],
            [-2.0, 2.0, -2.0, 2.0],
        )
    }

    #[test]
    fn hopf_normal_form_cycles_have_radius_sqrt_mu_period_tau_and_multiplier_exp_minus_4_pi_mu() {
        // Closed form: in polar coordinates r' = r(μ − r²), θ' = 1, so the cycle is r = √μ with
        // period 2π, and the radial Floquet exponent d(r')/dr at √μ is −2μ: m = exp(−4πμ).
        for mu in [0.25, 1.0] {
            let model = hopf(mu, false);
            let r = find_limit_cycle(&model, [0.3 * mu.sqrt(), 0.0], &CycleOptions::default())
                .expect("a cycle");
            let c = &r.cycle;
            assert_eq!(r.direction, SearchDirection::Forward);
            assert!(
                (c.period - TAU).abs() < 1e-8 * TAU,
                "μ {mu}: period {}",
                c.period
            );
            let expected = (-4.0 * std::f64::consts::PI * mu).exp();
            assert!(
                ((c.multiplier - expected) / expected).abs() < 1e-6,
                "μ {mu}: {}",
                c.multiplier
            );
            assert!(((r.divergence_multiplier - expected) / expected).abs() < 1e-6);
            assert_eq!(c.stability, CycleStability::Attracting);
            for p in &c.line.points {
                assert!((p[0].hypot(p[1]) - mu.sqrt()).abs() < 1e-8, "μ {mu}: {p:?}");
            }
            assert!((c.max[0] - mu.sqrt()).abs() < 1e-8 && (c.min[1] + mu.sqrt()).abs() < 1e-8);
        }
    }

    #[test]
    fn the_time_reversed_hopf_cycle_is_found_backward_and_repels() {
        // Closed form: reversing time keeps the circle r = √μ and inverts the multiplier.
        for mu in [0.25, 1.0] {
            let model = hopf(mu, true);
            let r = find_limit_cycle(&model, [0.3 * mu.sqrt(), 0.0], &CycleOptions::default())
                .expect("a cycle");
            let c = &r.cycle;
            assert_eq!(r.direction, SearchDirection::Backward);
            assert_eq!(c.stability, CycleStability::Repelling);
            assert!((c.period - TAU).abs() < 1e-8 * TAU, "{}", c.period);
            let expected = (4.0 * std::f64::consts::PI * mu).exp();
            assert!(
                ((c.multiplier - expected) / expected).abs() < 1e-6,
                "μ {mu}: {}",
                c.multiplier
            );
            for p in &c.line.points {
                assert!((p[0].hypot(p[1]) - mu.sqrt()).abs() < 1e-8);
            }
            // Drawn in forward time: the reversed system turns clockwise (θ' = −1).
            let [p0, p1] = [c.line.points[0], c.line.points[1]];
            assert!(p0[0] * p1[1] - p0[1] * p1[0] < 0.0);
        }
    }

    #[test]
    fn a_damped_spiral_has_no_cycle_and_the_answer_is_quick() {
        let model = builtin("logistic-prey");
        let t0 = Instant::now();
        let result = find_limit_cycle(&model, [25.0, 8.0], &CycleOptions::default());
        let elapsed = t0.elapsed();
        let err = result.expect_err("no cycle");
        assert!(elapsed.as_secs_f64() < 2.0, "{elapsed:?}");
        // Forward it settles (or stops returning); backward it spirals out of the window.
        assert!(
            matches!(err.forward, Miss::Settled | Miss::NoReturn(_)),
            "{err}"
        );
        assert!(
            matches!(err.backward, Miss::Escaped | Miss::Failed(_)),
            "{err}"
        );
    }

    #[test]
    fn models_without_cycles_return_none_without_hanging() {
        let opts = CycleOptions::default();
        let cases: Vec<(Model, Point)> = vec![
            // Finite-time blow-up forward, slow drift backward.
            (
                custom(["x^2", "1"], &[], [-5.0, 5.0, -5.0, 5.0]),
                [1.0, 0.0],
            ),
            // Rates undefined (NaN) at the start.
            (
                custom(["ln(x)", "y"], &[], [-5.0, 5.0, -5.0, 5.0]),
                [-1.0, 0.0],
            ),
            // An equilibrium as the start.
            (
                custom(["y", "-x - y"], &[], [-5.0, 5.0, -5.0, 5.0]),
                [0.0, 0.0],
            ),
            // Undefined beyond x = 0: the orbit runs into the edge of the domain.
            (
                custom(["-sqrt(x)", "-y"], &[], [-5.0, 5.0, -5.0, 5.0]),
                [2.0, 1.0],
            ),
        ];
        for (model, start) in &cases {
            let t0 = Instant::now();
            assert!(limit_cycle_from(model, *start, &opts).is_none());
            assert!(t0.elapsed().as_secs_f64() < 2.0, "{:?}", model.spec().rates);
        }
        let nan_start = limit_cycle_from(&cases[0].0, [f64::NAN, 0.0], &opts);
        assert!(nan_start.is_none());
    }

    #[test]
    fn closed_orbits_of_a_centre_are_not_limit_cycles() {
        // Closed form: Lotka–Volterra's closed orbits form a family (multiplier exactly 1).
        let model = builtin("lotka-volterra");
        let err = find_limit_cycle(&model, [25.0, 10.0], &CycleOptions::default())
            .expect_err("not isolated");
        assert!(matches!(err.forward, Miss::NotIsolated(_)), "{err}");
    }

    #[test]
    fn cycles_near_equilibria_are_found_once_each() {
        // Holling II with the defaults (K = 8 well above the Hopf value): the interior
        // equilibrium is an unstable spiral inside one attracting cycle (common practice for
        // the paradox of enrichment). Van der Pol: an unstable origin inside its cycle.
        let model = builtin("holling-ii");
        let analysis = analyze(&model);
        let interior = analysis
            .equilibria
            .iter()
            .find(|e| e.x > 0.1 && e.y > 0.1)
            .expect("interior equilibrium");
        assert_eq!(interior.class(), Class::UnstableSpiral);
        let cycles = limit_cycles_near(&model, &analysis.equilibria, &CycleOptions::default());
        assert_eq!(cycles.len(), 1, "{cycles:?}");
        let c = &cycles[0];
        assert_eq!(c.stability, CycleStability::Attracting);
        assert!(c.min[0] < interior.x && c.max[0] > interior.x);
        // The same cycle from a start far outside it.
        let from_outside =
            limit_cycle_from(&model, [7.0, 0.5], &CycleOptions::default()).expect("a cycle");
        assert!((from_outside.period - c.period).abs() < 1e-7 * c.period);

        let vdp = builtin("van-der-pol");
        let a = analyze(&vdp);
        let doubled = [a.equilibria.clone(), a.equilibria.clone()].concat();
        let cycles = limit_cycles_near(&vdp, &doubled, &CycleOptions::default());
        assert_eq!(cycles.len(), 1);
        assert!(((cycles[0].period - reference_period()) / reference_period()).abs() < 1e-8);
    }
}
