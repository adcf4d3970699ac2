//! The backbone of a well: period, frequency, action and amplitude of the
//! closed orbits around a center as functions of their energy, from the
//! center up to just below the escape energy.
//!
//! # Quadrature over the level curve (H = T(p) + V(q), T quadratic)
//!
//! When H is separable and the kinetic part is quadratic in p,
//! T(p) = T_c + (p − p_c)²/(2m), a closed level curve H = E is the pair of
//! arcs p = p_c ± √(2m(E − H(q, p_c))) between the turning points q₋ < q₊
//! where H(q, p_c) = E (found by bracketed Newton). Then
//! period = √(2m) ∫ dq/√W and action = (1/π) √(2m) ∫ √W dq with
//! W = E − H(q, p_c). The substitution q = q_mid + (Δ/2) sin θ removes the
//! inverse square-root singularities at the turning points analytically, and
//! the smooth integrand in θ is integrated by adaptive Gauss–Kronrod (7, 15)
//! to a relative tolerance of about 1e-13; the sharpening peak near the escape
//! energy (where the period grows like −(1/λ) ln(E_escape − E)) is handled by
//! the adaptive subdivision.
//!
//! # Orbit over one period (any other H)
//!
//! The level curve is traced by the flow itself: from the point where H = E on
//! the line p = p_c to the right of the center, classical Runge–Kutta steps
//! of a fixed fraction of the small-oscillation period until the orbit comes
//! back to that line; the last step is taken with p as the independent
//! variable so that it lands on the line exactly (Hénon's trick). The action
//! is integrated alongside (dA/dt = p ∂H/∂p).
//!
//! The escape energy is the lowest saddle level bounding the well: for the
//! separable case the nearest maxima of H(q, p_c) on either side of the center;
//! otherwise the lowest saddle in view above the center. Without one, the
//! backbone goes up to the level whose curve reaches the window's edge.
//!
//! Reference: L. D. Landau and E. M. Lifshitz, *Mechanics* (3rd ed.,
//! Pergamon 1976) §11–12 (period from the energy integral) and §49 (action);
//! W. H. Press et al., *Numerical Recipes* (3rd ed., 2007) §4.6 (Gauss–Kronrod),
//! §17.1 (Runge–Kutta); M. Hénon, Physica D 5 (1982) 412 (landing on a section).

use super::equilibria::{EquilibriumConfig, EquilibriumKind, classify, find_equilibria};
use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};
use std::f64::consts::PI;
use std::fmt;

/// Newton for the center stops at this step (relative to the window's diagonal).
const CENTER_TOL: f64 = 1e-13;
/// The refined center may lie at most this fraction of the diagonal from the given point.
const CENTER_REACH: f64 = 0.05;
/// Cells per window width in the scan for the barriers on both sides of the center.
const BARRIER_SCAN_CELLS: f64 = 800.0;
/// Relative tolerance of a quadratic kinetic part, checked at a few momenta.
const QUADRATIC_KINETIC_TOL: f64 = 1e-10;
/// Within this fraction of the half-width of a turning point, W comes from a Taylor series.
const TAYLOR_ZONE: f64 = 1e-4;
/// Runge–Kutta steps per small-oscillation period on the orbit path.
const ORBIT_STEPS_PER_PERIOD: f64 = 2000.0;

/// Settings of a backbone.
#[derive(Clone, Debug, PartialEq)]
pub struct BackboneConfig {
    /// Energies sampled, the center's included (default 200, at least 2).
    pub energies: usize,
    /// Closest approach to the escape energy, as a fraction of the well's
    /// depth (default 1e-6); the sampling is denser towards the escape energy.
    pub closest: f64,
    /// Relative tolerance of the quadrature (default 1e-13).
    pub tolerance: f64,
    /// Largest number of Runge–Kutta steps per orbit on the orbit path (default 400 000).
    pub max_orbit_steps: usize,
    /// The search for saddles when H is not separable.
    pub equilibria: EquilibriumConfig,
}

impl Default for BackboneConfig {
    fn default() -> Self {
        BackboneConfig {
            energies: 200,
            closest: 1e-6,
            tolerance: 1e-13,
            max_orbit_steps: 400_000,
            equilibria: EquilibriumConfig::default(),
        }
    }
}

/// How the rows were computed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BackboneMethod {
    /// Quadrature over the level curve (separable H, quadratic kinetic part).
    Quadrature,
    /// One period of the orbit on each level.
    Orbit,
}

/// One closed orbit of the well.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct BackboneRow {
    pub energy: f64,
    pub period: f64,
    /// Angular frequency 2π/period.
    pub frequency: f64,
    /// I = (1/2π) ∮ p dq.
    pub action: f64,
    /// Half the q-extent of the orbit, (q_max − q_min)/2.
    pub amplitude: f64,
}

/// The backbone of one well.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Backbone {
    /// The refined center [q, p].
    pub center: [f64; 2],
    pub center_energy: f64,
    /// The lowest saddle level bounding the well, if one bounds it in view.
    pub escape_energy: Option<f64>,
    /// The energy the sampling approaches (the escape energy or the level that reaches the window's edge).
    pub top_energy: f64,
    pub method: BackboneMethod,
    pub rows: Vec<BackboneRow>,
    pub diagnostics: Vec<Diagnostic>,
    pub cancelled: bool,
}

/// Why a backbone could not be computed.
#[derive(Clone, Debug, PartialEq)]
pub enum BackboneError {
    /// Newton from the given point found no equilibrium nearby.
    NoEquilibrium {
        q: f64,
        p: f64,
    },
    /// The equilibrium there is not a center.
    NotACenter {
        q: f64,
        p: f64,
        kind: EquilibriumKind,
    },
    /// H depends on time: energy levels are not invariant.
    TimeDependent,
    BadConfig(String),
}

impl fmt::Display for BackboneError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            BackboneError::NoEquilibrium { q, p } => {
                write!(
                    f,
                    "there is no equilibrium near q = {q}, p = {p}; give a point close to a center"
                )
            }
            BackboneError::NotACenter { q, p, kind } => write!(
                f,
                "the equilibrium at q = {q:.6}, p = {p:.6} is a {}, not a center; a backbone needs a well",
                match kind {
                    EquilibriumKind::Center => "center",
                    EquilibriumKind::Saddle => "saddle",
                    EquilibriumKind::Degenerate => "degenerate point",
                }
            ),
            BackboneError::TimeDependent => f.write_str(
                "H depends on t, so its level curves are not orbits; a backbone needs H(q, p)",
            ),
            BackboneError::BadConfig(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for BackboneError {}

/// The backbone of the well around the center near `center` = [q, p].
pub fn backbone(
    sys: &System,
    center: [f64; 2],
    window: &Window,
    cfg: &BackboneConfig,
    cancel: &Cancel,
    progress: &dyn Fn(usize, usize),
) -> Result<Backbone, BackboneError> {
    if cfg.energies < 2 {
        return Err(BackboneError::BadConfig(
            "a backbone needs at least two energies".into(),
        ));
    }
    if !(cfg.closest.is_finite() && cfg.closest > 0.0 && cfg.closest < 1.0) {
        return Err(BackboneError::BadConfig(
            "the closest approach must lie between 0 and 1".into(),
        ));
    }
    if !(cfg.tolerance.is_finite() && cfg.tolerance > 0.0) {
        return Err(BackboneError::BadConfig(
            "the quadrature tolerance must be a positive number".into(),
        ));
    }
    window
        .validate()
        .map_err(|e| BackboneError::BadConfig(format!("window: {e}")))?;
    if sys.depends_on_time() {
        return Err(BackboneError::TimeDependent);
    }
    if !(center[0].is_finite() && center[1].is_finite()) {
        return Err(BackboneError::NoEquilibrium {
            q: center[0],
            p: center[1],
        });
    }
    let [qc, pc] = refine_center(sys, center, window).ok_or(BackboneError::NoEquilibrium {
        q: center[0],
        p: center[1],
    })?;
    let jc = sys.jet(qc, pc);
    let kind = classify(sys, qc, pc, window).kind;
    if kind != EquilibriumKind::Center {
        return Err(BackboneError::NotACenter { q: qc, p: pc, kind });
    }
    // Orientation: +1 when the center is a minimum of H, −1 for a maximum.
    let sigma = jc.hqq.signum();
    let well = Well {
        sys,
        qc,
        pc,
        ec: jc.h,
        sigma,
        omega0: jc.hessian_det().sqrt(),
    };
    let mut diagnostics = Vec::new();
    let quadratic = sys.is_separable() && well.kinetic_is_quadratic(jc.hpp, window);
    let (left, right) = (well.barrier(window, -1.0), well.barrier(window, 1.0));
    let (escape, top) = if quadratic {
        let escape = [left, right]
            .iter()
            .filter(|b| b.saddle)
            .map(|b| b.depth)
            .fold(f64::INFINITY, f64::min);
        let edge = [left, right]
            .iter()
            .filter(|b| !b.saddle)
            .map(|b| b.depth)
            .fold(f64::INFINITY, f64::min);
        if escape <= edge {
            (Some(escape), escape)
        } else {
            (None, edge)
        }
    } else {
        let escape = well.lowest_saddle_above(window, &cfg.equilibria, cancel);
        let edge = left.depth.min(right.depth);
        match escape {
            Some(e) => (Some(e), e),
            None => (None, edge),
        }
    };
    if !(top.is_finite() && top > 0.0) {
        return Err(BackboneError::BadConfig(
            "the well around this center has no room in view: its level curves leave the window at once".into(),
        ));
    }
    let n = cfg.energies;
    let depth_at = |i: usize| -> f64 {
        let u = i as f64 / (n - 1) as f64;
        if escape.is_some() {
            top * (1.0 - cfg.closest.powf(u * u))
        } else {
            top * u
        }
    };
    let mut rows = Vec::with_capacity(n);
    let mut cancelled = false;
    rows.push(BackboneRow {
        energy: well.ec,
        period: 2.0 * PI / well.omega0,
        frequency: well.omega0,
        action: 0.0,
        amplitude: 0.0,
    });
    let limits = (left.reach, right.reach);
    for i in 1..n {
        if cancel.is_cancelled() {
            cancelled = true;
            break;
        }
        let depth = depth_at(i);
        let row = if quadratic {
            well.quadrature_row(depth, limits, jc.hpp, cfg.tolerance)
        } else {
            well.orbit_row(depth, limits, cfg.max_orbit_steps)
        };
        match row {
            Some(r) => rows.push(r),
            None => diagnostics.push(Diagnostic::warning(format!(
                "no closed orbit was found at energy {:.9}; that row is left out",
                well.ec + sigma * depth
            ))),
        }
        progress(i + 1, n);
    }
    Ok(Backbone {
        center: [qc, pc],
        center_energy: well.ec,
        escape_energy: escape.map(|d| well.ec + sigma * d),
        top_energy: well.ec + sigma * top,
        method: if quadratic {
            BackboneMethod::Quadrature
        } else {
            BackboneMethod::Orbit
        },
        rows,
        diagnostics,
        cancelled,
    })
}

/// Newton on ∇H = 0 from `start`.
fn refine_center(sys: &System, start: [f64; 2], window: &Window) -> Option<[f64; 2]> {
    let [mut q, mut p] = start;
    let tol = CENTER_TOL * window.diagonal();
    for _ in 0..60 {
        let j = sys.jet(q, p);
        let det = j.hessian_det();
        if !j.is_finite() || det == 0.0 {
            return None;
        }
        let dq = -(j.hpp * j.hq - j.hqp * j.hp) / det;
        let dp = -(j.hqq * j.hp - j.hqp * j.hq) / det;
        q += dq;
        p += dp;
        if (q - start[0]).hypot(p - start[1]) > CENTER_REACH * window.diagonal() {
            return None;
        }
        if dq.abs().max(dp.abs()) <= tol {
            return Some([q, p]);
        }
    }
    None
}

/// The limit of the well on one side of the center along p = p_c.
#[derive(Clone, Copy, Debug)]
struct Barrier {
    /// Depth σ(E − E_c) of the limit.
    depth: f64,
    /// The q of the limit (the barrier top or the window's edge).
    reach: f64,
    /// True when the limit is a maximum of H(q, p_c) (a saddle for separable H).
    saddle: bool,
}

struct Well<'a> {
    sys: &'a System,
    qc: f64,
    pc: f64,
    ec: f64,
    sigma: f64,
    omega0: f64,
}

impl Well<'_> {
    /// σ(H(q, p_c) − E_c) and its q-derivative.
    fn depth_q(&self, q: f64) -> (f64, f64) {
        let (h, hq) = self.sys.dh_dq(q, self.pc, 0.0);
        (self.sigma * (h - self.ec), self.sigma * hq)
    }

    /// True when H(q_c, p) − H(q_c, p_c) = H_pp (p − p_c)²/2 at a few momenta.
    fn kinetic_is_quadratic(&self, hpp: f64, window: &Window) -> bool {
        [0.37, -0.61, 1.3].iter().all(|&f| {
            let dp = f * window.height();
            let t = self.sys.energy(self.qc, self.pc + dp) - self.ec;
            let model = 0.5 * hpp * dp * dp;
            (t - model).abs() <= QUADRATIC_KINETIC_TOL * model.abs().max(f64::MIN_POSITIVE)
        })
    }

    /// Scan H(q, p_c) from the center towards `dir` for the first maximum of
    /// the depth or the window's edge.
    fn barrier(&self, window: &Window, dir: f64) -> Barrier {
        let edge = if dir > 0.0 { window.qmax } else { window.qmin };
        let dq = window.width() / BARRIER_SCAN_CELLS;
        let mut a = self.qc;
        loop {
            let b = a + dir * dq;
            let past = (b - edge) * dir >= 0.0;
            let b = if past { edge } else { b };
            if self.depth_q(b).1 * dir <= 0.0 {
                // The depth stops growing: the top of the barrier lies in (a, b].
                let top = self.slope_root(a, b);
                return Barrier {
                    depth: self.depth_q(top).0,
                    reach: top,
                    saddle: true,
                };
            }
            if past {
                return Barrier {
                    depth: self.depth_q(edge).0,
                    reach: edge,
                    saddle: false,
                };
            }
            a = b;
        }
    }

    /// A root of ∂H/∂q(q, p_c) between a and b (where it changes sign).
    fn slope_root(&self, mut a: f64, mut b: f64) -> f64 {
        let sa = self.depth_q(a).1;
        for _ in 0..200 {
            let m = 0.5 * (a + b);
            if m == a || m == b {
                break;
            }
            let sm = self.depth_q(m).1;
            if sm == 0.0 {
                return m;
            }
            if sm.signum() == sa.signum() {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    }

    /// The q between the center and `reach` where the depth equals `depth`.
    fn turning_point(&self, depth: f64, reach: f64) -> Option<f64> {
        let (mut a, mut b) = (self.qc, reach);
        let (db, _) = self.depth_q(b);
        if db < depth {
            return None;
        }
        let mut q = b;
        for _ in 0..200 {
            let (d, s) = self.depth_q(q);
            let f = d - depth;
            if f > 0.0 {
                b = q;
            } else {
                a = q;
            }
            let newton = q - f / s;
            let inside = (newton - a) * (newton - b) < 0.0;
            let next = if inside && s != 0.0 {
                newton
            } else {
                0.5 * (a + b)
            };
            if next == q || (a - b).abs() <= 4.0 * f64::EPSILON * q.abs().max(1e-300) {
                return Some(next);
            }
            q = next;
        }
        Some(q)
    }

    fn quadrature_row(
        &self,
        depth: f64,
        limits: (f64, f64),
        hpp: f64,
        tol: f64,
    ) -> Option<BackboneRow> {
        let qm = self.turning_point(depth, limits.0)?;
        let qp = self.turning_point(depth, limits.1)?;
        let half = 0.5 * (qp - qm);
        let m = 1.0 / hpp.abs();
        // W(q) = σ(E − H(q, p_c)) ≥ 0 between the turning points. Next to a
        // turning point e the difference E − H loses its digits to
        // cancellation, so there W comes from the Taylor series of H about e
        // (exact derivatives up to third order), taking W(e) = 0 exactly: a
        // residual of a few ulps at e would otherwise move the square-root
        // singularity off the end and cost digits.
        let taylor = [qm, qp].map(|e| {
            let j = self.sys.third_jet(e, self.pc, &[]);
            let s = self.sigma;
            (e, s * j.grad[0], s * j.hess[0][0], s * j.third[0][0][0])
        });
        // W at q = e + d next to end e (d measured from the end, exactly).
        let w = |end: usize, d: f64| {
            let (e, d1, d2, d3) = taylor[end];
            let v = if d.abs() < TAYLOR_ZONE * half {
                -d * (d1 + d * (0.5 * d2 + d * d3 / 6.0))
            } else {
                depth - self.depth_q(e + d).0
            };
            if v > 0.0 {
                v
            } else {
                (d1 * d).abs().max(f64::MIN_POSITIVE)
            }
        };
        // θ = ±(π/2 − u): q − e = ∓2·half·sin²(u/2) and cos θ = sin u, both
        // without cancellation; the two halves are integrated together.
        let f = |u: f64| {
            let c = u.sin();
            let d = 2.0 * half * (0.5 * u).sin().powi(2);
            let (wl, wu) = (w(0, d), w(1, -d));
            [
                half * c * (1.0 / wl.sqrt() + 1.0 / wu.sqrt()),
                half * c * (wl.sqrt() + wu.sqrt()),
            ]
        };
        let [ti, ai] = gauss_kronrod(&f, 0.0, 0.5 * PI, tol)?;
        let period = (2.0 * m).sqrt() * ti;
        let action = (2.0 * m).sqrt() * ai / PI;
        Some(BackboneRow {
            energy: self.ec + self.sigma * depth,
            period,
            frequency: 2.0 * PI / period,
            action,
            amplitude: half,
        })
    }

    /// One period of the orbit through the point right of the center on p = p_c.
    fn orbit_row(&self, depth: f64, limits: (f64, f64), max_steps: usize) -> Option<BackboneRow> {
        let q0 = self.turning_point(depth, limits.1)?;
        let field = |s: [f64; 3]| {
            let j = self.sys.jet(s[0], s[1]);
            [j.hp, -j.hq, s[1] * j.hp]
        };
        let rk4 = |s: [f64; 3], dt: f64| {
            let add = |a: [f64; 3], k: [f64; 3], c: f64| {
                [a[0] + c * k[0], a[1] + c * k[1], a[2] + c * k[2]]
            };
            let k1 = field(s);
            let k2 = field(add(s, k1, 0.5 * dt));
            let k3 = field(add(s, k2, 0.5 * dt));
            let k4 = field(add(s, k3, dt));
            [
                s[0] + dt / 6.0 * (k1[0] + 2.0 * k2[0] + 2.0 * k3[0] + k4[0]),
                s[1] + dt / 6.0 * (k1[1] + 2.0 * k2[1] + 2.0 * k3[1] + k4[1]),
                s[2] + dt / 6.0 * (k1[2] + 2.0 * k2[2] + 2.0 * k3[2] + k4[2]),
            ]
        };
        let dt = 2.0 * PI / self.omega0 / ORBIT_STEPS_PER_PERIOD;
        let start = [q0, self.pc, 0.0];
        let dir = field(start)[1].signum();
        let mut s = start;
        let mut t = 0.0;
        let (mut qmin, mut qmax) = (q0, q0);
        let mut prev = [start, start];
        for step in 0..max_steps {
            let next = rk4(s, dt);
            // Parabolic refinement of a q-extremum at the middle of three samples.
            let (a, b, c) = (prev[1][0], s[0], next[0]);
            if step > 0 && (b - a) * (c - b) <= 0.0 {
                let den = a - 2.0 * b + c;
                let ext = if den != 0.0 {
                    b - 0.125 * (c - a) * (c - a) / den
                } else {
                    b
                };
                qmin = qmin.min(ext);
                qmax = qmax.max(ext);
            }
            qmin = qmin.min(next[0]);
            qmax = qmax.max(next[0]);
            let crossed = (s[1] - self.pc) * (next[1] - self.pc) <= 0.0
                && next[0] > self.qc
                && field(next)[1].signum() == dir
                && step > 2;
            if crossed {
                // Hénon: one step in p from s back to p = p_c.
                let g = |x: [f64; 4]| {
                    let f = field([x[0], x[1], x[2]]);
                    [f[0] / f[1], 1.0, f[2] / f[1], 1.0 / f[1]]
                };
                let x0 = [s[0], s[1], s[2], t];
                let hp = self.pc - s[1];
                let add = |a: [f64; 4], k: [f64; 4], c: f64| {
                    [
                        a[0] + c * k[0],
                        a[1] + c * k[1],
                        a[2] + c * k[2],
                        a[3] + c * k[3],
                    ]
                };
                let k1 = g(x0);
                let k2 = g(add(x0, k1, 0.5 * hp));
                let k3 = g(add(x0, k2, 0.5 * hp));
                let k4 = g(add(x0, k3, hp));
                let fin: Vec<f64> = (0..4)
                    .map(|i| x0[i] + hp / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]))
                    .collect();
                let period = fin[3];
                let action = fin[2].abs() / (2.0 * PI);
                if !(period.is_finite() && period > 0.0) {
                    return None;
                }
                return Some(BackboneRow {
                    energy: self.ec + self.sigma * depth,
                    period,
                    frequency: 2.0 * PI / period,
                    action,
                    amplitude: 0.5 * (qmax - qmin),
                });
            }
            prev = [prev[1], s];
            s = next;
            t += dt;
        }
        None
    }

    /// The depth of the lowest saddle above the center among the equilibria in view.
    fn lowest_saddle_above(
        &self,
        window: &Window,
        cfg: &EquilibriumConfig,
        cancel: &Cancel,
    ) -> Option<f64> {
        find_equilibria(self.sys, window, cfg, cancel)
            .0
            .into_iter()
            .filter_map(|e| {
                let depth = self.sigma * (e.energy - self.ec);
                (e.kind == EquilibriumKind::Saddle && depth > 0.0).then_some(depth)
            })
            .min_by(f64::total_cmp)
    }
}

/// Gauss–Kronrod (7, 15) nodes on [−1, 1] (the positive half, centre first) and weights.
const GK_NODES: [f64; 8] = [
    0.0,
    0.207_784_955_007_898_5,
    0.405_845_151_377_397_2,
    0.586_087_235_467_691_1,
    0.741_531_185_599_394_4,
    0.864_864_423_359_769_1,
    0.949_107_912_342_758_5,
    0.991_455_371_120_813,
];
const GK_KRONROD: [f64; 8] = [
    0.209_482_141_084_727_8,
    0.204_432_940_075_298_9,
    0.190_350_578_064_785_4,
    0.169_004_726_639_267_9,
    0.140_653_259_715_525_9,
    0.104_790_010_322_250_2,
    0.063_092_092_629_978_55,
    0.022_935_322_010_529_22,
];
/// Gauss weights of the 7-point rule, on nodes 0, 2, 4, 6 of GK_NODES.
const GK_GAUSS: [f64; 4] = [
    0.417_959_183_673_469_4,
    0.381_830_050_505_118_9,
    0.279_705_391_489_276_7,
    0.129_484_966_168_869_7,
];

/// Most subintervals and deepest bisection of the adaptive quadrature.
const GK_MAX_INTERVALS: usize = 20_000;
const GK_MAX_DEPTH: usize = 50;
/// An interval is done when |Kronrod − Gauss| is at the roundoff level of its sum.
const GK_ROUNDOFF: f64 = 50.0;
/// An interval's error is negligible below this share of the tolerance
/// (next to a turning point the integrand is noisy but contributes nothing).
const GK_NEGLIGIBLE: f64 = 1e-3;

/// Adaptive Gauss–Kronrod of a two-component integrand over [a, b] to
/// relative tolerance `tol` (on each component).
fn gauss_kronrod(f: &dyn Fn(f64) -> [f64; 2], a: f64, b: f64, tol: f64) -> Option<[f64; 2]> {
    // Returns the Kronrod estimate, |Kronrod − Gauss| and Σ|w f| (for the roundoff floor).
    let rule = |a: f64, b: f64| {
        let c = 0.5 * (a + b);
        let h = 0.5 * (b - a);
        let mut k = [0.0; 2];
        let mut g = [0.0; 2];
        let mut abs = [0.0; 2];
        for (i, &x) in GK_NODES.iter().enumerate() {
            let vals = if i == 0 {
                [f(c), [0.0; 2]]
            } else {
                [f(c - h * x), f(c + h * x)]
            };
            for comp in 0..2 {
                let s = vals[0][comp] + vals[1][comp];
                k[comp] += GK_KRONROD[i] * s;
                abs[comp] += GK_KRONROD[i] * (vals[0][comp].abs() + vals[1][comp].abs());
                if i % 2 == 0 {
                    g[comp] += GK_GAUSS[i / 2] * s;
                }
            }
        }
        let h = h.abs();
        (
            [k[0] * h, k[1] * h],
            [(k[0] - g[0]).abs() * h, (k[1] - g[1]).abs() * h],
            [abs[0] * h, abs[1] * h],
        )
    };
    let (total, _, _) = rule(a, b);
    let scale = [
        total[0].abs().max(f64::MIN_POSITIVE),
        total[1].abs().max(f64::MIN_POSITIVE),
    ];
    let mut stack = vec![(a, b, 0usize)];
    let mut sum = [0.0; 2];
    let mut intervals = 0usize;
    while let Some((lo, hi, depth)) = stack.pop() {
        intervals += 1;
        if intervals > GK_MAX_INTERVALS {
            return None;
        }
        let (val, err, abs) = rule(lo, hi);
        let share = ((hi - lo) / (b - a)).abs();
        let fine = depth >= GK_MAX_DEPTH
            || (0..2).all(|c| {
                err[c] <= tol * scale[c] * share.max(GK_NEGLIGIBLE)
                    || err[c] <= GK_ROUNDOFF * f64::EPSILON * abs[c]
            });
        if fine {
            sum[0] += val[0];
            sum[1] += val[1];
        } else {
            let m = 0.5 * (lo + hi);
            stack.push((lo, m, depth + 1));
            stack.push((m, hi, depth + 1));
        }
    }
    (sum[0].is_finite() && sum[1].is_finite()).then_some(sum)
}
