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
        let uniform = if ts.is_some() {
            &self.fixed
        } else {
            &self.uniform
        };
        let mut lanes = Lanes {
            r: &mut regs.regs[..n],
            inputs: Inputs {
                ins: &self.ins,
                q,
                p,
                ts,
                m,
                uniform,
            },
            t,
        };
        run_lane_instructions(&self.ins, &mut lanes);
        match lanes.result() {
            Operand::One(x) => out.fill(x),
            Operand::Each(x) => out.copy_from_slice(x),
        }
    }
}

/// [`run_instructions`] over lanes, with the wider vector instructions of
/// this processor when it has them. Addition, multiplication, division and
/// the square root are correctly rounded in every width, and no operation is
/// fused, so the numbers are the same either way.
fn run_lane_instructions(ins: &[DIns], lanes: &mut Lanes) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above; the check is
        // one load of a cached word).
        unsafe { run_wide(ins, lanes) };
        return;
    }
    run_instructions(ins, lanes);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn run_wide(ins: &[DIns], lanes: &mut Lanes) {
    run_instructions(ins, lanes);
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
/// (`uniform`) is the same in every lane: it is computed once, in lane 0
/// only, and an instruction over the lanes reads such an operand as that one
/// number. A register that is an input (q, p, or each lane's t) is not
/// copied: its readers read the input. Each lane's value is so exactly that
/// of [`OnePoint`] at its point (the same operation on the same operands).
struct Lanes<'a> {
    r: &'a mut [[f64; LANES]],
    inputs: Inputs<'a>,
    t: f64,
}

/// What an evaluation reads besides its registers.
#[derive(Clone, Copy)]
struct Inputs<'a> {
    ins: &'a [DIns],
    q: &'a [f64],
    p: &'a [f64],
    /// Each lane's own t, when they differ (then `uniform` is `fixed`).
    ts: Option<&'a [f64]>,
    m: usize,
    uniform: &'a [bool],
}

/// Where the lanes of an operand are: one number for all, or one per lane.
enum Operand<'b> {
    One(f64),
    Each(&'b [f64]),
}

impl<'a> Lanes<'a> {
    /// Register `i`'s lanes to write, and a reader of the registers before it.
    #[inline(always)]
    fn split(&mut self, i: usize) -> (Reader<'_, 'a>, &mut [f64]) {
        let inputs = self.inputs;
        let (lo, hi) = self.r.split_at_mut(i);
        (Reader { lo, inputs }, &mut hi[0][..inputs.m])
    }

    /// The register or input holding the program's value, over the lanes.
    fn result(&self) -> Operand<'_> {
        let last = self.r.len() - 1;
        Reader {
            lo: self.r,
            inputs: self.inputs,
        }
        .operand(last as u32)
    }
}

/// Read access to the registers already written.
struct Reader<'b, 'a> {
    lo: &'b [[f64; LANES]],
    inputs: Inputs<'a>,
}

impl<'b> Reader<'b, '_> {
    #[inline(always)]
    fn operand(&self, a: u32) -> Operand<'b>
    where
        Self: 'b,
    {
        let (a, x) = (a as usize, &self.inputs);
        if x.uniform[a] {
            return Operand::One(self.lo[a][0]);
        }
        Operand::Each(match x.ins[a] {
            DIns::Slot(s) => match s as usize {
                SLOT_Q => &x.q[..x.m],
                SLOT_P => &x.p[..x.m],
                _ => &x.ts.unwrap_or(&[])[..x.m],
            },
            _ => &self.lo[a][..x.m],
        })
    }
}

impl Bank for Lanes<'_> {
    #[inline(always)]
    fn slot(&mut self, i: usize, _slot: u8) {
        // an input's readers read it where it is (see `Reader::operand`);
        // a common t is uniform, read from lane 0
        if self.inputs.uniform[i] {
            self.r[i][0] = self.t;
        }
    }
    #[inline(always)]
    fn constant(&mut self, i: usize, c: f64) {
        self.r[i][0] = c;
    }
    #[inline(always)]
    fn map1(&mut self, i: usize, a: u32, f: impl Fn(f64) -> f64) {
        let (lo, out) = self.split(i);
        match lo.operand(a) {
            Operand::One(x) => out[0] = f(x),
            Operand::Each(x) => out.iter_mut().zip(x).for_each(|(o, &x)| *o = f(x)),
        }
    }
    #[inline(always)]
    fn map2(&mut self, i: usize, a: u32, b: u32, f: impl Fn(f64, f64) -> f64) {
        let (lo, out) = self.split(i);
        match (lo.operand(a), lo.operand(b)) {
            (Operand::One(x), Operand::One(y)) => out[0] = f(x, y),
            (Operand::One(x), Operand::Each(y)) => {
                out.iter_mut().zip(y).for_each(|(o, &y)| *o = f(x, y));
            }
            (Operand::Each(x), Operand::One(y)) => {
                out.iter_mut().zip(x).for_each(|(o, &x)| *o = f(x, y));
            }
            (Operand::Each(x), Operand::Each(y)) => {
                for ((o, &x), &y) in out.iter_mut().zip(x).zip(y) {
                    *o = f(x, y);
                }
            }
        }
    }
    #[inline(always)]
    fn map4(&mut self, i: usize, r: [u32; 4], f: impl Fn([f64; 4]) -> f64) {
        let uniform = self.inputs.uniform[i];
        let (lo, out) = self.split(i);
        let ops = r.map(|j| lo.operand(j));
        let at = |k: usize| {
            ops.each_ref().map(|o| match o {
                Operand::One(x) => *x,
                Operand::Each(x) => x[k],
            })
        };
        if uniform {
            out[0] = f(at(0));
        } else {
            for (k, o) in out.iter_mut().enumerate() {
                *o = f(at(k));
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
