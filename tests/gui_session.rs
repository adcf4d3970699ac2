//! The explorer's session state as a user meets it: opening a file is not an
//! edit, slider steps keep the values people typed, and orbits that stopped at
//! the bounds around the view follow the view when it moves; saving a shipped
//! example offers a new file in the documents folder.
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use explorer::settle;
use phasewright::core::window::Window;
use phasewright::gui::{EXAMPLES, Explorer};
use phasewright::request::Overrides;
use phasewright::session::{SeededOrbit, Session};

fn harness(session: Session) -> (Harness<'static, Explorer>, tempfile::TempDir) {
    let data = tempfile::tempdir().expect("temp dir");
    let mut app =
        Explorer::new(session, None, Some(data.path().to_path_buf())).expect("explorer starts");
    app.set_native_dialogs(false);
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    settle(&mut h);
    (h, data)
}

#[test]
fn opening_each_example_leaves_no_unsaved_mark_and_keeps_its_values() {
    for (name, text) in EXAMPLES {
        let (session, _) = phasewright::session::load(text).expect("example loads");
        let before = session.parameters.clone();
        let (mut h, _data) = harness(session);
        h.run_steps(10);
        let app = h.state();
        assert!(
            !app.doc.dirty,
            "{name}: opening the file counted as an edit"
        );
        assert!(!app.title().starts_with('●'), "{name}: {}", app.title());
        for (p, q) in before.iter().zip(&app.doc.session.parameters) {
            // Bit-for-bit: a slider step must not turn 2.3 into 2.3000000000000003.
            assert_eq!(p.value.to_bits(), q.value.to_bits(), "{name}: {}", p.name);
        }
    }
}

/// The furthest |q| an orbit reached.
fn reach(h: &Harness<'static, Explorer>) -> f64 {
    let outcomes = h.state().orbit_outcomes();
    let o = outcomes[0].as_ref().expect("the orbit was integrated");
    o.samples.iter().map(|s| s[0].abs()).fold(0.0, f64::max)
}

#[test]
fn an_orbit_stopped_at_the_bounds_is_integrated_again_when_the_view_grows() {
    // H = p²/2 − q²/2: from (0.5, 0), q(t) = 0.5 cosh t runs off to infinity
    // (closed form of the linear saddle, common practice), so the orbit stops
    // at the bounds around the view, 4 × the view about its centre.
    let mut s = Session::blank("p^2/2 - q^2/2");
    s.view = Window::new(-1.0, 1.0, -1.0, 1.0).expect("window");
    s.orbits.push(SeededOrbit {
        q0: 0.5,
        p0: 0.0,
        duration: 40.0,
        method: "auto".into(),
        colour: None,
    });
    let (mut h, _data) = harness(s);
    let first = reach(&h);
    assert!(
        (3.0..=4.5).contains(&first),
        "stopped at {first}, expected the bounds of the first view (4)"
    );
    h.state_mut()
        .set_view(Window::new(-10.0, 10.0, -10.0, 10.0).expect("window"));
    settle(&mut h);
    let second = reach(&h);
    assert!(
        second > 30.0,
        "after zooming out the orbit still stops at {second}"
    );
}

/// Whatever the panes show can be re-made from the saved file: for every
/// example, the requests the explorer's diagram, fold, backbone, section,
/// Melnikov, levels, safe-basin and erosion panes run
/// equal the ones `render` builds from the file the explorer saved.
#[test]
fn the_explorers_pane_requests_equal_the_ones_render_builds_from_the_saved_file() {
    use phasewright::core::Cancel;
    use phasewright::request::{FoldsRequest, SweepRequest};
    let dir = tempfile::tempdir().expect("temp dir");
    let mut driven = 0;
    for (name, text) in EXAMPLES {
        let (session, _) = phasewright::session::load(text).expect("example loads");
        let (mut h, _data) = harness(session);
        let shown = h.state().pane_requests();
        let path = dir.path().join(name);
        h.state_mut().save_to(&path);
        let (saved, _) = phasewright::session::load_file(&path).expect("saved file loads");
        let sys = saved.system().expect("saved system compiles");
        let names = sys.formula().params();
        assert_eq!(
            shown.sweep,
            SweepRequest::from_session(&saved, names),
            "{name}: diagram"
        );
        assert_eq!(
            shown.folds,
            FoldsRequest::from_session(&saved, names),
            "{name}: fold curves"
        );
        let rendered = phasewright::render::backbone_request_of(
            &saved,
            &sys,
            &saved.view,
            &Overrides::default(),
            &Cancel::never(),
        )
        .ok();
        assert_eq!(shown.backbone, rendered, "{name}: backbone");
        assert_eq!(
            shown.section,
            phasewright::request::SectionRequest::from_session(&saved, &[]).ok(),
            "{name}: section"
        );
        assert_eq!(
            shown.melnikov,
            phasewright::request::MelnikovRequest::from_session(&saved, &sys).ok(),
            "{name}: Melnikov function"
        );
        assert_eq!(
            shown.basin,
            phasewright::request::BasinRequest::from_session(&saved, &sys).ok(),
            "{name}: safe basin"
        );
        assert_eq!(
            shown.erosion,
            phasewright::request::ErosionRequest::from_session(&saved, &sys).ok(),
            "{name}: erosion curve"
        );
        if saved.drive.is_some() {
            driven += 1;
            assert!(
                shown.basin.is_some() && shown.erosion.is_some(),
                "{name}: a driven example has a safe basin and an erosion curve"
            );
            assert!(
                shown.section.is_some() && shown.melnikov.is_some(),
                "{name}: a driven example has a section and a Melnikov function"
            );
            // the export makes its figure from the same request
            let data =
                phasewright::render::section_of(&saved, &sys, &saved.view, &[], &Cancel::never());
            assert!(data.is_ok(), "{name}: {:?}", data.err());
        }
        let levels =
            phasewright::render::levels_request_of(&saved, &sys, &saved.view, &Cancel::never())
                .ok();
        assert_eq!(shown.levels, levels, "{name}: levels");
        assert_eq!(
            shown.levels.is_some(),
            saved.quantum.is_some(),
            "{name}: a session with ħ has levels in view"
        );
        assert!(
            shown.sweep.is_some() || names.is_empty(),
            "{name}: a formula with parameters always has a diagram"
        );
    }
    assert!(driven >= 2, "only {driven} driven examples");
}

fn menu(h: &mut Harness<'static, Explorer>, top: &str, item: &str) {
    h.get_by_label(top).click();
    h.run_steps(3);
    h.get_by_label(item).click();
    h.run_steps(3);
}

/// The text in the path prompt's field.
fn prompt_text(h: &Harness<'static, Explorer>) -> String {
    h.get_by_label("Path")
        .accesskit_node()
        .value()
        .unwrap_or_default()
}

#[test]
fn saving_a_shipped_example_offers_a_new_file_in_the_documents_folder() {
    let docs = tempfile::tempdir().expect("temp dir");
    // SAFETY: no other test in this file reads or writes the environment.
    unsafe { std::env::set_var("XDG_DOCUMENTS_DIR", docs.path()) };
    let shipped =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sessions/imperfect-strut.json");
    let original = std::fs::read_to_string(&shipped).expect("the example is readable");
    let (session, _) = phasewright::session::load(&original).expect("example loads");
    // The title "Strut with an initial bow: the pitchfork breaks" as a file
    // name; a file of that name exists already, so the offer is numbered.
    let taken = docs
        .path()
        .join("strut-with-an-initial-bow-the-pitchfork-breaks.json");
    std::fs::write(&taken, "{}").expect("write");
    let expected = docs
        .path()
        .join("strut-with-an-initial-bow-the-pitchfork-breaks-2.json");

    // Opened from the examples folder by path, as `phasewright sessions/…` does.
    let data = tempfile::tempdir().expect("temp dir");
    let mut app = Explorer::new(
        session,
        Some(shipped.clone()),
        Some(data.path().to_path_buf()),
    )
    .expect("explorer starts");
    app.set_native_dialogs(false);
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    settle(&mut h);

    // Save on a shipped example asks where, offering the new file.
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::S);
    h.run_steps(3);
    assert_eq!(h.state().modal_name(), "path-prompt");
    assert_eq!(prompt_text(&h), expected.display().to_string());
    // Typing the example's own path asks before writing over it.
    h.get_by_label("Path")
        .set_text_value_accesskit(&shipped.display().to_string());
    h.run_steps(2);
    h.get_by_label("Save").click();
    h.run_steps(3);
    assert_eq!(h.state().modal_name(), "confirm-overwrite");
    h.get_by_label("Cancel").click();
    h.run_steps(3);
    assert_eq!(
        std::fs::read_to_string(&shipped).expect("readable"),
        original,
        "the shipped example was changed"
    );

    // The offered name saves there; the taken file is left alone.
    menu(&mut h, "Session", "Save to path…");
    assert_eq!(prompt_text(&h), expected.display().to_string());
    h.get_by_label("Save").click();
    h.run_steps(3);
    assert!(
        expected.exists(),
        "nothing written at {}",
        expected.display()
    );
    assert_eq!(std::fs::read_to_string(&taken).expect("readable"), "{}");
    assert_eq!(h.state().doc.file.as_deref(), Some(expected.as_path()));

    // An example from the Examples menu is offered in the documents folder too.
    menu(&mut h, "Examples", "loaded strut");
    settle(&mut h);
    menu(&mut h, "Session", "Save to path…");
    assert_eq!(
        prompt_text(&h),
        docs.path()
            .join("axially-loaded-strut-buckling-into-two-states.json")
            .display()
            .to_string()
    );
    h.get_by_label("Cancel").click();
    h.run_steps(3);

    // Exports of a shipped example are offered in the documents folder too,
    // never beside the examples.
    h.get_by_label("Export").click();
    h.run_steps(3);
    h.get_by_label("Portrait").hover();
    h.run_steps(3);
    h.get_by_label("Figure (SVG)…").click();
    h.run_steps(3);
    assert_eq!(h.state().modal_name(), "path-prompt");
    let offered = std::path::PathBuf::from(prompt_text(&h));
    assert_eq!(offered.parent(), Some(docs.path()), "{}", offered.display());
}
