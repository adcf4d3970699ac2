//! Separability H = T(p) + V(q) as the compiler reads it, checked against an
//! independent test: the exact mixed derivative ∂²H/∂q∂p from the jet
//! vanishes identically for a sum f(q) + g(p) (common practice), and a
//! nonzero mixed derivative anywhere means H is not separable.

use phasewright::core::formula::Formula;
use phasewright::core::system::System;
use proptest::prelude::*;
use std::sync::Arc;

fn system(src: &str) -> System {
    let f = Formula::compile(src).unwrap_or_else(|e| panic!("{src}: {e}"));
    let n = f.params().len();
    System::new(Arc::new(f), vec![0.7; n]).expect("system")
}

#[test]
fn products_and_quotients_of_one_variable_are_separable() {
    // Each term depends on q alone or on p alone (common practice).
    for src in [
        "p*p/2 + q^2/2",
        "p^2/2 + q*q/2",
        "p^2/2 - 1/q",
        "p^2/2 + 1/(2*q^2) - 1/q",
        "p^2/2 + q/(1+q^2)",
        "p^2/2 + 1/(q^2+1)",
    ] {
        assert!(system(src).is_separable(), "{src} is separable");
    }
    for src in ["p*q", "sin(p+q)", "p^2*q"] {
        assert!(!system(src).is_separable(), "{src} is not separable");
    }
}

/// A small grammar of expressions in one variable `v`.
fn one_variable(v: &'static str) -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        Just(v.to_string()),
        (1u32..5).prop_map(|k| k.to_string()),
        Just("a".to_string()),
    ];
    leaf.prop_recursive(4, 20, 2, |inner| {
        prop_oneof![
            (inner.clone(), inner.clone()).prop_map(|(x, y)| format!("({x})+({y})")),
            (inner.clone(), inner.clone()).prop_map(|(x, y)| format!("({x})-({y})")),
            (inner.clone(), inner.clone()).prop_map(|(x, y)| format!("({x})*({y})")),
            (inner.clone(), inner.clone()).prop_map(|(x, y)| format!("({x})/(2+({y})^2)")),
            inner.clone().prop_map(|x| format!("sin({x})")),
            inner.clone().prop_map(|x| format!("cos({x})")),
            inner.clone().prop_map(|x| format!("({x})^2")),
            inner.prop_map(|x| format!("1/(1+({x})^2)")),
        ]
    })
}

/// Points spread over [-2, 2]², fixed so that a failure repeats.
fn points() -> Vec<(f64, f64)> {
    (0..40)
        .map(|i| {
            let x = i as f64;
            (2.0 * (1.3 * x + 0.1).sin(), 2.0 * (0.7 * x + 0.4).cos())
        })
        .collect()
}

/// The largest |∂²H/∂q∂p| over the points where the jet is finite.
fn largest_mixed_derivative(s: &System) -> f64 {
    points()
        .into_iter()
        .map(|(q, p)| s.jet(q, p))
        .filter(|j| j.is_finite())
        .fold(0.0, |m, j| m.max(j.hqp.abs()))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn a_sum_of_a_q_part_and_a_p_part_is_separable(f in one_variable("q"), g in one_variable("p")) {
        let src = format!("{f} + {g}");
        let s = system(&src);
        prop_assert!(s.is_separable(), "{} is separable", src);
        prop_assert_eq!(largest_mixed_derivative(&s), 0.0, "{}", src);
    }

    #[test]
    fn a_formula_with_a_mixed_derivative_is_not_separable(
        f in one_variable("q"),
        g in one_variable("p"),
        join in 0usize..4,
    ) {
        let src = match join {
            0 => format!("({f})*({g})"),
            1 => format!("sin(({f})+({g}))"),
            2 => format!("({f})/(3+({g})^2)"),
            _ => format!("(({f})+({g}))^2"),
        };
        let s = system(&src);
        if largest_mixed_derivative(&s) > 0.0 {
            prop_assert!(!s.is_separable(), "{} mixes q and p", src);
        }
    }
}
