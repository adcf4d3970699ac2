//! Derivative programs: one partial derivative of a formula as a
//! straight-line `f64` program.

use super::lanes::uniform_instructions;
use super::*;

/// One instruction of a [`DerivativeProgram`]; it writes the register with its
/// own index and reads only earlier ones.
#[derive(Clone, Copy, Debug)]
pub(super) enum DIns {
    /// q, p or t.
    Slot(u8),
    Const(f64),
    Neg(u32),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    /// A function of one value, as in plain `f64` evaluation of the tape.
    F1(Fun1, u32),
    PowI(u32, i32),
    PowF(u32, f64),
    /// (a/b).trunc(), the quotient in `a % b`.
    TruncDiv(u32, u32),
    Atan2(u32, u32),
    /// `a` if x is sign-positive, else −a (the derivative of |x|).
    SignTimes(u32, u32),
    /// min/max of x and y picks a or b (NaN when x or y is NaN).
    Pick {
        max: bool,
        x: u32,
        y: u32,
        a: u32,
        b: u32,
    },
}

/// A symbolic value while a derivative program is built: a constant or a register.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Sv {
    C(f64),
    R(u32),
}

/// A value and its derivative.
#[derive(Clone, Copy, Debug)]
pub(super) struct SDual {
    v: Sv,
    d: Sv,
}

pub(super) const S0: Sv = Sv::C(0.0);
pub(super) const S1: Sv = Sv::C(1.0);

/// True for ±2ᵏ in the normal range: multiplying by it only moves the
/// exponent, so it rounds nothing.
fn power_of_two(c: f64) -> bool {
    c.is_normal() && c.to_bits() & ((1u64 << 52) - 1) == 0
}

/// Emits instructions with constant folding; every rule below is the rule
/// num-dual's `Dual64` applies, so a program agrees with a dual-number pass
/// of the tape to rounding (and usually to the bit). One rule is ours: a
/// product scaled twice by powers of two, (x·2ʲ)·2ᵏ, is scaled once,
/// x·2ʲ⁺ᵏ (dropped when that is 1), which is the same number unless x·2ʲ
/// alone would overflow or leave the normal range (there the one scaling
/// is the more accurate). The chains come from the quotient rule on
/// constant divisors (p²/2 gives (p + p)·2·½·½).
pub(super) struct DBuilder {
    ins: Vec<DIns>,
    slots: [Option<u32>; VARIABLES.len()],
}

impl DBuilder {
    fn emit(&mut self, i: DIns) -> Sv {
        self.ins.push(i);
        Sv::R(self.ins.len() as u32 - 1)
    }

    fn slot(&mut self, s: usize) -> Sv {
        if let Some(r) = self.slots[s] {
            return Sv::R(r);
        }
        let v = self.emit(DIns::Slot(s as u8));
        if let Sv::R(r) = v {
            self.slots[s] = Some(r);
        }
        v
    }

    fn neg(&mut self, a: Sv) -> Sv {
        match a {
            Sv::C(x) => Sv::C(-x),
            Sv::R(r) => match self.ins[r as usize] {
                DIns::Neg(inner) => Sv::R(inner),
                _ => self.emit(DIns::Neg(r)),
            },
        }
    }

    fn add(&mut self, a: Sv, b: Sv) -> Sv {
        match (a, b) {
            (Sv::C(x), Sv::C(y)) => Sv::C(x + y),
            (Sv::C(z), o) | (o, Sv::C(z)) if z == 0.0 => o,
            _ => self.bin(DIns::Add, a, b),
        }
    }

    fn sub(&mut self, a: Sv, b: Sv) -> Sv {
        match (a, b) {
            (Sv::C(x), Sv::C(y)) => Sv::C(x - y),
            (o, Sv::C(z)) if z == 0.0 => o,
            (Sv::C(z), o) if z == 0.0 => self.neg(o),
            _ => self.bin(DIns::Sub, a, b),
        }
    }

    fn mul(&mut self, a: Sv, b: Sv) -> Sv {
        match (a, b) {
            (Sv::C(x), Sv::C(y)) => Sv::C(x * y),
            (Sv::C(z), _) | (_, Sv::C(z)) if z == 0.0 => S0,
            (Sv::C(u), o) | (o, Sv::C(u)) if u == 1.0 => o,
            (Sv::C(m), o) | (o, Sv::C(m)) if m == -1.0 => self.neg(o),
            (Sv::C(c), Sv::R(r)) | (Sv::R(r), Sv::C(c)) if power_of_two(c) => {
                match self.scaled(r) {
                    Some((x, k)) if power_of_two(c * k) => self.mul(Sv::R(x), Sv::C(c * k)),
                    _ => self.bin(DIns::Mul, a, b),
                }
            }
            _ => self.bin(DIns::Mul, a, b),
        }
    }

    /// (x, k) when register `r` is x·k with k a constant power of two.
    fn scaled(&self, r: u32) -> Option<(u32, f64)> {
        let DIns::Mul(a, b) = self.ins[r as usize] else {
            return None;
        };
        match (self.ins[a as usize], self.ins[b as usize]) {
            (_, DIns::Const(k)) if power_of_two(k) => Some((a, k)),
            (DIns::Const(k), _) if power_of_two(k) => Some((b, k)),
            _ => None,
        }
    }

    fn div(&mut self, a: Sv, b: Sv) -> Sv {
        match (a, b) {
            (Sv::C(x), Sv::C(y)) => Sv::C(x / y),
            (Sv::C(z), _) if z == 0.0 => S0,
            (o, Sv::C(u)) if u == 1.0 => o,
            _ => self.bin(DIns::Div, a, b),
        }
    }

    /// A two-register instruction, constants first put into registers.
    fn bin(&mut self, make: fn(u32, u32) -> DIns, a: Sv, b: Sv) -> Sv {
        let a = self.reg(a);
        let b = self.reg(b);
        self.emit(make(a, b))
    }

    fn reg(&mut self, a: Sv) -> u32 {
        match a {
            Sv::R(r) => r,
            Sv::C(c) => {
                self.ins.push(DIns::Const(c));
                self.ins.len() as u32 - 1
            }
        }
    }

    /// A plain function of a value (folded when the value is constant).
    fn f1(&mut self, f: Fun1, a: Sv) -> Sv {
        match a {
            Sv::C(x) => Sv::C(apply1::<f64>(f, x)),
            Sv::R(r) => self.emit(DIns::F1(f, r)),
        }
    }

    fn recip(&mut self, a: Sv) -> Sv {
        self.div(S1, a)
    }

    // Dual-number rules (num-dual 0.15, `Dual64`).

    fn d_mul(&mut self, a: SDual, b: SDual) -> SDual {
        let v = self.mul(a.v, b.v);
        let x = self.mul(a.d, b.v);
        let y = self.mul(b.d, a.v);
        SDual {
            v,
            d: self.add(x, y),
        }
    }

    fn d_div(&mut self, a: SDual, b: SDual) -> SDual {
        let inv = self.recip(b.v);
        let v = self.mul(a.v, inv);
        let x = self.mul(a.d, b.v);
        let y = self.mul(b.d, a.v);
        let num = self.sub(x, y);
        let d = self.mul(num, inv);
        SDual {
            v,
            d: self.mul(d, inv),
        }
    }

    /// f(a) with f'(a) = `f1`: the chain rule.
    fn chain(&mut self, a: SDual, v: Sv, f1: Sv) -> SDual {
        SDual {
            v,
            d: self.mul(a.d, f1),
        }
    }

    fn d_powi(&mut self, a: SDual, n: i32) -> SDual {
        match n {
            0 => SDual { v: S1, d: S0 },
            1 => a,
            2 => self.d_mul(a, a),
            _ => {
                let pow3 = match a.v {
                    Sv::C(x) => Sv::C(x.powi(n - 3)),
                    // x⁰ = 1 and x¹ = x exactly, as the power computes them
                    Sv::R(_) if n == 3 => S1,
                    Sv::R(_) if n == 4 => a.v,
                    Sv::R(r) => self.emit(DIns::PowI(r, n - 3)),
                };
                let aa = self.mul(pow3, a.v);
                let aaa = self.mul(aa, a.v);
                let v = self.mul(aaa, a.v);
                let f1 = self.mul(aaa, Sv::C(n as f64));
                self.chain(a, v, f1)
            }
        }
    }

    fn d_powf(&mut self, a: SDual, n: f64) -> SDual {
        if n == 0.0 {
            SDual { v: S1, d: S0 }
        } else if n == 1.0 {
            a
        } else if (n - 1.0 - 1.0).abs() < f64::EPSILON {
            self.d_mul(a, a)
        } else {
            let n3 = n - 1.0 - 1.0 - 1.0;
            let pow3 = match a.v {
                Sv::C(x) => Sv::C(x.powf(n3)),
                Sv::R(r) => self.emit(DIns::PowF(r, n3)),
            };
            let aa = self.mul(pow3, a.v);
            let aaa = self.mul(aa, a.v);
            let v = self.mul(aaa, a.v);
            let f1 = self.mul(aaa, Sv::C(n));
            self.chain(a, v, f1)
        }
    }

    fn d_sqrt(&mut self, a: SDual) -> SDual {
        let rec = self.recip(a.v);
        let v = self.f1(Fun1::Sqrt, a.v);
        let f1 = self.mul(v, rec);
        let f1 = self.mul(f1, Sv::C(0.5));
        self.chain(a, v, f1)
    }

    fn d_ln(&mut self, a: SDual) -> SDual {
        let rec = self.recip(a.v);
        let v = self.f1(Fun1::Ln, a.v);
        self.chain(a, v, rec)
    }

    fn d_exp(&mut self, a: SDual) -> SDual {
        let v = self.f1(Fun1::Exp, a.v);
        self.chain(a, v, v)
    }

    fn d_sin_cos(&mut self, a: SDual) -> (SDual, SDual) {
        let s = self.f1(Fun1::Sin, a.v);
        let c = self.f1(Fun1::Cos, a.v);
        let sin = self.chain(a, s, c);
        let ms = self.neg(s);
        let cos = self.chain(a, c, ms);
        (sin, cos)
    }

    fn d_sinh_cosh(&mut self, a: SDual) -> (SDual, SDual) {
        let s = self.f1(Fun1::Sinh, a.v);
        let c = self.f1(Fun1::Cosh, a.v);
        (self.chain(a, s, c), self.chain(a, c, s))
    }

    fn d_atan(&mut self, a: SDual) -> SDual {
        let aa = self.mul(a.v, a.v);
        let den = self.add(S1, aa);
        let rec = self.recip(den);
        let v = self.f1(Fun1::Atan, a.v);
        self.chain(a, v, rec)
    }

    fn d_asin_acos(&mut self, a: SDual, f: Fun1) -> SDual {
        let aa = self.mul(a.v, a.v);
        let den = self.sub(S1, aa);
        let rec = self.recip(den);
        let root = self.f1(Fun1::Sqrt, rec);
        let f1 = if f == Fun1::Acos {
            self.neg(root)
        } else {
            root
        };
        let v = self.f1(f, a.v);
        self.chain(a, v, f1)
    }

    fn d_fun1(&mut self, f: Fun1, a: SDual) -> SDual {
        match f {
            Fun1::Sin => self.d_sin_cos(a).0,
            Fun1::Cos => self.d_sin_cos(a).1,
            Fun1::Tan => {
                let (s, c) = self.d_sin_cos(a);
                self.d_div(s, c)
            }
            Fun1::Exp => self.d_exp(a),
            Fun1::Ln => self.d_ln(a),
            Fun1::Sqrt => self.d_sqrt(a),
            Fun1::Abs => {
                let v = self.f1(Fun1::Abs, a.v);
                let d = match (a.v, a.d) {
                    (_, Sv::C(z)) if z == 0.0 => S0,
                    (Sv::C(x), d) if x.is_sign_positive() => d,
                    (Sv::C(_), d) => self.neg(d),
                    (Sv::R(x), d) => {
                        let d = self.reg(d);
                        self.emit(DIns::SignTimes(x, d))
                    }
                };
                SDual { v, d }
            }
            Fun1::Sinh => self.d_sinh_cosh(a).0,
            Fun1::Cosh => self.d_sinh_cosh(a).1,
            Fun1::Tanh => {
                let (s, c) = self.d_sinh_cosh(a);
                self.d_div(s, c)
            }
            Fun1::Asin | Fun1::Acos => self.d_asin_acos(a, f),
            Fun1::Atan => self.d_atan(a),
            Fun1::Floor | Fun1::Ceil | Fun1::Round | Fun1::Signum => SDual {
                v: self.f1(f, a.v),
                d: S0,
            },
        }
    }

    fn d_pick(&mut self, a: SDual, b: SDual, max: bool) -> SDual {
        let first = |x: f64, y: f64| if max { x >= y } else { x <= y };
        match (a.v, b.v) {
            (Sv::C(x), Sv::C(y)) => {
                if x.is_nan() || y.is_nan() {
                    SDual {
                        v: Sv::C(f64::NAN),
                        d: Sv::C(f64::NAN),
                    }
                } else if first(x, y) {
                    a
                } else {
                    b
                }
            }
            _ => {
                let (x, y) = (self.reg(a.v), self.reg(b.v));
                let v = self.emit(DIns::Pick {
                    max,
                    x,
                    y,
                    a: x,
                    b: y,
                });
                let (da, db) = (self.reg(a.d), self.reg(b.d));
                let d = self.emit(DIns::Pick {
                    max,
                    x,
                    y,
                    a: da,
                    b: db,
                });
                SDual { v, d }
            }
        }
    }

    fn d_bin(&mut self, op: &Op, a: SDual, b: SDual) -> SDual {
        match *op {
            Op::Add => SDual {
                v: self.add(a.v, b.v),
                d: self.add(a.d, b.d),
            },
            Op::Sub => SDual {
                v: self.sub(a.v, b.v),
                d: self.sub(a.d, b.d),
            },
            Op::Mul => self.d_mul(a, b),
            Op::Div => self.d_div(a, b),
            Op::Rem => {
                // a − b·trunc(a/b), the quotient a constant of the dual pass
                let c = match (a.v, b.v) {
                    (Sv::C(x), Sv::C(y)) => Sv::C((x / y).trunc()),
                    _ => {
                        let (x, y) = (self.reg(a.v), self.reg(b.v));
                        self.emit(DIns::TruncDiv(x, y))
                    }
                };
                let bc = self.d_mul(b, SDual { v: c, d: S0 });
                SDual {
                    v: self.sub(a.v, bc.v),
                    d: self.sub(a.d, bc.d),
                }
            }
            Op::Pow => {
                let l = self.d_ln(a);
                let m = self.d_mul(l, b);
                self.d_exp(m)
            }
            Op::F2(Fun2::Atan2) => {
                let q = self.d_div(a, b);
                let at = self.d_atan(q);
                let v = match (a.v, b.v) {
                    (Sv::C(x), Sv::C(y)) => Sv::C(x.atan2(y)),
                    _ => {
                        let (x, y) = (self.reg(a.v), self.reg(b.v));
                        self.emit(DIns::Atan2(x, y))
                    }
                };
                SDual { v, d: at.d }
            }
            Op::F2(Fun2::Min) => self.d_pick(a, b, false),
            Op::F2(Fun2::Max) => self.d_pick(a, b, true),
            _ => SDual {
                v: Sv::C(f64::NAN),
                d: Sv::C(f64::NAN),
            },
        }
    }
}

/// How a register depends on one chosen input: not at all, affinely, or otherwise.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub(super) enum Degree {
    Zero,
    Affine,
    Other,
}

/// One partial derivative of a formula as a straight-line `f64` program:
/// the tape differentiated symbolically once (by num-dual's rules, so a run
/// agrees with a `Dual64` pass to rounding), parameters folded to constants,
/// constant subexpressions folded, and everything the derivative does not
/// need removed. For H = p²/2 − cos q, ∂H/∂q is the two instructions `q`,
/// `sin`. Evaluated in plain `f64` with registers on the stack.
#[derive(Clone, Debug)]
pub struct DerivativeProgram {
    pub(super) ins: Vec<DIns>,
    pub(super) constant: Option<f64>,
    /// For each instruction, whether it is the same in every lane (reads
    /// neither q nor p), for [`DerivativeProgram::eval_lanes`].
    pub(super) uniform: Vec<bool>,
    /// The same when t too differs from lane to lane (reads none of q, p,
    /// t), for [`DerivativeProgram::eval_lanes_at`].
    pub(super) fixed: Vec<bool>,
}

impl DerivativeProgram {
    fn build(f: &Formula, var: usize, params: &[f64]) -> DerivativeProgram {
        let mut b = DBuilder {
            ins: Vec::new(),
            slots: [None; VARIABLES.len()],
        };
        let mut stack: Vec<SDual> = Vec::with_capacity(f.max_depth.max(1));
        for op in &f.ops {
            let item = match *op {
                Op::Const(c) => SDual { v: Sv::C(c), d: S0 },
                Op::Slot(s) => {
                    let s = s as usize;
                    if s < FIRST_PARAM_SLOT {
                        SDual {
                            v: b.slot(s),
                            d: if s == var { S1 } else { S0 },
                        }
                    } else {
                        let v = params.get(s - FIRST_PARAM_SLOT).copied().unwrap_or(0.0);
                        SDual { v: Sv::C(v), d: S0 }
                    }
                }
                Op::Neg | Op::PowI(_) | Op::PowF(_) | Op::F1(_) => {
                    let Some(a) = stack.pop() else {
                        return DerivativeProgram::nan();
                    };
                    match *op {
                        Op::Neg => SDual {
                            v: b.neg(a.v),
                            d: b.neg(a.d),
                        },
                        Op::PowI(n) => b.d_powi(a, n),
                        Op::PowF(c) if c == 0.5 => b.d_sqrt(a),
                        Op::PowF(c) => b.d_powf(a, c),
                        Op::F1(g) => b.d_fun1(g, a),
                        _ => a,
                    }
                }
                _ => {
                    let (Some(y), Some(x)) = (stack.pop(), stack.pop()) else {
                        return DerivativeProgram::nan();
                    };
                    b.d_bin(op, x, y)
                }
            };
            stack.push(item);
        }
        let out = match stack.first() {
            Some(top) => top.d,
            None => return DerivativeProgram::nan(),
        };
        match out {
            Sv::C(c) => DerivativeProgram {
                ins: Vec::new(),
                constant: Some(c),
                uniform: Vec::new(),
                fixed: Vec::new(),
            },
            Sv::R(r) => {
                let ins = keep_needed(&b.ins[..=r as usize]);
                DerivativeProgram {
                    uniform: uniform_instructions(&ins, &[SLOT_Q, SLOT_P]),
                    fixed: uniform_instructions(&ins, &[SLOT_Q, SLOT_P, SLOT_T]),
                    ins,
                    constant: None,
                }
            }
        }
    }

    fn nan() -> DerivativeProgram {
        DerivativeProgram {
            ins: Vec::new(),
            constant: Some(f64::NAN),
            uniform: Vec::new(),
            fixed: Vec::new(),
        }
    }

    /// The value when the derivative does not depend on q, p or t.
    pub fn constant(&self) -> Option<f64> {
        self.constant
    }

    /// Number of instructions (0 for a constant).
    pub fn len(&self) -> usize {
        self.ins.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ins.is_empty()
    }

    /// True when the program reads `slot` (q, p or t).
    pub fn reads(&self, slot: usize) -> bool {
        self.ins
            .iter()
            .any(|i| matches!(i, DIns::Slot(s) if *s as usize == slot))
    }

    /// True when the derivative is an affine function of `slot`'s value (as
    /// the program is written, e.g. ∂H/∂p of a kinetic energy quadratic in p).
    pub fn is_affine_in(&self, slot: usize) -> bool {
        if self.constant.is_some() {
            return true;
        }
        let mut deg: Vec<Degree> = Vec::with_capacity(self.ins.len());
        for i in &self.ins {
            let g = |r: &u32| deg[*r as usize];
            let d = match i {
                DIns::Slot(s) if *s as usize == slot => Degree::Affine,
                DIns::Slot(_) | DIns::Const(_) => Degree::Zero,
                DIns::Neg(a) => g(a),
                DIns::Add(a, b) | DIns::Sub(a, b) => g(a).max(g(b)),
                DIns::Mul(a, b) => match (g(a), g(b)) {
                    (Degree::Zero, x) | (x, Degree::Zero) => x,
                    _ => Degree::Other,
                },
                DIns::Div(a, b) if g(b) == Degree::Zero => g(a),
                DIns::Div(a, b) | DIns::TruncDiv(a, b) | DIns::Atan2(a, b) => {
                    g(a).max(g(b)).max(Degree::Other)
                }
                DIns::F1(_, a) | DIns::PowI(a, _) | DIns::PowF(a, _) => {
                    if g(a) == Degree::Zero {
                        Degree::Zero
                    } else {
                        Degree::Other
                    }
                }
                DIns::SignTimes(x, a) => {
                    if g(x) == Degree::Zero {
                        g(a)
                    } else {
                        Degree::Other
                    }
                }
                DIns::Pick { x, y, a, b, .. } => {
                    if g(x) == Degree::Zero && g(y) == Degree::Zero {
                        g(a).max(g(b))
                    } else {
                        Degree::Other
                    }
                }
            };
            deg.push(d);
        }
        deg.last().is_none_or(|d| *d != Degree::Other)
    }

    /// The derivative at (q, p, t).
    #[inline]
    pub fn eval(&self, q: f64, p: f64, t: f64) -> f64 {
        if let Some(c) = self.constant {
            return c;
        }
        let n = self.ins.len();
        if n <= 8 {
            run_derivative::<8>(&self.ins, [q, p, t])
        } else if n <= 32 {
            run_derivative::<32>(&self.ins, [q, p, t])
        } else if n <= 128 {
            run_derivative::<128>(&self.ins, [q, p, t])
        } else {
            let mut regs = vec![0.0; n];
            run_derivative_in(&self.ins, [q, p, t], &mut regs)
        }
    }
}

/// The instructions the last one depends on, renumbered.
pub(super) fn keep_needed(ins: &[DIns]) -> Vec<DIns> {
    let n = ins.len();
    let mut live = vec![false; n];
    if let Some(l) = live.last_mut() {
        *l = true;
    }
    for i in (0..n).rev() {
        if !live[i] {
            continue;
        }
        let mut mark = |r: u32| live[r as usize] = true;
        match ins[i] {
            DIns::Slot(_) | DIns::Const(_) => {}
            DIns::Neg(a) | DIns::F1(_, a) | DIns::PowI(a, _) | DIns::PowF(a, _) => mark(a),
            DIns::Add(a, b)
            | DIns::Sub(a, b)
            | DIns::Mul(a, b)
            | DIns::Div(a, b)
            | DIns::TruncDiv(a, b)
            | DIns::Atan2(a, b)
            | DIns::SignTimes(a, b) => {
                mark(a);
                mark(b);
            }
            DIns::Pick { x, y, a, b, .. } => {
                mark(x);
                mark(y);
                mark(a);
                mark(b);
            }
        }
    }
    let mut index = vec![0u32; n];
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        if !live[i] {
            continue;
        }
        let m = |r: u32| index[r as usize];
        let renumbered = match ins[i] {
            DIns::Slot(s) => DIns::Slot(s),
            DIns::Const(c) => DIns::Const(c),
            DIns::Neg(a) => DIns::Neg(m(a)),
            DIns::Add(a, b) => DIns::Add(m(a), m(b)),
            DIns::Sub(a, b) => DIns::Sub(m(a), m(b)),
            DIns::Mul(a, b) => DIns::Mul(m(a), m(b)),
            DIns::Div(a, b) => DIns::Div(m(a), m(b)),
            DIns::F1(f, a) => DIns::F1(f, m(a)),
            DIns::PowI(a, k) => DIns::PowI(m(a), k),
            DIns::PowF(a, c) => DIns::PowF(m(a), c),
            DIns::TruncDiv(a, b) => DIns::TruncDiv(m(a), m(b)),
            DIns::Atan2(a, b) => DIns::Atan2(m(a), m(b)),
            DIns::SignTimes(a, b) => DIns::SignTimes(m(a), m(b)),
            DIns::Pick { max, x, y, a, b } => DIns::Pick {
                max,
                x: m(x),
                y: m(y),
                a: m(a),
                b: m(b),
            },
        };
        index[i] = out.len() as u32;
        out.push(renumbered);
    }
    out
}

#[inline]
pub(super) fn run_derivative<const N: usize>(ins: &[DIns], inputs: [f64; VARIABLES.len()]) -> f64 {
    let mut regs = [0.0f64; N];
    run_derivative_in(ins, inputs, &mut regs)
}

/// One point: `r` holds at least one register per instruction.
#[inline]
pub(super) fn run_derivative_in(
    ins: &[DIns],
    inputs: [f64; VARIABLES.len()],
    r: &mut [f64],
) -> f64 {
    if ins.is_empty() || r.len() < ins.len() {
        return f64::NAN;
    }
    run_instructions(ins, &mut OnePoint { r, inputs });
    r[ins.len() - 1]
}

/// Where a derivative program's instructions write: register `i` for
/// instruction `i`, holding one value ([`OnePoint`]) or a row of lanes
/// ([`Lanes`]). [`run_instructions`] is the one meaning of every
/// instruction; a bank only says how a value is applied over its registers.
pub(super) trait Bank {
    /// Register `i` = input `slot` (q, p or t).
    fn slot(&mut self, i: usize, slot: u8);
    /// Register `i` = the constant `c`.
    fn constant(&mut self, i: usize, c: f64);
    /// Register `i` = f(register a).
    fn map1(&mut self, i: usize, a: u32, f: impl Fn(f64) -> f64);
    /// Register `i` = f(register a, register b).
    fn map2(&mut self, i: usize, a: u32, b: u32, f: impl Fn(f64, f64) -> f64);
    /// Register `i` = f(registers r[0..4]).
    fn map4(&mut self, i: usize, r: [u32; 4], f: impl Fn([f64; 4]) -> f64);
}

/// x^k by repeated squaring, the same products in the same order as the
/// runtime's `powi` (so the same bits), but inlined, so that a lane pass
/// over it vectorises instead of calling out once per lane.
#[inline(always)]
fn powi_inline(x: f64, k: i32) -> f64 {
    let mut n = k.unsigned_abs();
    let mut a = x;
    let mut r = if n & 1 != 0 { x } else { 1.0 };
    loop {
        n >>= 1;
        if n == 0 {
            break;
        }
        a *= a;
        if n & 1 != 0 {
            r *= a;
        }
    }
    if k < 0 { 1.0 / r } else { r }
}

/// Every instruction of a program, in order, on `bank`.
#[inline(always)]
pub(super) fn run_instructions<B: Bank>(ins: &[DIns], bank: &mut B) {
    for (i, op) in ins.iter().enumerate() {
        match *op {
            DIns::Slot(s) => bank.slot(i, s),
            DIns::Const(c) => bank.constant(i, c),
            DIns::Neg(a) => bank.map1(i, a, |x| -x),
            DIns::Add(a, b) => bank.map2(i, a, b, |x, y| x + y),
            DIns::Sub(a, b) => bank.map2(i, a, b, |x, y| x - y),
            DIns::Mul(a, b) => bank.map2(i, a, b, |x, y| x * y),
            DIns::Div(a, b) => bank.map2(i, a, b, |x, y| x / y),
            DIns::F1(f, a) => bank.map1(i, a, |x| apply1::<f64>(f, x)),
            DIns::PowI(a, k) => bank.map1(i, a, |x| powi_inline(x, k)),
            DIns::PowF(a, c) => bank.map1(i, a, |x| x.powf(c)),
            DIns::TruncDiv(a, b) => bank.map2(i, a, b, |x, y| (x / y).trunc()),
            DIns::Atan2(a, b) => bank.map2(i, a, b, f64::atan2),
            DIns::SignTimes(x, a) => {
                bank.map2(i, x, a, |x, a| if x.is_sign_positive() { a } else { -a })
            }
            DIns::Pick { max, x, y, a, b } => bank.map4(i, [x, y, a, b], |[x, y, a, b]| {
                if x.is_nan() || y.is_nan() {
                    f64::NAN
                } else if (max && x >= y) || (!max && x <= y) {
                    a
                } else {
                    b
                }
            }),
        }
    }
}

/// The registers of one evaluation at one point.
pub(super) struct OnePoint<'a> {
    r: &'a mut [f64],
    inputs: [f64; VARIABLES.len()],
}

impl Bank for OnePoint<'_> {
    #[inline(always)]
    fn slot(&mut self, i: usize, slot: u8) {
        self.r[i] = self.inputs[slot as usize];
    }
    #[inline(always)]
    fn constant(&mut self, i: usize, c: f64) {
        self.r[i] = c;
    }
    #[inline(always)]
    fn map1(&mut self, i: usize, a: u32, f: impl Fn(f64) -> f64) {
        self.r[i] = f(self.r[a as usize]);
    }
    #[inline(always)]
    fn map2(&mut self, i: usize, a: u32, b: u32, f: impl Fn(f64, f64) -> f64) {
        self.r[i] = f(self.r[a as usize], self.r[b as usize]);
    }
    #[inline(always)]
    fn map4(&mut self, i: usize, r: [u32; 4], f: impl Fn([f64; 4]) -> f64) {
        self.r[i] = f(r.map(|k| self.r[k as usize]));
    }
}

impl Formula {
    /// ∂H/∂(slot) for slot q, p or t as a [`DerivativeProgram`] with these
    /// parameter values folded in. Built once; each evaluation is plain `f64`.
    pub fn derivative_program(&self, slot: usize, params: &[f64]) -> DerivativeProgram {
        if slot >= FIRST_PARAM_SLOT {
            return DerivativeProgram::nan();
        }
        DerivativeProgram::build(self, slot, params)
    }
}

#[cfg(test)]
mod powi_tests {
    use super::powi_inline;

    /// The inlined power is the runtime's `powi` to the bit (the reference),
    /// for every small exponent and values across many scales.
    #[test]
    fn inlined_power_is_the_runtime_power() {
        let mut x = 0.37_f64;
        for step in 0..2000 {
            x = (x * 7.919 + 0.123).fract() * 10f64.powi(step % 9 - 4);
            let x = if step % 3 == 0 { -x } else { x };
            for k in -12..=12 {
                let (got, want) = (powi_inline(x, k), x.powi(k));
                assert!(
                    got.to_bits() == want.to_bits() || (got.is_nan() && want.is_nan()),
                    "{x}^{k}: {got:e} vs {want:e}"
                );
            }
        }
        for x in [
            0.0,
            -0.0,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
            1e300,
            -1e-300,
        ] {
            for k in [-3, -2, -1, 0, 1, 2, 3, 4] {
                let (got, want) = (powi_inline(x, k), x.powi(k));
                assert!(
                    got.to_bits() == want.to_bits() || (got.is_nan() && want.is_nan()),
                    "{x}^{k}: {got:e} vs {want:e}"
                );
            }
        }
    }
}
