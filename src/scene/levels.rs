//! The figure of a well's Bohr–Sommerfeld levels, and the quantized orbits
//! drawn over a portrait.

use super::*;
use crate::core::levels::WellLevels;
use crate::core::window::Window;

/// A quantized orbit's label is left out when its anchor lies within this
/// fraction of the view's height of the label below it (crowded levels).
const LEVEL_LABEL_GAP: f64 = 0.035;

impl Scene {
    /// The ladder of Bohr–Sommerfeld levels: H(q, p_c) along the line through
    /// the first well's center across the window's q range, each level of
    /// every well as a horizontal segment between its turning points (across
    /// the well's extent when they are not known), the escape energies as
    /// dashed guides; energies up to a little above the highest top.
    pub fn levels(sys: &System, wells: &[WellLevels], hbar: f64, q_range: [f64; 2]) -> Scene {
        let pc = wells.first().map_or(0.0, |w| w.center[1]);
        let [q0, q1] = q_range;
        let potential: Vec<[f64; 2]> = (0..=POTENTIAL_SAMPLES)
            .map(|i| {
                let q = q0 + (q1 - q0) * i as f64 / POTENTIAL_SAMPLES as f64;
                [q, sys.energy(q, pc)]
            })
            .filter(|p| p[1].is_finite())
            .collect();
        let energies = wells
            .iter()
            .flat_map(|w| [w.center_energy, w.top_energy])
            .filter(|e| e.is_finite());
        let mut y = fitted_axis("energy E", energies, (0.0, 1.0));
        y.max += 0.1 * (y.max - y.min);
        let mut curves = vec![Curve {
            role: CurveRole::Potential,
            points: potential,
            closed: false,
            colour: POTENTIAL_COLOUR,
            width: BACKBONE_WIDTH,
            dashed: false,
            arrows: Vec::new(),
        }];
        let mut legend = vec![line_entry(
            "H(q, p_c)".to_string(),
            POTENTIAL_COLOUR,
            BACKBONE_WIDTH,
            false,
        )];
        let mut any_escape = false;
        for w in wells {
            let span = w.levels.last().and_then(|l| l.turning_points);
            for l in &w.levels {
                let [a, b] = l.turning_points.or(span).unwrap_or(q_range);
                curves.push(Curve {
                    role: CurveRole::QuantumLevel { n: l.n },
                    points: vec![[a, l.energy], [b, l.energy]],
                    closed: false,
                    colour: QUANTUM_COLOUR,
                    width: QUANTUM_WIDTH,
                    dashed: false,
                    arrows: Vec::new(),
                });
            }
            if let Some(e) = w.escape_energy.filter(|e| e.is_finite()) {
                curves.push(guide(vec![[q0, e], [q1, e]]));
                any_escape = true;
            }
        }
        let count: usize = wells.iter().map(|w| w.levels.len()).sum();
        legend.push(line_entry(
            format!("levels ({count})"),
            QUANTUM_COLOUR,
            QUANTUM_WIDTH,
            false,
        ));
        if any_escape {
            legend.push(escape_entry());
        }
        let tail = format!(
            "\u{127} = {}; semiclassical estimates, not spectroscopic values",
            numbers::caption(hbar)
        );
        Scene {
            title: "Semiclassical levels in each well".to_string(),
            caption: caption_without(sys, &[], &tail),
            x: range_axis("q", q0, q1),
            y,
            curves,
            marks: Vec::new(),
            clouds: Vec::new(),
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }

    /// The quantized orbits of `wells` alone over `window` (the explorer
    /// draws them over its portrait; see [`Scene::add_quantized_orbits`]).
    pub fn quantized_orbits(window: &Window, wells: &[WellLevels], hbar: f64) -> Scene {
        let mut scene = Scene {
            title: "Quantized orbits".to_string(),
            caption: String::new(),
            x: range_axis("q", window.qmin, window.qmax),
            y: range_axis("p", window.pmin, window.pmax),
            curves: Vec::new(),
            marks: Vec::new(),
            colour_scale: None,
            legend: Vec::new(),
            clouds: Vec::new(),
            rasters: Vec::new(),
        };
        scene.add_quantized_orbits(wells, hbar);
        scene
    }

    /// Add each well's quantized orbits to a portrait: the closed level
    /// curves at Eₙ as the levels request traced them, thin, in the levels'
    /// colour, labelled n = 0, 1, … at their highest point in p (a label
    /// that would crowd the one below it is left out), and a legend entry
    /// with ħ.
    pub fn add_quantized_orbits(&mut self, wells: &[WellLevels], hbar: f64) {
        let gap = LEVEL_LABEL_GAP * self.y.span().abs();
        let mut any = false;
        for w in wells {
            let mut last_label: Option<f64> = None;
            for (l, curve) in w.levels.iter().zip(&w.curves) {
                let points: Vec<[f64; 2]> = curve
                    .iter()
                    .copied()
                    .filter(|p| p[0].is_finite() && p[1].is_finite())
                    .collect();
                let Some(&top) = points.iter().max_by(|a, b| a[1].total_cmp(&b[1])) else {
                    continue;
                };
                if points.len() < 3 {
                    continue;
                }
                any = true;
                self.curves.push(Curve {
                    role: CurveRole::QuantumLevel { n: l.n },
                    points,
                    closed: true,
                    colour: QUANTUM_COLOUR,
                    width: QUANTUM_ORBIT_WIDTH,
                    dashed: false,
                    arrows: Vec::new(),
                });
                if last_label.is_none_or(|p| (top[1] - p).abs() >= gap) {
                    last_label = Some(top[1]);
                    self.marks.push(Mark {
                        at: top,
                        role: MarkRole::QuantumLevel { n: l.n },
                        style: QUANTUM_LABEL_MARKER,
                        label: Some(format!("n = {}", l.n)),
                    });
                }
            }
        }
        if any {
            self.legend.push(line_entry(
                format!("quantized orbits (\u{127} = {})", numbers::caption(hbar)),
                QUANTUM_COLOUR,
                QUANTUM_ORBIT_WIDTH,
                false,
            ));
        }
    }
}
