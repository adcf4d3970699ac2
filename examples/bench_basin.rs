//! Benchmark of the safe basins: 200 × 200 starts × 60 drive periods of the
//! driven double well of `sessions/driven-resonator.json` on all cores, the
//! 40-point erosion curve of 100 × 100 starts, and beside them the
//! project's NumPy peer `examples/peers/basin_rk4.py` (fixed-step RK4
//! vectorised over all starts, escaped starts dropped, the same rule and
//! the same steps per period). Energy errors of both on the undriven,
//! undamped case at the same step. The outside peer
//! `../shared/bench/drive_peer.py` (every start kept, no leaving rule) runs
//! on its own workload in `bench_drive`.
//!
//!   cargo run --release --example bench_basin
//!
//! `PHASEWRIGHT_BENCH_NO_PYTHON=1` skips the peer. It needs NumPy.

use phasewright::core::Cancel;
use phasewright::core::analysis::AnalysisConfig;
use phasewright::core::basin::{BasinConfig, amplitude_range, basin, erosion, well_regions};
use phasewright::core::section::{Strobe, strobe_runs};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::collections::HashMap;
use std::f64::consts::PI;
use std::path::Path;
use std::process::Command;
use std::time::Instant;

const FORMULA: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";
const W: f64 = 1.2;
const DELTA: f64 = 0.088;

fn peer(script: &str, args: &[String]) -> Option<HashMap<String, f64>> {
    if std::env::var_os("PHASEWRIGHT_BENCH_NO_PYTHON").is_some() || !Path::new(script).exists() {
        return None;
    }
    let out = Command::new("python3")
        .arg(script)
        .args(args)
        .output()
        .ok()?;
    if !out.status.success() {
        eprintln!(
            "peer {script} failed: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        return None;
    }
    Some(
        String::from_utf8_lossy(&out.stdout)
            .lines()
            .filter_map(|l| {
                let (k, v) = l.split_once(' ')?;
                Some((k.to_string(), v.trim().parse().ok()?))
            })
            .collect(),
    )
}

fn main() {
    let window = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    let sys = System::from_source(FORMULA, &[("F", 0.0), ("W", W)]).unwrap();
    let k = sys.formula().param_index("F").unwrap();
    let h0 = sys.with_param(k, 0.0);
    let regions = well_regions(&h0, &window, &AnalysisConfig::default(), &Cancel::never());
    let threads = rayon::current_num_threads();
    println!("{FORMULA}, W = {W}, delta = {DELTA}, view q in [-1.9, 1.9], p in [-1.2, 1.2]");
    println!("{threads} threads; {} wells", regions.len());

    let mut cfg = BasinConfig::new(2.0 * PI / W, DELTA);
    cfg.lattice = 200;
    cfg.periods = 60;
    let mut steps = 0;
    let mut ours_throughput = 0.0;
    for f in [0.05, 0.25] {
        let s = sys.with_param(k, f);
        let t0 = Instant::now();
        let b = basin(
            &s,
            &h0,
            &regions,
            &window,
            &cfg,
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap();
        let secs = t0.elapsed().as_secs_f64();
        steps = b.steps_per_period;
        let starts: usize = b.wells.iter().map(|w| w.starts).sum();
        let safe: Vec<usize> = b.wells.iter().map(|w| w.safe).collect();
        let done: u64 = b
            .wells
            .iter()
            .flat_map(|w| w.stayed.iter().flatten())
            .map(|&s| u64::from(s))
            .sum();
        let lattice_rate = (cfg.lattice * cfg.lattice * cfg.periods) as f64 / secs;
        if f == 0.25 {
            ours_throughput = lattice_rate;
        }
        println!(
            "basin F = {f}: 200x200 x 60 periods in {secs:.3} s ({} with {steps} steps/period); \
             {starts} starts in the wells, safe {safe:?}; {:.3e} lattice start-periods/s, \
             {:.3e} integrated start-periods/s; integrity {:?}",
            b.method.name(),
            lattice_rate,
            done as f64 / secs,
            b.wells
                .iter()
                .map(|w| (w.integrity * 1000.0).round() / 1000.0)
                .collect::<Vec<_>>()
        );
    }

    // undriven, undamped energy error at the same step, over the lobe starts
    let mut free = cfg.clone();
    free.damping = 0.0;
    free.steps_per_period = Some(steps);
    let starts: Vec<[f64; 2]> = (0..200 * 200)
        .map(|c| {
            let (i, j) = (c % 200, c / 200);
            [
                -1.9 + (i as f64 + 0.5) * 3.8 / 200.0,
                -1.2 + (j as f64 + 0.5) * 2.4 / 200.0,
            ]
        })
        .filter(|x| regions.iter().any(|r| r.in_lobe(&h0, *x)))
        .collect();
    let keep = |_: [f64; 2]| true;
    let sc = phasewright::core::section::SectionConfig {
        period: free.period,
        damping: 0.0,
        periods: 60,
        method: free.method,
        steps_per_period: Some(steps),
        t0: 0.0,
    };
    let mut err: f64 = 0.0;
    for tile in starts.chunks(phasewright::core::section::MAX_STARTS) {
        let s = strobe_runs(
            &h0,
            tile,
            &sc,
            &Strobe {
                stays: &keep,
                record: false,
            },
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap();
        for o in &s.orbits {
            let e0 = h0.energy(o.start[0], o.start[1]);
            let e1 = h0.energy(o.last[0], o.last[1]);
            err = err.max((e1 - e0).abs() / e0.abs().max(1.0));
        }
    }
    println!(
        "undriven, undamped, 60 periods at {steps} steps/period: max relative energy error {err:.3e}"
    );

    // the erosion curve
    let mut ec = cfg.clone();
    ec.lattice = 100;
    let amps = amplitude_range(0.0, 0.4, 40);
    let t0 = Instant::now();
    let e = erosion(
        &sys,
        k,
        &amps,
        &regions,
        &window,
        &ec,
        &Cancel::never(),
        &|_, _| {},
    )
    .unwrap();
    let secs = t0.elapsed().as_secs_f64();
    println!(
        "erosion: 40 amplitudes F in [0, 0.4], 100x100 x 60 periods each, in {secs:.2} s ({} steps/period)",
        e.steps_per_period
    );
    let row: Vec<String> = e
        .points
        .iter()
        .step_by(4)
        .map(|p| format!("F={:.2}:{:.2}", p.amplitude, p.integrity[0]))
        .collect();
    println!("  integrity of well 1: {}", row.join(" "));

    // the peers
    let here = env!("CARGO_MANIFEST_DIR");
    let args = |f: f64, extra: &[&str]| -> Vec<String> {
        let mut v: Vec<String> = vec![
            "--grid".into(),
            "200".into(),
            "--periods".into(),
            "60".into(),
            "--steps".into(),
            steps.to_string(),
            "--F".into(),
            f.to_string(),
        ];
        v.extend(extra.iter().map(|s| s.to_string()));
        v
    };
    match peer(
        &format!("{here}/examples/peers/basin_rk4.py"),
        &args(0.25, &[]),
    ) {
        Some(p) => {
            let rate = p.get("lattice_throughput").copied().unwrap_or(f64::NAN);
            println!(
                "peer basin_rk4.py (NumPy RK4, {steps} steps/period), F = 0.25: {:.3} s, \
                 safe {} of {}; {:.3e} lattice start-periods/s, {:.3e} integrated/s; \
                 undriven energy error {:.3e}",
                p.get("seconds").copied().unwrap_or(f64::NAN),
                p.get("safe").copied().unwrap_or(f64::NAN),
                p.get("starts_in_wells").copied().unwrap_or(f64::NAN),
                rate,
                p.get("integrated_throughput").copied().unwrap_or(f64::NAN),
                p.get("free_max_rel_energy_error")
                    .copied()
                    .unwrap_or(f64::NAN)
            );
            println!(
                "ratio (ours / peer, lattice start-periods per second, F = 0.25): {:.1}x",
                ours_throughput / rate
            );
        }
        None => println!("peer basin_rk4.py not run"),
    }
    // the outside peer `../shared/bench/drive_peer.py` keeps every start
    // (no leaving rule): its workload runs in bench_drive ("wide section")
    println!("the outside peer's own workload: cargo run --release --example bench_drive");
}
