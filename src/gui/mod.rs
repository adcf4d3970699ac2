//! The desktop explorer (eframe/egui). Thin: it shows core results and turns
//! user actions into session edits; it computes no physics itself.
//!
//! [`Explorer`] holds the [`Document`] (the session, the only thing saved,
//! with its file, history and recovery copy), the jobs (`jobs.rs`: worker,
//! shown result, exports), the chrome (`chrome.rs`: dialogs, status, theme,
//! title, frame log) and the panels. Each panel is one file with a `ui`
//! function that returns [`Command`]s; the explorer applies them at the end
//! of the frame (`apply.rs`, by kind of edit).

mod apply;
mod chrome;
mod dialogs;
mod document;
pub mod files;
mod formula_panel;
mod history;
mod jobs;
mod menu_bar;
pub mod orbits;
mod params_panel;
mod plot_panel;
mod scene_plot;
mod tables_panel;
mod views_panel;
mod worker;

use crate::core::formula::Formula;
use crate::core::system::System;
use crate::core::window::Window;
use crate::render;
use crate::session::{SeededOrbit, Session};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

pub use dialogs::CAUTION;
pub use document::Document;
pub use files::{DATA_DIR_ENV, EXAMPLES, NO_NATIVE_DIALOG_ENV};
pub use formula_panel::EDITOR_LABEL;
pub use params_panel::HBAR_LABEL;
pub use plot_panel::PLOT_LABEL;
pub use tables_panel::{equilibrium_rows, level_rows, orbit_row, well_levels_summary, well_rows};
pub use views_panel::{
    BACKBONE_LABEL, BASIN_LABEL, DIAGRAM_LABEL, EROSION_LABEL, FOLDS_LABEL, FREQUENCY_LABEL,
    MELNIKOV_LABEL, PaneRequests, PaneSettings, SECTION_LABEL, well_integrity_text,
};

use chrome::{ANNOUNCE_HOLD_SECONDS, Chrome};
use dialogs::Modal;
use jobs::Jobs;
use worker::{Computed, Worker};

/// Environment variable naming a file that receives one line per frame
/// (UI time and time since the previous frame, in milliseconds).
pub const FRAME_LOG_ENV: &str = "PHASEWRIGHT_FRAME_LOG";
/// Grid points per side while a slider or the view is being dragged.
pub const COARSE_GRID: usize = 128;

/// What is selected in the tables (and highlighted in the plot).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Selection {
    #[default]
    None,
    Equilibrium(usize),
    Well(usize),
    Orbit(usize),
}

/// Actions that would lose unsaved changes; asked about first.
#[derive(Clone, Debug, PartialEq)]
pub enum Guarded {
    New,
    OpenDialog,
    OpenPrompt,
    OpenPath(PathBuf),
    OpenExample(usize),
    Builtin,
    Quit,
}

impl Guarded {
    pub(crate) fn verb(&self) -> &'static str {
        match self {
            Guarded::New => "Start a new session",
            Guarded::Quit => "Quit",
            _ => "Open another session",
        }
    }
}

/// What a panel asks the explorer to do.
#[must_use]
#[derive(Clone, Debug)]
pub enum Command {
    FormulaEdited {
        text: String,
        formula: Arc<Formula>,
    },
    SetParam {
        name: String,
        value: f64,
        dragging: bool,
    },
    SetRange {
        name: String,
        min: f64,
        max: f64,
        step: Option<f64>,
    },
    SetView {
        window: Window,
        dragging: bool,
    },
    /// A slider is held (coarse grid until it is released).
    Dragging,
    ResetView,
    LaunchOrbit {
        q: f64,
        p: f64,
    },
    DeleteOrbit(usize),
    EditOrbit {
        index: usize,
        orbit: SeededOrbit,
        dragging: bool,
    },
    Select(Selection),
    /// Draw the quantized orbits on the portrait or not (`quantum.on_portrait`).
    ShowLevels(bool),
    /// New settings of the diagram panes (sweep, fold box, backbone center).
    SetPanes {
        settings: PaneSettings,
        dragging: bool,
    },
    /// A new drive section (None removes it); `typing` coalesces a burst of keys.
    SetDrive {
        drive: Option<crate::session::DriveSettings>,
        typing: bool,
    },
    Guarded(Guarded),
    Confirmed(Guarded),
    OpenFile(PathBuf),
    Save,
    SaveAs,
    SavePrompt,
    SaveTo(PathBuf),
    /// Save over a shipped example: the user said yes.
    OverwriteExample(PathBuf),
    /// Export a view as a figure or table: ask where.
    Export(render::View, render::ExportFormat),
    /// Export a view to this file (off the UI thread).
    ExportTo(render::View, render::ExportFormat, PathBuf),
    Undo,
    Redo,
    SetDark(bool),
    ShowAbout,
    RestoreRecovery,
    DiscardRecovery,
}

/// What the diagram panes read this frame (a macro so that the borrow of
/// these fields stays apart from the borrow of the panes themselves).
macro_rules! pane_inputs {
    ($ex:expr, $system:expr) => {
        views_panel::Inputs {
            system: $system,
            session: &$ex.doc.session,
            analysis: $ex.jobs.shown.as_ref().map(|c| c.analysis.as_ref()),
            selection: $ex.selection,
            dragging: $ex.jobs.dragging,
        }
    };
}

/// The explorer's whole state: the document (what is saved, and its file),
/// the jobs computing what is shown, the chrome around them (dialogs, status,
/// theme, title), and the panels.
pub struct Explorer {
    /// The session, its file, unsaved mark, history and recovery copy.
    pub doc: Document,
    jobs: Jobs,
    chrome: Chrome,
    formula: formula_panel::FormulaPanel,
    params: params_panel::ParamsPanel,
    plot: plot_panel::PlotPanel,
    tables: tables_panel::TablesPanel,
    views: views_panel::ViewsPanel,
    pub selection: Selection,
    /// The frame's time (s), from egui's clock.
    now: f64,
}

impl Explorer {
    /// An explorer showing `session`; `data_dir` holds the recovery file and
    /// recent files (None: neither is kept).
    pub fn new(
        session: Session,
        file: Option<PathBuf>,
        data_dir: Option<PathBuf>,
    ) -> Result<Explorer, String> {
        let worker = Worker::start()?;
        let views = views_panel::ViewsPanel::start(worker.repaint_slot())?;
        let doc = Document::new(session, file, data_dir);
        let offer = doc
            .data
            .as_ref()
            .is_some_and(|d| d.pending_recovery().is_some());
        let mut ex = Explorer {
            formula: formula_panel::FormulaPanel::new(&doc.session.formula),
            doc,
            jobs: Jobs::new(worker),
            chrome: Chrome::new(offer),
            params: params_panel::ParamsPanel::default(),
            plot: plot_panel::PlotPanel::default(),
            tables: tables_panel::TablesPanel::default(),
            views,
            selection: Selection::None,
            now: 0.0,
        };
        ex.adopt_formula();
        Ok(ex)
    }

    /// The explorer as the program starts it: `initial` file or the first example,
    /// data directory from the environment.
    pub fn startup(initial: Option<PathBuf>) -> Result<Explorer, String> {
        let (session, file) = match initial {
            Some(path) => {
                let (s, _warnings) = files::load_session(&path)?;
                (s, Some(path))
            }
            None => (files::startup_session(), None),
        };
        Explorer::new(session, file, files::default_data_dir())
    }

    // ----- read-only views used by tests and the benchmark -----

    /// The requests behind the panes for what is shown now (the diagram, fold
    /// and backbone panes run these when open; `render` builds the same ones
    /// from the saved file).
    pub fn pane_requests(&self) -> views_panel::PaneRequests {
        let system = self.system();
        views_panel::resolve(&pane_inputs!(self, system.as_ref()))
    }

    /// What the panes follow beyond the session (the selected center); an
    /// export passes it on so that it makes what the pane shows.
    fn pane_overrides(&self) -> crate::request::Overrides {
        let system = self.system();
        views_panel::overrides(&pane_inputs!(self, system.as_ref()))
    }

    /// What a pane computed already of `view` for the session as it is
    /// (basin and erosion only); an export writes it instead of computing
    /// it again.
    fn shown_data(&self, view: render::View) -> Option<render::ViewData> {
        let system = self.system();
        self.views
            .shown_data(&pane_inputs!(self, system.as_ref()), view)
    }

    /// The last message in the status line.
    pub fn status(&self) -> &str {
        &self.chrome.status
    }

    /// The formula text in the editor (may differ from the session's while it does not compile).
    pub fn editor_text(&self) -> &str {
        &self.formula.text
    }

    /// Why the editor text does not compile.
    pub fn formula_error(&self) -> Option<String> {
        self.formula.error.as_ref().map(|e| e.to_string())
    }

    /// The analysis shown now.
    pub fn analysis(&self) -> Option<&crate::core::analysis::Analysis> {
        self.jobs.shown.as_ref().map(|c| c.analysis.as_ref())
    }

    /// The orbit results shown now (aligned with `session.orbits` when current).
    pub fn orbit_outcomes(&self) -> Vec<Option<Arc<orbits::OrbitOutcome>>> {
        self.aligned_outcomes()
    }

    /// The modal window open now, by name (for tests).
    pub fn modal_name(&self) -> &'static str {
        self.chrome.modal_name()
    }

    /// The window title the explorer asks for.
    pub fn title(&self) -> String {
        self.doc.title()
    }

    /// True while a job newer than the shown result is outstanding (portrait or panes).
    pub fn busy(&self) -> bool {
        self.portrait_busy() || self.views.busy()
    }

    fn portrait_busy(&self) -> bool {
        self.jobs.portrait_busy()
    }

    /// The sweep the diagram pane shows.
    pub fn sweep(&self) -> Option<&crate::core::continuation::Sweep> {
        self.views.sweep()
    }

    /// The data range of the diagram as drawn, [xmin, xmax, ymin, ymax] (tests).
    pub fn diagram_bounds(&self) -> Option<[f64; 4]> {
        self.views.diagram_bounds()
    }

    /// The fold curves the fold pane shows.
    pub fn folds(&self) -> Option<&crate::core::folds::FoldCurves> {
        self.views.folds()
    }

    /// The backbone the backbone pane shows.
    pub fn backbone(&self) -> Option<&crate::core::backbone::Backbone> {
        self.views.backbone()
    }

    /// The levels behind the quantized orbits and the levels table.
    pub fn levels(&self) -> Option<&crate::request::LevelsResult> {
        self.views.levels().map(|(_, l)| l)
    }

    /// The bifurcation named on the portrait now, if any.
    pub fn announcement(&self) -> Option<&str> {
        self.chrome.announcement_strength(self.now).map(|_| {
            self.chrome
                .announcement
                .as_ref()
                .map_or("", |a| a.0.as_str())
        })
    }

    /// The section the section pane shows.
    pub fn section(&self) -> Option<&crate::render::SectionData> {
        self.views.section()
    }

    /// The Melnikov function the Melnikov pane shows.
    pub fn melnikov(&self) -> Option<&crate::core::melnikov::Melnikov> {
        self.views.melnikov()
    }

    /// The safe basins the basin pane shows (the quick look while dragging).
    pub fn basin(&self) -> Option<&crate::render::BasinData> {
        self.views.basin()
    }

    /// The erosion curve the erosion pane shows.
    pub fn erosion(&self) -> Option<&crate::core::basin::Erosion> {
        self.views.erosion()
    }

    /// Open a pane: "diagram", "folds", "backbone", "section", "melnikov",
    /// "basin" or "erosion" (tests).
    pub fn show_pane(&mut self, name: &str) {
        self.views.tab = match name {
            "folds" => views_panel::Tab::Folds,
            "backbone" => views_panel::Tab::Backbone,
            "section" => views_panel::Tab::Section,
            "melnikov" => views_panel::Tab::Melnikov,
            "basin" => views_panel::Tab::Basin,
            "erosion" => views_panel::Tab::Erosion,
            _ => views_panel::Tab::Diagram,
        };
    }

    /// Block until the worker has answered the newest job (or `timeout`).
    /// For tests and the benchmark: the UI never waits.
    pub fn wait_for_worker(&mut self, timeout: Duration) -> bool {
        let target = self.jobs.worker.latest_generation();
        if self
            .jobs
            .shown
            .as_ref()
            .is_some_and(|c| c.generation >= target)
        {
            return self.views.wait(timeout);
        }
        let got = self.jobs.worker.wait_for(target, timeout);
        for c in got {
            self.accept(c);
        }
        let panes = self.views.wait(timeout);
        panes
            && self
                .jobs
                .shown
                .as_ref()
                .is_some_and(|c| c.generation >= target)
    }

    /// Generation of the result shown (0 before the first).
    pub fn shown_generation(&self) -> u64 {
        self.jobs.shown.as_ref().map_or(0, |c| c.generation)
    }

    /// Wall times (ms) of the analysis and orbit parts of the shown result.
    pub fn last_job_ms(&self) -> Option<(f64, f64, bool)> {
        self.jobs
            .shown
            .as_ref()
            .map(|c| (c.analysis_ms, c.orbits_ms, c.coarse))
    }

    /// Set a parameter as a slider would (used by the benchmark and tests).
    pub fn set_parameter(&mut self, name: &str, value: f64, dragging: bool) {
        self.apply(Command::SetParam {
            name: name.to_string(),
            value,
            dragging,
        });
    }

    /// Show `window` as a pan or zoom of the plot would (used by tests).
    pub fn set_view(&mut self, window: Window) {
        self.apply(Command::SetView {
            window,
            dragging: false,
        });
        self.plot.reapply_view();
    }

    /// Use native file dialogs (true) or always the in-app path prompt.
    pub fn set_native_dialogs(&mut self, on: bool) {
        self.chrome.native_dialogs = on;
    }

    /// Replace the data directory (tests).
    pub fn set_data_dir(&mut self, dir: Option<PathBuf>) {
        self.doc.set_data_dir(dir);
    }

    /// Load a session file as Open would; a bad file leaves the session as it is.
    pub fn open_file(&mut self, path: &Path) {
        self.apply(Command::OpenFile(path.to_path_buf()));
    }

    /// Save to `path` as Save As would.
    pub fn save_to(&mut self, path: &Path) {
        self.apply(Command::SaveTo(path.to_path_buf()));
    }

    // ----- the frame -----

    /// One frame of the explorer inside `ui`.
    pub fn show(&mut self, ui: &mut egui::Ui) {
        let t0 = Instant::now();
        let ctx = ui.ctx().clone();
        self.now = ctx.input(|i| i.time);
        self.jobs.worker.set_context(&ctx);
        for c in self.jobs.worker.poll() {
            self.accept(c);
        }
        self.views.poll();
        self.plot.levels_on = self.doc.session.quantum.as_ref().map(|q| q.on_portrait);
        self.plot
            .refresh_levels(self.views.levels(), &self.doc.session.view);
        self.chrome.apply_theme(&ctx);
        let mut commands = self.shortcuts(&ctx);
        self.handle_close_request(&ctx, &mut commands);
        self.poll_dialog(&mut commands);
        self.poll_exports();

        let exportable = self.pane_requests();
        egui::Panel::top("menu").show(ui, |ui| {
            commands.extend(menu_bar::ui(
                ui,
                &menu_bar::MenuState {
                    recent: &self.doc.recent,
                    can_undo: self.doc.history.can_undo(),
                    can_redo: self.doc.history.can_redo(),
                    dark: self.chrome.dark,
                    has_sweep: exportable.sweep.is_some(),
                    has_folds: exportable.folds.is_some(),
                    has_section: exportable.section.is_some(),
                    has_melnikov: exportable.melnikov.is_some(),
                    has_levels: exportable.levels.is_some(),
                    has_basin: exportable.basin.is_some(),
                    has_erosion: exportable.erosion.is_some(),
                },
            ));
        });
        egui::Panel::bottom("status-bar").show(ui, |ui| {
            ui.horizontal(|ui| {
                ui.small(self.chrome.status.as_str());
                if let Some(c) = &self.jobs.shown {
                    for d in &c.analysis.diagnostics {
                        ui.small(format!("• {}", d.message));
                    }
                }
            });
        });
        // First-frame widths: the portrait keeps at least about half the window.
        let full_width = ui.available_width();
        egui::Panel::left("formula-and-parameters")
            .resizable(true)
            .default_size((0.23 * full_width).clamp(260.0, 330.0))
            .show(ui, |ui| {
                egui::ScrollArea::vertical().show(ui, |ui| {
                    if !self.doc.session.title.is_empty() || !self.doc.session.notes.is_empty() {
                        let title = if self.doc.session.title.is_empty() {
                            "Notes"
                        } else {
                            self.doc.session.title.as_str()
                        };
                        egui::CollapsingHeader::new(egui::RichText::new(title).strong())
                            .id_salt("session-notes")
                            .default_open(false)
                            .show(ui, |ui| ui.label(self.doc.session.notes.as_str()));
                        ui.add_space(4.0);
                    }
                    if let Some(c) = self.formula.ui(ui) {
                        commands.push(c);
                    }
                    ui.add_space(8.0);
                    let unused = self.unused_parameters();
                    self.params.marks = self.threshold_marks();
                    self.params.hbar_param = self.doc.session.hbar_parameter();
                    commands.extend(self.params.ui(ui, &self.doc.session.parameters, &unused));
                    commands.extend(self.params.drive_ui(ui, &self.doc.session));
                    commands.extend(self.params.quantum_ui(ui, &self.doc.session));
                });
            });
        egui::Panel::right("diagram-panes")
            .resizable(true)
            .default_size((0.27 * full_width).clamp(280.0, 520.0))
            .show(ui, |ui| {
                let system = self.system();
                let inputs = pane_inputs!(self, system.as_ref());
                commands.extend(self.views.ui(ui, &inputs));
            });
        egui::Panel::bottom("tables")
            .resizable(true)
            .default_size(210.0)
            .show(ui, |ui| {
                let outcomes = self.aligned_outcomes();
                commands.extend(self.tables.ui(
                    ui,
                    self.jobs.shown.as_ref().map(|c| c.analysis.as_ref()),
                    &self.doc.session.orbits,
                    &outcomes,
                    self.selection,
                    self.views.levels().map(|(_, l)| l),
                ));
            });
        let busy = self.portrait_busy();
        let greyed = self.formula.error.is_some();
        let strength = self.chrome.announcement_strength(self.now);
        if strength.is_some_and(|s| s < 1.0) {
            ctx.request_repaint_after(Duration::from_millis(50));
        } else if strength.is_some() {
            ctx.request_repaint_after(Duration::from_secs_f64(ANNOUNCE_HOLD_SECONDS));
        }
        let note =
            strength.and_then(|a| self.chrome.announcement.as_ref().map(|n| (n.0.as_str(), a)));
        egui::CentralPanel::default().show(ui, |ui| {
            commands.extend(self.plot.ui(
                ui,
                &self.doc.session.view,
                self.jobs.shown.as_ref(),
                greyed,
                self.selection,
                busy,
                self.now,
                note,
            ));
        });
        commands.extend(dialogs::ui(
            &ctx,
            &mut self.chrome.modal,
            self.doc.file.is_some() && !self.doc.bundled,
        ));

        for c in commands {
            self.apply(c);
        }
        self.settle_parameters(&ctx);
        self.submit_if_changed();
        let system = self.system();
        let inputs = pane_inputs!(self, system.as_ref());
        self.views.submit_if_changed(&inputs);
        // A drag that ended this frame still sent a coarse job; the next frame refines.
        if !self.jobs.dragging_seen {
            self.jobs.dragging = false;
        }
        self.jobs.dragging_seen = false;
        self.update_title(&ctx);
        self.autosave();
        if self.chrome.pending_dialog.is_some() || self.jobs.exporting() {
            ctx.request_repaint_after(Duration::from_millis(100));
        }
        self.log_frame(t0);
    }

    fn log_frame(&mut self, t0: Instant) {
        let job = self.jobs.shown.as_ref().map_or(String::new(), |c| {
            format!(
                " job_ms={:.2} coarse={}",
                c.analysis_ms + c.orbits_ms,
                c.coarse
            )
        });
        self.chrome.log_frame(t0, self.jobs.dragging, job);
    }

    fn shortcuts(&mut self, ctx: &egui::Context) -> Vec<Command> {
        use egui::{Key, KeyboardShortcut, Modifiers};
        let mut out = Vec::new();
        let cmd = Modifiers::COMMAND;
        let cmd_shift = Modifiers::COMMAND | Modifiers::SHIFT;
        ctx.input_mut(|i| {
            if i.consume_shortcut(&KeyboardShortcut::new(cmd_shift, Key::Z))
                || i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Y))
            {
                out.push(Command::Redo);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Z)) {
                out.push(Command::Undo);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd_shift, Key::S)) {
                out.push(Command::SaveAs);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::S)) {
                out.push(Command::Save);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::O)) {
                out.push(Command::Guarded(Guarded::OpenDialog));
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::N)) {
                out.push(Command::Guarded(Guarded::New));
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Q)) {
                out.push(Command::Guarded(Guarded::Quit));
            }
        });
        out
    }

    /// The Melnikov threshold on the drive amplitude's slider, while the
    /// Melnikov function shown is that of the session's drive.
    fn threshold_marks(&self) -> Vec<params_panel::SliderMark> {
        let Some(m) = self.views.melnikov() else {
            return Vec::new();
        };
        let current = self
            .doc
            .session
            .drive()
            .ok()
            .flatten()
            .is_some_and(|d| d.period == m.period && d.damping == m.damping);
        match m.threshold_amplitude {
            Some(a) if current && m.damping > 0.0 => vec![params_panel::SliderMark {
                param: m.amplitude.clone(),
                value: a,
                caption: crate::scene::threshold_sentence(m),
            }],
            _ => Vec::new(),
        }
    }

    /// The system the session describes, if its formula compiles.
    fn system(&self) -> Option<System> {
        self.jobs.system(&self.doc.session)
    }

    fn submit_if_changed(&mut self) {
        self.jobs.submit_if_changed(&self.doc.session);
    }

    /// Take a worker result if it is newer than what is shown.
    fn accept(&mut self, c: Computed) {
        if let Some(c) = self.jobs.accept(c) {
            let colours: Vec<Option<String>> =
                c.spec.orbits.iter().map(|o| o.colour.clone()).collect();
            self.plot.refresh(c, &colours);
        }
    }

    /// Outcomes lined up with `session.orbits` (None where not computed yet).
    fn aligned_outcomes(&self) -> Vec<Option<Arc<orbits::OrbitOutcome>>> {
        self.jobs.aligned_outcomes(&self.doc.session)
    }

    fn update_title(&mut self, ctx: &egui::Context) {
        let title = self.doc.title();
        self.chrome.update_title(ctx, title);
    }

    fn autosave(&mut self) {
        if let Some(problem) = self.doc.autosave(self.now, false) {
            self.chrome.status = problem;
        }
    }

    /// Write the recovery file now if there are unsaved changes (tests).
    pub fn autosave_now(&mut self) {
        if let Some(problem) = self.doc.autosave(self.now, true) {
            self.chrome.status = problem;
        }
    }

    /// True once Quit went through (the window is asked to close).
    pub fn quitting(&self) -> bool {
        self.chrome.allow_close
    }
}

/// The eframe wrapper.
struct ExplorerApp(Explorer);

impl eframe::App for ExplorerApp {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        self.0.show(ui);
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        // An unanswered recovery offer keeps the recovery file for the next start.
        if !self.0.doc.dirty
            && self.0.chrome.modal != Modal::OfferRestore
            && let Some(d) = &self.0.doc.data
        {
            d.clear_recovery();
        }
    }
}

/// Open the explorer window, with the session at `initial` or the built-in example.
pub fn run(initial: Option<PathBuf>) -> Result<(), String> {
    let explorer = Explorer::startup(initial)?;
    let title = explorer.title();
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_inner_size([1280.0, 800.0])
            .with_title(title),
        renderer: eframe::Renderer::Glow,
        ..Default::default()
    };
    eframe::run_native(
        "phasewright",
        options,
        Box::new(move |_cc| Ok(Box::new(ExplorerApp(explorer)))),
    )
    .map_err(|e| format!("the explorer window could not start: {e}"))
}

/// Write one export of data a pane has computed already (through the same
/// `render::export_data` as [`export_to_file`]); the status line on
/// success, the problem otherwise.
pub fn export_data_to_file(
    session: &Session,
    data: &render::ViewData,
    view: render::View,
    format: render::ExportFormat,
    path: &Path,
) -> Result<String, String> {
    let sys = session.system().map_err(|e| e.to_string())?;
    let out = render::export_data(
        session,
        &sys,
        data,
        view,
        format,
        render::FigureSize::default(),
    )
    .map_err(|e| e.to_string())?;
    crate::session::write_atomic(path, |w| std::io::Write::write_all(w, &out.bytes))
        .map_err(|e| e.to_string())?;
    Ok(format!("exported {} ({})", path.display(), out.summary))
}

/// Compute and write one export; the status line on success, the problem otherwise.
pub fn export_to_file(
    session: &Session,
    overrides: &crate::request::Overrides,
    view: render::View,
    format: render::ExportFormat,
    path: &Path,
) -> Result<String, String> {
    let sys = session.system().map_err(|e| e.to_string())?;
    let out = render::export(
        session,
        &sys,
        &session.view,
        view,
        format,
        render::FigureSize::default(),
        overrides,
        &crate::core::Cancel::never(),
    )
    .map_err(|e| e.to_string())?;
    crate::session::write_atomic(path, |w| std::io::Write::write_all(w, &out.bytes))
        .map_err(|e| e.to_string())?;
    Ok(format!("exported {} ({})", path.display(), out.summary))
}
