//! Benchmark of the driven views, beside the project's own NumPy peer
//! `examples/peers/drive_rk4.py` (fixed-step RK4 vectorised over all starts)
//! and, when present, the outside peer `../shared/bench/drive_peer.py`:
//!
//! * the stroboscopic section of the driven double well
//!   H = p²/2 − q²/2 + q⁴/4 − F q cos(W t), F = 0.3, W = 1: 100 orbits × 500
//!   drive periods on one core, with the undriven energy error of the same
//!   run (max over every point of |H − H(start)| / max(1, |H(start)|));
//! * the safe-basin workload: 200 × 200 starts over q ∈ [−2, 2],
//!   p ∈ [−1.5, 1.5] × 60 drive periods, F = 0.2, δ = 0.25, all cores, no
//!   points recorded, a start dropped once a period's point leaves the box
//!   0 < q < 2.5, |p| < 2 (the peer's rule); throughput in starts × periods
//!   per second;
//! * the Melnikov threshold of the driven double well (δ = 0.25).
//!
//!   cargo run --release --no-default-features --example bench_drive
//!
//! The peers need NumPy (`python3 -m pip install numpy`).
//! `PHASEWRIGHT_BENCH_NO_PYTHON=1` skips them; `PHASEWRIGHT_DRIVE_PEER` names
//! another path for the outside one.

#[path = "common/peers.rs"]
mod peers;
#[path = "common/timing.rs"]
mod timing;

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::section::{
    SectionConfig, SectionEnd, Strobe, section, strobe_runs, strobe_runs_per_start,
};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use phasewright::request::MelnikovRequest;
use phasewright::session::{DriveSettings, Parameter, Session};
use std::f64::consts::PI;
use timing::time_ms;

const FORMULA: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";
const DRIVE_PEERS: peers::Peers = peers::Peers {
    own: "drive_rk4.py",
    outside: Some("../shared/bench/drive_peer.py"),
    outside_env: "PHASEWRIGHT_DRIVE_PEER",
    setup: "python3 -m pip install numpy",
};
/// RK4 steps per drive period of the peers.
const PEER_STEPS: usize = 64;

/// An n × n lattice over [q0, q1] × [p0, p1], rows of constant p.
fn lattice(n: usize, q: [f64; 2], p: [f64; 2]) -> Vec<[f64; 2]> {
    let at = |r: [f64; 2], k: usize| r[0] + (r[1] - r[0]) * k as f64 / (n - 1) as f64;
    (0..n * n).map(|k| [at(q, k % n), at(p, k / n)]).collect()
}

fn system(f: f64) -> System {
    System::from_source(FORMULA, &[("F", f), ("W", 1.0)]).expect("the benchmark formula")
}

/// Largest relative energy error of the undriven system over recorded points.
fn energy_error(free: &System, orbits: &[phasewright::core::section::SectionOrbit]) -> f64 {
    let mut err: f64 = 0.0;
    for o in orbits {
        let e0 = free.energy(o.start[0], o.start[1]);
        for pt in &o.points {
            err = err.max((free.energy(pt[0], pt[1]) - e0).abs() / e0.abs().max(1.0));
        }
    }
    err
}

fn config(periods: usize, damping: f64, method: Method, steps: Option<usize>) -> SectionConfig {
    SectionConfig {
        period: 2.0 * PI,
        damping,
        periods,
        method,
        steps_per_period: steps,
        t0: 0.0,
    }
}

struct Row {
    label: String,
    ms: f64,
    err: f64,
}

fn main() {
    let one_core = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("a one-thread pool");
    let bounds = Window::new(-10.0, 10.0, -10.0, 10.0).expect("bounds");
    let starts = lattice(10, [-1.5, 1.5], [-0.8, 0.8]);
    let (free, driven) = (system(0.0), system(0.3));
    let quiet = |_: usize, _: usize| {};

    println!("section: 100 orbits x 500 drive periods of {FORMULA}, F = 0.3, W = 1, one core");
    println!(
        "  (ms: median of 5 (min); energy error: the undriven run, max relative over every point)"
    );
    let mut rows: Vec<Row> = Vec::new();
    let cases: [(Method, Option<usize>, bool); 8] = [
        (Method::Nystrom6, None, true),
        (Method::Nystrom6, Some(32), true),
        (Method::Nystrom6, Some(16), true),
        (Method::Nystrom6, Some(16), false),
        (Method::Nystrom6, Some(12), true),
        (Method::Nystrom6, Some(8), true),
        (Method::Nystrom4, Some(8), true),
        (Method::Verlet, Some(32), true),
    ];
    for (method, steps, lanes) in cases {
        let cfg = config(500, 0.0, method, steps);
        let inside = |x: [f64; 2]| bounds.contains(x[0], x[1]);
        let strobe = Strobe {
            stays: &inside,
            record: true,
        };
        let run = |sys: &System| {
            if lanes {
                strobe_runs(sys, &starts, &cfg, &strobe, &Cancel::never(), &quiet)
            } else {
                strobe_runs_per_start(sys, &starts, &cfg, &strobe, &Cancel::never(), &quiet)
            }
            .expect("the section runs")
        };
        let s = one_core.install(|| run(&free));
        let err = energy_error(&free, &s.orbits);
        let t = one_core.install(|| {
            time_ms(5, || {
                std::hint::black_box(run(&driven));
            })
        });
        let label = format!(
            "{:<9} {:>3} steps/period{}{}",
            method.name(),
            s.steps_per_period,
            if steps.is_none() { " (default)" } else { "" },
            if lanes { "" } else { ", per start" }
        );
        println!("  {label:<42} {t}   energy error {err:.2e}");
        rows.push(Row {
            label,
            ms: t.median,
            err,
        });
    }
    // the section() entry point as the views call it, for the record
    let _ = section(
        &driven,
        &starts,
        &bounds,
        &config(5, 0.0, Method::Auto, None),
        &Cancel::never(),
        &quiet,
    )
    .expect("section");

    // the basin workload
    let n = 200;
    let basin_starts = lattice(n, [-2.0, 2.0], [-1.5, 1.5]);
    let in_box = |x: [f64; 2]| x[0] > 0.0 && x[0] < 2.5 && x[1] > -2.0 && x[1] < 2.0;
    let strobe = Strobe {
        stays: &in_box,
        record: false,
    };
    let basin_driven = system(0.2);
    let threads = rayon::current_num_threads();
    println!(
        "basin: {n} x {n} starts x 60 drive periods, F = 0.2, delta = 0.25, {threads} threads, \
         a start dropped once it leaves 0 < q < 2.5, |p| < 2"
    );
    let mut basin_rows = Vec::new();
    for (method, steps) in [
        (Method::Nystrom6, 16usize),
        (Method::Nystrom6, 8),
        (Method::Nystrom4, 8),
        (Method::Nystrom4, 6),
    ] {
        let cfg = config(60, 0.25, method, Some(steps));
        let mut stayed = 0;
        let t = time_ms(3, || {
            let s = strobe_runs(
                &basin_driven,
                &basin_starts,
                &cfg,
                &strobe,
                &Cancel::never(),
                &quiet,
            )
            .expect("the basin runs");
            stayed = s
                .orbits
                .iter()
                .filter(|o| o.end == SectionEnd::Completed)
                .count();
        });
        // the undriven, undamped energy error over every period's point of
        // the starts while they stay in the box (in recorded pieces)
        let free_cfg = config(60, 0.0, method, Some(steps));
        let recorded = Strobe {
            stays: &in_box,
            record: true,
        };
        let mut err: f64 = 0.0;
        for piece in basin_starts.chunks(10_000) {
            let s = strobe_runs(&free, piece, &free_cfg, &recorded, &Cancel::never(), &quiet)
                .expect("the undriven basin runs");
            err = err.max(energy_error(&free, &s.orbits));
        }
        let throughput = (n * n * 60) as f64 / (t.median / 1e3);
        let label = format!("{:<9} {steps:>3} steps/period", method.name());
        println!(
            "  {label}: {t}   {throughput:.3e} starts x periods/s, \
             {stayed} stayed; undriven energy error {err:.2e}"
        );
        basin_rows.push((label, t.median, throughput, err));
    }

    // the outside peer's own workload at the basin's size: its lattice, its
    // drive, every start kept for 60 periods, all cores
    let wide_starts = lattice(n, [-1.5, 1.5], [-0.8, 0.8]);
    let anywhere = |_: [f64; 2]| true;
    let unrecorded = Strobe {
        stays: &anywhere,
        record: false,
    };
    println!(
        "wide section: {n} x {n} starts over q in [-1.5, 1.5], p in [-0.8, 0.8] x 60 drive \
         periods, F = 0.3, no damping, every start kept, {threads} threads"
    );
    let mut wide_rows = Vec::new();
    for (method, steps) in [
        (Method::Auto, None),
        (Method::Nystrom6, Some(16)),
        (Method::Nystrom6, Some(12)),
        (Method::Nystrom6, Some(10)),
        (Method::Nystrom6, Some(8)),
        (Method::Nystrom4, Some(8)),
    ] {
        let cfg = config(60, 0.0, method, steps);
        let mut used = (Method::Auto, 0);
        let t = time_ms(3, || {
            let s = strobe_runs(
                &driven,
                &wide_starts,
                &cfg,
                &unrecorded,
                &Cancel::never(),
                &quiet,
            )
            .expect("the wide section runs");
            used = (s.method, s.steps_per_period);
        });
        let recorded = Strobe {
            stays: &anywhere,
            record: true,
        };
        let mut err: f64 = 0.0;
        for piece in wide_starts.chunks(10_000) {
            let s = strobe_runs(&free, piece, &cfg, &recorded, &Cancel::never(), &quiet)
                .expect("the undriven wide section runs");
            err = err.max(energy_error(&free, &s.orbits));
        }
        let throughput = (n * n * 60) as f64 / (t.median / 1e3);
        let label = format!(
            "{:<9} {:>3} steps/period{}",
            used.0.name(),
            used.1,
            if steps.is_none() { " (default)" } else { "" }
        );
        println!(
            "  {label:<36} {t}   {throughput:.3e} starts x periods/s; undriven energy error {err:.2e}"
        );
        wide_rows.push((label, throughput, err));
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
    session.view = Window::new(-2.0, 2.0, -1.5, 1.5).expect("view");
    session.drive = Some(DriveSettings {
        period: "2*pi/W".into(),
        damping: Some("0.25".into()),
        enabled: true,
        ..DriveSettings::default()
    });
    let sys = session.system().expect("the session's system");
    let req = MelnikovRequest::from_session(&session, &sys).expect("the Melnikov request");
    let mut m = None;
    let t = time_ms(7, || {
        m = Some(
            req.run(&sys, &session.view, &Cancel::never())
                .expect("the Melnikov run"),
        );
    });
    let want = 4.0 * (PI / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI);
    let got = m.and_then(|m| m.threshold_ratio).unwrap_or(f64::NAN);
    println!(
        "melnikov: threshold F/delta {got:.12} (closed form {want:.12}, relative error {:.1e}) in {t} (target < 20 ms)",
        (got - want).abs() / want
    );

    // the peers
    let steps = PEER_STEPS.to_string();
    let section_args = ["--orbits", "100", "--periods", "500", "--steps", &steps];
    for peer in peers::run_peers_of(&DRIVE_PEERS, &section_args, &section_args) {
        let (Some(ms), Some(err)) = (
            peer.get("driven_ms").or(peer.get("driven_section_ms")),
            peer.get("free_max_rel_energy_error"),
        ) else {
            println!("{}: unexpected output {}", peer.label, peer.figures);
            continue;
        };
        println!(
            "{} section, NumPy RK4 {PEER_STEPS} steps/period: {ms:.1} ms; energy error {err:.2e}",
            peer.label
        );
        for r in &rows {
            println!(
                "  {:<42} {:6.1}x the peer's speed, energy error {} the peer's",
                r.label,
                ms / r.ms,
                if r.err <= err { "at or below" } else { "ABOVE" }
            );
        }
    }
    let basin_args = [
        "--basin",
        "--grid",
        "200",
        "--periods",
        "60",
        "--steps",
        &steps,
    ];
    let own_only = peers::Peers {
        outside: None,
        outside_env: "PHASEWRIGHT_DRIVE_PEER_BASIN",
        ..DRIVE_PEERS
    };
    for peer in peers::run_peers_of(&own_only, &basin_args, &basin_args) {
        let (Some(ms), Some(err), Some(rate)) = (
            peer.get("driven_ms"),
            peer.get("free_max_rel_energy_error"),
            peer.get("starts_periods_per_s"),
        ) else {
            println!("{}: unexpected output {}", peer.label, peer.figures);
            continue;
        };
        println!(
            "{} basin, NumPy RK4 {PEER_STEPS} steps/period: {ms:.1} ms, {rate:.3e} starts x periods/s, \
             {} stayed; energy error {err:.2e}",
            peer.label,
            peer.get("stayed").unwrap_or(f64::NAN)
        );
        for (label, ours_ms, ours, e) in &basin_rows {
            println!(
                "  {label} ({ours_ms:.1} ms): {:6.1}x the peer's throughput, \
                 energy error {} the peer's",
                ours / rate,
                if *e <= err { "at or below" } else { "ABOVE" }
            );
        }
    }

    // the peers on the wide section: the outside one as it is written (q**3)
    // and the own one with the cube as two products
    let wide_own = [
        "--orbits",
        "40000",
        "--periods",
        "60",
        "--steps",
        &steps,
        "--cube",
        "products",
    ];
    let wide_outside = ["--orbits", "40000", "--periods", "60", "--steps", &steps];
    for peer in peers::run_peers_of(&DRIVE_PEERS, &wide_own, &wide_outside) {
        let (Some(ms), Some(err)) = (
            peer.get("driven_ms").or(peer.get("driven_section_ms")),
            peer.get("free_max_rel_energy_error"),
        ) else {
            println!("{}: unexpected output {}", peer.label, peer.figures);
            continue;
        };
        let rate = (n * n * 60) as f64 / (ms / 1e3);
        let cube = peer
            .figures
            .get("cube")
            .and_then(|c| c.as_str())
            .unwrap_or("power");
        println!(
            "{} wide section, NumPy RK4 {PEER_STEPS} steps/period, cube by {cube}: {ms:.0} ms, \
             {rate:.3e} starts x periods/s; energy error {err:.2e}",
            peer.label
        );
        for (label, ours, e) in &wide_rows {
            println!(
                "  {label:<36} {:6.1}x the peer's throughput, energy error {} the peer's",
                ours / rate,
                if *e <= err { "at or below" } else { "ABOVE" }
            );
        }
    }
}
