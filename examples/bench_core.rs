//! Benchmark of the core: formula tape against a hand-written closure, grid plus
//! level curves, and the equilibrium search, on the tilted double well
//! H = p²/2 + q⁴/4 − μq²/2 + εq (μ = 1, ε = 0.05) over [−2, 2] × [−1.5, 1.5].
//! It also runs the project's hand-scripted peer
//! (`examples/peers/practitioner_stack.py`, NumPy + contourpy + SciPy) and, where
//! present, the outside one (`../shared/bench/script_stack.py` or
//! `PHASEWRIGHT_PEER_BENCH`), and prints our speed relative to each.
//!
//! Run: `cargo run --release --no-default-features --example bench_core`

use phasewright::core::Cancel;
use phasewright::core::analysis::levels_to_draw;
use phasewright::core::contour::{level_curves, sample_grid};
use phasewright::core::equilibria::{EquilibriumConfig, find_equilibria};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::hint::black_box;

#[path = "common/peers.rs"]
mod peers;
#[path = "common/timing.rs"]
mod timing;
use timing::time_ms;

const N: usize = 512;
const LEVELS: usize = 24;
const REPEAT: usize = 21;
const MU: f64 = 1.0;
const EPS: f64 = 0.05;

fn main() {
    let sys = match System::from_source(
        "p^2/2 + q^4/4 - mu*q^2/2 + eps*q",
        &[("mu", MU), ("eps", EPS)],
    ) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("benchmark formula does not compile: {e}");
            std::process::exit(2);
        }
    };
    let window = Window {
        qmin: -2.0,
        qmax: 2.0,
        pmin: -1.5,
        pmax: 1.5,
    };
    let qs: Vec<f64> = (0..N)
        .map(|i| -2.0 + 4.0 * i as f64 / (N - 1) as f64)
        .collect();
    let ps: Vec<f64> = (0..N)
        .map(|j| -1.5 + 3.0 * j as f64 / (N - 1) as f64)
        .collect();
    let mut out = vec![0.0; N * N];

    let program = sys.row_program();
    let tape = time_ms(REPEAT, || {
        for (row, &p) in out.chunks_exact_mut(N).zip(&ps) {
            program.eval_row(black_box(&qs), p, row);
        }
        black_box(&out);
    });
    let (mu, eps) = (black_box(MU), black_box(EPS));
    let closure = |q: f64, p: f64| p * p / 2.0 + q.powi(4) / 4.0 - mu * q * q / 2.0 + eps * q;
    let native = time_ms(REPEAT, || {
        for (row, &p) in out.chunks_exact_mut(N).zip(&ps) {
            for (o, &q) in row.iter_mut().zip(black_box(&qs)) {
                *o = closure(q, p);
            }
        }
        black_box(&out);
    });

    let cancel = Cancel::never();
    let eq_cfg = EquilibriumConfig::default();
    let (eqs, _) = find_equilibria(&sys, &window, &eq_cfg, &cancel);
    let equilibria = time_ms(REPEAT, || {
        black_box(find_equilibria(&sys, &window, &eq_cfg, &cancel));
    });

    let grid = sample_grid(&sys, &window, N, N);
    let levels = levels_to_draw(&grid, LEVELS, &eqs);
    let curves = level_curves(&grid, &levels);
    let grid_only = time_ms(REPEAT, || {
        black_box(sample_grid(&sys, &window, N, N));
    });
    let contours = time_ms(REPEAT, || {
        let g = sample_grid(&sys, &window, N, N);
        black_box(level_curves(&g, &levels));
    });
    let curves_only = time_ms(REPEAT, || {
        black_box(level_curves(&grid, &levels));
    });
    let vertices: usize = curves.iter().map(|c| c.points.len()).sum();

    println!(
        "phasewright core benchmark: H = p^2/2 + q^4/4 - mu*q^2/2 + eps*q, mu = {MU}, eps = {EPS}"
    );
    println!("window [-2, 2] x [-1.5, 1.5], grid {N} x {N}, median (and minimum) of {REPEAT} runs");
    println!("  f64 tape (RowProgram) over the grid     {tape}");
    println!(
        "  same formula as a Rust closure          {native}   tape/closure = {:.2} (min {:.2}; target <= 2)",
        tape.median / native.median,
        tape.min / native.min
    );
    println!("  sample_grid (tape + NaN scan + range)   {grid_only}");
    println!(
        "  grid + level curves                     {contours}   ({} levels of which {} separatrix; {} curves, {vertices} vertices)",
        levels.len(),
        levels.iter().filter(|l| l.is_separatrix).count(),
        curves.len()
    );
    println!("    of which level curves alone           {curves_only}");
    println!(
        "  equilibria (find_equilibria)            {equilibria}   ({} found)",
        eqs.len()
    );

    let peers = peers::run_peers(&["--grid", &N.to_string(), "--levels", &LEVELS.to_string()]);
    if peers.is_empty() {
        println!("no peer script ran (see the messages above)");
    }
    for peer in &peers {
        println!(
            "{} (numpy + contourpy + scipy), same problem, medians:",
            peer.label
        );
        let rows = [
            ("grid_eval_plus_contours_ms", contours, " (target >= 5x)"),
            ("equilibria_ms", equilibria, " (target >= 5x)"),
            ("grid_eval_ms", grid_only, ""),
        ];
        for (key, ours, target) in rows {
            if let Some(v) = peer.get(key) {
                println!(
                    "  {key:27} {v:9.3} ms   ours {:8.3} ms   speed-up {:.1}x{target}",
                    ours.median,
                    v / ours.median
                );
            }
        }
    }
}
