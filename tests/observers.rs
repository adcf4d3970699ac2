//! The stroboscopic observer of an orbit against the closed form of the
//! harmonic oscillator.

use phasewright::core::Cancel;
use phasewright::core::integrate::Method;
use phasewright::core::orbit::{OrbitRequest, integrate_orbit};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

/// Periods sampled.
const PERIODS: f64 = 50.0;
/// The first strobe points must equal the start to this distance (closed form).
const STROBE_TOLERANCE: f64 = 1e-12;
/// ... for the first this many periods; later the rounding of ~10⁴ steps adds
/// up (measured, not a reference: below 1e-12 · k² over 50 periods).
const EXACT_PERIODS: usize = 3;

fn request(q0: f64, p0: f64, method: Method) -> OrbitRequest {
    let view = Window::new(-2.0, 2.0, -2.0, 2.0).unwrap();
    // Half a period past the last sampling time, so the end is no sampling time.
    let mut req = OrbitRequest::new(q0, p0, (PERIODS + 0.5) * 2.0 * PI, &view);
    req.method = method;
    req.step = Some(2.0 * PI / 200.0);
    req
}

#[test]
fn harmonic_strobe_every_period_returns_to_the_start() {
    let sys = System::from_source("(p^2 + q^2)/2", &[]).unwrap();
    for method in [Method::Nystrom6, Method::Gauss6] {
        for (q0, p0) in [(1.0, 0.0), (0.3, -0.7)] {
            let mut req = request(q0, p0, method);
            req.strobe = Some(2.0 * PI);
            let o = integrate_orbit(&sys, &req, &Cancel::never());
            // Closed form: q(t) = q0 cos t + p0 sin t, p(t) = p0 cos t − q0 sin t,
            // so the flow has period 2π and every sample at 2πk is the start.
            assert_eq!(
                o.strobe_points.len(),
                PERIODS as usize,
                "{method} ({q0}, {p0})"
            );
            for (k, pt) in o.strobe_points.iter().enumerate() {
                let d = (pt[0] - q0).hypot(pt[1] - p0);
                let k = k + 1;
                let allowed = if k <= EXACT_PERIODS {
                    STROBE_TOLERANCE
                } else {
                    STROBE_TOLERANCE * (k * k) as f64
                };
                assert!(d < allowed, "{method} ({q0}, {p0}) k = {k}: off by {d:e}");
            }
            // The rest of the result is the orbit's own: period 2π (closed form).
            let period = o.period.expect("a period");
            assert!(
                (period - 2.0 * PI).abs() < 1e-10,
                "{method}: period {period}"
            );
        }
    }
}

#[test]
fn a_strobe_that_never_fires_leaves_the_orbit_unchanged() {
    let sys = System::from_source("(p^2 + q^2)/2", &[]).unwrap();
    let plain = integrate_orbit(&sys, &request(0.3, -0.7, Method::Gauss6), &Cancel::never());
    let mut req = request(0.3, -0.7, Method::Gauss6);
    req.strobe = Some(1e3);
    let strobed = integrate_orbit(&sys, &req, &Cancel::never());
    assert!(strobed.strobe_points.is_empty());
    assert_eq!(plain, strobed);
}

#[test]
fn a_bad_strobe_period_is_refused() {
    let sys = System::from_source("(p^2 + q^2)/2", &[]).unwrap();
    for tau in [0.0, -1.0, f64::NAN] {
        let mut req = request(1.0, 0.0, Method::Gauss6);
        req.strobe = Some(tau);
        let o = integrate_orbit(&sys, &req, &Cancel::never());
        assert_eq!(o.stop.name(), "invalid-request", "strobe {tau}");
        assert!(o.stop.message().contains("strobe"));
    }
}
