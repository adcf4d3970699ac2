//! The nonlinear frequency coefficient κ (ω ≈ ω₀ + κA²) of a center against
//! the Duffing closed form and against the slope of the numerical backbone
//! at small amplitude.

use phasewright::core::Cancel;
use phasewright::core::backbone::{BackboneConfig, backbone};
use phasewright::core::equilibria::{classify, frequency_shift};
use phasewright::core::system::System;
use phasewright::core::window::Window;

/// Duffing H = p²/2 + w²q²/2 + b q⁴/4: κ = 3b/(8w) (the Lindstedt–Poincaré
/// result for α₂ = 0; A. H. Nayfeh and D. T. Mook, *Nonlinear
/// Oscillations*, 1979, §4.1).
#[test]
fn duffing_coefficient_is_the_closed_form() {
    for (w, b) in [(1.0, 1.0), (1.7, -0.3), (0.6, 2.5)] {
        let sys =
            System::from_source("p^2/2 + w^2*q^2/2 + b*q^4/4", &[("w", w), ("b", b)]).unwrap();
        let k = frequency_shift(&sys, 0.0, 0.0).unwrap();
        let want = 3.0 * b / (8.0 * w);
        assert!((k - want).abs() <= 1e-10 * want.abs(), "{k} vs {want}");
        // classify reports it on the center
        let e = classify(&sys, 0.0, 0.0, &Window::new(-2.0, 2.0, -2.0, 2.0).unwrap());
        assert_eq!(e.frequency_shift, Some(k));
    }
}

/// κ from two small-amplitude rows of the backbone (ω − ω₀ = κA² + λA⁴
/// solved for κ): the numerical backbone is the independent reference.
fn backbone_slope(sys: &System, center: [f64; 2], window: &Window) -> (f64, f64) {
    let cfg = BackboneConfig::default();
    let b = backbone(sys, center, window, &cfg, &Cancel::never(), &|_, _| {}).unwrap();
    let w0 = b.rows[0].frequency;
    let (r1, r2) = (b.rows[1], b.rows[2]);
    let (a1, a2) = (r1.amplitude * r1.amplitude, r2.amplitude * r2.amplitude);
    let (d1, d2) = (r1.frequency - w0, r2.frequency - w0);
    // [a1, a1²; a2, a2²][κ; λ] = [d1; d2]
    let det = a1 * a2 * a2 - a2 * a1 * a1;
    let k = (d1 * a2 * a2 - d2 * a1 * a1) / det;
    (k, r2.amplitude)
}

#[test]
fn coefficient_matches_the_backbone_at_small_amplitude() {
    let cases = [
        // Duffing: hardening
        (
            "p^2/2 + q^2/2 + q^4/4",
            vec![],
            [0.0, 0.0],
            Window::new(-0.5, 0.5, -0.6, 0.6),
        ),
        // the biased resonator of the examples (k = 1, b = 2.3, c = 1): α₂ ≠ 0
        (
            "p^2/2 + k*q^2/2 - b*q^3/3 + c*q^4/4",
            vec![("k", 1.0), ("b", 2.3), ("c", 1.0)],
            [0.0, 0.0],
            Window::new(-1.2, 2.8, -1.2, 1.2),
        ),
    ];
    for (src, params, center, window) in cases {
        let sys = System::from_source(src, &params).unwrap();
        let window = window.unwrap();
        let k = frequency_shift(&sys, center[0], center[1]).unwrap();
        let (slope, amp) = backbone_slope(&sys, center, &window);
        assert!(
            (k - slope).abs() <= 1e-6 * k.abs(),
            "{src}: κ {k} vs backbone {slope} (rows up to A = {amp})"
        );
    }
}

/// The coefficient is not given where its formula does not apply.
#[test]
fn no_coefficient_for_a_kinetic_part_that_is_not_quadratic() {
    let sys = System::from_source("cosh(p) + q^2/2", &[]).unwrap();
    assert_eq!(frequency_shift(&sys, 0.0, 0.0), None);
    let mixed = System::from_source("p^2/2 + q^2/2 + q*p^3", &[]).unwrap();
    assert_eq!(frequency_shift(&mixed, 0.0, 0.0), None);
}
