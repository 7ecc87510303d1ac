//! The `quarry` command line against its contract: JSON fields, exit statuses, messages.

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

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

const LV: [&str; 12] = [
    "--var",
    "x=a*x - alpha*x*y",
    "--var",
    "y=-c*y + gamma*x*y",
    "--param",
    "a=1",
    "--param",
    "alpha=0.1",
    "--param",
    "c=1.5",
    "--param",
    "gamma=0.075",
];

fn with(base: &[&'static str], extra: &[&'static str]) -> Vec<&'static str> {
    base.iter().chain(extra).copied().collect()
}

#[test]
fn analyze_json_follows_the_contract() {
    let out = quarry(&with(
        &["analyze"],
        &with(&LV, &["--window", "0,40,0,20", "--json"]),
    ));
    let v = json_of(&out);
    let eq = v["equilibria"].as_array().expect("equilibria");
    assert_eq!(eq.len(), 2);
    // Closed form (common practice): (0, 0) saddle, (c/γ, a/α) = (20, 10) linear centre.
    assert_eq!(eq[0]["class"], "saddle");
    assert!(eq[0]["nonlinear"].is_null());
    assert_eq!(eq[1]["class"], "center");
    assert!((eq[1]["x"].as_f64().expect("x") - 20.0).abs() < 1e-9);
    assert!((eq[1]["y"].as_f64().expect("y") - 10.0).abs() < 1e-9);
    assert_eq!(eq[1]["nonlinear"], "center");
    for key in ["jacobian", "trace", "det", "discriminant", "eigenvalues"] {
        assert!(!eq[1][key].is_null(), "{key}");
    }
    let j = &eq[1]["jacobian"];
    // ∂f/∂y = −α x* = −2 and ∂g/∂x = γ y* = 0.75.
    assert!((j[0][1].as_f64().expect("J12") + 2.0).abs() < 1e-12);
    assert!((j[1][0].as_f64().expect("J21") - 0.75).abs() < 1e-12);
    let ev = &eq[1]["eigenvalues"];
    assert!((ev[0][1].as_f64().expect("im").abs() - 1.5_f64.sqrt()).abs() < 1e-12);
    assert!((eq[1]["discriminant"].as_f64().expect("disc") + 6.0).abs() < 1e-12);
}

#[test]
fn a_bad_formula_names_the_formula_and_column_and_exits_2() {
    let out = quarry(&[
        "analyze", "--var", "x=a*x -", "--var", "y=y", "--param", "a=1",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("rate of x"), "{err}");
    assert!(err.contains("column"), "{err}");
    assert!(out.stdout.is_empty());

    let out = quarry(&["analyze", "--var", "x=foo*x", "--var", "y=y"]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("'foo'") && err.contains("column 1"), "{err}");
}

#[test]
fn bad_options_exit_2_with_a_message() {
    for args in [
        vec!["analyze", "--var", "x=x"],
        vec![
            "analyze", "--var", "x=x", "--var", "y=y", "--window", "1,0,0,1",
        ],
        vec![
            "analyze", "--var", "x=x", "--var", "y=y", "--window", "0,1,0",
        ],
        vec![
            "analyze", "--var", "x=x", "--var", "y=y", "--param", "a=nan",
        ],
        vec!["analyze", "no-such-model"],
        vec!["analyze", "lotka-volterra", "--set", "zeta=1"],
        vec!["orbit", "lotka-volterra", "--from", "1"],
        vec!["orbit", "lotka-volterra", "--from", "1,1", "--t-end", "0"],
        vec!["orbit", "lotka-volterra", "--from", "1,1", "--rtol", "-1"],
        vec!["orbit"],
    ] {
        let out = quarry(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert!(!stderr(&out).trim().is_empty(), "{args:?}");
        assert!(out.stdout.is_empty(), "{args:?}");
    }
}

#[test]
fn negative_numbers_are_accepted_after_options_both_ways() {
    let a = quarry(&with(
        &["analyze"],
        &with(&LV, &["--window", "-1,40,-1,20", "--json"]),
    ));
    let b = quarry(&with(
        &["analyze"],
        &with(&LV, &["--window=-1,40,-1,20", "--json"]),
    ));
    assert_eq!(json_of(&a), json_of(&b));
    let o = quarry(&[
        "orbit",
        "van-der-pol",
        "--from",
        "-1,0.5",
        "--t-end",
        "5",
        "--json",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o2 = quarry(&[
        "orbit",
        "van-der-pol",
        "--from=-1,0.5",
        "--t-end=5",
        "--json",
    ]);
    assert_eq!(json_of(&o), json_of(&o2));
}

#[test]
fn orbit_json_follows_the_contract() {
    let v = json_of(&quarry(&with(
        &["orbit"],
        &with(&LV, &["--from", "10,5", "--t-end", "50", "--json"]),
    )));
    for key in [
        "t_end",
        "steps",
        "rhs_evals",
        "final",
        "min",
        "max",
        "mean",
        "closed",
        "period",
        "lag_fraction",
        "invariant_drift",
        "stopped",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["stopped"], "t_end");
    assert_eq!(v["closed"], true);
    assert_eq!(v["t_end"], 50.0);
    // Closed form (common practice): the mean over whole periods is the equilibrium (20, 10).
    assert!((v["mean"][0].as_f64().expect("mean x") - 20.0).abs() < 1e-5);
    assert!((v["mean"][1].as_f64().expect("mean y") - 10.0).abs() < 1e-5);
    // No first integral was given on the command line.
    assert!(v["invariant_drift"].is_null());

    let with_h = json_of(&quarry(&with(
        &["orbit"],
        &with(
            &LV,
            &[
                "--from",
                "10,5",
                "--t-end",
                "50",
                "--json",
                "--invariant",
                "gamma*x - c*ln(x) + alpha*y - a*ln(y)",
            ],
        ),
    )));
    assert!(with_h["invariant_drift"].as_f64().expect("drift") < 1e-7);
}

#[test]
fn backward_orbits_and_clipping() {
    let v = json_of(&quarry(&[
        "orbit",
        "lotka-volterra",
        "--from",
        "10,5",
        "--t-end",
        "-20",
        "--json",
    ]));
    assert_eq!(v["t_end"], -20.0);
    assert_eq!(v["closed"], true);
    let v = json_of(&quarry(&[
        "orbit",
        "lotka-volterra",
        "--from",
        "10,5",
        "--t-end",
        "50",
        "--window",
        "0,30,0,30",
        "--clip",
        "--json",
    ]));
    assert_eq!(v["stopped"], "left_window");
    assert!(v["t_end"].as_f64().expect("t") < 50.0);
}

#[test]
fn blow_up_stops_with_a_reason_instead_of_hanging() {
    // dx/dt = x² from x = 1 blows up at t = 1 (closed form).
    let v = json_of(&quarry(&[
        "orbit", "--var", "x=x^2", "--var", "y=0", "--from", "1,0", "--t-end", "5", "--json",
    ]));
    assert_eq!(v["stopped"], "blow_up");
    assert!((v["t_end"].as_f64().expect("t") - 1.0).abs() < 1e-3);
}

#[test]
fn csv_rows_are_evenly_spaced_and_headed_by_the_variable_names() {
    let out = quarry(&[
        "orbit",
        "lotka-volterra",
        "--from",
        "10,5",
        "--t-end",
        "2",
        "--csv",
        "--dt",
        "0.5",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = String::from_utf8(out.stdout).expect("utf8");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "t,x,y");
    assert_eq!(lines.len(), 1 + 5);
    let row: Vec<f64> = lines[1]
        .split(',')
        .map(|s| s.parse().expect("number"))
        .collect();
    assert_eq!(row, vec![0.0, 10.0, 5.0]);
    let last: Vec<f64> = lines[5]
        .split(',')
        .map(|s| s.parse().expect("number"))
        .collect();
    assert_eq!(last[0], 2.0);
}

#[test]
fn every_subcommand_has_help() {
    for sub in ["analyze", "orbit", "models"] {
        let out = quarry(&[sub, "--help"]);
        assert!(out.status.success());
        assert!(String::from_utf8_lossy(&out.stdout).contains("Usage"));
    }
}

#[test]
fn render_writes_an_svg_and_a_png_of_the_asked_size() {
    let dir = std::env::temp_dir().join(format!("quarry-cli-render-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let svg = dir.join("lv.svg");
    let png = dir.join("lv.png");
    for (path, extra) in [
        (&svg, vec![]),
        (&png, vec!["--width", "640", "--height", "480"]),
    ] {
        let mut args = vec![
            "render",
            "lotka-volterra",
            "--from",
            "10,5",
            "--from",
            "30,10",
            "--out",
        ];
        let p = path.to_str().expect("utf8 path");
        args.push(p);
        args.extend(extra);
        let out = quarry(&args);
        assert!(out.status.success(), "{}", stderr(&out));
    }
    let text = std::fs::read_to_string(&svg).expect("svg written");
    roxmltree::Document::parse(&text).expect("the SVG parses");
    let bytes = std::fs::read(&png).expect("png written");
    let pixmap = resvg::tiny_skia::Pixmap::decode_png(&bytes).expect("the PNG decodes");
    assert_eq!((pixmap.width(), pixmap.height()), (640, 480));
    let non_white = pixmap
        .pixels()
        .iter()
        .filter(|p| p.red() < 240 || p.green() < 240 || p.blue() < 240)
        .count();
    assert!(
        non_white > 640 * 480 / 50,
        "only {non_white} non-white pixels"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn render_refuses_bad_requests_with_status_2() {
    for args in [
        vec!["render", "lotka-volterra", "--out", "/tmp/x.gif"],
        vec![
            "render",
            "lotka-volterra",
            "--out",
            "/tmp/x.png",
            "--width",
            "0",
        ],
        vec![
            "render",
            "lotka-volterra",
            "--out",
            "/tmp/x.png",
            "--from",
            "a,b",
        ],
    ] {
        let out = quarry(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
    }
}

/// The sweep contract; the fold of a logistic stock under a constant quota at H = rK/4 is a
/// closed form (common practice in fisheries science).
#[test]
fn sweep_json_follows_the_contract_and_locates_the_quota_fold() {
    let out = quarry(&[
        "sweep",
        "--var",
        "x=r*x*(1-x/K) - H",
        "--var",
        "y=-y",
        "--param",
        "r=1",
        "--param",
        "K=10",
        "--param",
        "H=123",
        "--param",
        "H",
        "--from",
        "0",
        "--to",
        "4",
        "--steps",
        "9",
        "--window",
        "-1,12,-1,1",
        "--json",
    ]);
    let v = json_of(&out);
    assert_eq!(v["param"], "H");
    let points = v["points"].as_array().expect("points");
    assert_eq!(points.len(), 9);
    assert_eq!(points[0]["value"], 0.0);
    assert_eq!(points[8]["value"], 4.0);
    for key in ["x", "y", "class", "eigenvalues"] {
        assert!(!points[0]["equilibria"][0][key].is_null(), "{key}");
    }
    let folds: Vec<&Value> = v["bifurcations"]
        .as_array()
        .expect("list")
        .iter()
        .filter(|b| b["kind"] == "fold")
        .collect();
    assert_eq!(folds.len(), 1, "{v}");
    let h = folds[0]["value"].as_f64().expect("value");
    assert!((h - 2.5).abs() < 2.5e-8, "fold at {h}");
}
