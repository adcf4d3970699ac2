//! The phase portrait: level curves coloured by energy with a colour scale,
//! separatrices drawn heavier, equilibria marked by kind (shape, not colour
//! alone), orbits as polylines with direction arrows. Converted geometry is
//! cached per result generation; a frame only hands borrowed slices to the plot.

use crate::core::equilibria::{Equilibrium, EquilibriumKind};
use crate::core::system::System;
use crate::core::window::Window;
use egui_plot::{Arrows, Legend, Line, MarkerShape, Plot, PlotBounds, PlotPoint, Points};

use super::worker::Computed;
use super::{Command, Selection};

/// Accessible name of the plot area.
pub const PLOT_LABEL: &str = "Phase portrait";
/// A click becomes an orbit launch when no second click follows within this (seconds).
const DOUBLE_CLICK_WAIT: f64 = 0.32;
/// Arrows drawn along each orbit.
const ARROWS_PER_ORBIT: usize = 5;
/// Pointer within this fraction of the window of an equilibrium counts as "near".
const NEAR_FRACTION: f64 = 0.025;
/// Scroll distance (points) that zooms by a factor e.
const SCROLL_ZOOM_SCALE: f32 = 200.0;

struct CachedCurve {
    points: Vec<PlotPoint>,
    colour: egui::Color32,
    separatrix: bool,
}

struct CachedOrbit {
    points: Vec<PlotPoint>,
    arrow_from: Vec<PlotPoint>,
    arrow_to: Vec<PlotPoint>,
    colour: egui::Color32,
}

/// Plot geometry converted from one result.
#[derive(Default)]
struct Cache {
    generation: u64,
    curves: Vec<CachedCurve>,
    /// Equilibrium positions by kind: center, saddle, degenerate.
    marks: [Vec<PlotPoint>; 3],
    orbits: Vec<CachedOrbit>,
    level_range: Option<(f64, f64)>,
}

pub struct PlotPanel {
    cache: Cache,
    /// The view last put into the plot (the plot owns bounds between changes).
    applied_view: Option<Window>,
    pending_click: Option<(f64, f64, f64)>,
    /// Clicks launch orbits (otherwise the plot only pans and zooms).
    pub launch_on_click: bool,
    /// The text under the plot for the pointer position.
    pub hover_text: String,
}

impl Default for PlotPanel {
    fn default() -> Self {
        PlotPanel {
            cache: Cache::default(),
            applied_view: None,
            pending_click: None,
            launch_on_click: true,
            hover_text: String::new(),
        }
    }
}

/// Kind order used for markers and the legend.
const KINDS: [(EquilibriumKind, &str, MarkerShape); 3] = [
    (EquilibriumKind::Center, "center", MarkerShape::Circle),
    (EquilibriumKind::Saddle, "saddle", MarkerShape::Square),
    (
        EquilibriumKind::Degenerate,
        "degenerate",
        MarkerShape::Diamond,
    ),
];

/// Marker colours by kind, for light and dark backgrounds (the shape carries the kind too).
fn kind_colour(k: usize, dark: bool) -> egui::Color32 {
    let light = [[20, 20, 20], [200, 30, 30], [120, 40, 170]];
    let darkc = [[245, 245, 245], [255, 110, 90], [200, 150, 255]];
    let [r, g, b] = if dark { darkc[k] } else { light[k] };
    egui::Color32::from_rgb(r, g, b)
}

fn kind_index(kind: EquilibriumKind) -> usize {
    KINDS.iter().position(|k| k.0 == kind).unwrap_or(2)
}

/// Short name of a kind as shown in tables and hover text.
pub fn kind_name(kind: EquilibriumKind) -> &'static str {
    KINDS[kind_index(kind)].1
}

/// Our energy scale: indigo → teal → olive-green → amber → brick, t in [0, 1].
pub fn energy_colour(t: f64) -> egui::Color32 {
    const STOPS: [[f32; 3]; 5] = [
        [52.0, 44.0, 140.0],
        [24.0, 128.0, 152.0],
        [120.0, 170.0, 60.0],
        [236.0, 168.0, 36.0],
        [190.0, 56.0, 44.0],
    ];
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0) as f32
    } else {
        0.0
    };
    let x = t * (STOPS.len() - 1) as f32;
    let i = (x.floor() as usize).min(STOPS.len() - 2);
    let f = x - i as f32;
    let c = |k: usize| (STOPS[i][k] + (STOPS[i + 1][k] - STOPS[i][k]) * f).round() as u8;
    egui::Color32::from_rgb(c(0), c(1), c(2))
}

/// A distinct colour per orbit (or the session's own "#rrggbb").
pub fn orbit_colour(index: usize, given: Option<&str>) -> egui::Color32 {
    if let Some(hex) = given
        && let Ok(c) = egui::Color32::from_hex(hex)
    {
        return c;
    }
    const PALETTE: [[u8; 3]; 6] = [
        [214, 40, 120],
        [20, 110, 220],
        [230, 110, 0],
        [0, 150, 90],
        [140, 60, 200],
        [90, 90, 90],
    ];
    let [r, g, b] = PALETTE[index % PALETTE.len()];
    egui::Color32::from_rgb(r, g, b)
}

fn to_points(v: &[[f64; 2]]) -> Vec<PlotPoint> {
    v.iter().map(|&[q, p]| PlotPoint::new(q, p)).collect()
}

impl Cache {
    fn build(c: &Computed, colours: &[Option<String>]) -> Cache {
        let a = &c.analysis;
        let range = a
            .curves
            .iter()
            .map(|k| k.level)
            .filter(|l| l.is_finite())
            .fold(None, |acc, l| match acc {
                None => Some((l, l)),
                Some((lo, hi)) => Some((f64::min(lo, l), f64::max(hi, l))),
            });
        let range = range.or(a.grid.range);
        let t_of = |level: f64| match range {
            Some((lo, hi)) if hi > lo => (level - lo) / (hi - lo),
            _ => 0.5,
        };
        let curves = a
            .curves
            .iter()
            .filter(|k| k.points.len() >= 2)
            .map(|k| CachedCurve {
                points: to_points(&k.points),
                colour: energy_colour(t_of(k.level)),
                separatrix: k.is_separatrix,
            })
            .collect();
        let mut marks: [Vec<PlotPoint>; 3] = Default::default();
        for e in &a.equilibria {
            marks[kind_index(e.kind)].push(PlotPoint::new(e.q, e.p));
        }
        let orbits = c
            .orbits
            .iter()
            .enumerate()
            .map(|(i, o)| {
                let points = to_points(&o.samples);
                let (arrow_from, arrow_to) = arrows_along(&points);
                CachedOrbit {
                    points,
                    arrow_from,
                    arrow_to,
                    colour: orbit_colour(i, colours.get(i).and_then(|c| c.as_deref())),
                }
            })
            .collect();
        Cache {
            generation: c.generation,
            curves,
            marks,
            orbits,
            level_range: range,
        }
    }
}

/// A few short arrows along a polyline, pointing the way it runs.
fn arrows_along(points: &[PlotPoint]) -> (Vec<PlotPoint>, Vec<PlotPoint>) {
    let n = points.len();
    if n < 3 {
        return (Vec::new(), Vec::new());
    }
    let mut from = Vec::new();
    let mut to = Vec::new();
    for k in 0..ARROWS_PER_ORBIT {
        let i = (n - 2) * (2 * k + 1) / (2 * ARROWS_PER_ORBIT);
        let j = (i + 1).min(n - 1);
        if points[i].x != points[j].x || points[i].y != points[j].y {
            from.push(points[i]);
            to.push(points[j]);
        }
    }
    (from, to)
}

/// The equilibrium nearest to (q, p) if it is near in window terms.
pub fn near_equilibrium<'e>(
    eqs: &'e [Equilibrium],
    window: &Window,
    q: f64,
    p: f64,
) -> Option<&'e Equilibrium> {
    eqs.iter()
        .map(|e| {
            (
                e,
                ((e.q - q) / window.width()).hypot((e.p - p) / window.height()),
            )
        })
        .filter(|(_, d)| *d < NEAR_FRACTION)
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(e, _)| e)
}

/// "±0.93i" / "±1.2" style eigenvalue text.
pub fn eigen_text(e: &Equilibrium) -> String {
    let [[r0, i0], [r1, i1]] = e.eigenvalues;
    match e.kind {
        EquilibriumKind::Center => format!("±{:.4}i", i0.abs().max(i1.abs())),
        EquilibriumKind::Saddle => format!("±{:.4}", r0.abs().max(r1.abs())),
        EquilibriumKind::Degenerate => format!("{r0:.3}{i0:+.3}i, {r1:.3}{i1:+.3}i"),
    }
}

/// Hover text at (q, p).
fn hover_text(sys: &System, eqs: &[Equilibrium], window: &Window, q: f64, p: f64) -> String {
    let h = sys.energy(q, p);
    let mut s = format!("q = {q:.4}   p = {p:.4}   H = {h:.5}");
    if let Some(e) = near_equilibrium(eqs, window, q, p) {
        s.push_str(&format!(
            "\nnear {} at ({:.4}, {:.4}): eigenvalues {}",
            kind_name(e.kind),
            e.q,
            e.p,
            eigen_text(e)
        ));
    }
    s
}

impl PlotPanel {
    /// Drop cached geometry (a new session).
    pub fn reset(&mut self) {
        self.cache = Cache::default();
        self.applied_view = None;
        self.pending_click = None;
    }

    /// Put the session's view into the plot on the next frame.
    pub fn reapply_view(&mut self) {
        self.applied_view = None;
    }

    /// Rebuild geometry if `computed` is newer than the cache.
    pub fn refresh(&mut self, computed: &Computed, colours: &[Option<String>]) {
        if self.cache.generation != computed.generation {
            self.cache = Cache::build(computed, colours);
        }
    }

    #[allow(clippy::too_many_arguments)]
    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        view: &Window,
        shown: Option<&Computed>,
        greyed: bool,
        selection: Selection,
        busy: bool,
        now: f64,
    ) -> Vec<Command> {
        let mut commands = Vec::new();
        ui.horizontal(|ui| {
            ui.checkbox(&mut self.launch_on_click, "Click launches an orbit")
                .on_hover_text("Off: clicks do nothing; drag pans and scroll zooms either way");
            if ui
                .button("Reset view")
                .on_hover_text("Back to the session's starting view (or double-click)")
                .clicked()
            {
                commands.push(Command::ResetView);
            }
            if busy {
                ui.add(egui::Spinner::new().size(14.0))
                    .on_hover_text("computing");
                ui.small("updating…");
            }
        });
        if greyed {
            ui.colored_label(
                ui.visuals().warn_fg_color,
                "The formula has an error: showing the last valid portrait (greyed) until it compiles.",
            );
        }

        let bar_width = 64.0;
        let avail = ui.available_size();
        let text_rows = 2.5 * ui.text_style_height(&egui::TextStyle::Body);
        let plot_w = (avail.x - bar_width).max(120.0);
        let plot_h = (avail.y - text_rows).max(120.0);
        let grey = |c: egui::Color32| {
            if greyed {
                let l = (c.r() as u16 + c.g() as u16 + c.b() as u16) / 3;
                egui::Color32::from_rgba_unmultiplied(l as u8, l as u8, l as u8, 110)
            } else {
                c
            }
        };
        let dark = ui.visuals().dark_mode;
        let select_colour = egui::Color32::from_rgb(255, 60, 200);

        let mut new_view = None;
        let mut hovered_at = None;
        let mut clicked_at = None;
        let mut set_view = None;
        if self.applied_view != Some(*view) {
            set_view = Some(*view);
            self.applied_view = Some(*view);
        }
        ui.horizontal_top(|ui| {
            let cache = &self.cache;
            let plot = Plot::new("phase-portrait")
                .width(plot_w)
                .height(plot_h)
                .allow_scroll(false)
                .allow_double_click_reset(false)
                .allow_boxed_zoom(false)
                .x_axis_label("q")
                .y_axis_label("p")
                .show_crosshair(false)
                .legend(
                    Legend::default()
                        .position(egui_plot::Corner::RightTop)
                        .background_alpha(0.7),
                )
                .label_formatter(|_| None);
            let response = plot.show(ui, |pui| {
                if let Some(w) = set_view {
                    pui.set_plot_bounds(PlotBounds::from_min_max(
                        [w.qmin, w.pmin],
                        [w.qmax, w.pmax],
                    ));
                }
                let hovered = pui.response().hovered();
                if hovered {
                    let scroll = pui.ctx().input(|i| i.smooth_scroll_delta.y);
                    if scroll != 0.0 {
                        let f = (scroll / SCROLL_ZOOM_SCALE).exp();
                        pui.zoom_bounds_around_hovered(egui::vec2(f, f));
                    }
                }
                for c in &cache.curves {
                    let (width, name) = if c.separatrix {
                        (2.6, "separatrix")
                    } else {
                        (1.1, "")
                    };
                    pui.line(
                        Line::new(name, c.points.as_slice())
                            .color(grey(c.colour))
                            .width(width)
                            .allow_hover(false),
                    );
                }
                for (i, o) in cache.orbits.iter().enumerate() {
                    let selected = selection == Selection::Orbit(i);
                    let colour = grey(o.colour);
                    pui.line(
                        Line::new(format!("orbit {}", i + 1), o.points.as_slice())
                            .color(colour)
                            .width(if selected { 3.2 } else { 1.8 })
                            .highlight(selected)
                            .allow_hover(false),
                    );
                    if !o.arrow_from.is_empty() {
                        pui.arrows(
                            Arrows::new("", o.arrow_from.as_slice(), o.arrow_to.as_slice())
                                .color(colour)
                                .tip_length(12.0)
                                .allow_hover(false),
                        );
                    }
                }
                for (k, (_, name, shape)) in KINDS.iter().enumerate() {
                    if !cache.marks[k].is_empty() {
                        pui.points(
                            Points::new(*name, cache.marks[k].as_slice())
                                .shape(*shape)
                                .radius(if k == 0 { 6.0 } else { 7.0 })
                                .filled(true)
                                .color(grey(kind_colour(k, dark)))
                                .allow_hover(false),
                        );
                    }
                }
                if let (Selection::Equilibrium(i), Some(c)) = (selection, shown)
                    && let Some(e) = c.analysis.equilibria.get(i)
                {
                    pui.points(
                        Points::new("", vec![[e.q, e.p]])
                            .shape(MarkerShape::Circle)
                            .radius(11.0)
                            .filled(false)
                            .color(select_colour)
                            .allow_hover(false),
                    );
                }
                if let (Selection::Well(i), Some(c)) = (selection, shown)
                    && let Some(w) = c.analysis.wells.get(i)
                {
                    pui.points(
                        Points::new("", vec![[w.q, w.p]])
                            .shape(MarkerShape::Square)
                            .radius(11.0)
                            .filled(false)
                            .color(select_colour)
                            .allow_hover(false),
                    );
                }
                let r = pui.response();
                let coord = pui.pointer_coordinate();
                if r.hovered() {
                    hovered_at = coord;
                }
                if r.clicked() {
                    clicked_at = coord;
                }
                (
                    r.double_clicked(),
                    r.dragged() || pui.ctx().input(|i| i.pointer.any_down()),
                )
            });
            let (double, held) = response.inner;
            let enabled = response.response.enabled();
            response
                .response
                .widget_info(|| egui::WidgetInfo::labeled(egui::Role::Canvas, enabled, PLOT_LABEL));
            let b = response.transform.bounds();
            let (mn, mx) = (b.min(), b.max());
            if set_view.is_none()
                && let Ok(w) = Window::new(mn[0], mx[0], mn[1], mx[1])
                && differs(&w, view)
            {
                new_view = Some((w, held));
            }
            if double {
                self.pending_click = None;
                commands.push(Command::ResetView);
            } else if let Some(pt) = clicked_at
                && self.launch_on_click
            {
                self.pending_click = Some((pt.x, pt.y, now));
            }
            colour_bar(ui, cache.level_range, bar_width, plot_h, greyed);
        });
        if let Some((w, held)) = new_view {
            self.applied_view = Some(w);
            commands.push(Command::SetView {
                window: w,
                dragging: held,
            });
        }
        if let Some((q, p, t)) = self.pending_click {
            if now - t > DOUBLE_CLICK_WAIT {
                self.pending_click = None;
                commands.push(Command::LaunchOrbit { q, p });
            } else {
                ui.ctx()
                    .request_repaint_after(std::time::Duration::from_secs_f64(DOUBLE_CLICK_WAIT));
            }
        }

        self.hover_text = match (hovered_at, shown) {
            (Some(pt), Some(c)) => hover_text(&c.system, &c.analysis.equilibria, view, pt.x, pt.y),
            _ => String::new(),
        };
        let mut status = self.hover_text.clone();
        if let Some(c) = shown {
            let frac = c.analysis.grid.nonfinite_fraction;
            if frac > 0.0 {
                if !status.is_empty() {
                    status.push('\n');
                }
                status.push_str(&format!(
                    "H is NaN or infinite on {:.1}% of the window; those cells are left blank.",
                    100.0 * frac
                ));
            }
        }
        ui.label(egui::RichText::new(status).monospace().small());
        commands
    }
}

/// True when two views differ by more than rounding.
fn differs(a: &Window, b: &Window) -> bool {
    let tol = 1e-9 * a.diagonal().max(b.diagonal());
    (a.qmin - b.qmin).abs() > tol
        || (a.qmax - b.qmax).abs() > tol
        || (a.pmin - b.pmin).abs() > tol
        || (a.pmax - b.pmax).abs() > tol
}

/// A vertical strip showing the energy scale of the level curves.
fn colour_bar(ui: &mut egui::Ui, range: Option<(f64, f64)>, width: f32, height: f32, greyed: bool) {
    let (rect, _) = ui.allocate_exact_size(egui::vec2(width, height), egui::Sense::hover());
    let painter = ui.painter_at(rect);
    let text_colour = ui.visuals().text_color();
    let font = egui::FontId::proportional(11.0);
    painter.text(
        rect.center_top() + egui::vec2(0.0, 2.0),
        egui::Align2::CENTER_TOP,
        "H",
        font.clone(),
        text_colour,
    );
    let Some((lo, hi)) = range else {
        return;
    };
    let bar = egui::Rect::from_min_max(
        rect.min + egui::vec2(6.0, 20.0),
        egui::pos2(rect.min.x + 20.0, rect.max.y - 20.0),
    );
    let steps = 48;
    for s in 0..steps {
        let t0 = s as f32 / steps as f32;
        let t1 = (s + 1) as f32 / steps as f32;
        let y0 = bar.max.y - t1 * bar.height();
        let y1 = bar.max.y - t0 * bar.height();
        let mut c = energy_colour(((t0 + t1) * 0.5) as f64);
        if greyed {
            c = c.gamma_multiply(0.4);
        }
        painter.rect_filled(
            egui::Rect::from_min_max(egui::pos2(bar.min.x, y0), egui::pos2(bar.max.x, y1)),
            0.0,
            c,
        );
    }
    for k in 0..=4 {
        let t = k as f64 / 4.0;
        let y = bar.max.y - t as f32 * bar.height();
        let v = lo + t * (hi - lo);
        painter.text(
            egui::pos2(bar.max.x + 3.0, y),
            egui::Align2::LEFT_CENTER,
            format_tick(v),
            font.clone(),
            text_colour,
        );
    }
}

fn format_tick(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e4 || v.abs() < 1e-2) {
        format!("{v:.1e}")
    } else {
        format!("{v:.3}")
    }
}
