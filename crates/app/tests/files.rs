//! Opening, saving, the unsaved-changes guard and crash recovery, driven through the UI.

use std::path::PathBuf;

use egui::Vec2;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use quarry_app::QuarryApp;
use quarry_app::command::Command;
use quarry_core::scenario::{Scenario as ScenarioFile, default_scenario};

fn harness(app: QuarryApp) -> Harness<'static, QuarryApp> {
    let mut h = Harness::builder()
        .with_size(Vec2::new(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut QuarryApp| app.frame_ui(ui), app);
    h.run();
    h
}

fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("quarry-ui-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

/// Types a path into the file window's path field.
fn type_path(h: &mut Harness<'_, QuarryApp>, path: &std::path::Path) {
    h.get_by_label("Scenario file (.ron):").focus();
    h.run();
    h.get_by_label("Scenario file (.ron):")
        .type_text(&path.display().to_string());
    h.run();
}

fn demo(name: &str) -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/../../scenarios")).join(name)
}

#[test]
fn opening_a_demo_file_brings_its_orbits_layers_and_title() {
    let path = demo("brenmoor-voles-and-owls.ron");
    let file = ScenarioFile::load(&path).expect("demo loads");
    let mut h = harness(QuarryApp::new_synchronous(
        quarry_core::library::default_model(),
    ));
    h.state_mut().apply(Command::Open(path.clone()));
    h.run();
    let app = h.state();
    assert_eq!(app.scenario().to_file(), file);
    assert_eq!(app.scenario().seeds.len(), file.orbits.len());
    assert_eq!(app.path(), Some(path.as_path()));
    assert!(!app.is_dirty());
    let title = app.title();
    assert!(title.starts_with("Quarry — "), "{title}");
    assert!(title.contains("brenmoor-voles-and-owls.ron"), "{title}");
    assert!(!title.contains("unsaved"), "{title}");
    let scene = app.scene().expect("scene");
    assert_eq!(scene.orbits.len(), file.orbits.len());
}

#[test]
fn save_as_through_the_path_field_writes_the_file_and_marks_it_saved() {
    let dir = temp_dir("save-as");
    let target = dir.join("my lake.ron");
    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        Some(dir.clone()),
    ));
    assert!(h.state().title().contains("not saved to a file"));
    // A change makes the title say so.
    h.get_by_label("c").set_value_accesskit(2.25);
    h.run();
    assert!(h.state().is_dirty());
    assert!(h.state().title().ends_with("unsaved changes"));

    h.state_mut().apply(Command::ShowFileWindow(
        quarry_app::files::FileAction::SaveAs,
    ));
    h.run();
    type_path(&mut h, &target);
    h.get_by_label("Save").click();
    h.run();
    assert!(target.exists());
    assert!(!h.state().is_dirty());
    assert!(h.state().title().contains("my lake.ron"));
    let back = ScenarioFile::load(&target).expect("reads back");
    assert_eq!(back, h.state().scenario().to_file());
    assert!(
        back.parameters
            .iter()
            .any(|p| p.name == "c" && p.value == 2.25)
    );
    // It is now at the top of the recent files.
    let recent = std::fs::read_to_string(dir.join("recent.txt")).expect("recent list");
    assert!(
        recent
            .lines()
            .next()
            .is_some_and(|l| l.ends_with("my lake.ron"))
    );
}

#[test]
fn a_bad_file_shows_line_and_column_and_the_scenario_stays() {
    let dir = temp_dir("bad");
    let bad = dir.join("broken.ron");
    let text = default_scenario()
        .to_ron()
        .replacen("value: 1.0", "value: yes", 1);
    std::fs::write(&bad, text).expect("write");
    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        None,
    ));
    let before = h.state().scenario().clone();
    h.state_mut()
        .apply(Command::ShowFileWindow(quarry_app::files::FileAction::Open));
    h.run();
    type_path(&mut h, &bad);
    h.get_by_label("Open").click();
    h.run();
    let shown = h.get_by_label_contains("broken.ron: line");
    let message = format!("{shown:?}");
    assert!(message.contains("column"), "{message}");
    assert!(message.contains("parameters[0].value"), "{message}");
    assert_eq!(*h.state().scenario(), before);
}

#[test]
fn new_over_unsaved_changes_asks_first_and_cancel_keeps_them() {
    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        None,
    ));
    h.get_by_label("c").set_value_accesskit(2.25);
    h.run();
    let changed = h.state().scenario().clone();
    h.state_mut().apply(Command::New);
    h.run();
    h.get_by_label("Unsaved changes");
    h.get_by_label("Cancel").click();
    h.run();
    assert_eq!(*h.state().scenario(), changed);
    assert!(h.state().is_dirty());

    h.state_mut().apply(Command::New);
    h.run();
    h.get_by_label("Discard changes").click();
    h.run();
    assert!(!h.state().is_dirty());
    assert_eq!(h.state().scenario().to_file(), default_scenario());
}

#[test]
fn work_left_by_a_crashed_session_is_offered_back() {
    let dir = temp_dir("recovery");
    let mut lost = default_scenario();
    lost.notes = "work that was never saved".into();
    lost.parameters[0].value = 1.75;
    // A recovery file as autosave writes it, from a process id that is not running.
    let text = format!(
        "// Quarry recovery file of: (never saved)\n{}",
        lost.to_ron()
    );
    let file = dir.join("recovery-4294967290.ron");
    std::fs::write(&file, text).expect("write");

    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        Some(dir.clone()),
    ));
    h.get_by_label("Recover unsaved work?");
    h.get_by_label("Restore").click();
    h.run();
    assert_eq!(h.state().scenario().to_file(), lost);
    assert!(h.state().is_dirty(), "restored work is not saved yet");
    assert!(!file.exists(), "the recovery file is used up");
}

/// Width and height from a PNG's header.
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert_eq!(&bytes[1..4], b"PNG", "a PNG");
    let be = |k: usize| u32::from_be_bytes([bytes[k], bytes[k + 1], bytes[k + 2], bytes[k + 3]]);
    (be(16), be(20))
}

#[test]
fn the_plane_exports_as_png_and_svg_at_the_asked_size() {
    use quarry_app::export::{ExportKind, ExportRequest};
    let dir = temp_dir("export");
    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        None,
    ));
    h.state_mut().apply(Command::AddOrbit([30.0, 10.0]));
    h.run();
    for (name, size) in [("plane.png", [640, 480]), ("plane.svg", [900, 600])] {
        let path = dir.join(name);
        h.state_mut().apply(Command::Export(ExportRequest {
            kind: ExportKind::PlaneFigure,
            path: path.clone(),
            size,
        }));
        h.run();
        let bytes = std::fs::read(&path).expect("written");
        if name.ends_with(".png") {
            assert_eq!(png_size(&bytes), (640, 480));
        } else {
            let text = String::from_utf8(bytes).expect("utf-8");
            let doc = roxmltree::Document::parse(&text).expect("the SVG parses");
            let root = doc.root_element();
            assert_eq!(root.attribute("width"), Some("900"));
            // The orbit and the caution are in the picture.
            assert!(text.contains("not a stock assessment"));
            assert!(
                doc.descendants()
                    .filter(|n| n.has_tag_name("path") || n.has_tag_name("polyline"))
                    .count()
                    > 10
            );
        }
        assert!(
            h.state()
                .notice()
                .is_some_and(|n| n.starts_with("Exported"))
        );
    }
    // A name without a known extension is refused with what to do.
    h.state_mut().apply(Command::Export(ExportRequest {
        kind: ExportKind::PlaneFigure,
        path: dir.join("plane.jpeg"),
        size: [100, 100],
    }));
    h.run();
    assert!(
        h.state()
            .notice()
            .is_some_and(|n| n.contains(".png or .svg"))
    );
    assert!(!dir.join("plane.jpeg").exists());
}

#[test]
fn every_export_writes_a_file_that_reads_back() {
    use quarry_app::export::{ExportKind, ExportRequest};
    let dir = temp_dir("export-all");
    let file = ScenarioFile::load(&demo("varrow-perch-and-pike.ron")).expect("demo");
    let mut h = harness(QuarryApp::from_file_synchronous(&file, None, None));
    h.state_mut().apply(Command::AddOrbit([30.0, 10.0]));
    h.run();
    // Before a sweep there is nothing to draw, and the message says what to do.
    h.state_mut().apply(Command::Export(ExportRequest {
        kind: ExportKind::SweepFigure,
        path: dir.join("sweep.svg"),
        size: [800, 600],
    }));
    h.run();
    assert!(
        h.state()
            .notice()
            .is_some_and(|n| n.contains("Run a sweep first"))
    );
    {
        let view = h.state_mut().sweep_view();
        view.param = "c".into();
        view.from = 0.5;
        view.to = 3.0;
        view.steps = 26;
    }
    h.get_by_label("Sweep").click();
    h.run();
    h.get_by_label("Run sweep").click();
    h.run();
    for (kind, name) in [
        (ExportKind::TimeSeriesFigure, "ts.svg"),
        (ExportKind::SweepFigure, "sweep.svg"),
        (ExportKind::OrbitsCsv, "orbits.csv"),
        (ExportKind::EquilibriaCsv, "equilibria.csv"),
        (ExportKind::SweepCsv, "sweep.csv"),
        (ExportKind::Report, "report.html"),
    ] {
        let path = dir.join(name);
        h.state_mut().apply(Command::Export(ExportRequest {
            kind,
            path: path.clone(),
            size: [800, 600],
        }));
        h.run();
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{name}: {e}"));
        match name.rsplit('.').next() {
            Some("svg") => {
                roxmltree::Document::parse(&text).expect("the SVG parses");
            }
            Some("csv") => {
                let header = text.lines().next().expect("a header");
                assert!(header.contains("perch"), "{name}: {header}");
                // The units come from the scenario file.
                assert!(header.contains("thousand fish"), "{name}: {header}");
            }
            _ => {
                assert!(text.contains("<table"), "{name}");
                assert!(text.matches("<svg").count() >= 2, "{name}");
            }
        }
    }
    // The orbit CSV's first row is the start of the scenario's first orbit.
    let csv = std::fs::read_to_string(dir.join("orbits.csv")).expect("csv");
    let first: Vec<f64> = csv
        .lines()
        .nth(1)
        .expect("a row")
        .split(',')
        .map(|f| f.parse().expect("a number"))
        .collect();
    assert_eq!(&first[2..4], &[file.orbits[0].x, file.orbits[0].y]);
    assert!(dir.join("sweep-bifurcations.csv").exists());
    // The stability map: first a message, then a row per grid cell with the units.
    let map_path = dir.join("map.csv");
    let export_map = |h: &mut egui_kittest::Harness<'static, QuarryApp>| {
        h.state_mut().apply(Command::Export(ExportRequest {
            kind: ExportKind::MapCsv,
            path: map_path.clone(),
            size: [800, 600],
        }));
        h.run();
    };
    export_map(&mut h);
    assert!(!map_path.exists());
    assert!(
        h.state()
            .notice()
            .is_some_and(|n| n.contains("Make a stability map first"))
    );
    h.get_by_label("Two-parameter map").click();
    h.run();
    h.get_by_label("Run map").click();
    h.run();
    h.run();
    export_map(&mut h);
    let map = h.state_mut().map_view().result().expect("a map").clone();
    let text = std::fs::read_to_string(&map_path).expect("the map was written");
    let mut lines = text.lines();
    let header = lines.next().expect("a header");
    let unit = |name: &str| {
        file.parameters
            .iter()
            .find(|p| p.name == name)
            .map(|p| p.unit.clone())
            .expect("a parameter of the file")
    };
    let first = format!("{} ({}),", map.params[0], unit(&map.params[0]));
    assert!(header.starts_with(&first), "{header}");
    assert!(header.ends_with(",equilibria,stable,classes"), "{header}");
    assert_eq!(lines.count(), map.cells.len());
}

/// A file dropped on the window, as the windowing layer hands it over.
#[derive(Debug)]
struct Dropped(PathBuf);

impl egui::DroppedFile for Dropped {
    fn path(&self) -> &std::path::Path {
        &self.0
    }

    fn bytes(&self) -> Result<Vec<u8>, String> {
        std::fs::read(&self.0).map_err(|e| e.to_string())
    }
}

#[test]
fn a_scenario_dropped_on_the_window_opens() {
    let path = demo("dunmere-competing-stocks.ron");
    let file = ScenarioFile::load(&path).expect("demo loads");
    let mut h = harness(QuarryApp::from_file_synchronous(
        &default_scenario(),
        None,
        None,
    ));
    h.input_mut()
        .dropped_files
        .push(std::sync::Arc::new(Dropped(path.clone())));
    h.run();
    assert_eq!(h.state().path(), Some(path.as_path()));
    assert_eq!(h.state().scenario().to_file(), file);
}
