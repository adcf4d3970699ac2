//! The sweep: every branch of equilibria ∇H(q, p; μ) = 0 as one parameter
//! moves, traced on the engine, with saddle-nodes and branch points located.

use super::engine::*;
use super::*;
use crate::core::equilibria::{EquilibriumConfig, classify, find_equilibria};
use crate::core::system::System;
use crate::core::window::Window;
use crate::core::{Cancel, Diagnostic};
use std::collections::VecDeque;

/// Bracketing root searches stop when the bracket is this fraction of a step.
const LOCATE_TOL: f64 = 1e-14;
/// Newton on the extended fold system stops at this step size (scaled units).
const FOLD_NEWTON_TOL: f64 = 1e-14;
/// Branch points are bracketed down to sub-steps of this length (scaled units).
const BRANCH_POINT_FINE_STEP: f64 = 1e-5;
/// Two points closer than this (scaled units, max norm) are the same point.
const MATCH_TOL: f64 = 1e-6;
/// Where inside the range (fractions of it) equilibria seed branches that
/// reach neither end; placed off the centre so that a symmetric parameter
/// value (a pitchfork) is not hit.
const INTERIOR_SEED_FRACTIONS: [f64; 3] = [0.1545, 0.4045, 0.6545];
/// A branch whose tangent's μ-component is below this (scaled) is tangent to μ = const.
const FLAT_TANGENT_TOL: f64 = 1e-6;

/// ∇H = 0 in scaled coordinates y = (q/s_q, p/s_p, μ/s_μ).
pub(crate) struct EquilibriumCurve<'a> {
    pub sys: &'a System,
    pub param: usize,
    pub scale: [f64; 3],
}

impl EquilibriumCurve<'_> {
    pub fn x(&self, y: &Vector<3>) -> [f64; 3] {
        [
            y[0] * self.scale[0],
            y[1] * self.scale[1],
            y[2] * self.scale[2],
        ]
    }

    pub fn at(&self, mu: f64) -> System {
        self.sys.with_param(self.param, mu)
    }

    pub fn param_name(&self) -> String {
        self.sys
            .formula()
            .params()
            .get(self.param)
            .cloned()
            .unwrap_or_default()
    }
}

impl Curve<3> for EquilibriumCurve<'_> {
    fn eval(&self, y: &Vector<3>) -> Option<(Vector<3>, Matrix<3>)> {
        let x = self.x(y);
        let j = self.at(x[2]).param_jet(x[0], x[1], self.param);
        let mut f = Vector::<3>::zeros();
        let mut a = Matrix::<3>::zeros();
        for i in 0..2 {
            f[i] = j.grad[i];
            for k in 0..3 {
                a[(i, k)] = j.hess[i][k] * self.scale[k];
            }
        }
        (f.iter().all(|v| v.is_finite()) && a.iter().all(|v| v.is_finite())).then_some((f, a))
    }
}

/// Newton on ∇H = 0, det Hess H = 0 with μ free, from `y` (scaled). The
/// extended Jacobian's last row is ∂ det/∂(q, p, μ) from third derivatives.
fn newton_fold(curve: &EquilibriumCurve, y: &Vector<3>) -> Option<Vector<3>> {
    let mut y = *y;
    for _ in 0..40 {
        let x = curve.x(&y);
        let j = curve.at(x[2]).third_jet(x[0], x[1], &[curve.param]);
        let mut f = Vector::<3>::zeros();
        let mut a = Matrix::<3>::zeros();
        // The determinant is divided by the Hessian's size so that its row is of
        // the same order as the others.
        let size = j.hess[0][0]
            .abs()
            .max(j.hess[1][1].abs())
            .max(j.hess[0][1].abs())
            .max(f64::MIN_POSITIVE);
        f[0] = j.grad[0];
        f[1] = j.grad[1];
        f[2] = j.hessian_det() / size;
        for k in 0..3 {
            a[(0, k)] = j.hess[0][k] * curve.scale[k];
            a[(1, k)] = j.hess[1][k] * curve.scale[k];
            a[(2, k)] = j.hessian_det_derivative(k) / size * curve.scale[k];
        }
        let (dy, _) = solve(a, -f)?;
        y += dy;
        if !y.iter().all(|v| v.is_finite()) {
            return None;
        }
        if dy.amax() <= FOLD_NEWTON_TOL {
            return Some(y);
        }
    }
    None
}

/// The two branch directions through a branch point at `y` (scaled): the one
/// nearest `arriving` (oriented along it), the other one, and the kind.
fn branch_directions(
    curve: &EquilibriumCurve,
    y: &Vector<3>,
    arriving: &Vector<3>,
) -> Option<(Vector<3>, Vector<3>, BifurcationKind)> {
    let x = curve.x(y);
    let j = curve.at(x[2]).third_jet(x[0], x[1], &[curve.param]);
    let s = curve.scale;
    let row = |i: usize| {
        Vector::<3>::new(
            j.hess[i][0] * s[0],
            j.hess[i][1] * s[1],
            j.hess[i][2] * s[2],
        )
    };
    let (r0, r1) = (row(0), row(1));
    let r = if r0.norm() >= r1.norm() { r0 } else { r1 };
    let rn = r.norm();
    if rn == 0.0 || !rn.is_finite() {
        return None;
    }
    let r_hat = r / rn;
    // Left null vector ψ of J = u r̂ᵀ.
    let u = [r0.dot(&r_hat), r1.dot(&r_hat)];
    let un = u[0].hypot(u[1]);
    let psi = [-u[1] / un, u[0] / un];
    // Orthonormal basis of the null space {v : r̂·v = 0}, first vector along `arriving`.
    let mut phi1 = arriving - r_hat * r_hat.dot(arriving);
    if phi1.norm() < 1e-8 {
        return None;
    }
    phi1 /= phi1.norm();
    let phi2 = r_hat.cross(&phi1);
    // Quadratic form Q(v, w) = Σ_i ψ_i Σ_jk H_{ijk} s_j s_k v_j w_k.
    let q = |v: &Vector<3>, w: &Vector<3>| {
        let mut acc = 0.0;
        for (i, &ps) in psi.iter().enumerate() {
            for a in 0..3 {
                for b in 0..3 {
                    acc += ps * j.third[i][a][b] * s[a] * s[b] * v[a] * w[b];
                }
            }
        }
        acc
    };
    let (qa, qb, qc) = (q(&phi1, &phi1), q(&phi1, &phi2), q(&phi2, &phi2));
    // Directions (cos θ, sin θ) with qa cos² + 2 qb cos sin + qc sin² = 0.
    let tr = 0.5 * (qa + qc);
    let disc = (0.25 * (qa - qc) * (qa - qc) + qb * qb).sqrt();
    let (l1, l2) = (tr + disc, tr - disc);
    let scale = qa.abs().max(qb.abs()).max(qc.abs());
    if !(scale > 0.0) || l1 * l2 > 0.0 {
        return None;
    }
    // Eigenvector of l1: angle α with tan 2α = 2qb/(qa − qc).
    let alpha = 0.5 * (2.0 * qb).atan2(qa - qc);
    let e1 = [alpha.cos(), alpha.sin()];
    let e2 = [-alpha.sin(), alpha.cos()];
    let phi = (-l1 / l2).abs().sqrt().atan();
    let dir = |sign: f64| {
        let c = phi.cos();
        let sn = sign * phi.sin();
        let a = c * e1[0] + sn * e2[0];
        let b = c * e1[1] + sn * e2[1];
        (phi1 * a + phi2 * b).normalize()
    };
    let (d1, d2) = (dir(1.0), dir(-1.0));
    let (mut cont, new) = if d1.dot(&phi1).abs() >= d2.dot(&phi1).abs() {
        (d1, d2)
    } else {
        (d2, d1)
    };
    if cont.dot(arriving) < 0.0 {
        cont = -cont;
    }
    let kind = if cont[2].abs() < FLAT_TANGENT_TOL || new[2].abs() < FLAT_TANGENT_TOL {
        BifurcationKind::Pitchfork
    } else {
        BifurcationKind::Transcritical
    };
    Some((cont, new, kind))
}

/// Where a branch trace starts.
#[derive(Clone, Copy, Debug)]
enum Origin {
    Seed(usize),
    Node(usize, usize),
}

struct Node {
    y: Vector<3>,
    /// Outgoing directions and whether each has been traced.
    dirs: Vec<(Vector<3>, bool)>,
}

struct Seed {
    y: Vector<3>,
    /// At the upper end of the range (traced towards smaller μ).
    upper: bool,
    consumed: bool,
}

struct Tracer<'a> {
    curve: EquilibriumCurve<'a>,
    bounds: [(f64, f64); 3],
    cfg: &'a SweepConfig,
    progress: &'a dyn Fn(SweepProgress),
    walk: Walk<'a>,
    segments: Vec<Vec<Vector<3>>>,
    bifurcations: Vec<(Vector<3>, BifurcationKind)>,
    nodes: Vec<Node>,
    seeds: Vec<Seed>,
    queue: VecDeque<Origin>,
}

impl Tracer<'_> {
    fn run(&mut self) {
        for i in 0..self.seeds.len() {
            self.queue.push_back(Origin::Seed(i));
        }
        self.drain();
    }

    /// Trace from every queued origin (seeds and branch-point directions).
    fn drain(&mut self) {
        while let Some(origin) = self.queue.pop_front() {
            if self.walk.stopped() {
                break;
            }
            match origin {
                Origin::Seed(i) => {
                    if self.seeds[i].consumed {
                        continue;
                    }
                    self.seeds[i].consumed = true;
                    let y0 = self.seeds[i].y;
                    let dir = if self.seeds[i].upper { -1.0 } else { 1.0 };
                    let t_ref = Vector::<3>::new(0.0, 0.0, dir);
                    match tangent(&self.curve, &y0, &t_ref) {
                        Some((t0, det0)) => {
                            self.trace(y0, t0, Some(det0));
                        }
                        None => {
                            let x = self.curve.x(&y0);
                            self.walk.diagnostics.push(Diagnostic::info(format!(
                                "the equilibrium at q = {:.6}, p = {:.6} ({} = {}) is degenerate; \
                                 its branches are traced from elsewhere if they reach the range",
                                x[0],
                                x[1],
                                self.param_name(),
                                x[2]
                            )));
                        }
                    }
                }
                Origin::Node(n, d) => {
                    if self.nodes[n].dirs[d].1 {
                        continue;
                    }
                    self.nodes[n].dirs[d].1 = true;
                    let (y0, t0) = (self.nodes[n].y, self.nodes[n].dirs[d].0);
                    self.trace(y0, t0, None);
                }
            }
        }
    }

    fn param_name(&self) -> String {
        self.curve.param_name()
    }

    /// True when `y` lies on a piece of curve already traced: some traced
    /// chord crosses y's parameter value near y, and the curve's point there
    /// (corrected at that value) is y.
    fn on_traced(&self, y: &Vector<3>) -> bool {
        self.segments.iter().any(|seg| {
            seg.windows(2).any(|w| {
                let (a, b) = (&w[0], &w[1]);
                (a[2] - y[2]) * (b[2] - y[2]) <= 0.0
                    && a[2] != b[2]
                    && distance_to_polyline(y, w) <= (b - a).norm() + MATCH_TOL
                    && point_at_coordinate(&self.curve, a, b, 2, y[2], &self.cfg.step)
                        .is_some_and(|c| (c - y).amax() < MATCH_TOL)
            })
        })
    }

    /// Trace the curve through an equilibrium found inside the range, both
    /// ways, unless it is already traced. The two halves are joined at the
    /// seed so that branches still end only at the range, the window or a
    /// bifurcation point; a closed curve (an isola) is traced once around.
    fn trace_interior(&mut self, y0: Vector<3>) {
        if self.on_traced(&y0) {
            return;
        }
        let up = Vector::<3>::new(0.0, 0.0, 1.0);
        // A degenerate seed is skipped: its branches are reached from the others.
        let Some((t0, det0)) = tangent(&self.curve, &y0, &up) else {
            return;
        };
        let first = self.segments.len();
        let closed = self.trace(y0, t0, Some(det0));
        let starts_at_seed = |seg: Option<&Vec<Vector<3>>>| seg.is_some_and(|s| s[0] == y0);
        if closed {
            // Around the loop: the last piece ends where the first begins.
            let last = self.segments.len() - 1;
            if last > first && starts_at_seed(self.segments.get(first)) {
                let tail = self.segments.remove(last);
                let head = std::mem::take(&mut self.segments[first]);
                self.segments[first] = tail.into_iter().chain(head.into_iter().skip(1)).collect();
            }
            return;
        }
        let Some((t1, det1)) = tangent(&self.curve, &y0, &-up) else {
            return;
        };
        let second = self.segments.len();
        self.trace(y0, t1, Some(det1));
        if starts_at_seed(self.segments.get(first)) && starts_at_seed(self.segments.get(second)) {
            let back = self.segments.remove(second);
            let ahead = std::mem::take(&mut self.segments[first]);
            self.segments[first] = back
                .into_iter()
                .rev()
                .chain(ahead.into_iter().skip(1))
                .collect();
        }
    }

    /// Follow one curve from y0 along t0 until it ends (range, window, branch
    /// point, closed loop, budget). Splits the trace at saddle-nodes. True
    /// when the curve closed on itself.
    fn trace(&mut self, y0: Vector<3>, t0: Vector<3>, det0: Option<f64>) -> bool {
        let mut seg = vec![y0];
        let (mut y, mut t) = (y0, t0);
        let mut det = det0;
        let mut h = self.cfg.step.initial;
        let mut total = 0usize;
        let mut closed = false;
        loop {
            let curve = &self.curve;
            let Some(st) = self.walk.step(
                curve,
                &y,
                &t,
                h,
                &self.cfg.step,
                |n| {
                    format!(
                        "the sweep stopped after {n} continuation steps; some branches may be incomplete"
                    )
                },
                || {
                    let x = curve.x(&y);
                    format!(
                        "a branch could not be continued past q = {:.6}, p = {:.6}, {} = {:.6}",
                        x[0],
                        x[1],
                        curve.param_name(),
                        x[2]
                    )
                },
            ) else {
                break;
            };
            total += 1;
            (self.progress)(SweepProgress {
                steps: self.walk.steps,
                max_steps: self.cfg.max_steps,
                branches: self.segments.len(),
            });
            let flip =
                det.is_some_and(|d| d != 0.0 && st.det != 0.0 && d.signum() != st.det.signum());
            // The first step from a branch point has no sign to compare with.
            let turn = det.is_some() && t[2] * st.t[2] < 0.0;
            if flip {
                match self.locate_branch_point(&y, &t, det.unwrap_or(st.det), &st.y) {
                    Some(yb) if inside(&yb, &self.bounds, 0.0) => {
                        seg.push(yb);
                        self.finish(std::mem::take(&mut seg));
                        let arriving = (yb - y).try_normalize(0.0).unwrap_or(t);
                        self.branch_point(yb, arriving);
                        return false;
                    }
                    Some(_) => {}
                    None => {
                        let x = self.curve.x(&y);
                        self.walk.diagnostics.push(Diagnostic::warning(format!(
                            "a branch point near q = {:.6}, p = {:.6}, {} = {:.6} could not be located",
                            x[0],
                            x[1],
                            self.param_name(),
                            x[2]
                        )));
                    }
                }
            } else if turn
                && let Some(yf) = self.locate_fold(&y, &t, &st.y, &st.t)
                && inside(&yf, &self.bounds, 0.0)
            {
                seg.push(yf);
                self.finish(std::mem::take(&mut seg));
                if !self
                    .bifurcations
                    .iter()
                    .any(|(b, _)| (b - yf).amax() < MATCH_TOL)
                {
                    self.bifurcations.push((yf, BifurcationKind::SaddleNode));
                }
                seg.push(yf);
            }
            if !inside(&st.y, &self.bounds, 0.0) {
                let last = seg.last().copied().unwrap_or(y);
                if let Some((yc, j)) =
                    exit_point(&self.curve, &last, &st.y, &self.bounds, &self.cfg.step)
                {
                    seg.push(yc);
                    if j == 2 {
                        self.consume_seed_near(&yc);
                    }
                }
                break;
            }
            seg.push(st.y);
            if total > 8 && det0.is_some() && (st.y - y0).norm() < 0.5 * st.h {
                seg.push(y0);
                closed = true;
                break;
            }
            y = st.y;
            t = st.t;
            det = Some(st.det);
            h = next_step_length(st.h, st.iterations, &self.cfg.step);
        }
        self.finish(seg);
        closed
    }

    fn finish(&mut self, seg: Vec<Vector<3>>) {
        if seg.len() >= 2 {
            self.segments.push(seg);
        }
    }

    fn consume_seed_near(&mut self, y: &Vector<3>) {
        for s in &mut self.seeds {
            if (s.y - y).amax() < MATCH_TOL {
                s.consumed = true;
            }
        }
    }

    /// The branch point between (y0, t0) and y1 where det [J; tᵀ] changes
    /// sign. The step is first walked again in ever finer sub-steps so that the
    /// final bracket is far shorter than the distance to the other branch;
    /// then a bracketing root search on det [J; chordᵀ] finishes.
    fn locate_branch_point(
        &self,
        y0: &Vector<3>,
        t0: &Vector<3>,
        det0: f64,
        y1: &Vector<3>,
    ) -> Option<Vector<3>> {
        let (mut ya, mut ta, mut da) = (*y0, *t0, det0);
        let mut yb = *y1;
        let mut h = (y1 - y0).norm();
        while h > BRANCH_POINT_FINE_STEP {
            let sub = h / 8.0;
            let mut found = false;
            for _ in 0..12 {
                let Some((y, _)) = correct(&self.curve, &(ya + ta * sub), &ta, LOCATE_ITERATIONS)
                else {
                    break;
                };
                let Some((t, d)) = tangent(&self.curve, &y, &ta) else {
                    break;
                };
                if d.signum() != da.signum() {
                    yb = y;
                    found = true;
                    break;
                }
                (ya, ta, da) = (y, t, d);
            }
            if !found {
                break;
            }
            h = sub;
        }
        let chord = (yb - ya).try_normalize(0.0)?;
        let g = |y: &Vector<3>| -> Option<f64> {
            let (_, mut a) = self.curve.eval(y)?;
            a.set_row(2, &chord.transpose());
            Some(determinant(a))
        };
        let (ga, gb) = (g(&ya)?, g(&yb)?);
        let s = illinois(
            |s| point_between(&self.curve, &ya, &yb, s).and_then(|y| g(&y)),
            0.0,
            ga,
            1.0,
            gb,
            LOCATE_TOL,
        )?;
        point_between(&self.curve, &ya, &yb, s)
    }

    fn locate_fold(
        &self,
        y0: &Vector<3>,
        t0: &Vector<3>,
        y1: &Vector<3>,
        t1: &Vector<3>,
    ) -> Option<Vector<3>> {
        let s0 = t0[2] / (t0[2] - t1[2]);
        let guess = point_between(&self.curve, y0, y1, s0).unwrap_or(y0 + (y1 - y0) * s0);
        let reach = 2.0 * (y1 - y0).norm() + MATCH_TOL;
        if let Some(y) = newton_fold(&self.curve, &guess)
            && (y - guess).norm() <= reach
        {
            return Some(y);
        }
        // Fallback: the root of the tangent's μ-component along the step.
        let chord = (y1 - y0).try_normalize(0.0)?;
        let g = |s: f64| {
            let y = point_between(&self.curve, y0, y1, s)?;
            tangent(&self.curve, &y, &chord).map(|(t, _)| t[2])
        };
        let s = illinois(g, 0.0, t0[2], 1.0, t1[2], LOCATE_TOL)?;
        point_between(&self.curve, y0, y1, s)
    }

    fn branch_point(&mut self, yb: Vector<3>, arriving: Vector<3>) {
        if let Some(n) = self
            .nodes
            .iter()
            .position(|n| (n.y - yb).amax() < MATCH_TOL)
        {
            let back = -arriving;
            let node = &mut self.nodes[n];
            if let Some(best) = (0..node.dirs.len()).max_by(|&a, &b| {
                node.dirs[a]
                    .0
                    .dot(&back)
                    .total_cmp(&node.dirs[b].0.dot(&back))
            }) {
                node.dirs[best].1 = true;
            }
            return;
        }
        match branch_directions(&self.curve, &yb, &arriving) {
            Some((cont, new, kind)) => {
                self.bifurcations.push((yb, kind));
                let n = self.nodes.len();
                self.nodes.push(Node {
                    y: yb,
                    dirs: vec![(-cont, true), (cont, false), (new, false), (-new, false)],
                });
                for d in 1..4 {
                    self.queue.push_back(Origin::Node(n, d));
                }
            }
            None => {
                let x = self.curve.x(&yb);
                self.walk.diagnostics.push(Diagnostic::warning(format!(
                    "a degenerate branch point at q = {:.6}, p = {:.6}, {} = {:.6} was not resolved; \
                     branches through it may be missing",
                    x[0],
                    x[1],
                    self.param_name(),
                    x[2]
                )));
                // Continue straight through so the arriving branch is not cut short.
                let n = self.nodes.len();
                self.nodes.push(Node {
                    y: yb,
                    dirs: vec![(-arriving, true), (arriving, false)],
                });
                self.queue.push_back(Origin::Node(n, 1));
            }
        }
    }
}

/// Seeds for the branches at one end of the range: the equilibria in view.
fn seeds_at(
    sys: &System,
    window: &Window,
    cfg: &EquilibriumConfig,
    cancel: &Cancel,
) -> Vec<[f64; 2]> {
    let (found, _) = find_equilibria(sys, window, cfg, cancel);
    found.iter().map(|e| [e.q, e.p]).collect()
}

/// Trace every branch of equilibria of `sys` as the parameter `param` moves
/// from `from` to `to`, inside `window`.
///
/// Branches start at every equilibrium in view at both ends of the range,
/// then at those at a few values inside it that no traced branch passes
/// (so isolas and branches born and dying inside the range are found);
/// branch points spawn the branches through them; each piece of curve is
/// traced once. `progress` is called after every accepted step (from the
/// calling thread); `cancel` stops the work early with partial results.
pub fn sweep(
    sys: &System,
    param: &str,
    from: f64,
    to: f64,
    window: &Window,
    cfg: &SweepConfig,
    cancel: &Cancel,
    progress: &dyn Fn(SweepProgress),
) -> Result<Sweep, ContinuationError> {
    let Some(k) = sys.formula().param_index(param) else {
        return Err(ContinuationError::UnknownParameter {
            name: param.to_string(),
            available: sys.formula().params().to_vec(),
        });
    };
    sweep_index(sys, k, from, to, window, cfg, cancel, progress)
}

/// [`sweep`] with the parameter given by its index in the formula's order.
#[allow(clippy::too_many_arguments)]
pub fn sweep_index(
    sys: &System,
    param: usize,
    from: f64,
    to: f64,
    window: &Window,
    cfg: &SweepConfig,
    cancel: &Cancel,
    progress: &dyn Fn(SweepProgress),
) -> Result<Sweep, ContinuationError> {
    let names = sys.formula().params();
    let Some(name) = names.get(param).cloned() else {
        return Err(ContinuationError::UnknownParameter {
            name: format!("#{param}"),
            available: names.to_vec(),
        });
    };
    if !(from.is_finite() && to.is_finite()) || from == to {
        return Err(ContinuationError::BadRange { from, to });
    }
    cfg.step.validate()?;
    window
        .validate()
        .map_err(|e| ContinuationError::BadConfig(format!("window: {e}")))?;
    let (lo, hi) = if from < to { (from, to) } else { (to, from) };
    let scale = [window.width(), window.height(), hi - lo];
    let curve = EquilibriumCurve { sys, param, scale };
    let bounds = [
        (window.qmin / scale[0], window.qmax / scale[0]),
        (window.pmin / scale[1], window.pmax / scale[1]),
        (lo / scale[2], hi / scale[2]),
    ];
    let mut seeds = Vec::new();
    for (mu, upper) in [(lo, false), (hi, true)] {
        for [q, p] in seeds_at(&curve.at(mu), window, &cfg.equilibria, cancel) {
            seeds.push(Seed {
                y: Vector::<3>::new(q / scale[0], p / scale[1], mu / scale[2]),
                upper,
                consumed: false,
            });
        }
    }
    let mut tracer = Tracer {
        curve,
        bounds,
        cfg,
        progress,
        walk: Walk::new(cancel, cfg.max_steps),
        segments: Vec::new(),
        bifurcations: Vec::new(),
        nodes: Vec::new(),
        seeds,
        queue: VecDeque::new(),
    };
    tracer.run();
    // Branches that reach neither end (an isola, a pair born at one
    // saddle-node and dying at another) are seeded inside the range.
    let mut interior_seeds = 0usize;
    for f in INTERIOR_SEED_FRACTIONS {
        if tracer.walk.stopped() || cancel.is_cancelled() {
            break;
        }
        let mu = lo + f * (hi - lo);
        let found = seeds_at(&tracer.curve.at(mu), window, &cfg.equilibria, cancel);
        interior_seeds += found.len();
        for [q, p] in found {
            tracer.trace_interior(Vector::<3>::new(q / scale[0], p / scale[1], mu / scale[2]));
            tracer.drain();
        }
    }
    if tracer.seeds.is_empty() && interior_seeds == 0 {
        tracer.walk.diagnostics.push(Diagnostic::info(format!(
            "no equilibria in view for {name} in {lo} .. {hi}; nothing to continue"
        )));
    }
    if cancel.is_cancelled() {
        tracer.walk.cancelled = true;
    }
    let curve = &tracer.curve;
    let mut bifurcations: Vec<Bifurcation> = tracer
        .bifurcations
        .iter()
        .map(|(y, kind)| {
            let x = curve.x(y);
            Bifurcation {
                param: x[2],
                q: x[0],
                p: x[1],
                energy: curve.at(x[2]).energy(x[0], x[1]),
                kind: *kind,
            }
        })
        .collect();
    bifurcations.sort_by(|a, b| a.param.total_cmp(&b.param).then(a.q.total_cmp(&b.q)));
    let is_bifurcation = |y: &Vector<3>| {
        tracer
            .bifurcations
            .iter()
            .any(|(b, _)| (b - y).amax() < MATCH_TOL)
    };
    let branches = tracer
        .segments
        .iter()
        .map(|seg| {
            let points: Vec<BranchPoint> = seg
                .iter()
                .map(|y| {
                    let x = curve.x(y);
                    let s = curve.at(x[2]);
                    let e = classify(&s, x[0], x[1], window);
                    let kind = if is_bifurcation(y) {
                        EquilibriumKind::Degenerate
                    } else {
                        e.kind
                    };
                    BranchPoint {
                        param: x[2],
                        q: x[0],
                        p: x[1],
                        energy: e.energy,
                        kind,
                    }
                })
                .collect();
            let interior = &points[1..points.len().saturating_sub(1).max(1)];
            let count = |k: EquilibriumKind| interior.iter().filter(|p| p.kind == k).count();
            let (c, s) = (
                count(EquilibriumKind::Center),
                count(EquilibriumKind::Saddle),
            );
            let kind = if c == 0 && s == 0 {
                EquilibriumKind::Degenerate
            } else if c >= s {
                EquilibriumKind::Center
            } else {
                EquilibriumKind::Saddle
            };
            Branch { kind, points }
        })
        .collect();
    Ok(Sweep {
        param: name,
        from,
        to,
        branches,
        bifurcations,
        steps: tracer.walk.steps,
        cancelled: tracer.walk.cancelled,
        diagnostics: tracer.walk.diagnostics,
    })
}
