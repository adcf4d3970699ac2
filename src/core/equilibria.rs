//! Equilibria of H in a window: grid seeds, damped Newton with the exact
//! Hessian, deduplication, and classification by the Jacobian's eigenvalues.
//!
//! # Equilibrium search
//!
//! An equilibrium of (q', p') = (∂H/∂p, −∂H/∂q) is a critical point of H,
//! ∇H = 0. The window is covered by a lattice of `seeds` × `seeds` cells; a
//! cell across which both components of ∇H change sign, and a lattice node
//! where |∇H| is a local minimum, each seed one polish. The polish is a damped
//! Newton iteration on ∇H = 0 with the exact Hessian from the formula's jet,
//! globalised by a backtracking line search on |∇H|²; where the Hessian is
//! (nearly) singular or the Newton direction does not reduce |∇H|², a
//! Levenberg–Marquardt step on the same merit function is taken instead. At a
//! degenerate equilibrium (H ∝ q³ or q⁴ along one direction) Newton converges
//! only linearly, so convergence is judged by the step length, and a point is
//! accepted by a residual test scaled to the spread of H over the window.
//! Two or three equilibria inside one seed cell (just past a saddle-node or a
//! pitchfork) are separated by deflation: around each new root whose softest
//! curvature may vanish nearby, Newton is rerun on ∇H divided by the distance
//! to the roots already known. All lengths are measured in units of the
//! window's sides, so the search does not depend on how q and p are scaled.
//!
//! Properties: finds every equilibrium whose basin contains a seed; typical
//! cost is one jet per lattice node plus a few per candidate.
//!
//! Reference: J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed.,
//! Springer 2006, ch. 3 (line search) and ch. 10 (Levenberg–Marquardt);
//! P. E. Farrell, Á. Birkisson, S. W. Funke, SIAM J. Sci. Comput. 37 (2015)
//! A2026 (deflation).
//!
//! # Classification
//!
//! The field's Jacobian J = [[H_pq, H_pp], [−H_qq, −H_qp]] has trace zero, so
//! its eigenvalues are ±√(−det J) with det J = det Hess H: a center when
//! det > 0 (±iω), a saddle when det < 0 (±λ). When |det| is below
//! [`DEGENERATE_DET_REL`] times the squared Hessian magnitude, the
//! linearisation does not decide and H is sampled on small circles to see
//! whether it has a strict local extremum there.

use super::formula::{FIRST_PARAM_SLOT, SLOT_P, SLOT_Q};
use super::system::{Jet, System};
use super::window::Window;
use super::{Cancel, Diagnostic};
use num_dual::Dual3_64;

/// The type of an equilibrium.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum EquilibriumKind {
    /// det J > 0: eigenvalues ±iω.
    Center,
    /// det J < 0: eigenvalues ±λ.
    Saddle,
    /// |det J| below tolerance: the linearisation does not decide.
    Degenerate,
}

/// What higher order says about a degenerate equilibrium.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DegenerateShape {
    /// H has a strict local extremum there: orbits nearby are closed.
    NonlinearCenter,
    /// H has no strict extremum there (e.g. a cusp, p²/2 + q³/3 at 0).
    NoExtremum,
}

/// One equilibrium (critical point of H).
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Equilibrium {
    pub q: f64,
    pub p: f64,
    /// H at the equilibrium.
    pub energy: f64,
    pub kind: EquilibriumKind,
    /// The two eigenvalues of the Jacobian as [re, im].
    pub eigenvalues: [[f64; 2]; 2],
    /// det of the Hessian of H (= det J).
    pub hessian_det: f64,
    /// Centers: the small-oscillation angular frequency ω.
    pub omega: Option<f64>,
    /// Centers: the small-oscillation period 2π/ω.
    pub small_period: Option<f64>,
    /// Saddles: the real eigenvalue λ > 0.
    pub lambda: Option<f64>,
    /// Saddles: unit eigenvector of −λ.
    pub stable_dir: Option<[f64; 2]>,
    /// Saddles: unit eigenvector of +λ.
    pub unstable_dir: Option<[f64; 2]>,
    /// Degenerate ones: what higher order says.
    pub degenerate: Option<DegenerateShape>,
}

/// Settings for the search; tolerances are relative to the window and H's scale.
#[derive(Clone, Debug, PartialEq)]
pub struct EquilibriumConfig {
    /// Seed cells per side (clamped to `MIN_SEEDS..=MAX_SEEDS`).
    pub seeds: usize,
    /// Newton iterations per seed (at least 1).
    pub max_newton: usize,
}

impl Default for EquilibriumConfig {
    fn default() -> Self {
        EquilibriumConfig {
            seeds: 48,
            max_newton: 60,
        }
    }
}

/// Fewest seed cells per side.
pub const MIN_SEEDS: usize = 2;
/// Most seed cells per side (beyond this the lattice costs more than it finds).
pub const MAX_SEEDS: usize = 2048;
/// A polished point is an equilibrium when |∇H| (in window units) is below
/// this fraction of the spread of H over the window.
pub const ACCEPT_REL: f64 = 1e-9;
/// Newton has converged when a step is shorter than this fraction of the window.
pub const STEP_CONVERGED_REL: f64 = 1e-13;
/// A point that Newton steps did not converge to (a minimum of |∇H| reached
/// by other steps, which may be a near miss) is accepted only when |∇H| is
/// below this fraction of the spread of H: rounding level.
pub const ROUNDING_ACCEPT_REL: f64 = 1e-12;
/// A point that meets the residual test after the last allowed iteration is
/// still accepted when its last step was shorter than this fraction of the window.
pub const STEP_ACCEPT_REL: f64 = 1e-6;
/// Two equilibria closer than this fraction of the window's sides are one.
pub const DEDUP_REL: f64 = 1e-6;
/// Points found this close outside the window (fraction of its sides) are
/// still kept: they lie on its edge up to rounding.
pub const EDGE_REL: f64 = 1e-9;
/// An iterate that leaves the window grown by this factor is abandoned.
pub const ESCAPE_FACTOR: f64 = 3.0;
/// det Hess H below this fraction of the squared Hessian magnitude counts as zero.
pub const DEGENERATE_DET_REL: f64 = 1e-9;
/// Radii (fractions of the window's sides) of the circles on which H is
/// sampled around a degenerate equilibrium.
pub const PROBE_RADII_REL: [f64; 3] = [1e-3, 1e-2, 3e-2];
/// Samples per probe circle.
pub const PROBE_SAMPLES: usize = 96;
/// Differences of H below this many rounding units of H's magnitude count as zero.
pub const NOISE_ULPS: f64 = 256.0;
/// Most equilibria reported; more suggests a curve of equilibria.
pub const MAX_REPORTED: usize = 1000;

/// Successive Newton steps shrinking by a steady ratio in this range signal a
/// multiple root (ratio (m − 1)/m for multiplicity m).
const MULTIPLE_RATIO_MIN: f64 = 0.4;
const MULTIPLE_RATIO_MAX: f64 = 0.97;
/// How much two successive ratios may differ to count as steady.
const MULTIPLE_RATIO_DRIFT: f64 = 0.02;
/// Most further roots that deflated searches add around one seed's root.
const DEFLATION_EXTRAS: usize = 4;
/// Distances (in seed cells) along a root's softest direction from which
/// deflated searches start.
const DEFLATION_OFFSETS_CELLS: [f64; 2] = [0.5, 0.1];
/// How far (in seed cells) a deflated search may wander from its seed.
const DEFLATION_REACH_CELLS: f64 = 2.0;
/// Newton iterations allowed per deflated search.
const DEFLATED_MAX_ITER: usize = 30;
/// Shift of the deflation operator (in squared window units), so that it tends to one far away.
const DEFLATION_SHIFT: f64 = 1.0;
/// Soft curvature below this fraction of the Hessian's magnitude is zero.
const FLAT_CURVATURE_REL: f64 = 1e-12;
/// Backtracking halvings tried along a Newton direction.
const LINE_SEARCH_HALVINGS: usize = 12;
/// Armijo constant of the line search.
const ARMIJO: f64 = 1e-4;
/// Damping values tried per Levenberg–Marquardt step (each ten times the last).
const LM_TRIES: usize = 14;
/// Initial Levenberg–Marquardt damping relative to the squared Hessian magnitude.
const LM_START_REL: f64 = 1e-3;

/// The window's sides: the unit of length in both directions.
#[derive(Clone, Copy)]
struct Scale {
    wq: f64,
    wp: f64,
}

/// ∇H and the Hessian in window units, with their merit |∇H|².
#[derive(Clone, Copy)]
struct Local {
    g: [f64; 2],
    h: [[f64; 2]; 2],
    merit: f64,
}

impl Local {
    fn from_jet(j: &Jet, s: Scale) -> Option<Local> {
        if !j.is_finite() {
            return None;
        }
        let g = [j.hq * s.wq, j.hp * s.wp];
        let h = [
            [j.hqq * s.wq * s.wq, j.hqp * s.wq * s.wp],
            [j.hqp * s.wq * s.wp, j.hpp * s.wp * s.wp],
        ];
        let merit = g[0] * g[0] + g[1] * g[1];
        merit.is_finite().then_some(Local { g, h, merit })
    }
}

fn local_at(sys: &System, s: Scale, q: f64, p: f64) -> Option<Local> {
    Local::from_jet(&sys.jet(q, p), s)
}

/// Solve the symmetric 2×2 system m x = r; None when singular.
fn solve2(m: [[f64; 2]; 2], r: [f64; 2]) -> Option<[f64; 2]> {
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    let mag = m[0][0]
        .abs()
        .max(m[1][1].abs())
        .max(m[0][1].abs())
        .max(m[1][0].abs());
    if det == 0.0 || !det.is_finite() || det.abs() <= f64::EPSILON * mag * mag {
        return None;
    }
    let x = [
        (r[0] * m[1][1] - m[0][1] * r[1]) / det,
        (m[0][0] * r[1] - m[1][0] * r[0]) / det,
    ];
    (x[0].is_finite() && x[1].is_finite()).then_some(x)
}

/// How one polish ended.
struct Polished {
    q: f64,
    p: f64,
    residual: f64,
}

/// Damped Newton on ∇H = 0 from (q, p); Some when the result is an equilibrium.
fn polish(
    sys: &System,
    s: Scale,
    escape: &Window,
    tol: Tol,
    max_iter: usize,
    q0: f64,
    p0: f64,
) -> Option<Polished> {
    let mut by_newton = false;
    let mut lm = 0.0;
    let mut prev_len = f64::INFINITY;
    let mut prev_ratio = f64::NAN;
    let stop = |q: f64, p: f64| !escape.contains(q, p);
    let it = iterate(sys, s, max_iter, (q0, p0), stop, |q, p, cur| {
        let mut next: Option<(f64, f64, Local, f64)> = None;
        by_newton = true;
        // Newton direction, backtracking on |∇H|²; at a root of multiplicity m
        // successive steps shrink by (m − 1)/m, and m times the step is tried first
        let newton = solve2(cur.h, [-cur.g[0], -cur.g[1]]);
        if let Some(d) = newton {
            let len = d[0].hypot(d[1]);
            let ratio = len / prev_len;
            let multiplicity = if ratio > MULTIPLE_RATIO_MIN
                && ratio < MULTIPLE_RATIO_MAX
                && (ratio - prev_ratio).abs() < MULTIPLE_RATIO_DRIFT
            {
                (1.0 / (1.0 - ratio)).round()
            } else {
                1.0
            };
            prev_ratio = ratio;
            prev_len = len;
            let first = if multiplicity > 1.0 {
                multiplicity
            } else {
                1.0
            };
            let mut alpha = first;
            for _ in 0..=LINE_SEARCH_HALVINGS {
                let (tq, tp) = (q + alpha * d[0] * s.wq, p + alpha * d[1] * s.wp);
                if let Some(t) = local_at(sys, s, tq, tp) {
                    let armijo = (1.0 - 2.0 * ARMIJO * alpha.min(1.0)) * cur.merit;
                    if t.merit <= armijo || (t.merit == 0.0 && cur.merit == 0.0) {
                        next = Some((tq, tp, t, alpha * len));
                        if alpha > 1.0 {
                            // the step no longer follows the plain Newton sequence
                            prev_ratio = f64::NAN;
                            prev_len = f64::INFINITY;
                        }
                        break;
                    }
                }
                alpha = if alpha > 1.0 { 1.0 } else { alpha * 0.5 };
            }
        }
        // Levenberg–Marquardt on |∇H|² when Newton fails
        if next.is_none() {
            by_newton = false;
            let h = cur.h;
            let h2 = [
                [
                    h[0][0] * h[0][0] + h[0][1] * h[1][0],
                    h[0][0] * h[0][1] + h[0][1] * h[1][1],
                ],
                [
                    h[1][0] * h[0][0] + h[1][1] * h[1][0],
                    h[1][0] * h[0][1] + h[1][1] * h[1][1],
                ],
            ];
            let hg = [
                -(h[0][0] * cur.g[0] + h[0][1] * cur.g[1]),
                -(h[1][0] * cur.g[0] + h[1][1] * cur.g[1]),
            ];
            let mag2 = 0.5 * (h2[0][0] + h2[1][1]);
            if hg[0] == 0.0 && hg[1] == 0.0 || mag2.is_nan() || mag2 <= 0.0 {
                return Next::Stalled;
            }
            if lm <= 0.0 {
                lm = LM_START_REL * mag2;
            }
            for _ in 0..LM_TRIES {
                let m = [[h2[0][0] + lm, h2[0][1]], [h2[1][0], h2[1][1] + lm]];
                if let Some(d) = solve2(m, hg) {
                    let (tq, tp) = (q + d[0] * s.wq, p + d[1] * s.wp);
                    if let Some(t) = local_at(sys, s, tq, tp)
                        && t.merit < cur.merit
                    {
                        next = Some((tq, tp, t, d[0].hypot(d[1])));
                        lm *= 0.1;
                        break;
                    }
                }
                lm *= 10.0;
            }
        }
        // no step lowers |∇H|²: a local minimum of the residual
        next.map_or(Next::Stalled, |(q, p, l, step)| Next::To(q, p, l, step))
    })?;
    tol.verdict(it.end, by_newton, it.residual, it.last_step)
        .then_some(Polished {
            q: it.q,
            p: it.p,
            residual: it.residual,
        })
}

/// What one iteration proposes.
enum Next {
    /// Move to (q, p) with this local state, by a step of this length (window units).
    To(f64, f64, Local, f64),
    /// No step lowers the residual.
    Stalled,
    /// Give up on this start.
    Abandon,
}

/// Where an iteration ended.
struct Iterated {
    q: f64,
    p: f64,
    residual: f64,
    end: End,
    last_step: f64,
}

/// The frame of the damped Newton iterations: from `start`, `next` proposes
/// each move from (q, p) with its local state until ∇H is exactly zero, a
/// step is shorter than [`STEP_CONVERGED_REL`], no step helps, or `max_iter`
/// moves are made. None when `next` abandons or a move lands where `stop` says.
fn iterate(
    sys: &System,
    s: Scale,
    max_iter: usize,
    start: (f64, f64),
    stop: impl Fn(f64, f64) -> bool,
    mut next: impl FnMut(f64, f64, &Local) -> Next,
) -> Option<Iterated> {
    let (mut q, mut p) = start;
    let mut cur = local_at(sys, s, q, p)?;
    let mut last_step = f64::INFINITY;
    let mut end = End::Exhausted;
    for _ in 0..max_iter {
        if cur.merit == 0.0 {
            end = End::Exact;
            break;
        }
        match next(q, p, &cur) {
            Next::To(nq, np, nl, step) => {
                (q, p, cur, last_step) = (nq, np, nl, step);
            }
            Next::Stalled => {
                end = End::Stalled;
                break;
            }
            Next::Abandon => return None,
        }
        if stop(q, p) {
            return None;
        }
        if last_step <= STEP_CONVERGED_REL {
            end = End::Converged;
            break;
        }
    }
    Some(Iterated {
        q,
        p,
        residual: cur.merit.sqrt(),
        end,
        last_step,
    })
}

/// How an iteration ended.
#[derive(Clone, Copy, PartialEq, Eq)]
enum End {
    /// ∇H is exactly zero.
    Exact,
    /// The last step was shorter than [`STEP_CONVERGED_REL`].
    Converged,
    /// No step lowers the residual: a local minimum of |∇H| (a root, or a near miss).
    Stalled,
    /// The iterations ran out.
    Exhausted,
}

/// Residual limits for accepting a polished point.
#[derive(Clone, Copy)]
struct Tol {
    /// For points Newton steps converged to.
    accept: f64,
    /// For points reached otherwise (a residual minimum may be a near miss,
    /// so only rounding-level residuals pass).
    strict: f64,
}

impl Tol {
    fn verdict(&self, end: End, by_newton: bool, residual: f64, last_step: f64) -> bool {
        match end {
            End::Exact => true,
            End::Converged if by_newton => residual <= self.accept,
            End::Exhausted if by_newton && last_step <= STEP_ACCEPT_REL => residual <= self.accept,
            _ => residual <= self.strict,
        }
    }
}

/// Roots next to the newest one in `found` that the lattice cannot separate
/// (a pair or triple inside one seed cell near a fold). Only where the curvature
/// of H along the root's softest direction may vanish within reach — a
/// necessary condition for a second root on that line — deflated searches
/// start from the seed's mirror image through the root, from mirror images of
/// nearby known roots, and from points along the softest direction. Roots
/// found so are searched around in turn.
fn close_neighbours(
    sys: &System,
    s: Scale,
    n: usize,
    tol: Tol,
    max_iter: usize,
    seed: (f64, f64),
    found: &mut Vec<Polished>,
) {
    let Some(newest) = found.last() else { return };
    let cell = 1.0 / n as f64;
    let reach = DEFLATION_REACH_CELLS * cell;
    let mut queue = vec![(newest.q, newest.p, seed.0, seed.1)];
    let mut extras = 0;
    while let Some((x, y, sq, sp)) = queue.pop() {
        let Some(l) = local_at(sys, s, x, y) else {
            continue;
        };
        let soft = null_direction(l.h);
        if !soft_curvature_may_vanish(sys, s, &l, (x, y), soft, cell, reach) {
            continue;
        }
        let near: Vec<[f64; 2]> = found
            .iter()
            .filter(|f| ((f.q - x) / s.wq).hypot((f.p - y) / s.wp) <= 2.0 * reach)
            .map(|f| [f.q, f.p])
            .collect();
        let mut starts = vec![(2.0 * x - sq, 2.0 * y - sp)];
        starts.extend(near.iter().map(|r| (2.0 * x - r[0], 2.0 * y - r[1])));
        // along the line x + t·v, ∂H/∂t ≈ φ''t + φ'''t²/2 vanishes again at t = −2φ''/φ'''
        if let Some([_, d2, d3]) = line_derivatives(sys, (x, y), [soft[0] * s.wq, soft[1] * s.wp]) {
            let t = -2.0 * d2 / d3;
            if t.is_finite() && t.abs() <= reach {
                starts.insert(0, (x + t * soft[0] * s.wq, y + t * soft[1] * s.wp));
            }
        }
        starts.retain(|st| {
            !near.iter().any(|r| {
                (st.0 - r[0]).abs() <= DEDUP_REL * s.wq && (st.1 - r[1]).abs() <= DEDUP_REL * s.wp
            })
        });
        for c in DEFLATION_OFFSETS_CELLS {
            let c = c * cell;
            starts.push((x + c * soft[0] * s.wq, y + c * soft[1] * s.wp));
            starts.push((x - c * soft[0] * s.wq, y - c * soft[1] * s.wp));
        }
        let iters = max_iter.min(DEFLATED_MAX_ITER);
        let mut starts: std::collections::VecDeque<(f64, f64)> = starts.into();
        while let Some(start) = starts.pop_front() {
            if extras >= DEFLATION_EXTRAS {
                return;
            }
            let near: Vec<[f64; 2]> = found
                .iter()
                .filter(|f| ((f.q - x) / s.wq).hypot((f.p - y) / s.wp) <= 2.0 * reach)
                .map(|f| [f.q, f.p])
                .collect();
            let Some(extra) = polish_deflated(sys, s, tol, iters, start, ((x, y), reach), &near)
            else {
                continue;
            };
            if !found.iter().any(|f| same_point(s, f, &extra)) {
                // evenly spaced clusters (pitchfork): the mirror image comes next
                starts.push_front((2.0 * x - extra.q, 2.0 * y - extra.p));
                queue.push((extra.q, extra.p, x, y));
                found.push(extra);
                extras += 1;
            }
        }
    }
}

/// The first three derivatives of φ(t) = H(at + t·dir) at t = 0, exact
/// (third-order dual numbers through the formula's tape).
fn line_derivatives(sys: &System, at: (f64, f64), dir: [f64; 2]) -> Option<[f64; 3]> {
    let f = sys.formula();
    let mut slots = vec![Dual3_64::from_re(0.0); f.slot_count()];
    slots[SLOT_Q] = Dual3_64::new(at.0, dir[0], 0.0, 0.0);
    slots[SLOT_P] = Dual3_64::new(at.1, dir[1], 0.0, 0.0);
    for (slot, &v) in slots[FIRST_PARAM_SLOT..].iter_mut().zip(sys.params()) {
        *slot = Dual3_64::from_re(v);
    }
    let r = f.eval(&slots);
    let d = [r.v1, r.v2, r.v3];
    d.iter().all(|v| v.is_finite()).then_some(d)
}

/// Whether vᵀ Hess H v (window units) along the softest direction v may reach
/// zero within `reach` of the root, judged from its values at the root and one
/// seed cell either side. False along a line of equilibria, where it is zero
/// throughout and deflation would only list more points of the line.
fn soft_curvature_may_vanish(
    sys: &System,
    s: Scale,
    l: &Local,
    at: (f64, f64),
    v: [f64; 2],
    cell: f64,
    reach: f64,
) -> bool {
    let kappa = |h: &[[f64; 2]; 2]| {
        v[0] * (h[0][0] * v[0] + h[0][1] * v[1]) + v[1] * (h[1][0] * v[0] + h[1][1] * v[1])
    };
    let k0 = kappa(&l.h);
    let mut sides = [0.0; 2];
    for (side, sign) in sides.iter_mut().zip([1.0, -1.0]) {
        let (q, p) = (
            at.0 + sign * cell * v[0] * s.wq,
            at.1 + sign * cell * v[1] * s.wp,
        );
        let Some(t) = local_at(sys, s, q, p) else {
            return true;
        };
        *side = kappa(&t.h);
    }
    let mag = l.h[0][0].abs().max(l.h[1][1].abs()).max(l.h[0][1].abs());
    let flat = FLAT_CURVATURE_REL * sides.iter().fold(mag, |m, k| m.max(k.abs()));
    if k0.abs() <= flat {
        return sides.iter().any(|k| k.abs() > flat);
    }
    // a sign change within one cell, or linear extrapolation reaching zero within reach
    sides
        .iter()
        .any(|&k| k * k0 < 0.0 || k0.abs() <= (k - k0).abs() * (reach / cell))
}

/// True when two polished points are one equilibrium (closer than [`DEDUP_REL`]).
fn same_point(s: Scale, a: &Polished, b: &Polished) -> bool {
    (a.q - b.q).abs() <= DEDUP_REL * s.wq && (a.p - b.p).abs() <= DEDUP_REL * s.wp
}

/// Newton on the deflated system m(x)·∇H(x) = 0 with
/// m(x) = Π 1/(|x − xᵢ|² + shift) over known roots xᵢ (window units), which
/// repels the iteration from roots already found, so that a second root in
/// the same seed cell is reached. The deflated Newton step is the plain step
/// scaled by τ = 1/(1 − ∇ln m · d). The search starts at `seed` and stays
/// within `reach` of `centre` (window units); roots far away are the lattice's business.
///
/// Reference: P. E. Farrell, Á. Birkisson, S. W. Funke, "Deflation techniques
/// for finding distinct solutions of nonlinear partial differential
/// equations", SIAM J. Sci. Comput. 37 (2015) A2026–A2045.
fn polish_deflated(
    sys: &System,
    s: Scale,
    tol: Tol,
    max_iter: usize,
    seed: (f64, f64),
    (centre, reach): ((f64, f64), f64),
    roots: &[[f64; 2]],
) -> Option<Polished> {
    // ln m and its gradient, in window units
    let deflation = |q: f64, p: f64| -> ([f64; 2], f64) {
        let mut grad = [0.0; 2];
        let mut ln_m = 0.0;
        for r in roots {
            let (dq, dp) = ((q - r[0]) / s.wq, (p - r[1]) / s.wp);
            let d2 = dq * dq + dp * dp;
            ln_m -= d2.ln();
            ln_m += (1.0 + DEFLATION_SHIFT * d2).ln();
            let f = -2.0 / (d2 * (1.0 + DEFLATION_SHIFT * d2));
            grad[0] += f * dq;
            grad[1] += f * dp;
        }
        (grad, ln_m)
    };
    let stop = |q: f64, p: f64| ((q - centre.0) / s.wq).hypot((p - centre.1) / s.wp) > reach;
    let it = iterate(sys, s, max_iter, seed, stop, |q, p, cur| {
        let Some(d) = solve2(cur.h, [-cur.g[0], -cur.g[1]]) else {
            return Next::Stalled;
        };
        let (gl, ln_m) = deflation(q, p);
        let tau = 1.0 / (1.0 - (gl[0] * d[0] + gl[1] * d[1]));
        if !tau.is_finite() {
            return Next::Abandon;
        }
        let d = [tau * d[0], tau * d[1]];
        let len = d[0].hypot(d[1]);
        let ln_phi = 2.0 * ln_m + cur.merit.ln();
        let mut alpha = 1.0;
        let mut next = None;
        for _ in 0..=LINE_SEARCH_HALVINGS {
            let (tq, tp) = (q + alpha * d[0] * s.wq, p + alpha * d[1] * s.wp);
            if let Some(t) = local_at(sys, s, tq, tp) {
                let ln_t = 2.0 * deflation(tq, tp).1 + t.merit.ln();
                if t.merit == 0.0 || ln_t <= ln_phi + (1.0 - 2.0 * ARMIJO * alpha).ln() {
                    next = Some((tq, tp, t, alpha * len));
                    break;
                }
            }
            alpha *= 0.5;
        }
        next.map_or(Next::Stalled, |(q, p, l, step)| Next::To(q, p, l, step))
    })?;
    // near a degenerate known root |∇H| is tiny everywhere, so only a
    // converged iteration counts here
    let done = matches!(it.end, End::Exact | End::Converged);
    (done && tol.verdict(it.end, true, it.residual, it.last_step)).then_some(Polished {
        q: it.q,
        p: it.p,
        residual: it.residual,
    })
}

/// All equilibria inside `window`, sorted by q then p, with diagnostics.
pub fn find_equilibria(
    sys: &System,
    window: &Window,
    cfg: &EquilibriumConfig,
    cancel: &Cancel,
) -> (Vec<Equilibrium>, Vec<Diagnostic>) {
    let mut diags = Vec::new();
    if let Err(e) = window.validate() {
        diags.push(Diagnostic::warning(format!("equilibria not searched: {e}")));
        return (Vec::new(), diags);
    }
    let n = cfg.seeds.clamp(MIN_SEEDS, MAX_SEEDS);
    if n != cfg.seeds {
        diags.push(Diagnostic::warning(format!(
            "{} seed cells per side is out of range; used {n} (allowed {MIN_SEEDS} to {MAX_SEEDS})",
            cfg.seeds
        )));
    }
    let max_iter = cfg.max_newton.max(1);
    if cfg.max_newton == 0 {
        diags.push(Diagnostic::warning(
            "0 Newton iterations per seed is too few; used 1",
        ));
    }
    if sys.depends_on_time() {
        diags.push(Diagnostic::info(format!(
            "H depends on t; the equilibria shown are those of H frozen at t = {}",
            sys.time()
        )));
    }
    let s = Scale {
        wq: window.width(),
        wp: window.height(),
    };
    let m = n + 1;
    let node = |i: usize, j: usize| {
        (
            window.qmin + s.wq * i as f64 / n as f64,
            window.pmin + s.wp * j as f64 / n as f64,
        )
    };

    // the seed lattice: ∇H in window units and H at every node (index j*m + i)
    let mut grads: Vec<Option<[f64; 2]>> = Vec::with_capacity(m * m);
    let (mut hmin, mut hmax) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut bad: Option<(f64, f64)> = None;
    let mut bad_count = 0usize;
    for j in 0..m {
        if cancel.is_cancelled() {
            diags.push(Diagnostic::info("equilibrium search cancelled"));
            return (Vec::new(), diags);
        }
        for i in 0..m {
            let (q, p) = node(i, j);
            let jet = sys.jet(q, p);
            let g = [jet.hq * s.wq, jet.hp * s.wp];
            if jet.h.is_finite() && g[0].is_finite() && g[1].is_finite() {
                hmin = hmin.min(jet.h);
                hmax = hmax.max(jet.h);
                grads.push(Some(g));
            } else {
                bad_count += 1;
                bad.get_or_insert((q, p));
                grads.push(None);
            }
        }
    }
    if let Some((q, p)) = bad {
        diags.push(Diagnostic::warning(format!(
            "H or its slope is not a finite number at {bad_count} of {} seed points (first at q = {q:.6}, p = {p:.6}); \
             equilibria there are not searched",
            m * m
        )));
    }
    if bad_count == m * m {
        return (Vec::new(), diags);
    }
    if grads.iter().flatten().all(|g| g[0] == 0.0 && g[1] == 0.0) {
        diags.push(Diagnostic::warning(
            "H is constant over the window: every point is an equilibrium, none is listed",
        ));
        return (Vec::new(), diags);
    }
    let spread = hmax - hmin;
    let h_scale = if spread > 0.0 {
        spread
    } else {
        hmax.abs().max(1.0)
    };
    let tol = Tol {
        accept: ACCEPT_REL * h_scale,
        strict: ROUNDING_ACCEPT_REL * h_scale,
    };

    // candidates: sign changes of both components across a cell, and local
    // minima of |∇H| over the lattice
    let mut seeds: Vec<(f64, f64)> = Vec::new();
    for j in 0..n {
        for i in 0..n {
            let corners = [
                grads[j * m + i],
                grads[j * m + i + 1],
                grads[(j + 1) * m + i],
                grads[(j + 1) * m + i + 1],
            ];
            let mut lo = [f64::INFINITY; 2];
            let mut hi = [f64::NEG_INFINITY; 2];
            let mut complete = true;
            for c in corners {
                match c {
                    Some(g) => {
                        for k in 0..2 {
                            lo[k] = lo[k].min(g[k]);
                            hi[k] = hi[k].max(g[k]);
                        }
                    }
                    None => complete = false,
                }
            }
            if complete && lo[0] <= 0.0 && hi[0] >= 0.0 && lo[1] <= 0.0 && hi[1] >= 0.0 {
                let (q, p) = node(i, j);
                seeds.push((q + 0.5 * s.wq / n as f64, p + 0.5 * s.wp / n as f64));
            }
        }
    }
    let norm2 = |g: [f64; 2]| g[0] * g[0] + g[1] * g[1];
    for j in 0..m {
        for i in 0..m {
            let Some(g) = grads[j * m + i] else { continue };
            let here = norm2(g);
            let mut lowest = true;
            let mut lower_than_one = false;
            for dj in -1i64..=1 {
                for di in -1i64..=1 {
                    if di == 0 && dj == 0 {
                        continue;
                    }
                    let (ii, jj) = (i as i64 + di, j as i64 + dj);
                    if ii < 0 || jj < 0 || ii >= m as i64 || jj >= m as i64 {
                        continue;
                    }
                    if let Some(o) = grads[jj as usize * m + ii as usize] {
                        let other = norm2(o);
                        if other < here {
                            lowest = false;
                        } else if other > here {
                            lower_than_one = true;
                        }
                    }
                }
            }
            if lowest && lower_than_one {
                seeds.push(node(i, j));
            }
        }
    }

    // polish every candidate
    let escape = window.scaled(ESCAPE_FACTOR);
    let mut found: Vec<Polished> = Vec::new();
    for (k, &(q, p)) in seeds.iter().enumerate() {
        if k % 16 == 0 && cancel.is_cancelled() {
            diags.push(Diagnostic::info(
                "equilibrium search cancelled; the list may be incomplete",
            ));
            break;
        }
        let Some(r) = polish(sys, s, &escape, tol, max_iter, q, p) else {
            continue;
        };
        if found.iter().any(|f| same_point(s, f, &r)) {
            continue;
        }
        found.push(r);
        close_neighbours(sys, s, n, tol, max_iter, (q, p), &mut found);
    }

    // keep those in the window, merge duplicates (keep the smaller residual)
    let (eq, ep) = (EDGE_REL * s.wq, EDGE_REL * s.wp);
    found.retain(|r| {
        r.q >= window.qmin - eq
            && r.q <= window.qmax + eq
            && r.p >= window.pmin - ep
            && r.p <= window.pmax + ep
    });
    found.sort_by(|a, b| a.q.total_cmp(&b.q).then(a.p.total_cmp(&b.p)));
    let (dq, dp) = (DEDUP_REL * s.wq, DEDUP_REL * s.wp);
    let mut kept: Vec<Polished> = Vec::new();
    for r in found {
        let mut merged = false;
        for k in kept.iter_mut().rev() {
            if k.q < r.q - dq {
                break;
            }
            if (k.p - r.p).abs() <= dp {
                if r.residual < k.residual {
                    *k = Polished {
                        q: r.q,
                        p: r.p,
                        residual: r.residual,
                    };
                }
                merged = true;
                break;
            }
        }
        if !merged {
            kept.push(r);
        }
    }
    if kept.len() > MAX_REPORTED {
        diags.push(Diagnostic::warning(format!(
            "{} equilibria found; only the first {MAX_REPORTED} (by q) are listed — H is probably stationary along a curve",
            kept.len()
        )));
        kept.truncate(MAX_REPORTED);
    }

    let mut out: Vec<Equilibrium> = kept
        .iter()
        .map(|r| classify(sys, r.q, r.p, window))
        .collect();
    out.sort_by(|a, b| a.q.total_cmp(&b.q).then(a.p.total_cmp(&b.p)));
    if let Some(e) = out.iter().find(|e| {
        e.kind == EquilibriumKind::Degenerate && !is_isolated(sys, s, &escape, tol, max_iter, e)
    }) {
        diags.push(Diagnostic::warning(format!(
            "the equilibrium at q = {:.6}, p = {:.6} is not isolated: H is stationary along a curve through it, \
             and only points of that curve near the seeds are listed",
            e.q, e.p
        )));
    }
    (out, diags)
}

/// Distance (fraction of the window's sides) along a degenerate equilibrium's
/// null direction from which the polish is restarted to test isolation.
const ISOLATION_PROBE_REL: f64 = 1e-2;

/// False when polishing from a little way along the Hessian's null direction,
/// on both sides, lands on other equilibria (a curve of equilibria rather than a point).
fn is_isolated(
    sys: &System,
    s: Scale,
    escape: &Window,
    tol: Tol,
    max_iter: usize,
    e: &Equilibrium,
) -> bool {
    let Some(l) = local_at(sys, s, e.q, e.p) else {
        return true;
    };
    let v = null_direction(l.h);
    for sign in [1.0, -1.0] {
        let (q, p) = (
            e.q + sign * ISOLATION_PROBE_REL * v[0] * s.wq,
            e.p + sign * ISOLATION_PROBE_REL * v[1] * s.wp,
        );
        match polish(sys, s, escape, tol, max_iter, q, p) {
            Some(r)
                if ((r.q - e.q) / s.wq).hypot((r.p - e.p) / s.wp) > 0.5 * ISOLATION_PROBE_REL => {}
            _ => return true,
        }
    }
    false
}

/// Unit eigenvector of the symmetric 2×2 matrix `h` for its eigenvalue of
/// smallest magnitude.
fn null_direction(h: [[f64; 2]; 2]) -> [f64; 2] {
    let (a, b, d) = (h[0][0], h[0][1], h[1][1]);
    let mean = 0.5 * (a + d);
    let rad = (0.5 * (a - d)).hypot(b);
    let (l1, l2) = (mean + rad, mean - rad);
    let lam = if l1.abs() < l2.abs() { l1 } else { l2 };
    // (h − λI) v = 0: v = (b, λ − a) or (λ − d, b); take the longer
    let v1 = [b, lam - a];
    let v2 = [lam - d, b];
    let v = if v1[0].hypot(v1[1]) >= v2[0].hypot(v2[1]) {
        v1
    } else {
        v2
    };
    let n = v[0].hypot(v[1]);
    if n > 0.0 && n.is_finite() {
        [v[0] / n, v[1] / n]
    } else if a.abs() <= d.abs() {
        [1.0, 0.0]
    } else {
        [0.0, 1.0]
    }
}

/// Unit eigenvector of the trace-free Jacobian `jm` for the real eigenvalue `lam`,
/// oriented so that its largest component is positive.
fn eigenvector(jm: [[f64; 2]; 2], lam: f64) -> [f64; 2] {
    // (J − λI) v = 0: v = (J01, λ − J00) or (λ − J11, J10); take the longer
    let v1 = [jm[0][1], lam - jm[0][0]];
    let v2 = [lam - jm[1][1], jm[1][0]];
    let v = if v1[0].hypot(v1[1]) >= v2[0].hypot(v2[1]) {
        v1
    } else {
        v2
    };
    let n = v[0].hypot(v[1]);
    if !n.is_finite() || n <= 0.0 {
        return [f64::NAN, f64::NAN];
    }
    let sign = if v[0].abs() >= v[1].abs() {
        v[0].signum()
    } else {
        v[1].signum()
    };
    [sign * v[0] / n, sign * v[1] / n]
}

/// Classify a point already known to be an equilibrium.
pub fn classify(sys: &System, q: f64, p: f64, window: &Window) -> Equilibrium {
    let j = sys.jet(q, p);
    let det = j.hessian_det();
    let mag = j.hqq.abs().max(j.hpp.abs()).max(j.hqp.abs());
    let tol = DEGENERATE_DET_REL * mag * mag;
    let root = det.abs().sqrt();
    let eigenvalues = if det >= 0.0 {
        [[0.0, root], [0.0, -root]]
    } else {
        [[root, 0.0], [-root, 0.0]]
    };
    let mut e = Equilibrium {
        q,
        p,
        energy: j.h,
        kind: EquilibriumKind::Degenerate,
        eigenvalues,
        hessian_det: det,
        omega: None,
        small_period: None,
        lambda: None,
        stable_dir: None,
        unstable_dir: None,
        degenerate: None,
    };
    if !j.is_finite() || !det.is_finite() {
        return e;
    }
    if det > tol {
        e.kind = EquilibriumKind::Center;
        e.omega = Some(root);
        e.small_period = Some(std::f64::consts::TAU / root);
    } else if det < -tol {
        e.kind = EquilibriumKind::Saddle;
        e.lambda = Some(root);
        let jm = j.jacobian();
        e.stable_dir = Some(eigenvector(jm, -root));
        e.unstable_dir = Some(eigenvector(jm, root));
    } else {
        e.degenerate = Some(degenerate_shape(sys, &j, q, p, window));
    }
    e
}

/// The sign pattern of H − H0 on one probe circle.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Ring {
    /// Strictly one-signed: +1 or −1.
    Strict(i8),
    /// One-signed where it is not zero (within rounding).
    Weak,
    /// Both signs occur.
    Mixed,
}

/// Decide by higher order whether H has a strict local extremum at (q, p):
/// H − H0 is sampled on circles of [`PROBE_RADII_REL`] (in window units),
/// including the Hessian's null directions, where the quadratic part vanishes.
fn degenerate_shape(sys: &System, j: &Jet, q: f64, p: f64, window: &Window) -> DegenerateShape {
    let s = Scale {
        wq: window.width(),
        wp: window.height(),
    };
    let h_null = match Local::from_jet(j, s) {
        Some(l) => null_direction(l.h),
        None => [1.0, 0.0],
    };
    let null_angle = h_null[1].atan2(h_null[0]);
    let mut angles: Vec<f64> = (0..PROBE_SAMPLES)
        .map(|k| std::f64::consts::TAU * k as f64 / PROBE_SAMPLES as f64)
        .collect();
    angles.extend([null_angle, null_angle + std::f64::consts::PI]);
    let h0 = j.h;
    let mut rings = Vec::with_capacity(PROBE_RADII_REL.len());
    for r in PROBE_RADII_REL {
        let values: Vec<f64> = angles
            .iter()
            .map(|a| sys.energy(q + r * a.cos() * s.wq, p + r * a.sin() * s.wp))
            .collect();
        if values.iter().any(|v| !v.is_finite()) {
            rings.push(Ring::Mixed);
            continue;
        }
        let big = values.iter().fold(h0.abs(), |m, v| m.max(v.abs()));
        let noise = NOISE_ULPS * f64::EPSILON * big;
        let pos = values.iter().filter(|&&v| v - h0 > noise).count();
        let neg = values.iter().filter(|&&v| v - h0 < -noise).count();
        rings.push(if pos > 0 && neg > 0 {
            Ring::Mixed
        } else if pos == values.len() {
            Ring::Strict(1)
        } else if neg == values.len() {
            Ring::Strict(-1)
        } else {
            Ring::Weak
        });
    }
    let signs: Vec<i8> = rings
        .iter()
        .filter_map(|r| {
            if let Ring::Strict(s) = r {
                Some(*s)
            } else {
                None
            }
        })
        .collect();
    let widest_strict = matches!(rings.last(), Some(Ring::Strict(_)));
    if rings.contains(&Ring::Mixed) || !widest_strict || signs.windows(2).any(|w| w[0] != w[1]) {
        DegenerateShape::NoExtremum
    } else {
        DegenerateShape::NonlinearCenter
    }
}
