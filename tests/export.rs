//! Exports from the command line: CSV files that read back to the JSON numbers, and the HTML
//! report (tables, inline figures, escaping, cautions, I/O errors).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use serde_json::Value;

fn quarry(args: &[&str]) -> Output {
    quarry_env(args, &[])
}

fn quarry_env(args: &[&str], env: &[(&str, &str)]) -> Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_quarry"));
    c.args(args);
    for (k, v) in env {
        c.env(k, v);
    }
    c.output().expect("quarry runs")
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn json_of(out: &Output) -> Value {
    assert!(out.status.success(), "stderr: {}", stderr(out));
    serde_json::from_slice(&out.stdout).expect("stdout is JSON")
}

/// A fresh folder for one test.
fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("quarry-export-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 path")
}

/// The header and records of a CSV file, read with the `csv` crate (an RFC 4180 reader).
fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).expect("CSV opens");
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

fn f(text: &str) -> f64 {
    text.parse()
        .unwrap_or_else(|_| panic!("'{text}' is a number"))
}

fn j(v: &Value) -> f64 {
    v.as_f64().expect("a JSON number")
}

#[test]
fn analyze_csv_reads_back_to_the_json_numbers_bit_for_bit() {
    let dir = temp_dir("analyze");
    let csv_path = dir.join("equilibria.csv");
    let out = quarry(&[
        "analyze",
        "scenarios/varrow-perch-and-pike.ron",
        "--json",
        "--csv",
        s(&csv_path),
    ]);
    let v = json_of(&out);
    assert_eq!(v["csv"]["file"], s(&csv_path));
    let (header, rows) = read_csv(&csv_path);
    // Units come from the scenario file.
    assert_eq!(header[0], "perch (thousand fish)");
    assert_eq!(header[1], "pike (thousand fish)");
    let eq = v["equilibria"].as_array().expect("equilibria");
    assert_eq!(rows.len(), eq.len());
    for (r, e) in rows.iter().zip(eq) {
        // Both sides print the shortest round-trip decimal, so the numbers are identical.
        for (col, key) in [(0, "x"), (1, "y"), (3, "trace"), (4, "det")] {
            assert_eq!(f(&r[col]).to_bits(), j(&e[key]).to_bits(), "{key}");
        }
        for (k, col) in [(0, 6), (1, 8)] {
            assert_eq!(f(&r[col]).to_bits(), j(&e["eigenvalues"][k][0]).to_bits());
            assert_eq!(
                f(&r[col + 1]).to_bits(),
                j(&e["eigenvalues"][k][1]).to_bits()
            );
        }
        assert_eq!(r[10], e["class"].as_str().expect("class"));
        assert_eq!(r[11], e["nonlinear"].as_str().unwrap_or(""));
        assert_eq!(r[13], e["sentence"].as_str().expect("sentence"));
    }
    // Closed form (common practice): the Lotka–Volterra centre at (c/γ, a/α) = (20, 10).
    assert!(rows.iter().any(|r| r[10] == "center" && f(&r[0]) == 20.0));
}

#[test]
fn orbit_csv_file_reads_back_and_matches_the_measurements() {
    let dir = temp_dir("orbit");
    let csv_path = dir.join("orbit.csv");
    let out = quarry(&[
        "orbit",
        "lotka-volterra",
        "--from",
        "10,5",
        "--t-end",
        "8",
        "--dt",
        "0.25",
        "--csv",
        s(&csv_path),
        "--json",
    ]);
    let v = json_of(&out);
    let (header, rows) = read_csv(&csv_path);
    assert_eq!(header, ["t", "x", "y"]);
    assert_eq!(rows.len(), 33);
    assert_eq!(v["csv"]["rows"], 33);
    // The first row is the start, exactly; the last is the final state the JSON reports.
    assert_eq!(rows[0], ["0", "10", "5"]);
    let last = rows.last().expect("rows");
    assert_eq!(f(&last[0]), 8.0);
    for k in 0..2 {
        let fin = j(&v["final"][k]);
        assert!((f(&last[k + 1]) - fin).abs() <= 1e-12 * fin.abs());
    }
    // Every row lies within the extremes the JSON reports.
    for r in &rows {
        for k in 0..2 {
            let x = f(&r[k + 1]);
            assert!(x >= j(&v["min"][k]) - 1e-9 && x <= j(&v["max"][k]) + 1e-9);
        }
    }
}

#[test]
fn a_harvested_orbit_csv_has_the_catch_column_and_the_output_the_caution() {
    let dir = temp_dir("harvest");
    let csv_path = dir.join("harvested.csv");
    let harvested_orbit = |csv: &[&str]| {
        let mut args = vec![
            "orbit",
            "lotka-volterra",
            "--harvest",
            "x:proportional:E=0.2,q=0.5",
            "--from",
            "10,5",
            "--t-end",
            "4",
            "--csv",
        ];
        args.extend_from_slice(csv);
        quarry(&args)
    };
    let out = harvested_orbit(&[s(&csv_path)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("not a stock assessment"), "{text}");
    assert!(text.contains(&format!("rows to {}", s(&csv_path))));
    let (header, rows) = read_csv(&csv_path);
    assert_eq!(header, ["t", "x", "y", "catch of x"]);
    // Without --dt, a thousandth of the run: 1001 rows.
    assert_eq!(rows.len(), 1001);
    for r in &rows {
        // The proportional rule's catch is q·E·x (its definition).
        let x = f(&r[1]);
        assert!((f(&r[3]) - 0.5 * 0.2 * x).abs() <= 1e-15 * x.max(1.0));
    }
    // The same table to stdout keeps stdout pure CSV and puts the caution on stderr.
    let out = harvested_orbit(&[]);
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.starts_with("t,x,y,catch of x\r\n"));
    assert!(stderr(&out).contains("not a stock assessment"));
}

#[test]
fn csv_to_stdout_and_json_together_are_refused() {
    let out = quarry(&["analyze", "lotka-volterra", "--json", "--csv"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("--csv FILE"));
}

#[test]
fn unwritable_paths_exit_1_and_name_the_path() {
    let dir = temp_dir("bad-out");
    let missing = dir.join("no-such-folder").join("r.html");
    let folder = dir.join("taken.html");
    std::fs::create_dir_all(&folder).expect("folder");
    for (args, path) in [
        (
            vec!["report", "lotka-volterra", "--out", s(&missing)],
            s(&missing),
        ),
        (
            vec!["report", "lotka-volterra", "--out", s(&folder)],
            s(&folder),
        ),
        (
            vec!["analyze", "lotka-volterra", "--csv", s(&missing)],
            s(&missing),
        ),
        (
            vec![
                "orbit",
                "lotka-volterra",
                "--from",
                "10,5",
                "--csv",
                s(&missing),
            ],
            s(&missing),
        ),
    ] {
        let out = quarry(&args);
        assert_eq!(out.status.code(), Some(1), "{args:?}: {}", stderr(&out));
        assert!(stderr(&out).contains(path), "{}", stderr(&out));
        assert!(out.stdout.is_empty());
    }
    // Not an HTML name: bad input, exit 2, nothing written.
    let pdf = dir.join("r.pdf");
    let out = quarry(&["report", "lotka-volterra", "--out", s(&pdf)]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains(s(&pdf)));
    assert!(!pdf.exists());
}

/// A copy of a demo scenario with hostile text in the title, notes and a unit.
fn hostile_scenario(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string("scenarios/varrow-perch-and-pike.ron").expect("demo");
    let text = text
        .replacen(
            "title: \"Lake Varrow: perch and pike cycles\"",
            "title: \"<b>&\\\"Lake'</b>\"",
            1,
        )
        .replacen("unit: \"thousand fish\"", "unit: \"<i>fish</i> & co\"", 1);
    assert!(text.contains("<b>&"), "the title line was found");
    let path = dir.join("hostile.ron");
    std::fs::write(&path, text).expect("write scenario");
    path
}

#[test]
fn the_report_holds_the_table_two_figures_and_escapes_hostile_text() {
    let dir = temp_dir("report");
    let scenario = hostile_scenario(&dir);
    let html_path = dir.join("report.html");
    let out = quarry_env(
        &["report", s(&scenario), "--out", s(&html_path)],
        &[("SOURCE_DATE_EPOCH", "951782400")],
    );
    assert!(out.status.success(), "{}", stderr(&out));
    let html = std::fs::read_to_string(&html_path).expect("report written");
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(html.contains("<table class=\"equilibria\">"));
    assert_eq!(html.matches("<svg ").count(), 2, "two inline figures");
    assert!(!html.contains("<script"), "no scripts");
    // Escaped, never raw.
    assert!(!html.contains("<b>&"));
    assert!(!html.contains("<i>fish"));
    assert!(html.contains("&lt;b&gt;&amp;&quot;Lake&#39;&lt;/b&gt;"));
    assert!(html.contains("&lt;i&gt;fish&lt;/i&gt; &amp; co"));
    // The scenario's seeds (10, 5) and (30, 10) are the orbits; the centre (20, 10) is listed.
    assert!(html.contains("<td class=\"num\">(10, 5)</td>"));
    assert!(html.contains("<td class=\"num\">(30, 10)</td>"));
    assert!(html.contains("<td class=\"num\">20</td><td class=\"num\">10</td>"));
    // Date from SOURCE_DATE_EPOCH (951 782 400 s is 2000-02-29T00:00:00Z) and the version.
    assert!(html.contains("2000-02-29T00:00:00Z"));
    assert!(html.contains(concat!("Quarry ", env!("CARGO_PKG_VERSION"))));
    assert!(html.contains("not a stock assessment"));
}

#[test]
fn a_harvested_report_carries_the_yield_and_the_harvest_caution() {
    let dir = temp_dir("report-harvest");
    let html_path = dir.join("harvest.html");
    let out = quarry(&[
        "report",
        "lotka-volterra",
        "--harvest",
        "x:proportional:E=0.2",
        "--price",
        "x=2",
        "--from",
        "10,5",
        "--t-end",
        "20",
        "--out",
        s(&html_path),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(String::from_utf8_lossy(&out.stdout).contains("not a stock assessment"));
    let html = std::fs::read_to_string(&html_path).expect("report");
    assert!(html.contains("id=\"harvest\""));
    assert!(html.contains("Mean catch of x"));
    // Volterra's principle (common practice): with prey catch qE·x the cycle mean of x stays
    // c/γ = 20, so the mean catch over whole periods is 0.2 × 20 = 4 and the profit 2 × 4 = 8.
    assert!(html.contains("<td class=\"num\">4</td><td class=\"num\">8</td>"));
    assert!(html.contains("Illustration of a simplified model, not a stock assessment"));
}
