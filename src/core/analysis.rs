//! One call that produces everything the portrait shows: grid, level curves,
//! equilibria, wells and connections. Used by the explorer, the command line
//! and the figure exporter alike.

use super::contour::{Grid, Level, LevelCurve, MAX_GRID_SIDE};
use super::equilibria::{Equilibrium, EquilibriumConfig, EquilibriumKind};
use super::system::System;
use super::wells::{Connection, Well};
use super::window::Window;
use super::{Cancel, Diagnostic};
use crate::numbers;

/// Fewest grid points per side an analysis uses.
pub const MIN_ANALYSIS_GRID: usize = 16;

/// Most evenly spaced levels an analysis draws.
pub const MAX_ANALYSIS_LEVELS: usize = 1000;

/// H counts as constant in view when its spread over the grid is at most
/// this many times the largest rounding error bound of H found on a coarse
/// lattice over the window ([`Formula::eval_with_rounding`]).
///
/// [`Formula::eval_with_rounding`]: super::formula::Formula::eval_with_rounding
const CONSTANT_NOISE_FACTOR: f64 = 4.0;

/// Points per side of the lattice on which H's rounding error is bounded.
const NOISE_LATTICE: usize = 9;

/// Two saddle levels closer than this fraction of H's spread in view are
/// drawn as one separatrix level.
const SAME_LEVEL_REL: f64 = 1e-9;

/// Settings of one analysis.
#[derive(Clone, Debug, PartialEq)]
pub struct AnalysisConfig {
    /// Grid points per side for level curves (at least 16).
    pub grid: usize,
    /// Number of evenly spaced levels (saddle levels are added on top).
    pub levels: usize,
    /// Move level-curve vertices onto the exact level.
    pub refine: bool,
    pub equilibria: EquilibriumConfig,
}

impl Default for AnalysisConfig {
    fn default() -> Self {
        AnalysisConfig {
            grid: 256,
            levels: 24,
            refine: false,
            equilibria: EquilibriumConfig::default(),
        }
    }
}

/// Everything computed for one system in one window.
#[derive(Clone, Debug)]
pub struct Analysis {
    pub window: Window,
    pub grid: Grid,
    pub curves: Vec<LevelCurve>,
    pub equilibria: Vec<crate::core::equilibria::Equilibrium>,
    pub wells: Vec<Well>,
    pub connections: Vec<Connection>,
    pub diagnostics: Vec<Diagnostic>,
    /// True when the cancel flag stopped the work early (results partial).
    pub cancelled: bool,
}

/// Analyse `sys` in `window` at its frozen time (`System::time`, 0 unless set).
///
/// Stages, with the cancel flag polled between them: sample H on a
/// `cfg.grid`² grid; find the equilibria; trace `cfg.levels` evenly spaced
/// levels plus the level of every saddle (flagged as separatrices); refine
/// the curves onto the exact level if asked; then wells and separatrix
/// connections. Soft problems (H undefined on part of the window, H constant,
/// grid size out of range) come back as diagnostics.
pub fn analyze(sys: &System, window: &Window, cfg: &AnalysisConfig, cancel: &Cancel) -> Analysis {
    let mut diagnostics = Vec::new();
    let nlevels = cfg.levels.min(MAX_ANALYSIS_LEVELS);
    if nlevels != cfg.levels {
        diagnostics.push(Diagnostic::warning(format!(
            "{} levels asked for; drawing {nlevels}",
            cfg.levels
        )));
    }
    let n = cfg.grid.clamp(MIN_ANALYSIS_GRID, MAX_GRID_SIDE);
    if n != cfg.grid {
        diagnostics.push(Diagnostic::warning(format!(
            "grid size {} is outside {MIN_ANALYSIS_GRID}..={MAX_GRID_SIDE}; using {n}",
            cfg.grid
        )));
    }
    if sys.depends_on_time() {
        diagnostics.push(Diagnostic::info(format!(
            "H depends on t, so energy is not conserved; the portrait shows H frozen at t = {}",
            sys.time()
        )));
    }
    let mut grid = super::contour::sample_grid(sys, window, n, n);
    grid_diagnostics(&grid, &mut diagnostics);
    let constant = grid.range.and_then(|(lo, hi)| {
        (hi == lo || hi - lo <= CONSTANT_NOISE_FACTOR * rounding_noise(sys, window))
            .then_some((lo, hi))
    });
    if let Some((lo, hi)) = constant {
        diagnostics.push(Diagnostic::info(format!(
            "H is constant in view (H = {}{}): every point is an equilibrium, so none is \
             listed, and there are no level curves to draw",
            numbers::message(lo),
            if hi == lo { "" } else { " up to rounding" }
        )));
    } else if grid.range.is_some() {
        let jumps = super::contour::blank_jumps(sys, &mut grid);
        if let Some((q, p)) = jumps.first {
            // a midpoint that is zero up to rounding is shown as zero
            let snap = |x: f64, side: f64| if x.abs() <= 1e-12 * side { 0.0 } else { x };
            let (q, p) = (snap(q, window.width()), snap(p, window.height()));
            let share = 100.0 * jumps.samples as f64 / grid.values.len().max(1) as f64;
            diagnostics.push(Diagnostic::warning(format!(
                "H jumps or has a pole between neighbouring grid points (first near q = {}, \
                 p = {}); the cells there ({}% of the window) are left blank so that no level \
                 curve is drawn across it",
                numbers::message(q),
                numbers::message(p),
                numbers::percent(share)
            )));
        }
    }
    let mut out = Analysis {
        window: *window,
        grid,
        curves: Vec::new(),
        equilibria: Vec::new(),
        wells: Vec::new(),
        connections: Vec::new(),
        diagnostics,
        cancelled: false,
    };
    if out.grid.range.is_none() || constant.is_some() {
        return out;
    }
    if stop(cancel, &mut out) {
        return out;
    }

    let (equilibria, eq_diag) =
        super::equilibria::find_equilibria(sys, window, &cfg.equilibria, cancel);
    out.equilibria = equilibria;
    out.diagnostics.extend(eq_diag);
    if stop(cancel, &mut out) {
        return out;
    }

    let levels = levels_to_draw(&out.grid, nlevels, &out.equilibria);
    out.curves = super::contour::level_curves(&out.grid, &levels);
    if stop(cancel, &mut out) {
        return out;
    }
    if cfg.refine {
        for curve in &mut out.curves {
            if cancel.is_cancelled() {
                break;
            }
            super::contour::refine_curve(sys, curve);
        }
        if stop(cancel, &mut out) {
            return out;
        }
    }

    let (wells, connections) =
        super::wells::wells_and_connections(sys, window, &out.grid, &out.equilibria, &out.curves);
    if let Some(d) = edge_diagnostic(&wells) {
        out.diagnostics.push(d);
    }
    out.wells = wells;
    out.connections = connections;
    stop(cancel, &mut out);
    out
}

/// One note for all wells whose region reaches the window edge below their
/// escape energy (naming the first), so a wide lattice does not flood the list.
fn edge_diagnostic(wells: &[Well]) -> Option<Diagnostic> {
    let cut: Vec<&Well> = wells
        .iter()
        .filter(|w| w.edge_energy.is_some() && w.escape_energy.is_some())
        .collect();
    let first = cut.first()?;
    let (edge, escape) = (first.edge_energy?, first.escape_energy?);
    let others = match cut.len() {
        1 => String::new(),
        2 => " (and 1 more well)".to_string(),
        n => format!(" (and {} more wells)", n - 1),
    };
    Some(Diagnostic::info(format!(
        "the well around the center at (q = {:.6}, p = {:.6}) reaches the window edge at \
         E = {edge:.6}, below its escape energy {escape:.6}{others}; widen the window to see \
         whole wells",
        first.q, first.p
    )))
}

fn stop(cancel: &Cancel, out: &mut Analysis) -> bool {
    if cancel.is_cancelled() {
        out.cancelled = true;
    }
    out.cancelled
}

fn grid_diagnostics(grid: &Grid, diagnostics: &mut Vec<Diagnostic>) {
    if grid.range.is_none() {
        diagnostics.push(Diagnostic::warning(
            "H is NaN or infinite everywhere in the window; nothing to draw",
        ));
        return;
    }
    if grid.nonfinite_fraction > 0.0 {
        diagnostics.push(Diagnostic::warning(format!(
            "H is NaN or infinite on {}% of the window; those cells are left blank",
            numbers::percent(100.0 * grid.nonfinite_fraction)
        )));
    }
}

/// The largest finite rounding error bound of H over a coarse lattice of the window.
fn rounding_noise(sys: &System, window: &Window) -> f64 {
    let f = sys.formula();
    let mut slots = vec![0.0; f.slot_count()];
    for (s, &v) in slots[super::formula::FIRST_PARAM_SLOT..]
        .iter_mut()
        .zip(sys.params())
    {
        *s = v;
    }
    let last = (NOISE_LATTICE - 1) as f64;
    let mut noise: f64 = 0.0;
    for j in 0..NOISE_LATTICE {
        for i in 0..NOISE_LATTICE {
            slots[super::formula::SLOT_Q] = window.qmin + window.width() * i as f64 / last;
            slots[super::formula::SLOT_P] = window.pmin + window.height() * j as f64 / last;
            let (_, err) = f.eval_with_rounding(&slots);
            if err.is_finite() {
                noise = noise.max(err);
            }
        }
    }
    noise
}

/// The levels an analysis draws: `n` evenly spaced ones plus each distinct
/// saddle level inside the grid's range, flagged as a separatrix.
pub fn levels_to_draw(grid: &Grid, n: usize, equilibria: &[Equilibrium]) -> Vec<Level> {
    let mut levels: Vec<Level> = super::contour::even_levels(grid, n)
        .into_iter()
        .map(|value| Level {
            value,
            is_separatrix: false,
        })
        .collect();
    let Some((lo, hi)) = grid.range else {
        return levels;
    };
    let tol = SAME_LEVEL_REL * (hi - lo).max(f64::MIN_POSITIVE);
    let mut saddles: Vec<f64> = equilibria
        .iter()
        .filter(|e| e.kind == EquilibriumKind::Saddle && e.energy.is_finite())
        .map(|e| e.energy)
        .collect();
    saddles.sort_by(f64::total_cmp);
    let mut last: Option<f64> = None;
    for e in saddles {
        if last.is_some_and(|l| (e - l).abs() <= tol) {
            continue;
        }
        last = Some(e);
        levels.push(Level {
            value: e,
            is_separatrix: true,
        });
    }
    levels
}
