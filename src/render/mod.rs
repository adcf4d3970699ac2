//! Figures and tables from core results: a `Scene` drawn as SVG (our own
//! writer), rasterised to PNG (resvg with a bundled font), and CSV / JSON
//! tables of the numbers behind it. No physics here.
pub mod png;
pub mod svg;
pub mod table;

pub use png::{PngError, svg_to_png};
pub use svg::{FigureSize, to_svg};

use crate::core::Cancel;
use crate::core::analysis::{Analysis, analyze};
use crate::core::backbone::Backbone;
use crate::core::basin::{Basin, Erosion};
use crate::core::continuation::Sweep;
use crate::core::folds::FoldCurves;
use crate::core::melnikov::Melnikov;
use crate::core::orbit::{Orbit, integrate_orbit};
use crate::core::section::Section;
use crate::core::system::System;
use crate::core::window::Window;
use crate::numbers;
use crate::request::{
    BackboneRequest, BasinRequest, ErosionRequest, FoldsRequest, LevelsRequest, LevelsResult,
    MelnikovRequest, Overrides, SectionRequest, SweepRequest, centers_and_degenerate_in_view,
    centers_in_view, seeded_orbit_request, undriven, undriven_analysis,
};
use crate::scene::{BackbonePlot, Rgb, Scene};
use crate::session::Session;
use std::fmt;
use table::Table;

/// What a session's portrait is made from: the analysis of its window and
/// its seeded orbits, integrated (an orbit whose request is invalid is skipped).
#[derive(Clone, Debug)]
pub struct PortraitData {
    pub analysis: Analysis,
    pub orbits: Vec<Orbit>,
    /// The session's colour of each orbit, if it has one.
    pub colours: Vec<Option<Rgb>>,
    /// The quantized orbits of every well in view, when the session asks
    /// for them on the portrait (`quantum.on_portrait`) and its ħ is good.
    pub levels: Option<LevelsResult>,
}

/// Analyse a session in `window` (usually its view) and integrate its orbits.
pub fn portrait_data(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> PortraitData {
    let analysis = analyze(sys, window, &session.analysis_config(), cancel);
    let mut orbits = Vec::new();
    let mut colours = Vec::new();
    for seed in &session.orbits {
        let Ok(req) = seeded_orbit_request(seed, window, session.damping()) else {
            continue;
        };
        orbits.push(integrate_orbit(sys, &req, cancel));
        colours.push(seed.colour.as_deref().and_then(Rgb::parse_hex));
    }
    let levels = if session.levels_on_portrait() {
        LevelsRequest::for_equilibria(session, &analysis.equilibria)
            .ok()
            .flatten()
            .map(|r| r.run(sys, window, cancel))
    } else {
        None
    };
    PortraitData {
        analysis,
        orbits,
        colours,
        levels,
    }
}

/// The portrait scene of computed data: level curves, equilibria, orbits, the session's title.
pub fn portrait_scene(session: &Session, sys: &System, data: &PortraitData) -> Scene {
    let mut scene = Scene::portrait(sys, &data.analysis).with_title(&session.title);
    if let Some(l) = &data.levels {
        scene.add_quantized_orbits(&l.wells, l.hbar);
    }
    for (orbit, colour) in data.orbits.iter().zip(&data.colours) {
        scene.add_orbit(&orbit_points(orbit), *colour);
    }
    scene
}

/// The phase portrait of a session in one call (`portrait_data` then `portrait_scene`).
pub fn session_portrait(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Scene {
    portrait_scene(session, sys, &portrait_data(session, sys, window, cancel))
}

/// The [q, p] points of an orbit in time order.
pub fn orbit_points(orbit: &Orbit) -> Vec<[f64; 2]> {
    orbit.samples.iter().map(|s| [s.q, s.p]).collect()
}

/// An output file's format, chosen by its extension.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FigureFormat {
    Svg,
    Png,
}

impl FigureFormat {
    /// `svg` or `png` (any case) from a file name; None for anything else.
    pub fn from_path(path: &std::path::Path) -> Option<FigureFormat> {
        let ext = path.extension()?.to_str()?.to_ascii_lowercase();
        match ext.as_str() {
            "svg" => Some(FigureFormat::Svg),
            "png" => Some(FigureFormat::Png),
            _ => None,
        }
    }
}

/// The bytes of a figure in `format` at `size` pixels.
pub fn figure_bytes(
    scene: &Scene,
    size: FigureSize,
    format: FigureFormat,
) -> Result<Vec<u8>, PngError> {
    let svg = to_svg(scene, size);
    match format {
        FigureFormat::Svg => Ok(svg.into_bytes()),
        FigureFormat::Png => svg_to_png(&svg, 1.0),
    }
}

/// What a figure or table shows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum View {
    /// Level curves, equilibria and the session's orbits in the phase plane.
    Portrait,
    /// Equilibria against the swept parameter (the session's `sweep`).
    Diagram,
    /// Period, frequency, action against energy in one well (the session's `backbone`).
    Backbone(BackbonePlot),
    /// Fold curves in the plane of two parameters (the session's `folds`).
    Folds,
    /// The Bohr–Sommerfeld levels of every well in view over H along the
    /// center's line p = p_c (the session's `quantum.hbar`).
    Levels,
    /// The stroboscopic section of a driven system (the session's `drive`).
    Section,
    /// The Melnikov function over one drive period (the session's `drive`).
    Melnikov,
    /// The safe basins of the wells under the drive (the session's `drive`
    /// and `basin`).
    Basin,
    /// The integrity measures against the drive amplitude, with the
    /// Melnikov threshold.
    Erosion,
}

impl View {
    /// The word used on the command line and in menus.
    pub fn name(self) -> &'static str {
        match self {
            View::Portrait => "portrait",
            View::Diagram => "sweep",
            View::Backbone(_) => "backbone",
            View::Folds => "folds",
            View::Levels => "levels",
            View::Section => "section",
            View::Melnikov => "melnikov",
            View::Basin => "basin",
            View::Erosion => "erosion",
        }
    }
}

/// The results behind a view.
#[derive(Clone, Debug)]
pub enum ViewData {
    Portrait(PortraitData),
    Diagram(Sweep),
    Backbone(Backbone),
    Folds(FoldCurves),
    Levels(LevelsResult),
    Section(SectionData),
    Melnikov(Melnikov),
    Basin(BasinData),
    Erosion(Erosion),
}

/// What a section figure is made from: the section, the analysis of the
/// undriven H₀ (its separatrices drawn faintly behind; None when H₀ is not
/// known) and each start's own colour (the seeded orbits').
#[derive(Clone, Debug)]
pub struct SectionData {
    pub section: Section,
    pub undriven: Option<Analysis>,
    pub colours: Vec<Option<Rgb>>,
}

/// A safe basin with the undriven separatrices drawn behind it.
#[derive(Clone, Debug)]
pub struct BasinData {
    pub basin: Basin,
    /// The separatrix polylines of H₀ over the window.
    pub separatrices: Vec<Vec<[f64; 2]>>,
}

/// Why a view could not be made.
#[derive(Clone, Debug, PartialEq)]
pub enum ViewError {
    /// The view has nothing to run on: no parameter to sweep, fewer than two
    /// for a fold plane (the session's sections, else its sliders, name them).
    MissingSettings(View),
    /// The computation refused its input (unknown parameter, empty range, no center …).
    Refused { view: View, message: String },
    /// The figure could not be drawn or encoded.
    Figure(PngError),
}

impl fmt::Display for ViewError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ViewError::MissingSettings(View::Diagram) => {
                f.write_str("the formula has no parameter with a slider range to sweep")
            }
            ViewError::MissingSettings(View::Folds) => f.write_str(
                "the formula has fewer than two parameters with slider ranges for a fold plane",
            ),
            ViewError::MissingSettings(View::Levels) => {
                f.write_str("the session sets no ħ for the levels (quantum.hbar)")
            }
            ViewError::MissingSettings(View::Section | View::Melnikov) => f.write_str(
                "the session has no drive (a \"drive\" section with the period, or --period)",
            ),
            ViewError::MissingSettings(v) => write!(f, "the session has no {} settings", v.name()),
            ViewError::Refused { view, message } => write!(f, "{}: {message}", view.name()),
            ViewError::Figure(e) => write!(f, "{e}"),
        }
    }
}

impl std::error::Error for ViewError {}

/// Compute what `view` shows for `session` in `window`, with the session's
/// settings for that view (the explorer and the command line both come here,
/// so a figure from either is made from the same numbers). `overrides` are
/// the explorer's choices not in the session (the selected center); the
/// command line passes none.
pub fn view_data(
    session: &Session,
    sys: &System,
    window: &Window,
    view: View,
    overrides: &Overrides,
    cancel: &Cancel,
) -> Result<ViewData, ViewError> {
    Ok(match view {
        View::Portrait => ViewData::Portrait(portrait_data(session, sys, window, cancel)),
        View::Diagram => ViewData::Diagram(sweep_of(session, sys, window, cancel)?),
        View::Folds => ViewData::Folds(folds_of(session, sys, window, cancel)?),
        View::Backbone(_) => {
            ViewData::Backbone(backbone_of(session, sys, window, overrides, cancel)?)
        }
        View::Levels => ViewData::Levels(levels_of(session, sys, window, cancel)?),
        View::Section => ViewData::Section(section_of(session, sys, window, &[], cancel)?),
        View::Melnikov => ViewData::Melnikov(melnikov_of(session, sys, window, cancel)?),
        View::Basin => {
            let request = BasinRequest::from_session(session, sys).map_err(refused(view))?;
            ViewData::Basin(basin_data(sys, &request, cancel, &|_, _| {})?)
        }
        View::Erosion => ViewData::Erosion(
            ErosionRequest::from_session(session, sys)
                .and_then(|r| r.run(sys, cancel, &|_, _| {}))
                .map_err(refused(view))?,
        ),
    })
}

/// The safe basin `request` asks for, with the separatrices of H₀ (from
/// the portrait's analysis of H₀ over the request's window, with the
/// request's analysis settings). The command line, `render` and the
/// explorer's pane all come here.
pub fn basin_data(
    sys: &System,
    request: &BasinRequest,
    cancel: &Cancel,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<BasinData, ViewError> {
    let basin = request
        .run(sys, cancel, progress)
        .map_err(refused(View::Basin))?;
    let h0 = request.undriven(sys).map_err(refused(View::Basin))?;
    let a = analyze(&h0, &request.window, &request.analysis, cancel);
    let separatrices = a
        .curves
        .iter()
        .filter(|c| c.is_separatrix)
        .map(|c| c.points.clone())
        .collect();
    Ok(BasinData {
        basin,
        separatrices,
    })
}

/// The section the session describes (with `extra` starts after its own),
/// with H₀'s analysis over `window` and the starts' colours.
pub fn section_of(
    session: &Session,
    sys: &System,
    window: &Window,
    extra: &[[f64; 2]],
    cancel: &Cancel,
) -> Result<SectionData, ViewError> {
    let req = section_request_of(session, extra)?;
    let section = req
        .run(sys, cancel, &|_, _| {})
        .map_err(refused(View::Section))?;
    Ok(SectionData {
        section,
        undriven: undriven_analysis(session, sys, window, cancel),
        colours: section_colours(session, &req),
    })
}

/// The section request of `session`; a session without a drive is missing its settings.
pub fn section_request_of(
    session: &Session,
    extra: &[[f64; 2]],
) -> Result<SectionRequest, ViewError> {
    if matches!(session.drive(), Ok(None)) {
        return Err(ViewError::MissingSettings(View::Section));
    }
    SectionRequest::from_session(session, extra).map_err(refused(View::Section))
}

/// Each start's own colour: none for the lattice, the seeded orbits' from
/// the session, none for extra starts.
pub fn section_colours(session: &Session, req: &SectionRequest) -> Vec<Option<Rgb>> {
    let seeded: Vec<Option<Rgb>> = session
        .orbits
        .iter()
        .map(|o| o.colour.as_deref().and_then(Rgb::parse_hex))
        .collect();
    let lattice = req.starts.len().saturating_sub(seeded.len());
    let mut out = vec![None; req.starts.len()];
    for (k, c) in seeded.into_iter().enumerate() {
        if let Some(slot) = out.get_mut(lattice + k) {
            *slot = c;
        }
    }
    out
}

/// The Melnikov function the session describes.
pub fn melnikov_of(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Result<Melnikov, ViewError> {
    if matches!(session.drive(), Ok(None)) {
        return Err(ViewError::MissingSettings(View::Melnikov));
    }
    MelnikovRequest::from_session(session, sys)
        .and_then(|r| r.run(sys, window, cancel))
        .map_err(refused(View::Melnikov))
}

fn refused(view: View) -> impl Fn(String) -> ViewError {
    move |message| ViewError::Refused { view, message }
}

/// The sweep the explorer's diagram pane shows for `session` (its `sweep`
/// settings, else the first parameter over its slider range).
pub fn sweep_of(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Result<Sweep, ViewError> {
    SweepRequest::from_session(session, sys.formula().params())
        .ok_or(ViewError::MissingSettings(View::Diagram))?
        .run(sys, window, cancel, &|_| {})
        .map_err(|e| refused(View::Diagram)(e.to_string()))
}

/// The fold curves the explorer's fold pane shows for `session` (its `folds`
/// settings, else the first two parameters over their slider ranges).
pub fn folds_of(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Result<FoldCurves, ViewError> {
    FoldsRequest::from_session(session, sys.formula().params())
        .ok_or(ViewError::MissingSettings(View::Folds))?
        .run(sys, window, cancel, &|_| {})
        .map_err(|e| refused(View::Folds)(e.to_string()))
}

/// The backbone request for `session` in `window`: the saved center's well,
/// else the selected center, else the first center in view (see
/// [`crate::request`]).
pub fn backbone_request_of(
    session: &Session,
    sys: &System,
    window: &Window,
    overrides: &Overrides,
    cancel: &Cancel,
) -> Result<BackboneRequest, ViewError> {
    let in_view = centers_in_view(session, sys, window, cancel);
    BackboneRequest::from_session(session, &in_view, overrides)
        .map(|r| r.with_undriven(session, sys))
        .ok_or_else(|| {
            refused(View::Backbone(BackbonePlot::default()))(
                "there is no center in view, so no well to follow; give a point near a center"
                    .to_string(),
            )
        })
}

/// The backbone of the well the session's `backbone` settings name (the
/// first center in view when they name none).
pub fn backbone_of(
    session: &Session,
    sys: &System,
    window: &Window,
    overrides: &Overrides,
    cancel: &Cancel,
) -> Result<Backbone, ViewError> {
    backbone_request_of(session, sys, window, overrides, cancel)?
        .run(sys, window, cancel, &|_, _| {})
        .map_err(|e| refused(View::Backbone(BackbonePlot::default()))(e.to_string()))
}

/// The levels request for `session` in `window`: its ħ, every center and
/// degenerate equilibrium in view; refused when the ħ expression is bad or
/// missing.
pub fn levels_request_of(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Result<LevelsRequest, ViewError> {
    let (centers, degenerate) = centers_and_degenerate_in_view(session, sys, window, cancel);
    Ok(LevelsRequest::from_session(session, &centers)
        .map_err(|e| refused(View::Levels)(e.to_string()))?
        .ok_or(ViewError::MissingSettings(View::Levels))?
        .with_degenerate(&degenerate))
}

/// The levels of every well in `window` for the session's ħ; refused when
/// its expression is bad, when no center is in view, or when no well gives
/// levels.
pub fn levels_of(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Result<LevelsResult, ViewError> {
    let result = levels_request_of(session, sys, window, cancel)?.run(sys, window, cancel);
    if result.wells.is_empty() && result.refused.is_empty() {
        return Err(refused(View::Levels)(
            "there is no center in view, so no well to quantize; widen the window".to_string(),
        ));
    }
    if result.wells.is_empty() {
        let problems: Vec<String> = result
            .refused
            .iter()
            .map(|w| {
                format!(
                    "center q = {}, p = {}: {}",
                    numbers::caption(w.center[0]),
                    numbers::caption(w.center[1]),
                    w.problem
                )
            })
            .collect();
        return Err(refused(View::Levels)(format!(
            "no well gave levels; {}",
            problems.join("; ")
        )));
    }
    Ok(result)
}

/// The scene of computed view data, with the session's current parameter
/// values as guides (diagram, folds) and its title (portrait).
pub fn view_scene(session: &Session, sys: &System, data: &ViewData, view: View) -> Scene {
    let value = |name: &str| session.parameter(name).map(|p| p.value);
    match data {
        ViewData::Portrait(d) => portrait_scene(session, sys, d),
        ViewData::Diagram(s) => Scene::diagram(sys, s, value(&s.param)),
        ViewData::Folds(f) => {
            let current = value(&f.params[0]).zip(value(&f.params[1]));
            Scene::folds(sys, f, current.map(|(a, b)| [a, b]))
        }
        ViewData::Backbone(b) => {
            let plot = match view {
                View::Backbone(plot) => plot,
                _ => BackbonePlot::default(),
            };
            let amplitude = undriven(session, sys).ok().flatten().map(|(n, _)| n);
            Scene::backbone(sys, b, plot).of_undriven(amplitude.as_deref())
        }
        ViewData::Levels(l) => Scene::levels(
            sys,
            &l.wells,
            l.hbar,
            [session.view.qmin, session.view.qmax],
        ),
        ViewData::Section(d) => Scene::section(
            sys,
            &d.section,
            d.undriven.as_ref(),
            &session.view,
            &d.colours,
        ),
        ViewData::Melnikov(m) => Scene::melnikov(sys, m),
        ViewData::Basin(b) => Scene::basin(sys, &b.basin, &b.separatrices),
        ViewData::Erosion(e) => Scene::erosion(sys, e, value(&e.amplitude)),
    }
}

/// Which table of a portrait.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum PortraitTable {
    #[default]
    Equilibria,
    Wells,
    /// One row of measurements per seeded orbit.
    Orbits,
    /// Every stored sample of every seeded orbit.
    Samples,
}

/// The table of computed view data (`which` chooses among a portrait's
/// tables), each row ending with the parameter values.
pub fn view_table(sys: &System, data: &ViewData, which: PortraitTable) -> Table {
    let params = table::parameter_pairs(sys);
    match data {
        ViewData::Portrait(d) => match which {
            PortraitTable::Equilibria => table::equilibria_table(&d.analysis.equilibria, &params),
            PortraitTable::Wells => table::wells_table(&d.analysis.wells, &params),
            PortraitTable::Orbits => table::orbit_measurements_table(&d.orbits, &params),
            PortraitTable::Samples => table::orbits_samples_table(&d.orbits, &params),
        },
        // The swept parameters have their own columns; the others say where the rest stood.
        ViewData::Diagram(s) => {
            table::sweep_table(s).with_parameters(&others(&params, &[&s.param]))
        }
        ViewData::Folds(f) => {
            table::folds_table(f).with_parameters(&others(&params, &[&f.params[0], &f.params[1]]))
        }
        ViewData::Backbone(b) => table::backbone_table(b).with_parameters(&params),
        ViewData::Levels(l) => table::levels_table(l).with_parameters(&params),
        ViewData::Section(d) => table::section_table(&d.section).with_parameters(&params),
        ViewData::Melnikov(m) => table::melnikov_table(m).with_parameters(&params),
        ViewData::Basin(b) => table::basin_table(&b.basin).with_parameters(&params),
        ViewData::Erosion(e) => {
            table::erosion_table(e).with_parameters(&others(&params, &[&e.amplitude]))
        }
    }
}

fn others(params: &[(String, f64)], skip: &[&str]) -> Vec<(String, f64)> {
    params
        .iter()
        .filter(|(n, _)| !skip.contains(&n.as_str()))
        .cloned()
        .collect()
}

/// What an export writes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ExportFormat {
    Figure(FigureFormat),
    Csv(PortraitTable),
    Json(PortraitTable),
}

impl ExportFormat {
    /// The format a file name asks for: .svg / .png a figure, .csv / .json a
    /// table (`which` chooses a portrait's table); None for other names.
    pub fn from_path(path: &std::path::Path, which: PortraitTable) -> Option<ExportFormat> {
        if let Some(f) = FigureFormat::from_path(path) {
            return Some(ExportFormat::Figure(f));
        }
        let ext = path.extension()?.to_str()?.to_ascii_lowercase();
        match ext.as_str() {
            "csv" => Some(ExportFormat::Csv(which)),
            "json" => Some(ExportFormat::Json(which)),
            _ => None,
        }
    }
}

/// An export's bytes and a one-line summary of what they hold.
#[derive(Clone, Debug)]
pub struct Exported {
    pub bytes: Vec<u8>,
    pub summary: String,
}

/// Figure or table bytes of `view` for `session` (compiled as `sys`) in
/// `window`: the one path the command line and the explorer's export share.
pub fn export(
    session: &Session,
    sys: &System,
    window: &Window,
    view: View,
    format: ExportFormat,
    size: FigureSize,
    overrides: &Overrides,
    cancel: &Cancel,
) -> Result<Exported, ViewError> {
    let data = view_data(session, sys, window, view, overrides, cancel)?;
    Ok(export_data(session, sys, &data, view, format, size)?)
}

/// [`export`] of data already computed.
pub fn export_data(
    session: &Session,
    sys: &System,
    data: &ViewData,
    view: View,
    format: ExportFormat,
    size: FigureSize,
) -> Result<Exported, ViewError> {
    match format {
        ExportFormat::Figure(f) => {
            let scene = view_scene(session, sys, data, view);
            let bytes = figure_bytes(&scene, size, f).map_err(ViewError::Figure)?;
            Ok(Exported {
                bytes,
                summary: format!(
                    "{}x{} px, {} curves, {} marks",
                    size.width,
                    size.height,
                    scene.curves.len(),
                    scene.marks.len()
                ),
            })
        }
        ExportFormat::Csv(which) | ExportFormat::Json(which) => {
            let t = view_table(sys, data, which);
            let text = if matches!(format, ExportFormat::Csv(_)) {
                t.to_csv()
            } else {
                t.to_json()
            };
            Ok(Exported {
                bytes: text.into_bytes(),
                summary: format!("{} rows", t.rows.len()),
            })
        }
    }
}
