//! Orbit benchmark: 1000 periods of the pendulum H = p²/2 − cos q from 90°,
//! for several methods and steps: energy error, field evaluations, wall time;
//! raw steps per second through the formula tape; and the same orbit done by
//! a hand-written script stack (SciPy DOP853) for comparison.
//!
//! Run: cargo run --release --no-default-features --example bench_orbit
//! (set PHASEWRIGHT_BENCH_NO_PYTHON=1 to skip the peer scripts; the verdicts are
//! against the project's own peer, `examples/peers/practitioner_stack.py`).

use phasewright::core::Cancel;
use phasewright::core::formula::SLOT_Q;
use phasewright::core::integrate::{Integrator, Method, State};
use phasewright::core::orbit::{OrbitRequest, integrate_orbit};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;
use std::time::Instant;

#[path = "common/peers.rs"]
mod peers;

/// 4K(1/√2): the period from 90° (A&S 17.6).
const PERIOD: f64 = 7.416298709205488;
const PERIODS: f64 = 1000.0;
const REPEAT: usize = 5;

struct Row {
    label: String,
    error: f64,
    evaluations: u64,
    jets: u64,
    steps: u64,
    wall_ms: f64,
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn orbit_row(
    sys: &System,
    method: Method,
    steps_per_period: Option<f64>,
    tolerance: Option<f64>,
) -> Row {
    let view = Window::new(-PI, PI, -2.5, 2.5).unwrap_or_default();
    let mut req = OrbitRequest::new(PI / 2.0, 0.0, PERIODS * PERIOD, &view);
    req.method = method;
    req.step = steps_per_period.map(|n| PERIOD / n);
    if let Some(t) = tolerance {
        req.tolerance = t;
    }
    let mut times = Vec::new();
    let mut last = None;
    for _ in 0..REPEAT {
        let t0 = Instant::now();
        let o = integrate_orbit(sys, &req, &Cancel::never());
        times.push(t0.elapsed().as_secs_f64() * 1e3);
        last = Some(o);
    }
    let o = last.unwrap_or_else(|| integrate_orbit(sys, &req, &Cancel::never()));
    let label = match (steps_per_period, tolerance) {
        (Some(n), _) => format!("{method} h = T/{n}"),
        (None, Some(t)) => format!("{method} tol {t:e}"),
        _ => method.to_string(),
    };
    if !matches!(o.stop, phasewright::core::orbit::StopReason::Finished) {
        eprintln!("{label}: stopped early: {}", o.stop);
    }
    Row {
        label,
        error: o.energy_error,
        evaluations: o.field_evaluations,
        jets: o.hessian_evaluations,
        steps: o.steps,
        wall_ms: median(times),
    }
}

/// Steps per second of the bare stepper (no measurements, no samples).
fn steps_per_second(sys: &System, method: Method, steps_per_period: f64) -> f64 {
    let Ok(mut integ) = Integrator::new(sys, method) else {
        return f64::NAN;
    };
    let h = PERIOD / steps_per_period;
    let n = 400_000usize;
    let mut y = State {
        q: PI / 2.0,
        p: 0.0,
        t: 0.0,
    };
    let t0 = Instant::now();
    for _ in 0..n {
        match integ.step(sys, &y, h) {
            Ok(s) => y = s.state,
            Err(_) => break,
        }
    }
    let secs = t0.elapsed().as_secs_f64();
    std::hint::black_box(y);
    n as f64 / secs
}

/// Nanoseconds per ∂H/∂q: the derivative program the splitting methods use,
/// and a `Dual64` pass of the tape (what every kick cost before).
fn kick_nanoseconds(sys: &System) -> (f64, f64) {
    let program = sys.formula().derivative_program(SLOT_Q, sys.params());
    let n = 2_000_000usize;
    let mut acc = 0.0;
    let t0 = Instant::now();
    for i in 0..n {
        let q = std::hint::black_box(1e-6 * i as f64);
        acc += program.eval(q, 0.0, 0.0);
    }
    let program_ns = t0.elapsed().as_secs_f64() * 1e9 / n as f64;
    let t0 = Instant::now();
    for i in 0..n {
        let q = std::hint::black_box(1e-6 * i as f64);
        acc -= sys.dh_dq(q, 0.0, 0.0).1;
    }
    let dual_ns = t0.elapsed().as_secs_f64() * 1e9 / n as f64;
    std::hint::black_box(acc);
    (program_ns, dual_ns)
}

struct Peer {
    wall_ms: f64,
    evaluations: f64,
    error: f64,
}

/// The peers' DOP853 runs; the first (the project's own script) sets the verdicts.
fn peers() -> Vec<(String, Peer)> {
    peers::run_peers(&["--repeat", "3"])
        .into_iter()
        .filter_map(|run| {
            Some((
                run.label.clone(),
                Peer {
                    wall_ms: run.get("orbit_1000_periods_ms")?,
                    evaluations: run.get("orbit_rhs_evaluations")?,
                    error: run.get("orbit_energy_drift")?,
                },
            ))
        })
        .collect()
}

fn main() {
    let sys = match System::from_source("p^2/2 - cos(q)", &[]) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("{e}");
            return;
        }
    };
    println!("Pendulum H = p^2/2 - cos q from q = 90 deg, p = 0; 1000 periods (T = 4K(1/sqrt 2)).");
    println!(
        "Energy error = max |H - H0| over every step. Evaluations: ours count one per kick (dV/dq)\n\
         and one per drift (dT/dp), a field (q', p') as one; the peer's count one per call of its\n\
         right-hand side, which returns both q' and p'."
    );
    println!(
        "Median of {REPEAT} runs, through integrate_orbit (samples, measurements included).\n"
    );
    let configs: Vec<(Method, Option<f64>, Option<f64>)> = vec![
        (Method::Yoshida4, Some(100.0), None),
        (Method::Yoshida4, Some(300.0), None),
        (Method::Yoshida6, Some(60.0), None),
        (Method::Nystrom4, Some(30.0), None),
        (Method::Nystrom4, Some(40.0), None),
        (Method::Nystrom6, Some(10.0), None),
        (Method::Nystrom6, Some(12.0), None),
        (Method::Nystrom6, Some(14.0), None),
        (Method::Split6, Some(24.0), None),
        (Method::Gauss6, Some(30.0), None),
        (Method::Gauss6, Some(40.0), None),
        (Method::Dopri5, None, Some(1e-10)),
    ];
    let rows: Vec<Row> = configs
        .iter()
        .map(|&(m, n, tol)| orbit_row(&sys, m, n, tol))
        .collect();
    let all_peers = peers();
    let peer = all_peers.first().map(|(_, p)| p);
    println!(
        "{:<24} {:>11} {:>12} {:>9} {:>10} {:>10} {:>9}",
        "method", "energy err", "evaluations", "jets", "steps", "wall ms", "vs peer"
    );
    for r in &rows {
        let verdict = match &peer {
            Some(p) => format!(
                "{}{}{}",
                if r.error <= p.error { "E" } else { "-" },
                if (r.evaluations as f64) <= p.evaluations / 10.0 {
                    "N"
                } else {
                    "-"
                },
                if r.wall_ms <= p.wall_ms / 100.0 {
                    "W"
                } else {
                    "-"
                }
            ),
            None => String::new(),
        };
        println!(
            "{:<24} {:>11.3e} {:>12} {:>9} {:>10} {:>10.2} {:>9}",
            r.label, r.error, r.evaluations, r.jets, r.steps, r.wall_ms, verdict
        );
    }
    for (label, p) in &all_peers {
        println!(
            "{:<24} {:>11.3e} {:>12} {:>9} {:>10} {:>10.2}",
            format!("DOP853, {}", label.split(' ').next().unwrap_or("")),
            p.error,
            p.evaluations as u64,
            "-",
            "-",
            p.wall_ms
        );
    }
    if let Some(p) = &peer {
        println!(
            "\nvs peer: E = energy error <= peer's, N = evaluations <= peer's / 10, W = wall time <= peer's / 100"
        );
        for r in &rows {
            println!(
                "  {:<24} evaluations {:>6.3} x peer, wall time {:>7.1}x faster",
                r.label,
                r.evaluations as f64 / p.evaluations,
                p.wall_ms / r.wall_ms
            );
        }
    } else {
        println!("\n(script stack not run)");
    }
    println!("\nOne kick of the pendulum, dH/dq at q:");
    let (program_ns, dual_ns) = kick_nanoseconds(&sys);
    println!(
        "  derivative program {program_ns:>7.1} ns   dual-number pass of the tape {dual_ns:>7.1} ns"
    );
    println!("\nBare stepper, steps per second through the formula tape:");
    for (m, n) in [
        (Method::Yoshida4, 100.0),
        (Method::Yoshida6, 60.0),
        (Method::Nystrom6, 12.0),
        (Method::Gauss6, 30.0),
        (Method::Gauss4, 60.0),
    ] {
        println!(
            "  {:<10} h = T/{n:<4} {:>12.0} steps/s",
            m.to_string(),
            steps_per_second(&sys, m, n)
        );
    }
}
