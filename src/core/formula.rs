//! Formulas for H(q, p, t; parameters): parsed with meval, compiled to a flat
//! tape of slot-indexed operations, evaluated in plain `f64` or in dual numbers
//! that carry exact first and second derivatives.
//!
//! Slots: 0 = q, 1 = p, 2 = t, 3.. = parameters in order of first appearance.
//! No string is looked up while evaluating.

use meval::tokenizer::{Operation, ParseError, Token};
use num_dual::DualNum;
use std::fmt;

/// Slot index of the coordinate q.
pub const SLOT_Q: usize = 0;
/// Slot index of the momentum p.
pub const SLOT_P: usize = 1;
/// Slot index of time t.
pub const SLOT_T: usize = 2;
/// Slot index of the first parameter.
pub const FIRST_PARAM_SLOT: usize = 3;

/// Longest formula text accepted, in bytes.
pub const MAX_SOURCE_BYTES: usize = 64 * 1024;
/// Longest compiled tape accepted, in operations.
pub const MAX_TAPE_OPS: usize = 20_000;
/// Most parameters a formula may name.
pub const MAX_PARAMS: usize = 64;
/// Most values an evaluation may hold at once (the depth of the evaluation
/// stack). Only right-nested chains such as `q*(q+(q+(...)))` need more than a
/// handful; the grid evaluator keeps a 256-point row per entry, so this bounds
/// its memory (about 2 KiB per entry).
pub const MAX_EVAL_DEPTH: usize = 256;
/// Parameter names that look like the non-finite literals of other notations
/// (compared ignoring case); the formula language has none, so they get a warning.
const NON_FINITE_NAMES: [&str; 3] = ["nan", "inf", "infinity"];
/// Largest integer exponent compiled to repeated multiplication.
const MAX_FAST_POWER: f64 = 64.0;

/// One-argument functions.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Fun1 {
    Sin,
    Cos,
    Tan,
    Exp,
    Ln,
    Sqrt,
    Abs,
    Sinh,
    Cosh,
    Tanh,
    Asin,
    Acos,
    Atan,
    Floor,
    Ceil,
    Round,
    Signum,
}

/// Two-argument functions (min and max accept more, folded pairwise).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Fun2 {
    Atan2,
    Min,
    Max,
}

/// One tape operation. The tape is postfix: operands are on a stack.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Op {
    Const(f64),
    Slot(u32),
    Neg,
    Add,
    Sub,
    Mul,
    Div,
    Rem,
    /// Real power, both sides may vary.
    Pow,
    /// Integer power with a constant exponent (repeated multiplication).
    PowI(i32),
    /// Real power with a constant exponent.
    PowF(f64),
    F1(Fun1),
    F2(Fun2),
}

#[derive(Clone, Copy)]
enum FnKind {
    One(Fun1),
    Two(Fun2),
    Many(Fun2),
}

/// The functions a formula may call: name, kind, and whether derivatives are
/// zero or undefined (these raise a warning).
const FUNCTIONS: &[(&str, FnKind, bool)] = &[
    ("sin", FnKind::One(Fun1::Sin), false),
    ("cos", FnKind::One(Fun1::Cos), false),
    ("tan", FnKind::One(Fun1::Tan), false),
    ("exp", FnKind::One(Fun1::Exp), false),
    ("ln", FnKind::One(Fun1::Ln), false),
    ("sqrt", FnKind::One(Fun1::Sqrt), false),
    ("abs", FnKind::One(Fun1::Abs), false),
    ("sinh", FnKind::One(Fun1::Sinh), false),
    ("cosh", FnKind::One(Fun1::Cosh), false),
    ("tanh", FnKind::One(Fun1::Tanh), false),
    ("asin", FnKind::One(Fun1::Asin), false),
    ("acos", FnKind::One(Fun1::Acos), false),
    ("atan", FnKind::One(Fun1::Atan), false),
    ("atan2", FnKind::Two(Fun2::Atan2), false),
    ("min", FnKind::Many(Fun2::Min), false),
    ("max", FnKind::Many(Fun2::Max), false),
    ("floor", FnKind::One(Fun1::Floor), true),
    ("ceil", FnKind::One(Fun1::Ceil), true),
    ("round", FnKind::One(Fun1::Round), true),
    ("signum", FnKind::One(Fun1::Signum), true),
];

/// The names of all functions a formula may call, comma separated.
pub fn function_names() -> String {
    FUNCTIONS.iter().map(|f| f.0).collect::<Vec<_>>().join(", ")
}

/// What went wrong while compiling a formula.
#[derive(Clone, Debug, PartialEq)]
pub enum FormulaErrorKind {
    Empty,
    TooLong,
    Syntax,
    UnknownFunction(String),
    WrongArgumentCount {
        function: String,
        expected: String,
        found: usize,
    },
    VariableCalled(String),
    BadNumber,
    TooManyParameters,
    TooDeep,
}

/// A formula that does not compile: what, and where (1-based line and column,
/// counted in characters).
#[derive(Clone, Debug, PartialEq)]
pub struct FormulaError {
    pub kind: FormulaErrorKind,
    pub message: String,
    pub line: usize,
    pub column: Option<usize>,
}

impl FormulaError {
    fn new(kind: FormulaErrorKind, message: String, pos: Option<Pos>) -> Self {
        let (line, column) = match pos {
            Some(p) => (p.line, Some(p.column)),
            None => (1, None),
        };
        FormulaError {
            kind,
            message,
            line,
            column,
        }
    }
}

impl fmt::Display for FormulaError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.column {
            Some(c) if self.line > 1 => {
                write!(f, "{} at line {}, column {}", self.message, self.line, c)
            }
            Some(c) => write!(f, "{} at column {}", self.message, c),
            None => f.write_str(&self.message),
        }
    }
}

impl std::error::Error for FormulaError {}

/// Something that compiles but deserves the user's attention.
#[derive(Clone, Debug, PartialEq)]
pub struct FormulaWarning {
    pub message: String,
    pub line: usize,
    pub column: Option<usize>,
}

impl fmt::Display for FormulaWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.column {
            Some(c) => write!(f, "{} (line {}, column {})", self.message, self.line, c),
            None => f.write_str(&self.message),
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq)]
struct Pos {
    line: usize,
    column: usize,
}

/// A compiled formula.
#[derive(Clone, Debug)]
pub struct Formula {
    source: String,
    ops: Vec<Op>,
    params: Vec<String>,
    warnings: Vec<FormulaWarning>,
    max_depth: usize,
    uses: [bool; 3],
    separable: bool,
}

impl Formula {
    /// Parse and compile `source`. Never panics; every rejection says what and where.
    pub fn compile(source: &str) -> Result<Formula, FormulaError> {
        if source.len() > MAX_SOURCE_BYTES {
            return Err(FormulaError::new(
                FormulaErrorKind::TooLong,
                format!(
                    "the formula is {} bytes long; at most {} are accepted",
                    source.len(),
                    MAX_SOURCE_BYTES
                ),
                None,
            ));
        }
        if let Some((i, ch)) = source.char_indices().find(|(_, c)| !c.is_ascii()) {
            return Err(FormulaError::new(
                FormulaErrorKind::Syntax,
                format!(
                    "the character '{ch}' (U+{:04X}) is not part of the formula language",
                    ch as u32
                ),
                Some(pos_of(source, i)),
            ));
        }
        if source.trim().is_empty() {
            return Err(FormulaError::new(
                FormulaErrorKind::Empty,
                "the formula is empty; write H in terms of q and p, e.g. p^2/2 + q^2/2".into(),
                None,
            ));
        }
        let tokens = meval::tokenizer::tokenize(source).map_err(|e| tokenizer_error(source, e))?;
        let spans = token_spans(source);
        let spans = if spans.len() == tokens.len() {
            Some(spans)
        } else {
            None
        };
        let token_pos = |i: usize| {
            spans
                .as_ref()
                .and_then(|s| s.get(i))
                .map(|&b| pos_of(source, b))
        };
        let rpn = meval::shunting_yard::to_rpn(&tokens).map_err(|e| {
            use meval::RPNError::*;
            let (msg, at) = match e {
                MismatchedLParen(i) => ("this '(' is never closed".to_string(), Some(i)),
                MismatchedRParen(i) => ("this ')' has no matching '('".to_string(), Some(i)),
                UnexpectedComma(i) => (
                    "a ',' may only separate a function's arguments".to_string(),
                    Some(i),
                ),
                NotEnoughOperands(i) => ("an operator is missing a value".to_string(), Some(i)),
                TooManyOperands => (
                    "two values stand side by side without an operator".to_string(),
                    None,
                ),
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, at.and_then(token_pos))
        })?;
        // Where each function call sits, in the order the postfix form emits
        // calls: the order in which their closing parentheses arrive.
        let mut open: Vec<Option<usize>> = Vec::new();
        let mut func_positions: Vec<Option<Pos>> = Vec::new();
        for (i, t) in tokens.iter().enumerate() {
            match t {
                Token::Func(..) => open.push(Some(i)),
                Token::LParen => open.push(None),
                Token::RParen => {
                    if let Some(Some(f)) = open.pop() {
                        func_positions.push(token_pos(f));
                    }
                }
                _ => {}
            }
        }
        Compiler::new(source, func_positions).run(&rpn)
    }

    /// The text the formula was compiled from.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// Parameter names in order of first appearance.
    pub fn params(&self) -> &[String] {
        &self.params
    }

    /// The index of a parameter by name.
    pub fn param_index(&self, name: &str) -> Option<usize> {
        self.params.iter().position(|p| p == name)
    }

    /// Warnings raised while compiling (functions without useful derivatives).
    pub fn warnings(&self) -> &[FormulaWarning] {
        &self.warnings
    }

    /// The compiled tape.
    pub fn ops(&self) -> &[Op] {
        &self.ops
    }

    /// Number of slots an evaluation needs: q, p, t and the parameters.
    pub fn slot_count(&self) -> usize {
        FIRST_PARAM_SLOT + self.params.len()
    }

    pub fn uses_q(&self) -> bool {
        self.uses[SLOT_Q]
    }

    pub fn uses_p(&self) -> bool {
        self.uses[SLOT_P]
    }

    pub fn uses_t(&self) -> bool {
        self.uses[SLOT_T]
    }

    /// True when H = T(p) + V(q): no additive term mixes q and p.
    pub fn is_separable(&self) -> bool {
        self.separable
    }

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

    /// A program for fast evaluation over many points at fixed t and
    /// parameter values, with everything that does not depend on q or p folded.
    pub fn specialize(&self, t: f64, params: &[f64]) -> RowProgram {
        RowProgram::build(self, t, params)
    }
}

/// Run the tape on a caller-provided stack (at least `max_depth` long).
fn run_tape<D: DualNum<Primitive = f64> + Copy>(ops: &[Op], slots: &[D], stack: &mut [D]) -> D {
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
fn powf<D: DualNum<Primitive = f64> + Copy>(x: D, c: f64) -> D {
    if c == 0.5 { x.sqrt() } else { x.powf(c) }
}

#[inline]
fn apply1<D: DualNum<Primitive = f64> + Copy>(f: Fun1, x: D) -> D {
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
fn apply2<D: DualNum<Primitive = f64> + Copy>(op: &Op, a: D, b: D) -> D {
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
fn pick<D: DualNum<Primitive = f64> + Copy>(a: D, b: D, first: impl Fn(f64, f64) -> bool) -> D {
    let (x, y) = (a.re(), b.re());
    if x.is_nan() || y.is_nan() {
        D::from(f64::NAN)
    } else if first(x, y) {
        a
    } else {
        b
    }
}

fn pos_of(source: &str, byte: usize) -> Pos {
    let byte = byte.min(source.len());
    let before = &source.as_bytes()[..byte];
    let line = 1 + before.iter().filter(|&&b| b == b'\n').count();
    let line_start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map(|i| i + 1)
        .unwrap_or(0);
    let column = 1 + String::from_utf8_lossy(&before[line_start..])
        .chars()
        .count();
    Pos { line, column }
}

/// Byte offsets at which each meval token starts, by the same lexical rules
/// meval uses (numbers, identifiers, single-character symbols). Only used to
/// place messages; if it disagrees with meval's token count it is not used.
fn token_spans(source: &str) -> Vec<usize> {
    let b = source.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let c = b[i];
        if c.is_ascii_whitespace() {
            i += 1;
        } else if c.is_ascii_digit() {
            out.push(i);
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            if i < b.len() && b[i] == b'.' {
                i += 1;
                while i < b.len() && b[i].is_ascii_digit() {
                    i += 1;
                }
            }
            if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
                let mut j = i + 1;
                if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
                    j += 1;
                }
                if j < b.len() && b[j].is_ascii_digit() {
                    while j < b.len() && b[j].is_ascii_digit() {
                        j += 1;
                    }
                    i = j;
                }
            }
        } else if c.is_ascii_alphabetic() || c == b'_' {
            out.push(i);
            while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_') {
                i += 1;
            }
            // meval folds "name (" into one function token
            let mut j = i;
            while j < b.len() && b[j].is_ascii_whitespace() {
                j += 1;
            }
            if j < b.len() && b[j] == b'(' {
                i = j + 1;
            }
        } else {
            out.push(i);
            i += 1;
        }
    }
    out
}

fn describe_char(c: u8) -> String {
    match c {
        b'\n' => "a line break".into(),
        c if c.is_ascii_control() => format!("the control character U+{c:04X}"),
        _ => format!("'{}'", c as char),
    }
}

fn tokenizer_error(source: &str, e: ParseError) -> FormulaError {
    let b = source.as_bytes();
    let last_non_space = |end: usize| {
        b[..end.min(b.len())]
            .iter()
            .rposition(|c| !c.is_ascii_whitespace())
    };
    match e {
        ParseError::UnexpectedToken(at) => {
            let mut at = at.min(b.len());
            while at < b.len() && b[at].is_ascii_whitespace() {
                at += 1;
            }
            let found = b.get(at).copied();
            let prev = last_non_space(at).map(|i| b[i]);
            let found_txt = found.map(describe_char).unwrap_or_else(|| "the end".into());
            let msg = match prev {
                None => format!("expected a value at the start, found {found_txt}"),
                Some(pc) if b"+-*/^%(,".contains(&pc) => {
                    format!("expected a value after '{}', found {found_txt}", pc as char)
                }
                Some(pc) => match found {
                    Some(fc)
                        if fc.is_ascii_alphanumeric() || fc == b'_' || fc == b'(' || fc == b'.' =>
                    {
                        let prev_word = word_before(source, at);
                        format!(
                            "an operator is missing between '{}' and {found_txt} (write * for a product)",
                            if prev_word.is_empty() {
                                (pc as char).to_string()
                            } else {
                                prev_word
                            }
                        )
                    }
                    Some(b')') => "this ')' has no matching '('".to_string(),
                    Some(b',') => "a ',' may only separate a function's arguments".to_string(),
                    _ => format!("{found_txt} is not part of the formula language"),
                },
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, Some(pos_of(source, at)))
        }
        ParseError::MissingRParen(n) => FormulaError::new(
            FormulaErrorKind::Syntax,
            if n == 1 {
                "a ')' is missing at the end".to_string()
            } else {
                format!("{n} ')' are missing at the end")
            },
            Some(pos_of(source, source.trim_end().len())),
        ),
        ParseError::MissingArgument => {
            let end = source.trim_end().len();
            let msg = match last_non_space(end).map(|i| b[i]) {
                Some(pc) => format!(
                    "expected a value after '{}'; the formula ends there",
                    pc as char
                ),
                None => "the formula is empty".to_string(),
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, Some(pos_of(source, end)))
        }
    }
}

/// The first numeric literal in `source` that is too large for f64, with its position.
fn first_huge_literal(source: &str) -> Option<(String, Pos)> {
    let b = source.as_bytes();
    token_spans(source).into_iter().find_map(|start| {
        if !b
            .get(start)
            .is_some_and(|c| c.is_ascii_digit() || *c == b'.')
        {
            return None;
        }
        let mut end = start;
        while end < b.len() && (b[end].is_ascii_alphanumeric() || b[end] == b'.') {
            end += 1;
        }
        // the literal may carry a signed exponent: 1e+400
        if end < b.len()
            && (b[end] == b'+' || b[end] == b'-')
            && b[end - 1].eq_ignore_ascii_case(&b'e')
        {
            end += 1;
            while end < b.len() && b[end].is_ascii_digit() {
                end += 1;
            }
        }
        let text = &source[start..end];
        let v: f64 = text.parse().ok()?;
        v.is_infinite()
            .then(|| (text.to_string(), pos_of(source, start)))
    })
}

/// Byte offset of `word` standing alone (not inside a longer identifier).
fn find_word(source: &str, word: &str) -> Option<usize> {
    let b = source.as_bytes();
    let ident = |c: u8| c.is_ascii_alphanumeric() || c == b'_';
    source.match_indices(word).map(|(i, _)| i).find(|&i| {
        let before = i == 0 || !ident(b[i - 1]);
        let after = b.get(i + word.len()).is_none_or(|&c| !ident(c));
        before && after
    })
}

fn word_before(source: &str, at: usize) -> String {
    let b = source.as_bytes();
    let mut end = at;
    while end > 0 && b[end - 1].is_ascii_whitespace() {
        end -= 1;
    }
    let mut start = end;
    while start > 0
        && (b[start - 1].is_ascii_alphanumeric() || b[start - 1] == b'_' || b[start - 1] == b'.')
    {
        start -= 1;
    }
    source[start..end].to_string()
}

/// Turns meval's postfix tokens into our tape, folding constants as it goes.
struct Compiler<'a> {
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
    uses: [bool; 3],
}

impl<'a> Compiler<'a> {
    fn new(source: &'a str, func_positions: Vec<Option<Pos>>) -> Self {
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
            uses: [false; 3],
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

    fn run(mut self, rpn: &[Token]) -> Result<Formula, FormulaError> {
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
                    "q" => {
                        self.uses[SLOT_Q] = true;
                        self.push(Op::Slot(SLOT_Q as u32), None, 1);
                    }
                    "p" => {
                        self.uses[SLOT_P] = true;
                        self.push(Op::Slot(SLOT_P as u32), None, 2);
                    }
                    "t" => {
                        self.uses[SLOT_T] = true;
                        self.push(Op::Slot(SLOT_T as u32), None, 0);
                    }
                    "pi" => self.push(
                        Op::Const(std::f64::consts::PI),
                        Some(std::f64::consts::PI),
                        0,
                    ),
                    "e" => self.push(Op::Const(std::f64::consts::E), Some(std::f64::consts::E), 0),
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
            let message = if matches!(name, "q" | "p" | "t")
                || self.params.iter().any(|p| p == name)
            {
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

/// Number of points evaluated together by a [`RowProgram`].
pub const CHUNK: usize = 256;

#[derive(Clone, Copy, Debug)]
enum Bin {
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
enum Un {
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
enum ROp {
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
enum Ar {
    Add(f64),
    /// x − c
    Sub(f64),
    /// c − x
    RSub(f64),
    Mul(f64),
}

fn as_ar(u: Un) -> Option<Ar> {
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
fn with_constant_right(b: Bin, c: f64) -> Un {
    match b {
        Bin::Pow if c.fract() == 0.0 && c.abs() <= MAX_FAST_POWER => Un::PowI(c as i32),
        Bin::Pow => Un::PowF(c),
        Bin::Div if exact_reciprocal(c) => Un::VC(Bin::Mul, 1.0 / c),
        _ => Un::VC(b, c),
    }
}

/// True when c is a power of two whose reciprocal is a normal number.
fn exact_reciprocal(c: f64) -> bool {
    const MANTISSA: u64 = (1 << 52) - 1;
    c.is_normal() && c.to_bits() & MANTISSA == 0 && (1.0 / c).is_normal()
}

/// Merge neighbouring operations into single passes: a push of q with the
/// operation after it, two constant-operand arithmetic steps, and a pushed
/// function of q with the +, − or × that consumes it.
fn fuse(ops: &mut Vec<ROp>) {
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

fn fuse_pairs(ops: &mut Vec<ROp>, merge: impl Fn(ROp, ROp) -> Option<ROp>) {
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

fn eval_chunk(ops: &[ROp], q: &[f64], p: &[f64], stack: &mut [[f64; CHUNK]], out: &mut [f64]) {
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
trait Sink {
    fn run<F: Fn(f64) -> f64>(self, f: F);
}

struct InPlace<'a>(&'a mut [f64]);

impl Sink for InPlace<'_> {
    #[inline(always)]
    fn run<F: Fn(f64) -> f64>(self, f: F) {
        self.0.iter_mut().for_each(|x| *x = f(*x));
    }
}

struct MapFrom<'a>(&'a [f64], &'a mut [f64]);

impl Sink for MapFrom<'_> {
    #[inline(always)]
    fn run<F: Fn(f64) -> f64>(self, f: F) {
        self.1.iter_mut().zip(self.0).for_each(|(d, s)| *d = f(*s));
    }
}

const ADD: u8 = 0;
const SUB: u8 = 1;
const MUL: u8 = 2;

/// top[k] = top[k] ∘ f(src[k]) with ∘ fixed at compile time.
struct CombineFrom<'a, const OP: u8>(&'a [f64], &'a mut [f64]);

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
fn arith2(a: Ar, b: Ar, sink: impl Sink) {
    match b {
        Ar::Add(c) => arith_then(a, |y| y + c, sink),
        Ar::Sub(c) => arith_then(a, |y| y - c, sink),
        Ar::RSub(c) => arith_then(a, |y| c - y, sink),
        Ar::Mul(c) => arith_then(a, |y| y * c, sink),
    }
}

#[inline(always)]
fn arith_then<G: Fn(f64) -> f64>(a: Ar, g: G, sink: impl Sink) {
    match a {
        Ar::Add(c) => sink.run(|x| g(x + c)),
        Ar::Sub(c) => sink.run(|x| g(x - c)),
        Ar::RSub(c) => sink.run(|x| g(c - x)),
        Ar::Mul(c) => sink.run(|x| g(x * c)),
    }
}

/// One loop per operation kind, so each is a tight loop over the chunk.
fn unary(u: Un, sink: impl Sink) {
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

fn scalar_bin(b: Bin, x: f64, y: f64) -> f64 {
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

fn bin_vv(b: Bin, a: &mut [f64], c: &[f64]) {
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

// ---- derivative programs ----

/// One instruction of a [`DerivativeProgram`]; it writes the register with its
/// own index and reads only earlier ones.
#[derive(Clone, Copy, Debug)]
enum DIns {
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
enum Sv {
    C(f64),
    R(u32),
}

/// A value and its derivative.
#[derive(Clone, Copy, Debug)]
struct SDual {
    v: Sv,
    d: Sv,
}

const S0: Sv = Sv::C(0.0);
const S1: Sv = Sv::C(1.0);

/// Emits instructions with constant folding; every rule below is the rule
/// num-dual's `Dual64` applies, so a program agrees with a dual-number pass
/// of the tape to rounding (and usually to the bit).
struct DBuilder {
    ins: Vec<DIns>,
    slots: [Option<u32>; 3],
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
            _ => self.bin(DIns::Mul, a, b),
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
enum Degree {
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
    ins: Vec<DIns>,
    constant: Option<f64>,
}

impl DerivativeProgram {
    fn build(f: &Formula, var: usize, params: &[f64]) -> DerivativeProgram {
        let mut b = DBuilder {
            ins: Vec::new(),
            slots: [None; 3],
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
            },
            Sv::R(r) => DerivativeProgram {
                ins: keep_needed(&b.ins[..=r as usize]),
                constant: None,
            },
        }
    }

    fn nan() -> DerivativeProgram {
        DerivativeProgram {
            ins: Vec::new(),
            constant: Some(f64::NAN),
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
fn keep_needed(ins: &[DIns]) -> Vec<DIns> {
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
fn run_derivative<const N: usize>(ins: &[DIns], inputs: [f64; 3]) -> f64 {
    let mut regs = [0.0f64; N];
    run_derivative_in(ins, inputs, &mut regs)
}

#[inline]
fn run_derivative_in(ins: &[DIns], inputs: [f64; 3], r: &mut [f64]) -> f64 {
    let mut last = f64::NAN;
    for (i, op) in ins.iter().enumerate() {
        let g = |k: u32| r[k as usize];
        let v = match *op {
            DIns::Slot(s) => inputs[s as usize],
            DIns::Const(c) => c,
            DIns::Neg(a) => -g(a),
            DIns::Add(a, b) => g(a) + g(b),
            DIns::Sub(a, b) => g(a) - g(b),
            DIns::Mul(a, b) => g(a) * g(b),
            DIns::Div(a, b) => g(a) / g(b),
            DIns::F1(f, a) => apply1::<f64>(f, g(a)),
            DIns::PowI(a, k) => g(a).powi(k),
            DIns::PowF(a, c) => g(a).powf(c),
            DIns::TruncDiv(a, b) => (g(a) / g(b)).trunc(),
            DIns::Atan2(a, b) => g(a).atan2(g(b)),
            DIns::SignTimes(x, a) => {
                if g(x).is_sign_positive() {
                    g(a)
                } else {
                    -g(a)
                }
            }
            DIns::Pick { max, x, y, a, b } => {
                let (x, y) = (g(x), g(y));
                if x.is_nan() || y.is_nan() {
                    f64::NAN
                } else if (max && x >= y) || (!max && x <= y) {
                    g(a)
                } else {
                    g(b)
                }
            }
        };
        if let Some(slot) = r.get_mut(i) {
            *slot = v;
        }
        last = v;
    }
    last
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
