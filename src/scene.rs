//! A figure described in output terms: axes, curves, marks, notes, colour
//! scale and legend, in data coordinates. Plain data built from core results;
//! no drawing library and no file I/O. The SVG writer (`render::svg`) draws a
//! `Scene`; the explorer can draw the same `Scene` with its own plot widget,
//! so the palette and the marker shapes defined here are the project's one look.

mod basin;
mod diagrams;
mod drive;
mod levels;

pub use drive::{
    FAINT_SEPARATRIX_COLOUR, FAINT_SEPARATRIX_WIDTH, MELNIKOV_WIDTH, SECTION_DOT, ZERO_MARKER,
    start_colour, threshold_sentence,
};

use crate::core::analysis::Analysis;
use crate::core::backbone::{Backbone, FrequencyShift};
use crate::core::continuation::Sweep;
use crate::core::equilibria::EquilibriumKind;
use crate::core::folds::FoldCurves;
use crate::core::system::System;
use crate::numbers;

/// A colour as 8-bit sRGB.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Rgb(pub u8, pub u8, pub u8);

impl Rgb {
    /// `#rrggbb`.
    pub fn hex(self) -> String {
        format!("#{:02x}{:02x}{:02x}", self.0, self.1, self.2)
    }

    /// Parse `#rrggbb` (as stored in sessions); None for anything else.
    pub fn parse_hex(text: &str) -> Option<Rgb> {
        let digits = text.trim().strip_prefix('#')?;
        if digits.len() != 6 || !digits.is_ascii() {
            return None;
        }
        let byte = |i: usize| u8::from_str_radix(&digits[i..i + 2], 16).ok();
        Some(Rgb(byte(0)?, byte(2)?, byte(4)?))
    }

    fn lerp(self, other: Rgb, t: f64) -> Rgb {
        let mix = |a: u8, b: u8| (f64::from(a) + (f64::from(b) - f64::from(a)) * t).round() as u8;
        Rgb(
            mix(self.0, other.0),
            mix(self.1, other.1),
            mix(self.2, other.2),
        )
    }
}

/// The energy colour scale ("wine to sky"): dark wine for low H through
/// plum, violet and periwinkle to a light sky blue for high H. Designed in
/// OKLab, written here as OKLCh (lightness L, chroma C, hue h in degrees):
/// L rises evenly from 0.30 to 0.80, so the order of energies reads from
/// lightness alone (in grey-scale print and under every common colour-vision
/// deficiency); h turns from 15° down through 0° to 235° (warm to cool by way
/// of violet, never across a red–green contrast); C swells from 0.11 to 0.15
/// mid-way and eases to 0.09, every stop inside the sRGB gamut. The top stays
/// dark enough to read as a line on white. Nine stops, 1/8 apart in t, close
/// enough that straight sRGB mixing between them keeps L rising.
pub const ENERGY_STOPS: [(f64, Rgb); 9] = [
    (0.0, Rgb(0x59, 0x05, 0x1a)),   // L 0.30, C 0.114, h 15
    (0.125, Rgb(0x6e, 0x12, 0x3e)), // L 0.36, C 0.131, h 357.5
    (0.25, Rgb(0x7e, 0x24, 0x67)),  // L 0.42, C 0.144, h 340
    (0.375, Rgb(0x86, 0x3b, 0x91)), // L 0.49, C 0.152, h 322.5
    (0.5, Rgb(0x87, 0x56, 0xb8)),   // L 0.55, C 0.153, h 305
    (0.625, Rgb(0x80, 0x73, 0xd6)), // L 0.61, C 0.146, h 287.5
    (0.75, Rgb(0x77, 0x91, 0xe8)),  // L 0.68, C 0.132, h 270
    (0.875, Rgb(0x75, 0xae, 0xef)), // L 0.74, C 0.112, h 252.5
    (1.0, Rgb(0x82, 0xc7, 0xf0)),   // L 0.80, C 0.090, h 235
];

/// The colour of position `t` in [0, 1] on the energy scale (clamped; NaN gives the low end).
pub fn energy_colour(t: f64) -> Rgb {
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    for pair in ENERGY_STOPS.windows(2) {
        let (t0, c0) = pair[0];
        let (t1, c1) = pair[1];
        if t <= t1 {
            return c0.lerp(c1, (t - t0) / (t1 - t0));
        }
    }
    ENERGY_STOPS[ENERGY_STOPS.len() - 1].1
}

/// Ink for text, axes and separatrices.
pub const INK: Rgb = Rgb(0x1c, 0x1e, 0x26);
/// Secondary ink for ticks labels and grid.
pub const MUTED: Rgb = Rgb(0x6b, 0x6f, 0x7a);
/// The plot area's background.
pub const PAPER: Rgb = Rgb(0xff, 0xff, 0xff);
/// Colours given to orbits the user did not colour, in turn: amber, petrol,
/// olive, aqua (OKLCh below). Their hues (70°–220°, by way of yellow and
/// green) lie outside the energy scale's (235°–15° by way of violet), so an
/// orbit stands out from the level curves; none is a dark warm colour that a
/// thin line could take for the scale's wine low end; warm and cool alternate
/// and lightness differs between neighbours, so each two in turn stay apart
/// in normal vision and in simulated protan and deutan vision (OKLab
/// distance 0.16 or more).
pub const ORBIT_COLOURS: [Rgb; 4] = [
    Rgb(0xb6, 0x76, 0x16), // L 0.62, C 0.128, h 70
    Rgb(0x10, 0x6e, 0x85), // L 0.50, C 0.087, h 220
    Rgb(0x5e, 0x8a, 0x21), // L 0.58, C 0.140, h 130
    Rgb(0x1f, 0xae, 0xa8), // L 0.68, C 0.112, h 190
];
/// The ring drawn around the selected equilibrium or well in the explorer.
pub const SELECTION_COLOUR: Rgb = Rgb(0xff, 0x3c, 0xc8);
/// The one font family every figure uses (bundled with the renderer, upright and oblique).
pub const FONT_FAMILY: &str = "DejaVu Sans";

/// The outline of a mark. Each equilibrium kind has its own shape, so the
/// kind reads without colour.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MarkerShape {
    /// An open ring with a dot at its centre (centers).
    Ring,
    /// A diagonal cross (saddles).
    Cross,
    /// A filled diamond (degenerate equilibria).
    Diamond,
    /// A filled square (bifurcation points).
    Square,
    /// A small filled disc (a backbone's computed points, a point cloud's
    /// points, the anchor of a quantized orbit's label).
    Dot,
}

/// How one kind of mark looks.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MarkerStyle {
    pub shape: MarkerShape,
    pub colour: Rgb,
    /// Outer size in points (diameter of the ring, span of the cross).
    pub size: f64,
}

/// Marker of a center.
pub const CENTER_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Ring,
    colour: Rgb(0xc2, 0x25, 0x5c),
    size: 11.0,
};
/// Marker of a saddle.
pub const SADDLE_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Cross,
    colour: INK,
    size: 11.0,
};
/// Marker of a degenerate equilibrium.
pub const DEGENERATE_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Diamond,
    colour: Rgb(0xe4, 0x57, 0x2e),
    size: 12.0,
};
/// Marker of a bifurcation point on a diagram.
pub const BIFURCATION_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Square,
    colour: Rgb(0xe4, 0x57, 0x2e),
    size: 8.0,
};

/// Marker of a computed point on a backbone curve.
pub const SAMPLE_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Dot,
    colour: BACKBONE_COLOUR,
    size: 4.0,
};

/// The marker of an equilibrium kind.
pub fn marker_for(kind: EquilibriumKind) -> MarkerStyle {
    match kind {
        EquilibriumKind::Center => CENTER_MARKER,
        EquilibriumKind::Saddle => SADDLE_MARKER,
        EquilibriumKind::Degenerate => DEGENERATE_MARKER,
    }
}

/// How a center's frequency changes with amplitude, from κ in ω ≈ ω₀ + κA².
pub fn shift_name(kappa: f64) -> &'static str {
    if kappa >= 0.0 {
        "hardening"
    } else {
        "softening"
    }
}

/// κ of a backbone as said in its figure, pane and table:
/// `ω ≈ ω₀ + κA² with κ = 0.3 (hardening, from the Taylor coefficients)`.
pub fn shift_text(shift: &FrequencyShift) -> String {
    format!(
        "\u{3c9} \u{2248} \u{3c9}\u{2080} + \u{3ba}A\u{b2} with \u{3ba} = {} ({}, {})",
        numbers::caption(shift.kappa),
        shift_name(shift.kappa),
        shift.source.description()
    )
}

/// The word shown for an equilibrium kind.
pub fn kind_name(kind: EquilibriumKind) -> &'static str {
    match kind {
        EquilibriumKind::Center => "center",
        EquilibriumKind::Saddle => "saddle",
        EquilibriumKind::Degenerate => "degenerate",
    }
}

/// Stroke widths in points.
pub const LEVEL_WIDTH: f64 = 1.0;
pub const SEPARATRIX_WIDTH: f64 = 2.2;
/// Orbits are drawn well over twice as wide as level curves, so that an
/// orbit never reads as one more level.
pub const ORBIT_WIDTH: f64 = 2.4;
pub const BRANCH_WIDTH: f64 = 2.0;
pub const BACKBONE_WIDTH: f64 = 2.0;
pub const FOLD_WIDTH: f64 = 2.0;
pub const GUIDE_WIDTH: f64 = 1.2;

/// Colour of a backbone curve.
pub const BACKBONE_COLOUR: Rgb = Rgb(0x1f, 0x4f, 0x8c);
/// Colour of a fold curve in the parameter plane.
pub const FOLD_COLOUR: Rgb = Rgb(0x16, 0x7f, 0x8f);
/// Colour of the potential curve under the levels.
pub const POTENTIAL_COLOUR: Rgb = Rgb(0x2b, 0x2d, 0x42);
/// Colour of a Bohr–Sommerfeld level.
pub const QUANTUM_COLOUR: Rgb = Rgb(0xb0, 0x4a, 0x1e);
pub const QUANTUM_WIDTH: f64 = 1.3;
/// Width of a quantized orbit drawn over a portrait (thinner than an orbit).
pub const QUANTUM_ORBIT_WIDTH: f64 = 1.0;
/// Marker at the top of a labelled quantized orbit.
pub const QUANTUM_LABEL_MARKER: MarkerStyle = MarkerStyle {
    shape: MarkerShape::Dot,
    colour: QUANTUM_COLOUR,
    size: 4.0,
};
/// Samples of the potential curve across the window.
const POTENTIAL_SAMPLES: usize = 600;
/// Colour of guide lines (current parameter value, escape energy).
pub const GUIDE_COLOUR: Rgb = MUTED;

/// The colour and dashing of a diagram branch of equilibria of `kind`:
/// centers solid in the center marker's colour, saddles dashed in ink,
/// degenerate pieces dashed in the degenerate marker's colour.
pub fn branch_style(kind: EquilibriumKind) -> (Rgb, bool) {
    match kind {
        EquilibriumKind::Center => (CENTER_MARKER.colour, false),
        EquilibriumKind::Saddle => (INK, true),
        EquilibriumKind::Degenerate => (DEGENERATE_MARKER.colour, true),
    }
}

/// One axis: its label and the data range shown.
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    pub label: String,
    pub min: f64,
    pub max: f64,
}

/// What a curve stands for (the SVG writer turns this into a class name).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum CurveRole {
    /// A level curve of H at `level`.
    Level { level: f64, separatrix: bool },
    /// An integrated orbit.
    Orbit,
    /// A branch of equilibria on a diagram.
    Branch { kind: EquilibriumKind },
    /// A backbone (period, frequency or action against energy).
    Backbone,
    /// A fold curve (saddle-nodes) in the plane of two parameters.
    Fold,
    /// A reference line (an escape energy, the current parameter value).
    Guide,
    /// H along the line p = p_c through a well's center (the potential of a separable H).
    Potential,
    /// A Bohr–Sommerfeld level n, drawn between its turning points.
    QuantumLevel { n: usize },
    /// The Melnikov function of one connection over a drive period.
    Melnikov,
    /// An integrity measure against the drive amplitude (global or local).
    Integrity { local: bool },
    /// The Melnikov threshold amplitude on an erosion curve's axis.
    Threshold,
}

impl CurveRole {
    /// The class name used in figures: `level`, `separatrix`, `orbit`,
    /// `branch`, `backbone`, `fold`, `guide`.
    pub fn class(&self) -> &'static str {
        match self {
            CurveRole::Level {
                separatrix: false, ..
            } => "level",
            CurveRole::Level {
                separatrix: true, ..
            } => "separatrix",
            CurveRole::Orbit => "orbit",
            CurveRole::Branch { .. } => "branch",
            CurveRole::Backbone => "backbone",
            CurveRole::Fold => "fold",
            CurveRole::Guide => "guide",
            CurveRole::Potential => "potential",
            CurveRole::QuantumLevel { .. } => "quantum-level",
            CurveRole::Melnikov => "melnikov",
            CurveRole::Integrity { local: false } => "integrity",
            CurveRole::Integrity { local: true } => "local-integrity",
            CurveRole::Threshold => "threshold",
        }
    }
}

/// A direction arrow on a curve: its position and unit direction, in data coordinates.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Arrow {
    pub at: [f64; 2],
    pub direction: [f64; 2],
}

/// One polyline.
#[derive(Clone, Debug, PartialEq)]
pub struct Curve {
    pub role: CurveRole,
    pub points: Vec<[f64; 2]>,
    pub closed: bool,
    pub colour: Rgb,
    pub width: f64,
    pub dashed: bool,
    /// Where to draw direction arrows (orbits).
    pub arrows: Vec<Arrow>,
}

/// What a mark stands for.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum MarkRole {
    Equilibrium(EquilibriumKind),
    /// A bifurcation point on a diagram.
    Bifurcation,
    /// A cusp of a fold curve in the parameter plane.
    Cusp,
    /// A computed point of a curve (a backbone's closed orbits).
    Sample,
    /// A simple zero of a function drawn on the figure (the Melnikov function's).
    Zero,
    /// The label of quantized orbit n on a portrait.
    QuantumLevel {
        n: usize,
    },
}

/// One point mark, optionally labelled.
#[derive(Clone, Debug, PartialEq)]
pub struct Mark {
    pub at: [f64; 2],
    pub role: MarkRole,
    pub style: MarkerStyle,
    pub label: Option<String>,
}

/// The swatch drawn beside a legend entry.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Swatch {
    Marker(MarkerStyle),
    Line {
        colour: Rgb,
        width: f64,
        dashed: bool,
    },
}

#[derive(Clone, Debug, PartialEq)]
pub struct LegendEntry {
    pub label: String,
    pub swatch: Swatch,
}

/// The energy colour bar: the range it spans and the levels to tick.
#[derive(Clone, Debug, PartialEq)]
pub struct ColourScale {
    pub label: String,
    pub min: f64,
    pub max: f64,
    pub stops: Vec<(f64, Rgb)>,
    /// Separatrix energies, marked on the bar.
    pub marked: Vec<f64>,
}

impl ColourScale {
    fn energy(min: f64, max: f64) -> ColourScale {
        ColourScale {
            label: "energy E".to_string(),
            min,
            max,
            stops: ENERGY_STOPS.to_vec(),
            marked: Vec::new(),
        }
    }

    /// The colour of value `v` on this bar.
    pub fn colour(&self, v: f64) -> Rgb {
        let span = self.max - self.min;
        if span > 0.0 {
            energy_colour((v - self.min) / span)
        } else {
            energy_colour(0.5)
        }
    }
}

/// A set of unconnected points drawn as dots of one colour and size (the
/// points of one start's stroboscopic section).
#[derive(Clone, Debug, PartialEq)]
pub struct Cloud {
    pub points: Vec<[f64; 2]>,
    pub colour: Rgb,
    /// Diameter of each dot in points.
    pub size: f64,
}

/// A raster of equal cells over a rectangle in data coordinates (a
/// safe-basin mask), drawn under the curves: each cell filled with its
/// colour or left empty.
#[derive(Clone, Debug, PartialEq)]
pub struct CellRaster {
    /// The lower-left corner (q, p) of the first cell.
    pub origin: [f64; 2],
    /// Width and height of one cell.
    pub cell: [f64; 2],
    pub columns: usize,
    pub rows: usize,
    /// One entry per cell, row-major from the bottom row, q fastest; `None`
    /// leaves the cell empty.
    pub fills: Vec<Option<Rgb>>,
}

/// A whole figure. Layers draw in this order: cell rasters, curves (as
/// listed), clouds (as listed), marks, then labels of marks.
#[derive(Clone, Debug, PartialEq)]
pub struct Scene {
    /// The headline: the session's title, or what the figure shows.
    pub title: String,
    /// The formula with parameter names and values, shown under the plot.
    pub caption: String,
    pub x: Axis,
    pub y: Axis,
    pub curves: Vec<Curve>,
    pub marks: Vec<Mark>,
    /// Point clouds, drawn over the curves and under the marks.
    pub clouds: Vec<Cloud>,
    pub colour_scale: Option<ColourScale>,
    pub legend: Vec<LegendEntry>,
    /// Filled cell rasters under the curves (safe-basin masks).
    pub rasters: Vec<CellRaster>,
}

/// Arrows per orbit, spread evenly along its length.
const ARROWS_PER_ORBIT: usize = 3;

/// `H = <formula>   with a = 1, b = 0.5` for the caption.
pub fn formula_caption(sys: &System) -> String {
    let mut text = format!("H = {}", sys.formula().source().trim());
    let names = sys.formula().params();
    if !names.is_empty() {
        let values: Vec<String> = names
            .iter()
            .zip(sys.params())
            .map(|(n, v)| format!("{n} = {}", numbers::caption(*v)))
            .collect();
        text.push_str(&format!(" with {}", values.join(", ")));
    }
    text
}

impl Scene {
    /// The phase portrait of `sys` as analysed: level curves coloured by
    /// energy, separatrices heavier, one mark per equilibrium in view.
    pub fn portrait(sys: &System, analysis: &Analysis) -> Scene {
        let w = analysis.window;
        let (lo, hi) = level_range(analysis);
        let mut scale = ColourScale::energy(lo, hi);
        let mut curves = Vec::with_capacity(analysis.curves.len());
        for c in &analysis.curves {
            let (colour, width) = if c.is_separatrix {
                (INK, SEPARATRIX_WIDTH)
            } else {
                (scale.colour(c.level), LEVEL_WIDTH)
            };
            if c.is_separatrix && !scale.marked.contains(&c.level) {
                scale.marked.push(c.level);
            }
            curves.push(Curve {
                role: CurveRole::Level {
                    level: c.level,
                    separatrix: c.is_separatrix,
                },
                points: c.points.clone(),
                closed: c.closed,
                colour,
                width,
                dashed: false,
                arrows: Vec::new(),
            });
        }
        let marks: Vec<Mark> = analysis
            .equilibria
            .iter()
            .map(|e| Mark {
                at: [e.q, e.p],
                role: MarkRole::Equilibrium(e.kind),
                style: marker_for(e.kind),
                label: None,
            })
            .collect();
        let mut legend = Vec::new();
        for kind in [
            EquilibriumKind::Center,
            EquilibriumKind::Saddle,
            EquilibriumKind::Degenerate,
        ] {
            if analysis.equilibria.iter().any(|e| e.kind == kind) {
                legend.push(LegendEntry {
                    label: kind_name(kind).to_string(),
                    swatch: Swatch::Marker(marker_for(kind)),
                });
            }
        }
        if analysis.curves.iter().any(|c| c.is_separatrix) {
            legend.push(LegendEntry {
                label: "separatrix".to_string(),
                swatch: Swatch::Line {
                    colour: INK,
                    width: SEPARATRIX_WIDTH,
                    dashed: false,
                },
            });
        }
        Scene {
            title: "Phase portrait".to_string(),
            caption: formula_caption(sys),
            x: Axis {
                label: "q".to_string(),
                min: w.qmin,
                max: w.qmax,
            },
            y: Axis {
                label: "p".to_string(),
                min: w.pmin,
                max: w.pmax,
            },
            curves,
            marks,
            clouds: Vec::new(),
            colour_scale: if hi > lo { Some(scale) } else { None },
            legend,
            rasters: Vec::new(),
        }
    }

    /// Replace the headline (for instance with the session's title).
    pub fn with_title(mut self, title: &str) -> Scene {
        if !title.trim().is_empty() {
            self.title = title.trim().to_string();
        }
        self
    }

    /// Add an orbit drawn through `points` ([q, p] in time order), with
    /// direction arrows; `colour` None takes the next orbit colour.
    pub fn add_orbit(&mut self, points: &[[f64; 2]], colour: Option<Rgb>) {
        let finite: Vec<[f64; 2]> = points
            .iter()
            .copied()
            .filter(|p| p[0].is_finite() && p[1].is_finite())
            .collect();
        if finite.len() < 2 {
            return;
        }
        let count = self
            .curves
            .iter()
            .filter(|c| c.role == CurveRole::Orbit)
            .count();
        let colour = colour.unwrap_or(ORBIT_COLOURS[count % ORBIT_COLOURS.len()]);
        let arrows = arrow_positions(&finite, [self.x.span(), self.y.span()], ARROWS_PER_ORBIT);
        if count == 0 {
            self.legend.push(LegendEntry {
                label: "orbit".to_string(),
                swatch: Swatch::Line {
                    colour,
                    width: ORBIT_WIDTH,
                    dashed: false,
                },
            });
        }
        self.curves.push(Curve {
            role: CurveRole::Orbit,
            points: finite,
            closed: false,
            colour,
            width: ORBIT_WIDTH,
            dashed: false,
            arrows,
        });
    }

    /// Curves of one role.
    pub fn curves_with(&self, class: &str) -> impl Iterator<Item = &Curve> {
        self.curves.iter().filter(move |c| c.role.class() == class)
    }
}

impl Axis {
    pub fn span(&self) -> f64 {
        self.max - self.min
    }
}

/// The energy range the colour bar spans: the levels drawn, or the grid's range.
fn level_range(analysis: &Analysis) -> (f64, f64) {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for c in &analysis.curves {
        if c.level.is_finite() {
            lo = lo.min(c.level);
            hi = hi.max(c.level);
        }
    }
    if !(hi > lo) {
        if let Some((a, b)) = analysis.grid.range {
            lo = a;
            hi = b;
        }
    }
    (lo, hi)
}

/// `count` arrows spread evenly by arc length along `points` (arc length
/// measured with each axis scaled by its span, so spacing looks even on the page).
pub fn arrow_positions(points: &[[f64; 2]], spans: [f64; 2], count: usize) -> Vec<Arrow> {
    let sx = if spans[0] > 0.0 { 1.0 / spans[0] } else { 1.0 };
    let sy = if spans[1] > 0.0 { 1.0 / spans[1] } else { 1.0 };
    let seg = |a: [f64; 2], b: [f64; 2]| ((b[0] - a[0]) * sx).hypot((b[1] - a[1]) * sy);
    let total: f64 = points.windows(2).map(|w| seg(w[0], w[1])).sum();
    if !(total > 0.0) || count == 0 {
        return Vec::new();
    }
    let mut arrows = Vec::with_capacity(count);
    let mut targets = (0..count).map(|k| total * (k as f64 + 0.5) / count as f64);
    let mut next = targets.next();
    let mut run = 0.0;
    for w in points.windows(2) {
        let len = seg(w[0], w[1]);
        while let Some(target) = next {
            if target > run + len || len == 0.0 {
                break;
            }
            let f = (target - run) / len;
            let at = [
                w[0][0] + f * (w[1][0] - w[0][0]),
                w[0][1] + f * (w[1][1] - w[0][1]),
            ];
            let d = [w[1][0] - w[0][0], w[1][1] - w[0][1]];
            let n = d[0].hypot(d[1]);
            arrows.push(Arrow {
                at,
                direction: [d[0] / n, d[1] / n],
            });
            next = targets.next();
        }
        run += len;
    }
    arrows
}

/// Tick positions for an axis over [min, max]: steps of 1, 2 or 5 times a power
/// of ten, about `target` of them. Returns (ticks, step).
pub fn nice_ticks(min: f64, max: f64, target: usize) -> (Vec<f64>, f64) {
    if !(min.is_finite() && max.is_finite()) || max <= min {
        return (Vec::new(), 0.0);
    }
    let target = target.max(2);
    let raw = (max - min) / target as f64;
    let power = 10f64.powf(raw.log10().floor());
    let count = |step: f64| ((max / step).floor() - (min / step).ceil() + 1.0).max(0.0);
    // The 1-2-5 step whose tick count is nearest the target; ties go to the larger step.
    let mut step = power;
    let mut best = f64::INFINITY;
    for scale in [0.1, 1.0, 10.0] {
        for m in [1.0, 2.0, 5.0] {
            let s = m * power * scale;
            let miss = (count(s) - target as f64).abs();
            if miss < best || (miss == best && s > step) {
                best = miss;
                step = s;
            }
        }
    }
    let first = (min / step).ceil() as i64;
    let last = (max / step).floor() as i64;
    let ticks = (first..=last)
        .map(|k| {
            let v = k as f64 * step;
            if v.abs() < step * 1e-9 { 0.0 } else { v }
        })
        .collect();
    (ticks, step)
}

/// Which relation a backbone figure plots.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum BackbonePlot {
    /// Period T against energy E, with the escape energy as a vertical guide.
    #[default]
    PeriodEnergy,
    /// Angular frequency ω against amplitude (half the q-extent of the orbit).
    FrequencyAmplitude,
}

/// Share of a data range added on each side of an axis fitted to data.
const DATA_MARGIN: f64 = 0.05;

/// `H = <formula>` with every parameter's value except those in `skip`, then `tail`.
fn caption_without(sys: &System, skip: &[&str], tail: &str) -> String {
    let mut text = format!("H = {}", sys.formula().source().trim());
    let values: Vec<String> = sys
        .formula()
        .params()
        .iter()
        .zip(sys.params())
        .filter(|(n, _)| !skip.contains(&n.as_str()))
        .map(|(n, v)| format!("{n} = {}", numbers::caption(*v)))
        .collect();
    if !values.is_empty() {
        text.push_str(&format!(" with {}", values.join(", ")));
    }
    if !tail.is_empty() {
        text.push_str(&format!("; {tail}"));
    }
    text
}

/// An axis over the finite values of `values`, widened by a margin; `fallback`
/// when there is no finite spread (a single value is centred in a unit range).
fn fitted_axis(label: &str, values: impl Iterator<Item = f64>, fallback: (f64, f64)) -> Axis {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let (min, max) = if hi > lo {
        let pad = (hi - lo) * DATA_MARGIN;
        (lo - pad, hi + pad)
    } else if lo.is_finite() {
        let half = 0.5 * lo.abs().max(1.0);
        (lo - half, lo + half)
    } else {
        fallback
    };
    Axis {
        label: label.to_string(),
        min,
        max,
    }
}

/// An axis from `a` to `b` in increasing order.
fn range_axis(label: &str, a: f64, b: f64) -> Axis {
    Axis {
        label: label.to_string(),
        min: a.min(b),
        max: a.max(b),
    }
}

fn guide(points: Vec<[f64; 2]>) -> Curve {
    Curve {
        role: CurveRole::Guide,
        points,
        closed: false,
        colour: GUIDE_COLOUR,
        width: GUIDE_WIDTH,
        dashed: true,
        arrows: Vec::new(),
    }
}

/// The legend entry of the dashed escape-energy guide.
fn escape_entry() -> LegendEntry {
    line_entry("escape energy".to_string(), GUIDE_COLOUR, GUIDE_WIDTH, true)
}

fn line_entry(label: String, colour: Rgb, width: f64, dashed: bool) -> LegendEntry {
    LegendEntry {
        label,
        swatch: Swatch::Line {
            colour,
            width,
            dashed,
        },
    }
}
