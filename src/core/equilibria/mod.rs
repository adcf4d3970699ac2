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

//!
//! The parts: `search` (seeds, the damped Newton polish, deflation, the
//! isolation test) and `classify` (the linearisation, the saddle's
//! eigenvectors and the shape of a degenerate point).

mod classify;
mod search;

pub use classify::{classify, frequency_shift, saddle_directions};

use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};
use search::*;

/// The type of an equilibrium.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
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
    /// Centers of H = T(p) + V(q) with T quadratic: κ in ω ≈ ω₀ + κA²
    /// (Lindstedt–Poincaré; positive hardening, negative softening).
    pub frequency_shift: Option<f64>,
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
