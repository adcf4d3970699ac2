//! The figures of the driven views: the stroboscopic section (each start's
//! points as a cloud of its own colour over the undriven separatrices,
//! drawn faintly) and the Melnikov function over one drive period.

use super::*;
use crate::core::melnikov::Melnikov;
use crate::core::section::Section;
use crate::core::window::Window;

/// Diameter (points) of a section point.
pub const SECTION_DOT: f64 = 2.4;
/// Colour of the undriven separatrices behind a section: ink faded two
/// thirds of the way to the paper, so the points stay in front.
pub const FAINT_SEPARATRIX_COLOUR: Rgb = Rgb(0xa4, 0xa5, 0xa8);
pub const FAINT_SEPARATRIX_WIDTH: f64 = 1.2;
/// Marker of a simple zero of the Melnikov function.
pub const ZERO_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Diamond,
    colour: INK,
    size: 9.0,
};
/// Width of a Melnikov function's curve.
pub const MELNIKOV_WIDTH: f64 = 2.0;

/// The colour of start `k` of a section: its own colour when the session
/// gives one, else the orbit colours in turn.
pub fn start_colour(k: usize, own: Option<Rgb>) -> Rgb {
    own.unwrap_or(ORBIT_COLOURS[k % ORBIT_COLOURS.len()])
}

/// The sentence that states a Melnikov threshold: "chaotic layer expected
/// above F ≈ 0.0741" (or why there is none).
pub fn threshold_sentence(m: &Melnikov) -> String {
    match m.threshold_amplitude {
        Some(a) if m.damping > 0.0 => format!(
            "chaotic layer expected above {} \u{2248} {}",
            m.amplitude,
            numbers::caption(a)
        ),
        Some(_) => format!(
            "no damping: a chaotic layer is expected for any {} > 0",
            m.amplitude
        ),
        None => "no separatrix connection in view, so no threshold".to_string(),
    }
}

impl Scene {
    /// Say in the caption that the figure is of H₀, the undriven system
    /// (`amplitude` set to 0), when it is.
    pub fn of_undriven(mut self, amplitude: Option<&str>) -> Scene {
        if let Some(name) = amplitude {
            self.caption.push_str(&format!(
                "; computed on the undriven H\u{2080} ({name} = 0: the drive switched off)"
            ));
        }
        self
    }

    /// The stroboscopic section: each start's points (after the start
    /// itself) as a cloud in its own colour (`colours[k]`, see
    /// [`start_colour`]), over the separatrices of the undriven H₀ drawn
    /// faintly (`undriven`: its analysis over the view, when H₀ is known).
    pub fn section(
        sys: &System,
        section: &Section,
        undriven: Option<&Analysis>,
        view: &Window,
        colours: &[Option<Rgb>],
    ) -> Scene {
        let mut curves = Vec::new();
        let mut legend = Vec::new();
        for c in undriven
            .map(|a| a.curves.as_slice())
            .unwrap_or_default()
            .iter()
            .filter(|c| c.is_separatrix)
        {
            curves.push(Curve {
                role: CurveRole::Level {
                    level: c.level,
                    separatrix: true,
                },
                points: c.points.clone(),
                closed: c.closed,
                colour: FAINT_SEPARATRIX_COLOUR,
                width: FAINT_SEPARATRIX_WIDTH,
                dashed: false,
                arrows: Vec::new(),
            });
        }
        if !curves.is_empty() {
            legend.push(line_entry(
                "undriven separatrix".to_string(),
                FAINT_SEPARATRIX_COLOUR,
                FAINT_SEPARATRIX_WIDTH,
                false,
            ));
        }
        let clouds: Vec<Cloud> = section
            .orbits
            .iter()
            .enumerate()
            .filter(|(_, o)| !o.points.is_empty())
            .map(|(k, o)| Cloud {
                points: o.points.clone(),
                colour: start_colour(k, colours.get(k).copied().flatten()),
                size: SECTION_DOT,
            })
            .collect();
        if let Some(first) = clouds.first() {
            legend.push(LegendEntry {
                label: "point each drive period".to_string(),
                swatch: Swatch::Marker(MarkerStyle {
                    shape: MarkerShape::Dot,
                    colour: first.colour,
                    size: 2.0 * SECTION_DOT,
                }),
            });
        }
        let periods = section.orbits.iter().map(|o| o.points.len()).max();
        let tail = format!(
            "drive period {}, damping {}; {} starts, up to {} periods each, {} step {}",
            numbers::caption(section.period),
            numbers::caption(section.damping),
            section.orbits.len(),
            periods.unwrap_or(0),
            section.method.name(),
            numbers::caption(section.step)
        );
        Scene {
            title: "Stroboscopic section (one point per drive period)".to_string(),
            caption: caption_without(sys, &[], &tail),
            x: range_axis("q", view.qmin, view.qmax),
            y: range_axis("p", view.pmin, view.pmax),
            curves,
            marks: Vec::new(),
            clouds,
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }

    /// The Melnikov function M(t₀) = F·m(t₀) − δ·D over one drive period
    /// for each connection of H₀, its simple zeros marked, M = 0 as a
    /// dashed guide, and the threshold amplitude in the headline.
    pub fn melnikov(sys: &System, m: &Melnikov) -> Scene {
        let mut curves = Vec::new();
        let mut marks = Vec::new();
        let mut legend = Vec::new();
        for (k, c) in m.connections.iter().enumerate() {
            let colour = ORBIT_COLOURS[k % ORBIT_COLOURS.len()];
            let value = |mv: f64| m.amplitude_value * mv - m.damping * c.damping_integral;
            let mut points: Vec<[f64; 2]> =
                c.samples.iter().map(|&[t, mv]| [t, value(mv)]).collect();
            // one whole period: the first sample again at t₀ = τ
            if let Some(&[_, mv]) = c.samples.first() {
                points.push([m.period, value(mv)]);
            }
            curves.push(Curve {
                role: CurveRole::Melnikov,
                points,
                closed: false,
                colour,
                width: MELNIKOV_WIDTH,
                dashed: false,
                arrows: Vec::new(),
            });
            legend.push(line_entry(
                match c.kind {
                    crate::core::wells::ConnectionKind::Homoclinic => {
                        format!("loop {}: through saddle {}", k + 1, c.from + 1)
                    }
                    crate::core::wells::ConnectionKind::Heteroclinic => {
                        format!(
                            "link {}: saddle {} to saddle {}",
                            k + 1,
                            c.from + 1,
                            c.to + 1
                        )
                    }
                },
                colour,
                MELNIKOV_WIDTH,
                false,
            ));
            marks.extend(c.zeros.iter().map(|&t| Mark {
                at: [t, 0.0],
                role: MarkRole::Zero,
                style: ZERO_MARKER,
                label: None,
            }));
        }
        if !marks.is_empty() {
            legend.push(LegendEntry {
                label: "simple zero".to_string(),
                swatch: Swatch::Marker(ZERO_MARKER),
            });
        }
        let x = range_axis("drive phase t\u{2080}", 0.0, m.period);
        let values = curves.iter().flat_map(|c| c.points.iter().map(|p| p[1]));
        let mut y = fitted_axis("M(t\u{2080})", values.chain([0.0]), (-1.0, 1.0));
        if !(y.max > y.min) {
            y = range_axis("M(t\u{2080})", -1.0, 1.0);
        }
        curves.push(guide(vec![[x.min, 0.0], [x.max, 0.0]]));
        legend.push(line_entry(
            "M = 0".to_string(),
            GUIDE_COLOUR,
            GUIDE_WIDTH,
            true,
        ));
        let tail = format!(
            "drive period {}, damping {}; {}",
            numbers::caption(m.period),
            numbers::caption(m.damping),
            "first-order estimate for a weak drive and light damping"
        );
        Scene {
            title: format!("Melnikov function: {}", threshold_sentence(m)),
            caption: caption_without(sys, &[], &tail),
            x,
            y,
            curves,
            marks,
            clouds: Vec::new(),
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }
}
