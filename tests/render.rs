//! Figures and tables: the SVG parses and holds one path per level curve and
//! one mark per equilibrium, the PNG has the requested size and the markers'
//! colours where the equilibria are, tables keep every digit.

use phasewright::core::Cancel;
use phasewright::core::analysis::Analysis;
use phasewright::core::contour::{Grid, LevelCurve};
use phasewright::core::equilibria::{Equilibrium, EquilibriumKind};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use phasewright::render::png::rasterize;
use phasewright::render::table::{equilibria_table, parameter_pairs, parse_csv};
use phasewright::render::{FigureSize, to_svg};
use phasewright::request::Overrides;
use phasewright::scene::{self, Scene, marker_for, nice_ticks};
use std::f64::consts::PI;

/// The pendulum H = p²/2 − k·cos q. Its level curves have the closed form
/// p = ±sqrt(2(E + k cos q)); the separatrix E = k is p = ±2·sqrt(k)·cos(q/2);
/// the center (0, 0) has H = −k, the saddles (±π, 0) have H = k
/// (common practice: the textbook pendulum portrait).
fn pendulum() -> (System, Analysis) {
    let k = 1.0;
    let sys = System::from_source("p^2/2 - k*cos(q)", &[("k", k)]).unwrap();
    let window = Window::new(-4.0, 4.0, -3.0, 3.0).unwrap();
    let mut curves = Vec::new();
    let n = 400;
    // Librations: closed curves inside the separatrix.
    for e in [-0.8, -0.4, 0.0, 0.4, 0.8] {
        let qmax = (-e / k).acos();
        let mut upper: Vec<[f64; 2]> = (0..=n)
            .map(|i| {
                let q = -qmax + 2.0 * qmax * i as f64 / n as f64;
                [q, (2.0 * (e + k * q.cos())).max(0.0).sqrt()]
            })
            .collect();
        let lower: Vec<[f64; 2]> = upper.iter().rev().map(|&[q, p]| [q, -p]).collect();
        upper.extend(lower);
        curves.push(LevelCurve {
            level: e,
            points: upper,
            closed: true,
            is_separatrix: false,
        });
    }
    // Rotations and the separatrix: open curves across the window, p > 0 and p < 0.
    for (e, sep) in [(k, true), (1.6, false), (2.5, false), (3.4, false)] {
        for sign in [1.0, -1.0] {
            let points = (0..=n)
                .map(|i| {
                    let q = -4.0 + 8.0 * i as f64 / n as f64;
                    [q, sign * (2.0 * (e + k * q.cos())).max(0.0).sqrt()]
                })
                .collect();
            curves.push(LevelCurve {
                level: e,
                points,
                closed: false,
                is_separatrix: sep,
            });
        }
    }
    let eq = |q: f64, kind: EquilibriumKind| {
        let mut e = phasewright::core::equilibria::classify(&sys, q, 0.0, &window);
        e.kind = kind;
        e
    };
    let equilibria: Vec<Equilibrium> = vec![
        eq(-PI, EquilibriumKind::Saddle),
        eq(0.0, EquilibriumKind::Center),
        eq(PI, EquilibriumKind::Saddle),
    ];
    let analysis = Analysis {
        window,
        grid: Grid {
            window,
            nq: 0,
            np: 0,
            values: Vec::new(),
            nonfinite_fraction: 0.0,
            range: Some((-k, 4.5 + k)),
        },
        curves,
        equilibria,
        wells: Vec::new(),
        connections: Vec::new(),
        diagnostics: Vec::new(),
        cancelled: false,
    };
    (sys, analysis)
}

fn pendulum_scene() -> (Scene, Analysis) {
    let (sys, a) = pendulum();
    let mut s = Scene::portrait(&sys, &a);
    // A rotation orbit above the separatrix, traced left to right (q' = p > 0).
    let orbit: Vec<[f64; 2]> = (0..=200)
        .map(|i| {
            let q = -4.0 + 8.0 * i as f64 / 200.0;
            [q, (2.0 * (2.0 + q.cos())).sqrt()]
        })
        .collect();
    s.add_orbit(&orbit, None);
    (s, a)
}

fn has_class(node: &roxmltree::Node, class: &str) -> bool {
    node.attribute("class")
        .is_some_and(|c| c.split_whitespace().any(|w| w == class))
}

#[test]
fn svg_has_one_path_per_level_curve_and_one_mark_per_equilibrium() {
    let (s, a) = pendulum_scene();
    let svg = to_svg(&s, FigureSize::default());
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let levels = doc
        .descendants()
        .filter(|n| n.has_tag_name("path") && has_class(n, "level"))
        .count();
    let separatrices = doc
        .descendants()
        .filter(|n| n.has_tag_name("path") && has_class(n, "separatrix"))
        .count();
    let marks = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "equilibrium"))
        .count();
    assert_eq!(levels, a.curves.len());
    assert_eq!(levels, 13);
    // The separatrix of the pendulum is two arcs, upper and lower (closed form above).
    assert_eq!(separatrices, 2);
    assert_eq!(marks, a.equilibria.len());
    assert_eq!(marks, 3);
    let saddles = doc
        .descendants()
        .filter(|n| n.attribute("data-kind") == Some("saddle") && has_class(n, "mark"))
        .count();
    assert_eq!(saddles, 2);
    // Arrows of the orbit: three per orbit.
    let arrows = doc
        .descendants()
        .filter(|n| has_class(n, "orbit-arrow"))
        .count();
    assert_eq!(arrows, 3);
}

#[test]
fn svg_escapes_text_and_keeps_it_as_text() {
    let (sys, a) = pendulum();
    let s = Scene::portrait(&sys, &a).with_title("Well <A> & \"B\"");
    let svg = to_svg(&s, FigureSize::default());
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let title = doc
        .descendants()
        .find(|n| has_class(n, "title"))
        .and_then(|n| n.text())
        .unwrap();
    assert_eq!(title, "Well <A> & \"B\"");
    let caption = doc
        .descendants()
        .find(|n| has_class(n, "caption"))
        .and_then(|n| n.text())
        .unwrap();
    assert_eq!(caption, "H = p^2/2 - k*cos(q) with k = 1");
}

#[test]
fn png_has_requested_size_and_marker_colours_at_equilibria() {
    let (s, _) = pendulum_scene();
    let size = FigureSize {
        width: 1200,
        height: 900,
    };
    let svg = to_svg(&s, size);
    let pixmap = rasterize(&svg, 1.0).unwrap();
    assert_eq!((pixmap.width(), pixmap.height()), (1200, 900));
    // Not blank: many pixels differ from white.
    let dark = drawn_pixels(&pixmap);
    assert!(dark > 10_000, "only {dark} drawn pixels");
    // The mark's centre in pixels: read it back from the SVG the PNG was made from.
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let scale = pixel_scale(&doc, 1200);
    for m in doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "equilibrium"))
    {
        let kind = match m.attribute("data-kind") {
            Some("center") => EquilibriumKind::Center,
            Some("saddle") => EquilibriumKind::Saddle,
            _ => EquilibriumKind::Degenerate,
        };
        assert_mark_colour(
            &pixmap,
            scale,
            &m,
            marker_for(kind).colour,
            &format!("{kind:?}"),
        );
    }
}

/// Pixels of `pixmap` drawn in something other than near-white.
fn drawn_pixels(pixmap: &resvg::tiny_skia::Pixmap) -> usize {
    pixmap
        .pixels()
        .iter()
        .filter(|p| p.red() < 200 || p.green() < 200 || p.blue() < 200)
        .count()
}

/// Output pixels per SVG unit: the PNG's width over the viewBox's.
fn pixel_scale(doc: &roxmltree::Document, width: u32) -> f64 {
    let view: Vec<f64> = doc
        .root_element()
        .attribute("viewBox")
        .unwrap()
        .split(' ')
        .map(|v| v.parse().unwrap())
        .collect();
    f64::from(width) / view[2]
}

/// Assert that the pixel at the centre of mark group `g` has colour `want` (within 24 per channel).
fn assert_mark_colour(
    pixmap: &resvg::tiny_skia::Pixmap,
    scale: f64,
    g: &roxmltree::Node,
    want: scene::Rgb,
    what: &str,
) {
    let (cx, cy) = marker_centre(g);
    let (px, py) = ((cx * scale).floor() as u32, (cy * scale).floor() as u32);
    let p = pixmap.pixel(px, py).unwrap();
    let close = |a: u8, b: u8| (i32::from(a) - i32::from(b)).abs() <= 24;
    assert!(
        close(p.red(), want.0) && close(p.green(), want.1) && close(p.blue(), want.2),
        "{what} at ({px},{py}) is {:?}, want {want:?}",
        (p.red(), p.green(), p.blue())
    );
}

/// The centre of a mark group: its square's or first circle's centre, or the midpoint of its first path.
fn marker_centre(g: &roxmltree::Node) -> (f64, f64) {
    if let Some(r) = g.children().find(|n| n.has_tag_name("rect")) {
        let v = |a| r.attribute(a).unwrap().parse::<f64>().unwrap();
        return (v("x") + v("width") / 2.0, v("y") + v("height") / 2.0);
    }
    if let Some(c) = g.children().find(|n| n.has_tag_name("circle")) {
        let v = |a| c.attribute(a).unwrap().parse::<f64>().unwrap();
        return (v("cx"), v("cy"));
    }
    let d = g
        .children()
        .find(|n| n.has_tag_name("path"))
        .and_then(|n| n.attribute("d"))
        .unwrap();
    let nums: Vec<f64> = d
        .split(|c: char| c == 'M' || c == 'L' || c == ' ' || c == 'Z')
        .filter(|s| !s.is_empty())
        .map(|s| s.parse().unwrap())
        .collect();
    // Cross: M x-h y-h L x+h y+h …; midpoint of the first stroke.
    ((nums[0] + nums[2]) / 2.0, (nums[1] + nums[3]) / 2.0)
}

#[test]
fn ticks_step_by_one_two_or_five_times_a_power_of_ten() {
    // Steps 1, 2, 5 × 10^k (common practice for axis ticks).
    let (t, step) = nice_ticks(-4.0, 4.0, 8);
    assert_eq!(step, 1.0);
    assert_eq!(t, vec![-4.0, -3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0, 4.0]);
    let (t, step) = nice_ticks(0.0, 0.013, 6);
    assert!((step - 0.002).abs() < 1e-15);
    assert_eq!(t.len(), 7);
    let (_, step) = nice_ticks(-1.0, 5.5, 5);
    assert_eq!(step, 2.0);
    let (_, step) = nice_ticks(10.0, 270.0, 5);
    assert_eq!(step, 50.0);
    assert_eq!(phasewright::numbers::tick(-0.5, 0.5), "\u{2212}0.5");
    assert_eq!(phasewright::numbers::tick(2.0, 1.0), "2");
}

#[test]
fn equilibria_csv_keeps_every_digit() {
    let (sys, a) = pendulum();
    let params = parameter_pairs(&sys);
    let table = equilibria_table(&a.equilibria, &params);
    let rows = parse_csv(&table.to_csv());
    assert_eq!(rows[0][0], "q");
    assert_eq!(rows[0].last().map(String::as_str), Some("k"));
    assert_eq!(rows.len(), a.equilibria.len() + 1);
    for (row, e) in rows[1..].iter().zip(&a.equilibria) {
        // π and −π must come back bit for bit.
        assert_eq!(row[0].parse::<f64>().unwrap().to_bits(), e.q.to_bits());
        assert_eq!(row[2].parse::<f64>().unwrap().to_bits(), e.energy.to_bits());
    }
    let json: serde_json::Value = serde_json::from_str(&table.to_json()).unwrap();
    assert_eq!(json[0]["q"].as_f64().unwrap(), -PI);
    assert_eq!(json[0]["kind"], "saddle");
    let _ = Cancel::never();
}

#[test]
fn figure_size_parse_rejects_bad_text_with_a_reason() {
    assert_eq!(
        FigureSize::parse("1600x1200"),
        Ok(FigureSize {
            width: 1600,
            height: 1200
        })
    );
    assert!(
        FigureSize::parse("1600")
            .unwrap_err()
            .contains("WIDTHxHEIGHT")
    );
    assert!(FigureSize::parse("0x100").unwrap_err().contains("width 0"));
    assert!(
        FigureSize::parse("800xabc")
            .unwrap_err()
            .contains("height 'abc'")
    );
}

fn sessions_dir() -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sessions")
}

fn session_files() -> Vec<std::path::PathBuf> {
    let mut files: Vec<_> = std::fs::read_dir(sessions_dir())
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        // the format's schema lives beside the examples
        .filter(|p| !p.to_string_lossy().ends_with(".schema.json"))
        .collect();
    files.sort();
    files
}

#[test]
fn every_session_svg_matches_its_analysis() {
    let files = session_files();
    assert!(files.len() >= 3, "too few sessions: {files:?}");
    for path in files {
        let (session, _) = phasewright::session::load_file(&path).unwrap();
        let sys = session.system().unwrap();
        let a = phasewright::core::analysis::analyze(
            &sys,
            &session.view,
            &session.analysis_config(),
            &Cancel::never(),
        );
        let s = Scene::portrait(&sys, &a).with_title(&session.title);
        let svg = to_svg(&s, FigureSize::default());
        let doc =
            roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let levels = doc
            .descendants()
            .filter(|n| n.has_tag_name("path") && has_class(n, "level"))
            .count();
        let marks = doc
            .descendants()
            .filter(|n| n.has_tag_name("g") && has_class(n, "equilibrium"))
            .count();
        assert!(!a.curves.is_empty(), "{}: no level curves", path.display());
        assert_eq!(levels, a.curves.len(), "{}", path.display());
        assert_eq!(marks, a.equilibria.len(), "{}", path.display());
    }
}

fn run(args: &[&str]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
        .unwrap()
}

#[test]
fn render_command_writes_every_session_as_png_of_the_requested_size() {
    let dir = tempfile::tempdir().unwrap();
    for path in session_files() {
        let out = dir.path().join("figure.png");
        let o = run(&[
            "render",
            path.to_str().unwrap(),
            "-o",
            out.to_str().unwrap(),
            "--size",
            "640x480",
        ]);
        assert!(
            o.status.success(),
            "{}: {}",
            path.display(),
            String::from_utf8_lossy(&o.stderr)
        );
        let bytes = std::fs::read(&out).unwrap();
        let pixmap = resvg::tiny_skia::Pixmap::decode_png(&bytes).unwrap();
        assert_eq!((pixmap.width(), pixmap.height()), (640, 480));
    }
}

#[test]
fn render_command_refuses_bad_input_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let session = sessions_dir().join("biased-resonator.json");
    let session = session.to_str().unwrap();
    let svg = dir.path().join("f.svg");
    let svg = svg.to_str().unwrap();
    let cases: [(&[&str], &str); 4] = [
        (&["render", session, "-o", "figure.gif"], ".svg or .png"),
        (&["render", session, "-o", svg, "--size", "big"], "--size"),
        (
            &["render", session, "-o", svg, "--size", "10x10"],
            "outside",
        ),
        (&["render", "no-such.json", "-o", svg], "no-such.json"),
    ];
    for (args, needle) in cases {
        let o = run(args);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(needle), "{args:?}: {err}");
    }
    assert!(!dir.path().join("f.svg").exists());
}

#[test]
fn render_command_csv_holds_the_analysis_values_bit_for_bit() {
    let dir = tempfile::tempdir().unwrap();
    let path = sessions_dir().join("biased-resonator.json");
    let csv = dir.path().join("equilibria.csv");
    let o = run(&[
        "render",
        path.to_str().unwrap(),
        "-o",
        csv.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let rows = parse_csv(&std::fs::read_to_string(&csv).unwrap());
    let (session, _) = phasewright::session::load_file(&path).unwrap();
    let sys = session.system().unwrap();
    let a = phasewright::core::analysis::analyze(
        &sys,
        &session.view,
        &session.analysis_config(),
        &Cancel::never(),
    );
    // The session's notes: a saddle-node has made a second well, so three
    // equilibria (two centers, one saddle) lie in view.
    assert_eq!(a.equilibria.len(), 3);
    assert_eq!(rows.len(), a.equilibria.len() + 1);
    let header = &rows[0];
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    for (row, e) in rows[1..].iter().zip(&a.equilibria) {
        for (name, v) in [("q", e.q), ("p", e.p), ("E", e.energy)] {
            let read: f64 = row[col(name)].parse().unwrap();
            assert_eq!(
                read.to_bits(),
                v.to_bits(),
                "{name}: {} vs {v:?}",
                row[col(name)]
            );
        }
        assert_eq!(row[col("b")], "2.3");
    }
    let json = dir.path().join("wells.json");
    let o = run(&[
        "render",
        path.to_str().unwrap(),
        "-o",
        json.to_str().unwrap(),
        "--table",
        "wells",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(v.as_array().unwrap().len(), a.wells.len());
    for (row, w) in v.as_array().unwrap().iter().zip(&a.wells) {
        assert_eq!(
            row["energy"].as_f64().unwrap().to_bits(),
            w.energy.to_bits()
        );
    }
}

/// The imperfect pitchfork H = p²/2 + q⁴/4 − μq²/2 − εq at ε = 0.05 and the
/// given μ, with a window holding all its equilibria for |μ| ≤ 1.
fn imperfect_pitchfork(mu: f64) -> (System, Window) {
    let sys = System::from_source(
        "p^2/2 + q^4/4 - mu*q^2/2 - eps*q",
        &[("mu", mu), ("eps", 0.05)],
    )
    .unwrap();
    (sys, Window::new(-2.0, 2.0, -1.0, 1.0).unwrap())
}

/// The imperfect pitchfork H = p²/2 + q⁴/4 − μq²/2 − εq with ε = 0.05 swept
/// over μ in [−1, 1]: one saddle-node at μ = (27ε²/4)^(1/3) = 0.25649639200150,
/// q = −√(μ/3) (cusp catastrophe; closed form).
fn imperfect_pitchfork_sweep() -> (System, phasewright::core::continuation::Sweep) {
    use phasewright::core::continuation::{SweepConfig, sweep};
    let (sys, window) = imperfect_pitchfork(0.1);
    let s = sweep(
        &sys,
        "mu",
        -1.0,
        1.0,
        &window,
        &SweepConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .unwrap();
    (sys, s)
}

#[test]
fn diagram_scene_draws_each_branch_once_and_labels_the_saddle_node() {
    use phasewright::scene::{BIFURCATION_MARKER, CurveRole, MarkRole};
    let (sys, s) = imperfect_pitchfork_sweep();
    let scene = Scene::diagram(&sys, &s, Some(0.1));
    let branches: Vec<_> = scene.curves_with("branch").collect();
    assert_eq!(branches.len(), s.branches.len());
    assert_eq!(branches.len(), 3);
    for (c, b) in branches.iter().zip(&s.branches) {
        assert_eq!(c.role, CurveRole::Branch { kind: b.kind });
        // Saddle branches dashed, center branches solid.
        assert_eq!(c.dashed, b.kind == EquilibriumKind::Saddle, "{:?}", b.kind);
        assert_eq!(c.points.len(), b.points.len());
        assert_eq!(c.points[0], [b.points[0].param, b.points[0].q]);
    }
    assert_eq!(scene.marks.len(), 1);
    let m = &scene.marks[0];
    assert_eq!(m.role, MarkRole::Bifurcation);
    assert_eq!(m.style, BIFURCATION_MARKER);
    // μ* = 0.25649639… rounds to 0.25650 (closed form above).
    assert_eq!(m.label.as_deref(), Some("saddle-node mu = 0.25650"));
    assert!((m.at[1] + 0.29240177382129).abs() < 1e-8);
    let guides: Vec<_> = scene.curves_with("guide").collect();
    assert_eq!(guides.len(), 1);
    assert_eq!(guides[0].points[0][0], 0.1);
    assert_eq!((scene.x.min, scene.x.max), (-1.0, 1.0));
    assert_eq!(scene.x.label, "mu");
    assert!(scene.caption.contains("eps = 0.05") && !scene.caption.contains("mu = 0.1"));
    assert!(
        scene.caption.ends_with("mu from -1 to 1"),
        "{}",
        scene.caption
    );
    // A current value outside the range draws no guide.
    let outside = Scene::diagram(&sys, &s, Some(3.0));
    assert_eq!(outside.curves_with("guide").count(), 0);
}

#[test]
fn backbone_scene_plots_period_against_energy_up_to_the_escape_energy() {
    use phasewright::core::backbone::{BackboneConfig, backbone};
    use phasewright::scene::BackbonePlot;
    // Pendulum H = p²/2 − cos q: the well at 0 escapes over the saddles at H = 1,
    // and T → 2π as E → −1 (common practice: the textbook pendulum).
    let sys = System::from_source("p^2/2 - cos(q)", &[]).unwrap();
    let window = Window::new(-4.0, 4.0, -3.0, 3.0).unwrap();
    let cfg = BackboneConfig {
        energies: 40,
        ..BackboneConfig::default()
    };
    let b = backbone(
        &sys,
        [0.1, 0.0],
        &window,
        &cfg,
        &Cancel::never(),
        &|_, _| {},
    )
    .unwrap();
    let scene = Scene::backbone(&sys, &b, BackbonePlot::PeriodEnergy);
    let curve = scene.curves_with("backbone").next().unwrap();
    assert_eq!(curve.points.len(), b.rows.len());
    for (pt, row) in curve.points.iter().zip(&b.rows) {
        assert_eq!(*pt, [row.energy, row.period]);
    }
    assert!((curve.points[0][1] - 2.0 * PI).abs() < 1e-9);
    let guide = scene.curves_with("guide").next().unwrap();
    assert!((guide.points[0][0] - 1.0).abs() < 1e-12);
    assert!(scene.x.min <= -1.0 && scene.x.max >= 1.0);
    let fa = Scene::backbone(&sys, &b, BackbonePlot::FrequencyAmplitude);
    let curve = fa.curves_with("backbone").next().unwrap();
    assert_eq!(curve.points[3], [b.rows[3].amplitude, b.rows[3].frequency]);
    assert_eq!(fa.curves_with("guide").count(), 0);
    assert_eq!(fa.y.label, "frequency \u{3c9}");
}

#[test]
fn folds_scene_draws_the_cusp_curve_and_marks_the_cusp() {
    use phasewright::core::folds::{FoldConfig, fold_curves};
    use phasewright::scene::MarkRole;
    // 27ε² = 4μ³ with its cusp at μ = ε = 0 (cusp catastrophe; closed form).
    let (sys, window) = imperfect_pitchfork(0.5);
    let f = fold_curves(
        &sys,
        ["mu", "eps"],
        [-0.5, 1.0, -0.2, 0.2],
        &window,
        &FoldConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .unwrap();
    let scene = Scene::folds(&sys, &f, Some([0.5, 0.05]));
    let folds: Vec<_> = scene.curves_with("fold").collect();
    assert_eq!(folds.len(), 1);
    for [mu, eps] in &folds[0].points {
        assert!((27.0 * eps * eps - 4.0 * mu * mu * mu).abs() < 1e-10);
    }
    assert_eq!(scene.marks.len(), 1);
    assert_eq!(scene.marks[0].role, MarkRole::Cusp);
    assert_eq!(
        scene.marks[0].label.as_deref(),
        Some("cusp mu = 0.00000, eps = 0.00000")
    );
    assert_eq!(scene.curves_with("guide").count(), 2);
    assert_eq!(
        [scene.x.min, scene.x.max, scene.y.min, scene.y.max],
        [-0.5, 1.0, -0.2, 0.2]
    );
    assert_eq!(scene.x.label, "mu");
    assert_eq!(scene.y.label, "eps");
}

#[test]
fn diagram_svg_has_one_path_per_branch_and_one_mark_per_bifurcation() {
    let (sys, s) = imperfect_pitchfork_sweep();
    let svg = to_svg(&Scene::diagram(&sys, &s, Some(0.1)), FigureSize::default());
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let branches: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("path") && has_class(n, "branch"))
        .collect();
    assert_eq!(branches.len(), s.branches.len());
    let dashed = branches
        .iter()
        .filter(|n| n.attribute("stroke-dasharray").is_some())
        .count();
    let saddles = s
        .branches
        .iter()
        .filter(|b| b.kind == EquilibriumKind::Saddle)
        .count();
    // The folded branch: one saddle half between two center pieces (closed form above).
    assert_eq!((dashed, saddles), (1, 1));
    let marks: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "bifurcation"))
        .collect();
    assert_eq!(marks.len(), s.bifurcations.len());
    let label = marks[0]
        .descendants()
        .find(|n| n.has_tag_name("text"))
        .and_then(|n| n.text())
        .unwrap();
    assert_eq!(label, "saddle-node mu = 0.25650");
    let mu: f64 = marks[0].attribute("data-x").unwrap().parse().unwrap();
    assert_eq!(mu.to_bits(), s.bifurcations[0].param.to_bits());
}

#[test]
fn diagram_png_has_the_bifurcation_marker_colour_at_the_saddle_node() {
    let (sys, s) = imperfect_pitchfork_sweep();
    let size = FigureSize {
        width: 1600,
        height: 1200,
    };
    let svg = to_svg(&Scene::diagram(&sys, &s, None), size);
    let pixmap = rasterize(&svg, 1.0).unwrap();
    assert_eq!((pixmap.width(), pixmap.height()), (1600, 1200));
    let drawn = drawn_pixels(&pixmap);
    assert!(drawn > 5_000, "only {drawn} drawn pixels");
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let mark = doc
        .descendants()
        .find(|n| n.has_tag_name("g") && has_class(n, "bifurcation"))
        .unwrap();
    let want = scene::BIFURCATION_MARKER.colour;
    assert_mark_colour(&pixmap, pixel_scale(&doc, 1600), &mark, want, "saddle-node");
}

/// The views a session's settings allow (a backbone needs a center in view,
/// which every example has, and an H without t or a drive that names H₀;
/// a section and a Melnikov function need a drive).
fn views_of(session: &phasewright::session::Session) -> Vec<&'static str> {
    let mut views = vec!["portrait"];
    if !session.system().unwrap().depends_on_time() || session.drive.is_some() {
        views.push("backbone");
    }
    if session.drive.is_some() {
        views.push("section");
        views.push("melnikov");
    }
    if session.sweep.is_some() {
        views.push("sweep");
    }
    if session.folds.is_some() {
        views.push("folds");
    }
    if session.quantum.is_some() {
        views.push("levels");
    }
    views
}

#[test]
fn render_command_draws_every_session_in_every_view_its_settings_allow() {
    let dir = tempfile::tempdir().unwrap();
    let mut diagrams = 0;
    let mut driven = 0;
    for path in session_files() {
        let (session, _) = phasewright::session::load_file(&path).unwrap();
        for view in views_of(&session) {
            let out = dir.path().join(format!("{view}.svg"));
            let o = run(&[
                "render",
                path.to_str().unwrap(),
                "-o",
                out.to_str().unwrap(),
                "--figure",
                view,
            ]);
            assert!(
                o.status.success(),
                "{} --figure {view}: {}",
                path.display(),
                String::from_utf8_lossy(&o.stderr)
            );
            let svg = std::fs::read_to_string(&out).unwrap();
            let doc = roxmltree::Document::parse(&svg).unwrap();
            let class = match view {
                "portrait" => "level",
                "sweep" => "branch",
                "folds" => "fold",
                "levels" => "quantum-level",
                "section" => "cloud",
                other => other,
            };
            let curves = doc
                .descendants()
                .filter(|n| n.has_tag_name("path") && has_class(n, class))
                .count();
            assert!(
                curves > 0,
                "{} --figure {view}: no {class} path",
                path.display()
            );
            diagrams += usize::from(view == "sweep");
            driven += usize::from(view == "section");
        }
    }
    assert!(diagrams >= 4, "only {diagrams} sessions have a sweep");
    assert!(driven >= 2, "only {driven} sessions have a drive");
}

#[test]
fn render_command_names_the_missing_settings_and_exits_2() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("d.svg");
    // A formula without parameters has nothing to sweep and no fold plane.
    for (view, flag) in [("diagram", "--param"), ("folds", "--box")] {
        let o = run(&[
            "render",
            "--formula",
            "p^2/2 + q^2/2",
            "-o",
            out.to_str().unwrap(),
            "--view",
            view,
        ]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{view}: {err}");
        assert!(
            err.contains(flag) && err.contains("parameter"),
            "{view}: {err}"
        );
    }
    assert!(!out.exists());
}

/// Without `sweep` or `folds` sections `render` makes what the explorer's panes
/// show: the first parameter over its slider range, the first two parameters'
/// plane (the bond example has neither section; D runs over 1..8 on its slider).
#[test]
fn render_without_pane_settings_uses_the_explorers_defaults() {
    let dir = tempfile::tempdir().unwrap();
    let path = sessions_dir().join("diatomic-bond.json");
    let out = dir.path().join("d.csv");
    let o = run(&[
        "render",
        path.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
        "--view",
        "diagram",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.lines().count() > 10, "a diagram table: {text}");
    // Flags still replace the defaults.
    let o = run(&[
        "render",
        path.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
        "--view",
        "diagram",
        "--param",
        "D",
        "--from",
        "1",
        "--to",
        "8",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

/// Run `render` of `session` to a CSV file with extra flags; the parsed rows.
fn render_csv(session: &str, flags: &[&str]) -> Vec<Vec<String>> {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("t.csv");
    let path = sessions_dir().join(session);
    let mut args = vec![
        "render",
        path.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
    ];
    args.extend(flags);
    let o = run(&args);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    parse_csv(&std::fs::read_to_string(&out).unwrap())
}

fn bits(text: &str) -> u64 {
    text.parse::<f64>().unwrap().to_bits()
}

fn load_example(name: &str) -> (phasewright::session::Session, System) {
    let (session, _) = phasewright::session::load_file(&sessions_dir().join(name)).unwrap();
    let sys = session.system().unwrap();
    (session, sys)
}

#[test]
fn sweep_csv_holds_the_branches_and_bifurcations_bit_for_bit() {
    // the older spellings `--view` and `diagram` are still read
    let rows = render_csv("imperfect-strut.json", &["--view", "diagram"]);
    let (session, sys) = load_example("imperfect-strut.json");
    let s = phasewright::render::sweep_of(&session, &sys, &session.view, &Cancel::never()).unwrap();
    // Header: the swept parameter by name, then the other parameters' values.
    assert_eq!(
        rows[0],
        ["row", "branch", "P", "q", "p", "energy", "kind", "g", "w"]
    );
    let points: Vec<_> = s.branches.iter().flat_map(|b| &b.points).collect();
    assert_eq!(rows.len(), 1 + points.len() + s.bifurcations.len());
    for (row, pt) in rows[1..].iter().zip(&points) {
        assert_eq!(row[0], "point");
        for (i, v) in [(2, pt.param), (3, pt.q), (4, pt.p), (5, pt.energy)] {
            assert_eq!(bits(&row[i]), v.to_bits(), "{row:?}");
        }
        assert_eq!(row[6], scene::kind_name(pt.kind));
    }
    let last = &rows[rows.len() - 1];
    let b = &s.bifurcations[s.bifurcations.len() - 1];
    assert_eq!(
        (last[0].as_str(), last[6].as_str()),
        ("bifurcation", "saddle-node")
    );
    assert_eq!(bits(&last[2]), b.param.to_bits());
    assert_eq!(bits(&last[3]), b.q.to_bits());
    assert_eq!(last[7], "0.8");
}

#[test]
fn folds_csv_holds_the_curves_and_cusps_bit_for_bit() {
    let rows = render_csv("imperfect-strut.json", &["--view", "folds"]);
    let (session, sys) = load_example("imperfect-strut.json");
    let f = phasewright::render::folds_of(&session, &sys, &session.view, &Cancel::never()).unwrap();
    assert_eq!(rows[0], ["row", "curve", "P", "w", "q", "p", "energy", "g"]);
    let points: Vec<_> = f.curves.iter().flat_map(|c| &c.points).collect();
    assert_eq!(rows.len(), 1 + points.len() + f.cusps.len());
    for (row, pt) in rows[1..]
        .iter()
        .zip(points.iter().chain(&f.cusps.iter().collect::<Vec<_>>()))
    {
        for (i, v) in [
            (2, pt.params[0]),
            (3, pt.params[1]),
            (4, pt.q),
            (5, pt.p),
            (6, pt.energy),
        ] {
            assert_eq!(bits(&row[i]), v.to_bits(), "{row:?}");
        }
    }
    // The strut's cusp: P = 1, w = 0 (cusp catastrophe of q⁴/4 − (P − 1)q²/2 − wq; closed form).
    let cusp = &rows[rows.len() - 1];
    assert_eq!(cusp[0], "cusp");
    assert!(
        (cusp[2].parse::<f64>().unwrap() - 1.0).abs() < 1e-8,
        "{cusp:?}"
    );
    assert!(cusp[3].parse::<f64>().unwrap().abs() < 1e-8, "{cusp:?}");
}

#[test]
fn backbone_csv_holds_every_row_bit_for_bit() {
    let rows = render_csv("biased-resonator.json", &["--view", "backbone"]);
    let (session, sys) = load_example("biased-resonator.json");
    let b = phasewright::render::backbone_of(
        &session,
        &sys,
        &session.view,
        &Overrides::default(),
        &Cancel::never(),
    )
    .unwrap();
    assert_eq!(
        rows[0],
        [
            "energy",
            "period",
            "frequency",
            "action",
            "amplitude",
            "k",
            "b",
            "c"
        ]
    );
    assert_eq!(rows.len(), 1 + b.rows.len());
    for (row, r) in rows[1..].iter().zip(&b.rows) {
        for (i, v) in [r.energy, r.period, r.frequency, r.action, r.amplitude]
            .into_iter()
            .enumerate()
        {
            assert_eq!(bits(&row[i]), v.to_bits(), "{row:?}");
        }
    }
    // Small oscillations in the well at q = 0 with unit stiffness and mass: T = 2π (closed form).
    assert!((rows[1][1].parse::<f64>().unwrap() - 2.0 * PI).abs() < 1e-9);
}

#[cfg(feature = "gui")]
#[test]
fn explorer_export_writes_the_same_bytes_as_the_render_command() {
    use phasewright::render::{ExportFormat, FigureFormat, PortraitTable, View};
    let dir = tempfile::tempdir().unwrap();
    let (session, _) = load_example("imperfect-strut.json");
    let path = sessions_dir().join("imperfect-strut.json");
    let cases = [
        (
            View::Diagram,
            "diagram",
            ExportFormat::Figure(FigureFormat::Svg),
            "svg",
        ),
        (
            View::Folds,
            "folds",
            ExportFormat::Csv(PortraitTable::Equilibria),
            "csv",
        ),
    ];
    for (view, flag, format, ext) in cases {
        let from_cli = dir.path().join(format!("cli.{ext}"));
        let o = run(&[
            "render",
            path.to_str().unwrap(),
            "-o",
            from_cli.to_str().unwrap(),
            "--view",
            flag,
        ]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let from_gui = dir.path().join(format!("gui.{ext}"));
        let done = phasewright::gui::export_to_file(
            &session,
            &Overrides::default(),
            view,
            format,
            &from_gui,
        )
        .unwrap();
        assert!(done.starts_with("exported"), "{done}");
        assert_eq!(
            std::fs::read(&from_gui).unwrap(),
            std::fs::read(&from_cli).unwrap(),
            "{flag}"
        );
    }
    // A session whose formula has no parameter has no diagram: the export
    // says so and writes nothing.
    let plain = phasewright::session::Session::blank("p^2/2 + q^2/2");
    let target = dir.path().join("none.svg");
    let e = phasewright::gui::export_to_file(
        &plain,
        &Overrides::default(),
        View::Diagram,
        ExportFormat::Figure(FigureFormat::Svg),
        &target,
    )
    .unwrap_err();
    assert!(e.contains("no parameter"), "{e}");
    assert!(!target.exists());
}

#[test]
fn levels_figure_draws_each_level_between_its_turning_points() {
    // Harmonic oscillator H = p²/2 + q²/2, ħ = 0.25: Eₙ = ħ(n + ½) with
    // turning points ±√(2Eₙ) (closed form); the window edge q = ±2 bounds
    // the well at E = 2, so ⌈2/0.25 − ½⌉ = 8 levels.
    use phasewright::render::{View, ViewData, view_data, view_scene};
    use phasewright::scene::CurveRole;
    let (mut s, _) = phasewright::session::Session::from_formula("p^2/2 + q^2/2").unwrap();
    s.view = phasewright::core::window::Window::new(-2.0, 2.0, -3.0, 3.0).unwrap();
    s.quantum = Some(phasewright::session::QuantumSettings::new("0.25"));
    let sys = s.system().unwrap();
    let cancel = phasewright::core::Cancel::never();
    let data = view_data(
        &s,
        &sys,
        &s.view,
        View::Levels,
        &Overrides::default(),
        &cancel,
    )
    .unwrap();
    assert!(matches!(data, ViewData::Levels(_)));
    let scene = view_scene(&s, &sys, &data, View::Levels);
    let levels: Vec<_> = scene
        .curves
        .iter()
        .filter_map(|c| match c.role {
            CurveRole::QuantumLevel { n } => Some((n, &c.points)),
            _ => None,
        })
        .collect();
    assert_eq!(levels.len(), 8);
    for (n, pts) in levels {
        let e = 0.25 * (n as f64 + 0.5);
        let q = (2.0 * e).sqrt();
        assert!((pts[0][1] - e).abs() < 1e-12 && (pts[1][1] - e).abs() < 1e-12);
        assert!(
            (pts[0][0] + q).abs() < 1e-9 && (pts[1][0] - q).abs() < 1e-9,
            "{pts:?}"
        );
    }
    assert!(scene.caption.contains("not spectroscopic values"));
    assert!(scene.curves.iter().any(|c| c.role == CurveRole::Potential));
}

#[test]
fn melnikov_figure_marks_the_zeros_and_states_the_closed_form_threshold() {
    // Driven double well q'' = q − q³ − δq' + γ cos(ωt), H = p²/2 − q²/2 +
    // q⁴/4 − γ q cos(ωt): M(t₀) = −4δ/3 ± √2·π·γ·ω·sech(πω/2)·sin(ωt₀), so
    // the threshold is γ = δ·4 cosh(πω/2)/(3√2 π ω) and above it each loop's
    // M has two simple zeros per period (J. Guckenheimer and P. Holmes,
    // Nonlinear Oscillations, Dynamical Systems, and Bifurcations of Vector
    // Fields, 1983, §4.5).
    use phasewright::render::{View, ViewData, view_data, view_scene};
    use phasewright::scene::{CurveRole, MarkRole};
    let (w, delta) = (1.0f64, 0.25f64);
    let threshold = delta * 4.0 * (std::f64::consts::PI * w / 2.0).cosh()
        / (3.0 * 2f64.sqrt() * std::f64::consts::PI * w);
    let (mut s, _) =
        phasewright::session::Session::from_formula("p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)")
            .unwrap();
    s.view = phasewright::core::window::Window::new(-2.0, 2.0, -1.5, 1.5).unwrap();
    for p in &mut s.parameters {
        p.value = if p.name == "W" { w } else { 0.3 };
    }
    s.drive = Some(phasewright::session::drive::DriveSettings {
        period: "2*pi/W".into(),
        damping: Some(format!("{delta}")),
        amplitude: Some("F".into()),
        ..Default::default()
    });
    let sys = s.system().unwrap();
    let data = view_data(
        &s,
        &sys,
        &s.view,
        View::Melnikov,
        &Overrides::default(),
        &Cancel::never(),
    )
    .unwrap();
    let ViewData::Melnikov(m) = &data else {
        panic!("not a Melnikov result")
    };
    let found = m.threshold_amplitude.unwrap();
    assert!(
        (found - threshold).abs() < 1e-8 * threshold,
        "{found} against {threshold}"
    );
    let scene = view_scene(&s, &sys, &data, View::Melnikov);
    assert!(
        scene.title.contains(&phasewright::numbers::caption(found)),
        "{}",
        scene.title
    );
    let curves = scene.curves_with("melnikov").count();
    assert_eq!(curves, 2, "one curve per loop");
    // F = 0.3 is above the threshold (about 0.188): two zeros on each loop, each on M = 0
    let zeros: Vec<_> = scene
        .marks
        .iter()
        .filter(|k| k.role == MarkRole::Zero)
        .collect();
    assert_eq!(zeros.len(), 4);
    for z in zeros {
        assert_eq!(z.at[1], 0.0);
        assert!(z.at[0] >= 0.0 && z.at[0] <= 2.0 * std::f64::consts::PI / w);
    }
    // each curve's largest value: F·√2·π·ω·sech(πω/2) − 4δ/3 (same source)
    let peak = 0.3 * 2f64.sqrt() * std::f64::consts::PI * w
        / (std::f64::consts::PI * w / 2.0).cosh()
        - 4.0 * delta / 3.0;
    for c in scene
        .curves
        .iter()
        .filter(|c| c.role == CurveRole::Melnikov)
    {
        let top = c
            .points
            .iter()
            .map(|p| p[1])
            .fold(f64::NEG_INFINITY, f64::max);
        // 64 samples a period: the sampled peak is within 1 − cos(π/64) of the true one
        assert!(
            top <= peak + 1e-9 && top > peak - 2e-3,
            "{top} against {peak}"
        );
    }
    let svg = to_svg(&scene, FigureSize::default());
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let zeros = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && has_class(n, "zero"))
        .count();
    assert_eq!(zeros, 4);
}

#[test]
fn section_figure_draws_each_start_as_a_cloud_over_the_faint_separatrices() {
    // The undriven double well H₀ = p²/2 − q²/2 + q⁴/4 has its separatrix at
    // H₀ = 0 (closed form: the saddle at the origin); the section shows one
    // cloud per start with every point's q and p as computed.
    use phasewright::render::{View, ViewData, view_data, view_scene};
    let (mut s, _) =
        phasewright::session::Session::from_formula("p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)")
            .unwrap();
    s.view = phasewright::core::window::Window::new(-2.0, 2.0, -1.5, 1.5).unwrap();
    for p in &mut s.parameters {
        p.value = if p.name == "W" { 1.2 } else { 0.02 };
    }
    s.drive = Some(phasewright::session::drive::DriveSettings {
        period: "2*pi/W".into(),
        periods: Some(20),
        lattice: Some(3),
        ..Default::default()
    });
    // vertices refined onto the exact level, so the check below is tight
    s.levels.refine = true;
    let sys = s.system().unwrap();
    let data = view_data(
        &s,
        &sys,
        &s.view,
        View::Section,
        &Overrides::default(),
        &Cancel::never(),
    )
    .unwrap();
    let ViewData::Section(d) = &data else {
        panic!("not a section")
    };
    let scene = view_scene(&s, &sys, &data, View::Section);
    let with_points = d
        .section
        .orbits
        .iter()
        .filter(|o| !o.points.is_empty())
        .count();
    assert_eq!(scene.clouds.len(), with_points);
    assert!(with_points >= 5, "{with_points} of 9 starts stayed in view");
    let seps: Vec<_> = scene.curves_with("separatrix").collect();
    assert!(!seps.is_empty());
    for c in &seps {
        assert_eq!(c.colour, phasewright::scene::FAINT_SEPARATRIX_COLOUR);
        for p in &c.points {
            let h0 = p[1] * p[1] / 2.0 - p[0] * p[0] / 2.0 + p[0].powi(4) / 4.0;
            assert!(h0.abs() < 1e-6, "{p:?} is off H₀ = 0");
        }
    }
    let svg = to_svg(&scene, FigureSize::default());
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let dots: usize = doc
        .descendants()
        .filter(|n| n.has_tag_name("path") && has_class(n, "cloud"))
        .map(|n| {
            n.attribute("data-points")
                .unwrap()
                .parse::<usize>()
                .unwrap()
        })
        .sum();
    let points: usize = d.section.orbits.iter().map(|o| o.points.len()).sum();
    assert_eq!(dots, points);
}
