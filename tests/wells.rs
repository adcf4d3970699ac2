//! Escape energies and separatrix connections against closed forms of the
//! pendulum, the symmetric double well and the cubic well.
//!
//! The equilibria are placed at their known positions (so these tests do not
//! depend on the equilibrium search) and classified by `equilibria::classify`.

mod common;
use common::{system, window};

use phasewright::core::analysis::levels_to_draw;
use phasewright::core::contour::{Grid, sample_grid};
use phasewright::core::equilibria::{Equilibrium, EquilibriumKind, classify};
use phasewright::core::system::System;
use phasewright::core::wells::{Connection, ConnectionKind, Well, wells_and_connections};
use phasewright::core::window::Window;
use std::f64::consts::PI;

/// An equilibrium at a known critical point, classified by the project's classifier.
fn equilibrium(sys: &System, q: f64, p: f64) -> Equilibrium {
    classify(sys, q, p, &window(-100.0, 100.0, -100.0, 100.0))
}

struct Case {
    eqs: Vec<Equilibrium>,
    grid: Grid,
    wells: Vec<Well>,
    connections: Vec<Connection>,
}

fn run(src: &str, w: Window, points: &[(f64, f64)], n: usize) -> Case {
    let sys = system(src);
    let eqs: Vec<Equilibrium> = points
        .iter()
        .map(|&(q, p)| equilibrium(&sys, q, p))
        .collect();
    let grid = sample_grid(&sys, &w, n, n);
    let (wells, connections) = wells_and_connections(&sys, &w, &grid, &eqs, &[]);
    Case {
        eqs,
        grid,
        wells,
        connections,
    }
}

/// The pendulum H = p²/2 − cos q on [−7, 7] × [−3, 3] with its equilibria at
/// multiples of π (closed form: H_q = sin q = 0, H_p = p = 0).
fn pendulum() -> Case {
    run(
        "p^2/2 - cos(q)",
        window(-7.0, 7.0, -3.0, 3.0),
        &[
            (-2.0 * PI, 0.0),
            (-PI, 0.0),
            (0.0, 0.0),
            (PI, 0.0),
            (2.0 * PI, 0.0),
        ],
        256,
    )
}

fn well_at(case: &Case, index: usize) -> &Well {
    match case.wells.iter().find(|w| w.center == index) {
        Some(w) => w,
        None => panic!("no well for equilibrium {index}: {:?}", case.wells),
    }
}

#[test]
fn pendulum_center_escapes_at_one_with_depth_two() {
    // H = p²/2 − cos q: centers at 0, ±2π (H = −1), saddles at ±π (H = 1); the
    // well at 0 is bounded by the separatrix level 1, depth 2 (closed form).
    let case = pendulum();
    assert_eq!(case.wells.len(), 3, "{:?}", case.wells);
    let w = well_at(&case, 2);
    assert_eq!(w.escape_energy, Some(1.0));
    assert!((w.depth.unwrap_or(f64::NAN) - 2.0).abs() < 1e-12, "{w:?}");
    assert!(matches!(w.escape_saddle, Some(1) | Some(3)), "{w:?}");
    assert_eq!(w.edge_energy, None, "the middle well is in view: {w:?}");
    // The wells at ±2π are cut by the window edge q = ±7 at H = −cos 7 < 1.
    for k in [0, 4] {
        let side = well_at(&case, k);
        assert_eq!(side.escape_energy, Some(1.0), "{side:?}");
        let edge = side.edge_energy.unwrap_or(f64::NAN);
        assert!(edge < 1.0 && edge > -1.0, "{side:?}");
    }
    assert_eq!(case.grid.nq, 256);
}

#[test]
fn pendulum_saddles_are_joined_by_two_heteroclinic_arcs_on_the_closed_form() {
    // The pendulum separatrix is p = ±2 cos(q/2) between q = −π and π (closed form,
    // from H = 1: p² = 2(1 + cos q) = 4 cos²(q/2)); outer branches leave the window.
    let case = pendulum();
    assert_eq!(case.connections.len(), 2, "{:?}", case.connections);
    let mut signs = Vec::new();
    for c in &case.connections {
        assert_eq!(c.kind, ConnectionKind::Heteroclinic);
        let mut ends = [c.from, c.to];
        ends.sort();
        assert_eq!(ends, [1, 3]);
        assert_eq!(c.energy, 1.0);
        assert!(c.path.len() > 20);
        for x in &c.path {
            let exact = 2.0 * (x[0] / 2.0).cos();
            assert!(
                (x[1].abs() - exact).abs() < 1e-8,
                "vertex {x:?} off p = ±2cos(q/2)"
            );
        }
        signs.push(c.path[c.path.len() / 2][1].signum());
    }
    signs.sort_by(f64::total_cmp);
    assert_eq!(signs, [-1.0, 1.0], "one arc above, one below");
}

#[test]
fn double_well_centers_escape_at_the_middle_saddle_through_a_figure_eight() {
    // H = p²/2 + q⁴/4 − q²/2: centers at q = ±1 (H = −1/4), saddle at 0 (H = 0);
    // both wells end at E = 0, depth 1/4, and the separatrix p² = q² − q⁴/2 is two
    // homoclinic loops (closed form).
    let case = run(
        "p^2/2 + q^4/4 - q^2/2",
        window(-2.0, 2.0, -1.5, 1.5),
        &[(-1.0, 0.0), (0.0, 0.0), (1.0, 0.0)],
        256,
    );
    for k in [0, 2] {
        let w = well_at(&case, k);
        assert_eq!(w.escape_energy, Some(0.0), "{w:?}");
        assert_eq!(w.escape_saddle, Some(1));
        assert!((w.depth.unwrap_or(f64::NAN) - 0.25).abs() < 1e-12);
        assert_eq!(w.edge_energy, None);
    }
    assert_eq!(case.connections.len(), 2, "{:?}", case.connections);
    let mut lobes = Vec::new();
    for c in &case.connections {
        assert_eq!(c.kind, ConnectionKind::Homoclinic);
        assert_eq!((c.from, c.to), (1, 1));
        for x in &c.path {
            let p2 = x[0] * x[0] - x[0].powi(4) / 2.0;
            assert!(
                (x[1] * x[1] - p2).abs() < 1e-8,
                "vertex {x:?} off p² = q² − q⁴/2"
            );
        }
        // Each loop reaches q = ±√2 where p = 0 (closed form).
        let reach = c.path.iter().map(|x| x[0].abs()).fold(0.0, f64::max);
        assert!((reach - 2f64.sqrt()).abs() < 1e-2, "loop reaches {reach}");
        lobes.push(c.path[c.path.len() / 2][0].signum());
    }
    lobes.sort_by(f64::total_cmp);
    assert_eq!(lobes, [-1.0, 1.0], "one loop round each center");
}

#[test]
fn cubic_well_escapes_at_one_sixth_through_one_homoclinic_loop() {
    // H = p²/2 + q²/2 − q³/3: center at 0 (H = 0), saddle at q = 1 (H = 1/6); the
    // separatrix p² = (1 − q)²(1 + 2q)/3 loops round the center to q = −1/2 (closed form).
    let case = run(
        "p^2/2 + q^2/2 - q^3/3",
        window(-1.0, 2.0, -1.5, 1.5),
        &[(0.0, 0.0), (1.0, 0.0)],
        200,
    );
    let w = well_at(&case, 0);
    let sixth = case.eqs[1].energy;
    assert!((sixth - 1.0 / 6.0).abs() < 1e-15);
    assert_eq!(w.escape_energy, Some(sixth));
    assert!((w.depth.unwrap_or(f64::NAN) - 1.0 / 6.0).abs() < 1e-12);
    assert_eq!(case.connections.len(), 1, "{:?}", case.connections);
    let c = &case.connections[0];
    assert_eq!(c.kind, ConnectionKind::Homoclinic);
    for x in &c.path {
        let p2 = (1.0 - x[0]).powi(2) * (1.0 + 2.0 * x[0]) / 3.0;
        assert!(
            (x[1] * x[1] - p2).abs() < 1e-8,
            "vertex {x:?} off the separatrix"
        );
    }
    let left = c.path.iter().map(|x| x[0]).fold(f64::INFINITY, f64::min);
    assert!((left + 0.5).abs() < 1e-2, "loop turns at q = {left}");
}

#[test]
fn maxima_of_h_are_wells_too() {
    // H = −(p²/2 + q⁴/4 − q²/2): the centers at q = ±1 are maxima (H = 1/4), the
    // saddle at 0 has H = 0; the depth is counted positive (closed form).
    let case = run(
        "-(p^2/2 + q^4/4 - q^2/2)",
        window(-2.0, 2.0, -1.5, 1.5),
        &[(-1.0, 0.0), (0.0, 0.0), (1.0, 0.0)],
        128,
    );
    for k in [0, 2] {
        let w = well_at(&case, k);
        assert_eq!(w.escape_energy, Some(0.0), "{w:?}");
        assert!((w.depth.unwrap_or(f64::NAN) - 0.25).abs() < 1e-12, "{w:?}");
    }
}

#[test]
fn oscillator_without_saddle_has_no_escape() {
    // H = p²/2 + q²/2 has a single center and no saddle (closed form): every level
    // is a closed orbit, the well only ends at the window edge.
    let case = run(
        "p^2/2 + q^2/2",
        window(-1.0, 1.0, -2.0, 2.0),
        &[(0.0, 0.0)],
        64,
    );
    let w = well_at(&case, 0);
    assert_eq!(w.escape_energy, None);
    assert_eq!(w.depth, None);
    assert_eq!(w.escape_saddle, None);
    // The circle first touches the nearer sides q = ±1 at H = 1/2 (closed form);
    // the grid vertex on the side nearest that point lies exactly there.
    let edge = w.edge_energy.unwrap_or(f64::NAN);
    assert!((edge - 0.5).abs() < 0.01, "edge at {edge}");
    assert!(case.connections.is_empty());
}

#[test]
fn saddle_levels_are_drawn_as_separatrices_once() {
    // Both pendulum saddles lie at H = 1 (closed form): one separatrix level.
    let sys = system("p^2/2 - cos(q)");
    let w = window(-7.0, 7.0, -3.0, 3.0);
    let eqs: Vec<Equilibrium> = [(-PI, 0.0), (0.0, 0.0), (PI, 0.0)]
        .iter()
        .map(|&(q, p)| equilibrium(&sys, q, p))
        .collect();
    let grid = sample_grid(&sys, &w, 128, 128);
    let levels = levels_to_draw(&grid, 10, &eqs);
    let seps: Vec<_> = levels.iter().filter(|l| l.is_separatrix).collect();
    assert_eq!(seps.len(), 1);
    assert!((seps[0].value - 1.0).abs() < 1e-15);
    assert_eq!(levels.len(), 11);
}

#[test]
fn analysis_of_the_pendulum_finds_its_wells_and_separatrix() {
    use phasewright::core::Cancel;
    use phasewright::core::analysis::{AnalysisConfig, analyze};
    // Pendulum H = p²/2 − cos q (closed forms as above): saddles at ±π, H = 1, joined
    // above and below; the center at 0 escapes at 1.
    let sys = system("p^2/2 - cos(q)");
    let a = analyze(
        &sys,
        &window(-7.0, 7.0, -3.0, 3.0),
        &AnalysisConfig::default(),
        &Cancel::never(),
    );
    let saddles: Vec<usize> = (0..a.equilibria.len())
        .filter(|&k| a.equilibria[k].kind == EquilibriumKind::Saddle)
        .collect();
    assert_eq!(saddles.len(), 2, "{:?}", a.equilibria);
    let middle = a
        .wells
        .iter()
        .find(|w| w.q.abs() < 1e-9)
        .unwrap_or_else(|| panic!("no well at 0: {:?}", a.wells));
    assert!(
        (middle.escape_energy.unwrap_or(f64::NAN) - 1.0).abs() < 1e-12,
        "{middle:?}"
    );
    assert!((middle.depth.unwrap_or(f64::NAN) - 2.0).abs() < 1e-12);
    assert_eq!(a.connections.len(), 2, "{:?}", a.connections);
    assert!(
        a.connections
            .iter()
            .all(|c| c.kind == ConnectionKind::Heteroclinic)
    );
    // The wells at ±2π are cut by the edges q = ±7 (−cos 7 < 1): one note for both.
    let notes: Vec<_> = a
        .diagnostics
        .iter()
        .filter(|d| d.message.contains("reaches the window edge"))
        .collect();
    assert_eq!(notes.len(), 1, "{:?}", a.diagnostics);
    assert!(
        notes[0].message.contains("and 1 more well"),
        "{}",
        notes[0].message
    );
    let seps: Vec<_> = a.curves.iter().filter(|c| c.is_separatrix).collect();
    assert!(!seps.is_empty());
    for c in seps {
        assert!((c.level - 1.0).abs() < 1e-12);
    }
}

#[test]
fn analysis_of_the_double_well_finds_a_figure_eight() {
    use phasewright::core::Cancel;
    use phasewright::core::analysis::{AnalysisConfig, analyze};
    // H = p²/2 + q⁴/4 − q²/2 (closed forms as above).
    let sys = system("p^2/2 + q^4/4 - q^2/2");
    let a = analyze(
        &sys,
        &window(-2.0, 2.0, -1.5, 1.5),
        &AnalysisConfig::default(),
        &Cancel::never(),
    );
    assert_eq!(a.wells.len(), 2, "{:?}", a.wells);
    for w in &a.wells {
        assert!(w.escape_energy.unwrap_or(f64::NAN).abs() < 1e-12, "{w:?}");
        assert!((w.depth.unwrap_or(f64::NAN) - 0.25).abs() < 1e-12);
    }
    assert_eq!(a.connections.len(), 2, "{:?}", a.connections);
    assert!(
        a.connections
            .iter()
            .all(|c| c.kind == ConnectionKind::Homoclinic)
    );
}

#[test]
fn saddle_directions_are_found_when_not_given() {
    // Without eigen-directions on the saddle the wells code takes them from the
    // Jacobian; the double-well figure-eight (closed form as above) is found alike.
    let sys = system("p^2/2 + q^4/4 - q^2/2");
    let w = window(-2.0, 2.0, -1.5, 1.5);
    let eqs: Vec<Equilibrium> = [(-1.0, 0.0), (0.0, 0.0), (1.0, 0.0)]
        .iter()
        .map(|&(q, p)| Equilibrium {
            stable_dir: None,
            unstable_dir: None,
            ..equilibrium(&sys, q, p)
        })
        .collect();
    let grid = sample_grid(&sys, &w, 128, 128);
    let (_, connections) = wells_and_connections(&sys, &w, &grid, &eqs, &[]);
    assert_eq!(connections.len(), 2, "{connections:?}");
    assert!(
        connections
            .iter()
            .all(|c| c.kind == ConnectionKind::Homoclinic && c.from == 1)
    );
}
