//! The stroboscopic section of a periodically driven (and possibly damped)
//! system: from each start, the drive-period map iterated N times, one
//! point per period.
//!
//! Each orbit is integrated with a fixed step h = τ/n (n steps per drive
//! period, the same for every start), so that after n steps it is exactly
//! one period later; time is then set to t₀ + kτ itself, so no rounding of
//! t accumulates over many periods. The integrator is the one an orbit
//! would use ([`Integrator::with_damping`]): for H = T(p) + V(q, t) the
//! splitting methods advance time with the drift, and with damping their
//! drift is the exact damped flow (conformally symplectic: phase-space area
//! contracts by exactly e^(−δτ) per period when T = p²/2).
//!
//! Orbits are independent; they are computed on all cores with rayon, each
//! by itself, so the result does not depend on the number of threads.

use super::Cancel;
use super::integrate::{Integrator, Method, State};
use super::orbit::default_step;
use super::system::System;
use super::window::Window;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Fewest steps per drive period.
pub const MIN_STEPS_PER_PERIOD: usize = 32;
/// Most steps per drive period.
pub const MAX_STEPS_PER_PERIOD: usize = 100_000;
/// Most starts in one section.
pub const MAX_STARTS: usize = 10_000;

/// Settings of a section.
#[derive(Clone, Debug, PartialEq)]
pub struct SectionConfig {
    /// Drive period τ > 0.
    pub period: f64,
    /// Linear damping rate δ ≥ 0.
    pub damping: f64,
    /// Drive periods iterated per start.
    pub periods: usize,
    /// The integrator (`Auto` resolves as for an orbit).
    pub method: Method,
    /// Steps per drive period; `None` takes the local time scale at the
    /// starts (the orbit's default step, at least [`MIN_STEPS_PER_PERIOD`]).
    pub steps_per_period: Option<usize>,
    /// Time of the first point (the phase of the drive that is sampled).
    pub t0: f64,
}

/// Why an orbit's section stopped.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SectionEnd {
    /// All periods done.
    Completed,
    /// A period's point left the region the run allows (the bounds around
    /// the region drawn for a section; the well for a basin).
    LeftBounds,
    /// H or its derivatives stopped being finite.
    NonFinite,
    /// Stopped by Cancel.
    Cancelled,
}

/// One start's points, the start itself first.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct SectionOrbit {
    pub start: [f64; 2],
    /// The state at t₀ + kτ, k = 1, 2, … (at most `periods` points; empty
    /// when the run records no points, see [`Strobe::record`]).
    pub points: Vec<[f64; 2]>,
    /// Drive periods completed inside the allowed region.
    #[serde(skip)]
    pub periods_done: usize,
    /// The last period's point inside the region (the start if none).
    #[serde(skip)]
    pub last: [f64; 2],
    pub end: SectionEnd,
}

/// What a stroboscopic run keeps of each start and where it may go: the
/// one per-start loop behind the section and the safe basin.
pub struct Strobe<'a> {
    /// Checked on every period's point; the start's run ends with
    /// [`SectionEnd::LeftBounds`] at the first point where it is false.
    pub stays: &'a (dyn Fn([f64; 2]) -> bool + Sync),
    /// Keep every period's point (a section), or none (a basin needs only
    /// how long each start stayed).
    pub record: bool,
}

/// A whole section.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Section {
    pub period: f64,
    pub damping: f64,
    /// The method that ran and its step.
    pub method: Method,
    pub step: f64,
    pub steps_per_period: usize,
    pub orbits: Vec<SectionOrbit>,
    pub cancelled: bool,
}

/// The section from `starts`; an orbit stops when it leaves `bounds`.
/// `progress(done, total)` is called as orbits finish (from worker threads).
pub fn section(
    sys: &System,
    starts: &[[f64; 2]],
    bounds: &Window,
    cfg: &SectionConfig,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Section, String> {
    bounds.validate().map_err(|e| format!("bounds: {e}"))?;
    let inside = |x: [f64; 2]| bounds.contains(x[0], x[1]);
    let strobe = Strobe {
        stays: &inside,
        record: true,
    };
    strobe_runs(sys, starts, cfg, &strobe, cancel, progress)
}

/// The drive-period map iterated from every start as `strobe` says: the
/// checks of the settings, the step, and the orbits on all cores (each by
/// itself, so the result does not depend on the thread count).
pub fn strobe_runs(
    sys: &System,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
    strobe: &Strobe,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Section, String> {
    if !(cfg.period.is_finite() && cfg.period > 0.0) {
        return Err(format!(
            "the drive period must be a positive number (found {})",
            cfg.period
        ));
    }
    if !(cfg.damping.is_finite() && cfg.damping >= 0.0) {
        return Err(format!(
            "the damping must be a number ≥ 0 (found {})",
            cfg.damping
        ));
    }
    if starts.len() > MAX_STARTS {
        return Err(format!(
            "a section takes at most {MAX_STARTS} starts ({} given)",
            starts.len()
        ));
    }
    let method = cfg.method.resolve_damped(sys, cfg.damping);
    // the integrator is checked once here, so every orbit can build its own
    Integrator::with_damping(sys, method, cfg.damping).map_err(|e| e.to_string())?;
    let n = match cfg.steps_per_period {
        Some(n) => n.clamp(1, MAX_STEPS_PER_PERIOD),
        None => default_steps_per_period(sys, method, starts, cfg),
    };
    let h = cfg.period / n as f64;
    let done = AtomicUsize::new(0);
    let orbits: Vec<SectionOrbit> = starts
        .par_iter()
        .map(|&start| {
            let o = one_orbit(sys, method, start, strobe, cfg, n, h, cancel);
            progress(done.fetch_add(1, Ordering::Relaxed) + 1, starts.len());
            o
        })
        .collect();
    let cancelled = orbits.iter().any(|o| o.end == SectionEnd::Cancelled);
    Ok(Section {
        period: cfg.period,
        damping: cfg.damping,
        method,
        step: h,
        steps_per_period: n,
        orbits,
        cancelled,
    })
}

/// Steps per period from the fastest local time scale among the starts.
fn default_steps_per_period(
    sys: &System,
    method: Method,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
) -> usize {
    let h = starts
        .iter()
        .map(|s| default_step(sys, method, s[0], s[1], cfg.t0, cfg.period).abs())
        .filter(|h| h.is_finite() && *h > 0.0)
        .fold(f64::INFINITY, f64::min);
    let n = if h.is_finite() {
        (cfg.period / h).ceil() as usize
    } else {
        MIN_STEPS_PER_PERIOD
    };
    n.clamp(MIN_STEPS_PER_PERIOD, MAX_STEPS_PER_PERIOD)
}

#[allow(clippy::too_many_arguments)]
fn one_orbit(
    sys: &System,
    method: Method,
    start: [f64; 2],
    strobe: &Strobe,
    cfg: &SectionConfig,
    n: usize,
    h: f64,
    cancel: &Cancel,
) -> SectionOrbit {
    let mut out = SectionOrbit {
        start,
        points: Vec::with_capacity(if strobe.record { cfg.periods } else { 0 }),
        periods_done: 0,
        last: start,
        end: SectionEnd::Completed,
    };
    let Ok(mut integ) = Integrator::with_damping(sys, method, cfg.damping) else {
        out.end = SectionEnd::NonFinite;
        return out;
    };
    let mut s = State {
        q: start[0],
        p: start[1],
        t: cfg.t0,
    };
    if !(s.q.is_finite() && s.p.is_finite()) {
        out.end = SectionEnd::NonFinite;
        return out;
    }
    for k in 1..=cfg.periods {
        if cancel.is_cancelled() {
            out.end = SectionEnd::Cancelled;
            return out;
        }
        for _ in 0..n {
            match integ.step(sys, &s, h) {
                Ok(step) => s = step.state,
                Err(_) => {
                    out.end = SectionEnd::NonFinite;
                    return out;
                }
            }
        }
        s.t = cfg.t0 + k as f64 * cfg.period;
        if !(strobe.stays)([s.q, s.p]) {
            out.end = SectionEnd::LeftBounds;
            return out;
        }
        out.periods_done = k;
        out.last = [s.q, s.p];
        if strobe.record {
            out.points.push([s.q, s.p]);
        }
    }
    out
}
