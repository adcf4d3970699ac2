//! Gauss–Legendre collocation (implicit Runge–Kutta) for any H(q, p, t),
//! with an optional linear damping rate δ: the field is
//! (q', p') = (H_p, −H_q − δ H_p), each stage evaluated at its own time
//! tₙ + cᵢh (so the order 2s holds for H in t too), and Newton uses that
//! field's Jacobian. With δ > 0 the method is not conformally symplectic
//! (the area contracts by e^(−δh/m) only up to the method's error); the
//! splittings are, for T quadratic in p.
//!
//! # Gauss–Legendre collocation with s = 1, 2, 3 stages
//!
//! The stages Yᵢ = yₙ + h Σⱼ aᵢⱼ f(Yⱼ) are the values at the Gauss nodes cᵢ of
//! the polynomial of degree s that satisfies the differential equation there;
//! yₙ₊₁ = yₙ + h Σ bᵢ f(Yᵢ). Order 2s (s = 1 is the implicit midpoint rule,
//! order 2; s = 2 order 4; s = 3 order 6), symplectic and time-reversible for
//! every s; quadratic invariants are kept exactly.
//!
//! The stage equations are solved by simplified Newton with the exact Jacobian
//! of the field at yₙ (from the formula's second-order jet), starting from the
//! previous step's collocation polynomial extrapolated forward. Iteration stops
//! when the increment is below [`NEWTON_RELATIVE_TOLERANCE`] of the state's
//! size (or stagnates at rounding level); after [`NEWTON_MAX_ITERATIONS`] or on
//! divergence the step fails with `StepError::SolverFailed`.
//!
//! Reference: J. C. Butcher, "Implicit Runge–Kutta processes", Math. Comp. 18
//! (1964) 50–64 (the tableaux); E. Hairer, C. Lubich, G. Wanner, *Geometric
//! Numerical Integration*, 2nd ed., Springer 2006, §II.1.3, Theorem VI.4.2,
//! §VIII.6 (simplified Newton and starting values).

use super::{Counters, State, Step, StepError};
use crate::core::system::System;
use nalgebra::{SMatrix, SVector};

/// Newton stops when max |ΔZ| ≤ this × (|q| + |p| + max |Z|).
pub const NEWTON_RELATIVE_TOLERANCE: f64 = 1e-15;
/// An increment that stops shrinking is accepted when it is already below this
/// (relative, as above): the iteration has reached rounding level.
pub const NEWTON_ROUNDOFF_FLOOR: f64 = 1e-12;
/// Iteration cap per step.
pub const NEWTON_MAX_ITERATIONS: u32 = 60;

const MAX_STAGES: usize = 3;
type Mat = SMatrix<f64, 6, 6>;
type Vec6 = SVector<f64, 6>;

/// A Gauss–Legendre method with its tableau and starting-value memory.
#[derive(Clone, Debug)]
pub struct Collocation {
    s: usize,
    a: [[f64; MAX_STAGES]; MAX_STAGES],
    b: [f64; MAX_STAGES],
    c: [f64; MAX_STAGES],
    /// A⁻¹ (Gauss tableaux are invertible).
    a_inv: [[f64; MAX_STAGES]; MAX_STAGES],
    /// The last step: its start, size, stage values and end, for starting values.
    last: Option<LastStep>,
    /// Linear damping rate δ of the field (q', p') = (H_p, −H_q − δ H_p).
    damping: f64,
}

#[derive(Clone, Debug)]
struct LastStep {
    start: [f64; 2],
    h: f64,
    stages: [[f64; 2]; MAX_STAGES],
    end: State,
    params: Vec<f64>,
}

impl Collocation {
    /// The method with `stages` ∈ {1, 2, 3} (other values get 3).
    pub fn new(stages: usize) -> Collocation {
        let mut a = [[0.0; MAX_STAGES]; MAX_STAGES];
        let mut b = [0.0; MAX_STAGES];
        let mut c = [0.0; MAX_STAGES];
        let s = match stages {
            1 => {
                a[0][0] = 0.5;
                b[0] = 1.0;
                c[0] = 0.5;
                1
            }
            2 => {
                let r = 3f64.sqrt() / 6.0;
                a[0] = [0.25, 0.25 - r, 0.0];
                a[1] = [0.25 + r, 0.25, 0.0];
                b[..2].copy_from_slice(&[0.5, 0.5]);
                c[..2].copy_from_slice(&[0.5 - r, 0.5 + r]);
                2
            }
            _ => {
                let r = 15f64.sqrt();
                a[0] = [5.0 / 36.0, 2.0 / 9.0 - r / 15.0, 5.0 / 36.0 - r / 30.0];
                a[1] = [5.0 / 36.0 + r / 24.0, 2.0 / 9.0, 5.0 / 36.0 - r / 24.0];
                a[2] = [5.0 / 36.0 + r / 30.0, 2.0 / 9.0 + r / 15.0, 5.0 / 36.0];
                b = [5.0 / 18.0, 4.0 / 9.0, 5.0 / 18.0];
                c = [0.5 - r / 10.0, 0.5, 0.5 + r / 10.0];
                3
            }
        };
        let mut padded = nalgebra::Matrix3::<f64>::identity();
        for i in 0..s {
            for j in 0..s {
                padded[(i, j)] = a[i][j];
            }
        }
        let inverse = padded
            .try_inverse()
            .unwrap_or_else(nalgebra::Matrix3::identity);
        let mut a_inv = [[0.0; MAX_STAGES]; MAX_STAGES];
        for (i, row) in a_inv.iter_mut().enumerate() {
            for (j, v) in row.iter_mut().enumerate() {
                *v = inverse[(i, j)];
            }
        }
        Collocation {
            s,
            a,
            b,
            c,
            a_inv,
            last: None,
            damping: 0.0,
        }
    }

    /// The same method on the damped field with rate `damping` (≥ 0, checked
    /// by the caller): the stages solve Yᵢ' = (H_p, −H_q − δ H_p) at the
    /// stage times, with the Jacobian of that field in Newton.
    pub fn with_damping(mut self, damping: f64) -> Collocation {
        self.damping = damping;
        self.last = None;
        self
    }

    pub fn stages(&self) -> usize {
        self.s
    }

    /// Starting values Zᵢ from the previous collocation polynomial when this
    /// step continues the previous one; zero otherwise.
    fn starting_values(&self, sys: &System, y: &State, h: f64) -> [[f64; 2]; MAX_STAGES] {
        let mut z = [[0.0; 2]; MAX_STAGES];
        let Some(l) = &self.last else { return z };
        let continues = l.end.q.to_bits() == y.q.to_bits()
            && l.end.p.to_bits() == y.p.to_bits()
            && l.params == sys.params()
            && l.h != 0.0
            && (h / l.h) > 0.0
            && (h / l.h) <= 2.0;
        if !continues {
            return z;
        }
        let s = self.s;
        // Nodes of the previous polynomial: τ = 0 (its start) and τ = cⱼ (its stages).
        let mut nodes = [0.0; MAX_STAGES + 1];
        let mut values = [[0.0; 2]; MAX_STAGES + 1];
        nodes[0] = 0.0;
        values[0] = l.start;
        for j in 0..s {
            nodes[j + 1] = self.c[j];
            values[j + 1] = l.stages[j];
        }
        let ratio = h / l.h;
        for (i, zi) in z.iter_mut().enumerate().take(s) {
            let x = 1.0 + self.c[i] * ratio;
            let mut u = [0.0; 2];
            for k in 0..=s {
                let mut w = 1.0;
                for m in 0..=s {
                    if m != k {
                        w *= (x - nodes[m]) / (nodes[k] - nodes[m]);
                    }
                }
                u[0] += w * values[k][0];
                u[1] += w * values[k][1];
            }
            *zi = [u[0] - y.q, u[1] - y.p];
        }
        if z.iter().flatten().all(|v| v.is_finite()) {
            z
        } else {
            [[0.0; 2]; MAX_STAGES]
        }
    }

    /// One step of size `h` from `y`.
    pub fn step(
        &mut self,
        sys: &System,
        y: &State,
        h: f64,
        counters: &mut Counters,
    ) -> Result<Step, StepError> {
        let s = self.s;
        let jet = sys.jet_t(y.q, y.p, y.t);
        counters.hessian_evaluations += 1;
        if !jet.is_finite() {
            self.last = None;
            return Err(StepError::NonFinite { t: y.t });
        }
        let jac = jet.damped_jacobian(self.damping);
        // M = I − h (A ⊗ J), padded with the identity to 6 × 6.
        let mut m = Mat::identity();
        for i in 0..s {
            for j in 0..s {
                for r in 0..2 {
                    for c in 0..2 {
                        m[(2 * i + r, 2 * j + c)] -= h * self.a[i][j] * jac[r][c];
                    }
                }
            }
        }
        let lu = m.lu();
        let mut z = self.starting_values(sys, y, h);
        let mut f = [[0.0; 2]; MAX_STAGES];
        let mut previous = f64::INFINITY;
        let mut iterations = 0;
        loop {
            iterations += 1;
            counters.newton_iterations += 1;
            for i in 0..s {
                f[i] = sys.damped_field_t(
                    y.q + z[i][0],
                    y.p + z[i][1],
                    y.t + self.c[i] * h,
                    self.damping,
                );
                counters.field_evaluations += 1;
                if !(f[i][0].is_finite() && f[i][1].is_finite()) {
                    self.last = None;
                    return Err(StepError::NonFinite { t: y.t });
                }
            }
            let mut rhs = Vec6::zeros();
            for i in 0..s {
                for r in 0..2 {
                    let mut acc = 0.0;
                    for j in 0..s {
                        acc += self.a[i][j] * f[j][r];
                    }
                    rhs[2 * i + r] = h * acc - z[i][r];
                }
            }
            let Some(dz) = lu.solve(&rhs) else {
                self.last = None;
                return Err(StepError::SolverFailed {
                    t: y.t,
                    iterations,
                    increment: f64::NAN,
                });
            };
            let mut increment: f64 = 0.0;
            let mut zmax: f64 = 0.0;
            for i in 0..s {
                for r in 0..2 {
                    z[i][r] += dz[2 * i + r];
                    increment = increment.max(dz[2 * i + r].abs());
                    zmax = zmax.max(z[i][r].abs());
                }
            }
            let scale = y.q.abs() + y.p.abs() + zmax + f64::MIN_POSITIVE;
            let relative = increment / scale;
            if !relative.is_finite() {
                self.last = None;
                return Err(StepError::SolverFailed {
                    t: y.t,
                    iterations,
                    increment,
                });
            }
            // Iterate to rounding level: an early stop leaves a bias that adds
            // up over long runs (Hairer, Lubich & Wanner, §VIII.6).
            if relative <= NEWTON_RELATIVE_TOLERANCE {
                break;
            }
            if relative >= previous {
                if relative <= NEWTON_ROUNDOFF_FLOOR {
                    break;
                }
                self.last = None;
                return Err(StepError::SolverFailed {
                    t: y.t,
                    iterations,
                    increment,
                });
            }
            if iterations >= NEWTON_MAX_ITERATIONS {
                self.last = None;
                return Err(StepError::SolverFailed {
                    t: y.t,
                    iterations,
                    increment,
                });
            }
            previous = relative;
        }
        // Stage slopes consistent with the final Z: h Kᵢ = Σⱼ (A⁻¹)ᵢⱼ Zⱼ; then
        // yₙ₊₁ = yₙ + h Σ bᵢ Kᵢ and ∫ p dq = h Σ bᵢ Pᵢ K_q,ᵢ.
        let (mut dq, mut dp, mut p_dq) = (0.0, 0.0, 0.0);
        for i in 0..s {
            let (mut kq, mut kp) = (0.0, 0.0);
            for j in 0..s {
                kq += self.a_inv[i][j] * z[j][0];
                kp += self.a_inv[i][j] * z[j][1];
            }
            dq += self.b[i] * kq;
            dp += self.b[i] * kp;
            p_dq += self.b[i] * (y.p + z[i][1]) * kq;
        }
        let (dq, dp, p_dq) = (dq / h, dp / h, p_dq / h);
        let end = State {
            q: y.q + h * dq,
            p: y.p + h * dp,
            t: y.t + h,
        };
        let mut stages = [[0.0; 2]; MAX_STAGES];
        for i in 0..s {
            stages[i] = [y.q + z[i][0], y.p + z[i][1]];
        }
        let params = match self.last.take() {
            Some(mut l) if l.params == sys.params() => std::mem::take(&mut l.params),
            _ => sys.params().to_vec(),
        };
        self.last = Some(LastStep {
            start: [y.q, y.p],
            h,
            stages,
            end,
            params,
        });
        Ok(Step {
            state: end,
            p_dq: h * p_dq,
        })
    }
}
