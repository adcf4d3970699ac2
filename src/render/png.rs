//! PNG from our SVG with resvg. The font is bundled (DejaVu Sans, loaded from
//! the binary), and no system fonts are consulted, so the same scene gives
//! the same pixels on every machine.

use crate::scene::FONT_FAMILY;
use resvg::{tiny_skia, usvg};
use std::fmt;
use std::sync::Arc;

/// The bundled fonts (DejaVu Sans upright and oblique; licence in assets/DejaVuSans-LICENSE.txt).
pub static FONT: &[u8] = include_bytes!("../../assets/DejaVuSans.ttf");
pub static FONT_OBLIQUE: &[u8] = include_bytes!("../../assets/DejaVuSans-Oblique.ttf");

/// Largest accepted output side in pixels (after scaling).
pub const MAX_PIXELS_SIDE: u32 = 16_000;

/// Why a PNG could not be made.
#[derive(Clone, Debug, PartialEq)]
pub enum PngError {
    /// The SVG did not parse (a defect in the writer, or foreign input).
    Svg(String),
    /// The requested pixel size is zero, too large or not finite.
    Size(String),
    Encode(String),
}

impl fmt::Display for PngError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PngError::Svg(m) => write!(f, "the figure's SVG did not parse: {m}"),
            PngError::Size(m) => write!(f, "bad image size: {m}"),
            PngError::Encode(m) => write!(f, "PNG encoding failed: {m}"),
        }
    }
}

impl std::error::Error for PngError {}

/// usvg options with only the bundled font.
pub fn svg_options() -> usvg::Options<'static> {
    let mut opt = usvg::Options {
        font_family: FONT_FAMILY.to_string(),
        ..usvg::Options::default()
    };
    let mut db = usvg::fontdb::Database::new();
    db.load_font_data(FONT.to_vec());
    db.load_font_data(FONT_OBLIQUE.to_vec());
    db.set_sans_serif_family(FONT_FAMILY);
    opt.fontdb = Arc::new(db);
    opt
}

/// Rasterise `svg` at `scale` times its own width and height and encode it as PNG.
pub fn svg_to_png(svg: &str, scale: f32) -> Result<Vec<u8>, PngError> {
    let pixmap = rasterize(svg, scale)?;
    pixmap
        .encode_png()
        .map_err(|e| PngError::Encode(e.to_string()))
}

/// Rasterise `svg` at `scale` into an RGBA pixmap (white where nothing is drawn).
pub fn rasterize(svg: &str, scale: f32) -> Result<tiny_skia::Pixmap, PngError> {
    if !(scale.is_finite() && scale > 0.0) {
        return Err(PngError::Size(format!(
            "scale {scale} must be a positive number"
        )));
    }
    let tree =
        usvg::Tree::from_str(svg, &svg_options()).map_err(|e| PngError::Svg(e.to_string()))?;
    let size = tree.size();
    let w = (size.width() * scale).round();
    let h = (size.height() * scale).round();
    if !(w >= 1.0 && h >= 1.0 && w <= MAX_PIXELS_SIDE as f32 && h <= MAX_PIXELS_SIDE as f32) {
        return Err(PngError::Size(format!(
            "{w}x{h} pixels is outside 1..={MAX_PIXELS_SIDE} per side"
        )));
    }
    let mut pixmap = tiny_skia::Pixmap::new(w as u32, h as u32)
        .ok_or_else(|| PngError::Size(format!("cannot allocate {w}x{h} pixels")))?;
    pixmap.fill(tiny_skia::Color::WHITE);
    let transform = tiny_skia::Transform::from_scale(w / size.width(), h / size.height());
    resvg::render(&tree, transform, &mut pixmap.as_mut());
    Ok(pixmap)
}
