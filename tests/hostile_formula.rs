//! The formula compiler under hostile input: random bytes, token soup from
//! the grammar, deep nesting, megabyte formulas, huge exponents, unicode,
//! would-be NaN and infinity literals. Every call returns a formula or an
//! error that says what is wrong and where, never panics, and finishes well
//! inside the watchdog's deadline.
//!
//! Case count: `PHASEWRIGHT_FUZZ_CASES` (default in `common/hostile.rs`);
//! the full run is `PHASEWRIGHT_FUZZ_CASES=100000 cargo test --release
//! --no-default-features --test hostile_formula --test hostile_session`.

#[path = "common/hostile.rs"]
mod hostile;
#[path = "common/row_check.rs"]
mod row_check;
use row_check::row_matches_tape;

use hostile::{bounded, cases};
use phasewright::core::formula::{
    Formula, FormulaErrorKind, MAX_EVAL_DEPTH, MAX_SOURCE_BYTES, MAX_TAPE_OPS,
};
use phasewright::core::system::System;
use proptest::prelude::*;
use proptest::test_runner::{Config, FileFailurePersistence};
use std::sync::Arc;

fn config() -> Config {
    Config {
        cases: cases(),
        failure_persistence: Some(Box::new(FileFailurePersistence::Off)),
        ..Config::default()
    }
}

/// For properties whose every input is up to a megabyte: a tenth of the cases.
fn heavy_config() -> Config {
    Config {
        cases: (cases() / 10).max(1),
        ..config()
    }
}

/// Kinds of refusal that concern the formula as a whole, so they carry no column.
fn whole_formula(kind: &FormulaErrorKind) -> bool {
    matches!(
        kind,
        FormulaErrorKind::Empty
            | FormulaErrorKind::TooLong
            | FormulaErrorKind::TooDeep
            | FormulaErrorKind::TooManyParameters
    )
}

/// Compile `src` and, when it compiles, evaluate it every way the program
/// does. A refusal must have a message and, unless it concerns the whole
/// formula, a column inside the text. Returns the refusal, if any.
fn exercise(src: &str) -> Option<phasewright::core::formula::FormulaError> {
    bounded(
        || format!("{src:?}"),
        || match Formula::compile(src) {
            Err(e) => {
                assert!(!e.message.trim().is_empty(), "empty message for {src:?}");
                assert!(!e.to_string().trim().is_empty());
                match e.column {
                    Some(c) => {
                        let line = src.split('\n').nth(e.line.saturating_sub(1));
                        let Some(line) = line else {
                            panic!("line {} does not exist in {src:?}: {e}", e.line)
                        };
                        assert!(
                            c >= 1 && c <= line.chars().count() + 1,
                            "column {c} outside line {line:?} of {src:?}"
                        );
                    }
                    None => assert!(
                        whole_formula(&e.kind),
                        "refusal without a position: {e} ({:?}) for {src:?}",
                        e.kind
                    ),
                }
                Some(e)
            }
            Ok(f) => {
                assert!(f.ops().len() <= MAX_TAPE_OPS);
                for w in f.warnings() {
                    assert!(!w.message.trim().is_empty());
                }
                let n = f.params().len();
                let f = Arc::new(f);
                let s = match System::new(f.clone(), vec![0.7; n]) {
                    Ok(s) => s,
                    Err(e) => panic!("system from compiled {src:?}: {e}"),
                };
                let mut slots = vec![0.7; f.slot_count()];
                for (q, p) in [(0.3, -0.4), (0.0, 0.0), (-2.0, 1.5), (1e300, -1e-300)] {
                    let h = s.energy(q, p);
                    let _ = s.jet(q, p);
                    let _ = s.field_t(q, p, 0.5);
                    if n > 0 {
                        let _ = s.param_jet(q, p, 0);
                    }
                    slots[0] = q;
                    slots[1] = p;
                    slots[2] = 0.0;
                    let (v, _) = f.eval_with_rounding(&slots);
                    // the same operations in f64: the same bits
                    assert!(
                        v.to_bits() == h.to_bits() || (v.is_nan() && h.is_nan()),
                        "{src:?}: rounding evaluation {v} vs {h}"
                    );
                }
                row_matches_tape(&s, &src);
                None
            }
        },
    )
}

/// Pieces of the grammar and of near misses, so random joins reach deep into
/// the tokenizer, the postfix pass and the compiler.
const PIECES: &[&str] = &[
    "q", "p", "t", "a", "mu", "pi", "e", "_x", "q1", "1", "0", "2.5", "1e3", "1e308", "1e309",
    "1e400", "1e-400", "9e99999", "0.", ".5", "1.", "1e", "1e+", "1e-5", "+", "-", "*", "/", "^",
    "%", "(", ")", ",", " ", "\n", "\t", "sin(", "cos(", "tan(", "exp(", "ln(", "sqrt(", "abs(",
    "atan2(", "min(", "max(", "floor(", "signum(", "foo(", "q(", ")(", "--", "^-", "**", "^1e308",
    "^-1e308", "^99999", "^0.5", "^-64", "^65", "NaN", "nan", "Infinity", "inf", "-inf", "#", "$",
    "é", "∂", "π", "\u{0}", "\u{feff}", "🙂", "\\", "\"", "'", ";", "=", "==", "!", "&&", "[", "]",
];

fn token_soup() -> impl Strategy<Value = String> {
    prop::collection::vec(prop::sample::select(PIECES), 0..60).prop_map(|v| v.concat())
}

/// A valid expression of the grammar (random depth), possibly with extreme numbers.
fn valid_expr() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        Just("q".to_string()),
        Just("p".to_string()),
        Just("t".to_string()),
        Just("a".to_string()),
        Just("pi".to_string()),
        any::<f64>()
            .prop_filter("finite", |x| x.is_finite())
            .prop_map(|x| format!("{:e}", x.abs())),
        (0u32..400).prop_map(|k| format!("1e{k}")),
        (0u32..400).prop_map(|k| format!("1e-{k}")),
    ];
    leaf.prop_recursive(8, 64, 3, |inner| {
        let f1 = prop::sample::select(vec![
            "sin", "cos", "tan", "exp", "ln", "sqrt", "abs", "sinh", "cosh", "tanh", "asin",
            "acos", "atan", "floor", "ceil", "round", "signum",
        ]);
        let op = prop::sample::select(vec!["+", "-", "*", "/", "^", "%"]);
        prop_oneof![
            (inner.clone(), op, inner.clone()).prop_map(|(a, o, b)| format!("({a}){o}({b})")),
            (f1, inner.clone()).prop_map(|(f, a)| format!("{f}({a})")),
            inner.clone().prop_map(|a| format!("-{a}")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("atan2({a}, {b})")),
            prop::collection::vec(inner, 2..5).prop_map(|v| format!("max({})", v.join(","))),
        ]
    })
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn random_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..200)) {
        exercise(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn token_soup_never_panics(src in token_soup()) {
        exercise(&src);
    }

    #[test]
    fn unicode_text_never_panics(src in "\\PC{0,80}") {
        exercise(&src);
    }

    #[test]
    fn valid_expressions_compile_or_name_a_limit(src in valid_expr()) {
        if let Some(e) = exercise(&src) {
            // the only refusals of a grammatical formula: a limit or a literal beyond f64
            prop_assert!(
                matches!(e.kind, FormulaErrorKind::TooLong | FormulaErrorKind::TooDeep | FormulaErrorKind::BadNumber),
                "{} refused: {}", src, e
            );
        }
    }

}

proptest! {
    #![proptest_config(heavy_config())]

    #[test]
    fn nesting_of_every_kind_is_bounded(
        depth in 0usize..70_000,
        kind in 0usize..5,
        close in prop::bool::ANY,
        inner in token_soup(),
    ) {
        let (open, shut) = match kind {
            0 => ("(", ")"),
            1 => ("sin(", ")"),
            2 => ("q*(", ")"),
            3 => ("-", ""),
            _ => ("max(q,", ")"),
        };
        let closing = if close { shut.repeat(depth) } else { shut.repeat(depth / 2) };
        let src = format!("{}{inner}{closing}", open.repeat(depth));
        if let Some(e) = exercise(&src) {
            if src.len() > MAX_SOURCE_BYTES {
                prop_assert_eq!(e.kind, FormulaErrorKind::TooLong);
            }
        }
    }

    #[test]
    fn huge_formulas_are_refused_before_any_work(len in MAX_SOURCE_BYTES + 1..1_100_000usize, piece in token_soup()) {
        let piece = if piece.is_empty() { "q+".to_string() } else { piece };
        let mut src = piece.repeat(len / piece.len() + 1);
        let mut cut = len;
        while !src.is_char_boundary(cut) {
            cut += 1;
        }
        src.truncate(cut);
        let e = exercise(&src).ok_or_else(|| TestCaseError::fail("a huge formula compiled"))?;
        prop_assert_eq!(e.kind, FormulaErrorKind::TooLong);
        prop_assert_eq!(
            e.message,
            format!("the formula is {} bytes long; at most {MAX_SOURCE_BYTES} are accepted", src.len())
        );
    }

    #[test]
    fn long_sums_within_the_byte_cap_are_bounded(terms in 1usize..16_000, piece in prop::sample::select(vec!["q", "q*p", "sin(q)", "1", "a^2"])) {
        let src = vec![piece; terms].join("+");
        if let Some(e) = exercise(&src) {
            prop_assert!(matches!(e.kind, FormulaErrorKind::TooLong), "{}", e);
        }
    }
}

#[test]
fn deep_right_nesting_is_refused_with_the_depth_cap() {
    // a*(q+(q+(...))) keeps one pending value per level
    let ok = format!(
        "{}q{}",
        "q*(".repeat(MAX_EVAL_DEPTH - 2),
        ")".repeat(MAX_EVAL_DEPTH - 2)
    );
    assert!(exercise(&ok).is_none(), "depth within the cap compiles");
    let deep = format!(
        "{}q{}",
        "q*(".repeat(MAX_EVAL_DEPTH + 1),
        ")".repeat(MAX_EVAL_DEPTH + 1)
    );
    let e = exercise(&deep).expect("refused");
    assert_eq!(e.kind, FormulaErrorKind::TooDeep);
    assert_eq!(
        e.message,
        format!(
            "the formula nests too deeply: evaluating it would hold more than {MAX_EVAL_DEPTH} \
             values at once (a long chain like a*(b+(c*(d+...)))); write it with fewer nested \
             parentheses"
        )
    );
}

#[test]
fn zero_to_a_variable_power_evaluates_like_the_tape() {
    // 0^0 = 1 in f64 (IEEE 754 pow), while ln 0 makes its dual-number form NaN
    assert!(exercise("sin((0e0)^(q))").is_none());
}
