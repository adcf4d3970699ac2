//! The formula language: messages and positions, parameters, constants,
//! operator precedence, function values, warnings and separability.

use phasewright::core::formula::{Formula, FormulaError, FormulaErrorKind, function_names};
use phasewright::core::system::System;

fn compile(src: &str) -> Formula {
    match Formula::compile(src) {
        Ok(f) => f,
        Err(e) => panic!("{src:?} should compile: {e}"),
    }
}

fn reject(src: &str) -> FormulaError {
    match Formula::compile(src) {
        Ok(_) => panic!("{src:?} should be refused"),
        Err(e) => e,
    }
}

/// H at (q, p) with t = 0 and the given parameter values.
fn value(src: &str, q: f64, p: f64, params: &[f64]) -> f64 {
    let f = compile(src);
    let mut slots = vec![q, p, 0.0];
    slots.extend_from_slice(params);
    f.eval_f64(&slots)
}

#[track_caller]
fn assert_near(a: f64, b: f64, what: &str) {
    assert!(
        (a - b).abs() <= 1e-14 * (1.0 + b.abs()),
        "{what}: got {a}, expected {b}"
    );
}

// ---- messages and positions (columns are 1-based characters: common practice) ----

#[test]
fn missing_value_after_plus_names_the_plus_and_the_column_of_the_star() {
    let e = reject("1 + * 2");
    assert_eq!(e.kind, FormulaErrorKind::Syntax);
    assert!(e.message.contains("'+'"), "{}", e.message);
    assert_eq!((e.line, e.column), (1, Some(5)), "{e}");
    assert!(e.to_string().contains("column 5"), "{e}");
}

#[test]
fn unknown_function_is_named_and_the_available_ones_listed() {
    let e = reject("p^2/2 + sine(q)");
    assert_eq!(e.kind, FormulaErrorKind::UnknownFunction("sine".into()));
    assert!(e.message.contains("'sine'"), "{}", e.message);
    assert!(e.message.contains(&function_names()), "{}", e.message);
    for f in ["sin", "cos", "exp", "ln", "sqrt", "atan2"] {
        assert!(
            function_names().split(", ").any(|n| n == f),
            "{f} missing from {}",
            function_names()
        );
    }
    assert_eq!(e.column, Some(9), "{e}");
}

#[test]
fn wrong_argument_counts_say_how_many_are_taken_and_given() {
    let e = reject("sin(q, p)");
    assert_eq!(
        e.kind,
        FormulaErrorKind::WrongArgumentCount {
            function: "sin".into(),
            expected: "1".into(),
            found: 2
        }
    );
    assert!(
        e.message.contains("'sin' takes 1 argument") && e.message.contains("2 were given"),
        "{}",
        e.message
    );
    assert_eq!(e.column, Some(1));

    let e = reject("q + atan2(p)");
    assert!(
        e.message.contains("'atan2' takes 2 arguments") && e.message.contains("1 was given"),
        "{}",
        e.message
    );
    assert_eq!(e.column, Some(5), "{e}");

    let e = reject("max(q)");
    assert!(e.message.contains("2 or more"), "{}", e.message);
}

#[test]
fn error_on_a_later_line_reports_line_and_column() {
    let e = reject("p^2/2\n  + * q");
    assert_eq!((e.line, e.column), (2, Some(5)), "{e}");
    assert!(e.to_string().contains("line 2, column 5"), "{e}");
}

#[test]
fn unclosed_and_unopened_parentheses_are_pointed_at() {
    let e = reject("sin(q");
    assert!(
        e.message.contains("')'") && e.message.contains("missing"),
        "{}",
        e.message
    );
    let e = reject("q + p)");
    assert!(e.message.contains("no matching '('"), "{}", e.message);
    assert_eq!(e.column, Some(6), "{e}");
}

#[test]
fn juxtaposed_values_ask_for_an_operator() {
    let e = reject("2 q");
    assert!(
        e.message.contains("operator is missing") && e.message.contains('*'),
        "{}",
        e.message
    );
    assert_eq!(e.column, Some(3), "{e}");
}

#[test]
fn empty_and_non_ascii_formulas_are_refused_with_reasons() {
    let e = reject("   ");
    assert_eq!(e.kind, FormulaErrorKind::Empty);
    assert!(e.message.contains("empty"));
    let e = reject("q + é");
    assert!(e.message.contains('é'), "{}", e.message);
    assert_eq!(e.column, Some(5), "{e}");
}

#[test]
fn calling_a_variable_suggests_a_product() {
    let e = reject("q(p + 1)");
    assert_eq!(e.kind, FormulaErrorKind::VariableCalled("q".into()));
    assert!(e.message.contains("q*(...)"), "{}", e.message);
}

// ---- parameters and constants ----

#[test]
fn parameters_are_numbered_in_order_of_first_appearance() {
    let f = compile("beta*q^2 + alpha*p^2 + beta*gamma");
    assert_eq!(f.params(), ["beta", "alpha", "gamma"]);
    assert_eq!(f.param_index("alpha"), Some(1));
    // slots [q, p, t, beta, alpha, gamma]
    assert_near(
        f.eval_f64(&[2.0, 3.0, 0.0, 5.0, 7.0, 11.0]),
        5.0 * 4.0 + 7.0 * 9.0 + 55.0,
        "value",
    );
}

#[test]
fn pi_and_e_are_constants_not_parameters() {
    let f = compile("pi*q + e*p");
    assert!(f.params().is_empty());
    // std::f64::consts (the IEEE double nearest π and e)
    assert_near(f.eval_f64(&[1.0, 0.0, 0.0]), std::f64::consts::PI, "pi");
    assert_near(f.eval_f64(&[0.0, 1.0, 0.0]), std::f64::consts::E, "e");
}

// ---- powers and precedence (common practice) ----

#[test]
fn integer_and_real_powers_match_std() {
    assert_near(value("q^3", 1.7, 0.0, &[]), 1.7f64.powi(3), "q^3");
    assert_near(value("q^-2", 1.7, 0.0, &[]), 1.7f64.powi(-2), "q^-2");
    assert_near(value("q^2.5", 1.7, 0.0, &[]), 1.7f64.powf(2.5), "q^2.5");
    assert_near(value("2^q", 1.7, 0.0, &[]), 2f64.powf(1.7), "2^q");
    assert_near(
        value("q^k", 1.7, 0.0, &[3.0]),
        1.7f64.powi(3),
        "q^k with k = 3",
    );
}

#[test]
fn power_with_both_sides_varying_has_exact_derivatives() {
    // d/dq q^p = p q^(p−1), d/dp q^p = q^p ln q (closed form)
    let s = match System::from_source("q^p", &[]) {
        Ok(s) => s,
        Err(e) => panic!("{e}"),
    };
    let (q, p) = (1.7, 2.3);
    let j = s.jet(q, p);
    assert_near(j.h, q.powf(p), "q^p");
    assert!((j.hq - p * q.powf(p - 1.0)).abs() < 1e-12, "H_q {}", j.hq);
    assert!((j.hp - q.powf(p) * q.ln()).abs() < 1e-12, "H_p {}", j.hp);
    // d²/dq dp q^p = q^(p−1) (1 + p ln q)
    assert!(
        (j.hqp - q.powf(p - 1.0) * (1.0 + p * q.ln())).abs() < 1e-12,
        "H_qp {}",
        j.hqp
    );
}

#[test]
fn unary_minus_binds_looser_than_power() {
    // −q² means −(q²) (common practice in mathematical notation)
    assert_near(value("-q^2", 3.0, 0.0, &[]), -9.0, "-q^2");
    assert_near(value("-2^2", 0.0, 0.0, &[]), -4.0, "-2^2");
    assert_near(value("2 - -q", 3.0, 0.0, &[]), 5.0, "2 - -q");
    assert_near(value("p^2/2 - q^2/2", 3.0, 1.0, &[]), 0.5 - 4.5, "mixed");
}

#[test]
fn power_is_right_associative_and_binds_tighter_than_product() {
    // a^b^c = a^(b^c); 2*q^2 = 2*(q^2) (common practice)
    assert_near(value("2^3^2", 0.0, 0.0, &[]), 512.0, "2^3^2");
    assert_near(value("2*q^2", 3.0, 0.0, &[]), 18.0, "2*q^2");
    assert_near(
        value("q/2/4", 8.0, 0.0, &[]),
        1.0,
        "left-associative division",
    );
}

// ---- function values against std ----

#[test]
fn functions_agree_with_std() {
    let x: f64 = 0.37;
    let cases: [(&str, f64); 17] = [
        ("sin(q)", x.sin()),
        ("cos(q)", x.cos()),
        ("tan(q)", x.tan()),
        ("exp(q)", x.exp()),
        ("ln(q)", x.ln()),
        ("sqrt(q)", x.sqrt()),
        ("abs(-q)", x),
        ("sinh(q)", x.sinh()),
        ("cosh(q)", x.cosh()),
        ("tanh(q)", x.tanh()),
        ("asin(q)", x.asin()),
        ("acos(q)", x.acos()),
        ("atan(q)", x.atan()),
        ("atan2(q, -1)", x.atan2(-1.0)),
        ("min(q, 2, -1)", -1.0),
        ("max(q, 0.1)", x),
        ("q % 0.1", x % 0.1),
    ];
    for (src, want) in cases {
        assert_near(value(src, x, 0.0, &[]), want, src);
    }
    for (src, want) in [
        ("floor(q)", 2.0),
        ("ceil(q)", 3.0),
        ("round(q)", 3.0),
        ("signum(-q)", -1.0),
    ] {
        assert_near(value(src, 2.6, 0.0, &[]), want, src);
    }
    // remainder keeps the sign of the dividend, as Rust's % does
    assert_near(value("q % 3", -7.5, 0.0, &[]), -1.5, "negative remainder");
}

#[test]
fn piecewise_constant_functions_and_remainder_raise_warnings() {
    for src in [
        "floor(q) + p^2",
        "p^2 + round(q)",
        "signum(q)*p^2",
        "q % 2 + p^2",
        "ceil(q)",
    ] {
        let f = compile(src);
        assert_eq!(f.warnings().len(), 1, "{src}: {:?}", f.warnings());
        assert!(
            f.warnings()[0].message.contains("derivatives"),
            "{src}: {}",
            f.warnings()[0].message
        );
    }
    let f = compile("p^2/2 + floor(q)");
    assert_eq!(f.warnings()[0].column, Some(9), "{:?}", f.warnings());
    assert!(compile("p^2/2 - cos(q)").warnings().is_empty());
}

// ---- separability (H = T(p) + V(q): common practice) ----

#[test]
fn separability_is_detected_term_by_term() {
    for src in [
        "p^2/2 + q^4/4 - cos(q)",
        "(p^2 + q^2)/2",
        "p^2/(2*m) + k*q^2",
        "-(p^2) - q",
        "3*(p^2 - q^3)",
    ] {
        assert!(compile(src).is_separable(), "{src} is separable");
    }
    for src in [
        "q*p",
        "sin(q + p)",
        "p^2/2 + q*p",
        "(p^2 + q^2)^2",
        "p^2/q",
        "exp(q)*p^2",
    ] {
        assert!(!compile(src).is_separable(), "{src} is not separable");
    }
}

#[test]
fn uses_of_q_p_and_t_are_recorded() {
    let f = compile("p^2/2 + a*cos(t)*q");
    assert!(f.uses_q() && f.uses_p() && f.uses_t());
    assert_eq!(f.params(), ["a"]);
    let f = compile("p^2/2");
    assert!(!f.uses_q() && f.uses_p() && !f.uses_t());
}
