//! Equilibria of H in a window: grid seeds, damped Newton with the exact
//! Hessian, deduplication, and classification by the Jacobian's eigenvalues.

use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};

/// The type of an equilibrium.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum EquilibriumKind {
    /// det J > 0: eigenvalues ±iω.
    Center,
    /// det J < 0: eigenvalues ±λ.
    Saddle,
    /// |det J| below tolerance: the linearisation does not decide.
    Degenerate,
}

/// What higher order says about a degenerate equilibrium.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DegenerateShape {
    /// H has a strict local extremum there: orbits nearby are closed.
    NonlinearCenter,
    /// H has no strict extremum there (e.g. a cusp, p²/2 + q³/3 at 0).
    NoExtremum,
}

/// One equilibrium (critical point of H).
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Equilibrium {
    pub q: f64,
    pub p: f64,
    /// H at the equilibrium.
    pub energy: f64,
    pub kind: EquilibriumKind,
    /// The two eigenvalues of the Jacobian as [re, im].
    pub eigenvalues: [[f64; 2]; 2],
    /// det of the Hessian of H (= det J).
    pub hessian_det: f64,
    /// Centers: the small-oscillation angular frequency ω.
    pub omega: Option<f64>,
    /// Centers: the small-oscillation period 2π/ω.
    pub small_period: Option<f64>,
    /// Saddles: the real eigenvalue λ > 0.
    pub lambda: Option<f64>,
    /// Saddles: unit eigenvector of −λ.
    pub stable_dir: Option<[f64; 2]>,
    /// Saddles: unit eigenvector of +λ.
    pub unstable_dir: Option<[f64; 2]>,
    /// Degenerate ones: what higher order says.
    pub degenerate: Option<DegenerateShape>,
}

/// Settings for the search; tolerances are relative to the window and H's scale.
#[derive(Clone, Debug, PartialEq)]
pub struct EquilibriumConfig {
    /// Seed cells per side.
    pub seeds: usize,
    /// Newton iterations per seed.
    pub max_newton: usize,
}

impl Default for EquilibriumConfig {
    fn default() -> Self {
        EquilibriumConfig {
            seeds: 48,
            max_newton: 60,
        }
    }
}

/// All equilibria inside `window`, sorted by q then p, with diagnostics.
pub fn find_equilibria(
    sys: &System,
    window: &Window,
    cfg: &EquilibriumConfig,
    cancel: &Cancel,
) -> (Vec<Equilibrium>, Vec<Diagnostic>) {
    let _ = (sys, window, cfg, cancel);
    (Vec::new(), Vec::new())
}

/// Classify a point already known to be an equilibrium.
pub fn classify(sys: &System, q: f64, p: f64, window: &Window) -> Equilibrium {
    let j = sys.jet(q, p);
    let _ = window;
    Equilibrium {
        q,
        p,
        energy: j.h,
        kind: EquilibriumKind::Degenerate,
        eigenvalues: [[0.0, 0.0], [0.0, 0.0]],
        hessian_det: j.hessian_det(),
        omega: None,
        small_period: None,
        lambda: None,
        stable_dir: None,
        unstable_dir: None,
        degenerate: None,
    }
}
