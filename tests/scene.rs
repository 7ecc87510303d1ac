//! The scene: one description of everything a view draws, for every built-in model.

use quarry_core::library::{self, BUILTINS};
use quarry_core::model::Model;
use quarry_core::scene::{
    Cancel, Cancelled, ContourLevels, SceneRequest, Seed, TimeDirection, build_scene,
};

fn request_with_seeds(seeds: Vec<Seed>) -> SceneRequest {
    SceneRequest {
        seeds,
        orbit_time: 20.0,
        ..SceneRequest::default()
    }
}

#[test]
fn every_built_in_model_gives_a_scene() {
    for b in BUILTINS {
        let model = Model::new(&b.spec()).expect("compiles");
        let w = model.window();
        let seed = Seed {
            at: [w.x_min + 0.3 * w.width(), w.y_min + 0.4 * w.height()],
            direction: TimeDirection::Both,
        };
        let scene = build_scene(&model, &request_with_seeds(vec![seed]), &Cancel::new())
            .expect("not cancelled");
        assert_eq!(scene.nullclines.len(), 2, "{}", b.key);
        assert!(
            scene.nullclines.iter().all(|n| !n.lines.is_empty()),
            "{}: both nullclines cross the window",
            b.key
        );
        assert!(!scene.equilibria.is_empty(), "{}", b.key);
        assert_eq!(scene.orbits.len(), 1, "{}", b.key);
        assert!(scene.orbits[0].points.len() > 10, "{}", b.key);
        assert_eq!(scene.orbits[0].points.len(), scene.orbits[0].times.len());
        let field = scene.field.as_ref().expect("field asked for");
        assert_eq!(field.samples.len(), field.nx * field.ny);
    }
}

#[test]
fn a_cancelled_request_never_returns_a_scene() {
    let model = Model::new(&library::default_model()).expect("compiles");
    let cancel = Cancel::new();
    cancel.cancel();
    let request = request_with_seeds(vec![Seed {
        at: [10.0, 5.0],
        direction: TimeDirection::Forward,
    }]);
    assert_eq!(build_scene(&model, &request, &cancel), Err(Cancelled));
}

/// Closed form (common practice): the Lotka–Volterra orbits are closed level curves of
/// H = γx − c ln x + αy − a ln y, so the contour through a seed and the orbit from it coincide.
#[test]
fn lotka_volterra_orbit_lies_on_the_contour_through_its_seed() {
    let model = Model::new(&library::default_model()).expect("compiles");
    let seed = [10.0, 5.0];
    let request = SceneRequest {
        contours: Some(ContourLevels::Through(vec![seed])),
        ..request_with_seeds(vec![Seed {
            at: seed,
            direction: TimeDirection::Forward,
        }])
    };
    let scene = build_scene(&model, &request, &Cancel::new()).expect("not cancelled");
    assert_eq!(scene.contours.len(), 1);
    let h0 = model.invariant(seed[0], seed[1]).expect("has H");
    let contour = &scene.contours[0];
    assert!((contour.level - h0).abs() < 1e-12);
    let vertices: Vec<[f64; 2]> = contour
        .lines
        .iter()
        .flat_map(|l| l.points.iter().copied())
        .collect();
    assert!(vertices.len() > 50);
    // Every orbit point is near some contour vertex (within the contour grid's spacing), and
    // every orbit point has H = h0 to the integration tolerance.
    let spacing = 60.0 / 255.0;
    for p in &scene.orbits[0].points {
        let h = model.invariant(p[0], p[1]).expect("has H");
        assert!(
            (h - h0).abs() < 1e-7 * h0.abs().max(1.0),
            "H drift {}",
            h - h0
        );
        let d = vertices
            .iter()
            .map(|v| (v[0] - p[0]).hypot(v[1] - p[1]))
            .fold(f64::INFINITY, f64::min);
        assert!(d < spacing, "orbit point {p:?} is {d} from the contour");
    }
}

/// Closed form (common practice): near the Lotka–Volterra centre the linearised solution has
/// period 2π/√(ac) and follows the real orbit; the measured nonlinear period is close to it.
#[test]
fn linear_overlay_near_the_centre_tracks_the_orbit() {
    let model = Model::new(&library::default_model()).expect("compiles");
    let request = SceneRequest {
        linear_overlays: true,
        orbit_time: 10.0,
        ..request_with_seeds(vec![Seed {
            at: [20.5, 10.0],
            direction: TimeDirection::Forward,
        }])
    };
    let scene = build_scene(&model, &request, &Cancel::new()).expect("not cancelled");
    let overlay = scene.linear_overlays[0]
        .as_ref()
        .expect("an overlay about the centre");
    let linear = overlay.linear_period.expect("complex eigenvalues");
    assert!((linear - std::f64::consts::TAU / 1.5_f64.sqrt()).abs() < 1e-12);
    let nonlinear = overlay.nonlinear_period.expect("the orbit closes");
    assert!(
        (nonlinear - linear).abs() / linear < 1e-3,
        "{nonlinear} vs {linear}"
    );
    // The overlay starts at the seed.
    assert!(
        (overlay.points[0][0] - 20.5).abs() < 1e-12 && (overlay.points[0][1] - 10.0).abs() < 1e-12
    );
}

/// A first integral that is not conserved is not drawn as level curves.
#[test]
fn an_unverified_first_integral_draws_no_contours() {
    let mut spec = library::default_model();
    spec.invariant = Some("x + y".into());
    let model = Model::new(&spec).expect("compiles");
    let scene =
        build_scene(&model, &request_with_seeds(vec![]), &Cancel::new()).expect("not cancelled");
    assert!(scene.contours.is_empty());
    let honest = Model::new(&library::default_model()).expect("compiles");
    let scene =
        build_scene(&honest, &request_with_seeds(vec![]), &Cancel::new()).expect("not cancelled");
    assert_eq!(scene.contours.len(), 10);
}
