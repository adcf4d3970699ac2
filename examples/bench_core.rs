//! Benchmark of the core: formula tape against a hand-written closure, grid plus
//! level curves, and the equilibrium search, on the tilted double well
//! H = p²/2 + q⁴/4 − μq²/2 + εq (μ = 1, ε = 0.05) over [−2, 2] × [−1.5, 1.5].
//! When python3 with numpy, scipy and contourpy is available it also runs the
//! hand-scripted peer (`../shared/bench/script_stack.py`, or the path in
//! `PHASEWRIGHT_PEER_BENCH`) and prints our speed relative to it.
//!
//! Run: `cargo run --release --no-default-features --example bench_core`

use phasewright::core::Cancel;
use phasewright::core::analysis::levels_to_draw;
use phasewright::core::contour::{level_curves, sample_grid};
use phasewright::core::equilibria::{EquilibriumConfig, find_equilibria};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::hint::black_box;
use std::time::Instant;

const N: usize = 512;
const LEVELS: usize = 24;
const REPEAT: usize = 21;
const MU: f64 = 1.0;
const EPS: f64 = 0.05;

fn median_ms(repeat: usize, mut f: impl FnMut()) -> f64 {
    f();
    let mut t: Vec<f64> = (0..repeat)
        .map(|_| {
            let s = Instant::now();
            f();
            s.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    t.sort_by(f64::total_cmp);
    t[t.len() / 2]
}

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
    let tape = median_ms(REPEAT, || {
        for (row, &p) in out.chunks_exact_mut(N).zip(&ps) {
            program.eval_row(black_box(&qs), p, row);
        }
        black_box(&out);
    });
    let (mu, eps) = (black_box(MU), black_box(EPS));
    let closure = |q: f64, p: f64| p * p / 2.0 + q.powi(4) / 4.0 - mu * q * q / 2.0 + eps * q;
    let native = median_ms(REPEAT, || {
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
    let equilibria = median_ms(REPEAT, || {
        black_box(find_equilibria(&sys, &window, &eq_cfg, &cancel));
    });

    let grid = sample_grid(&sys, &window, N, N);
    let levels = levels_to_draw(&grid, LEVELS, &eqs);
    let curves = level_curves(&grid, &levels);
    let grid_only = median_ms(REPEAT, || {
        black_box(sample_grid(&sys, &window, N, N));
    });
    let contours = median_ms(REPEAT, || {
        let g = sample_grid(&sys, &window, N, N);
        black_box(level_curves(&g, &levels));
    });
    let vertices: usize = curves.iter().map(|c| c.points.len()).sum();

    println!(
        "phasewright core benchmark: H = p^2/2 + q^4/4 - mu*q^2/2 + eps*q, mu = {MU}, eps = {EPS}"
    );
    println!("window [-2, 2] x [-1.5, 1.5], grid {N} x {N}, median of {REPEAT} runs");
    println!("  f64 tape (RowProgram) over the grid     {tape:8.3} ms");
    println!(
        "  same formula as a Rust closure          {native:8.3} ms   tape/closure = {:.2}",
        tape / native
    );
    println!("  sample_grid (tape + NaN scan + range)   {grid_only:8.3} ms");
    println!(
        "  grid + level curves ({} levels, {} separatrix) {contours:8.3} ms   ({} curves, {vertices} vertices)",
        levels.len(),
        levels.iter().filter(|l| l.is_separatrix).count(),
        curves.len()
    );
    println!(
        "  equilibria (find_equilibria)            {equilibria:8.3} ms   ({} found)",
        eqs.len()
    );

    match peer() {
        Ok(peer) => {
            let get = |k: &str| peer.get(k).and_then(|v| v.as_f64());
            println!("peer script (numpy + contourpy + scipy), same problem:");
            if let Some(c) = get("grid_eval_plus_contours_ms") {
                println!(
                    "  grid_eval_plus_contours_ms {c:8.3}   ours {contours:8.3}   speed-up {:.1}x (target >= 5x)",
                    c / contours
                );
            }
            if let Some(e) = get("equilibria_ms") {
                println!(
                    "  equilibria_ms              {e:8.3}   ours {equilibria:8.3}   speed-up {:.1}x (target >= 5x)",
                    e / equilibria
                );
            }
            if let Some(g) = get("grid_eval_ms") {
                println!(
                    "  grid_eval_ms               {g:8.3}   ours {grid_only:8.3}   speed-up {:.1}x",
                    g / grid_only
                );
            }
        }
        Err(why) => println!("peer script not run: {why}"),
    }
}

fn peer() -> Result<serde_json::Value, String> {
    let path = std::env::var("PHASEWRIGHT_PEER_BENCH").unwrap_or_else(|_| {
        format!(
            "{}/../shared/bench/script_stack.py",
            env!("CARGO_MANIFEST_DIR")
        )
    });
    if !std::path::Path::new(&path).exists() {
        return Err(format!("{path} not found"));
    }
    let out = std::process::Command::new("python3")
        .arg(&path)
        .args(["--grid", &N.to_string(), "--levels", &LEVELS.to_string()])
        .output()
        .map_err(|e| format!("python3: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        let last = err.lines().last().unwrap_or("").to_string();
        return Err(format!(
            "{path} failed ({last}); set up with `python3 -m pip install numpy scipy contourpy`"
        ));
    }
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text.lines().last().unwrap_or("");
    serde_json::from_str(line).map_err(|e| format!("peer output is not JSON: {e}"))
}
