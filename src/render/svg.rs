//! SVG 1.1 from a `Scene`, written by hand: framed axes with 1-2-5 ticks,
//! level curves (one `<path class="level">` each), orbits with arrows, one
//! `<g class="mark …">` per mark, the energy colour bar, the legend and a
//! caption line. Text stays text (escaped XML) in the bundled font's family.

use crate::numbers::{coordinate as num, tick as tick_label};
use crate::scene::{
    Arrow, CellRaster, Cloud, Curve, CurveRole, FONT_FAMILY, INK, MUTED, Mark, MarkRole,
    MarkerShape, MarkerStyle, PAPER, Rgb, Scene, Swatch, kind_name, nice_ticks,
};
use std::fmt::Write;

/// The figure's size in output pixels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FigureSize {
    pub width: u32,
    pub height: u32,
}

impl Default for FigureSize {
    fn default() -> Self {
        FigureSize {
            width: 1000,
            height: 750,
        }
    }
}

/// Smallest and largest accepted side in pixels.
pub const MIN_SIDE: u32 = 200;
pub const MAX_SIDE: u32 = 8000;

impl FigureSize {
    /// Parse `WxH` (e.g. `1600x1200`); the message says what is wrong.
    pub fn parse(text: &str) -> Result<FigureSize, String> {
        let t = text.trim();
        let (w, h) = t
            .split_once(['x', 'X', '×'])
            .ok_or_else(|| format!("size '{t}' is not WIDTHxHEIGHT (for example 1600x1200)"))?;
        let side = |s: &str, what: &str| -> Result<u32, String> {
            let v: u32 = s
                .trim()
                .parse()
                .map_err(|_| format!("size '{t}': {what} '{s}' is not a whole number of pixels"))?;
            if !(MIN_SIDE..=MAX_SIDE).contains(&v) {
                return Err(format!(
                    "size '{t}': {what} {v} is outside {MIN_SIDE}..={MAX_SIDE} pixels"
                ));
            }
            Ok(v)
        };
        Ok(FigureSize {
            width: side(w, "width")?,
            height: side(h, "height")?,
        })
    }
}

/// The reference canvas the layout is designed for; other sizes scale it uniformly.
const DESIGN_AREA: f64 = 900.0 * 675.0;
const TITLE_SIZE: f64 = 15.0;
const LABEL_SIZE: f64 = 13.0;
const TICK_SIZE: f64 = 11.0;
const CAPTION_SIZE: f64 = 11.0;
const TICK_LENGTH: f64 = 5.0;
/// Rough advance of one character of DejaVu Sans, in ems (for fitting text).
const CHAR_EM: f64 = 0.6;
/// Points closer than this on the page (logical units) are merged.
const MIN_STEP: f64 = 0.35;
const ARROW_LENGTH: f64 = 10.0;
/// Extra width of the casing drawn under an orbit.
const ORBIT_CASING: f64 = 2.6;
const ARROW_HALF_WIDTH: f64 = 4.2;

/// Where things go, in logical units.
struct Layout {
    width: f64,
    height: f64,
    left: f64,
    top: f64,
    right: f64,
    bottom: f64,
}

impl Layout {
    fn new(size: FigureSize, scene: &Scene) -> Layout {
        let w = f64::from(size.width);
        let h = f64::from(size.height);
        let scale = ((w * h) / DESIGN_AREA).sqrt().clamp(0.5, 4.0);
        let width = w / scale;
        let height = h / scale;
        let panel = if scene.colour_scale.is_some() || !scene.legend.is_empty() {
            150.0
        } else {
            28.0
        };
        Layout {
            width,
            height,
            left: 72.0,
            top: 46.0,
            right: width - panel,
            bottom: height - 70.0,
        }
    }

    fn px(&self, scene: &Scene, x: f64) -> f64 {
        self.left + (x - scene.x.min) / scene.x.span() * (self.right - self.left)
    }

    fn py(&self, scene: &Scene, y: f64) -> f64 {
        self.bottom - (y - scene.y.min) / scene.y.span() * (self.bottom - self.top)
    }
}

/// Escape text for XML content and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c if (c as u32) < 0x20 && c != '\t' && c != '\n' && c != '\r' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// The whole figure as an SVG document.
pub fn to_svg(scene: &Scene, size: FigureSize) -> String {
    let l = Layout::new(size, scene);
    let mut out = String::with_capacity(64 * 1024);
    let _ = writeln!(out, r#"<?xml version="1.0" encoding="UTF-8"?>"#);
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{}" height="{}" viewBox="0 0 {} {}" font-family="{FONT_FAMILY}">"#,
        size.width,
        size.height,
        num(l.width),
        num(l.height)
    );
    let _ = writeln!(out, "<title>{}</title>", escape(&scene.title));
    let _ = writeln!(out, "<desc>{}</desc>", escape(&scene.caption));
    let _ = writeln!(
        out,
        r#"<defs><clipPath id="plot-area"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath>{}</defs>"#,
        num(l.left),
        num(l.top),
        num(l.right - l.left),
        num(l.bottom - l.top),
        colour_gradient(scene)
    );
    let _ = writeln!(
        out,
        r#"<rect width="100%" height="100%" fill="{}"/>"#,
        PAPER.hex()
    );
    write_title(&mut out, scene, &l);
    write_axes(&mut out, scene, &l);
    let _ = writeln!(
        out,
        r#"<g clip-path="url(#plot-area)" fill="none" stroke-linejoin="round" stroke-linecap="round">"#
    );
    for r in &scene.rasters {
        write_raster(&mut out, scene, &l, r);
    }
    for c in &scene.curves {
        write_curve(&mut out, scene, &l, c);
    }
    for c in &scene.clouds {
        write_cloud(&mut out, scene, &l, c);
    }
    let _ = writeln!(out, "</g>");
    for m in &scene.marks {
        write_mark(&mut out, scene, &l, m);
    }
    let _ = writeln!(
        out,
        r#"<rect class="frame" x="{}" y="{}" width="{}" height="{}" fill="none" stroke="{}" stroke-width="1"/>"#,
        num(l.left),
        num(l.top),
        num(l.right - l.left),
        num(l.bottom - l.top),
        INK.hex()
    );
    let legend_top = write_colour_bar(&mut out, scene, &l);
    write_legend(&mut out, scene, &l, legend_top);
    write_caption(&mut out, scene, &l);
    out.push_str("</svg>\n");
    out
}

/// A font size that fits `text` into `room` logical units, at most `size`.
fn fitted(text: &str, size: f64, room: f64) -> f64 {
    let chars = text.chars().count().max(1) as f64;
    (room / (chars * CHAR_EM)).min(size).max(6.0)
}

fn write_title(out: &mut String, scene: &Scene, l: &Layout) {
    let size = fitted(&scene.title, TITLE_SIZE, l.width - l.left - 16.0);
    let _ = writeln!(
        out,
        r#"<text class="title" x="{}" y="{}" font-size="{}" fill="{}">{}</text>"#,
        num(l.left),
        num(l.top - 16.0),
        num(size),
        INK.hex(),
        escape(&scene.title)
    );
}

fn write_caption(out: &mut String, scene: &Scene, l: &Layout) {
    let size = fitted(&scene.caption, CAPTION_SIZE, l.width - l.left - 12.0);
    let _ = writeln!(
        out,
        r#"<text class="caption" x="{}" y="{}" font-size="{}" fill="{}">{}</text>"#,
        num(l.left),
        num(l.height - 12.0),
        num(size),
        MUTED.hex(),
        escape(&scene.caption)
    );
}

fn write_axes(out: &mut String, scene: &Scene, l: &Layout) {
    let ink = INK.hex();
    let muted = MUTED.hex();
    let _ = writeln!(
        out,
        r#"<g class="axes" stroke="{ink}" stroke-width="1" font-size="{TICK_SIZE}">"#
    );
    let target_x = (((l.right - l.left) / 80.0).round() as usize).clamp(3, 10);
    let (xt, xs) = nice_ticks(scene.x.min, scene.x.max, target_x);
    for v in xt {
        let x = l.px(scene, v);
        let _ = writeln!(
            out,
            r#"<line x1="{0}" y1="{1}" x2="{0}" y2="{2}"/><text x="{0}" y="{3}" text-anchor="middle" stroke="none" fill="{muted}">{4}</text>"#,
            num(x),
            num(l.bottom),
            num(l.bottom + TICK_LENGTH),
            num(l.bottom + TICK_LENGTH + TICK_SIZE + 2.0),
            escape(&tick_label(v, xs))
        );
    }
    let target_y = (((l.bottom - l.top) / 60.0).round() as usize).clamp(3, 10);
    let (yt, ys) = nice_ticks(scene.y.min, scene.y.max, target_y);
    let mut widest = 0usize;
    for v in yt {
        let y = l.py(scene, v);
        let label = tick_label(v, ys);
        widest = widest.max(label.chars().count());
        let _ = writeln!(
            out,
            r#"<line x1="{0}" y1="{1}" x2="{2}" y2="{1}"/><text x="{3}" y="{4}" text-anchor="end" stroke="none" fill="{muted}">{5}</text>"#,
            num(l.left - TICK_LENGTH),
            num(y),
            num(l.left),
            num(l.left - TICK_LENGTH - 3.0),
            num(y + TICK_SIZE * 0.35),
            escape(&label)
        );
    }
    let _ = writeln!(out, "</g>");
    let _ = writeln!(
        out,
        r#"<text class="axis-label" x="{}" y="{}" font-size="{LABEL_SIZE}" text-anchor="middle" fill="{ink}" font-style="italic">{}</text>"#,
        num(0.5 * (l.left + l.right)),
        num(l.bottom + TICK_LENGTH + TICK_SIZE + LABEL_SIZE + 8.0),
        escape(&scene.x.label)
    );
    let yx = (l.left - TICK_LENGTH - 10.0 - widest as f64 * TICK_SIZE * CHAR_EM).max(LABEL_SIZE);
    let ymid = 0.5 * (l.top + l.bottom);
    let _ = writeln!(
        out,
        r#"<text class="axis-label" x="{0}" y="{1}" font-size="{LABEL_SIZE}" text-anchor="middle" fill="{ink}" font-style="italic" transform="rotate(-90 {0} {1})">{2}</text>"#,
        num(yx),
        num(ymid),
        escape(&scene.y.label)
    );
}

/// Path data for a polyline in page units; NaN vertices break the line.
fn path_data(scene: &Scene, l: &Layout, points: &[[f64; 2]], closed: bool) -> String {
    let mut d = String::with_capacity(points.len() * 12);
    let mut last: Option<(f64, f64)> = None;
    let mut broken = false;
    for p in points {
        if !(p[0].is_finite() && p[1].is_finite()) {
            last = None;
            broken = true;
            continue;
        }
        let (x, y) = (l.px(scene, p[0]), l.py(scene, p[1]));
        match last {
            None => {
                let _ = write!(d, "M{} {}", num(x), num(y));
                last = Some((x, y));
            }
            Some((lx, ly)) => {
                if (x - lx).hypot(y - ly) >= MIN_STEP {
                    let _ = write!(d, "L{} {}", num(x), num(y));
                    last = Some((x, y));
                }
            }
        }
    }
    if closed && !broken && !d.is_empty() {
        d.push('Z');
    }
    d
}

/// A cell raster as one filled rectangle per run of equal cells in a row.
fn write_raster(out: &mut String, scene: &Scene, l: &Layout, r: &CellRaster) {
    let _ = writeln!(out, r#"<g class="cells" stroke="none">"#);
    for j in 0..r.rows {
        let row =
            &r.fills[(j * r.columns).min(r.fills.len())..((j + 1) * r.columns).min(r.fills.len())];
        let mut i = 0;
        while i < row.len() {
            let Some(colour) = row[i] else {
                i += 1;
                continue;
            };
            let start = i;
            while i < row.len() && row[i] == Some(colour) {
                i += 1;
            }
            let (q0, q1) = (
                r.origin[0] + start as f64 * r.cell[0],
                r.origin[0] + i as f64 * r.cell[0],
            );
            let (p0, p1) = (
                r.origin[1] + j as f64 * r.cell[1],
                r.origin[1] + (j + 1) as f64 * r.cell[1],
            );
            let (x0, x1) = (l.px(scene, q0), l.px(scene, q1));
            let (y0, y1) = (l.py(scene, p1), l.py(scene, p0));
            let _ = writeln!(
                out,
                r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{}"/>"#,
                num(x0),
                num(y0),
                num(x1 - x0),
                num(y1 - y0),
                colour.hex()
            );
        }
    }
    let _ = writeln!(out, "</g>");
}

fn write_curve(out: &mut String, scene: &Scene, l: &Layout, c: &Curve) {
    let d = path_data(scene, l, &c.points, c.closed);
    let dash = if c.dashed {
        format!(
            r#" stroke-dasharray="{} {}""#,
            num(c.width * 3.0),
            num(c.width * 2.2)
        )
    } else {
        String::new()
    };
    let (class, data) = match c.role {
        CurveRole::Level { level, separatrix } => (
            if separatrix {
                "level separatrix"
            } else {
                "level"
            },
            format!(r#" data-level="{level:?}""#),
        ),
        CurveRole::Branch { kind } => ("branch", format!(r#" data-kind="{}""#, kind_name(kind))),
        _ => (c.role.class(), String::new()),
    };
    if c.role == CurveRole::Orbit {
        // A paper-coloured casing lifts the orbit off the level curves beneath it.
        let _ = writeln!(
            out,
            r#"<path class="orbit-casing" d="{d}" stroke="{}" stroke-width="{}" stroke-opacity="0.85"/>"#,
            PAPER.hex(),
            num(c.width + ORBIT_CASING)
        );
    }
    let _ = writeln!(
        out,
        r#"<path class="{class}"{data} d="{d}" stroke="{}" stroke-width="{}"{dash}/>"#,
        c.colour.hex(),
        num(c.width)
    );
    for a in &c.arrows {
        write_arrow(out, scene, l, a, c.colour);
    }
}

/// A point cloud as one path of dots: each point a very short stroke with
/// round caps as wide as the dot.
fn write_cloud(out: &mut String, scene: &Scene, l: &Layout, c: &Cloud) {
    let mut d = String::with_capacity(16 * c.points.len());
    let mut count = 0usize;
    for p in &c.points {
        let (x, y) = (l.px(scene, p[0]), l.py(scene, p[1]));
        if x.is_finite() && y.is_finite() {
            let _ = write!(d, "M{} {}h0.01", num(x), num(y));
            count += 1;
        }
    }
    if count == 0 {
        return;
    }
    let _ = writeln!(
        out,
        r#"<path class="cloud" data-points="{count}" d="{d}" stroke="{}" stroke-width="{}" stroke-linecap="round"/>"#,
        c.colour.hex(),
        num(c.size)
    );
}

fn write_arrow(out: &mut String, scene: &Scene, l: &Layout, a: &Arrow, colour: Rgb) {
    let (x, y) = (l.px(scene, a.at[0]), l.py(scene, a.at[1]));
    let dx = a.direction[0] / scene.x.span() * (l.right - l.left);
    let dy = -a.direction[1] / scene.y.span() * (l.bottom - l.top);
    let n = dx.hypot(dy);
    if !(n > 0.0) {
        return;
    }
    let (ux, uy) = (dx / n, dy / n);
    let tip = (x + ux * ARROW_LENGTH * 0.5, y + uy * ARROW_LENGTH * 0.5);
    let base = (x - ux * ARROW_LENGTH * 0.5, y - uy * ARROW_LENGTH * 0.5);
    let left = (
        base.0 - uy * ARROW_HALF_WIDTH,
        base.1 + ux * ARROW_HALF_WIDTH,
    );
    let right = (
        base.0 + uy * ARROW_HALF_WIDTH,
        base.1 - ux * ARROW_HALF_WIDTH,
    );
    let _ = writeln!(
        out,
        r#"<path class="orbit-arrow" d="M{} {}L{} {}L{} {}Z" fill="{}" stroke="none"/>"#,
        num(tip.0),
        num(tip.1),
        num(left.0),
        num(left.1),
        num(right.0),
        num(right.1),
        colour.hex()
    );
}

/// SVG elements of a marker centred at (x, y).
fn marker_shape(style: &MarkerStyle, x: f64, y: f64) -> String {
    let c = style.colour.hex();
    let paper = PAPER.hex();
    let r = 0.5 * style.size;
    match style.shape {
        MarkerShape::Ring => format!(
            r#"<circle cx="{0}" cy="{1}" r="{2}" fill="{paper}" stroke="{c}" stroke-width="2"/><circle cx="{0}" cy="{1}" r="{3}" fill="{c}"/>"#,
            num(x),
            num(y),
            num(r),
            num(r * 0.36)
        ),
        MarkerShape::Cross => {
            let h = r * 0.85;
            let d = format!(
                "M{} {}L{} {}M{} {}L{} {}",
                num(x - h),
                num(y - h),
                num(x + h),
                num(y + h),
                num(x - h),
                num(y + h),
                num(x + h),
                num(y - h)
            );
            format!(
                r#"<path d="{d}" stroke="{paper}" stroke-width="5" stroke-linecap="round"/><path d="{d}" stroke="{c}" stroke-width="2.4" stroke-linecap="round"/>"#
            )
        }
        MarkerShape::Diamond => format!(
            r#"<path d="M{0} {1}L{2} {3}L{0} {4}L{5} {3}Z" fill="{c}" stroke="{paper}" stroke-width="1.2"/>"#,
            num(x),
            num(y - r),
            num(x + r),
            num(y),
            num(y + r),
            num(x - r)
        ),
        MarkerShape::Dot => format!(
            r#"<circle cx="{}" cy="{}" r="{}" fill="{c}"/>"#,
            num(x),
            num(y),
            num(r)
        ),
        MarkerShape::Square => format!(
            r#"<rect x="{}" y="{}" width="{2}" height="{2}" fill="{c}" stroke="{paper}" stroke-width="1.2"/>"#,
            num(x - r),
            num(y - r),
            num(style.size)
        ),
    }
}

fn write_mark(out: &mut String, scene: &Scene, l: &Layout, m: &Mark) {
    if !(m.at[0].is_finite() && m.at[1].is_finite()) {
        return;
    }
    let (x, y) = (l.px(scene, m.at[0]), l.py(scene, m.at[1]));
    let class = match m.role {
        MarkRole::Equilibrium(kind) => {
            format!(r#"mark equilibrium" data-kind="{}"#, kind_name(kind))
        }
        MarkRole::Bifurcation => "mark bifurcation".to_string(),
        MarkRole::Cusp => "mark cusp".to_string(),
        MarkRole::Sample => "mark sample".to_string(),
        MarkRole::Zero => "mark zero".to_string(),
        MarkRole::QuantumLevel { n } => format!(r#"mark quantum-level" data-n="{n}"#),
    };
    let _ = write!(
        out,
        r#"<g class="{class}" data-x="{:?}" data-y="{:?}">{}"#,
        m.at[0],
        m.at[1],
        marker_shape(&m.style, x, y)
    );
    if let Some(label) = &m.label {
        let right_half = x > 0.5 * (l.left + l.right);
        let (lx, anchor) = if right_half {
            (x - m.style.size, "end")
        } else {
            (x + m.style.size, "start")
        };
        let _ = write!(
            out,
            r#"<text x="{}" y="{}" font-size="{TICK_SIZE}" text-anchor="{anchor}" fill="{}" stroke="{}" stroke-width="3" paint-order="stroke">{}</text>"#,
            num(lx),
            num(y - m.style.size * 0.6),
            match m.role {
                MarkRole::QuantumLevel { .. } => m.style.colour,
                _ => INK,
            }
            .hex(),
            PAPER.hex(),
            escape(label)
        );
    }
    out.push_str("</g>\n");
}

fn colour_gradient(scene: &Scene) -> String {
    let Some(scale) = &scene.colour_scale else {
        return String::new();
    };
    let mut g = String::from(r#"<linearGradient id="energy-scale" x1="0" y1="1" x2="0" y2="0">"#);
    for (t, c) in &scale.stops {
        let _ = write!(
            g,
            r#"<stop offset="{}" stop-color="{}"/>"#,
            num(*t),
            c.hex()
        );
    }
    g.push_str("</linearGradient>");
    g
}

/// The colour bar at the top of the side panel; returns where the legend may start.
fn write_colour_bar(out: &mut String, scene: &Scene, l: &Layout) -> f64 {
    let x0 = l.right + 24.0;
    let Some(scale) = &scene.colour_scale else {
        return l.top;
    };
    let top = l.top + 22.0;
    let bottom = top + ((l.bottom - l.top) * 0.5).max(80.0);
    let width = 14.0;
    let ink = INK.hex();
    let _ = writeln!(
        out,
        r#"<g class="colour-bar"><text x="{}" y="{}" font-size="{LABEL_SIZE}" fill="{ink}" font-style="italic">{}</text>"#,
        num(x0),
        num(top - 9.0),
        escape(&scale.label)
    );
    let _ = writeln!(
        out,
        r#"<rect x="{}" y="{}" width="{width}" height="{}" fill="url(#energy-scale)" stroke="{ink}" stroke-width="0.8"/>"#,
        num(x0),
        num(top),
        num(bottom - top)
    );
    let span = scale.max - scale.min;
    let at = |v: f64| bottom - (v - scale.min) / span * (bottom - top);
    let (ticks, step) = nice_ticks(scale.min, scale.max, 5);
    for v in ticks {
        let y = at(v);
        let _ = writeln!(
            out,
            r#"<line x1="{0}" y1="{1}" x2="{2}" y2="{1}" stroke="{ink}" stroke-width="0.8"/><text x="{3}" y="{4}" font-size="{TICK_SIZE}" fill="{5}">{6}</text>"#,
            num(x0 + width),
            num(y),
            num(x0 + width + 4.0),
            num(x0 + width + 7.0),
            num(y + TICK_SIZE * 0.35),
            MUTED.hex(),
            escape(&tick_label(v, step))
        );
    }
    for &v in &scale.marked {
        if v >= scale.min && v <= scale.max {
            let y = at(v);
            let _ = writeln!(
                out,
                r#"<line class="separatrix-level" x1="{0}" y1="{2}" x2="{1}" y2="{2}" stroke="{ink}" stroke-width="2.2"/>"#,
                num(x0 - 4.0),
                num(x0 + width),
                num(y)
            );
        }
    }
    out.push_str("</g>\n");
    bottom + 28.0
}

fn write_legend(out: &mut String, scene: &Scene, l: &Layout, top: f64) {
    if scene.legend.is_empty() {
        return;
    }
    let x0 = l.right + 24.0;
    let row = 19.0;
    let _ = writeln!(out, r#"<g class="legend" font-size="{TICK_SIZE}">"#);
    for (i, e) in scene.legend.iter().enumerate() {
        let y = top + i as f64 * row;
        let swatch = match e.swatch {
            Swatch::Marker(style) => marker_shape(&style, x0 + 8.0, y),
            Swatch::Line {
                colour,
                width,
                dashed,
            } => format!(
                r#"<line x1="{0}" y1="{2}" x2="{1}" y2="{2}" stroke="{3}" stroke-width="{4}"{5}/>"#,
                num(x0),
                num(x0 + 16.0),
                num(y),
                colour.hex(),
                num(width),
                if dashed {
                    r#" stroke-dasharray="4 3""#
                } else {
                    ""
                }
            ),
        };
        let _ = writeln!(
            out,
            r#"<g class="legend-entry">{swatch}<text x="{}" y="{}" fill="{}">{}</text></g>"#,
            num(x0 + 24.0),
            num(y + TICK_SIZE * 0.35),
            INK.hex(),
            escape(&e.label)
        );
    }
    out.push_str("</g>\n");
}
