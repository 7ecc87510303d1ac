//! `quarry yield` and the additions to `quarry sweep` (cycles, the branch diagram) against
//! closed forms, the JSON contract and the exit statuses.

use std::path::PathBuf;
use std::process::{Command, Output};

use serde_json::Value;

fn quarry(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_quarry"))
        .args(args)
        .output()
        .expect("quarry runs")
}

fn json_of(out: &Output) -> Value {
    assert!(
        out.status.success(),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("stdout is JSON")
}

fn temp(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("quarry-yield-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir.join(name)
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn f(v: &Value) -> f64 {
    v.as_f64().expect("a number")
}

/// The built-in Schaefer stock (r = 0.5, K = 100) with its own effort at 0 and q = 0.01.
const SCHAEFER: [&str; 13] = [
    "yield",
    "schaefer",
    "--set",
    "E=0",
    "--species",
    "x",
    "--rule",
    "effort",
    "--catchability",
    "0.01",
    "--from",
    "0",
    "--to",
];

#[test]
fn yield_json_gives_schaefer_msy_collapse_and_gordon_open_access() {
    let mut args = SCHAEFER.to_vec();
    args.extend([
        "70", "--steps", "36", "--price", "2", "--cost", "0.8", "--json",
    ]);
    let v = json_of(&quarry(&args));
    assert_eq!(v["species"], "x");
    assert_eq!(v["rule"], "effort");
    assert_eq!(v["param"], "E_x");
    let points = v["points"].as_array().expect("points");
    assert_eq!(points.len(), 36);
    for key in [
        "value",
        "status",
        "stable",
        "stock",
        "catch",
        "profit",
        "collapsed",
    ] {
        assert!(points[3].get(key).is_some(), "{key}");
    }
    // Schaefer 1954: MSY = rK/4 = 12.5 at E = r/(2q) = 25; collapse at E = r/q = 50.
    assert!(rel(f(&v["msy"]["catch"]), 12.5) < 1e-10, "{}", v["msy"]);
    assert!(rel(f(&v["msy"]["value"]), 25.0) < 1e-8, "{}", v["msy"]);
    assert_eq!(v["collapse"]["kind"], "transcritical");
    assert!(rel(f(&v["collapse"]["value"]), 50.0) < 1e-8);
    // Gordon 1954: x∞ = c/(pq) = 40 and E∞ = (r/q)(1 − c/(pqK)) = 30; MEY at
    // E = (r/(2q))(1 − c/(pqK)) = 15 (Clark, Mathematical Bioeconomics, from memory; derived).
    assert!(rel(f(&v["open_access"]["value"]), 30.0) < 1e-8);
    assert!(rel(f(&v["open_access"]["stock"][0]), 40.0) < 1e-8);
    assert!(rel(f(&v["mey"]["value"]), 15.0) < 1e-8);
    assert!(
        v["caution"]
            .as_str()
            .is_some_and(|c| c.contains("not a stock assessment"))
    );
}

#[test]
fn yield_text_names_msy_collapse_and_the_caution() {
    let mut args = SCHAEFER.to_vec();
    args.extend(["80", "--steps", "41"]);
    let out = quarry(&args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("MSY          12.5 at effort 25"), "{text}");
    assert!(
        text.contains("collapse     transcritical at effort 50"),
        "{text}"
    );
    assert!(text.contains("not a stock assessment"), "{text}");
}

#[test]
fn quota_yield_collapses_at_the_fold_rk_over_4() {
    // Common practice: a logistic stock under a constant quota collapses at H = rK/4 = 10.
    let out = quarry(&[
        "yield",
        "--var",
        "x=r*x*(1 - x/K)",
        "--var",
        "y=-y",
        "--param",
        "r=0.8",
        "--param",
        "K=50",
        "--window",
        "0,60,-1,1",
        "--species",
        "x",
        "--rule",
        "quota",
        "--from",
        "0",
        "--to",
        "15",
        "--steps",
        "31",
        "--json",
    ]);
    let v = json_of(&out);
    assert_eq!(v["collapse"]["kind"], "fold");
    assert!(
        rel(f(&v["collapse"]["value"]), 10.0) < 1e-8,
        "{}",
        v["collapse"]
    );
    assert_eq!(v["msy"]["at_collapse"], true);
    assert!(v["open_access"].is_null() && v["mey"].is_null());
    // Below the fold the equilibrium catch is the quota.
    for p in v["points"].as_array().expect("points") {
        let h = f(&p["value"]);
        if h < 9.99 {
            assert!((f(&p["catch"]) - h).abs() < 1e-9, "{p}");
        }
    }
}

#[test]
fn yield_draws_svg_and_png_figures() {
    let svg = temp("y.svg");
    let png = temp("y.png");
    for (path, w, h) in [(&svg, "900", "650"), (&png, "480", "320")] {
        let mut args = SCHAEFER.to_vec();
        let p = path.to_str().expect("utf-8 path");
        args.extend([
            "70", "--steps", "15", "--out", p, "--width", w, "--height", h,
        ]);
        let out = quarry(&args);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let text = std::fs::read_to_string(&svg).expect("svg written");
    roxmltree::Document::parse(&text).expect("well-formed SVG");
    assert!(text.contains("not a stock assessment"));
    let pix = resvg::tiny_skia::Pixmap::decode_png(&std::fs::read(&png).expect("png written"))
        .expect("decodes");
    assert_eq!((pix.width(), pix.height()), (480, 320));
}

#[test]
fn yield_refuses_bad_input_with_status_2() {
    let base = SCHAEFER.to_vec();
    let cases: Vec<Vec<&str>> = vec![
        [base.clone(), vec!["-1"]].concat(),
        [base.clone(), vec!["70", "--steps", "1"]].concat(),
        [base.clone(), vec!["70", "--price", "-2"]].concat(),
        [base.clone(), vec!["70", "--out", "/tmp/x.gif"]].concat(),
        [base.clone(), vec!["70", "--taper", "1"]].concat(),
        {
            let mut a = base.clone();
            a[5] = "cod";
            a.push("70");
            a
        },
        {
            let mut a = base.clone();
            a[9] = "0";
            a.push("70");
            a
        },
    ];
    for args in cases {
        let out = quarry(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert!(!out.stderr.is_empty());
    }
}

#[test]
fn sweep_json_keeps_its_contract_and_adds_cycles_past_hopf() {
    // Rosenzweig 1971: the built-in Holling II model has its Hopf point at K_H = 3; past it an
    // attracting cycle surrounds x* = 0.5.
    let png = temp("s.png");
    let out = quarry(&[
        "sweep",
        "holling-ii",
        "--param",
        "K",
        "--from",
        "1",
        "--to",
        "6",
        "--steps",
        "26",
        "--cycles",
        "5",
        "--json",
        "--out",
        png.to_str().expect("utf-8"),
    ]);
    let v = json_of(&out);
    let keys: Vec<&str> = v
        .as_object()
        .expect("object")
        .keys()
        .map(String::as_str)
        .collect();
    for k in ["param", "points", "bifurcations", "cycles"] {
        assert!(keys.contains(&k), "{keys:?}");
    }
    for k in ["x", "y", "class", "eigenvalues"] {
        assert!(!v["points"][0]["equilibria"][0][k].is_null());
    }
    let cycles = v["cycles"].as_array().expect("cycles");
    assert_eq!(cycles.len(), 5);
    for c in cycles {
        assert!(f(&c["value"]) > 3.0 && c["stable"] == true, "{c}");
        assert!(f(&c["min"][0]) < 0.5 && f(&c["max"][0]) > 0.5, "{c}");
        assert!(f(&c["period"]) > 0.0);
    }
    let pix = resvg::tiny_skia::Pixmap::decode_png(&std::fs::read(&png).expect("png written"))
        .expect("decodes");
    assert_eq!((pix.width(), pix.height()), (900, 650));
    // Off: no cycles.
    let out = quarry(&[
        "sweep",
        "holling-ii",
        "--param",
        "K",
        "--from",
        "1",
        "--to",
        "6",
        "--steps",
        "11",
        "--cycles",
        "0",
        "--json",
    ]);
    let v = json_of(&out);
    assert_eq!(v["cycles"].as_array().map(Vec::len), Some(0));
}

#[test]
fn a_scenario_harvest_applies_and_the_command_line_overrides_it() {
    // A scenario with a quota of 5 on a logistic stock (r = 1, K = 40): the upper equilibrium
    // is x = (K/2)(1 + √(1 − 4H/(rK))) = 20(1 + √0.5) (closed form, common practice).
    let path = temp("quota.ron");
    let text = r#"(
    version: 1,
    title: "Invented test stock",
    variables: ((name: "x"), (name: "y")),
    rates: ("r*x*(1 - x/K)", "-y"),
    parameters: [(name: "r", value: 1.0), (name: "K", value: 40.0)],
    window: (x_min: 0.0, x_max: 50.0, y_min: -1.0, y_max: 1.0),
    harvest: (rules: (Quota(quota: 5.0, taper: None), None)),
)
"#;
    std::fs::write(&path, text).expect("write");
    let p = path.to_str().expect("utf-8");
    let v = json_of(&quarry(&["analyze", p, "--json"]));
    let xs: Vec<f64> = v["equilibria"]
        .as_array()
        .expect("list")
        .iter()
        .map(|e| f(&e["x"]))
        .collect();
    let want = 20.0 * (1.0 + 0.5_f64.sqrt());
    assert!(xs.iter().any(|x| rel(*x, want) < 1e-9), "{xs:?}");
    // --harvest x:none removes the scenario's rule: the stock sits at K.
    let v = json_of(&quarry(&["analyze", p, "--harvest", "x:none", "--json"]));
    let xs: Vec<f64> = v["equilibria"]
        .as_array()
        .expect("list")
        .iter()
        .map(|e| f(&e["x"]))
        .collect();
    assert!(xs.iter().any(|x| rel(*x, 40.0) < 1e-9), "{xs:?}");
    // --harvest overrides it with another quota: H = 7.5 gives 20(1 + √0.25) = 30.
    let v = json_of(&quarry(&[
        "analyze",
        p,
        "--harvest",
        "x:quota:H=7.5",
        "--json",
    ]));
    let xs: Vec<f64> = v["equilibria"]
        .as_array()
        .expect("list")
        .iter()
        .map(|e| f(&e["x"]))
        .collect();
    assert!(xs.iter().any(|x| rel(*x, 30.0) < 1e-9), "{xs:?}");
    // quarry fmt keeps the harvest and writes it canonically.
    let out = quarry(&["fmt", p]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let formatted = std::fs::read_to_string(&path).expect("read");
    assert!(
        formatted.contains("Quota(") && formatted.contains("quota: 5.0"),
        "{formatted}"
    );
    let out = quarry(&["check", p]);
    assert!(out.status.success());
}
