//! The explorer driven through AccessKit with egui_kittest: widgets are found
//! by role and label, clicked and typed into; the assertions read the app's
//! state and its tables.
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use explorer::settle;
use phasewright::core::continuation::BifurcationKind;
use phasewright::core::equilibria::EquilibriumKind;
use phasewright::core::window::Window;
use phasewright::gui::{DIAGRAM_LABEL, EDITOR_LABEL, Explorer, PLOT_LABEL, equilibrium_rows};
use phasewright::session::{
    BackboneSettings, FORMAT_NAME, FORMAT_VERSION, LevelSettings, Parameter, Session, SweepSettings,
};

fn session(formula: &str, params: &[(&str, f64, f64, f64)], view: Window) -> Session {
    Session {
        format: FORMAT_NAME.into(),
        version: FORMAT_VERSION,
        title: "test".into(),
        notes: String::new(),
        formula: formula.into(),
        parameters: params
            .iter()
            .map(|&(n, v, lo, hi)| Parameter {
                name: n.into(),
                value: v,
                min: lo,
                max: hi,
                step: None,
            })
            .collect(),
        view,
        levels: LevelSettings {
            count: 16,
            grid: 96,
            refine: false,
        },
        orbits: Vec::new(),
        ..Session::blank(formula)
    }
}

fn window(qmin: f64, qmax: f64, pmin: f64, pmax: f64) -> Window {
    Window::new(qmin, qmax, pmin, pmax).expect("test window is valid")
}

struct Fixture {
    harness: Harness<'static, Explorer>,
    data: tempfile::TempDir,
}

fn open(s: Session) -> Fixture {
    let data = tempfile::tempdir().expect("temp dir");
    let mut app = Explorer::new(s, None, Some(data.path().to_path_buf())).expect("explorer starts");
    app.set_native_dialogs(false);
    let harness = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    let mut f = Fixture { harness, data };
    settle(&mut f.harness);
    f
}

/// A press and release of the primary button at `at` (a click, no drag).
fn click_at(h: &mut Harness<'static, Explorer>, at: egui::Pos2) {
    h.hover_at(at);
    for pressed in [true, false] {
        h.event(egui::Event::PointerButton {
            pos: at,
            button: egui::PointerButton::Primary,
            pressed,
            modifiers: egui::Modifiers::NONE,
        });
    }
}

fn kinds(app: &Explorer) -> Vec<EquilibriumKind> {
    app.analysis()
        .map(|a| a.equilibria.iter().map(|e| e.kind).collect())
        .unwrap_or_default()
}

#[test]
fn typing_a_formula_changes_the_equilibria_table() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-4.0, 4.0, -2.5, 2.5)));
    // Harmonic oscillator: one center at the origin (closed form).
    assert_eq!(kinds(f.harness.state()), vec![EquilibriumKind::Center]);

    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 - cos(q)");
    settle(&mut f.harness);
    let app = f.harness.state();
    assert_eq!(app.doc.session.formula, "p^2/2 - cos(q)");
    // Pendulum: center at q = 0, saddles at q = ±π (closed form), all inside |q| ≤ 4.
    let a = app.analysis().expect("analysis shown");
    let rows = equilibrium_rows(&a.equilibria);
    assert_eq!(rows.len(), 3, "rows: {rows:?}");
    let saddles: Vec<f64> = a
        .equilibria
        .iter()
        .filter(|e| e.kind == EquilibriumKind::Saddle)
        .map(|e| e.q)
        .collect();
    assert_eq!(saddles.len(), 2);
    for q in saddles {
        assert!(
            (q.abs() - std::f64::consts::PI).abs() < 1e-6,
            "saddle at {q}"
        );
    }
    // The table on screen lists them by kind (the plot legend's check boxes carry the same words).
    let cells = |h: &Harness<'static, Explorer>, word: &str| {
        h.query_all_by_label(word)
            .filter(|n| n.accesskit_node().role() != egui::accesskit::Role::CheckBox)
            .count()
    };
    assert_eq!(cells(&f.harness, "saddle"), 2);
    assert_eq!(cells(&f.harness, "center"), 1);
}

#[test]
fn parameter_across_a_saddle_node_adds_a_center_and_a_saddle() {
    // H = p²/2 + q³/3 − μq: equilibria at p = 0, q² = μ; none for μ < 0, and for
    // μ > 0 a center at q = +√μ (H_qq = 2q > 0) and a saddle at q = −√μ (closed form).
    let mut f = open(session(
        "p^2/2 + q^3/3 - mu*q",
        &[("mu", -0.5, -1.0, 1.0)],
        window(-2.0, 2.0, -1.5, 1.5),
    ));
    assert!(kinds(f.harness.state()).is_empty());
    f.harness.get_by_label("mu value").set_value_accesskit(0.5);
    settle(&mut f.harness);
    let app = f.harness.state();
    assert_eq!(app.doc.session.parameters[0].value, 0.5);
    let a = app.analysis().expect("analysis shown");
    assert_eq!(a.equilibria.len(), 2);
    let root = 0.5f64.sqrt();
    let center = a
        .equilibria
        .iter()
        .find(|e| e.kind == EquilibriumKind::Center)
        .expect("a center");
    let saddle = a
        .equilibria
        .iter()
        .find(|e| e.kind == EquilibriumKind::Saddle)
        .expect("a saddle");
    assert!((center.q - root).abs() < 1e-6, "center at {}", center.q);
    assert!((saddle.q + root).abs() < 1e-6, "saddle at {}", saddle.q);
}

#[test]
fn a_click_in_the_plot_launches_an_orbit_with_a_period() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    let rect = f.harness.get_by_label(PLOT_LABEL).rect();
    let at = rect.center() + egui::vec2(rect.width() * 0.2, 0.0);
    click_at(&mut f.harness, at);
    // The launch waits out the double-click interval.
    f.harness.run_steps(40);
    settle(&mut f.harness);
    let app = f.harness.state();
    assert_eq!(app.doc.session.orbits.len(), 1);
    let o = &app.doc.session.orbits[0];
    assert!(
        o.q0 > 0.2 && o.p0.abs() < 0.2,
        "orbit starts at ({}, {})",
        o.q0,
        o.p0
    );
    let outcomes = app.orbit_outcomes();
    let outcome = outcomes[0].as_ref().expect("orbit computed");
    // Harmonic oscillator H = p²/2 + q²/2: period 2π at every amplitude (closed form).
    let period = outcome.period.expect("closed orbit has a period");
    assert!(
        (period - std::f64::consts::TAU).abs() < 1e-3 * std::f64::consts::TAU,
        "period {period}"
    );
    // The row in the orbit table shows it.
    assert!(f.harness.query_by_label(&format!("{period:.5}")).is_some());
}

fn menu(f: &mut Fixture, top: &str, item: &str) {
    f.harness.get_by_label(top).click();
    f.harness.run_steps(3);
    f.harness.get_by_label(item).click();
    f.harness.run_steps(3);
}

#[test]
fn saving_and_reopening_gives_the_same_session() {
    let mut f = open(session(
        "p^2/2 + q^3/3 - mu*q",
        &[("mu", -0.5, -1.0, 1.0)],
        window(-2.0, 2.0, -1.5, 1.5),
    ));
    f.harness.get_by_label("mu value").set_value_accesskit(0.25);
    settle(&mut f.harness);
    assert!(f.harness.state().doc.dirty);
    assert!(f.harness.state().title().starts_with('●'));
    let path = f.data.path().join("saved.json");

    menu(&mut f, "Session", "Save to path…");
    assert_eq!(f.harness.state().modal_name(), "path-prompt");
    f.harness
        .get_by_label("Path")
        .set_text_value_accesskit(&path.display().to_string());
    f.harness.run_steps(2);
    f.harness.get_by_label("Save").click();
    f.harness.run_steps(3);
    let saved = f.harness.state().doc.session.clone();
    assert!(!f.harness.state().doc.dirty);
    assert!(path.exists());

    let mut g = open(session("p^2/2", &[], window(-1.0, 1.0, -1.0, 1.0)));
    menu(&mut g, "Session", "Open by path…");
    g.harness
        .get_by_label("Path")
        .set_text_value_accesskit(&path.display().to_string());
    g.harness.run_steps(2);
    g.harness.get_by_label("Open").click();
    settle(&mut g.harness);
    assert_eq!(g.harness.state().doc.session, saved);
    assert_eq!(g.harness.state().editor_text(), "p^2/2 + q^3/3 - mu*q");
}

#[test]
fn undo_restores_the_previous_formula() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 + q^4/4");
    settle(&mut f.harness);
    assert_eq!(f.harness.state().doc.session.formula, "p^2/2 + q^4/4");
    f.harness
        .key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    settle(&mut f.harness);
    assert_eq!(f.harness.state().doc.session.formula, "p^2/2 + q^2/2");
    assert_eq!(f.harness.state().editor_text(), "p^2/2 + q^2/2");
    f.harness.key_press_modifiers(
        egui::Modifiers::COMMAND | egui::Modifiers::SHIFT,
        egui::Key::Z,
    );
    settle(&mut f.harness);
    assert_eq!(f.harness.state().doc.session.formula, "p^2/2 + q^4/4");
}

#[test]
fn a_bad_session_file_leaves_the_current_session_untouched() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    let before = f.harness.state().doc.session.clone();
    let bad = f.data.path().join("bad.json");
    std::fs::write(
        &bad,
        "{ \"format\": \"phasewright-session\", \"version\": 1, \"formula\": ",
    )
    .expect("write");
    menu(&mut f, "Session", "Open by path…");
    f.harness
        .get_by_label("Path")
        .set_text_value_accesskit(&bad.display().to_string());
    f.harness.run_steps(2);
    f.harness.get_by_label("Open").click();
    f.harness.run_steps(3);
    assert_eq!(f.harness.state().doc.session, before);
    assert_eq!(f.harness.state().modal_name(), "message");
    assert!(
        f.harness.state().status().contains("bad.json"),
        "status: {}",
        f.harness.state().status()
    );
}

#[test]
fn an_invalid_formula_keeps_the_last_portrait_and_points_at_the_column() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 + * q");
    settle(&mut f.harness);
    let app = f.harness.state();
    assert_eq!(app.doc.session.formula, "p^2/2 + q^2/2");
    assert!(app.formula_error().is_some());
    assert_eq!(kinds(app), vec![EquilibriumKind::Center]);
    assert!(
        f.harness
            .query_by_label_contains("showing the last valid portrait")
            .is_some()
    );
}

#[test]
fn a_range_with_min_above_max_is_refused() {
    let mut f = open(session(
        "p^2/2 - k*cos(q)",
        &[("k", 1.0, 0.0, 2.0)],
        window(-4.0, 4.0, -3.0, 3.0),
    ));
    f.harness.get_by_label("k min").set_value_accesskit(3.0);
    f.harness.run_steps(3);
    let p = &f.harness.state().doc.session.parameters[0];
    assert_eq!((p.min, p.max), (0.0, 2.0));
    assert!(
        f.harness
            .query_by_label_contains("must be less than max")
            .is_some()
    );
}

#[test]
fn a_new_identifier_gets_a_row_and_a_dropped_one_leaves_after_the_edit_settles() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 + w*q^2/2");
    f.harness.run_steps(2);
    let names: Vec<String> = f
        .harness
        .state()
        .doc
        .session
        .parameters
        .iter()
        .map(|p| p.name.clone())
        .collect();
    assert_eq!(names, vec!["w".to_string()]);
    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 + q^2/2");
    f.harness.run_steps(2);
    assert_eq!(
        f.harness.state().doc.session.parameters.len(),
        1,
        "kept while the edit settles"
    );
    f.harness.run_steps(90);
    assert!(f.harness.state().doc.session.parameters.is_empty());
}

#[test]
fn unsaved_work_is_offered_back_after_a_crash() {
    let mut f = open(session("p^2/2 + q^2/2", &[], window(-2.0, 2.0, -2.0, 2.0)));
    f.harness
        .get_by_label(EDITOR_LABEL)
        .set_text_value_accesskit("p^2/2 + 2*q^2");
    settle(&mut f.harness);
    f.harness.state_mut().autosave_now();
    let dir = f.data.path().to_path_buf();
    assert!(dir.join("recovery.json").exists());
    // A new start with the same data directory (the first never closed cleanly).
    let app = Explorer::new(
        session("p^2/2", &[], window(-1.0, 1.0, -1.0, 1.0)),
        None,
        Some(dir),
    )
    .expect("starts");
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    h.run_steps(3);
    assert_eq!(h.state().modal_name(), "offer-restore");
    h.get_by_label("Restore it").click();
    h.run_steps(3);
    assert_eq!(h.state().doc.session.formula, "p^2/2 + 2*q^2");
    assert!(h.state().doc.dirty);
}

// ----- the diagram panes -----

/// H = p²/2 + q⁴/4 − μq²/2 − εq with ε = 0.05: the imperfect pitchfork.
const IMPERFECT: &str = "p^2/2 + q^4/4 - mu*q^2/2 - 0.05*q";
/// Its one saddle-node: μ = (27ε²/4)^(1/3) = 0.25649639200150 at
/// q = −√(μ/3), where q³ − μq − ε = 0 has a double root (closed form of the
/// cusp 27ε² = 4μ³).
const IMPERFECT_FOLD: f64 = 0.256_496_392_001_50;

fn imperfect(mu: f64) -> Session {
    let mut s = session(
        IMPERFECT,
        &[("mu", mu, -1.0, 1.0)],
        window(-2.0, 2.0, -1.0, 1.0),
    );
    s.sweep = Some(SweepSettings {
        param: "mu".into(),
        from: -1.0,
        to: 1.0,
        max_step: None,
    });
    s
}

#[test]
fn the_diagram_shows_one_saddle_node_of_the_imperfect_pitchfork() {
    let f = open(imperfect(-0.5));
    let app = f.harness.state();
    let sweep = app.sweep().expect("the diagram pane has a sweep");
    assert_eq!(sweep.bifurcations.len(), 1, "{:?}", sweep.bifurcations);
    let b = &sweep.bifurcations[0];
    assert_eq!(b.kind, BifurcationKind::SaddleNode);
    assert!(
        (b.param - IMPERFECT_FOLD).abs() < 1e-8,
        "at mu = {}",
        b.param
    );
    assert!(
        (b.q + (IMPERFECT_FOLD / 3.0).sqrt()).abs() < 1e-6,
        "at q = {}",
        b.q
    );
    // The pane names it, once, with its kind and value.
    let named: Vec<String> = f
        .harness
        .query_all_by_label_contains("saddle-node at mu = 0.2565")
        .map(|n| n.accesskit_node().label().unwrap_or_default())
        .collect();
    assert_eq!(named.len(), 1, "labels: {named:?}");
    assert!(f.harness.query_by_label_contains("pitchfork at").is_none());
}

#[test]
fn moving_the_parameter_across_the_saddle_node_is_announced() {
    let mut f = open(imperfect(0.1));
    assert!(f.harness.state().announcement().is_none());
    // Still below the fold: nothing to say.
    f.harness.get_by_label("mu value").set_value_accesskit(0.2);
    f.harness.run_steps(2);
    assert!(f.harness.state().announcement().is_none());
    // Across it (0.2 → 0.4 passes μ = 0.25650): named on the portrait.
    f.harness.get_by_label("mu value").set_value_accesskit(0.4);
    // The notice's layer is measured on its first frame and shown from the next.
    f.harness.run_steps(3);
    assert_eq!(
        f.harness.state().announcement(),
        Some("saddle-node at mu = 0.2565")
    );
    // The list under the diagram and the notice on the portrait both say it.
    assert_eq!(
        f.harness
            .query_all_by_label_contains("saddle-node at mu = 0.2565")
            .count(),
        2
    );
    // It fades after a few seconds (each test frame is a quarter of a second).
    f.harness.run_steps(24);
    assert!(f.harness.state().announcement().is_none());
    assert_eq!(
        f.harness
            .query_all_by_label_contains("saddle-node at mu = 0.2565")
            .count(),
        1
    );
    // Back down across it is announced too.
    f.harness.get_by_label("mu value").set_value_accesskit(0.0);
    f.harness.run_steps(2);
    assert_eq!(
        f.harness.state().announcement(),
        Some("saddle-node at mu = 0.2565")
    );
}

#[test]
fn clicking_the_diagram_sets_the_parameter_and_redraws_the_portrait() {
    let mut f = open(imperfect(-0.5));
    // One center at μ = −0.5 (below the fold only one root of q³ − μq − ε = 0).
    assert_eq!(kinds(f.harness.state()), vec![EquilibriumKind::Center]);
    let [x0, x1, _, _] = f.harness.state().diagram_bounds().expect("diagram drawn");
    let rect = f.harness.get_by_label(DIAGRAM_LABEL).rect();
    let at = egui::pos2(rect.left() + 0.8 * rect.width(), rect.center().y);
    click_at(&mut f.harness, at);
    settle(&mut f.harness);
    let app = f.harness.state();
    let mu = app.doc.session.parameters[0].value;
    let expected = x0 + 0.8 * (x1 - x0);
    let pixel = (x1 - x0) / f64::from(rect.width());
    assert!(
        (mu - expected).abs() < 2.0 * pixel,
        "mu = {mu}, expected {expected}"
    );
    assert!(mu > IMPERFECT_FOLD, "mu = {mu}");
    // Past the fold three equilibria: two centers and the saddle between them,
    // each a root of ∂H/∂q = q³ − μq − 0.05 (closed form).
    let a = app.analysis().expect("portrait redrawn");
    assert_eq!(
        a.equilibria.iter().map(|e| e.kind).collect::<Vec<_>>(),
        vec![
            EquilibriumKind::Center,
            EquilibriumKind::Saddle,
            EquilibriumKind::Center
        ]
    );
    for e in &a.equilibria {
        let residual = e.q.powi(3) - mu * e.q - 0.05;
        assert!(residual.abs() < 1e-9, "q = {} residual {residual}", e.q);
    }
}

#[test]
fn the_backbone_of_the_pendulum_starts_at_the_small_oscillation_period() {
    let mut f = open(session("p^2/2 - cos(q)", &[], window(-4.0, 4.0, -3.0, 3.0)));
    f.harness.state_mut().show_pane("backbone");
    settle(&mut f.harness);
    let app = f.harness.state();
    let b = app.backbone().expect("backbone computed");
    // Pendulum H = p²/2 − cos q: center at 0 with ω = 1, so the period at the
    // bottom energy E = −1 is 2π/ω = 2π (closed form of the small-oscillation limit).
    assert!(b.center[0].abs() < 1e-9, "center at {:?}", b.center);
    let first = b.rows.first().expect("rows");
    assert!((first.energy + 1.0).abs() < 1e-9, "E = {}", first.energy);
    assert!(
        (first.period - std::f64::consts::TAU).abs() < 1e-6,
        "T = {}",
        first.period
    );
    // The escape energy is the saddles' level H(±π, 0) = 1 (closed form).
    assert!((b.escape_energy.expect("bounded well") - 1.0).abs() < 1e-9);
    assert!(
        f.harness
            .query_by_label_contains(&format!("{:.5}", std::f64::consts::TAU))
            .is_some()
    );
}

#[test]
fn a_sweep_range_with_from_above_to_is_refused_and_edits_undo() {
    let mut f = open(imperfect(0.0));
    f.harness
        .get_by_label("sweep from")
        .set_value_accesskit(2.0);
    f.harness.run_steps(3);
    let sw = f.harness.state().doc.session.sweep.clone().expect("sweep");
    assert_eq!((sw.from, sw.to), (-1.0, 1.0));
    assert!(
        f.harness
            .query_by_label_contains("must be less than to")
            .is_some()
    );
    f.harness.get_by_label("sweep to").set_value_accesskit(0.5);
    settle(&mut f.harness);
    let sw = f.harness.state().doc.session.sweep.clone().expect("sweep");
    assert_eq!((sw.from, sw.to), (-1.0, 0.5));
    // The saddle-node at μ = 0.2565 is still inside [−1, 0.5].
    let sweep = f.harness.state().sweep().expect("swept again");
    assert_eq!(sweep.to, 0.5);
    assert_eq!(sweep.bifurcations.len(), 1);
    f.harness
        .key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    settle(&mut f.harness);
    let sw = f.harness.state().doc.session.sweep.clone().expect("sweep");
    assert_eq!((sw.from, sw.to), (-1.0, 1.0));
}

#[test]
fn a_saved_backbone_center_follows_its_well_when_a_parameter_moves() {
    // H = p²/2 + (1 − P)q²/2 + g q⁴/4 − w q at P = 1: one well, its center where
    // g q³ = w, i.e. q = (w/g)^(1/3), with ω² = H_qq = 3 g q² (closed form).
    let mut s = session(
        "p^2/2 + (1 - P)*q^2/2 + g*q^4/4 - w*q",
        &[
            ("P", 1.0, 0.0, 3.0),
            ("g", 0.8, 0.1, 2.0),
            ("w", 0.05, -0.5, 0.5),
        ],
        window(-2.0, 2.0, -1.0, 1.0),
    );
    // Saved where the right-hand center sat at a larger load.
    s.backbone = Some(BackboneSettings {
        center: Some([1.05, 0.0]),
        energies: None,
    });
    let mut f = open(s);
    f.harness.state_mut().show_pane("backbone");
    settle(&mut f.harness);
    let b = f
        .harness
        .state()
        .backbone()
        .expect("backbone of the remaining well");
    let q = (0.05f64 / 0.8).cbrt();
    assert!((b.center[0] - q).abs() < 1e-9, "center at {:?}", b.center);
    let period = std::f64::consts::TAU / (3.0 * 0.8 * q * q).sqrt();
    let first = b.rows.first().expect("rows");
    assert!((first.period - period).abs() < 1e-6, "T = {}", first.period);
}
