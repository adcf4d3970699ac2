//! Bohr–Sommerfeld levels and the tunnelling splitting against closed forms,
//! the `ellip` crate's complete elliptic integrals and quadratures written
//! here, independent of the program's.

use phasewright::core::Cancel;
use phasewright::core::backbone::{BackboneError, BackboneMethod};
use phasewright::core::levels::{
    LevelsConfig, LevelsError, MIN_BARRIER_EXPONENT, WellLevels, levels,
};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

fn run(src: &str, center: [f64; 2], window: [f64; 4], hbar: f64) -> WellLevels {
    try_run(src, center, window, hbar).expect("levels")
}

fn try_run(
    src: &str,
    center: [f64; 2],
    window: [f64; 4],
    hbar: f64,
) -> Result<WellLevels, LevelsError> {
    let sys = System::from_source(src, &[]).expect("formula compiles");
    let [a, b, c, d] = window;
    let w = Window::new(a, b, c, d).expect("window");
    levels(
        &sys,
        center,
        &w,
        hbar,
        &LevelsConfig::default(),
        &Cancel::never(),
    )
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Bisection for the x in (lo, hi) with f(x) = 0, f increasing (to the last bit).
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..200 {
        let m = 0.5 * (lo + hi);
        if m <= lo || m >= hi {
            break;
        }
        if f(m) < 0.0 { lo = m } else { hi = m }
    }
    0.5 * (lo + hi)
}

#[test]
fn harmonic_oscillator_levels_are_hbar_omega_n_plus_half() {
    // H = p²/2 + ω²q²/2 with ω = 1.7: Eₙ = ħω(n + ½) exactly (the
    // Bohr–Sommerfeld rule is exact here; Landau & Lifshitz, Quantum
    // Mechanics §23 and §48). The window's edge q = ±4 sets the top energy
    // ω²·16/2, so the count is the number of n with ħω(n + ½) < 8ω².
    let (omega, hbar) = (1.7, 0.05);
    let l = run(
        "p^2/2 + 1.7^2*q^2/2",
        [0.1, 0.0],
        [-4.0, 4.0, -8.0, 8.0],
        hbar,
    );
    assert_eq!(l.method, BackboneMethod::Quadrature);
    assert_eq!(l.escape_energy, None);
    let top = omega * omega * 16.0 / 2.0;
    let expected = (top / (hbar * omega) - 0.5).ceil() as usize;
    assert_eq!(l.count, expected);
    assert_eq!(l.levels.len(), expected);
    for lv in &l.levels {
        let exact = hbar * omega * (lv.n as f64 + 0.5);
        assert!(
            rel(lv.energy, exact) < 1e-12,
            "n = {}: {} vs {exact}",
            lv.n,
            lv.energy
        );
        assert!(rel(lv.period, 2.0 * PI / omega) < 1e-12);
    }
    // The spacing is ħω throughout.
    for lv in &l.levels[..l.levels.len() - 1] {
        assert!(rel(lv.spacing.expect("spacing"), hbar * omega) < 1e-9);
    }
    assert_eq!(l.levels.last().and_then(|lv| lv.spacing), None);
    assert!(l.splitting.is_none());
}

/// Morse H = p²/2m + D(1 − e^(−aq))²: the rule is exact,
/// Eₙ = ħω(n + ½) − [ħω(n + ½)]²/(4D), ω = a√(2D/m), and the number of bound
/// levels is the integer part of √(2mD)/(aħ) + ½ (P. M. Morse, Phys. Rev. 34
/// (1929) 57).
fn assert_morse(m: f64, d: f64, a: f64, hbar: f64, window: [f64; 4], expected_count: usize) {
    let src = format!("p^2/(2*{m}) + {d}*(1 - exp(-{a}*q))^2");
    let l = run(&src, [0.05, 0.0], window, hbar);
    let omega = a * (2.0 * d / m).sqrt();
    let count = ((2.0 * m * d).sqrt() / (a * hbar) + 0.5).floor() as usize;
    assert_eq!(count, expected_count, "the closed form's count");
    assert_eq!(l.count, count, "{src}");
    assert_eq!(l.levels.len(), count, "{src}: {:?}", l.diagnostics);
    for lv in &l.levels {
        let x = hbar * omega * (lv.n as f64 + 0.5);
        let exact = x - x * x / (4.0 * d);
        assert!(
            (lv.energy - exact).abs() < 1e-10,
            "{src} n = {}: {} vs {exact}",
            lv.n,
            lv.energy
        );
    }
    // Spacings shrink linearly: Eₙ₊₁ − Eₙ = ħω − (ħω)²(n + 1)/(2D) (the
    // difference of the closed form).
    for lv in &l.levels[..l.levels.len() - 1] {
        let exact = hbar * omega - (hbar * omega).powi(2) * (lv.n as f64 + 1.0) / (2.0 * d);
        assert!((lv.spacing.expect("spacing") - exact).abs() < 2e-10);
    }
}

#[test]
fn morse_levels_match_the_closed_form_and_count() {
    // m = 1.3, D = 5, a = 0.8, ħ = 0.07: √(2mD)/(aħ) + ½ = 64.89…, so 64
    // levels; the window reaches q = 50 where V = D to the last bit.
    assert_morse(1.3, 5.0, 0.8, 0.07, [-1.5, 50.0, -6.0, 6.0], 64);
}

#[test]
fn done_when_morse_case_has_all_80_levels() {
    // D = 8, a = 0.5, m = 1, ħ = 0.1 (ħω = 0.2): √16/0.05 + ½ = 80.5, so 80
    // bound levels; the window q ∈ [−2, 40] is open only just below D.
    assert_morse(1.0, 8.0, 0.5, 0.1, [-2.0, 40.0, -5.0, 5.0], 80);
}

#[test]
fn pure_quartic_levels_follow_the_three_quarter_power() {
    // H = p²/2 + q⁴/4: with q = (4E)^(1/4) x, I(E) = (1/π)∮p dq
    // = (2/π)(4E)^(1/4)√(2E) J = c E^(3/4), c = 4J/π, J = ∫₀¹√(1 − x⁴) dx.
    // Integrating by parts, 3J = ∫₀¹ dx/√(1 − x⁴) · 2 = 2·K(½)/√2 (the
    // lemniscate integral; x = cos φ/√(1 + sin²φ) takes it to Legendre's form,
    // Abramowitz & Stegun 17.4.50 — recalled from memory), K from the ellip crate.
    let j = 2.0_f64.sqrt() * ellip::ellipk(0.5).expect("K") / 3.0;
    // The same J from Γ(1/4) = 3.6256099082219083 (recalled from memory):
    // J = Γ(1/4)² / (6√(2π)).
    let gamma_quarter = 3.625_609_908_221_908_3_f64;
    assert!(rel(j, gamma_quarter.powi(2) / (6.0 * (2.0 * PI).sqrt())) < 1e-14);
    let c = 4.0 * j / PI;
    let hbar = 0.1;
    let l = run("p^2/2 + q^4/4", [0.0, 0.0], [-3.0, 3.0, -5.0, 5.0], hbar);
    // Top: the window's edge, V(3) = 81/4.
    let expected = (c * (81.0_f64 / 4.0).powf(0.75) / hbar - 0.5).ceil() as usize;
    assert_eq!(l.count, expected);
    assert_eq!(l.levels.len(), expected);
    assert!(expected > 100);
    for lv in &l.levels {
        let exact = (hbar * (lv.n as f64 + 0.5) / c).powf(4.0 / 3.0);
        assert!(
            rel(lv.energy, exact) < 1e-10,
            "n = {}: {} vs {exact}",
            lv.n,
            lv.energy
        );
    }
}

#[test]
fn pendulum_levels_below_the_separatrix_match_the_elliptic_action() {
    // H = p²/2 − cos q: libration action I(E) = (8/π)[E(m) − (1 − m)K(m)],
    // m = (1 + E)/2 (pendulum libration; recalled from memory, checked against
    // the backbone in tests/backbone.rs), with K, E from the ellip crate. The
    // reference levels solve I(Eₙ) = ħ(n + ½) by bisection here; below the
    // separatrix E = 1, I(1) = 8/π, so the count is ⌈8/(πħ) − ½⌉.
    let action = |e: f64| {
        let m = (1.0 + e) / 2.0;
        let k = ellip::ellipk(m).expect("K");
        let ee = ellip::ellipe(m).expect("E");
        8.0 / PI * (ee - (1.0 - m) * k)
    };
    let hbar = 0.05;
    let l = run("p^2/2 - cos(q)", [0.0, 0.0], [-4.0, 4.0, -3.0, 3.0], hbar);
    assert!((l.escape_energy.expect("escape") - 1.0).abs() < 1e-14);
    let expected = (8.0 / (PI * hbar) - 0.5).ceil() as usize;
    assert_eq!(expected, 51);
    assert_eq!(l.count, expected);
    assert_eq!(l.levels.len(), expected);
    for lv in &l.levels {
        let target = hbar * (lv.n as f64 + 0.5);
        let exact = bisect(|e| action(e) - target, -1.0, 1.0 - 1e-15);
        assert!(
            (lv.energy - exact).abs() < 1e-10,
            "n = {}: {} vs {exact}",
            lv.n,
            lv.energy
        );
    }
    // Both saddles bound this well: a band, not a pair, so no splitting.
    assert!(l.splitting.is_none());
}

/// Midpoint rule in θ over a level's arc between turning points a < b, with
/// q = (a + b)/2 + (b − a)/2 · sin θ: ∫ₐᵇ g(q) dq for g with square-root
/// zeros or poles at the ends (the midpoint rule on the smooth periodic
/// integrand converges fast; common practice).
fn arc_integral(g: impl Fn(f64) -> f64, a: f64, b: f64, n: usize) -> f64 {
    let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
    let h = PI / n as f64;
    (0..n)
        .map(|k| {
            let th = -0.5 * PI + (k as f64 + 0.5) * h;
            g(mid + half * th.sin()) * half * th.cos() * h
        })
        .sum()
}

#[test]
fn symmetric_double_well_splitting_follows_the_semiclassical_formula() {
    // V = 4(q² − 1)²: wells at q = ±1, barrier top V(0) = 4. The reference is
    // computed here: E₀ from I(E₀) = ħ/2 with I(E) = (1/π)∫√(2(E − V)) dq
    // over the well, ω = 2π/T(E₀), T = ∫√2/√(E − V) dq · 2 / 2, S = ∫|p| dq
    // between the inner turning points ±b, b² = 1 − √(E₀/4) (closed form),
    // and ΔE = (ħω/π) exp(−S/ħ) (Landau & Lifshitz, Quantum Mechanics §50,
    // problem 3).
    let v = |q: f64| 4.0 * (q * q - 1.0).powi(2);
    let inner = |e: f64| (1.0 - (e / 4.0).sqrt()).sqrt();
    let outer = |e: f64| (1.0 + (e / 4.0).sqrt()).sqrt();
    let n = 20_000;
    let action = |e: f64| {
        arc_integral(
            |q| (2.0 * (e - v(q)).max(0.0)).sqrt(),
            inner(e),
            outer(e),
            n,
        ) / PI
    };
    let period = |e: f64| {
        2.0 * arc_integral(
            |q| 1.0 / (2.0 * (e - v(q)).max(1e-300)).sqrt(),
            inner(e),
            outer(e),
            n,
        )
    };
    let hbar = 0.2;
    let e0 = bisect(|e| action(e) - hbar / 2.0, 1e-9, 4.0 - 1e-9);
    let omega = 2.0 * PI / period(e0);
    let b = inner(e0);
    let s = arc_integral(|q| (2.0 * (v(q) - e0).max(0.0)).sqrt(), -b, b, n);
    let expected = hbar * omega / PI * (-s / hbar).exp();

    let l = run(
        "p^2/2 + 4*(q^2 - 1)^2",
        [1.02, 0.0],
        [-2.0, 2.0, -4.0, 4.0],
        hbar,
    );
    assert!((l.escape_energy.expect("escape") - 4.0).abs() < 1e-13);
    assert!(
        rel(l.levels[0].energy, e0) < 1e-9,
        "{} vs {e0}",
        l.levels[0].energy
    );
    let sp = l
        .splitting
        .expect("a symmetric double well has a splitting");
    assert!(sp.exponent >= MIN_BARRIER_EXPONENT);
    assert!(
        rel(sp.barrier_action, s) < 1e-8,
        "S {} vs {s}",
        sp.barrier_action
    );
    assert!(rel(sp.frequency, omega) < 1e-8);
    assert!(
        rel(sp.splitting, expected) < 1e-6,
        "{} vs {expected}",
        sp.splitting
    );
    assert!(sp.barrier_q.abs() < 1e-12);
    assert!((sp.partner[0] + 1.0).abs() < 1e-12 && sp.partner[1] == 0.0);
    // The other well gives the same pair.
    let r = run(
        "p^2/2 + 4*(q^2 - 1)^2",
        [-1.0, 0.0],
        [-2.0, 2.0, -4.0, 4.0],
        hbar,
    );
    let sr = r.splitting.expect("mirror well");
    assert!(rel(sr.splitting, sp.splitting) < 1e-9);
}

#[test]
fn no_splitting_for_a_tilted_or_shallow_double_well() {
    // A tilt breaks the mirror symmetry: the two ground levels differ and
    // do not pair.
    let tilted = run(
        "p^2/2 + 4*(q^2 - 1)^2 + 0.1*q",
        [1.0, 0.0],
        [-2.0, 2.0, -4.0, 4.0],
        0.2,
    );
    assert!(!tilted.levels.is_empty());
    assert!(tilted.splitting.is_none());
    // A large ħ puts the lowest level near the barrier top: S/ħ < 2π, no
    // estimate, and a note says why.
    let shallow = run(
        "p^2/2 + 4*(q^2 - 1)^2",
        [1.0, 0.0],
        [-2.0, 2.0, -4.0, 4.0],
        1.5,
    );
    assert_eq!(shallow.count, 1, "{shallow:?}");
    assert!(shallow.splitting.is_none());
    assert!(
        shallow
            .diagnostics
            .iter()
            .any(|d| d.message.contains("too close to the barrier top")),
        "{:?}",
        shallow.diagnostics
    );
}

#[test]
fn bad_hbar_and_bad_wells_are_refused_with_a_message() {
    for h in [0.0, -0.1, f64::NAN, f64::INFINITY] {
        let e = try_run("p^2/2 + q^2/2", [0.0, 0.0], [-2.0, 2.0, -2.0, 2.0], h).expect_err("bad ħ");
        assert!(matches!(e, LevelsError::BadHbar(_)));
        assert!(e.to_string().contains("ħ must be a positive"), "{e}");
    }
    let e = try_run(
        "p^2/2 + q^2/2*cos(t)",
        [0.0, 0.0],
        [-2.0, 2.0, -2.0, 2.0],
        0.1,
    )
    .expect_err("time");
    assert_eq!(e, LevelsError::Well(BackboneError::TimeDependent));
    // A ħ so small that ~10³⁰⁰ levels would be bound (I = E/ω = 1.125 at the
    // edge q = 1.5; closed form).
    let e =
        try_run("p^2/2 + q^2/2", [0.0, 0.0], [-1.5, 1.5, -2.0, 2.0], 1e-300).expect_err("tiny ħ");
    assert!(matches!(e, LevelsError::HbarTooSmall { .. }), "{e}");
    assert!(e.to_string().contains("too small for this well"), "{e}");
    // A saddle is not a well.
    let e = try_run("p^2/2 - q^2/2", [0.0, 0.0], [-2.0, 2.0, -2.0, 2.0], 0.1).expect_err("saddle");
    assert!(e.to_string().contains("not a center"), "{e}");
    // An inflection (V = q³) is degenerate but not a well.
    let e =
        try_run("p^2/2 + q^3", [0.0, 0.0], [-2.0, 2.0, -2.0, 2.0], 0.1).expect_err("inflection");
    assert!(e.to_string().contains("not a center"), "{e}");
}

#[test]
fn a_large_hbar_binds_no_level() {
    // Harmonic ω = 1 with the edge at q = ±1: I(E_top) = ½, so ħ = 2 needs
    // I = 1 for n = 0 and none is bound (closed form I = E/ω).
    let l = run("p^2/2 + q^2/2", [0.0, 0.0], [-1.0, 1.0, -2.0, 2.0], 2.0);
    assert_eq!(l.count, 0);
    assert!(l.levels.is_empty());
    assert!(rel(l.top_action, 0.5) < 1e-9);
}

/// The number of eigenvalues below `x` of the symmetric tridiagonal matrix
/// with diagonal `a` and off-diagonal `b` (Sturm sequence of the LDLᵀ
/// pivots; J. H. Wilkinson, The Algebraic Eigenvalue Problem, 1965, §5.37).
fn eigenvalues_below(a: &[f64], b: f64, x: f64) -> usize {
    let mut count = 0;
    let mut d = 1.0;
    for (i, &ai) in a.iter().enumerate() {
        d = ai - x - if i == 0 { 0.0 } else { b * b / d };
        if d == 0.0 {
            d = -1e-300;
        }
        if d < 0.0 {
            count += 1;
        }
    }
    count
}

#[test]
fn the_splitting_estimate_is_low_by_the_known_factor_against_the_quantum_splitting() {
    // The Schrödinger equation −(ħ²/2)ψ'' + Vψ = Eψ, V = 4(q² − 1)², by
    // second-order finite differences on [−2.4, 2.4] (ψ = 0 at the ends,
    // where V = 92 ≫ E₀), its two lowest eigenvalues by Sturm bisection: the
    // exact splitting of the model to a few digits (common practice). The
    // semiclassical formula is an estimate; for a ground pair it is known to
    // be off by a factor of order one (recalled from memory: near √(π/e)).
    let hbar = 0.2;
    let n = 6000;
    let (lo, hi) = (-2.4, 2.4);
    let h = (hi - lo) / (n + 1) as f64;
    let v = |q: f64| 4.0 * (q * q - 1.0).powi(2);
    let a: Vec<f64> = (1..=n)
        .map(|i| hbar * hbar / (h * h) + v(lo + i as f64 * h))
        .collect();
    let b = -hbar * hbar / (2.0 * h * h);
    let eigen = |k: usize| {
        bisect(
            |x| {
                if eigenvalues_below(&a, b, x) > k {
                    1.0
                } else {
                    -1.0
                }
            },
            0.0,
            4.0,
        )
    };
    let (e0, e1) = (eigen(0), eigen(1));
    let exact = e1 - e0;
    let l = run(
        "p^2/2 + 4*(q^2 - 1)^2",
        [1.0, 0.0],
        [-2.0, 2.0, -4.0, 4.0],
        hbar,
    );
    let sp = l.splitting.expect("splitting");
    // The pair straddles the semiclassical ground level.
    assert!((0.5 * (e0 + e1) - sp.energy).abs() < 0.01 * sp.energy);
    // Measured here: the estimate is 0.938 of the exact splitting, near √(e/π) = 0.930.
    let ratio = sp.splitting / exact;
    let known = (std::f64::consts::E / PI).sqrt();
    assert!(
        (ratio - known).abs() < 0.03,
        "estimate {} vs {exact}: ratio {ratio}",
        sp.splitting
    );
}

#[test]
fn a_sheared_oscillator_takes_the_orbit_path_and_keeps_the_harmonic_levels() {
    // H = ((p + q/2)² + q²)/2 is the oscillator p'²/2 + q²/2 after the
    // canonical shear p' = p + q/2 (closed form), so Eₙ = ħ(n + ½); it is not
    // separable, so the levels come from one period of the orbit on each
    // level. The window's edge q = ±2 on p = 0 sets the top H = 2.5, so
    // ⌈2.5/ħ − ½⌉ = 12 levels for ħ = 0.2 (I = E there).
    let hbar = 0.2;
    let l = run(
        "((p + q/2)^2 + q^2)/2",
        [0.0, 0.0],
        [-2.0, 2.0, -3.0, 3.0],
        hbar,
    );
    assert_eq!(l.method, BackboneMethod::Orbit);
    assert_eq!(l.count, 12);
    assert_eq!(l.levels.len(), 12, "{:?}", l.diagnostics);
    for lv in &l.levels {
        let exact = hbar * (lv.n as f64 + 0.5);
        assert!(
            rel(lv.energy, exact) < 1e-9,
            "n = {}: {} vs {exact}",
            lv.n,
            lv.energy
        );
        assert_eq!(lv.turning_points, None);
    }
}

/// The levels of `src` with each level's closed curve traced (`points` per curve).
fn run_with_curves(src: &str, center: [f64; 2], window: [f64; 4], hbar: f64) -> WellLevels {
    let sys = System::from_source(src, &[]).expect("formula compiles");
    let [a, b, c, d] = window;
    let w = Window::new(a, b, c, d).expect("window");
    let cfg = LevelsConfig {
        curve_points: 120,
        ..LevelsConfig::default()
    };
    levels(&sys, center, &w, hbar, &cfg, &Cancel::never()).expect("levels")
}

#[test]
fn each_quantized_orbit_is_the_closed_level_curve_at_its_energy() {
    // Morse H = p²/2m + D(1 − e^(−aq))² with m = 0.8, D = 6, a = 1.6, ħ = 0.16:
    // the closed curve of level n is the set H = Eₙ with Eₙ from the Morse
    // closed form (P. M. Morse, Phys. Rev. 34 (1929) 57); on the arcs
    // p = ±√(2m(E − V(q))) the curve reaches p = 0 at the turning points
    // V(q±) = Eₙ and its highest point √(2mEₙ) over the bottom q = 0
    // (definition of a level curve of a separable H, common practice).
    let (m, dd, a, hbar) = (0.8_f64, 6.0_f64, 1.6_f64, 0.16_f64);
    let l = run_with_curves(
        "p^2/(2*0.8) + 6*(1 - exp(-1.6*q))^2",
        [0.0, 0.0],
        [-0.6, 6.0, -3.5, 3.5],
        hbar,
    );
    assert_eq!(l.method, BackboneMethod::Quadrature);
    assert_eq!(l.curves.len(), l.levels.len());
    assert!(l.levels.len() >= 10, "{} levels", l.levels.len());
    let omega = a * (2.0 * dd / m).sqrt();
    let h = |q: f64, p: f64| p * p / (2.0 * m) + dd * (1.0 - (-a * q).exp()).powi(2);
    for (lv, curve) in l.levels.iter().zip(&l.curves) {
        let x = hbar * omega * (lv.n as f64 + 0.5);
        let exact = x - x * x / (4.0 * dd);
        assert!(curve.len() >= 100, "n = {}: {} points", lv.n, curve.len());
        assert_eq!(curve.first(), curve.last(), "n = {}: not closed", lv.n);
        for &[q, p] in curve {
            assert!(
                (h(q, p) - exact).abs() < 1e-8 * dd,
                "n = {}: H({q}, {p}) = {} vs {exact}",
                lv.n,
                h(q, p)
            );
        }
        let top = curve.iter().map(|c| c[1]).fold(f64::MIN, f64::max);
        let bottom = curve.iter().map(|c| c[1]).fold(f64::MAX, f64::min);
        let peak = (2.0 * m * exact).sqrt();
        assert!(rel(top, peak) < 1e-2, "n = {}: top {top} vs {peak}", lv.n);
        assert!(rel(-bottom, peak) < 1e-2, "n = {}: bottom {bottom}", lv.n);
    }
    // Without asking, no curves are traced.
    assert!(
        run("p^2/2 + q^2/2", [0.0, 0.0], [-2.0, 2.0, -2.0, 2.0], 0.2)
            .curves
            .is_empty()
    );
}

#[test]
fn a_quantized_orbit_on_the_orbit_path_stays_on_its_level() {
    // The sheared oscillator H = ((p + q/2)² + q²)/2 (the oscillator after a
    // canonical shear, closed form): level n is the ellipse H = ħ(n + ½),
    // traced here by one period of the orbit.
    let hbar = 0.2;
    let l = run_with_curves(
        "((p + q/2)^2 + q^2)/2",
        [0.0, 0.0],
        [-2.0, 2.0, -3.0, 3.0],
        hbar,
    );
    assert_eq!(l.method, BackboneMethod::Orbit);
    assert_eq!(l.curves.len(), l.levels.len());
    let h = |q: f64, p: f64| ((p + q / 2.0).powi(2) + q * q) / 2.0;
    for (lv, curve) in l.levels.iter().zip(&l.curves) {
        let exact = hbar * (lv.n as f64 + 0.5);
        assert!(curve.len() >= 60, "n = {}: {} points", lv.n, curve.len());
        let ends = (curve[0][0] - curve[curve.len() - 1][0])
            .hypot(curve[0][1] - curve[curve.len() - 1][1]);
        assert!(ends < 1e-6, "n = {}: ends {ends} apart", lv.n);
        for &[q, p] in curve {
            assert!(
                rel(h(q, p), exact) < 1e-6,
                "n = {}: H = {} vs {exact}",
                lv.n,
                h(q, p)
            );
        }
    }
}
