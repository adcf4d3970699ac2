//! The nonlinear frequency coefficient κ (ω ≈ ω₀ + κA²) of a center against
//! the Duffing closed form and against the slope of the numerical backbone
//! at small amplitude.

use phasewright::core::Cancel;
use phasewright::core::backbone::{BackboneConfig, ShiftSource, backbone, fit_frequency_shift};
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

/// The backbone carries κ: from the Taylor coefficients where the kinetic
/// part is quadratic (the Duffing closed form 3b/(8w), Nayfeh & Mook §4.1),
/// and fitted to its rows otherwise. H = q²/2 + p²/2 + b p⁴/4 is the Duffing
/// H = p²/2 + q²/2 + b q⁴/4 under the canonical swap (q, p) → (p, −q): the
/// same frequency at each energy E, and its q-amplitude is √(2E) exactly
/// (q turns where ∂H/∂p = 0, at p = 0). The Duffing's amplitude obeys
/// A²/2 + bA⁴/4 = E, so to first order both frequencies read
/// ω ≈ 1 + (3b/8)·2E, and κ in the swapped system is 3b/8 as well (closed
/// form by that substitution).
#[test]
fn the_backbone_carries_kappa_from_the_formula_or_from_its_fit() {
    // q within ±0.8 keeps every level closed in view for both signs of b
    let window = Window::new(-0.8, 0.8, -1.5, 1.5).unwrap();
    let run = |src: &str, b: f64| {
        let sys = System::from_source(src, &[("b", b)]).unwrap();
        backbone(
            &sys,
            [0.0, 0.0],
            &window,
            &BackboneConfig::default(),
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap()
    };
    for b in [0.6, -0.4] {
        let want = 3.0 * b / 8.0;
        let duffing = run("p^2/2 + q^2/2 + b*q^4/4", b);
        let shift = duffing.frequency_shift.unwrap();
        assert_eq!(shift.source, ShiftSource::TaylorCoefficients);
        assert!((shift.kappa - want).abs() <= 1e-10 * want.abs());
        // the fit on the same rows agrees with the closed form
        let fitted = fit_frequency_shift(&duffing.rows).unwrap();
        assert!(
            (fitted - want).abs() <= 1e-6 * want.abs(),
            "fit {fitted} vs {want}"
        );
        let swapped = run("q^2/2 + p^2/2 + b*p^4/4", b);
        let shift = swapped.frequency_shift.unwrap();
        assert_eq!(shift.source, ShiftSource::BackboneFit);
        // the orbit path's rows and the A⁶ term the fit leaves out: 1e-5
        assert!(
            (shift.kappa - want).abs() <= 1e-5 * want.abs(),
            "swapped Duffing b = {b}: fit {} vs {want}",
            shift.kappa
        );
    }
}
