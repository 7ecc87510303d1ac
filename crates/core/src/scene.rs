//! Everything a view of the phase plane draws, as plain data.
//!
//! The desktop app, `quarry render` and the reports all draw from one [`Scene`], so the
//! picture is the same wherever it is shown. Coordinates are in the model's own units (plot
//! space); converting to pixels is the renderer's business.

use crate::analysis::Equilibrium;
use crate::model::Window;

/// A point in plot space: (first variable, second variable).
pub type Point = [f64; 2];

/// A connected curve in plot space.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Polyline {
    /// Vertices in order.
    pub points: Vec<Point>,
    /// Whether the last vertex joins the first.
    pub closed: bool,
}

/// One sample of the direction field.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FieldSample {
    /// Where the sample is.
    pub at: Point,
    /// The rates (dx/dt, dy/dt) there; NaN where the model is undefined.
    pub rate: [f64; 2],
    /// |rate| (NaN where undefined).
    pub speed: f64,
}

/// The direction field on a regular grid over the window.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct DirectionField {
    /// Samples across.
    pub nx: usize,
    /// Samples up.
    pub ny: usize,
    /// Row-major from the bottom-left: `samples[j * nx + i]`.
    pub samples: Vec<FieldSample>,
    /// The largest finite speed, for scaling arrows or colours.
    pub max_speed: f64,
}

/// The zero set of one rate.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Nullcline {
    /// 0 for dx/dt = 0, 1 for dy/dt = 0.
    pub variable: usize,
    /// The curves.
    pub lines: Vec<Polyline>,
}

/// Level curves of the first integral at one level.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Contour {
    /// The value of H on these curves.
    pub level: f64,
    /// The curves.
    pub lines: Vec<Polyline>,
}

/// Which invariant manifold of a saddle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ManifoldKind {
    /// Orbits on it approach the saddle.
    Stable,
    /// Orbits on it leave the saddle.
    Unstable,
}

/// Why a separatrix branch ends.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BranchEnd {
    /// It left the window (with a margin).
    LeftWindow,
    /// It settled at an equilibrium or slowed to a stop.
    Settled,
    /// The time or step budget ran out (e.g. it winds onto a limit cycle).
    Budget,
    /// The integration failed (blow-up, non-finite).
    Failed,
}

/// One branch of a saddle's stable or unstable manifold.
#[derive(Clone, Debug, PartialEq)]
pub struct Separatrix {
    /// The saddle it belongs to.
    pub saddle: Point,
    /// Stable or unstable.
    pub kind: ManifoldKind,
    /// The curve, ordered from the saddle outward.
    pub line: Polyline,
    /// Why it ends.
    pub end: BranchEnd,
}

/// Measurements of one orbit, as a view shows them.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct OrbitSummary {
    /// Whether it returned to its start.
    pub closed: bool,
    /// Period, when closed.
    pub period: Option<f64>,
    /// Smallest value of each variable.
    pub min: Point,
    /// Largest value of each variable.
    pub max: Point,
    /// Time average (over whole periods when closed).
    pub mean: Point,
    /// Lag of the second variable's peak behind the first's, as a fraction of the period.
    pub lag_fraction: Option<f64>,
    /// Half the peak-to-peak range of each variable.
    pub amplitude: Point,
}

/// An orbit in the scene.
#[derive(Clone, Debug, PartialEq)]
pub struct SceneOrbit {
    /// Where it was started.
    pub seed: Point,
    /// Times of `points` (dense output resampled for drawing); may run backward.
    pub times: Vec<f64>,
    /// The curve.
    pub points: Vec<Point>,
    /// Its measurements.
    pub summary: OrbitSummary,
}

/// Stability of a limit cycle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CycleStability {
    /// Nearby orbits wind onto it.
    Attracting,
    /// Nearby orbits wind away from it.
    Repelling,
}

/// A limit cycle located by the return map.
#[derive(Clone, Debug, PartialEq)]
pub struct LimitCycle {
    /// One period of the cycle.
    pub line: Polyline,
    /// Its period.
    pub period: f64,
    /// The nontrivial Floquet multiplier (|m| < 1 attracting).
    pub multiplier: f64,
    /// Attracting or repelling.
    pub stability: CycleStability,
    /// Smallest value of each variable on the cycle.
    pub min: Point,
    /// Largest value of each variable on the cycle.
    pub max: Point,
}

/// Everything a view of the phase plane draws.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Scene {
    /// Title (the model's or scenario's name).
    pub title: String,
    /// Names of the two variables (axis labels).
    pub variables: [String; 2],
    /// The window drawn.
    pub window: Window,
    /// The direction field, if asked for.
    pub field: Option<DirectionField>,
    /// Evenly spaced streamlines, if asked for.
    pub streamlines: Vec<Polyline>,
    /// The two nullclines (index 0: dx/dt = 0, 1: dy/dt = 0).
    pub nullclines: Vec<Nullcline>,
    /// Equilibria with class and verdict.
    pub equilibria: Vec<Equilibrium>,
    /// Separatrices of every saddle.
    pub separatrices: Vec<Separatrix>,
    /// Orbits from the seed points.
    pub orbits: Vec<SceneOrbit>,
    /// Level curves of the first integral.
    pub contours: Vec<Contour>,
    /// Limit cycles found.
    pub limit_cycles: Vec<LimitCycle>,
    /// For each orbit (same order), the linearised solution about the nearest non-saddle
    /// equilibrium from the same start, when asked for.
    pub linear_overlays: Vec<Option<crate::linearised::LinearOverlay>>,
}

/// Which way in time an orbit runs from its seed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum TimeDirection {
    /// Forward from the seed.
    #[default]
    Forward,
    /// Backward from the seed.
    Backward,
    /// Both: one orbit backward and one forward, joined at the seed.
    Both,
}

/// A starting state for an orbit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Seed {
    /// Where it starts.
    pub at: Point,
    /// Which way in time.
    pub direction: TimeDirection,
}

/// Which first-integral levels to draw.
#[derive(Clone, Debug, PartialEq)]
pub enum ContourLevels {
    /// This many levels chosen to show the closed curves well.
    Count(usize),
    /// These levels.
    Levels(Vec<f64>),
    /// The levels through these points.
    Through(Vec<Point>),
}

/// What to compute for a [`Scene`].
#[derive(Clone, Debug, PartialEq)]
pub struct SceneRequest {
    /// Direction-field grid (samples across, up), or `None` for no field.
    pub field: Option<(usize, usize)>,
    /// Evenly spaced streamlines.
    pub streamlines: bool,
    /// Nullcline grid per side, or `None` for no nullclines.
    pub nullcline_grid: Option<usize>,
    /// First-integral contours (drawn only for models with one), or `None`.
    pub contours: Option<ContourLevels>,
    /// Grid per side for the contours.
    pub contour_grid: usize,
    /// Separatrices of every saddle.
    pub separatrices: bool,
    /// Look for limit cycles near the equilibria.
    pub limit_cycles: bool,
    /// Orbit seeds.
    pub seeds: Vec<Seed>,
    /// How long each orbit runs (in each direction).
    pub orbit_time: f64,
    /// Relative tolerance for orbits.
    pub orbit_rtol: f64,
    /// Points drawn per integration step (dense output), at least 1.
    pub points_per_step: usize,
    /// Also compute the linearised solution from each seed about the nearest equilibrium
    /// that is not a saddle, to show where the linear picture stops holding.
    pub linear_overlays: bool,
}

impl Default for SceneRequest {
    fn default() -> Self {
        Self {
            field: Some((24, 24)),
            streamlines: false,
            nullcline_grid: Some(256),
            contours: Some(ContourLevels::Count(10)),
            contour_grid: 256,
            separatrices: true,
            limit_cycles: true,
            seeds: Vec::new(),
            orbit_time: 30.0,
            orbit_rtol: 1e-9,
            points_per_step: 8,
            linear_overlays: false,
        }
    }
}

/// A shared flag that tells a scene computation to give up: a newer request has arrived.
#[derive(Clone, Debug, Default)]
pub struct Cancel(std::sync::Arc<std::sync::atomic::AtomicBool>);

impl Cancel {
    /// A fresh, not-cancelled flag.
    pub fn new() -> Self {
        Self::default()
    }

    /// Asks every computation holding this flag to stop.
    pub fn cancel(&self) {
        self.0.store(true, std::sync::atomic::Ordering::Relaxed);
    }

    /// Whether [`Cancel::cancel`] was called.
    pub fn is_cancelled(&self) -> bool {
        self.0.load(std::sync::atomic::Ordering::Relaxed)
    }
}

/// The scene computation was cancelled before it finished.
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[error("the scene was cancelled by a newer request")]
pub struct Cancelled;

/// Computes everything a view draws, in parallel where it pays. Returns [`Cancelled`] as soon
/// as `cancel` is set (a stale scene is never finished, let alone drawn).
pub fn build_scene(
    model: &crate::model::Model,
    request: &SceneRequest,
    cancel: &Cancel,
) -> Result<Scene, Cancelled> {
    let check = || {
        if cancel.is_cancelled() {
            Err(Cancelled)
        } else {
            Ok(())
        }
    };
    check()?;
    let [xn, yn] = model.variables();
    let mut scene = Scene {
        title: model.spec().name.clone(),
        variables: [xn.to_owned(), yn.to_owned()],
        window: model.window(),
        ..Scene::default()
    };

    // Three independent strands: the plane's geometry, the equilibria and what hangs off them,
    // and the orbits.
    let (geometry, (dynamics, orbits)) = rayon::join(
        || -> Result<_, Cancelled> {
            check()?;
            let field = request
                .field
                .map(|(nx, ny)| crate::field::direction_field(model, nx, ny));
            check()?;
            let nullclines = request
                .nullcline_grid
                .map(|n| crate::nullcline::nullclines(model, n))
                .unwrap_or_default();
            check()?;
            // Only a first integral that is really conserved gets drawn as level curves.
            let conserved = crate::verdict::check_invariant(model).is_some_and(|c| c.verified);
            let contours = match (&request.contours, conserved) {
                (Some(ContourLevels::Count(k)), true) => {
                    crate::contour::default_contours(model, *k, request.contour_grid)
                }
                (Some(ContourLevels::Levels(levels)), true) => {
                    crate::contour::contours(model, levels, request.contour_grid)
                }
                (Some(ContourLevels::Through(points)), true) => {
                    let levels: Vec<f64> = points
                        .iter()
                        .filter_map(|p| crate::contour::level_through(model, *p))
                        .collect();
                    crate::contour::contours(model, &levels, request.contour_grid)
                }
                _ => Vec::new(),
            };
            check()?;
            let streamlines = if request.streamlines {
                crate::streamlines::streamlines(
                    model,
                    &crate::streamlines::StreamlineOptions::default(),
                    &|| cancel.is_cancelled(),
                )
            } else {
                Vec::new()
            };
            check()?;
            Ok((field, nullclines, contours, streamlines))
        },
        || {
            rayon::join(
                || -> Result<_, Cancelled> {
                    check()?;
                    let analysis = crate::analysis::analyze(model);
                    check()?;
                    let separatrices = if request.separatrices {
                        crate::separatrix::separatrices(
                            model,
                            &analysis.equilibria,
                            &crate::separatrix::SeparatrixOptions::default(),
                        )
                    } else {
                        Vec::new()
                    };
                    check()?;
                    let cycles = if request.limit_cycles {
                        crate::cycle::limit_cycles_near(
                            model,
                            &analysis.equilibria,
                            &crate::cycle::CycleOptions::default(),
                        )
                    } else {
                        Vec::new()
                    };
                    Ok((analysis.equilibria, separatrices, cycles))
                },
                || -> Result<Vec<SceneOrbit>, Cancelled> {
                    use rayon::prelude::*;
                    request
                        .seeds
                        .par_iter()
                        .filter_map(|seed| {
                            if cancel.is_cancelled() {
                                return Some(Err(Cancelled));
                            }
                            scene_orbit(model, seed, request).map(Ok)
                        })
                        .collect()
                },
            )
        },
    );
    let (field, nullclines, contours, streamlines) = geometry?;
    let (equilibria, separatrices, limit_cycles) = dynamics?;
    scene.field = field;
    scene.nullclines = nullclines;
    scene.contours = contours;
    scene.streamlines = streamlines;
    scene.equilibria = equilibria;
    scene.separatrices = separatrices;
    scene.limit_cycles = limit_cycles;
    scene.orbits = orbits?;
    if request.linear_overlays {
        scene.linear_overlays = request
            .seeds
            .iter()
            .map(|seed| {
                let centre = scene
                    .equilibria
                    .iter()
                    .filter(|e| e.class() != crate::linear::Class::Saddle)
                    .min_by(|a, b| {
                        let d = |e: &Equilibrium| (e.x - seed.at[0]).hypot(e.y - seed.at[1]);
                        d(a).total_cmp(&d(b))
                    })?;
                Some(crate::linearised::linear_overlay(
                    model,
                    centre,
                    seed.at,
                    request.orbit_time,
                    512,
                ))
            })
            .collect();
    }
    check()?;
    Ok(scene)
}

/// One orbit for drawing: integrated, measured and resampled from the dense output. `None`
/// when the seed is unusable (non-finite).
pub fn scene_orbit(
    model: &crate::model::Model,
    seed: &Seed,
    request: &SceneRequest,
) -> Option<SceneOrbit> {
    use crate::orbit::{OrbitOptions, run_orbit};
    let opts = |t_end: f64| OrbitOptions {
        t_end,
        rtol: request.orbit_rtol,
        ..OrbitOptions::default()
    };
    let t = request.orbit_time.abs().max(f64::MIN_POSITIVE);
    let forward = match seed.direction {
        TimeDirection::Forward | TimeDirection::Both => run_orbit(model, seed.at, &opts(t)).ok(),
        TimeDirection::Backward => None,
    };
    let backward = match seed.direction {
        TimeDirection::Backward | TimeDirection::Both => run_orbit(model, seed.at, &opts(-t)).ok(),
        TimeDirection::Forward => None,
    };
    let per_step = request.points_per_step.max(1);
    let mut times = Vec::new();
    let mut points = Vec::new();
    if let Some(b) = &backward {
        let (ts, ps) = dense_points(&b.trajectory, per_step);
        // Backward part reversed so the whole curve runs forward in time.
        times.extend(ts.into_iter().rev());
        points.extend(ps.into_iter().rev());
    }
    if let Some(f) = &forward {
        let (ts, ps) = dense_points(&f.trajectory, per_step);
        let skip = usize::from(!times.is_empty());
        times.extend(ts.into_iter().skip(skip));
        points.extend(ps.into_iter().skip(skip));
    }
    // Measurements come from the forward run when there is one.
    let report = forward.as_ref().or(backward.as_ref())?;
    let summary = OrbitSummary {
        closed: report.closed,
        period: report.period,
        min: report.min,
        max: report.max,
        mean: report.mean,
        lag_fraction: report.lag_fraction,
        amplitude: [
            0.5 * (report.max[0] - report.min[0]),
            0.5 * (report.max[1] - report.min[1]),
        ],
    };
    Some(SceneOrbit {
        seed: seed.at,
        times,
        points,
        summary,
    })
}

/// Points along a trajectory: every step's dense output sampled `per_step` times.
fn dense_points<const N: usize>(
    traj: &crate::integrate::Trajectory<N>,
    per_step: usize,
) -> (Vec<f64>, Vec<Point>) {
    let steps = traj.interpolants();
    let mut ts = Vec::with_capacity(steps.len() * per_step + 1);
    let mut ps = Vec::with_capacity(steps.len() * per_step + 1);
    let t0 = traj.t_start();
    let y0 = traj.ys().first().copied();
    if let Some(y) = y0 {
        ts.push(t0);
        ps.push([y[0], y[1]]);
    }
    for d in steps {
        let (a, b) = (d.t_start(), d.t_end());
        for k in 1..=per_step {
            let t = a + (b - a) * k as f64 / per_step as f64;
            let y = d.eval(t);
            ts.push(t);
            ps.push([y[0], y[1]]);
        }
    }
    (ts, ps)
}
