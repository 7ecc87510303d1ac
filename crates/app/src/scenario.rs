//! The scenario: everything a user has set up (model, parameter sliders, orbit seeds, layers).
//!
//! This is the state that undo/redo snapshots and that a saved session would hold. Scenes,
//! the compiled model and everything else rebuilt from it live elsewhere, as caches.

use quarry_core::harvest::Harvest;
use quarry_core::model::{Model, ModelSpec};
use quarry_core::scenario::{
    self as file, Direction, ParameterDef, Playback, SCENARIO_VERSION, Scenario as ScenarioFile,
    ScenarioError, Variable,
};
use quarry_core::scene::{ContourLevels, SceneRequest, Seed, TimeDirection};

/// Direction-field samples across and up.
pub const FIELD_GRID: (usize, usize) = (25, 21);
/// Grid per side for nullclines and first-integral contours.
pub const CURVE_GRID: usize = 256;
/// How many first-integral levels to draw.
pub const CONTOUR_COUNT: usize = 10;
/// Default run time of an orbit, in each direction (model time units).
pub const DEFAULT_ORBIT_TIME: f64 = file::DEFAULT_ORBIT_TIME;

/// How one parameter's slider behaves.
#[derive(Clone, Debug, PartialEq)]
pub struct ParamSetting {
    /// The value "reset" goes back to: the value when the parameter first appeared.
    pub default: f64,
    /// The slider's range, when set by the user; otherwise 0..2×default.
    pub range: Option<(f64, f64)>,
    /// Whether the slider moves on a logarithmic scale.
    pub logarithmic: bool,
    /// Unit (free text, from the scenario file).
    pub unit: String,
    /// What the parameter means (free text, from the scenario file).
    pub description: String,
}

impl ParamSetting {
    /// A setting whose default is `value`.
    pub fn new(value: f64) -> Self {
        Self {
            default: value,
            range: None,
            logarithmic: false,
            unit: String::new(),
            description: String::new(),
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

/// Which layers of the plane are drawn: the scenario file's own setting.
pub use quarry_core::scenario::Layers;

/// One layer, for commands that toggle it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Layer {
    /// The field layer.
    Field,
    /// The streamlines layer.
    Streamlines,
    /// The nullclines layer.
    Nullclines,
    /// The equilibria layer.
    Equilibria,
    /// The separatrices layer.
    Separatrices,
    /// The limit cycles layer.
    LimitCycles,
    /// The orbits layer.
    Orbits,
    /// The contours layer.
    Contours,
    /// The linearised solutions.
    Linearisation,
}

impl Layer {
    /// Every layer, in the order the layer list shows them.
    pub const ALL: [Layer; 9] = [
        Layer::Field,
        Layer::Streamlines,
        Layer::Nullclines,
        Layer::Equilibria,
        Layer::Separatrices,
        Layer::LimitCycles,
        Layer::Orbits,
        Layer::Contours,
        Layer::Linearisation,
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
            Layer::Linearisation => "Linearisation",
        }
    }
}

/// Reading and setting layers by name.
pub trait LayerSwitch {
    /// Whether a layer is on.
    fn is_on(&self, layer: Layer) -> bool;
    /// Turns a layer on or off.
    fn set(&mut self, layer: Layer, on: bool);
}

impl LayerSwitch for Layers {
    fn is_on(&self, layer: Layer) -> bool {
        match layer {
            Layer::Field => self.field,
            Layer::Streamlines => self.streamlines,
            Layer::Nullclines => self.nullclines,
            Layer::Equilibria => self.equilibria,
            Layer::Separatrices => self.separatrices,
            Layer::LimitCycles => self.limit_cycles,
            Layer::Orbits => self.orbits,
            Layer::Contours => self.contours,
            Layer::Linearisation => self.linearisation,
        }
    }

    fn set(&mut self, layer: Layer, on: bool) {
        let flag = match layer {
            Layer::Field => &mut self.field,
            Layer::Streamlines => &mut self.streamlines,
            Layer::Nullclines => &mut self.nullclines,
            Layer::Equilibria => &mut self.equilibria,
            Layer::Separatrices => &mut self.separatrices,
            Layer::LimitCycles => &mut self.limit_cycles,
            Layer::Orbits => &mut self.orbits,
            Layer::Contours => &mut self.contours,
            Layer::Linearisation => &mut self.linearisation,
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
    /// Free-text notes.
    pub notes: String,
    /// Units and descriptions of the two variables (their names live in `spec`).
    pub variable_info: [VariableInfo; 2],
    /// Playback speed and looping.
    pub playback: Playback,
    /// How each species is harvested; added to the rates of everything computed.
    pub harvest: Harvest,
}

/// The model that is analysed: `spec` with the harvest's catch terms subtracted from the
/// rates (and its numbers as extra parameters), compiled.
pub fn compile_harvested(spec: &ModelSpec, harvest: &Harvest) -> Result<Model, String> {
    if !harvest.is_active() {
        return Model::new(spec).map_err(|e| e.to_string());
    }
    let harvested = harvest.apply(spec).map_err(|e| e.to_string())?;
    Model::new(&harvested).map_err(|e| e.to_string())
}

/// What a scenario says about a variable besides its name.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct VariableInfo {
    /// Unit (free text).
    pub unit: String,
    /// What the variable is.
    pub description: String,
}

fn to_time_direction(d: Direction) -> TimeDirection {
    match d {
        Direction::Forward => TimeDirection::Forward,
        Direction::Backward => TimeDirection::Backward,
        Direction::Both => TimeDirection::Both,
    }
}

fn to_file_direction(d: TimeDirection) -> Direction {
    match d {
        TimeDirection::Forward => Direction::Forward,
        TimeDirection::Backward => Direction::Backward,
        TimeDirection::Both => Direction::Both,
    }
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
            notes: String::new(),
            variable_info: Default::default(),
            playback: Playback::default(),
            harvest: Harvest::default(),
        }
    }

    /// The model that is analysed (see [`compile_harvested`]).
    pub fn compile(&self) -> Result<Model, String> {
        compile_harvested(&self.spec, &self.harvest)
    }

    /// The app's scenario from a scenario file (already validated by reading it).
    pub fn from_file(f: &ScenarioFile) -> Self {
        let mut s = Self::new(f.model_spec());
        s.params = f
            .parameters
            .iter()
            .map(|p| ParamSetting {
                default: p.value,
                range: (p.min.is_some() || p.max.is_some()).then(|| p.range()),
                logarithmic: p.log,
                unit: p.unit.clone(),
                description: p.description.clone(),
            })
            .collect();
        for o in &f.orbits {
            let id = s.add_seed([o.x, o.y]);
            if let Some(seed) = s.seeds.iter_mut().find(|x| x.id == id) {
                seed.direction = to_time_direction(o.direction);
                seed.visible = !o.hidden;
            }
        }
        s.layers = f.layers;
        s.orbit_time = f.orbit_time;
        s.notes = f.notes.clone();
        s.variable_info = f.variables.clone().map(|v| VariableInfo {
            unit: v.unit,
            description: v.description,
        });
        s.playback = f.playback;
        s.harvest = f.harvest;
        s
    }

    /// Reads a scenario file's text into the app's scenario, checking that its model compiles.
    pub fn from_ron(text: &str) -> Result<(Self, Model), ScenarioError> {
        let f = ScenarioFile::from_ron(text)?;
        let s = Self::from_file(&f);
        let model = s.compile().map_err(|message| ScenarioError::Invalid {
            field: "harvest".into(),
            message,
        })?;
        Ok((s, model))
    }

    /// The scenario as a file holds it. Slider ranges are written out in full so that the
    /// file reopens with the same sliders.
    pub fn to_file(&self) -> ScenarioFile {
        let spec = &self.spec;
        ScenarioFile {
            version: SCENARIO_VERSION,
            title: spec.name.clone(),
            notes: self.notes.clone(),
            variables: [0, 1].map(|i| Variable {
                name: spec.variables[i].clone(),
                unit: self.variable_info[i].unit.clone(),
                description: self.variable_info[i].description.clone(),
            }),
            rates: spec.rates.clone(),
            parameters: spec
                .parameters
                .iter()
                .enumerate()
                .map(|(i, p)| {
                    let setting = self.params.get(i);
                    let (min, max) = setting.map_or((None, None), |s| match s.range {
                        Some((lo, hi)) => (Some(lo), Some(hi)),
                        None => (None, None),
                    });
                    ParameterDef {
                        name: p.name.clone(),
                        value: p.value,
                        min,
                        max,
                        log: setting.is_some_and(|s| s.logarithmic),
                        unit: setting.map(|s| s.unit.clone()).unwrap_or_default(),
                        description: setting.map(|s| s.description.clone()).unwrap_or_default(),
                    }
                })
                .collect(),
            invariant: spec.invariant.clone(),
            window: spec.window,
            layers: self.layers,
            orbits: self
                .seeds
                .iter()
                .map(|s| file::OrbitSeed {
                    x: s.at[0],
                    y: s.at[1],
                    direction: to_file_direction(s.direction),
                    hidden: !s.visible,
                })
                .collect(),
            orbit_time: self.orbit_time,
            playback: self.playback,
            harvest: self.harvest,
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
            field: l.field.then_some(FIELD_GRID),
            streamlines: l.streamlines,
            nullcline_grid: l.nullclines.then_some(CURVE_GRID),
            contours: l.contours.then_some(ContourLevels::Count(CONTOUR_COUNT)),
            contour_grid: CURVE_GRID,
            separatrices: l.separatrices,
            limit_cycles: l.limit_cycles,
            seeds: self
                .seeds
                .iter()
                .map(|s| Seed {
                    at: s.at,
                    direction: s.direction,
                })
                .collect(),
            orbit_time: self.orbit_time,
            linear_overlays: l.linearisation,
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

    #[test]
    fn every_demo_scenario_comes_back_unchanged_through_the_app() {
        let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/../../scenarios");
        let mut seen = 0;
        for entry in std::fs::read_dir(dir).expect("the demo folder") {
            let path = entry.expect("entry").path();
            if path.extension().is_none_or(|e| e != "ron") {
                continue;
            }
            let file = ScenarioFile::load(&path).expect("a demo loads");
            let app = Scenario::from_file(&file);
            assert_eq!(app.seeds.len(), file.orbits.len(), "{}", path.display());
            assert_eq!(app.to_file(), file, "{}", path.display());
            seen += 1;
        }
        assert!(seen >= 6, "only {seen} demos");
    }
}
