//! The figure of a well's Bohr–Sommerfeld levels.

use super::*;
use crate::core::levels::WellLevels;

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
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }
}
