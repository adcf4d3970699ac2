//! Random input through the whole explorer: clicks, drags, scrolls, key presses
//! and typed text anywhere on the window (menus, panels, panes, dialogs, the
//! formula editor), from a fixed seed so that a failure replays. After every
//! batch the session must still be valid (it reloads through the file loader
//! with the same content) and saveable, and no frame may panic.
#![cfg(feature = "gui")]

#[path = "common/explorer.rs"]
mod explorer;
use egui_kittest::Harness;
use phasewright::gui::Explorer;
use phasewright::session;

/// Events per run; `PHASEWRIGHT_RANDOM_EVENTS` overrides it for longer runs.
const DEFAULT_EVENTS: usize = 10_000;
/// Session checks happen after this many events.
const CHECK_EVERY: usize = 250;
const SIZE: egui::Vec2 = egui::vec2(1280.0, 800.0);

/// xorshift64*: a small deterministic generator, so a failing run replays.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn unit(&mut self) -> f32 {
        (self.next() >> 40) as f32 / (1u64 << 24) as f32
    }
    fn point(&mut self) -> egui::Pos2 {
        egui::pos2(self.unit() * SIZE.x, self.unit() * SIZE.y)
    }
}

/// Text a user might type into the editor or a number field. No path
/// separators or home marks, so a path prompt that receives it names a file in
/// the test's own working directory.
const SNIPPETS: &[&str] = &[
    "q", "p", "t", "+", "-", "*", "/", "^", "(", ")", "2", "0.5", "1e3", "-1", "sin(", "cos(q)",
    "exp(", "sqrt(", "ln(", "abs(", " ", "a", "b", "k", "x", "1/0", "q^4/4", "p^2/2", ",", ".",
    "e", "pi", "nan", "inf", "9999999", "0",
];

const KEYS: &[egui::Key] = &[
    egui::Key::Enter,
    egui::Key::Escape,
    egui::Key::Tab,
    egui::Key::Backspace,
    egui::Key::Delete,
    egui::Key::ArrowLeft,
    egui::Key::ArrowRight,
    egui::Key::ArrowUp,
    egui::Key::ArrowDown,
    egui::Key::Home,
    egui::Key::End,
    egui::Key::Space,
    egui::Key::Z,
    egui::Key::Y,
    egui::Key::S,
    egui::Key::O,
    egui::Key::N,
    egui::Key::R,
    egui::Key::A,
    egui::Key::Minus,
    egui::Key::Plus,
];

fn press(h: &mut Harness<'static, Explorer>, key: egui::Key, modifiers: egui::Modifiers) {
    for pressed in [true, false] {
        h.event(egui::Event::Key {
            key,
            physical_key: None,
            pressed,
            repeat: false,
            modifiers,
        });
    }
}

fn button(h: &mut Harness<'static, Explorer>, at: egui::Pos2, pressed: bool, secondary: bool) {
    h.event(egui::Event::PointerButton {
        pos: at,
        button: if secondary {
            egui::PointerButton::Secondary
        } else {
            egui::PointerButton::Primary
        },
        pressed,
        modifiers: egui::Modifiers::NONE,
    });
}

/// One random user action.
fn act(h: &mut Harness<'static, Explorer>, rng: &mut Rng) {
    match rng.below(100) {
        // click (sometimes the secondary button, sometimes a double click)
        0..=39 => {
            let at = rng.point();
            h.hover_at(at);
            let secondary = rng.below(10) == 0;
            let times = if rng.below(8) == 0 { 2 } else { 1 };
            for _ in 0..times {
                button(h, at, true, secondary);
                button(h, at, false, secondary);
            }
        }
        // drag: press, a few moves, release (sliders, the plot, panel edges)
        40..=54 => {
            let from = rng.point();
            h.hover_at(from);
            button(h, from, true, false);
            let mut at = from;
            for _ in 0..1 + rng.below(4) {
                at += egui::vec2(rng.unit() * 160.0 - 80.0, rng.unit() * 120.0 - 60.0);
                h.hover_at(at);
                h.step();
            }
            button(h, at, false, false);
        }
        // scroll or zoom over a point
        55..=62 => {
            h.hover_at(rng.point());
            let delta = egui::vec2(rng.unit() * 80.0 - 40.0, rng.unit() * 80.0 - 40.0);
            h.event(egui::Event::MouseWheel {
                unit: egui::MouseWheelUnit::Point,
                delta,
                phase: egui::TouchPhase::Move,
                source: egui::MouseWheelSource::Wheel,
                modifiers: if rng.below(3) == 0 {
                    egui::Modifiers::CTRL
                } else {
                    egui::Modifiers::NONE
                },
            });
        }
        // typed text into whatever has focus
        63..=82 => {
            let text = SNIPPETS[rng.below(SNIPPETS.len())];
            h.event(egui::Event::Text(text.to_string()));
        }
        // a key, sometimes with Ctrl or Ctrl+Shift (undo, redo, save, open, …)
        _ => {
            let key = KEYS[rng.below(KEYS.len())];
            let modifiers = match rng.below(4) {
                0 => egui::Modifiers::CTRL,
                1 => egui::Modifiers::CTRL | egui::Modifiers::SHIFT,
                _ => egui::Modifiers::NONE,
            };
            press(h, key, modifiers);
        }
    }
}

/// The session the explorer holds reloads through the file loader with the same
/// content and can be written to disk.
fn check_session(h: &Harness<'static, Explorer>, step: usize, dir: &std::path::Path) {
    let s = &h.state().doc.session;
    let text = s.to_json_pretty();
    let (reloaded, _warnings) = match session::load(&text) {
        Ok(r) => r,
        Err(e) => panic!("after {step} events the session does not reload: {e}\n{text}"),
    };
    assert_eq!(
        reloaded.to_json_pretty(),
        text,
        "after {step} events the session changes on reload"
    );
    let path = dir.join("random-check.json");
    if let Err(e) = session::save_atomic(&path, s) {
        panic!("after {step} events the session cannot be saved: {e}");
    }
}

#[test]
fn ten_thousand_random_inputs_leave_a_valid_saveable_session() {
    let events = std::env::var("PHASEWRIGHT_RANDOM_EVENTS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(DEFAULT_EVENTS);
    // Anything the explorer writes (a save-as prompt answered by random keys)
    // lands in this folder: the only test in this binary, so the change of
    // working directory affects nothing else.
    let work = tempfile::tempdir().expect("temp dir");
    std::env::set_current_dir(work.path()).expect("enter the temp dir");
    let data = tempfile::tempdir().expect("temp dir");
    let start = match session::load(include_str!("../sessions/imperfect-strut.json")) {
        Ok((s, _)) => s,
        Err(e) => panic!("bundled example does not load: {e}"),
    };
    let mut app =
        Explorer::new(start, None, Some(data.path().to_path_buf())).expect("explorer starts");
    app.set_native_dialogs(false);
    let mut h = Harness::builder()
        .with_size(SIZE)
        .build_ui_state(|ui, app: &mut Explorer| app.show(ui), app);
    explorer::settle(&mut h);
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    for step in 1..=events {
        act(&mut h, &mut rng);
        h.run_steps(2);
        if step % CHECK_EVERY == 0 {
            check_session(&h, step, data.path());
        }
    }
    explorer::settle(&mut h);
    check_session(&h, events, data.path());
}
