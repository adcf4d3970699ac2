//! Orbits and their measurements against closed forms and reference values.

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::orbit::{Motion, Orbit, OrbitRequest, StopReason, integrate_orbit};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

fn system(src: &str, params: &[(&str, f64)]) -> System {
    System::from_source(src, params).unwrap()
}

fn view() -> Window {
    Window::new(-4.0, 4.0, -3.0, 3.0).unwrap()
}

/// One period from (q0, p0), stopping when closed.
fn one_period(sys: &System, q0: f64, p0: f64, method: Method) -> Orbit {
    let mut req = OrbitRequest::new(q0, p0, 1e4, &view());
    req.method = method;
    req.stop_when_closed = true;
    integrate_orbit(sys, &req, &Cancel::never())
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// K(k) = π / (2 AGM(1, √(1 − k²))) (Abramowitz & Stegun 17.6.1–17.6.4).
fn k_agm(k: f64) -> f64 {
    let (mut a, mut b) = (1.0f64, (1.0 - k * k).sqrt());
    for _ in 0..40 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
    }
    PI / (2.0 * a)
}

fn ellipk_of_modulus(k: f64) -> f64 {
    ellip::ellipk(k * k).unwrap()
}

fn ellipe_of_modulus(k: f64) -> f64 {
    ellip::ellipe(k * k).unwrap()
}

#[test]
fn harmonic_oscillator_period_and_action_match_the_closed_form() {
    // H = p²/2 + ω²q²/2: T = 2π/ω, I = E/ω (closed form).
    let omega = 1.7;
    let sys = system("p^2/2 + w^2*q^2/2", &[("w", omega)]);
    for method in [
        Method::Auto,
        Method::Yoshida6,
        Method::Gauss6,
        Method::Dopri5,
    ] {
        let o = one_period(&sys, 0.8, 0.3, method);
        assert_eq!(o.stop, StopReason::Closed, "{method}");
        assert_eq!(o.motion, Motion::Libration);
        assert!(o.closed);
        let e = 0.3f64.powi(2) / 2.0 + omega * omega * 0.64 / 2.0;
        let period = o.period.unwrap();
        assert!(
            rel(period, 2.0 * PI / omega) < 1e-10,
            "{method}: T = {period}"
        );
        assert!(rel(o.frequency.unwrap(), omega) < 1e-10);
        assert!(
            rel(o.action.unwrap(), e / omega) < 1e-9,
            "{method}: I = {:?}",
            o.action
        );
        let last = o.samples.last().unwrap();
        assert!(
            (last.q - 0.8).hypot(last.p - 0.3) < 1e-9,
            "{method}: the orbit closes at the start"
        );
    }
}

#[test]
fn pendulum_period_from_ninety_degrees_matches_4k() {
    // T = 4K(k), k = sin(θ₀/2) = 1/√2: 7.416298709205488 (= 4K(m = 1/2), from memory),
    // checked against the ellip crate and the arithmetic–geometric mean (A&S 17.6).
    let expected = 7.416298709205488;
    let k = (PI / 4.0).sin();
    assert!(rel(4.0 * ellipk_of_modulus(k), expected) < 1e-14);
    assert!(rel(4.0 * k_agm(k), expected) < 1e-14);
    let sys = system("p^2/2 - cos(q)", &[]);
    for method in [
        Method::Auto,
        Method::Yoshida6,
        Method::Gauss6,
        Method::Dopri5,
    ] {
        let o = one_period(&sys, PI / 2.0, 0.0, method);
        let period = o.period.unwrap();
        assert!(
            rel(period, expected) < 1e-10,
            "{method}: T = {period} ({:e})",
            rel(period, expected)
        );
        assert!(o.closed && o.motion == Motion::Libration);
    }
}

#[test]
fn pendulum_periods_over_amplitudes_match_the_elliptic_integral() {
    // T(θ₀) = 4K(sin(θ₀/2)) (common practice; K from the ellip crate).
    let sys = system("p^2/2 - cos(q)", &[]);
    for deg in [5.0, 30.0, 60.0, 120.0, 170.0] {
        let theta0 = f64::to_radians(deg);
        let expected = 4.0 * ellipk_of_modulus((theta0 / 2.0).sin());
        let o = one_period(&sys, theta0, 0.0, Method::Gauss6);
        let period = o.period.unwrap();
        assert!(
            rel(period, expected) < 1e-10,
            "{deg}°: T = {period}, expected {expected}"
        );
    }
}

#[test]
fn pendulum_period_near_the_separatrix_grows_like_the_logarithm() {
    // E → 1⁻: K(k) ≈ ln(4/k′) (A&S 17.3.26), so T ≈ 2 ln(32/(1 − E)).
    let sys = system("p^2/2 - cos(q)", &[]);
    for delta in [1e-4f64, 1e-6] {
        let e = 1.0 - delta;
        let p0 = (2.0 * (e + 1.0)).sqrt();
        // The orbit lingers near the saddle and T'(E) ≈ 2/δ: an energy error ε moves
        // T by 2ε/δ, so a finer step than the default and a bound of 1e-9.
        let mut req = OrbitRequest::new(0.0, p0, 1e3, &view());
        req.method = Method::Gauss6;
        req.step = Some(0.01);
        req.stop_when_closed = true;
        let o = integrate_orbit(&sys, &req, &Cancel::never());
        let period = o.period.unwrap();
        let k = ((1.0 + e) / 2.0).sqrt();
        let exact = 4.0 * ellipk_of_modulus(k);
        assert!(
            rel(period, exact) < 1e-9,
            "δ = {delta}: T = {period}, 4K = {exact}"
        );
        let asymptotic = 2.0 * (32.0 / delta).ln();
        assert!(
            rel(period, asymptotic) < 10.0 * delta,
            "δ = {delta}: T = {period}, asymptote {asymptotic}"
        );
        assert_eq!(o.motion, Motion::Libration);
    }
}

#[test]
fn pendulum_action_matches_the_elliptic_formula_and_its_derivative_is_the_period() {
    // Below the separatrix I = (8/π)[E(k) − (1 − k²)K(k)], k² = (1 + E)/2 (from memory),
    // and dI/dE = T/2π (common practice).
    let sys = system("p^2/2 - cos(q)", &[]);
    let action_at = |energy: f64| {
        let o = one_period(&sys, 0.0, (2.0 * (energy + 1.0)).sqrt(), Method::Gauss6);
        (o.action.unwrap(), o.period.unwrap())
    };
    for energy in [-0.5f64, 0.0, 0.7] {
        let k = ((1.0 + energy) / 2.0).sqrt();
        let expected = 8.0 / PI * (ellipe_of_modulus(k) - (1.0 - k * k) * ellipk_of_modulus(k));
        let (action, period) = action_at(energy);
        assert!(
            rel(action, expected) < 1e-10,
            "E = {energy}: I = {action}, expected {expected}"
        );
        let de = 1e-4;
        let slope = (action_at(energy + de).0 - action_at(energy - de).0) / (2.0 * de);
        assert!(
            rel(slope, period / (2.0 * PI)) < 1e-7,
            "E = {energy}: dI/dE = {slope}, T/2π = {}",
            period / (2.0 * PI)
        );
    }
}

#[test]
fn pendulum_above_the_separatrix_rotates_with_the_elliptic_period() {
    // E > 1: with k² = 2/(1 + E), T = 2k K(k) for q to advance by 2π and
    // I = (1/2π)∫p dq = 4E(k)/(πk) (derived from p = √(2(E + cos q)) with q = 2φ).
    let sys = system("p^2/2 - cos(q)", &[]);
    for (p0, method) in [(2.5, Method::Auto), (-3.0, Method::Gauss6)] {
        let energy: f64 = p0 * p0 / 2.0 - 1.0;
        let k = (2.0 / (1.0 + energy)).sqrt();
        let o = one_period(&sys, 0.0, p0, method);
        assert_eq!(o.motion, Motion::Rotation, "p0 = {p0}");
        assert!(
            (o.q_advance - 2.0 * PI * p0.signum()).abs() < 1e-12,
            "advance {}",
            o.q_advance
        );
        let period = o.period.unwrap();
        assert!(
            rel(period, 2.0 * k * ellipk_of_modulus(k)) < 1e-10,
            "p0 = {p0}: T = {period}"
        );
        assert!(
            rel(o.action.unwrap(), 4.0 * ellipe_of_modulus(k) / (PI * k)) < 1e-10,
            "I = {:?}",
            o.action
        );
    }
}

#[test]
fn morse_oscillator_frequency_follows_the_closed_form() {
    // H = p²/2 + D(1 − e^{−aq})²: ω(E) = a√(2(D − E)) (closed form, from memory).
    let (d, a) = (2.0, 0.8);
    let sys = system("p^2/2 + D*(1 - exp(-a*q))^2", &[("D", d), ("a", a)]);
    for energy in [0.3f64, 1.0, 1.8] {
        let o = one_period(&sys, 0.0, (2.0 * energy).sqrt(), Method::Auto);
        let expected = a * (2.0 * (d - energy)).sqrt();
        let omega = o.frequency.unwrap();
        assert!(
            rel(omega, expected) < 1e-9,
            "E = {energy}: ω = {omega}, expected {expected}"
        );
    }
}

#[test]
fn quartic_oscillator_period_is_the_lemniscate_value() {
    // H = p²/2 + q⁴/4 at E = 1/4: T = 4√2 ∫₀¹ dq/√(1 − q⁴) = Γ(1/4)²/√π
    // = 7.416298709205488 (lemniscate constant, from memory); also
    // = 2√2 π / AGM(1, √2) (Gauss's lemniscate AGM relation, from memory).
    let expected = 7.416298709205488;
    let (mut x, mut y) = (1.0f64, 2f64.sqrt());
    for _ in 0..40 {
        let (xn, yn) = (0.5 * (x + y), (x * y).sqrt());
        x = xn;
        y = yn;
    }
    assert!(rel(2.0 * 2f64.sqrt() * PI / x, expected) < 1e-14);
    let sys = system("p^2/2 + q^4/4", &[]);
    for method in [Method::Auto, Method::Gauss6] {
        let o = one_period(&sys, 1.0, 0.0, method);
        assert!(
            rel(o.period.unwrap(), expected) < 1e-10,
            "{method}: T = {:?}",
            o.period
        );
    }
}

#[test]
fn non_separable_circles_turn_at_the_amplitude_dependent_frequency() {
    // H = r²/2 + ε r⁴/4: circles at ω = 1 + εr², action I = r²/2 (closed form).
    let eps = 0.25;
    let sys = system("(q^2 + p^2)/2 + eps*(q^2 + p^2)^2/4", &[("eps", eps)]);
    for r in [0.5, 1.5] {
        let o = one_period(&sys, r, 0.0, Method::Auto);
        assert_eq!(o.method, Method::Gauss6);
        assert!(
            rel(o.frequency.unwrap(), 1.0 + eps * r * r) < 1e-10,
            "r = {r}: ω = {:?}",
            o.frequency
        );
        assert!(
            rel(o.action.unwrap(), r * r / 2.0) < 1e-10,
            "r = {r}: I = {:?}",
            o.action
        );
        assert!(
            o.relative_energy_error < 1e-13,
            "relative energy error {}",
            o.relative_energy_error
        );
    }
}

#[test]
fn backward_integration_finds_the_same_period_and_action() {
    // Pendulum from 90° (T = 4K(1/√2), A&S 17.6); time reversal leaves T and I unchanged.
    let sys = system("p^2/2 - cos(q)", &[]);
    let mut req = OrbitRequest::new(PI / 2.0, 0.3, -1e3, &view());
    req.stop_when_closed = true;
    let back = integrate_orbit(&sys, &req, &Cancel::never());
    req.duration = 1e3;
    let fwd = integrate_orbit(&sys, &req, &Cancel::never());
    assert!(rel(back.period.unwrap(), fwd.period.unwrap()) < 1e-10);
    assert!(rel(back.action.unwrap(), fwd.action.unwrap()) < 1e-10);
    assert!(back.action.unwrap() > 0.0);
    assert!(back.samples[1].t < 0.0, "backward in time");
}

#[test]
fn a_potential_that_blows_up_stops_the_orbit_cleanly() {
    // H = p²/2 − q⁴ reaches infinity in finite time (q' ~ q², common practice).
    let sys = system("p^2/2 - q^4", &[]);
    for method in [Method::Auto, Method::Gauss6, Method::Dopri5] {
        let mut req = OrbitRequest::new(1.0, 1.0, 100.0, &view());
        req.method = method;
        let o = integrate_orbit(&sys, &req, &Cancel::never());
        assert!(
            matches!(
                o.stop,
                StopReason::LeftBounds { .. }
                    | StopReason::NonFinite { .. }
                    | StopReason::SolverFailed { .. }
            ),
            "{method}: {:?}",
            o.stop
        );
        assert_eq!(o.motion, Motion::Unbounded, "{method}");
        assert!(o.samples.last().unwrap().t < 100.0);
        assert!(!o.stop.message().is_empty());
    }
}

#[test]
fn a_start_at_an_equilibrium_reports_it() {
    let sys = system("p^2/2 - cos(q)", &[]);
    let o = integrate_orbit(
        &sys,
        &OrbitRequest::new(0.0, 0.0, 10.0, &view()),
        &Cancel::never(),
    );
    assert_eq!(o.stop, StopReason::AtEquilibrium);
    assert_eq!(o.motion, Motion::Equilibrium);
    assert_eq!(o.period, None);
}

#[test]
fn bad_requests_are_refused_with_the_field_named() {
    let sys = system("p^2/2 - cos(q)", &[]);
    let mut req = OrbitRequest::new(f64::NAN, 0.0, 10.0, &view());
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert!(
        matches!(&o.stop, StopReason::InvalidRequest { problem } if problem.contains("q0")),
        "{:?}",
        o.stop
    );
    req.q0 = 0.5;
    req.step = Some(0.0);
    assert_eq!(req.validate().unwrap_err().field, "step");
    req.step = None;
    req.duration = 0.0;
    assert_eq!(req.validate().unwrap_err().field, "duration");
    req.duration = 1.0;
    req.q0 = 100.0;
    assert_eq!(req.validate().unwrap_err().field, "q0, p0");
    let mixed = system("q*p + q^2", &[]);
    let mut req = OrbitRequest::new(0.5, 0.0, 10.0, &view());
    req.method = Method::Verlet;
    let o = integrate_orbit(&mixed, &req, &Cancel::never());
    assert!(
        matches!(&o.stop, StopReason::InvalidRequest { problem } if problem.contains("verlet")),
        "{:?}",
        o.stop
    );
}

#[test]
fn cancel_and_step_cap_stop_the_orbit() {
    let sys = system("p^2/2 - cos(q)", &[]);
    let cancel = Cancel::new();
    cancel.cancel();
    let o = integrate_orbit(&sys, &OrbitRequest::new(1.0, 0.0, 1e3, &view()), &cancel);
    assert!(
        matches!(o.stop, StopReason::Cancelled { .. }),
        "{:?}",
        o.stop
    );
    let mut req = OrbitRequest::new(1.0, 0.0, 1e3, &view());
    req.max_steps = 10;
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert_eq!(o.stop, StopReason::StepCap { steps: 10 });
    assert_eq!(o.steps, 10);
}

#[test]
fn samples_are_thinned_but_keep_the_shape() {
    // Harmonic oscillator: the samples lie on the unit circle (closed form) and
    // no gap between neighbours spans more than a small angle.
    let sys = system("(p^2 + q^2)/2", &[]);
    let mut req = OrbitRequest::new(1.0, 0.0, 2.0 * PI, &view());
    req.method = Method::Yoshida4;
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert_eq!(o.stop, StopReason::Finished);
    assert!(
        o.samples.len() < o.steps as usize / 4,
        "{} samples for {} steps",
        o.samples.len(),
        o.steps
    );
    assert!(o.samples.len() > 60);
    let mut widest: f64 = 0.0;
    for w in o.samples.windows(2) {
        let a = w[0].p.atan2(w[0].q);
        let b = w[1].p.atan2(w[1].q);
        let mut d = (a - b).abs();
        if d > PI {
            d = 2.0 * PI - d;
        }
        widest = widest.max(d);
        assert!((w[0].q.hypot(w[0].p) - 1.0).abs() < 1e-9);
    }
    assert!(widest < 0.12, "widest gap {widest} rad");
    assert!(
        (o.samples.last().unwrap().t - 2.0 * PI).abs() < 1e-12,
        "ends at the duration"
    );
    // A long run respects the sample cap.
    req.duration = 500.0;
    req.max_samples = 200;
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert!(o.samples.len() <= 200, "{}", o.samples.len());
    assert_eq!(o.stop, StopReason::Finished);
}

#[test]
fn energy_error_is_small_and_counted_work_is_reported() {
    // Pendulum from 90° for 20 periods (T = 4K(1/√2), A&S 17.6).
    let sys = system("p^2/2 - cos(q)", &[]);
    let req = OrbitRequest::new(PI / 2.0, 0.0, 20.0 * 7.416298709205488, &view());
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert_eq!(o.stop, StopReason::Finished);
    assert!(
        o.relative_energy_error < 1e-10,
        "relative energy error {}",
        o.relative_energy_error
    );
    assert!(
        o.energy_scale > 0.5 && o.energy_scale < 10.0,
        "scale {}",
        o.energy_scale
    );
    assert!(
        o.field_evaluations >= 6 * o.steps,
        "{} evaluations for {} steps",
        o.field_evaluations,
        o.steps
    );
    assert!(rel(o.period.unwrap(), 7.416298709205488) < 1e-10);
    assert!(o.q_range[1] <= PI / 2.0 + 1e-9 && o.q_range[0] >= -PI / 2.0 - 1e-9);
}

#[test]
fn a_moving_start_in_a_very_wide_view_is_not_taken_for_an_equilibrium() {
    // Harmonic oscillator H = (p² + q²)/2 from (1, 0): T = 2π exactly (closed
    // form), whatever the size of the view around it.
    let sys = system("p^2/2 + q^2/2", &[]);
    let wide = Window::new(-1e14, 1e14, -1e14, 1e14).unwrap();
    let mut req = OrbitRequest::new(1.0, 0.0, 100.0, &wide);
    req.stop_when_closed = true;
    let o = integrate_orbit(&sys, &req, &Cancel::never());
    assert_ne!(o.stop, StopReason::AtEquilibrium);
    let period = o.period.expect("the orbit closes");
    assert!(rel(period, 2.0 * PI) < 1e-10, "period {period}");
    // The equilibrium itself is still recognised.
    let at = integrate_orbit(
        &sys,
        &OrbitRequest::new(0.0, 0.0, 10.0, &wide),
        &Cancel::never(),
    );
    assert_eq!(at.stop, StopReason::AtEquilibrium);
}

#[test]
fn a_damped_orbit_follows_the_closed_form_and_reports_the_change_of_h() {
    // q'' + δ q' + q = 0 from (1, 0): q = e^(−δt/2)(cos ωt + δ/(2ω) sin ωt),
    // ω = √(1 − δ²/4) (the damped linear oscillator; any ODE textbook, e.g.
    // Boyce & DiPrima, Elementary Differential Equations, ch. 3 — recalled
    // from memory; common practice).
    let sys = system("p^2/2 + q^2/2", &[]);
    let delta = 0.2;
    let mut req = OrbitRequest::new(1.0, 0.0, 10.0, &view());
    req.damping = delta;
    req.strobe = Some(2.0);
    let orbit = integrate_orbit(&sys, &req, &Cancel::never());
    assert_eq!(orbit.stop, StopReason::Finished);
    assert_eq!(orbit.method, Method::Nystrom6);
    let om = (1.0 - delta * delta / 4.0).sqrt();
    let exact = |t: f64| {
        let e = (-delta * t / 2.0).exp();
        let (c, s) = ((om * t).cos(), (om * t).sin());
        let q = e * (c + delta / (2.0 * om) * s);
        let p = -e * (1.0 + delta * delta / (4.0 * om * om)) * om * s;
        [q, p]
    };
    assert_eq!(orbit.strobe_points.len(), 5);
    // A damped orbit does not close: no period, even for a slow spiral that
    // passes near its start after one turn (δ = 0.01: the amplitude falls by
    // e^(−0.01·π) ≈ 3% per turn).
    let mut slow = OrbitRequest::new(1.0, 0.0, 20.0, &view());
    slow.damping = 0.01;
    slow.stop_when_closed = true;
    let spiral = integrate_orbit(&sys, &slow, &Cancel::never());
    assert_eq!(spiral.stop, StopReason::Finished);
    assert!(
        spiral.period.is_none() && !spiral.closed,
        "{:?}",
        spiral.period
    );
    assert_eq!(spiral.motion, Motion::Undetermined);
    for (k, pt) in orbit.strobe_points.iter().enumerate() {
        let x = exact(2.0 * (k + 1) as f64);
        assert!(
            (pt[0] - x[0]).abs() < 1e-9 && (pt[1] - x[1]).abs() < 1e-9,
            "t = {}: {pt:?} vs {x:?}",
            2 * (k + 1)
        );
    }
    // dH/dt = −δ p² ≤ 0: H falls monotonically, so the largest change of H
    // is H(0) − H(10).
    let end = exact(10.0);
    let fall = 0.5 - 0.5 * (end[0] * end[0] + end[1] * end[1]);
    assert!(
        (orbit.energy_error - fall).abs() < 1e-9,
        "{} vs {fall}",
        orbit.energy_error
    );
    assert!(
        orbit
            .diagnostics
            .iter()
            .any(|d| d.message.contains("not conserved")),
        "{:?}",
        orbit.diagnostics
    );
    // A negative or undefined damping rate is refused with the field named.
    for bad in [-0.5, f64::NAN] {
        req.damping = bad;
        let o = integrate_orbit(&sys, &req, &Cancel::never());
        match &o.stop {
            StopReason::InvalidRequest { problem } => {
                assert!(problem.contains("damping"), "{problem}")
            }
            other => panic!("damping {bad}: {other:?}"),
        }
    }
    // Damping with a kinetic part not quadratic in p: auto takes Gauss–Legendre,
    // an explicit splitting is refused with its reason.
    let quartic = system("p^4/4 + q^2/2", &[]);
    let mut req = OrbitRequest::new(1.0, 0.0, 5.0, &view());
    req.damping = delta;
    assert_eq!(
        integrate_orbit(&quartic, &req, &Cancel::never()).method,
        Method::Gauss6
    );
    req.method = Method::Split6;
    match integrate_orbit(&quartic, &req, &Cancel::never()).stop {
        StopReason::InvalidRequest { problem } => {
            assert!(problem.contains("quadratic"), "{problem}")
        }
        other => panic!("{other:?}"),
    }
}
