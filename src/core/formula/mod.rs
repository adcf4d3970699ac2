//! Formulas for H(q, p, t; parameters): parsed with meval, compiled to a flat
//! tape of slot-indexed operations, evaluated in plain `f64` or in dual numbers
//! that carry exact first and second derivatives.
//!
//! Slots: 0 = q, 1 = p, 2 = t, 3.. = parameters in order of first appearance.
//! No string is looked up while evaluating.
//!
//! The parts, one file each: [`front`] (meval's tokens checked and placed),
//! [`compile`] (postfix tokens to the tape), [`tape`] (the tape evaluator in
//! `f64` and dual numbers), [`rows`] (the row evaluator over many points),
//! [`derivative`] (partial derivatives as straight-line programs) and
//! [`lanes`] (those programs over blocks of points).

mod compile;
mod derivative;
mod front;
mod lanes;
mod rows;
mod tape;

pub use derivative::DerivativeProgram;
pub use lanes::{LANES, LaneRegisters};
pub use rows::{CHUNK, RowProgram};

use compile::*;
use front::*;
use tape::*;

use std::fmt;

/// A name a formula reads as one of the system's variables.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Variable {
    pub name: &'static str,
    /// Its slot in an evaluation.
    pub slot: usize,
    /// What it stands for, in words.
    pub meaning: &'static str,
}

/// The variables of every formula, in slot order: the one table the
/// compiler, the session checks and the explorer's help all read.
pub const VARIABLES: [Variable; 3] = [
    Variable {
        name: "q",
        slot: SLOT_Q,
        meaning: "the coordinate",
    },
    Variable {
        name: "p",
        slot: SLOT_P,
        meaning: "the momentum",
    },
    Variable {
        name: "t",
        slot: SLOT_T,
        meaning: "time",
    },
];

/// Named constants of the formula language: name, value, meaning.
pub const CONSTANTS: [(&str, f64, &str); 2] = [
    ("pi", std::f64::consts::PI, "the constant π"),
    ("e", std::f64::consts::E, "the constant e = 2.718…"),
];

/// What a name the formula language reserves (a variable or a constant)
/// stands for; `None` for a name that would be a parameter.
pub fn reserved_meaning(name: &str) -> Option<&'static str> {
    variable(name)
        .map(|v| v.meaning)
        .or_else(|| CONSTANTS.iter().find(|c| c.0 == name).map(|c| c.2))
}

/// The variable called `name`, if it is one.
pub fn variable(name: &str) -> Option<&'static Variable> {
    VARIABLES.iter().find(|v| v.name == name)
}

/// Slot index of the coordinate q.
pub const SLOT_Q: usize = 0;
/// Slot index of the momentum p.
pub const SLOT_P: usize = 1;
/// Slot index of time t.
pub const SLOT_T: usize = 2;
/// Slot index of the first parameter.
pub const FIRST_PARAM_SLOT: usize = VARIABLES.len();

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
    uses: [bool; VARIABLES.len()],
    separable: bool,
}

impl Formula {
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
}
