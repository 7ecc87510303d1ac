//! Scenario files: the demo set, round trips, damaged files, and saving under a kill.

use std::path::{Path, PathBuf};
use std::process::Command;

use quarry_core::scenario::{self, Scenario};

fn demos() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("scenarios folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "ron"))
        .collect();
    files.sort();
    files
}

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("quarry-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

#[test]
fn the_demo_set_has_six_invented_scenarios_that_load_round_trip_and_check() {
    let files = demos();
    assert_eq!(files.len(), 6, "{files:?}");
    for f in &files {
        let text = std::fs::read_to_string(f).expect("readable");
        let s = Scenario::from_ron(&text).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        assert!(
            s.notes.contains("Invented"),
            "{}: the note says the setting is invented",
            f.display()
        );
        // Byte-stable: the committed file is already in canonical form.
        assert_eq!(
            s.to_ron(),
            text,
            "{} is not in canonical form (run quarry fmt)",
            f.display()
        );
        let again = Scenario::from_ron(&s.to_ron()).expect("reloads");
        assert_eq!(again, s);
        let out = Command::new(env!("CARGO_BIN_EXE_quarry"))
            .arg("check")
            .arg(f)
            .output()
            .expect("runs");
        assert!(
            out.status.success(),
            "{}: {}",
            f.display(),
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

#[test]
fn the_built_in_default_scenario_reads() {
    let s = Scenario::from_ron(scenario::DEFAULT_SCENARIO_RON).expect("the embedded default reads");
    assert_eq!(scenario::default_scenario(), s);
}

/// Damaged copies of every demo give errors, never a panic.
#[test]
fn damaged_files_give_errors_and_never_panic() {
    let mut cases = 0;
    for f in demos() {
        let text = std::fs::read_to_string(&f).expect("readable");
        let mut variants: Vec<String> = Vec::new();
        // Truncations.
        for cut in (0..text.len()).step_by(53) {
            if text.is_char_boundary(cut) {
                variants.push(text[..cut].to_owned());
            }
        }
        // One character flipped.
        for (i, _) in text.char_indices().step_by(37) {
            for c in ['(', ')', '"', ',', 'x', '9', ':', '\n'] {
                let mut v = text.clone();
                let end = i + v[i..].chars().next().map_or(0, char::len_utf8);
                v.replace_range(i..end, &c.to_string());
                variants.push(v);
            }
        }
        // A line removed (fields missing).
        let lines: Vec<&str> = text.lines().collect();
        for k in 0..lines.len() {
            let v: Vec<&str> = lines
                .iter()
                .enumerate()
                .filter(|(i, _)| *i != k)
                .map(|(_, l)| *l)
                .collect();
            variants.push(v.join("\n"));
        }
        // Wrong types, huge numbers, NaN.
        for (from, to) in [
            ("value: 1.0", "value: \"one\""),
            ("value: 1.0", "value: 1e999"),
            ("value: 1.0", "value: NaN"),
            ("value: 1.0", "value: inf"),
            ("x_max: ", "x_max: -1e308, x_min: "),
            ("version: 1", "version: \"1\""),
            ("version: 1", "version: 0"),
            ("version: 1", "version: 99"),
            ("orbit_time: ", "orbit_time: -"),
            ("rates: (", "rates: (\"x^\", "),
        ] {
            variants.push(text.replacen(from, to, 1));
        }
        for v in &variants {
            if let Ok(s) = Scenario::from_ron(v) {
                // What still reads must still be a usable scenario.
                s.validate().expect("a scenario that reads is valid");
            } else {
                cases += 1;
            }
        }
    }
    assert!(cases > 1000, "only {cases} damaged files were rejected");
}

#[test]
fn error_messages_name_line_column_and_field() {
    let text = std::fs::read_to_string(&demos()[0]).expect("readable");
    let bad = text.replacen("value: 1.0", "value: \"one\"", 1);
    let err = Scenario::from_ron(&bad)
        .expect_err("a string where a number belongs")
        .to_string();
    assert!(
        err.contains("line") && err.contains("column") && err.contains("parameters[0].value"),
        "{err}"
    );
    let bad = text.replacen("title:", "titel: \"x\", title:", 1);
    let err = Scenario::from_ron(&bad)
        .expect_err("an unknown field")
        .to_string();
    assert!(err.contains("titel"), "{err}");
    let bad = text.replacen("version: 1", "version: 2", 1);
    let err = Scenario::from_ron(&bad)
        .expect_err("a newer version")
        .to_string();
    assert!(err.contains("version 2") && err.contains("newer"), "{err}");
}

#[test]
fn check_exits_2_with_the_message_for_a_bad_file() {
    let dir = temp_dir("check");
    let path = dir.join("bad.ron");
    std::fs::write(&path, "(version: 1, title: ").expect("write");
    let out = Command::new(env!("CARGO_BIN_EXE_quarry"))
        .arg("check")
        .arg(&path)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("line 1"), "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn every_subcommand_takes_a_scenario_with_overrides() {
    let f = demos()
        .into_iter()
        .find(|p| p.ends_with("varrow-harvested.ron"))
        .expect("demo");
    let out = Command::new(env!("CARGO_BIN_EXE_quarry"))
        .arg("analyze")
        .arg(&f)
        .args(["--set", "E=0.5", "--json"])
        .output()
        .expect("runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    // Closed form (Volterra's principle): equal proportional harvest E moves the coexistence
    // point to ((c + E)/γ, (a − E)/α) = (26.6…, 5).
    let eq = &v["equilibria"][1];
    assert!((eq["x"].as_f64().expect("x") - 2.0 / 0.075).abs() < 1e-9);
    assert!((eq["y"].as_f64().expect("y") - 5.0).abs() < 1e-9);
    let out = Command::new(env!("CARGO_BIN_EXE_quarry"))
        .arg("orbit")
        .arg(&f)
        .args(["--from", "10,5", "--t-end", "30", "--json"])
        .output()
        .expect("runs");
    assert!(out.status.success());
    let dir = temp_dir("render-scenario");
    let png = dir.join("s.png");
    let out = Command::new(env!("CARGO_BIN_EXE_quarry"))
        .arg("render")
        .arg(&f)
        .arg("--out")
        .arg(&png)
        .output()
        .expect("runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(png.is_file());
    let _ = std::fs::remove_dir_all(&dir);
}

/// Killing the process in the middle of a save leaves the old file whole: after every kill the
/// file is byte for byte either the old text or the complete new one.
#[test]
fn a_kill_during_a_save_leaves_the_old_file_whole() {
    let dir = temp_dir("kill");
    let path = dir.join("big.ron");
    // A large scenario not in canonical form, so `quarry fmt` rewrites it and takes a while.
    let mut s = scenario::default_scenario();
    s.notes = "Invented demo. ".repeat(2_000_000);
    let canonical = s.to_ron();
    let old = canonical.replacen("version: 1,", "version:   1,", 1);
    let mut saw_new = false;
    let mut saw_old = false;
    for delay_ms in [1u64, 5, 20, 60, 150, 400] {
        std::fs::write(&path, &old).expect("write the old file");
        let mut child = Command::new(env!("CARGO_BIN_EXE_quarry"))
            .arg("fmt")
            .arg(&path)
            .spawn()
            .expect("spawn");
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let _ = child.kill();
        let _ = child.wait();
        let now = std::fs::read_to_string(&path).expect("the file is still there");
        assert!(
            now == old || now == canonical,
            "after a kill at {delay_ms} ms the file is neither old nor new ({} bytes)",
            now.len()
        );
        saw_old |= now == old;
        saw_new |= now == canonical;
    }
    assert!(saw_old || saw_new);
    let _ = std::fs::remove_dir_all(&dir);
}
