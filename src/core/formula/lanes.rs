//! Lane evaluation of derivative programs: one instruction over a block of
//! up to [`LANES`] points before the next (sections and basins step their
//! starts in such blocks; the Melnikov sums run over a connection so). Every
//! lane's value is bit for bit the one-point value of
//! [`DerivativeProgram::eval`]: both run the same [`run_instructions`].

use super::derivative::{Bank, DIns, DerivativeProgram, run_instructions};
use super::*;

impl DerivativeProgram {
    /// The derivative at the points (q[k], p[k], t), k < m, written to
    /// `out[k]`, where m is the shortest of the three slices (at most
    /// [`LANES`]): each instruction runs over all the points before the
    /// next, and what depends on t alone runs once. Every value is bit for
    /// bit what [`DerivativeProgram::eval`] gives at that point (the same
    /// operations on the same operands, see [`run_instructions`]).
    pub fn eval_lanes(
        &self,
        q: &[f64],
        p: &[f64],
        t: f64,
        out: &mut [f64],
        regs: &mut LaneRegisters,
    ) {
        let m = q.len().min(p.len()).min(out.len()).min(LANES);
        self.run_lanes(q, p, t, None, &mut out[..m], regs);
    }

    /// The derivative at the points (q[k], p[k], t[k]), k < m, each with its
    /// own t (m the shortest of the four slices, at most [`LANES`]); as
    /// [`DerivativeProgram::eval_lanes`] otherwise, and every value again
    /// bit for bit that of [`DerivativeProgram::eval`] at its point.
    pub fn eval_lanes_at(
        &self,
        q: &[f64],
        p: &[f64],
        t: &[f64],
        out: &mut [f64],
        regs: &mut LaneRegisters,
    ) {
        let m = q.len().min(p.len()).min(t.len()).min(out.len()).min(LANES);
        self.run_lanes(q, p, 0.0, Some(t), &mut out[..m], regs);
    }

    /// One pass of the instructions over the `out.len()` lanes, at the
    /// common time `t` or at each lane's own `ts`.
    fn run_lanes(
        &self,
        q: &[f64],
        p: &[f64],
        t: f64,
        ts: Option<&[f64]>,
        out: &mut [f64],
        regs: &mut LaneRegisters,
    ) {
        let m = out.len();
        if m == 0 {
            return;
        }
        if let Some(c) = self.constant {
            out.fill(c);
            return;
        }
        let n = self.ins.len();
        if regs.regs.len() < n {
            regs.regs.resize(n, [0.0; LANES]);
        }
        run_instructions(
            &self.ins,
            &mut Lanes {
                r: &mut regs.regs[..n],
                q,
                p,
                t,
                ts,
                m,
                uniform: if ts.is_some() {
                    &self.fixed
                } else {
                    &self.uniform
                },
            },
        );
        out.copy_from_slice(&regs.regs[n - 1][..m]);
    }
}

/// Most points a derivative program evaluates in one lane pass
/// ([`DerivativeProgram::eval_lanes`]).
pub const LANES: usize = 64;

/// The registers of lane evaluations, kept between calls so a stepper
/// allocates them once.
#[derive(Clone, Debug, Default)]
pub struct LaneRegisters {
    regs: Vec<[f64; LANES]>,
}

/// The registers of one evaluation over `m` lanes (points with their own q
/// and p and one common t). An instruction that reads neither q nor p
/// (`uniform`) is the same in every lane: it is computed once and copied
/// across, with the same operation on the same operands, so each lane's
/// value is exactly that of [`OnePoint`] at its point.
struct Lanes<'a> {
    r: &'a mut [[f64; LANES]],
    q: &'a [f64],
    p: &'a [f64],
    t: f64,
    /// Each lane's own t, when they differ (then `uniform` is `fixed`).
    ts: Option<&'a [f64]>,
    m: usize,
    uniform: &'a [bool],
}

impl Lanes<'_> {
    /// Register `i` (mutable) and the registers before it.
    #[inline(always)]
    fn split(&mut self, i: usize) -> (&[[f64; LANES]], &mut [f64]) {
        let (lo, hi) = self.r.split_at_mut(i);
        (lo, &mut hi[0][..self.m])
    }
}

impl Bank for Lanes<'_> {
    #[inline(always)]
    fn slot(&mut self, i: usize, slot: u8) {
        let m = self.m;
        let out = &mut self.r[i][..m];
        match slot as usize {
            SLOT_Q => out.copy_from_slice(&self.q[..m]),
            SLOT_P => out.copy_from_slice(&self.p[..m]),
            _ => match self.ts {
                Some(ts) => out.copy_from_slice(&ts[..m]),
                None => out.fill(self.t),
            },
        }
    }
    #[inline(always)]
    fn constant(&mut self, i: usize, c: f64) {
        let m = self.m;
        self.r[i][..m].fill(c);
    }
    #[inline(always)]
    fn map1(&mut self, i: usize, a: u32, f: impl Fn(f64) -> f64) {
        let uniform = self.uniform[i];
        let (lo, out) = self.split(i);
        let x = &lo[a as usize][..out.len()];
        if uniform {
            out.fill(f(x[0]));
        } else {
            out.iter_mut().zip(x).for_each(|(o, &x)| *o = f(x));
        }
    }
    #[inline(always)]
    fn map2(&mut self, i: usize, a: u32, b: u32, f: impl Fn(f64, f64) -> f64) {
        let uniform = self.uniform[i];
        let (lo, out) = self.split(i);
        let m = out.len();
        let (x, y) = (&lo[a as usize][..m], &lo[b as usize][..m]);
        if uniform {
            out.fill(f(x[0], y[0]));
        } else {
            for ((o, &x), &y) in out.iter_mut().zip(x).zip(y) {
                *o = f(x, y);
            }
        }
    }
    #[inline(always)]
    fn map4(&mut self, i: usize, r: [u32; 4], f: impl Fn([f64; 4]) -> f64) {
        let uniform = self.uniform[i];
        let (lo, out) = self.split(i);
        if uniform {
            out.fill(f(r.map(|j| lo[j as usize][0])));
        } else {
            for (k, o) in out.iter_mut().enumerate() {
                *o = f(r.map(|j| lo[j as usize][k]));
            }
        }
    }
}

/// For each instruction, true when it reads none of the `varying` slots
/// (directly or through the registers it reads).
pub(super) fn uniform_instructions(ins: &[DIns], varying: &[usize]) -> Vec<bool> {
    let mut uniform: Vec<bool> = Vec::with_capacity(ins.len());
    for op in ins {
        let u = |r: &u32| uniform.get(*r as usize).copied().unwrap_or(false);
        let v = match op {
            DIns::Slot(s) => !varying.contains(&(*s as usize)),
            DIns::Const(_) => true,
            DIns::Neg(a) | DIns::F1(_, a) | DIns::PowI(a, _) | DIns::PowF(a, _) => u(a),
            DIns::Add(a, b)
            | DIns::Sub(a, b)
            | DIns::Mul(a, b)
            | DIns::Div(a, b)
            | DIns::TruncDiv(a, b)
            | DIns::Atan2(a, b)
            | DIns::SignTimes(a, b) => u(a) && u(b),
            DIns::Pick { x, y, a, b, .. } => u(x) && u(y) && u(a) && u(b),
        };
        uniform.push(v);
    }
    uniform
}
