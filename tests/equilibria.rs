//! Equilibria and their classification against closed forms.

use phasewright::core::Cancel;
use phasewright::core::equilibria::{
    DegenerateShape, Equilibrium, EquilibriumConfig, EquilibriumKind, classify, find_equilibria,
};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

fn sys(src: &str, params: &[(&str, f64)]) -> System {
    match System::from_source(src, params) {
        Ok(s) => s,
        Err(e) => panic!("test formula {src:?} does not compile: {e}"),
    }
}

fn win(qmin: f64, qmax: f64, pmin: f64, pmax: f64) -> Window {
    match Window::new(qmin, qmax, pmin, pmax) {
        Ok(w) => w,
        Err(e) => panic!("test window refused: {e}"),
    }
}

fn find(s: &System, w: &Window) -> Vec<Equilibrium> {
    find_equilibria(s, w, &EquilibriumConfig::default(), &Cancel::never()).0
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol * (1.0 + b.abs())
}

#[track_caller]
fn assert_close(a: f64, b: f64, tol: f64, what: &str) {
    assert!(close(a, b, tol), "{what}: got {a}, expected {b}");
}

/// Unit vectors equal up to sign (an eigenvector's sign is a convention).
fn parallel(a: [f64; 2], b: [f64; 2]) -> bool {
    (a[0] * b[1] - a[1] * b[0]).abs() < 1e-12 && (a[0].hypot(a[1]) - 1.0).abs() < 1e-12
}

#[track_caller]
fn assert_kinds(found: &[Equilibrium], expected: &[(f64, f64, EquilibriumKind)]) {
    let got: Vec<(f64, f64, EquilibriumKind)> = found.iter().map(|e| (e.q, e.p, e.kind)).collect();
    assert_eq!(
        found.len(),
        expected.len(),
        "found {got:?}, expected {expected:?}"
    );
    for (e, &(q, p, k)) in found.iter().zip(expected) {
        assert!(
            (e.q - q).abs() < 1e-9 && (e.p - p).abs() < 1e-9 && e.kind == k,
            "found {got:?}, expected {expected:?}"
        );
    }
}

#[test]
fn linear_saddle_has_eigenvalues_plus_minus_lambda() {
    // H = (λ/2)(p² − q²): det Hess = −λ², eigenvalues ±λ (closed form).
    let lambda = 1.7;
    let s = sys("l/2*(p^2 - q^2)", &[("l", lambda)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(&found, &[(0.0, 0.0, EquilibriumKind::Saddle)]);
    let e = &found[0];
    assert_close(e.lambda.unwrap_or(f64::NAN), lambda, 1e-12, "λ");
    assert_close(e.hessian_det, -lambda * lambda, 1e-12, "det");
    assert_close(e.eigenvalues[0][0].abs(), lambda, 1e-12, "eigenvalue re");
    assert_close(
        e.eigenvalues[1][0],
        -e.eigenvalues[0][0],
        1e-12,
        "eigenvalues opposite",
    );
    assert_eq!(e.eigenvalues[0][1], 0.0);
    // J = [[0, λ], [λ, 0]]: unstable along (1, 1)/√2, stable along (1, −1)/√2 (closed form)
    let u = e.unstable_dir.unwrap_or([f64::NAN; 2]);
    let st = e.stable_dir.unwrap_or([f64::NAN; 2]);
    let r = 0.5f64.sqrt();
    assert!(
        (u[0] - r).abs() < 1e-12 && (u[1] - r).abs() < 1e-12,
        "unstable {u:?}"
    );
    assert!(
        (st[0] - r).abs() < 1e-12 && (st[1] + r).abs() < 1e-12,
        "stable {st:?}"
    );
    assert_eq!(e.omega, None);
}

#[test]
fn linear_center_has_eigenvalues_plus_minus_i_omega() {
    // H = (ω/2)(p² + q²): det Hess = ω², eigenvalues ±iω, period 2π/ω (closed form).
    let omega = 2.5;
    let s = sys("w/2*(p^2 + q^2)", &[("w", omega)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(&found, &[(0.0, 0.0, EquilibriumKind::Center)]);
    let e = &found[0];
    assert_close(e.omega.unwrap_or(f64::NAN), omega, 1e-12, "ω");
    assert_close(
        e.small_period.unwrap_or(f64::NAN),
        2.0 * PI / omega,
        1e-12,
        "period",
    );
    assert_eq!(e.eigenvalues[0][0], 0.0);
    assert_close(e.eigenvalues[0][1].abs(), omega, 1e-12, "eigenvalue im");
    assert_close(
        e.eigenvalues[1][1],
        -e.eigenvalues[0][1],
        1e-12,
        "eigenvalues conjugate",
    );
    assert_eq!(e.lambda, None);
}

// Saddle-node normal form H = p²/2 + q³/3 − μq: H_q = q² − μ, H_qq = 2q
// (common practice). μ < 0: no equilibrium; μ = 0: a cusp at 0 (no extremum);
// μ > 0: center at √μ and saddle at −√μ, both with rate √(2√μ).
const SADDLE_NODE: &str = "p^2/2 + q^3/3 - mu*q";

#[test]
fn saddle_node_below_the_fold_has_no_equilibrium() {
    let s = sys(SADDLE_NODE, &[("mu", -0.3)]);
    let (found, _) = find_equilibria(
        &s,
        &win(-2.0, 2.0, -1.5, 1.5),
        &EquilibriumConfig::default(),
        &Cancel::never(),
    );
    assert!(found.is_empty(), "{found:?}");
}

#[test]
fn saddle_node_at_the_fold_is_one_degenerate_point_without_extremum() {
    let s = sys(SADDLE_NODE, &[("mu", 0.0)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_eq!(found.len(), 1, "{found:?}");
    let e = &found[0];
    assert!(e.q.abs() < 1e-6 && e.p.abs() < 1e-9, "{e:?}");
    assert_eq!(e.kind, EquilibriumKind::Degenerate);
    assert_eq!(e.degenerate, Some(DegenerateShape::NoExtremum));
    assert!(e.energy.abs() < 1e-12);
}

#[test]
fn saddle_node_above_the_fold_has_center_at_root_mu_and_saddle_at_minus_root_mu() {
    let mu: f64 = 0.49;
    let r = mu.sqrt();
    let s = sys(SADDLE_NODE, &[("mu", mu)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(
        &found,
        &[
            (-r, 0.0, EquilibriumKind::Saddle),
            (r, 0.0, EquilibriumKind::Center),
        ],
    );
    let rate = (2.0 * r).sqrt();
    assert_close(found[0].lambda.unwrap_or(f64::NAN), rate, 1e-10, "saddle λ");
    assert_close(found[1].omega.unwrap_or(f64::NAN), rate, 1e-10, "center ω");
    // H(±√μ) = ±μ^{3/2}/3 − ±μ^{3/2} = ∓(2/3)μ^{3/2}
    assert_close(
        found[1].energy,
        -2.0 / 3.0 * mu.powf(1.5),
        1e-12,
        "center energy",
    );
}

// Pitchfork normal form H = p²/2 + q⁴/4 − μq²/2: H_q = q³ − μq,
// H_qq = 3q² − μ (common practice).
const PITCHFORK: &str = "p^2/2 + q^4/4 - mu*q^2/2";

#[test]
fn pitchfork_below_has_one_center_with_omega_root_minus_mu() {
    let mu = -0.64;
    let s = sys(PITCHFORK, &[("mu", mu)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(&found, &[(0.0, 0.0, EquilibriumKind::Center)]);
    assert_close(found[0].omega.unwrap_or(f64::NAN), 0.8, 1e-12, "ω = √(−μ)");
}

#[test]
fn pitchfork_above_has_saddle_at_zero_and_centers_at_plus_minus_root_mu() {
    let mu: f64 = 0.81;
    let r = mu.sqrt();
    let s = sys(PITCHFORK, &[("mu", mu)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(
        &found,
        &[
            (-r, 0.0, EquilibriumKind::Center),
            (0.0, 0.0, EquilibriumKind::Saddle),
            (r, 0.0, EquilibriumKind::Center),
        ],
    );
    assert_close(found[1].lambda.unwrap_or(f64::NAN), r, 1e-12, "λ = √μ");
    assert_close(
        found[0].omega.unwrap_or(f64::NAN),
        (2.0 * mu).sqrt(),
        1e-10,
        "ω = √(2μ)",
    );
    // H(±√μ) = μ²/4 − μ²/2 = −μ²/4
    assert_close(found[2].energy, -mu * mu / 4.0, 1e-12, "well energy");
}

#[test]
fn pitchfork_at_the_bifurcation_is_a_nonlinear_center() {
    let s = sys(PITCHFORK, &[("mu", 0.0)]);
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_eq!(found.len(), 1, "{found:?}");
    let e = &found[0];
    assert!(e.q.abs() < 1e-4 && e.p.abs() < 1e-9, "{e:?}");
    assert_eq!(e.kind, EquilibriumKind::Degenerate);
    assert_eq!(e.degenerate, Some(DegenerateShape::NonlinearCenter));
}

#[test]
fn pendulum_has_three_centers_and_two_saddles_in_view() {
    // H = p²/2 − cos q: centers at 2kπ (ω = 1, H = −1), saddles at (2k+1)π
    // (λ = 1, H = 1) (common practice).
    let s = sys("p^2/2 - cos(q)", &[]);
    let found = find(&s, &win(-7.0, 7.0, -3.0, 3.0));
    use EquilibriumKind::*;
    assert_kinds(
        &found,
        &[
            (-2.0 * PI, 0.0, Center),
            (-PI, 0.0, Saddle),
            (0.0, 0.0, Center),
            (PI, 0.0, Saddle),
            (2.0 * PI, 0.0, Center),
        ],
    );
    for e in &found {
        match e.kind {
            Center => {
                assert_close(e.omega.unwrap_or(f64::NAN), 1.0, 1e-12, "ω");
                assert_close(e.energy, -1.0, 1e-12, "center energy");
            }
            _ => {
                assert_close(e.lambda.unwrap_or(f64::NAN), 1.0, 1e-12, "λ");
                assert_close(e.energy, 1.0, 1e-12, "saddle energy");
            }
        }
    }
}

#[test]
fn morse_oscillator_has_one_center_with_omega_a_root_2d() {
    // H = p²/2 + D(1 − e^(−aq))²: minimum at q = 0 with V'' = 2Da², so
    // ω = a√(2D) (P. M. Morse, Phys. Rev. 34, 57 (1929)); no other critical point.
    let (d, a) = (2.0, 0.7);
    let s = sys("p^2/2 + D*(1 - exp(-a*q))^2", &[("D", d), ("a", a)]);
    let found = find(&s, &win(-1.0, 12.0, -2.0, 2.0));
    assert_kinds(&found, &[(0.0, 0.0, EquilibriumKind::Center)]);
    assert_close(
        found[0].omega.unwrap_or(f64::NAN),
        a * (2.0f64 * d).sqrt(),
        1e-12,
        "ω",
    );
}

#[test]
fn coupling_term_qp_gives_a_saddle_with_exact_eigenvectors() {
    // H = qp + q³/3 (closed form by hand): H_q = p + q², H_p = q, so the only
    // equilibrium is (0, 0). There H_qq = 2q = 0, H_qp = 1, H_pp = 0, det = −1:
    // a saddle with λ = 1. J = [[1, 0], [0, −1]]: unstable along (1, 0), stable along (0, 1).
    let s = sys("q*p + q^3/3", &[]);
    assert!(!s.is_separable());
    let found = find(&s, &win(-2.0, 2.0, -1.5, 1.5));
    assert_kinds(&found, &[(0.0, 0.0, EquilibriumKind::Saddle)]);
    let e = &found[0];
    assert_close(e.hessian_det, -1.0, 1e-12, "det");
    assert_close(e.lambda.unwrap_or(f64::NAN), 1.0, 1e-12, "λ");
    let u = e.unstable_dir.unwrap_or([f64::NAN; 2]);
    let st = e.stable_dir.unwrap_or([f64::NAN; 2]);
    assert!(
        (u[0] - 1.0).abs() < 1e-12 && u[1].abs() < 1e-12,
        "unstable {u:?}"
    );
    assert!(
        st[0].abs() < 1e-12 && (st[1] - 1.0).abs() < 1e-12,
        "stable {st:?}"
    );
}

#[test]
fn coupled_kinetic_term_gives_a_saddle_and_a_center() {
    // H = p²/2 + qp + q³/3 (closed form by hand): H_p = p + q, H_q = p + q².
    // p = −q and q² − q = 0: equilibria (0, 0) and (1, −1).
    // Hessian [[2q, 1], [1, 1]]: det = 2q − 1, so (0, 0) is a saddle with λ = 1
    // and (1, −1) a center with ω = 1 and H = 1/2 − 1 + 1/3 = −1/6.
    // At (0, 0) J = [[1, 1], [0, −1]]: unstable along (1, 0), stable along (1, −2)/√5.
    let s = sys("p^2/2 + q*p + q^3/3", &[]);
    let found = find(&s, &win(-2.0, 2.0, -2.0, 2.0));
    assert_kinds(
        &found,
        &[
            (0.0, 0.0, EquilibriumKind::Saddle),
            (1.0, -1.0, EquilibriumKind::Center),
        ],
    );
    assert_close(found[0].hessian_det, -1.0, 1e-12, "saddle det");
    assert_close(found[1].hessian_det, 1.0, 1e-12, "center det");
    assert_close(found[1].omega.unwrap_or(f64::NAN), 1.0, 1e-12, "ω");
    assert_close(found[1].energy, -1.0 / 6.0, 1e-12, "center energy");
    let st = found[0].stable_dir.unwrap_or([f64::NAN; 2]);
    let r5 = 5f64.sqrt();
    assert!(parallel(st, [1.0 / r5, -2.0 / r5]), "stable {st:?}");
    let u = found[0].unstable_dir.unwrap_or([f64::NAN; 2]);
    assert!(parallel(u, [1.0, 0.0]), "unstable {u:?}");
}

#[test]
fn sextic_potential_has_five_critical_points() {
    // V = q⁶/6 − 5q⁴/4 + 2q², V' = q(q² − 1)(q² − 4), V'' = 5q⁴ − 15q² + 4
    // (closed form): V''(0) = 4, V''(±1) = −6, V''(±2) = 24.
    let s = sys("p^2/2 + q^6/6 - 5*q^4/4 + 2*q^2", &[]);
    let found = find(&s, &win(-2.5, 2.5, -2.0, 2.0));
    use EquilibriumKind::*;
    assert_kinds(
        &found,
        &[
            (-2.0, 0.0, Center),
            (-1.0, 0.0, Saddle),
            (0.0, 0.0, Center),
            (1.0, 0.0, Saddle),
            (2.0, 0.0, Center),
        ],
    );
    assert_close(found[2].omega.unwrap_or(f64::NAN), 2.0, 1e-12, "ω at 0");
    assert_close(
        found[1].lambda.unwrap_or(f64::NAN),
        6f64.sqrt(),
        1e-12,
        "λ at −1",
    );
    assert_close(
        found[4].omega.unwrap_or(f64::NAN),
        24f64.sqrt(),
        1e-12,
        "ω at 2",
    );
}

#[test]
fn periodic_potential_shows_every_well_and_hill_in_a_wide_window() {
    // H = p²/2 − cos q on [−20, 20]: centers at 2kπ for |k| ≤ 3, saddles at
    // (2k+1)π for |k + 1/2| ≤ 2.5, since 6π < 20 < 7π (common practice).
    let s = sys("p^2/2 - cos(q)", &[]);
    let found = find(&s, &win(-20.0, 20.0, -2.0, 2.0));
    let expected: Vec<(f64, f64, EquilibriumKind)> = (-6..=6)
        .map(|k| {
            let kind = if k % 2 == 0 {
                EquilibriumKind::Center
            } else {
                EquilibriumKind::Saddle
            };
            (k as f64 * PI, 0.0, kind)
        })
        .collect();
    assert_kinds(&found, &expected);
}

#[test]
fn coarse_seeds_still_find_the_pendulum_equilibria() {
    // same closed form as the pendulum above, with only 16 seed cells per side
    let s = sys("p^2/2 - cos(q)", &[]);
    let cfg = EquilibriumConfig {
        seeds: 16,
        ..EquilibriumConfig::default()
    };
    let (found, _) = find_equilibria(&s, &win(-7.0, 7.0, -3.0, 3.0), &cfg, &Cancel::never());
    assert_eq!(found.len(), 5, "{found:?}");
}

#[test]
fn potential_without_critical_point_gives_none() {
    // H = p²/2 + e^q: H_q = e^q > 0 everywhere (closed form), though |∇H| is tiny at the left edge.
    let s = sys("p^2/2 + exp(q)", &[]);
    let (found, _) = find_equilibria(
        &s,
        &win(-20.0, 20.0, -2.0, 2.0),
        &EquilibriumConfig::default(),
        &Cancel::never(),
    );
    assert!(found.is_empty(), "{found:?}");
}

#[test]
fn quartic_and_sextic_degenerate_minima_are_located_precisely() {
    // H = p²/2 + q⁴ and p²/2 + q⁶: the only critical point is 0, a strict
    // minimum where the Hessian is singular (closed form).
    for src in ["p^2/2 + q^4", "p^2/2 + q^6", "p^2/2 + q^8"] {
        let s = sys(src, &[]);
        let (found, diags) = find_equilibria(
            &s,
            &win(-1.3, 2.1, -1.0, 1.7),
            &EquilibriumConfig::default(),
            &Cancel::never(),
        );
        assert!(diags.is_empty(), "{src}: {diags:?}");
        assert_eq!(found.len(), 1, "{src}: {found:?}");
        assert!(
            found[0].q.abs() < 1e-4 && found[0].p.abs() < 1e-12,
            "{src}: {:?}",
            found[0]
        );
        assert_eq!(
            found[0].degenerate,
            Some(DegenerateShape::NonlinearCenter),
            "{src}"
        );
    }
}

#[test]
fn degenerate_maximum_is_a_nonlinear_center_too() {
    // H = −p²/2 − q⁴/4 has a strict maximum at 0 (closed form): closed orbits around it.
    let s = sys("-p^2/2 - q^4/4", &[]);
    let e = classify(&s, 0.0, 0.0, &win(-1.0, 1.0, -1.0, 1.0));
    assert_eq!(e.kind, EquilibriumKind::Degenerate);
    assert_eq!(e.degenerate, Some(DegenerateShape::NonlinearCenter));
}

#[test]
fn monkey_saddle_is_degenerate_without_extremum() {
    // H = q³ − 3qp² (a monkey saddle): Hessian zero at 0, H changes sign
    // six times around it (closed form).
    let s = sys("q^3 - 3*q*p^2", &[]);
    let e = classify(&s, 0.0, 0.0, &win(-1.0, 1.0, -1.0, 1.0));
    assert_eq!(e.kind, EquilibriumKind::Degenerate);
    assert_eq!(e.degenerate, Some(DegenerateShape::NoExtremum));
    assert_eq!(e.hessian_det, 0.0);
}

#[test]
fn line_of_equilibria_is_reported_as_not_isolated() {
    // H = (q − p)²/2 is stationary on the whole line q = p (closed form): no
    // point of it is a strict extremum.
    let s = sys("(q - p)^2/2", &[]);
    let w = win(-1.0, 1.0, -1.0, 1.0);
    let (found, diags) = find_equilibria(&s, &w, &EquilibriumConfig::default(), &Cancel::never());
    assert!(!found.is_empty());
    assert!(found.iter().all(|e| (e.q - e.p).abs() < 1e-9), "{found:?}");
    assert!(
        found
            .iter()
            .all(|e| e.degenerate == Some(DegenerateShape::NoExtremum)),
        "{found:?}"
    );
    assert!(
        diags.iter().any(|d| d.message.contains("not isolated")),
        "{diags:?}"
    );
}

#[test]
fn curved_line_of_equilibria_is_reported_as_not_isolated() {
    // H = (p − q²)²/2 is stationary on the parabola p = q² (closed form).
    let s = sys("(p - q^2)^2/2", &[]);
    let (found, diags) = find_equilibria(
        &s,
        &win(-1.0, 1.0, -0.5, 1.5),
        &EquilibriumConfig::default(),
        &Cancel::never(),
    );
    assert!(!found.is_empty());
    assert!(
        found.iter().all(|e| (e.p - e.q * e.q).abs() < 1e-9),
        "{found:?}"
    );
    assert!(
        diags.iter().any(|d| d.message.contains("not isolated")),
        "{diags:?}"
    );
}

#[test]
fn constant_energy_is_reported_not_listed() {
    let s = sys("2.5 + 0*q", &[]);
    let (found, diags) = find_equilibria(
        &s,
        &win(-1.0, 1.0, -1.0, 1.0),
        &EquilibriumConfig::default(),
        &Cancel::never(),
    );
    assert!(found.is_empty());
    assert!(
        diags.iter().any(|d| d.message.contains("constant")),
        "{diags:?}"
    );
}

#[test]
fn undefined_region_is_reported_and_the_rest_searched() {
    // H = p²/2 + q − ln q (q > 0): V' = 1 − 1/q, minimum at q = 1 with V'' = 1 (closed form).
    let s = sys("p^2/2 + q - ln(q)", &[]);
    let (found, diags) = find_equilibria(
        &s,
        &win(-1.0, 3.0, -1.0, 1.0),
        &EquilibriumConfig::default(),
        &Cancel::never(),
    );
    assert_kinds(&found, &[(1.0, 0.0, EquilibriumKind::Center)]);
    assert!(
        diags
            .iter()
            .any(|d| d.message.contains("not a finite number")),
        "{diags:?}"
    );
}

#[test]
fn cancelled_search_returns_early_with_a_note() {
    let s = sys("p^2/2 - cos(q)", &[]);
    let cancel = Cancel::new();
    cancel.cancel();
    let (found, diags) = find_equilibria(
        &s,
        &win(-7.0, 7.0, -3.0, 3.0),
        &EquilibriumConfig::default(),
        &cancel,
    );
    assert!(found.is_empty());
    assert!(
        diags.iter().any(|d| d.message.contains("cancelled")),
        "{diags:?}"
    );
}

#[test]
fn out_of_range_settings_are_clamped_with_a_warning() {
    // same pendulum closed form; 0 seed cells cannot cover the window
    let s = sys("p^2/2 - cos(q)", &[]);
    let cfg = EquilibriumConfig {
        seeds: 0,
        max_newton: 0,
    };
    let (_, diags) = find_equilibria(&s, &win(-1.0, 1.0, -1.0, 1.0), &cfg, &Cancel::never());
    assert!(
        diags.iter().any(|d| d.message.contains("seed cells")),
        "{diags:?}"
    );
    assert!(
        diags.iter().any(|d| d.message.contains("Newton")),
        "{diags:?}"
    );
}

#[test]
fn equilibria_off_the_momentum_axis_are_found_and_sorted() {
    // H = (p² − 1)²/4 + q²/2 (closed form by hand): H_p = p(p² − 1), H_q = q.
    // Equilibria (0, −1), (0, 0), (0, 1); Hessian diag(1, 3p² − 1):
    // centers at p = ±1 (det = 2, ω = √2), a saddle at p = 0 (det = −1).
    let s = sys("(p^2 - 1)^2/4 + q^2/2", &[]);
    let found = find(&s, &win(-1.0, 1.0, -1.6, 1.6));
    use EquilibriumKind::*;
    assert_kinds(
        &found,
        &[(0.0, -1.0, Center), (0.0, 0.0, Saddle), (0.0, 1.0, Center)],
    );
    assert_close(found[0].omega.unwrap_or(f64::NAN), 2f64.sqrt(), 1e-12, "ω");
}

#[test]
fn close_pair_just_past_the_fold_is_resolved_within_one_seed_cell() {
    // H = p²/2 + q³/3 − μq with μ = r²: center at q = r, saddle at −r
    // (closed form), both inside one seed cell of width ≈ 0.08.
    for r in [1e-2, 1e-3, 1e-4] {
        for (qmin, qmax) in [(-2.0, 2.0), (-1.98, 2.03), (-2.05, 1.93), (-1.0, 3.0)] {
            let s = sys(SADDLE_NODE, &[("mu", r * r)]);
            let found = find(&s, &win(qmin, qmax, -1.5, 1.5));
            assert_kinds(
                &found,
                &[
                    (-r, 0.0, EquilibriumKind::Saddle),
                    (r, 0.0, EquilibriumKind::Center),
                ],
            );
        }
    }
}

#[test]
fn close_triple_just_past_the_pitchfork_is_resolved() {
    // H = p²/2 + q⁴/4 − μq²/2 with μ = r²: saddle at 0, centers at ±r (closed form).
    use EquilibriumKind::*;
    for r in [1e-2, 1e-3, 1e-4] {
        for (qmin, qmax) in [(-2.0, 2.0), (-1.98, 2.03), (-2.05, 1.93), (-1.0, 3.0)] {
            let s = sys(PITCHFORK, &[("mu", r * r)]);
            let found = find(&s, &win(qmin, qmax, -1.5, 1.5));
            assert_kinds(
                &found,
                &[(-r, 0.0, Center), (0.0, 0.0, Saddle), (r, 0.0, Center)],
            );
        }
    }
}

// ---- explicit time: a formula in t is analysed at a stated, frozen time ----

/// H = p²/2 + q²/2 − F q cos t frozen at t₀ has its one center where
/// ∂H/∂q = q − F cos t₀ = 0, i.e. at q = F cos t₀ (closed form).
#[test]
fn formula_in_t_is_analysed_at_its_frozen_time() {
    let s = sys("p^2/2 + q^2/2 - F*q*cos(t)", &[("F", 0.4)]);
    let w = win(-2.0, 2.0, -2.0, 2.0);
    for t0 in [0.0, 1.0, PI] {
        let frozen = s.frozen_at(t0);
        assert_eq!(frozen.time(), t0);
        assert_eq!(frozen.energy(0.7, -0.2), s.energy_t(0.7, -0.2, t0));
        let (eqs, diags) =
            find_equilibria(&frozen, &w, &EquilibriumConfig::default(), &Cancel::never());
        assert_eq!(eqs.len(), 1, "one center at t0 = {t0}");
        assert_close(eqs[0].q, 0.4 * t0.cos(), 1e-12, "center q = F cos t0");
        let stated = format!("frozen at t = {t0}");
        assert!(
            diags.iter().any(|d| d.message.contains(&stated)),
            "the diagnostics state the frozen time {t0}: {diags:?}"
        );
    }
}

/// Freezing the time of a formula without t changes no bit of any value.
#[test]
fn frozen_time_leaves_an_autonomous_formula_unchanged() {
    let s = sys("p^2/2 - cos(q) + a*q^3", &[("a", 0.1)]);
    let frozen = s.frozen_at(12.5);
    for &(q, p) in &[(0.3, -0.4), (2.0, 1.1), (-1.7, 0.0)] {
        assert_eq!(s.energy(q, p).to_bits(), frozen.energy(q, p).to_bits());
        assert_eq!(s.jet(q, p), frozen.jet(q, p));
        assert_eq!(
            s.third_jet(q, p, &[0]).third,
            frozen.third_jet(q, p, &[0]).third
        );
    }
}
