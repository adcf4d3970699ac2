//! The one drawer from a [`Scene`] to egui_plot. Every figure the explorer
//! shows (portrait, diagram, fold curve, backbone) is a `Scene` built in
//! `src/scene.rs`, so the explorer and the exported figures share palette,
//! stroke widths, dashes and marker shapes. A `SceneView` converts a scene's
//! geometry once (when a new result arrives); each frame only hands borrowed
//! slices to the plot.
//!
//! On a dark background the few colours too dark to read there (ink, the low
//! end of the energy scale) are lifted towards white; everything else is drawn
//! as the scene says.

use crate::numbers::tick as tick_label;
use crate::scene::{
    CellRaster, ColourScale, LegendEntry, MarkRole, MarkerShape, MarkerStyle, Rgb, Scene, Swatch,
    nice_ticks,
};
use egui::{Color32, Painter, Pos2, Rect, Stroke, pos2, vec2};
use egui_plot::{Arrows, Line, LineStyle, PlotImage, PlotPoint, PlotUi, Points, Text};
use std::sync::Mutex;

/// Dash length (points) of dashed curves.
const DASH_LENGTH: f32 = 7.0;
/// Arrow heads along orbits (points).
const ARROW_TIP: f32 = 11.0;
/// Lowest relative luminance a stroke may have on the dark background.
const DARK_MIN_LUMINANCE: f64 = 0.2;
/// Distance (points) from a mark to its label.
const LABEL_OFFSET: f64 = 7.0;
/// Alpha of greyed-out drawing (a result shown while the input has an error).
const GREY_ALPHA: u8 = 110;

/// How to draw: theme, greyed out, one curve drawn heavier.
#[derive(Clone, Copy, Debug, Default)]
pub struct Look {
    pub dark: bool,
    pub greyed: bool,
    /// Index into the scene's curves of a curve to emphasise (a selected orbit).
    pub emphasised: Option<usize>,
}

impl Look {
    /// The colour of `c` in this look.
    pub fn colour(&self, c: Rgb) -> Color32 {
        let c = if self.dark { readable_on_dark(c) } else { c };
        let out = Color32::from_rgb(c.0, c.1, c.2);
        if self.greyed {
            let l = ((u16::from(c.0) + u16::from(c.1) + u16::from(c.2)) / 3) as u8;
            Color32::from_rgba_unmultiplied(l, l, l, GREY_ALPHA)
        } else {
            out
        }
    }
}

/// Relative luminance of an sRGB colour (0 black … 1 white).
fn luminance(c: Rgb) -> f64 {
    let lin = |v: u8| {
        let s = f64::from(v) / 255.0;
        if s <= 0.04045 {
            s / 12.92
        } else {
            ((s + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
}

/// `c` mixed towards white just enough to read on a dark background
/// (unchanged when it already does).
pub fn readable_on_dark(c: Rgb) -> Rgb {
    if luminance(c) >= DARK_MIN_LUMINANCE {
        return c;
    }
    let mix = |a: u8, t: f64| (f64::from(a) + (255.0 - f64::from(a)) * t).round() as u8;
    let mut out = c;
    for k in 1..=20 {
        let t = f64::from(k) * 0.05;
        out = Rgb(mix(c.0, t), mix(c.1, t), mix(c.2, t));
        if luminance(out) >= DARK_MIN_LUMINANCE {
            break;
        }
    }
    out
}

struct ViewCurve {
    points: Vec<PlotPoint>,
    colour: Rgb,
    width: f32,
    dashed: bool,
    arrow_from: Vec<PlotPoint>,
    arrow_to: Vec<PlotPoint>,
}

/// A point cloud: dots of one colour and diameter.
struct ViewCloud {
    points: Vec<PlotPoint>,
    colour: Rgb,
    size: f32,
}

/// Marks sharing one style, drawn as one egui_plot item.
struct MarkGroup {
    style: MarkerStyle,
    points: Vec<PlotPoint>,
}

/// A cell raster drawn as one image (a pixel a cell), made into a texture
/// on first draw and again when the look changes.
struct ViewRaster {
    raster: CellRaster,
    texture: Mutex<Option<((bool, bool), egui::TextureHandle)>>,
}

impl ViewRaster {
    /// The cells as an image in `look`: top row first, empty cells clear.
    fn image(&self, look: &Look) -> egui::ColorImage {
        let r = &self.raster;
        let mut pixels = Vec::with_capacity(r.columns * r.rows);
        for row in (0..r.rows).rev() {
            for col in 0..r.columns {
                let fill = r.fills.get(row * r.columns + col).copied().flatten();
                pixels.push(fill.map_or(Color32::TRANSPARENT, |c| look.colour(c)));
            }
        }
        egui::ColorImage::new([r.columns, r.rows], pixels)
    }

    fn draw(&self, pui: &mut PlotUi<'_>, look: &Look) {
        let r = &self.raster;
        if r.columns == 0 || r.rows == 0 {
            return;
        }
        let key = (look.dark, look.greyed);
        let id = {
            let Ok(mut slot) = self.texture.lock() else {
                return;
            };
            match slot.as_ref() {
                Some((k, t)) if *k == key => t.id(),
                _ => {
                    let t = pui.ctx().load_texture(
                        "scene-cells",
                        self.image(look),
                        egui::TextureOptions::NEAREST,
                    );
                    let id = t.id();
                    *slot = Some((key, t));
                    id
                }
            }
        };
        let w = r.cell[0] * r.columns as f64;
        let h = r.cell[1] * r.rows as f64;
        let centre = PlotPoint::new(r.origin[0] + 0.5 * w, r.origin[1] + 0.5 * h);
        pui.image(PlotImage::new("", id, centre, vec2(w as f32, h as f32)).allow_hover(false));
    }
}

struct ViewLabel {
    at: PlotPoint,
    text: String,
    colour: Rgb,
}

/// A scene's geometry converted for egui_plot.
#[derive(Default)]
pub struct SceneView {
    rasters: Vec<ViewRaster>,
    curves: Vec<ViewCurve>,
    clouds: Vec<ViewCloud>,
    marks: Vec<MarkGroup>,
    labels: Vec<ViewLabel>,
    pub legend: Vec<LegendEntry>,
    pub colour_scale: Option<ColourScale>,
    pub x_label: String,
    pub y_label: String,
    /// The data range the scene asks for: [xmin, xmax, ymin, ymax].
    pub bounds: [f64; 4],
}

fn to_points(v: &[[f64; 2]]) -> Vec<PlotPoint> {
    v.iter().map(|&[x, y]| PlotPoint::new(x, y)).collect()
}

impl SceneView {
    pub fn new(scene: &Scene) -> SceneView {
        let span = [scene.x.span().abs(), scene.y.span().abs()];
        let curves = scene
            .curves
            .iter()
            .filter(|c| c.points.len() >= 2)
            .map(|c| {
                // Arrow heads: a short segment through each arrow's position
                // (egui_plot draws the head at the segment's end in screen terms).
                let half = 1e-3;
                let (from, to) = c
                    .arrows
                    .iter()
                    .map(|a| {
                        let d = [a.direction[0] * span[0], a.direction[1] * span[1]];
                        (
                            PlotPoint::new(a.at[0] - half * d[0], a.at[1] - half * d[1]),
                            PlotPoint::new(a.at[0] + half * d[0], a.at[1] + half * d[1]),
                        )
                    })
                    .unzip();
                ViewCurve {
                    points: to_points(&c.points),
                    colour: c.colour,
                    width: c.width as f32,
                    dashed: c.dashed,
                    arrow_from: from,
                    arrow_to: to,
                }
            })
            .collect();
        let mut marks: Vec<MarkGroup> = Vec::new();
        let mut labels = Vec::new();
        for m in &scene.marks {
            let at = PlotPoint::new(m.at[0], m.at[1]);
            match marks.iter_mut().find(|g| g.style == m.style) {
                Some(g) => g.points.push(at),
                None => marks.push(MarkGroup {
                    style: m.style,
                    points: vec![at],
                }),
            }
            if let Some(text) = &m.label {
                labels.push(ViewLabel {
                    at,
                    text: text.clone(),
                    colour: match m.role {
                        MarkRole::Bifurcation | MarkRole::QuantumLevel { .. } => m.style.colour,
                        _ => crate::scene::INK,
                    },
                });
            }
        }
        let clouds = scene
            .clouds
            .iter()
            .map(|c| ViewCloud {
                points: to_points(&c.points),
                colour: c.colour,
                size: c.size as f32,
            })
            .collect();
        let rasters = scene
            .rasters
            .iter()
            .filter(|r| r.fills.len() == r.columns * r.rows)
            .map(|r| ViewRaster {
                raster: r.clone(),
                texture: Mutex::new(None),
            })
            .collect();
        SceneView {
            rasters,
            curves,
            clouds,
            marks,
            labels,
            legend: scene.legend.clone(),
            colour_scale: scene.colour_scale.clone(),
            x_label: scene.x.label.clone(),
            y_label: scene.y.label.clone(),
            bounds: [scene.x.min, scene.x.max, scene.y.min, scene.y.max],
        }
    }

    /// Draw into a plot: cell rasters, curves in order, clouds, marks, then labels.
    pub fn draw<'a>(&'a self, pui: &mut PlotUi<'a>, look: &Look) {
        for r in &self.rasters {
            r.draw(pui, look);
        }
        for (i, c) in self.curves.iter().enumerate() {
            let emphasised = look.emphasised == Some(i);
            let colour = look.colour(c.colour);
            let width = if emphasised { c.width * 1.8 } else { c.width };
            let style = if c.dashed {
                LineStyle::Dashed {
                    length: DASH_LENGTH,
                }
            } else {
                LineStyle::Solid
            };
            pui.line(
                Line::new("", c.points.as_slice())
                    .color(colour)
                    .width(width)
                    .style(style)
                    .highlight(emphasised)
                    .allow_hover(false),
            );
            if !c.arrow_from.is_empty() {
                pui.arrows(
                    Arrows::new("", c.arrow_from.as_slice(), c.arrow_to.as_slice())
                        .color(colour)
                        .tip_length(ARROW_TIP)
                        .allow_hover(false),
                );
            }
        }
        for c in &self.clouds {
            pui.points(
                Points::new("", c.points.as_slice())
                    .shape(egui_plot::MarkerShape::Circle)
                    .filled(true)
                    .radius(c.size / 2.0)
                    .color(look.colour(c.colour))
                    .allow_hover(false),
            );
        }
        for g in &self.marks {
            marker_items(pui, g.style, g.points.as_slice(), look);
        }
        if !self.labels.is_empty() {
            let [dx, dy] = pui.transform().dvalue_dpos();
            let bounds = pui.plot_bounds();
            let mid_x = 0.5 * (bounds.min()[0] + bounds.max()[0]);
            for l in &self.labels {
                // Labels in the right half of the plot read leftwards so they stay inside it.
                let (offset, anchor) = if l.at.x > mid_x {
                    (-LABEL_OFFSET, egui::Align2::RIGHT_BOTTOM)
                } else {
                    (LABEL_OFFSET, egui::Align2::LEFT_BOTTOM)
                };
                let at = PlotPoint::new(l.at.x + offset * dx, l.at.y - LABEL_OFFSET * dy);
                pui.text(
                    Text::new("", at, egui::RichText::new(&l.text).size(12.0))
                        .color(look.colour(l.colour))
                        .anchor(anchor)
                        .allow_hover(false),
                );
            }
        }
    }
}

/// The egui_plot items of one marker style at `points`.
fn marker_items<'a>(
    pui: &mut PlotUi<'a>,
    style: MarkerStyle,
    points: &'a [PlotPoint],
    look: &Look,
) {
    let colour = look.colour(style.colour);
    let radius = (style.size / 2.0) as f32;
    let (shape, filled) = match style.shape {
        MarkerShape::Ring => (egui_plot::MarkerShape::Circle, false),
        MarkerShape::Cross => (egui_plot::MarkerShape::Cross, false),
        MarkerShape::Diamond => (egui_plot::MarkerShape::Diamond, true),
        MarkerShape::Square => (egui_plot::MarkerShape::Square, true),
        MarkerShape::Dot => (egui_plot::MarkerShape::Circle, true),
    };
    pui.points(
        Points::new("", points)
            .shape(shape)
            .filled(filled)
            .radius(radius)
            .color(colour)
            .allow_hover(false),
    );
    if style.shape == MarkerShape::Ring {
        pui.points(
            Points::new("", points)
                .shape(egui_plot::MarkerShape::Circle)
                .filled(true)
                .radius(radius * 0.3)
                .color(colour)
                .allow_hover(false),
        );
    }
}

/// Paint one marker at `centre` (legend swatches), the same shapes egui_plot draws.
pub fn paint_marker(painter: &Painter, centre: Pos2, style: MarkerStyle, look: &Look) {
    let colour = look.colour(style.colour);
    let r = (style.size / 2.0) as f32;
    let stroke = Stroke::new(r / 5.0, colour);
    let s = std::f32::consts::FRAC_1_SQRT_2 * r;
    match style.shape {
        MarkerShape::Ring => {
            painter.circle_stroke(centre, r, stroke);
            painter.circle_filled(centre, r * 0.3, colour);
        }
        MarkerShape::Cross => {
            painter.line_segment([centre + vec2(-s, -s), centre + vec2(s, s)], stroke);
            painter.line_segment([centre + vec2(s, -s), centre + vec2(-s, s)], stroke);
        }
        MarkerShape::Diamond => {
            let pts = vec![
                centre + vec2(0.0, r),
                centre + vec2(-r, 0.0),
                centre + vec2(0.0, -r),
                centre + vec2(r, 0.0),
            ];
            painter.add(egui::Shape::convex_polygon(pts, colour, Stroke::NONE));
        }
        MarkerShape::Dot => {
            painter.circle_filled(centre, r, colour);
        }
        MarkerShape::Square => {
            painter.rect_filled(
                Rect::from_center_size(centre, vec2(2.0 * s, 2.0 * s)),
                0.0,
                colour,
            );
        }
    }
}

/// The legend inside the top-right corner of `plot_rect`: each entry's
/// swatch (its marker shape, or a stroke with its width and dash) and label.
pub fn legend(ui: &egui::Ui, plot_rect: Rect, entries: &[LegendEntry], look: &Look) {
    if entries.is_empty() {
        return;
    }
    let font = egui::FontId::proportional(12.0);
    let text_colour = ui.visuals().text_color();
    let row = 17.0;
    let swatch_w = 26.0;
    let widths: Vec<f32> = entries
        .iter()
        .map(|e| {
            ui.painter()
                .layout_no_wrap(e.label.clone(), font.clone(), text_colour)
                .size()
                .x
        })
        .collect();
    let w = widths.iter().copied().fold(0.0, f32::max) + swatch_w + 18.0;
    let h = row * entries.len() as f32 + 8.0;
    let rect = Rect::from_min_size(
        pos2(plot_rect.max.x - w - 8.0, plot_rect.min.y + 8.0),
        vec2(w, h),
    );
    let painter = ui.painter_at(plot_rect);
    let bg = ui.visuals().extreme_bg_color.gamma_multiply(0.85);
    painter.rect_filled(rect, 3.0, bg);
    painter.rect_stroke(
        rect,
        3.0,
        ui.visuals().widgets.noninteractive.bg_stroke,
        egui::StrokeKind::Inside,
    );
    for (k, e) in entries.iter().enumerate() {
        let y = rect.min.y + 4.0 + row * (k as f32 + 0.5);
        let sw = pos2(rect.min.x + 6.0 + swatch_w / 2.0, y);
        match e.swatch {
            Swatch::Marker(style) => paint_marker(&painter, sw, style, look),
            Swatch::Line {
                colour,
                width,
                dashed,
            } => {
                let stroke = Stroke::new(width as f32, look.colour(colour));
                let a = sw - vec2(swatch_w / 2.0 - 2.0, 0.0);
                let b = sw + vec2(swatch_w / 2.0 - 2.0, 0.0);
                if dashed {
                    painter.extend(egui::Shape::dashed_line(&[a, b], stroke, 5.0, 3.0));
                } else {
                    painter.line_segment([a, b], stroke);
                }
            }
        }
        painter.text(
            pos2(rect.min.x + 12.0 + swatch_w, y),
            egui::Align2::LEFT_CENTER,
            &e.label,
            font.clone(),
            text_colour,
        );
    }
}

/// A vertical colour bar for `scale` (its stops, ticks on 1-2-5 steps, the
/// marked values as short strokes across the bar), `width` × `height` points.
pub fn colour_bar(
    ui: &mut egui::Ui,
    scale: Option<&ColourScale>,
    width: f32,
    height: f32,
    look: &Look,
) {
    let (rect, _) = ui.allocate_exact_size(vec2(width, height), egui::Sense::hover());
    let Some(scale) = scale else {
        return;
    };
    let painter = ui.painter_at(rect);
    let text_colour = ui.visuals().text_color();
    let font = egui::FontId::proportional(11.0);
    painter.text(
        rect.center_top() + vec2(0.0, 2.0),
        egui::Align2::CENTER_TOP,
        &scale.label,
        font.clone(),
        text_colour,
    );
    let (lo, hi) = (scale.min, scale.max);
    if !(hi > lo) {
        return;
    }
    let bar = Rect::from_min_max(
        rect.min + vec2(6.0, 20.0),
        pos2(rect.min.x + 20.0, rect.max.y - 20.0),
    );
    let steps = 48;
    for s in 0..steps {
        let t0 = s as f32 / steps as f32;
        let t1 = (s + 1) as f32 / steps as f32;
        let y0 = bar.max.y - t1 * bar.height();
        let y1 = bar.max.y - t0 * bar.height();
        let v = lo + f64::from((t0 + t1) * 0.5) * (hi - lo);
        // The bar shows the scale's own colours (no dark-theme lift: it is a key).
        let c = scale.colour(v);
        let mut fill = Color32::from_rgb(c.0, c.1, c.2);
        if look.greyed {
            fill = fill.gamma_multiply(0.4);
        }
        painter.rect_filled(
            Rect::from_min_max(pos2(bar.min.x, y0), pos2(bar.max.x, y1)),
            0.0,
            fill,
        );
    }
    let y_of = |v: f64| bar.max.y - ((v - lo) / (hi - lo)) as f32 * bar.height();
    let (ticks, step) = nice_ticks(lo, hi, 5);
    for v in ticks {
        let y = y_of(v);
        painter.line_segment(
            [pos2(bar.max.x, y), pos2(bar.max.x + 3.0, y)],
            Stroke::new(1.0, text_colour),
        );
        painter.text(
            pos2(bar.max.x + 5.0, y),
            egui::Align2::LEFT_CENTER,
            tick_label(v, step),
            font.clone(),
            text_colour,
        );
    }
    for &v in &scale.marked {
        if v >= lo && v <= hi {
            let y = y_of(v);
            painter.line_segment(
                [pos2(bar.min.x - 3.0, y), pos2(bar.max.x + 1.0, y)],
                Stroke::new(2.0, look.colour(crate::scene::INK)),
            );
        }
    }
}
