//! Applying the panels' commands, by kind: edits of the session (formula,
//! parameters, view, orbits, panes), file actions (open, save, export, the
//! guarded actions that could lose changes, and the dialogs they need), and
//! everything else (selection, undo, theme, recovery).

use super::dialogs::Modal;
use super::files::{self, DialogOutcome, DialogPurpose, PendingDialog};
use super::history::EditKind;
use super::{Command, EXAMPLES, Explorer, Guarded, PaneSettings, Selection, tables_panel};
use crate::core::formula::Formula;
use crate::render;
use crate::session::{Parameter, SeededOrbit, Session};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Duration;

/// A parameter that left the formula is removed after the text has been still this long (s).
const PARAM_SETTLE_SECONDS: f64 = 1.0;
/// Longest integration time of an orbit launched by a click (a closed orbit stops after one period).
const DEFAULT_ORBIT_DURATION: f64 = 200.0;

impl Explorer {
    /// Apply one command from a panel, a shortcut or a dialog.
    pub(super) fn apply(&mut self, command: Command) {
        match command {
            Command::FormulaEdited { .. }
            | Command::SetParam { .. }
            | Command::SetRange { .. }
            | Command::SetView { .. }
            | Command::ResetView
            | Command::LaunchOrbit { .. }
            | Command::DeleteOrbit(_)
            | Command::EditOrbit { .. }
            | Command::ShowLevels(_)
            | Command::SetPanes { .. }
            | Command::SetDrive { .. } => self.apply_edit(command),
            Command::Guarded(_)
            | Command::Confirmed(_)
            | Command::OpenFile(_)
            | Command::Save
            | Command::SaveAs
            | Command::SavePrompt
            | Command::SaveTo(_)
            | Command::OverwriteExample(_)
            | Command::Export(..)
            | Command::ExportTo(..)
            | Command::RestoreRecovery
            | Command::DiscardRecovery => self.apply_file(command),
            Command::Dragging
            | Command::Select(_)
            | Command::Undo
            | Command::Redo
            | Command::SetDark(_)
            | Command::ShowAbout => self.apply_other(command),
        }
    }

    /// Note an edit about to happen (for undo) and mark the session unsaved.
    fn edit(&mut self, kind: EditKind, continuing: bool) {
        self.doc.edit(kind, self.now, continuing);
    }

    /// Edits of the session itself.
    fn apply_edit(&mut self, command: Command) {
        match command {
            Command::FormulaEdited { text, formula } => {
                self.edit(EditKind::Formula, false);
                self.doc.session.formula = text;
                self.jobs.compiled = Some(formula);
                self.add_new_parameters();
                self.jobs.param_settle_at = Some(self.now + PARAM_SETTLE_SECONDS);
            }
            Command::SetParam {
                name,
                value,
                dragging,
            } => {
                if !value.is_finite() {
                    return;
                }
                let Some(i) = self
                    .doc
                    .session
                    .parameters
                    .iter()
                    .position(|p| p.name == name)
                else {
                    return;
                };
                let old = self.doc.session.parameters[i].value;
                if old != value {
                    if let Some(text) = self.views.crossing(&name, old, value) {
                        self.chrome.announcement = Some((text, self.now));
                    }
                    self.edit(EditKind::Parameter(name), dragging);
                    self.doc.session.parameters[i].value = value;
                }
                if dragging {
                    self.jobs.drag();
                } else {
                    self.doc.history.seal();
                }
            }
            Command::SetRange {
                name,
                min,
                max,
                step,
            } => {
                let Some(i) = self
                    .doc
                    .session
                    .parameters
                    .iter()
                    .position(|p| p.name == name)
                else {
                    return;
                };
                if !(min < max) {
                    self.chrome.status = format!("{name}: min must be less than max; range kept");
                    return;
                }
                self.edit(EditKind::ParameterRange(name), false);
                let p = &mut self.doc.session.parameters[i];
                p.min = min;
                p.max = max;
                p.step = step;
                p.value = p.value.clamp(min, max);
            }
            Command::SetView { window, dragging } => {
                if window != self.doc.session.view {
                    self.edit(EditKind::View, dragging);
                    self.doc.session.view = window;
                }
                if dragging {
                    self.jobs.drag();
                }
            }
            Command::ResetView => {
                if self.doc.session.view != self.doc.home_view {
                    self.edit(EditKind::Other, false);
                    self.doc.session.view = self.doc.home_view;
                }
                self.plot.reapply_view();
            }
            Command::LaunchOrbit { q, p } => {
                if !(q.is_finite() && p.is_finite()) {
                    return;
                }
                if self.doc.session.orbits.len() >= crate::session::MAX_ORBITS {
                    self.chrome.status = format!(
                        "A session holds at most {} orbits; delete one first.",
                        crate::session::MAX_ORBITS
                    );
                    return;
                }
                self.edit(EditKind::Orbits, false);
                self.doc.history.seal();
                self.doc.session.orbits.push(SeededOrbit {
                    q0: q,
                    p0: p,
                    duration: DEFAULT_ORBIT_DURATION,
                    method: "auto".into(),
                    colour: None,
                });
                self.selection = Selection::Orbit(self.doc.session.orbits.len() - 1);
                self.tables.tab = tables_panel::Tab::Orbits;
            }
            Command::DeleteOrbit(i) => {
                if i < self.doc.session.orbits.len() {
                    self.edit(EditKind::Other, false);
                    self.doc.session.orbits.remove(i);
                    self.selection = Selection::None;
                }
            }
            Command::EditOrbit {
                index,
                orbit,
                dragging,
            } => {
                if index < self.doc.session.orbits.len() && self.doc.session.orbits[index] != orbit
                {
                    self.edit(EditKind::Orbits, dragging);
                    self.doc.session.orbits[index] = orbit;
                }
            }
            Command::ShowLevels(on) => {
                let mut settings = PaneSettings::of(&self.doc.session);
                if let Some(q) = settings.quantum.as_mut() {
                    q.on_portrait = on;
                }
                self.apply_edit(Command::SetPanes {
                    settings,
                    dragging: false,
                });
            }
            Command::SetPanes { settings, dragging } => {
                if settings != PaneSettings::of(&self.doc.session) {
                    self.edit(EditKind::Panes, dragging);
                    settings.store(&mut self.doc.session);
                }
            }
            Command::SetDrive { drive, typing } => {
                if drive != self.doc.session.drive {
                    self.edit(EditKind::Drive, false);
                    if !typing {
                        self.doc.history.seal();
                    }
                    self.doc.session.drive = drive;
                }
            }
            _ => {}
        }
    }

    /// Opening, saving and exporting, and the actions that could lose changes.
    fn apply_file(&mut self, command: Command) {
        match command {
            Command::Guarded(action) => {
                if self.doc.dirty {
                    self.chrome.modal = Modal::ConfirmDiscard(action);
                } else {
                    self.run_guarded(action);
                }
            }
            Command::Confirmed(action) => self.run_guarded(action),
            Command::OpenFile(path) => match files::load_session(&path) {
                Ok((session, warnings)) => {
                    self.replace_session(session, Some(path.clone()));
                    self.chrome.status = if warnings.is_empty() {
                        format!("Opened {}", path.display())
                    } else {
                        format!(
                            "Opened {} with warnings: {}",
                            path.display(),
                            warnings.join("; ")
                        )
                    };
                    self.doc.note_recent(&path);
                }
                Err(e) => {
                    self.chrome.status = format!("Not opened: {e}");
                    self.chrome.message("The file was not opened", e);
                }
            },
            Command::Save => match self.doc.file.clone() {
                Some(path) if !self.doc.bundled => self.apply_file(Command::SaveTo(path)),
                _ => self.apply_file(Command::SaveAs),
            },
            Command::SaveAs => self.native_dialog(DialogPurpose::SaveAs),
            Command::SavePrompt => self.prompt_path(DialogPurpose::SaveAs, ""),
            Command::Export(view, format) => {
                self.native_dialog(DialogPurpose::Export(view, format));
            }
            Command::ExportTo(view, format, path) => self.start_export(view, format, path),
            Command::SaveTo(path) if files::is_bundled_example(&path) => {
                self.chrome.modal = Modal::ConfirmOverwrite(path);
            }
            Command::SaveTo(path) | Command::OverwriteExample(path) => {
                match self.doc.save_to(path.clone()) {
                    Ok(()) => self.chrome.status = format!("Saved {}", path.display()),
                    Err(e) => {
                        self.chrome.status = format!("Not saved: {e}");
                        self.chrome.message("The session was not saved", e);
                    }
                }
            }
            Command::RestoreRecovery => {
                if let Some(s) = self.doc.data.as_ref().and_then(|d| d.pending_recovery()) {
                    self.replace_session(s, None);
                    self.doc.dirty = true;
                    self.chrome.status = "Restored the unsaved session; save it to keep it.".into();
                }
            }
            Command::DiscardRecovery => self.doc.clear_recovery(),
            _ => {}
        }
    }

    /// Selection, undo and redo, the theme, the about window, drags.
    fn apply_other(&mut self, command: Command) {
        match command {
            Command::Dragging => self.jobs.drag(),
            Command::Select(s) => self.selection = s,
            Command::Undo => {
                if let Some(s) = self.doc.history.undo(&self.doc.session) {
                    self.restore(s);
                    self.chrome.status = "Undone".into();
                }
            }
            Command::Redo => {
                if let Some(s) = self.doc.history.redo(&self.doc.session) {
                    self.restore(s);
                    self.chrome.status = "Redone".into();
                }
            }
            Command::SetDark(d) => self.chrome.dark = d,
            Command::ShowAbout => self.chrome.modal = Modal::About,
            _ => {}
        }
    }

    fn run_guarded(&mut self, action: Guarded) {
        match action {
            Guarded::New => {
                self.replace_session(Session::blank("p^2/2 + q^2/2"), None);
                self.chrome.status = "New session".into();
            }
            Guarded::OpenDialog => self.native_dialog(DialogPurpose::Open),
            Guarded::OpenPrompt => self.prompt_path(DialogPurpose::Open, ""),
            Guarded::OpenPath(p) => self.apply_file(Command::OpenFile(p)),
            Guarded::OpenExample(i) => {
                if let Some((name, text)) = EXAMPLES.get(i) {
                    match files::parse_session(text) {
                        Ok((s, _)) => {
                            self.replace_session(s, None);
                            self.doc.bundled = true;
                            self.chrome.status = format!("Example {name}");
                        }
                        Err(e) => self.chrome.message(format!("Example {name}"), e),
                    }
                }
            }
            Guarded::Builtin => {
                self.replace_session(files::builtin_session(), None);
            }
            Guarded::Quit => {
                if self.chrome.modal != Modal::OfferRestore {
                    self.doc.clear_recovery();
                }
                self.doc.dirty = false;
                self.chrome.quit();
            }
        }
    }

    /// Put a whole new session in place (new, open, example, restore).
    fn replace_session(&mut self, session: Session, file: Option<PathBuf>) {
        self.doc.replace(session, file);
        self.selection = Selection::None;
        self.formula.set_text(&self.doc.session.formula);
        self.plot.reset();
        self.views.reset();
        self.chrome.announcement = None;
        self.jobs.reset();
        self.adopt_formula();
    }

    /// Put an undo/redo snapshot in place.
    fn restore(&mut self, s: Session) {
        self.doc.session = s;
        self.doc.dirty = true;
        self.formula.set_text(&self.doc.session.formula);
        self.plot.reapply_view();
        self.selection = Selection::None;
        self.adopt_formula();
    }

    /// Compile the session's formula and make sure every parameter has a row.
    pub(super) fn adopt_formula(&mut self) {
        self.jobs.compiled = Formula::compile(&self.doc.session.formula)
            .ok()
            .map(Arc::new);
        self.add_new_parameters();
        self.jobs.param_settle_at = Some(self.now + PARAM_SETTLE_SECONDS);
    }

    fn add_new_parameters(&mut self) {
        let Some(f) = &self.jobs.compiled else {
            return;
        };
        for name in f.params() {
            if !self.doc.session.parameters.iter().any(|p| &p.name == name) {
                self.doc.session.parameters.push(Parameter {
                    name: name.clone(),
                    value: crate::session::DEFAULT_PARAM_VALUE,
                    min: crate::session::DEFAULT_PARAM_RANGE.0,
                    max: crate::session::DEFAULT_PARAM_RANGE.1,
                    step: None,
                });
            }
        }
    }

    /// Parameters in the session that the formula no longer names.
    pub(super) fn unused_parameters(&self) -> Vec<String> {
        let Some(f) = &self.jobs.compiled else {
            return Vec::new();
        };
        // the drive's expressions and ħ may name parameters H does not
        let outside = self.doc.session.names_outside_formula();
        self.doc
            .session
            .parameters
            .iter()
            .filter(|p| !f.params().contains(&p.name) && !outside.contains(&p.name))
            .map(|p| p.name.clone())
            .collect()
    }

    /// Drop the parameters that left the formula once its text has been still a while.
    pub(super) fn settle_parameters(&mut self, ctx: &egui::Context) {
        let Some(at) = self.jobs.param_settle_at else {
            return;
        };
        if self.now < at {
            ctx.request_repaint_after(Duration::from_secs_f64((at - self.now).max(0.01)));
            return;
        }
        self.jobs.param_settle_at = None;
        if self.formula.error.is_some() {
            return;
        }
        let unused = self.unused_parameters();
        if !unused.is_empty() {
            self.doc
                .session
                .parameters
                .retain(|p| !unused.contains(&p.name));
        }
    }

    // ----- dialogs and exports -----

    /// Quit instead of closing the window, so unsaved changes are asked about.
    pub(super) fn handle_close_request(
        &mut self,
        ctx: &egui::Context,
        commands: &mut Vec<Command>,
    ) {
        if ctx.input(|i| i.viewport().close_requested()) && !self.chrome.allow_close {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            commands.push(Command::Guarded(Guarded::Quit));
        }
    }

    /// Export `view` of the session as it is now, with the selection the
    /// panes follow, to `path` on a thread of its own.
    fn start_export(&mut self, view: render::View, format: render::ExportFormat, path: PathBuf) {
        let overrides = self.pane_overrides();
        let shown = self.shown_data(view);
        match self.jobs.start_export(
            self.doc.session.clone(),
            overrides,
            view,
            format,
            path,
            shown,
        ) {
            Ok(()) => self.chrome.status = format!("exporting the {}…", view.name()),
            Err(e) => self.chrome.message("Export failed", e),
        }
    }

    /// Show how the exports that finished went.
    pub(super) fn poll_exports(&mut self) {
        for outcome in self.jobs.finished_exports() {
            match outcome {
                Ok(done) => self.chrome.status = done,
                Err(problem) => self.chrome.message("Export failed", problem),
            }
        }
    }

    /// Turn a finished system file dialog into its command.
    pub(super) fn poll_dialog(&mut self, commands: &mut Vec<Command>) {
        let Some(d) = &self.chrome.pending_dialog else {
            return;
        };
        let Some(outcome) = d.poll() else {
            return;
        };
        let purpose = d.purpose;
        self.chrome.pending_dialog = None;
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

    /// The in-app path prompt, filled with a suggestion for `purpose`.
    fn prompt_path(&mut self, purpose: DialogPurpose, note: &str) {
        let text = match purpose {
            DialogPurpose::SaveAs => self.doc.save_as_suggestion().display().to_string(),
            DialogPurpose::Export(view, format) => {
                let name = files::export_file_name(view, format);
                self.doc.export_dir().join(name).display().to_string()
            }
            DialogPurpose::Open => self
                .doc
                .file
                .as_ref()
                .map_or(String::new(), |f| f.display().to_string()),
        };
        self.chrome.modal = Modal::PathPrompt {
            purpose,
            text,
            note: note.to_string(),
        };
    }

    /// The system file dialog for `purpose`, or the path prompt where none can appear.
    fn native_dialog(&mut self, purpose: DialogPurpose) {
        if self.chrome.pending_dialog.is_some() {
            return;
        }
        if !self.chrome.native_dialogs {
            self.prompt_path(purpose, "");
            return;
        }
        let suggestion = self.doc.save_as_suggestion();
        let file_name = |p: &Path| {
            p.file_name().map_or("session.json".to_string(), |n| {
                n.to_string_lossy().into_owned()
            })
        };
        let (dir, name) = match purpose {
            DialogPurpose::SaveAs => (
                suggestion.parent().map(Path::to_path_buf),
                file_name(&suggestion),
            ),
            DialogPurpose::Export(view, format) => (
                Some(self.doc.export_dir()),
                files::export_file_name(view, format),
            ),
            DialogPurpose::Open => (
                self.doc
                    .file
                    .as_ref()
                    .and_then(|f| f.parent().map(Path::to_path_buf)),
                self.doc
                    .file
                    .as_deref()
                    .map_or("session.json".to_string(), file_name),
            ),
        };
        match PendingDialog::start(purpose, dir, &name) {
            Some(d) => self.chrome.pending_dialog = Some(d),
            None => self.prompt_path(purpose, ""),
        }
    }
}
