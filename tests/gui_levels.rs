//! The quantized orbits in the explorer as a user meets them: on the
//! portrait of the bond example, their switch saved with the session and
//! undoable, ħ's expression edited with bad ones refused, and the levels
//! table under the plot.
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use explorer::settle;
use phasewright::gui::{EXAMPLES, Explorer, HBAR_LABEL, level_rows};
use phasewright::session::Session;

fn bond() -> Session {
    let text = EXAMPLES
        .iter()
        .find(|(n, _)| *n == "bond-ladder.json")
        .map(|(_, t)| *t)
        .expect("the bond example ships");
    phasewright::session::load(text).expect("example loads").0
}

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

/// The Morse count ⌊√(2μD)/(aħ) + ½⌋ (P. M. Morse, Phys. Rev. 34 (1929) 57).
fn morse_count(s: &Session, hbar: f64) -> usize {
    let v = |n: &str| s.parameter(n).expect("parameter").value;
    ((2.0 * v("mu") * v("D")).sqrt() / (v("a") * hbar) + 0.5).floor() as usize
}

#[test]
fn the_bond_shows_its_quantized_orbits_and_their_switch_is_saved_and_undone() {
    let s = bond();
    let expected = morse_count(&s, 0.16);
    let (mut h, _data) = harness(s);
    let levels = h.state().levels().expect("levels computed").clone();
    assert_eq!(levels.wells.len(), 1);
    let w = &levels.wells[0];
    assert_eq!(w.count, expected);
    assert_eq!(w.curves.len(), w.levels.len());
    assert!(
        w.curves
            .iter()
            .all(|c| c.len() > 100 && c.first() == c.last())
    );
    // The table lists every level, n from 0, E₀ − E₀ = 0.
    let rows = level_rows(w);
    assert_eq!(rows.len(), expected);
    assert_eq!(rows[0][0], "0");
    assert_eq!(
        rows[0][2].trim_start_matches('-').trim_matches(['0', '.']),
        ""
    );

    // The switch above the plot turns them off: a saved, undoable edit.
    assert!(h.state().doc.session.levels_on_portrait());
    h.get_by_label("Levels").click();
    settle(&mut h);
    assert!(!h.state().doc.session.levels_on_portrait());
    assert!(h.state().doc.dirty);
    let saved = h.state().doc.session.to_json_pretty();
    assert!(saved.contains("\"on_portrait\": false"), "{saved}");
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    settle(&mut h);
    assert!(h.state().doc.session.levels_on_portrait());
}

#[test]
fn a_bad_hbar_expression_is_refused_and_a_good_one_reruns_the_levels() {
    let s = bond();
    let doubled = morse_count(&s, 0.32);
    let (mut h, _data) = harness(s);
    h.get_by_label(HBAR_LABEL).set_text_value_accesskit("h - 1");
    settle(&mut h);
    // h − 1 < 0 at h = 0.16: refused, the session keeps "h".
    assert_eq!(h.state().doc.session.quantum.as_ref().unwrap().hbar, "h");
    assert!(h.query_by_label_contains("refused").is_some());
    h.get_by_label(HBAR_LABEL).set_text_value_accesskit("2*h");
    settle(&mut h);
    assert_eq!(h.state().doc.session.quantum.as_ref().unwrap().hbar, "2*h");
    assert!(h.query_by_label_contains("refused").is_none());
    let w = &h.state().levels().expect("levels").wells[0];
    assert_eq!(w.count, doubled);
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    settle(&mut h);
    assert_eq!(h.state().doc.session.quantum.as_ref().unwrap().hbar, "h");
}
