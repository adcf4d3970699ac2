//! The explorer's view of one integrated orbit: the core's result reduced to
//! what the plot and the orbit table show. The integration itself is the
//! core's; this file only builds the request and copies fields.

use crate::core::Cancel;
use crate::core::orbit::{StopReason, integrate_orbit};
use crate::core::system::System;
use crate::core::window::Window;
use crate::session::SeededOrbit;

/// One orbit as the explorer shows it.
#[derive(Clone, Debug, PartialEq)]
pub struct OrbitOutcome {
    /// Vertices as [q, p].
    pub samples: Vec<[f64; 2]>,
    pub energy: f64,
    pub period: Option<f64>,
    pub action: Option<f64>,
    /// Angular frequency 2π / period.
    pub frequency: Option<f64>,
    /// Largest |H − H₀| relative to the energy scale.
    pub relative_energy_error: Option<f64>,
    /// Why integration ended, in words.
    pub stop: String,
    /// True when the orbit ended for a reason worth pointing out.
    pub stopped_early: bool,
    /// True when the orbit stopped at the bounds around the view it was
    /// integrated for, so a different view needs it integrated again.
    pub view_bound: bool,
}

/// The method names the orbit editor offers.
pub const METHODS: &[&str] = &crate::session::ORBIT_METHODS;

/// Integrate one seeded orbit with the core's integrator, from the request
/// `crate::request::seeded_orbit_request` builds (the one figures use too).
pub fn integrate(
    sys: &System,
    seeded: &SeededOrbit,
    window: &Window,
    damping: f64,
    cancel: &Cancel,
) -> OrbitOutcome {
    let req = match crate::request::seeded_orbit_request(seeded, window, damping) {
        Ok(r) => r,
        Err(why) => return refused(sys, seeded, why),
    };
    let orbit = integrate_orbit(sys, &req, cancel);
    let stopped_early = !matches!(orbit.stop, StopReason::Finished | StopReason::Closed);
    OrbitOutcome {
        samples: orbit.samples.iter().map(|s| [s.q, s.p]).collect(),
        energy: orbit.energy,
        period: orbit.period,
        action: orbit.action,
        frequency: orbit.frequency,
        relative_energy_error: orbit
            .relative_energy_error
            .is_finite()
            .then_some(orbit.relative_energy_error),
        stop: orbit.stop.message(),
        stopped_early,
        view_bound: matches!(orbit.stop, StopReason::LeftBounds { .. }),
    }
}

fn refused(sys: &System, seeded: &SeededOrbit, why: String) -> OrbitOutcome {
    OrbitOutcome {
        samples: vec![[seeded.q0, seeded.p0]],
        energy: sys.energy(seeded.q0, seeded.p0),
        period: None,
        action: None,
        frequency: None,
        relative_energy_error: None,
        stop: why,
        stopped_early: true,
        view_bound: false,
    }
}
