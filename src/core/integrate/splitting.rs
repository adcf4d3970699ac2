//! Explicit symmetric splitting methods for separable H = T(p) + V(q, t). A
//! kick p ← p − τ ∂H/∂q(q, t) and a drift q ← q + τ ∂H/∂p(p) are each the
//! exact flow of one part of H, so every method here is symplectic and, its
//! coefficients being palindromic, time-reversible.
//!
//! Every method is a [`Scheme`]: a palindromic sequence of drift and kick
//! coefficients, run by one stepper. Kicks and drifts evaluate ∂H/∂q and
//! ∂H/∂p through derivative programs compiled once from the formula
//! ([`crate::core::formula::DerivativeProgram`]), in plain `f64`. The last
//! flow of a step and the first of the next use the same coordinate, so its
//! derivative is kept and each step costs one evaluation fewer than it has
//! flows of that kind.
//!
//! # Time (extended phase space)
//!
//! For V depending on t, time is a coordinate that the drifts advance: the
//! flows split K = T(p) + E + V(q, t) (E conjugate to t) into the drift of
//! T + E (q and t move) and the kick of V (p and E move). A kick after drifts
//! of total fraction a of the step evaluates ∂V/∂q at t + a·h (after the
//! last drift exactly t + h), and its cached force is keyed on that time
//! too, so every method keeps its order in t. The splitting order
//! conditions do not depend on what the two flows are, and the Nyström
//! conditions still hold ([B, [B, [B, A]]] = 0 for A quadratic in the momenta
//! (p, E) and B of the positions (q, t) alone), so the Nyström methods keep
//! their order too when T is quadratic in p. T must not depend on t. For an
//! autonomous H nothing reads t and the arithmetic is that of the plain
//! methods. (Extended phase space for a time-dependent H is common practice;
//! the order conditions of splittings: Hairer, Lubich & Wanner, *Geometric
//! Numerical Integration*, 2nd ed., Springer 2006, ch. III.)
//!
//! # Damping (conformally symplectic)
//!
//! With a linear damping rate δ > 0 (q' = T'(p), p' = −V_q − δ T'(p)) the
//! drift becomes the exact flow of A: q' = T'(p), p' = −δ T'(p), and the kick
//! stays the flow of B: p' = −V_q(q, t). For T = T_c + (p − p_c)²/(2m),
//! u = p − p_c decays as u·e^(−δτ/m) over a drift of τ = c·h, so with
//! v = T'(p) and x = δτ/m
//!
//!   Δq = τ·v·(1 − e^(−x))/x (written with `exp_m1`, exact as δ → 0), p ← p − δ·Δq,
//!
//! and ∫ p dq over the drift is p·Δq − δ·Δq²/2 (p − δq is constant along A).
//! Each drift contracts area by e^(−x), the kicks keep it, so a step
//! contracts by exactly e^(−δh/m) and the same coefficients keep the same
//! order. T must be quadratic in p; other kinetic parts are refused
//! (`IntegratorError::DampingNeedsQuadraticKinetic`; `auto` then takes
//! Gauss–Legendre on the damped field). 1/m is T'' from the jet at the first
//! step. Reference: R. I. McLachlan, M. Perlmutter, "Conformal Hamiltonian
//! systems", J. Nonlinear Sci. 11 (2001) 283–313.
//!
//! ∫ p dq along a step is exact for the composed map: kicks do not move q and
//! a plain drift moves q at constant p, so each drift adds p·Δq.
//!
//! To add a method: write its coefficient table as a function returning a
//! [`Scheme`] (doc comment: published source, order, evaluations per step),
//! give it a `Method` variant, and add it to `Scheme::for_method`.

use super::{Counters, Method, State, Step, StepError};
use crate::core::formula::{
    DerivativeProgram, Formula, LANES, LaneRegisters, SLOT_P, SLOT_Q, SLOT_T,
};
use crate::core::system::System;
use std::sync::Arc;

/// Which part of H a flow of a splitting method follows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Flow {
    /// q ← q + τ ∂H/∂p (the flow of T).
    Drift,
    /// p ← p − τ ∂H/∂q (the flow of V).
    Kick,
}

/// A splitting method: flows with their fractions of the step, in order.
#[derive(Clone, Debug, PartialEq)]
pub struct Scheme {
    pub flows: Vec<(Flow, f64)>,
}

impl Scheme {
    /// Alternating flows from the first half of a palindrome: `first` starts,
    /// `half` lists the coefficients up to and including the middle one.
    pub fn palindrome(first: Flow, half: &[f64]) -> Scheme {
        let other = |f: Flow| {
            if f == Flow::Drift {
                Flow::Kick
            } else {
                Flow::Drift
            }
        };
        let mut flows = Vec::with_capacity(2 * half.len());
        let mut kind = first;
        for &c in half {
            flows.push((kind, c));
            kind = other(kind);
        }
        let mirror: Vec<(Flow, f64)> = flows.iter().rev().skip(1).copied().collect();
        flows.extend(mirror);
        Scheme { flows }
    }

    /// A symmetric composition of Störmer–Verlet (drift–kick–drift) steps
    /// with these weights, adjacent half drifts merged.
    pub fn verlet_composition(weights: &[f64]) -> Scheme {
        let mut flows: Vec<(Flow, f64)> = Vec::with_capacity(2 * weights.len() + 1);
        for &w in weights {
            match flows.last_mut() {
                Some((Flow::Drift, c)) => *c += 0.5 * w,
                _ => flows.push((Flow::Drift, 0.5 * w)),
            }
            flows.push((Flow::Kick, w));
            flows.push((Flow::Drift, 0.5 * w));
        }
        Scheme { flows }
    }

    /// The sum of the coefficients of one kind of flow (1 for a consistent method).
    pub fn total(&self, kind: Flow) -> f64 {
        self.flows
            .iter()
            .filter(|(k, _)| *k == kind)
            .map(|(_, c)| c)
            .sum()
    }

    /// True when the sequence reads the same backwards (a symmetric method).
    pub fn is_palindromic(&self) -> bool {
        let n = self.flows.len();
        (0..n).all(|i| self.flows[i] == self.flows[n - 1 - i])
    }

    /// New derivative evaluations per step in a run of steps (kicks, drifts).
    pub fn evaluations_per_step(&self) -> (usize, usize) {
        let count = |kind: Flow| self.flows.iter().filter(|(k, _)| *k == kind).count();
        let (mut kicks, mut drifts) = (count(Flow::Kick), count(Flow::Drift));
        match self.flows.first() {
            Some((Flow::Kick, _)) => kicks -= 1,
            Some((Flow::Drift, _)) => drifts -= 1,
            None => {}
        }
        (kicks, drifts)
    }

    /// The scheme of an explicit splitting method (`None` for the others).
    pub fn for_method(method: Method) -> Option<Scheme> {
        match method {
            Method::Verlet => Some(Scheme::verlet_composition(&VERLET)),
            Method::Yoshida4 => Some(Scheme::verlet_composition(&yoshida4())),
            Method::Yoshida6 => Some(Scheme::verlet_composition(&yoshida6())),
            Method::Nystrom4 => Some(nystrom4()),
            Method::Nystrom6 => Some(nystrom6()),
            Method::Split4 => Some(split4()),
            Method::Split6 => Some(split6()),
            _ => None,
        }
    }
}

/// # Störmer–Verlet (drift–kick–drift)
///
/// q½ = q + (h/2) T'(p), p₁ = p − h V'(q½), q₁ = q½ + (h/2) T'(p₁).
/// Order 2, symplectic, time-reversible; one force per step. (This form has a
/// smaller energy error than kick–drift–kick on oscillators at the same cost.)
///
/// Reference: E. Hairer, C. Lubich, G. Wanner, *Geometric Numerical
/// Integration*, 2nd ed., Springer 2006, §I.1.4 and Theorem VI.3.4.
pub const VERLET: [f64; 1] = [1.0];

/// # Yoshida's 4th-order composition
///
/// Three Störmer–Verlet steps of sizes γ₁h, γ₀h, γ₁h with
/// γ₁ = 1/(2 − 2^{1/3}), γ₀ = −2^{1/3}/(2 − 2^{1/3}). Order 4, symplectic,
/// time-reversible; three kicks and three drifts per step.
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
/// w₀ = 1 − 2(w₁ + w₂ + w₃). Order 6, symplectic, time-reversible; seven
/// kicks and seven drifts per step.
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

/// # Optimised Runge–Kutta–Nyström splitting of order 4 (6 stages)
///
/// Kick b₁, drift a₁, kick b₂, drift a₂, kick b₃, drift a₃, kick b₄, then the
/// mirror image, with b₁ = 0.0829844064174052, b₂ = 0.396309801498368,
/// b₃ = −0.0390563049223486, b₄ = 1 − 2(b₁ + b₂ + b₃), a₁ = 0.245298957184271,
/// a₂ = 0.604872665711080, a₃ = 1/2 − (a₁ + a₂). Order 4 when T is quadratic
/// in p (the Nyström case, p'' depends on q alone); symplectic,
/// time-reversible; six kicks and six drifts per step. Its leading error
/// coefficients are far smaller than Yoshida-4's.
///
/// Reference: S. Blanes, P. C. Moan, "Practical symplectic partitioned
/// Runge–Kutta and Runge–Kutta–Nyström methods", J. Comput. Appl. Math. 142
/// (2002) 313–330, Table 3, SRKN₆ᵇ.
pub fn nystrom4() -> Scheme {
    let (b1, b2, b3) = (
        0.082_984_406_417_405_2,
        0.396_309_801_498_368,
        -0.039_056_304_922_348_6,
    );
    let (a1, a2) = (0.245_298_957_184_271, 0.604_872_665_711_080);
    let a3 = 0.5 - (a1 + a2);
    let b4 = 1.0 - 2.0 * (b1 + b2 + b3);
    Scheme::palindrome(Flow::Kick, &[b1, a1, b2, a2, b3, a3, b4])
}

/// # Optimised Runge–Kutta–Nyström splitting of order 6 (11 stages)
///
/// Kicks b₁…b₆ and drifts a₁…a₆ in the order b₁ a₁ b₂ a₂ … b₆ a₆ b₆ … a₁ b₁ with
/// b₁ = 0.0414649985182624, b₂ = 0.198128671918067, b₃ = −0.0400061921041533,
/// b₄ = 0.0752539843015807, b₅ = −0.0115113874206879, b₆ = 1/2 − (b₁ + … + b₅),
/// a₁ = 0.123229775946271, a₂ = 0.290553797799558, a₃ = −0.127049212625417,
/// a₄ = −0.246331761062075, a₅ = 0.357208872795928, a₆ = 1 − 2(a₁ + … + a₅).
/// Order 6 when T is quadratic in p; symplectic, time-reversible; eleven
/// kicks and eleven drifts per step.
///
/// Reference: S. Blanes, P. C. Moan, J. Comput. Appl. Math. 142 (2002)
/// 313–330, Table 3, SRKN₁₁ᵇ.
pub fn nystrom6() -> Scheme {
    let b = [
        0.041_464_998_518_262_4,
        0.198_128_671_918_067,
        -0.040_006_192_104_153_3,
        0.075_253_984_301_580_7,
        -0.011_511_387_420_687_9,
    ];
    let a = [
        0.123_229_775_946_271,
        0.290_553_797_799_558,
        -0.127_049_212_625_417,
        -0.246_331_761_062_075,
        0.357_208_872_795_928,
    ];
    let b6 = 0.5 - b.iter().sum::<f64>();
    let a6 = 1.0 - 2.0 * a.iter().sum::<f64>();
    let mut half = Vec::with_capacity(12);
    for i in 0..5 {
        half.push(b[i]);
        half.push(a[i]);
    }
    half.push(b6);
    half.push(a6);
    // the middle drift a₆ is between the two b₆ kicks
    Scheme::palindrome(Flow::Kick, &half)
}

/// # Optimised partitioned splitting of order 4 (6 stages), any separable H
///
/// Drift a₁, kick b₁, drift a₂, kick b₂, drift a₃, kick b₃, drift a₄, then the
/// mirror image, with a₁ = 0.0792036964311957, a₂ = 0.353172906049774,
/// a₃ = −0.0420650803577195, a₄ = 1 − 2(a₁ + a₂ + a₃), b₁ = 0.209515106613362,
/// b₂ = −0.143851773179818, b₃ = 1/2 − (b₁ + b₂). Order 4 for any
/// T(p) + V(q); symplectic, time-reversible; six kicks and six drifts per step.
///
/// Reference: S. Blanes, P. C. Moan, J. Comput. Appl. Math. 142 (2002)
/// 313–330, Table 2, S₆.
pub fn split4() -> Scheme {
    let (a1, a2, a3) = (
        0.079_203_696_431_195_7,
        0.353_172_906_049_774,
        -0.042_065_080_357_719_5,
    );
    let (b1, b2) = (0.209_515_106_613_362, -0.143_851_773_179_818);
    let a4 = 1.0 - 2.0 * (a1 + a2 + a3);
    let b3 = 0.5 - (b1 + b2);
    Scheme::palindrome(Flow::Drift, &[a1, b1, a2, b2, a3, b3, a4])
}

/// # Optimised partitioned splitting of order 6 (10 stages), any separable H
///
/// Drifts a₁…a₆ and kicks b₁…b₅ in the order a₁ b₁ … a₅ b₅ a₆ b₅ a₅ … b₁ a₁ with
/// a₁ = 0.0502627644003922, a₂ = 0.413514300428344, a₃ = 0.0450798897943977,
/// a₄ = −0.188054853819569, a₅ = 0.541960678450780, a₆ = 1 − 2(a₁ + … + a₅),
/// b₁ = 0.148816447901042, b₂ = −0.132385865767784, b₃ = 0.067307604692185,
/// b₄ = 0.432666402578175, b₅ = 1/2 − (b₁ + … + b₄). Order 6 for any
/// T(p) + V(q); symplectic, time-reversible; ten kicks and ten drifts per step.
///
/// Reference: S. Blanes, P. C. Moan, J. Comput. Appl. Math. 142 (2002)
/// 313–330, Table 2, S₁₀.
pub fn split6() -> Scheme {
    let a = [
        0.050_262_764_400_392_2,
        0.413_514_300_428_344,
        0.045_079_889_794_397_7,
        -0.188_054_853_819_569,
        0.541_960_678_450_780,
    ];
    let b = [
        0.148_816_447_901_042,
        -0.132_385_865_767_784,
        0.067_307_604_692_185,
        0.432_666_402_578_175,
    ];
    let a6 = 1.0 - 2.0 * a.iter().sum::<f64>();
    let b5 = 0.5 - b.iter().sum::<f64>();
    let mut half = Vec::with_capacity(11);
    for i in 0..4 {
        half.push(a[i]);
        half.push(b[i]);
    }
    half.push(a[4]);
    half.push(b5);
    half.push(a6);
    Scheme::palindrome(Flow::Drift, &half)
}

/// One splitting method ready to step, with the derivative programs of the
/// system it was last used with.
#[derive(Clone, Debug)]
pub struct Splitting {
    scheme: Scheme,
    /// For each flow, the fraction of the step the drifts before it have
    /// covered (exactly 1 after the last drift): a kick of a formula in t
    /// is evaluated at t + fraction × h.
    fractions: Vec<f64>,
    /// Linear damping rate δ (0: the plain drifts).
    damping: f64,
    programs: Option<Programs>,
    /// ∂H/∂p at the p where it was last evaluated.
    velocity: Option<(u64, f64)>,
    /// ∂H/∂q at the q (and, for a formula in t, the t) where it was last
    /// evaluated.
    force: Option<(u64, u64, f64)>,
}

#[derive(Clone, Debug)]
struct Programs {
    formula: Arc<Formula>,
    params: Vec<f64>,
    dq: DerivativeProgram,
    dp: DerivativeProgram,
    /// The kicks read t.
    timed: bool,
    /// ∂²T/∂p² = 1/m for the damped drift (T quadratic in p), once known.
    curvature: Option<f64>,
}

impl Splitting {
    pub fn new(scheme: Scheme) -> Splitting {
        let last_drift = scheme.flows.iter().rposition(|(k, _)| *k == Flow::Drift);
        let mut covered = 0.0;
        let fractions = scheme
            .flows
            .iter()
            .enumerate()
            .map(|(i, &(kind, c))| {
                let at = if last_drift.is_some_and(|l| i > l) {
                    1.0
                } else {
                    covered
                };
                if kind == Flow::Drift {
                    covered += c;
                }
                at
            })
            .collect();
        Splitting {
            scheme,
            fractions,
            damping: 0.0,
            programs: None,
            velocity: None,
            force: None,
        }
    }

    /// The same method for the damped system with rate `damping` (≥ 0 and
    /// T quadratic in p, checked by the caller): each drift becomes the exact
    /// flow of q' = T'(p), p' = −δ T'(p), the conformally symplectic
    /// splitting (see the module comment).
    pub fn with_damping(mut self, damping: f64) -> Splitting {
        self.damping = damping;
        self.velocity = None;
        self
    }

    pub fn scheme(&self) -> &Scheme {
        &self.scheme
    }

    /// Compile the derivative programs for `sys` when the system changed.
    fn programs_for(&mut self, sys: &System) {
        let same = self.programs.as_ref().is_some_and(|p| {
            Arc::ptr_eq(&p.formula, sys.formula_arc()) && p.params == sys.params()
        });
        if !same {
            self.velocity = None;
            self.force = None;
            let f = sys.formula_arc();
            let dq = f.derivative_program(SLOT_Q, sys.params());
            self.programs = Some(Programs {
                formula: f.clone(),
                params: sys.params().to_vec(),
                timed: dq.reads(SLOT_T),
                dq,
                dp: f.derivative_program(SLOT_P, sys.params()),
                curvature: None,
            });
        }
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
        self.programs_for(sys);
        let damping = self.damping;
        if damping != 0.0 {
            let Some(programs) = self.programs.as_mut() else {
                return Err(StepError::NonFinite { t: s.t });
            };
            if programs.curvature.is_none() {
                counters.hessian_evaluations += 1;
                let b = sys.jet_t(q, p, t).hpp;
                if !b.is_finite() {
                    return Err(StepError::NonFinite { t: s.t });
                }
                programs.curvature = Some(b);
            }
        }
        let Splitting {
            scheme,
            fractions,
            programs: Some(programs),
            velocity: velocity_slot,
            force: force_slot,
            ..
        } = self
        else {
            return Err(StepError::NonFinite { t: s.t });
        };
        let curvature = programs.curvature.unwrap_or(0.0);
        let (mut velocity, mut force) = (*velocity_slot, *force_slot);
        let mut p_dq = 0.0;
        let mut evaluations = 0u64;
        for (&(kind, c), &fraction) in scheme.flows.iter().zip(fractions.iter()) {
            match kind {
                Flow::Drift => {
                    let v = match velocity {
                        Some((bits, v)) if bits == p.to_bits() => v,
                        _ => {
                            evaluations += 1;
                            let v = programs.dp.eval(q, p, t);
                            velocity = Some((p.to_bits(), v));
                            v
                        }
                    };
                    if damping == 0.0 {
                        let dq = c * h * v;
                        q += dq;
                        p_dq += p * dq;
                    } else {
                        // The exact flow of q' = v, p' = −δ v with v = T'(p)
                        // = (p − p_c)/m over τ: v decays as e^(−δτ/m), so
                        // Δq = τ v (1 − e^(−x))/x with x = δτ/m, and p − δq
                        // is constant along it.
                        let tau = c * h;
                        let x = damping * tau * curvature;
                        let phi = if x == 0.0 { 1.0 } else { -(-x).exp_m1() / x };
                        let dq = tau * v * phi;
                        q += dq;
                        p_dq += p * dq - 0.5 * damping * dq * dq;
                        p -= damping * dq;
                    }
                }
                Flow::Kick => {
                    let (tk, tkey) = if programs.timed {
                        let tk = t + fraction * h;
                        (tk, tk.to_bits())
                    } else {
                        (t, 0)
                    };
                    let f = match force {
                        Some((bits, tb, f)) if bits == q.to_bits() && tb == tkey => f,
                        _ => {
                            evaluations += 1;
                            let f = programs.dq.eval(q, p, tk);
                            force = Some((q.to_bits(), tkey, f));
                            f
                        }
                    };
                    p -= c * h * f;
                }
            }
        }
        counters.field_evaluations += evaluations;
        if !(q.is_finite() && p.is_finite() && p_dq.is_finite()) {
            *velocity_slot = None;
            *force_slot = None;
            return Err(StepError::NonFinite { t: s.t });
        }
        *velocity_slot = velocity;
        *force_slot = force;
        Ok(Step {
            state: State { q, p, t: t + h },
            p_dq,
        })
    }
}

/// A block of points (lanes) stepped together by one splitting method: all
/// share the step h and the time t, so each kick and drift evaluates its
/// derivative program one instruction over every lane
/// ([`DerivativeProgram::eval_lanes`]) and what depends on t alone (the
/// drive) once per flow. Each lane sees exactly the operations, in the same
/// order, that [`Splitting::step`] performs for that point alone, so its
/// numbers are the same to the bit; lanes that are done leave the block
/// ([`SplittingLanes::retain`]) and cost nothing after.
#[derive(Clone, Debug)]
pub struct SplittingLanes {
    flows: Vec<(Flow, f64)>,
    fractions: Vec<f64>,
    damping: f64,
    dq: DerivativeProgram,
    dp: DerivativeProgram,
    timed: bool,
    regs: LaneRegisters,
    q: Vec<f64>,
    p: Vec<f64>,
    /// ∫ p dq over the last step, per lane.
    p_dq: Vec<f64>,
    /// ∂²T/∂p² per lane (damped drift), from the jet at the lane's start.
    curvature: Vec<f64>,
    /// The common curvature when every lane has the same one.
    common_curvature: Option<f64>,
    /// ∂H/∂p per lane at the current p (valid when `velocity_ok`).
    velocity: Vec<f64>,
    velocity_ok: bool,
    /// ∂H/∂q per lane at the current q and the time with these bits.
    force: Vec<f64>,
    force_at: Option<u64>,
}

impl Splitting {
    /// This method (with its damping) as a stepper of up to [`LANES`] points
    /// of `sys` at once; the block starts empty ([`SplittingLanes::load`]).
    pub fn lanes(&self, sys: &System) -> SplittingLanes {
        let f = sys.formula_arc();
        let dq = f.derivative_program(SLOT_Q, sys.params());
        SplittingLanes {
            flows: self.scheme.flows.clone(),
            fractions: self.fractions.clone(),
            damping: self.damping,
            timed: dq.reads(SLOT_T),
            dq,
            dp: f.derivative_program(SLOT_P, sys.params()),
            regs: LaneRegisters::default(),
            q: Vec::with_capacity(LANES),
            p: Vec::with_capacity(LANES),
            p_dq: Vec::with_capacity(LANES),
            curvature: Vec::new(),
            common_curvature: None,
            velocity: Vec::with_capacity(LANES),
            velocity_ok: false,
            force: Vec::with_capacity(LANES),
            force_at: None,
        }
    }
}

impl SplittingLanes {
    /// Start the block at these points (at most [`LANES`]; the rest are left out).
    pub fn load(&mut self, points: &[[f64; 2]]) {
        let points = &points[..points.len().min(LANES)];
        self.q = points.iter().map(|x| x[0]).collect();
        self.p = points.iter().map(|x| x[1]).collect();
        let m = points.len();
        self.p_dq = vec![0.0; m];
        self.velocity = vec![0.0; m];
        self.force = vec![0.0; m];
        self.curvature.clear();
        self.common_curvature = None;
        self.velocity_ok = false;
        self.force_at = None;
    }

    /// Points in the block.
    pub fn len(&self) -> usize {
        self.q.len()
    }

    pub fn is_empty(&self) -> bool {
        self.q.is_empty()
    }

    /// Lane `k`'s point (q, p).
    pub fn point(&self, k: usize) -> [f64; 2] {
        [self.q[k], self.p[k]]
    }

    /// True when the method damps: [`SplittingLanes::take_curvature`] must
    /// run before the first step.
    pub fn damped(&self) -> bool {
        self.damping != 0.0
    }

    /// The kinetic curvature ∂²T/∂p² of every lane from the jet at its point
    /// at time `t` (what [`Splitting::step`] takes at an orbit's first step);
    /// false for a lane where it is not finite (that lane cannot step).
    pub fn take_curvature(&mut self, sys: &System, t: f64) -> Vec<bool> {
        self.curvature = self
            .q
            .iter()
            .zip(&self.p)
            .map(|(&q, &p)| sys.jet_t(q, p, t).hpp)
            .collect();
        self.common_curvature = self
            .curvature
            .first()
            .copied()
            .filter(|c| self.curvature.iter().all(|x| x.to_bits() == c.to_bits()));
        self.curvature.iter().map(|c| c.is_finite()).collect()
    }

    /// One step of size `h` from time `t` for every lane.
    pub fn step(&mut self, t: f64, h: f64) {
        let m = self.q.len();
        self.p_dq.iter_mut().for_each(|x| *x = 0.0);
        let damping = self.damping;
        for (&(kind, c), &fraction) in self.flows.iter().zip(&self.fractions) {
            match kind {
                Flow::Drift => {
                    if !self.velocity_ok {
                        self.dp
                            .eval_lanes(&self.q, &self.p, t, &mut self.velocity, &mut self.regs);
                    }
                    let (q, p, p_dq, v) = (
                        &mut self.q[..m],
                        &mut self.p[..m],
                        &mut self.p_dq[..m],
                        &self.velocity[..m],
                    );
                    if damping == 0.0 {
                        let ch = c * h;
                        for (((q, p), s), v) in q.iter_mut().zip(p.iter()).zip(p_dq).zip(v) {
                            let dq = ch * v;
                            *q += dq;
                            *s += p * dq;
                        }
                        self.velocity_ok = true;
                    } else {
                        // the exact damped drift of `Splitting::step`
                        let tau = c * h;
                        let phi_of = |b: f64| {
                            let x = damping * tau * b;
                            if x == 0.0 { 1.0 } else { -(-x).exp_m1() / x }
                        };
                        let common = self.common_curvature.map(phi_of);
                        for (k, (((q, p), s), v)) in
                            q.iter_mut().zip(p.iter_mut()).zip(p_dq).zip(v).enumerate()
                        {
                            let phi = match common {
                                Some(phi) => phi,
                                None => phi_of(self.curvature.get(k).copied().unwrap_or(0.0)),
                            };
                            let dq = tau * v * phi;
                            *q += dq;
                            *s += *p * dq - 0.5 * damping * dq * dq;
                            *p -= damping * dq;
                        }
                        self.velocity_ok = false;
                    }
                    self.force_at = None;
                }
                Flow::Kick => {
                    let (tk, key) = if self.timed {
                        let tk = t + fraction * h;
                        (tk, tk.to_bits())
                    } else {
                        (t, 0)
                    };
                    if self.force_at != Some(key) {
                        self.dq
                            .eval_lanes(&self.q, &self.p, tk, &mut self.force, &mut self.regs);
                        self.force_at = Some(key);
                    }
                    let ch = c * h;
                    for (p, f) in self.p[..m].iter_mut().zip(&self.force[..m]) {
                        *p -= ch * f;
                    }
                    self.velocity_ok = false;
                }
            }
        }
    }

    /// True when lane `k`'s last step stayed finite (its point and ∫ p dq),
    /// the test [`Splitting::step`] applies.
    pub fn finite(&self, k: usize) -> bool {
        self.q[k].is_finite() && self.p[k].is_finite() && self.p_dq[k].is_finite()
    }

    /// Keep the lanes with `keep[k]` true, in order (the others leave).
    pub fn retain(&mut self, keep: &[bool]) {
        let mut k = 0;
        let mut filter = |v: &mut Vec<f64>| {
            k = 0;
            v.retain(|_| {
                let kept = keep.get(k).copied().unwrap_or(false);
                k += 1;
                kept
            });
        };
        filter(&mut self.q);
        filter(&mut self.p);
        filter(&mut self.p_dq);
        filter(&mut self.velocity);
        filter(&mut self.force);
        if !self.curvature.is_empty() {
            filter(&mut self.curvature);
        }
    }
}
