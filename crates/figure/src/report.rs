//! A one-page report of a model for people who were not at the desk: what the model is, where
//! its equilibria lie and what they do, the phase portrait and the time series, the harvest
//! and its yield where there is one, and the cautions, in one self-contained HTML file.
//!
//! Self-contained means the file can be mailed, archived and opened years later without
//! anything else: the CSS and both figures (SVG) are inline, there are no scripts, no fonts or
//! images to fetch, and a Content-Security-Policy that forbids loading anything should a
//! reader's browser try. Every string that came from a user (titles, notes, names, units,
//! formulas) is HTML-escaped.
//!
//! [`prepare_report`] computes what a report shows (analysis, scene, orbits, yields) from a
//! scenario, a harvest and start points; [`report_html`] only writes it out, so the command
//! line and the desktop app produce the same page.

use std::fmt::Write as _;
use std::time::{SystemTime, UNIX_EPOCH};

use quarry_core::analysis::{self, Equilibrium};
use quarry_core::export::CatchRates;
use quarry_core::harvest::{self, Harvest, HarvestRule, YieldSummary};
use quarry_core::linear::Complex;
use quarry_core::model::{Model, ModelSpec, Window};
use quarry_core::orbit::{self, OrbitOptions};
use quarry_core::scenario::Scenario;
use quarry_core::scene::{self, Cancel, ContourLevels, Scene, SceneRequest, Seed, TimeDirection};
use quarry_core::verdict::Verdict;

use crate::time_series::{TimeSeries, TimeSeriesOptions, render_time_series_svg};
use crate::{FigureOptions, render_svg};

/// The caution every report carries, harvested or not.
pub const GENERAL_CAUTION: &str = "The models here are simplified illustrations for \
exploration and teaching. Their outputs are not a stock assessment; decisions on quotas, \
effort and management rest on assessed data, local regulations and qualified scientific \
advice.";

/// The version of Quarry writing the report.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// Most orbits a report draws.
pub const MAX_REPORT_ORBITS: usize = 12;

/// A state variable as the report lists it.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReportVariable {
    /// Name in the formulas.
    pub name: String,
    /// Unit ("" for none).
    pub unit: String,
    /// What it is ("" for nothing said).
    pub description: String,
    /// Its rate as written in the model, before any harvest.
    pub rate: String,
    /// The catch subtracted from the rate, when harvested.
    pub catch: Option<String>,
}

/// A parameter as the report lists it.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReportParameter {
    /// Name in the formulas.
    pub name: String,
    /// Value used.
    pub value: f64,
    /// Unit ("" for none).
    pub unit: String,
    /// What it means ("" for nothing said).
    pub description: String,
}

/// One orbit's line in the report.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReportOrbit {
    /// Where it starts.
    pub start: [f64; 2],
    /// How long it ran.
    pub t_final: f64,
    /// The period, when it closes.
    pub period: Option<f64>,
    /// Time averages of the variables (over whole periods when closed).
    pub mean: [f64; 2],
    /// Smallest value of each variable.
    pub min: [f64; 2],
    /// Largest value of each variable.
    pub max: [f64; 2],
    /// Catch and profit along it, when harvested.
    pub yields: Option<YieldSummary>,
}

/// The harvest as the report shows it.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReportHarvest {
    /// One plain description per harvested species: "perch: catch q·E·perch, …".
    pub rules: Vec<String>,
    /// The harvest's own parameters (`E_perch`, …) with their values.
    pub parameters: Vec<(String, f64)>,
    /// Indices of the harvested species.
    pub species: Vec<usize>,
    /// Catch per unit time of each species at each equilibrium (equilibria's order).
    pub catch_at_equilibria: Vec<[f64; 2]>,
    /// Whether a price or cost is set (profit is shown only then).
    pub priced: bool,
}

/// Everything a report shows, computed; [`report_html`] writes it out.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReportInput {
    /// Title (scenario or model name).
    pub title: String,
    /// Free-text notes.
    pub notes: String,
    /// The two variables with their rates.
    pub variables: [ReportVariable; 2],
    /// The model's parameters (harvest parameters are listed with the harvest).
    pub parameters: Vec<ReportParameter>,
    /// The window studied.
    pub window: Window,
    /// A first integral, if the model has one, and whether it checked out.
    pub invariant: Option<(String, bool)>,
    /// The equilibria of the (harvested) model.
    pub equilibria: Vec<Equilibrium>,
    /// Whether the equilibrium search stopped at its maximum count.
    pub truncated: bool,
    /// The phase portrait.
    pub scene: Scene,
    /// The time series of the orbits.
    pub series: TimeSeries,
    /// The orbits' measurements, in the series' order.
    pub orbits: Vec<ReportOrbit>,
    /// The harvest, when there is one.
    pub harvest: Option<ReportHarvest>,
    /// When the report was made, UTC, ISO 8601 (see [`iso_utc`]).
    pub generated_utc: String,
    /// The version of Quarry that made it.
    pub tool_version: String,
}

/// What to make a report of.
#[derive(Clone, Debug)]
pub struct ReportRequest<'a> {
    /// Title, notes, units and descriptions (its model part is used for names and units
    /// only: values come from `base`).
    pub scenario: &'a Scenario,
    /// The unharvested model with the values to use.
    pub base: &'a ModelSpec,
    /// The harvest (may be inactive).
    pub harvest: &'a Harvest,
    /// Orbit starts; empty for [`suggested_starts`]. At most [`MAX_REPORT_ORBITS`] are used.
    pub starts: Vec<[f64; 2]>,
    /// How long each orbit runs (positive).
    pub t_end: f64,
    /// When, as [`iso_utc`] writes it.
    pub generated_utc: String,
}

/// Why a report could not be prepared.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ReportError {
    /// The model or harvest does not build.
    #[error("{0}")]
    Model(String),
    /// A start point or the time is unusable.
    #[error("{0}")]
    Orbit(String),
}

/// `t` as an ISO 8601 UTC timestamp to the second, e.g. `2024-02-29T13:05:09Z`.
pub fn iso_utc(t: SystemTime) -> String {
    let secs = match t.duration_since(UNIX_EPOCH) {
        Ok(d) => d.as_secs() as i64,
        Err(e) => -(e.duration().as_secs() as i64),
    };
    let days = secs.div_euclid(86_400);
    let rem = secs.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// The proleptic Gregorian date of a day count from 1970-01-01 (H. Hinnant, "chrono-Compatible
/// Low-Level Date Algorithms", `civil_from_days`).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// Orbit starts for a model with none given: around each equilibrium inside the window that
/// is not a saddle, half-way towards it and half as far again beyond it (from the window's
/// lower-left corner); failing that, three points spread over the window.
pub fn suggested_starts(window: &Window, equilibria: &[Equilibrium]) -> Vec<[f64; 2]> {
    let inside = |p: [f64; 2]| {
        [
            p[0].clamp(
                window.x_min + 0.03 * window.width(),
                window.x_max - 0.03 * window.width(),
            ),
            p[1].clamp(
                window.y_min + 0.03 * window.height(),
                window.y_max - 0.03 * window.height(),
            ),
        ]
    };
    let interior = |e: &&Equilibrium| {
        e.x > window.x_min + 0.01 * window.width()
            && e.x < window.x_max - 0.01 * window.width()
            && e.y > window.y_min + 0.01 * window.height()
            && e.y < window.y_max - 0.01 * window.height()
            && e.class() != quarry_core::linear::Class::Saddle
    };
    let mut starts = Vec::new();
    if let Some(e) = equilibria.iter().find(interior) {
        for f in [0.5, 1.5] {
            starts.push(inside([
                window.x_min + f * (e.x - window.x_min),
                window.y_min + f * (e.y - window.y_min),
            ]));
        }
    }
    if starts.is_empty() {
        for (fx, fy) in [(0.25, 0.25), (0.5, 0.6), (0.75, 0.4)] {
            starts.push([
                window.x_min + fx * window.width(),
                window.y_min + fy * window.height(),
            ]);
        }
    }
    starts
}

/// A plain description of one species' harvest rule.
fn describe_rule(name: &str, rule: &HarvestRule) -> String {
    match *rule {
        HarvestRule::None => format!("{name}: not harvested"),
        HarvestRule::Proportional {
            effort,
            catchability,
        } => format!(
            "{name}: catch proportional to the stock, effort E = {} and catchability q = {}",
            exact(effort),
            exact(catchability)
        ),
        HarvestRule::Quota { quota, taper } => format!(
            "{name}: constant quota H = {} per unit time{}",
            exact(quota),
            match taper {
                Some(s) => format!(", tapering off below a stock of about {}", exact(s)),
                None => ", tapering off only as the stock nears zero".into(),
            }
        ),
        HarvestRule::Threshold {
            lower,
            upper,
            target_rate,
        } => format!(
            "{name}: threshold rule, no fishing below {}, fishing mortality rising to {} at {} and held there above",
            exact(lower),
            exact(target_rate),
            exact(upper)
        ),
    }
}

/// Computes everything a report shows.
pub fn prepare_report(req: &ReportRequest<'_>) -> Result<ReportInput, ReportError> {
    let base = req.base;
    let model_err = |e: String| ReportError::Model(e);
    let applied = req
        .harvest
        .apply(base)
        .map_err(|e| model_err(e.to_string()))?;
    let model = Model::new(&applied).map_err(|e| model_err(e.to_string()))?;
    if !(req.t_end.is_finite() && req.t_end > 0.0) {
        return Err(ReportError::Orbit(format!(
            "the orbit time must be a positive number, got {}",
            req.t_end
        )));
    }
    let analysis = analysis::analyze(&model);
    let window = model.window();
    let mut starts = if req.starts.is_empty() {
        suggested_starts(&window, &analysis.equilibria)
    } else {
        req.starts.clone()
    };
    starts.truncate(MAX_REPORT_ORBITS);
    if let Some(bad) = starts
        .iter()
        .find(|s| !(s[0].is_finite() && s[1].is_finite()))
    {
        return Err(ReportError::Orbit(format!(
            "start point ({}, {}) is not finite",
            bad[0], bad[1]
        )));
    }

    let request = SceneRequest {
        field: Some((24, 24)),
        contours: Some(ContourLevels::Count(8)),
        seeds: starts
            .iter()
            .map(|&at| Seed {
                at,
                direction: TimeDirection::Forward,
            })
            .collect(),
        orbit_time: req.t_end,
        ..SceneRequest::default()
    };
    let mut scene = scene::build_scene(&model, &request, &Cancel::new())
        .map_err(|e| ReportError::Model(e.to_string()))?;
    scene.title = req.scenario.title.clone();

    let active = req.harvest.is_active();
    let catch = if active {
        Some(CatchRates::new(&model, req.harvest, base).map_err(|e| model_err(e.to_string()))?)
    } else {
        None
    };
    let mut orbits = Vec::new();
    for &s in &starts {
        let r = orbit::run_orbit(
            &model,
            s,
            &OrbitOptions {
                t_end: req.t_end,
                ..OrbitOptions::default()
            },
        )
        .map_err(|e| ReportError::Orbit(e.to_string()))?;
        let yields = if active {
            Some(
                harvest::yield_along(&model, req.harvest, base, &r)
                    .map_err(|e| model_err(e.to_string()))?,
            )
        } else {
            None
        };
        orbits.push(ReportOrbit {
            start: s,
            t_final: r.t_final,
            period: r.period,
            mean: r.mean,
            min: r.min,
            max: r.max,
            yields,
        });
    }

    let sv = &req.scenario.variables;
    let var = |i: usize| -> Result<ReportVariable, ReportError> {
        let catch = req
            .harvest
            .catch_term(base, i)
            .map_err(|e| model_err(e.to_string()))?
            .map(|(c, _)| c);
        let (unit, description) = sv
            .iter()
            .find(|v| v.name == base.variables[i])
            .map(|v| (v.unit.clone(), v.description.clone()))
            .unwrap_or_default();
        Ok(ReportVariable {
            name: base.variables[i].clone(),
            unit,
            description,
            rate: base.rates[i].clone(),
            catch,
        })
    };
    let variables = [var(0)?, var(1)?];
    let parameters = base
        .parameters
        .iter()
        .map(|p| {
            let def = req.scenario.parameters.iter().find(|d| d.name == p.name);
            ReportParameter {
                name: p.name.clone(),
                value: p.value,
                unit: def.map(|d| d.unit.clone()).unwrap_or_default(),
                description: def.map(|d| d.description.clone()).unwrap_or_default(),
            }
        })
        .collect();

    let mut series = TimeSeries::from_scene(&scene);
    series.units = [variables[0].unit.clone(), variables[1].unit.clone()];

    let harvest = catch.as_ref().map(|c| {
        let own: Vec<(String, f64)> = applied
            .parameters
            .iter()
            .filter(|p| !base.parameters.iter().any(|b| b.name == p.name))
            .map(|p| (p.name.clone(), p.value))
            .collect();
        ReportHarvest {
            rules: c
                .species()
                .into_iter()
                .map(|i| describe_rule(&base.variables[i], &req.harvest.rules[i]))
                .collect(),
            parameters: own,
            species: c.species(),
            catch_at_equilibria: analysis.equilibria.iter().map(|e| c.at(e.x, e.y)).collect(),
            priced: req
                .harvest
                .economics
                .iter()
                .any(|e| e.price != 0.0 || e.cost_per_effort != 0.0),
        }
    });

    Ok(ReportInput {
        title: req.scenario.title.clone(),
        notes: req.scenario.notes.clone(),
        variables,
        parameters,
        window,
        // A harvest drops the unharvested model's first integral (it no longer holds).
        invariant: applied.invariant.clone().map(|h| {
            let ok = analysis.invariant.is_some_and(|c| c.verified);
            (h, ok)
        }),
        equilibria: analysis.equilibria,
        truncated: analysis.truncated,
        scene,
        series,
        orbits,
        harvest,
        generated_utc: req.generated_utc.clone(),
        tool_version: TOOL_VERSION.to_owned(),
    })
}

/// `text` with the HTML special characters escaped (safe in element content and in quoted
/// attribute values); control characters other than tab and newline are dropped.
pub fn escape_html(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => s.push_str("&amp;"),
            '<' => s.push_str("&lt;"),
            '>' => s.push_str("&gt;"),
            '"' => s.push_str("&quot;"),
            '\'' => s.push_str("&#39;"),
            '\n' | '\t' => s.push(c),
            c if c.is_control() => {}
            c => s.push(c),
        }
    }
    s
}

/// Significant digits of the numbers in a report's tables.
const SIGNIFICANT: i32 = 5;

/// A number for people: [`SIGNIFICANT`] significant digits without trailing zeros for
/// ordinary magnitudes, exponent form otherwise; a typographic minus.
pub fn fmt(v: f64) -> String {
    let s = if v == 0.0 {
        "0".to_owned()
    } else if !v.is_finite() {
        if v.is_nan() {
            "—".to_owned()
        } else if v > 0.0 {
            "∞".to_owned()
        } else {
            "-∞".to_owned()
        }
    } else if (1e-4..1e6).contains(&v.abs()) {
        let decimals = (SIGNIFICANT - 1 - v.abs().log10().floor() as i32).max(0) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_owned()
        } else {
            s
        }
    } else {
        let s = format!("{v:.*e}", (SIGNIFICANT - 1) as usize);
        match s.split_once('e') {
            Some((m, e)) => {
                let m = if m.contains('.') {
                    m.trim_end_matches('0').trim_end_matches('.')
                } else {
                    m
                };
                format!("{m}×10^{e}")
            }
            None => s,
        }
    };
    s.replace('-', "\u{2212}")
}

/// A value as given (shortest round-trip decimal), for parameters the user typed.
fn exact(v: f64) -> String {
    quarry_core::export::number(v).replace('-', "\u{2212}")
}

/// The nonlinear verdict in words.
fn verdict_words(v: Verdict) -> &'static str {
    match v {
        Verdict::Center => "centre (closed orbits)",
        Verdict::StableFocus => "weak stable focus",
        Verdict::UnstableFocus => "weak unstable focus",
        Verdict::Undetermined => "undecided",
    }
}

/// A number for HTML: [`fmt`] with the power of ten raised.
fn num(v: f64) -> String {
    let s = fmt(v);
    match s.split_once("×10^") {
        Some((m, e)) => format!("{m}×10<sup>{e}</sup>"),
        None => s,
    }
}

fn complex(z: Complex) -> String {
    if z.im == 0.0 {
        num(z.re)
    } else {
        format!(
            "{} {} {}i",
            num(z.re),
            if z.im < 0.0 { "\u{2212}" } else { "+" },
            num(z.im.abs())
        )
    }
}

fn with_unit(name: &str, unit: &str) -> String {
    if unit.trim().is_empty() {
        escape_html(name)
    } else {
        format!(
            "{} <span class=\"unit\">({})</span>",
            escape_html(name),
            escape_html(unit.trim())
        )
    }
}

const CSS: &str = "
:root{--ink:#1c1c1c;--soft:#555;--rule:#d9d9d9;--band:#f5f5f2;--warn:#fff7e0;--warn-rule:#d9b44a}
*{box-sizing:border-box}
body{margin:0;background:#fff;color:var(--ink);font:15px/1.5 Ubuntu,'Helvetica Neue',Arial,sans-serif}
strong{font-weight:600}
main{max-width:960px;margin:0 auto;padding:28px 32px 40px}
h1{font-size:28px;font-weight:400;margin:0 0 4px}
h2{font-size:19px;font-weight:400;margin:28px 0 8px;padding-bottom:3px;border-bottom:1px solid var(--rule)}
p{margin:6px 0}
.meta{color:var(--soft);font-size:13px;margin:0 0 14px}
.notes{white-space:pre-line}
.caution{background:var(--warn);border-left:4px solid var(--warn-rule);padding:8px 14px;margin:14px 0;font-size:14px}
.caution p{margin:3px 0}
table{border-collapse:collapse;min-width:55%;font-size:13.5px;margin:8px 0}
table.variables,table.parameters,table.equilibria{width:100%}
th,td{text-align:left;padding:4px 8px;border-bottom:1px solid var(--rule);vertical-align:top}
th{font-weight:400;background:var(--band);color:#333}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
tr.explain td{color:var(--soft);border-bottom:1px solid var(--rule);padding-top:0;font-size:13px}
tr.has-explain td{border-bottom:none}
.unit{color:var(--soft);font-weight:400}
code,.formula{font-family:'DejaVu Sans Mono',Menlo,Consolas,monospace;font-size:13px}
.formulas{background:var(--band);padding:8px 14px;border-radius:3px;margin:8px 0}
.formulas div{margin:2px 0;overflow-wrap:anywhere}
.catch{color:#8a3b12}
figure{margin:14px 0}
figure svg{display:block;width:100%;height:auto;border:1px solid var(--rule)}
figcaption{color:var(--soft);font-size:13px;margin-top:4px}
footer{margin-top:30px;color:var(--soft);font-size:12.5px;border-top:1px solid var(--rule);padding-top:8px}
@media print{main{padding:0;max-width:none}h2{break-after:avoid}figure,table{break-inside:avoid}}
";

/// Standard base64 (RFC 4648 §4) with padding.
fn base64(bytes: &[u8]) -> String {
    const ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk[0],
            chunk.get(1).copied().unwrap_or(0),
            chunk.get(2).copied().unwrap_or(0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for k in 0..4 {
            if k <= chunk.len() {
                out.push(char::from(ALPHABET[(n >> (18 - 6 * k) & 63) as usize]));
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// The figures' font, embedded so that the page and its figures look the same in every
/// browser and match the PNGs (which resvg draws with the same font); the text measurement
/// the figures' layout relies on is made for it. The Ubuntu Font Licence allows embedding.
fn font_face() -> String {
    format!(
        "@font-face{{font-family:Ubuntu;font-style:normal;src:url(data:font/ttf;base64,{}) format('truetype')}}",
        base64(epaint_default_fonts::UBUNTU_LIGHT)
    )
}

/// The report as one self-contained HTML page (inline CSS, font and SVG, no scripts,
/// nothing fetched).
pub fn report_html(input: &ReportInput) -> String {
    let e = escape_html;
    let mut h = String::with_capacity(256 * 1024);
    let title = if input.title.trim().is_empty() {
        "Untitled model".to_owned()
    } else {
        input.title.trim().to_owned()
    };
    let [v0, v1] = &input.variables;
    let harvested = input.harvest.is_some();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'; img-src data:; font-src data:\">\n\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
<meta name=\"generator\" content=\"Quarry {}\">\n<title>{} — Quarry report</title>\n<style>{}{CSS}</style>\n</head>\n<body>\n<main>\n",
        e(&input.tool_version),
        e(&title),
        font_face()
    );
    let _ = write!(
        h,
        "<header>\n<h1>{}</h1>\n<p class=\"meta\">Report made {} (UTC) by Quarry {}</p>\n</header>\n",
        e(&title),
        e(&input.generated_utc),
        e(&input.tool_version)
    );
    h.push_str("<section class=\"caution\" id=\"cautions\">\n");
    let _ = writeln!(h, "<p>{}</p>", e(GENERAL_CAUTION));
    if harvested {
        let _ = writeln!(
            h,
            "<p><strong>Harvest:</strong> {}</p>",
            e(harvest::CAUTION)
        );
    }
    h.push_str("</section>\n");
    if !input.notes.trim().is_empty() {
        let _ = writeln!(
            h,
            "<section id=\"notes\">\n<h2>Notes</h2>\n<p class=\"notes\">{}</p>\n</section>",
            e(input.notes.trim())
        );
    }

    // The model.
    h.push_str("<section id=\"model\">\n<h2>Model</h2>\n<div class=\"formulas\">\n");
    for v in [v0, v1] {
        let _ = write!(
            h,
            "<div class=\"formula\">d{}/dt = {}",
            e(&v.name),
            e(&v.rate)
        );
        if let Some(c) = &v.catch {
            let _ = write!(h, " <span class=\"catch\">− ({})</span>", e(c));
        }
        h.push_str("</div>\n");
    }
    if let Some((inv, ok)) = &input.invariant {
        let _ = writeln!(
            h,
            "<div class=\"formula\">H = {} <span class=\"unit\">({})</span></div>",
            e(inv),
            if *ok {
                "conserved along orbits, checked"
            } else {
                "given, but not conserved by these rates"
            }
        );
    }
    h.push_str("</div>\n");
    if harvested {
        h.push_str(
            "<p class=\"unit\">The catch terms (in colour) are subtracted from the rates; every result below is for the harvested system.</p>\n",
        );
    }
    let w = &input.window;
    h.push_str("<table class=\"variables\">\n<tr><th>Variable</th><th>Unit</th><th>Description</th><th class=\"num\">Window</th></tr>\n");
    for (v, (lo, hi)) in [v0, v1]
        .into_iter()
        .zip([(w.x_min, w.x_max), (w.y_min, w.y_max)])
    {
        let _ = writeln!(
            h,
            "<tr><td><code>{}</code></td><td>{}</td><td>{}</td><td class=\"num\">{} to {}</td></tr>",
            e(&v.name),
            e(&v.unit),
            e(&v.description),
            num(lo),
            num(hi)
        );
    }
    h.push_str("</table>\n");
    if !input.parameters.is_empty() {
        h.push_str("<table class=\"parameters\">\n<tr><th>Parameter</th><th class=\"num\">Value</th><th>Unit</th><th>Description</th></tr>\n");
        for p in &input.parameters {
            let _ = writeln!(
                h,
                "<tr><td><code>{}</code></td><td class=\"num\">{}</td><td>{}</td><td>{}</td></tr>",
                e(&p.name),
                exact(p.value),
                e(&p.unit),
                e(&p.description)
            );
        }
        h.push_str("</table>\n");
    }
    h.push_str("</section>\n");

    // Equilibria.
    h.push_str("<section id=\"equilibria\">\n<h2>Equilibria</h2>\n");
    if input.equilibria.is_empty() {
        h.push_str("<p>No equilibrium lies in the window.</p>\n");
    } else {
        let _ = writeln!(
            h,
            "<table class=\"equilibria\">\n<tr><th class=\"num\">#</th><th class=\"num\">{}</th><th class=\"num\">{}</th><th>Class</th><th>Verdict</th><th class=\"num\">Eigenvalues</th><th class=\"num\">Trace</th><th class=\"num\">Determinant</th></tr>",
            with_unit(&v0.name, &v0.unit),
            with_unit(&v1.name, &v1.unit)
        );
        for (i, q) in input.equilibria.iter().enumerate() {
            let l = &q.linear.for_display();
            let verdict = q
                .nonlinear
                .as_ref()
                .map_or("—", |v| verdict_words(v.verdict));
            let _ = writeln!(
                h,
                "<tr class=\"has-explain\"><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td><td class=\"num\">{}<br>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td></tr>",
                i + 1,
                num(q.x),
                num(q.y),
                e(l.class.describe()),
                verdict,
                complex(l.eigenvalues[0]),
                complex(l.eigenvalues[1]),
                num(l.trace),
                num(l.det)
            );
            let _ = writeln!(
                h,
                "<tr class=\"explain\"><td></td><td colspan=\"7\">{}</td></tr>",
                e(&q.sentence())
            );
        }
        h.push_str("</table>\n");
    }
    if input.truncated {
        h.push_str("<p>The search stopped at its maximum count: the model may have a curve of equilibria, and not all are listed.</p>\n");
    }
    h.push_str("</section>\n");

    // Figures.
    let caption = harvested.then(|| harvest::CAUTION.to_owned());
    let portrait = render_svg(
        &input.scene,
        &FigureOptions {
            width: 900,
            height: 650,
            title: Some(String::new()),
            caption: caption.clone(),
            ..FigureOptions::default()
        },
    );
    let series = render_time_series_svg(
        &input.series,
        &TimeSeriesOptions {
            width: 900,
            height: 520,
            title: Some(String::new()),
            caption,
            ..TimeSeriesOptions::default()
        },
    );
    let _ = write!(
        h,
        "<section id=\"figures\">\n<h2>Phase portrait</h2>\n<figure class=\"portrait\">\n{portrait}\n<figcaption>{} across, {} up. Equilibria are marked by class (filled: stable, open: unstable, half-filled: saddle); nullclines are where one rate is zero.</figcaption>\n</figure>\n",
        with_unit(&v0.name, &v0.unit),
        with_unit(&v1.name, &v1.unit)
    );
    let _ = write!(
        h,
        "<h2>Time series</h2>\n<figure class=\"series\">\n{series}\n<figcaption>Both variables against time for the orbits of the phase portrait, in the same colours.</figcaption>\n</figure>\n"
    );
    if !input.orbits.is_empty() {
        let _ = writeln!(
            h,
            "<table class=\"orbits\">\n<tr><th class=\"num\">#</th><th class=\"num\">Start</th><th class=\"num\">Period</th><th class=\"num\">Mean {}</th><th class=\"num\">Mean {}</th><th class=\"num\">Range {}</th><th class=\"num\">Range {}</th></tr>",
            e(&v0.name),
            e(&v1.name),
            e(&v0.name),
            e(&v1.name)
        );
        let low = quarry_core::orbit::shown_near_zero;
        for (i, o) in input.orbits.iter().enumerate() {
            let _ = writeln!(
                h,
                "<tr><td class=\"num\">{}</td><td class=\"num\">({}, {})</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{} to {}</td><td class=\"num\">{} to {}</td></tr>",
                i + 1,
                num(o.start[0]),
                num(o.start[1]),
                o.period.map_or_else(|| "does not close".to_owned(), num),
                num(o.mean[0]),
                num(o.mean[1]),
                num(low(o.min[0], input.window.width())),
                num(o.max[0]),
                num(low(o.min[1], input.window.height())),
                num(o.max[1])
            );
        }
        h.push_str("</table>\n");
        let t = input.orbits.iter().map(|o| o.t_final).fold(0.0, f64::max);
        let _ = writeln!(
            h,
            "<p class=\"unit\">Each orbit runs to t = {}; means are over whole periods when the orbit closes.</p>",
            num(t)
        );
    }
    h.push_str("</section>\n");

    if let Some(hv) = &input.harvest {
        harvest_section(&mut h, input, hv);
    }

    let _ = write!(
        h,
        "<footer>\n<p>{}</p>\n<p>Made with Quarry {} on {} (UTC). Demo scenarios shipped with Quarry are invented and say so.</p>\n</footer>\n</main>\n</body>\n</html>\n",
        e(GENERAL_CAUTION),
        e(&input.tool_version),
        e(&input.generated_utc)
    );
    h
}

fn harvest_section(h: &mut String, input: &ReportInput, hv: &ReportHarvest) {
    let e = escape_html;
    let names = [&input.variables[0].name, &input.variables[1].name];
    h.push_str("<section id=\"harvest\">\n<h2>Harvest</h2>\n<ul>\n");
    for r in &hv.rules {
        let _ = writeln!(h, "<li>{}</li>", e(r));
    }
    h.push_str("</ul>\n");
    if !hv.parameters.is_empty() {
        let ps: Vec<String> = hv
            .parameters
            .iter()
            .map(|(n, v)| format!("<code>{}</code> = {}", e(n), exact(*v)))
            .collect();
        let _ = writeln!(h, "<p>Harvest parameters: {}.</p>", ps.join(", "));
    }
    if !input.equilibria.is_empty() && hv.catch_at_equilibria.len() == input.equilibria.len() {
        h.push_str("<table class=\"catch-at-equilibria\">\n<tr><th class=\"num\">Equilibrium</th>");
        for &i in &hv.species {
            let _ = write!(h, "<th class=\"num\">Catch of {} there</th>", e(names[i]));
        }
        h.push_str("</tr>\n");
        for (k, (q, c)) in input
            .equilibria
            .iter()
            .zip(&hv.catch_at_equilibria)
            .enumerate()
        {
            let _ = write!(
                h,
                "<tr><td class=\"num\">{} ({}, {})</td>",
                k + 1,
                num(q.x),
                num(q.y)
            );
            for &i in &hv.species {
                let _ = write!(h, "<td class=\"num\">{}</td>", num(c[i]));
            }
            h.push_str("</tr>\n");
        }
        h.push_str("</table>\n<p class=\"unit\">Catch per unit time if the system rests at that equilibrium (sustained only where it is stable).</p>\n");
    }
    let with_yields: Vec<(usize, &ReportOrbit, &YieldSummary)> = input
        .orbits
        .iter()
        .enumerate()
        .filter_map(|(k, o)| o.yields.as_ref().map(|y| (k, o, y)))
        .collect();
    if !with_yields.is_empty() {
        h.push_str("<table class=\"yields\">\n<tr><th class=\"num\">Orbit</th>");
        for &i in &hv.species {
            let _ = write!(h, "<th class=\"num\">Mean catch of {}</th>", e(names[i]));
        }
        if hv.priced {
            h.push_str("<th class=\"num\">Mean profit</th>");
        }
        h.push_str("<th class=\"num\">Averaged over</th></tr>\n");
        for (k, o, y) in with_yields {
            let _ = write!(
                h,
                "<tr><td class=\"num\">{} from ({}, {})</td>",
                k + 1,
                num(o.start[0]),
                num(o.start[1])
            );
            for &i in &hv.species {
                let _ = write!(h, "<td class=\"num\">{}</td>", num(y.mean_catch[i]));
            }
            if hv.priced {
                let _ = write!(h, "<td class=\"num\">{}</td>", num(y.mean_profit));
            }
            let _ = writeln!(
                h,
                "<td class=\"num\">t = 0 to {}{}</td></tr>",
                num(y.span),
                if o.period.is_some() {
                    " (whole periods)"
                } else {
                    ""
                }
            );
        }
        h.push_str("</table>\n<p class=\"unit\">Means per unit time along each orbit; profit is price × catch − cost × effort, summed over species.</p>\n");
    }
    let _ = writeln!(
        h,
        "<p class=\"caution\">{}</p>\n</section>",
        e(harvest::CAUTION)
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::harvest::Economics;
    use quarry_core::library::builtin;
    use quarry_core::scenario::Scenario;

    fn lv() -> (Scenario, ModelSpec) {
        let spec = builtin("lotka-volterra").expect("builtin").spec();
        (Scenario::from_spec(&spec), spec)
    }

    fn prepared(scenario: &Scenario, base: &ModelSpec, harvest: &Harvest) -> ReportInput {
        prepare_report(&ReportRequest {
            scenario,
            base,
            harvest,
            starts: vec![[10.0, 5.0], [30.0, 10.0]],
            t_end: 20.0,
            generated_utc: "2024-02-29T13:05:09Z".into(),
        })
        .expect("report")
    }

    #[test]
    fn iso_dates_follow_the_civil_calendar() {
        // Reference instants (Unix time, POSIX: 86 400 s a day): the epoch, the 2000 leap day
        // (946 684 800 is 2000-01-01, plus 59 days), and 2038-01-19T03:14:07Z = 2³¹ − 1 s.
        let at = |s: u64| iso_utc(UNIX_EPOCH + std::time::Duration::from_secs(s));
        assert_eq!(at(0), "1970-01-01T00:00:00Z");
        assert_eq!(at(951_782_400), "2000-02-29T00:00:00Z");
        assert_eq!(at(2_147_483_647), "2038-01-19T03:14:07Z");
        assert_eq!(at(4_107_542_400), "2100-03-01T00:00:00Z");
    }

    #[test]
    fn the_page_is_self_contained_and_holds_tables_and_two_figures() {
        let (scenario, base) = lv();
        let input = prepared(&scenario, &base, &Harvest::default());
        let html = report_html(&input);
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert_eq!(html.matches("<svg ").count(), 2, "two inline figures");
        for forbidden in [
            "<script", "<link", "http://", "https://", "src=", "@import", "url(http",
        ] {
            let bad = html
                .match_indices(forbidden)
                .any(|(i, _)| !html[i..].starts_with("http://www.w3.org/2000/svg"));
            assert!(!bad, "found {forbidden}");
        }
        assert!(html.contains("<table class=\"equilibria\">"));
        // Closed form (common practice): LV equilibria (0, 0) saddle and (c/γ, a/α) = (20, 10)
        // centre.
        assert!(html.contains("<td>saddle</td>"));
        assert!(html.contains("<td>linear centre</td><td>centre (closed orbits)</td>"));
        assert!(
            html.contains("src:url(data:font/ttf;base64,"),
            "the font is embedded"
        );
        assert!(html.contains("<td class=\"num\">20</td><td class=\"num\">10</td>"));
        assert!(html.contains(&escape_html(GENERAL_CAUTION)));
        assert!(
            !html.contains(&escape_html(harvest::CAUTION)),
            "no harvest, no harvest caution"
        );
        assert!(html.contains("2024-02-29T13:05:09Z"));
        assert!(html.contains(TOOL_VERSION));
        assert!(html.contains("dx/dt = a*x - alpha*x*y"));
    }

    #[test]
    fn hostile_text_is_escaped_everywhere() {
        let (mut scenario, base) = lv();
        scenario.title = "<b>&\"Lake'</b>".into();
        scenario.notes = "<script>alert(1)</script>".into();
        scenario.variables[0].unit = "<i>fish</i>".into();
        let input = prepared(&scenario, &base, &Harvest::default());
        let html = report_html(&input);
        assert!(!html.contains("<b>&"));
        assert!(!html.contains("<script"));
        assert!(!html.contains("<i>fish"));
        assert!(html.contains("&lt;b&gt;&amp;&quot;Lake&#39;&lt;/b&gt;"));
        assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    }

    #[test]
    fn a_harvested_report_shows_catch_yield_and_the_caution() {
        let (scenario, base) = lv();
        let harvest = Harvest {
            rules: [
                HarvestRule::Proportional {
                    effort: 0.2,
                    catchability: 1.0,
                },
                HarvestRule::None,
            ],
            economics: [
                Economics {
                    price: 2.0,
                    cost_per_effort: 1.0,
                },
                Economics::default(),
            ],
        };
        let input = prepared(&scenario, &base, &harvest);
        let hv = input.harvest.as_ref().expect("harvest section");
        assert_eq!(hv.species, vec![0]);
        // Harvested LV (Volterra's principle, common practice): prey catch qE·x, the interior
        // equilibrium moves to (c/γ, (a − qE)/α) = (20, 8), where the catch is 0.2 × 20 = 4.
        let interior = input
            .equilibria
            .iter()
            .position(|q| (q.x - 20.0).abs() < 1e-9)
            .expect("interior equilibrium");
        assert!((input.equilibria[interior].y - 8.0).abs() < 1e-9);
        assert!((hv.catch_at_equilibria[interior][0] - 4.0).abs() < 1e-9);
        // Closed orbits: the mean prey over whole periods is c/γ = 20, so the mean catch is
        // qE × 20 = 4 and the mean profit 2 × 4 − 1 × 0.2 = 7.8.
        let y = input.orbits[0].yields.expect("yield");
        assert!((y.mean_catch[0] - 4.0).abs() < 1e-6, "{y:?}");
        assert!((y.mean_profit - 7.8).abs() < 1e-5);
        let html = report_html(&input);
        assert!(html.contains("id=\"harvest\""));
        assert!(html.contains(&escape_html(harvest::CAUTION)));
        assert!(html.contains("Mean profit"));
        assert!(html.contains("q_x*E_x*x"));
        assert!(
            input.invariant.is_none(),
            "the harvest breaks the first integral"
        );
        assert_eq!(html.matches("<svg ").count(), 2);
    }

    #[test]
    fn starts_are_suggested_around_the_interior_equilibrium() {
        let (scenario, base) = lv();
        let input = prepare_report(&ReportRequest {
            scenario: &scenario,
            base: &base,
            harvest: &Harvest::default(),
            starts: Vec::new(),
            t_end: 10.0,
            generated_utc: String::new(),
        })
        .expect("report");
        let w = input.window;
        assert_eq!(input.orbits.len(), 2);
        // Half-way to and half as far beyond the centre (20, 10) from the window's corner.
        assert_eq!(
            input.orbits[0].start,
            [
                w.x_min + 0.5 * (20.0 - w.x_min),
                w.y_min + 0.5 * (10.0 - w.y_min)
            ]
        );
        assert!(input.series.orbits.len() == 2);
        assert!(
            prepare_report(&ReportRequest {
                scenario: &scenario,
                base: &base,
                harvest: &Harvest::default(),
                starts: vec![[f64::NAN, 1.0]],
                t_end: 10.0,
                generated_utc: String::new(),
            })
            .is_err()
        );
    }

    #[test]
    fn base64_matches_rfc_4648_test_vectors() {
        // RFC 4648 §10.
        for (plain, coded) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(plain.as_bytes()), coded);
        }
    }

    #[test]
    fn numbers_read_well() {
        assert_eq!(fmt(8.276191), "8.2762");
        assert_eq!(fmt(39.569919), "39.57");
        assert_eq!(fmt(123456.7), "123457");
        assert_eq!(exact(0.075), "0.075");
        assert_eq!(fmt(20.0), "20");
        assert_eq!(fmt(-0.5), "\u{2212}0.5");
        assert_eq!(fmt(1.5e-9), "1.5×10^\u{2212}9");
        assert_eq!(fmt(f64::NAN), "—");
        assert_eq!(num(-2.4998e-8), "\u{2212}2.4998×10<sup>\u{2212}8</sup>");
    }
}
