//! The figures of safe basins: the mask of each well as filled cells over
//! the undriven separatrix, and the erosion curve with the Melnikov threshold.

use super::*;
use crate::core::basin::{Basin, Erosion};

/// How far toward the paper a well's colour is mixed for its safe cells.
const SAFE_TINT: f64 = 0.35;
/// … and for its eroded cells (starts in the well that left it).
const ERODED_TINT: f64 = 0.82;
/// Width of the faint undriven separatrix behind a mask.
const FAINT_WIDTH: f64 = 1.0;
/// Width of the swatch that stands for filled cells in a legend.
const CELL_SWATCH_WIDTH: f64 = 8.0;
/// The Melnikov threshold's dashed line.
pub const THRESHOLD_COLOUR: Rgb = Rgb(0xe4, 0x57, 0x2e);
pub const THRESHOLD_WIDTH: f64 = 1.6;
pub const INTEGRITY_WIDTH: f64 = 2.0;
pub const LOCAL_INTEGRITY_WIDTH: f64 = 1.4;

/// The colour of well `k` (the orbit colours in turn).
pub fn well_colour(k: usize) -> Rgb {
    ORBIT_COLOURS[k % ORBIT_COLOURS.len()]
}

/// The fill of well `k`'s safe cells, or of its eroded ones.
pub fn basin_fill(k: usize, safe: bool) -> Rgb {
    well_colour(k).lerp(PAPER, if safe { SAFE_TINT } else { ERODED_TINT })
}

impl Scene {
    /// The safe basins: each well's safe starts as filled cells in its
    /// colour, its eroded starts (in the well at the start, gone before the
    /// last period) in a pale tint of it, the undriven separatrices
    /// (`separatrices`, polylines) faintly behind, each center marked and
    /// labelled with its integrity measures.
    pub fn basin(sys: &System, basin: &Basin, separatrices: &[Vec<[f64; 2]>]) -> Scene {
        let w = basin.window;
        let n = basin.lattice;
        let fills: Vec<Option<Rgb>> = (0..n * n)
            .map(|c| {
                basin.wells.iter().enumerate().find_map(|(k, well)| {
                    well.stayed
                        .get(c)
                        .copied()
                        .flatten()
                        .map(|s| basin_fill(k, s as usize == basin.periods))
                })
            })
            .collect();
        let curves = separatrices
            .iter()
            .map(|pts| Curve {
                role: CurveRole::Level {
                    level: f64::NAN,
                    separatrix: true,
                },
                points: pts.clone(),
                closed: false,
                colour: MUTED,
                width: FAINT_WIDTH,
                dashed: false,
                arrows: Vec::new(),
            })
            .collect();
        let mut marks = Vec::new();
        let mut legend = Vec::new();
        for (k, well) in basin.wells.iter().enumerate() {
            marks.push(Mark {
                at: well.center,
                role: MarkRole::Equilibrium(EquilibriumKind::Center),
                style: CENTER_MARKER,
                label: Some(format!(
                    "integrity {} · local {}",
                    numbers::caption(well.integrity),
                    numbers::caption(well.local_integrity)
                )),
            });
            legend.push(line_entry(
                format!("safe, well at q = {}", numbers::caption(well.center[0])),
                basin_fill(k, true),
                CELL_SWATCH_WIDTH,
                false,
            ));
        }
        if !basin.wells.is_empty() {
            legend.push(line_entry(
                "eroded (left the well)".to_string(),
                basin_fill(0, false),
                CELL_SWATCH_WIDTH,
                false,
            ));
        }
        if !separatrices.is_empty() {
            legend.push(line_entry(
                "undriven separatrix".to_string(),
                MUTED,
                FAINT_WIDTH,
                false,
            ));
        }
        let tail = format!(
            "{n}×{n} starts, {} drive periods of {}, damping {}",
            basin.periods,
            numbers::caption(basin.period),
            numbers::caption(basin.damping)
        );
        Scene {
            title: format!("Safe basins after {} drive periods", basin.periods),
            caption: caption_without(sys, &[], &tail),
            x: range_axis("q", w.qmin, w.qmax),
            y: range_axis("p", w.pmin, w.pmax),
            curves,
            marks,
            colour_scale: None,
            legend,
            clouds: Vec::new(),
            rasters: vec![CellRaster {
                origin: [w.qmin, w.pmin],
                cell: basin.cell_size(),
                columns: n,
                rows: n,
                fills,
            }],
        }
    }

    /// The erosion curve: each well's global integrity (solid) and local
    /// integrity (dashed, thinner) against the drive amplitude, the
    /// Melnikov threshold as a dashed vertical line and the amplitude's
    /// present value (`current`) as a guide, when they lie in the range.
    pub fn erosion(sys: &System, e: &Erosion, current: Option<f64>) -> Scene {
        let amps: Vec<f64> = e.points.iter().map(|p| p.amplitude).collect();
        let (lo, hi) = amps
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let (lo, hi) = if hi > lo { (lo, hi) } else { (0.0, 1.0) };
        let (y0, y1) = (0.0, 1.05);
        let mut curves = Vec::new();
        let mut legend = Vec::new();
        for (k, c) in e.centers.iter().enumerate() {
            for local in [false, true] {
                let pts: Vec<[f64; 2]> = e
                    .points
                    .iter()
                    .map(|p| {
                        let v = if local {
                            p.local_integrity[k]
                        } else {
                            p.integrity[k]
                        };
                        [p.amplitude, v]
                    })
                    .collect();
                let width = if local {
                    LOCAL_INTEGRITY_WIDTH
                } else {
                    INTEGRITY_WIDTH
                };
                curves.push(Curve {
                    role: CurveRole::Integrity { local },
                    points: pts,
                    closed: false,
                    colour: well_colour(k),
                    width,
                    dashed: local,
                    arrows: Vec::new(),
                });
                legend.push(line_entry(
                    format!(
                        "{}, well at q = {}",
                        if local { "local" } else { "global" },
                        numbers::caption(c[0])
                    ),
                    well_colour(k),
                    width,
                    local,
                ));
            }
        }
        if let Some(t) = e.threshold.filter(|t| *t >= lo && *t <= hi) {
            curves.push(Curve {
                role: CurveRole::Threshold,
                points: vec![[t, y0], [t, y1]],
                closed: false,
                colour: THRESHOLD_COLOUR,
                width: THRESHOLD_WIDTH,
                dashed: true,
                arrows: Vec::new(),
            });
            legend.push(line_entry(
                format!(
                    "Melnikov threshold {} = {}",
                    e.amplitude,
                    numbers::caption(t)
                ),
                THRESHOLD_COLOUR,
                THRESHOLD_WIDTH,
                true,
            ));
        }
        if let Some(v) = current.filter(|v| *v >= lo && *v <= hi) {
            let mut g = guide(vec![[v, y0], [v, y1]]);
            g.dashed = false;
            curves.push(g);
            legend.push(line_entry(
                format!("present {} = {}", e.amplitude, numbers::caption(v)),
                GUIDE_COLOUR,
                GUIDE_WIDTH,
                false,
            ));
        }
        let tail = format!("{n}×{n} starts, {} drive periods", e.periods, n = e.lattice);
        Scene {
            title: "Erosion of the safe basins".to_string(),
            caption: caption_without(sys, &[&e.amplitude], &tail),
            x: range_axis(&format!("drive amplitude {}", e.amplitude), lo, hi),
            y: range_axis("integrity (safe share of the undriven well)", y0, y1),
            curves,
            marks: Vec::new(),
            colour_scale: None,
            legend,
            clouds: Vec::new(),
            rasters: Vec::new(),
        }
    }
}
