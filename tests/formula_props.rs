//! Property tests of the formula language: no text makes it panic, every
//! refusal explains itself, and the exact jet agrees with finite differences.

use phasewright::core::formula::{Formula, MAX_SOURCE_BYTES};
use phasewright::core::system::System;
use proptest::prelude::*;
use std::sync::Arc;
#[path = "common/row_check.rs"]
mod row_check;
use row_check::row_matches_tape;

/// Compile `src`; when it compiles, evaluate it every way the program does.
/// Returns the refusal message when refused.
fn exercise(src: &str) -> Option<String> {
    match Formula::compile(src) {
        Err(e) => {
            let shown = e.to_string();
            assert!(!e.message.trim().is_empty(), "empty message for {src:?}");
            assert!(!shown.trim().is_empty());
            if let Some(c) = e.column {
                let line = src.split('\n').nth(e.line.saturating_sub(1)).unwrap_or("");
                assert!(
                    c >= 1 && c <= line.chars().count() + 1,
                    "column {c} outside line {line:?} of {src:?}"
                );
            }
            Some(e.message)
        }
        Ok(f) => {
            let params = vec![0.7; f.params().len()];
            let s = match System::new(Arc::new(f), params) {
                Ok(s) => s,
                Err(e) => panic!("system from compiled {src:?}: {e}"),
            };
            for (q, p) in [(0.3, -0.4), (0.0, 0.0), (-2.0, 1.5)] {
                let _ = s.energy(q, p);
                let _ = s.jet(q, p);
                let _ = s.field_t(q, p, 0.5);
                for k in 0..s.params().len().min(2) {
                    let _ = s.param_jet(q, p, k);
                }
            }
            row_matches_tape(&s, src);
            None
        }
    }
}

/// Pieces that look like formulas, so random joins reach deep into the parser.
const PIECES: &[&str] = &[
    "q", "p", "t", "a", "mu", "pi", "e", "1", "2.5", "1e3", "0.", ".5", "+", "-", "*", "/", "^",
    "%", "(", ")", ",", " ", "\n", "sin(", "cos(", "exp(", "ln(", "sqrt(", "atan2(", "min(",
    "max(", "floor(", "foo(", "1e", "1e999", "q(", ")(", "--", "^-", "**", "#", "$", "é", "∂",
];

fn formula_like() -> impl Strategy<Value = String> {
    prop::collection::vec(prop::sample::select(PIECES), 0..40).prop_map(|v| v.concat())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(600))]

    #[test]
    fn formula_like_text_never_panics(src in formula_like()) {
        exercise(&src);
    }

    #[test]
    fn arbitrary_unicode_never_panics(src in "\\PC{0,60}") {
        exercise(&src);
    }

    #[test]
    fn ascii_noise_never_panics(src in "[ -~\\n\\t]{0,80}") {
        exercise(&src);
    }

    #[test]
    fn nested_parentheses_never_panic(depth in 0usize..3000, close in 0usize..3000, inner in formula_like()) {
        let src = format!("{}{}{}", "(".repeat(depth), inner, ")".repeat(close));
        exercise(&src);
    }
}

#[test]
fn very_deep_nesting_compiles_or_is_refused_cleanly() {
    for depth in [10_000, 30_000] {
        let balanced = format!("{}q{}", "(".repeat(depth), ")".repeat(depth));
        if balanced.len() <= MAX_SOURCE_BYTES {
            assert_eq!(
                exercise(&balanced),
                None,
                "balanced nesting of depth {depth} is a valid formula"
            );
        } else {
            let msg = exercise(&balanced).unwrap_or_default();
            assert!(msg.contains("bytes"), "{msg}");
        }
        let calls = format!("{}q{}", "sin(".repeat(depth / 4), ")".repeat(depth / 4));
        exercise(&calls);
    }
}

#[test]
fn long_formulas_are_refused_with_the_limit_named() {
    let long = vec!["q"; 40_000].join("+");
    let msg = exercise(&long).unwrap_or_default();
    assert!(msg.contains(&MAX_SOURCE_BYTES.to_string()), "{msg}");
    // within the byte limit but beyond the operation limit
    let many = vec!["q*p"; 8_000].join("+");
    assert!(many.len() <= MAX_SOURCE_BYTES);
    let msg = exercise(&many).unwrap_or_default();
    assert!(msg.contains("operations"), "{msg}");
    // a long formula within both limits compiles and evaluates to its closed form
    let fine = vec!["q"; 2_000].join("+");
    assert_eq!(exercise(&fine), None);
    let s = match System::from_source(&fine, &[]) {
        Ok(s) => s,
        Err(e) => panic!("{e}"),
    };
    assert_eq!(s.energy(0.5, 0.0), 1000.0);
}

// ---- jet against central differences ----

/// A smooth expression tree over q, p and one parameter `a`.
#[derive(Clone, Debug)]
enum Expr {
    Q,
    P,
    A,
    Num(f64),
    Add(Box<Expr>, Box<Expr>),
    Sub(Box<Expr>, Box<Expr>),
    Mul(Box<Expr>, Box<Expr>),
    Sin(Box<Expr>),
    Cos(Box<Expr>),
    Exp(Box<Expr>),
    Pow(Box<Expr>, u8),
}

impl Expr {
    fn text(&self) -> String {
        match self {
            Expr::Q => "q".into(),
            Expr::P => "p".into(),
            Expr::A => "a".into(),
            Expr::Num(x) => format!("{x}"),
            Expr::Add(a, b) => format!("({} + {})", a.text(), b.text()),
            Expr::Sub(a, b) => format!("({} - {})", a.text(), b.text()),
            Expr::Mul(a, b) => format!("{} * {}", a.text(), b.text()),
            Expr::Sin(a) => format!("sin({})", a.text()),
            Expr::Cos(a) => format!("cos({})", a.text()),
            Expr::Exp(a) => format!("exp(0.5*sin({}))", a.text()),
            Expr::Pow(a, n) => format!("({})^{n}", a.text()),
        }
    }
}

fn expr() -> impl Strategy<Value = Expr> {
    let leaf = prop_oneof![
        Just(Expr::Q),
        Just(Expr::P),
        Just(Expr::A),
        (-2.0f64..2.0).prop_map(|x| Expr::Num((x * 100.0).round() / 100.0)),
    ];
    leaf.prop_recursive(4, 24, 2, |inner| {
        prop_oneof![
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Expr::Add(Box::new(a), Box::new(b))),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Expr::Sub(Box::new(a), Box::new(b))),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Expr::Mul(Box::new(a), Box::new(b))),
            inner.clone().prop_map(|a| Expr::Sin(Box::new(a))),
            inner.clone().prop_map(|a| Expr::Cos(Box::new(a))),
            inner.clone().prop_map(|a| Expr::Exp(Box::new(a))),
            (inner, 2u8..4).prop_map(|(a, n)| Expr::Pow(Box::new(a), n)),
        ]
    })
}

/// Step of the differences (functions here vary on a scale of order one).
const H: f64 = 1e-3;

/// Two Richardson extrapolations of a difference quotient `c` (steps h, h/2,
/// h/4): the finer one, and its distance from the coarser as an estimate of
/// its truncation error (common practice).
fn richardson(c: impl Fn(f64) -> f64) -> (f64, f64) {
    let (c1, c2, c4) = (c(H), c(H / 2.0), c(H / 4.0));
    let coarse = (4.0 * c2 - c1) / 3.0;
    let fine = (4.0 * c4 - c2) / 3.0;
    (fine, (fine - coarse).abs())
}

/// f'(0) by central differences.
fn d1(f: impl Fn(f64) -> f64) -> (f64, f64) {
    richardson(|h| (f(h) - f(-h)) / (2.0 * h))
}

/// f''(0) by second central differences.
fn d2(f: impl Fn(f64) -> f64) -> (f64, f64) {
    richardson(|h| (f(h) - 2.0 * f(0.0) + f(-h)) / (h * h))
}

/// ∂²f/∂x∂y at 0 by mixed central differences.
fn d11(f: impl Fn(f64, f64) -> f64) -> (f64, f64) {
    richardson(|h| (f(h, h) - f(h, -h) - f(-h, h) + f(-h, -h)) / (4.0 * h * h))
}

#[track_caller]
fn agree(
    exact: f64,
    (diff, trunc): (f64, f64),
    rounding: f64,
    what: &str,
    src: &str,
) -> Result<(), TestCaseError> {
    let tol = 1e-8 * (1.0 + exact.abs()) + rounding + 4.0 * trunc;
    prop_assert!(
        (exact - diff).abs() <= tol,
        "{} of {}: jet {} vs differences {} (truncation estimate {})",
        what,
        src,
        exact,
        diff,
        trunc
    );
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn jet_matches_central_differences(e in expr(), q in -1.0f64..1.0, p in -1.0f64..1.0, a in 0.5f64..1.5) {
        let src = e.text();
        let s = match System::from_source(&src, &[("a", a)]) {
            Ok(s) => s,
            Err(err) => return Err(TestCaseError::fail(format!("generated {src:?} refused: {err}"))),
        };
        let h0 = s.energy(q, p);
        prop_assume!(h0.is_finite() && h0.abs() < 1e4);
        let j = s.jet(q, p);
        // rounding in a difference quotient: about ε|H|/h for first and ε|H|/h²
        // for second derivatives; allowed with a margin
        let scale = h0.abs();
        let r1 = 1e-10 * scale;
        let r2 = 1e-7 * scale;
        prop_assert!((j.h - h0).abs() <= 1e-14 * (1.0 + scale));
        agree(j.hq, d1(|d| s.energy(q + d, p)), r1, "H_q", &src)?;
        agree(j.hp, d1(|d| s.energy(q, p + d)), r1, "H_p", &src)?;
        agree(j.hqq, d2(|d| s.energy(q + d, p)), r2, "H_qq", &src)?;
        agree(j.hpp, d2(|d| s.energy(q, p + d)), r2, "H_pp", &src)?;
        agree(j.hqp, d11(|x, y| s.energy(q + x, p + y)), r2, "H_qp", &src)?;

        // derivatives in the parameter a
        let Some(k) = s.formula().param_index("a") else { return Ok(()) };
        let pj = s.param_jet(q, p, k);
        let at = |da: f64, dq: f64| s.with_param(k, a + da).energy(q + dq, p);
        prop_assert!((pj.h - h0).abs() <= 1e-14 * (1.0 + scale));
        prop_assert!((pj.grad[0] - j.hq).abs() <= 1e-12 * (1.0 + j.hq.abs()));
        prop_assert!((pj.hess[1][1] - j.hpp).abs() <= 1e-12 * (1.0 + j.hpp.abs()));
        agree(pj.grad[2], d1(|d| at(d, 0.0)), r1, "H_a", &src)?;
        agree(pj.hess[2][2], d2(|d| at(d, 0.0)), r2, "H_aa", &src)?;
        agree(pj.hess[0][2], d11(|x, y| at(y, x)), r2, "H_qa", &src)?;
        prop_assert_eq!(pj.hess[0][2], pj.hess[2][0]);
    }
}
