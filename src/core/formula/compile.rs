//! The compiler: meval's postfix tokens to our tape, with constant folding
//! and the dependency and separability bookkeeping.

use super::*;
use meval::tokenizer::{Operation, Token};

/// Turns meval's postfix tokens into our tape, folding constants as it goes.
pub(super) struct Compiler<'a> {
    source: &'a str,
    func_positions: Vec<Option<Pos>>,
    next_func: usize,
    ops: Vec<Op>,
    /// Per stack entry: its constant value when it is a single folded constant.
    consts: Vec<Option<f64>>,
    /// Per stack entry: bit 0 = depends on q, bit 1 = depends on p.
    deps: Vec<u8>,
    /// Per stack entry: whether it is a sum of terms none of which mixes q and p.
    sep: Vec<bool>,
    params: Vec<String>,
    warnings: Vec<FormulaWarning>,
    depth: usize,
    max_depth: usize,
    uses: [bool; VARIABLES.len()],
}

impl<'a> Compiler<'a> {
    pub(super) fn new(source: &'a str, func_positions: Vec<Option<Pos>>) -> Self {
        Compiler {
            source,
            func_positions,
            next_func: 0,
            ops: Vec::new(),
            consts: Vec::new(),
            deps: Vec::new(),
            sep: Vec::new(),
            params: Vec::new(),
            warnings: Vec::new(),
            depth: 0,
            max_depth: 0,
            uses: [false; VARIABLES.len()],
        }
    }

    /// Position of the next call in postfix order.
    fn next_func_pos(&mut self) -> Option<Pos> {
        let p = self.func_positions.get(self.next_func).copied().flatten();
        self.next_func += 1;
        p
    }

    fn push(&mut self, op: Op, konst: Option<f64>, deps: u8) {
        self.ops.push(op);
        self.consts.push(konst);
        self.deps.push(deps);
        self.sep.push(deps != 3);
        self.depth += 1;
        self.max_depth = self.max_depth.max(self.depth);
    }

    /// Refuse a formula whose evaluation would hold more than
    /// [`MAX_EVAL_DEPTH`] values at once.
    fn too_deep(&self) -> Result<(), FormulaError> {
        if self.depth > MAX_EVAL_DEPTH {
            return Err(FormulaError::new(
                FormulaErrorKind::TooDeep,
                format!(
                    "the formula nests too deeply: evaluating it would hold more than \
                     {MAX_EVAL_DEPTH} values at once (a long chain like a*(b+(c*(d+...)))); \
                     write it with fewer nested parentheses"
                ),
                None,
            ));
        }
        Ok(())
    }

    fn too_long(&self) -> Result<(), FormulaError> {
        if self.ops.len() > MAX_TAPE_OPS {
            return Err(FormulaError::new(
                FormulaErrorKind::TooLong,
                format!("the formula compiles to more than {MAX_TAPE_OPS} operations"),
                None,
            ));
        }
        Ok(())
    }

    fn syntax(&self, msg: &str) -> FormulaError {
        FormulaError::new(FormulaErrorKind::Syntax, msg.to_string(), None)
    }

    /// Apply an operation to the top `arity` stack entries, folding if all are constant.
    fn apply(&mut self, op: Op, arity: usize) -> Result<(), FormulaError> {
        if self.consts.len() < arity {
            return Err(self.syntax("an operator is missing a value"));
        }
        let base = self.consts.len() - arity;
        let all_const: Option<Vec<f64>> = self.consts[base..].iter().copied().collect();
        let deps = self.deps[base..].iter().fold(0u8, |a, &d| a | d);
        let sep_in: Vec<bool> = self.sep[base..].to_vec();
        let arg_deps: Vec<u8> = self.deps[base..].to_vec();
        if let Some(vals) = all_const {
            // every operand is exactly one Const op at the end of the tape
            let slots: Vec<f64> = Vec::new();
            let mut tape: Vec<Op> = vals.iter().map(|&v| Op::Const(v)).collect();
            tape.push(op);
            let mut stack = vec![0.0; arity.max(1)];
            let v = run_tape(&tape, &slots, &mut stack);
            self.warn_non_finite_constant(v);
            for _ in 0..arity {
                self.ops.pop();
                self.consts.pop();
                self.deps.pop();
                self.sep.pop();
                self.depth -= 1;
            }
            self.push(Op::Const(v), Some(v), 0);
            return Ok(());
        }
        // integer or constant real exponent
        if op == Op::Pow {
            if let Some(c) = self.consts[base + 1] {
                self.ops.pop();
                self.consts.pop();
                self.deps.pop();
                self.sep.pop();
                self.depth -= 1;
                let fast = if c.fract() == 0.0 && c.abs() <= MAX_FAST_POWER {
                    Op::PowI(c as i32)
                } else {
                    Op::PowF(c)
                };
                self.ops.push(fast);
                let last = self.consts.len() - 1;
                self.consts[last] = None;
                self.sep[last] = self.deps[last] != 3;
                return self.too_long();
            }
        }
        self.ops.push(op);
        for _ in 0..arity {
            self.consts.pop();
            self.deps.pop();
            self.sep.pop();
        }
        self.depth = self.depth + 1 - arity;
        // separability: a node that depends on at most one of q and p is
        // separable whatever its operation (q*q, 1/q, q/(1+q^2)); only where
        // both meet does the structure matter: sums and differences of
        // separable parts stay separable, and so do products with, and
        // quotients by, a q- and p-free factor.
        let sep = deps != 3
            || match (op, arity) {
                (Op::Add | Op::Sub, 2) => sep_in[0] && sep_in[1],
                (Op::Neg, 1) => sep_in[0],
                (Op::Mul, 2) => (arg_deps[0] == 0 && sep_in[1]) || (arg_deps[1] == 0 && sep_in[0]),
                (Op::Div, 2) => arg_deps[1] == 0 && sep_in[0],
                _ => false,
            };
        self.consts.push(None);
        self.deps.push(deps);
        self.sep.push(sep);
        self.too_long()
    }

    pub(super) fn run(mut self, rpn: &[Token]) -> Result<Formula, FormulaError> {
        for tok in rpn {
            match tok {
                Token::Number(x) => {
                    if !x.is_finite() {
                        let (text, pos) = match first_huge_literal(self.source) {
                            Some((t, p)) => (format!(" {t}"), Some(p)),
                            None => (String::new(), None),
                        };
                        return Err(FormulaError::new(
                            FormulaErrorKind::BadNumber,
                            format!(
                                "the number{text} is too large to represent (the largest is \
                                 about 1.8e308)"
                            ),
                            pos,
                        ));
                    }
                    self.push(Op::Const(*x), Some(*x), 0);
                }
                Token::Var(name) => match name.as_str() {
                    n if variable(n).is_some() => {
                        let slot = variable(n).map_or(SLOT_T, |v| v.slot);
                        self.uses[slot] = true;
                        // dependency bits: 1 = on q, 2 = on p (t is neither)
                        let deps = match slot {
                            SLOT_Q => 1,
                            SLOT_P => 2,
                            _ => 0,
                        };
                        self.push(Op::Slot(slot as u32), None, deps);
                    }
                    n if CONSTANTS.iter().any(|c| c.0 == n) => {
                        let value = CONSTANTS
                            .iter()
                            .find(|c| c.0 == n)
                            .map_or(f64::NAN, |c| c.1);
                        self.push(Op::Const(value), Some(value), 0);
                    }
                    _ => {
                        let idx = match self.params.iter().position(|p| p == name) {
                            Some(i) => i,
                            None => {
                                if self.params.len() >= MAX_PARAMS {
                                    return Err(FormulaError::new(
                                        FormulaErrorKind::TooManyParameters,
                                        format!(
                                            "the formula names more than {MAX_PARAMS} parameters"
                                        ),
                                        None,
                                    ));
                                }
                                self.params.push(name.clone());
                                self.params.len() - 1
                            }
                        };
                        self.push(Op::Slot((FIRST_PARAM_SLOT + idx) as u32), None, 0);
                    }
                },
                Token::Unary(Operation::Minus) => self.apply(Op::Neg, 1)?,
                Token::Unary(_) => {}
                Token::Binary(op) => {
                    let op = match op {
                        Operation::Plus => Op::Add,
                        Operation::Minus => Op::Sub,
                        Operation::Times => Op::Mul,
                        Operation::Div => Op::Div,
                        Operation::Pow => Op::Pow,
                        Operation::Rem => {
                            let pos = self.source.find('%').map(|b| pos_of(self.source, b));
                            self.warn_zero_derivative("%", pos);
                            Op::Rem
                        }
                    };
                    self.apply(op, 2)?;
                }
                Token::Func(name, nargs) => self.call(name, nargs.unwrap_or(0))?,
                Token::LParen | Token::RParen | Token::Comma => {
                    return Err(self.syntax("unbalanced parentheses"));
                }
            }
            self.too_long()?;
            self.too_deep()?;
        }
        if self.consts.len() != 1 {
            return Err(self.syntax("two values stand side by side without an operator"));
        }
        let separable = self.sep[0];
        self.warn_non_finite_names();
        Ok(Formula {
            source: self.source.to_string(),
            ops: self.ops,
            params: self.params,
            warnings: self.warnings,
            max_depth: self.max_depth.max(1),
            uses: self.uses,
            separable,
        })
    }

    /// A parameter called `nan`, `inf` or `infinity` is most likely meant as a
    /// literal, which the language does not have.
    fn warn_non_finite_names(&mut self) {
        for name in &self.params {
            if NON_FINITE_NAMES
                .iter()
                .any(|n| n.eq_ignore_ascii_case(name))
            {
                let pos = find_word(self.source, name).map(|b| pos_of(self.source, b));
                self.warnings.push(FormulaWarning {
                    message: format!(
                        "'{name}' is read as a parameter: the formula language has no NaN or \
                         infinity literals"
                    ),
                    line: pos.map(|p| p.line).unwrap_or(1),
                    column: pos.map(|p| p.column),
                });
            }
        }
    }

    /// Once per formula: a part without q, p, t or parameters that is already
    /// infinite or undefined (10^400, 0/0, ln(-1)) makes H undefined.
    fn warn_non_finite_constant(&mut self, v: f64) {
        const MESSAGE: &str = "a part of the formula without variables is infinite or \
                               undefined (an overflow such as 10^400, or 0/0, ln(-1)); H is \
                               undefined wherever that part counts";
        if !v.is_finite() && !self.warnings.iter().any(|w| w.message == MESSAGE) {
            self.warnings.push(FormulaWarning {
                message: MESSAGE.to_string(),
                line: 1,
                column: None,
            });
        }
    }

    fn warn_zero_derivative(&mut self, what: &str, pos: Option<Pos>) {
        let message = format!(
            "'{what}' is piecewise constant or jumps: its derivatives are zero or undefined, \
             so equilibria and orbits near its jumps are unreliable"
        );
        if !self.warnings.iter().any(|w| w.message == message) {
            self.warnings.push(FormulaWarning {
                message,
                line: pos.map(|p| p.line).unwrap_or(1),
                column: pos.map(|p| p.column),
            });
        }
    }

    fn call(&mut self, name: &str, nargs: usize) -> Result<(), FormulaError> {
        let pos = self.next_func_pos();
        let entry = FUNCTIONS.iter().find(|f| f.0 == name);
        let Some(&(_, kind, warn)) = entry else {
            let kind;
            let message = if variable(name).is_some() || self.params.iter().any(|p| p == name) {
                kind = FormulaErrorKind::VariableCalled(name.to_string());
                format!("'{name}' is a variable, not a function; write {name}*(...) for a product")
            } else {
                kind = FormulaErrorKind::UnknownFunction(name.to_string());
                format!("unknown function '{name}'; available: {}", function_names())
            };
            return Err(FormulaError::new(kind, message, pos));
        };
        if warn {
            self.warn_zero_derivative(name, pos);
        }
        let wrong = |expected: &str| {
            FormulaError::new(
                FormulaErrorKind::WrongArgumentCount {
                    function: name.to_string(),
                    expected: expected.to_string(),
                    found: nargs,
                },
                format!(
                    "'{name}' takes {expected} argument{}, but {nargs} {} given",
                    if expected == "1" { "" } else { "s" },
                    if nargs == 1 { "was" } else { "were" }
                ),
                pos,
            )
        };
        match kind {
            FnKind::One(f) => {
                if nargs != 1 {
                    return Err(wrong("1"));
                }
                self.apply(Op::F1(f), 1)
            }
            FnKind::Two(f) => {
                if nargs != 2 {
                    return Err(wrong("2"));
                }
                self.apply(Op::F2(f), 2)
            }
            FnKind::Many(f) => {
                if nargs < 2 {
                    return Err(wrong("2 or more"));
                }
                // arguments are on the stack in order; fold right to left
                for _ in 1..nargs {
                    self.apply(Op::F2(f), 2)?;
                }
                Ok(())
            }
        }
    }
}
