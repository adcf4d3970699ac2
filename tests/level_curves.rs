//! Level curves against closed forms: circles of the harmonic oscillator,
//! the saddle-cell rule, blank cells where H is undefined.

mod common;
use common::{system, window};

use phasewright::core::contour::{
    Grid, Level, LevelCurve, even_levels, level_curves, refine_curve, sample_grid,
};
use phasewright::core::system::System;

fn level(value: f64) -> Level {
    Level {
        value,
        is_separatrix: false,
    }
}

/// Signed area by the shoelace formula (common practice).
fn shoelace(points: &[[f64; 2]]) -> f64 {
    let n = points.len();
    let mut s = 0.0;
    for k in 0..n {
        let a = points[k];
        let b = points[(k + 1) % n];
        s += a[0] * b[1] - b[0] * a[1];
    }
    0.5 * s
}

fn circle_curves(n: usize) -> (System, Vec<LevelCurve>) {
    let sys = system("(q^2 + p^2)/2");
    let grid = sample_grid(&sys, &window(-1.5, 1.5, -1.5, 1.5), n, n);
    let curves = level_curves(&grid, &[level(0.5)]);
    (sys, curves)
}

#[test]
fn circle_level_is_one_closed_curve_whose_area_tends_to_pi() {
    // H = (q² + p²)/2 = 1/2 is the unit circle, enclosed area π (closed form).
    let mut errors = Vec::new();
    for n in [32, 64, 128, 256, 512] {
        let (_, curves) = circle_curves(n);
        assert_eq!(
            curves.len(),
            1,
            "grid {n}: one curve expected, got {}",
            curves.len()
        );
        let c = &curves[0];
        assert!(c.closed, "grid {n}: the circle must be closed");
        let area = shoelace(&c.points).abs();
        errors.push((area - std::f64::consts::PI).abs() / std::f64::consts::PI);
    }
    for w in errors.windows(2) {
        assert!(
            w[1] < w[0],
            "area error must fall as the grid is refined: {errors:?}"
        );
    }
    let at512 = errors[errors.len() - 1];
    assert!(at512 < 1e-3, "relative area error at 512 is {at512:e}");
}

#[test]
fn refined_circle_is_closer_to_pi_and_on_the_level() {
    // Vertices moved onto H = 1/2 lie on the unit circle (closed form).
    let (sys, mut curves) = circle_curves(128);
    let raw = (shoelace(&curves[0].points).abs() - std::f64::consts::PI).abs();
    refine_curve(&sys, &mut curves[0]);
    let c = &curves[0];
    for p in &c.points {
        let r = p[0].hypot(p[1]);
        assert!((r - 1.0).abs() < 1e-12, "refined vertex at radius {r}");
    }
    let refined = (shoelace(&c.points).abs() - std::f64::consts::PI).abs();
    assert!(
        refined < raw,
        "refined error {refined:e} not below raw {raw:e}"
    );
    assert_eq!(
        c.points.first(),
        c.points.last(),
        "a refined closed curve stays closed"
    );
}

#[test]
fn closed_curve_ends_where_it_starts_and_open_curve_ends_on_the_edge() {
    // In [-1.5, 1.5]², H = (q² + p²)/2 = 1/2 lies inside the window (closed),
    // H = 2 is a circle of radius 2 that leaves it (open arcs ending on the edge).
    let sys = system("(q^2 + p^2)/2");
    let w = window(-1.5, 1.5, -1.5, 1.5);
    let grid = sample_grid(&sys, &w, 101, 101);
    let curves = level_curves(&grid, &[level(0.5), level(2.0)]);
    let inner: Vec<_> = curves.iter().filter(|c| c.level == 0.5).collect();
    assert_eq!(inner.len(), 1);
    assert!(inner[0].closed);
    assert_eq!(inner[0].points.first(), inner[0].points.last());
    let outer: Vec<_> = curves.iter().filter(|c| c.level == 2.0).collect();
    // The radius-2 circle crosses the square's sides in four arcs (common practice).
    assert_eq!(outer.len(), 4);
    let on_edge = |p: &[f64; 2]| {
        let e = 1e-9;
        (p[0].abs() - 1.5).abs() < e || (p[1].abs() - 1.5).abs() < e
    };
    for c in outer {
        assert!(!c.closed);
        assert!(on_edge(&c.points[0]) && on_edge(&c.points[c.points.len() - 1]));
    }
}

#[test]
fn saddle_cell_follows_the_bilinear_saddle_value() {
    // One cell with corners v0 = 2 (0,0), v1 = −1 (1,0), v2 = 2 (1,1), v3 = −1 (0,1).
    // The bilinear interpolant's saddle value is (v0·v2 − v1·v3)/(v0 + v2 − v1 − v3)
    // = (4 − 1)/6 = 1/2 (Nielson & Hamann 1991, the asymptotic decider).
    let grid = Grid {
        window: window(0.0, 1.0, 0.0, 1.0),
        nq: 2,
        np: 2,
        values: vec![2.0, -1.0, -1.0, 2.0], // row 0: v0, v1; row 1: v3, v2
        nonfinite_fraction: 0.0,
        range: Some((-1.0, 2.0)),
    };
    // Level 1/4 is below the saddle value: the high corners v0, v2 are joined,
    // so the two segments cut off the low corners v1 = (1,0) and v3 = (0,1).
    let below = level_curves(&grid, &[level(0.25)]);
    assert_eq!(below.len(), 2);
    for c in &below {
        let mid = [
            (c.points[0][0] + c.points[1][0]) / 2.0,
            (c.points[0][1] + c.points[1][1]) / 2.0,
        ];
        let near_v1 = mid[0] > 0.5 && mid[1] < 0.5;
        let near_v3 = mid[0] < 0.5 && mid[1] > 0.5;
        assert!(
            near_v1 || near_v3,
            "segment {:?} should cut off a low corner",
            c.points
        );
    }
    // Level 3/4 is above it: the low corners are joined; segments cut off v0 and v2.
    let above = level_curves(&grid, &[level(0.75)]);
    assert_eq!(above.len(), 2);
    for c in &above {
        let mid = [
            (c.points[0][0] + c.points[1][0]) / 2.0,
            (c.points[0][1] + c.points[1][1]) / 2.0,
        ];
        let near_v0 = mid[0] < 0.5 && mid[1] < 0.5;
        let near_v2 = mid[0] > 0.5 && mid[1] > 0.5;
        assert!(
            near_v0 || near_v2,
            "segment {:?} should cut off a high corner",
            c.points
        );
    }
}

#[test]
fn logarithm_leaves_the_left_half_blank() {
    // ln q is undefined (NaN) for q < 0 and −∞ at q = 0 (common practice): with
    // 101 columns on [−1, 1], columns 0..=50 (q ≤ 0) are non-finite, 51/101 of the grid.
    let sys = system("p^2/2 + ln(q)");
    let grid = sample_grid(&sys, &window(-1.0, 1.0, -1.0, 1.0), 101, 61);
    assert!(
        (grid.nonfinite_fraction - 51.0 / 101.0).abs() < 1e-15,
        "{}",
        grid.nonfinite_fraction
    );
    assert!(grid.values[..50].iter().all(|v| v.is_nan()));
    let levels: Vec<Level> = even_levels(&grid, 12).into_iter().map(level).collect();
    assert_eq!(levels.len(), 12);
    let curves = level_curves(&grid, &levels);
    assert!(!curves.is_empty());
    let dq = grid.dq();
    for c in &curves {
        for p in &c.points {
            assert!(
                p[0] >= dq - 1e-12,
                "a vertex at q = {} lies in a blank cell",
                p[0]
            );
        }
    }
}

#[test]
fn curves_break_at_a_blank_hole() {
    // H = q outside the disc q² + p² < 1/4 and NaN inside (0·ln of a negative
    // number is NaN): the level q = 0.01 is a vertical line cut in two by the hole.
    let sys = system("q + 0*ln(q^2 + p^2 - 0.25)");
    let grid = sample_grid(&sys, &window(-1.0, 1.0, -1.0, 1.0), 200, 200);
    assert!(grid.nonfinite_fraction > 0.1);
    let curves = level_curves(&grid, &[level(0.01)]);
    assert_eq!(curves.len(), 2, "{curves:?}");
    for c in &curves {
        assert!(!c.closed);
        let ends = [c.points[0], c.points[c.points.len() - 1]];
        // One end on the window edge p = ±1, the other at the hole's rim.
        let mut ps: Vec<f64> = ends.iter().map(|e| e[1].abs()).collect();
        ps.sort_by(f64::total_cmp);
        assert!((ps[1] - 1.0).abs() < 1e-9, "{ends:?}");
        assert!(ps[0] > 0.45 && ps[0] < 0.55, "{ends:?}");
    }
}

#[test]
fn even_levels_lie_strictly_inside_the_range() {
    // H = q on [0, 1] ranges over [0, 1]; 3 even levels are 1/4, 1/2, 3/4 (closed form).
    let sys = system("q");
    let grid = sample_grid(&sys, &window(0.0, 1.0, 0.0, 1.0), 11, 11);
    let l = even_levels(&grid, 3);
    assert_eq!(l.len(), 3);
    for (a, b) in l.iter().zip([0.25, 0.5, 0.75]) {
        assert!((a - b).abs() < 1e-15);
    }
    let constant = sample_grid(&system("2"), &window(0.0, 1.0, 0.0, 1.0), 11, 11);
    assert!(even_levels(&constant, 5).is_empty());
}

#[test]
fn analysis_reports_blank_share_and_constant_h() {
    use phasewright::core::Cancel;
    use phasewright::core::analysis::{AnalysisConfig, analyze};
    // ln q is undefined for q ≤ 0 (common practice): on [−1, 1] about half the window.
    let sys = system("p^2/2 + ln(q)");
    let cfg = AnalysisConfig {
        grid: 64,
        ..AnalysisConfig::default()
    };
    let a = analyze(&sys, &window(-1.0, 1.0, -1.0, 1.0), &cfg, &Cancel::never());
    assert!(!a.cancelled);
    assert!((a.grid.nonfinite_fraction - 0.5).abs() < 0.02);
    assert!(
        a.diagnostics
            .iter()
            .any(|d| d.message.contains("NaN or infinite on 50%")),
        "{:?}",
        a.diagnostics
    );
    assert!(!a.curves.is_empty());
    let flat = analyze(
        &system("3"),
        &window(-1.0, 1.0, -1.0, 1.0),
        &cfg,
        &Cancel::never(),
    );
    assert!(
        flat.diagnostics
            .iter()
            .any(|d| d.message.contains("constant in view"))
    );
    assert!(flat.curves.is_empty());
    let cancel = Cancel::new();
    cancel.cancel();
    let stopped = analyze(&sys, &window(-1.0, 1.0, -1.0, 1.0), &cfg, &cancel);
    assert!(stopped.cancelled);
    assert!(stopped.curves.is_empty());
}

#[test]
fn grid_samples_equal_pointwise_energy() {
    // The batched row evaluation must give the formula's value at every sample
    // (the scalar evaluation is the reference); the formula mixes p-only terms,
    // divisions by powers of two and by 3, functions and a parameter.
    let sys = match System::from_source(
        "p^2/2 + sin(p)/3 + q^4/4 - mu*q^2/2 + 0.05*q + exp(-q*p)/8 + (q - p)^3/7 - ln(q + 3)*q + 2 - q",
        &[("mu", 1.3)],
    ) {
        Ok(s) => s,
        Err(e) => panic!("{e}"),
    };
    let grid = sample_grid(&sys, &window(-2.0, 2.0, -1.5, 1.5), 37, 23);
    // The same program over scattered points (no row folding).
    let qs: Vec<f64> = (0..300)
        .map(|k| -2.0 + 4.0 * ((k * 37) % 300) as f64 / 300.0)
        .collect();
    let ps: Vec<f64> = (0..300)
        .map(|k| -1.5 + 3.0 * ((k * 91) % 300) as f64 / 300.0)
        .collect();
    let mut out = vec![0.0; 300];
    sys.row_program().eval_points(&qs, &ps, &mut out);
    for k in 0..300 {
        let exact = sys.energy(qs[k], ps[k]);
        assert!(
            (out[k] - exact).abs() <= 1e-13 * exact.abs().max(1.0),
            "point {k}: {} vs {exact}",
            out[k]
        );
    }
    for j in 0..grid.np {
        for i in 0..grid.nq {
            let exact = sys.energy(grid.q(i), grid.p(j));
            let got = grid.value(i, j);
            assert!(
                (got - exact).abs() <= 1e-13 * exact.abs().max(1.0),
                "({i}, {j}): {got} vs {exact}"
            );
        }
    }
}
