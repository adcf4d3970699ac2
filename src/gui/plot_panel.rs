//! The phase portrait: the portrait scene of `src/scene.rs` (level curves
//! coloured by energy with its colour scale, separatrices heavier, equilibria
//! marked by kind with their marker shapes, orbits with direction arrows)
//! drawn through the shared scene drawer. Converted geometry is cached per
//! result generation; a frame only hands borrowed slices to the plot. The
//! panel adds the interactions: hover read-out, click to launch an orbit, pan,
//! zoom, reset, the selected row highlighted. Over the portrait, when the
//! session has ħ and asks for them, the quantized orbits of the levels lane
//! (`Scene::quantized_orbits`), with their on/off switch above the plot.

use crate::core::equilibria::{Equilibrium, EquilibriumKind};
use crate::core::system::System;
use crate::core::window::Window;
use crate::request::LevelsResult;
use crate::scene::{LegendEntry, Rgb, Scene};
use egui_plot::{MarkerShape, Plot, PlotBounds, Points};

use super::scene_plot::{self, Look, SceneView};
use super::worker::Computed;
use super::{Command, Selection};

pub use crate::scene::kind_name;

/// Accessible name of the plot area.
pub const PLOT_LABEL: &str = "Phase portrait";
/// A click becomes an orbit launch when no second click follows within this (seconds).
const DOUBLE_CLICK_WAIT: f64 = 0.32;
/// Pointer within this fraction of the window of an equilibrium counts as "near".
const NEAR_FRACTION: f64 = 0.025;
/// Scroll distance (points) that zooms by a factor e.
const SCROLL_ZOOM_SCALE: f32 = 200.0;

/// Plot geometry converted from one result.
#[derive(Default)]
struct Cache {
    generation: u64,
    scene: SceneView,
    /// Index into the scene's curves of each orbit (None: too short to draw).
    orbit_curves: Vec<Option<usize>>,
}

/// The quantized orbits converted from one levels result in one view.
#[derive(Default)]
struct Overlay {
    key: Option<(u64, Window)>,
    scene: SceneView,
}

pub struct PlotPanel {
    cache: Cache,
    overlay: Overlay,
    /// The quantized orbits' switch: None when the session sets no ħ, else
    /// whether they are drawn (the session's `quantum.on_portrait`).
    pub levels_on: Option<bool>,
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
            overlay: Overlay::default(),
            levels_on: None,
            applied_view: None,
            pending_click: None,
            launch_on_click: true,
            hover_text: String::new(),
        }
    }
}

/// The portrait of a result as a scene: the figure builder's level curves,
/// separatrices and equilibria, then the orbits in the session's colours.
fn portrait_scene(c: &Computed, colours: &[Option<String>]) -> (Scene, Vec<Option<usize>>) {
    let mut scene = Scene::portrait(&c.system, &c.analysis);
    let mut orbit_curves = Vec::with_capacity(c.orbits.len());
    for (i, o) in c.orbits.iter().enumerate() {
        let before = scene.curves.len();
        let colour = colours
            .get(i)
            .and_then(|c| c.as_deref())
            .and_then(Rgb::parse_hex);
        scene.add_orbit(&o.samples, colour);
        orbit_curves.push((scene.curves.len() > before).then_some(before));
    }
    (scene, orbit_curves)
}

impl Cache {
    fn build(c: &Computed, colours: &[Option<String>]) -> Cache {
        let (scene, orbit_curves) = portrait_scene(c, colours);
        // Curves with fewer than two points are dropped by the view; keep indices aligned.
        let kept: Vec<usize> = scene
            .curves
            .iter()
            .enumerate()
            .filter(|(_, k)| k.points.len() >= 2)
            .map(|(i, _)| i)
            .collect();
        let orbit_curves = orbit_curves
            .into_iter()
            .map(|o| o.and_then(|i| kept.iter().position(|&k| k == i)))
            .collect();
        Cache {
            generation: c.generation,
            scene: SceneView::new(&scene),
            orbit_curves,
        }
    }
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
        self.overlay = Overlay::default();
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

    /// Rebuild the quantized orbits if `levels` (with its generation) or
    /// the view is newer than what is converted.
    pub fn refresh_levels(&mut self, levels: Option<(u64, &LevelsResult)>, view: &Window) {
        let Some((generation, l)) = levels else {
            self.overlay = Overlay::default();
            return;
        };
        let key = Some((generation, *view));
        if self.overlay.key != key {
            self.overlay = Overlay {
                key,
                scene: SceneView::new(&Scene::quantized_orbits(view, &l.wells, l.hbar)),
            };
        }
    }

    /// True when the quantized orbits are drawn now.
    fn overlay_shown(&self) -> bool {
        self.levels_on == Some(true) && self.overlay.key.is_some()
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
        note: Option<(&str, f32)>,
    ) -> Vec<Command> {
        let mut commands = Vec::new();
        ui.horizontal(|ui| {
            ui.checkbox(&mut self.launch_on_click, "Click launches an orbit")
                .on_hover_text("Off: clicks do nothing; drag pans and scroll zooms either way");
            if ui
                .button("Reset window")
                .on_hover_text("Back to the session's starting window (or double-click)")
                .clicked()
            {
                commands.push(Command::ResetView);
            }
            if let Some(on) = self.levels_on {
                let mut show = on;
                if ui
                    .checkbox(&mut show, "Levels")
                    .on_hover_text(
                        "Draw each well's quantized orbits: the level curves at the \
                         Bohr–Sommerfeld energies E(n), labelled n = 0, 1, … (saved with the session)",
                    )
                    .changed()
                {
                    commands.push(Command::ShowLevels(show));
                }
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
        let look = Look {
            dark: ui.visuals().dark_mode,
            greyed,
            emphasised: match selection {
                Selection::Orbit(i) => self.cache.orbit_curves.get(i).copied().flatten(),
                _ => None,
            },
        };
        let select_colour = {
            let c = crate::scene::SELECTION_COLOUR;
            egui::Color32::from_rgb(c.0, c.1, c.2)
        };

        let mut new_view = None;
        let mut hovered_at = None;
        let mut clicked_at = None;
        let mut set_view = None;
        if self.applied_view != Some(*view) {
            set_view = Some(*view);
            self.applied_view = Some(*view);
        }
        let mut plot_rect = None;
        let overlay = self.overlay_shown().then_some(&self.overlay.scene);
        let legend: Vec<LegendEntry> = match overlay {
            Some(o) => self
                .cache
                .scene
                .legend
                .iter()
                .chain(&o.legend)
                .cloned()
                .collect(),
            None => Vec::new(),
        };
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
                cache.scene.draw(pui, &look);
                if let Some(o) = overlay {
                    o.draw(
                        pui,
                        &Look {
                            emphasised: None,
                            ..look
                        },
                    );
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
            let legend = if overlay.is_some() {
                &legend
            } else {
                &cache.scene.legend
            };
            scene_plot::legend(ui, response.response.rect, legend, &look);
            plot_rect = Some(response.response.rect);
            scene_plot::colour_bar(
                ui,
                cache.scene.colour_scale.as_ref(),
                bar_width,
                plot_h,
                &look,
            );
        });
        if let (Some((text, alpha)), Some(rect)) = (note, plot_rect) {
            announce(ui.ctx(), rect, text, alpha);
        }
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
                    "H is undefined, infinite or jumps (a pole) on {:.1}% of the window; those cells are left blank.",
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

/// A short notice at the top of the plot (a bifurcation the slider just
/// crossed), at opacity `alpha` as it fades. Drawn in its own layer so the
/// layout under it does not move.
fn announce(ctx: &egui::Context, plot_rect: egui::Rect, text: &str, alpha: f32) {
    egui::Area::new(egui::Id::unique("portrait-announcement"))
        .fixed_pos(plot_rect.left_top() + egui::vec2(12.0, 12.0))
        .order(egui::Order::Foreground)
        .interactable(false)
        .show(ctx, |ui| {
            let visuals = ui.visuals().clone();
            egui::Frame::new()
                .fill(visuals.extreme_bg_color.gamma_multiply(0.92 * alpha))
                .stroke(egui::Stroke::new(
                    1.5,
                    visuals.selection.stroke.color.gamma_multiply(alpha),
                ))
                .corner_radius(4.0)
                .inner_margin(egui::Margin::symmetric(10, 6))
                .show(ui, |ui| {
                    ui.label(
                        egui::RichText::new(text)
                            .size(15.0)
                            .strong()
                            .color(visuals.strong_text_color().gamma_multiply(alpha)),
                    );
                });
        });
}
