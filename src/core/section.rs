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
//! # Lanes
//!
//! With a splitting method (H = T(p) + V(q, t)) every start has the same
//! step and the same time, so the starts run in blocks of up to
//! [`LANES`] lanes ([`SplittingLanes`]): each kick and drift evaluates its
//! derivative program one instruction over the whole block, and the drive
//! (what depends on t alone) once per kick for the block. Each lane performs
//! the operations of [`Integrator::step`] for its start alone, in the same
//! order, so the numbers are those of the per-start loop
//! ([`strobe_runs_per_start`]) to the bit (`tests/section.rs` checks it on
//! driven, damped and escaping starts). A start that leaves the region or
//! stops being finite leaves its block at once, so escaped starts cost
//! nothing; Cancel is polled once per period. The other methods
//! (Gauss–Legendre, Dormand–Prince) run each start by itself.
//!
//! Blocks (and single starts) are independent; they run on all cores with
//! rayon over a fixed partition of the starts, so the result does not depend
//! on the number of threads.

use super::Cancel;
use super::formula::LANES;
use super::integrate::splitting::{Scheme, Splitting, SplittingLanes};
use super::integrate::{Integrator, Method, State};
use super::orbit::local_rate;
use super::system::System;
use super::window::Window;
use rayon::prelude::*;
use std::f64::consts::PI;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Fewest steps per drive period by default (the drive itself resolved).
pub const MIN_STEPS_PER_PERIOD: usize = 16;
/// A section's points need to be right to well below a pixel, not to the
/// 1e-12 an orbit aims at: by default a section takes this many times fewer
/// steps per local period than an orbit ([`Method::default_steps_per_period`];
/// for the 6th-order methods 6 instead of 120). On the driven double well
/// (bench_drive's lattice) that is 25 steps per drive period for nystrom6,
/// with an energy error of the undriven system of about 1e-8 relative
/// (README, "Driven systems"), far below what a figure can show.
pub const SECTION_COARSENING: f64 = 20.0;
/// Most steps per drive period.
pub const MAX_STEPS_PER_PERIOD: usize = 100_000;
/// Most starts in one section (a run that records every period's point).
pub const MAX_STARTS: usize = 10_000;
/// Most starts in one run that records no points (a safe basin keeps only
/// each start's end): 2048 × 2048.
pub const MAX_UNRECORDED_STARTS: usize = 2048 * 2048;

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
    /// Steps per drive period; `None` takes the fastest local time scale
    /// at the starts (see [`SECTION_COARSENING`], at least
    /// [`MIN_STEPS_PER_PERIOD`]).
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
/// checks of the settings, the step, and the orbits on all cores, in lanes
/// for the splitting methods and one by one for the others (see the module
/// comment; either way the result does not depend on the thread count).
pub fn strobe_runs(
    sys: &System,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
    strobe: &Strobe,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Section, String> {
    runs(sys, starts, cfg, strobe, cancel, progress, true)
}

/// [`strobe_runs`] with every start run by itself through
/// [`Integrator::step`], whatever the method: the reference the lanes are
/// checked against.
pub fn strobe_runs_per_start(
    sys: &System,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
    strobe: &Strobe,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Section, String> {
    runs(sys, starts, cfg, strobe, cancel, progress, false)
}

fn runs(
    sys: &System,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
    strobe: &Strobe,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
    lanes: bool,
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
    if strobe.record && starts.len() > MAX_STARTS {
        return Err(format!(
            "a section takes at most {MAX_STARTS} starts ({} given)",
            starts.len()
        ));
    }
    if starts.len() > MAX_UNRECORDED_STARTS {
        return Err(format!(
            "a run takes at most {MAX_UNRECORDED_STARTS} starts ({} given)",
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
    let run = Run {
        sys,
        strobe,
        cfg,
        n,
        h,
        cancel,
    };
    let scheme = Scheme::for_method(method).filter(|_| lanes);
    let orbits: Vec<SectionOrbit> = match scheme {
        Some(scheme) => {
            let splitting = Splitting::new(scheme).with_damping(cfg.damping);
            starts
                .par_chunks(LANES)
                .map(|block| {
                    let mut stepper = splitting.lanes(sys);
                    let o = run.lane_block(&mut stepper, block);
                    progress(
                        done.fetch_add(block.len(), Ordering::Relaxed) + block.len(),
                        starts.len(),
                    );
                    o
                })
                .collect::<Vec<_>>()
                .into_iter()
                .flatten()
                .collect()
        }
        None => starts
            .par_iter()
            .map(|&start| {
                let o = run.one_orbit(method, start);
                progress(done.fetch_add(1, Ordering::Relaxed) + 1, starts.len());
                o
            })
            .collect(),
    };
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

/// Steps per period from the fastest local time scale among the starts:
/// the local period 2π/ω there (see [`local_rate`]) divided by the method's
/// [`Method::default_steps_per_period`] / [`SECTION_COARSENING`], at least
/// [`MIN_STEPS_PER_PERIOD`].
fn default_steps_per_period(
    sys: &System,
    method: Method,
    starts: &[[f64; 2]],
    cfg: &SectionConfig,
) -> usize {
    let rate = starts
        .iter()
        .map(|s| sys.jet_t(s[0], s[1], cfg.t0))
        .filter(|j| j.is_finite())
        .map(|j| local_rate(&j))
        .fold(0.0, f64::max);
    let per_local_period = method.default_steps_per_period() / SECTION_COARSENING;
    let n = (cfg.period * rate / (2.0 * PI) * per_local_period).ceil();
    if n.is_finite() && n >= 1.0 {
        (n.min(MAX_STEPS_PER_PERIOD as f64) as usize).max(MIN_STEPS_PER_PERIOD)
    } else {
        MIN_STEPS_PER_PERIOD
    }
}

/// What every start of one run shares.
struct Run<'a> {
    sys: &'a System,
    strobe: &'a Strobe<'a>,
    cfg: &'a SectionConfig,
    /// Steps per period and the step.
    n: usize,
    h: f64,
    cancel: &'a Cancel,
}

impl Run<'_> {
    /// A start's result before any period.
    fn begin(&self, start: [f64; 2]) -> SectionOrbit {
        SectionOrbit {
            start,
            points: Vec::with_capacity(if self.strobe.record {
                self.cfg.periods
            } else {
                0
            }),
            periods_done: 0,
            last: start,
            end: SectionEnd::Completed,
        }
    }

    /// A period's point `x` after period `k`: false (and the end set) when
    /// it is outside the region.
    fn arrive(&self, out: &mut SectionOrbit, k: usize, x: [f64; 2]) -> bool {
        if !(self.strobe.stays)(x) {
            out.end = SectionEnd::LeftBounds;
            return false;
        }
        out.periods_done = k;
        out.last = x;
        if self.strobe.record {
            out.points.push(x);
        }
        true
    }

    /// One start by itself through [`Integrator::step`].
    fn one_orbit(&self, method: Method, start: [f64; 2]) -> SectionOrbit {
        let (sys, cfg) = (self.sys, self.cfg);
        let mut out = self.begin(start);
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
            if self.cancel.is_cancelled() {
                out.end = SectionEnd::Cancelled;
                return out;
            }
            for _ in 0..self.n {
                match integ.step(sys, &s, self.h) {
                    Ok(step) => s = step.state,
                    Err(_) => {
                        out.end = SectionEnd::NonFinite;
                        return out;
                    }
                }
            }
            s.t = cfg.t0 + k as f64 * cfg.period;
            if !self.arrive(&mut out, k, [s.q, s.p]) {
                return out;
            }
        }
        out
    }

    /// A block of starts (at most [`LANES`]) stepped together; each start's
    /// numbers and end are those of [`Run::one_orbit`].
    fn lane_block(&self, lanes: &mut SplittingLanes, block: &[[f64; 2]]) -> Vec<SectionOrbit> {
        let (sys, cfg) = (self.sys, self.cfg);
        let mut outs: Vec<SectionOrbit> = block.iter().map(|&x| self.begin(x)).collect();
        // which start each lane holds
        let mut at: Vec<usize> = Vec::with_capacity(block.len());
        let mut points = Vec::with_capacity(block.len());
        for (i, x) in block.iter().enumerate() {
            if x[0].is_finite() && x[1].is_finite() {
                at.push(i);
                points.push(*x);
            } else {
                outs[i].end = SectionEnd::NonFinite;
            }
        }
        lanes.load(&points);
        let mut keep = vec![true; at.len()];
        // drop the lanes with `keep` false, their ends already set
        let compact = |lanes: &mut SplittingLanes, at: &mut Vec<usize>, keep: &mut Vec<bool>| {
            if keep.iter().all(|&k| k) {
                return;
            }
            lanes.retain(keep);
            let mut k = 0;
            at.retain(|_| {
                k += 1;
                keep[k - 1]
            });
            keep.clear();
            keep.resize(at.len(), true);
        };
        let mut t = cfg.t0;
        for k in 1..=cfg.periods {
            if at.is_empty() {
                break;
            }
            if self.cancel.is_cancelled() {
                for &i in &at {
                    outs[i].end = SectionEnd::Cancelled;
                }
                break;
            }
            if k == 1 && lanes.damped() {
                for (j, ok) in lanes.take_curvature(sys, t).into_iter().enumerate() {
                    if !ok {
                        outs[at[j]].end = SectionEnd::NonFinite;
                        keep[j] = false;
                    }
                }
                compact(lanes, &mut at, &mut keep);
            }
            for _ in 0..self.n {
                lanes.step(t, self.h);
                t += self.h;
                for j in 0..at.len() {
                    if !(t.is_finite() && lanes.finite(j)) {
                        outs[at[j]].end = SectionEnd::NonFinite;
                        keep[j] = false;
                    }
                }
                compact(lanes, &mut at, &mut keep);
            }
            t = cfg.t0 + k as f64 * cfg.period;
            for j in 0..at.len() {
                keep[j] = self.arrive(&mut outs[at[j]], k, lanes.point(j));
            }
            compact(lanes, &mut at, &mut keep);
        }
        outs
    }
}
