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
}
