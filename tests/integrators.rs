//! The integrators against closed forms and published orders of accuracy.

use phasewright::core::integrate::{Integrator, IntegratorError, Method, State};
use phasewright::core::system::System;
use std::f64::consts::PI;

fn system(src: &str) -> System {
    System::from_source(src, &[]).unwrap()
}

/// Pendulum period from rest at amplitude θ₀: T = 4K(k), k = sin(θ₀/2), with
/// K(k) = π / (2 AGM(1, k′)) (Abramowitz & Stegun 17.6.1–17.6.4).
fn pendulum_period(theta0: f64) -> f64 {
    let k = (theta0 / 2.0).sin();
    let (mut a, mut b) = (1.0f64, (1.0 - k * k).sqrt());
    for _ in 0..40 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
    }
    4.0 * PI / (2.0 * a)
}

/// Integrate `n` fixed steps of size `h` from `s`.
fn run(integ: &mut Integrator, sys: &System, s: State, h: f64, n: usize) -> State {
    let mut y = s;
    for _ in 0..n {
        y = integ.step(sys, &y, h).unwrap().state;
    }
    y
}

const FIXED_STEP: [Method; 6] = [
    Method::Verlet,
    Method::Yoshida4,
    Method::Yoshida6,
    Method::Midpoint,
    Method::Gauss4,
    Method::Gauss6,
];

#[test]
fn method_names_round_trip_and_unknown_names_list_the_valid_ones() {
    for m in Method::ALL {
        assert_eq!(Method::from_name(m.name()), Ok(m));
    }
    assert_eq!(Method::from_name(" Gauss6 "), Ok(Method::Gauss6));
    let err = Method::from_name("leapfrog2").unwrap_err().to_string();
    assert!(
        err.contains("leapfrog2") && err.contains("yoshida4") && err.contains("dopri5"),
        "{err}"
    );
}

#[test]
fn auto_picks_yoshida4_for_separable_and_gauss6_otherwise() {
    assert_eq!(
        Method::Auto.resolve(&system("p^2/2 - cos(q)")),
        Method::Yoshida4
    );
    assert_eq!(
        Method::Auto.resolve(&system("(q^2 + p^2)/2 + 0.1*(q^2 + p^2)^2/4")),
        Method::Gauss6
    );
}

#[test]
fn explicit_compositions_refuse_a_formula_that_mixes_q_and_p() {
    let sys = system("q*p + q^2");
    for m in [Method::Verlet, Method::Yoshida4, Method::Yoshida6] {
        assert_eq!(
            Integrator::new(&sys, m).unwrap_err(),
            IntegratorError::NotSeparable(m)
        );
    }
    assert!(Integrator::new(&sys, Method::Gauss6).is_ok());
}

#[test]
fn harmonic_oscillator_follows_the_exact_solution() {
    // H = (p² + q²)/2: q = cos t, p = −sin t from (1, 0) (closed form).
    let sys = system("(p^2 + q^2)/2");
    let h = 0.01;
    let n = 1000;
    let t = h * n as f64;
    for (m, tol) in [
        (Method::Verlet, 1e-4),
        (Method::Midpoint, 1e-4),
        (Method::Yoshida4, 1e-7),
        (Method::Gauss4, 1e-9),
        (Method::Yoshida6, 1e-11),
        (Method::Gauss6, 1e-12),
        (Method::Dopri5, 1e-9),
    ] {
        let mut integ = Integrator::new(&sys, m).unwrap();
        let y = run(
            &mut integ,
            &sys,
            State {
                q: 1.0,
                p: 0.0,
                t: 0.0,
            },
            h,
            n,
        );
        let err = (y.q - t.cos()).hypot(y.p + t.sin());
        assert!(err < tol, "{m}: error {err:e} at t = {t}");
    }
}

/// Global error at t = 2.5 of the pendulum from 90°, against Gauss 3-stage with
/// 4000 steps (its error there is below 1e-15).
fn pendulum_error(m: Method, n: usize) -> f64 {
    let sys = system("p^2/2 - cos(q)");
    let t_end = 2.5;
    let start = State {
        q: PI / 2.0,
        p: 0.0,
        t: 0.0,
    };
    let mut reference = Integrator::new(&sys, Method::Gauss6).unwrap();
    let exact = run(&mut reference, &sys, start, t_end / 4000.0, 4000);
    let mut integ = Integrator::new(&sys, m).unwrap();
    let y = run(&mut integ, &sys, start, t_end / n as f64, n);
    (y.q - exact.q).hypot(y.p - exact.p)
}

#[test]
fn observed_orders_on_the_pendulum_match_the_published_orders() {
    // Orders: Störmer–Verlet and implicit midpoint 2, Yoshida-4 and Gauss 2-stage 4,
    // Yoshida-6 and Gauss 3-stage 6 (Hairer, Lubich & Wanner, Geometric Numerical
    // Integration, 2nd ed., §II.1, §II.4, §V.3).
    for (m, n, expected) in [
        (Method::Verlet, 100, 2.0),
        (Method::Midpoint, 100, 2.0),
        (Method::Yoshida4, 40, 4.0),
        (Method::Gauss4, 16, 4.0),
        (Method::Yoshida6, 20, 6.0),
        (Method::Gauss6, 6, 6.0),
    ] {
        let e1 = pendulum_error(m, n);
        let e2 = pendulum_error(m, 2 * n);
        let order = (e1 / e2).log2();
        assert!(
            (order - expected).abs() < 0.3,
            "{m}: observed order {order:.3} (errors {e1:e}, {e2:e})"
        );
    }
}

#[test]
fn symmetric_methods_return_to_the_start_when_run_backward() {
    // Time-reversibility of symmetric methods (Hairer, Lubich & Wanner, §V.1).
    let sys = system("p^2/2 - cos(q)");
    let start = State {
        q: 2.0,
        p: 0.3,
        t: 0.0,
    };
    for m in FIXED_STEP {
        let mut integ = Integrator::new(&sys, m).unwrap();
        let there = run(&mut integ, &sys, start, 0.05, 400);
        let back = run(&mut integ, &sys, there, -0.05, 400);
        let err = (back.q - start.q).hypot(back.p - start.p);
        assert!(err < 1e-12, "{m}: returned with error {err:e}");
        assert!(
            (there.q - start.q).abs() > 0.1,
            "{m}: the orbit must have moved"
        );
    }
}

#[test]
fn gauss_legendre_reproduces_circles_of_a_non_separable_hamiltonian() {
    // H = r²/2 + ε r⁴/4, r² = q² + p²: q' = p(1 + εr²), p' = −q(1 + εr²), so
    // q = r cos ωt, p = −r sin ωt with ω = 1 + εr² (closed form).
    let eps = 0.3;
    let sys = System::from_source("(q^2 + p^2)/2 + eps*(q^2 + p^2)^2/4", &[("eps", eps)]).unwrap();
    let r = 1.2;
    let omega = 1.0 + eps * r * r;
    let (h, n) = (0.02, 1000);
    let t = h * n as f64;
    for (m, tol) in [
        (Method::Midpoint, 1e-2),
        (Method::Gauss4, 1e-6),
        (Method::Gauss6, 1e-10),
    ] {
        let mut integ = Integrator::new(&sys, m).unwrap();
        let y = run(
            &mut integ,
            &sys,
            State {
                q: r,
                p: 0.0,
                t: 0.0,
            },
            h,
            n,
        );
        let err = (y.q - r * (omega * t).cos()).hypot(y.p + r * (omega * t).sin());
        assert!(err < tol, "{m}: error {err:e}");
        // r² is a quadratic invariant, kept exactly by Gauss methods (Hairer,
        // Lubich & Wanner, Theorem IV.2.1).
        assert!(
            (y.q.hypot(y.p) - r).abs() < 1e-13,
            "{m}: radius drifted to {}",
            y.q.hypot(y.p)
        );
    }
}

#[test]
fn dormand_prince_dense_output_has_fourth_order_interpolation() {
    // Harmonic oscillator again; the continuous extension of DOPRI5 is of order 4,
    // so its local error at mid-step falls as h⁵ (Hairer, Nørsett & Wanner, §II.6).
    let sys = system("(p^2 + q^2)/2");
    let mut errors = Vec::new();
    for h in [0.4, 0.2] {
        let mut integ = Integrator::new(&sys, Method::Dopri5).unwrap();
        integ
            .step(
                &sys,
                &State {
                    q: 1.0,
                    p: 0.0,
                    t: 0.0,
                },
                h,
            )
            .unwrap();
        let mid = integ.dense(0.5).unwrap();
        let t: f64 = 0.5 * h;
        errors.push((mid[0] - t.cos()).hypot(mid[1] + t.sin()));
    }
    let order = (errors[0] / errors[1]).log2();
    assert!(
        order > 4.5,
        "dense output local order {order:.2} (errors {errors:?})"
    );
    assert!(errors[1] < 1e-7, "{errors:?}");
}

#[test]
fn dormand_prince_controls_its_error_to_the_tolerance() {
    // Pendulum from 90° over one period (T = 4K(1/√2), A&S 17.6).
    let sys = system("p^2/2 - cos(q)");
    let period = pendulum_period(PI / 2.0);
    let mut integ = Integrator::new(&sys, Method::Dopri5).unwrap();
    integ.set_tolerance(1e-11);
    let mut y = State {
        q: PI / 2.0,
        p: 0.0,
        t: 0.0,
    };
    let mut h: f64 = 0.1;
    while y.t < period {
        let remaining = period - y.t;
        let (s, _, next) = integ.adaptive_step(&sys, &y, h.min(remaining)).unwrap();
        y = s.state;
        h = next;
    }
    let err = (y.q - PI / 2.0).hypot(y.p);
    assert!(err < 1e-8, "error {err:e}");
    assert!(
        integ.counters.steps > 10 && integ.counters.steps < 2000,
        "{:?}",
        integ.counters
    );
}

#[test]
fn yoshida4_energy_error_stays_bounded_over_a_hundred_thousand_periods() {
    // Symplectic methods keep the energy error bounded without secular growth
    // over exponentially long times (Hairer, Lubich & Wanner, Theorem IX.8.1).
    // Pendulum from 60°, 100 steps per period, 10⁵ periods. The bound is the one
    // measured here (1.22e-7 absolute, H₀ = −1/2); 120 steps per period bring it
    // below 1e-7, as the h⁴ scaling predicts.
    let sys = system("p^2/2 - cos(q)");
    let theta0 = PI / 3.0;
    let per = 100;
    let periods = 100_000;
    let h = pendulum_period(theta0) / per as f64;
    let mut integ = Integrator::new(&sys, Method::Yoshida4).unwrap();
    let mut y = State {
        q: theta0,
        p: 0.0,
        t: 0.0,
    };
    let h0 = sys.energy(y.q, y.p);
    let total = per * periods;
    let tenth = total / 10;
    let (mut first, mut last, mut worst) = (0.0f64, 0.0f64, 0.0f64);
    for i in 0..total {
        y = integ.step(&sys, &y, h).unwrap().state;
        let e = (sys.energy(y.q, y.p) - h0).abs();
        worst = worst.max(e);
        if i < tenth {
            first = first.max(e);
        } else if i >= total - tenth {
            last = last.max(e);
        }
    }
    assert!(worst < 1.5e-7, "max energy error {worst:e}");
    assert!(
        last < 1.5 * first,
        "energy error grew: first tenth {first:e}, last tenth {last:e}"
    );
}

#[test]
fn session_method_names_are_the_integrator_names() {
    let names: Vec<&str> = phasewright::session::ORBIT_METHODS.to_vec();
    assert_eq!(names, Method::names());
}
