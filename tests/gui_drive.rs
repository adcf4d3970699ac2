//! The explorer's driven panes through AccessKit with egui_kittest: the
//! Drive area (edits, bad expressions refused in place, undo), the section
//! pane (a click adds a start), the Melnikov pane and the threshold on the
//! amplitude slider, and the backbone of a driven session (taken on H₀).
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use explorer::settle;
use phasewright::core::window::Window;
use phasewright::gui::{Explorer, SECTION_LABEL};
use phasewright::session::{DriveSettings, Parameter, Session};
use std::f64::consts::PI;

/// The driven, damped double well H = p²/2 − q²/2 + q⁴/4 − F q cos(W t),
/// W = 1, δ = 0.25, with a small section (4 × 4 starts, 40 periods).
fn driven(f: f64) -> Session {
    let formula = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";
    let mut s = Session::blank(formula);
    s.title = "driven double well".into();
    s.parameters = vec![
        Parameter {
            name: "F".into(),
            value: f,
            min: 0.0,
            max: 0.4,
            step: None,
        },
        Parameter {
            name: "W".into(),
            value: 1.0,
            min: 0.5,
            max: 2.0,
            step: None,
        },
    ];
    s.view = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    s.levels.grid = 96;
    s.drive = Some(DriveSettings {
        period: "2*pi/W".into(),
        damping: Some("0.25".into()),
        amplitude: Some("F".into()),
        periods: Some(40),
        lattice: Some(4),
        enabled: true,
    });
    s
}

fn open(s: Session) -> (Harness<'static, Explorer>, tempfile::TempDir) {
    let data = tempfile::tempdir().expect("temp dir");
    let mut app = Explorer::new(s, None, Some(data.path().to_path_buf())).expect("explorer starts");
    app.set_native_dialogs(false);
    let mut h = Harness::builder()
        .with_size(egui::vec2(1400.0, 900.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    settle(&mut h);
    (h, data)
}

/// Closed-form threshold of the driven double well, F = δ·4 cosh(πW/2) /
/// (3√2 π W) (J. Guckenheimer and P. Holmes, Nonlinear Oscillations,
/// Dynamical Systems, and Bifurcations of Vector Fields, 1983, §4.5).
fn threshold(delta: f64, w: f64) -> f64 {
    delta * 4.0 * (PI * w / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * w)
}

#[test]
fn the_melnikov_pane_and_the_amplitude_slider_state_the_closed_form_threshold() {
    let (mut h, _d) = open(driven(0.1));
    h.state_mut().show_pane("melnikov");
    settle(&mut h);
    let m = h.state().melnikov().expect("Melnikov function computed");
    let want = threshold(0.25, 1.0);
    let got = m.threshold_amplitude.expect("a threshold");
    assert!((got - want).abs() < 1e-8 * want, "{got} against {want}");
    // F = 0.1 is below it (about 0.188): M keeps one sign, no zeros
    assert!(m.connections.iter().all(|c| c.zeros.is_empty()));
    let caption = phasewright::scene::threshold_sentence(m);
    assert!(caption.starts_with("chaotic layer expected above F"));
    h.run_steps(2);
    // the caption under the slider and in the pane
    assert!(h.query_all_by_label_contains(&caption).count() >= 2);
    assert!(h.query_by_label_contains("below it").is_some());
}

#[test]
fn the_section_pane_runs_the_sessions_request_and_a_click_adds_a_start() {
    let (mut h, _d) = open(driven(0.3));
    h.state_mut().show_pane("section");
    settle(&mut h);
    let d = h.state().section().expect("section computed");
    assert_eq!(d.section.orbits.len(), 16);
    // one point a drive period: τ = 2π/W (W = 1)
    assert!((d.section.period - 2.0 * PI).abs() < 1e-12);
    assert!(d.undriven.is_some(), "H₀'s separatrices are drawn behind");
    let rect = h.get_by_label(SECTION_LABEL).rect();
    h.hover_at(rect.center());
    for pressed in [true, false] {
        h.event(egui::Event::PointerButton {
            pos: rect.center(),
            button: egui::PointerButton::Primary,
            pressed,
            modifiers: egui::Modifiers::NONE,
        });
    }
    settle(&mut h);
    let app = h.state();
    assert_eq!(
        app.doc.session.orbits.len(),
        1,
        "the click is a seeded orbit"
    );
    let d = app.section().expect("section computed again");
    assert_eq!(d.section.orbits.len(), 17);
    let start = d.section.orbits[16].start;
    let o = &app.doc.session.orbits[0];
    assert_eq!(start, [o.q0, o.p0]);
}

#[test]
fn a_bad_drive_expression_is_refused_in_place_and_a_good_one_undoes() {
    let (mut h, _d) = open(driven(0.1));
    h.get_by_label("drive period")
        .set_text_value_accesskit("2*pi/");
    h.run_steps(3);
    assert_eq!(
        h.state().doc.session.drive.as_ref().unwrap().period,
        "2*pi/W"
    );
    assert!(h.query_by_label_contains("the drive is kept").is_some());
    // both fields are checked together: put the period back first
    h.get_by_label("drive period")
        .set_text_value_accesskit("2*pi/W");
    h.run_steps(3);
    assert!(h.query_by_label_contains("the drive is kept").is_none());
    h.get_by_label("drive damping")
        .set_text_value_accesskit("-1");
    h.run_steps(3);
    assert!(h.query_by_label_contains("must be at least 0").is_some());
    assert_eq!(
        h.state()
            .doc
            .session
            .drive
            .as_ref()
            .unwrap()
            .damping
            .as_deref(),
        Some("0.25")
    );
    h.get_by_label("drive damping")
        .set_text_value_accesskit("0.1");
    h.run_steps(3);
    assert_eq!(
        h.state()
            .doc
            .session
            .drive
            .as_ref()
            .unwrap()
            .damping
            .as_deref(),
        Some("0.1")
    );
    assert_eq!(h.state().doc.session.damping(), 0.1);
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    h.run_steps(3);
    assert_eq!(
        h.state()
            .doc
            .session
            .drive
            .as_ref()
            .unwrap()
            .damping
            .as_deref(),
        Some("0.25")
    );
    h.get_by_label("drive on").click();
    h.run_steps(3);
    assert!(!h.state().doc.session.drive.as_ref().unwrap().enabled);
}

#[test]
fn the_backbone_of_a_driven_session_is_that_of_the_undriven_h() {
    let (mut h, _d) = open(driven(0.1));
    h.state_mut().show_pane("backbone");
    settle(&mut h);
    let b = h.state().backbone().expect("backbone computed");
    // H₀ = p²/2 − q²/2 + q⁴/4 has its centers at q = ±1 with V'' = 2, so the
    // period at the bottom is 2π/√2 and the escape energy is H₀(0, 0) = 0
    // (closed forms).
    assert!((b.center[0].abs() - 1.0).abs() < 1e-9, "{:?}", b.center);
    let first = b.rows.first().expect("rows");
    assert!((first.period - 2.0 * PI / 2f64.sqrt()).abs() < 1e-6);
    assert!(b.escape_energy.expect("bounded well").abs() < 1e-9);
    assert!(h.query_by_label_contains("undriven H").is_some());
}
