//! Wells and separatrix connections: for each center, the energy at which its
//! trapped motion ends; for each saddle, where its separatrix goes.
//!
//! # Escape energies by flooding
//!
//! Around a minimum of H the closed orbits fill the connected component of
//! {H < E} that contains the center; the family ends at the first energy where
//! that component reaches a saddle (it merges with another region, or wraps
//! round a hole). The grid is flooded from the center in increasing H (a
//! priority flood: always grow the component by its lowest neighbour), so the
//! running maximum of H is the water level and the first saddle whose cell the
//! water enters is the one that bounds the well. Maxima of H are flooded in −H.
//! The exact escape energy is the saddle's own energy, not a grid value.
//!
//! # Connections by following the level set
//!
//! Each saddle has four separatrix branches leaving along its stable and
//! unstable eigendirections. A branch is followed on the exact level set
//! H = H(saddle) by predictor–corrector continuation (tangent (H_p, −H_q),
//! Newton correction along ∇H, both from the jet) until it comes within a few
//! steps of a saddle at the same level (itself: homoclinic; another:
//! heteroclinic) or leaves the window. Each arc is reported once.
//!
//! Reference: a separatrix joins saddles of equal energy because H is conserved
//! along it (common practice); the priority flood is the watershed construction
//! of L. Vincent and P. Soille, IEEE PAMI 13 (1991).

use super::contour::{Grid, LevelCurve};
use super::equilibria::{DegenerateShape, Equilibrium, EquilibriumKind, saddle_directions};
use super::system::System;
use super::window::Window;
use std::cmp::Reverse;
use std::collections::BinaryHeap;

/// Saddles whose energies differ by less than this fraction of H's spread in
/// view count as one level (a separatrix can join them).
const SAME_LEVEL_REL: f64 = 1e-8;

/// Continuation step along a separatrix, as a fraction of the smaller grid spacing.
const TRACE_STEP_CELLS: f64 = 0.5;

/// A branch has arrived at a saddle when it is this many steps from it.
const ARRIVAL_STEPS: f64 = 3.0;

/// The continuation step may shrink by at most this factor before giving up.
const MIN_STEP_FACTOR: f64 = 1.0 / 1024.0;

/// Newton corrections per continuation step.
const CORRECTOR_ITERATIONS: usize = 6;

/// A corrected point is on the level when |H − E| is below this fraction of H's spread.
const LEVEL_TOL_REL: f64 = 1e-10;

/// A branch is given up after this many window perimeters of arc length.
const MAX_PERIMETERS: f64 = 20.0;

/// The potential well around one center.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Well {
    /// Index of the center in the equilibria list (written from 1 in JSON).
    #[serde(serialize_with = "crate::core::numbered::one")]
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
    /// Index of the saddle whose level bounds the well (written from 1 in JSON).
    #[serde(serialize_with = "crate::core::numbered::optional")]
    pub escape_saddle: Option<usize>,
    /// The energy at which the well's region first touches the window edge
    /// or a blank (undefined) area, when that happens below the escape
    /// energy: then part of the well lies out of view.
    pub edge_energy: Option<f64>,
}

/// How a saddle's separatrix continues.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
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
    /// Index of the saddle in the equilibria list (written from 1 in JSON).
    #[serde(serialize_with = "crate::core::numbered::one")]
    pub from: usize,
    /// The other end (equal to `from` for a homoclinic loop).
    #[serde(serialize_with = "crate::core::numbered::one")]
    pub to: usize,
    pub energy: f64,
    /// The traced arc as [q, p] vertices on the exact level, from near `from`
    /// to near `to` (it stops a few steps short of each saddle).
    #[serde(skip)]
    pub path: Vec<[f64; 2]>,
}

/// Wells of every center and connections of every saddle.
///
/// Centers are equilibria of kind `Center` and degenerate ones that are
/// nonlinear centers. `curves` is not needed (connections follow the exact
/// level set, not the grid's polylines); views pass what they have.
pub fn wells_and_connections(
    sys: &System,
    window: &Window,
    grid: &Grid,
    equilibria: &[Equilibrium],
    curves: &[LevelCurve],
) -> (Vec<Well>, Vec<Connection>) {
    let _ = curves;
    let spread = match grid.range {
        Some((lo, hi)) if hi > lo => hi - lo,
        _ => equilibria
            .iter()
            .map(|e| e.energy.abs())
            .fold(1.0, f64::max),
    };
    let saddles: Vec<usize> = (0..equilibria.len())
        .filter(|&k| {
            equilibria[k].kind == EquilibriumKind::Saddle && equilibria[k].energy.is_finite()
        })
        .collect();
    let wells = wells(sys, grid, equilibria, &saddles);
    let connections = connections(sys, window, grid, equilibria, &saddles, spread);
    (wells, connections)
}

fn is_center(e: &Equilibrium) -> bool {
    match e.kind {
        EquilibriumKind::Center => true,
        EquilibriumKind::Degenerate => e.degenerate == Some(DegenerateShape::NonlinearCenter),
        EquilibriumKind::Saddle => false,
    }
}

/// A key that orders f64 like `total_cmp` (for the flood's heap).
fn order_key(x: f64) -> u64 {
    let b = x.to_bits();
    if b >> 63 == 1 { !b } else { b | (1 << 63) }
}

fn wells(sys: &System, grid: &Grid, eqs: &[Equilibrium], saddles: &[usize]) -> Vec<Well> {
    let (nq, np) = (grid.nq, grid.np);
    let nv = nq * np;
    let valid = nq >= 2 && np >= 2 && grid.values.len() >= nv;
    // Vertex → 1 + index into `saddles` of a saddle whose cell has it as a corner.
    let mut saddle_at = vec![0u32; if valid { nv } else { 0 }];
    let mut cells = Vec::with_capacity(saddles.len());
    if valid {
        for (k, &s) in saddles.iter().enumerate() {
            let cell = grid.cell_of(eqs[s].q, eqs[s].p);
            if let Some((i, j)) = cell {
                for v in [
                    j * nq + i,
                    j * nq + i + 1,
                    (j + 1) * nq + i,
                    (j + 1) * nq + i + 1,
                ] {
                    if saddle_at[v] == 0 {
                        saddle_at[v] = k as u32 + 1;
                    }
                }
            }
            cells.push(cell);
        }
    }
    let mut stamp = vec![0u32; saddle_at.len()];
    let mut heap = BinaryHeap::new();
    let mut out = Vec::new();
    let mut run = 0u32;
    for (ci, c) in eqs.iter().enumerate() {
        if !is_center(c) {
            continue;
        }
        let mut well = Well {
            center: ci,
            q: c.q,
            p: c.p,
            energy: c.energy,
            escape_energy: None,
            depth: None,
            escape_saddle: None,
            edge_energy: None,
        };
        let sign = if valid {
            extremum_sign(sys, grid, c)
        } else {
            None
        };
        if let (Some(s), Some((i0, j0))) = (sign, grid.cell_of(c.q, c.p).filter(|_| valid)) {
            run += 1;
            let flood = Flood {
                grid,
                sign: s,
                saddle_at: &saddle_at,
            };
            let margins: Vec<f64> = saddles
                .iter()
                .zip(&cells)
                .map(|(&sd, cell)| saddle_margin(grid, *cell, eqs[sd].energy))
                .collect();
            let found = flood.run(
                (i0, j0),
                c.energy,
                saddles.iter().map(|&sd| eqs[sd].energy),
                &margins,
                &mut stamp,
                run,
                &mut heap,
            );
            if let Some(k) = found.saddle {
                let e = eqs[saddles[k]].energy;
                well.escape_energy = Some(e);
                well.depth = Some((e - c.energy) * s);
                well.escape_saddle = Some(saddles[k]);
            }
            well.edge_energy = found.edge.map(|g| g * s);
        }
        out.push(well);
    }
    out
}

/// +1 when the center is a minimum of H, −1 for a maximum; from the Hessian's
/// trace, or for degenerate centers from the grid values around it.
fn extremum_sign(sys: &System, grid: &Grid, c: &Equilibrium) -> Option<f64> {
    let j = sys.jet(c.q, c.p);
    let trace = j.hqq + j.hpp;
    if c.kind == EquilibriumKind::Center && trace.is_finite() && trace != 0.0 {
        return Some(trace.signum());
    }
    let (i, jj) = grid.cell_of(c.q, c.p)?;
    let around = [
        grid.value(i, jj),
        grid.value(i + 1, jj),
        grid.value(i, jj + 1),
        grid.value(i + 1, jj + 1),
    ];
    let finite: Vec<f64> = around.into_iter().filter(|v| v.is_finite()).collect();
    if finite.is_empty() {
        return None;
    }
    let mean = finite.iter().sum::<f64>() / finite.len() as f64;
    if mean > c.energy {
        Some(1.0)
    } else if mean < c.energy {
        Some(-1.0)
    } else {
        None
    }
}

/// How far grid values near a saddle stray from its energy: the flood reaches
/// the saddle's cell at a water level within this much of the saddle energy
/// when it passes over that saddle (the 4 × 4 vertices around its cell).
fn saddle_margin(grid: &Grid, cell: Option<(usize, usize)>, energy: f64) -> f64 {
    let Some((i, j)) = cell else { return 0.0 };
    let mut m = 0.0f64;
    for jj in j.saturating_sub(1)..(j + 3).min(grid.np) {
        for ii in i.saturating_sub(1)..(i + 3).min(grid.nq) {
            let v = grid.value(ii, jj);
            if v.is_finite() {
                m = m.max((v - energy).abs());
            }
        }
    }
    2.0 * m
}

struct Flood<'a> {
    grid: &'a Grid,
    sign: f64,
    saddle_at: &'a [u32],
}

struct FloodResult {
    /// Index into the saddle list.
    saddle: Option<usize>,
    /// Water level (in sign·H) when the edge or a blank area was first touched
    /// below the escape.
    edge: Option<f64>,
}

impl Flood<'_> {
    #[allow(clippy::too_many_arguments)]
    fn run(
        &self,
        (i0, j0): (usize, usize),
        center_energy: f64,
        saddle_energy: impl Iterator<Item = f64>,
        margins: &[f64],
        stamp: &mut [u32],
        run: u32,
        heap: &mut BinaryHeap<Reverse<(u64, u32)>>,
    ) -> FloodResult {
        let g = self.grid;
        let (nq, np) = (g.nq, g.np);
        let s = self.sign;
        let gc = s * center_energy;
        // Candidate saddles lie above the center in sign·H.
        let sg: Vec<f64> = saddle_energy.map(|e| s * e).collect();
        let candidate: Vec<bool> = sg
            .iter()
            .zip(margins)
            .map(|(&e, &m)| e > gc && e.is_finite() && m.is_finite())
            .collect();
        let top = sg
            .iter()
            .zip(margins)
            .zip(&candidate)
            .filter(|(_, c)| **c)
            .map(|((&e, &m), _)| e + m)
            .fold(f64::NEG_INFINITY, f64::max);
        heap.clear();
        let push = |v: usize, heap: &mut BinaryHeap<Reverse<(u64, u32)>>, stamp: &mut [u32]| {
            let x = g.values[v];
            if stamp[v] != run && !x.is_nan() {
                stamp[v] = run;
                heap.push(Reverse((order_key(s * x), v as u32)));
            }
        };
        for v in [
            j0 * nq + i0,
            j0 * nq + i0 + 1,
            (j0 + 1) * nq + i0,
            (j0 + 1) * nq + i0 + 1,
        ] {
            push(v, heap, stamp);
        }
        let mut water = f64::NEG_INFINITY;
        let mut edge = None;
        while let Some(Reverse((_, v))) = heap.pop() {
            let v = v as usize;
            water = water.max(s * g.values[v]);
            if edge.is_some() && water > top {
                break;
            }
            let k = self.saddle_at[v];
            if k > 0 {
                let k = (k - 1) as usize;
                if candidate[k] && water <= sg[k] + margins[k] {
                    return FloodResult {
                        saddle: Some(k),
                        edge,
                    };
                }
            }
            let (i, j) = (v % nq, v / nq);
            let mut touches = i == 0 || j == 0 || i + 1 == nq || j + 1 == np;
            let mut nb = [usize::MAX; 4];
            if i > 0 {
                nb[0] = v - 1;
            }
            if i + 1 < nq {
                nb[1] = v + 1;
            }
            if j > 0 {
                nb[2] = v - nq;
            }
            if j + 1 < np {
                nb[3] = v + nq;
            }
            for &n in nb.iter().filter(|&&n| n != usize::MAX) {
                if g.values[n].is_nan() {
                    touches = true;
                } else {
                    push(n, heap, stamp);
                }
            }
            if touches && edge.is_none() {
                edge = Some(water);
                if top == f64::NEG_INFINITY {
                    break;
                }
            }
        }
        FloodResult { saddle: None, edge }
    }
}

/// The four separatrix directions of a saddle: +unstable, −unstable, +stable, −stable.
fn branch_dirs(sys: &System, e: &Equilibrium) -> Option<[[f64; 2]; 4]> {
    let (u, s) = match (e.unstable_dir, e.stable_dir) {
        (Some(u), Some(s)) => (u, s),
        _ => {
            let (_, u, s) = saddle_directions(sys.jacobian(e.q, e.p))?;
            (u, s)
        }
    };
    let unit = |v: [f64; 2]| -> Option<[f64; 2]> {
        let n = v[0].hypot(v[1]);
        (n > 0.0 && n.is_finite()).then(|| [v[0] / n, v[1] / n])
    };
    let (u, s) = (unit(u)?, unit(s)?);
    Some([u, [-u[0], -u[1]], s, [-s[0], -s[1]]])
}

/// Where one separatrix branch ends.
enum BranchEnd {
    /// At saddle `saddles[k]`, arriving along its branch `b`.
    Saddle(usize, usize, Vec<[f64; 2]>),
    /// It left the window, met an undefined H, or could not be followed.
    Lost,
}

struct Tracer<'a> {
    sys: &'a System,
    window: &'a Window,
    eqs: &'a [Equilibrium],
    saddles: &'a [usize],
    dirs: &'a [Option<[[f64; 2]; 4]>],
    step: f64,
    level_tol: f64,
    same_level: f64,
}

impl Tracer<'_> {
    /// Newton steps along ∇H onto H = level; None if they do not converge.
    fn correct(&self, mut x: [f64; 2], level: f64) -> Option<[f64; 2]> {
        for _ in 0..CORRECTOR_ITERATIONS {
            let (h, hq) = self.sys.dh_dq(x[0], x[1], 0.0);
            let (_, hp) = self.sys.dh_dp(x[0], x[1], 0.0);
            let r = h - level;
            if !r.is_finite() || !hq.is_finite() || !hp.is_finite() {
                return None;
            }
            if r.abs() <= self.level_tol {
                return Some(x);
            }
            let g2 = hq * hq + hp * hp;
            if g2 <= 0.0 {
                return None;
            }
            x = [x[0] - r * hq / g2, x[1] - r * hp / g2];
        }
        let h = self.sys.energy(x[0], x[1]);
        ((h - level).abs() <= self.level_tol).then_some(x)
    }

    fn tangent(&self, x: [f64; 2], along: [f64; 2]) -> Option<[f64; 2]> {
        let (_, hq) = self.sys.dh_dq(x[0], x[1], 0.0);
        let (_, hp) = self.sys.dh_dp(x[0], x[1], 0.0);
        let n = hq.hypot(hp);
        if !n.is_finite() || n <= 0.0 {
            return None;
        }
        let t = [hp / n, -hq / n];
        Some(if t[0] * along[0] + t[1] * along[1] < 0.0 {
            [-t[0], -t[1]]
        } else {
            t
        })
    }

    /// Follow branch `b` of saddle `saddles[from]`.
    fn follow(&self, from: usize, b: usize) -> BranchEnd {
        let a = &self.eqs[self.saddles[from]];
        let Some(dirs) = self.dirs[from] else {
            return BranchEnd::Lost;
        };
        let level = a.energy;
        let h0 = self.step;
        let arrive = ARRIVAL_STEPS * h0;
        let d = dirs[b];
        let Some(mut x) = self.correct([a.q + arrive * d[0], a.p + arrive * d[1]], level) else {
            return BranchEnd::Lost;
        };
        let mut path = vec![x];
        let mut along = d;
        let mut h = h0;
        let mut left_home = false;
        let w = self.window;
        let max_len = MAX_PERIMETERS * 2.0 * (w.width() + w.height());
        let mut length = 0.0;
        while length < max_len {
            if !w.contains(x[0], x[1]) {
                return BranchEnd::Lost;
            }
            // Arrival at a saddle of the same level (itself once it has left).
            for (k, &si) in self.saddles.iter().enumerate() {
                let e = &self.eqs[si];
                if (e.energy - level).abs() > self.same_level {
                    continue;
                }
                let r = (x[0] - e.q).hypot(x[1] - e.p);
                if k == from && !left_home {
                    if r > 2.0 * arrive {
                        left_home = true;
                    }
                    continue;
                }
                if r < arrive {
                    let Some(kd) = self.dirs[k] else {
                        return BranchEnd::Lost;
                    };
                    let rel = [(x[0] - e.q) / r, (x[1] - e.p) / r];
                    let mut best = 0;
                    let mut best_dot = f64::NEG_INFINITY;
                    for (bi, dv) in kd.iter().enumerate() {
                        let dot = dv[0] * rel[0] + dv[1] * rel[1];
                        if dot > best_dot {
                            best_dot = dot;
                            best = bi;
                        }
                    }
                    return BranchEnd::Saddle(k, best, path);
                }
            }
            // One predictor–corrector step, shrinking it when the corrector fails
            // or the curve turns sharply.
            let next = loop {
                let Some(t) = self.tangent(x, along) else {
                    return BranchEnd::Lost;
                };
                let guess = [x[0] + h * t[0], x[1] + h * t[1]];
                let ok = self.correct(guess, level).filter(|y| {
                    let dy = [y[0] - x[0], y[1] - x[1]];
                    let len = dy[0].hypot(dy[1]);
                    len > 0.0 && len < 2.0 * h && (dy[0] * t[0] + dy[1] * t[1]) > 0.8 * len
                });
                match ok {
                    Some(y) => break (y, t),
                    None if h > h0 * MIN_STEP_FACTOR => h *= 0.5,
                    None => return BranchEnd::Lost,
                }
            };
            let (y, t) = next;
            length += (y[0] - x[0]).hypot(y[1] - x[1]);
            along = t;
            x = y;
            path.push(x);
            h = (h * 1.5).min(h0);
        }
        BranchEnd::Lost
    }
}

fn connections(
    sys: &System,
    window: &Window,
    grid: &Grid,
    eqs: &[Equilibrium],
    saddles: &[usize],
    spread: f64,
) -> Vec<Connection> {
    let dirs: Vec<Option<[[f64; 2]; 4]>> =
        saddles.iter().map(|&s| branch_dirs(sys, &eqs[s])).collect();
    let step = TRACE_STEP_CELLS * grid.dq().min(grid.dp());
    if !step.is_finite() || step <= 0.0 {
        return Vec::new();
    }
    let tracer = Tracer {
        sys,
        window,
        eqs,
        saddles,
        dirs: &dirs,
        step,
        level_tol: LEVEL_TOL_REL * spread,
        same_level: SAME_LEVEL_REL * spread,
    };
    let mut done = vec![[false; 4]; saddles.len()];
    let mut out = Vec::new();
    for k in 0..saddles.len() {
        for b in 0..4 {
            if done[k][b] {
                continue;
            }
            done[k][b] = true;
            if let BranchEnd::Saddle(to, arrival, path) = tracer.follow(k, b) {
                done[to][arrival] = true;
                out.push(Connection {
                    kind: if to == k {
                        ConnectionKind::Homoclinic
                    } else {
                        ConnectionKind::Heteroclinic
                    },
                    from: saddles[k],
                    to: saddles[to],
                    energy: eqs[saddles[k]].energy,
                    path,
                });
            }
        }
    }
    out
}
