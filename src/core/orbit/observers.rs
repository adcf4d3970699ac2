//! Observers of an orbit: each sees every accepted step of the stepper in
//! [`super::integrate_with`] and may stop the orbit with a reason or ask the
//! stepper to land exactly on a time.
//!
//! How to add one: implement [`Observer`] (`start` once at the start point,
//! `observe` on every accepted step, `next_landing` if it needs a state at an
//! exact time) and pass it to `integrate_with`; a built-in one is also
//! created and pushed in `integrate_with` and its result moved into `Orbit`.

use super::super::Diagnostic;
use super::super::integrate::{Integrator, State};
use super::super::system::System;
use super::super::window::Window;
use super::{
    CROSSING_MAX_ITERATIONS, CROSSING_TOLERANCE, Motion, Orbit, Q_PERIOD, RETURN_RADIUS_FRACTION,
    SAMPLE_TURN_ANGLE, Sample, StopReason,
};
use std::f64::consts::PI;

/// One accepted step as the observers see it.
pub struct AcceptedStep<'a> {
    pub sys: &'a System,
    /// The stepper's integrator after the step (its dense output covers it).
    pub integrator: &'a Integrator,
    pub before: State,
    pub after: State,
    /// H at `after`.
    pub energy_after: f64,
    /// The step size taken (`after.t − before.t` up to rounding).
    pub h: f64,
    /// ∫ p dq from `before` to `after`, by the integrating method.
    pub p_dq: f64,
}

/// What an observer says after a step.
pub enum Verdict {
    Continue,
    /// Stop after this step; the observers after this one still see it.
    Stop(StopReason),
    /// Stop inside this step at the given state (with H and ∫ p dq from the
    /// step's start there): the observers after this one see the step
    /// shortened to end there.
    StopAt(StopReason, State, f64, f64),
}

/// Something that watches an orbit step by step. The first stop asked for
/// wins; observers run in order (first return, strobe, thinning, extent,
/// energy error, bounds, then the caller's).
pub trait Observer {
    /// Called once with the start point and H there.
    fn start(&mut self, _start: &State, _energy: f64) {}
    /// Called on every accepted step.
    fn observe(&mut self, step: &AcceptedStep) -> Verdict;
    /// A time the stepper must land on exactly (ahead in the direction of
    /// integration); the stepper shortens the step that would pass it.
    fn next_landing(&self) -> Option<f64> {
        None
    }
}

/// The state every period τ: at t₀ + kτ, k = 1, 2, … (the start itself is not
/// recorded). The stepper lands on each time with a shortened step of the
/// integrating method, so a symplectic method stays symplectic (common
/// practice for stroboscopic maps).
pub struct Strobe {
    t0: f64,
    /// τ with the sign of the direction of integration.
    tau: f64,
    k: f64,
    slack: f64,
    /// (q, p) at each sampling time, in order.
    pub points: Vec<[f64; 2]>,
}

impl Strobe {
    /// `tau` carries the direction of integration; `slack` is the time below
    /// which a step's end counts as on the sampling time.
    pub fn new(t0: f64, tau: f64, slack: f64) -> Strobe {
        Strobe {
            t0,
            tau,
            k: 1.0,
            slack,
            points: Vec::new(),
        }
    }

    fn next_time(&self) -> f64 {
        self.t0 + self.k * self.tau
    }
}

impl Observer for Strobe {
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        if (self.next_time() - step.after.t) * self.tau.signum() <= self.slack {
            self.points.push([step.after.q, step.after.p]);
            self.k += 1.0;
        }
        Verdict::Continue
    }

    fn next_landing(&self) -> Option<f64> {
        Some(self.next_time())
    }
}

/// The drawing samples (see [`Thinner`]).
pub struct Thinning(Thinner);

impl Thinning {
    pub fn new(max_segment: f64, cap: usize) -> Thinning {
        Thinning(Thinner::new(max_segment, cap))
    }
    pub fn finish(self) -> Vec<Sample> {
        self.0.finish()
    }
}

impl Observer for Thinning {
    fn start(&mut self, s: &State, energy: f64) {
        self.0.first(Sample {
            t: s.t,
            q: s.q,
            p: s.p,
            h: energy,
        });
    }
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        let s = step.after;
        self.0.push(Sample {
            t: s.t,
            q: s.q,
            p: s.p,
            h: step.energy_after,
        });
        Verdict::Continue
    }
}

/// The ranges of q and p over the start and every step's end.
pub struct Extent {
    pub q_range: [f64; 2],
    pub p_range: [f64; 2],
}

impl Extent {
    pub fn new(s: State) -> Extent {
        Extent {
            q_range: [s.q, s.q],
            p_range: [s.p, s.p],
        }
    }
    fn add(&mut self, s: &State) {
        self.q_range = [self.q_range[0].min(s.q), self.q_range[1].max(s.q)];
        self.p_range = [self.p_range[0].min(s.p), self.p_range[1].max(s.p)];
    }
    fn diagonal(&self) -> f64 {
        (self.q_range[1] - self.q_range[0]).hypot(self.p_range[1] - self.p_range[0])
    }
}

impl Observer for Extent {
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        self.add(&step.after);
        Verdict::Continue
    }
}

/// max |H − H₀| over every step's end.
pub struct EnergyError {
    h0: f64,
    pub max_error: f64,
}

impl EnergyError {
    pub fn new(h0: f64) -> EnergyError {
        EnergyError { h0, max_error: 0.0 }
    }
}

impl Observer for EnergyError {
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        self.max_error = self.max_error.max((step.energy_after - self.h0).abs());
        Verdict::Continue
    }
}

/// Stops the orbit when it leaves the window (only p is checked when H is
/// periodic in q: phase space is then a cylinder).
pub struct Bounds {
    window: Window,
    periodic: bool,
}

impl Bounds {
    pub fn new(window: Window, periodic: bool) -> Bounds {
        Bounds { window, periodic }
    }
}

impl Observer for Bounds {
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        let y = step.after;
        let outside = if self.periodic {
            y.p < self.window.pmin || y.p > self.window.pmax
        } else {
            !self.window.contains(y.q, y.p)
        };
        if outside {
            Verdict::Stop(StopReason::LeftBounds {
                t: y.t,
                q: y.q,
                p: y.p,
            })
        } else {
            Verdict::Continue
        }
    }
}

/// The first return to the section through the start, transverse to the
/// flow there, located by Newton on the partial step (see [`locate_crossing`]):
/// period, action, frequency, q advance and the kind of motion.
pub struct FirstReturn {
    start: State,
    dir: [f64; 2],
    periodic: bool,
    sense: f64,
    tolerance: f64,
    stop_when_closed: bool,
    extent: Extent,
    p_dq_total: f64,
    found: Option<(f64, f64, f64)>,
    field_evaluations: u64,
    hessian_evaluations: u64,
    diagnostics: Vec<Diagnostic>,
}

impl FirstReturn {
    /// `dir` is the unit direction of motion at the start (time-sense included).
    pub fn new(
        start: State,
        dir: [f64; 2],
        periodic: bool,
        sense: f64,
        tolerance: f64,
        stop_when_closed: bool,
    ) -> FirstReturn {
        FirstReturn {
            start,
            dir,
            periodic,
            sense,
            tolerance,
            stop_when_closed,
            extent: Extent::new(start),
            p_dq_total: 0.0,
            found: None,
            field_evaluations: 0,
            hessian_evaluations: 0,
            diagnostics: Vec::new(),
        }
    }

    /// Move the measurements into the orbit.
    pub fn finish(self, orbit: &mut Orbit) {
        if let Some((period, action, shift)) = self.found {
            orbit.period = Some(period);
            orbit.frequency = Some(2.0 * PI / period);
            orbit.action = Some(action);
            orbit.q_advance = shift;
            orbit.closed = true;
            orbit.motion = if shift == 0.0 {
                Motion::Libration
            } else {
                Motion::Rotation
            };
        }
        orbit.field_evaluations += self.field_evaluations;
        orbit.hessian_evaluations += self.hessian_evaluations;
        orbit.diagnostics.extend(self.diagnostics);
    }
}

impl Observer for FirstReturn {
    fn observe(&mut self, step: &AcceptedStep) -> Verdict {
        let (y, next) = (step.before, step.after);
        let mut verdict = Verdict::Continue;
        // A damped orbit does not close: no return is sought (a near miss of
        // a slow spiral would otherwise pass for a period).
        if self.found.is_none() && step.integrator.damping() == 0.0 {
            let start = self.start;
            let dir = self.dir;
            let shift = if self.periodic {
                // `+ 0.0` turns a rounded −0 into 0.
                ((next.q - start.q) / Q_PERIOD).round() * Q_PERIOD + 0.0
            } else {
                0.0
            };
            let anchor = [start.q + shift, start.p];
            let g = |q: f64, p: f64| dir[0] * (q - anchor[0]) + dir[1] * (p - anchor[1]);
            let g_prev = g(y.q, y.p);
            let g_next = g(next.q, next.p);
            let near = (next.q - anchor[0]).hypot(next.p - anchor[1])
                <= RETURN_RADIUS_FRACTION * self.extent.diagonal();
            if g_prev < 0.0 && g_next >= 0.0 && near {
                let method = step.integrator.method();
                let damping = step.integrator.damping();
                let mut finder = match Integrator::with_damping(step.sys, method, damping) {
                    Ok(f) => f,
                    Err(e) => {
                        return Verdict::Stop(StopReason::InvalidRequest {
                            problem: e.to_string(),
                        });
                    }
                };
                finder.set_tolerance(self.tolerance);
                let crossing = locate_crossing(
                    &mut finder,
                    step.integrator,
                    step.sys,
                    &y,
                    step.h,
                    &dir,
                    &anchor,
                    g_prev,
                    g_next,
                );
                self.field_evaluations += finder.counters.field_evaluations;
                self.hessian_evaluations += finder.counters.hessian_evaluations;
                match crossing {
                    Some((at, p_dq_partial)) => {
                        let period = (at.t - start.t).abs();
                        let action = self.sense * (self.p_dq_total + p_dq_partial) / (2.0 * PI);
                        self.found = Some((period, action, shift));
                        if self.stop_when_closed {
                            let h_at = step.sys.energy_t(at.q, at.p, at.t);
                            verdict = Verdict::StopAt(StopReason::Closed, at, h_at, p_dq_partial);
                        }
                    }
                    None => self.diagnostics.push(Diagnostic::warning(format!(
                        "a return to the start section near t = {:.6} could not be located precisely; no period reported",
                        next.t
                    ))),
                }
            }
        }
        self.p_dq_total += step.p_dq;
        self.extent.add(&next);
        verdict
    }
}

/// The crossing of g = 0 inside the step from `y` of size `h`: Newton on the
/// partial step size τ, each trial state computed by the integrator itself (a
/// step of size τ from `y`; for the adaptive method its continuous extension),
/// safeguarded by bisection on the bracket [0, h]. Returns the state there and
/// ∫ p dq from `y` to it.
#[allow(clippy::too_many_arguments)]
pub(super) fn locate_crossing(
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
        let f = sys.damped_field_t(state.q, state.p, state.t, finder.damping());
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
pub struct Thinner {
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
