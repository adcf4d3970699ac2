//! One-parameter continuation and two-parameter fold curves against the
//! normal forms of elementary bifurcation theory, whose branches and folds are
//! known in closed form.

use phasewright::core::Cancel;
use phasewright::core::continuation::{BifurcationKind, Sweep, SweepConfig, sweep};
use phasewright::core::equilibria::EquilibriumKind;
use phasewright::core::system::System;
use phasewright::core::window::Window;

fn run(src: &str, values: &[(&str, f64)], from: f64, to: f64, window: Window) -> Sweep {
    let sys = System::from_source(src, values).expect("formula compiles");
    sweep(
        &sys,
        "mu",
        from,
        to,
        &window,
        &SweepConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .expect("sweep runs")
}

fn window() -> Window {
    Window::new(-2.0, 2.0, -1.0, 1.0).expect("window")
}

#[test]
fn saddle_node_normal_form_has_one_fold_at_the_origin() {
    // H = p²/2 + q³/3 − μq: equilibria q = ±√μ for μ > 0, none for μ < 0; they
    // meet at μ = 0, q = 0 (saddle-node normal form; closed form).
    let s = run("p^2/2 + q^3/3 - mu*q", &[("mu", 0.0)], -1.0, 1.0, window());
    assert_eq!(s.bifurcations.len(), 1, "{:?}", s.bifurcations);
    let b = &s.bifurcations[0];
    assert_eq!(b.kind, BifurcationKind::SaddleNode);
    assert!(b.param.abs() < 1e-10, "mu = {}", b.param);
    assert!(
        b.q.abs() < 1e-8 && b.p.abs() < 1e-10,
        "q = {}, p = {}",
        b.q,
        b.p
    );
    // Two branches from the fold: q = +√μ (V'' = 2q > 0, center), q = −√μ (saddle).
    assert_eq!(
        s.branches.len(),
        2,
        "{:?}",
        s.branches
            .iter()
            .map(|b| b.points.len())
            .collect::<Vec<_>>()
    );
    for br in &s.branches {
        for pt in &br.points[1..br.points.len() - 1] {
            assert!(
                (pt.q * pt.q - pt.param).abs() < 1e-9,
                "q² = μ on the branch"
            );
            let expect = if pt.q > 0.0 {
                EquilibriumKind::Center
            } else {
                EquilibriumKind::Saddle
            };
            assert_eq!(pt.kind, expect);
        }
    }
}

#[test]
fn pitchfork_normal_form_splits_into_three_branches() {
    // H = p²/2 + q⁴/4 − μq²/2: V' = q³ − μq. For μ < 0 only q = 0 (center);
    // for μ > 0, q = 0 is a saddle and q = ±√μ are centers (pitchfork normal
    // form; closed form).
    let s = run(
        "p^2/2 + q^4/4 - mu*q^2/2",
        &[("mu", 0.0)],
        -1.0,
        1.0,
        window(),
    );
    assert_eq!(s.bifurcations.len(), 1, "{:?}", s.bifurcations);
    let b = &s.bifurcations[0];
    assert_eq!(b.kind, BifurcationKind::Pitchfork);
    assert!(b.param.abs() < 1e-8 && b.q.abs() < 1e-8, "{b:?}");
    assert_eq!(s.branches.len(), 4, "q = 0 before, and q = 0, ±√μ after");
    let after: Vec<_> = s
        .branches
        .iter()
        .filter(|br| br.points.iter().any(|p| p.param > 0.5))
        .collect();
    assert_eq!(after.len(), 3);
    let mut kinds = Vec::new();
    for br in &after {
        let end = br
            .points
            .iter()
            .max_by(|a, b| a.param.total_cmp(&b.param))
            .expect("points");
        assert!((end.param - 1.0).abs() < 1e-12, "branches reach μ = 1");
        for pt in &br.points {
            let on = pt.q.abs() < 1e-9 || (pt.q * pt.q - pt.param).abs() < 1e-9;
            assert!(on, "point off the closed-form branches: {pt:?}");
        }
        kinds.push((end.q.round() as i32, br.kind));
    }
    kinds.sort_by_key(|k| k.0);
    assert_eq!(
        kinds,
        vec![
            (-1, EquilibriumKind::Center),
            (0, EquilibriumKind::Saddle),
            (1, EquilibriumKind::Center)
        ]
    );
    let before: Vec<_> = s
        .branches
        .iter()
        .filter(|br| br.points.iter().any(|p| p.param < -0.5))
        .collect();
    assert_eq!(before.len(), 1);
    assert_eq!(before[0].kind, EquilibriumKind::Center);
}

#[test]
fn imperfect_pitchfork_has_one_saddle_node_at_the_closed_form_value() {
    // H = p²/2 + q⁴/4 − μq²/2 − εq, ε = 0.05: folds where q³ − μq = ε and
    // 3q² = μ, i.e. μ = (27ε²/4)^(1/3) = 0.25649639200150, q = −√(μ/3) =
    // −0.29240177382129 (cusp catastrophe; closed form).
    let s = run(
        "p^2/2 + q^4/4 - mu*q^2/2 - eps*q",
        &[("mu", 0.0), ("eps", 0.05)],
        -1.0,
        1.0,
        window(),
    );
    assert_eq!(s.bifurcations.len(), 1, "{:?}", s.bifurcations);
    let b = &s.bifurcations[0];
    assert_eq!(b.kind, BifurcationKind::SaddleNode);
    assert!(
        (b.param - 0.25649639200150).abs() < 1e-8,
        "mu = {:.15}",
        b.param
    );
    assert!((b.q + 0.29240177382129).abs() < 1e-8, "q = {:.15}", b.q);
    // The connected branch and the two halves of the folded one.
    assert_eq!(s.branches.len(), 3);
}

/// Checks a sweep of an isola q² + μ² = a² (p = 0): two saddle-nodes at
/// μ = ±a, q = 0, and its two halves with V'' of sign `upper_kind` for q > 0.
fn assert_isola(s: &Sweep, a: f64, upper: EquilibriumKind, lower: EquilibriumKind) {
    let folds: Vec<_> = s
        .bifurcations
        .iter()
        .filter(|b| b.kind == BifurcationKind::SaddleNode)
        .collect();
    assert_eq!(folds.len(), 2, "{:?}", s.bifurcations);
    assert_eq!(s.bifurcations.len(), 2, "{:?}", s.bifurcations);
    for (b, mu) in folds.iter().zip([-a, a]) {
        assert!((b.param - mu).abs() < 1e-8, "fold at mu = {:.15}", b.param);
        assert!(b.q.abs() < 1e-8 && b.p.abs() < 1e-10, "{b:?}");
    }
    let on_isola: Vec<_> = s
        .branches
        .iter()
        .filter(|br| br.points.iter().all(|pt| pt.param.abs() <= a + 1e-9))
        .collect();
    assert_eq!(on_isola.len(), 2, "the two halves of the isola");
    let mut kinds = Vec::new();
    for br in &on_isola {
        for pt in &br.points {
            assert!(
                (pt.q * pt.q + pt.param * pt.param - a * a).abs() < 1e-9 && pt.p.abs() < 1e-10,
                "off q² + μ² = a²: {pt:?}"
            );
        }
        // Each half runs from one fold to the other.
        let ends = [&br.points[0], &br.points[br.points.len() - 1]];
        assert!(
            ends.iter().all(|e| (e.param.abs() - a).abs() < 1e-8),
            "{ends:?}"
        );
        assert!((ends[0].param - ends[1].param).abs() > a);
        let mid = &br.points[br.points.len() / 2];
        kinds.push((mid.q > 0.0, br.kind));
    }
    kinds.sort_by_key(|k| k.0);
    assert_eq!(kinds, vec![(false, lower), (true, upper)]);
}

#[test]
fn isola_inside_the_range_is_found_with_both_saddle_nodes() {
    // H = p²/2 + q³/3 + (μ² − a²)q, a = 0.6: V' = q² + μ² − a², so equilibria
    // exist only for |μ| < a, on the circle q² + μ² = a² (p = 0), born at the
    // saddle-node μ = −a and dying at μ = +a (q = 0); V'' = 2q, so q > 0 is a
    // center and q < 0 a saddle (closed form). Neither end of μ ∈ [−1, 1] has
    // an equilibrium.
    let s = run(
        "p^2/2 + q^3/3 + (mu^2 - 0.36)*q",
        &[("mu", 0.0)],
        -1.0,
        1.0,
        window(),
    );
    assert_eq!(s.branches.len(), 2, "{:?}", s.diagnostics);
    assert_isola(&s, 0.6, EquilibriumKind::Center, EquilibriumKind::Saddle);
}

#[test]
fn isola_beside_a_branch_across_the_range_is_traced_once() {
    // V' = (q − 3/2)(q² + μ² − a²), a = 0.6: the branch q = 3/2 for every μ
    // (V'' = q² + μ² − a² > 0 there: a center), and the isola q² + μ² = a²
    // with V'' = 2q(q − 3/2): q > 0 a saddle, q < 0 a center (closed form).
    // V = q⁴/4 − q³/2 + (μ² − a²)(q²/2 − 3q/2).
    let s = run(
        "p^2/2 + q^4/4 - 0.5*q^3 + (mu^2 - 0.36)*(q^2/2 - 1.5*q)",
        &[("mu", 0.0)],
        -1.0,
        1.0,
        window(),
    );
    assert_eq!(s.branches.len(), 3, "{:?}", s.diagnostics);
    assert_isola(&s, 0.6, EquilibriumKind::Saddle, EquilibriumKind::Center);
    let across: Vec<_> = s
        .branches
        .iter()
        .filter(|br| br.points.iter().any(|pt| pt.param.abs() > 0.9))
        .collect();
    assert_eq!(across.len(), 1);
    assert_eq!(across[0].kind, EquilibriumKind::Center);
    assert!(across[0].points.iter().all(|pt| (pt.q - 1.5).abs() < 1e-9));
}

#[test]
fn transcritical_normal_form_exchanges_stability() {
    // H = p²/2 + q³/3 − μq²/2: V' = q² − μq, branches q = 0 and q = μ cross at
    // the origin and exchange type (transcritical normal form; closed form).
    let s = run(
        "p^2/2 + q^3/3 - mu*q^2/2",
        &[("mu", 0.0)],
        -1.0,
        1.0,
        window(),
    );
    assert_eq!(s.bifurcations.len(), 1, "{:?}", s.bifurcations);
    assert_eq!(s.bifurcations[0].kind, BifurcationKind::Transcritical);
    assert!(s.bifurcations[0].param.abs() < 1e-8);
    assert_eq!(s.branches.len(), 4);
    for br in &s.branches {
        for pt in &br.points[1..br.points.len() - 1] {
            // V'' = 2q − μ: on q = 0 it is −μ, on q = μ it is μ.
            let vpp = 2.0 * pt.q - pt.param;
            let expect = if vpp > 0.0 {
                EquilibriumKind::Center
            } else {
                EquilibriumKind::Saddle
            };
            assert_eq!(pt.kind, expect, "{pt:?}");
        }
    }
}

#[test]
fn imperfect_pitchfork_fold_curve_is_the_cusp_27eps2_eq_4mu3() {
    // Folds of H = p²/2 + q⁴/4 − μq²/2 − εq: q³ − μq − ε = 0 and 3q² = μ give
    // μ = 3q², ε = −2q³, so 27ε² = 4μ³, with a cusp at μ = ε = 0 (cusp
    // catastrophe; closed form).
    use phasewright::core::folds::{FoldConfig, fold_curves};
    let sys = System::from_source(
        "p^2/2 + q^4/4 - mu*q^2/2 - eps*q",
        &[("mu", 0.0), ("eps", 0.0)],
    )
    .expect("formula");
    let f = fold_curves(
        &sys,
        ["mu", "eps"],
        [-0.5, 1.0, -0.2, 0.2],
        &window(),
        &FoldConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .expect("fold curves");
    assert_eq!(f.curves.len(), 1, "{:?}", f.diagnostics);
    let pts = &f.curves[0].points;
    assert!(pts.len() > 20);
    for pt in pts {
        let [mu, eps] = pt.params;
        assert!(
            (27.0 * eps * eps - 4.0 * mu * mu * mu).abs() < 1e-10,
            "27ε² − 4μ³ at {pt:?}"
        );
        assert!((3.0 * pt.q * pt.q - mu).abs() < 1e-10, "μ = 3q² at {pt:?}");
    }
    // Both ends on the ε = ±0.2 edges: q = ∓0.1^(1/3), μ = 3·0.1^(2/3) (closed form).
    let mu_edge = 3.0 * 0.1f64.powf(2.0 / 3.0);
    for end in [&pts[0], &pts[pts.len() - 1]] {
        assert!(
            (end.params[1].abs() - 0.2).abs() < 1e-12 && (end.params[0] - mu_edge).abs() < 1e-9,
            "{end:?}"
        );
    }
    assert_eq!(f.cusps.len(), 1);
    let c = &f.cusps[0];
    assert!(
        c.params[0].abs() < 1e-8 && c.params[1].abs() < 1e-8 && c.q.abs() < 1e-6,
        "{c:?}"
    );
}

fn binary(args: &[&str]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
        .expect("the binary runs")
}

#[test]
fn sweep_command_reports_the_imperfect_pitchfork_fold_as_json() {
    // μ = (27ε²/4)^(1/3) = 0.25649639200150 for ε = 0.05 (cusp catastrophe; closed form).
    let o = binary(&[
        "sweep",
        "--formula",
        "p^2/2 + q^4/4 - mu*q^2/2 - 0.05*q",
        "--param",
        "mu",
        "--from",
        "-1",
        "--to",
        "1",
        "--window",
        "-2,2,-1,1",
        "--json",
    ]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON");
    let bifs = v["bifurcations"].as_array().expect("bifurcations");
    assert_eq!(bifs.len(), 1);
    assert_eq!(bifs[0]["kind"], "saddle-node");
    let mu = bifs[0]["param"].as_f64().expect("param");
    assert!((mu - 0.25649639200150).abs() < 1e-8, "mu = {mu}");
    assert!((bifs[0]["q"].as_f64().expect("q") + 0.29240177382129).abs() < 1e-8);
    let branches = v["branches"].as_array().expect("branches");
    assert_eq!(branches.len(), 3);
    for b in branches {
        let p = &b["points"][0];
        for key in ["param", "q", "p", "energy"] {
            assert!(p[key].is_f64(), "{key} in {p}");
        }
        assert!(["center", "saddle", "degenerate"].contains(&p["kind"].as_str().expect("kind")));
    }
}

#[test]
fn sweep_command_csv_names_the_parameter_and_bad_input_exits_2() {
    let o = binary(&[
        "sweep",
        "--formula",
        "p^2/2 + q^3/3 - a*q",
        "--param",
        "a",
        "--from",
        "-1",
        "--to",
        "1",
        "--csv",
    ]);
    assert_eq!(o.status.code(), Some(0));
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(text.lines().next(), Some("row,branch,a,q,p,energy,kind"));
    // One saddle-node at a = 0, q = 0 (saddle-node normal form; closed form).
    let fold: Vec<&str> = text
        .lines()
        .filter(|l| l.starts_with("bifurcation"))
        .collect();
    assert_eq!(fold.len(), 1);
    assert!(fold[0].ends_with("saddle-node"));
    for bad in [
        vec!["--param", "b", "--from", "-1", "--to", "1"],
        vec!["--param", "a", "--from", "x", "--to", "1"],
        vec!["--param", "a", "--from", "1", "--to", "1"],
    ] {
        let mut args = vec!["sweep", "--formula", "p^2/2 + q^3/3 - a*q"];
        args.extend(bad);
        let o = binary(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(
            !err.contains("panicked") && err.contains("phasewright:"),
            "{err}"
        );
    }
}

#[test]
fn folds_command_lists_the_cusp() {
    // The cusp of 27ε² = 4μ³ sits at the origin (cusp catastrophe; closed form).
    let o = binary(&[
        "folds",
        "--formula",
        "p^2/2 + q^4/4 - mu*q^2/2 - eps*q",
        "--params",
        "mu,eps",
        "--box",
        "-0.5,1,-0.2,0.2",
        "--csv",
    ]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(text.lines().next(), Some("row,curve,mu,eps,q,p,energy"));
    let cusps: Vec<&str> = text.lines().filter(|l| l.starts_with("cusp")).collect();
    assert_eq!(cusps.len(), 1);
    let mu: f64 = cusps[0]
        .split(',')
        .nth(2)
        .and_then(|s| s.parse().ok())
        .expect("mu");
    assert!(mu.abs() < 1e-8);
}
