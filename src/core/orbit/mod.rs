//! One orbit from a start point (q₀, p₀): integrated with a chosen method,
//! thinned for drawing, and measured — period from the first return to a
//! section through the start, action, frequency, extent, energy error and the
//! kind of motion (libration, rotation, unbounded).

use super::integrate::{Integrator, Method, State, StepError};
use super::system::{Jet, System};
use super::window::Window;
use super::{Cancel, Diagnostic};
use std::f64::consts::PI;
use std::fmt;

pub mod observers;
pub use observers::{AcceptedStep, Observer, Verdict};
use observers::{Bounds, EnergyError, Extent, FirstReturn, Strobe, Thinning};

/// The default bounds are the view grown by this factor about its centre.
pub const BOUNDS_FACTOR: f64 = 4.0;
/// Default cap on the number of steps.
pub const DEFAULT_MAX_STEPS: u64 = 5_000_000;
/// Default cap on the number of samples kept for drawing.
pub const DEFAULT_MAX_SAMPLES: usize = 20_000;
/// A default step never exceeds the duration divided by this.
pub const MIN_STEPS_PER_DURATION: f64 = 16.0;
/// A return to the section counts only within this fraction of the orbit's
/// size (the diagonal of its extent so far) from the start point.
pub const RETURN_RADIUS_FRACTION: f64 = 0.1;
/// A start point whose phase speed × local time scale (its linearised
/// distance from an equilibrium) is below this fraction of the local length
/// scale — the start's own size plus a thousandth of the view — is an
/// equilibrium. The scale is local so that a very wide view does not turn
/// moving points into equilibria.
pub const EQUILIBRIUM_FRACTION: f64 = 1e-13;
/// Newton on the crossing time stops when its change is below this fraction
/// of the elapsed time.
pub const CROSSING_TOLERANCE: f64 = 1e-15;
pub(crate) const CROSSING_MAX_ITERATIONS: u32 = 30;
/// H is taken as periodic in q when H(q + 2π, p) and H(q, p) agree to this
/// (relative to 1 + |H|) at every test point.
pub const PERIODIC_TOLERANCE: f64 = 1e-12;
/// The period in q tested for periodic formulas.
pub const Q_PERIOD: f64 = 2.0 * PI;
/// Drawing samples: a point is kept where the direction turns by more than
/// this angle (radians) or the path runs longer than the view's diagonal over
/// [`SAMPLE_SEGMENTS_PER_VIEW`].
pub const SAMPLE_TURN_ANGLE: f64 = 0.05;
pub const SAMPLE_SEGMENTS_PER_VIEW: f64 = 300.0;
/// Steps between polls of the cancel flag.
const CANCEL_POLL: u64 = 512;
/// Points along the orbit where |∇H| is sampled for the energy scale.
const ENERGY_SCALE_POINTS: usize = 64;

/// What to integrate.
#[derive(Clone, Debug, PartialEq)]
pub struct OrbitRequest {
    pub q0: f64,
    pub p0: f64,
    /// Start time (matters only for formulas that use t).
    pub t0: f64,
    /// Integration time; negative integrates backward.
    pub duration: f64,
    pub method: Method,
    /// Step size (its sign is taken from `duration`); `None` picks one from the
    /// local time scale, see [`default_step`].
    pub step: Option<f64>,
    /// The orbit stops when it leaves this window. For a formula periodic in q
    /// (period 2π) only p is checked: phase space is then a cylinder.
    pub bounds: Window,
    pub max_steps: u64,
    /// Stop as soon as one period is complete.
    pub stop_when_closed: bool,
    pub max_samples: usize,
    /// Relative tolerance per step of the adaptive method.
    pub tolerance: f64,
    /// Record the state every this much time (the stroboscopic record for a
    /// drive of this period): at t0 + kτ, k = 1, 2, …, landed on exactly with
    /// a shortened step; see [`Orbit::strobe_points`]. `None` records nothing.
    pub strobe: Option<f64>,
    /// Linear damping rate δ ≥ 0: q' = ∂H/∂p, p' = −∂H/∂q − δ ∂H/∂p (see
    /// [`Integrator::with_damping`]). With δ > 0, H is not conserved and
    /// [`Orbit::energy_error`] is the largest change of H, not an error; a
    /// damped orbit does not close, so no first return (period, action) is
    /// sought and `stop_when_closed` has no effect.
    pub damping: f64,
}

impl OrbitRequest {
    /// A request with the defaults: automatic method and step, bounds
    /// [`BOUNDS_FACTOR`] × `view`, [`DEFAULT_MAX_STEPS`], run the whole duration.
    pub fn new(q0: f64, p0: f64, duration: f64, view: &Window) -> OrbitRequest {
        OrbitRequest {
            q0,
            p0,
            t0: 0.0,
            duration,
            method: Method::Auto,
            step: None,
            bounds: view.scaled(BOUNDS_FACTOR),
            max_steps: DEFAULT_MAX_STEPS,
            stop_when_closed: false,
            max_samples: DEFAULT_MAX_SAMPLES,
            tolerance: super::integrate::dopri::DEFAULT_TOLERANCE,
            strobe: None,
            damping: 0.0,
        }
    }

    /// Check every field; the error names the field and the problem.
    pub fn validate(&self) -> Result<(), OrbitError> {
        let bad = |field: &'static str, problem: String| Err(OrbitError { field, problem });
        for (field, v) in [
            ("q0", self.q0),
            ("p0", self.p0),
            ("t0", self.t0),
            ("duration", self.duration),
        ] {
            if !v.is_finite() {
                return bad(field, format!("is not a finite number ({v})"));
            }
        }
        if self.duration == 0.0 {
            return bad(
                "duration",
                "is zero; give a positive (forward) or negative (backward) time".into(),
            );
        }
        if self.duration.abs() <= 1e-12 * self.t0.abs() {
            return bad(
                "duration",
                format!(
                    "{} is too short to resolve at t0 = {}",
                    self.duration, self.t0
                ),
            );
        }
        if let Some(h) = self.step {
            if !h.is_finite() || h == 0.0 {
                return bad(
                    "step",
                    format!("must be a finite non-zero number (got {h})"),
                );
            }
            if (self.duration / h).abs() > 1e15 {
                return bad(
                    "step",
                    format!("{h} is too small for the duration {}", self.duration),
                );
            }
        }
        if let Err(e) = self.bounds.validate() {
            return bad("bounds", e.0);
        }
        if !self.bounds.contains(self.q0, self.p0) {
            return bad(
                "q0, p0",
                format!(
                    "the start point ({}, {}) is outside the bounds",
                    self.q0, self.p0
                ),
            );
        }
        if self.max_steps == 0 {
            return bad("max_steps", "must be at least 1".into());
        }
        if self.max_samples < 2 {
            return bad("max_samples", "must be at least 2".into());
        }
        if let Some(tau) = self.strobe {
            if !(tau.is_finite() && tau > 0.0) {
                return bad(
                    "strobe",
                    format!("must be a finite positive period (got {tau})"),
                );
            }
        }
        if !(self.damping.is_finite() && self.damping >= 0.0) {
            return bad(
                "damping",
                format!("must be a finite number ≥ 0 (got {})", self.damping),
            );
        }
        if !(self.tolerance.is_finite() && self.tolerance > 0.0 && self.tolerance < 1.0) {
            return bad(
                "tolerance",
                format!("must lie in (0, 1) (got {})", self.tolerance),
            );
        }
        Ok(())
    }
}

/// A request field that is out of range.
#[derive(Clone, Debug, PartialEq)]
pub struct OrbitError {
    pub field: &'static str,
    pub problem: String,
}

impl fmt::Display for OrbitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "orbit {}: {}", self.field, self.problem)
    }
}

impl std::error::Error for OrbitError {}

/// Why the integration stopped.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum StopReason {
    /// The whole duration was integrated.
    Finished,
    /// One period was completed (`stop_when_closed`).
    Closed,
    /// The orbit left the bounds at this point.
    LeftBounds { t: f64, q: f64, p: f64 },
    /// H or its derivatives became NaN or infinite.
    NonFinite { t: f64 },
    /// The step cap was reached.
    StepCap { steps: u64 },
    /// The integrator could not take a step.
    SolverFailed { t: f64, message: String },
    /// The cancel flag was set.
    Cancelled { t: f64 },
    /// The start point is an equilibrium: the orbit stays there.
    AtEquilibrium,
    /// The request was refused before integrating.
    InvalidRequest { problem: String },
}

impl StopReason {
    /// A short stable name ("finished", "closed", "left-bounds", ...).
    pub fn name(&self) -> &'static str {
        match self {
            StopReason::Finished => "finished",
            StopReason::Closed => "closed",
            StopReason::LeftBounds { .. } => "left-bounds",
            StopReason::NonFinite { .. } => "non-finite",
            StopReason::StepCap { .. } => "step-cap",
            StopReason::SolverFailed { .. } => "solver-failed",
            StopReason::Cancelled { .. } => "cancelled",
            StopReason::AtEquilibrium => "at-equilibrium",
            StopReason::InvalidRequest { .. } => "invalid-request",
        }
    }

    /// A sentence for the user.
    pub fn message(&self) -> String {
        match self {
            StopReason::Finished => "integrated the whole duration".into(),
            StopReason::Closed => "stopped after one full period".into(),
            StopReason::LeftBounds { t, q, p } => {
                format!("left the bounds at t = {t:.6} (q = {q:.6}, p = {p:.6})")
            }
            StopReason::NonFinite { t } => {
                format!("H or its derivatives became infinite or undefined near t = {t:.6}")
            }
            StopReason::StepCap { steps } => {
                format!(
                    "stopped at the step cap ({steps} steps); take a larger step or a shorter duration"
                )
            }
            StopReason::SolverFailed { message, .. } => message.clone(),
            StopReason::Cancelled { t } => format!("cancelled at t = {t:.6}"),
            StopReason::AtEquilibrium => {
                "the start point is an equilibrium: the orbit stays there".into()
            }
            StopReason::InvalidRequest { problem } => problem.clone(),
        }
    }
}

impl fmt::Display for StopReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message())
    }
}

/// The kind of motion seen.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Motion {
    /// Returned to the start: a closed curve.
    Libration,
    /// Returned to the start shifted by a whole period 2π·k in q (H periodic in q).
    Rotation,
    /// Left the bounds or blew up.
    Unbounded,
    /// The start point is an equilibrium.
    Equilibrium,
    /// No return within the time integrated.
    Undetermined,
}

/// One stored point of the orbit.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Sample {
    pub t: f64,
    pub q: f64,
    pub p: f64,
    /// H at the point.
    pub h: f64,
}

/// An integrated orbit with its measurements.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Orbit {
    /// Points for drawing: every turn of direction kept, straight runs thinned.
    pub samples: Vec<Sample>,
    /// Time of the first return to the section through the start (None if none).
    pub period: Option<f64>,
    /// I = (1/2π) ∮ p dq over that period, in the forward-time sense.
    pub action: Option<f64>,
    /// ω = 2π / period.
    pub frequency: Option<f64>,
    /// Advance of q over one period (0 for libration, 2π·k for rotation).
    pub q_advance: f64,
    /// True when one full period was found.
    pub closed: bool,
    pub motion: Motion,
    pub q_range: [f64; 2],
    pub p_range: [f64; 2],
    /// H at the start.
    pub energy: f64,
    /// max |H − H₀| over every step: the integration error of a conserved H.
    /// With damping (`OrbitRequest::damping` > 0) H is not conserved and this
    /// is the largest change of H along the orbit (a diagnostic says so).
    pub energy_error: f64,
    /// The energy scale: max(|H₀|, ½ max|∇H| × the diagonal of the orbit's extent).
    pub energy_scale: f64,
    /// `energy_error / energy_scale` (with damping: the relative change of H).
    pub relative_energy_error: f64,
    /// The method actually used (`auto` resolved).
    pub method: Method,
    /// The step size used (the first trial step for the adaptive method).
    pub step: f64,
    pub stop: StopReason,
    pub steps: u64,
    pub field_evaluations: u64,
    pub hessian_evaluations: u64,
    /// (q, p) at t0 + kτ, k = 1, 2, … when the request asked for a strobe
    /// period τ (empty otherwise).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub strobe_points: Vec<[f64; 2]>,
    pub diagnostics: Vec<Diagnostic>,
}

/// The local oscillation rate ω at a point from the Hessian: √|det J| (the
/// small-oscillation frequency at a center, the growth rate at a saddle), or
/// the Jacobian's size ‖J‖_F/√2 when that is larger (shear, as for a free
/// particle). Zero if the Jacobian vanishes.
pub fn local_rate(jet: &Jet) -> f64 {
    let j = jet.jacobian();
    let frob = (j[0][0].powi(2) + j[0][1].powi(2) + j[1][0].powi(2) + j[1][1].powi(2)).sqrt();
    let rate = jet
        .hessian_det()
        .abs()
        .sqrt()
        .max(frob / std::f64::consts::SQRT_2);
    if rate.is_finite() { rate } else { 0.0 }
}

/// The default step: the local period 2π/ω at the start (see [`local_rate`])
/// divided by the method's [`Method::default_steps_per_period`], at most
/// |duration| / [`MIN_STEPS_PER_DURATION`]; with no local rate, the latter.
/// Its sign follows `duration`.
pub fn default_step(sys: &System, method: Method, q0: f64, p0: f64, t0: f64, duration: f64) -> f64 {
    let jet = sys.jet_t(q0, p0, t0);
    let rate = if jet.is_finite() {
        local_rate(&jet)
    } else {
        0.0
    };
    let cap = duration.abs() / MIN_STEPS_PER_DURATION;
    let h = if rate > 0.0 {
        (2.0 * PI / rate / method.default_steps_per_period()).min(cap)
    } else {
        cap
    };
    h.copysign(duration)
}

/// Local periods 2π/ω integrated when the caller gives no duration.
pub const DEFAULT_DURATION_PERIODS: f64 = 100.0;

/// A duration for "run until the orbit closes": [`DEFAULT_DURATION_PERIODS`]
/// local periods 2π/ω at the start (see [`local_rate`]), or that many time
/// units when the start has no local rate.
pub fn default_duration(sys: &System, q0: f64, p0: f64, t0: f64) -> f64 {
    let jet = sys.jet_t(q0, p0, t0);
    let rate = if jet.is_finite() {
        local_rate(&jet)
    } else {
        0.0
    };
    let period = if rate > 0.0 { 2.0 * PI / rate } else { 1.0 };
    DEFAULT_DURATION_PERIODS * period
}

/// True when H(q + 2π, p) = H(q, p) at a few points of `bounds` (and H uses q).
pub fn is_periodic_in_q(sys: &System, bounds: &Window, t: f64) -> bool {
    if !sys.formula().uses_q() {
        return false;
    }
    let fractions = [0.137, 0.5, 0.781];
    for &fq in &fractions {
        for &fp in &fractions {
            let q = bounds.qmin + fq * bounds.width();
            let p = bounds.pmin + fp * bounds.height();
            let a = sys.energy_t(q, p, t);
            let b = sys.energy_t(q + Q_PERIOD, p, t);
            if !(a.is_finite() && b.is_finite())
                || (a - b).abs() > PERIODIC_TOLERANCE * (1.0 + a.abs())
            {
                return false;
            }
        }
    }
    true
}

/// Integrate one orbit. Never panics: a bad request comes back as an orbit with
/// `StopReason::InvalidRequest`; every other failure stops the orbit with its reason.
pub fn integrate_orbit(sys: &System, req: &OrbitRequest, cancel: &Cancel) -> Orbit {
    integrate_with(sys, req, &mut [], cancel)
}

/// [`integrate_orbit`] with caller-supplied observers run after the built-in
/// ones (first return, stroboscopic record, thinning, extent, energy error,
/// bounds) on every accepted step; each may stop the orbit or ask the stepper
/// to land exactly on a time (see [`Observer`]).
pub fn integrate_with(
    sys: &System,
    req: &OrbitRequest,
    extra: &mut [&mut dyn Observer],
    cancel: &Cancel,
) -> Orbit {
    let mut orbit = Orbit {
        samples: Vec::new(),
        period: None,
        action: None,
        frequency: None,
        q_advance: 0.0,
        closed: false,
        motion: Motion::Undetermined,
        q_range: [req.q0, req.q0],
        p_range: [req.p0, req.p0],
        energy: f64::NAN,
        energy_error: 0.0,
        energy_scale: 0.0,
        relative_energy_error: 0.0,
        method: req.method.resolve_damped(sys, req.damping),
        step: 0.0,
        stop: StopReason::Finished,
        steps: 0,
        field_evaluations: 0,
        hessian_evaluations: 0,
        strobe_points: Vec::new(),
        diagnostics: Vec::new(),
    };
    if let Err(e) = req.validate() {
        orbit.stop = StopReason::InvalidRequest {
            problem: e.to_string(),
        };
        return orbit;
    }
    let mut integrator = match Integrator::with_damping(sys, req.method, req.damping) {
        Ok(i) => i,
        Err(e) => {
            orbit.stop = StopReason::InvalidRequest {
                problem: e.to_string(),
            };
            return orbit;
        }
    };
    integrator.set_tolerance(req.tolerance);
    let start = State {
        q: req.q0,
        p: req.p0,
        t: req.t0,
    };
    let h0 = sys.energy_t(start.q, start.p, start.t);
    orbit.energy = h0;
    let jet0 = sys.jet_t(start.q, start.p, start.t);
    if !h0.is_finite() || !jet0.is_finite() {
        orbit.stop = StopReason::NonFinite { t: start.t };
        orbit.motion = Motion::Unbounded;
        return orbit;
    }

    let method = integrator.method();
    let h = match req.step {
        Some(h) => h.abs().copysign(req.duration),
        None => default_step(sys, method, start.q, start.p, start.t, req.duration),
    };
    orbit.step = h;
    let field0 = jet0.field();
    let speed0 = field0[0].hypot(field0[1]);
    let rate0 = local_rate(&jet0);
    let length = start.q.abs().max(start.p.abs()) + 1e-3 * req.bounds.diagonal() / BOUNDS_FACTOR;
    if speed0 == 0.0 || (rate0 > 0.0 && speed0 / rate0 < EQUILIBRIUM_FRACTION * length) {
        orbit.stop = StopReason::AtEquilibrium;
        orbit.motion = Motion::Equilibrium;
        orbit.samples.push(Sample {
            t: start.t,
            q: start.q,
            p: start.p,
            h: h0,
        });
        return orbit;
    }
    let sense = h.signum();
    let dir = [sense * field0[0] / speed0, sense * field0[1] / speed0];
    let periodic = is_periodic_in_q(sys, &req.bounds, start.t);
    let t_end = start.t + req.duration;
    // Time slack below which two times are the same (common practice: a few
    // ulps of the largest time involved).
    let slack = (t_end.abs().max(h.abs())) * 4.0 * f64::EPSILON;

    let mut first_return = FirstReturn::new(
        start,
        dir,
        periodic,
        sense,
        req.tolerance,
        req.stop_when_closed,
    );
    let mut strobe = req
        .strobe
        .map(|tau| Strobe::new(start.t, tau.copysign(sense), slack));
    let mut thinning = Thinning::new(
        req.bounds.diagonal() / BOUNDS_FACTOR / SAMPLE_SEGMENTS_PER_VIEW,
        req.max_samples,
    );
    let mut extent = Extent::new(start);
    let mut energy = EnergyError::new(h0);
    let mut bounds = Bounds::new(req.bounds.clone(), periodic);
    let mut built_in: Vec<&mut dyn Observer> = Vec::with_capacity(6 + extra.len());
    built_in.push(&mut first_return);
    if let Some(s) = strobe.as_mut() {
        built_in.push(s);
    }
    built_in.push(&mut thinning);
    built_in.push(&mut extent);
    built_in.push(&mut energy);
    built_in.push(&mut bounds);
    for o in extra.iter_mut() {
        built_in.push(&mut **o);
    }
    let observers = built_in;
    let mut observers = observers;
    for o in observers.iter_mut() {
        o.start(&start, h0);
    }

    let mut y = start;
    let mut h_next = h;
    let mut stop = StopReason::Finished;
    loop {
        if integrator.counters.steps % CANCEL_POLL == 0 && cancel.is_cancelled() {
            stop = StopReason::Cancelled { t: y.t };
            break;
        }
        if integrator.counters.steps >= req.max_steps {
            stop = StopReason::StepCap {
                steps: integrator.counters.steps,
            };
            break;
        }
        let remaining = t_end - y.t;
        if remaining * sense <= slack {
            break;
        }
        let mut h_try = if h_next.abs() >= remaining.abs() {
            remaining
        } else {
            h_next
        };
        // Land exactly on the nearest time an observer asks for.
        let mut landing = false;
        for o in observers.iter() {
            if let Some(tl) = o.next_landing() {
                let to = tl - y.t;
                if to * sense > 0.0 && h_try.abs() > to.abs() {
                    h_try = to;
                    landing = true;
                }
            }
        }
        let (step, h_taken, proposed) = match integrator.adaptive_step(sys, &y, h_try) {
            Ok(r) => r,
            Err(e) => {
                stop = step_error_stop(&e, y.t);
                break;
            }
        };
        if method.is_adaptive() && h_try != remaining && !landing {
            h_next = proposed;
        }
        let next = step.state;
        let h_next_energy = sys.energy_t(next.q, next.p, next.t);
        if !h_next_energy.is_finite() || !next.is_finite() {
            stop = StopReason::NonFinite { t: next.t };
            break;
        }

        let mut seen = AcceptedStep {
            sys,
            integrator: &integrator,
            before: y,
            after: next,
            energy_after: h_next_energy,
            h: h_taken,
            p_dq: step.p_dq,
        };
        let mut verdict: Option<StopReason> = None;
        for o in observers.iter_mut() {
            match o.observe(&seen) {
                Verdict::Continue => {}
                Verdict::Stop(reason) => {
                    if verdict.is_none() {
                        verdict = Some(reason);
                    }
                }
                Verdict::StopAt(reason, cut, energy_cut, p_dq_cut) => {
                    if verdict.is_none() {
                        verdict = Some(reason);
                        seen.h = cut.t - seen.before.t;
                        seen.after = cut;
                        seen.energy_after = energy_cut;
                        seen.p_dq = p_dq_cut;
                    }
                }
            }
        }
        y = seen.after;
        if let Some(reason) = verdict {
            stop = reason;
            break;
        }
    }
    drop(observers);
    orbit.samples = thinning.finish();
    orbit.q_range = extent.q_range;
    orbit.p_range = extent.p_range;
    orbit.energy_error = energy.max_error;
    if let Some(s) = strobe {
        orbit.strobe_points = s.points;
    }
    first_return.finish(&mut orbit);
    if matches!(
        stop,
        StopReason::LeftBounds { .. } | StopReason::NonFinite { .. }
    ) {
        orbit.motion = Motion::Unbounded;
    }
    orbit.stop = stop;
    orbit.steps = integrator.counters.steps;
    orbit.field_evaluations += integrator.counters.field_evaluations;
    orbit.hessian_evaluations += integrator.counters.hessian_evaluations;
    orbit.energy_scale = energy_scale(sys, &orbit);
    orbit.relative_energy_error = if orbit.energy_scale > 0.0 {
        orbit.energy_error / orbit.energy_scale
    } else {
        0.0
    };
    if req.damping > 0.0 {
        orbit.diagnostics.push(Diagnostic::info(format!(
            "with damping {} H is not conserved: the energy error is the largest change of H along the orbit, not an integration error",
            req.damping
        )));
    }
    orbit
}

fn step_error_stop(e: &StepError, t: f64) -> StopReason {
    match e {
        StepError::NonFinite { t } => StopReason::NonFinite { t: *t },
        other => StopReason::SolverFailed {
            t,
            message: other.to_string(),
        },
    }
}

/// max(|H₀|, ½ max|∇H| over the samples × the extent's diagonal).
fn energy_scale(sys: &System, orbit: &Orbit) -> f64 {
    let diag = (orbit.q_range[1] - orbit.q_range[0]).hypot(orbit.p_range[1] - orbit.p_range[0]);
    let n = orbit.samples.len();
    let stride = (n / ENERGY_SCALE_POINTS).max(1);
    let mut grad: f64 = 0.0;
    for s in orbit.samples.iter().step_by(stride) {
        let f = sys.field_t(s.q, s.p, s.t);
        let g = f[0].hypot(f[1]);
        if g.is_finite() {
            grad = grad.max(g);
        }
    }
    let scale = orbit.energy.abs().max(0.5 * grad * diag);
    if scale.is_finite() { scale } else { 0.0 }
}
