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
const CROSSING_MAX_ITERATIONS: u32 = 30;
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
#[serde(tag = "kind", rename_all = "snake_case")]
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
    /// A short stable name ("finished", "closed", "left_bounds", ...).
    pub fn name(&self) -> &'static str {
        match self {
            StopReason::Finished => "finished",
            StopReason::Closed => "closed",
            StopReason::LeftBounds { .. } => "left_bounds",
            StopReason::NonFinite { .. } => "non_finite",
            StopReason::StepCap { .. } => "step_cap",
            StopReason::SolverFailed { .. } => "solver_failed",
            StopReason::Cancelled { .. } => "cancelled",
            StopReason::AtEquilibrium => "at_equilibrium",
            StopReason::InvalidRequest { .. } => "invalid_request",
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
#[serde(rename_all = "snake_case")]
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
    /// max |H − H₀| over every step.
    pub energy_error: f64,
    /// The energy scale: max(|H₀|, ½ max|∇H| × the diagonal of the orbit's extent).
    pub energy_scale: f64,
    /// `energy_error / energy_scale`.
    pub energy_drift: f64,
    /// The method actually used (`auto` resolved).
    pub method: Method,
    /// The step size used (the first trial step for the adaptive method).
    pub step: f64,
    pub stop: StopReason,
    pub steps: u64,
    pub field_evaluations: u64,
    pub jet_evaluations: u64,
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
        energy_drift: 0.0,
        method: req.method.resolve(sys),
        step: 0.0,
        stop: StopReason::Finished,
        steps: 0,
        field_evaluations: 0,
        jet_evaluations: 0,
        diagnostics: Vec::new(),
    };
    if let Err(e) = req.validate() {
        orbit.stop = StopReason::InvalidRequest {
            problem: e.to_string(),
        };
        return orbit;
    }
    let mut integrator = match Integrator::new(sys, req.method) {
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
    let first = Sample {
        t: start.t,
        q: start.q,
        p: start.p,
        h: h0,
    };

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
        orbit.samples.push(first);
        return orbit;
    }
    let sense = h.signum();
    let dir = [sense * field0[0] / speed0, sense * field0[1] / speed0];
    let periodic = is_periodic_in_q(sys, &req.bounds, start.t);
    let t_end = start.t + req.duration;
    let mut thinner = Thinner::new(
        req.bounds.diagonal() / BOUNDS_FACTOR / SAMPLE_SEGMENTS_PER_VIEW,
        req.max_samples,
    );
    thinner.first(first);

    let mut y = start;
    let mut p_dq_total = 0.0;
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
        if remaining * sense <= (t_end.abs().max(h.abs())) * 4.0 * f64::EPSILON {
            break;
        }
        let h_try = if h_next.abs() >= remaining.abs() {
            remaining
        } else {
            h_next
        };
        let (step, h_taken, proposed) = match integrator.adaptive_step(sys, &y, h_try) {
            Ok(r) => r,
            Err(e) => {
                stop = step_error_stop(&e, y.t);
                break;
            }
        };
        if method.is_adaptive() && h_try != remaining {
            h_next = proposed;
        }
        let next = step.state;
        let h_next_energy = sys.energy_t(next.q, next.p, next.t);
        if !h_next_energy.is_finite() || !next.is_finite() {
            stop = StopReason::NonFinite { t: next.t };
            break;
        }

        // First return to the section through the start, transverse to the flow.
        if orbit.period.is_none() {
            let shift = if periodic {
                // `+ 0.0` turns a rounded −0 into 0.
                ((next.q - start.q) / Q_PERIOD).round() * Q_PERIOD + 0.0
            } else {
                0.0
            };
            let anchor = [start.q + shift, start.p];
            let g = |q: f64, p: f64| dir[0] * (q - anchor[0]) + dir[1] * (p - anchor[1]);
            let g_prev = g(y.q, y.p);
            let g_next = g(next.q, next.p);
            let size =
                (orbit.q_range[1] - orbit.q_range[0]).hypot(orbit.p_range[1] - orbit.p_range[0]);
            let near =
                (next.q - anchor[0]).hypot(next.p - anchor[1]) <= RETURN_RADIUS_FRACTION * size;
            if g_prev < 0.0 && g_next >= 0.0 && near {
                let mut finder = match Integrator::new(sys, method) {
                    Ok(f) => f,
                    Err(e) => {
                        stop = StopReason::InvalidRequest {
                            problem: e.to_string(),
                        };
                        break;
                    }
                };
                finder.set_tolerance(req.tolerance);
                let crossing = locate_crossing(
                    &mut finder,
                    &integrator,
                    sys,
                    &y,
                    h_taken,
                    &dir,
                    &anchor,
                    g_prev,
                    g_next,
                );
                orbit.field_evaluations += finder.counters.field_evaluations;
                orbit.jet_evaluations += finder.counters.jet_evaluations;
                match crossing {
                    Some((at, p_dq_partial)) => {
                        let period = (at.t - start.t).abs();
                        orbit.period = Some(period);
                        orbit.frequency = Some(2.0 * PI / period);
                        orbit.action = Some(sense * (p_dq_total + p_dq_partial) / (2.0 * PI));
                        orbit.q_advance = shift;
                        orbit.closed = true;
                        orbit.motion = if shift == 0.0 { Motion::Libration } else { Motion::Rotation };
                        if req.stop_when_closed {
                            let h_at = sys.energy_t(at.q, at.p, at.t);
                            record(&mut orbit, &mut thinner, at, h_at, h0);
                            stop = StopReason::Closed;
                            break;
                        }
                    }
                    None => orbit.diagnostics.push(Diagnostic::warning(format!(
                        "a return to the start section near t = {:.6} could not be located precisely; no period reported",
                        next.t
                    ))),
                }
            }
        }

        p_dq_total += step.p_dq;
        y = next;
        record(&mut orbit, &mut thinner, y, h_next_energy, h0);
        let outside = if periodic {
            y.p < req.bounds.pmin || y.p > req.bounds.pmax
        } else {
            !req.bounds.contains(y.q, y.p)
        };
        if outside {
            stop = StopReason::LeftBounds {
                t: y.t,
                q: y.q,
                p: y.p,
            };
            break;
        }
    }
    orbit.samples = thinner.finish();
    if matches!(
        stop,
        StopReason::LeftBounds { .. } | StopReason::NonFinite { .. }
    ) {
        orbit.motion = Motion::Unbounded;
    }
    orbit.stop = stop;
    orbit.steps = integrator.counters.steps;
    orbit.field_evaluations += integrator.counters.field_evaluations;
    orbit.jet_evaluations += integrator.counters.jet_evaluations;
    orbit.energy_scale = energy_scale(sys, &orbit);
    orbit.energy_drift = if orbit.energy_scale > 0.0 {
        orbit.energy_error / orbit.energy_scale
    } else {
        0.0
    };
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

fn record(orbit: &mut Orbit, thinner: &mut Thinner, s: State, h: f64, h0: f64) {
    orbit.q_range = [orbit.q_range[0].min(s.q), orbit.q_range[1].max(s.q)];
    orbit.p_range = [orbit.p_range[0].min(s.p), orbit.p_range[1].max(s.p)];
    orbit.energy_error = orbit.energy_error.max((h - h0).abs());
    thinner.push(Sample {
        t: s.t,
        q: s.q,
        p: s.p,
        h,
    });
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

/// The crossing of g = 0 inside the step from `y` of size `h`: Newton on the
/// partial step size τ, each trial state computed by the integrator itself (a
/// step of size τ from `y`; for the adaptive method its continuous extension),
/// safeguarded by bisection on the bracket [0, h]. Returns the state there and
/// ∫ p dq from `y` to it.
#[allow(clippy::too_many_arguments)]
fn locate_crossing(
    finder: &mut Integrator,
    stepped: &Integrator,
    sys: &System,
    y: &State,
    h: f64,
    dir: &[f64; 2],
    anchor: &[f64; 2],
    g_lo: f64,
    g_hi: f64,
) -> Option<(State, f64)> {
    let g = |q: f64, p: f64| dir[0] * (q - anchor[0]) + dir[1] * (p - anchor[1]);
    let (mut lo, mut hi) = (0.0, h);
    let mut tau = h * g_lo / (g_lo - g_hi);
    let elapsed = y.t.abs() + h.abs();
    for _ in 0..CROSSING_MAX_ITERATIONS {
        let (state, p_dq) = if finder.method().is_adaptive() {
            let xy = stepped.dense(tau / h)?;
            (
                State {
                    q: xy[0],
                    p: xy[1],
                    t: y.t + tau,
                },
                f64::NAN,
            )
        } else {
            let s = finder.step(sys, y, tau).ok()?;
            (s.state, s.p_dq)
        };
        let gv = g(state.q, state.p);
        let f = sys.field_t(state.q, state.p, state.t);
        finder.counters.field_evaluations += 1;
        let slope = dir[0] * f[0] + dir[1] * f[1];
        if gv < 0.0 {
            lo = tau
        } else {
            hi = tau
        }
        let mut next = if slope.is_finite() && slope != 0.0 {
            tau - gv / slope
        } else {
            f64::NAN
        };
        let inside = next > lo.min(hi) && next < lo.max(hi);
        if !inside {
            next = 0.5 * (lo + hi);
        }
        if (next - tau).abs() <= CROSSING_TOLERANCE * elapsed || gv == 0.0 {
            let p_dq = if p_dq.is_nan() {
                // Adaptive method: one exact step of size τ for the quadrature.
                finder.step(sys, y, tau).ok()?.p_dq
            } else {
                p_dq
            };
            return Some((state, p_dq));
        }
        tau = next;
    }
    None
}

/// Keeps the points where the path turns, and enough along straight runs.
struct Thinner {
    kept: Vec<Sample>,
    candidate: Option<Sample>,
    max_segment: f64,
    cos_turn: f64,
    cap: usize,
}

impl Thinner {
    fn new(max_segment: f64, cap: usize) -> Thinner {
        Thinner {
            kept: Vec::new(),
            candidate: None,
            max_segment,
            cos_turn: SAMPLE_TURN_ANGLE.cos(),
            cap: cap.max(2),
        }
    }

    fn first(&mut self, s: Sample) {
        self.kept.push(s);
    }

    fn push(&mut self, s: Sample) {
        let Some(c) = self.candidate else {
            self.candidate = Some(s);
            return;
        };
        let Some(l) = self.kept.last().copied() else {
            self.kept.push(s);
            return;
        };
        let d1 = [c.q - l.q, c.p - l.p];
        let d2 = [s.q - c.q, s.p - c.p];
        let n1 = d1[0].hypot(d1[1]);
        let n2 = d2[0].hypot(d2[1]);
        let turned =
            n1 > 0.0 && n2 > 0.0 && (d1[0] * d2[0] + d1[1] * d2[1]) < self.cos_turn * n1 * n2;
        let long = (s.q - l.q).hypot(s.p - l.p) > self.max_segment;
        if turned || long {
            self.kept.push(c);
            if self.kept.len() >= self.cap {
                self.halve();
            }
        }
        self.candidate = Some(s);
    }

    /// Drop every other point and coarsen the thresholds.
    fn halve(&mut self) {
        let last = self.kept.len() - 1;
        let kept: Vec<Sample> = self
            .kept
            .iter()
            .enumerate()
            .filter(|(i, _)| i % 2 == 0 || *i == last)
            .map(|(_, s)| *s)
            .collect();
        self.kept = kept;
        self.max_segment *= 2.0;
        let angle = self.cos_turn.acos() * 2.0;
        self.cos_turn = angle.min(PI / 2.0).cos();
    }

    fn finish(mut self) -> Vec<Sample> {
        if let Some(c) = self.candidate.take() {
            self.kept.push(c);
        }
        self.kept
    }
}
