//! The stroboscopic section against closed forms of linear oscillators and
//! the invariants of the undriven system.

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::section::{SectionConfig, SectionEnd, section};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

fn cfg(period: f64, damping: f64, periods: usize, method: Method) -> SectionConfig {
    SectionConfig {
        period,
        damping,
        periods,
        method,
        steps_per_period: Some(200),
        t0: 0.0,
    }
}

fn bounds() -> Window {
    Window::new(-10.0, 10.0, -10.0, 10.0).unwrap()
}

/// H = (p² + q²)/2 sampled every 2π: the map is the identity (its flow is a
/// rotation of period 2π; closed form).
#[test]
fn harmonic_oscillator_returns_to_its_start_every_period() {
    let sys = System::from_source("p^2/2 + q^2/2", &[]).unwrap();
    let starts = [[1.0, 0.0], [0.3, -0.7], [-2.0, 1.5]];
    for method in [Method::Yoshida6, Method::Split6, Method::Gauss6] {
        let mut c = cfg(2.0 * PI, 0.0, 50, method);
        c.steps_per_period = Some(1000);
        let s = section(&sys, &starts, &bounds(), &c, &Cancel::never(), &|_, _| {}).unwrap();
        for o in &s.orbits {
            assert_eq!(o.end, SectionEnd::Completed);
            assert_eq!(o.points.len(), 50);
            for pt in &o.points {
                let d = (pt[0] - o.start[0]).hypot(pt[1] - o.start[1]);
                assert!(d < 1e-11, "{method:?}: {pt:?} vs {:?}", o.start);
            }
        }
    }
}

/// q'' + δq' + q = 0 (H = p²/2 + q²/2 with damping δ): q(t) =
/// e^(−δt/2)(q₀ cos ωt + ((p₀ + δq₀/2)/ω) sin ωt), ω = √(1 − δ²/4), the
/// underdamped solution of any ODE textbook (common practice).
#[test]
fn damped_oscillator_matches_its_closed_form() {
    let sys = System::from_source("p^2/2 + q^2/2", &[]).unwrap();
    let (q0, p0, d) = (1.2, -0.4, 0.3);
    let w = (1.0 - d * d / 4.0_f64).sqrt();
    let tau = 1.7;
    for method in [Method::Yoshida6, Method::Gauss6] {
        let s = section(
            &sys,
            &[[q0, p0]],
            &bounds(),
            &cfg(tau, d, 20, method),
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap();
        for (k, pt) in s.orbits[0].points.iter().enumerate() {
            let t = tau * (k + 1) as f64;
            let b = (p0 + d * q0 / 2.0) / w;
            let e = (-d * t / 2.0).exp();
            let q = e * (q0 * (w * t).cos() + b * (w * t).sin());
            let p = -d / 2.0 * q + e * (-q0 * w * (w * t).sin() + b * w * (w * t).cos());
            assert!(
                (pt[0] - q).abs() < 1e-9 && (pt[1] - p).abs() < 1e-9,
                "{method:?} k={k}: {pt:?} vs ({q}, {p})"
            );
        }
    }
}

/// q'' + q = F cos(Wt), W = 2 (away from resonance): q(t) = A cos t + B sin t
/// + F cos(Wt)/(1 − W²) with A = q₀ − F/(1 − W²), B = p₀ (common practice).
#[test]
fn forced_oscillator_matches_its_closed_form() {
    let (f, w) = (0.4, 2.0);
    let sys = System::from_source("p^2/2 + q^2/2 - F*q*cos(W*t)", &[("F", f), ("W", w)]).unwrap();
    let (q0, p0) = (0.5, 0.25);
    let tau = 2.0 * PI / w;
    let c = f / (1.0 - w * w);
    for method in [Method::Yoshida6, Method::Split6, Method::Gauss6] {
        let s = section(
            &sys,
            &[[q0, p0]],
            &bounds(),
            &cfg(tau, 0.0, 30, method),
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap();
        for (k, pt) in s.orbits[0].points.iter().enumerate() {
            let t = tau * (k + 1) as f64;
            let (a, b) = (q0 - c, p0);
            let q = a * t.cos() + b * t.sin() + c * (w * t).cos();
            let p = -a * t.sin() + b * t.cos() - c * w * (w * t).sin();
            assert!(
                (pt[0] - q).abs() < 1e-9 && (pt[1] - p).abs() < 1e-9,
                "{method:?} k={k}: {pt:?} vs ({q}, {p})"
            );
        }
    }
}

/// Without drive and damping every point keeps the start's energy (H is
/// conserved; the symplectic method's error stays bounded).
#[test]
fn undriven_double_well_points_stay_on_their_level() {
    let sys = System::from_source("p^2/2 - q^2/2 + q^4/4", &[]).unwrap();
    let starts: Vec<[f64; 2]> = (0..12).map(|k| [0.2 + 0.12 * k as f64, 0.1]).collect();
    let mut c = cfg(2.0 * PI, 0.0, 200, Method::Auto);
    c.steps_per_period = None;
    let s = section(&sys, &starts, &bounds(), &c, &Cancel::never(), &|_, _| {}).unwrap();
    for o in &s.orbits {
        let h0 = sys.energy(o.start[0], o.start[1]);
        for pt in &o.points {
            assert!((sys.energy(pt[0], pt[1]) - h0).abs() < 1e-7, "{pt:?}");
        }
    }
}

/// The same section on one thread and on several, bit for bit.
#[test]
fn the_section_does_not_depend_on_the_thread_count() {
    let sys = System::from_source("p^2/2 - q^2/2 + q^4/4 - F*q*cos(t)", &[("F", 0.3)]).unwrap();
    let starts: Vec<[f64; 2]> = (0..40)
        .map(|k| [-1.5 + 0.075 * k as f64, 0.05 * (k % 7) as f64])
        .collect();
    let c = cfg(2.0 * PI, 0.25, 60, Method::Auto);
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| {
                section(&sys, &starts, &bounds(), &c, &Cancel::never(), &|_, _| {}).unwrap()
            })
    };
    let one = run(1);
    let many = run(4);
    assert_eq!(one, many);
}

#[test]
fn bad_requests_are_refused_with_a_message() {
    let sys = System::from_source("p^2/2 + q^2/2", &[]).unwrap();
    let e = section(
        &sys,
        &[[0.0, 1.0]],
        &bounds(),
        &cfg(0.0, 0.0, 5, Method::Auto),
        &Cancel::never(),
        &|_, _| {},
    )
    .unwrap_err();
    assert!(e.contains("period"), "{e}");
    let e = section(
        &sys,
        &[[0.0, 1.0]],
        &bounds(),
        &cfg(1.0, -1.0, 5, Method::Auto),
        &Cancel::never(),
        &|_, _| {},
    )
    .unwrap_err();
    assert!(e.contains("damping"), "{e}");
}

/// A seeded orbit of a session with a damped drive section feels the
/// damping, in figures as in the explorer (both build it through
/// `seeded_orbit_request`): the orbit of q'' + δq' + q = 0 ends on the
/// underdamped closed form (common practice).
#[test]
fn seeded_orbits_feel_the_sessions_damping() {
    use phasewright::session::{DriveSettings, SeededOrbit, Session};
    let mut s = Session::blank("p^2/2 + q^2/2");
    s.view = Window::new(-2.0, 2.0, -2.0, 2.0).unwrap();
    s.orbits.push(SeededOrbit {
        q0: 1.2,
        p0: -0.4,
        duration: 15.0,
        method: "gauss6".into(),
        colour: None,
    });
    s.drive = Some(DriveSettings {
        period: "1".into(),
        damping: Some("0.3".into()),
        enabled: true,
        ..DriveSettings::default()
    });
    s.validate().unwrap();
    assert_eq!(s.damping(), 0.3);
    let sys = s.system().unwrap();
    let data = phasewright::render::portrait_data(&s, &sys, &s.view, &Cancel::never());
    let last = data.orbits[0].samples.last().copied().unwrap();
    let (q0, p0, d) = (1.2, -0.4, 0.3);
    let w = (1.0 - d * d / 4.0_f64).sqrt();
    let t = last.t;
    let b = (p0 + d * q0 / 2.0) / w;
    let q = (-d * t / 2.0).exp() * (q0 * (w * t).cos() + b * (w * t).sin());
    assert!(t > 14.0, "ran its duration: {t}");
    assert!((last.q - q).abs() < 1e-6, "q({t}) = {} vs {q}", last.q);
}

/// The lanes (starts stepped together, `strobe_runs`) give the numbers of
/// the per-start loop (`strobe_runs_per_start`, each start alone through
/// `Integrator::step`, the stepper checked against closed forms in
/// tests/driven.rs and above) to the bit: point by point, the period count,
/// the last point and the end, for every splitting method, on driven,
/// damped, escaping and blowing-up starts, with more starts than one block.
#[test]
fn lanes_match_the_per_start_loop_to_the_bit() {
    use phasewright::core::section::{Section, Strobe, strobe_runs, strobe_runs_per_start};
    let same = |a: &Section, b: &Section, what: &str| {
        assert_eq!(a.orbits.len(), b.orbits.len(), "{what}");
        assert_eq!(a.steps_per_period, b.steps_per_period, "{what}");
        for (i, (x, y)) in a.orbits.iter().zip(&b.orbits).enumerate() {
            let bits = |v: &[[f64; 2]]| -> Vec<[u64; 2]> {
                v.iter().map(|p| [p[0].to_bits(), p[1].to_bits()]).collect()
            };
            assert_eq!(x.end, y.end, "{what}: start {i} {:?}", x.start);
            assert_eq!(x.periods_done, y.periods_done, "{what}: start {i}");
            assert_eq!(bits(&[x.last]), bits(&[y.last]), "{what}: start {i}");
            assert_eq!(bits(&x.points), bits(&y.points), "{what}: start {i}");
        }
    };
    // 150 starts: two full blocks and a part; a NaN start among them
    let mut starts: Vec<[f64; 2]> = (0..150)
        .map(|k| {
            let (i, j) = (k % 15, k / 15);
            [-2.0 + 4.0 * i as f64 / 14.0, -1.2 + 2.4 * j as f64 / 9.0]
        })
        .collect();
    starts[77] = [f64::NAN, 0.0];
    let cases: [(&str, &[(&str, f64)], f64, f64); 4] = [
        // driven double well, undamped: the starts beyond |q| = 1.6 leave
        // the box, the islands around the centers stay
        (
            "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)",
            &[("F", 0.1), ("W", 1.0)],
            0.0,
            1.6,
        ),
        // the same damped
        (
            "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)",
            &[("F", 0.4), ("W", 1.2)],
            0.15,
            1.6,
        ),
        // a kinetic term with a mass and an offset, damped and driven
        (
            "(p - 0.2)^2/(2*m) + q^2/2 - q^3/3 + F*sin(W*t)*q",
            &[("F", 0.2), ("W", 2.0), ("m", 1.3)],
            0.1,
            3.0,
        ),
        // starts beyond the barrier blow up in finite time (non-finite)
        ("p^2/2 - q^4/4 + F*q*cos(t)", &[("F", 0.1)], 0.0, 1e300),
    ];
    let methods = [
        Method::Verlet,
        Method::Yoshida4,
        Method::Nystrom4,
        Method::Nystrom6,
        Method::Split4,
        Method::Split6,
    ];
    for (formula, params, damping, half) in cases {
        let sys = System::from_source(formula, params).unwrap();
        let inside = move |x: [f64; 2]| x[0].abs() <= half && x[1].abs() <= half;
        for method in methods {
            for record in [true, false] {
                let c = SectionConfig {
                    period: 2.0 * PI / 1.1,
                    damping,
                    periods: 40,
                    method,
                    steps_per_period: Some(24),
                    t0: 0.3,
                };
                let strobe = Strobe {
                    stays: &inside,
                    record,
                };
                let quiet = |_: usize, _: usize| {};
                let lanes =
                    strobe_runs(&sys, &starts, &c, &strobe, &Cancel::never(), &quiet).unwrap();
                let alone =
                    strobe_runs_per_start(&sys, &starts, &c, &strobe, &Cancel::never(), &quiet)
                        .unwrap();
                let what = format!("{formula}, {} record {record}", method.name());
                same(&lanes, &alone, &what);
                let ends = |e: SectionEnd| lanes.orbits.iter().filter(|o| o.end == e).count();
                assert!(ends(SectionEnd::NonFinite) >= 1, "{what}: the NaN start");
                if half < 10.0 {
                    assert!(
                        ends(SectionEnd::LeftBounds) > 0,
                        "{what}: none left the box"
                    );
                    assert!(ends(SectionEnd::Completed) > 0, "{what}: none stayed");
                } else {
                    assert!(ends(SectionEnd::NonFinite) > 1, "{what}: none blew up");
                }
            }
        }
    }
}

/// A basin-like run (no points kept, a stay rule) on one thread and on
/// several: the same ends, period counts and last points, bit for bit.
#[test]
fn lane_runs_do_not_depend_on_the_thread_count() {
    use phasewright::core::section::{Strobe, strobe_runs};
    let sys = System::from_source(
        "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)",
        &[("F", 0.35), ("W", 1.0)],
    )
    .unwrap();
    let starts: Vec<[f64; 2]> = (0..30 * 30)
        .map(|k| {
            [
                -2.0 + 4.0 * (k % 30) as f64 / 29.0,
                -1.5 + 3.0 * (k / 30) as f64 / 29.0,
            ]
        })
        .collect();
    let c = SectionConfig {
        period: 2.0 * PI,
        damping: 0.1,
        periods: 30,
        method: Method::Auto,
        steps_per_period: Some(32),
        t0: 0.0,
    };
    let well = |x: [f64; 2]| x[0] > 0.0 && x[0] < 2.0 && x[1].abs() < 1.5;
    let strobe = Strobe {
        stays: &well,
        record: false,
    };
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| strobe_runs(&sys, &starts, &c, &strobe, &Cancel::never(), &|_, _| {}))
            .unwrap()
    };
    let one = run(1);
    let many = run(3);
    assert_eq!(one.method, Method::Nystrom6);
    let key = |s: &phasewright::core::section::Section| -> Vec<(SectionEnd, usize, [u64; 2])> {
        s.orbits
            .iter()
            .map(|o| {
                (
                    o.end,
                    o.periods_done,
                    [o.last[0].to_bits(), o.last[1].to_bits()],
                )
            })
            .collect()
    };
    assert_eq!(key(&one), key(&many));
    let stayed = one
        .orbits
        .iter()
        .filter(|o| o.end == SectionEnd::Completed)
        .count();
    assert!(stayed > 0 && stayed < starts.len(), "{stayed} stayed");
}
