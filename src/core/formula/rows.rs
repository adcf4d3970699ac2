//! The row evaluator: a formula specialised to fixed t and parameters,
//! run over many (q, p) points at once.

use super::*;

impl Formula {
    /// A program for fast evaluation over many points at fixed t and
    /// parameter values, with everything that does not depend on q or p folded.
    pub fn specialize(&self, t: f64, params: &[f64]) -> RowProgram {
        RowProgram::build(self, t, params)
    }
}

/// Number of points evaluated together by a [`RowProgram`].
pub const CHUNK: usize = 256;

#[derive(Clone, Copy, Debug)]
pub(super) enum Bin {
    Add,
    Sub,
    Mul,
    Div,
    Rem,
    Pow,
    F2(Fun2),
}

/// An operation on the top of the stack alone (a constant operand folded in).
#[derive(Clone, Copy, Debug)]
pub(super) enum Un {
    Neg,
    PowI(i32),
    PowF(f64),
    F1(Fun1),
    /// top ∘ c
    VC(Bin, f64),
    /// c ∘ top
    CV(Bin, f64),
}

#[derive(Clone, Copy, Debug)]
pub(super) enum ROp {
    Q,
    P,
    Fill(f64),
    Un(Un),
    /// Push q with `Un` applied, in one pass.
    QUn(Un),
    /// Two constant-operand arithmetic steps on the top, in one pass.
    Ar2(Ar, Ar),
    /// top = top ∘ Un(q) for ∘ in {+, −, ×}: a `QUn` and the `VV` after it, in one pass.
    QUnInto(Un, Bin),
    VV(Bin),
}

/// Arithmetic with a constant, as the IEEE operation it is.
#[derive(Clone, Copy, Debug)]
pub(super) enum Ar {
    Add(f64),
    /// x − c
    Sub(f64),
    /// c − x
    RSub(f64),
    Mul(f64),
}

pub(super) fn as_ar(u: Un) -> Option<Ar> {
    match u {
        Un::VC(Bin::Add, c) | Un::CV(Bin::Add, c) => Some(Ar::Add(c)),
        Un::VC(Bin::Mul, c) | Un::CV(Bin::Mul, c) => Some(Ar::Mul(c)),
        Un::VC(Bin::Sub, c) => Some(Ar::Sub(c)),
        Un::CV(Bin::Sub, c) => Some(Ar::RSub(c)),
        _ => None,
    }
}

/// A formula specialised to fixed t and parameters, evaluated over many
/// (q, p) points at once: one dispatch per operation per chunk of points.
/// Along a row (`eval_row`) p is fixed too, so everything that depends on p
/// alone is folded to a constant once per row; a push of q followed by an
/// operation on it runs as one pass; division by a power of two runs as the
/// (exact, identical) multiplication by its reciprocal.
#[derive(Clone, Debug)]
pub struct RowProgram {
    /// The tape before fusion (what `bind_p` folds).
    ops: Vec<ROp>,
    /// The same, fused, for `eval_points`.
    fused: Vec<ROp>,
    depth: usize,
    constant: Option<f64>,
}

impl RowProgram {
    fn build(f: &Formula, t: f64, params: &[f64]) -> RowProgram {
        // Each stack entry: Ok(constant) or Err(()) for "varies with q or p".
        let mut stack: Vec<Result<f64, ()>> = Vec::new();
        let mut ops = Vec::new();
        let mut depth = 0usize;
        let mut vdepth = 0usize;
        let slot_const = |s: usize| -> Option<f64> {
            match s {
                SLOT_Q | SLOT_P => None,
                SLOT_T => Some(t),
                k => Some(
                    params
                        .get(k - FIRST_PARAM_SLOT)
                        .copied()
                        .unwrap_or(f64::NAN),
                ),
            }
        };
        let fold = |op: Op, args: &[f64]| -> f64 {
            let mut tape: Vec<Op> = args.iter().map(|&v| Op::Const(v)).collect();
            tape.push(op);
            let mut st = [0.0; 2];
            run_tape(&tape, &[], &mut st)
        };
        for &op in &f.ops {
            match op {
                Op::Const(c) => stack.push(Ok(c)),
                Op::Slot(s) => match slot_const(s as usize) {
                    Some(c) => stack.push(Ok(c)),
                    None => {
                        ops.push(if s as usize == SLOT_Q { ROp::Q } else { ROp::P });
                        stack.push(Err(()));
                        vdepth += 1;
                    }
                },
                Op::Neg | Op::PowI(_) | Op::PowF(_) | Op::F1(_) => {
                    let a = stack.pop().unwrap_or(Ok(f64::NAN));
                    match a {
                        Ok(c) => stack.push(Ok(fold(op, &[c]))),
                        Err(()) => {
                            ops.push(ROp::Un(match op {
                                Op::Neg => Un::Neg,
                                Op::PowI(n) => Un::PowI(n),
                                Op::PowF(c) => Un::PowF(c),
                                Op::F1(g) => Un::F1(g),
                                _ => unreachable!(),
                            }));
                            stack.push(Err(()));
                        }
                    }
                }
                Op::Add | Op::Sub | Op::Mul | Op::Div | Op::Rem | Op::Pow | Op::F2(_) => {
                    let b = stack.pop().unwrap_or(Ok(f64::NAN));
                    let a = stack.pop().unwrap_or(Ok(f64::NAN));
                    let bin = match op {
                        Op::Add => Bin::Add,
                        Op::Sub => Bin::Sub,
                        Op::Mul => Bin::Mul,
                        Op::Div => Bin::Div,
                        Op::Rem => Bin::Rem,
                        Op::Pow => Bin::Pow,
                        Op::F2(g) => Bin::F2(g),
                        _ => unreachable!(),
                    };
                    match (a, b) {
                        (Ok(x), Ok(y)) => stack.push(Ok(fold(op, &[x, y]))),
                        (Err(()), Ok(y)) => {
                            ops.push(ROp::Un(with_constant_right(bin, y)));
                            stack.push(Err(()));
                        }
                        (Ok(x), Err(())) => {
                            ops.push(ROp::Un(Un::CV(bin, x)));
                            stack.push(Err(()));
                        }
                        (Err(()), Err(())) => {
                            ops.push(ROp::VV(bin));
                            stack.push(Err(()));
                            vdepth -= 1;
                        }
                    }
                }
            }
            depth = depth.max(vdepth);
        }
        let constant = match stack.first() {
            Some(Ok(c)) => Some(*c),
            _ => None,
        };
        if let Some(c) = constant {
            ops = vec![ROp::Fill(c)];
            depth = 1;
        }
        let mut fused = ops.clone();
        fuse(&mut fused);
        RowProgram {
            ops,
            fused,
            depth: depth.max(1),
            constant,
        }
    }

    /// The value when H does not depend on q or p at all.
    pub fn constant(&self) -> Option<f64> {
        self.constant
    }

    /// H at the points (q[i], p[i]), written to `out[i]`. All three slices have one length.
    pub fn eval_points(&self, q: &[f64], p: &[f64], out: &mut [f64]) {
        let n = q.len().min(p.len()).min(out.len());
        let mut stack = vec![[0.0f64; CHUNK]; self.depth];
        let mut start = 0;
        while start < n {
            let m = (n - start).min(CHUNK);
            eval_chunk(
                &self.fused,
                &q[start..start + m],
                &p[start..start + m],
                &mut stack,
                &mut out[start..start + m],
            );
            start += m;
        }
    }

    /// H along a row of constant p: q values `q`, written to `out`.
    pub fn eval_row(&self, q: &[f64], p: f64, out: &mut [f64]) {
        let n = q.len().min(out.len());
        let (ops, depth) = self.bind_p(p);
        let pv = [p; CHUNK];
        let mut stack = vec![[0.0f64; CHUNK]; depth];
        let mut start = 0;
        while start < n {
            let m = (n - start).min(CHUNK);
            eval_chunk(
                &ops,
                &q[start..start + m],
                &pv[..m],
                &mut stack,
                &mut out[start..start + m],
            );
            start += m;
        }
    }

    /// The program with p fixed: operations on p alone become constants.
    fn bind_p(&self, p: f64) -> (Vec<ROp>, usize) {
        let mut out = Vec::with_capacity(self.ops.len());
        // Some(value) for a constant entry, None for one that varies with q.
        let mut st: Vec<Option<f64>> = Vec::with_capacity(self.depth);
        let (mut depth, mut vdepth) = (0usize, 0usize);
        for &op in &self.ops {
            match op {
                ROp::P => st.push(Some(p)),
                ROp::Fill(c) => st.push(Some(c)),
                ROp::Q | ROp::QUn(_) => {
                    out.push(op);
                    st.push(None);
                    vdepth += 1;
                }
                // Made by `fuse`, which never runs on `self.ops`.
                ROp::Ar2(..) | ROp::QUnInto(..) => out.push(op),
                ROp::Un(u) => match st.last_mut() {
                    Some(Some(x)) => {
                        let mut a = [*x];
                        unary(u, InPlace(&mut a));
                        *x = a[0];
                    }
                    _ => out.push(op),
                },
                ROp::VV(b) => {
                    let y = st.pop().unwrap_or(Some(f64::NAN));
                    let x = st.pop().unwrap_or(Some(f64::NAN));
                    match (x, y) {
                        (Some(x), Some(y)) => {
                            let mut a = [x];
                            bin_vv(b, &mut a, &[y]);
                            st.push(Some(a[0]));
                        }
                        (None, Some(y)) => {
                            out.push(ROp::Un(with_constant_right(b, y)));
                            st.push(None);
                        }
                        (Some(x), None) => {
                            out.push(ROp::Un(Un::CV(b, x)));
                            st.push(None);
                        }
                        (None, None) => {
                            out.push(op);
                            st.push(None);
                            vdepth = vdepth.saturating_sub(1);
                        }
                    }
                }
            }
            depth = depth.max(vdepth);
        }
        if let Some(Some(c)) = st.first() {
            out = vec![ROp::Fill(*c)];
            depth = 1;
        }
        fuse(&mut out);
        (out, depth.max(1))
    }
}

/// `top ∘ c` as a single-operand operation: integer and fractional powers get
/// their fast forms, division by a power of two becomes multiplication by its
/// exact reciprocal (the same result, bit for bit).
pub(super) fn with_constant_right(b: Bin, c: f64) -> Un {
    match b {
        Bin::Pow if c.fract() == 0.0 && c.abs() <= MAX_FAST_POWER => Un::PowI(c as i32),
        Bin::Pow => Un::PowF(c),
        Bin::Div if exact_reciprocal(c) => Un::VC(Bin::Mul, 1.0 / c),
        _ => Un::VC(b, c),
    }
}

/// True when c is a power of two whose reciprocal is a normal number.
pub(super) fn exact_reciprocal(c: f64) -> bool {
    const MANTISSA: u64 = (1 << 52) - 1;
    c.is_normal() && c.to_bits() & MANTISSA == 0 && (1.0 / c).is_normal()
}

/// Merge neighbouring operations into single passes: a push of q with the
/// operation after it, two constant-operand arithmetic steps, and a pushed
/// function of q with the +, − or × that consumes it.
pub(super) fn fuse(ops: &mut Vec<ROp>) {
    fuse_pairs(ops, |a, b| match (a, b) {
        (ROp::Q, ROp::Un(u)) => Some(ROp::QUn(u)),
        _ => None,
    });
    fuse_pairs(ops, |a, b| match (a, b) {
        (ROp::Un(x), ROp::Un(y)) => Some(ROp::Ar2(as_ar(x)?, as_ar(y)?)),
        _ => None,
    });
    fuse_pairs(ops, |a, b| match (a, b) {
        (ROp::QUn(u), ROp::VV(bin @ (Bin::Add | Bin::Sub | Bin::Mul))) => {
            Some(ROp::QUnInto(u, bin))
        }
        _ => None,
    });
}

pub(super) fn fuse_pairs(ops: &mut Vec<ROp>, merge: impl Fn(ROp, ROp) -> Option<ROp>) {
    let mut out = Vec::with_capacity(ops.len());
    let mut k = 0;
    while k < ops.len() {
        let merged = ops.get(k + 1).and_then(|&next| merge(ops[k], next));
        match merged {
            Some(op) => {
                out.push(op);
                k += 2;
            }
            None => {
                out.push(ops[k]);
                k += 1;
            }
        }
    }
    *ops = out;
}

pub(super) fn eval_chunk(
    ops: &[ROp],
    q: &[f64],
    p: &[f64],
    stack: &mut [[f64; CHUNK]],
    out: &mut [f64],
) {
    let m = q.len();
    let mut sp = 0usize;
    for op in ops {
        match *op {
            ROp::Q => {
                stack[sp][..m].copy_from_slice(q);
                sp += 1;
            }
            ROp::P => {
                stack[sp][..m].copy_from_slice(&p[..m]);
                sp += 1;
            }
            ROp::Fill(c) => {
                stack[sp][..m].fill(c);
                sp += 1;
            }
            ROp::Un(u) => unary(u, InPlace(&mut stack[sp - 1][..m])),
            ROp::QUn(u) => {
                unary(u, MapFrom(q, &mut stack[sp][..m]));
                sp += 1;
            }
            ROp::Ar2(a, b) => arith2(a, b, InPlace(&mut stack[sp - 1][..m])),
            ROp::QUnInto(u, b) => {
                let top = &mut stack[sp - 1][..m];
                match b {
                    Bin::Add => unary(u, CombineFrom::<ADD>(q, top)),
                    Bin::Sub => unary(u, CombineFrom::<SUB>(q, top)),
                    _ => unary(u, CombineFrom::<MUL>(q, top)),
                }
            }
            ROp::VV(b) => {
                let (lo, hi) = stack.split_at_mut(sp - 1);
                let a = &mut lo[sp - 2][..m];
                let bb = &hi[0][..m];
                bin_vv(b, a, bb);
                sp -= 1;
            }
        }
    }
    out[..m].copy_from_slice(&stack[0][..m]);
}

/// Where a single-operand operation writes: over its input, or from a source slice.
pub(super) trait Sink {
    fn run<F: Fn(f64) -> f64>(self, f: F);
}

pub(super) struct InPlace<'a>(&'a mut [f64]);

impl Sink for InPlace<'_> {
    #[inline(always)]
    fn run<F: Fn(f64) -> f64>(self, f: F) {
        self.0.iter_mut().for_each(|x| *x = f(*x));
    }
}

pub(super) struct MapFrom<'a>(&'a [f64], &'a mut [f64]);

impl Sink for MapFrom<'_> {
    #[inline(always)]
    fn run<F: Fn(f64) -> f64>(self, f: F) {
        self.1.iter_mut().zip(self.0).for_each(|(d, s)| *d = f(*s));
    }
}

pub(super) const ADD: u8 = 0;
pub(super) const SUB: u8 = 1;
pub(super) const MUL: u8 = 2;

/// top[k] = top[k] ∘ f(src[k]) with ∘ fixed at compile time.
pub(super) struct CombineFrom<'a, const OP: u8>(&'a [f64], &'a mut [f64]);

impl<const OP: u8> Sink for CombineFrom<'_, OP> {
    #[inline(always)]
    fn run<F: Fn(f64) -> f64>(self, f: F) {
        self.1.iter_mut().zip(self.0).for_each(|(t, s)| {
            *t = match OP {
                ADD => *t + f(*s),
                SUB => *t - f(*s),
                _ => *t * f(*s),
            }
        });
    }
}

/// Two arithmetic steps with constants, the second applied to the first's result.
pub(super) fn arith2(a: Ar, b: Ar, sink: impl Sink) {
    match b {
        Ar::Add(c) => arith_then(a, |y| y + c, sink),
        Ar::Sub(c) => arith_then(a, |y| y - c, sink),
        Ar::RSub(c) => arith_then(a, |y| c - y, sink),
        Ar::Mul(c) => arith_then(a, |y| y * c, sink),
    }
}

#[inline(always)]
pub(super) fn arith_then<G: Fn(f64) -> f64>(a: Ar, g: G, sink: impl Sink) {
    match a {
        Ar::Add(c) => sink.run(|x| g(x + c)),
        Ar::Sub(c) => sink.run(|x| g(x - c)),
        Ar::RSub(c) => sink.run(|x| g(c - x)),
        Ar::Mul(c) => sink.run(|x| g(x * c)),
    }
}

/// One loop per operation kind, so each is a tight loop over the chunk.
pub(super) fn unary(u: Un, sink: impl Sink) {
    match u {
        Un::Neg => sink.run(|x| -x),
        Un::PowI(2) => sink.run(|x| x * x),
        Un::PowI(3) => sink.run(|x| x * x * x),
        Un::PowI(4) => sink.run(|x| {
            let y = x * x;
            y * y
        }),
        Un::PowI(n) => sink.run(|x| x.powi(n)),
        Un::PowF(c) => sink.run(|x| powf(x, c)),
        Un::F1(f) => sink.run(|x| apply1(f, x)),
        Un::VC(b, c) => match b {
            Bin::Add => sink.run(|x| x + c),
            Bin::Sub => sink.run(|x| x - c),
            Bin::Mul => sink.run(|x| x * c),
            Bin::Div => sink.run(|x| x / c),
            _ => sink.run(|x| scalar_bin(b, x, c)),
        },
        Un::CV(b, c) => match b {
            Bin::Add => sink.run(|x| c + x),
            Bin::Sub => sink.run(|x| c - x),
            Bin::Mul => sink.run(|x| c * x),
            Bin::Div => sink.run(|x| c / x),
            _ => sink.run(|x| scalar_bin(b, c, x)),
        },
    }
}

pub(super) fn scalar_bin(b: Bin, x: f64, y: f64) -> f64 {
    match b {
        Bin::Add => x + y,
        Bin::Sub => x - y,
        Bin::Mul => x * y,
        Bin::Div => x / y,
        Bin::Rem => x - y * (x / y).trunc(),
        Bin::Pow => x.powf(y),
        Bin::F2(Fun2::Atan2) => x.atan2(y),
        Bin::F2(Fun2::Min) => pick(x, y, |a, b| a <= b),
        Bin::F2(Fun2::Max) => pick(x, y, |a, b| a >= b),
    }
}

pub(super) fn bin_vv(b: Bin, a: &mut [f64], c: &[f64]) {
    match b {
        Bin::Add => a.iter_mut().zip(c).for_each(|(x, y)| *x += *y),
        Bin::Sub => a.iter_mut().zip(c).for_each(|(x, y)| *x -= *y),
        Bin::Mul => a.iter_mut().zip(c).for_each(|(x, y)| *x *= *y),
        Bin::Div => a.iter_mut().zip(c).for_each(|(x, y)| *x /= *y),
        _ => a
            .iter_mut()
            .zip(c)
            .for_each(|(x, y)| *x = scalar_bin(b, *x, *y)),
    }
}
