//! A Hamiltonian system: a compiled formula H(q, p, t; parameters) with
//! parameter values. Everything a method needs from H — the energy, the
//! vector field, its Jacobian, the Hessian, parameter derivatives — comes from
//! the formula's jet (exact forward-mode derivatives), never from differences.

use super::formula::{FIRST_PARAM_SLOT, Formula, FormulaError, RowProgram, SLOT_P, SLOT_Q, SLOT_T};
use num_dual::{Dual2, Dual2_64, Dual2SVec, Dual2SVec64, Dual64, DualNum};
use std::fmt;
use std::sync::Arc;

/// H and its first and second derivatives in (q, p) at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Jet {
    pub h: f64,
    pub hq: f64,
    pub hp: f64,
    pub hqq: f64,
    pub hqp: f64,
    pub hpp: f64,
}

impl Jet {
    /// det of the Hessian of H (equal to det of the Jacobian of the field).
    pub fn hessian_det(&self) -> f64 {
        self.hqq * self.hpp - self.hqp * self.hqp
    }

    /// The Jacobian of the field (q', p') = (H_p, −H_q): [[H_pq, H_pp], [−H_qq, −H_qp]].
    pub fn jacobian(&self) -> [[f64; 2]; 2] {
        [[self.hqp, self.hpp], [-self.hqq, -self.hqp]]
    }

    /// The field (q', p') = (∂H/∂p, −∂H/∂q).
    pub fn field(&self) -> [f64; 2] {
        [self.hp, -self.hq]
    }

    /// The damped field (q', p') = (H_p, −H_q − δ H_p) for a linear damping
    /// rate `damping` = δ; exactly [`Jet::field`] when δ = 0.
    pub fn damped_field(&self, damping: f64) -> [f64; 2] {
        if damping == 0.0 {
            self.field()
        } else {
            [self.hp, -self.hq - damping * self.hp]
        }
    }

    /// The Jacobian of the damped field: the second row of [`Jet::jacobian`]
    /// minus δ × its first row; exactly [`Jet::jacobian`] when δ = 0.
    pub fn damped_jacobian(&self, damping: f64) -> [[f64; 2]; 2] {
        if damping == 0.0 {
            self.jacobian()
        } else {
            [
                [self.hqp, self.hpp],
                [
                    -self.hqq - damping * self.hqp,
                    -self.hqp - damping * self.hpp,
                ],
            ]
        }
    }

    pub fn is_finite(&self) -> bool {
        [self.h, self.hq, self.hp, self.hqq, self.hqp, self.hpp]
            .iter()
            .all(|v| v.is_finite())
    }
}

/// H and its derivatives in (q, p, μ) where μ is one parameter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ParamJet {
    pub h: f64,
    /// [H_q, H_p, H_μ]
    pub grad: [f64; 3],
    /// Hessian in (q, p, μ), symmetric.
    pub hess: [[f64; 3]; 3],
}

/// Most parameters a [`ThirdJet`] differentiates in (besides q and p).
pub const MAX_THIRD_JET_PARAMS: usize = 2;

/// H and all its derivatives up to third order in the variables
/// x = (q, p, μ_a, μ_b): `n` of them are used (2 + number of parameters);
/// entries beyond `n` are zero. Fold location and fold curves need the third
/// derivatives (the derivative of det Hess H).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ThirdJet {
    pub n: usize,
    pub h: f64,
    /// ∂H/∂x_i
    pub grad: [f64; 4],
    /// ∂²H/∂x_i∂x_j
    pub hess: [[f64; 4]; 4],
    /// ∂³H/∂x_i∂x_j∂x_k
    pub third: [[[f64; 4]; 4]; 4],
}

impl ThirdJet {
    /// det of the (q, p) Hessian, H_qq H_pp − H_qp².
    pub fn hessian_det(&self) -> f64 {
        self.hess[0][0] * self.hess[1][1] - self.hess[0][1] * self.hess[0][1]
    }

    /// ∂/∂x_k of det of the (q, p) Hessian.
    pub fn hessian_det_derivative(&self, k: usize) -> f64 {
        let h = &self.hess;
        let t = &self.third;
        t[0][0][k] * h[1][1] + h[0][0] * t[1][1][k] - 2.0 * h[0][1] * t[0][1][k]
    }
}

/// Why a system could not be built.
#[derive(Clone, Debug, PartialEq)]
pub enum SystemError {
    Formula(FormulaError),
    /// A parameter has no value.
    MissingParameter(String),
    /// A parameter value is NaN or infinite.
    NonFiniteParameter(String, f64),
}

impl fmt::Display for SystemError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SystemError::Formula(e) => write!(f, "formula: {e}"),
            SystemError::MissingParameter(n) => write!(f, "parameter '{n}' has no value"),
            SystemError::NonFiniteParameter(n, v) => {
                write!(f, "parameter '{n}' is not a finite number ({v})")
            }
        }
    }
}

impl std::error::Error for SystemError {}

impl From<FormulaError> for SystemError {
    fn from(e: FormulaError) -> Self {
        SystemError::Formula(e)
    }
}

/// A compiled Hamiltonian with parameter values. Cheap to clone (the formula is shared).
///
/// Time is explicit. The methods with a `_t` suffix take t as an argument (the
/// integrators use them); every other method — energy, field, jets, the row
/// program — evaluates at the system's *frozen time*, [`System::time`], which
/// is 0 unless set with [`System::frozen_at`]. For a formula without t the
/// frozen time changes nothing; for one with t, the analysis states the time
/// it froze (see [`System::depends_on_time`]).
#[derive(Clone, Debug)]
pub struct System {
    formula: Arc<Formula>,
    params: Vec<f64>,
    time: f64,
    /// Set by [`System::undriven`]: the formula is written with t, but at
    /// these parameter values H was checked not to depend on it.
    time_free: bool,
}

impl System {
    /// A system from a compiled formula and one value per parameter, in the formula's order.
    pub fn new(formula: Arc<Formula>, params: Vec<f64>) -> Result<System, SystemError> {
        if params.len() < formula.params().len() {
            return Err(SystemError::MissingParameter(
                formula.params()[params.len()].clone(),
            ));
        }
        for (name, &v) in formula.params().iter().zip(&params) {
            if !v.is_finite() {
                return Err(SystemError::NonFiniteParameter(name.clone(), v));
            }
        }
        let mut params = params;
        params.truncate(formula.params().len());
        Ok(System {
            formula,
            params,
            time: 0.0,
            time_free: false,
        })
    }

    /// Compile `source` and take parameter values by name; a parameter without
    /// a value is an error.
    pub fn from_source(source: &str, values: &[(&str, f64)]) -> Result<System, SystemError> {
        let formula = Formula::compile(source)?;
        let mut params = Vec::with_capacity(formula.params().len());
        for name in formula.params() {
            match values.iter().find(|(n, _)| n == name) {
                Some(&(_, v)) => params.push(v),
                None => return Err(SystemError::MissingParameter(name.clone())),
            }
        }
        System::new(Arc::new(formula), params)
    }

    pub fn formula(&self) -> &Formula {
        &self.formula
    }

    pub fn formula_arc(&self) -> &Arc<Formula> {
        &self.formula
    }

    /// Parameter values in the formula's order.
    pub fn params(&self) -> &[f64] {
        &self.params
    }

    /// Value of a parameter by name.
    pub fn param(&self, name: &str) -> Option<f64> {
        self.formula.param_index(name).map(|i| self.params[i])
    }

    /// The same system with parameter `index` set to `value`.
    pub fn with_param(&self, index: usize, value: f64) -> System {
        let mut s = self.clone();
        if let Some(v) = s.params.get_mut(index) {
            *v = value;
            s.time_free = false;
        }
        s
    }

    /// H₀, the undriven system: parameter `index` (the drive amplitude) at
    /// 0, checked to leave H free of t (H₀ compared at several points and
    /// times to 1e-12 relative), and then treated as autonomous (see
    /// [`System::depends_on_time`]). An error says that t is still there,
    /// so the time dependence is not all in the amplitude's term.
    pub fn undriven(&self, index: usize) -> Result<System, String> {
        const POINTS: [(f64, f64); 3] = [(0.3, 0.7), (-1.1, 0.4), (0.9, -1.3)];
        const TIMES: [f64; 3] = [0.37, 1.9, 5.3];
        let name = self
            .formula
            .params()
            .get(index)
            .cloned()
            .ok_or_else(|| format!("the formula has no parameter number {}", index + 1))?;
        let mut s = self.with_param(index, 0.0);
        if s.formula.uses_t() {
            for &(q, p) in &POINTS {
                let a = s.energy_t(q, p, 0.0);
                for &t in &TIMES {
                    let b = s.energy_t(q, p, t);
                    // a point outside H's domain (NaN at both times) says nothing
                    if a.is_finite() && b.is_finite() && (a - b).abs() > 1e-12 * (1.0 + a.abs()) {
                        return Err(format!(
                            "H with {name} = 0 still depends on t; the time dependence must sit in the drive term"
                        ));
                    }
                }
            }
        }
        s.time_free = true;
        Ok(s)
    }

    /// The same system with its frozen time set to `t` (a non-finite `t` is
    /// taken as 0). Only the methods without a `_t` suffix read it.
    pub fn frozen_at(&self, t: f64) -> System {
        let mut s = self.clone();
        s.time = if t.is_finite() { t } else { 0.0 };
        s
    }

    /// The time at which the methods without a `_t` suffix evaluate H.
    pub fn time(&self) -> f64 {
        self.time
    }

    /// True when H = T(p) + V(q), so explicit splitting methods apply.
    pub fn is_separable(&self) -> bool {
        self.formula.is_separable()
    }

    /// True when H depends on t explicitly (then H is not conserved): its
    /// formula uses t, unless [`System::undriven`] checked that it does not
    /// matter at these parameter values.
    pub fn depends_on_time(&self) -> bool {
        self.formula.uses_t() && !self.time_free
    }

    fn slots<D: DualNum<Primitive = f64> + Copy>(&self, q: D, p: D, t: D) -> SlotBuf<D> {
        let mut buf = SlotBuf::new(self.params.len());
        let s = buf.as_mut();
        s[SLOT_Q] = q;
        s[SLOT_P] = p;
        s[SLOT_T] = t;
        for (i, &v) in self.params.iter().enumerate() {
            s[FIRST_PARAM_SLOT + i] = D::from(v);
        }
        buf
    }

    /// H(q, p) and its first four derivatives in q at fixed p, at the frozen
    /// time: [H, H_q, H_qq, H_qqq, H_qqqq]. A second-order dual number over
    /// a second-order dual number (the outer one's second derivative,
    /// differentiated twice more by the inner one).
    pub fn q_derivatives(&self, q: f64, p: f64) -> [f64; 5] {
        type D = Dual2<Dual2_64>;
        let x = D::new(
            Dual2_64::new(q, 1.0, 0.0),
            Dual2_64::new(1.0, 0.0, 0.0),
            Dual2_64::new(0.0, 0.0, 0.0),
        );
        let buf = self.slots(x, D::from(p), D::from(self.time));
        let r = self.formula.eval(buf.as_ref());
        [r.re.re, r.re.v1, r.v2.re, r.v2.v1, r.v2.v2]
    }

    /// H(q, p) at the frozen time.
    pub fn energy(&self, q: f64, p: f64) -> f64 {
        self.energy_t(q, p, self.time)
    }

    /// H(q, p, t).
    pub fn energy_t(&self, q: f64, p: f64, t: f64) -> f64 {
        let buf = self.slots(q, p, t);
        self.formula.eval(buf.as_ref())
    }

    /// (H, ∂H/∂q) at (q, p, t), one forward pass.
    pub fn dh_dq(&self, q: f64, p: f64, t: f64) -> (f64, f64) {
        let buf = self.slots(Dual64::new(q, 1.0), Dual64::from(p), Dual64::from(t));
        let r = self.formula.eval(buf.as_ref());
        (r.re, r.eps)
    }

    /// (H, ∂H/∂p) at (q, p, t), one forward pass.
    pub fn dh_dp(&self, q: f64, p: f64, t: f64) -> (f64, f64) {
        let buf = self.slots(Dual64::from(q), Dual64::new(p, 1.0), Dual64::from(t));
        let r = self.formula.eval(buf.as_ref());
        (r.re, r.eps)
    }

    /// The vector field (q', p') = (∂H/∂p, −∂H/∂q) at (q, p, t).
    pub fn field_t(&self, q: f64, p: f64, t: f64) -> [f64; 2] {
        [self.dh_dp(q, p, t).1, -self.dh_dq(q, p, t).1]
    }

    /// The damped field (q', p') = (∂H/∂p, −∂H/∂q − δ ∂H/∂p) at (q, p, t) for
    /// a linear damping rate `damping` = δ; exactly [`System::field_t`] when δ = 0.
    pub fn damped_field_t(&self, q: f64, p: f64, t: f64, damping: f64) -> [f64; 2] {
        if damping == 0.0 {
            self.field_t(q, p, t)
        } else {
            let hp = self.dh_dp(q, p, t).1;
            [hp, -self.dh_dq(q, p, t).1 - damping * hp]
        }
    }

    /// The vector field at the frozen time.
    pub fn field(&self, q: f64, p: f64) -> [f64; 2] {
        self.field_t(q, p, self.time)
    }

    /// [∂H/∂q, ∂H/∂p] at the frozen time.
    pub fn gradient(&self, q: f64, p: f64) -> [f64; 2] {
        let j = self.jet(q, p);
        [j.hq, j.hp]
    }

    /// H with first and second derivatives at (q, p, t), one forward pass.
    pub fn jet_t(&self, q: f64, p: f64, t: f64) -> Jet {
        let buf = self.slots(
            Dual2SVec64::<2>::from_re(q).derivative(0),
            Dual2SVec64::<2>::from_re(p).derivative(1),
            Dual2SVec64::<2>::from(t),
        );
        let r = self.formula.eval(buf.as_ref());
        let g = |i: usize| r.v1.0.as_ref().map(|m| m[i]).unwrap_or(0.0);
        let hh = |i: usize, j: usize| r.v2.0.as_ref().map(|m| m[(i, j)]).unwrap_or(0.0);
        Jet {
            h: r.re,
            hq: g(0),
            hp: g(1),
            hqq: hh(0, 0),
            hqp: hh(0, 1),
            hpp: hh(1, 1),
        }
    }

    /// H with first and second derivatives at (q, p) and the frozen time.
    pub fn jet(&self, q: f64, p: f64) -> Jet {
        self.jet_t(q, p, self.time)
    }

    /// The Hessian of H at (q, p): [[H_qq, H_qp], [H_qp, H_pp]].
    pub fn hessian(&self, q: f64, p: f64) -> [[f64; 2]; 2] {
        let j = self.jet(q, p);
        [[j.hqq, j.hqp], [j.hqp, j.hpp]]
    }

    /// The Jacobian of the field at (q, p).
    pub fn jacobian(&self, q: f64, p: f64) -> [[f64; 2]; 2] {
        self.jet(q, p).jacobian()
    }

    /// H with derivatives in (q, p, μ) where μ is parameter `param`, at the frozen time.
    /// Used by continuation, which needs ∂/∂μ exactly.
    pub fn param_jet(&self, q: f64, p: f64, param: usize) -> ParamJet {
        let mut buf = self.slots(
            Dual2SVec64::<3>::from_re(q).derivative(0),
            Dual2SVec64::<3>::from_re(p).derivative(1),
            Dual2SVec64::<3>::from(self.time),
        );
        if let Some(v) = self.params.get(param) {
            buf.as_mut()[FIRST_PARAM_SLOT + param] = Dual2SVec64::<3>::from_re(*v).derivative(2);
        }
        let r = self.formula.eval(buf.as_ref());
        let mut grad = [0.0; 3];
        let mut hess = [[0.0; 3]; 3];
        if let Some(m) = r.v1.0.as_ref() {
            for (i, g) in grad.iter_mut().enumerate() {
                *g = m[i];
            }
        }
        if let Some(m) = r.v2.0.as_ref() {
            for (i, row) in hess.iter_mut().enumerate() {
                for (j, h) in row.iter_mut().enumerate() {
                    // the two mixed partials may differ in the last bit; use their mean
                    *h = 0.5 * (m[(i, j)] + m[(j, i)]);
                }
            }
        }
        ParamJet {
            h: r.re,
            grad,
            hess,
        }
    }

    /// H with derivatives up to third order in (q, p, μ_a, μ_b, …) where the
    /// μ are the parameters with indices `params` (at most
    /// [`MAX_THIRD_JET_PARAMS`]; extra indices and unknown ones are ignored),
    /// at the frozen time. One forward pass per variable, with a second-order dual number
    /// over first-order duals: the outer number carries the Hessian, the inner
    /// one differentiates it once more along the variable.
    pub fn third_jet(&self, q: f64, p: f64, params: &[usize]) -> ThirdJet {
        type D3 = Dual2SVec<Dual64, 4>;
        let params: Vec<usize> = params
            .iter()
            .copied()
            .filter(|&i| i < self.params.len())
            .take(MAX_THIRD_JET_PARAMS)
            .collect();
        let n = 2 + params.len();
        let mut base = [0.0; 4];
        base[0] = q;
        base[1] = p;
        for (i, &k) in params.iter().enumerate() {
            base[2 + i] = self.params[k];
        }
        let mut out = ThirdJet {
            n,
            h: 0.0,
            grad: [0.0; 4],
            hess: [[0.0; 4]; 4],
            third: [[[0.0; 4]; 4]; 4],
        };
        for k in 0..n {
            let var = |i: usize| {
                let inner = Dual64::new(base[i], if i == k { 1.0 } else { 0.0 });
                D3::from_re(inner).derivative(i)
            };
            let mut buf = self.slots(var(0), var(1), D3::from_re(Dual64::from(self.time)));
            for (i, &pk) in params.iter().enumerate() {
                buf.as_mut()[FIRST_PARAM_SLOT + pk] = var(2 + i);
            }
            let r = self.formula.eval(buf.as_ref());
            out.h = r.re.re;
            out.grad[k] = r.re.eps;
            if let Some(m) = r.v1.0.as_ref() {
                for i in 0..n {
                    out.hess[i][k] = m[i].eps;
                }
            }
            if let Some(m) = r.v2.0.as_ref() {
                for i in 0..n {
                    for j in 0..n {
                        out.third[i][j][k] = m[(i, j)].eps;
                    }
                }
            }
        }
        out
    }

    /// A fast evaluator of H over many points at the frozen time and the current parameters.
    pub fn row_program(&self) -> RowProgram {
        self.formula.specialize(self.time, &self.params)
    }
}

/// Slot values on the stack for the usual small parameter counts.
enum SlotBuf<D> {
    Small([D; 12], usize),
    Large(Vec<D>),
}

impl<D: DualNum<Primitive = f64> + Copy> SlotBuf<D> {
    fn new(nparams: usize) -> Self {
        let n = FIRST_PARAM_SLOT + nparams;
        if n <= 12 {
            SlotBuf::Small([D::zero(); 12], n)
        } else {
            SlotBuf::Large(vec![D::zero(); n])
        }
    }

    fn as_mut(&mut self) -> &mut [D] {
        match self {
            SlotBuf::Small(a, n) => &mut a[..*n],
            SlotBuf::Large(v) => v,
        }
    }

    fn as_ref(&self) -> &[D] {
        match self {
            SlotBuf::Small(a, n) => &a[..*n],
            SlotBuf::Large(v) => v,
        }
    }
}
