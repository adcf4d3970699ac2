use phasewright::core::Cancel;
use phasewright::core::continuation::{SweepConfig, sweep};
use phasewright::core::system::System;
use phasewright::core::window::Window;
fn main() {
    let args: Vec<String> = std::env::args().collect();
    let sys = System::from_source(&args[1], &[("mu", 0.0), ("eps", 0.05)]).unwrap();
    let w = Window::new(-2.0, 2.0, -1.0, 1.0).unwrap();
    let s = sweep(
        &sys,
        "mu",
        -1.0,
        1.0,
        &w,
        &SweepConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .unwrap();
    for b in &s.branches {
        let f = &b.points[0];
        let l = b.points.last().unwrap();
        println!(
            "{:?} n={} ({:.4},{:.4}) -> ({:.4},{:.4})",
            b.kind,
            b.points.len(),
            f.param,
            f.q,
            l.param,
            l.q
        );
    }
    println!(
        "{:?}\n{:?} steps {}",
        s.bifurcations, s.diagnostics, s.steps
    );
}
