//! Two-parameter fold curves: the saddle-node points of H(q, p; μ₁, μ₂) as a
//! curve in the parameter plane, with its cusp points.
//!
//! # Continuation of saddle-nodes
//!
//! A saddle-node is a solution of ∇H = 0, det Hess H = 0: three equations in
//! (q, p, μ₁, μ₂), hence a curve. It is followed by the same pseudo-arclength
//! predictor–corrector as the equilibrium branches
//! ([`crate::core::continuation`]); the Jacobian's last row, ∂ det Hess H,
//! needs third derivatives of H, taken exactly from [`System::third_jet`].
//! Seeds are the saddle-nodes found by one-parameter sweeps along a few lines
//! of the box (its edges and three interior lines placed off the centre so
//! that symmetric parameter values are not hit). A cusp is where the curve's
//! projection onto the parameter plane turns back: the (μ₁, μ₂) part of the
//! tangent reverses (there the fold's cubic coefficient vanishes). For
//! H = p²/2 + q⁴/4 − μq²/2 − εq the fold curve is 27ε² = 4μ³ with the cusp at
//! the origin.
//!
//! Reference: W. Govaerts, *Numerical Methods for Bifurcations of Dynamical
//! Equilibria* (SIAM 2000), ch. 4 (continuation of folds); T. Poston and
//! I. Stewart, *Catastrophe Theory and its Applications* (Pitman 1978), ch. 5
//! (the cusp).

use super::continuation::engine::{self, Curve, Matrix, Vector, Walk};
use super::continuation::{
    BifurcationKind, ContinuationError, StepConfig, SweepConfig, SweepProgress, sweep_index,
};
use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};

/// A seed lying closer than this to a traced curve is on it (scaled units).
const SEED_ON_CURVE_TOL: f64 = 1e-3;
/// Cusps closer than this are the same (scaled units).
const CUSP_MATCH_TOL: f64 = 1e-6;
/// Bracketing stops at this fraction of a step.
const CUSP_LOCATE_TOL: f64 = 1e-13;

/// Settings of a fold-curve computation.
#[derive(Clone, Debug, PartialEq)]
pub struct FoldConfig {
    pub step: StepConfig,
    /// Continuation steps over all fold curves together (default 20 000).
    pub max_steps: usize,
    /// Seed lines per parameter, edges included (default 5, at least 2).
    pub lines: usize,
    /// The one-parameter sweeps that find the seeds.
    pub sweep: SweepConfig,
}

impl Default for FoldConfig {
    fn default() -> Self {
        FoldConfig {
            step: StepConfig::default(),
            max_steps: 20_000,
            lines: 5,
            sweep: SweepConfig::default(),
        }
    }
}

/// One saddle-node on a fold curve.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct FoldPoint {
    /// The two parameters' values, in the order asked for.
    pub params: [f64; 2],
    pub q: f64,
    pub p: f64,
    pub energy: f64,
}

/// A fold curve inside the box.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct FoldCurve {
    pub points: Vec<FoldPoint>,
    /// True when the curve closes on itself inside the box.
    pub closed: bool,
}

/// Everything found in the parameter box.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct FoldCurves {
    /// The two parameter names.
    pub params: [String; 2],
    /// [a1, b1, a2, b2]: the box [a1, b1] × [a2, b2].
    pub bounds: [f64; 4],
    pub curves: Vec<FoldCurve>,
    /// Points where a fold curve has a cusp in the parameter plane.
    pub cusps: Vec<FoldPoint>,
    pub diagnostics: Vec<crate::core::Diagnostic>,
    pub steps: usize,
    pub cancelled: bool,
}

/// How far a fold computation has got.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FoldProgress {
    pub steps: usize,
    pub max_steps: usize,
    pub curves: usize,
}

/// ∇H = 0, det Hess H = 0 in scaled (q, p, μ₁, μ₂).
struct FoldSystem<'a> {
    sys: &'a System,
    params: [usize; 2],
    scale: [f64; 4],
    /// Divides det so that its row is of the size of the others.
    det_scale: f64,
}

impl FoldSystem<'_> {
    fn x(&self, y: &Vector<4>) -> [f64; 4] {
        [
            y[0] * self.scale[0],
            y[1] * self.scale[1],
            y[2] * self.scale[2],
            y[3] * self.scale[3],
        ]
    }

    fn at(&self, x: &[f64; 4]) -> System {
        self.sys
            .with_param(self.params[0], x[2])
            .with_param(self.params[1], x[3])
    }

    fn point(&self, y: &Vector<4>) -> FoldPoint {
        let x = self.x(y);
        FoldPoint {
            params: [x[2], x[3]],
            q: x[0],
            p: x[1],
            energy: self.at(&x).energy(x[0], x[1]),
        }
    }
}

impl Curve<4> for FoldSystem<'_> {
    fn eval(&self, y: &Vector<4>) -> Option<(Vector<4>, Matrix<4>)> {
        let x = self.x(y);
        let j = self.at(&x).third_jet(x[0], x[1], &self.params);
        let mut f = Vector::<4>::zeros();
        let mut a = Matrix::<4>::zeros();
        f[0] = j.grad[0];
        f[1] = j.grad[1];
        f[2] = j.hessian_det() / self.det_scale;
        for k in 0..4 {
            a[(0, k)] = j.hess[0][k] * self.scale[k];
            a[(1, k)] = j.hess[1][k] * self.scale[k];
            a[(2, k)] = j.hessian_det_derivative(k) / self.det_scale * self.scale[k];
        }
        (f.iter().all(|v| v.is_finite()) && a.iter().all(|v| v.is_finite())).then_some((f, a))
    }
}

struct HalfCurve {
    points: Vec<Vector<4>>,
    closed: bool,
}

struct FoldTracer<'a> {
    fold: FoldSystem<'a>,
    bounds: [(f64, f64); 4],
    cfg: &'a FoldConfig,
    progress: &'a dyn Fn(FoldProgress),
    walk: Walk<'a>,
    curves: Vec<(Vec<Vector<4>>, bool)>,
    cusps: Vec<Vector<4>>,
}

impl FoldTracer<'_> {
    fn trace_half(&mut self, y0: Vector<4>, t0: Vector<4>) -> HalfCurve {
        let mut pts = vec![y0];
        let (mut y, mut t) = (y0, t0);
        let mut h = self.cfg.step.initial;
        loop {
            let fold = &self.fold;
            let Some(st) = self.walk.step(
                fold,
                &y,
                &t,
                h,
                &self.cfg.step,
                |n| format!("the fold curves stopped after {n} continuation steps; some may be incomplete"),
                || {
                    let x = fold.x(&y);
                    format!(
                        "a fold curve could not be continued past ({:.6}, {:.6})",
                        x[2], x[3]
                    )
                },
            ) else {
                break;
            };
            (self.progress)(FoldProgress {
                steps: self.walk.steps,
                max_steps: self.cfg.max_steps,
                curves: self.curves.len(),
            });
            let pa = (t[2], t[3]);
            if pa.0 * st.t[2] + pa.1 * st.t[3] < 0.0
                && let Some(yc) = self.locate_cusp(&y, &st.y, pa)
                && engine::inside(&yc, &self.bounds, 0.0)
                && !self.cusps.iter().any(|c| (c - yc).amax() < CUSP_MATCH_TOL)
            {
                self.cusps.push(yc);
            }
            if !engine::inside(&st.y, &self.bounds, 0.0) {
                if let Some((yc, _)) =
                    engine::exit_point(&self.fold, &y, &st.y, &self.bounds, &self.cfg.step)
                {
                    pts.push(yc);
                }
                return HalfCurve {
                    points: pts,
                    closed: false,
                };
            }
            pts.push(st.y);
            if pts.len() > 10 && (st.y - y0).norm() < 0.5 * st.h {
                pts.push(y0);
                return HalfCurve {
                    points: pts,
                    closed: true,
                };
            }
            y = st.y;
            t = st.t;
            h = engine::next_step_length(st.h, st.iterations, &self.cfg.step);
        }
        HalfCurve {
            points: pts,
            closed: false,
        }
    }

    /// Where the parameter-plane part of the tangent reverses between y0 and y1.
    fn locate_cusp(&self, y0: &Vector<4>, y1: &Vector<4>, pa: (f64, f64)) -> Option<Vector<4>> {
        let chord = (y1 - y0).try_normalize(0.0)?;
        let g = |s: f64| {
            let y = engine::point_between(&self.fold, y0, y1, s)?;
            engine::tangent(&self.fold, &y, &chord).map(|(t, _)| t[2] * pa.0 + t[3] * pa.1)
        };
        let (g0, g1) = (g(0.0)?, g(1.0)?);
        let s = engine::illinois(g, 0.0, g0, 1.0, g1, CUSP_LOCATE_TOL)?;
        engine::point_between(&self.fold, y0, y1, s)
    }

    fn trace_from(&mut self, y0: Vector<4>) {
        let Some((t0, _)) = [2usize, 3, 0, 1].iter().find_map(|&k| {
            let mut e = Vector::<4>::zeros();
            e[k] = 1.0;
            engine::tangent(&self.fold, &y0, &e)
        }) else {
            return;
        };
        let forward = self.trace_half(y0, t0);
        if forward.closed {
            self.curves.push((forward.points, true));
            return;
        }
        let backward = self.trace_half(y0, -t0);
        let mut pts: Vec<Vector<4>> = backward.points.into_iter().rev().collect();
        pts.extend(forward.points.into_iter().skip(1));
        if pts.len() >= 2 {
            self.curves.push((pts, false));
        }
    }
}

/// The fold curves of `sys` in the parameters `params` over the box
/// `bounds` = [a1, b1, a2, b2], with the equilibria in `window`.
pub fn fold_curves(
    sys: &System,
    params: [&str; 2],
    bounds: [f64; 4],
    window: &Window,
    cfg: &FoldConfig,
    cancel: &Cancel,
    progress: &dyn Fn(FoldProgress),
) -> Result<FoldCurves, ContinuationError> {
    let names = sys.formula().params();
    let mut idx = [0usize; 2];
    for (slot, name) in idx.iter_mut().zip(params) {
        *slot =
            sys.formula()
                .param_index(name)
                .ok_or_else(|| ContinuationError::UnknownParameter {
                    name: name.to_string(),
                    available: names.to_vec(),
                })?;
    }
    if idx[0] == idx[1] {
        return Err(ContinuationError::BadConfig(format!(
            "a fold curve needs two different parameters (got '{}' twice)",
            params[0]
        )));
    }
    for (lo, hi) in [(bounds[0], bounds[1]), (bounds[2], bounds[3])] {
        if !(lo.is_finite() && hi.is_finite() && lo < hi) {
            return Err(ContinuationError::BadRange { from: lo, to: hi });
        }
    }
    if cfg.lines < 2 {
        return Err(ContinuationError::BadConfig(
            "at least two seed lines per parameter are needed".into(),
        ));
    }
    cfg.step.validate()?;
    window
        .validate()
        .map_err(|e| ContinuationError::BadConfig(format!("window: {e}")))?;

    let scale = [
        window.width(),
        window.height(),
        bounds[1] - bounds[0],
        bounds[3] - bounds[2],
    ];
    let ybounds = [
        (window.qmin / scale[0], window.qmax / scale[0]),
        (window.pmin / scale[1], window.pmax / scale[1]),
        (bounds[0] / scale[2], bounds[1] / scale[2]),
        (bounds[2] / scale[3], bounds[3] / scale[3]),
    ];
    // Seeds: saddle-nodes on lines of the box.
    let mut seeds: Vec<Vector<4>> = Vec::new();
    let mut diagnostics = Vec::new();
    let n = cfg.lines;
    let fractions: Vec<f64> = (0..n)
        .map(|i| {
            if i == 0 || i + 1 == n {
                i as f64 / (n - 1) as f64
            } else {
                (i as f64 - 0.382) / (n - 1) as f64
            }
        })
        .collect();
    for along in 0..2 {
        let (moving, fixed) = (idx[along], idx[1 - along]);
        let (lo, hi) = (bounds[2 * along], bounds[2 * along + 1]);
        let (flo, fhi) = (bounds[2 * (1 - along)], bounds[2 * (1 - along) + 1]);
        for &f in &fractions {
            if cancel.is_cancelled() {
                break;
            }
            let v = flo + f * (fhi - flo);
            let line = sys.with_param(fixed, v);
            let Ok(sw) = sweep_index(
                &line,
                moving,
                lo,
                hi,
                window,
                &cfg.sweep,
                cancel,
                &|_: SweepProgress| {},
            ) else {
                continue;
            };
            for b in sw
                .bifurcations
                .iter()
                .filter(|b| b.kind == BifurcationKind::SaddleNode)
            {
                let mut x = [b.q, b.p, 0.0, 0.0];
                x[2 + along] = b.param;
                x[3 - along] = v;
                seeds.push(Vector::<4>::new(
                    x[0] / scale[0],
                    x[1] / scale[1],
                    x[2] / scale[2],
                    x[3] / scale[3],
                ));
            }
        }
    }
    let det_scale = {
        let mut s: f64 = 0.0;
        for y in &seeds {
            let x = [
                y[0] * scale[0],
                y[1] * scale[1],
                y[2] * scale[2],
                y[3] * scale[3],
            ];
            let j = sys
                .with_param(idx[0], x[2])
                .with_param(idx[1], x[3])
                .jet(x[0], x[1]);
            s = s.max(j.hqq.abs().max(j.hpp.abs()).max(j.hqp.abs()));
        }
        if s > 0.0 && s.is_finite() { s } else { 1.0 }
    };
    if seeds.is_empty() {
        diagnostics.push(Diagnostic::info(
            "no saddle-node was found on the edges or the seed lines of the box",
        ));
    }
    let mut walk = Walk::new(cancel, cfg.max_steps);
    walk.diagnostics = diagnostics;
    let mut tracer = FoldTracer {
        fold: FoldSystem {
            sys,
            params: idx,
            scale,
            det_scale,
        },
        bounds: ybounds,
        cfg,
        progress,
        walk,
        curves: Vec::new(),
        cusps: Vec::new(),
    };
    for seed in seeds {
        if tracer.walk.stopped() {
            break;
        }
        if tracer
            .curves
            .iter()
            .any(|(pts, _)| engine::distance_to_polyline(&seed, pts) < SEED_ON_CURVE_TOL)
        {
            continue;
        }
        tracer.trace_from(seed);
    }
    if cancel.is_cancelled() {
        tracer.walk.cancelled = true;
    }
    let fold = &tracer.fold;
    let curves = tracer
        .curves
        .iter()
        .map(|(pts, closed)| FoldCurve {
            points: pts.iter().map(|y| fold.point(y)).collect(),
            closed: *closed,
        })
        .collect();
    let cusps = tracer.cusps.iter().map(|y| fold.point(y)).collect();
    Ok(FoldCurves {
        params: [params[0].to_string(), params[1].to_string()],
        bounds,
        curves,
        cusps,
        steps: tracer.walk.steps,
        cancelled: tracer.walk.cancelled,
        diagnostics: tracer.walk.diagnostics,
    })
}
