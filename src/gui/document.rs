//! The document: the session (the only thing saved), the file it came from,
//! the unsaved mark, the undo history, the view it started with, and the
//! recovery copy and recent files kept in the data directory.

use super::files::{self, DataDir};
use super::history::{EditKind, History};
use crate::core::window::Window;
use crate::session::Session;
use std::path::{Path, PathBuf};

/// Autosave to the recovery file this often while there are unsaved changes (s).
const AUTOSAVE_SECONDS: f64 = 4.0;

/// What the user is working on.
pub struct Document {
    /// What the user said; the only part that is saved.
    pub session: Session,
    /// The file the session came from or was saved to.
    pub file: Option<PathBuf>,
    /// Unsaved changes.
    pub dirty: bool,
    /// The session is a shipped example (Save asks for a new file).
    pub(super) bundled: bool,
    pub(super) history: History,
    /// The view the session started with (Reset view goes back to it).
    pub(super) home_view: Window,
    /// Where the recovery copy and the recent files live (None: not kept).
    pub(super) data: Option<DataDir>,
    pub(super) recent: Vec<PathBuf>,
    last_autosave: f64,
    autosaved: Option<Session>,
}

impl Document {
    pub(super) fn new(session: Session, file: Option<PathBuf>, data_dir: Option<PathBuf>) -> Self {
        let mut doc = Document {
            bundled: file.as_deref().is_some_and(files::is_bundled_example),
            home_view: session.view,
            session,
            file,
            dirty: false,
            history: History::default(),
            data: None,
            recent: Vec::new(),
            last_autosave: 0.0,
            autosaved: None,
        };
        doc.set_data_dir(data_dir);
        doc
    }

    /// Keep the recovery copy and recent files in `dir` (None: nowhere).
    pub(super) fn set_data_dir(&mut self, dir: Option<PathBuf>) {
        self.data = dir.map(|dir| DataDir { dir });
        self.recent = self.data.as_ref().map(|d| d.recent()).unwrap_or_default();
    }

    /// The window title: the file's name (or the session's title), with the
    /// unsaved mark.
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

    /// Note an edit about to happen (for undo) and mark the document unsaved.
    pub(super) fn edit(&mut self, kind: EditKind, now: f64, continuing: bool) {
        self.history.record(&self.session, kind, now, continuing);
        self.dirty = true;
    }

    /// Put a whole new session in place (new, open, example, restore).
    pub(super) fn replace(&mut self, session: Session, file: Option<PathBuf>) {
        self.bundled = file.as_deref().is_some_and(files::is_bundled_example);
        self.session = session;
        self.file = file;
        self.dirty = false;
        self.history.clear();
        self.home_view = self.session.view;
        self.autosaved = None;
    }

    /// Where Save as… offers to write (never over a shipped example).
    pub(super) fn save_as_suggestion(&self) -> PathBuf {
        files::save_as_suggestion(self.file.as_deref(), self.bundled, &self.session.title)
    }

    /// The folder exports are offered in: the session file's own folder when
    /// it is the user's, else the documents folder (nothing is written
    /// beside the shipped examples unasked).
    pub(super) fn export_dir(&self) -> PathBuf {
        match self.file.as_deref().and_then(Path::parent) {
            Some(dir) if !self.bundled => dir.to_path_buf(),
            _ => files::documents_dir(),
        }
    }

    /// Write the session to `path`; on success it is the document's file and
    /// the recovery copy is dropped.
    pub(super) fn save_to(&mut self, path: PathBuf) -> Result<(), String> {
        files::save_session(&self.session, &path)?;
        self.bundled = files::is_bundled_example(&path);
        if let Some(d) = &self.data {
            d.clear_recovery();
            self.recent = d.add_recent(&path);
        }
        self.file = Some(path);
        self.dirty = false;
        self.autosaved = None;
        Ok(())
    }

    /// Put `path` first among the recent files.
    pub(super) fn note_recent(&mut self, path: &std::path::Path) {
        if let Some(d) = &self.data {
            self.recent = d.add_recent(path);
        }
    }

    /// Drop the recovery copy (the user discarded or saved the changes).
    pub(super) fn clear_recovery(&self) {
        if let Some(d) = &self.data {
            d.clear_recovery();
        }
    }

    /// Write the recovery copy if there are unsaved changes and the last copy
    /// is older than the autosave interval (or `force`). The problem, if the
    /// copy could not be written.
    pub(super) fn autosave(&mut self, now: f64, force: bool) -> Option<String> {
        if !self.dirty || (!force && now - self.last_autosave < AUTOSAVE_SECONDS) {
            return None;
        }
        self.last_autosave = now;
        if self.autosaved.as_ref() == Some(&self.session) {
            return None;
        }
        let d = self.data.as_ref()?;
        match d.write_recovery(&self.session) {
            Ok(()) => {
                self.autosaved = Some(self.session.clone());
                None
            }
            Err(e) => Some(format!("Recovery copy not written: {e}")),
        }
    }
}
