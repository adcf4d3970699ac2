//! The third-order jets that locate folds and cusps (`System::third_jet`)
//! against finite differences of H itself, evaluated in plain f64 through a
//! different path (the tape's `f64` evaluation, no dual numbers), on random
//! smooth formulas in q, p and two parameters.
//!
//! Reference: central differences, O(h²) accurate (common practice; e.g.
//! B. Fornberg, Math. Comp. 51 (1988) 699, table 1, for the stencils).

use phasewright::core::system::System;
use proptest::prelude::*;

/// Smooth terms in q, p and the parameters a, b (bounded derivatives on the
/// sampled box, so a fixed finite-difference tolerance is fair).
const TERMS: [&str; 12] = [
    "q^3",
    "sin(q)*p^2",
    "exp(0.3*q)*a",
    "cos(p*b)",
    "q*p*a*b",
    "a^2*q^2",
    "p^4/4",
    "b*sin(q + p)",
    "ln(2 + q^2)",
    "a*b^2*p",
    "q^2*p*b",
    "1/(2 + cos(a*q))",
];

fn formula() -> impl Strategy<Value = String> {
    prop::collection::vec((0..TERMS.len(), -2.0f64..2.0), 1..5).prop_map(|terms| {
        let mut text = String::from("a*q^2/2 + p^2/2");
        for (k, c) in terms {
            text.push_str(&format!(" + ({c:.3})*{}", TERMS[k]));
        }
        text
    })
}

/// H at x = (q, p, a, b) in plain f64.
fn h_at(sys: &System, ia: usize, ib: Option<usize>, x: [f64; 4]) -> f64 {
    let s = sys.with_param(ia, x[2]);
    match ib {
        Some(ib) => s.with_param(ib, x[3]),
        None => s,
    }
    .energy(x[0], x[1])
}

/// ∂³H/∂x_i∂x_j∂x_k by the product of three central differences.
fn third_by_differences(
    sys: &System,
    ia: usize,
    ib: Option<usize>,
    x: [f64; 4],
    ijk: [usize; 3],
) -> f64 {
    let h = 1e-2;
    let mut sum = 0.0;
    for s0 in [-1.0, 1.0] {
        for s1 in [-1.0, 1.0] {
            for s2 in [-1.0, 1.0] {
                let mut y = x;
                y[ijk[0]] += s0 * h;
                y[ijk[1]] += s1 * h;
                y[ijk[2]] += s2 * h;
                sum += s0 * s1 * s2 * h_at(sys, ia, ib, y);
            }
        }
    }
    sum / (8.0 * h * h * h)
}

/// ∂²H/∂x_i∂x_j by central differences.
fn second_by_differences(
    sys: &System,
    ia: usize,
    ib: Option<usize>,
    x: [f64; 4],
    ij: [usize; 2],
) -> f64 {
    let h = 1e-4;
    let mut sum = 0.0;
    for s0 in [-1.0, 1.0] {
        for s1 in [-1.0, 1.0] {
            let mut y = x;
            y[ij[0]] += s0 * h;
            y[ij[1]] += s1 * h;
            sum += s0 * s1 * h_at(sys, ia, ib, y);
        }
    }
    sum / (4.0 * h * h)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn third_jet_matches_finite_differences_of_h(
        text in formula(),
        q in -1.0f64..1.0,
        p in -1.0f64..1.0,
        a in 0.5f64..1.5,
        b in 0.5f64..1.5,
    ) {
        let sys = System::from_source(&text, &[("a", a), ("b", b)]).unwrap();
        let names = sys.formula().params().to_vec();
        let ia = names.iter().position(|n| n == "a").unwrap();
        let ib = names.iter().position(|n| n == "b");
        // b may not appear; then its row is absent from the jet
        let (params, nvars) = match ib {
            Some(ib) => (vec![ia, ib], 4),
            None => (vec![ia], 3),
        };
        let jet = sys.third_jet(q, p, &params);
        prop_assert_eq!(jet.n, nvars);
        let x = [q, p, a, b];
        prop_assert!((jet.h - sys.energy(q, p)).abs() <= 1e-14 * (1.0 + jet.h.abs()));
        for i in 0..nvars {
            for j in 0..nvars {
                let fd2 = second_by_differences(&sys, ia, ib, x, [i, j]);
                prop_assert!(
                    (jet.hess[i][j] - fd2).abs() <= 1e-5 * (1.0 + fd2.abs()),
                    "{}: H_{}{} = {} but differences give {}", text, i, j, jet.hess[i][j], fd2
                );
                prop_assert!(
                    (jet.hess[i][j] - jet.hess[j][i]).abs()
                        <= 1e-13 * (1.0 + jet.hess[i][j].abs())
                );
                for k in 0..nvars {
                    let fd3 = third_by_differences(&sys, ia, ib, x, [i, j, k]);
                    prop_assert!(
                        (jet.third[i][j][k] - fd3).abs() <= 2e-3 * (1.0 + fd3.abs()),
                        "{}: H_{}{}{} = {} but differences give {}",
                        text, i, j, k, jet.third[i][j][k], fd3
                    );
                }
            }
        }
    }
}

/// A case worked by hand: H = p²/2 + a q³ + a b q p has H_qqq = 6a,
/// H_qqa = 6q, H_qpb = a, H_qab = p, and every other third derivative
/// in (q, p, a, b) zero except H_qpa = b, H_pab = q.
#[test]
fn third_jet_of_a_worked_example() {
    let (a, b, q, p) = (0.7, 1.3, 0.4, -0.9);
    let sys = System::from_source("p^2/2 + a*q^3 + a*b*q*p", &[("a", a), ("b", b)]).unwrap();
    let jet = sys.third_jet(q, p, &[0, 1]);
    let t = &jet.third;
    let close = |x: f64, y: f64| (x - y).abs() <= 1e-14;
    assert!(close(t[0][0][0], 6.0 * a));
    assert!(close(t[0][0][2], 6.0 * q));
    assert!(close(t[0][1][3], a));
    assert!(close(t[0][2][3], p));
    assert!(close(t[0][1][2], b));
    assert!(close(t[1][2][3], q));
    assert!(close(t[1][1][1], 0.0));
    assert!(close(t[2][2][2], 0.0));
}
