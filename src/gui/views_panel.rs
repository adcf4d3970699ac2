//! The panes beside the portrait: the bifurcation diagram (equilibria against
//! a swept parameter), the fold curve in the plane of two parameters, and the
//! backbone of a center (period against energy, frequency against amplitude),
//! and for a driven session the stroboscopic section (`section.rs` in the
//! core; coarse while a slider is dragged, refined after), the Melnikov
//! function over one drive period, the safe basins of the wells (a quick
//! look on a coarse lattice while a slider is dragged, the full lattice
//! after) and, on demand, their erosion curve against the drive amplitude.
//! Their numbers come from the core (`continuation::sweep`,
//! `folds::fold_curves`, `backbone::backbone`) run on the pane lanes of
//! `worker.rs`; their figures are the scenes of `src/scene.rs` drawn through
//! the shared scene drawer. The settings they run with are edited here and
//! returned as commands, so they are undoable and saved with the session.

use crate::core::analysis::Analysis;
use crate::core::backbone::Backbone;
use crate::core::basin::Erosion;
use crate::core::continuation::Sweep;
use crate::core::equilibria::EquilibriumKind;
use crate::core::folds::FoldCurves;
use crate::core::melnikov::Melnikov;
use crate::core::system::System;
use crate::numbers::{clean, label as label_number};
use crate::render::{BasinData, SectionData, View, ViewData, section_colours};
use crate::request::{
    BackboneRequest, BasinRequest, ErosionRequest, FoldsRequest, LevelsRequest, LevelsResult,
    MelnikovRequest, Overrides, SectionRequest, SweepRequest, centers_of, range_of, undriven,
};
use crate::scene::{BackbonePlot, Scene};
use crate::session::{
    BackboneSettings, FoldSettings, Parameter, QuantumSettings, Session, SweepSettings,
};
use egui_plot::{Plot, PlotBounds};
use std::sync::{Arc, Mutex};
use std::time::Duration;

mod basin;
pub use basin::well_integrity_text;
mod diagrams;
mod drive;

use super::params_panel::accessible_name;
use super::scene_plot::{self, Look, SceneView};
use super::worker::{Lane, Progress, ViewComputed, ViewKind, ViewOutcome, ViewSpec, ViewTask};
use super::{Command, Selection};

/// Accessible names of the pane plots.
pub const DIAGRAM_LABEL: &str = "Sweep: equilibria against a parameter";
pub const FOLDS_LABEL: &str = "Fold curves";
pub const BACKBONE_LABEL: &str = "Backbone: period against energy";
pub const FREQUENCY_LABEL: &str = "Backbone: frequency against amplitude";
pub const SECTION_LABEL: &str = "Stroboscopic section";
pub const MELNIKOV_LABEL: &str = "Melnikov function";
pub const BASIN_LABEL: &str = "Safe basins over the phase plane";
pub const EROSION_LABEL: &str = "Erosion curve: integrity against the drive amplitude";

/// The session's settings of the panes, edited together.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct PaneSettings {
    pub sweep: Option<SweepSettings>,
    pub folds: Option<FoldSettings>,
    pub backbone: Option<BackboneSettings>,
    /// ħ and whether the quantized orbits are drawn on the portrait.
    pub quantum: Option<QuantumSettings>,
}

impl PaneSettings {
    pub fn of(session: &Session) -> PaneSettings {
        PaneSettings {
            sweep: session.sweep.clone(),
            folds: session.folds.clone(),
            backbone: session.backbone.clone(),
            quantum: session.quantum.clone(),
        }
    }

    /// Put these settings into `session`.
    pub fn store(self, session: &mut Session) {
        session.sweep = self.sweep;
        session.folds = self.folds;
        session.backbone = self.backbone;
        session.quantum = self.quantum;
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Tab {
    #[default]
    Diagram,
    Folds,
    Backbone,
    Section,
    Melnikov,
    Basin,
    Erosion,
}

/// What the panes read from the explorer each frame.
pub struct Inputs<'a> {
    pub system: Option<&'a System>,
    pub session: &'a Session,
    pub analysis: Option<&'a Analysis>,
    pub selection: Selection,
    /// A slider or the view is being dragged: hold new jobs until it is released.
    pub dragging: bool,
}

/// The requests the panes run, with every default settled by `crate::request`
/// (the same requests `render` and the command line build from the saved file).
#[derive(Clone, Debug, PartialEq)]
pub struct PaneRequests {
    pub sweep: Option<SweepRequest>,
    pub folds: Option<FoldsRequest>,
    pub backbone: Option<BackboneRequest>,
    /// The section and the Melnikov function of a driven session (None
    /// without a drive, or while its expressions are bad).
    pub section: Option<SectionRequest>,
    pub melnikov: Option<MelnikovRequest>,
    /// The safe basins and the erosion curve of a driven session (None
    /// without a drive, without an amplitude to vary for the curve, or
    /// while an expression is bad).
    pub basin: Option<BasinRequest>,
    pub erosion: Option<ErosionRequest>,
    /// The levels behind the quantized orbits and the levels table (none
    /// without ħ, or while its expression is bad).
    pub levels: Option<LevelsRequest>,
}

fn value_of(params: &[Parameter], name: &str) -> Option<f64> {
    params.iter().find(|p| p.name == name).map(|p| p.value)
}

/// The centers in view, in the table's order.
fn centers(analysis: Option<&Analysis>) -> Vec<[f64; 2]> {
    analysis.map_or_else(Vec::new, |a| centers_of(&a.equilibria))
}

/// The formula's parameter names in order.
fn param_names(inp: &Inputs) -> Vec<String> {
    inp.system
        .map(|s| s.formula().params().to_vec())
        .unwrap_or_default()
}

/// A drop-down choosing one of `names`; returns the choice.
fn param_choice(
    ui: &mut egui::Ui,
    id: impl std::hash::Hash + std::fmt::Debug,
    label: &str,
    current: &str,
    names: &[String],
) -> String {
    let mut chosen = current.to_string();
    let r = egui::ComboBox::from_id_salt(id)
        .selected_text(current)
        .show_ui(ui, |ui| {
            for n in names {
                ui.selectable_value(&mut chosen, n.clone(), n);
            }
        });
    accessible_name(&r.response, egui::Role::ComboBox, label);
    chosen
}

/// What the panes follow that the session does not say: the center
/// selected in the tables or on the portrait.
pub fn overrides(inp: &Inputs) -> Overrides {
    let selected_center = match (inp.selection, inp.analysis) {
        (Selection::Equilibrium(i), Some(a)) => a
            .equilibria
            .get(i)
            .filter(|e| e.kind == EquilibriumKind::Center)
            .map(|e| [e.q, e.p]),
        _ => None,
    };
    Overrides { selected_center }
}

/// The panes' requests for what the explorer shows now.
pub fn resolve(inp: &Inputs) -> PaneRequests {
    let names = param_names(inp);
    let overrides = overrides(inp);
    PaneRequests {
        sweep: SweepRequest::from_session(inp.session, &names),
        folds: FoldsRequest::from_session(inp.session, &names),
        backbone: BackboneRequest::from_session(inp.session, &centers(inp.analysis), &overrides)
            .map(|b| match inp.system {
                Some(sys) => b.with_undriven(inp.session, sys),
                None => b,
            }),
        section: SectionRequest::from_session(inp.session, &[]).ok(),
        melnikov: inp
            .system
            .and_then(|sys| MelnikovRequest::from_session(inp.session, sys).ok()),
        levels: inp.analysis.and_then(|a| {
            LevelsRequest::for_equilibria(inp.session, &a.equilibria)
                .ok()
                .flatten()
        }),
        basin: inp
            .system
            .and_then(|sys| BasinRequest::from_session(inp.session, sys).ok()),
        erosion: inp
            .system
            .and_then(|sys| ErosionRequest::from_session(inp.session, sys).ok()),
    }
}

/// A pane's figure, rebuilt when its result or the current point changes.
#[derive(Default)]
struct Figure {
    key: Option<(u64, Vec<u64>)>,
    views: Vec<SceneView>,
}

impl Figure {
    fn update(&mut self, generation: u64, extra: &[f64], build: impl FnOnce() -> Vec<Scene>) {
        let key = (generation, extra.iter().map(|v| v.to_bits()).collect());
        if self.key.as_ref() != Some(&key) {
            self.views = build().iter().map(SceneView::new).collect();
            self.key = Some(key);
        }
    }
}

/// One lane per kind of view job.
const LANES: usize = ViewKind::ALL.len();

pub struct ViewsPanel {
    pub tab: Tab,
    lanes: Vec<Lane>,
    shown: [Option<ViewComputed>; LANES],
    last_spec: [Option<ViewSpec>; LANES],
    figures: [Figure; LANES],
    /// The connection drawn heavier in the Melnikov pane.
    connection: Option<usize>,
    /// The erosion job asked for with the button (it runs only on demand).
    erosion_wanted: Option<ViewSpec>,
    /// A refused settings edit and why.
    refused: Option<String>,
}

impl ViewsPanel {
    pub fn start(repaint: Arc<Mutex<Option<egui::Context>>>) -> Result<ViewsPanel, String> {
        let lanes = ViewKind::ALL
            .iter()
            .map(|k| Lane::start(*k, repaint.clone()))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(ViewsPanel {
            tab: Tab::Diagram,
            lanes,
            shown: Default::default(),
            last_spec: Default::default(),
            figures: Default::default(),
            connection: None,
            erosion_wanted: None,
            refused: None,
        })
    }

    /// Forget every result (a new session).
    pub fn reset(&mut self) {
        self.shown = Default::default();
        self.last_spec = Default::default();
        self.figures = Default::default();
        self.erosion_wanted = None;
        self.refused = None;
        for l in &self.lanes {
            l.cancel();
        }
    }

    fn lane(&self, kind: ViewKind) -> &Lane {
        &self.lanes[kind.index()]
    }

    /// Take finished jobs; results older than the newest job are dropped.
    pub fn poll(&mut self) {
        for k in ViewKind::ALL {
            let got = self.lane(k).poll();
            self.accept(got);
        }
    }

    fn accept(&mut self, got: Vec<ViewComputed>) {
        for c in got {
            let i = c.kind.index();
            if c.generation == self.lanes[i].latest_generation() {
                self.shown[i] = Some(c);
            }
        }
    }

    /// Block until every lane has answered its newest job (tests only).
    pub fn wait(&mut self, timeout: Duration) -> bool {
        let mut all = true;
        for k in ViewKind::ALL {
            let i = k.index();
            let target = self.lanes[i].latest_generation();
            if target == 0
                || self.shown[i]
                    .as_ref()
                    .is_some_and(|c| c.generation >= target)
            {
                continue;
            }
            let got = self.lanes[i].wait_for(target, timeout);
            self.accept(got);
            all &= self.shown[i]
                .as_ref()
                .is_some_and(|c| c.generation >= target);
        }
        all
    }

    /// True while some pane's newest job has not answered.
    pub fn busy(&self) -> bool {
        ViewKind::ALL.iter().any(|&k| self.pending(k))
    }

    fn pending(&self, k: ViewKind) -> bool {
        let i = k.index();
        let target = self.lanes[i].latest_generation();
        target > 0 && self.shown[i].as_ref().is_none_or(|c| c.generation < target)
    }

    /// The data range of the diagram as drawn: [xmin, xmax, ymin, ymax].
    pub fn diagram_bounds(&self) -> Option<[f64; 4]> {
        self.figures[0].views.first().map(|v| v.bounds)
    }

    /// The sweep shown in the diagram pane.
    pub fn sweep(&self) -> Option<&Sweep> {
        match self.outcome(ViewKind::Diagram) {
            Some(ViewOutcome::Sweep(Ok(s))) => Some(s),
            _ => None,
        }
    }

    /// The fold curves shown in the fold pane.
    pub fn folds(&self) -> Option<&FoldCurves> {
        match self.outcome(ViewKind::Folds) {
            Some(ViewOutcome::Folds(Ok(f))) => Some(f),
            _ => None,
        }
    }

    /// The backbone shown in the backbone pane.
    pub fn backbone(&self) -> Option<&Backbone> {
        match self.outcome(ViewKind::Backbone) {
            Some(ViewOutcome::Backbone(Ok(b))) => Some(b),
            _ => None,
        }
    }

    /// The section shown in the section pane.
    pub fn section(&self) -> Option<&SectionData> {
        match self.outcome(ViewKind::Section) {
            Some(ViewOutcome::Section(Ok(d))) => Some(d),
            _ => None,
        }
    }

    /// What the pane of `kind` shows now, if anything.
    fn outcome(&self, kind: ViewKind) -> Option<&ViewOutcome> {
        self.shown[kind.index()]
            .as_ref()
            .map(|c| c.outcome.as_ref())
    }

    /// The newest levels (quantized orbits and table) with their generation.
    pub fn levels(&self) -> Option<(u64, &LevelsResult)> {
        let c = self.shown[ViewKind::Levels.index()].as_ref()?;
        match c.outcome.as_ref() {
            ViewOutcome::Levels(l) => Some((c.generation, l)),
            _ => None,
        }
    }

    /// The Melnikov function shown in its pane (computed whenever the
    /// session has a drive, for the threshold on the amplitude slider).
    pub fn melnikov(&self) -> Option<&Melnikov> {
        match self.outcome(ViewKind::Melnikov) {
            Some(ViewOutcome::Melnikov(Ok(m))) => Some(m),
            _ => None,
        }
    }

    /// The safe basins shown in the basin pane (full or the quick look).
    pub fn basin(&self) -> Option<&BasinData> {
        match self.outcome(ViewKind::Basin) {
            Some(ViewOutcome::Basin(Ok(d))) => Some(d),
            _ => None,
        }
    }

    /// The erosion curve shown in the erosion pane.
    pub fn erosion(&self) -> Option<&Erosion> {
        match self.outcome(ViewKind::Erosion) {
            Some(ViewOutcome::Erosion(Ok(e))) => Some(e),
            _ => None,
        }
    }

    /// What a pane shows of `view` when it is complete and made for the
    /// session as it is now (the full lattice, not cancelled): an export
    /// writes it as it is instead of computing it again. Only the basin
    /// and erosion views, whose computation is long, are offered.
    pub fn shown_data(&self, inp: &Inputs, view: View) -> Option<ViewData> {
        let sys = inp.system?;
        let r = resolve(inp);
        let (kind, spec) = match view {
            View::Basin => (
                ViewKind::Basin,
                Self::spec_of(inp, sys, ViewTask::Basin(r.basin?), &[]),
            ),
            View::Erosion => (ViewKind::Erosion, Self::erosion_spec(inp, sys, &r.erosion?)),
            _ => return None,
        };
        let c = self.shown[kind.index()].as_ref()?;
        if c.spec != spec || c.outcome.cancelled() {
            return None;
        }
        match c.outcome.as_ref() {
            ViewOutcome::Basin(Ok(d)) => Some(ViewData::Basin(d.clone())),
            ViewOutcome::Erosion(Ok(e)) => Some(ViewData::Erosion(e.clone())),
            _ => None,
        }
    }

    /// The job of `task` for what is shown now, with the parameters in
    /// `fixed` set to the given values (so that moving them does not rerun it).
    fn spec_of(inp: &Inputs, sys: &System, task: ViewTask, fixed: &[(&str, f64)]) -> ViewSpec {
        let mut params = sys.params().to_vec();
        for (name, v) in fixed {
            if let Some(k) = sys.formula().param_index(name) {
                params[k] = *v;
            }
        }
        ViewSpec {
            source: sys.formula().source().to_string(),
            params,
            window: inp.session.view,
            task,
        }
    }

    /// The erosion job for `req`: the amplitude it varies is fixed, so the
    /// slider's present value only moves the guide on the curve.
    fn erosion_spec(inp: &Inputs, sys: &System, req: &ErosionRequest) -> ViewSpec {
        let fixed = [(req.amplitude.as_str(), req.from)];
        Self::spec_of(inp, sys, ViewTask::Erosion(req.clone()), &fixed)
    }

    /// The basin job for what is shown now: the quick look while a slider
    /// or the view is dragged, the full lattice otherwise.
    fn basin_spec(inp: &Inputs, sys: &System, req: &BasinRequest) -> ViewSpec {
        let request = if inp.dragging {
            req.preview()
        } else {
            req.clone()
        };
        Self::spec_of(inp, sys, ViewTask::Basin(request), &[])
    }

    /// The section job for what is shown now: the request (coarse while a
    /// slider or the view is dragged), H₀'s parameter and the starts' colours.
    fn section_task(inp: &Inputs, sys: &System, req: &SectionRequest) -> ViewTask {
        let request = if inp.dragging {
            req.coarse()
        } else {
            req.clone()
        };
        ViewTask::Section {
            colours: section_colours(inp.session, &request),
            undriven: undriven(inp.session, sys)
                .ok()
                .flatten()
                .map(|(name, _)| (name, inp.session.analysis_config())),
            request,
        }
    }

    /// Start the levels job when its request changed: also while a slider
    /// or the view is dragged when the quantized orbits are on the portrait
    /// (they follow the drag; the job takes a millisecond or two).
    fn submit_levels_if_changed(&mut self, inp: &Inputs, sys: &System) {
        // While dragging, one levels job at a time: the newest values wait
        // for the running job instead of cancelling it every frame.
        if inp.dragging && (!inp.session.levels_on_portrait() || self.pending(ViewKind::Levels)) {
            return;
        }
        let i = ViewKind::Levels.index();
        let Some(req) = resolve(inp).levels else {
            // No ħ, a bad one, or nothing analysed yet: show no levels.
            self.lanes[i].cancel();
            self.shown[i] = None;
            self.last_spec[i] = None;
            return;
        };
        let spec = ViewSpec {
            source: sys.formula().source().to_string(),
            params: sys.params().to_vec(),
            window: inp.session.view,
            task: ViewTask::Levels(req),
        };
        if self.last_spec[i].as_ref() == Some(&spec) {
            return;
        }
        self.last_spec[i] = Some(spec.clone());
        self.lanes[i].submit(spec, sys.clone());
    }

    /// Start the jobs whose inputs changed: the diagram always (its
    /// bifurcations are announced on the portrait), the Melnikov function
    /// whenever there is a drive (its threshold marks the amplitude
    /// slider), the others while their tab is open. While a slider or the
    /// view is dragged only the open section runs, coarse.
    pub fn submit_if_changed(&mut self, inp: &Inputs) {
        let Some(sys) = inp.system else {
            return;
        };
        self.submit_levels_if_changed(inp, sys);
        let r = resolve(inp);
        if inp.dragging {
            if self.tab == Tab::Section
                && let Some(req) = &r.section
            {
                let spec = ViewSpec {
                    source: sys.formula().source().to_string(),
                    params: sys.params().to_vec(),
                    window: inp.session.view,
                    task: Self::section_task(inp, sys, req),
                };
                self.submit(ViewKind::Section, spec, sys);
            }
            if self.tab == Tab::Basin
                && let Some(req) = &r.basin
            {
                self.submit(ViewKind::Basin, Self::basin_spec(inp, sys, req), sys);
            }
            return;
        }
        let base = |task: ViewTask, fixed: &[(&str, f64)]| Self::spec_of(inp, sys, task, fixed);
        let mut wanted: Vec<(ViewKind, ViewSpec)> = Vec::new();
        if let Some(sw) = &r.sweep {
            let fixed = [(sw.param.as_str(), sw.from)];
            wanted.push((ViewKind::Diagram, base(ViewTask::Sweep(sw.clone()), &fixed)));
        }
        if self.tab == Tab::Folds
            && let Some(f) = &r.folds
        {
            let fixed = [
                (f.params[0].as_str(), f.bounds[0]),
                (f.params[1].as_str(), f.bounds[2]),
            ];
            wanted.push((ViewKind::Folds, base(ViewTask::Folds(f.clone()), &fixed)));
        }
        if self.tab == Tab::Backbone
            && let Some(b) = &r.backbone
        {
            wanted.push((ViewKind::Backbone, base(ViewTask::Backbone(b.clone()), &[])));
        }
        if self.tab == Tab::Section
            && let Some(req) = &r.section
        {
            let task = Self::section_task(inp, sys, req);
            wanted.push((ViewKind::Section, base(task, &[])));
        }
        if let Some(m) = &r.melnikov {
            wanted.push((ViewKind::Melnikov, base(ViewTask::Melnikov(m.clone()), &[])));
        }
        if self.tab == Tab::Basin
            && let Some(req) = &r.basin
        {
            wanted.push((ViewKind::Basin, Self::basin_spec(inp, sys, req)));
        }
        // the erosion curve only when asked for (it is long)
        if let Some(spec) = &self.erosion_wanted {
            wanted.push((ViewKind::Erosion, spec.clone()));
        }
        for (kind, spec) in wanted {
            self.submit(kind, spec, sys);
        }
    }

    /// Send `spec` to its lane unless it is the job sent last.
    fn submit(&mut self, kind: ViewKind, spec: ViewSpec, sys: &System) {
        let i = kind.index();
        if self.last_spec[i].as_ref() == Some(&spec) {
            return;
        }
        let Ok(system) = System::new(sys.formula_arc().clone(), spec.params.clone()) else {
            return;
        };
        self.last_spec[i] = Some(spec.clone());
        self.lanes[i].submit(spec, system);
    }

    /// The bifurcation of the shown sweep that a move of `name` from `old` to
    /// `new` crosses (the one nearest `new`), as "saddle-node at mu = 0.2565".
    pub fn crossing(&self, name: &str, old: f64, new: f64) -> Option<String> {
        let c = self.shown[0].as_ref()?;
        if self.last_spec[0].as_ref() != Some(&c.spec) {
            return None;
        }
        let sweep = self.sweep()?;
        if sweep.param != name || old == new {
            return None;
        }
        let (lo, hi) = if old < new { (old, new) } else { (new, old) };
        sweep
            .bifurcations
            .iter()
            .filter(|b| b.param > lo && b.param <= hi || b.param >= lo && b.param < hi)
            .min_by(|a, b| (a.param - new).abs().total_cmp(&(b.param - new).abs()))
            .map(|b| format!("{} at {name} = {:.4}", b.kind.name(), b.param))
    }

    pub fn ui(&mut self, ui: &mut egui::Ui, inp: &Inputs) -> Vec<Command> {
        let mut commands = Vec::new();
        ui.horizontal(|ui| {
            ui.selectable_value(&mut self.tab, Tab::Diagram, "Sweep");
            ui.selectable_value(&mut self.tab, Tab::Folds, "Fold curves");
            ui.selectable_value(&mut self.tab, Tab::Backbone, "Backbone");
            ui.selectable_value(&mut self.tab, Tab::Section, "Section");
            ui.selectable_value(&mut self.tab, Tab::Melnikov, "Melnikov");
            ui.selectable_value(&mut self.tab, Tab::Basin, "Safe basin");
            ui.selectable_value(&mut self.tab, Tab::Erosion, "Erosion");
        });
        ui.separator();
        let r = resolve(inp);
        let look = Look {
            dark: ui.visuals().dark_mode,
            greyed: false,
            emphasised: None,
        };
        if inp.system.is_none() {
            ui.label("The formula does not compile; the panes wait for a valid one.");
            return commands;
        }
        match self.tab {
            Tab::Diagram => self.diagram_ui(ui, inp, &r, &look, &mut commands),
            Tab::Folds => self.folds_ui(ui, inp, &r, &look, &mut commands),
            Tab::Backbone => self.backbone_ui(ui, inp, &r, &look, &mut commands),
            Tab::Section => self.section_ui(ui, inp, &r, &look, &mut commands),
            Tab::Melnikov => self.melnikov_ui(ui, inp, &r, &look),
            Tab::Basin => self.basin_ui(ui, inp, &r, &look),
            Tab::Erosion => self.erosion_ui(ui, inp, &r, &look),
        }
        if let Some(msg) = &self.refused {
            ui.colored_label(ui.visuals().error_fg_color, msg);
        }
        if self.busy() {
            ui.ctx().request_repaint_after(Duration::from_millis(100));
        }
        commands
    }

    /// Progress and cancel while a job runs; what went wrong or was stopped otherwise.
    fn status_row(&mut self, ui: &mut egui::Ui, kind: ViewKind) {
        let i = kind.index();
        if self.pending(kind) {
            let p: Progress = self.lanes[i].progress();
            ui.horizontal(|ui| {
                let fraction = if p.total > 0 {
                    p.done as f32 / p.total as f32
                } else {
                    0.0
                };
                ui.add(
                    egui::ProgressBar::new(fraction)
                        .desired_width((ui.available_width() - 80.0).max(60.0))
                        .text(if p.note.is_empty() {
                            "starting…".to_string()
                        } else {
                            p.note.clone()
                        })
                        .animate(true),
                );
                if ui.button("Cancel").clicked() {
                    self.lanes[i].cancel();
                }
            });
        }
        if let Some(c) = &self.shown[i] {
            if !self.pending(kind) {
                ui.small(format!("computed in {:.0} ms", c.ms));
            }
            if let Some(e) = c.outcome.error() {
                ui.colored_label(ui.visuals().error_fg_color, e);
            } else if c.outcome.cancelled() {
                ui.horizontal(|ui| {
                    ui.colored_label(
                        ui.visuals().warn_fg_color,
                        "Stopped early: showing the part found so far.",
                    );
                    if ui.button("Run again").clicked() {
                        self.last_spec[i] = None;
                    }
                });
            }
        }
    }
}

/// One pane plot of `view` at fixed bounds (no pan or zoom, so a click is a
/// click); returns the x coordinate of a click.
fn pane_plot(
    ui: &mut egui::Ui,
    id: &str,
    label: &str,
    view: &SceneView,
    look: &Look,
    height: f32,
) -> Option<f64> {
    pane_plot_at(ui, id, label, view, look, height).map(|p| p[0])
}

/// [`pane_plot`] returning both coordinates of a click.
fn pane_plot_at(
    ui: &mut egui::Ui,
    id: &str,
    label: &str,
    view: &SceneView,
    look: &Look,
    height: f32,
) -> Option<[f64; 2]> {
    let [x0, x1, y0, y1] = view.bounds;
    let mut clicked = None;
    let mut hovered = None;
    let response = Plot::new(id)
        .height(height)
        .width(ui.available_width())
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .allow_boxed_zoom(false)
        .allow_double_click_reset(false)
        .show_crosshair(false)
        .x_axis_label(view.x_label.clone())
        .y_axis_label(view.y_label.clone())
        .label_formatter(|_| None)
        .show(ui, |pui| {
            if x1 > x0 && y1 > y0 {
                pui.set_plot_bounds(PlotBounds::from_min_max([x0, y0], [x1, y1]));
            }
            view.draw(pui, look);
            let r = pui.response();
            let at = pui.pointer_coordinate();
            if r.hovered() {
                hovered = at;
            }
            if r.clicked() {
                clicked = at.map(|p| [p.x, p.y]);
            }
        });
    let enabled = response.response.enabled();
    let name = label.to_string();
    response
        .response
        .widget_info(|| egui::WidgetInfo::labeled(egui::Role::Canvas, enabled, name.clone()));
    scene_plot::legend(ui, response.response.rect, &view.legend, look);
    let readout = hovered.map_or(String::new(), |p| {
        format!(
            "{} = {:.5}   {} = {:.5}",
            view.x_label, p.x, view.y_label, p.y
        )
    });
    ui.label(egui::RichText::new(readout).monospace().small());
    clicked
}
