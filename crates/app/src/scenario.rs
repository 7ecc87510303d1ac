//! The scenario: everything a user has set up (model, parameter sliders, orbit seeds, layers).
//!
//! This is the state that undo/redo snapshots and that a saved session would hold. Scenes,
//! the compiled model and everything else rebuilt from it live elsewhere, as caches.

use quarry_core::model::ModelSpec;
use quarry_core::scene::{ContourLevels, SceneRequest, Seed, TimeDirection};

/// Direction-field samples across and up.
pub const FIELD_GRID: (usize, usize) = (25, 21);
/// Grid per side for nullclines and first-integral contours.
pub const CURVE_GRID: usize = 256;
/// How many first-integral levels to draw.
pub const CONTOUR_COUNT: usize = 10;
/// Default run time of an orbit, in each direction (model time units).
pub const DEFAULT_ORBIT_TIME: f64 = 30.0;

/// How one parameter's slider behaves.
#[derive(Clone, Debug, PartialEq)]
pub struct ParamSetting {
    /// The value "reset" goes back to: the value when the parameter first appeared.
    pub default: f64,
    /// The slider's range, when set by the user; otherwise 0..2×default.
    pub range: Option<(f64, f64)>,
    /// Whether the slider moves on a logarithmic scale.
    pub logarithmic: bool,
}

impl ParamSetting {
    /// A setting whose default is `value`.
    pub fn new(value: f64) -> Self {
        Self {
            default: value,
            range: None,
            logarithmic: false,
        }
    }

    /// The slider's range: the user's when valid, else 0..2×default (or −1..1 for a zero
    /// default, 2×default..0 for a negative one).
    pub fn slider_range(&self) -> (f64, f64) {
        if let Some((lo, hi)) = self.range
            && lo.is_finite()
            && hi.is_finite()
            && lo < hi
        {
            return (lo, hi);
        }
        let d = self.default;
        if d > 0.0 {
            (0.0, 2.0 * d)
        } else if d < 0.0 {
            (2.0 * d, 0.0)
        } else {
            (-1.0, 1.0)
        }
    }
}

/// A starting state the user clicked, and how its orbit is shown.
#[derive(Clone, Debug, PartialEq)]
pub struct OrbitSeed {
    /// Stable identity (also picks the colour), unique within a scenario.
    pub id: u64,
    /// The starting state, in plot space.
    pub at: [f64; 2],
    /// Which way in time the orbit runs.
    pub direction: TimeDirection,
    /// Whether the orbit is drawn.
    pub visible: bool,
}

/// Which layers of the plane are drawn.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Layers {
    /// Arrows of the direction field.
    pub show_field: bool,
    /// Evenly spaced streamlines.
    pub show_streamlines: bool,
    /// dx/dt = 0 and dy/dt = 0.
    pub show_nullclines: bool,
    /// Equilibrium markers.
    pub show_equilibria: bool,
    /// Stable and unstable manifolds of saddles.
    pub show_separatrices: bool,
    /// Limit cycles found near the equilibria.
    pub show_limit_cycles: bool,
    /// The user's orbits.
    pub show_orbits: bool,
    /// Level curves of the first integral (models that have one).
    pub show_contours: bool,
}

impl Default for Layers {
    fn default() -> Self {
        Self {
            show_field: true,
            show_streamlines: false,
            show_nullclines: true,
            show_equilibria: true,
            show_separatrices: true,
            show_limit_cycles: true,
            show_orbits: true,
            show_contours: true,
        }
    }
}

/// One layer, for commands that toggle it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Layer {
    /// [`Layers::show_field`].
    Field,
    /// [`Layers::show_streamlines`].
    Streamlines,
    /// [`Layers::show_nullclines`].
    Nullclines,
    /// [`Layers::show_equilibria`].
    Equilibria,
    /// [`Layers::show_separatrices`].
    Separatrices,
    /// [`Layers::show_limit_cycles`].
    LimitCycles,
    /// [`Layers::show_orbits`].
    Orbits,
    /// [`Layers::show_contours`].
    Contours,
}

impl Layer {
    /// Every layer, in the order the layer list shows them.
    pub const ALL: [Layer; 8] = [
        Layer::Field,
        Layer::Streamlines,
        Layer::Nullclines,
        Layer::Equilibria,
        Layer::Separatrices,
        Layer::LimitCycles,
        Layer::Orbits,
        Layer::Contours,
    ];

    /// The checkbox label.
    pub fn label(self) -> &'static str {
        match self {
            Layer::Field => "Direction field",
            Layer::Streamlines => "Streamlines",
            Layer::Nullclines => "Nullclines",
            Layer::Equilibria => "Equilibria",
            Layer::Separatrices => "Separatrices",
            Layer::LimitCycles => "Limit cycles",
            Layer::Orbits => "Orbits",
            Layer::Contours => "First-integral contours",
        }
    }
}

impl Layers {
    /// Whether a layer is on.
    pub fn is_on(&self, layer: Layer) -> bool {
        match layer {
            Layer::Field => self.show_field,
            Layer::Streamlines => self.show_streamlines,
            Layer::Nullclines => self.show_nullclines,
            Layer::Equilibria => self.show_equilibria,
            Layer::Separatrices => self.show_separatrices,
            Layer::LimitCycles => self.show_limit_cycles,
            Layer::Orbits => self.show_orbits,
            Layer::Contours => self.show_contours,
        }
    }

    /// Turns a layer on or off.
    pub fn set(&mut self, layer: Layer, on: bool) {
        let flag = match layer {
            Layer::Field => &mut self.show_field,
            Layer::Streamlines => &mut self.show_streamlines,
            Layer::Nullclines => &mut self.show_nullclines,
            Layer::Equilibria => &mut self.show_equilibria,
            Layer::Separatrices => &mut self.show_separatrices,
            Layer::LimitCycles => &mut self.show_limit_cycles,
            Layer::Orbits => &mut self.show_orbits,
            Layer::Contours => &mut self.show_contours,
        };
        *flag = on;
    }
}

/// Everything the user has set up.
#[derive(Clone, Debug, PartialEq)]
pub struct Scenario {
    /// The model, always one that compiles, with the current parameter values.
    pub spec: ModelSpec,
    /// One slider setting per parameter, in the order of `spec.parameters`.
    pub params: Vec<ParamSetting>,
    /// The orbits' starting states, oldest first.
    pub seeds: Vec<OrbitSeed>,
    /// Which layers are drawn.
    pub layers: Layers,
    /// Which way new orbits run.
    pub new_orbit_direction: TimeDirection,
    /// How long each orbit runs in each direction (model time units).
    pub orbit_time: f64,
    /// The id the next seed gets.
    pub next_seed_id: u64,
}

impl Scenario {
    /// A fresh scenario on a model (which the caller has checked compiles).
    pub fn new(spec: ModelSpec) -> Self {
        let params = spec
            .parameters
            .iter()
            .map(|p| ParamSetting::new(p.value))
            .collect();
        Self {
            spec,
            params,
            seeds: Vec::new(),
            layers: Layers::default(),
            new_orbit_direction: TimeDirection::Forward,
            orbit_time: DEFAULT_ORBIT_TIME,
            next_seed_id: 1,
        }
    }

    /// Replaces the model, keeping the slider settings of parameters whose names stay.
    pub fn replace_model(&mut self, spec: ModelSpec) {
        let params = spec
            .parameters
            .iter()
            .map(|p| {
                self.spec
                    .parameters
                    .iter()
                    .position(|q| q.name == p.name)
                    .and_then(|i| self.params.get(i).cloned())
                    .unwrap_or_else(|| ParamSetting::new(p.value))
            })
            .collect();
        self.spec = spec;
        self.params = params;
    }

    /// Adds an orbit seed with the current direction setting; returns its id.
    pub fn add_seed(&mut self, at: [f64; 2]) -> u64 {
        let id = self.next_seed_id;
        self.next_seed_id += 1;
        self.seeds.push(OrbitSeed {
            id,
            at,
            direction: self.new_orbit_direction,
            visible: true,
        });
        id
    }

    /// What the scene worker should compute for this scenario.
    pub fn scene_request(&self) -> SceneRequest {
        let l = &self.layers;
        SceneRequest {
            field: l.show_field.then_some(FIELD_GRID),
            streamlines: l.show_streamlines,
            nullcline_grid: l.show_nullclines.then_some(CURVE_GRID),
            contours: l
                .show_contours
                .then_some(ContourLevels::Count(CONTOUR_COUNT)),
            contour_grid: CURVE_GRID,
            separatrices: l.show_separatrices,
            limit_cycles: l.show_limit_cycles,
            seeds: self
                .seeds
                .iter()
                .map(|s| Seed {
                    at: s.at,
                    direction: s.direction,
                })
                .collect(),
            orbit_time: self.orbit_time,
            ..SceneRequest::default()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slider_range_defaults_to_twice_the_default() {
        assert_eq!(ParamSetting::new(1.5).slider_range(), (0.0, 3.0));
        assert_eq!(ParamSetting::new(-2.0).slider_range(), (-4.0, 0.0));
        assert_eq!(ParamSetting::new(0.0).slider_range(), (-1.0, 1.0));
    }

    #[test]
    fn a_bad_user_range_falls_back_to_the_default_range() {
        let mut s = ParamSetting::new(1.0);
        s.range = Some((3.0, 1.0));
        assert_eq!(s.slider_range(), (0.0, 2.0));
        s.range = Some((f64::NAN, 1.0));
        assert_eq!(s.slider_range(), (0.0, 2.0));
        s.range = Some((0.5, 4.0));
        assert_eq!(s.slider_range(), (0.5, 4.0));
    }

    #[test]
    fn replacing_the_model_keeps_settings_of_kept_names() {
        let mut sc = Scenario::new(quarry_core::library::default_model());
        sc.params[0].logarithmic = true;
        let mut spec = sc.spec.clone();
        spec.parameters[1].name = "beta".into();
        sc.replace_model(spec);
        assert!(sc.params[0].logarithmic);
        assert_eq!(sc.params[1], ParamSetting::new(0.1));
    }
}
