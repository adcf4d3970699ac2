//! Numerical hazards give a clear result, never a panic, a hang or silently
//! wrong equilibria: singularities in view, overflow, H constant, an orbit that
//! reaches infinity in finite time. Checked in the core and on the command line.

use phasewright::core::Cancel;
use phasewright::core::analysis::{Analysis, AnalysisConfig, analyze};
use phasewright::core::integrate::Method;
use phasewright::core::orbit::{OrbitRequest, StopReason, integrate_orbit};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::process::Command;

fn system(src: &str) -> System {
    System::from_source(src, &[]).unwrap_or_else(|e| panic!("{src}: {e}"))
}

fn window(qmin: f64, qmax: f64, pmin: f64, pmax: f64) -> Window {
    Window::new(qmin, qmax, pmin, pmax).unwrap_or_else(|e| panic!("{e}"))
}

fn run(src: &str, w: &Window, grid: usize) -> Analysis {
    let cfg = AnalysisConfig {
        grid,
        ..AnalysisConfig::default()
    };
    analyze(&system(src), w, &cfg, &Cancel::never())
}

fn messages(a: &Analysis) -> Vec<String> {
    a.diagnostics.iter().map(|d| d.message.clone()).collect()
}

fn cli(args: &[&str]) -> (String, String, Option<i32>) {
    let out = Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
        .expect("the binary runs");
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
        out.status.code(),
    )
}

/// No level curve steps across the line q = q_pole.
fn no_curve_crosses(a: &Analysis, q_pole: f64) {
    for c in &a.curves {
        for pair in c.points.windows(2) {
            let (x0, x1) = (pair[0][0] - q_pole, pair[1][0] - q_pole);
            assert!(
                x0 * x1 > 0.0 || x0 == 0.0 && x1 == 0.0,
                "a curve of level {} crosses the pole: {:?}",
                c.level,
                pair
            );
        }
    }
}

#[test]
fn a_pole_in_view_is_blanked_and_named() {
    // 1/q: the grid of 64 points on [−2, 2] has no point at q = 0; the pole lies
    // between columns 31 and 32, which are blanked: 2 of 64 columns.
    let a = run("p^2/2 + 1/q", &window(-2.0, 2.0, -1.5, 1.5), 64);
    let m = messages(&a);
    assert!(
        m.contains(
            &"H jumps or has a pole between neighbouring grid points (first near q = 0, \
              p = -1.5); the cells there (3% of the window) are left blank so that no level \
              curve is drawn across it"
                .to_string()
        ),
        "{m:?}"
    );
    assert_eq!(a.grid.nonfinite_fraction, 2.0 / 64.0);
    // ∂H/∂q = −1/q² never vanishes: no equilibrium (closed form)
    assert!(a.equilibria.is_empty(), "{:?}", a.equilibria);
    assert!(!a.curves.is_empty());
    no_curve_crosses(&a, 0.0);
}

#[test]
fn poles_of_the_tangent_are_blanked_and_no_curve_crosses_them() {
    let a = run("p^2/2 + tan(q)", &window(-2.0, 2.0, -1.0, 1.0), 101);
    assert!(
        messages(&a)
            .iter()
            .any(|m| m.starts_with("H jumps or has a pole")),
        "{:?}",
        messages(&a)
    );
    // sec² q > 0: tan has no critical point, so there is no equilibrium (closed form)
    assert!(a.equilibria.is_empty(), "{:?}", a.equilibria);
    no_curve_crosses(&a, std::f64::consts::FRAC_PI_2);
    no_curve_crosses(&a, -std::f64::consts::FRAC_PI_2);
}

#[test]
fn no_equilibrium_is_reported_at_a_singular_point() {
    // Windows whose seed lattice and grid put a point on the pole or a hair from it.
    for (src, qmin, qmax) in [
        ("p^2/2 + 1/q", -2.0, 2.0),
        ("p^2/2 + 1/q", -1.9999999999, 2.0000000001),
        ("p^2/2 + 1/q^2", -2.0, 2.0),
        ("p^2/2 - 1/abs(q)", -1.9999999999, 2.0000000001),
        ("p^2/2 + q/(q^2 - 1e-20)", -2.0, 2.0),
        ("p^2/2 + ln(abs(q))", -2.0, 2.0),
    ] {
        let a = run(src, &window(qmin, qmax, -1.0, 1.0), 64);
        // none of these has a critical point: the q-derivative is ±1/q^k ≠ 0 (closed form)
        assert!(a.equilibria.is_empty(), "{src}: {:?}", a.equilibria);
    }
    // 1/q³ + q has critical points where 3/q⁴ = 1, q = ±3^(1/4) (closed form),
    // and none at the pole
    let a = run("p^2/2 + 1/q^3 + q", &window(-2.0, 2.0, -1.0, 1.0), 64);
    let qs: Vec<f64> = a.equilibria.iter().map(|e| e.q).collect();
    let root = 3f64.powf(0.25);
    assert_eq!(qs.len(), 2, "{qs:?}");
    assert!(
        (qs[0] + root).abs() < 1e-9 && (qs[1] - root).abs() < 1e-9,
        "{qs:?}"
    );
}

#[test]
fn logarithm_and_root_of_negative_values_leave_half_the_window_blank() {
    // ln q and √q are undefined for q < 0 (common practice); on [−1, 1] with 64
    // columns the 32 left of zero are NaN
    for src in ["p^2/2 + ln(q)", "p^2/2 + sqrt(q)"] {
        let a = run(src, &window(-1.0, 1.0, -1.0, 1.0), 64);
        assert_eq!(a.grid.nonfinite_fraction, 0.5, "{src}");
        let m = messages(&a);
        assert!(
            m.contains(
                &"H is NaN or infinite on 50% of the window; those cells are left blank"
                    .to_string()
            ),
            "{src}: {m:?}"
        );
        assert!(!a.curves.is_empty());
        for c in &a.curves {
            assert!(
                c.points.iter().all(|p| p[0] >= 0.0),
                "{src}: a curve in q < 0"
            );
        }
    }
}

#[test]
fn overflow_leaves_cells_blank_and_keeps_the_one_true_equilibrium() {
    // exp(q⁴) overflows where q⁴ > ln(f64::MAX) = 709.78… (IEEE 754 double range)
    let n = 64;
    let a = run("p^2/2 + exp(q^4)", &window(-6.0, 6.0, -3.0, 3.0), n);
    let limit = f64::MAX.ln().powf(0.25);
    let over = (0..n)
        .filter(|&i| (-6.0 + 12.0 * i as f64 / (n - 1) as f64).abs() > limit)
        .count();
    assert_eq!(a.grid.nonfinite_fraction, over as f64 / n as f64);
    let pct = (100.0 * over as f64 / n as f64).round();
    let m = messages(&a);
    assert!(
        m.contains(&format!(
            "H is NaN or infinite on {pct}% of the window; those cells are left blank"
        )),
        "{m:?}"
    );
    // ∇H = (4q³ e^{q⁴}, p) vanishes only at the origin (closed form)
    assert_eq!(a.equilibria.len(), 1, "{:?}", a.equilibria);
    let e = &a.equilibria[0];
    assert!(e.q.abs() < 1e-6 && e.p.abs() < 1e-12, "{e:?}");
}

#[test]
fn constant_h_gives_one_clear_message_and_no_equilibria() {
    let w = window(-5.0, 5.0, -3.0, 3.0);
    let a = run("3", &w, 64);
    assert_eq!(
        messages(&a),
        vec![
            "H is constant in view (H = 3): every point is an equilibrium, so none is listed, \
             and there are no level curves to draw"
                .to_string()
        ]
    );
    assert!(a.equilibria.is_empty() && a.curves.is_empty() && a.wells.is_empty());
    // cosh² − sinh² = 1 (identity), computed with rounding noise of order
    // ε·cosh²(5) ≈ 1e-12: still constant, and no equilibria spam
    for src in ["cosh(q)^2 - sinh(q)^2", "(q+p)^2 - q^2 - 2*q*p - p^2"] {
        let a = run(src, &w, 64);
        let m = messages(&a);
        assert_eq!(m.len(), 1, "{src}: {m:?}");
        assert!(
            m[0].starts_with("H is constant in view (H = ")
                && m[0].contains(" up to rounding): every point is an equilibrium"),
            "{src}: {m:?}"
        );
        assert!(a.equilibria.is_empty() && a.curves.is_empty(), "{src}");
    }
    // a tiny but genuine H is not mistaken for a constant: 1e-30·(q² + p²) has level curves
    let tiny = run("1e-30*(q^2 + p^2)", &w, 64);
    assert!(!tiny.curves.is_empty(), "{:?}", messages(&tiny));
}

/// Time for H = p²/2 − q⁴ to carry q from `q0` to `q1` at energy `e`:
/// ∫ dq / √(2(e + q⁴)) (energy conservation, q̇ = p), by composite Simpson.
fn travel_time(e: f64, q0: f64, q1: f64) -> f64 {
    let n = 20_000;
    let h = (q1 - q0) / n as f64;
    let f = |q: f64| 1.0 / (2.0 * (e + q.powi(4))).sqrt();
    let mut s = f(q0) + f(q1);
    for k in 1..n {
        s += f(q0 + k as f64 * h) * if k % 2 == 1 { 4.0 } else { 2.0 };
    }
    s * h / 3.0
}

#[test]
fn an_orbit_that_reaches_infinity_in_finite_time_stops_with_a_reason() {
    // H = p²/2 − q⁴ from (0.5, 1): q runs to infinity at a finite time
    let sys = system("p^2/2 - q^4");
    let view = window(-2.0, 2.0, -2.0, 2.0);
    let e = 0.5 - 0.0625;
    for method in [Method::Auto, Method::Verlet, Method::Gauss4, Method::Dopri5] {
        let mut req = OrbitRequest::new(0.5, 1.0, 10.0, &view);
        req.method = method;
        let o = integrate_orbit(&sys, &req, &Cancel::never());
        // the orbit leaves the bounds where q reaches qmax or p = √(2(E + q⁴))
        // reaches pmax, whichever comes first
        let (qmax, pmax) = (req.bounds.qmax, req.bounds.pmax);
        let q_exit = qmax.min((0.5 * pmax * pmax - e).powf(0.25));
        match &o.stop {
            StopReason::LeftBounds { t, .. } => {
                // after the travel time to the exit point, up to one step
                let want = travel_time(e, 0.5, q_exit);
                assert!(
                    (t - want).abs() < 0.02 * want,
                    "{method:?}: left at t = {t}, travel time {want}"
                );
                assert!(o.stop.message().starts_with("left the bounds at t = "));
            }
            StopReason::NonFinite { .. } | StopReason::SolverFailed { .. } => {}
            other => panic!("{method:?}: stopped by {other:?}"),
        }
        assert!(!o.stop.message().is_empty());
    }
}

#[test]
fn command_line_shows_the_hazard_messages() {
    let (out, _, code) = cli(&["analyze", "--formula", "p^2/2 + 1/q"]);
    assert_eq!(code, Some(0));
    assert!(
        out.contains("Warning: H jumps or has a pole between neighbouring grid points"),
        "{out}"
    );
    let (out, _, code) = cli(&["analyze", "--formula", "3"]);
    assert_eq!(code, Some(0));
    assert!(
        out.contains(
            "Info: H is constant in view (H = 3): every point is an equilibrium, so none is \
             listed, and there are no level curves to draw"
        ),
        "{out}"
    );
    let (out, _, code) = cli(&[
        "analyze",
        "--formula",
        "p^2/2 + exp(q^4)",
        "--window=-6,6,-3,3",
    ]);
    assert_eq!(code, Some(0));
    assert!(
        out.contains("Warning: H is NaN or infinite on 14% of the window"),
        "{out}"
    );
    let (out, _, code) = cli(&[
        "orbit",
        "--formula",
        "p^2/2 - q^4",
        "--q0",
        "0.5",
        "--p0",
        "1",
        "--duration",
        "10",
    ]);
    assert_eq!(code, Some(0));
    assert!(
        out.contains("stopped            left the bounds at t = 0.74"),
        "{out}"
    );
    let (_, err, code) = cli(&["analyze", "--formula", "p^2/2 + 1e400*q"]);
    assert_eq!(code, Some(2));
    assert_eq!(
        err.trim(),
        "phasewright: --formula: the number 1e400 is too large to represent (the largest is \
         about 1.8e308) at column 9"
    );
}
