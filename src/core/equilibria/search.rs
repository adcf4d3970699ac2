//! The search for equilibria: the damped Newton polish on ∇H = 0 in window
//! units, its line search and Levenberg–Marquardt fallback, deflation of
//! roots already found, and the test that a degenerate point is isolated.

use super::*;
use crate::core::formula::{FIRST_PARAM_SLOT, SLOT_P, SLOT_Q};
use crate::core::system::{Jet, System};
use num_dual::Dual3_64;

/// The window's sides: the unit of length in both directions.
#[derive(Clone, Copy)]
pub(super) struct Scale {
    pub(super) wq: f64,
    pub(super) wp: f64,
}

/// ∇H and the Hessian in window units, with their merit |∇H|².
#[derive(Clone, Copy)]
pub(super) struct Local {
    pub(super) g: [f64; 2],
    pub(super) h: [[f64; 2]; 2],
    pub(super) merit: f64,
}

impl Local {
    pub(super) fn from_jet(j: &Jet, s: Scale) -> Option<Local> {
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

pub(super) fn local_at(sys: &System, s: Scale, q: f64, p: f64) -> Option<Local> {
    Local::from_jet(&sys.jet(q, p), s)
}

/// Solve the symmetric 2×2 system m x = r; None when singular.
pub(super) fn solve2(m: [[f64; 2]; 2], r: [f64; 2]) -> Option<[f64; 2]> {
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
pub(super) struct Polished {
    pub(super) q: f64,
    pub(super) p: f64,
    pub(super) residual: f64,
}

/// Damped Newton on ∇H = 0 from (q, p); Some when the result is an equilibrium.
pub(super) fn polish(
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
pub(super) enum Next {
    /// Move to (q, p) with this local state, by a step of this length (window units).
    To(f64, f64, Local, f64),
    /// No step lowers the residual.
    Stalled,
    /// Give up on this start.
    Abandon,
}

/// Where an iteration ended.
pub(super) struct Iterated {
    pub(super) q: f64,
    pub(super) p: f64,
    pub(super) residual: f64,
    pub(super) end: End,
    pub(super) last_step: f64,
}

/// The frame of the damped Newton iterations: from `start`, `next` proposes
/// each move from (q, p) with its local state until ∇H is exactly zero, a
/// step is shorter than [`STEP_CONVERGED_REL`], no step helps, or `max_iter`
/// moves are made. None when `next` abandons or a move lands where `stop` says.
pub(super) fn iterate(
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
pub(super) enum End {
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
pub(super) struct Tol {
    /// For points Newton steps converged to.
    pub(super) accept: f64,
    /// For points reached otherwise (a residual minimum may be a near miss,
    /// so only rounding-level residuals pass).
    pub(super) strict: f64,
}

impl Tol {
    pub(super) fn verdict(&self, end: End, by_newton: bool, residual: f64, last_step: f64) -> bool {
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
pub(super) fn close_neighbours(
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
pub(super) fn line_derivatives(sys: &System, at: (f64, f64), dir: [f64; 2]) -> Option<[f64; 3]> {
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
pub(super) fn soft_curvature_may_vanish(
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
pub(super) fn same_point(s: Scale, a: &Polished, b: &Polished) -> bool {
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
pub(super) fn polish_deflated(
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

/// Distance (fraction of the window's sides) along a degenerate equilibrium's
/// null direction from which the polish is restarted to test isolation.
pub(super) const ISOLATION_PROBE_REL: f64 = 1e-2;

/// False when polishing from a little way along the Hessian's null direction,
/// on both sides, lands on other equilibria (a curve of equilibria rather than a point).
pub(super) fn is_isolated(
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
pub(super) fn null_direction(h: [[f64; 2]; 2]) -> [f64; 2] {
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
