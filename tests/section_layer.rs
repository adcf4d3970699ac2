//! What the Melnikov threshold predicts, seen in the stroboscopic section of
//! the driven, damped double well
//! q'' = q − q³ − δq' + F cos(Wt)  (H = p²/2 − q²/2 + q⁴/4 − F q cos(Wt)).
//!
//! The threshold is F_c = δ·4 cosh(πW/2) / (3√2 π W) (J. Guckenheimer and
//! P. Holmes, Nonlinear Oscillations, Dynamical Systems, and Bifurcations of
//! Vector Fields, 1983, §4.5). Below it the unstable manifold of the saddle's
//! periodic orbit does not meet the stable one: points started on it leave
//! the saddle along one curve and never come back near it, so near the saddle
//! they occupy a thin layer (the cells along one curve). Well above it the
//! manifolds cross, the unstable one folds back along the stable one again
//! and again, and the same starts fill a layer of positive area near the
//! saddle. The amplitude "well above" is twice the threshold: at δ = 0.25
//! and W = 1 the tangle then carries a chaotic set that keeps returning near
//! the saddle; at three and four times it the starts are swept to a large
//! periodic orbit around both wells instead, which passes the saddle's box
//! only in a few places (both seen in this test's section, 100 periods).
//! Measuring the layer by counting the distinct cells of a fine grid
//! that the section's points occupy is common practice (a box count).

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::section::{SectionConfig, section};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::collections::HashSet;
use std::f64::consts::PI;

const W: f64 = 1.0;
const DELTA: f64 = 0.25;
/// Half side of the box around the saddle where cells are counted.
const BOX: f64 = 0.6;
/// Cells per side of that box.
const CELLS: usize = 120;

/// F_c = δ·4 cosh(πW/2) / (3√2 π W) (Guckenheimer and Holmes, §4.5).
fn threshold() -> f64 {
    DELTA * 4.0 * (PI * W / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * W)
}

/// Distinct cells of the box around the saddle occupied by the section of
/// starts on the local unstable manifold, at drive amplitude `f`.
fn occupied_cells(f: f64) -> (usize, usize) {
    let sys = System::from_source(
        "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)",
        &[("F", f), ("W", W)],
    )
    .unwrap();
    // The saddle's periodic orbit at t = 0 to first order in F: the
    // particular solution of the linearised q'' + δq' − q = F cos(Wt),
    // q = A cos Wt + B sin Wt (common practice).
    let w2 = W * W + 1.0;
    let a = -f * w2 / (w2 * w2 + DELTA * DELTA * W * W);
    let b = -DELTA * W * a / w2;
    let fixed = [a, b * W];
    // The unstable eigenvector of the undriven, damped saddle: q'' + δq' − q
    // = 0 has the growth rate λ = (−δ + √(δ² + 4))/2, direction (1, λ).
    let lam = 0.5 * (-DELTA + (DELTA * DELTA + 4.0).sqrt());
    let n = (1.0 + lam * lam).sqrt();
    let v = [1.0 / n, lam / n];
    // Starts along one fundamental piece of the local manifold on each
    // side: distances ε·g^s, s ∈ [0, 1), g the growth over one period.
    let g = (lam * 2.0 * PI / W).exp();
    let eps = 1e-4;
    let per_side = 40;
    let mut starts = Vec::new();
    for side in [1.0, -1.0] {
        for k in 0..per_side {
            let r = side * eps * g.powf(k as f64 / per_side as f64);
            starts.push([fixed[0] + r * v[0], fixed[1] + r * v[1]]);
        }
    }
    let cfg = SectionConfig {
        period: 2.0 * PI / W,
        damping: DELTA,
        periods: 100,
        method: Method::Auto,
        steps_per_period: Some(128),
        t0: 0.0,
    };
    let bounds = Window::new(-3.0, 3.0, -3.0, 3.0).unwrap();
    let s = section(&sys, &starts, &bounds, &cfg, &Cancel::never(), &|_, _| {}).unwrap();
    let cell = 2.0 * BOX / CELLS as f64;
    let mut seen = HashSet::new();
    let mut points = 0;
    for o in &s.orbits {
        for p in &o.points {
            let (x, y) = (p[0] - fixed[0], p[1] - fixed[1]);
            if x.abs() < BOX && y.abs() < BOX {
                points += 1;
                seen.insert((((x + BOX) / cell) as usize, ((y + BOX) / cell) as usize));
            }
        }
    }
    (seen.len(), points)
}

#[test]
fn below_the_melnikov_threshold_the_unstable_manifold_stays_thin_and_well_above_it_fills_a_layer() {
    let fc = threshold();
    let (below, below_points) = occupied_cells(0.5 * fc);
    let (above, above_points) = occupied_cells(2.0 * fc);
    // Below: a curve through the box crosses at most a few times its side
    // in cells (its length near the saddle is about the box's diagonal).
    assert!(
        below <= 3 * CELLS,
        "below the threshold {below} cells of {} are occupied ({below_points} points)",
        CELLS * CELLS
    );
    // Above: the folded manifold comes back near the saddle again and
    // again; many times the cells of one curve.
    assert!(
        above >= 4 * below && above >= 4 * CELLS,
        "above the threshold only {above} cells ({above_points} points) against {below} below"
    );
}
