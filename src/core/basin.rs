//! Safe basins of the wells of a driven, damped system and how they erode as
//! the drive grows.
//!
//! # What is computed
//!
//! A lattice of `lattice` × `lattice` starts over the view (cell centres) is
//! followed for `periods` drive periods by the one stroboscopic loop
//! ([`strobe_runs`]); a start is *safe* for a well when it begins in the well
//! and is still in it at every one of the `periods` stroboscopic instants
//! t₀ + kτ. The safe starts of each well form its mask; the safe area is
//! their count times the cell area.
//!
//! # The rule for leaving a well
//!
//! The wells are those of the undriven H₀ (H with the drive amplitude at 0;
//! H itself when nothing names an amplitude), found by the portrait's
//! analysis of H₀ over the view: each center bounded by a saddle in view,
//! with its escape energy E (the lowest saddle level that frees its motion).
//! Every saddle of H₀ in view puts up a *gate*: the straight line through
//! the saddle at right angles to the segment from the saddle to the well's
//! center; the well's side of a gate is the side of the center.
//!
//! - **At the start (energy and position)**: a start is in the well when
//!   H₀ is below E (above it for a well around a maximum of H₀) and it lies
//!   on the well's side of every gate. This is the open lobe the separatrix
//!   bounds.
//! - **At each stroboscopic instant (position)**: the orbit has left the
//!   well as soon as its state lies on the far side of any gate (over a
//!   hilltop of the potential, whatever its energy: beyond it with H₀ < E
//!   it sits in the neighbouring well).
//!
//! *Exact for the undriven case*: without drive, dH₀/dt = −δ (∂H₀/∂p)² ≤ 0,
//! so an orbit that starts in the lobe stays below E and can never reach a
//! gate's line through the saddle, which only the lobe's boundary touches;
//! every other start is not in the well at all. The safe set at zero drive
//! is therefore the lobe itself, with or without damping, whatever the
//! sampling (up to the integrator's error for starts within its error of
//! the separatrix).
//!
//! *Limits*: (1) the gates are exact when H₀ = T(p) + V(q) with T even and
//! convex (every saddle and center sits on p = 0, the gates are the lines
//! q = q_saddle and the lobe lies between its nearest saddles); for other
//! H₀ a straight gate may cut the lobe or miss a bend of it. (2) Under
//! drive the position is tested only once per period: an orbit that goes
//! over a hilltop and comes back within one period is not seen to leave
//! (common practice for stroboscopic escape tests; over tens of periods such
//! an orbit is almost always caught on the far side). (3) A start above the
//! escape energy is not in the well even if damping would capture it. (4) A
//! well whose saddle is not in view, or which reaches the view's edge below
//! its escape energy, has no basin or a truncated one (said in `notes`).
//!
//! # The measures
//!
//! - **Global integrity** (the integrity measure of the trade): safe area
//!   divided by the area of the same well's safe set at zero drive. The
//!   zero-drive reference is not integrated: by the exactness above it is
//!   the lobe, so it is the count of lattice starts in the lobe (same
//!   lattice, same rule) times the cell area. It is thus 1 at zero drive
//!   exactly when the integrator keeps every lobe start (checked in
//!   `tests/basin.rs`), and never above 1.
//! - **Local integrity** (our own definition): the radius of the largest
//!   disc about the well's center (the undriven equilibrium) that holds no
//!   unsafe lattice start, divided by the same radius at zero drive (the
//!   distance from the center to the nearest lattice start outside the
//!   lobe). It drops when erosion reaches the core of the well, which the
//!   global measure can miss while fractal fingers take area from the rim.
//!
//! The erosion curve repeats the basin for a list of drive amplitudes (the
//! drive's amplitude parameter set to each value), with the same lattice,
//! gates and reference.
//!
//! Reference: the integrity measures of M. S. Soliman and J. M. T.
//! Thompson, J. Sound Vib. 135 (1989) 453–475.

use super::Cancel;
use super::analysis::{AnalysisConfig, analyze};
use super::equilibria::EquilibriumKind;
use super::integrate::Method;
use super::section::{MAX_STARTS, SectionConfig, SectionEnd, Strobe, strobe_runs};
use super::system::System;
use super::window::Window;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Starts per side of the lattice when nothing says otherwise.
pub const DEFAULT_LATTICE: usize = 200;
/// Starts per side of the quick preview (while a slider is dragged).
pub const PREVIEW_LATTICE: usize = 50;
/// Most starts per side.
pub const MAX_LATTICE: usize = 1000;
/// Drive periods followed per start when nothing says otherwise.
pub const DEFAULT_PERIODS: usize = 60;
/// Most drive periods per start.
pub const MAX_PERIODS: usize = 100_000;
/// Amplitudes on an erosion curve when nothing says otherwise.
pub const DEFAULT_AMPLITUDES: usize = 40;
/// Most amplitudes on an erosion curve.
pub const MAX_AMPLITUDES: usize = 1000;

/// Settings of a safe basin.
#[derive(Clone, Debug, PartialEq)]
pub struct BasinConfig {
    /// Starts per side of the lattice over the window (cell centres).
    pub lattice: usize,
    /// Drive periods a start must stay.
    pub periods: usize,
    /// Drive period τ > 0 (any positive time for an undriven system: the
    /// stroboscopic instants are then only when the rule is tested).
    pub period: f64,
    /// Linear damping rate δ ≥ 0.
    pub damping: f64,
    /// The integrator (`Auto` resolves as for an orbit).
    pub method: Method,
    /// Steps per drive period; `None` takes the local time scale at the
    /// starts (see [`strobe_runs`]), settled once for the whole lattice.
    pub steps_per_period: Option<usize>,
    /// Time of the starts.
    pub t0: f64,
}

impl BasinConfig {
    /// The defaults for a drive of period `period` and damping `damping`.
    pub fn new(period: f64, damping: f64) -> BasinConfig {
        BasinConfig {
            lattice: DEFAULT_LATTICE,
            periods: DEFAULT_PERIODS,
            period,
            damping,
            method: Method::Auto,
            steps_per_period: None,
            t0: 0.0,
        }
    }

    /// The same settings for a quick look: the coarse preview lattice (at
    /// most [`PREVIEW_LATTICE`] per side) and a quarter of the periods (at
    /// least one). A quick look keeps more starts than the full basin does.
    pub fn preview(&self) -> BasinConfig {
        BasinConfig {
            lattice: self.lattice.min(PREVIEW_LATTICE),
            periods: (self.periods / 4).max(1),
            ..self.clone()
        }
    }

    fn section(&self, periods: usize, steps: Option<usize>) -> SectionConfig {
        SectionConfig {
            period: self.period,
            damping: self.damping,
            periods,
            method: self.method,
            steps_per_period: steps,
            t0: self.t0,
        }
    }
}

/// A gate: a straight line through a saddle of H₀; the well is on the side
/// `normal` points to.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Gate {
    pub saddle: [f64; 2],
    pub normal: [f64; 2],
}

impl Gate {
    fn admits(&self, x: [f64; 2]) -> bool {
        (x[0] - self.saddle[0]) * self.normal[0] + (x[1] - self.saddle[1]) * self.normal[1] > 0.0
    }
}

/// One well of H₀ as the basin sees it: its center, escape energy and gates.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct WellRegion {
    pub center: [f64; 2],
    /// H₀ at the center.
    pub energy: f64,
    /// The escape energy E.
    pub escape_energy: f64,
    pub gates: Vec<Gate>,
    /// The well reaches the window's edge below its escape energy (its
    /// basin is cut off by the view).
    pub truncated: bool,
}

impl WellRegion {
    /// On the well's side of every gate.
    pub fn inside_gates(&self, x: [f64; 2]) -> bool {
        self.gates.iter().all(|g| g.admits(x))
    }

    /// In the lobe: below the escape energy (above it for a maximum of H₀)
    /// and inside the gates.
    pub fn in_lobe(&self, h0: &System, x: [f64; 2]) -> bool {
        let e = h0.energy(x[0], x[1]);
        let below = if self.escape_energy >= self.energy {
            e < self.escape_energy
        } else {
            e > self.escape_energy
        };
        below && self.inside_gates(x)
    }
}

/// The wells of `h0` (the undriven H) in `window` that a saddle in view
/// bounds, with their gates. Wells not bounded by a saddle in view have no
/// basin and are left out.
pub fn well_regions(
    h0: &System,
    window: &Window,
    analysis: &AnalysisConfig,
    cancel: &Cancel,
) -> Vec<WellRegion> {
    let a = analyze(h0, window, analysis, cancel);
    let saddles: Vec<[f64; 2]> = a
        .equilibria
        .iter()
        .filter(|e| e.kind == EquilibriumKind::Saddle && e.energy.is_finite())
        .map(|e| [e.q, e.p])
        .collect();
    a.wells
        .iter()
        .filter_map(|w| {
            let escape_energy = w.escape_energy?;
            let center = [w.q, w.p];
            let gates = saddles
                .iter()
                .filter_map(|&s| {
                    let d = [center[0] - s[0], center[1] - s[1]];
                    let n = d[0].hypot(d[1]);
                    (n > 0.0).then(|| Gate {
                        saddle: s,
                        normal: [d[0] / n, d[1] / n],
                    })
                })
                .collect();
            Some(WellRegion {
                center,
                energy: w.energy,
                escape_energy,
                gates,
                truncated: w.edge_energy.is_some(),
            })
        })
        .collect()
}

/// The safe basin of one well.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct WellBasin {
    pub center: [f64; 2],
    pub escape_energy: f64,
    /// Lattice starts in the lobe (the zero-drive safe set).
    pub starts: usize,
    /// Starts that stayed all periods.
    pub safe: usize,
    pub safe_area: f64,
    /// The zero-drive safe area: `starts` × the cell area.
    pub reference_area: f64,
    /// Global integrity: `safe_area / reference_area`.
    pub integrity: f64,
    /// Radius of the largest disc about the center with no unsafe start.
    pub safe_radius: f64,
    /// The same at zero drive (nearest start outside the lobe).
    pub reference_radius: f64,
    /// Local integrity: `safe_radius / reference_radius`.
    pub local_integrity: f64,
    /// The well's basin is cut off by the view.
    pub truncated: bool,
    /// Per lattice cell (row-major, q fastest, p rows from the bottom): the
    /// drive periods the start stayed in this well; `None` for a start not
    /// in the well. A start is safe when it stayed all `periods`.
    #[serde(skip)]
    pub stayed: Vec<Option<u32>>,
}

impl WellBasin {
    /// Whether the start in lattice cell `k` is safe.
    pub fn is_safe(&self, k: usize, periods: usize) -> bool {
        self.stayed.get(k).copied().flatten() == Some(periods as u32)
    }
}

/// The safe basins of every well in view.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Basin {
    pub window: Window,
    pub lattice: usize,
    pub periods: usize,
    pub period: f64,
    pub damping: f64,
    pub method: Method,
    pub steps_per_period: usize,
    pub wells: Vec<WellBasin>,
    pub cancelled: bool,
}

impl Basin {
    /// The centre of lattice cell `k`.
    pub fn cell_centre(&self, k: usize) -> [f64; 2] {
        lattice_point(&self.window, self.lattice, k)
    }

    /// Width and height of one lattice cell.
    pub fn cell_size(&self) -> [f64; 2] {
        [
            self.window.width() / self.lattice as f64,
            self.window.height() / self.lattice as f64,
        ]
    }
}

fn lattice_point(w: &Window, n: usize, k: usize) -> [f64; 2] {
    let (i, j) = (k % n, k / n);
    [
        w.qmin + (i as f64 + 0.5) * w.width() / n as f64,
        w.pmin + (j as f64 + 0.5) * w.height() / n as f64,
    ]
}

fn check(window: &Window, cfg: &BasinConfig) -> Result<(), String> {
    window.validate().map_err(|e| format!("window: {e}"))?;
    if !(1..=MAX_LATTICE).contains(&cfg.lattice) {
        return Err(format!(
            "the lattice takes 1 to {MAX_LATTICE} starts per side ({} given)",
            cfg.lattice
        ));
    }
    if !(1..=MAX_PERIODS).contains(&cfg.periods) {
        return Err(format!(
            "a basin follows 1 to {MAX_PERIODS} drive periods ({} given)",
            cfg.periods
        ));
    }
    Ok(())
}

/// The starts of each well: lattice indices of the starts in its lobe.
fn well_starts(h0: &System, regions: &[WellRegion], window: &Window, n: usize) -> Vec<Vec<usize>> {
    regions
        .iter()
        .map(|r| {
            (0..n * n)
                .filter(|&k| r.in_lobe(h0, lattice_point(window, n, k)))
                .collect()
        })
        .collect()
}

/// The steps per period every run of a basin (or of an erosion curve)
/// uses, settled once from the starts: the configured number, else the
/// stroboscopic loop's own default over (at most [`MAX_STARTS`] of) them.
fn steps_per_period(
    sys: &System,
    window: &Window,
    cfg: &BasinConfig,
    starts: &[Vec<usize>],
) -> Result<(Method, usize), String> {
    let all: Vec<usize> = starts.iter().flatten().copied().collect();
    let stride = all.len().div_ceil(MAX_STARTS).max(1);
    let probe: Vec<[f64; 2]> = all
        .iter()
        .step_by(stride)
        .map(|&k| lattice_point(window, cfg.lattice, k))
        .collect();
    let keep = |_: [f64; 2]| true;
    let s = strobe_runs(
        sys,
        &probe,
        &cfg.section(0, cfg.steps_per_period),
        &Strobe {
            stays: &keep,
            record: false,
        },
        &Cancel::never(),
        &|_, _| {},
    )?;
    Ok((s.method, s.steps_per_period))
}

/// One run of every well's starts at the system `sys`: periods stayed per
/// start, and whether Cancel stopped it.
#[allow(clippy::too_many_arguments)]
fn run_wells(
    sys: &System,
    regions: &[WellRegion],
    starts: &[Vec<usize>],
    window: &Window,
    cfg: &BasinConfig,
    steps: usize,
    cancel: &Cancel,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<(Vec<Vec<Option<u32>>>, bool), String> {
    let n = cfg.lattice;
    let sc = cfg.section(cfg.periods, Some(steps));
    let mut cancelled = false;
    let mut out = Vec::with_capacity(regions.len());
    for (region, ks) in regions.iter().zip(starts) {
        let mut stayed = vec![None; n * n];
        let rule = |x: [f64; 2]| region.inside_gates(x);
        let strobe = Strobe {
            stays: &rule,
            record: false,
        };
        for tile in ks.chunks(MAX_STARTS) {
            if cancel.is_cancelled() {
                cancelled = true;
                break;
            }
            let pts: Vec<[f64; 2]> = tile.iter().map(|&k| lattice_point(window, n, k)).collect();
            // the loop reports how many of the tile's starts are done (once
            // per block of starts, from worker threads in any order): pass
            // on each rise of the count
            let seen = AtomicUsize::new(0);
            let report = |done: usize, _: usize| {
                let before = seen.fetch_max(done, Ordering::Relaxed);
                if done > before {
                    progress(done - before);
                }
            };
            let s = strobe_runs(sys, &pts, &sc, &strobe, cancel, &report)?;
            cancelled |= s.cancelled;
            for (&k, o) in tile.iter().zip(&s.orbits) {
                // a start whose H stopped being finite counts as having left
                let kept = match o.end {
                    SectionEnd::Completed => cfg.periods,
                    _ => o.periods_done,
                };
                stayed[k] = Some(kept as u32);
            }
        }
        out.push(stayed);
    }
    Ok((out, cancelled))
}

/// The measures of one well from the periods its starts stayed.
fn measure(
    region: &WellRegion,
    stayed: Vec<Option<u32>>,
    window: &Window,
    cfg: &BasinConfig,
) -> WellBasin {
    let n = cfg.lattice;
    let cell = (window.width() / n as f64) * (window.height() / n as f64);
    let full = Some(cfg.periods as u32);
    let starts = stayed.iter().filter(|s| s.is_some()).count();
    let safe = stayed.iter().filter(|&&s| s == full).count();
    let dist = |k: usize| {
        let x = lattice_point(window, n, k);
        (x[0] - region.center[0]).hypot(x[1] - region.center[1])
    };
    let nearest = |bad: &dyn Fn(usize) -> bool| {
        (0..n * n)
            .filter(|&k| bad(k))
            .map(dist)
            .fold(f64::INFINITY, f64::min)
    };
    // the disc is all safe up to the nearest start that is not; when the
    // lattice point nearest the centre is itself not safe, no disc is
    let nearest_point = nearest(&|_| true);
    let safe_radius = match nearest(&|k| stayed[k] != full) {
        r if r <= nearest_point => 0.0,
        r => r,
    };
    let reference_radius = nearest(&|k| stayed[k].is_none());
    let ratio = |a: f64, b: f64| {
        if b > 0.0 && b.is_finite() {
            (a / b).min(1.0)
        } else {
            0.0
        }
    };
    WellBasin {
        center: region.center,
        escape_energy: region.escape_energy,
        starts,
        safe,
        safe_area: safe as f64 * cell,
        reference_area: starts as f64 * cell,
        integrity: if starts > 0 {
            safe as f64 / starts as f64
        } else {
            0.0
        },
        safe_radius,
        reference_radius,
        local_integrity: ratio(safe_radius, reference_radius),
        truncated: region.truncated,
        stayed,
    }
}

/// The safe basin of every well in `regions` (from [`well_regions`] of the
/// undriven H₀, `h0`) for the driven system `sys`, over `window`.
/// `progress(done, total)` counts starts finished.
pub fn basin(
    sys: &System,
    h0: &System,
    regions: &[WellRegion],
    window: &Window,
    cfg: &BasinConfig,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Basin, String> {
    check(window, cfg)?;
    let starts = well_starts(h0, regions, window, cfg.lattice);
    let (method, steps) = steps_per_period(sys, window, cfg, &starts)?;
    let total: usize = starts.iter().map(Vec::len).sum();
    let done = AtomicUsize::new(0);
    let tick = |k: usize| progress(done.fetch_add(k, Ordering::Relaxed) + k, total);
    let (stayed, cancelled) = run_wells(sys, regions, &starts, window, cfg, steps, cancel, &tick)?;
    Ok(Basin {
        window: *window,
        lattice: cfg.lattice,
        periods: cfg.periods,
        period: cfg.period,
        damping: cfg.damping,
        method,
        steps_per_period: steps,
        wells: regions
            .iter()
            .zip(stayed)
            .map(|(r, s)| measure(r, s, window, cfg))
            .collect(),
        cancelled,
    })
}

/// One amplitude of an erosion curve: per well, the measures.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct ErosionPoint {
    pub amplitude: f64,
    /// Per well (in the order of [`Erosion::centers`]): global integrity.
    pub integrity: Vec<f64>,
    /// Per well: local integrity.
    pub local_integrity: Vec<f64>,
    /// Per well: safe area.
    pub safe_area: Vec<f64>,
}

/// The integrity measures against the drive amplitude.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Erosion {
    /// The amplitude parameter's name.
    pub amplitude: String,
    /// The wells' centers.
    pub centers: Vec<[f64; 2]>,
    /// The zero-drive safe area of each well.
    pub reference_area: Vec<f64>,
    pub lattice: usize,
    pub periods: usize,
    pub steps_per_period: usize,
    pub points: Vec<ErosionPoint>,
    /// The Melnikov threshold amplitude (the lowest over the connections),
    /// when the caller knows it.
    pub threshold: Option<f64>,
    pub cancelled: bool,
}

/// The basin at each of `amplitudes` (parameter `amplitude` of `sys` set
/// to each), on one lattice with the steps per period settled once at the
/// largest amplitude. `progress(done, total)` counts starts over the whole
/// curve.
#[allow(clippy::too_many_arguments)]
pub fn erosion(
    sys: &System,
    amplitude: usize,
    amplitudes: &[f64],
    regions: &[WellRegion],
    window: &Window,
    cfg: &BasinConfig,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Erosion, String> {
    check(window, cfg)?;
    let name = sys
        .formula()
        .params()
        .get(amplitude)
        .cloned()
        .ok_or_else(|| "the amplitude is not a parameter of the formula".to_string())?;
    if amplitudes.is_empty() || amplitudes.len() > MAX_AMPLITUDES {
        return Err(format!(
            "an erosion curve takes 1 to {MAX_AMPLITUDES} amplitudes ({} given)",
            amplitudes.len()
        ));
    }
    if let Some(a) = amplitudes.iter().find(|a| !a.is_finite()) {
        return Err(format!("the amplitude {a} is not a finite number"));
    }
    let h0 = sys.undriven(amplitude)?;
    let starts = well_starts(&h0, regions, window, cfg.lattice);
    let largest = amplitudes
        .iter()
        .copied()
        .fold(0.0, |m: f64, a| if a.abs() > m.abs() { a } else { m });
    let (_, steps) = steps_per_period(&sys.with_param(amplitude, largest), window, cfg, &starts)?;
    let per: usize = starts.iter().map(Vec::len).sum();
    let total = per * amplitudes.len();
    let done = AtomicUsize::new(0);
    let tick = |k: usize| progress(done.fetch_add(k, Ordering::Relaxed) + k, total);
    let mut points = Vec::with_capacity(amplitudes.len());
    let mut cancelled = false;
    for &a in amplitudes {
        if cancel.is_cancelled() {
            cancelled = true;
            break;
        }
        let s = sys.with_param(amplitude, a);
        let (stayed, stop) = run_wells(&s, regions, &starts, window, cfg, steps, cancel, &tick)?;
        if stop {
            cancelled = true;
            break;
        }
        let wells: Vec<WellBasin> = regions
            .iter()
            .zip(stayed)
            .map(|(r, st)| measure(r, st, window, cfg))
            .collect();
        points.push(ErosionPoint {
            amplitude: a,
            integrity: wells.iter().map(|w| w.integrity).collect(),
            local_integrity: wells.iter().map(|w| w.local_integrity).collect(),
            safe_area: wells.iter().map(|w| w.safe_area).collect(),
        });
    }
    let cell = (window.width() / cfg.lattice as f64) * (window.height() / cfg.lattice as f64);
    Ok(Erosion {
        amplitude: name,
        centers: regions.iter().map(|r| r.center).collect(),
        reference_area: starts.iter().map(|s| s.len() as f64 * cell).collect(),
        lattice: cfg.lattice,
        periods: cfg.periods,
        steps_per_period: steps,
        points,
        threshold: None,
        cancelled,
    })
}

/// `count` amplitudes evenly from `from` to `to`, both ends included.
pub fn amplitude_range(from: f64, to: f64, count: usize) -> Vec<f64> {
    match count {
        0 => Vec::new(),
        1 => vec![from],
        _ => (0..count)
            .map(|k| from + (to - from) * k as f64 / (count - 1) as f64)
            .collect(),
    }
}
