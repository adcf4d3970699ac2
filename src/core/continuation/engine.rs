//! The pseudo-arclength engine: predictor–corrector steps along a curve in
//! scaled coordinates y ∈ Rᴺ given by N − 1 equations. A curve supplies its
//! residual and Jacobian ([`Curve`]); the engine gives the unit tangent
//! (the null vector of the Jacobian, oriented), Newton's corrector on the
//! plane normal to the tangent, step-length control, the shared step budget
//! and diagnostics of a walk ([`Walk`]), where a step leaves a box, and a
//! bracketing root search (Illinois) for events along the curve.
//!
//! Reference: E. L. Allgower and K. Georg, *Introduction to Numerical
//! Continuation Methods* (SIAM 2003), ch. 2.

use super::StepConfig;
use crate::core::{Cancel, Diagnostic};
use nalgebra::{DMatrix, DVector, SMatrix, SVector};

/// Corrector convergence: Newton stops when a step is this small, in scaled
/// units (the window and the sweep range are of size 1).
pub const CORRECTOR_TOL: f64 = 1e-11;
/// Newton iterations for points found while locating events.
pub const LOCATE_ITERATIONS: usize = 80;

pub type Vector<const N: usize> = SVector<f64, N>;
pub type Matrix<const N: usize> = SMatrix<f64, N, N>;

/// A curve in scaled coordinates y ∈ Rᴺ given by N − 1 equations.
pub trait Curve<const N: usize> {
    /// The residual in the first N − 1 entries and the Jacobian in the first
    /// N − 1 rows (the last entry and row are free for the bordering row);
    /// None where H is not finite.
    fn eval(&self, y: &Vector<N>) -> Option<(Vector<N>, Matrix<N>)>;
}

/// Solve a x = b by nalgebra's LU decomposition with partial pivoting; also
/// returns det a. None when a is singular or the result is not finite.
pub fn solve<const N: usize>(a: Matrix<N>, b: Vector<N>) -> Option<(Vector<N>, f64)> {
    if !a.iter().all(|v| v.is_finite()) {
        return None;
    }
    // nalgebra's LU is generic over dimensions known to its type-level
    // numbers; the engine's const N goes through the dynamic form
    let lu = DMatrix::from_column_slice(N, N, a.as_slice()).lu();
    let det = lu.determinant();
    if det == 0.0 || !det.is_finite() {
        return None;
    }
    let x = lu.solve(&DVector::from_column_slice(b.as_slice()))?;
    let x = Vector::<N>::from_column_slice(x.as_slice());
    x.iter().all(|v| v.is_finite()).then_some((x, det))
}

/// det a by LU decomposition (0 when singular).
pub fn determinant<const N: usize>(a: Matrix<N>) -> f64 {
    if !a.iter().all(|v| v.is_finite()) {
        return 0.0;
    }
    let det = DMatrix::from_column_slice(N, N, a.as_slice())
        .lu()
        .determinant();
    if det.is_finite() { det } else { 0.0 }
}

/// The unit tangent at `y` oriented along `t_ref`, and det [J; tᵀ].
pub fn tangent<C: Curve<N>, const N: usize>(
    curve: &C,
    y: &Vector<N>,
    t_ref: &Vector<N>,
) -> Option<(Vector<N>, f64)> {
    let (_, mut a) = curve.eval(y)?;
    a.set_row(N - 1, &t_ref.transpose());
    let mut rhs = Vector::<N>::zeros();
    rhs[N - 1] = 1.0;
    let (z, _) = solve(a, rhs)?;
    let norm = z.norm();
    if !norm.is_finite() || norm == 0.0 {
        return None;
    }
    let t = z / norm;
    a.set_row(N - 1, &t.transpose());
    let det = determinant(a);
    det.is_finite().then_some((t, det))
}

/// Newton's method for curve(y) = 0 on the hyperplane normal·(y − y_pred) = 0.
/// Returns the point and the number of iterations.
pub fn correct<C: Curve<N>, const N: usize>(
    curve: &C,
    y_pred: &Vector<N>,
    normal: &Vector<N>,
    max_iter: usize,
) -> Option<(Vector<N>, usize)> {
    let mut y = *y_pred;
    for it in 1..=max_iter {
        let (mut f, mut a) = curve.eval(&y)?;
        f[N - 1] = normal.dot(&(y - y_pred));
        let size = a.rows(0, N - 1).amax();
        let off = f.rows(0, N - 1).amax();
        a.set_row(N - 1, &normal.transpose());
        let Some((dy, _)) = solve(a, -f) else {
            // Exactly at a branch point the matrix is singular; a point whose
            // residual is negligible there is accepted as it is.
            let on_curve = off <= 1e-3 * CORRECTOR_TOL * size && f[N - 1].abs() <= CORRECTOR_TOL;
            return on_curve.then_some((y, it));
        };
        y += dy;
        if !y.iter().all(|v| v.is_finite()) {
            return None;
        }
        if dy.amax() <= CORRECTOR_TOL {
            return Some((y, it));
        }
    }
    None
}

/// One accepted continuation step.
pub struct Step<const N: usize> {
    pub y: Vector<N>,
    pub t: Vector<N>,
    /// det [J; tᵀ] at the new point.
    pub det: f64,
    /// The step length used.
    pub h: f64,
    pub iterations: usize,
}

/// Take one step from (y, t) with length at most `h`, halving on failure
/// (corrector fails, the tangent turns by more than `max_turn`, or the point
/// lands too far). None when the step falls below the minimum.
pub fn advance<C: Curve<N>, const N: usize>(
    curve: &C,
    y: &Vector<N>,
    t: &Vector<N>,
    mut h: f64,
    cfg: &StepConfig,
) -> Option<Step<N>> {
    while h >= cfg.min {
        let pred = y + t * h;
        if let Some((y_new, iterations)) = correct(curve, &pred, t, cfg.max_corrector) {
            let dist = (y_new - y).norm();
            if dist <= 2.0 * h
                && let Some((t_new, det)) = tangent(curve, &y_new, t)
                && t_new.dot(t).clamp(-1.0, 1.0).acos() <= cfg.max_turn
            {
                return Some(Step {
                    y: y_new,
                    t: t_new,
                    det,
                    h,
                    iterations,
                });
            }
        }
        h *= 0.5;
    }
    None
}

/// What every continuation walk shares: the cancel flag, the step budget
/// over all its curves (warned about once when spent) and the diagnostics.
pub struct Walk<'a> {
    cancel: &'a Cancel,
    max_steps: usize,
    pub steps: usize,
    pub cancelled: bool,
    pub out_of_steps: bool,
    pub diagnostics: Vec<Diagnostic>,
}

impl<'a> Walk<'a> {
    pub fn new(cancel: &'a Cancel, max_steps: usize) -> Self {
        Walk {
            cancel,
            max_steps,
            steps: 0,
            cancelled: false,
            out_of_steps: false,
            diagnostics: Vec::new(),
        }
    }

    /// True once cancelled or out of steps.
    pub fn stopped(&self) -> bool {
        self.cancelled || self.out_of_steps
    }

    /// One counted [`advance`] from (y, t), or None when the curve must stop
    /// here: cancelled, the budget spent (warned once with `spent(steps)`),
    /// or no step possible (warned with `stuck()`).
    #[allow(clippy::too_many_arguments)]
    pub fn step<C: Curve<N>, const N: usize>(
        &mut self,
        curve: &C,
        y: &Vector<N>,
        t: &Vector<N>,
        h: f64,
        cfg: &StepConfig,
        spent: impl FnOnce(usize) -> String,
        stuck: impl FnOnce() -> String,
    ) -> Option<Step<N>> {
        if self.cancel.is_cancelled() {
            self.cancelled = true;
            return None;
        }
        if self.steps >= self.max_steps {
            if !self.out_of_steps {
                self.diagnostics
                    .push(Diagnostic::warning(spent(self.steps)));
            }
            self.out_of_steps = true;
            return None;
        }
        let Some(st) = advance(curve, y, t, h, cfg) else {
            self.diagnostics.push(Diagnostic::warning(stuck()));
            return None;
        };
        self.steps += 1;
        Some(st)
    }
}

/// Where the step from `last` to `next` (outside `bounds`) leaves the box:
/// the curve's point on the bound it crosses first, and that coordinate.
pub fn exit_point<C: Curve<N>, const N: usize>(
    curve: &C,
    last: &Vector<N>,
    next: &Vector<N>,
    bounds: &[(f64, f64); N],
    cfg: &StepConfig,
) -> Option<(Vector<N>, usize)> {
    let (j, bound) = first_exit(last, next, bounds)?;
    let y = point_at_coordinate(curve, last, next, j, bound, cfg)?;
    inside(&y, bounds, 1e-12).then_some((y, j))
}

/// The next step length after an accepted step.
pub fn next_step_length(step_h: f64, iterations: usize, cfg: &StepConfig) -> f64 {
    if iterations <= 3 {
        (step_h * 1.6).min(cfg.max)
    } else {
        step_h
    }
}

/// The point of the curve near y0 + σ(y1 − y0), corrected on the plane
/// orthogonal to the chord.
pub fn point_between<C: Curve<N>, const N: usize>(
    curve: &C,
    y0: &Vector<N>,
    y1: &Vector<N>,
    sigma: f64,
) -> Option<Vector<N>> {
    let chord = y1 - y0;
    let len = chord.norm();
    if len == 0.0 {
        return Some(*y0);
    }
    let pred = y0 + chord * sigma;
    // Near a branch point Newton converges only linearly: allow more iterations.
    correct(curve, &pred, &(chord / len), LOCATE_ITERATIONS).map(|(y, _)| y)
}

/// A root of g in [a, b] where g(a), g(b) differ in sign (Illinois variant of
/// regula falsi). Stops when the bracket is shorter than `tol`.
pub fn illinois(
    mut g: impl FnMut(f64) -> Option<f64>,
    mut a: f64,
    mut ga: f64,
    mut b: f64,
    mut gb: f64,
    tol: f64,
) -> Option<f64> {
    if ga == 0.0 {
        return Some(a);
    }
    if gb == 0.0 {
        return Some(b);
    }
    if ga.signum() == gb.signum() {
        return None;
    }
    let mut side = 0i32;
    for _ in 0..100 {
        let c = (a * gb - b * ga) / (gb - ga);
        let c = if c.is_finite() && c > a.min(b) && c < a.max(b) {
            c
        } else {
            0.5 * (a + b)
        };
        let gc = g(c)?;
        if gc == 0.0 {
            return Some(c);
        }
        if gc.signum() == gb.signum() {
            b = c;
            gb = gc;
            if side == -1 {
                ga *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            ga = gc;
            if side == 1 {
                gb *= 0.5;
            }
            side = 1;
        }
        if (b - a).abs() <= tol {
            return Some(0.5 * (a + b));
        }
    }
    Some(0.5 * (a + b))
}

/// Where the chord y0 → y1 first leaves the box `bounds` (per coordinate
/// [lo, hi]): the coordinate and the bound it crosses. None if y1 is inside.
pub fn first_exit<const N: usize>(
    y0: &Vector<N>,
    y1: &Vector<N>,
    bounds: &[(f64, f64); N],
) -> Option<(usize, f64)> {
    let mut best: Option<(f64, usize, f64)> = None;
    for (j, &(lo, hi)) in bounds.iter().enumerate() {
        let d = y1[j] - y0[j];
        for bound in [lo, hi] {
            let outside = if bound == lo { y1[j] < lo } else { y1[j] > hi };
            if outside && d != 0.0 {
                let s = ((bound - y0[j]) / d).clamp(0.0, 1.0);
                if best.is_none_or(|(bs, _, _)| s < bs) {
                    best = Some((s, j, bound));
                }
            }
        }
    }
    best.map(|(_, j, b)| (j, b))
}

/// The point of the curve where coordinate j equals `value`, near the chord y0 → y1.
pub fn point_at_coordinate<C: Curve<N>, const N: usize>(
    curve: &C,
    y0: &Vector<N>,
    y1: &Vector<N>,
    j: usize,
    value: f64,
    cfg: &StepConfig,
) -> Option<Vector<N>> {
    let d = y1[j] - y0[j];
    let s = if d != 0.0 {
        ((value - y0[j]) / d).clamp(0.0, 1.0)
    } else {
        1.0
    };
    let mut pred = y0 + (y1 - y0) * s;
    pred[j] = value;
    let mut normal = Vector::<N>::zeros();
    normal[j] = 1.0;
    correct(curve, &pred, &normal, cfg.max_corrector * 2).map(|(y, _)| y)
}

pub fn inside<const N: usize>(y: &Vector<N>, bounds: &[(f64, f64); N], slack: f64) -> bool {
    y.iter()
        .zip(bounds)
        .all(|(v, &(lo, hi))| *v >= lo - slack && *v <= hi + slack)
}

/// Distance from `y` to the polyline `points`.
pub fn distance_to_polyline<const N: usize>(y: &Vector<N>, points: &[Vector<N>]) -> f64 {
    let mut best = f64::INFINITY;
    if points.len() == 1 {
        return (y - points[0]).norm();
    }
    for w in points.windows(2) {
        let d = w[1] - w[0];
        let len2 = d.norm_squared();
        let s = if len2 > 0.0 {
            ((y - w[0]).dot(&d) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        best = best.min((y - (w[0] + d * s)).norm());
    }
    best
}
