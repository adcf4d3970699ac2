//! Benchmark of the driven views: the stroboscopic section of the driven
//! double well (100 orbits × 500 drive periods, one core) and the Melnikov
//! threshold, beside the NumPy peer `../shared/bench/drive_peer.py`
//! (fixed-step RK4 vectorised over all starts) when it is present.
//!
//!   cargo run --release --example bench_drive
//!
//! `PHASEWRIGHT_BENCH_NO_PYTHON=1` skips the peer; `PHASEWRIGHT_DRIVE_PEER`
//! names another path for it. The peer needs NumPy (`python3 -m pip install numpy`).

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::section::{SectionConfig, section};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use phasewright::request::MelnikovRequest;
use phasewright::session::{DriveSettings, Parameter, Session};
use std::f64::consts::PI;
use std::path::Path;
use std::process::Command;
use std::time::Instant;

const FORMULA: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";

fn starts() -> Vec<[f64; 2]> {
    // the peer's lattice: 10 × 10 over q in [-1.5, 1.5], p in [-0.8, 0.8]
    let mut out = Vec::new();
    for j in 0..10 {
        for i in 0..10 {
            out.push([-1.5 + 3.0 * i as f64 / 9.0, -0.8 + 1.6 * j as f64 / 9.0]);
        }
    }
    out
}

fn best<T>(runs: usize, mut f: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut last = None;
    for _ in 0..runs {
        let t0 = Instant::now();
        let v = f();
        best = best.min(t0.elapsed().as_secs_f64() * 1e3);
        last = Some(v);
    }
    (best, last.expect("at least one run"))
}

fn main() {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("a one-thread pool");
    let bounds = Window::new(-10.0, 10.0, -10.0, 10.0).unwrap();
    let starts = starts();
    println!("section: 100 orbits x 500 drive periods of {FORMULA}, W = 1, one core");
    let mut ours = Vec::new();
    for (method, steps) in [
        (Method::Nystrom6, 16),
        (Method::Nystrom6, 32),
        (Method::Yoshida4, 64),
    ] {
        let cfg = |f: f64| SectionConfig {
            period: 2.0 * PI,
            damping: 0.0,
            periods: 500,
            method,
            steps_per_period: Some(steps),
            t0: 0.0,
        };
        let free = System::from_source(FORMULA, &[("F", 0.0), ("W", 1.0)]).unwrap();
        let driven = System::from_source(FORMULA, &[("F", 0.3), ("W", 1.0)]).unwrap();
        let (_, s) = pool.install(|| {
            best(1, || {
                section(
                    &free,
                    &starts,
                    &bounds,
                    &cfg(0.0),
                    &Cancel::never(),
                    &|_, _| {},
                )
                .unwrap()
            })
        });
        let mut err: f64 = 0.0;
        for o in &s.orbits {
            let e0 = free.energy(o.start[0], o.start[1]);
            for pt in &o.points {
                err = err.max((free.energy(pt[0], pt[1]) - e0).abs() / e0.abs().max(1.0));
            }
        }
        let (ms, _) = pool.install(|| {
            best(3, || {
                section(
                    &driven,
                    &starts,
                    &bounds,
                    &cfg(0.3),
                    &Cancel::never(),
                    &|_, _| {},
                )
                .unwrap()
            })
        });
        println!(
            "  {:<9} {steps:>3} steps/period: {ms:8.1} ms driven; undriven max relative energy error {err:.2e}",
            method.name()
        );
        ours.push((method, steps, ms, err));
    }

    // Melnikov threshold of the driven double well (δ = 0.25)
    let mut session = Session::blank(FORMULA);
    for (name, value) in [("F", 0.3), ("W", 1.0)] {
        session.parameters.push(Parameter {
            name: name.into(),
            value,
            min: 0.0,
            max: 2.0,
            step: None,
        });
    }
    session.view = Window::new(-2.0, 2.0, -1.5, 1.5).unwrap();
    session.drive = Some(DriveSettings {
        period: "2*pi/W".into(),
        damping: Some("0.25".into()),
        ..DriveSettings::default()
    });
    session.drive.as_mut().unwrap().enabled = true;
    let sys = session.system().unwrap();
    let req = MelnikovRequest::from_session(&session, &sys).unwrap();
    let (ms, m) = best(3, || {
        req.run(&sys, &session.view, &Cancel::never()).unwrap()
    });
    let want = 4.0 * (PI / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI);
    println!(
        "melnikov: threshold F/delta {:.12} (closed form {want:.12}) in {ms:.1} ms",
        m.threshold_ratio.unwrap_or(f64::NAN)
    );

    // the peer, same lattice, RK4 at 64 steps per period
    if std::env::var_os("PHASEWRIGHT_BENCH_NO_PYTHON").is_some() {
        return;
    }
    let peer = std::env::var_os("PHASEWRIGHT_DRIVE_PEER")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| {
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/bench/drive_peer.py")
        });
    if !peer.exists() {
        println!("peer: {} not found; skipped", peer.display());
        return;
    }
    let out = Command::new("python3").arg(&peer).output();
    let Some(out) = out.ok().filter(|o| o.status.success()) else {
        println!(
            "peer: python3 {} did not run (numpy installed?)",
            peer.display()
        );
        return;
    };
    let text = String::from_utf8_lossy(&out.stdout);
    let get = |key: &str| {
        text.lines()
            .find_map(|l| l.strip_prefix(key).map(|v| v.trim().parse::<f64>().ok()))
            .flatten()
    };
    let (Some(peer_ms), Some(peer_err)) =
        (get("driven_section_ms"), get("free_max_rel_energy_error"))
    else {
        println!("peer: unexpected output\n{text}");
        return;
    };
    println!(
        "peer (NumPy RK4, 64 steps/period): {peer_ms:.1} ms driven; undriven max relative energy error {peer_err:.2e}"
    );
    for (method, steps, ms, err) in ours {
        println!(
            "  {:<9} {steps:>3}: {:.1}x the peer's speed, energy error {} the peer's",
            method.name(),
            peer_ms / ms,
            if err <= peer_err {
                "at or below"
            } else {
                "ABOVE"
            }
        );
    }
}
