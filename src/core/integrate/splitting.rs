//! Explicit symmetric compositions of the Störmer–Verlet method for separable
//! H = T(p) + V(q). A kick p ← p − τ ∂H/∂q(q) and a drift q ← q + τ ∂H/∂p(p)
//! are each the exact flow of one part of H, so every composition here is
//! symplectic and, being symmetric, time-reversible. Kicks use one dual-number
//! pass for ∂H/∂q, drifts one for ∂H/∂p.
//!
//! ∫ p dq along a step is exact for the composed map: kicks do not move q and
//! a drift moves q at constant p, so each drift adds p·Δq.

use super::{Counters, Method, State, Step, StepError};
use crate::core::system::System;
use std::sync::Arc;

/// # Störmer–Verlet (drift–kick–drift)
///
/// q½ = q + (h/2) T'(p), p₁ = p − h V'(q½), q₁ = q½ + (h/2) T'(p₁).
/// Order 2, symplectic, time-reversible; one force per step. The drift at the
/// end of a step and the one at the start of the next use the same p, so in a
/// run of steps each costs one force and one velocity. (This form has a smaller
/// energy error than kick–drift–kick on oscillators at the same cost.)
///
/// Reference: E. Hairer, C. Lubich, G. Wanner, *Geometric Numerical
/// Integration*, 2nd ed., Springer 2006, §I.1.4 and Theorem VI.3.4.
pub const VERLET: [f64; 1] = [1.0];

/// # Yoshida's 4th-order composition
///
/// Three Störmer–Verlet steps of sizes γ₁h, γ₀h, γ₁h with
/// γ₁ = 1/(2 − 2^{1/3}), γ₀ = −2^{1/3}/(2 − 2^{1/3}). Order 4, symplectic,
/// time-reversible; three new forces per step.
///
/// Reference: H. Yoshida, "Construction of higher order symplectic
/// integrators", Phys. Lett. A 150 (1990) 262–268, eq. (4.4)–(4.5).
pub fn yoshida4() -> [f64; 3] {
    let c = 2f64.powf(1.0 / 3.0);
    let g1 = 1.0 / (2.0 - c);
    [g1, -c * g1, g1]
}

/// # Yoshida's 6th-order composition, solution A
///
/// Seven Störmer–Verlet steps w₃ w₂ w₁ w₀ w₁ w₂ w₃ with
/// w₁ = −1.17767998417887, w₂ = 0.235573213359357, w₃ = 0.784513610477560,
/// w₀ = 1 − 2(w₁ + w₂ + w₃). Order 6, symplectic, time-reversible; seven new
/// forces per step.
///
/// Reference: H. Yoshida, Phys. Lett. A 150 (1990) 262–268, Table 1, solution A.
pub fn yoshida6() -> [f64; 7] {
    let (w1, w2, w3) = (
        -1.177_679_984_178_87,
        0.235_573_213_359_357,
        0.784_513_610_477_560,
    );
    let w0 = 1.0 - 2.0 * (w1 + w2 + w3);
    [w3, w2, w1, w0, w1, w2, w3]
}

/// A symmetric composition of Störmer–Verlet with fixed weights.
#[derive(Clone, Debug)]
pub struct Composition {
    weights: Vec<f64>,
    /// ∂H/∂p at the end of the last step, reused by the next step's first drift.
    last_velocity: Option<Cached>,
}

#[derive(Clone, Debug)]
struct Cached {
    formula: Arc<crate::core::formula::Formula>,
    params: Vec<f64>,
    p: f64,
    hp: f64,
}

impl Composition {
    /// The composition for `method` (`Verlet`, `Yoshida4` or `Yoshida6`; any
    /// other method gets Yoshida-4).
    pub fn new(method: Method) -> Composition {
        let weights = match method {
            Method::Verlet => VERLET.to_vec(),
            Method::Yoshida6 => yoshida6().to_vec(),
            _ => yoshida4().to_vec(),
        };
        Composition {
            weights,
            last_velocity: None,
        }
    }

    fn velocity(sys: &System, q: f64, p: f64, t: f64, counters: &mut Counters) -> f64 {
        counters.field_evaluations += 1;
        sys.dh_dp(q, p, t).1
    }

    fn cached_velocity(&self, sys: &System, p: f64) -> Option<f64> {
        let c = self.last_velocity.as_ref()?;
        let same = Arc::ptr_eq(&c.formula, sys.formula_arc())
            && c.params == sys.params()
            && c.p.to_bits() == p.to_bits();
        same.then_some(c.hp)
    }

    /// One step of size `h` from `s`.
    pub fn step(
        &mut self,
        sys: &System,
        s: &State,
        h: f64,
        counters: &mut Counters,
    ) -> Result<Step, StepError> {
        let (mut q, mut p, t) = (s.q, s.p, s.t);
        let mut velocity = match self.cached_velocity(sys, p) {
            Some(v) => v,
            None => Self::velocity(sys, q, p, t, counters),
        };
        let mut p_dq = 0.0;
        for &w in &self.weights {
            let dq = 0.5 * w * h * velocity;
            q += dq;
            p_dq += p * dq;
            counters.field_evaluations += 1;
            p -= w * h * sys.dh_dq(q, p, t).1;
            velocity = Self::velocity(sys, q, p, t, counters);
            let dq = 0.5 * w * h * velocity;
            q += dq;
            p_dq += p * dq;
        }
        if !(q.is_finite() && p.is_finite() && velocity.is_finite()) {
            self.last_velocity = None;
            return Err(StepError::NonFinite { t: s.t });
        }
        match &mut self.last_velocity {
            Some(c) if Arc::ptr_eq(&c.formula, sys.formula_arc()) && c.params == sys.params() => {
                c.p = p;
                c.hp = velocity;
            }
            slot => {
                *slot = Some(Cached {
                    formula: sys.formula_arc().clone(),
                    params: sys.params().to_vec(),
                    p,
                    hp: velocity,
                })
            }
        }
        Ok(Step {
            state: State { q, p, t: t + h },
            p_dq,
        })
    }
}
