//! Tables for other tools: orbits, equilibria and sweeps as plain CSV.
//!
//! Consultants put what they found in front of others, often through a spreadsheet or a
//! script of their own. The tables here are written so that nothing is lost on the way:
//!
//! - **plain CSV** (RFC 4180): one header row, then data rows, CRLF line ends; a field is
//!   quoted when it holds a comma, a double quote, a CR or an LF, with quotes doubled. There
//!   is no comment line, so any CSV reader takes the file as it is.
//! - **numbers that read back exactly**: the shortest decimal that parses back to the same
//!   `f64` (Rust's `{}` / `{:e}` formatting, which is shortest round-trip), in plain notation
//!   for ordinary magnitudes and in exponent notation (`1.5e-9`) for very small or very large
//!   ones; `NaN`, `inf` and `-inf` for non-finite values.
//! - **headers that say what a column is**: the variables' and parameters' own names, with
//!   their units in parentheses when known (`prey (thousand fish)`).
//!
//! A table of a harvested system is as plain as any other; whoever writes it (the command
//! line, the app, a report) shows [`crate::harvest::CAUTION`] beside it.

use crate::analysis::Analysis;
use crate::compiled::{Backend, Formulas};
use crate::harvest::{Harvest, HarvestError};
use crate::linear::{Complex, Stability};
use crate::model::{Model, ModelSpec};
use crate::scenario::Scenario;
use crate::scene::Scene;
use crate::sweep::{StabilityMap, Sweep};

/// The line end of every row (RFC 4180).
pub const LINE_END: &str = "\r\n";

/// Units for column headers; an empty string means "no unit given".
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Units {
    /// Unit of each variable, in variable order.
    pub variables: [String; 2],
    /// Unit of time (scenarios do not record one yet; empty by default).
    pub time: String,
    /// Units of parameters, by name.
    pub parameters: Vec<(String, String)>,
}

impl Units {
    /// The units a scenario gives its variables and parameters.
    pub fn from_scenario(scenario: &Scenario) -> Self {
        Self {
            variables: [
                scenario.variables[0].unit.clone(),
                scenario.variables[1].unit.clone(),
            ],
            time: String::new(),
            parameters: scenario
                .parameters
                .iter()
                .map(|p| (p.name.clone(), p.unit.clone()))
                .collect(),
        }
    }

    /// The unit of a parameter, or "" when not known.
    pub fn parameter(&self, name: &str) -> &str {
        self.parameters
            .iter()
            .find(|(n, _)| n == name)
            .map_or("", |(_, u)| u.as_str())
    }
}

/// A column heading: `name`, or `name (unit)` when a unit is given.
pub fn heading(name: &str, unit: &str) -> String {
    let unit = unit.trim();
    if unit.is_empty() {
        name.to_owned()
    } else {
        format!("{name} ({unit})")
    }
}

/// A number as its shortest round-trip decimal: plain for 1e-5 ≤ |v| < 1e16 (and zero),
/// exponent notation otherwise, so neither a tiny nor a huge value turns into hundreds of
/// digits. Both forms parse back to exactly `v` with any correct float parser.
pub fn number(v: f64) -> String {
    let a = v.abs();
    if v == 0.0 || !v.is_finite() || (1e-5..1e16).contains(&a) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

/// `text` as one CSV field: quoted, with quotes doubled, when it holds a comma, a double
/// quote, a CR or an LF (RFC 4180 §2.6–2.7), else as it is.
pub fn field(text: &str) -> String {
    if text.contains([',', '"', '\r', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_owned()
    }
}

/// Builds a CSV document row by row.
#[derive(Clone, Debug, Default)]
struct Table {
    out: String,
    columns: usize,
}

impl Table {
    fn new(header: &[String]) -> Self {
        let mut t = Table {
            out: String::new(),
            columns: header.len(),
        };
        t.text_row(header.iter().map(String::as_str));
        t
    }

    fn text_row<'a>(&mut self, cells: impl IntoIterator<Item = &'a str>) {
        let mut n = 0;
        for (i, c) in cells.into_iter().enumerate() {
            if i > 0 {
                self.out.push(',');
            }
            self.out.push_str(&field(c));
            n += 1;
        }
        debug_assert_eq!(n, self.columns, "every row has the header's width");
        self.out.push_str(LINE_END);
    }

    fn row(&mut self, cells: &[Cell]) {
        let texts: Vec<String> = cells.iter().map(Cell::text).collect();
        self.text_row(texts.iter().map(String::as_str));
    }

    fn finish(self) -> String {
        self.out
    }
}

/// One cell of a data row.
enum Cell {
    Num(f64),
    Int(usize),
    Text(String),
    Empty,
}

impl Cell {
    fn text(&self) -> String {
        match self {
            Cell::Num(v) => number(*v),
            Cell::Int(i) => i.to_string(),
            Cell::Text(s) => s.clone(),
            Cell::Empty => String::new(),
        }
    }
}

/// Why a table could not be made.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ExportError {
    /// A harvest rule could not be turned into a catch formula.
    #[error(transparent)]
    Harvest(#[from] HarvestError),
    /// A catch formula did not compile against the harvested model.
    #[error("catch of {species}: {message}")]
    Catch {
        /// The species (variable name).
        species: String,
        /// What went wrong.
        message: String,
    },
}

/// The catch per unit time of each harvested species as a function of the state, compiled
/// from the same formulas [`Harvest::apply`] subtracts from the rates.
#[derive(Clone, Debug)]
pub struct CatchRates {
    /// Compiled catch formula per species (`None` where unharvested).
    code: [Option<Formulas>; 2],
    /// The harvested model's parameter values (the catch formulas' inputs).
    params: Vec<f64>,
    /// Variable names.
    names: [String; 2],
}

impl CatchRates {
    /// The catch rates of `harvest` on `base` (the unharvested specification), evaluated with
    /// the parameter values of `harvested` (the model [`Harvest::apply`] made from `base`).
    pub fn new(
        harvested: &Model,
        harvest: &Harvest,
        base: &ModelSpec,
    ) -> Result<Self, ExportError> {
        let [xn, yn] = harvested.variables();
        let mut inputs: Vec<&str> = vec![xn, yn];
        inputs.extend(harvested.spec().parameters.iter().map(|p| p.name.as_str()));
        let mut code = [None, None];
        for (i, slot) in code.iter_mut().enumerate() {
            let Some((text, _)) = harvest.catch_term(base, i)? else {
                continue;
            };
            let fail = |message: String| ExportError::Catch {
                species: base.variables[i].clone(),
                message,
            };
            let expr = crate::expr::parse(&text).map_err(|e| fail(e.to_string()))?;
            let f = Formulas::compile(&[&expr], &inputs, 2, Backend::Auto)
                .map_err(|e| fail(e.to_string()))?;
            *slot = Some(f);
        }
        Ok(Self {
            code,
            params: harvested.params().to_vec(),
            names: [xn.to_owned(), yn.to_owned()],
        })
    }

    /// Indices of the harvested species, in variable order.
    pub fn species(&self) -> Vec<usize> {
        (0..2).filter(|&i| self.code[i].is_some()).collect()
    }

    /// Whether any species is harvested.
    pub fn is_active(&self) -> bool {
        self.code.iter().any(Option::is_some)
    }

    /// Catch per unit time of each species at (x, y); 0 for an unharvested one.
    pub fn at(&self, x: f64, y: f64) -> [f64; 2] {
        let mut c = [0.0; 2];
        for (ci, code) in c.iter_mut().zip(&self.code) {
            if let Some(code) = code {
                let mut out = [0.0];
                code.eval(&[x, y], &self.params, &mut out);
                *ci = out[0];
            }
        }
        c
    }

    fn headings(&self, units: Option<&Units>) -> Vec<String> {
        self.species()
            .into_iter()
            .map(|i| {
                let unit = units
                    .map(|u| u.variables[i].trim())
                    .filter(|u| !u.is_empty())
                    .map(|u| {
                        let t = units.map_or("", |u| u.time.trim());
                        if t.is_empty() {
                            format!("{u} per unit time")
                        } else {
                            format!("{u} per {t}")
                        }
                    })
                    .unwrap_or_default();
                heading(&format!("catch of {}", self.names[i]), &unit)
            })
            .collect()
    }
}

/// The header of an orbit table: time, both variables, then the catch of each harvested
/// species.
fn orbit_header(
    variables: [&str; 2],
    catch: Option<&CatchRates>,
    units: Option<&Units>,
) -> Vec<String> {
    let u = |i: usize| units.map_or("", |u| u.variables[i].as_str());
    let mut h = vec![
        heading("t", units.map_or("", |u| u.time.as_str())),
        heading(variables[0], u(0)),
        heading(variables[1], u(1)),
    ];
    if let Some(c) = catch {
        h.extend(c.headings(units));
    }
    h
}

fn orbit_cells(t: f64, p: [f64; 2], catch: Option<&CatchRates>) -> Vec<Cell> {
    let mut cells = vec![Cell::Num(t), Cell::Num(p[0]), Cell::Num(p[1])];
    if let Some(c) = catch {
        let v = c.at(p[0], p[1]);
        cells.extend(c.species().into_iter().map(|i| Cell::Num(v[i])));
    }
    cells
}

/// One orbit as CSV: columns `t`, the two variables and, with `catch`, the catch per unit
/// time of each harvested species at that state. `rows` are `(t, [x, y])`, e.g. from
/// [`crate::orbit::OrbitReport::rows`] or a trajectory's `resample`.
pub fn orbit_csv(
    variables: [&str; 2],
    rows: &[(f64, [f64; 2])],
    catch: Option<&CatchRates>,
    units: Option<&Units>,
) -> String {
    let mut t = Table::new(&orbit_header(variables, catch, units));
    for &(time, p) in rows {
        t.row(&orbit_cells(time, p, catch));
    }
    t.finish()
}

/// Every orbit of a scene as one CSV: a first column `orbit` (1, 2, … in the scene's order),
/// then the columns of [`orbit_csv`], one row per drawn point.
pub fn scene_orbits_csv(
    scene: &Scene,
    catch: Option<&CatchRates>,
    units: Option<&Units>,
) -> String {
    let [xn, yn] = [scene.variables[0].as_str(), scene.variables[1].as_str()];
    let mut header = vec!["orbit".to_owned()];
    header.extend(orbit_header([xn, yn], catch, units));
    let mut t = Table::new(&header);
    for (k, o) in scene.orbits.iter().enumerate() {
        for (&time, &p) in o.times.iter().zip(&o.points) {
            let mut cells = vec![Cell::Int(k + 1)];
            cells.extend(orbit_cells(time, p, catch));
            t.row(&cells);
        }
    }
    t.finish()
}

fn eigen_cells(e: &[Complex; 2]) -> [Cell; 4] {
    [
        Cell::Num(e[0].re),
        Cell::Num(e[0].im),
        Cell::Num(e[1].re),
        Cell::Num(e[1].im),
    ]
}

const EIGEN_HEADINGS: [&str; 4] = [
    "eigenvalue 1 re",
    "eigenvalue 1 im",
    "eigenvalue 2 re",
    "eigenvalue 2 im",
];

/// The equilibria as CSV, one row each in the analysis' order: position, residual, trace,
/// determinant, discriminant, both eigenvalues (real and imaginary parts), the linear class,
/// the nonlinear verdict on a linear centre (empty otherwise), what decided it, and the plain
/// sentence.
pub fn equilibria_csv(variables: [&str; 2], analysis: &Analysis, units: Option<&Units>) -> String {
    let u = |i: usize| units.map_or("", |u| u.variables[i].as_str());
    let mut header = vec![
        heading(variables[0], u(0)),
        heading(variables[1], u(1)),
        "residual".to_owned(),
        "trace".to_owned(),
        "determinant".to_owned(),
        "discriminant".to_owned(),
    ];
    header.extend(EIGEN_HEADINGS.map(str::to_owned));
    header.extend(["class", "verdict", "decided by", "explanation"].map(str::to_owned));
    let mut t = Table::new(&header);
    for e in &analysis.equilibria {
        let l = &e.linear;
        let mut cells = vec![
            Cell::Num(e.x),
            Cell::Num(e.y),
            Cell::Num(e.residual),
            Cell::Num(l.trace),
            Cell::Num(l.det),
            Cell::Num(l.discriminant),
        ];
        cells.extend(eigen_cells(&l.eigenvalues));
        cells.push(Cell::Text(l.class.as_str().to_owned()));
        match &e.nonlinear {
            Some(v) => {
                cells.push(Cell::Text(v.verdict.as_str().to_owned()));
                cells.push(Cell::Text(decided_by_name(&v.decided_by).to_owned()));
            }
            None => {
                cells.push(Cell::Empty);
                cells.push(Cell::Empty);
            }
        }
        cells.push(Cell::Text(e.sentence()));
        t.row(&cells);
    }
    t.finish()
}

/// The short name of the test behind a verdict.
pub fn decided_by_name(d: &crate::verdict::DecidedBy) -> &'static str {
    use crate::verdict::DecidedBy;
    match d {
        DecidedBy::FirstIntegral { .. } => "first_integral",
        DecidedBy::ReversingSymmetry { .. } => "reversing_symmetry",
        DecidedBy::LyapunovCoefficient { .. } => "lyapunov_coefficient",
        DecidedBy::ReturnMap { .. } => "return_map",
        DecidedBy::Nothing { .. } => "nothing",
    }
}

/// The branches of a sweep as CSV, one row per branch point: `branch` (1, 2, … in the
/// sweep's order), the swept parameter, the position, the class and both eigenvalues.
pub fn sweep_csv(variables: [&str; 2], sweep: &Sweep, units: Option<&Units>) -> String {
    let u = |i: usize| units.map_or("", |u| u.variables[i].as_str());
    let mut header = vec![
        "branch".to_owned(),
        heading(
            &sweep.param,
            units.map_or("", |u| u.parameter(&sweep.param)),
        ),
        heading(variables[0], u(0)),
        heading(variables[1], u(1)),
        "class".to_owned(),
    ];
    header.extend(EIGEN_HEADINGS.map(str::to_owned));
    let mut t = Table::new(&header);
    for (k, b) in sweep.branches.iter().enumerate() {
        for p in &b.points {
            let mut cells = vec![
                Cell::Int(k + 1),
                Cell::Num(p.value),
                Cell::Num(p.x),
                Cell::Num(p.y),
                Cell::Text(p.linear.class.as_str().to_owned()),
            ];
            cells.extend(eigen_cells(&p.linear.eigenvalues));
            t.row(&cells);
        }
    }
    t.finish()
}

/// The located bifurcations of a sweep as CSV: kind (`fold`, `transcritical`, `hopf`), the
/// swept parameter's value and the position.
pub fn bifurcations_csv(variables: [&str; 2], sweep: &Sweep, units: Option<&Units>) -> String {
    let u = |i: usize| units.map_or("", |u| u.variables[i].as_str());
    let header = vec![
        "kind".to_owned(),
        heading(
            &sweep.param,
            units.map_or("", |u| u.parameter(&sweep.param)),
        ),
        heading(variables[0], u(0)),
        heading(variables[1], u(1)),
    ];
    let mut t = Table::new(&header);
    for b in &sweep.bifurcations {
        t.row(&[
            Cell::Text(b.kind.as_str().to_owned()),
            Cell::Num(b.value),
            Cell::Num(b.x),
            Cell::Num(b.y),
        ]);
    }
    t.finish()
}

/// A two-parameter stability map as CSV, one row per grid cell: both parameters' values, how
/// many equilibria were found there, how many of them are stable, and their classes
/// (separated by `;`, in the map's order: by x, then y).
pub fn stability_map_csv(map: &StabilityMap, units: Option<&Units>) -> String {
    let unit = |i: usize| units.map_or("", |u| u.parameter(&map.params[i]));
    let header = vec![
        heading(&map.params[0], unit(0)),
        heading(&map.params[1], unit(1)),
        "equilibria".to_owned(),
        "stable".to_owned(),
        "classes".to_owned(),
    ];
    let mut t = Table::new(&header);
    let columns = map.values[1].len();
    for (i, a) in map.values[0].iter().enumerate() {
        for (j, b) in map.values[1].iter().enumerate() {
            let Some(classes) = map.cells.get(i * columns + j) else {
                continue;
            };
            let stable = classes
                .iter()
                .filter(|c| c.stability() == Stability::Stable)
                .count();
            let names: Vec<&str> = classes.iter().map(|c| c.as_str()).collect();
            t.row(&[
                Cell::Num(*a),
                Cell::Num(*b),
                Cell::Int(classes.len()),
                Cell::Int(stable),
                Cell::Text(names.join(";")),
            ]);
        }
    }
    t.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyze;
    use crate::harvest::HarvestRule;
    use crate::orbit::{OrbitOptions, run_orbit};
    use crate::sweep::{SweepOptions, sweep};
    use crate::test_support::{builtin, model};

    /// Reads CSV text with the `csv` crate (RFC 4180 reader): the header and the records.
    fn read(text: &str) -> (Vec<String>, Vec<Vec<String>>) {
        let mut r = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(text.as_bytes());
        let header = r
            .headers()
            .expect("header")
            .iter()
            .map(str::to_owned)
            .collect();
        let rows = r
            .records()
            .map(|rec| rec.expect("record").iter().map(str::to_owned).collect())
            .collect();
        (header, rows)
    }

    fn f(s: &str) -> f64 {
        s.parse().unwrap_or_else(|_| panic!("'{s}' is a number"))
    }

    #[test]
    fn numbers_read_back_bit_for_bit() {
        // Shortest round-trip printing (Steele & White / Ryu): parse(print(v)) == v exactly.
        let mut values = vec![
            0.0,
            -0.0,
            0.1,
            1.0 / 3.0,
            2.0_f64.sqrt(),
            1e-300,
            5e-324,
            f64::MAX,
            f64::MIN_POSITIVE,
            -123456.789e10,
            1e16_f64.next_down(),
            1e16,
            1e-5,
            9.99e-6,
        ];
        // A deterministic spread of awkward values (xorshift bits reinterpreted as f64).
        let mut s: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..2000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let v = f64::from_bits(s);
            if v.is_finite() {
                values.push(v);
            }
        }
        for v in values {
            let text = number(v);
            let back: f64 = text.parse().expect("parses");
            assert_eq!(back.to_bits(), v.to_bits(), "{v:e} printed as {text}");
            assert!(text.len() <= 24, "{text} is short");
        }
        assert_eq!(number(0.5), "0.5");
        assert_eq!(number(1e-9), "1e-9");
        assert_eq!(number(f64::NAN), "NaN");
        assert_eq!(number(f64::NEG_INFINITY), "-inf");
    }

    #[test]
    fn odd_names_are_quoted_as_rfc_4180_says() {
        // RFC 4180 §2.6–2.7: fields with commas, quotes or line breaks are enclosed in double
        // quotes, and a quote inside is doubled.
        assert_eq!(field("plain"), "plain");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("two\nlines"), "\"two\nlines\"");
        let units = Units {
            variables: ["fish, adult".into(), "birds \"pairs\"".into()],
            time: "year".into(),
            parameters: Vec::new(),
        };
        let text = orbit_csv(["x", "y"], &[(0.0, [1.0, 2.0])], None, Some(&units));
        let (header, rows) = read(&text);
        assert_eq!(
            header,
            vec!["t (year)", "x (fish, adult)", "y (birds \"pairs\")"]
        );
        assert_eq!(rows, vec![vec!["0", "1", "2"]]);
        assert!(text.ends_with("\r\n"), "rows end in CRLF");
        assert!(!text.starts_with('#'), "no comment line");
    }

    #[test]
    fn an_orbit_table_reads_back_to_the_orbit_and_its_catch() {
        // A logistic stock under proportional harvest: catch = q·E·x (the rule's definition).
        let base = crate::model::ModelSpec {
            name: "t".into(),
            variables: ["x".into(), "y".into()],
            rates: ["r*x*(1 - x/K)".into(), "-y".into()],
            parameters: vec![
                crate::model::Parameter::new("r", 1.0),
                crate::model::Parameter::new("K", 10.0),
            ],
            invariant: None,
            window: crate::model::Window::new(0.0, 12.0, 0.0, 2.0).expect("window"),
        };
        let harvest = Harvest {
            rules: [
                HarvestRule::Proportional {
                    effort: 0.3,
                    catchability: 0.5,
                },
                HarvestRule::None,
            ],
            ..Harvest::default()
        };
        let m = Model::new(&harvest.apply(&base).expect("applies")).expect("model");
        let catch = CatchRates::new(&m, &harvest, &base).expect("catch");
        assert_eq!(catch.species(), vec![0]);
        let report = run_orbit(
            &m,
            [2.0, 1.0],
            &OrbitOptions {
                t_end: 5.0,
                ..OrbitOptions::default()
            },
        )
        .expect("orbit");
        let rows: Vec<(f64, [f64; 2])> = report
            .rows(0.25)
            .into_iter()
            .map(|[t, x, y]| (t, [x, y]))
            .collect();
        let units = Units {
            variables: ["t fish".into(), String::new()],
            ..Units::default()
        };
        let text = orbit_csv(["x", "y"], &rows, Some(&catch), Some(&units));
        let (header, back) = read(&text);
        assert_eq!(
            header,
            vec!["t", "x (t fish)", "y", "catch of x (t fish per unit time)"]
        );
        assert_eq!(back.len(), rows.len());
        assert_eq!(back.len(), 21);
        for (r, &(t, [x, y])) in back.iter().zip(&rows) {
            assert_eq!(f(&r[0]).to_bits(), t.to_bits());
            assert_eq!(f(&r[1]).to_bits(), x.to_bits());
            assert_eq!(f(&r[2]).to_bits(), y.to_bits());
            let expected = 0.5 * 0.3 * x;
            assert!((f(&r[3]) - expected).abs() <= 1e-15 * expected.abs().max(1.0));
        }
    }

    #[test]
    fn the_equilibria_table_holds_position_eigenvalues_class_and_verdict() {
        let m = builtin("lotka-volterra");
        let a = analyze(&m);
        let text = equilibria_csv(m.variables(), &a, None);
        let (header, rows) = read(&text);
        let [xn, yn] = m.variables();
        assert_eq!(header[0], xn);
        assert_eq!(header[1], yn);
        assert_eq!(header.len(), 14);
        assert_eq!(
            header[10..],
            ["class", "verdict", "decided by", "explanation"]
        );
        assert_eq!(rows.len(), a.equilibria.len());
        // Closed form (common practice): (0, 0) is a saddle, (c/γ, a/α) a centre with
        // eigenvalues ±i·sqrt(a·c); the first-integral test decides it.
        assert_eq!(rows[0][10], "saddle");
        assert_eq!(rows[0][11], "");
        assert_eq!(rows[1][10], "center");
        assert_eq!(rows[1][11], "center");
        assert_eq!(rows[1][12], "first_integral");
        for (r, e) in rows.iter().zip(&a.equilibria) {
            assert_eq!(f(&r[0]).to_bits(), e.x.to_bits());
            assert_eq!(f(&r[1]).to_bits(), e.y.to_bits());
            assert_eq!(f(&r[3]).to_bits(), e.linear.trace.to_bits());
            assert_eq!(f(&r[4]).to_bits(), e.linear.det.to_bits());
            assert_eq!(f(&r[7]).to_bits(), e.linear.eigenvalues[0].im.to_bits());
            assert_eq!(r[13], e.sentence());
        }
    }

    #[test]
    fn sweep_tables_list_branch_points_and_bifurcations() {
        // Logistic growth with constant quota H: the fold at H = rK/4 (Schaefer 1954; Clark,
        // Mathematical Bioeconomics, §1.3, from memory).
        let m = model(
            ["r*x*(1 - x/K) - H", "-y"],
            &[("r", 1.0), ("K", 10.0), ("H", 1.0)],
            None,
            [-1.0, 12.0, -1.0, 1.0],
        );
        let s = sweep(
            &m,
            &SweepOptions::new("H", 0.5, 4.0, 36),
            &|| false,
            &|_| {},
        )
        .expect("sweep");
        let units = Units {
            parameters: vec![("H".into(), "t/year".into())],
            ..Units::default()
        };
        let (header, rows) = read(&sweep_csv(["x", "y"], &s, Some(&units)));
        assert_eq!(header[..5], ["branch", "H (t/year)", "x", "y", "class"]);
        let total: usize = s.branches.iter().map(|b| b.points.len()).sum();
        assert_eq!(rows.len(), total);
        let first = &s.branches[0].points[0];
        assert_eq!(rows[0][0], "1");
        assert_eq!(f(&rows[0][1]).to_bits(), first.value.to_bits());
        assert_eq!(f(&rows[0][2]).to_bits(), first.x.to_bits());
        let (header, rows) = read(&bifurcations_csv(["x", "y"], &s, Some(&units)));
        assert_eq!(header, ["kind", "H (t/year)", "x", "y"]);
        let fold = rows.iter().find(|r| r[0] == "fold").expect("a fold");
        assert!((f(&fold[1]) - 2.5).abs() < 1e-9, "fold at rK/4 = 2.5");
        assert!((f(&fold[2]) - 5.0).abs() < 1e-6, "at x = K/2");
    }

    #[test]
    fn the_stability_map_table_counts_the_equilibria_of_every_cell() {
        // Logistic growth with constant quota H has two equilibria, a stable node above K/2
        // and a saddle below it, for H < rK/4 and none past it (Schaefer 1954; common
        // practice).
        let m = model(
            ["r*x*(1 - x/K) - H", "-y"],
            &[("r", 1.0), ("K", 10.0), ("H", 1.0)],
            None,
            [-1.0, 12.0, -1.0, 1.0],
        );
        let map = crate::sweep::stability_map(
            &m,
            ("H", 0.5, 4.0, 5),
            ("r", 1.0, 2.0, 3),
            &|| false,
            &|_| {},
        )
        .expect("map");
        let units = Units {
            parameters: vec![("H".into(), "t/year".into())],
            ..Units::default()
        };
        let (header, rows) = read(&stability_map_csv(&map, Some(&units)));
        assert_eq!(
            header,
            ["H (t/year)", "r", "equilibria", "stable", "classes"]
        );
        assert_eq!(rows.len(), 15);
        for row in &rows {
            let (h, r) = (f(&row[0]), f(&row[1]));
            let below = h < r * 10.0 / 4.0;
            assert_eq!(row[2], if below { "2" } else { "0" }, "{row:?}");
            assert_eq!(row[3], if below { "1" } else { "0" }, "{row:?}");
            if below {
                assert_eq!(row[4], "saddle;stable_node", "{row:?}");
            }
        }
        assert_eq!(f(&rows[0][0]).to_bits(), map.values[0][0].to_bits());
    }

    #[test]
    fn scene_orbits_are_numbered() {
        let m = builtin("lotka-volterra");
        let req = crate::scene::SceneRequest {
            field: None,
            nullcline_grid: None,
            contours: None,
            separatrices: false,
            limit_cycles: false,
            seeds: vec![
                crate::scene::Seed {
                    at: [10.0, 5.0],
                    direction: crate::scene::TimeDirection::Forward,
                },
                crate::scene::Seed {
                    at: [30.0, 10.0],
                    direction: crate::scene::TimeDirection::Forward,
                },
            ],
            orbit_time: 2.0,
            ..crate::scene::SceneRequest::default()
        };
        let scene =
            crate::scene::build_scene(&m, &req, &crate::scene::Cancel::new()).expect("scene");
        let (header, rows) = read(&scene_orbits_csv(&scene, None, None));
        assert_eq!(header[0], "orbit");
        assert_eq!(header[1], "t");
        let n0 = scene.orbits[0].points.len();
        assert_eq!(rows.len(), n0 + scene.orbits[1].points.len());
        assert_eq!(rows[0][0], "1");
        assert_eq!(rows[n0][0], "2");
        assert_eq!(f(&rows[n0][2]), 30.0);
    }
}
