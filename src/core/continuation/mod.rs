//! One-parameter continuation of equilibria: the branches of solutions of
//! ∇H(q, p; μ) = 0 as μ moves, their saddle-node points and branch points
//! (pitchfork, transcritical), with every branch traced once.
//!
//! # Pseudo-arclength continuation
//!
//! The equilibria form curves in (q, p, μ). Each curve is followed by
//! predictor–corrector steps: the tangent is the null vector of the exact
//! extended Jacobian ∂∇H/∂(q, p, μ) (rows of the 3×3 Hessian from
//! [`System::param_jet`]), the predictor steps along it, and Newton's method
//! corrects on the hyperplane orthogonal to the tangent. Coordinates are scaled
//! so that the window and the sweep range are both of unit size; the step
//! grows after easy corrections and halves after failed ones or sharp turns.
//!
//! A saddle-node shows as a sign change of the tangent's μ-component without a
//! sign change of det [J; tᵀ]; it is located by Newton on the extended system
//! ∇H = 0, det Hess H = 0 with μ free (third derivatives from
//! [`System::third_jet`]). A branch point shows as a sign change of
//! det [J; tᵀ]; it is located by a bracketing root search on that determinant
//! along the branch, and the branches through it come from the roots of the
//! quadratic form ψᵀ D²F[t, t] on the two-dimensional null space. A branch
//! point where one branch is tangent to μ = const is a pitchfork, otherwise it
//! is transcritical.
//!
//! Branches start from the equilibria in view at both ends of the range and
//! then from those at three values inside it that lie on no traced branch
//! (a seed is on a branch when a traced chord crosses its μ and the curve's
//! point there is the seed): a curve that reaches neither end, such as the
//! isola q² + μ² = a² of V' = q² + μ² − a², is traced from its interior seed
//! both ways, or once around when it closes.
//!
//! Reference: E. L. Allgower and K. Georg, *Introduction to Numerical
//! Continuation Methods* (SIAM 2003), ch. 2 (predictor–corrector), ch. 8
//! (detection of bifurcation points, branch switching); H. B. Keller, "Numerical
//! solution of bifurcation and nonlinear eigenvalue problems", in *Applications
//! of Bifurcation Theory* (Academic Press 1977), pp. 359–384.
//!
//! The parts: [`engine`] is the general pseudo-arclength engine for a curve
//! in Rᴺ given by N − 1 equations (tangent, corrector, step control, the
//! walk's budget, exits from a box, bracketing); `sweep` traces the curve
//! of equilibria ∇H = 0 as one parameter moves with it. Fold curves
//! ([`super::folds`]) are another curve on the same engine.

pub mod engine;
mod sweep;

pub use engine::CORRECTOR_TOL;
pub use sweep::{sweep, sweep_index};

use super::Diagnostic;
use super::equilibria::{EquilibriumConfig, EquilibriumKind};
use std::fmt;

/// How continuation steps are taken; lengths are in scaled units where the
/// window and the parameter range have size 1.
#[derive(Clone, Debug, PartialEq)]
pub struct StepConfig {
    /// First step length (default 0.005).
    pub initial: f64,
    /// Longest step (default 0.02: about fifty points across the range).
    pub max: f64,
    /// Shortest step before giving up on a branch (default 1e-9).
    pub min: f64,
    /// Newton iterations per correction (default 10).
    pub max_corrector: usize,
    /// Largest angle between successive tangents, in radians (default 0.3).
    pub max_turn: f64,
}

impl Default for StepConfig {
    fn default() -> Self {
        StepConfig {
            initial: 0.005,
            max: 0.02,
            min: 1e-9,
            max_corrector: 10,
            max_turn: 0.3,
        }
    }
}

impl StepConfig {
    /// Reject steps that are not finite, not positive, or out of order.
    pub fn validate(&self) -> Result<(), ContinuationError> {
        let bad = |what: &str| Err(ContinuationError::BadConfig(what.to_string()));
        if !(self.min.is_finite() && self.min > 0.0) {
            return bad("the shortest step must be a positive number");
        }
        if !(self.max.is_finite() && self.max >= self.min) {
            return bad("the longest step must be finite and at least the shortest step");
        }
        if !(self.initial.is_finite() && self.initial >= self.min && self.initial <= self.max) {
            return bad("the first step must lie between the shortest and the longest step");
        }
        if self.max_corrector == 0 {
            return bad("the corrector needs at least one Newton iteration");
        }
        if !(self.max_turn.is_finite() && self.max_turn > 0.0) {
            return bad("the largest turn per step must be a positive angle");
        }
        Ok(())
    }
}

/// Settings of a one-parameter sweep.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepConfig {
    pub step: StepConfig,
    /// Continuation steps over all branches together (default 20 000).
    pub max_steps: usize,
    /// The equilibrium search that seeds the branches (at both ends and inside the range).
    pub equilibria: EquilibriumConfig,
}

impl Default for SweepConfig {
    fn default() -> Self {
        SweepConfig {
            step: StepConfig::default(),
            max_steps: 20_000,
            equilibria: EquilibriumConfig::default(),
        }
    }
}

/// Why a continuation could not start.
#[derive(Clone, Debug, PartialEq)]
pub enum ContinuationError {
    /// The formula has no parameter of this name.
    UnknownParameter {
        name: String,
        available: Vec<String>,
    },
    /// The parameter range is empty or not finite.
    BadRange { from: f64, to: f64 },
    /// A setting is out of range.
    BadConfig(String),
}

impl fmt::Display for ContinuationError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ContinuationError::UnknownParameter { name, available } => {
                if available.is_empty() {
                    write!(
                        f,
                        "the formula has no parameter '{name}' (it has no parameters at all)"
                    )
                } else {
                    write!(
                        f,
                        "the formula has no parameter '{name}'; its parameters are {}",
                        available.join(", ")
                    )
                }
            }
            ContinuationError::BadRange { from, to } => {
                write!(
                    f,
                    "the parameter range {from} .. {to} must be two different finite numbers"
                )
            }
            ContinuationError::BadConfig(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for ContinuationError {}

/// The kind of a bifurcation point.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BifurcationKind {
    /// Two equilibria meet and vanish (a fold of the branch in μ).
    SaddleNode,
    /// One branch meets another that lies on one side of μ = μ* (symmetric splitting).
    Pitchfork,
    /// Two branches cross transversally and exchange type.
    Transcritical,
}

impl BifurcationKind {
    pub fn name(self) -> &'static str {
        match self {
            BifurcationKind::SaddleNode => "saddle-node",
            BifurcationKind::Pitchfork => "pitchfork",
            BifurcationKind::Transcritical => "transcritical",
        }
    }
}

/// One equilibrium on a branch.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct BranchPoint {
    /// The parameter's value.
    pub param: f64,
    pub q: f64,
    pub p: f64,
    pub energy: f64,
    pub kind: EquilibriumKind,
}

/// A piece of a solution curve between two ends (a sweep boundary, the window's
/// edge, or a bifurcation point). Its interior equilibria share one kind.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Branch {
    /// The kind of the interior equilibria.
    pub kind: EquilibriumKind,
    pub points: Vec<BranchPoint>,
}

/// A located bifurcation point.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Bifurcation {
    pub param: f64,
    pub q: f64,
    pub p: f64,
    pub energy: f64,
    pub kind: BifurcationKind,
}

/// Everything a one-parameter sweep found.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Sweep {
    pub param: String,
    pub from: f64,
    pub to: f64,
    pub branches: Vec<Branch>,
    pub bifurcations: Vec<Bifurcation>,
    pub diagnostics: Vec<Diagnostic>,
    /// Continuation steps taken.
    pub steps: usize,
    /// True when the cancel flag stopped the sweep early (results partial).
    pub cancelled: bool,
}

/// How far a sweep has got (sent after every accepted step).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct SweepProgress {
    pub steps: usize,
    pub max_steps: usize,
    pub branches: usize,
}
