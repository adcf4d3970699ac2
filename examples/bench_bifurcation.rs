//! Timings of the bifurcation and backbone work:
//! `cargo run --release --no-default-features --example bench_bifurcation`.
//! Prints the median of several runs for each case, with what it found.

use phasewright::core::Cancel;
use phasewright::core::backbone::{BackboneConfig, backbone};
use phasewright::core::continuation::{SweepConfig, sweep};
use phasewright::core::folds::{FoldConfig, fold_curves};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::time::{Duration, Instant};

const RUNS: usize = 15;

fn median(mut t: Vec<Duration>) -> Duration {
    t.sort();
    t[t.len() / 2]
}

/// The median time of RUNS calls and the last result.
fn time<T>(mut f: impl FnMut() -> T) -> (Duration, T) {
    let start = Instant::now();
    let mut out = f();
    let mut times = vec![start.elapsed()];
    for _ in 1..RUNS {
        let start = Instant::now();
        out = f();
        times.push(start.elapsed());
    }
    (median(times), out)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let cancel = Cancel::never();

    let sys = System::from_source("p^2/2 + q^4/4 - mu*q^2/2 - 0.05*q", &[("mu", 0.0)])?;
    let window = Window::new(-2.0, 2.0, -1.0, 1.0)?;
    let cfg = SweepConfig::default();
    let (t, s) = time(|| sweep(&sys, "mu", -1.0, 1.0, &window, &cfg, &cancel, &|_| {}));
    let s = s?;
    let fold = s.bifurcations.first().map(|b| b.param).unwrap_or(f64::NAN);
    println!(
        "sweep, imperfect pitchfork (eps = 0.05), mu in [-1, 1]: {:.2} ms median of {RUNS} \
         (target < 50 ms); {} branches, {} points, {} steps, saddle-node at mu = {:.14}",
        t.as_secs_f64() * 1e3,
        s.branches.len(),
        s.branches.iter().map(|b| b.points.len()).sum::<usize>(),
        s.steps,
        fold
    );

    let pendulum = System::from_source("p^2/2 - cos(q)", &[])?;
    let pwin = Window::new(-4.0, 4.0, -3.0, 3.0)?;
    let bcfg = BackboneConfig::default();
    let (t, b) = time(|| backbone(&pendulum, [0.0, 0.0], &pwin, &bcfg, &cancel, &|_, _| {}));
    let b = b?;
    println!(
        "backbone, pendulum central well, {} energies up to 1 - {:.1e} of the escape energy: \
         {:.2} ms median of {RUNS} (target < 100 ms)",
        b.rows.len(),
        bcfg.closest,
        t.as_secs_f64() * 1e3
    );

    let cusp = System::from_source(
        "p^2/2 + q^4/4 - mu*q^2/2 - eps*q",
        &[("mu", 0.0), ("eps", 0.0)],
    )?;
    let fcfg = FoldConfig::default();
    let (t, f) = time(|| {
        fold_curves(
            &cusp,
            ["mu", "eps"],
            [-0.5, 1.0, -0.2, 0.2],
            &window,
            &fcfg,
            &cancel,
            &|_| {},
        )
    });
    let f = f?;
    println!(
        "fold curves, cusp family, box [-0.5, 1] x [-0.2, 0.2]: {:.2} ms median of {RUNS}; \
         {} curve(s), {} points, {} cusp(s)",
        t.as_secs_f64() * 1e3,
        f.curves.len(),
        f.curves.iter().map(|c| c.points.len()).sum::<usize>(),
        f.cusps.len()
    );
    Ok(())
}
