//! The Melnikov function of a driven, damped system along the separatrix
//! connections of its undriven part.
//!
//! Equations of motion q' = ∂H/∂p, p' = −∂H/∂q − δ ∂H/∂p. H₀ is H with the
//! amplitude parameter F set to 0 (it must not depend on t); H₁ = ∂H/∂F.
//! Along a connection x₀(s) of H₀,
//! M(t₀) = F·m(t₀) − δ·D, m(t₀) = ∫ {H₀, H₁}(x₀(s), s + t₀) ds,
//! D = ∫ (∂H₀/∂p)² ds, with {A, B} = A_q B_p − A_p B_q (so that
//! {H₀, H₁} = f ∧ g for f = (H₀_p, −H₀_q), g = (H₁_p, −H₁_q)).
//!
//! Reference: J. Guckenheimer and P. Holmes, Nonlinear Oscillations, Dynamical
//! Systems, and Bifurcations of Vector Fields (1983), §4.5.
//!
//! The connection is integrated from its mid point forward and backward with
//! Gauss–Legendre collocation (order 6) at a fixed step until it is
//! `STOP_REL` of the window scale from the saddle; beyond that the orbit
//! follows the saddle's linearisation (exponential approach along the stable
//! or unstable eigenvector) until its distance is `TAIL_REL` of the scale.
//! The integrals use the trapezoidal rule on that uniform grid (spectrally
//! accurate for smooth integrands decaying on the line; common practice).

use super::Cancel;
use super::equilibria::{Equilibrium, saddle_directions};
use super::formula::{LANES, LaneRegisters, SLOT_P, SLOT_Q};
use super::integrate::{Integrator, Method, State};
use super::system::System;
use super::wells::{Connection, ConnectionKind};

/// Time step as a fraction of 1/λ (λ the saddle's eigenvalue).
const STEP_PER_LAMBDA: f64 = 0.02;
/// The nonlinear flow stops this close to the saddle (relative to the scale).
const STOP_REL: f64 = 1e-5;
/// The linearised tail stops at this relative distance.
const TAIL_REL: f64 = 1e-14;
/// The quadrature step as a fraction of 1/λ, and at most this fraction of
/// the drive period. The trapezoidal rule on the line converges like
/// e^(−2πd/h) for an integrand analytic in a strip |Im s| < d (common
/// practice); along a separatrix d is of order 1/λ (π/(2λ) for the double
/// well and the pendulum), so 0.08/λ leaves e^(−120), and 16 points per
/// drive period keep the drive's oscillation resolved.
const QUADRATURE_PER_LAMBDA: f64 = 0.08;
const QUADRATURE_PER_PERIOD: f64 = 16.0;
/// Samples of m over one drive period.
const SAMPLES: usize = 64;
/// Most steps on one side of the mid point.
const MAX_STEPS: usize = 200_000;
/// Bisection / golden-section iterations.
const REFINE_ITERATIONS: usize = 60;

/// The Melnikov function along one connection.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct MelnikovConnection {
    pub kind: ConnectionKind,
    /// The saddles' indices in the equilibria list (written from 1 in JSON).
    #[serde(serialize_with = "crate::core::numbered::one")]
    pub from: usize,
    #[serde(serialize_with = "crate::core::numbered::one")]
    pub to: usize,
    pub energy: f64,
    /// D = ∫ (∂H₀/∂p)² ds.
    pub damping_integral: f64,
    /// (t₀, m(t₀)) over one period.
    pub samples: Vec<[f64; 2]>,
    /// Simple zeros of M(t₀) = F·m − δ·D in one period at the system's F.
    pub zeros: Vec<f64>,
    /// max over t₀ of |m(t₀)|.
    pub max_abs_m: f64,
    /// F at which zeros first appear: δ·D / max|m| (0 when δ = 0: any F > 0).
    pub threshold_amplitude: f64,
    /// D / max|m|.
    pub threshold_ratio: f64,
}

/// The Melnikov analysis of a system: every connection of H₀, and the
/// lowest threshold over them (the drive at which the first chaotic layer is
/// expected).
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Melnikov {
    /// The drive-amplitude parameter and its value in the system.
    pub amplitude: String,
    pub amplitude_value: f64,
    /// Drive period τ and damping δ.
    pub period: f64,
    pub damping: f64,
    pub connections: Vec<MelnikovConnection>,
    /// The smallest `threshold_amplitude` over the connections (none without one).
    pub threshold_amplitude: Option<f64>,
    /// The smallest `threshold_ratio` over the connections.
    pub threshold_ratio: Option<f64>,
}

impl Melnikov {
    /// Collect `connections` with the drive they were computed for.
    pub fn new(
        sys: &System,
        amplitude: &str,
        period: f64,
        damping: f64,
        connections: Vec<MelnikovConnection>,
    ) -> Melnikov {
        let amplitude_value = sys
            .formula()
            .param_index(amplitude)
            .map_or(f64::NAN, |k| sys.params()[k]);
        let least = |f: fn(&MelnikovConnection) -> f64| {
            connections
                .iter()
                .map(f)
                .filter(|v| v.is_finite())
                .min_by(f64::total_cmp)
        };
        Melnikov {
            amplitude: amplitude.to_string(),
            amplitude_value,
            period,
            damping,
            threshold_amplitude: least(|c| c.threshold_amplitude),
            threshold_ratio: least(|c| c.threshold_ratio),
            connections,
        }
    }
}

/// True when H is affine in parameter `k` (checked at a few points and times).
fn is_affine_in(sys: &System, k: usize) -> bool {
    const POINTS: [(f64, f64); 3] = [(0.3, 0.7), (-1.1, 0.4), (0.9, -1.3)];
    const TIMES: [f64; 3] = [0.37, 1.9, 5.3];
    let (off, one, two) = (
        sys.with_param(k, 0.0),
        sys.with_param(k, 1.0),
        sys.with_param(k, 2.0),
    );
    POINTS.iter().all(|&(q, p)| {
        TIMES.iter().all(|&t| {
            let (h0, h1, h2) = (
                off.energy_t(q, p, t),
                one.energy_t(q, p, t),
                two.energy_t(q, p, t),
            );
            (h2 - 2.0 * h1 + h0).abs() <= 1e-12 * (1.0 + h0.abs().max(h1.abs()).max(h2.abs()))
        })
    })
}

/// The parameter that switches the drive off: the only one in which H is
/// affine and whose value 0 leaves H independent of t (for
/// `… − F*q*cos(W*t)` that is F, not W: W = 0 also removes t, but H is not
/// affine in W). An error names the candidates when there are none or
/// several, so the user can name it.
pub fn drive_amplitude_parameter(sys: &System) -> Result<String, String> {
    if !sys.depends_on_time() {
        return Err("H does not depend on t, so it has no drive".to_string());
    }
    const POINTS: [(f64, f64); 3] = [(0.3, 0.7), (-1.1, 0.4), (0.9, -1.3)];
    const TIMES: [f64; 3] = [0.37, 1.9, 5.3];
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * (1.0 + a.abs().max(b.abs()));
    let names = sys.formula().params();
    let mut found = Vec::new();
    for (k, name) in names.iter().enumerate() {
        let off = sys.with_param(k, 0.0);
        let autonomous = POINTS.iter().all(|&(q, p)| {
            let a = off.energy_t(q, p, 0.0);
            TIMES.iter().all(|&t| close(a, off.energy_t(q, p, t)))
        });
        if autonomous && is_affine_in(sys, k) {
            found.push(name.clone());
        }
    }
    match found.len() {
        1 => Ok(found.remove(0)),
        0 => Err(format!(
            "no parameter switches the drive off (H affine in it and free of t at 0); \
             parameters: {}",
            names.join(", ")
        )),
        _ => Err(format!(
            "several parameters could be the drive amplitude ({}); name one",
            found.join(", ")
        )),
    }
}

/// Points and trapezoid weights along one connection.
struct Orbit {
    pts: Vec<(f64, f64, f64, f64)>, // q, p, s, weight
}

impl Orbit {
    /// Every `k`-th point of the uniform grid (s = j·h, j ≡ 0 mod k, counted
    /// from the mid point the orbit was traced from) with weight k·h: the
    /// trapezoidal rule at step k·h.
    fn thinned(self, k: usize, h: f64, origin: f64) -> Orbit {
        if k <= 1 {
            return self;
        }
        let w = k as f64 * h;
        Orbit {
            pts: self
                .pts
                .into_iter()
                .filter(|pt| (((pt.2 + origin) / h).round() as i64).rem_euclid(k as i64) == 0)
                .map(|(q, p, s, _)| (q, p, s, w))
                .collect(),
        }
    }
}

/// The Melnikov function along every connection. `amplitude` names the
/// drive-amplitude parameter; `period` the drive period τ > 0; `damping` δ ≥ 0.
pub fn melnikov(
    sys: &System,
    amplitude: &str,
    damping: f64,
    period: f64,
    equilibria: &[Equilibrium],
    connections: &[Connection],
    cancel: &Cancel,
) -> Result<Vec<MelnikovConnection>, String> {
    let idx = sys
        .formula()
        .param_index(amplitude)
        .ok_or_else(|| format!("the formula has no parameter named '{amplitude}' (amplitude)"))?;
    if !(period.is_finite() && period > 0.0) {
        return Err(format!("the drive period must be positive, got {period}"));
    }
    if !(damping.is_finite() && damping >= 0.0) {
        return Err(format!("the damping must be ≥ 0, got {damping}"));
    }
    let f = sys.params()[idx];
    // H₀ must be autonomous (checked there)
    let sys0 = sys.undriven(idx)?;
    let sys1 = sys.with_param(idx, 1.0);
    let affine = is_affine_in(sys, idx).then(|| {
        let f = sys1.formula();
        (
            f.derivative_program(SLOT_Q, sys1.params()),
            f.derivative_program(SLOT_P, sys1.params()),
        )
    });
    let mut out = Vec::new();
    for c in connections {
        if cancel.is_cancelled() {
            break;
        }
        let Some((orbit, h, origin)) = trace(&sys0, c, equilibria)? else {
            continue;
        };
        // The orbit is traced at a step fine enough for its accuracy; the
        // quadrature needs far fewer points (see QUADRATURE_PER_LAMBDA).
        let lam = STEP_PER_LAMBDA / h;
        let hq = (QUADRATURE_PER_LAMBDA / lam).min(period / QUADRATURE_PER_PERIOD);
        let orbit = orbit.thinned((hq / h).floor().max(1.0) as usize, h, origin);
        let d: f64 = orbit
            .pts
            .iter()
            .map(|&(q, p, _, w)| w * sys0.dh_dp(q, p, 0.0).1.powi(2))
            .sum();
        // {H₀, H₁} at (x₀(s), s + t₀). When H is affine in the amplitude,
        // H₁'s gradient is that of H at amplitude 1 less that of H₀, so the
        // straight-line derivative programs serve, with H₀'s gradient (free
        // of t) taken once per point; otherwise the parameter jets give ∂/∂F.
        let fast = affine.as_ref().map(|(dq1, dp1)| {
            let g0: Vec<[f64; 2]> = orbit
                .pts
                .iter()
                .map(|&(q, p, _, _)| sys0.gradient(q, p))
                .collect();
            (dq1, dp1, g0)
        });
        // The points in blocks of LANES, each with its own t = s + t₀: one
        // instruction of the derivative programs over the whole block.
        let blocks: Vec<[Vec<f64>; 3]> = orbit
            .pts
            .chunks(LANES)
            .map(|c| {
                [
                    c.iter().map(|x| x.0).collect(),
                    c.iter().map(|x| x.1).collect(),
                    c.iter().map(|x| x.2).collect(),
                ]
            })
            .collect();
        let regs = std::cell::RefCell::new((
            LaneRegisters::default(),
            [0.0; LANES],
            [0.0; LANES],
            [0.0; LANES],
        ));
        let m = |t0: f64| -> f64 {
            match &fast {
                Some((dq1, dp1, g0)) => {
                    let mut guard = regs.borrow_mut();
                    let (regs, ts, fq, fp) = &mut *guard;
                    let mut sum = 0.0;
                    for (b, [q, p, s]) in blocks.iter().enumerate() {
                        let n = q.len();
                        for (t, s) in ts.iter_mut().zip(s) {
                            *t = s + t0;
                        }
                        dq1.eval_lanes_at(q, p, &ts[..n], &mut fq[..n], regs);
                        dp1.eval_lanes_at(q, p, &ts[..n], &mut fp[..n], regs);
                        let first = b * LANES;
                        for k in 0..n {
                            let g = g0[first + k];
                            let w = orbit.pts[first + k].3;
                            let h1q = fq[k] - g[0];
                            let h1p = fp[k] - g[1];
                            sum += w * (g[0] * h1p - g[1] * h1q);
                        }
                    }
                    sum
                }
                None => orbit
                    .pts
                    .iter()
                    .map(|&(q, p, s, w)| {
                        let j = sys0.frozen_at(s + t0).param_jet(q, p, idx);
                        w * (j.grad[0] * j.hess[1][2] - j.grad[1] * j.hess[0][2])
                    })
                    .sum(),
            }
        };
        let samples: Vec<[f64; 2]> = (0..SAMPLES)
            .map(|k| {
                let t = period * k as f64 / SAMPLES as f64;
                [t, m(t)]
            })
            .collect();
        // max |m|: golden section around the best sample
        let (kbest, _) = samples.iter().enumerate().fold((0, -1.0), |b, (k, s)| {
            if s[1].abs() > b.1 { (k, s[1].abs()) } else { b }
        });
        let dt = period / SAMPLES as f64;
        let g = |t: f64| -m(t).abs();
        let (mut a, mut b) = (samples[kbest][0] - dt, samples[kbest][0] + dt);
        let r = 0.5 * (5f64.sqrt() - 1.0);
        let (mut x1, mut x2) = (b - r * (b - a), a + r * (b - a));
        let (mut g1, mut g2) = (g(x1), g(x2));
        for _ in 0..REFINE_ITERATIONS {
            if g1 < g2 {
                b = x2;
                x2 = x1;
                g2 = g1;
                x1 = b - r * (b - a);
                g1 = g(x1);
            } else {
                a = x1;
                x1 = x2;
                g1 = g2;
                x2 = a + r * (b - a);
                g2 = g(x2);
            }
            // max|m| is flat at the maximum: a location error ε changes it
            // by about ω²ε²/2 relative, 1e-11 at ε = 1e-6 τ
            if (b - a).abs() < 1e-6 * period {
                break;
            }
        }
        let max_abs_m = (-g1).max(-g2).max(samples[kbest][1].abs());
        // zeros of M = F m − δ D
        let mm = |t: f64| f * m(t) - damping * d;
        let mut zeros = Vec::new();
        for k in 0..SAMPLES {
            let (a, b) = (samples[k][0], samples[k][0] + dt);
            let fa = f * samples[k][1] - damping * d;
            let fb = f * samples[(k + 1) % SAMPLES][1] - damping * d;
            if fa == 0.0 {
                zeros.push(a);
                continue;
            }
            if fa * fb >= 0.0 {
                continue;
            }
            zeros.push(illinois(&mm, a, b, fa, fb, 1e-13 * period));
        }
        let ratio = if max_abs_m > 0.0 {
            d / max_abs_m
        } else {
            f64::INFINITY
        };
        out.push(MelnikovConnection {
            kind: c.kind,
            from: c.from,
            to: c.to,
            energy: c.energy,
            damping_integral: d,
            samples,
            zeros,
            max_abs_m,
            threshold_amplitude: damping * ratio,
            threshold_ratio: ratio,
        });
    }
    Ok(out)
}

/// The zero of `f` in [a, b] where f(a) = fa and f(b) = fb have opposite
/// signs, by the Illinois variant of the false-position method (superlinear
/// and always bracketed; Dowell & Jarratt, BIT 11 (1971) 168–174), to `tol`.
fn illinois(f: &dyn Fn(f64) -> f64, a: f64, b: f64, fa: f64, fb: f64, tol: f64) -> f64 {
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    let mut side = 0i8;
    let mut last = f64::NAN;
    for _ in 0..REFINE_ITERATIONS {
        let c = (a * fb - b * fa) / (fb - fa);
        let c = if c.is_finite() && c > a.min(b) && c < a.max(b) {
            c
        } else {
            0.5 * (a + b)
        };
        let fc = f(c);
        if fc == 0.0 || (b - a).abs() < tol || (c - last).abs() < tol {
            return c;
        }
        last = c;
        if fc.signum() == fb.signum() {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
        if (b - a).abs() < tol {
            return 0.5 * (a + b);
        }
    }
    0.5 * (a + b)
}

/// The saddle's eigenvalue λ > 0 and its unstable and stable eigenvectors.
fn saddle_linear(sys0: &System, e: &Equilibrium) -> Option<(f64, [f64; 2], [f64; 2])> {
    saddle_directions(sys0.jacobian(e.q, e.p))
}

/// The connection's orbit on a uniform grid of times (step h), its clock
/// origin shifted to the connection's marked point; with the step and the
/// shift (the grid's points sit at s + shift = j·h).
fn trace(
    sys0: &System,
    c: &Connection,
    eq: &[Equilibrium],
) -> Result<Option<(Orbit, f64, f64)>, String> {
    let (Some(a), Some(b)) = (eq.get(c.from), eq.get(c.to)) else {
        return Ok(None);
    };
    let (Some(la), Some(lb)) = (saddle_linear(sys0, a), saddle_linear(sys0, b)) else {
        return Ok(None);
    };
    if c.path.len() < 3 {
        return Ok(None);
    }
    // mid point: the vertex farthest from both saddles, refined onto the level
    let dist = |v: &[f64; 2]| {
        (v[0] - a.q)
            .hypot(v[1] - a.p)
            .min((v[0] - b.q).hypot(v[1] - b.p))
    };
    let mid = c
        .path
        .iter()
        .fold(c.path[0], |m, v| if dist(v) > dist(&m) { *v } else { m });
    let scale = dist(&mid).max(1e-300);
    let (mut q, mut p) = (mid[0], mid[1]);
    for _ in 0..8 {
        let g = sys0.gradient(q, p);
        let n2 = g[0] * g[0] + g[1] * g[1];
        if n2 == 0.0 {
            break;
        }
        let r = sys0.energy(q, p) - c.energy;
        q -= r * g[0] / n2;
        p -= r * g[1] / n2;
    }
    let lam = la.0.max(lb.0);
    let h = STEP_PER_LAMBDA / lam;
    let mut integ = Integrator::new(sys0, Method::Auto).map_err(|e| e.to_string())?;
    let mut pts = vec![(q, p, 0.0, h)];
    // Forward in time the orbit approaches a saddle along its stable
    // direction, backward along its unstable one. Which saddle it approaches
    // depends on the arc's orientation, so both ends are watched.
    let ends = [(a, la), (b, lb)];
    for dir in [1.0, -1.0] {
        let mut s = State { q, p, t: 0.0 };
        let mut k = 0usize;
        loop {
            let st = integ
                .step(sys0, &s, dir * h)
                .map_err(|e| e.to_string())?
                .state;
            s = st;
            k += 1;
            let near = ends
                .iter()
                .map(|(e, lin)| (e, lin, (s.q - e.q).hypot(s.p - e.p)))
                .min_by(|x, y| x.2.total_cmp(&y.2));
            let Some((sad, lin, gap)) = near else {
                break;
            };
            if gap < STOP_REL * scale || k > MAX_STEPS {
                if k > MAX_STEPS {
                    return Err(format!(
                        "the connection from saddle {} did not reach a saddle within {MAX_STEPS} steps",
                        c.from + 1
                    ));
                }
                let (l, v) = if dir > 0.0 {
                    (lin.0, lin.2)
                } else {
                    (lin.0, lin.1)
                };
                // linearised tail along the eigenvector
                let (dq, dp) = (s.q - sad.q, s.p - sad.p);
                let amp = dq * v[0] + dp * v[1];
                let mut e = 1.0;
                let decay = (-l * h).exp();
                while e * amp.abs() > TAIL_REL * scale {
                    pts.push((sad.q + amp * e * v[0], sad.p + amp * e * v[1], s.t, h));
                    e *= decay;
                    s.t += dir * h;
                }
                break;
            }
            pts.push((s.q, s.p, s.t, h));
        }
    }
    // The clock's origin s = 0: for a loop (homoclinic) the turning point
    // where ∂H₀/∂p = 0 farthest from the saddle, for a heteroclinic
    // connection the point midway in q between its saddles; the origins the
    // closed forms use ((√2, 0) on the double well's loop, (0, 2) on the
    // pendulum's upper connection). Bracketed between two samples, then
    // Newton along the flow itself, so the zeros of M(t₀) sit on that clock.
    pts.sort_by(|x, y| x.2.total_cmp(&y.2));
    let homoclinic = c.kind == ConnectionKind::Homoclinic;
    let q_mid = 0.5 * (a.q + b.q);
    let f = |q: f64, p: f64| -> (f64, f64) {
        let j = sys0.jet(q, p);
        if homoclinic {
            (j.hp, j.hqp * j.hp - j.hpp * j.hq)
        } else {
            (q - q_mid, j.hp)
        }
    };
    let far = |i: usize| dist(&[pts[i].0, pts[i].1]);
    let bracket = (0..pts.len().saturating_sub(1))
        .filter(|&i| {
            let (f0, f1) = (f(pts[i].0, pts[i].1).0, f(pts[i + 1].0, pts[i + 1].1).0);
            f0 == 0.0 || f0.signum() != f1.signum()
        })
        .max_by(|&x, &y| far(x).total_cmp(&far(y)));
    let mut shift = 0.0;
    if let Some(k) = bracket {
        let mut st = State {
            q: pts[k].0,
            p: pts[k].1,
            t: pts[k].2,
        };
        for _ in 0..6 {
            let (v, dv) = f(st.q, st.p);
            if v == 0.0 || dv == 0.0 || !dv.is_finite() {
                break;
            }
            let ds = -v / dv;
            if !(ds.abs() <= 2.0 * h) {
                break;
            }
            st = integ.step(sys0, &st, ds).map_err(|e| e.to_string())?.state;
        }
        shift = st.t;
        for pt in &mut pts {
            pt.2 -= shift;
        }
    }
    Ok(Some((Orbit { pts }, h, shift)))
}
