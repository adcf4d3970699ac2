//! Level curves of H: sample the window on a grid, then marching squares with
//! ambiguous cells resolved, segments joined into polylines.

use super::system::System;
use super::window::Window;

/// H sampled on an nq × np lattice over a window (row-major: index = j*nq + i,
/// q_i = qmin + i·dq, p_j = pmin + j·dp). Non-finite samples are NaN.
#[derive(Clone, Debug)]
pub struct Grid {
    pub window: Window,
    pub nq: usize,
    pub np: usize,
    pub values: Vec<f64>,
    /// Fraction of samples where H is NaN or infinite.
    pub nonfinite_fraction: f64,
    /// Smallest and largest finite sample (None if none is finite).
    pub range: Option<(f64, f64)>,
}

/// One continuous level curve.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct LevelCurve {
    pub level: f64,
    /// Vertices as [q, p].
    pub points: Vec<[f64; 2]>,
    pub closed: bool,
    /// The level of a saddle.
    pub is_separatrix: bool,
}

/// A level to draw: its value and whether it is a saddle's level.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Level {
    pub value: f64,
    pub is_separatrix: bool,
}

/// Sample H over the window on nq × np points (both at least 2).
pub fn sample_grid(sys: &System, window: &Window, nq: usize, np: usize) -> Grid {
    let _ = sys;
    Grid {
        window: *window,
        nq,
        np,
        values: Vec::new(),
        nonfinite_fraction: 0.0,
        range: None,
    }
}

/// `n` levels evenly spaced strictly inside the grid's range.
pub fn even_levels(grid: &Grid, n: usize) -> Vec<f64> {
    let _ = (grid, n);
    Vec::new()
}

/// All level curves of the grid at the given levels.
pub fn level_curves(grid: &Grid, levels: &[Level]) -> Vec<LevelCurve> {
    let _ = (grid, levels);
    Vec::new()
}

/// Move each vertex onto the exact level with a Newton step along ∇H.
pub fn refine_curve(sys: &System, curve: &mut LevelCurve) {
    let _ = (sys, curve);
}
