//! Derivative programs (one partial derivative of the formula compiled to a
//! plain-f64 program) against dual-number passes of the same tape (num-dual's
//! forward mode, an outside reference), on many random formulas.

use num_dual::Dual64;
use phasewright::core::formula::{Formula, LANES, LaneRegisters, SLOT_P, SLOT_Q, SLOT_T};
use proptest::prelude::*;

/// An expression over q, p, t and a parameter `a`, using every operation of
/// the formula language.
#[derive(Clone, Debug)]
enum Expr {
    Q,
    P,
    T,
    A,
    Num(f64),
    Bin(&'static str, Box<Expr>, Box<Expr>),
    Call(&'static str, Box<Expr>),
    Call2(&'static str, Box<Expr>, Box<Expr>),
    PowInt(Box<Expr>, i32),
    PowReal(Box<Expr>, f64),
}

impl Expr {
    fn text(&self) -> String {
        match self {
            Expr::Q => "q".into(),
            Expr::P => "p".into(),
            Expr::T => "t".into(),
            Expr::A => "a".into(),
            Expr::Num(x) => format!("{x}"),
            Expr::Bin(op, a, b) => format!("({} {op} {})", a.text(), b.text()),
            Expr::Call(f, a) => format!("{f}({})", a.text()),
            Expr::Call2(f, a, b) => format!("{f}({}, {})", a.text(), b.text()),
            Expr::PowInt(a, n) => format!("({})^{n}", a.text()),
            Expr::PowReal(a, c) => format!("abs({})^{c}", a.text()),
        }
    }
}

const UNARY: &[&str] = &[
    "sin", "cos", "tan", "exp", "ln", "sqrt", "abs", "sinh", "cosh", "tanh", "asin", "acos",
    "atan", "floor", "signum",
];

fn expr() -> impl Strategy<Value = Expr> {
    let leaf = prop_oneof![
        Just(Expr::Q),
        Just(Expr::P),
        Just(Expr::T),
        Just(Expr::A),
        (-3.0f64..3.0).prop_map(|x| Expr::Num((x * 100.0).round() / 100.0)),
    ];
    leaf.prop_recursive(5, 40, 2, |inner| {
        prop_oneof![
            (
                prop::sample::select(&["+", "-", "*", "/", "%", "^"][..]),
                inner.clone(),
                inner.clone()
            )
                .prop_map(|(o, a, b)| Expr::Bin(o, Box::new(a), Box::new(b))),
            (prop::sample::select(UNARY), inner.clone())
                .prop_map(|(f, a)| Expr::Call(f, Box::new(a))),
            (
                prop::sample::select(&["atan2", "min", "max"][..]),
                inner.clone(),
                inner.clone()
            )
                .prop_map(|(f, a, b)| Expr::Call2(f, Box::new(a), Box::new(b))),
            (inner.clone(), -3i32..6).prop_map(|(a, n)| Expr::PowInt(Box::new(a), n)),
            (
                inner,
                prop::sample::select(&[0.5, 1.5, 2.0, -0.5, 2.75][..])
            )
                .prop_map(|(a, c)| Expr::PowReal(Box::new(a), c)),
        ]
    })
}

/// (H, ∂H/∂slot) by one Dual64 pass of the tape.
fn dual_partial(f: &Formula, slot: usize, q: f64, p: f64, t: f64, a: f64) -> (f64, f64) {
    let mut slots: Vec<Dual64> = [q, p, t].iter().map(|&x| Dual64::from(x)).collect();
    slots.extend(std::iter::repeat_n(Dual64::from(a), f.params().len()));
    slots[slot].eps = 1.0;
    let r = f.eval(&slots);
    (r.re, r.eps)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(3000))]

    #[test]
    fn derivative_programs_agree_with_dual_numbers(
        e in expr(),
        q in -1.5f64..1.5,
        p in -1.5f64..1.5,
        t in -1.0f64..1.0,
        a in 0.3f64..1.7,
    ) {
        let src = e.text();
        let f = match Formula::compile(&src) {
            Ok(f) => f,
            Err(err) => return Err(TestCaseError::fail(format!("{src:?} refused: {err}"))),
        };
        let params = vec![a; f.params().len()];
        let (mut checked, mut identical) = (0, 0);
        for slot in [SLOT_Q, SLOT_P, SLOT_T] {
            let (value, want) = dual_partial(&f, slot, q, p, t, a);
            let got = f.derivative_program(slot, &params).eval(q, p, t);
            // where H itself is not finite the dual pass may still report a
            // derivative (min/max of NaN carry none); compare where both are defined
            if !(value.is_finite() && want.is_finite()) {
                continue;
            }
            checked += 1;
            // equal as numbers (a zero may differ in sign only)
            if got == want {
                identical += 1;
            }
            prop_assert!(
                got == want || (got - want).abs() <= 1e-15 * want.abs(),
                "∂/∂slot{} of {}: program {:e} vs dual {:e}", slot, src, got, want
            );
        }
        // the rules are num-dual's own, so almost every result is bit-identical
        prop_assert!(identical + 1 >= checked, "{}: {} of {} identical", src, identical, checked);
    }

    /// The lane evaluation gives, at each of many points with one common t
    /// or with a t of their own, exactly the one-point value (the reference: `eval`, checked against
    /// dual numbers above), NaN where that is NaN, for every slot.
    #[test]
    fn lane_evaluation_is_the_one_point_evaluation(
        e in expr(),
        q0 in -1.5f64..1.5,
        p0 in -1.5f64..1.5,
        t in -1.0f64..1.0,
        a in 0.3f64..1.7,
        m in 1usize..=LANES,
    ) {
        let src = e.text();
        let f = match Formula::compile(&src) {
            Ok(f) => f,
            Err(err) => return Err(TestCaseError::fail(format!("{src:?} refused: {err}"))),
        };
        let params = vec![a; f.params().len()];
        let q: Vec<f64> = (0..m).map(|k| q0 + 0.37 * k as f64 - 0.8).collect();
        let p: Vec<f64> = (0..m).map(|k| p0 - 0.23 * k as f64 + 0.5).collect();
        let mut regs = LaneRegisters::default();
        for slot in [SLOT_Q, SLOT_P, SLOT_T] {
            let program = f.derivative_program(slot, &params);
            let mut out = vec![0.0; m];
            program.eval_lanes(&q, &p, t, &mut out, &mut regs);
            for k in 0..m {
                let want = program.eval(q[k], p[k], t);
                prop_assert!(
                    out[k].to_bits() == want.to_bits() || (out[k].is_nan() && want.is_nan()),
                    "∂/∂slot{} of {} at lane {}: lanes {:e} vs one point {:e}",
                    slot, src, k, out[k], want
                );
            }
            // each lane with its own t
            let ts: Vec<f64> = (0..m).map(|k| t + 0.61 * k as f64 - 1.3).collect();
            program.eval_lanes_at(&q, &p, &ts, &mut out, &mut regs);
            for k in 0..m {
                let want = program.eval(q[k], p[k], ts[k]);
                prop_assert!(
                    out[k].to_bits() == want.to_bits() || (out[k].is_nan() && want.is_nan()),
                    "∂/∂slot{} of {} at lane {} (own t): lanes {:e} vs one point {:e}",
                    slot, src, k, out[k], want
                );
            }
        }
    }
}

#[test]
fn the_pendulum_force_is_two_instructions() {
    // ∂(p²/2 − cos q)/∂q = sin q (calculus); ∂/∂p = p.
    let f = Formula::compile("p^2/2 - cos(q)").unwrap();
    let kick = f.derivative_program(SLOT_Q, &[]);
    assert_eq!(kick.len(), 2);
    assert!(!kick.reads(SLOT_P));
    for q in [-3.0, -0.4, 0.0, 1.2, 2.9] {
        assert_eq!(kick.eval(q, 7.0, 0.0), f64::sin(q));
    }
    let drift = f.derivative_program(SLOT_P, &[]);
    assert!(!drift.reads(SLOT_Q));
    assert!(drift.is_affine_in(SLOT_P));
    assert_eq!(drift.eval(0.3, -1.25, 0.0), -1.25);
    // a constant derivative is folded to its value
    let g = Formula::compile("m*q + p^2/2").unwrap();
    assert_eq!(g.derivative_program(SLOT_Q, &[2.5]).constant(), Some(2.5));
}

#[test]
fn affine_detection_separates_quadratic_from_other_kinetic_energies() {
    for (src, affine) in [
        ("p^2/2 - cos(q)", true),
        ("p*p/(2*m) + q^4", true),
        ("(p - 1)^2 * 3 + q", true),
        ("p^4/4 + q^2", false),
        ("sqrt(1 + p^2) + q^2", false),
        ("cosh(p) + q^2", false),
    ] {
        let f = Formula::compile(src).unwrap();
        let params = vec![1.5; f.params().len()];
        assert_eq!(
            f.derivative_program(SLOT_P, &params).is_affine_in(SLOT_P),
            affine,
            "{src}"
        );
    }
}

#[test]
fn a_product_scaled_twice_by_powers_of_two_is_scaled_once() {
    // ∂(p²/2)/∂p = p and ∂(−q²/2 + q⁴/4)/∂q = q³ − q (calculus). The quotient
    // rule on the constant divisors scales by 2, ½, ½ in a row; the builder
    // folds such scalings, which are exact, so the program is short and
    // its value is the closed form's to the bit.
    let f = Formula::compile("p^2/2 - q^2/2 + q^4/4").unwrap();
    let drift = f.derivative_program(SLOT_P, &[]);
    // p, p + p, ½, (p + p)·½
    assert_eq!(drift.len(), 4);
    let kick = f.derivative_program(SLOT_Q, &[]);
    // q, q + q, ½, ·½, −, q·q, ·q, +
    assert_eq!(kick.len(), 8);
    for x in [-1.7, -0.3, 0.0, 0.25, 1.0, 1.9, 123.456] {
        assert_eq!(drift.eval(0.4, x, 0.0).to_bits(), x.to_bits());
        assert_eq!(kick.eval(x, 0.4, 0.0), -x + x * x * x);
    }
}
