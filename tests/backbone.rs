//! Backbones (period, frequency, action, amplitude against energy) against
//! closed forms and the `ellip` crate's complete elliptic integrals.

use phasewright::core::Cancel;
use phasewright::core::backbone::{
    Backbone, BackboneConfig, BackboneError, BackboneMethod, backbone,
};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

fn run(src: &str, center: [f64; 2], window: Window) -> Backbone {
    run_with(src, center, window, &BackboneConfig::default())
}

fn run_with(src: &str, center: [f64; 2], window: Window, cfg: &BackboneConfig) -> Backbone {
    let sys = System::from_source(src, &[]).expect("formula compiles");
    backbone(&sys, center, &window, cfg, &Cancel::never(), &|_, _| {}).expect("backbone")
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Every row but the center's against the pendulum's closed forms at the
/// pendulum energy E_p = sign·E (sign −1 for H = −(p²/2 − cos q), whose
/// level curves are the pendulum's): T = 4K(m) with m = k² = (1 + E_p)/2,
/// I = (8/π)[E(m) − (1 − m)K(m)] (pendulum libration; from memory), with K, E
/// from the ellip crate, and turning points where −cos q = E_p (closed form).
fn assert_pendulum_rows(b: &Backbone, sign: f64) {
    for r in &b.rows[1..] {
        let ep = sign * r.energy;
        let m = (1.0 + ep) / 2.0;
        let k = ellip::ellipk(m).expect("K");
        let e = ellip::ellipe(m).expect("E");
        assert!(
            rel(r.period, 4.0 * k) < 1e-10,
            "E = {}: T = {} vs {}",
            r.energy,
            r.period,
            4.0 * k
        );
        assert!(rel(r.frequency, 2.0 * PI / (4.0 * k)) < 1e-10);
        let action = 8.0 / PI * (e - (1.0 - m) * k);
        assert!(
            rel(r.action, action) < 1e-10,
            "E = {}: I = {} vs {}",
            r.energy,
            r.action,
            action
        );
        assert!(rel(r.amplitude, (-ep).acos()) < 1e-10);
    }
}

#[test]
fn pendulum_period_matches_4k_and_action_matches_the_elliptic_closed_form() {
    // H = p²/2 − cos q against the pendulum's closed forms (see
    // `assert_pendulum_rows`). The well is bounded by the saddles at q = ±π
    // at energy 1.
    let b = run(
        "p^2/2 - cos(q)",
        [0.1, 0.05],
        Window::new(-4.0, 4.0, -3.0, 3.0).expect("window"),
    );
    assert_eq!(b.method, BackboneMethod::Quadrature);
    assert_eq!(b.rows.len(), 200);
    assert!(b.center[0].abs() < 1e-14 && b.center[1].abs() < 1e-14);
    assert!((b.escape_energy.expect("escape") - 1.0).abs() < 1e-14);
    assert_pendulum_rows(&b, 1.0);
    // The center row is the small-oscillation limit: T = 2π (ω = 1).
    assert!(rel(b.rows[0].period, 2.0 * PI) < 1e-14);
    // Energies are increasing and crowd towards both ends: the bottom (even
    // steps in amplitude are small steps in energy there) and the escape energy.
    assert!(b.rows.windows(2).all(|w| w[1].energy > w[0].energy));
    let last = b.rows.len() - 1;
    let mid = b.rows[last / 2].energy - b.rows[last / 2 - 1].energy;
    assert!(b.rows[1].energy - b.rows[0].energy < 0.1 * mid);
    assert!(b.rows[last].energy - b.rows[last - 1].energy < 1e-4 * mid);
    assert!(1.0 - b.rows[last].energy < 1e-5);
}

#[test]
fn upside_down_pendulum_well_is_a_maximum_with_the_same_periods() {
    // H = cos q − p²/2 = −(p²/2 − cos q): the flow of −H is the pendulum's run
    // backwards, so the level E is the pendulum's level −E with its period,
    // action and turning points (closed forms in `assert_pendulum_rows`). The
    // center q = 0 is a maximum of H at E = 1; the well is bounded below by
    // the saddles q = ±π at E = −1.
    let b = run(
        "cos(q) - p^2/2",
        [0.05, 0.0],
        Window::new(-4.0, 4.0, -3.0, 3.0).expect("window"),
    );
    assert_eq!(b.method, BackboneMethod::Quadrature);
    assert!((b.center_energy - 1.0).abs() < 1e-14);
    assert!((b.escape_energy.expect("escape") + 1.0).abs() < 1e-14);
    assert!(b.rows.windows(2).all(|w| w[1].energy < w[0].energy));
    assert_pendulum_rows(&b, -1.0);
}

#[test]
fn pendulum_period_grows_like_two_passes_of_the_saddle() {
    // Near the separatrix the orbit turns back close to a saddle with
    // eigenvalue λ: in the linearised flow x'' = λ²x it follows x = a cosh λt
    // with a² = 2(E_s − E)/λ², so the time spent within |x| < L is
    // (2/λ) acosh(L/a) ≈ −(1/λ) ln(E_s − E) + const (closed form). A pendulum
    // libration turns back at both saddles q = ±π (λ = 1), so T(E) ≈
    // −(2/λ) ln(1 − E) and dT/d ln(1 − E) → −2, as T = 4K(m) with
    // K(m) ≈ ½ ln(16/(1 − m)) as m → 1 also says (Abramowitz & Stegun 17.3.26;
    // from memory).
    let b = run(
        "p^2/2 - cos(q)",
        [0.0, 0.0],
        Window::new(-4.0, 4.0, -3.0, 3.0).expect("window"),
    );
    let n = b.rows.len();
    let (r1, r2) = (&b.rows[n - 12], &b.rows[n - 1]);
    let slope = (r2.period - r1.period) / ((1.0 - r2.energy).ln() - (1.0 - r1.energy).ln());
    assert!((slope + 2.0).abs() < 1e-3, "slope {slope}");
}

#[test]
fn cubic_well_period_grows_like_one_pass_of_its_saddle() {
    // H = p²/2 + q²/2 − q³/3: saddle at q = 1 with V'' = −1 (λ = 1), escape
    // energy 1/6. The orbit turns back near that one saddle once per period
    // (its other turning point, near q = −1/2, is on the wall), and each such
    // turn takes (2/λ) acosh(L/a) ≈ −(1/λ) ln(E_s − E) + const in the
    // linearised flow x = a cosh λt, a² = 2(E_s − E)/λ² (closed form), so
    // dT/d ln(E_s − E) → −1/λ = −1.
    let b = run(
        "p^2/2 + q^2/2 - q^3/3",
        [0.0, 0.0],
        Window::new(-2.0, 2.0, -1.5, 1.5).expect("window"),
    );
    let es = b.escape_energy.expect("escape");
    assert!((es - 1.0 / 6.0).abs() < 1e-14);
    let n = b.rows.len();
    let (r1, r2) = (&b.rows[n - 12], &b.rows[n - 1]);
    let slope = (r2.period - r1.period) / ((es - r2.energy).ln() - (es - r1.energy).ln());
    assert!((slope + 1.0).abs() < 1e-3, "slope {slope}");
}

#[test]
fn morse_frequency_falls_as_the_square_root_of_the_binding_energy() {
    // H = p²/2 + D(1 − e^(−aq))²: ω(E) = a √(2(D − E)) and I(E) = (√(2D)/a)(1 − √(1 − E/D))
    // (Morse oscillator, m = 1; from memory). D = 1.5, a = 0.8 (invented).
    let (d, a) = (1.5, 0.8);
    let b = run(
        "p^2/2 + 1.5*(1 - exp(-0.8*q))^2",
        [0.0, 0.0],
        Window::new(-1.5, 8.0, -2.0, 2.0).expect("window"),
    );
    assert!(
        b.escape_energy.is_none(),
        "no saddle: the well opens towards q → ∞"
    );
    assert!(b.rows.len() == 200 && b.top_energy > 1.49);
    for r in &b.rows {
        let omega = a * (2.0 * (d - r.energy)).sqrt();
        assert!(
            rel(r.frequency, omega) < 1e-10,
            "E = {}: ω = {} vs {}",
            r.energy,
            r.frequency,
            omega
        );
        let action = (2.0 * d).sqrt() / a * (1.0 - (1.0 - r.energy / d).sqrt());
        assert!(
            (r.action - action).abs() < 1e-10 * action.max(1.0),
            "E = {}",
            r.energy
        );
    }
}

#[test]
fn harmonic_period_is_constant_and_action_is_energy_over_frequency() {
    // H = p²/2 + ω²q²/2, ω = 1.7 (invented): T = 2π/ω, I = E/ω, amplitude √(2E)/ω (closed form).
    let w = 1.7;
    let b = run(
        "p^2/2 + 1.445*q^2",
        [0.2, -0.1],
        Window::new(-2.0, 2.0, -3.0, 3.0).expect("window"),
    );
    assert!(b.escape_energy.is_none());
    for r in &b.rows {
        assert!(rel(r.period, 2.0 * PI / w) < 1e-12, "T = {}", r.period);
        assert!((r.action - r.energy / w).abs() < 1e-12);
        assert!((r.amplitude - (2.0 * r.energy).sqrt() / w).abs() < 1e-12);
    }
    // The level whose turning points reach the window's q-edge |q| = 2: E = ω²·4/2.
    assert!(rel(b.top_energy, 1.445 * 4.0) < 1e-12);
}

#[test]
fn tilted_quadratic_well_on_the_orbit_path_keeps_its_frequency() {
    // H = (p² + q²)/2 + c q p is not separable; it is a linear oscillator with
    // ω = √(1 − c²) (det of the Hessian) and I = E/ω (closed form). c = 0.3 (invented).
    let c: f64 = 0.3;
    let w = (1.0 - c * c).sqrt();
    let cfg = BackboneConfig {
        energies: 25,
        ..BackboneConfig::default()
    };
    let b = run_with(
        "(p^2 + q^2)/2 + 0.3*q*p",
        [0.0, 0.0],
        Window::new(-2.0, 2.0, -2.0, 2.0).expect("window"),
        &cfg,
    );
    assert_eq!(b.method, BackboneMethod::Orbit);
    assert!(b.rows.len() == 25);
    for r in &b.rows[1..] {
        assert!(
            rel(r.frequency, w) < 1e-9,
            "ω = {} at E = {}",
            r.frequency,
            r.energy
        );
        assert!(
            rel(r.action, r.energy / w) < 1e-9,
            "I = {} vs {}",
            r.action,
            r.energy / w
        );
    }
}

#[test]
fn a_saddle_has_no_backbone() {
    let sys = System::from_source("p^2/2 - cos(q)", &[]).expect("formula");
    let w = Window::new(-4.0, 4.0, -3.0, 3.0).expect("window");
    let err = backbone(
        &sys,
        [3.1, 0.0],
        &w,
        &BackboneConfig::default(),
        &Cancel::never(),
        &|_, _| {},
    );
    assert!(
        matches!(err, Err(BackboneError::NotACenter { .. })),
        "{err:?}"
    );
    let err = backbone(
        &sys,
        [f64::NAN, 0.0],
        &w,
        &BackboneConfig::default(),
        &Cancel::never(),
        &|_, _| {},
    );
    assert!(
        matches!(err, Err(BackboneError::NoEquilibrium { .. })),
        "{err:?}"
    );
}

#[test]
fn backbone_command_prints_rows_as_csv() {
    // Pendulum: the first row is the small-oscillation limit T = 2π, and every
    // row has T = 4K((1 + E)/2) (from memory, K from the ellip crate).
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args([
            "backbone",
            "--formula",
            "p^2/2 - cos(q)",
            "--window",
            "-4,4,-3,3",
            "--center",
            "0.1,0",
            "--csv",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let text = String::from_utf8_lossy(&o.stdout);
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("energy,period,frequency,action,amplitude")
    );
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|v| v.parse().expect("number")).collect())
        .collect();
    assert_eq!(rows.len(), 200);
    assert!(rel(rows[0][1], 2.0 * PI) < 1e-14);
    let r = &rows[100];
    let k = ellip::ellipk((1.0 + r[0]) / 2.0).expect("K");
    assert!(rel(r[1], 4.0 * k) < 1e-10);
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args([
            "backbone",
            "--formula",
            "p^2/2 - cos(q)",
            "--center",
            "1,2,3",
        ])
        .output()
        .expect("the binary runs");
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--center"));
}

#[test]
fn small_amplitude_end_is_sampled_finely_and_gives_the_duffing_coefficient() {
    // A hardening Duffing well H = p²/2 + q²/2 + b q⁴/4 (b = 0.8, invented)
    // and a softening one, the double well p²/2 − q²/2 + q⁴/4 about its
    // center q = 1 (V″ = 2, V‴ = 6, V⁗ = 6 there). Near the bottom
    // ω ≈ ω₀ + κA² with κ = (9α₃ω₀² − 10α₂²)/(24ω₀³), α₂ = V‴/2,
    // α₃ = V⁗/6 for unit mass (Lindstedt–Poincaré; A. H. Nayfeh and
    // D. T. Mook, *Nonlinear Oscillations*, 1979, §4.1). The first computed
    // orbit must lie well inside the small-amplitude range, and the slope
    // of ω against A² there must give κ.
    let cases = [
        // (formula, center, window, ω₀, κ from the closed form)
        (
            "p^2/2 + q^2/2 + 0.8*q^4/4",
            [0.0, 0.0],
            Window::new(-2.0, 2.0, -2.0, 2.0).expect("window"),
            1.0,
            3.0 * 0.8 / 8.0,
        ),
        (
            "p^2/2 - q^2/2 + q^4/4",
            [1.0, 0.0],
            Window::new(-2.0, 2.0, -1.5, 1.5).expect("window"),
            2f64.sqrt(),
            (9.0 * 1.0 * 2.0 - 10.0 * 9.0) / (24.0 * 2f64.sqrt().powi(3)),
        ),
    ];
    for (src, center, window, w0, kappa) in cases {
        let b = run(src, center, window);
        assert!(rel(b.rows[0].frequency, w0) < 1e-14);
        let widest = b.rows.iter().fold(0.0f64, |m, r| m.max(r.amplitude));
        let first = b.rows[1];
        // evenly spaced amplitudes: the first is about 1/200 of the widest,
        // not a chord to a tenth of the well as even energy steps give
        assert!(
            first.amplitude < 0.02 * widest,
            "{src}: first amplitude {} of {widest}",
            first.amplitude
        );
        // the next few steps in amplitude are even to a few per cent
        let steps: Vec<f64> = b.rows[..6]
            .windows(2)
            .map(|w| w[1].amplitude - w[0].amplitude)
            .collect();
        assert!(
            steps.iter().all(|d| rel(*d, steps[0]) < 0.05),
            "{src}: steps {steps:?}"
        );
        let slope = (first.frequency - w0) / (first.amplitude * first.amplitude);
        assert!(
            rel(slope, kappa) < 1e-2,
            "{src}: slope {slope} vs κ {kappa} at A = {}",
            first.amplitude
        );
    }
}
