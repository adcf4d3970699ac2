//! Benchmark of the Bohr–Sommerfeld levels: every bound level of the Morse
//! well of `sessions/bond-ladder.json` (12 levels) and of the larger Morse
//! case D = 8, a = 0.5, ħ = 0.1 over q ∈ [−2, 40] (80 levels), through the
//! same request the command line and the explorer build. Target: the
//! example's levels in under 5 ms.
//!
//! Run: `cargo run --release --no-default-features --example bench_levels`

use phasewright::core::Cancel;
use phasewright::request::{LevelsRequest, centers_in_view};
use phasewright::session::{self, Session};
use std::hint::black_box;
use std::path::PathBuf;
#[path = "common/timing.rs"]
mod timing;
use timing::time_ms;

const REPEAT: usize = 21;

fn bench(name: &str, s: &Session) {
    let sys = s.system().expect("system");
    let cancel = Cancel::never();
    let centers = centers_in_view(s, &sys, &s.view, &cancel);
    let req = LevelsRequest::from_session(s, &centers)
        .expect("ħ")
        .expect("a quantum section");
    let out = req.run(&sys, &s.view, &cancel);
    assert!(out.refused.is_empty(), "{:?}", out.refused);
    let count: usize = out.wells.iter().map(|w| w.levels.len()).sum();
    let t = time_ms(REPEAT, || {
        black_box(req.run(&sys, &s.view, &cancel));
    });
    println!(
        "{name:<32} {:>2} well(s) {count:>3} levels {t}  {:7.1} µs/level",
        centers.len(),
        1e3 * t.median / count.max(1) as f64
    );
}

fn main() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sessions/bond-ladder.json");
    let (example, _) = session::load_file(&path).expect("example loads");
    bench("bond-ladder.json (Morse)", &example);
    let mut big = Session::blank("p^2/2 + 8*(1-exp(-0.5*q))^2");
    big.view = phasewright::core::window::Window::new(-2.0, 40.0, -5.0, 5.0).expect("window");
    big.quantum = Some(session::QuantumSettings::new("0.1"));
    big.validate().expect("valid");
    bench("Morse D = 8, a = 0.5, ħ = 0.1", &big);
    println!("target: the example's levels in under 5 ms (median)");
}
