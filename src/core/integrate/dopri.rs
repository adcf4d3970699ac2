//! An adaptive explicit Runge–Kutta pair with dense output, for any H.
//!
//! # Dormand–Prince 5(4)
//!
//! Seven stages (the last is the first of the next step), a 5th-order solution
//! and an embedded 4th-order one whose difference estimates the local error;
//! the step is accepted when that error is within the tolerance (relative to
//! the state's size, with an absolute floor of the same size) and the next
//! step is chosen by the usual h·(1/err)^{1/5} rule with a safety factor.
//! A continuous extension of order 4 gives the state anywhere inside the last
//! step without new evaluations (used to locate section crossings). Not
//! symplectic and not time-reversible: its energy error grows with time. It
//! serves as a reference and for event location.
//!
//! Reference: J. R. Dormand, P. J. Prince, "A family of embedded Runge–Kutta
//! formulae", J. Comput. Appl. Math. 6 (1980) 19–26; E. Hairer, S. P. Nørsett,
//! G. Wanner, *Solving Ordinary Differential Equations I*, 2nd ed., Springer
//! 1993, §II.4–II.6 (step control, dense output coefficients of DOPRI5).

use super::{Counters, State, Step, StepError};
use crate::core::system::System;

/// Default relative (and absolute) tolerance per step.
pub const DEFAULT_TOLERANCE: f64 = 1e-12;
/// Safety factor, bounds on the step ratio per step.
const SAFETY: f64 = 0.9;
const MIN_RATIO: f64 = 0.2;
const MAX_RATIO: f64 = 5.0;
/// Trial steps per call before giving up.
const MAX_REJECTIONS: u32 = 60;
/// A step below this fraction of |t| (or of 1 near t = 0) cannot advance the time.
const STEP_FLOOR: f64 = 1e-14;

const C: [f64; 7] = [0.0, 1.0 / 5.0, 3.0 / 10.0, 4.0 / 5.0, 8.0 / 9.0, 1.0, 1.0];
const A: [[f64; 6]; 7] = [
    [0.0; 6],
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [
        19372.0 / 6561.0,
        -25360.0 / 2187.0,
        64448.0 / 6561.0,
        -212.0 / 729.0,
        0.0,
        0.0,
    ],
    [
        9017.0 / 3168.0,
        -355.0 / 33.0,
        46732.0 / 5247.0,
        49.0 / 176.0,
        -5103.0 / 18656.0,
        0.0,
    ],
    [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ],
];
/// 5th-order weights (equal to the last row of A).
const B: [f64; 7] = [
    35.0 / 384.0,
    0.0,
    500.0 / 1113.0,
    125.0 / 192.0,
    -2187.0 / 6784.0,
    11.0 / 84.0,
    0.0,
];
/// B minus the embedded 4th-order weights.
const E: [f64; 7] = [
    71.0 / 57600.0,
    0.0,
    -71.0 / 16695.0,
    71.0 / 1920.0,
    -17253.0 / 339200.0,
    22.0 / 525.0,
    -1.0 / 40.0,
];
/// Dense output coefficients of DOPRI5.
const D: [f64; 7] = [
    -12715105075.0 / 11282082432.0,
    0.0,
    87487479700.0 / 32700410799.0,
    -10690763975.0 / 1880347072.0,
    701980252875.0 / 199316789632.0,
    -1453857185.0 / 822651844.0,
    69997945.0 / 29380423.0,
];

/// The Dormand–Prince pair with its last step kept for dense output.
#[derive(Clone, Debug)]
pub struct Dopri5 {
    tolerance: f64,
    /// Field at the end of the last accepted step (first stage of the next).
    fsal: Option<([f64; 3], [f64; 2])>,
    /// Continuous extension of the last step: rcont[k] for q and p.
    dense: Option<[[f64; 2]; 5]>,
    /// Linear damping rate δ of the field (q', p') = (H_p, −H_q − δ H_p).
    damping: f64,
}

impl Dopri5 {
    pub fn new(tolerance: f64) -> Dopri5 {
        let mut d = Dopri5 {
            tolerance: DEFAULT_TOLERANCE,
            fsal: None,
            dense: None,
            damping: 0.0,
        };
        d.set_tolerance(tolerance);
        d
    }

    /// The same pair on the damped field with rate `damping` (≥ 0, checked
    /// by the caller). The damped flow is not conformally symplectic here.
    pub fn with_damping(mut self, damping: f64) -> Dopri5 {
        self.damping = damping;
        self.fsal = None;
        self
    }

    /// Set the tolerance; values that are not finite and positive are ignored.
    pub fn set_tolerance(&mut self, tolerance: f64) {
        if tolerance.is_finite() && tolerance > 0.0 {
            self.tolerance = tolerance.max(f64::EPSILON);
        }
    }

    fn field(&self, sys: &System, q: f64, p: f64, t: f64, counters: &mut Counters) -> [f64; 2] {
        counters.field_evaluations += 1;
        sys.damped_field_t(q, p, t, self.damping)
    }

    /// One step of exactly `h`; returns the step and the scaled error estimate
    /// (≤ 1 means within tolerance).
    pub fn step(
        &mut self,
        sys: &System,
        y: &State,
        h: f64,
        counters: &mut Counters,
    ) -> Result<(Step, f64), StepError> {
        let mut k = [[0.0; 2]; 7];
        k[0] = match self.fsal {
            Some((at, f))
                if at[0].to_bits() == y.q.to_bits()
                    && at[1].to_bits() == y.p.to_bits()
                    && at[2].to_bits() == y.t.to_bits() =>
            {
                f
            }
            _ => self.field(sys, y.q, y.p, y.t, counters),
        };
        let mut a_dot = [0.0; 7];
        a_dot[0] = y.p * k[0][0];
        let mut stage = [[0.0; 2]; 7];
        stage[0] = [y.q, y.p];
        for i in 1..7 {
            let mut q = y.q;
            let mut p = y.p;
            for j in 0..i {
                q += h * A[i][j] * k[j][0];
                p += h * A[i][j] * k[j][1];
            }
            stage[i] = [q, p];
            k[i] = self.field(sys, q, p, y.t + C[i] * h, counters);
            a_dot[i] = p * k[i][0];
        }
        if !k.iter().flatten().all(|v| v.is_finite()) {
            self.fsal = None;
            return Err(StepError::NonFinite { t: y.t });
        }
        let end = stage[6];
        let mut p_dq = 0.0;
        let mut err = [0.0; 2];
        for i in 0..7 {
            p_dq += h * B[i] * a_dot[i];
            err[0] += h * E[i] * k[i][0];
            err[1] += h * E[i] * k[i][1];
        }
        let mut norm: f64 = 0.0;
        for r in 0..2 {
            let sc = self.tolerance * (1.0 + stage[0][r].abs().max(end[r].abs()));
            norm = norm.max((err[r] / sc).abs());
        }
        // Continuous extension of this step.
        let mut rc = [[0.0; 2]; 5];
        for r in 0..2 {
            let ydiff = end[r] - stage[0][r];
            let bspl = h * k[0][r] - ydiff;
            let mut d = 0.0;
            for i in 0..7 {
                d += D[i] * k[i][r];
            }
            rc[0][r] = stage[0][r];
            rc[1][r] = ydiff;
            rc[2][r] = bspl;
            rc[3][r] = ydiff - h * k[6][r] - bspl;
            rc[4][r] = h * d;
        }
        self.dense = Some(rc);
        self.fsal = Some(([end[0], end[1], y.t + h], k[6]));
        Ok((
            Step {
                state: State {
                    q: end[0],
                    p: end[1],
                    t: y.t + h,
                },
                p_dq,
            },
            norm,
        ))
    }

    /// A controlled step: tries `h`, shrinks on rejection. Returns the step,
    /// the step size taken and the proposed next step.
    pub fn adaptive_step(
        &mut self,
        sys: &System,
        y: &State,
        h: f64,
        counters: &mut Counters,
    ) -> Result<(Step, f64, f64), StepError> {
        let mut h = h;
        for _ in 0..MAX_REJECTIONS {
            let floor = STEP_FLOOR * y.t.abs().max(1.0);
            if !(h.abs() > floor) {
                return Err(StepError::StepTooSmall { t: y.t, step: h });
            }
            let (step, err) = self.step(sys, y, h, counters)?;
            let ratio = if err > 0.0 {
                (SAFETY * err.powf(-0.2)).clamp(MIN_RATIO, MAX_RATIO)
            } else {
                MAX_RATIO
            };
            if err <= 1.0 && step.state.is_finite() {
                return Ok((step, h, h * ratio));
            }
            counters.rejected_steps += 1;
            h *= ratio.min(1.0 - f64::EPSILON).max(MIN_RATIO);
        }
        Err(StepError::StepTooSmall { t: y.t, step: h })
    }

    /// (q, p) at fraction `theta` of the last step.
    pub fn dense(&self, theta: f64) -> Option<[f64; 2]> {
        let rc = self.dense.as_ref()?;
        let t1 = 1.0 - theta;
        let mut out = [0.0; 2];
        for r in 0..2 {
            out[r] = rc[0][r]
                + theta * (rc[1][r] + t1 * (rc[2][r] + theta * (rc[3][r] + t1 * rc[4][r])));
        }
        Some(out)
    }
}
