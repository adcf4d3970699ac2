//! The integrators on driven (t-dependent) and damped systems: observed orders
//! against closed forms, and the exact contraction of phase-space area by the
//! conformally symplectic splittings.

use phasewright::core::integrate::{Integrator, IntegratorError, Method, State};
use phasewright::core::system::System;

fn system(src: &str, values: &[(&str, f64)]) -> System {
    System::from_source(src, values).unwrap()
}

/// Integrate `n` fixed steps of size `duration / n` from `s`.
fn run(integ: &mut Integrator, sys: &System, s: State, duration: f64, n: usize) -> State {
    let h = duration / n as f64;
    let mut y = s;
    for _ in 0..n {
        y = integ.step(sys, &y, h).unwrap().state;
    }
    y
}

/// The forced harmonic oscillator q'' + q = F cos(W t) (H = p²/2 + q²/2 − F q cos(W t)).
const FORCED: &str = "p^2/2 + q^2/2 - F*q*cos(W*t)";
const F: f64 = 0.7;
const W: f64 = 2.3;
const START: State = State {
    q: 0.4,
    p: -0.3,
    t: 0.0,
};
const DURATION: f64 = 5.0;

/// Closed form of q'' + q = F cos(W t), W² ≠ 1, from (q₀, p₀) at t = 0:
/// q = A cos t + B sin t + F cos(W t)/(1 − W²) with A = q₀ − F/(1 − W²),
/// B = p₀, and p = q' (undetermined coefficients; any ODE textbook, e.g.
/// W. E. Boyce, R. C. DiPrima, *Elementary Differential Equations*, ch. 3,
/// forced vibrations — recalled from memory; the formula is common practice).
fn forced_exact(t: f64) -> [f64; 2] {
    let r = F / (1.0 - W * W);
    let a = START.q - r;
    let b = START.p;
    [
        a * t.cos() + b * t.sin() + r * (W * t).cos(),
        -a * t.sin() + b * t.cos() - r * W * (W * t).sin(),
    ]
}

/// The damped forced oscillator q'' + δ q' + q = F cos(W t) (H as above,
/// damping rate δ, m = 1).
const DAMPING: f64 = 0.3;

/// Closed form of q'' + δ q' + q = F cos(W t) with δ < 2 from (q₀, p₀) at
/// t = 0: the steady part R cos(W t) + S sin(W t) with D = (1 − W²)² + (δW)²,
/// R = F(1 − W²)/D, S = FδW/D, plus e^(−δt/2)(C₁ cos ω t + C₂ sin ω t) with
/// ω = √(1 − δ²/4), C₁ = q₀ − R, C₂ = (p₀ − SW + δC₁/2)/ω (same textbook
/// chapter, damped forced vibrations; recalled from memory, common practice).
fn damped_exact(t: f64) -> [f64; 2] {
    let d = DAMPING;
    let den = (1.0 - W * W).powi(2) + (d * W).powi(2);
    let r = F * (1.0 - W * W) / den;
    let s = F * d * W / den;
    let om = (1.0 - d * d / 4.0).sqrt();
    let c1 = START.q - r;
    let c2 = (START.p - s * W + d * c1 / 2.0) / om;
    let e = (-d * t / 2.0).exp();
    let (c, sn) = ((om * t).cos(), (om * t).sin());
    let q = r * (W * t).cos() + s * (W * t).sin() + e * (c1 * c + c2 * sn);
    let qdot = -r * W * (W * t).sin() + s * W * (W * t).cos() - d / 2.0 * e * (c1 * c + c2 * sn)
        + e * om * (-c1 * sn + c2 * c);
    [q, qdot]
}

/// Error at t = DURATION after n steps.
fn error(sys: &System, m: Method, damping: f64, n: usize, exact: fn(f64) -> [f64; 2]) -> f64 {
    let mut integ = Integrator::with_damping(sys, m, damping).unwrap();
    let y = run(&mut integ, sys, START, DURATION, n);
    let x = exact(DURATION);
    (y.q - x[0]).hypot(y.p - x[1])
}

/// Observed order log₂(e(n)/e(2n)).
fn observed_order(
    sys: &System,
    m: Method,
    damping: f64,
    n: usize,
    exact: fn(f64) -> [f64; 2],
) -> (f64, f64) {
    let (e1, e2) = (
        error(sys, m, damping, n, exact),
        error(sys, m, damping, 2 * n, exact),
    );
    ((e1 / e2).log2(), e2)
}

/// (method, order, steps for the coarse run): step counts chosen so that the
/// finer run's error stays well above rounding.
const CASES: [(Method, u32, usize); 11] = [
    (Method::Verlet, 2, 200),
    (Method::Yoshida4, 4, 100),
    (Method::Yoshida6, 6, 40),
    (Method::Nystrom4, 4, 50),
    (Method::Nystrom6, 6, 25),
    (Method::Split4, 4, 50),
    (Method::Split6, 6, 25),
    (Method::Midpoint, 2, 200),
    (Method::Gauss4, 4, 50),
    (Method::Gauss6, 6, 20),
    (Method::Dopri5, 5, 50),
];

#[test]
fn every_method_keeps_its_order_on_the_forced_oscillator() {
    let sys = system(FORCED, &[("F", F), ("W", W)]);
    for (m, order, n) in CASES {
        let (observed, e) = observed_order(&sys, m, 0.0, n, forced_exact);
        println!("forced  {m:>14}: observed order {observed:.3} (error {e:.2e})");
        assert!(
            (observed - order as f64).abs() < 0.25,
            "{m}: observed order {observed} (error {e:e}), expected {order}"
        );
    }
}

#[test]
fn every_method_keeps_its_order_with_damping() {
    let sys = system(FORCED, &[("F", F), ("W", W)]);
    for (m, order, n) in CASES {
        let (observed, e) = observed_order(&sys, m, DAMPING, n, damped_exact);
        println!("damped  {m:>14}: observed order {observed:.3} (error {e:.2e})");
        assert!(
            (observed - order as f64).abs() < 0.25,
            "{m}: observed order {observed} (error {e:e}), expected {order}"
        );
    }
}

/// The driven double well H = T(p) − q²/2 + q⁴/4 − F q cos(W t) with damping.
const WELL: &str = "(p - c)^2/(2*m) - q^2/2 + q^4/4 - F*q*cos(W*t)";
const WELL_DAMPING: f64 = 0.25;

/// Area of the image of the triangle `corners` after `duration`: orbits from
/// `per_edge` points along each edge, the image polygon's area by the
/// shoelace formula, and Romberg extrapolation over per_edge = 8, 16, … so
/// that the curved image edges are followed (the polygon's error has an
/// expansion in even powers of the spacing, as the trapezoidal rule has;
/// common practice).
fn image_area(sys: &System, m: Method, corners: [[f64; 2]; 3], duration: f64, n: usize) -> f64 {
    let polygon_area = |per_edge: usize| {
        let mut pts = Vec::with_capacity(3 * per_edge);
        for e in 0..3 {
            let (a, b) = (corners[e], corners[(e + 1) % 3]);
            for k in 0..per_edge {
                let s = k as f64 / per_edge as f64;
                let start = State {
                    q: a[0] + s * (b[0] - a[0]),
                    p: a[1] + s * (b[1] - a[1]),
                    t: 0.0,
                };
                let mut integ = Integrator::with_damping(sys, m, WELL_DAMPING).unwrap();
                let y = run(&mut integ, sys, start, duration, n);
                pts.push([y.q, y.p]);
            }
        }
        shoelace(&pts)
    };
    let levels = [8, 16, 32, 64, 128];
    let mut table: Vec<f64> = levels.iter().map(|&k| polygon_area(k)).collect();
    // Romberg: eliminate h², h⁴, h⁶, h⁸ in turn.
    let mut factor = 4.0;
    while table.len() > 1 {
        table = table
            .windows(2)
            .map(|w| (factor * w[1] - w[0]) / (factor - 1.0))
            .collect();
        factor *= 4.0;
    }
    table[0]
}

fn shoelace(pts: &[[f64; 2]]) -> f64 {
    let n = pts.len();
    let mut twice = 0.0;
    for i in 0..n {
        let (a, b) = (pts[i], pts[(i + 1) % n]);
        twice += a[0] * b[1] - b[0] * a[1];
    }
    0.5 * twice
}

#[test]
fn conformal_splittings_contract_a_triangle_of_orbits_by_exactly_e_to_the_minus_delta_t() {
    // Liouville: the divergence of (H_p, −H_q − δ H_p) is −δ H_pp = −δ/m, so
    // every area shrinks by e^(−δ t/m) (McLachlan & Perlmutter, J. Nonlinear
    // Sci. 11 (2001) 283–313, "Conformal Hamiltonian systems"); the
    // conformal splittings keep this exactly, step by step.
    let corners = [[0.9, 0.1], [1.0, 0.12], [0.93, 0.2]];
    let before = shoelace(&corners);
    let duration = 12.0;
    for (mass, shift) in [(1.0, 0.0), (0.8, 0.2)] {
        let sys = system(WELL, &[("F", 0.3), ("W", 1.0), ("m", mass), ("c", shift)]);
        for (m, n) in [
            (Method::Nystrom6, 240),
            (Method::Split6, 240),
            (Method::Yoshida4, 480),
            (Method::Verlet, 960),
        ] {
            let ratio = image_area(&sys, m, corners, duration, n) / before;
            let exact = (-WELL_DAMPING * duration / mass).exp();
            let rel = (ratio / exact - 1.0).abs();
            println!(
                "triangle m = {mass} {m:>10}: area ratio {ratio:.15} vs e^(-δt/m) {exact:.15}, relative error {rel:.2e}"
            );
            assert!(
                rel < 1e-10,
                "{m}, m = {mass}: ratio {ratio} vs {exact} ({rel:e})"
            );
        }
    }
}

#[test]
fn auto_and_the_refusals_follow_what_each_method_supports() {
    let driven = system(FORCED, &[("F", F), ("W", W)]);
    let quartic = system("p^4/4 + q^2/2 - F*q*cos(t)", &[("F", 0.1)]);
    let timed_kinetic = system("p^2/2*(1 + 0.1*cos(t)) + q^2/2", &[]);
    let mixed = system("q*p + q^2/2 + p^2/2", &[]);
    // Auto: the splittings for T(p) + V(q, t); Gauss–Legendre where they do not apply.
    assert_eq!(Method::Auto.resolve(&driven), Method::Nystrom6);
    assert_eq!(Method::Auto.resolve_damped(&driven, 0.3), Method::Nystrom6);
    assert_eq!(Method::Auto.resolve(&quartic), Method::Split6);
    assert_eq!(Method::Auto.resolve_damped(&quartic, 0.3), Method::Gauss6);
    assert_eq!(Method::Auto.resolve(&timed_kinetic), Method::Gauss6);
    assert_eq!(Method::Auto.resolve_damped(&mixed, 0.3), Method::Gauss6);
    for (sys, damping) in [(&quartic, 0.3), (&timed_kinetic, 0.0), (&mixed, 0.3)] {
        let i = Integrator::with_damping(sys, Method::Auto, damping).unwrap();
        assert_eq!(i.method(), Method::Gauss6);
        assert_eq!(i.damping(), damping);
    }
    for m in Method::ALL.into_iter().filter(|m| m.needs_separable()) {
        // a kinetic part that changes with t has no exact drift
        let e = Integrator::new(&timed_kinetic, m).unwrap_err();
        assert_eq!(e, IntegratorError::KineticDependsOnTime(m));
        assert!(e.to_string().contains("without t"), "{e}");
        assert_eq!(
            Integrator::new(&mixed, m).unwrap_err(),
            IntegratorError::NotSeparable(m)
        );
        // damping needs the exact damped drift, which needs T quadratic in p
        let e = Integrator::with_damping(&quartic, m, 0.3).unwrap_err();
        if m.needs_quadratic_kinetic() {
            assert_eq!(e, IntegratorError::KineticNotQuadratic(m));
        } else {
            assert_eq!(e, IntegratorError::DampingNeedsQuadraticKinetic(m));
            assert!(e.to_string().contains("gauss6"), "{e}");
        }
        assert!(Integrator::new(&quartic, m).is_ok() || m.needs_quadratic_kinetic());
    }
    for bad in [-0.1, f64::NAN, f64::INFINITY] {
        let e = Integrator::with_damping(&driven, Method::Gauss6, bad).unwrap_err();
        assert!(matches!(e, IntegratorError::InvalidDamping(_)), "{e:?}");
        assert!(e.to_string().contains("damping"), "{e}");
    }
}

#[test]
fn kicks_in_t_reuse_the_shared_force_across_steps() {
    // The Nyström splitting of order 6 runs kicks b₁…b₆ b₆…b₁ and drifts
    // a₁…a₆…a₁, 12 kicks and 11 drifts, starting and ending with a kick
    // (Blanes & Moan, J. Comput. Appl. Math. 142 (2002) 313–330, Table 3,
    // SRKN₁₁ᵇ: 11 stages): the last kick of a step and the first of the next
    // are at the same q and the same time t + h, so n steps cost 1 + 11n
    // kicks and 11n drifts, even when the kicks read t.
    let n = 37;
    for sys in [
        system(FORCED, &[("F", F), ("W", W)]),
        system("p^2/2 + q^2/2", &[]),
    ] {
        let mut integ = Integrator::new(&sys, Method::Nystrom6).unwrap();
        run(&mut integ, &sys, START, DURATION, n);
        assert_eq!(integ.counters.field_evaluations, 1 + 22 * n as u64);
    }
}
