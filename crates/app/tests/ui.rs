//! The app driven the way a person drives it: by labels, clicks and keys, with no display.

use egui::{Event, Modifiers, PointerButton, Pos2, Vec2};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use quarry_app::QuarryApp;
use quarry_app::command::PanelKind;
use quarry_core::library::default_model;

fn harness(app: QuarryApp) -> Harness<'static, QuarryApp> {
    let mut h = Harness::builder()
        .with_size(Vec2::new(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut QuarryApp| app.frame_ui(ui), app);
    h.run();
    h
}

fn lotka_volterra() -> Harness<'static, QuarryApp> {
    harness(QuarryApp::new_synchronous(default_model()))
}

/// The equilibrium with both species present, from the scene on screen.
fn coexistence(h: &Harness<'_, QuarryApp>) -> [f64; 2] {
    let scene = h.state().scene().expect("a scene is shown");
    let e = scene
        .equilibria
        .iter()
        .find(|e| e.x > 1e-6 && e.y > 1e-6)
        .expect("a coexistence equilibrium");
    [e.x, e.y]
}

fn click_at(h: &mut Harness<'_, QuarryApp>, pos: Pos2) {
    h.event(Event::PointerMoved(pos));
    h.run();
    for pressed in [true, false] {
        h.event(Event::PointerButton {
            pos,
            button: PointerButton::Primary,
            pressed,
            modifiers: Modifiers::NONE,
        });
        h.run();
    }
}

#[test]
fn the_first_scene_shows_the_coexistence_equilibrium_at_its_closed_form_place() {
    let h = lotka_volterra();
    // Lotka–Volterra: x* = c/γ = 1.5/0.075 = 20, y* = a/α = 1/0.1 = 10.
    let [x, y] = coexistence(&h);
    assert!(
        (x - 20.0).abs() < 1e-9 && (y - 10.0).abs() < 1e-9,
        "{x}, {y}"
    );
    assert!(h.state().title().starts_with("Quarry"));
    assert!(h.state().title().contains("Lotka–Volterra"));
}

#[test]
fn a_click_on_the_plane_adds_an_orbit_there() {
    let mut h = lotka_volterra();
    let rect = h.state().plane_rect().expect("the plane was drawn");
    click_at(&mut h, rect.center() + Vec2::new(-60.0, 40.0));
    let seeds = &h.state().scenario().seeds;
    assert_eq!(seeds.len(), 1);
    let scene = h.state().scene().expect("a scene is shown");
    assert_eq!(scene.orbits.len(), 1);
    let orbit = &scene.orbits[0];
    assert_eq!(orbit.seed, seeds[0].at);
    // Lotka–Volterra orbits are closed; the list says so with the period.
    assert!(orbit.summary.closed);
    h.get_by_label_contains("closed · period");
}

#[test]
fn dragging_the_c_slider_moves_the_equilibrium_to_c_over_gamma() {
    let mut h = lotka_volterra();
    h.get_by_label("c").set_value_accesskit(2.25);
    h.run();
    // x* = c/γ = 2.25/0.075 = 30; y* = a/α = 10 does not move.
    let [x, y] = coexistence(&h);
    assert!(
        (x - 30.0).abs() < 1e-9 && (y - 10.0).abs() < 1e-9,
        "{x}, {y}"
    );
}

#[test]
fn typing_a_value_for_alpha_moves_the_equilibrium_to_a_over_alpha() {
    let mut h = lotka_volterra();
    h.get_by_label("alpha value").set_value_accesskit(0.25);
    h.run();
    // y* = a/α = 1/0.25 = 4; x* = c/γ = 20 does not move.
    let [x, y] = coexistence(&h);
    assert!(
        (x - 20.0).abs() < 1e-9 && (y - 4.0).abs() < 1e-9,
        "{x}, {y}"
    );
}

#[test]
fn a_bad_formula_shows_its_error_and_the_last_model_keeps_drawing() {
    let mut h = lotka_volterra();
    h.get_by_label("Edit model").click();
    h.run();
    let field = h.get_by_label("dx/dt =");
    field.focus();
    h.run();
    h.get_by_label("dx/dt =").type_text(" *)");
    h.run();
    let err = h.state().editor_error().expect("the editor shows an error");
    assert!(err.to_string().contains("column"), "{err}");
    h.get_by_label_contains("column");
    h.get_by_label_contains("Not applied");
    // The plane still draws the model that worked.
    assert_eq!(h.state().scenario().spec, default_model());
    let [x, y] = coexistence(&h);
    assert!((x - 20.0).abs() < 1e-9 && (y - 10.0).abs() < 1e-9);
    assert!(!h.state().scene().expect("scene").nullclines.is_empty());
}

#[test]
fn a_good_edit_in_the_editor_redraws_the_plane() {
    let mut app = QuarryApp::new_synchronous(default_model());
    app.show_panel(PanelKind::Editor, true);
    let mut h = harness(app);
    h.get_by_label("dy/dt =").focus();
    h.run();
    // −c·y + γ·x·y − 0.75·y: the predator's equilibrium prey level moves to (c + 0.75)/γ = 30.
    h.get_by_label("dy/dt =").type_text(" - 0.75*y");
    h.run();
    assert!(h.state().editor_error().is_none());
    let [x, _] = coexistence(&h);
    assert!((x - 30.0).abs() < 1e-9, "{x}");
}

#[test]
fn undo_restores_the_state_before_the_last_change_and_redo_repeats_it() {
    let mut h = lotka_volterra();
    h.get_by_label("c").set_value_accesskit(2.25);
    h.run();
    let rect = h.state().plane_rect().expect("the plane was drawn");
    click_at(&mut h, rect.center());
    assert_eq!(h.state().scenario().seeds.len(), 1);

    // Ctrl+Z takes the orbit away, then the Undo button puts c back.
    h.key_press_modifiers(Modifiers::COMMAND, egui::Key::Z);
    h.run();
    assert!(h.state().scenario().seeds.is_empty());
    h.get_by_label("Undo").click();
    h.run();
    assert_eq!(h.state().scenario().spec, default_model());
    let [x, _] = coexistence(&h);
    assert!((x - 20.0).abs() < 1e-9, "{x}");

    // Ctrl+Shift+Z redoes the slider change.
    h.key_press_modifiers(Modifiers::COMMAND | Modifiers::SHIFT, egui::Key::Z);
    h.run();
    let [x, _] = coexistence(&h);
    assert!((x - 30.0).abs() < 1e-9, "{x}");
}

#[test]
fn loading_a_built_in_model_from_the_editor_replaces_the_model() {
    let mut app = QuarryApp::new_synchronous(default_model());
    app.show_panel(PanelKind::Editor, true);
    let mut h = harness(app);
    h.get_by_label("Load").click();
    h.run();
    assert_eq!(
        h.state().scenario().spec.name,
        "Lotka–Volterra predator–prey"
    );
    // Unknown input from the command line falls back to the default model with a notice.
    let mut bad = default_model();
    bad.rates[0] = "x +".into();
    let h = harness(QuarryApp::new_synchronous(bad));
    assert_eq!(h.state().scenario().spec, default_model());
    h.get_by_label_contains("opened Lotka–Volterra predator–prey instead");
}

#[test]
fn the_help_lists_the_shortcuts_and_the_cautions_say_what_the_models_are_not() {
    let mut h = lotka_volterra();
    h.get_by_label("Help").click();
    h.run();
    h.get_by_label("Ctrl+Z");
    h.get_by_label_contains("read more").click();
    h.run();
    h.get_by_label_contains("not a stock assessment");
    h.get_by_label_contains("licensed scientific advice");
}

#[test]
fn the_first_integral_layer_is_off_limits_for_a_model_without_one() {
    let spec = quarry_core::library::builtin("holling-ii")
        .expect("built-in")
        .spec();
    let h = harness(QuarryApp::new_synchronous(spec));
    let scene = h.state().scene().expect("scene");
    assert!(scene.contours.is_empty());
    assert!(!scene.equilibria.is_empty());
}

#[test]
fn every_symbol_the_app_draws_has_a_glyph() {
    // The harness panics on a missing glyph; the app itself would draw a box.
    let mut h = Harness::new_ui(|ui| {
        ui.label("… · — ± − ∞ ↺ 🗙 ° ×");
        ui.label(egui::RichText::new("… · — ± − ∞ ^").monospace());
    });
    h.run();
}

fn drag(h: &mut Harness<'_, QuarryApp>, from: Pos2, to: Pos2) {
    h.event(Event::PointerMoved(from));
    h.run();
    h.event(Event::PointerButton {
        pos: from,
        button: PointerButton::Primary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    h.run();
    for k in 1..=5 {
        let p = from + (to - from) * (k as f32 / 5.0);
        h.event(Event::PointerMoved(p));
        h.run();
    }
    h.event(Event::PointerButton {
        pos: to,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    h.run();
}

#[test]
fn dragging_a_start_point_moves_its_orbit_in_one_undo_step() {
    let mut h = lotka_volterra();
    h.state_mut()
        .apply(quarry_app::command::Command::AddOrbit([30.0, 10.0]));
    h.run();
    h.run();
    let from = h.state().plane_screen_pos([30.0, 10.0]).expect("drawn");
    drag(&mut h, from, from + Vec2::new(40.0, -30.0));
    let seeds = &h.state().scenario().seeds;
    assert_eq!(seeds.len(), 1, "a drag is not a click: no new orbit");
    let at = seeds[0].at;
    assert!(at[0] > 30.0 && at[1] > 10.0, "moved right and up: {at:?}");
    // The scene follows: its orbit starts at the new place.
    assert_eq!(h.state().scene().expect("scene").orbits[0].seed, at);
    // The whole drag is one undo step.
    h.key_press_modifiers(Modifiers::COMMAND, egui::Key::Z);
    h.run();
    assert_eq!(h.state().scenario().seeds[0].at, [30.0, 10.0]);
}

#[test]
fn the_time_series_and_the_plane_mark_the_same_moment() {
    let mut h = lotka_volterra();
    h.state_mut()
        .apply(quarry_app::command::Command::AddOrbit([30.0, 10.0]));
    h.run();
    h.run();
    let id = h.state().scenario().seeds[0].id;
    assert_eq!(h.state().selection(), &[id], "a new orbit is selected");
    h.get_by_label_contains("colour: orbit"); // the time series is drawn, with its key
    // Hover the orbit in the plane at a stored point: the time series gets its time.
    let orbit = h.state().scene().expect("scene").orbits[0].clone();
    let k = orbit.points.len() / 3;
    let pos = h.state().plane_screen_pos(orbit.points[k]).expect("drawn");
    h.event(Event::PointerMoved(pos));
    h.run();
    let (_, in_plane) = h.state().hovered_time();
    let t = in_plane.expect("the plane found the orbit under the pointer");
    // The nearest stored point is within the pick radius; its time is close to the one aimed at.
    let i = orbit
        .times
        .iter()
        .position(|s| *s == t)
        .expect("a stored time");
    let d =
        (orbit.points[i][0] - orbit.points[k][0]).hypot(orbit.points[i][1] - orbit.points[k][1]);
    assert!(d < 2.0, "picked a point {d} away");
}

#[test]
fn playback_moves_the_time_on_and_space_pauses_it() {
    let mut h = lotka_volterra();
    h.state_mut()
        .apply(quarry_app::command::Command::AddOrbit([30.0, 10.0]));
    h.run();
    h.get_by_label("▶ Play").click();
    // Playing repaints every frame, so step frame by frame instead of running to rest.
    h.step();
    h.step();
    assert!(h.state().is_playing());
    let t0 = h.state().playback_time().expect("a time");
    std::thread::sleep(std::time::Duration::from_millis(50));
    h.step();
    let t1 = h.state().playback_time().expect("a time");
    assert!(t1 > t0, "{t0} → {t1}");
    h.key_press(egui::Key::Space);
    h.step();
    h.run();
    assert!(!h.state().is_playing());
    h.get_by_label("▶ Play");
}

#[test]
fn the_linearisation_layer_draws_the_linear_solution_and_compares_periods() {
    let mut h = lotka_volterra();
    h.get_by_label("Linearisation").click();
    h.run();
    h.state_mut()
        .apply(quarry_app::command::Command::AddOrbit([22.0, 10.0]));
    h.run();
    h.run();
    let scene = h.state().scene().expect("scene");
    let overlay = scene.linear_overlays[0].as_ref().expect("an overlay");
    // Lotka–Volterra about (c/γ, a/α): 2π/√(ac) = 2π/√1.5 (common practice).
    let lin = overlay.linear_period.expect("a rotation");
    assert!(
        (lin - std::f64::consts::TAU / 1.5f64.sqrt()).abs() < 1e-9,
        "{lin}"
    );
    h.get_by_label_contains("linearisation: period 2π/ω");
}

#[test]
fn fishing_the_prey_moves_the_equilibrium_and_the_panel_shows_the_catch_with_the_caution() {
    use quarry_core::harvest::{Harvest, HarvestRule};
    let mut h = lotka_volterra();
    h.state_mut()
        .apply(quarry_app::command::Command::AddOrbit([12.0, 4.0]));
    h.run();
    let mut harvest = Harvest::default();
    harvest.rules[0] = HarvestRule::Proportional {
        effort: 0.25,
        catchability: 1.0,
    };
    h.state_mut()
        .apply(quarry_app::command::Command::SetHarvest(harvest));
    h.run();
    // dx/dt = a·x − α·x·y − E·x: y* = (a − E)/α = 0.75/0.1 = 7.5, x* = c/γ = 20 (common
    // practice: the prey's nullcline moves down by E/α).
    let [x, y] = coexistence(&h);
    assert!(
        (x - 20.0).abs() < 1e-9 && (y - 7.5).abs() < 1e-9,
        "{x}, {y}"
    );
    h.get_by_label("Harvest").click();
    h.run();
    h.get_by_label(quarry_core::harvest::CAUTION);
    // The harvested Lotka–Volterra equilibrium is still a centre: no steady catch to quote.
    h.get_by_label_contains("No stable equilibrium");
    // Along a cycle the mean catch is E·x̄ with x̄ = c/γ = 20 (Volterra's principle): 5.
    h.get_by_label_contains("mean catch per unit time over whole cycles: x 5");
    // Dragging the effort is a parameter change of the compiled model, not a new model.
    harvest.rules[0] = HarvestRule::Proportional {
        effort: 0.5,
        catchability: 1.0,
    };
    h.state_mut()
        .apply(quarry_app::command::Command::SetHarvest(harvest));
    h.run();
    let [_, y] = coexistence(&h);
    assert!((y - 5.0).abs() < 1e-9, "{y}");
    // One undo step for the whole harvest edit.
    h.key_press_modifiers(Modifiers::COMMAND, egui::Key::Z);
    h.run();
    let [_, y] = coexistence(&h);
    assert!((y - 10.0).abs() < 1e-9, "{y}");
}

#[test]
fn a_sweep_finds_the_hopf_point_and_set_puts_it_in_the_plane() {
    let spec = quarry_core::library::builtin("holling-ii")
        .expect("built-in")
        .spec();
    let mut h = harness(QuarryApp::new_synchronous(spec));
    h.get_by_label("Sweep").click();
    h.run();
    {
        let view = h.state_mut().sweep_view();
        view.param = "K".into();
        view.from = 1.0;
        view.to = 8.0;
        view.steps = 141;
    }
    h.get_by_label("Run sweep").click();
    h.run();
    h.run();
    let hopf = h
        .state_mut()
        .sweep_view()
        .result()
        .expect("a sweep")
        .bifurcations
        .iter()
        .find(|b| b.kind == quarry_core::sweep::BifurcationKind::Hopf)
        .copied()
        .expect("a Hopf point");
    // Rosenzweig–MacArthur: K_H = 2x* + 1/(a·h) with x* = m/(a(b − m·h)) = 0.5, so K_H = 3
    // (Rosenzweig 1971).
    assert!((hopf.value - 3.0).abs() < 1e-7, "{}", hopf.value);
    // In the diagram's legend and in the list of bifurcations.
    assert_eq!(h.get_all_by_label("Hopf").count(), 2);
    h.get_by_label("Set").click();
    h.run();
    let k = h
        .state()
        .scenario()
        .spec
        .parameters
        .iter()
        .find(|p| p.name == "K")
        .expect("K");
    assert_eq!(k.value, hopf.value);
}

/// The built-in Schaefer model with the yield view open. The model fishes with its own E;
/// that is set to zero so the view does the fishing.
fn schaefer_in_the_yield_view() -> Harness<'static, QuarryApp> {
    let spec = quarry_core::library::builtin("schaefer")
        .expect("built-in")
        .spec();
    let mut h = harness(QuarryApp::new_synchronous(spec));
    h.get_by_label("E value").set_value_accesskit(0.0);
    h.run();
    h.get_by_label("Yield").click();
    h.run();
    h
}

#[test]
fn the_yield_view_reads_msy_and_collapse_off_the_schaefer_curve() {
    let mut h = schaefer_in_the_yield_view();
    {
        let view = h.state_mut().yield_view();
        view.species = 0;
        view.over_effort = true;
        view.catchability = 0.01;
        view.from = 0.0;
        view.to = 60.0;
        view.steps = 121;
    }
    h.get_by_label("Compute curve").click();
    h.run();
    h.run();
    let curve = h
        .state_mut()
        .yield_view()
        .result()
        .expect("a curve")
        .clone();
    // Schaefer (1954): MSY = rK/4 = 12.5 at E = r/(2q) = 25; the stock collapses at E = r/q = 50.
    let msy = curve.msy.expect("an MSY");
    assert!(
        (msy.catch - 12.5).abs() < 1e-8 && (msy.value - 25.0).abs() < 1e-8,
        "{msy:?}"
    );
    let collapse = curve.collapse.expect("a collapse");
    assert!((collapse.value - 50.0).abs() < 1e-7, "{collapse:?}");
    h.get_by_label_contains("Maximum sustainable yield 12.5 at effort 25");
    h.get_by_label_contains("collapses at effort 50");
    assert!(h.get_all_by_label(quarry_core::harvest::CAUTION).count() >= 1);
    // Clicking "set" through the command the plot sends puts the effort into the harvest.
    let mut harvest = h.state().scenario().harvest;
    harvest.rules[0] = curve.rule.harvest_rule(msy.value);
    h.state_mut()
        .apply(quarry_app::command::Command::SetHarvest(harvest));
    h.run();
    let x = h
        .state()
        .scene()
        .expect("scene")
        .equilibria
        .iter()
        .map(|e| e.x)
        .fold(0.0, f64::max);
    // x* = K(1 − qE/r) = 50 at E = 25 (Schaefer 1954).
    assert!((x - 50.0).abs() < 1e-7, "{x}");
}

#[test]
fn the_yield_view_widens_a_short_range_until_the_stock_collapses() {
    let mut h = schaefer_in_the_yield_view();
    {
        let view = h.state_mut().yield_view();
        view.over_effort = true;
        view.catchability = 0.01;
        assert!(view.extend, "widening is on by default");
        assert_eq!((view.from, view.to), (0.0, 1.0), "the opening range");
    }
    h.get_by_label("Compute curve").click();
    h.run();
    h.run();
    let view = h.state_mut().yield_view();
    let curve = view.result().expect("a curve").clone();
    // Schaefer (1954): collapse at E = r/q = 50. The range 0..1 is widened fourfold to 0..64,
    // which holds it, then framed to 1.5 × 50 = 75.
    let collapse = curve.collapse.expect("a collapse");
    assert!((collapse.value - 50.0).abs() < 1e-7, "{collapse:?}");
    assert_eq!(view.to, 75.0);
    assert_eq!(curve.points.last().map(|p| p.value), Some(75.0));
    let msy = curve.msy.expect("an MSY");
    assert!((msy.catch - 12.5).abs() < 1e-8, "{msy:?}");
}

#[test]
fn the_two_parameter_map_colours_the_cells_by_what_the_equilibria_do() {
    let spec = quarry_core::library::builtin("holling-ii")
        .expect("built-in")
        .spec();
    let mut h = harness(QuarryApp::new_synchronous(spec));
    h.get_by_label("Sweep").click();
    h.run();
    h.get_by_label("Two-parameter map").click();
    h.run();
    h.get_by_label("Run map").click();
    h.run();
    h.run();
    // Over r ∈ [0, 2] and K ∈ [0, 16] (the sliders' ranges) the map shows both the region
    // with a stable equilibrium and, past the Hopf curve K_H = 3, the one with cycles.
    h.get_by_label("one stable equilibrium");
    h.get_by_label("no stable equilibrium (cycles or escape)");
}
