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
use crate::core::integrate::Method;
use crate::core::orbit::{Orbit, OrbitRequest, integrate_orbit};
use crate::core::system::System;
use crate::core::window::Window;
use crate::scene::{Rgb, Scene};
use crate::session::{SeededOrbit, Session};

/// The orbit request for a seeded orbit: its start, duration and method with
/// the default bounds around `view` (a method name the loader let through but
/// this build does not know falls back to `auto`).
pub fn orbit_request(seed: &SeededOrbit, view: &Window) -> OrbitRequest {
    let mut req = OrbitRequest::new(seed.q0, seed.p0, seed.duration, view);
    req.method = Method::from_name(&seed.method).unwrap_or(Method::Auto);
    req
}

/// What a session's portrait is made from: the analysis of its window and
/// its seeded orbits, integrated (an orbit whose request is invalid is skipped).
#[derive(Clone, Debug)]
pub struct PortraitData {
    pub analysis: Analysis,
    pub orbits: Vec<Orbit>,
    /// The session's colour of each orbit, if it has one.
    pub colours: Vec<Option<Rgb>>,
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
        let req = orbit_request(seed, window);
        if req.validate().is_err() {
            continue;
        }
        orbits.push(integrate_orbit(sys, &req, cancel));
        colours.push(seed.colour.as_deref().and_then(Rgb::parse_hex));
    }
    PortraitData {
        analysis,
        orbits,
        colours,
    }
}

/// The portrait scene of computed data: level curves, equilibria, orbits, the session's title.
pub fn portrait_scene(session: &Session, sys: &System, data: &PortraitData) -> Scene {
    let mut scene = Scene::portrait(sys, &data.analysis).with_title(&session.title);
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
