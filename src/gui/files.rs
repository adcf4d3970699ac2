//! Files the explorer touches: session files (through the session loader),
//! the bundled examples, the data directory with the recovery file and the
//! recent-files list, and native file dialogs run off the UI thread.

use crate::session::Session;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{Receiver, channel};
use std::time::{Duration, Instant};

/// Environment variable that moves the data directory (recovery file, recent files).
pub const DATA_DIR_ENV: &str = "PHASEWRIGHT_DATA_DIR";
/// Environment variable that turns native dialogs off (the in-app path prompt is used).
pub const NO_NATIVE_DIALOG_ENV: &str = "PHASEWRIGHT_NO_NATIVE_DIALOG";

const RECOVERY_FILE: &str = "recovery.json";
const RECENT_FILE: &str = "recent.json";
const RECENT_MAX: usize = 10;

/// Example sessions compiled into the binary: (file name, text).
pub const EXAMPLES: &[(&str, &str)] = &[];

/// The session shown when nothing else is given and no example is bundled.
pub fn builtin_session() -> Session {
    use crate::session::{FORMAT_NAME, FORMAT_VERSION, LevelSettings, Parameter};
    Session {
        format: FORMAT_NAME.into(),
        version: FORMAT_VERSION,
        title: "Double well".into(),
        notes: String::new(),
        formula: "p^2/2 + q^4/4 - a*q^2/2".into(),
        parameters: vec![Parameter { name: "a".into(), value: 1.0, min: -1.0, max: 2.0, step: None }],
        view: crate::core::window::Window { qmin: -2.0, qmax: 2.0, pmin: -1.5, pmax: 1.5 },
        levels: LevelSettings::default(),
        orbits: Vec::new(),
    }
}

/// The first bundled example, or the built-in session.
pub fn startup_session() -> Session {
    EXAMPLES
        .first()
        .and_then(|(_, text)| parse_session(text).ok())
        .map(|(s, _)| s)
        .unwrap_or_else(builtin_session)
}

/// Read a session from text: the session plus the loader's warnings, or the loader's message.
pub fn parse_session(text: &str) -> Result<(Session, Vec<String>), String> {
    let session: Session = serde_json::from_str(text).map_err(|e| format!("not a valid session file: {e}"))?;
    if session.format != crate::session::FORMAT_NAME {
        return Err(format!(
            "field \"format\": expected \"{}\", found \"{}\"",
            crate::session::FORMAT_NAME,
            session.format
        ));
    }
    session.view.validate().map_err(|e| format!("field \"view\": {e}"))?;
    Ok((session, Vec::new()))
}

/// Read a session file.
pub fn load_session(path: &Path) -> Result<(Session, Vec<String>), String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    parse_session(&text).map_err(|e| format!("{}: {e}", path.display()))
}

/// Write a session file (whole file replaced at once).
pub fn save_session(session: &Session, path: &Path) -> Result<(), String> {
    let text = serde_json::to_string_pretty(session).map_err(|e| format!("cannot encode the session: {e}"))?;
    write_atomic(path, &text)
}

fn write_atomic(path: &Path, text: &str) -> Result<(), String> {
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "session".into());
    let tmp = path.with_file_name(format!(".{name}.tmp"));
    std::fs::write(&tmp, text).map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
    std::fs::rename(&tmp, path).map_err(|e| format!("cannot replace {}: {e}", path.display()))
}

/// The user's data directory for phasewright: `$PHASEWRIGHT_DATA_DIR`, else
/// `$XDG_DATA_HOME/phasewright`, else `~/.local/share/phasewright`.
pub fn default_data_dir() -> Option<PathBuf> {
    if let Some(d) = std::env::var_os(DATA_DIR_ENV).filter(|d| !d.is_empty()) {
        return Some(PathBuf::from(d));
    }
    if let Some(d) = std::env::var_os("XDG_DATA_HOME").filter(|d| !d.is_empty()) {
        return Some(PathBuf::from(d).join("phasewright"));
    }
    std::env::var_os("HOME").filter(|d| !d.is_empty()).map(|h| PathBuf::from(h).join(".local/share/phasewright"))
}

/// The recovery file and recent list in one directory.
#[derive(Clone, Debug)]
pub struct DataDir {
    pub dir: PathBuf,
}

impl DataDir {
    pub fn recovery_path(&self) -> PathBuf {
        self.dir.join(RECOVERY_FILE)
    }

    /// A recovery file left by a session that did not end cleanly.
    pub fn pending_recovery(&self) -> Option<Session> {
        let text = std::fs::read_to_string(self.recovery_path()).ok()?;
        parse_session(&text).ok().map(|(s, _)| s)
    }

    pub fn write_recovery(&self, session: &Session) -> Result<(), String> {
        std::fs::create_dir_all(&self.dir).map_err(|e| format!("cannot create {}: {e}", self.dir.display()))?;
        save_session(session, &self.recovery_path())
    }

    pub fn clear_recovery(&self) {
        let _ = std::fs::remove_file(self.recovery_path());
    }

    pub fn recent(&self) -> Vec<PathBuf> {
        std::fs::read_to_string(self.dir.join(RECENT_FILE))
            .ok()
            .and_then(|t| serde_json::from_str::<Vec<PathBuf>>(&t).ok())
            .unwrap_or_default()
    }

    /// Put `path` first in the recent list; returns the new list.
    pub fn add_recent(&self, path: &Path) -> Vec<PathBuf> {
        let mut list = self.recent();
        list.retain(|p| p != path);
        list.insert(0, path.to_path_buf());
        list.truncate(RECENT_MAX);
        if std::fs::create_dir_all(&self.dir).is_ok()
            && let Ok(text) = serde_json::to_string_pretty(&list)
        {
            let _ = write_atomic(&self.dir.join(RECENT_FILE), &text);
        }
        list
    }
}

/// Which native dialog is open.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DialogPurpose {
    Open,
    SaveAs,
}

/// A native dialog running on its own thread.
pub struct PendingDialog {
    pub purpose: DialogPurpose,
    started: Instant,
    rx: Receiver<Option<PathBuf>>,
}

/// What became of a native dialog.
pub enum DialogOutcome {
    Chosen(PathBuf),
    Cancelled,
    /// The dialog could not be shown (no portal, no helper): ask in the app instead.
    Unavailable,
}

/// A dialog that answers "nothing chosen" faster than this was never shown.
const DIALOG_MIN_HUMAN: Duration = Duration::from_millis(250);

impl PendingDialog {
    /// Start a native dialog, or None when native dialogs are turned off.
    pub fn start(purpose: DialogPurpose, start_dir: Option<PathBuf>, file_name: &str) -> Option<PendingDialog> {
        if std::env::var_os(NO_NATIVE_DIALOG_ENV).is_some_and(|v| !v.is_empty() && v != "0") {
            return None;
        }
        let (tx, rx) = channel();
        let name = file_name.to_string();
        let spawned = std::thread::Builder::new().name("phasewright-dialog".into()).spawn(move || {
            let mut d = rfd::FileDialog::new().add_filter("phasewright session", &["json"]);
            if let Some(dir) = start_dir {
                d = d.set_directory(dir);
            }
            let chosen = match purpose {
                DialogPurpose::Open => d.pick_file(),
                DialogPurpose::SaveAs => d.set_file_name(name).save_file(),
            };
            let _ = tx.send(chosen);
        });
        spawned.ok().map(|_| PendingDialog { purpose, started: Instant::now(), rx })
    }

    /// The outcome once the dialog has closed.
    pub fn poll(&self) -> Option<DialogOutcome> {
        match self.rx.try_recv() {
            Ok(Some(p)) => Some(DialogOutcome::Chosen(p)),
            Ok(None) if self.started.elapsed() < DIALOG_MIN_HUMAN => Some(DialogOutcome::Unavailable),
            Ok(None) => Some(DialogOutcome::Cancelled),
            Err(std::sync::mpsc::TryRecvError::Empty) => None,
            Err(std::sync::mpsc::TryRecvError::Disconnected) => Some(DialogOutcome::Unavailable),
        }
    }
}
