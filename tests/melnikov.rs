//! Melnikov function checks against the closed forms of Guckenheimer & Holmes,
//! Nonlinear Oscillations, Dynamical Systems, and Bifurcations of Vector
//! Fields (1983), §4.5.
use phasewright::core::Cancel;
use phasewright::core::analysis::{AnalysisConfig, analyze};
use phasewright::core::melnikov::melnikov;
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

const REL: f64 = 1e-8;

fn run(
    src: &str,
    w: f64,
    g: f64,
    delta: f64,
    win: Window,
) -> Vec<phasewright::core::melnikov::MelnikovConnection> {
    let sys = System::from_source(src, &[("g", g), ("w", w)]).unwrap();
    let a = analyze(
        &sys.with_param(sys.formula().param_index("g").unwrap(), 0.0),
        &win,
        &AnalysisConfig::default(),
        &Cancel::never(),
    );
    melnikov(
        &sys,
        "g",
        delta,
        2.0 * PI / w,
        &a.equilibria,
        &a.connections,
        &Cancel::never(),
    )
    .unwrap()
}

#[test]
fn double_well_threshold() {
    for w in [1.0, 0.6, 1.7] {
        let r = run(
            "p^2/2 - q^2/2 + q^4/4 - g*q*cos(w*t)",
            w,
            0.3,
            0.25,
            Window::new(-2.0, 2.0, -1.5, 1.5).unwrap(),
        );
        assert_eq!(r.len(), 2, "two homoclinic loops");
        for c in &r {
            // G&H §4.5: D = 4/3, max|m| = √2 π ω sech(πω/2)
            assert!(
                (c.damping_integral - 4.0 / 3.0).abs() < REL * 4.0 / 3.0,
                "D {}",
                c.damping_integral
            );
            let mx = 2f64.sqrt() * PI * w / (PI * w / 2.0).cosh();
            assert!(
                (c.max_abs_m - mx).abs() < REL * mx,
                "max {} vs {mx}",
                c.max_abs_m
            );
            let ratio = 4.0 * (PI * w / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * w);
            assert!((c.threshold_ratio - ratio).abs() < REL * ratio);
        }
    }
}

#[test]
fn pendulum_threshold() {
    let r = run(
        "p^2/2 - cos(q) - g*q*cos(w*t)",
        1.0,
        0.3,
        0.25,
        Window::new(-4.0, 4.0, -3.0, 3.0).unwrap(),
    );
    assert!(!r.is_empty());
    for c in &r {
        // G&H §4.5: D = 8, threshold γ/δ = 4 cosh(πω/2)/π
        assert!(
            (c.damping_integral - 8.0).abs() < REL * 8.0,
            "D {}",
            c.damping_integral
        );
        let ratio = 4.0 * (PI / 2.0).cosh() / PI;
        assert!(
            (c.threshold_ratio - ratio).abs() < REL * ratio,
            "{} vs {ratio}",
            c.threshold_ratio
        );
    }
}

#[test]
fn refusals() {
    let sys = System::from_source("p^2/2 + q^2/2 - g*q*cos(t) + q*t", &[("g", 1.0)]).unwrap();
    assert!(
        melnikov(&sys, "g", 0.1, 6.0, &[], &[], &Cancel::never())
            .unwrap_err()
            .contains("depends on t")
    );
    assert!(
        melnikov(&sys, "F", 0.1, 6.0, &[], &[], &Cancel::never())
            .unwrap_err()
            .contains("'F'")
    );
}

/// The phase of M(t₀): with s = 0 at the loop's turning point (√2, 0) the
/// double well's m(t₀) is ±√2 π ω sech(πω/2) sin(ωt₀) exactly (G&H §4.5),
/// so every sample matches that curve, not only its maximum.
#[test]
fn double_well_phase() {
    let w = 1.0;
    let r = run(
        "p^2/2 - q^2/2 + q^4/4 - g*q*cos(w*t)",
        w,
        0.3,
        0.25,
        Window::new(-2.0, 2.0, -1.5, 1.5).unwrap(),
    );
    let mx = 2f64.sqrt() * PI * w / (PI * w / 2.0).cosh();
    for c in &r {
        let sign = c.samples[16][1].signum();
        for &[t0, m] in &c.samples {
            let want = sign * mx * (w * t0).sin();
            assert!((m - want).abs() < 1e-8 * mx, "m({t0}) = {m}, want {want}");
        }
    }
}

/// The pendulum's m(t₀) = ±2π sech(πω/2) cos(ωt₀) with s = 0 at the top of
/// the connection (q = 0), G&H §4.5 (amplitude per unit γ).
#[test]
fn pendulum_phase() {
    let w = 1.0;
    let r = run(
        "p^2/2 - cos(q) - g*q*cos(w*t)",
        w,
        0.3,
        0.25,
        Window::new(-4.0, 4.0, -3.0, 3.0).unwrap(),
    );
    assert!(!r.is_empty());
    let mx = 2.0 * PI / (PI * w / 2.0).cosh();
    for c in &r {
        let sign = c.samples[0][1].signum();
        for &[t0, m] in &c.samples {
            let want = sign * mx * (w * t0).cos();
            assert!((m - want).abs() < 1e-8 * mx, "m({t0}) = {m}, want {want}");
        }
    }
}
