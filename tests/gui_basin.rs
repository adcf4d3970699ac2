//! The explorer's safe-basin panes through AccessKit with egui_kittest: the
//! Safe basin tab of the driven resonator shows the core's integrity
//! measures, a quick look on the coarse lattice while a slider is dragged
//! and the full lattice after, the erosion curve only on demand (with the
//! Melnikov threshold, and Cancel), and without a drive the reason.
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use explorer::settle;
use phasewright::core::Cancel;
use phasewright::core::basin::PREVIEW_LATTICE;
use phasewright::core::window::Window;
use phasewright::gui::{BASIN_LABEL, EROSION_LABEL, EXAMPLES, Explorer};
use phasewright::numbers::fixed;
use phasewright::request::{BasinRequest, ErosionRequest};
use phasewright::session::{BasinSettings, DriveSettings, Parameter, Session};
use std::f64::consts::PI;
use std::time::Duration;

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

fn example(file: &str) -> Session {
    let (_, text) = EXAMPLES
        .iter()
        .find(|(name, _)| *name == file)
        .expect("the example is bundled");
    phasewright::session::load(text).expect("example loads").0
}

/// The driven, damped double well H = p²/2 − q²/2 + q⁴/4 − F q cos(W t),
/// W = 1, δ = 0.25, on a small lattice (`lattice`² starts, 20 periods) and
/// an erosion curve of 5 amplitudes over F in 0 .. 0.4.
fn driven(f: f64, lattice: usize) -> Session {
    let mut s = Session::blank("p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)");
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
        periods: Some(20),
        lattice: Some(4),
        enabled: true,
    });
    s.basin = Some(BasinSettings {
        lattice: Some(lattice),
        periods: Some(20),
        values: Some(5),
        ..BasinSettings::default()
    });
    s
}

/// Closed-form Melnikov threshold of the driven double well, F = δ·4
/// cosh(πW/2) / (3√2 π W) (J. Guckenheimer and P. Holmes, Nonlinear
/// Oscillations, Dynamical Systems, and Bifurcations of Vector Fields,
/// 1983, §4.5).
fn threshold(delta: f64, w: f64) -> f64 {
    delta * 4.0 * (PI * w / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * w)
}

#[test]
fn the_safe_basin_tab_of_the_driven_resonator_shows_the_cores_integrity() {
    let session = example("driven-resonator.json");
    let (mut h, _d) = open(session.clone());
    assert!(
        h.state().basin().is_none(),
        "computed before the tab opened"
    );
    h.get_by_label("Safe basin").click();
    h.run_steps(2);
    settle(&mut h);
    let shown = h.state().basin().expect("basin computed").clone();
    // the same request the command line builds, through the core
    let sys = session.system().expect("compiles");
    let req = BasinRequest::from_session(&session, &sys).expect("a driven session");
    let core = req
        .run(&sys, &Cancel::never(), &|_, _| {})
        .expect("the core computes it");
    assert_eq!(shown.basin.lattice, 200, "the full lattice of the session");
    assert_eq!(shown.basin.periods, 60);
    assert!(!shown.basin.cancelled);
    assert_eq!(shown.basin.wells.len(), 2, "the two wells at q = ±1");
    assert_eq!(shown.basin.wells.len(), core.wells.len());
    for (w, c) in shown.basin.wells.iter().zip(&core.wells) {
        assert_eq!(w.integrity, c.integrity);
        assert_eq!(w.local_integrity, c.local_integrity);
        assert_eq!((w.safe, w.starts), (c.safe, c.starts));
        assert!(
            w.integrity > 0.9 && w.integrity <= 1.0,
            "F = 0.05 is below the threshold: {}",
            w.integrity
        );
        assert!((w.center[0].abs() - 1.0).abs() < 1e-6, "{:?}", w.center);
        // the pane states it under the plot, one line a well
        let text = format!(
            "global integrity {} ({} of {} starts safe), local integrity {}",
            fixed(c.integrity, 4),
            c.safe,
            c.starts,
            fixed(c.local_integrity, 4)
        );
        assert!(
            h.query_by_label_contains(&text).is_some(),
            "the pane does not say '{text}'"
        );
    }
    // one well is nibbled at its rim already at F = 0.05, the other not
    assert!(shown.basin.wells.iter().any(|w| w.integrity < 1.0));
    assert!(h.query_by_label(BASIN_LABEL).is_some(), "the mask is drawn");
    assert!(h.query_by_label_contains("quick look").is_none());
}

#[test]
fn dragging_a_slider_shows_a_quick_look_and_the_full_lattice_after() {
    let (mut h, _d) = open(driven(0.1, 80));
    h.state_mut().show_pane("basin");
    settle(&mut h);
    assert_eq!(h.state().basin().expect("basin").basin.lattice, 80);
    h.state_mut().set_parameter("F", 0.3, true);
    h.run_steps(1);
    assert!(h.state_mut().wait_for_worker(Duration::from_secs(60)));
    h.run_steps(1);
    let quick = h.state().basin().expect("quick look").basin.clone();
    assert_eq!(quick.lattice, PREVIEW_LATTICE);
    assert_eq!(quick.periods, 5, "a quarter of the 20 periods");
    assert!(
        h.query_by_label_contains("a quick look while dragging")
            .is_some()
    );
    // released: the full lattice at the new amplitude
    settle(&mut h);
    let full = h.state().basin().expect("full basin").basin.clone();
    assert_eq!((full.lattice, full.periods), (80, 20));
    let session = h.state().doc.session.clone();
    let sys = session.system().expect("compiles");
    let core = BasinRequest::from_session(&session, &sys)
        .expect("driven")
        .run(&sys, &Cancel::never(), &|_, _| {})
        .expect("core");
    let got: Vec<f64> = full.wells.iter().map(|w| w.integrity).collect();
    let want: Vec<f64> = core.wells.iter().map(|w| w.integrity).collect();
    assert_eq!(got, want);
    // F = 0.3 is above the threshold (about 0.188): the wells erode
    assert!(got.iter().all(|&i| i < 1.0), "{got:?}");
    assert!(
        h.query_by_label_contains("a quick look while dragging")
            .is_none()
    );
}

#[test]
fn the_erosion_curve_runs_only_when_asked_and_marks_the_melnikov_threshold() {
    let (mut h, _d) = open(driven(0.1, 24));
    h.get_by_label("Erosion").click();
    h.run_steps(2);
    settle(&mut h);
    assert!(h.state().erosion().is_none(), "ran without being asked");
    assert!(h.query_by_label_contains("press the button").is_some());
    h.get_by_label("Compute erosion curve").click();
    h.run_steps(2);
    settle(&mut h);
    let e = h.state().erosion().expect("curve computed").clone();
    let session = h.state().doc.session.clone();
    let sys = session.system().expect("compiles");
    let core = ErosionRequest::from_session(&session, &sys)
        .expect("driven with an amplitude")
        .run(&sys, &Cancel::never(), &|_, _| {})
        .expect("core");
    let amps: Vec<f64> = e.points.iter().map(|p| p.amplitude).collect();
    assert_eq!(amps, vec![0.0, 0.1, 0.2, 0.30000000000000004, 0.4]);
    assert_eq!(e.points, core.points);
    let t = e.threshold.expect("a threshold");
    let want = threshold(0.25, 1.0);
    assert!((t - want).abs() < 1e-8 * want, "{t} against {want}");
    // at zero drive the safe set is the whole lobe; strongly above the
    // threshold the wells erode
    let first = &e.points[0];
    let last = &e.points[4];
    for k in 0..e.centers.len() {
        assert_eq!(first.integrity[k], 1.0);
        assert!(last.integrity[k] < first.integrity[k], "{e:?}");
    }
    assert!(h.query_by_label(EROSION_LABEL).is_some());
    let mark = format!(
        "Melnikov threshold F = {}",
        phasewright::numbers::caption(t)
    );
    assert!(h.query_by_label_contains(&mark).is_some(), "no '{mark}'");
    // moving the amplitude moves only the guide: nothing to compute again
    h.state_mut().set_parameter("F", 0.2, false);
    settle(&mut h);
    assert!(h.query_by_label_contains("settings changed").is_none());
    assert_eq!(h.state().erosion().expect("kept").points, core.points);
    // another drive frequency is other settings: said, and not run by itself
    h.state_mut().set_parameter("W", 1.2, false);
    settle(&mut h);
    assert!(h.query_by_label_contains("settings changed").is_some());
    assert_eq!(h.state().erosion().expect("kept").points, core.points);
}

#[test]
fn a_running_erosion_curve_can_be_cancelled() {
    // 200² starts over 40 amplitudes: far longer than the test waits
    let mut s = driven(0.1, 200);
    s.basin = Some(BasinSettings {
        lattice: Some(200),
        periods: Some(2000),
        values: Some(40),
        ..BasinSettings::default()
    });
    let (mut h, _d) = open(s);
    h.state_mut().show_pane("erosion");
    settle(&mut h);
    h.get_by_label("Compute erosion curve").click();
    h.run_steps(3);
    assert!(h.state().busy(), "the curve is being computed");
    h.get_by_label("Cancel").click();
    h.run_steps(2);
    settle(&mut h);
    let e = h.state().erosion().expect("the part found so far");
    assert!(e.cancelled);
    assert!(e.points.len() < 40);
    assert!(h.query_by_label_contains("Stopped early").is_some());
}

#[test]
fn without_a_drive_the_basin_tabs_say_why() {
    let mut s = driven(0.0, 24);
    s.formula = "p^2/2 - q^2/2 + q^4/4".into();
    s.parameters.clear();
    s.drive = None;
    let (mut h, _d) = open(s);
    for tab in ["Safe basin", "Erosion"] {
        h.get_by_label(tab).click();
        h.run_steps(2);
        settle(&mut h);
        assert!(
            h.query_by_label_contains("The session has no drive")
                .is_some(),
            "{tab}: no reason given"
        );
        assert!(h.query_by_label_contains("Compute erosion curve").is_none());
    }
    assert!(h.state().basin().is_none());
    assert!(h.state().erosion().is_none());
    let r = h.state().pane_requests();
    assert!(r.basin.is_none() && r.erosion.is_none());
}
