//! Scenario files: everything a user set up and wants back exactly, saved as RON.
//!
//! A scenario holds the model (variable names, both rates, parameters with value, range, unit
//! and description, a first integral if known), the window, which layers are shown, the
//! seeded orbits, playback settings and free-text notes, under a schema `version`. Reading is
//! strict: an unknown field is reported (not silently dropped), a missing optional field takes
//! its default, an older version is migrated, and a newer version is refused with a clear
//! message rather than half-read. Every error names the line, the column and the field.
//! Saving writes a temporary file in the same folder, flushes it to disk and renames it over
//! the old one, so a crash or a kill during a save leaves the previous file whole.

use std::io::Write;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::harvest::{Harvest, HarvestRule};
use crate::model::{Model, ModelError, ModelSpec, Parameter, Window};

/// The scenario format this build writes, and the newest it reads.
pub const SCENARIO_VERSION: u32 = 1;

/// Default time an orbit runs in the plane.
pub const DEFAULT_ORBIT_TIME: f64 = 30.0;

/// A state variable as a scenario describes it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Variable {
    /// Name used in the formulas.
    pub name: String,
    /// Unit, e.g. "thousand fish" (free text).
    #[serde(default)]
    pub unit: String,
    /// What the variable is.
    #[serde(default)]
    pub description: String,
}

/// A parameter with everything a slider needs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ParameterDef {
    /// Name used in the formulas.
    pub name: String,
    /// Current value.
    pub value: f64,
    /// Lower end of the slider (default: 0 or twice a negative value).
    #[serde(default)]
    pub min: Option<f64>,
    /// Upper end of the slider (default: twice the value, or 1 for a zero value).
    #[serde(default)]
    pub max: Option<f64>,
    /// Whether the slider moves on a logarithmic scale.
    #[serde(default)]
    pub log: bool,
    /// Unit (free text).
    #[serde(default)]
    pub unit: String,
    /// What the parameter means.
    #[serde(default)]
    pub description: String,
}

impl ParameterDef {
    /// The slider range: the file's, or a default around the value.
    pub fn range(&self) -> (f64, f64) {
        let v = self.value;
        let lo = self.min.unwrap_or(if v < 0.0 { 2.0 * v } else { 0.0 });
        let hi = self.max.unwrap_or(if v > 0.0 {
            2.0 * v
        } else if v < 0.0 {
            0.0
        } else {
            1.0
        });
        (lo, hi)
    }
}

/// Which layers of the plane are shown.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Layers {
    /// Direction-field arrows.
    pub field: bool,
    /// Evenly spaced streamlines.
    pub streamlines: bool,
    /// Nullclines.
    pub nullclines: bool,
    /// Equilibria.
    pub equilibria: bool,
    /// Separatrices.
    pub separatrices: bool,
    /// First-integral contours.
    pub contours: bool,
    /// Orbits.
    pub orbits: bool,
    /// Limit cycles.
    pub limit_cycles: bool,
    /// The linearised solution from each orbit's start, about the nearest equilibrium that is
    /// not a saddle (written only when on, so older files stay as they were).
    #[serde(skip_serializing_if = "is_false")]
    pub linearisation: bool,
}

fn is_false(b: &bool) -> bool {
    !*b
}

impl Default for Layers {
    fn default() -> Self {
        Self {
            field: true,
            streamlines: false,
            nullclines: true,
            equilibria: true,
            separatrices: true,
            contours: true,
            orbits: true,
            limit_cycles: true,
            linearisation: false,
        }
    }
}

/// Which way an orbit runs from its start.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Direction {
    /// Forward in time.
    #[default]
    Forward,
    /// Backward in time.
    Backward,
    /// Both ways.
    Both,
}

/// A seeded orbit.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OrbitSeed {
    /// Start, first variable.
    pub x: f64,
    /// Start, second variable.
    pub y: f64,
    /// Which way in time.
    #[serde(default)]
    pub direction: Direction,
    /// Hidden in the plane (kept in the list).
    #[serde(default)]
    pub hidden: bool,
}

/// Playback settings for showing a system to others.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Playback {
    /// Model time per second of playback.
    pub speed: f64,
    /// Start again at the end.
    pub looped: bool,
}

impl Default for Playback {
    fn default() -> Self {
        Self {
            speed: 1.0,
            looped: true,
        }
    }
}

fn default_orbit_time() -> f64 {
    DEFAULT_ORBIT_TIME
}

/// A scenario: the model and everything shown with it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Schema version ([`SCENARIO_VERSION`]).
    pub version: u32,
    /// Title shown in the window and on figures.
    pub title: String,
    /// Free-text notes.
    #[serde(default)]
    pub notes: String,
    /// The two state variables; the first is on the horizontal axis.
    pub variables: [Variable; 2],
    /// The two rates as formulas.
    pub rates: [String; 2],
    /// Parameters.
    #[serde(default)]
    pub parameters: Vec<ParameterDef>,
    /// A first integral H, if known.
    #[serde(default)]
    pub invariant: Option<String>,
    /// The window.
    #[serde(default)]
    pub window: Window,
    /// Layers shown.
    #[serde(default)]
    pub layers: Layers,
    /// Seeded orbits.
    #[serde(default)]
    pub orbits: Vec<OrbitSeed>,
    /// How long each orbit runs.
    #[serde(default = "default_orbit_time")]
    pub orbit_time: f64,
    /// Playback settings.
    #[serde(default)]
    pub playback: Playback,
    /// Harvest rules and economics, applied on top of the rates (see [`Scenario::analysed_spec`]);
    /// left out of the file when there is none, so files without harvest read and write as
    /// before.
    #[serde(default, skip_serializing_if = "is_no_harvest")]
    pub harvest: Harvest,
}

fn is_no_harvest(h: &Harvest) -> bool {
    *h == Harvest::default()
}

/// Why a scenario could not be read, checked or saved.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ScenarioError {
    /// The text is not a valid scenario: RON syntax, a wrong type, a missing or unknown field.
    #[error("line {line}, column {column}{}: {message}", field.as_deref().map(|f| format!(", field `{f}`")).unwrap_or_default())]
    Syntax {
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// The field concerned, as a path such as `parameters[2].value`, when known.
        field: Option<String>,
        /// What is wrong.
        message: String,
    },
    /// The file is from a newer Quarry.
    #[error(
        "the file is scenario format version {found}, but this Quarry reads versions up to {SCENARIO_VERSION}: open it with a newer Quarry"
    )]
    TooNew {
        /// The version in the file.
        found: u32,
    },
    /// The version number is not one that ever existed.
    #[error("scenario format version {found} does not exist (versions start at 1)")]
    BadVersion {
        /// The version in the file.
        found: u32,
    },
    /// The model inside is invalid (a formula error names the formula and its column).
    #[error("{0}")]
    Model(#[from] ModelError),
    /// A value outside what the scenario allows.
    #[error("field `{field}`: {message}")]
    Invalid {
        /// The field.
        field: String,
        /// What is wrong.
        message: String,
    },
    /// Reading or writing the file failed.
    #[error("{path}: {message}")]
    Io {
        /// The file.
        path: String,
        /// The system's message.
        message: String,
    },
}

/// Only the version, read first so a newer file is refused before anything else is parsed.
#[derive(Deserialize)]
struct VersionProbe {
    version: Option<u32>,
}

fn syntax(err: &ron::error::SpannedError, field: Option<String>) -> ScenarioError {
    ScenarioError::Syntax {
        line: err.span.start.line,
        column: err.span.start.col,
        field,
        message: err.code.to_string(),
    }
}

impl Scenario {
    /// Parses a scenario from RON text and checks that its model builds.
    pub fn from_ron(text: &str) -> Result<Self, ScenarioError> {
        // A permissive look at the version first: a newer file is refused as such, not as a
        // list of unknown fields.
        if let Ok(probe) = ron::Options::default().from_str::<VersionProbe>(text)
            && let Some(found) = probe.version
        {
            if found > SCENARIO_VERSION {
                return Err(ScenarioError::TooNew { found });
            }
            if found == 0 {
                return Err(ScenarioError::BadVersion { found });
            }
        }
        let mut de = ron::Deserializer::from_str(text).map_err(|e| syntax(&e, None))?;
        let parsed: Result<Scenario, _> = serde_path_to_error::deserialize(&mut de);
        let scenario = match parsed {
            Ok(s) => s,
            Err(e) => {
                let path = e.path().to_string();
                let field = (path != "." && !path.is_empty()).then_some(path);
                let spanned = de.span_error(e.into_inner());
                return Err(syntax(&spanned, field));
            }
        };
        if let Err(e) = de.end() {
            return Err(syntax(&de.span_error(e), None));
        }
        let scenario = migrate(scenario)?;
        scenario.validate()?;
        Ok(scenario)
    }

    /// Reads and checks a scenario file.
    pub fn load(path: &Path) -> Result<Self, ScenarioError> {
        let text = std::fs::read_to_string(path).map_err(|e| ScenarioError::Io {
            path: path.display().to_string(),
            message: e.to_string(),
        })?;
        Self::from_ron(&text)
    }

    /// The scenario as RON text, in a stable, readable layout.
    pub fn to_ron(&self) -> String {
        let config = ron::ser::PrettyConfig::new()
            .struct_names(false)
            .indentor("    ".to_owned())
            .separate_tuple_members(false);
        let mut text = ron::ser::to_string_pretty(self, config)
            .unwrap_or_else(|e| format!("// could not write the scenario: {e}\n"));
        text.push('\n');
        text
    }

    /// Saves atomically: a temporary file in the same folder, flushed, then renamed over `path`.
    pub fn save(&self, path: &Path) -> Result<(), ScenarioError> {
        write_atomically(path, self.to_ron().as_bytes())
    }

    /// Checks what the types cannot: the model builds, numbers are finite, ranges make sense.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        let invalid = |field: String, message: &str| ScenarioError::Invalid {
            field,
            message: message.to_owned(),
        };
        for (i, p) in self.parameters.iter().enumerate() {
            for (which, v) in [("min", p.min), ("max", p.max)] {
                if let Some(v) = v
                    && !v.is_finite()
                {
                    return Err(invalid(
                        format!("parameters[{i}].{which}"),
                        "must be a finite number",
                    ));
                }
            }
            let (lo, hi) = p.range();
            if lo >= hi {
                return Err(invalid(
                    format!("parameters[{i}]"),
                    "min must be less than max",
                ));
            }
            if p.log && lo <= 0.0 {
                return Err(invalid(
                    format!("parameters[{i}].log"),
                    "a logarithmic slider needs a positive range",
                ));
            }
        }
        for (i, o) in self.orbits.iter().enumerate() {
            if !(o.x.is_finite() && o.y.is_finite()) {
                return Err(invalid(format!("orbits[{i}]"), "the start must be finite"));
            }
        }
        if !(self.orbit_time.is_finite() && self.orbit_time > 0.0) {
            return Err(invalid("orbit_time".into(), "must be a positive number"));
        }
        if !(self.playback.speed.is_finite() && self.playback.speed > 0.0) {
            return Err(invalid(
                "playback.speed".into(),
                "must be a positive number",
            ));
        }
        Model::new(&self.model_spec())?;
        self.validate_harvest()?;
        Model::new(&self.analysed_spec()?)?;
        Ok(())
    }

    /// Checks the harvest: finite numbers, rules that apply to the model.
    fn validate_harvest(&self) -> Result<(), ScenarioError> {
        let invalid = |field: String, message: String| ScenarioError::Invalid { field, message };
        for (i, e) in self.harvest.economics.iter().enumerate() {
            for (which, v) in [("price", e.price), ("cost_per_effort", e.cost_per_effort)] {
                if !(v.is_finite() && v >= 0.0) {
                    return Err(invalid(
                        format!("harvest.economics[{i}].{which}"),
                        format!("must be a finite number ≥ 0, got {v}"),
                    ));
                }
            }
        }
        let spec = self.model_spec();
        for i in 0..2 {
            if self.harvest.rules[i] == HarvestRule::None {
                continue;
            }
            let mut one = Harvest::default();
            one.rules[i] = self.harvest.rules[i];
            one.apply(&spec)
                .map_err(|e| invalid(format!("harvest.rules[{i}]"), e.to_string()))?;
        }
        Ok(())
    }

    /// The model that is analysed: the rates with the harvest's catch terms subtracted and
    /// its parameters added ([`Harvest::apply`]); the plain model when nothing is harvested.
    pub fn analysed_spec(&self) -> Result<ModelSpec, ScenarioError> {
        let spec = self.model_spec();
        if !self.harvest.is_active() {
            return Ok(spec);
        }
        self.harvest
            .apply(&spec)
            .map_err(|e| ScenarioError::Invalid {
                field: "harvest".into(),
                message: e.to_string(),
            })
    }

    /// The model part as a [`ModelSpec`].
    pub fn model_spec(&self) -> ModelSpec {
        ModelSpec {
            name: self.title.clone(),
            variables: [
                self.variables[0].name.clone(),
                self.variables[1].name.clone(),
            ],
            rates: self.rates.clone(),
            parameters: self
                .parameters
                .iter()
                .map(|p| Parameter::new(&p.name, p.value))
                .collect(),
            invariant: self.invariant.clone(),
            window: self.window,
        }
    }

    /// A scenario around a model specification, with default layers and no orbits.
    pub fn from_spec(spec: &ModelSpec) -> Self {
        Self {
            version: SCENARIO_VERSION,
            title: spec.name.clone(),
            notes: String::new(),
            variables: spec.variables.clone().map(|name| Variable {
                name,
                unit: String::new(),
                description: String::new(),
            }),
            rates: spec.rates.clone(),
            parameters: spec
                .parameters
                .iter()
                .map(|p| ParameterDef {
                    name: p.name.clone(),
                    value: p.value,
                    min: None,
                    max: None,
                    log: false,
                    unit: String::new(),
                    description: String::new(),
                })
                .collect(),
            invariant: spec.invariant.clone(),
            window: spec.window,
            layers: Layers::default(),
            orbits: Vec::new(),
            orbit_time: DEFAULT_ORBIT_TIME,
            playback: Playback::default(),
            harvest: Harvest::default(),
        }
    }
}

/// The demo scenario the app opens with when given no file (built into the binary).
pub const DEFAULT_SCENARIO_RON: &str = include_str!("../../../scenarios/varrow-perch-and-pike.ron");

/// The built-in default scenario; falls back to the default built-in model should the embedded
/// file ever fail to read (a test guards against that).
pub fn default_scenario() -> Scenario {
    Scenario::from_ron(DEFAULT_SCENARIO_RON)
        .unwrap_or_else(|_| Scenario::from_spec(&crate::library::default_model()))
}

/// Brings an older scenario up to [`SCENARIO_VERSION`]. Version 1 is the first format, so
/// there is nothing to migrate yet; each later version adds its step here.
fn migrate(scenario: Scenario) -> Result<Scenario, ScenarioError> {
    match scenario.version {
        0 => Err(ScenarioError::BadVersion { found: 0 }),
        v if v > SCENARIO_VERSION => Err(ScenarioError::TooNew { found: v }),
        _ => Ok(scenario),
    }
}

/// Writes a file through a temporary sibling, flushed to disk, then renamed over `path`; the
/// previous file stays whole if anything fails or the process is killed on the way.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), ScenarioError> {
    let io = |e: std::io::Error| ScenarioError::Io {
        path: path.display().to_string(),
        message: e.to_string(),
    };
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "scenario".to_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut file = std::fs::File::create(&tmp)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        drop(file);
        std::fs::rename(&tmp, path)?;
        // NOTE: the rename itself is durable only once the folder is flushed; where a folder
        // cannot be opened for that (some platforms), the rename is still atomic.
        if let Ok(d) = std::fs::File::open(dir) {
            let _ = d.sync_all();
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.map_err(io)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::harvest::Economics;

    fn harvested() -> Scenario {
        let mut s = Scenario::from_spec(
            &crate::library::builtin("logistic-prey")
                .expect("built in")
                .spec(),
        );
        s.harvest.rules[0] = HarvestRule::Quota {
            quota: 2.5,
            taper: Some(0.1),
        };
        s.harvest.rules[1] = HarvestRule::Proportional {
            effort: 0.3,
            catchability: 0.5,
        };
        s.harvest.economics[1] = Economics {
            price: 4.0,
            cost_per_effort: 1.5,
        };
        s
    }

    #[test]
    fn windows_too_large_or_too_narrow_to_compute_in_are_refused() {
        let base = Scenario::from_spec(&crate::library::default_model());
        let text = base.to_ron();
        let with = |x_min: &str, x_max: &str| {
            let w = &base.window;
            text.replace(
                &format!("x_min: {:?},", w.x_min),
                &format!("x_min: {x_min},"),
            )
            .replace(
                &format!("x_max: {:?},", w.x_max),
                &format!("x_max: {x_max},"),
            )
        };
        assert!(Scenario::from_ron(&with("0.0", "1e15")).is_ok());
        for (lo, hi, says) in [
            ("-1e300", "1e300", "within"),
            ("1e10", "10000000000.0001", "too narrow"),
        ] {
            let t = with(lo, hi);
            assert_ne!(t, text, "the window was replaced");
            let e = Scenario::from_ron(&t).expect_err("refused").to_string();
            assert!(e.contains("window") && e.contains(says), "{e}");
        }
    }

    #[test]
    fn a_harvest_round_trips_through_the_file() {
        let s = harvested();
        let text = s.to_ron();
        assert!(
            text.contains("harvest:") && text.contains("Quota"),
            "{text}"
        );
        let back = Scenario::from_ron(&text).expect("reads back");
        assert_eq!(back, s);
        assert_eq!(back.to_ron(), text, "byte-stable");
        // The analysed model carries both catch terms and their parameters (harvest.rs).
        let spec = back.analysed_spec().expect("applies");
        assert!(spec.rates[0].contains("H_x") && spec.rates[1].contains("q_y*E_y*y"));
        assert!(
            spec.parameters
                .iter()
                .any(|p| p.name == "E_y" && p.value == 0.3)
        );
    }

    #[test]
    fn no_harvest_leaves_the_file_as_it_was() {
        let s = Scenario::from_spec(&crate::library::default_model());
        let text = s.to_ron();
        assert!(!text.contains("harvest"), "{text}");
        assert_eq!(s.analysed_spec().expect("plain"), s.model_spec());
    }

    #[test]
    fn a_bad_harvest_is_refused_with_its_field() {
        let text = harvested().to_ron();
        let bad = text.replacen("quota: 2.5", "quota: -2.5", 1);
        let err = Scenario::from_ron(&bad)
            .expect_err("a negative quota")
            .to_string();
        assert!(
            err.contains("harvest.rules[0]") && err.contains("quota"),
            "{err}"
        );
        let bad = text.replacen("price: 4.0", "price: inf", 1);
        let err = Scenario::from_ron(&bad)
            .expect_err("an infinite price")
            .to_string();
        assert!(err.contains("harvest.economics[1].price"), "{err}");
        let bad = text.replacen("Quota(", "Quoat(", 1);
        assert!(Scenario::from_ron(&bad).is_err());
        // A harvest parameter clashing with the model's own.
        let mut s = harvested();
        s.parameters[0].name = "H_x".into();
        s.rates[0] = s.rates[0].replace("r*", "H_x*");
        assert!(s.validate().is_err());
    }
}
