//! Time steppers for Hamilton's equations with an optional linear damping
//! rate δ ≥ 0: q' = ∂H/∂p, p' = −∂H/∂q − δ ∂H/∂p, for H(q, p, t).
//!
//! One file per method family: [`splitting`] (explicit splitting methods for
//! separable H = T(p) + V(q, t): Störmer–Verlet, Yoshida's compositions, the
//! optimised partitioned and Nyström splittings; time advanced with the
//! drifts, damping solved exactly in the drifts, so they stay conformally
//! symplectic), [`gauss`] (implicit Gauss–Legendre collocation for any
//! H(q, p, t), stages at their own times, on the damped field) and [`dopri`]
//! (an adaptive embedded Runge–Kutta pair with dense output, damped field,
//! not symplectic). The [`Integrator`] holds the chosen method, the damping
//! ([`Integrator::with_damping`]; [`Integrator::new`] is δ = 0) and its work
//! counters; each step also returns ∫ p dq over the step, integrated with the
//! same method, so the orbit code gets the action without a second pass.

pub mod dopri;
pub mod gauss;
pub mod splitting;

use super::system::System;
use std::fmt;

/// A point of phase space at a time.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct State {
    pub q: f64,
    pub p: f64,
    pub t: f64,
}

impl State {
    pub fn is_finite(&self) -> bool {
        self.q.is_finite() && self.p.is_finite() && self.t.is_finite()
    }
}

/// The integration methods, with the stable names used in session files and on
/// the command line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// For H = T(p) + V(q, t) with T free of t: the 6th-order Nyström
    /// splitting when T is quadratic in p, else the 6th-order partitioned
    /// splitting (Gauss–Legendre with damping); Gauss–Legendre with 3 stages
    /// for any other H. See [`Method::resolve_damped`].
    Auto,
    /// Störmer–Verlet, order 2, explicit, H = T(p) + V(q, t) only.
    Verlet,
    /// Yoshida's 4th-order composition of Störmer–Verlet, H = T(p) + V(q, t) only.
    Yoshida4,
    /// Yoshida's 6th-order composition (solution A), H = T(p) + V(q, t) only.
    Yoshida6,
    /// Optimised Runge–Kutta–Nyström splitting, order 4, 6 stages;
    /// H = T(p) + V(q, t) with T quadratic in p.
    Nystrom4,
    /// Optimised Runge–Kutta–Nyström splitting, order 6, 11 stages;
    /// H = T(p) + V(q, t) with T quadratic in p.
    Nystrom6,
    /// Optimised partitioned splitting, order 4, 6 stages; H = T(p) + V(q, t)
    /// (with damping: T quadratic in p).
    Split4,
    /// Optimised partitioned splitting, order 6, 10 stages; H = T(p) + V(q, t)
    /// (with damping: T quadratic in p).
    Split6,
    /// Implicit midpoint rule (Gauss–Legendre, 1 stage), order 2, any H.
    Midpoint,
    /// Gauss–Legendre collocation with 2 stages, order 4, any H.
    Gauss4,
    /// Gauss–Legendre collocation with 3 stages, order 6, any H.
    Gauss6,
    /// Dormand–Prince 5(4), adaptive, with dense output; not symplectic.
    #[serde(rename = "dormand-prince", alias = "dopri5")]
    Dopri5,
}

/// A method name that is not one of [`Method::ALL`].
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct UnknownMethod(pub String);

impl fmt::Display for UnknownMethod {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "unknown integration method '{}'; valid names: {}",
            self.0,
            Method::names().join(", ")
        )
    }
}

impl std::error::Error for UnknownMethod {}

impl Method {
    pub const ALL: [Method; 12] = [
        Method::Auto,
        Method::Verlet,
        Method::Yoshida4,
        Method::Yoshida6,
        Method::Nystrom4,
        Method::Nystrom6,
        Method::Split4,
        Method::Split6,
        Method::Midpoint,
        Method::Gauss4,
        Method::Gauss6,
        Method::Dopri5,
    ];

    /// The stable name ("auto", "verlet", "yoshida4", "yoshida6", "nystrom4",
    /// "nystrom6", "split4", "split6", "midpoint", "gauss4", "gauss6",
    /// "dormand-prince"). Older spellings are read through [`Method::ALIASES`].
    pub const fn name(self) -> &'static str {
        match self {
            Method::Auto => "auto",
            Method::Verlet => "verlet",
            Method::Yoshida4 => "yoshida4",
            Method::Yoshida6 => "yoshida6",
            Method::Nystrom4 => "nystrom4",
            Method::Nystrom6 => "nystrom6",
            Method::Split4 => "split4",
            Method::Split6 => "split6",
            Method::Midpoint => "midpoint",
            Method::Gauss4 => "gauss4",
            Method::Gauss6 => "gauss6",
            Method::Dopri5 => "dormand-prince",
        }
    }

    /// Older names still accepted when reading files and flags.
    pub const ALIASES: [(&'static str, Method); 1] = [("dopri5", Method::Dopri5)];

    /// Every stable name, in the order of [`Method::ALL`].
    pub const NAMES: [&'static str; Method::ALL.len()] = {
        let mut out = [""; Method::ALL.len()];
        let mut i = 0;
        while i < out.len() {
            out[i] = Method::ALL[i].name();
            i += 1;
        }
        out
    };

    pub fn names() -> Vec<&'static str> {
        Method::ALL.iter().map(|m| m.name()).collect()
    }

    /// The method with this stable name (case and surrounding blanks ignored).
    pub fn from_name(name: &str) -> Result<Method, UnknownMethod> {
        let key = name.trim().to_ascii_lowercase();
        Method::ALL
            .iter()
            .copied()
            .find(|m| m.name() == key)
            .or_else(|| {
                Method::ALIASES
                    .iter()
                    .find(|(alias, _)| *alias == key)
                    .map(|&(_, m)| m)
            })
            .ok_or_else(|| UnknownMethod(name.to_string()))
    }

    /// The concrete method `Auto` stands for with this system and no damping;
    /// other methods are returned unchanged. See [`Method::resolve_damped`].
    pub fn resolve(self, sys: &System) -> Method {
        self.resolve_damped(sys, 0.0)
    }

    /// The concrete method `Auto` stands for with this system and linear
    /// damping rate `damping`: for H = T(p) + V(q, t) with T free of t, the
    /// 6th-order Nyström splitting when T is quadratic in p, else (undamped
    /// only) the 6th-order partitioned splitting; Gauss–Legendre with 3
    /// stages for every other H, and for damping with T not quadratic in p.
    /// Other methods are returned unchanged.
    pub fn resolve_damped(self, sys: &System, damping: f64) -> Method {
        match self {
            Method::Auto if splits(sys) => {
                if kinetic_is_quadratic(sys) {
                    Method::Nystrom6
                } else if damping == 0.0 {
                    Method::Split6
                } else {
                    Method::Gauss6
                }
            }
            Method::Auto => Method::Gauss6,
            m => m,
        }
    }

    /// Classical order of accuracy (`Auto`: the order of what it resolves to;
    /// the Nyström methods have it when T is quadratic in p).
    pub fn order(self) -> u32 {
        match self {
            Method::Verlet | Method::Midpoint => 2,
            Method::Yoshida4 | Method::Nystrom4 | Method::Split4 | Method::Gauss4 => 4,
            Method::Auto
            | Method::Yoshida6
            | Method::Nystrom6
            | Method::Split6
            | Method::Gauss6 => 6,
            Method::Dopri5 => 5,
        }
    }

    pub fn is_symplectic(self) -> bool {
        !matches!(self, Method::Dopri5)
    }

    /// True for the explicit splitting methods, which need H = T(p) + V(q, t)
    /// with T free of t (and, with damping, T quadratic in p).
    pub fn needs_separable(self) -> bool {
        matches!(
            self,
            Method::Verlet
                | Method::Yoshida4
                | Method::Yoshida6
                | Method::Nystrom4
                | Method::Nystrom6
                | Method::Split4
                | Method::Split6
        )
    }

    /// True for the Nyström splittings, which also need T quadratic in p.
    pub fn needs_quadratic_kinetic(self) -> bool {
        matches!(self, Method::Nystrom4 | Method::Nystrom6)
    }

    pub fn is_adaptive(self) -> bool {
        matches!(self, Method::Dopri5)
    }

    /// Default number of steps per local oscillation period 2π/ω (see
    /// `orbit::default_step`): enough for a period to about 1e-10 relative on
    /// smooth orbits with the high-order methods; the order-2 methods are far
    /// less accurate at the same cost. For `Dopri5` this only sets the first
    /// trial step.
    pub fn default_steps_per_period(self) -> f64 {
        match self {
            Method::Verlet | Method::Midpoint => 2000.0,
            Method::Yoshida4 => 2000.0,
            Method::Yoshida6 => 300.0,
            Method::Nystrom4 | Method::Split4 => 400.0,
            Method::Auto | Method::Nystrom6 | Method::Split6 => 120.0,
            Method::Gauss4 => 600.0,
            Method::Gauss6 => 120.0,
            Method::Dopri5 => 100.0,
        }
    }
}

impl fmt::Display for Method {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// True when H = T(p) + V(q, t) with T free of t: the explicit splittings
/// apply (in extended phase space when V depends on t).
pub fn splits(sys: &System) -> bool {
    sys.is_separable() && !kinetic_depends_on_time(sys)
}

/// True when ∂H/∂p reads t (a kinetic part that changes with time).
fn kinetic_depends_on_time(sys: &System) -> bool {
    sys.depends_on_time()
        && sys
            .formula()
            .derivative_program(crate::core::formula::SLOT_P, sys.params())
            .reads(crate::core::formula::SLOT_T)
}

/// True when ∂H/∂p is affine in p (T quadratic in p), read from the
/// derivative program's structure.
pub fn kinetic_is_quadratic(sys: &System) -> bool {
    sys.formula()
        .derivative_program(crate::core::formula::SLOT_P, sys.params())
        .is_affine_in(crate::core::formula::SLOT_P)
}

/// Why a step could not be taken.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum StepError {
    /// The stage equations of an implicit method did not converge.
    SolverFailed {
        t: f64,
        iterations: u32,
        increment: f64,
    },
    /// H or its derivatives were NaN or infinite at a point the step needed.
    NonFinite { t: f64 },
    /// The adaptive method could not meet its tolerance without shrinking the
    /// step below what the time can resolve.
    StepTooSmall { t: f64, step: f64 },
}

impl fmt::Display for StepError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            StepError::SolverFailed {
                t,
                iterations,
                increment,
            } => write!(
                f,
                "the implicit stage equations did not converge at t = {t} ({iterations} Newton iterations, last increment {increment:e}); try a smaller step"
            ),
            StepError::NonFinite { t } => {
                write!(f, "H or its derivatives are not finite near t = {t}")
            }
            StepError::StepTooSmall { t, step } => write!(
                f,
                "the adaptive step fell to {step:e} at t = {t}: the tolerance cannot be met there"
            ),
        }
    }
}

impl std::error::Error for StepError {}

/// Why an integrator could not be set up.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum IntegratorError {
    /// An explicit composition was asked for a formula that mixes q and p.
    NotSeparable(Method),
    /// An explicit composition was asked for a kinetic part that depends on t.
    KineticDependsOnTime(Method),
    /// A Nyström splitting was asked for a kinetic part that is not quadratic in p.
    KineticNotQuadratic(Method),
    /// Damping with an explicit composition and a kinetic part not quadratic
    /// in p (its damped drift has no exact solution then).
    DampingNeedsQuadraticKinetic(Method),
    /// The damping rate is negative or not finite (the value as written).
    InvalidDamping(String),
}

impl fmt::Display for IntegratorError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            IntegratorError::NotSeparable(m) => write!(
                f,
                "method '{m}' needs H = T(p) + V(q), where V may depend on t; this formula mixes q and p — use 'gauss6', 'gauss4', 'midpoint' or 'auto'"
            ),
            IntegratorError::KineticDependsOnTime(m) => write!(
                f,
                "method '{m}' needs a kinetic part T(p) without t (t may appear in V(q, t) only); use 'gauss6', 'gauss4', 'midpoint' or 'auto'"
            ),
            IntegratorError::DampingNeedsQuadraticKinetic(m) => write!(
                f,
                "method '{m}' with damping needs a kinetic part quadratic in p (such as p^2/2); use 'gauss6', 'gauss4', 'midpoint' or 'auto' (which takes 'gauss6' here)"
            ),
            IntegratorError::InvalidDamping(v) => {
                write!(f, "the damping rate must be a finite number ≥ 0 (got {v})")
            }
            IntegratorError::KineticNotQuadratic(m) => write!(
                f,
                "method '{m}' needs a kinetic part quadratic in p (such as p^2/2); use 'split6', 'split4', 'yoshida4' or 'auto'"
            ),
        }
    }
}

impl std::error::Error for IntegratorError {}

/// Work done so far.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, serde::Serialize)]
pub struct Counters {
    /// Steps accepted (a partial step to locate a crossing counts as one).
    pub steps: u64,
    /// Evaluations of first derivatives: a full field (q', p') counts one,
    /// and so does a single kick (∂H/∂q) or drift (∂H/∂p) of a splitting
    /// method (half of a field; a derivative kept from the previous flow is
    /// not counted again).
    pub field_evaluations: u64,
    /// Evaluations of the exact Hessian (second derivatives by a forward
    /// pass: Newton's Jacobian in the implicit methods).
    pub hessian_evaluations: u64,
    /// Newton iterations of the implicit methods.
    pub newton_iterations: u64,
    /// Trial steps the adaptive method rejected.
    pub rejected_steps: u64,
}

/// The result of one step: the new state and ∫ p dq along the step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Step {
    pub state: State,
    pub p_dq: f64,
}

/// One method ready to step a system.
#[derive(Clone, Debug)]
pub struct Integrator {
    method: Method,
    damping: f64,
    kind: Kind,
    pub counters: Counters,
}

#[derive(Clone, Debug)]
enum Kind {
    Splitting(splitting::Splitting),
    Gauss(gauss::Collocation),
    Dopri(dopri::Dopri5),
}

impl Integrator {
    /// Set up `method` (after resolving `Auto`) for `sys` without damping.
    pub fn new(sys: &System, method: Method) -> Result<Integrator, IntegratorError> {
        Integrator::with_damping(sys, method, 0.0)
    }

    /// Set up `method` (after [`Method::resolve_damped`]) for `sys` with the
    /// linear damping rate `damping` = δ ≥ 0: the equations of motion are
    /// q' = ∂H/∂p, p' = −∂H/∂q − δ ∂H/∂p. The splittings then use the exact
    /// damped drift (conformally symplectic; T must be quadratic in p), the
    /// Gauss–Legendre and Dormand–Prince methods the damped field. δ = 0 is
    /// exactly [`Integrator::new`].
    pub fn with_damping(
        sys: &System,
        method: Method,
        damping: f64,
    ) -> Result<Integrator, IntegratorError> {
        if !(damping.is_finite() && damping >= 0.0) {
            return Err(IntegratorError::InvalidDamping(damping.to_string()));
        }
        let method = method.resolve_damped(sys, damping);
        let kind = match method {
            m if m.needs_separable() => {
                if !sys.is_separable() {
                    return Err(IntegratorError::NotSeparable(method));
                }
                if kinetic_depends_on_time(sys) {
                    return Err(IntegratorError::KineticDependsOnTime(method));
                }
                let quadratic = kinetic_is_quadratic(sys);
                if m.needs_quadratic_kinetic() && !quadratic {
                    return Err(IntegratorError::KineticNotQuadratic(method));
                }
                if damping != 0.0 && !quadratic {
                    return Err(IntegratorError::DampingNeedsQuadraticKinetic(method));
                }
                match splitting::Scheme::for_method(m) {
                    Some(s) => Kind::Splitting(splitting::Splitting::new(s).with_damping(damping)),
                    None => Kind::Gauss(gauss::Collocation::new(3).with_damping(damping)),
                }
            }
            Method::Midpoint => Kind::Gauss(gauss::Collocation::new(1).with_damping(damping)),
            Method::Gauss4 => Kind::Gauss(gauss::Collocation::new(2).with_damping(damping)),
            Method::Dopri5 => {
                Kind::Dopri(dopri::Dopri5::new(dopri::DEFAULT_TOLERANCE).with_damping(damping))
            }
            _ => Kind::Gauss(gauss::Collocation::new(3).with_damping(damping)),
        };
        Ok(Integrator {
            method,
            damping,
            kind,
            counters: Counters::default(),
        })
    }

    /// The concrete method in use.
    pub fn method(&self) -> Method {
        self.method
    }

    /// The linear damping rate δ (0 for a Hamiltonian flow).
    pub fn damping(&self) -> f64 {
        self.damping
    }

    /// For the adaptive method: set the relative tolerance (ignored by the others).
    pub fn set_tolerance(&mut self, tolerance: f64) {
        if let Kind::Dopri(d) = &mut self.kind {
            d.set_tolerance(tolerance);
        }
    }

    /// One step of size `h` (negative integrates backward) from `s`. The
    /// adaptive method takes exactly `h` too; use [`Integrator::adaptive_step`]
    /// for error control.
    pub fn step(&mut self, sys: &System, s: &State, h: f64) -> Result<Step, StepError> {
        let out = match &mut self.kind {
            Kind::Splitting(c) => c.step(sys, s, h, &mut self.counters),
            Kind::Gauss(g) => g.step(sys, s, h, &mut self.counters),
            Kind::Dopri(d) => d.step(sys, s, h, &mut self.counters).map(|(st, _)| st),
        }?;
        self.counters.steps += 1;
        if out.state.is_finite() && out.p_dq.is_finite() {
            Ok(out)
        } else {
            Err(StepError::NonFinite { t: s.t })
        }
    }

    /// A step with error control: tries `h`, shrinks it until the error is
    /// within tolerance, and returns the step taken with the proposed next
    /// step. Fixed-step methods take `h` and propose `h` again.
    pub fn adaptive_step(
        &mut self,
        sys: &System,
        s: &State,
        h: f64,
    ) -> Result<(Step, f64, f64), StepError> {
        match &mut self.kind {
            Kind::Dopri(d) => {
                let r = d.adaptive_step(sys, s, h, &mut self.counters)?;
                self.counters.steps += 1;
                Ok(r)
            }
            _ => self.step(sys, s, h).map(|st| (st, h, h)),
        }
    }

    /// For the adaptive method after a step: the state at fraction `theta` ∈ [0, 1]
    /// of the last step from its continuous extension (no new evaluations).
    pub fn dense(&self, theta: f64) -> Option<[f64; 2]> {
        match &self.kind {
            Kind::Dopri(d) => d.dense(theta),
            _ => None,
        }
    }
}
