//! The tape evaluator: one pass over the postfix operations in `f64` or in
//! num-dual's dual numbers, and the forward rounding-error bound.

use super::*;
use num_dual::DualNum;

impl Formula {
    /// Evaluate with slot values `slots` (q, p, t, parameters...). Generic over
    /// `f64` and num-dual's dual numbers; the same tape serves both.
    pub fn eval<D: DualNum<Primitive = f64> + Copy>(&self, slots: &[D]) -> D {
        if self.max_depth <= 8 {
            self.eval_in::<D, 8>(slots)
        } else if self.max_depth <= 32 {
            self.eval_in::<D, 32>(slots)
        } else {
            let mut stack = vec![D::zero(); self.max_depth];
            run_tape(&self.ops, slots, &mut stack)
        }
    }

    fn eval_in<D: DualNum<Primitive = f64> + Copy, const N: usize>(&self, slots: &[D]) -> D {
        let mut stack = [D::zero(); N];
        run_tape(&self.ops, slots, &mut stack)
    }

    /// Evaluate in plain `f64`.
    pub fn eval_f64(&self, slots: &[f64]) -> f64 {
        self.eval::<f64>(slots)
    }

    /// H at `slots` together with a first-order bound on its rounding error:
    /// each operation adds one rounding unit of its result, and the errors of
    /// its operands carried through by the operation's exact partial
    /// derivatives (forward error analysis; N. J. Higham, *Accuracy and
    /// Stability of Numerical Algorithms*, 2nd ed., SIAM 2002, ch. 3). Used to
    /// tell an H that is constant up to rounding (cosh(q)^2 - sinh(q)^2) from one
    /// that merely has a small scale. The bound is infinite where a derivative is.
    pub fn eval_with_rounding(&self, slots: &[f64]) -> (f64, f64) {
        use num_dual::Dual64;
        const U: f64 = f64::EPSILON;
        let mut st: Vec<(f64, f64)> = Vec::with_capacity(self.max_depth);
        // values in f64 exactly as the tape computes them; partial derivatives
        // from dual numbers
        fn step<D: DualNum<Primitive = f64> + Copy>(op: Op, a: D, b: D) -> D {
            match op {
                Op::Neg => -a,
                Op::PowI(n) => a.powi(n),
                Op::PowF(c) => powf(a, c),
                Op::F1(f) => apply1(f, a),
                _ => apply2(&op, a, b),
            }
        }
        for &op in &self.ops {
            match op {
                Op::Const(c) => st.push((c, 0.5 * U * c.abs())),
                Op::Slot(k) => st.push((slots.get(k as usize).copied().unwrap_or(f64::NAN), 0.0)),
                Op::Neg | Op::PowI(_) | Op::PowF(_) | Op::F1(_) => {
                    let (x, e) = st.pop().unwrap_or((f64::NAN, 0.0));
                    let v = step(op, x, 0.0);
                    let d = step(op, Dual64::new(x, 1.0), Dual64::from_re(0.0)).eps;
                    st.push((v, d.abs() * e + U * v.abs()));
                }
                _ => {
                    let (b, eb) = st.pop().unwrap_or((f64::NAN, 0.0));
                    let (a, ea) = st.pop().unwrap_or((f64::NAN, 0.0));
                    let v = step(op, a, b);
                    let da = step(op, Dual64::new(a, 1.0), Dual64::from_re(b)).eps;
                    let db = step(op, Dual64::from_re(a), Dual64::new(b, 1.0)).eps;
                    st.push((v, da.abs() * ea + db.abs() * eb + U * v.abs()));
                }
            }
        }
        st.first().copied().unwrap_or((f64::NAN, f64::NAN))
    }
}

/// Run the tape on a caller-provided stack (at least `max_depth` long).
pub(super) fn run_tape<D: DualNum<Primitive = f64> + Copy>(
    ops: &[Op],
    slots: &[D],
    stack: &mut [D],
) -> D {
    let mut sp = 0usize;
    for op in ops {
        match *op {
            Op::Const(c) => {
                stack[sp] = D::from(c);
                sp += 1;
            }
            Op::Slot(s) => {
                stack[sp] = slots[s as usize];
                sp += 1;
            }
            Op::Neg => stack[sp - 1] = -stack[sp - 1],
            Op::PowI(n) => stack[sp - 1] = stack[sp - 1].powi(n),
            Op::PowF(c) => stack[sp - 1] = powf(stack[sp - 1], c),
            Op::F1(f) => stack[sp - 1] = apply1(f, stack[sp - 1]),
            Op::Add | Op::Sub | Op::Mul | Op::Div | Op::Rem | Op::Pow | Op::F2(_) => {
                let b = stack[sp - 1];
                let a = stack[sp - 2];
                sp -= 1;
                stack[sp - 1] = apply2(op, a, b);
            }
        }
    }
    stack[0]
}

#[inline]
pub(super) fn powf<D: DualNum<Primitive = f64> + Copy>(x: D, c: f64) -> D {
    if c == 0.5 { x.sqrt() } else { x.powf(c) }
}

#[inline]
pub(super) fn apply1<D: DualNum<Primitive = f64> + Copy>(f: Fun1, x: D) -> D {
    match f {
        Fun1::Sin => x.sin(),
        Fun1::Cos => x.cos(),
        Fun1::Tan => x.tan(),
        Fun1::Exp => x.exp(),
        Fun1::Ln => x.ln(),
        Fun1::Sqrt => x.sqrt(),
        Fun1::Abs => x.abs(),
        Fun1::Sinh => x.sinh(),
        Fun1::Cosh => x.cosh(),
        Fun1::Tanh => x.tanh(),
        Fun1::Asin => x.asin(),
        Fun1::Acos => x.acos(),
        Fun1::Atan => x.atan(),
        Fun1::Floor => D::from(x.re().floor()),
        Fun1::Ceil => D::from(x.re().ceil()),
        Fun1::Round => D::from(x.re().round()),
        Fun1::Signum => {
            let r = x.re();
            D::from(if r > 0.0 {
                1.0
            } else if r < 0.0 {
                -1.0
            } else if r == 0.0 {
                0.0
            } else {
                f64::NAN
            })
        }
    }
}

#[inline]
pub(super) fn apply2<D: DualNum<Primitive = f64> + Copy>(op: &Op, a: D, b: D) -> D {
    match *op {
        Op::Add => a + b,
        Op::Sub => a - b,
        Op::Mul => a * b,
        Op::Div => a / b,
        // a − b·trunc(a/b): derivative 1 in a and −trunc(a/b) in b between jumps.
        Op::Rem => a - b * D::from((a.re() / b.re()).trunc()),
        Op::Pow => a.powd(b),
        Op::F2(Fun2::Atan2) => a.atan2(b),
        Op::F2(Fun2::Min) => pick(a, b, |x, y| x <= y),
        Op::F2(Fun2::Max) => pick(a, b, |x, y| x >= y),
        _ => D::from(f64::NAN),
    }
}

#[inline]
pub(super) fn pick<D: DualNum<Primitive = f64> + Copy>(
    a: D,
    b: D,
    first: impl Fn(f64, f64) -> bool,
) -> D {
    let (x, y) = (a.re(), b.re());
    if x.is_nan() || y.is_nan() {
        D::from(f64::NAN)
    } else if first(x, y) {
        a
    } else {
        b
    }
}
