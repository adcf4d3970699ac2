//! Hazards and crashes as the explorer shows them (egui_kittest through
//! AccessKit): the hazard messages are on screen, a session that cannot be
//! saved stays in memory marked unsaved, and the recovery file written by
//! autosave brings back every unsaved value after a process that crashed.
#![cfg(feature = "gui")]

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use phasewright::gui::Explorer;
use phasewright::gui::files::DataDir;
use phasewright::session::{Parameter, SeededOrbit, Session};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;

/// Set in a child process: the data directory whose recovery file it writes before crashing.
const CRASH_ENV: &str = "PHASEWRIGHT_TEST_CRASH_DATA";

fn session(formula: &str) -> Session {
    let mut s = Session::blank(formula);
    s.levels.grid = 96;
    s.levels.count = 16;
    s
}

fn harness(app: Explorer) -> Harness<'static, Explorer> {
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    for _ in 0..20 {
        h.run_steps(2);
        let done = h.state_mut().wait_for_worker(Duration::from_secs(20));
        h.run_steps(2);
        if done && !h.state().busy() {
            break;
        }
    }
    h
}

fn open(s: Session, data: Option<PathBuf>) -> Harness<'static, Explorer> {
    let mut app = Explorer::new(s, None, data).expect("explorer starts");
    app.set_native_dialogs(false);
    harness(app)
}

#[test]
fn hazard_messages_are_on_screen() {
    for (formula, shown) in [
        (
            "p^2/2 + 1/q",
            "H jumps or has a pole between neighbouring grid points",
        ),
        (
            "p^2/2 + ln(q)",
            "H is NaN or infinite on 50% of the window; those cells are left blank",
        ),
        (
            "3",
            "H is constant in view (H = 3): every point is an equilibrium",
        ),
    ] {
        let h = open(session(formula), None);
        let a = h.state().analysis().expect("analysed");
        assert!(
            a.diagnostics.iter().any(|d| d.message.contains(shown)),
            "{formula}: {:?}",
            a.diagnostics
        );
        assert!(
            h.query_all_by_label_contains(shown).next().is_some(),
            "{formula}: not on screen: {shown}"
        );
        if formula == "3" {
            assert!(a.equilibria.is_empty());
        }
    }
}

#[test]
fn a_failed_save_keeps_the_session_unsaved_in_memory() {
    let data = tempfile::tempdir().expect("temp dir");
    let mut h = open(session("p^2/2 + q^2/2"), Some(data.path().to_path_buf()));
    h.state_mut().doc.session.title = "work in progress".into();
    h.state_mut().doc.dirty = true;
    let before = h.state().doc.session.clone();
    // procfs takes no new files, even from root
    let bad = Path::new("/proc/phasewright-unsaved.json");
    h.state_mut().save_to(bad);
    h.run_steps(2);
    assert!(h.state().doc.dirty, "still marked unsaved");
    assert_eq!(h.state().doc.session, before, "nothing lost");
    assert_eq!(h.state().modal_name(), "message");
    // in the message dialog and in the status bar
    assert!(
        h.query_all_by_label_contains("cannot save /proc/phasewright-unsaved.json")
            .count()
            >= 2,
        "the error is shown"
    );
    assert!(!bad.exists());
}

/// The session the crashing child holds unsaved.
fn unsaved() -> Session {
    let mut s = session("p^2/2 + k*q^2/2 - b*q^4/4");
    s.title = "unsaved after a crash".into();
    s.notes = "every field must come back".into();
    s.parameters = vec![
        Parameter {
            name: "k".into(),
            value: 1.25,
            min: 0.0,
            max: 3.0,
            step: Some(0.05),
        },
        Parameter {
            name: "b".into(),
            value: 0.5,
            min: -1.0,
            max: 1.0,
            step: None,
        },
    ];
    s.orbits.push(SeededOrbit {
        q0: 0.25,
        p0: 0.0,
        duration: 12.5,
        method: "yoshida4".into(),
        colour: Some("#123456".into()),
    });
    s.levels.count = 20;
    s
}

#[test]
fn autosave_brings_back_the_unsaved_session_after_a_crash() {
    if let Some(dir) = std::env::var_os(CRASH_ENV) {
        // the child: an explorer with unsaved changes autosaves, then the process dies
        let mut app =
            Explorer::new(session("p^2/2"), None, Some(PathBuf::from(dir))).expect("starts");
        app.doc.session = unsaved();
        app.doc.dirty = true;
        app.autosave_now();
        std::process::abort();
    }
    let data = tempfile::tempdir().expect("temp dir");
    let exe = std::env::current_exe().expect("test binary");
    let status = Command::new(exe)
        .args([
            "--exact",
            "autosave_brings_back_the_unsaved_session_after_a_crash",
            "--nocapture",
        ])
        .env(CRASH_ENV, data.path())
        .status()
        .expect("child runs");
    assert!(!status.success(), "the child crashed");
    // the file code of the explorer finds it
    let pending = DataDir {
        dir: data.path().to_path_buf(),
    }
    .pending_recovery()
    .expect("a recovery file");
    assert_eq!(pending, unsaved());
    // and a new start offers it and restores it
    let mut h = open(session("p^2/2"), Some(data.path().to_path_buf()));
    assert_eq!(h.state().modal_name(), "offer-restore");
    h.get_by_label("Restore it").click();
    h.run_steps(3);
    assert_eq!(h.state().doc.session, unsaved());
    assert!(h.state().doc.dirty, "restored work is unsaved until saved");
}
