//! Semiclassical (Bohr–Sommerfeld) energy levels of a well, and the
//! tunnelling splitting of the lowest pair of a symmetric double well.
//!
//! # Levels
//!
//! With I(E) = (1/2π)∮p dq the action of the closed orbit at energy E, the
//! Bohr–Sommerfeld rule (with the Maslov index 2 of an orbit with two smooth
//! turning points) quantizes
//!
//! ```text
//! I(Eₙ) = ħ (n + ½),   n = 0, 1, 2, …
//! ```
//!
//! I and the period T come from the well's closed orbits
//! ([`WellOrbits`], the backbone's quadrature for H = T(p) + V(q) with T
//! quadratic in p, else one period of the orbit). Since dI/dE = T(E)/2π,
//! each Eₙ is found by Newton on I(E) − ħ(n + ½) with the step
//! −(I − ħ(n + ½))·2π/T, safeguarded by the bracket [Eₙ₋₁, E_top]
//! (bisection whenever a step leaves it), from the guess Eₙ₋₁ + ħω(Eₙ₋₁).
//! Iteration stops when the step is below the quadrature's relative
//! tolerance of the depth |E − E_c| (1e-13). Very close to a flat top
//! (a Morse well just below dissociation) E − H(q) loses digits to rounding
//! and the quadrature cannot meet 1e-13; there it is loosened to 1e-11, then
//! 1e-9, and stays loosened for the levels above. The bound levels are
//! those with ħ(n + ½) below the action at the top energy (the escape
//! energy, or the level whose curve reaches the window's edge when no saddle
//! bounds the well in view), taken a relative 1e-12 of the depth below the
//! top where the period is still finite (1e-9 or 1e-6 if the quadrature
//! fails there) with the quadrature tolerance 1e-11 (else 1e-9); so the count is the number of n ≥ 0 with
//! ħ(n + ½) < I(E_top), exact unless ħ(n + ½) falls within that sliver.
//!
//! For drawing, each level's closed curve H = Eₙ (the quantized orbit) is
//! traced from the same well when [`LevelsConfig::curve_points`] asks: the
//! arcs p = p_c ± √(2m(Eₙ − H(q, p_c))) between the level's turning points,
//! or the orbit over one period.
//!
//! The rule is exact for the harmonic oscillator and the Morse potential and
//! accurate to O(ħ²) relative corrections otherwise; it is an estimate of
//! the quantum levels, best for large n and for levels well below the top.
//!
//! # Tunnelling splitting
//!
//! When the well is bounded on exactly one side by a barrier top q_s of
//! H(q, p_c) and H(q, p_c) is mirror-symmetric about q_s (the same to
//! `1e-9` of the barrier height at sample points out to past the center),
//! the ground levels of the two wells form a pair split by
//!
//! ```text
//! ΔE = (ħω/π) · exp(−(1/ħ) ∫ |p| dq)
//! ```
//!
//! with ω = 2π/T(E₀) the classical frequency at the lowest level E₀ and the
//! integral across the barrier between the inner turning points at E₀,
//! |p| = √(2m(V(q) − E₀)) (L. D. Landau and E. M. Lifshitz, *Quantum
//! Mechanics*, 3rd ed., Pergamon 1977, §50, problem 3). The formula needs a
//! barrier that is thick on the scale of the wavelength: it is given only
//! when the exponent S/ħ is at least [`MIN_BARRIER_EXPONENT`] (2π; for a
//! parabolic barrier that is E₀ at least two barrier quanta ħω_b below the
//! top). It is an estimate, never a spectroscopic value: for the ground
//! pair of the quartic double well 4(q² − 1)² at ħ = 0.2 it is 0.94 of the
//! splitting of a finite-difference solution of the Schrödinger equation
//! (low by a factor near √(π/e); tests/levels.rs).
//!
//! Reference: L. D. Landau and E. M. Lifshitz, *Quantum Mechanics
//! (Non-relativistic theory)*, 3rd ed. (Pergamon 1977) §48 (the quantization
//! rule) and §50 (the splitting); P. M. Morse, Phys. Rev. 34 (1929) 57 (the
//! Morse levels, for which the rule is exact).

use super::backbone::{BackboneConfig, BackboneError, BackboneMethod, BackboneRow, WellOrbits};
use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};
use std::f64::consts::PI;
use std::fmt;

/// Smallest barrier exponent S/ħ for which the splitting is given.
pub const MIN_BARRIER_EXPONENT: f64 = 2.0 * PI;
/// Most levels listed per well (the count is still given in full).
pub const MAX_LEVELS: usize = 10_000;
/// Most bound levels counted; a smaller ħ is refused.
pub const MAX_COUNT: f64 = 1e9;
/// The top action is taken this fraction of the depth below the top energy.
const TOP_MARGINS: [f64; 3] = [1e-12, 1e-9, 1e-6];
/// Looser quadrature tolerances tried in turn where the configured one does
/// not converge: close to a flat top, E − H(q) has lost digits to rounding.
const LOOSER_TOLERANCES: [f64; 2] = [1e-11, 1e-9];

/// Mirror symmetry about the barrier top holds to this fraction of its height.
const MIRROR_TOL: f64 = 1e-9;
/// Sample points of the mirror-symmetry check.
const MIRROR_SAMPLES: usize = 24;

/// The well's orbits at the configured quadrature tolerance, loosened once
/// and for good (the rounding only grows towards the top) where it fails.
struct Orbits<'w, 'a> {
    well: &'w WellOrbits<'a>,
    tolerances: Vec<f64>,
    at: std::cell::Cell<usize>,
}

impl Orbits<'_, '_> {
    fn at_depth(&self, depth: f64, from: (f64, f64)) -> Option<(BackboneRow, (f64, f64))> {
        for k in self.at.get()..self.tolerances.len() {
            if let Some(r) = self
                .well
                .orbit_at_depth_within(depth, from, self.tolerances[k])
            {
                self.at.set(k);
                return Some(r);
            }
        }
        None
    }
}

/// Settings of the level search.
#[derive(Clone, Debug, PartialEq)]
pub struct LevelsConfig {
    /// Most levels listed (default and cap [`MAX_LEVELS`]).
    pub max_levels: usize,
    /// Most Newton iterations per level (default 100).
    pub max_iterations: usize,
    /// The well's quadrature tolerance, orbit step cap and saddle search.
    pub well: BackboneConfig,
    /// Points of each level's closed curve (the quantized orbit, for
    /// drawing); 0 (the default) draws none.
    pub curve_points: usize,
}

impl Default for LevelsConfig {
    fn default() -> Self {
        LevelsConfig {
            max_levels: MAX_LEVELS,
            max_iterations: 100,
            well: BackboneConfig::default(),
            curve_points: 0,
        }
    }
}

/// One quantized level.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Level {
    pub n: usize,
    pub energy: f64,
    /// The quantized action ħ(n + ½).
    pub action: f64,
    /// The classical period at this energy.
    pub period: f64,
    /// Eₙ₊₁ − Eₙ (none for the highest level listed).
    pub spacing: Option<f64>,
    /// Where the orbit crosses p = p_c, [q₋, q₊] (quadrature path only).
    pub turning_points: Option<[f64; 2]>,
}

/// The tunnelling splitting of the lowest pair (an estimate; see the module).
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Splitting {
    /// The lowest level E₀ of each well of the pair.
    pub energy: f64,
    /// The mirror well's center [q, p].
    pub partner: [f64; 2],
    /// The barrier top between the two wells.
    pub barrier_q: f64,
    /// ω = 2π/T(E₀).
    pub frequency: f64,
    /// S = ∫ |p| dq across the barrier at E₀.
    pub barrier_action: f64,
    /// S/ħ.
    pub exponent: f64,
    /// ΔE = (ħω/π) exp(−S/ħ).
    pub splitting: f64,
}

/// The levels of one well.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct WellLevels {
    /// The refined center [q, p].
    pub center: [f64; 2],
    pub center_energy: f64,
    /// The lowest saddle level bounding the well, if one bounds it in view.
    pub escape_energy: Option<f64>,
    /// The escape energy or the level that reaches the window's edge.
    pub top_energy: f64,
    pub hbar: f64,
    pub method: BackboneMethod,
    /// I(E_top), taken just below the top.
    pub top_action: f64,
    /// Number of bound levels: n ≥ 0 with ħ(n + ½) < I(E_top).
    pub count: usize,
    /// The levels found, n = 0, 1, … (all `count` unless capped, cancelled or failed).
    pub levels: Vec<Level>,
    pub splitting: Option<Splitting>,
    /// The closed curve H = Eₙ of each level in `levels`, in their order,
    /// when [`LevelsConfig::curve_points`] asks for them (empty where none
    /// could be traced); drawing only, left out of the serialised levels.
    #[serde(skip)]
    pub curves: Vec<Vec<[f64; 2]>>,
    pub diagnostics: Vec<Diagnostic>,
    pub cancelled: bool,
}

/// Why the levels of a well could not be computed.
#[derive(Clone, Debug, PartialEq)]
pub enum LevelsError {
    /// ħ is not a positive finite number.
    BadHbar(f64),
    /// The well itself (no center there, not a center, H depends on t, …).
    Well(BackboneError),
    /// The action at the top energy could not be computed.
    NoTopAction,
    /// ħ is so small against the well's action that more than
    /// [`MAX_COUNT`] levels would be bound.
    HbarTooSmall { hbar: f64, levels: f64 },
}

impl fmt::Display for LevelsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LevelsError::BadHbar(h) => {
                write!(f, "ħ must be a positive finite number (found {h})")
            }
            LevelsError::Well(e) => e.fmt(f),
            LevelsError::NoTopAction => f.write_str(
                "the action of the highest closed orbit of this well could not be computed",
            ),
            LevelsError::HbarTooSmall { hbar, levels } => write!(
                f,
                "ħ = {hbar:e} is too small for this well: about {levels:.2e} levels would be \
                 bound (at most {MAX_COUNT:e} are counted); give a larger ħ"
            ),
        }
    }
}

impl std::error::Error for LevelsError {}

impl From<BackboneError> for LevelsError {
    fn from(e: BackboneError) -> Self {
        LevelsError::Well(e)
    }
}

/// The Bohr–Sommerfeld levels of the well around the center near `center`
/// for Planck's constant `hbar` (see the module). A degenerate minimum of a
/// separable H with quadratic kinetic part (V = q⁴/4) is accepted.
pub fn levels(
    sys: &System,
    center: [f64; 2],
    window: &Window,
    hbar: f64,
    cfg: &LevelsConfig,
    cancel: &Cancel,
) -> Result<WellLevels, LevelsError> {
    if !(hbar.is_finite() && hbar > 0.0) {
        return Err(LevelsError::BadHbar(hbar));
    }
    let well = WellOrbits::new(sys, center, window, &cfg.well, true, cancel)?;
    let [qc, _] = well.center();
    let top = well.top_depth();
    let mut tolerances = vec![cfg.well.tolerance];
    // Only the quadrature has a tolerance to loosen; an orbit that fails
    // would fail again.
    if well.method() == BackboneMethod::Quadrature {
        tolerances.extend(
            LOOSER_TOLERANCES
                .iter()
                .filter(|&&t| t > cfg.well.tolerance),
        );
    }
    let orbits = Orbits {
        well: &well,
        tolerances,
        at: std::cell::Cell::new(0),
    };
    // The count needs the top action to far fewer digits than the levels,
    // and right under a flat top the configured tolerance is out of reach:
    // the top starts from the first looser tolerance.
    let top_start = orbits
        .tolerances
        .len()
        .saturating_sub(LOOSER_TOLERANCES.len());
    let (top_depth, top_row) = TOP_MARGINS
        .iter()
        .find_map(|m| {
            let d = top * (1.0 - m);
            orbits.at.set(top_start);
            orbits.at_depth(d, (qc, qc)).map(|(r, _)| (d, r))
        })
        .ok_or(LevelsError::NoTopAction)?;
    // The levels start again from the configured tolerance.
    orbits.at.set(0);
    let top_action = top_row.action;
    let x = top_action / hbar - 0.5;
    if !(x <= MAX_COUNT) {
        return Err(LevelsError::HbarTooSmall { hbar, levels: x });
    }
    let count = if x > 0.0 { x.ceil() as usize } else { 0 };
    let mut diagnostics = Vec::new();
    let wanted = count.min(cfg.max_levels.min(MAX_LEVELS));
    if wanted < count {
        diagnostics.push(Diagnostic::warning(format!(
            "{count} levels are bound; only the lowest {wanted} are listed"
        )));
    }
    let energy_of = |d: f64| well.center_energy() + well.orientation() * d;
    let mut found: Vec<Level> = Vec::with_capacity(wanted);
    let mut cancelled = false;
    // The depth, period and turning points of the last level found.
    let mut last = (0.0, 0.0, (qc, qc));
    for n in 0..wanted {
        if cancel.is_cancelled() {
            cancelled = true;
            break;
        }
        let target = hbar * (n as f64 + 0.5);
        let guess = if n == 0 {
            if well.small_frequency() > 0.0 {
                target * well.small_frequency()
            } else {
                top_depth * target / top_action
            }
        } else {
            last.0 + hbar * 2.0 * PI / last.1
        };
        match solve_level(&orbits, target, guess, (last.0, top_depth), last.2, cfg) {
            Some((d, period, ends)) => {
                found.push(Level {
                    n,
                    energy: energy_of(d),
                    action: target,
                    period,
                    spacing: None,
                    turning_points: (well.method() == BackboneMethod::Quadrature)
                        .then_some([ends.0, ends.1]),
                });
                last = (d, period, ends);
            }
            None => {
                diagnostics.push(Diagnostic::warning(format!(
                    "level n = {n} was not found (no closed orbit or no convergence); \
                     the levels above it are left out"
                )));
                break;
            }
        }
    }
    for i in 1..found.len() {
        found[i - 1].spacing = Some(found[i].energy - found[i - 1].energy);
    }
    let splitting = found
        .first()
        .and_then(|l0| splitting(sys, &well, window, hbar, l0, &mut diagnostics));
    let mut curves = Vec::new();
    if cfg.curve_points > 0 {
        for l in &found {
            if cancel.is_cancelled() {
                cancelled = true;
                break;
            }
            let depth = well.orientation() * (l.energy - well.center_energy());
            let ends = l.turning_points.map_or((qc, qc), |[a, b]| (a, b));
            curves.push(
                well.closed_curve(depth, ends, cfg.curve_points)
                    .unwrap_or_default(),
            );
        }
    }
    Ok(WellLevels {
        center: well.center(),
        center_energy: well.center_energy(),
        escape_energy: well.escape_energy(),
        top_energy: well.top_energy(),
        hbar,
        method: well.method(),
        top_action,
        count,
        levels: found,
        splitting,
        curves,
        diagnostics,
        cancelled,
    })
}

/// The depth d in (bracket.0, bracket.1) with I(d) = `target` by Newton with
/// dI/dd = T/2π, bisecting whenever a step leaves the bracket; `from` holds
/// turning points inside the level (those of the bracket's lower end).
/// Returns the depth, the period there and the turning points.
fn solve_level(
    well: &Orbits,
    target: f64,
    guess: f64,
    bracket: (f64, f64),
    from: (f64, f64),
    cfg: &LevelsConfig,
) -> Option<(f64, f64, (f64, f64))> {
    let (mut lo, mut hi) = bracket;
    let mut from = from;
    let mut x = if guess > lo && guess < hi {
        guess
    } else {
        0.5 * (lo + hi)
    };
    for _ in 0..cfg.max_iterations {
        let (row, ends) = well.at_depth(x, from)?;
        let f = row.action - target;
        if f == 0.0 {
            return Some((x, row.period, ends));
        }
        if f < 0.0 {
            lo = x;
            from = ends;
        } else {
            hi = x;
        }
        let slope = row.period / (2.0 * PI);
        let mut next = x - f / slope;
        if !(next > lo && next < hi) {
            next = 0.5 * (lo + hi);
        }
        let small = well.tolerances[well.at.get()] * x;
        if (next - x).abs() <= small || hi - lo <= small {
            return Some((next, row.period, ends));
        }
        x = next;
    }
    None
}

/// The splitting of the lowest pair when the well and its mirror image form
/// a symmetric double well and the pair lies deep enough (see the module).
fn splitting(
    sys: &System,
    well: &WellOrbits,
    window: &Window,
    hbar: f64,
    l0: &Level,
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<Splitting> {
    let (left, right) = (well.barrier_top(-1.0), well.barrier_top(1.0));
    let (side, qs) = match (left, right) {
        (Some(q), None) => (-1.0, q),
        (None, Some(q)) => (1.0, q),
        _ => return None,
    };
    let [qc, pc] = well.center();
    let ec = well.center_energy();
    let height = (sys.energy(qs, pc) - ec).abs();
    let reach = 1.25 * (qs - qc).abs();
    let symmetric = (1..=MIRROR_SAMPLES).all(|i| {
        let x = reach * i as f64 / MIRROR_SAMPLES as f64;
        let (a, b) = (sys.energy(qs + x, pc), sys.energy(qs - x, pc));
        (a - b).abs() <= MIRROR_TOL * height
    });
    let partner = [2.0 * qs - qc, pc];
    if !symmetric || !window.contains(partner[0], partner[1]) {
        return None;
    }
    let depth = well.orientation() * (l0.energy - ec);
    let s = 2.0 * well.barrier_action(depth, side)?;
    let exponent = s / hbar;
    if exponent < MIN_BARRIER_EXPONENT {
        diagnostics.push(Diagnostic::info(format!(
            "the lowest pair lies too close to the barrier top for the tunnelling \
             estimate (S/ħ = {exponent:.3} < 2π); no splitting is given"
        )));
        return None;
    }
    let frequency = 2.0 * PI / l0.period;
    Some(Splitting {
        energy: l0.energy,
        partner,
        barrier_q: qs,
        frequency,
        barrier_action: s,
        exponent,
        splitting: hbar * frequency / PI * (-exponent).exp(),
    })
}
