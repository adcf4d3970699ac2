//! The desktop explorer (eframe/egui). Thin: it shows core results and turns
//! user actions into session edits; it computes no physics itself.
//!
//! [`Explorer`] holds the session (the only thing saved), the worker and the
//! caches. Each panel is one file with a `ui` function that returns
//! [`Command`]s; the explorer applies them at the end of the frame.

mod dialogs;
pub mod files;
mod formula_panel;
mod history;
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
use crate::session::{Parameter, SeededOrbit, Session};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

pub use dialogs::CAUTION;
pub use files::{DATA_DIR_ENV, EXAMPLES, NO_NATIVE_DIALOG_ENV};
pub use formula_panel::EDITOR_LABEL;
pub use plot_panel::PLOT_LABEL;
pub use tables_panel::{equilibrium_rows, orbit_row, well_rows};
pub use views_panel::{
    BACKBONE_LABEL, DIAGRAM_LABEL, FOLDS_LABEL, FREQUENCY_LABEL, PaneRequests, PaneSettings,
};

use crate::render;
use dialogs::Modal;
use files::{DataDir, DialogOutcome, DialogPurpose, PendingDialog};
use history::{EditKind, History};
use worker::{Computed, JobSpec, Worker};

/// Environment variable naming a file that receives one line per frame
/// (UI time and time since the previous frame, in milliseconds).
pub const FRAME_LOG_ENV: &str = "PHASEWRIGHT_FRAME_LOG";
/// Grid points per side while a slider or the view is being dragged.
pub const COARSE_GRID: usize = 128;
/// A parameter that left the formula is removed after the text has been still this long (s).
const PARAM_SETTLE_SECONDS: f64 = 1.0;
/// Autosave to the recovery file this often while there are unsaved changes (s).
const AUTOSAVE_SECONDS: f64 = 4.0;
/// Longest integration time of an orbit launched by a click (a closed orbit stops after one period).
const DEFAULT_ORBIT_DURATION: f64 = 200.0;
/// A crossed bifurcation is named on the portrait this long at full strength (s)…
const ANNOUNCE_HOLD_SECONDS: f64 = 2.5;
/// …then fades out over this long (s).
const ANNOUNCE_FADE_SECONDS: f64 = 1.5;

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
    /// New settings of the diagram panes (sweep, fold box, backbone center).
    SetPanes {
        settings: PaneSettings,
        dragging: bool,
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
            session: &$ex.session,
            analysis: $ex.shown.as_ref().map(|c| c.analysis.as_ref()),
            selection: $ex.selection,
            dragging: $ex.dragging,
        }
    };
}

/// The explorer's whole state.
pub struct Explorer {
    /// What the user said; the only part that is saved.
    pub session: Session,
    /// The file the session came from or was saved to.
    pub file: Option<PathBuf>,
    /// Unsaved changes.
    pub dirty: bool,
    /// The session is a shipped example (Save asks for a new file).
    bundled: bool,
    pub selection: Selection,
    /// The last message shown in the status line.
    pub status: String,
    history: History,
    worker: Worker,
    compiled: Option<Arc<Formula>>,
    formula: formula_panel::FormulaPanel,
    params: params_panel::ParamsPanel,
    plot: plot_panel::PlotPanel,
    tables: tables_panel::TablesPanel,
    views: views_panel::ViewsPanel,
    /// A bifurcation the last parameter move crossed, and when.
    announcement: Option<(String, f64)>,
    shown: Option<Computed>,
    last_spec: Option<(JobSpec, bool)>,
    /// The view the session started with (Reset view goes back to it).
    home_view: Window,
    dragging: bool,
    dragging_seen: bool,
    param_settle_at: Option<f64>,
    modal: Modal,
    pending_dialog: Option<PendingDialog>,
    /// Exports running on their own threads; each answers with its outcome.
    exports: Vec<std::sync::mpsc::Receiver<Result<String, String>>>,
    data: Option<DataDir>,
    recent: Vec<PathBuf>,
    dark: bool,
    theme_applied: Option<bool>,
    title_sent: String,
    last_autosave: f64,
    autosaved: Option<Session>,
    allow_close: bool,
    quit_requested: bool,
    native_dialogs: bool,
    frame_log: Option<std::fs::File>,
    last_frame: Option<Instant>,
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
        let data = data_dir.map(|dir| DataDir { dir });
        let recent = data.as_ref().map(|d| d.recent()).unwrap_or_default();
        let offer = data
            .as_ref()
            .is_some_and(|d| d.pending_recovery().is_some());
        let frame_log = std::env::var_os(FRAME_LOG_ENV)
            .filter(|p| !p.is_empty())
            .and_then(|p| {
                std::fs::OpenOptions::new()
                    .create(true)
                    .append(true)
                    .open(p)
                    .ok()
            });
        let bundled = file.as_deref().is_some_and(files::is_bundled_example);
        let mut ex = Explorer {
            bundled,
            formula: formula_panel::FormulaPanel::new(&session.formula),
            compiled: None,
            home_view: session.view,
            session,
            file,
            dirty: false,
            selection: Selection::None,
            status: String::new(),
            history: History::default(),
            worker,
            params: params_panel::ParamsPanel::default(),
            plot: plot_panel::PlotPanel::default(),
            tables: tables_panel::TablesPanel::default(),
            views,
            announcement: None,
            shown: None,
            last_spec: None,
            dragging: false,
            dragging_seen: false,
            param_settle_at: None,
            modal: if offer {
                Modal::OfferRestore
            } else {
                Modal::None
            },
            pending_dialog: None,
            exports: Vec::new(),
            data,
            recent,
            dark: false,
            theme_applied: None,
            title_sent: String::new(),
            last_autosave: 0.0,
            autosaved: None,
            allow_close: false,
            quit_requested: false,
            native_dialogs: true,
            frame_log,
            last_frame: None,
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
        self.shown.as_ref().map(|c| c.analysis.as_ref())
    }

    /// The orbit results shown now (aligned with `session.orbits` when current).
    pub fn orbit_outcomes(&self) -> Vec<Option<Arc<orbits::OrbitOutcome>>> {
        self.aligned_outcomes()
    }

    /// The modal window open now, by title (for tests).
    pub fn modal_name(&self) -> &'static str {
        match self.modal {
            Modal::None => "",
            Modal::About => "about",
            Modal::ConfirmDiscard(_) => "confirm-discard",
            Modal::PathPrompt { .. } => "path-prompt",
            Modal::ConfirmOverwrite(_) => "confirm-overwrite",
            Modal::OfferRestore => "offer-restore",
            Modal::Message { .. } => "message",
        }
    }

    /// The window title the explorer asks for.
    pub fn title(&self) -> String {
        let name = self
            .file
            .as_ref()
            .and_then(|p| p.file_name())
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| {
                if self.session.title.is_empty() {
                    "untitled".into()
                } else {
                    self.session.title.clone()
                }
            });
        format!("{}{name} — phasewright", if self.dirty { "● " } else { "" })
    }

    /// True while a job newer than the shown result is outstanding (portrait or panes).
    pub fn busy(&self) -> bool {
        self.portrait_busy() || self.views.busy()
    }

    fn portrait_busy(&self) -> bool {
        let shown = self.shown.as_ref().map_or(0, |c| c.generation);
        self.worker.latest_generation() > shown || self.shown.as_ref().is_some_and(|c| c.coarse)
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

    /// The bifurcation named on the portrait now, if any.
    pub fn announcement(&self) -> Option<&str> {
        self.announcement_strength()
            .map(|_| self.announcement.as_ref().map_or("", |a| a.0.as_str()))
    }

    /// Opacity of the announcement now (None once it has faded).
    fn announcement_strength(&self) -> Option<f32> {
        let (_, at) = self.announcement.as_ref()?;
        let age = self.now - at;
        if age < ANNOUNCE_HOLD_SECONDS {
            Some(1.0)
        } else if age < ANNOUNCE_HOLD_SECONDS + ANNOUNCE_FADE_SECONDS {
            Some((1.0 - (age - ANNOUNCE_HOLD_SECONDS) / ANNOUNCE_FADE_SECONDS) as f32)
        } else {
            None
        }
    }

    /// Open a pane: "diagram", "folds" or "backbone" (tests).
    pub fn show_pane(&mut self, name: &str) {
        self.views.tab = match name {
            "folds" => views_panel::Tab::Folds,
            "backbone" => views_panel::Tab::Backbone,
            _ => views_panel::Tab::Diagram,
        };
    }

    /// Block until the worker has answered the newest job (or `timeout`).
    /// For tests and the benchmark: the UI never waits.
    pub fn wait_for_worker(&mut self, timeout: Duration) -> bool {
        let target = self.worker.latest_generation();
        if self.shown.as_ref().is_some_and(|c| c.generation >= target) {
            return self.views.wait(timeout);
        }
        let got = self.worker.wait_for(target, timeout);
        for c in got {
            self.accept(c);
        }
        let panes = self.views.wait(timeout);
        panes && self.shown.as_ref().is_some_and(|c| c.generation >= target)
    }

    /// Generation of the result shown (0 before the first).
    pub fn shown_generation(&self) -> u64 {
        self.shown.as_ref().map_or(0, |c| c.generation)
    }

    /// Wall times (ms) of the analysis and orbit parts of the shown result.
    pub fn last_job_ms(&self) -> Option<(f64, f64, bool)> {
        self.shown
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
        self.native_dialogs = on;
    }

    /// Replace the data directory (tests).
    pub fn set_data_dir(&mut self, dir: Option<PathBuf>) {
        self.data = dir.map(|dir| DataDir { dir });
        self.recent = self.data.as_ref().map(|d| d.recent()).unwrap_or_default();
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
        self.worker.set_context(&ctx);
        for c in self.worker.poll() {
            self.accept(c);
        }
        self.views.poll();
        if self.theme_applied != Some(self.dark) {
            ctx.set_theme(if self.dark {
                egui::Theme::Dark
            } else {
                egui::Theme::Light
            });
            self.theme_applied = Some(self.dark);
        }
        let mut commands = self.shortcuts(&ctx);
        self.handle_close_request(&ctx, &mut commands);
        self.poll_dialog(&mut commands);
        self.poll_exports();

        let exportable = self.pane_requests();
        egui::Panel::top("menu").show(ui, |ui| {
            commands.extend(menu_bar::ui(
                ui,
                &menu_bar::MenuState {
                    recent: &self.recent,
                    can_undo: self.history.can_undo(),
                    can_redo: self.history.can_redo(),
                    dark: self.dark,
                    has_sweep: exportable.sweep.is_some(),
                    has_folds: exportable.folds.is_some(),
                },
            ));
        });
        egui::Panel::bottom("status-bar").show(ui, |ui| {
            ui.horizontal(|ui| {
                ui.small(self.status.as_str());
                if let Some(c) = &self.shown {
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
                    if !self.session.title.is_empty() || !self.session.notes.is_empty() {
                        let title = if self.session.title.is_empty() {
                            "Notes"
                        } else {
                            self.session.title.as_str()
                        };
                        egui::CollapsingHeader::new(egui::RichText::new(title).strong())
                            .id_salt("session-notes")
                            .default_open(false)
                            .show(ui, |ui| ui.label(self.session.notes.as_str()));
                        ui.add_space(4.0);
                    }
                    if let Some(c) = self.formula.ui(ui) {
                        commands.push(c);
                    }
                    ui.add_space(8.0);
                    let unused = self.unused_parameters();
                    commands.extend(self.params.ui(ui, &self.session.parameters, &unused));
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
                    self.shown.as_ref().map(|c| c.analysis.as_ref()),
                    &self.session.orbits,
                    &outcomes,
                    self.selection,
                ));
            });
        let busy = self.portrait_busy();
        let greyed = self.formula.error.is_some();
        let strength = self.announcement_strength();
        if strength.is_some_and(|s| s < 1.0) {
            ctx.request_repaint_after(Duration::from_millis(50));
        } else if strength.is_some() {
            ctx.request_repaint_after(Duration::from_secs_f64(ANNOUNCE_HOLD_SECONDS));
        }
        let note = strength.and_then(|a| self.announcement.as_ref().map(|n| (n.0.as_str(), a)));
        egui::CentralPanel::default().show(ui, |ui| {
            commands.extend(self.plot.ui(
                ui,
                &self.session.view,
                self.shown.as_ref(),
                greyed,
                self.selection,
                busy,
                self.now,
                note,
            ));
        });
        commands.extend(dialogs::ui(
            &ctx,
            &mut self.modal,
            self.file.is_some() && !self.bundled,
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
        if !self.dragging_seen {
            self.dragging = false;
        }
        self.dragging_seen = false;
        self.update_title(&ctx);
        self.autosave();
        if self.pending_dialog.is_some() || !self.exports.is_empty() {
            ctx.request_repaint_after(Duration::from_millis(100));
        }
        self.log_frame(t0);
    }

    fn log_frame(&mut self, t0: Instant) {
        let now = Instant::now();
        if let Some(f) = &mut self.frame_log {
            use std::io::Write;
            let ui_ms = (now - t0).as_secs_f64() * 1e3;
            let gap_ms = self
                .last_frame
                .map_or(0.0, |l| (t0 - l).as_secs_f64() * 1e3);
            let job = self.shown.as_ref().map_or(String::new(), |c| {
                format!(
                    " job_ms={:.2} coarse={}",
                    c.analysis_ms + c.orbits_ms,
                    c.coarse
                )
            });
            let _ = writeln!(
                f,
                "ui_ms={ui_ms:.3} since_last_ms={gap_ms:.3} dragging={}{job}",
                self.dragging
            );
        }
        self.last_frame = Some(t0);
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

    fn handle_close_request(&mut self, ctx: &egui::Context, commands: &mut Vec<Command>) {
        if ctx.input(|i| i.viewport().close_requested()) && !self.allow_close {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            commands.push(Command::Guarded(Guarded::Quit));
        }
    }

    /// Export `view` of the session as it is now to `path` on a thread of
    /// its own, through the same `render::export` the command line uses.
    fn start_export(&mut self, view: render::View, format: render::ExportFormat, path: PathBuf) {
        let session = self.session.clone();
        let (tx, rx) = std::sync::mpsc::channel();
        let spawned = std::thread::Builder::new()
            .name("phasewright-export".into())
            .spawn(move || {
                let outcome = export_to_file(&session, view, format, &path);
                let _ = tx.send(outcome);
            });
        match spawned {
            Ok(_) => {
                self.status = format!("exporting the {}…", view.name());
                self.exports.push(rx);
            }
            Err(e) => {
                self.modal = Modal::Message {
                    title: "Export failed".into(),
                    text: format!("cannot start the export: {e}"),
                }
            }
        }
    }

    fn poll_exports(&mut self) {
        let mut i = 0;
        while i < self.exports.len() {
            match self.exports[i].try_recv() {
                Err(std::sync::mpsc::TryRecvError::Empty) => {
                    i += 1;
                    continue;
                }
                Ok(Ok(done)) => self.status = done,
                Ok(Err(problem)) => {
                    self.modal = Modal::Message {
                        title: "Export failed".into(),
                        text: problem,
                    }
                }
                Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                    self.modal = Modal::Message {
                        title: "Export failed".into(),
                        text: "the export stopped without a result".into(),
                    }
                }
            }
            self.exports.remove(i);
        }
    }

    fn poll_dialog(&mut self, commands: &mut Vec<Command>) {
        let Some(d) = &self.pending_dialog else {
            return;
        };
        let Some(outcome) = d.poll() else {
            return;
        };
        let purpose = d.purpose;
        self.pending_dialog = None;
        match outcome {
            DialogOutcome::Chosen(path) => commands.push(match purpose {
                DialogPurpose::Open => Command::OpenFile(path),
                DialogPurpose::SaveAs => Command::SaveTo(path),
                DialogPurpose::Export(view, format) => Command::ExportTo(view, format, path),
            }),
            DialogOutcome::Cancelled => {}
            DialogOutcome::Unavailable => self.prompt_path(
                purpose,
                "The system file dialog is not available; type a path.",
            ),
        }
    }

    fn prompt_path(&mut self, purpose: DialogPurpose, note: &str) {
        let text = match (&self.file, purpose) {
            (_, DialogPurpose::SaveAs) => self.save_as_suggestion().display().to_string(),
            (Some(f), _) => f.display().to_string(),
            (None, DialogPurpose::Open | DialogPurpose::Export(..)) => String::new(),
        };
        let text = match purpose {
            DialogPurpose::Export(view, format) => {
                let name = files::export_file_name(view, format);
                let dir = self
                    .file
                    .as_ref()
                    .and_then(|f| f.parent().map(Path::to_path_buf))
                    .or_else(|| std::env::current_dir().ok())
                    .unwrap_or_default();
                dir.join(name).display().to_string()
            }
            _ => text,
        };
        self.modal = Modal::PathPrompt {
            purpose,
            text,
            note: note.to_string(),
        };
    }

    fn native_dialog(&mut self, purpose: DialogPurpose) {
        if self.pending_dialog.is_some() {
            return;
        }
        if !self.native_dialogs {
            self.prompt_path(purpose, "");
            return;
        }
        let suggestion = self.save_as_suggestion();
        let dir = match purpose {
            DialogPurpose::SaveAs => suggestion.parent().map(Path::to_path_buf),
            _ => self
                .file
                .as_ref()
                .and_then(|f| f.parent().map(Path::to_path_buf)),
        };
        let name = match purpose {
            DialogPurpose::Export(view, format) => files::export_file_name(view, format),
            DialogPurpose::SaveAs => suggestion
                .file_name()
                .map_or("session.json".to_string(), |n| {
                    n.to_string_lossy().into_owned()
                }),
            _ => self
                .file
                .as_ref()
                .and_then(|f| f.file_name())
                .map_or("session.json".to_string(), |n| {
                    n.to_string_lossy().into_owned()
                }),
        };
        match PendingDialog::start(purpose, dir, &name) {
            Some(d) => self.pending_dialog = Some(d),
            None => self.prompt_path(purpose, ""),
        }
    }

    /// Where Save as… offers to write (never over a shipped example).
    fn save_as_suggestion(&self) -> PathBuf {
        files::save_as_suggestion(self.file.as_deref(), self.bundled, &self.session.title)
    }

    // ----- applying commands -----

    fn edit(&mut self, kind: EditKind, continuing: bool) {
        self.history
            .record(&self.session, kind, self.now, continuing);
        self.dirty = true;
    }

    fn apply(&mut self, command: Command) {
        match command {
            Command::FormulaEdited { text, formula } => {
                self.edit(EditKind::Formula, false);
                self.session.formula = text;
                self.compiled = Some(formula);
                self.add_new_parameters();
                self.param_settle_at = Some(self.now + PARAM_SETTLE_SECONDS);
            }
            Command::SetParam {
                name,
                value,
                dragging,
            } => {
                if !value.is_finite() {
                    return;
                }
                let Some(i) = self.session.parameters.iter().position(|p| p.name == name) else {
                    return;
                };
                let old = self.session.parameters[i].value;
                if old != value {
                    if let Some(text) = self.views.crossing(&name, old, value) {
                        self.announcement = Some((text, self.now));
                    }
                    self.edit(EditKind::Parameter(name), dragging);
                    self.session.parameters[i].value = value;
                }
                if dragging {
                    self.dragging = true;
                    self.dragging_seen = true;
                } else {
                    self.history.seal();
                }
            }
            Command::SetRange {
                name,
                min,
                max,
                step,
            } => {
                let Some(i) = self.session.parameters.iter().position(|p| p.name == name) else {
                    return;
                };
                if !(min < max) {
                    self.status = format!("{name}: min must be less than max; range kept");
                    return;
                }
                self.edit(EditKind::ParameterRange(name), false);
                let p = &mut self.session.parameters[i];
                p.min = min;
                p.max = max;
                p.step = step;
                p.value = p.value.clamp(min, max);
            }
            Command::SetView { window, dragging } => {
                if window != self.session.view {
                    self.edit(EditKind::View, dragging);
                    self.session.view = window;
                }
                if dragging {
                    self.dragging = true;
                    self.dragging_seen = true;
                }
            }
            Command::Dragging => {
                self.dragging = true;
                self.dragging_seen = true;
            }
            Command::ResetView => {
                if self.session.view != self.home_view {
                    self.edit(EditKind::Other, false);
                    self.session.view = self.home_view;
                }
                self.plot.reapply_view();
            }
            Command::LaunchOrbit { q, p } => {
                if !(q.is_finite() && p.is_finite()) {
                    return;
                }
                if self.session.orbits.len() >= crate::session::MAX_ORBITS {
                    self.status = format!(
                        "A session holds at most {} orbits; delete one first.",
                        crate::session::MAX_ORBITS
                    );
                    return;
                }
                let duration = DEFAULT_ORBIT_DURATION;
                self.edit(EditKind::Orbits, false);
                self.history.seal();
                self.session.orbits.push(SeededOrbit {
                    q0: q,
                    p0: p,
                    duration,
                    method: "auto".into(),
                    colour: None,
                });
                self.selection = Selection::Orbit(self.session.orbits.len() - 1);
                self.tables.tab = tables_panel::Tab::Orbits;
            }
            Command::DeleteOrbit(i) => {
                if i < self.session.orbits.len() {
                    self.edit(EditKind::Other, false);
                    self.session.orbits.remove(i);
                    self.selection = Selection::None;
                }
            }
            Command::EditOrbit {
                index,
                orbit,
                dragging,
            } => {
                if index < self.session.orbits.len() && self.session.orbits[index] != orbit {
                    self.edit(EditKind::Orbits, dragging);
                    self.session.orbits[index] = orbit;
                }
            }
            Command::Select(s) => self.selection = s,
            Command::SetPanes { settings, dragging } => {
                if settings != PaneSettings::of(&self.session) {
                    self.edit(EditKind::Panes, dragging);
                    settings.store(&mut self.session);
                }
            }
            Command::Guarded(action) => {
                if self.dirty {
                    self.modal = Modal::ConfirmDiscard(action);
                } else {
                    self.apply(Command::Confirmed(action));
                }
            }
            Command::Confirmed(action) => self.run_guarded(action),
            Command::OpenFile(path) => match files::load_session(&path) {
                Ok((session, warnings)) => {
                    self.replace_session(session, Some(path.clone()));
                    self.status = if warnings.is_empty() {
                        format!("Opened {}", path.display())
                    } else {
                        format!(
                            "Opened {} with warnings: {}",
                            path.display(),
                            warnings.join("; ")
                        )
                    };
                    if let Some(d) = &self.data {
                        self.recent = d.add_recent(&path);
                    }
                }
                Err(e) => {
                    self.status = format!("Not opened: {e}");
                    self.modal = Modal::Message {
                        title: "The file was not opened".into(),
                        text: e,
                    };
                }
            },
            Command::Save => match self.file.clone() {
                Some(path) if !self.bundled => self.apply(Command::SaveTo(path)),
                _ => self.apply(Command::SaveAs),
            },
            Command::SaveAs => self.native_dialog(DialogPurpose::SaveAs),
            Command::SavePrompt => self.prompt_path(DialogPurpose::SaveAs, ""),
            Command::Export(view, format) => {
                self.native_dialog(DialogPurpose::Export(view, format));
            }
            Command::ExportTo(view, format, path) => self.start_export(view, format, path),
            Command::SaveTo(path) if files::is_bundled_example(&path) => {
                self.modal = Modal::ConfirmOverwrite(path);
            }
            Command::SaveTo(path) | Command::OverwriteExample(path) => {
                match files::save_session(&self.session, &path) {
                    Ok(()) => {
                        self.bundled = files::is_bundled_example(&path);
                        self.file = Some(path.clone());
                        self.dirty = false;
                        self.status = format!("Saved {}", path.display());
                        if let Some(d) = &self.data {
                            d.clear_recovery();
                            self.recent = d.add_recent(&path);
                        }
                        self.autosaved = None;
                    }
                    Err(e) => {
                        self.status = format!("Not saved: {e}");
                        self.modal = Modal::Message {
                            title: "The session was not saved".into(),
                            text: e,
                        };
                    }
                }
            }
            Command::Undo => {
                if let Some(s) = self.history.undo(&self.session) {
                    self.restore(s);
                    self.status = "Undone".into();
                }
            }
            Command::Redo => {
                if let Some(s) = self.history.redo(&self.session) {
                    self.restore(s);
                    self.status = "Redone".into();
                }
            }
            Command::SetDark(d) => self.dark = d,
            Command::ShowAbout => self.modal = Modal::About,
            Command::RestoreRecovery => {
                if let Some(s) = self.data.as_ref().and_then(|d| d.pending_recovery()) {
                    self.replace_session(s, None);
                    self.dirty = true;
                    self.status = "Restored the unsaved session; save it to keep it.".into();
                }
            }
            Command::DiscardRecovery => {
                if let Some(d) = &self.data {
                    d.clear_recovery();
                }
            }
        }
    }

    fn run_guarded(&mut self, action: Guarded) {
        match action {
            Guarded::New => {
                self.replace_session(Session::blank("p^2/2 + q^2/2"), None);
                self.status = "New session".into();
            }
            Guarded::OpenDialog => self.native_dialog(DialogPurpose::Open),
            Guarded::OpenPrompt => self.prompt_path(DialogPurpose::Open, ""),
            Guarded::OpenPath(p) => self.apply(Command::OpenFile(p)),
            Guarded::OpenExample(i) => {
                if let Some((name, text)) = EXAMPLES.get(i) {
                    match files::parse_session(text) {
                        Ok((s, _)) => {
                            self.replace_session(s, None);
                            self.bundled = true;
                            self.status = format!("Example {name}");
                        }
                        Err(e) => {
                            self.modal = Modal::Message {
                                title: format!("Example {name}"),
                                text: e,
                            }
                        }
                    }
                }
            }
            Guarded::Builtin => {
                self.replace_session(files::builtin_session(), None);
            }
            Guarded::Quit => {
                if let Some(d) = &self.data
                    && self.modal != Modal::OfferRestore
                {
                    d.clear_recovery();
                }
                self.dirty = false;
                self.allow_close = true;
                self.quit_requested = true;
            }
        }
    }

    /// Put a whole new session in place (new, open, example, restore).
    fn replace_session(&mut self, session: Session, file: Option<PathBuf>) {
        self.bundled = file.as_deref().is_some_and(files::is_bundled_example);
        self.session = session;
        self.file = file;
        self.dirty = false;
        self.history.clear();
        self.home_view = self.session.view;
        self.selection = Selection::None;
        self.formula.set_text(&self.session.formula);
        self.plot.reset();
        self.views.reset();
        self.announcement = None;
        self.shown = None;
        self.last_spec = None;
        self.autosaved = None;
        self.adopt_formula();
    }

    /// Put an undo/redo snapshot in place.
    fn restore(&mut self, s: Session) {
        self.session = s;
        self.dirty = true;
        self.formula.set_text(&self.session.formula);
        self.plot.reapply_view();
        self.selection = Selection::None;
        self.adopt_formula();
    }

    /// Compile the session's formula and make sure every parameter has a row.
    fn adopt_formula(&mut self) {
        self.compiled = Formula::compile(&self.session.formula).ok().map(Arc::new);
        self.add_new_parameters();
        self.param_settle_at = Some(self.now + PARAM_SETTLE_SECONDS);
    }

    fn add_new_parameters(&mut self) {
        let Some(f) = &self.compiled else {
            return;
        };
        for name in f.params() {
            if !self.session.parameters.iter().any(|p| &p.name == name) {
                self.session.parameters.push(Parameter {
                    name: name.clone(),
                    value: crate::session::DEFAULT_PARAM_VALUE,
                    min: crate::session::DEFAULT_PARAM_RANGE.0,
                    max: crate::session::DEFAULT_PARAM_RANGE.1,
                    step: None,
                });
            }
        }
    }

    fn unused_parameters(&self) -> Vec<String> {
        let Some(f) = &self.compiled else {
            return Vec::new();
        };
        self.session
            .parameters
            .iter()
            .filter(|p| !f.params().contains(&p.name))
            .map(|p| p.name.clone())
            .collect()
    }

    fn settle_parameters(&mut self, ctx: &egui::Context) {
        let Some(at) = self.param_settle_at else {
            return;
        };
        if self.now < at {
            ctx.request_repaint_after(Duration::from_secs_f64((at - self.now).max(0.01)));
            return;
        }
        self.param_settle_at = None;
        if self.formula.error.is_some() {
            return;
        }
        let unused = self.unused_parameters();
        if !unused.is_empty() {
            self.session
                .parameters
                .retain(|p| !unused.contains(&p.name));
        }
    }

    /// The system the session describes, if its formula compiles.
    fn system(&self) -> Option<System> {
        let f = self.compiled.clone()?;
        let values = f
            .params()
            .iter()
            .map(|n| {
                self.session
                    .parameters
                    .iter()
                    .find(|p| &p.name == n)
                    .map_or(1.0, |p| p.value)
            })
            .collect();
        System::new(f, values).ok()
    }

    fn submit_if_changed(&mut self) {
        let Some(system) = self.system() else {
            return;
        };
        let coarse = self.dragging;
        let full = self.session.levels.grid.max(16);
        let spec = JobSpec {
            source: self.session.formula.clone(),
            params: system.params().to_vec(),
            window: self.session.view,
            grid: if coarse { full.min(COARSE_GRID) } else { full },
            levels: self.session.levels.count,
            refine: self.session.levels.refine && !coarse,
            orbits: self.session.orbits.clone(),
        };
        if self
            .last_spec
            .as_ref()
            .is_some_and(|(s, c)| *s == spec && *c == coarse)
        {
            return;
        }
        self.last_spec = Some((spec.clone(), coarse));
        self.worker.submit(spec, system, coarse);
    }

    /// Take a worker result if it is newer than what is shown.
    fn accept(&mut self, c: Computed) {
        if self
            .shown
            .as_ref()
            .is_some_and(|s| s.generation >= c.generation)
        {
            return;
        }
        let colours: Vec<Option<String>> = c.spec.orbits.iter().map(|o| o.colour.clone()).collect();
        self.plot.refresh(&c, &colours);
        self.shown = Some(c);
    }

    /// Outcomes lined up with `session.orbits` (None where not computed yet).
    fn aligned_outcomes(&self) -> Vec<Option<Arc<orbits::OrbitOutcome>>> {
        let Some(c) = &self.shown else {
            return vec![None; self.session.orbits.len()];
        };
        let current = c.spec.source == self.session.formula;
        self.session
            .orbits
            .iter()
            .map(|s| {
                if !current {
                    return None;
                }
                c.spec
                    .orbits
                    .iter()
                    .position(|o| o == s)
                    .and_then(|k| c.orbits.get(k).cloned())
            })
            .collect()
    }

    fn update_title(&mut self, ctx: &egui::Context) {
        let t = self.title();
        if t != self.title_sent {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(t.clone()));
            self.title_sent = t;
        }
        if self.quit_requested {
            self.quit_requested = false;
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
        }
    }

    fn autosave(&mut self) {
        if !self.dirty || self.now - self.last_autosave < AUTOSAVE_SECONDS {
            return;
        }
        self.last_autosave = self.now;
        if self.autosaved.as_ref() == Some(&self.session) {
            return;
        }
        if let Some(d) = &self.data {
            match d.write_recovery(&self.session) {
                Ok(()) => self.autosaved = Some(self.session.clone()),
                Err(e) => self.status = format!("Recovery copy not written: {e}"),
            }
        }
    }

    /// Write the recovery file now if there are unsaved changes (tests).
    pub fn autosave_now(&mut self) {
        self.last_autosave = f64::NEG_INFINITY;
        self.autosave();
    }

    /// True once Quit went through (the window is asked to close).
    pub fn quitting(&self) -> bool {
        self.allow_close
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
        if !self.0.dirty
            && self.0.modal != Modal::OfferRestore
            && let Some(d) = &self.0.data
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

/// Compute and write one export; the status line on success, the problem otherwise.
pub fn export_to_file(
    session: &Session,
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
        &crate::core::Cancel::never(),
    )
    .map_err(|e| e.to_string())?;
    crate::session::write_atomic(path, |w| std::io::Write::write_all(w, &out.bytes))
        .map_err(|e| e.to_string())?;
    Ok(format!("exported {} ({})", path.display(), out.summary))
}
