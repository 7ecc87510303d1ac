//! Tests of whole figures: the SVG's structure, the PNG's pixels, and scenes built to break
//! things (empty, NaN, absurd windows, huge curves).

use std::time::Instant;

use quarry_core::analysis::analyze;
use quarry_core::library::builtin;
use quarry_core::linear::Class;
use quarry_core::model::{Model, Window};
use quarry_core::orbit::{OrbitOptions, run_orbit};
use quarry_core::scene::{
    CycleStability, DirectionField, FieldSample, LimitCycle, ManifoldKind, Nullcline, Polyline,
    Scene, SceneOrbit, Separatrix,
};
use resvg::tiny_skia::Pixmap;

use crate::{FigureError, FigureOptions, render_png, render_svg, svg_to_png};

/// The size of a PNG and how many pixels in its middle (from 1/`part` to (`part` − 1)/`part`
/// of each side) are not near-white.
pub(crate) fn inked_in_middle(png: &[u8], part: usize) -> ((u32, u32), usize) {
    let pix = Pixmap::decode_png(png).expect("decodes");
    let (w, h) = (pix.width() as usize, pix.height() as usize);
    let data = pix.data();
    let inked = (h / part..(part - 1) * h / part)
        .flat_map(|y| (w / part..(part - 1) * w / part).map(move |x| (y * w + x) * 4))
        .filter(|&i| data[i] < 200 || data[i + 1] < 200 || data[i + 2] < 200)
        .count();
    ((pix.width(), pix.height()), inked)
}

/// Checks that a figure keeps to its layout in any font: every text element but the tick
/// labels carries `textLength` with `lengthAdjust="spacingAndGlyphs"`, that length is the
/// width measured in the bundled font (so the PNG is not distorted), and the box it forces
/// lies on the page. Returns how many elements were checked.
pub(crate) fn assert_text_is_fitted(svg: &str) -> usize {
    let doc = roxmltree::Document::parse(svg).expect("well-formed SVG");
    let root = doc.root_element();
    let size = |name: &str| -> f64 {
        root.attribute(name)
            .and_then(|v| v.parse().ok())
            .expect("page size")
    };
    let (w, h) = (size("width"), size("height"));
    let mut checked = 0;
    for n in doc.descendants().filter(|n| n.has_tag_name("text")) {
        if n.ancestors()
            .any(|a| a.attribute("class") == Some("tick-labels"))
        {
            continue;
        }
        let words: String = n
            .descendants()
            .filter(|d| d.is_text())
            .filter_map(|d| d.text())
            .collect();
        let num = |name: &str| -> f64 {
            n.attribute(name)
                .and_then(|v| v.parse().ok())
                .unwrap_or_else(|| panic!("{words:?}: no {name}"))
        };
        assert_eq!(
            n.attribute("lengthAdjust"),
            Some("spacingAndGlyphs"),
            "{words:?}"
        );
        let length = num("textLength");
        let font = num("font-size");
        let spacing = n
            .attribute("letter-spacing")
            .and_then(|v| v.parse().ok())
            .unwrap_or(0.0);
        let measured = crate::text::spaced_width(&words, font, spacing);
        // Attributes are written to 0.01 px: the font size's rounding scales the whole
        // width, the letter spacing's adds up per character.
        let chars = words.chars().count() as f64;
        let rounding = 0.005 + 0.005 * length / font + 0.005 * chars * f64::from(spacing > 0.0);
        assert!(
            (length - measured).abs() <= rounding,
            "{words:?}: textLength {length}, measured {measured}"
        );
        let (x, y) = (num("x"), num("y"));
        let (lo, hi, room) = if n.attribute("transform").is_some() {
            // Axis names turned by ±90° about their anchor, centred on it.
            (y - 0.5 * length, y + 0.5 * length, h)
        } else {
            match n.attribute("text-anchor") {
                Some("middle") => (x - 0.5 * length, x + 0.5 * length, w),
                Some("end") => (x - length, x, w),
                _ => (x, x + length, w),
            }
        };
        assert!(
            lo >= -0.5 && hi <= room + 0.5,
            "{words:?} spans {lo:.1} to {hi:.1} on a page of {room}"
        );
        checked += 1;
    }
    checked
}

fn model(key: &str) -> Model {
    let spec = builtin(key).expect("builtin").spec();
    Model::new(&spec).expect("model")
}

fn field(model: &Model, nx: usize, ny: usize) -> DirectionField {
    let w = model.window();
    let mut samples = Vec::new();
    let mut max_speed: f64 = 0.0;
    for j in 0..ny {
        for i in 0..nx {
            let x = w.x_min + (i as f64 + 0.5) / nx as f64 * w.width();
            let y = w.y_min + (j as f64 + 0.5) / ny as f64 * w.height();
            let rate = model.rates(x, y);
            let speed = rate[0].hypot(rate[1]);
            if speed.is_finite() {
                max_speed = max_speed.max(speed);
            }
            samples.push(FieldSample {
                at: [x, y],
                rate,
                speed,
            });
        }
    }
    DirectionField {
        nx,
        ny,
        samples,
        max_speed,
    }
}

/// One orbit from `seed`, cut after one period when it closes.
fn orbit(model: &Model, seed: [f64; 2], t_end: f64) -> SceneOrbit {
    let opts = OrbitOptions {
        t_end,
        ..OrbitOptions::default()
    };
    let report = run_orbit(model, seed, &opts).expect("orbit");
    let until = report.period.map_or(f64::INFINITY, |p| p * 1.0001);
    let rows: Vec<[f64; 3]> = report
        .rows(t_end.abs() / 2000.0)
        .into_iter()
        .filter(|r| r[0].abs() <= until)
        .collect();
    SceneOrbit {
        seed,
        times: rows.iter().map(|r| r[0]).collect(),
        points: rows.iter().map(|r| [r[1], r[2]]).collect(),
        summary: Default::default(),
    }
}

fn line(points: Vec<[f64; 2]>) -> Polyline {
    Polyline {
        points,
        closed: false,
    }
}

/// The Lotka–Volterra scene of the report: field, four orbits, nullclines, equilibria.
fn lv_scene() -> Scene {
    let m = model("lotka-volterra");
    let w = m.window();
    let eqs = analyze(&m).equilibria;
    let orbits = [[26.0, 10.0], [32.0, 10.0], [40.0, 10.0], [48.0, 10.0]]
        .into_iter()
        .map(|s| orbit(&m, s, 30.0))
        .collect();
    // dx/dt = 0 on x = 0 and y = a/alpha = 10; dy/dt = 0 on y = 0 and x = c/gamma = 20.
    let nullclines = vec![
        Nullcline {
            variable: 0,
            lines: vec![
                line(vec![[0.0, 0.0], [0.0, 40.0]]),
                line(vec![[0.0, 10.0], [60.0, 10.0]]),
            ],
        },
        Nullcline {
            variable: 1,
            lines: vec![
                line(vec![[0.0, 0.0], [60.0, 0.0]]),
                line(vec![[20.0, 0.0], [20.0, 40.0]]),
            ],
        },
    ];
    Scene {
        title: "Lotka–Volterra predator–prey".into(),
        variables: ["x".into(), "y".into()],
        window: w,
        field: Some(field(&m, 26, 18)),
        nullclines,
        equilibria: eqs,
        orbits,
        ..Scene::default()
    }
}

/// A competition scene with separatrices and an invented limit cycle, to exercise every layer.
fn kitchen_sink() -> Scene {
    let m = model("competition");
    let eqs = analyze(&m).equilibria;
    let mut separatrices = Vec::new();
    for eq in eqs.iter().filter(|e| e.class() == Class::Saddle) {
        let lin = &eq.linear;
        for (k, kind, t) in [
            (0, ManifoldKind::Unstable, 40.0),
            (1, ManifoldKind::Stable, -40.0),
        ] {
            let v = lin.eigenvectors[k];
            for sign in [1.0, -1.0] {
                let seed = [eq.x + sign * 1e-3 * v[0].re, eq.y + sign * 1e-3 * v[1].re];
                let opts = OrbitOptions {
                    t_end: t,
                    clip: true,
                    ..OrbitOptions::default()
                };
                let Ok(r) = run_orbit(&m, seed, &opts) else {
                    continue;
                };
                let pts: Vec<[f64; 2]> = r.rows(0.02).iter().map(|r| [r[1], r[2]]).collect();
                separatrices.push(Separatrix {
                    saddle: [eq.x, eq.y],
                    kind,
                    line: line(pts),
                    end: quarry_core::scene::BranchEnd::LeftWindow,
                });
            }
        }
    }
    let cycle: Vec<[f64; 2]> = (0..200)
        .map(|i| {
            let a = i as f64 / 200.0 * std::f64::consts::TAU;
            [9.0 + 1.5 * a.cos(), 7.5 + 1.0 * a.sin()]
        })
        .collect();
    let mut streamlines = Vec::new();
    for k in 0..6 {
        let seed = [0.5 + 2.0 * k as f64, 9.5];
        if let Ok(r) = run_orbit(
            &m,
            seed,
            &OrbitOptions {
                t_end: 20.0,
                clip: true,
                ..OrbitOptions::default()
            },
        ) {
            streamlines.push(line(r.rows(0.05).iter().map(|r| [r[1], r[2]]).collect()));
        }
    }
    Scene {
        title: "Competition <stocks> & a cycle".into(),
        variables: ["cod & co".into(), "haddock <t>".into()],
        window: m.window(),
        field: Some(field(&m, 24, 20)),
        streamlines,
        nullclines: vec![
            Nullcline {
                variable: 0,
                lines: vec![line(vec![[10.0, 0.0], [0.0, 10.0 / 0.6]])],
            },
            Nullcline {
                variable: 1,
                lines: vec![line(vec![[0.0, 8.0], [8.0 / 0.7, 0.0]])],
            },
        ],
        equilibria: eqs,
        separatrices,
        orbits: vec![orbit(&m, [11.0, 9.0], 30.0), orbit(&m, [1.0, 0.5], -3.0)],
        limit_cycles: vec![LimitCycle {
            line: Polyline {
                points: cycle,
                closed: true,
            },
            period: 6.0,
            multiplier: 0.5,
            stability: CycleStability::Repelling,
            min: [7.5, 6.5],
            max: [10.5, 8.5],
        }],
        ..Scene::default()
    }
}

/// The words of every `<text>` element, its `<tspan>`s joined.
pub(crate) fn doc_texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| {
            n.descendants()
                .filter(|d| d.is_text())
                .filter_map(|d| d.text())
                .collect::<Vec<_>>()
                .join("")
        })
        .collect()
}

fn class_count(doc: &roxmltree::Document, tag: &str, class: &str) -> usize {
    doc.descendants()
        .filter(|n| n.has_tag_name(tag) && n.attribute("class") == Some(class))
        .count()
}

fn decode(png: &[u8]) -> Pixmap {
    Pixmap::decode_png(png).expect("png decodes")
}

/// Non-white pixels in a rectangle.
fn ink(p: &Pixmap, x0: u32, y0: u32, x1: u32, y1: u32) -> usize {
    let mut n = 0;
    for y in y0..y1.min(p.height()) {
        for x in x0..x1.min(p.width()) {
            if let Some(c) = p.pixel(x, y)
                && (c.red() < 235 || c.green() < 235 || c.blue() < 235)
            {
                n += 1;
            }
        }
    }
    n
}

#[test]
fn lotka_volterra_svg_has_title_axes_legend_and_one_path_per_orbit() {
    let scene = lv_scene();
    let svg = render_svg(&scene, &FigureOptions::default());
    let doc = roxmltree::Document::parse(&svg).expect("svg parses");
    let texts = doc_texts(&doc);
    assert!(texts.iter().any(|t| t == "Lotka–Volterra predator–prey"));
    assert_eq!(class_count(&doc, "text", "axis-label"), 2);
    assert!(texts.iter().any(|t| t == "x") && texts.iter().any(|t| t == "y"));
    assert_eq!(class_count(&doc, "path", "orbit"), scene.orbits.len());
    assert_eq!(class_count(&doc, "path", "orbit-arrow"), scene.orbits.len());
    assert_eq!(class_count(&doc, "rect", "orbit-start"), scene.orbits.len());
    let legend: Vec<String> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("legend-entry"))
        .filter_map(|n| n.text().map(str::to_owned))
        .collect();
    assert!(legend.contains(&"saddle".to_owned()), "{legend:?}");
    assert!(
        legend.contains(&"centre (closed orbits)".to_owned()),
        "{legend:?}"
    );
    assert!(legend.contains(&"dx/dt = 0".to_owned()));
    assert!(legend.contains(&"dy/dt = 0".to_owned()));
    // Nothing that is absent is listed.
    assert!(
        !legend
            .iter()
            .any(|l| l.contains("separatrix") || l.contains("limit"))
    );
    // Ticks 0..60 by 10 on x, labels without float noise.
    for t in ["0", "10", "20", "30", "40", "50", "60"] {
        assert!(texts.iter().any(|x| x == t), "tick {t}");
    }
    assert!(!svg.contains("0000000001") && !svg.contains("9999999"));
    assert!(doc.descendants().any(|n| n.has_tag_name("clipPath")));
}

#[test]
fn a_long_title_wraps_onto_two_lines_inside_the_page() {
    let mut scene = lv_scene();
    let words = "Lake Varrow perch and pike under net fishing of both species at the \
                 effort the board proposed for the northern basin in the coming season";
    scene.title = words.into();
    let opts = FigureOptions {
        width: 600,
        height: 450,
        ..FigureOptions::default()
    };
    let svg = render_svg(&scene, &opts);
    let doc = roxmltree::Document::parse(&svg).expect("svg parses");
    let lines: Vec<(f64, f64, String)> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("title"))
        .map(|n| {
            let num = |a: &str| n.attribute(a).and_then(|v| v.parse().ok()).expect(a);
            (
                num("x"),
                num("textLength"),
                n.text().unwrap_or("").to_owned(),
            )
        })
        .collect();
    assert_eq!(lines.len(), 2, "{lines:?}");
    for (x, len, _) in &lines {
        assert!(x + len <= 600.0, "{lines:?}");
    }
    assert_eq!(format!("{} {}", lines[0].2, lines[1].2), words);
    // The plot starts below both lines.
    let plot_top = doc
        .descendants()
        .find(|n| n.has_tag_name("clipPath"))
        .and_then(|c| c.first_element_child())
        .and_then(|r| r.attribute("y")?.parse::<f64>().ok())
        .expect("the plot's clip rectangle");
    let second: f64 = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("title"))
        .nth(1)
        .and_then(|n| n.attribute("y")?.parse().ok())
        .expect("y");
    assert!(plot_top > second, "{plot_top} vs {second}");
    // Past two lines, what did not fit is marked.
    scene.title = format!("{words}, {words}");
    let svg = render_svg(&scene, &opts);
    let doc = roxmltree::Document::parse(&svg).expect("svg parses");
    let texts: Vec<String> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("title"))
        .filter_map(|n| n.text().map(str::to_owned))
        .collect();
    assert_eq!(texts.len(), 2);
    assert!(texts[1].ends_with('…'), "{texts:?}");
    // A short title stays on one line and whole.
    assert!(render_svg(&lv_scene(), &opts).contains(">Lotka–Volterra predator–prey</text>"));
}

#[test]
fn phase_portrait_text_keeps_to_its_boxes_in_any_font() {
    for scene in [lv_scene(), kitchen_sink()] {
        for (width, height) in [(900, 650), (600, 450), (1800, 1300)] {
            let svg = render_svg(
                &scene,
                &FigureOptions {
                    width,
                    height,
                    caption: Some(crate::CAUTION.into()),
                    ..FigureOptions::default()
                },
            );
            // Title, caption lines, two axis names, legend headings and entries.
            assert!(assert_text_is_fitted(&svg) >= 10, "{width}×{height}");
        }
    }
}

#[test]
fn every_class_present_gets_one_legend_entry() {
    let scene = kitchen_sink();
    let svg = render_svg(&scene, &FigureOptions::default());
    let doc = roxmltree::Document::parse(&svg).expect("svg parses");
    let legend: Vec<String> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("legend-entry"))
        .filter_map(|n| n.text().map(str::to_owned))
        .collect();
    let mut classes: Vec<String> = scene
        .equilibria
        .iter()
        .map(|e| crate::style::mark_of(e).1)
        .collect();
    classes.sort();
    classes.dedup();
    for c in &classes {
        assert_eq!(
            legend.iter().filter(|l| *l == c).count(),
            1,
            "{c}: {legend:?}"
        );
    }
    assert!(legend.iter().any(|l| l == "separatrix into a saddle"));
    assert!(legend.iter().any(|l| l == "separatrix out of a saddle"));
    assert!(legend.iter().any(|l| l == "repelling limit cycle"));
    assert!(legend.iter().any(|l| l.starts_with("streamlines")));
    // Streamlines replace the field arrows.
    assert!(!legend.iter().any(|l| l.starts_with("flow direction")));
    assert!(legend.iter().any(|l| l == "d(cod & co)/dt = 0"));
    // Names with markup characters arrive intact.
    assert!(doc_texts(&doc).iter().any(|t| t == "haddock <t>"));
    assert!(svg.contains("Competition &lt;stocks&gt; &amp; a cycle"));
    let (_, drawn) = crate::render::render(&scene, &FigureOptions::default());
    assert_eq!(drawn.orbits, 2);
    assert_eq!(drawn.limit_cycles, 1);
    assert_eq!(drawn.separatrices, 2);
    assert!(drawn.streamlines && !drawn.field);
}

#[test]
fn lotka_volterra_png_has_the_size_asked_and_visible_content() {
    let scene = lv_scene();
    let opts = FigureOptions {
        caption: Some(
            "Illustrative parameters (a = 1, α = 0.1, c = 1.5, γ = 0.075); not fitted to any stock."
                .into(),
        ),
        ..FigureOptions::default()
    };
    let t0 = Instant::now();
    let svg = render_svg(&scene, &opts);
    let t_svg = t0.elapsed();
    let png = svg_to_png(&svg, opts.width, opts.height).expect("png");
    let t_png = t0.elapsed() - t_svg;
    eprintln!(
        "LV scene: SVG {:.2} ms ({} bytes), PNG {:.2} ms ({} bytes)",
        t_svg.as_secs_f64() * 1e3,
        svg.len(),
        t_png.as_secs_f64() * 1e3,
        png.len()
    );
    std::fs::write("/tmp/quarry_fig_test.png", &png).expect("write png");
    std::fs::write("/tmp/quarry_fig_test.svg", &svg).expect("write svg");
    let p = decode(&png);
    assert_eq!((p.width(), p.height()), (900, 650));
    let (_, drawn) = crate::render::render(&scene, &opts);
    assert!(drawn.field && drawn.orbits == 4 && drawn.equilibria == 2);
    // The plot area holds curves and arrows.
    assert!(ink(&p, 120, 80, 650, 540) > 10_000);
    // The title region holds text: the font was found.
    assert!(ink(&p, 60, 8, 500, 44) > 200);
    // So does the caption line at the bottom.
    assert!(ink(&p, 10, 625, 700, 650) > 100);
}

#[test]
fn kitchen_sink_png_renders() {
    let png = render_png(&kitchen_sink(), &FigureOptions::default()).expect("png");
    std::fs::write("/tmp/quarry_fig_sink.png", &png).expect("write");
    let p = decode(&png);
    assert!(ink(&p, 120, 80, 650, 540) > 3_000);
}

#[test]
fn small_and_large_figures_keep_their_size() {
    for (w, h) in [(320, 240), (1800, 1300), (60, 40), (1, 1)] {
        let opts = FigureOptions {
            width: w,
            height: h,
            ..FigureOptions::default()
        };
        let png = render_png(&lv_scene(), &opts).expect("png");
        let p = decode(&png);
        assert_eq!((p.width(), p.height()), (w, h));
    }
    let png = render_png(
        &lv_scene(),
        &FigureOptions {
            width: 320,
            height: 240,
            ..FigureOptions::default()
        },
    )
    .expect("png");
    std::fs::write("/tmp/quarry_fig_small.png", png).expect("write");
}

#[test]
fn bad_sizes_are_errors_not_panics() {
    for (w, h) in [(0, 100), (100, 0), (16385, 100), (100, 20000)] {
        let opts = FigureOptions {
            width: w,
            height: h,
            ..FigureOptions::default()
        };
        assert!(matches!(
            render_png(&Scene::default(), &opts),
            Err(FigureError::BadSize { .. })
        ));
        assert!(svg_to_png("<svg xmlns=\"http://www.w3.org/2000/svg\"/>", w, h).is_err());
    }
    assert!(matches!(
        svg_to_png("not svg", 10, 10),
        Err(FigureError::Parse(_))
    ));
}

#[test]
fn degenerate_scenes_render_without_panicking() {
    let nan = f64::NAN;
    let mut scenes = vec![Scene::default()];
    let windows = [
        Window {
            x_min: 0.0,
            x_max: 1e-300,
            y_min: 0.0,
            y_max: 1e-300,
        },
        Window {
            x_min: 5.0,
            x_max: 5.0 + 1e-300,
            y_min: -1.0,
            y_max: -1.0,
        },
        Window {
            x_min: -1e308,
            x_max: 1e308,
            y_min: f64::NEG_INFINITY,
            y_max: nan,
        },
        Window {
            x_min: 10.0,
            x_max: 0.0,
            y_min: 0.0,
            y_max: 1e12,
        },
    ];
    let lv = lv_scene();
    for w in windows {
        let mut s = lv.clone();
        s.window = w;
        scenes.push(s);
    }
    let mut broken = lv.clone();
    broken.title = String::new();
    broken.variables = [String::new(), "\u{0}<&>".into()];
    for o in &mut broken.orbits {
        for (i, p) in o.points.iter_mut().enumerate() {
            if i % 7 == 0 {
                p[0] = nan;
            }
            if i % 11 == 0 {
                p[1] = f64::INFINITY;
            }
        }
        o.seed = [nan, nan];
        o.times.clear();
    }
    if let Some(f) = &mut broken.field {
        f.max_speed = nan;
        for s in f.samples.iter_mut().step_by(3) {
            s.rate = [nan, 1.0];
            s.speed = nan;
        }
        f.samples.truncate(5);
    }
    for e in &mut broken.equilibria {
        e.x = nan;
    }
    broken.nullclines.push(Nullcline {
        variable: 7,
        lines: vec![line(vec![[nan, nan]]), line(vec![])],
    });
    broken.separatrices.push(Separatrix {
        saddle: [nan, nan],
        kind: ManifoldKind::Stable,
        line: line(vec![[1e300, -1e300], [-1e300, 1e300], [nan, 0.0]]),
        end: quarry_core::scene::BranchEnd::Failed,
    });
    broken.limit_cycles.push(LimitCycle {
        line: Polyline {
            points: vec![[1.0, 1.0]],
            closed: true,
        },
        period: nan,
        multiplier: nan,
        stability: CycleStability::Attracting,
        min: [nan; 2],
        max: [nan; 2],
    });
    scenes.push(broken);
    // 10⁵ points in one orbit.
    let mut big = lv.clone();
    let pts: Vec<[f64; 2]> = (0..100_000)
        .map(|i| {
            let a = i as f64 * 0.001;
            [
                20.0 + 15.0 * a.cos() * (1.0 + a * 1e-3),
                10.0 + 8.0 * a.sin(),
            ]
        })
        .collect();
    big.orbits = vec![SceneOrbit {
        seed: pts[0],
        times: (0..pts.len()).map(|i| i as f64).collect(),
        points: pts,
        summary: Default::default(),
    }];
    scenes.push(big);

    let opts = FigureOptions {
        caption: Some("x ".repeat(2000)),
        ..FigureOptions::default()
    };
    for (i, scene) in scenes.iter().enumerate() {
        let svg = render_svg(scene, &opts);
        roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("scene {i}: {e}"));
        assert!(!svg.contains("NaN") && !svg.contains("inf"), "scene {i}");
        let png = svg_to_png(&svg, 450, 325).expect("png");
        std::fs::write(format!("/tmp/quarry_fig_degenerate_{i}.png"), &png).expect("write");
        assert_eq!(decode(&png).width(), 450);
    }
}

#[test]
fn huge_orbits_are_decimated_to_a_compact_path() {
    let mut scene = lv_scene();
    let pts: Vec<[f64; 2]> = (0..100_000)
        .map(|i| {
            let a = i as f64 * 1e-4;
            [20.0 + 15.0 * a.cos(), 10.0 + 8.0 * a.sin()]
        })
        .collect();
    scene.orbits = vec![SceneOrbit {
        seed: pts[0],
        times: vec![],
        points: pts,
        summary: Default::default(),
    }];
    scene.field = None;
    let svg = render_svg(&scene, &FigureOptions::default());
    // Ten turns of an ellipse about 1400 px round, at ≥ 0.3 px per vertex.
    assert!(svg.len() < 600_000, "{}", svg.len());
}

#[test]
fn hidden_layers_are_not_drawn_or_listed() {
    let opts = FigureOptions {
        show_field: false,
        show_nullclines: false,
        show_orbits: false,
        show_legend: true,
        ..FigureOptions::default()
    };
    let svg = render_svg(&lv_scene(), &opts);
    let doc = roxmltree::Document::parse(&svg).expect("parses");
    assert_eq!(class_count(&doc, "path", "orbit"), 0);
    assert_eq!(class_count(&doc, "path", "nullcline"), 0);
    assert!(!svg.contains("dx/dt"));
    let no_legend = render_svg(
        &lv_scene(),
        &FigureOptions {
            show_legend: false,
            title: Some(String::new()),
            ..FigureOptions::default()
        },
    );
    assert!(!no_legend.contains("legend-entry"));
    assert!(!no_legend.contains("class=\"title\""));
}

#[test]
fn rendering_is_deterministic() {
    let a = render_svg(&lv_scene(), &FigureOptions::default());
    let b = render_svg(&lv_scene(), &FigureOptions::default());
    assert_eq!(a, b);
}

#[test]
fn every_mark_kind_renders_with_its_own_legend_entry() {
    use quarry_core::analysis::Equilibrium;
    use quarry_core::linear::linearise;
    use quarry_core::verdict::{DecidedBy, NonlinearVerdict, Verdict};
    let jacobians = [
        [[-1.0, 0.0], [0.0, -2.0]],
        [[1.0, 0.0], [0.0, 2.0]],
        [[-0.2, 1.0], [-1.0, -0.2]],
        [[0.2, 1.0], [-1.0, 0.2]],
        [[1.0, 0.0], [0.0, -1.0]],
        [[0.0, 1.0], [-1.0, 0.0]],
        [[0.0, 1.0], [-1.0, 0.0]],
        [[0.0, 1.0], [0.0, 0.0]],
    ];
    let verdicts = [
        None,
        None,
        None,
        None,
        None,
        Some(Verdict::Center),
        Some(Verdict::Undetermined),
        None,
    ];
    let equilibria: Vec<Equilibrium> = jacobians
        .iter()
        .zip(verdicts)
        .enumerate()
        .map(|(i, (j, v))| Equilibrium {
            x: 1.0 + i as f64,
            y: 1.0 + (i % 3) as f64,
            residual: 0.0,
            linear: linearise(*j),
            nonlinear: v.map(|verdict| NonlinearVerdict {
                verdict,
                decided_by: DecidedBy::Nothing {
                    reason: "test".into(),
                },
            }),
        })
        .collect();
    let scene = Scene {
        title: "Marks".into(),
        variables: ["prey".into(), "predators".into()],
        window: Window {
            x_min: 0.0,
            x_max: 9.0,
            y_min: 0.0,
            y_max: 4.0,
        },
        equilibria,
        ..Scene::default()
    };
    let svg = render_svg(&scene, &FigureOptions::default());
    let doc = roxmltree::Document::parse(&svg).expect("parses");
    let legend: Vec<&str> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("legend-entry"))
        .filter_map(|n| n.text())
        .collect();
    assert_eq!(legend.len(), 8, "{legend:?}");
    let png = render_png(&scene, &FigureOptions::default()).expect("png");
    std::fs::write("/tmp/quarry_fig_marks.png", png).expect("write");
}
