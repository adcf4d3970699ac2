//! Safe basins and integrity measures against closed forms of the undriven
//! double well, the damped energy balance, and the erosion of the driven
//! well past its Melnikov threshold.

use phasewright::core::Cancel;
use phasewright::core::analysis::AnalysisConfig;
use phasewright::core::basin::{
    BasinConfig, WellRegion, amplitude_range, basin, erosion, well_regions,
};
use phasewright::core::system::System;
use phasewright::core::window::Window;
use std::f64::consts::PI;

const DOUBLE_WELL: &str = "p^2/2 - q^2/2 + q^4/4";
const DRIVEN: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";

fn right_well(regions: &[WellRegion]) -> &WellRegion {
    regions
        .iter()
        .find(|r| r.center[0] > 0.5)
        .expect("the right well is found")
}

fn regions(h0: &System, w: &Window) -> Vec<WellRegion> {
    well_regions(h0, w, &AnalysisConfig::default(), &Cancel::never())
}

/// The right lobe of H = p²/2 − q²/2 + q⁴/4 below its saddle level 0:
/// H < 0 and q > 0 (closed form of the level set p² = q² − q⁴/2).
fn in_right_lobe(x: [f64; 2]) -> bool {
    let h = x[1] * x[1] / 2.0 - x[0] * x[0] / 2.0 + x[0].powi(4) / 4.0;
    h < 0.0 && x[0] > 0.0
}

/// The lobe's perimeter, 2 × the arc length of p = q√(1 − q²/2) over
/// [0, √2], by a fine polyline (the curve itself is the closed form).
fn lobe_perimeter() -> f64 {
    let n = 200_000;
    let r2 = 2f64.sqrt();
    let pt = |k: usize| {
        let q = r2 * k as f64 / n as f64;
        [q, q * (1.0 - q * q / 2.0).max(0.0).sqrt()]
    };
    2.0 * (0..n)
        .map(|k| {
            let (a, b) = (pt(k), pt(k + 1));
            (b[0] - a[0]).hypot(b[1] - a[1])
        })
        .sum::<f64>()
}

/// Zero drive, zero damping: the safe set of the right well is the inside
/// of its separatrix lobe, of area 2∫₀^√2 q√(1 − q²/2) dq = 4/3 (closed
/// form). The computed area converges to it as the lattice is refined,
/// within 2 × perimeter × cell size (the cells the boundary crosses).
#[test]
fn undriven_lobe_area_converges_to_four_thirds() {
    let sys = System::from_source(DOUBLE_WELL, &[]).unwrap();
    let w = Window::new(-1.6, 1.6, -0.8, 0.8).unwrap();
    let regions = regions(&sys, &w);
    assert_eq!(regions.len(), 2, "two wells");
    let right = right_well(&regions).clone();
    let perimeter = lobe_perimeter();
    let mut errors = Vec::new();
    for n in [50, 100, 200] {
        let mut cfg = BasinConfig::new(2.0 * PI, 0.0);
        cfg.lattice = n;
        cfg.periods = 10;
        let b = basin(
            &sys,
            &sys,
            std::slice::from_ref(&right),
            &w,
            &cfg,
            &Cancel::never(),
            &|_, _| {},
        )
        .unwrap();
        let well = &b.wells[0];
        let cell = b.cell_size()[0].max(b.cell_size()[1]);
        let err = (well.safe_area - 4.0 / 3.0).abs();
        assert!(
            err <= 2.0 * perimeter * cell,
            "n = {n}: area {} vs 4/3",
            well.safe_area
        );
        // Undamped and undriven, every lobe start stays (the rule is exact).
        assert_eq!(well.safe, well.starts, "n = {n}");
        errors.push(err);
    }
    assert!(
        errors[2] < errors[0],
        "refining reduces the error: {errors:?}"
    );
    assert!(errors[2] < 2e-3, "200 × 200: {errors:?}");
}

/// Zero drive with damping: H₀ only falls (dH/dt = −δ p², common
/// practice), so every start in the lobe (below the escape energy 0, q > 0)
/// is safe, and the safe set holds the undamped lobe; no start from outside
/// it counts. Local measure at zero drive: the nearest point of the lobe's
/// edge to the center (1, 0) is the turning point (√2, 0) (d² = (q − 1)² +
/// q² − q⁴/2 on the edge, least at the end q = √2; closed form).
#[test]
fn damped_undriven_basin_is_the_whole_lobe() {
    let sys = System::from_source(DOUBLE_WELL, &[]).unwrap();
    let w = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    let regions = regions(&sys, &w);
    let mut cfg = BasinConfig::new(2.0 * PI / 1.2, 0.2);
    cfg.lattice = 120;
    cfg.periods = 20;
    // progress counts starts: it ends at the number of lobe starts of both wells
    let last = std::sync::Mutex::new((0, 0));
    let note = |done: usize, total: usize| {
        let mut l = last.lock().unwrap();
        *l = (l.0.max(done), total);
    };
    let b = basin(&sys, &sys, &regions, &w, &cfg, &Cancel::never(), &note).unwrap();
    let starts: usize = b.wells.iter().map(|w| w.starts).sum();
    assert_eq!(*last.lock().unwrap(), (starts, starts));
    let k = regions.iter().position(|r| r.center[0] > 0.5).unwrap();
    let well = &b.wells[k];
    let mut lobe = 0;
    for c in 0..cfg.lattice * cfg.lattice {
        let x = b.cell_centre(c);
        if in_right_lobe(x) {
            lobe += 1;
            assert!(well.is_safe(c, cfg.periods), "start {x:?} in the lobe");
        } else {
            assert!(!well.is_safe(c, cfg.periods), "start {x:?} outside it");
        }
    }
    assert_eq!(well.safe, lobe);
    assert!((well.integrity - 1.0).abs() < 1e-15);
    let cell = b.cell_size()[0].hypot(b.cell_size()[1]);
    assert!(
        (well.reference_radius - (2f64.sqrt() - 1.0)).abs() <= cell,
        "{}",
        well.reference_radius
    );
    assert_eq!(well.local_integrity, 1.0);
}

/// The driven double well of the example session (W = 1.2, δ = 0.088):
/// the global integrity is 1 at zero amplitude, does not grow with the
/// amplitude beyond the lattice's noise, and falls below 0.5 somewhere above
/// the Melnikov threshold F = δ·4cosh(πW/2)/(3√2πW) (the closed form of the
/// driven double well, Guckenheimer & Holmes 1983 §4.5): erosion starts near
/// the homoclinic tangency (common practice).
#[test]
fn driven_integrity_erodes_past_the_melnikov_threshold() {
    let (wd, delta) = (1.2, 0.088);
    let sys = System::from_source(DRIVEN, &[("F", 0.0), ("W", wd)]).unwrap();
    let k = sys.formula().param_index("F").unwrap();
    let h0 = sys.with_param(k, 0.0);
    let w = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    let regions = regions(&h0, &w);
    let mut cfg = BasinConfig::new(2.0 * PI / wd, delta);
    cfg.lattice = 50;
    cfg.periods = 30;
    let amps = amplitude_range(0.0, 0.3, 11);
    let e = erosion(
        &sys,
        k,
        &amps,
        &regions,
        &w,
        &cfg,
        &Cancel::never(),
        &|_, _| {},
    )
    .unwrap();
    let threshold = delta * 4.0 * (PI * wd / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * wd);
    let right = regions.iter().position(|r| r.center[0] > 0.5).unwrap();
    let g: Vec<f64> = e.points.iter().map(|p| p.integrity[right]).collect();
    assert_eq!(g[0], 1.0, "{g:?}");
    // lattice noise: a few cells of the lobe's ~ 200 starts
    let noise = 4.0 / e.reference_area[right] * (3.8 * 2.4 / 2500.0);
    for pair in g.windows(2) {
        assert!(pair[1] <= pair[0] + noise, "{g:?}");
    }
    assert!(
        e.points
            .iter()
            .zip(&g)
            .any(|(p, &v)| p.amplitude > threshold && v < 0.5),
        "threshold {threshold}: {g:?}"
    );
    // below the threshold the well keeps nearly all of its area
    for (p, &v) in e.points.iter().zip(&g) {
        if p.amplitude < 0.5 * threshold {
            assert!(v > 0.9, "F = {}: {v}", p.amplitude);
        }
    }
}

/// Results do not depend on the thread count (the project's invariant):
/// the same mask from one thread and from all.
#[test]
fn basin_is_the_same_on_one_thread_and_on_all() {
    let sys = System::from_source(DRIVEN, &[("F", 0.2), ("W", 1.2)]).unwrap();
    let k = sys.formula().param_index("F").unwrap();
    let h0 = sys.with_param(k, 0.0);
    let w = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    let regions = regions(&h0, &w);
    let mut cfg = BasinConfig::new(2.0 * PI / 1.2, 0.088);
    cfg.lattice = 40;
    cfg.periods = 20;
    let run = || basin(&sys, &h0, &regions, &w, &cfg, &Cancel::never(), &|_, _| {}).unwrap();
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap()
        .install(run);
    let all = rayon::ThreadPoolBuilder::new()
        .num_threads(4)
        .build()
        .unwrap()
        .install(run);
    assert_eq!(one, all);
    assert!(
        one.wells.iter().any(|w| w.safe < w.starts),
        "some erosion at F = 0.2"
    );
}

/// Cancel stops the run and says so; the lattice and periods are checked.
#[test]
fn cancel_and_bad_settings() {
    let sys = System::from_source(DOUBLE_WELL, &[]).unwrap();
    let w = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
    let regions = regions(&sys, &w);
    let cancel = Cancel::new();
    cancel.cancel();
    let cfg = BasinConfig::new(1.0, 0.0);
    let b = basin(&sys, &sys, &regions, &w, &cfg, &cancel, &|_, _| {}).unwrap();
    assert!(b.cancelled);
    let mut bad = cfg.clone();
    bad.lattice = 0;
    let e = basin(&sys, &sys, &regions, &w, &bad, &Cancel::never(), &|_, _| {}).unwrap_err();
    assert!(e.contains("lattice"), "{e}");
    let mut bad = cfg;
    bad.period = -1.0;
    let e = basin(&sys, &sys, &regions, &w, &bad, &Cancel::never(), &|_, _| {}).unwrap_err();
    assert!(e.contains("period"), "{e}");
}

/// Drives far above the threshold (F up to 3 against a barrier of height
/// 1/4) throw every start out of a well within a few periods: such a well
/// has global and local integrity 0 (no safe disc, however small, around
/// the center; the definition's edge case), and a well with a safe disc has
/// its nearest lattice point to the center safe.
#[test]
fn a_fully_eroded_well_has_no_safe_disc() {
    let mut eroded = 0;
    for f in [0.8, 1.5, 3.0] {
        let sys = System::from_source(DRIVEN, &[("F", f), ("W", 1.2)]).unwrap();
        let k = sys.formula().param_index("F").unwrap();
        let h0 = sys.with_param(k, 0.0);
        let w = Window::new(-1.9, 1.9, -1.2, 1.2).unwrap();
        let regions = regions(&h0, &w);
        let mut cfg = BasinConfig::new(2.0 * PI / 1.2, 0.088);
        cfg.lattice = 40;
        cfg.periods = 20;
        let b = basin(&sys, &h0, &regions, &w, &cfg, &Cancel::never(), &|_, _| {}).unwrap();
        for well in &b.wells {
            if well.safe == 0 {
                eroded += 1;
                assert_eq!(well.integrity, 0.0);
                assert_eq!(well.safe_radius, 0.0, "F = {f}");
                assert_eq!(well.local_integrity, 0.0, "F = {f}");
            } else if well.safe_radius > 0.0 {
                let nearest = (0..cfg.lattice * cfg.lattice)
                    .min_by(|&a, &c| {
                        let d = |k: usize| {
                            let x = b.cell_centre(k);
                            (x[0] - well.center[0]).hypot(x[1] - well.center[1])
                        };
                        d(a).total_cmp(&d(c))
                    })
                    .unwrap();
                assert!(well.is_safe(nearest, cfg.periods), "F = {f}");
            }
        }
    }
    assert!(eroded > 0, "some well is fully eroded at F ≤ 3");
}
