//! Figures and tables from core results: a `Scene` drawn as SVG (our own
//! writer), rasterised to PNG (resvg with a bundled font), and CSV / JSON
//! tables of the numbers behind it. No physics here.
pub mod png;
pub mod svg;
pub mod table;

pub use png::{PngError, svg_to_png};
pub use svg::{FigureSize, to_svg};

use crate::core::Cancel;
use crate::core::analysis::analyze;
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

/// The phase portrait of a session: its analysis in `window` (usually the
/// session's view), its title, and its seeded orbits with their colours.
pub fn session_portrait(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Scene {
    let a = analyze(sys, window, &session.analysis_config(), cancel);
    let mut scene = Scene::portrait(sys, &a).with_title(&session.title);
    for seed in &session.orbits {
        let req = orbit_request(seed, window);
        if req.validate().is_err() {
            continue;
        }
        let orbit = integrate_orbit(sys, &req, cancel);
        let colour = seed.colour.as_deref().and_then(Rgb::parse_hex);
        scene.add_orbit(&orbit_points(&orbit), colour);
    }
    scene
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
