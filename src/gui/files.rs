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
pub const EXAMPLES: &[(&str, &str)] = &[
    (
        "biased-resonator.json",
        include_str!("../../sessions/biased-resonator.json"),
    ),
    (
        "loaded-strut.json",
        include_str!("../../sessions/loaded-strut.json"),
    ),
    (
        "imperfect-strut.json",
        include_str!("../../sessions/imperfect-strut.json"),
    ),
    (
        "barrier-crossing.json",
        include_str!("../../sessions/barrier-crossing.json"),
    ),
    (
        "diatomic-bond.json",
        include_str!("../../sessions/diatomic-bond.json"),
    ),
    (
        "tilted-lattice.json",
        include_str!("../../sessions/tilted-lattice.json"),
    ),
    (
        "bond-ladder.json",
        include_str!("../../sessions/bond-ladder.json"),
    ),
    (
        "driven-resonator.json",
        include_str!("../../sessions/driven-resonator.json"),
    ),
    (
        "shaken-lattice.json",
        include_str!("../../sessions/shaken-lattice.json"),
    ),
];

/// The session shown when nothing else is given and no example loads.
pub fn builtin_session() -> Session {
    let mut s = Session::blank("p^2/2 + q^2/2");
    s.title = "Harmonic oscillator".into();
    s
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
    crate::session::load(text).map_err(|e| e.to_string())
}

/// Read a session file.
pub fn load_session(path: &Path) -> Result<(Session, Vec<String>), String> {
    crate::session::load_file(path).map_err(|e| format!("{}: {e}", path.display()))
}

/// Write a session file (whole file replaced at once; a failed save keeps the old file).
pub fn save_session(session: &Session, path: &Path) -> Result<(), String> {
    crate::session::save_atomic(path, session).map_err(|e| e.to_string())
}

fn write_text(path: &Path, text: &str) -> Result<(), String> {
    crate::session::write_atomic(path, |w| w.write_all(text.as_bytes())).map_err(|e| e.to_string())
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
    std::env::var_os("HOME")
        .filter(|d| !d.is_empty())
        .map(|h| PathBuf::from(h).join(".local/share/phasewright"))
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
        std::fs::create_dir_all(&self.dir)
            .map_err(|e| format!("cannot create {}: {e}", self.dir.display()))?;
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
            let _ = write_text(&self.dir.join(RECENT_FILE), &text);
        }
        list
    }
}

/// Which native dialog is open.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DialogPurpose {
    Open,
    SaveAs,
    /// Export a view as a figure or table.
    Export(crate::render::View, crate::render::ExportFormat),
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

/// Whether a native dialog can be shown at all. On Linux the system file
/// chooser is reached over the D-Bus session bus; under a plain X server
/// without one the request never produces a window, so the explorer asks for
/// the path itself instead of waiting for a dialog that cannot appear.
pub fn native_dialogs_reachable() -> bool {
    #[cfg(target_os = "linux")]
    {
        let has = |name: &str| std::env::var_os(name).is_some_and(|v| !v.is_empty());
        if has("DBUS_SESSION_BUS_ADDRESS") {
            return true;
        }
        std::env::var_os("XDG_RUNTIME_DIR")
            .filter(|d| !d.is_empty())
            .is_some_and(|d| Path::new(&d).join("bus").exists())
    }
    #[cfg(not(target_os = "linux"))]
    {
        true
    }
}

/// A dialog that answers "nothing chosen" faster than this was never shown.
const DIALOG_MIN_HUMAN: Duration = Duration::from_millis(250);

impl PendingDialog {
    /// Start a native dialog, or None when native dialogs are turned off.
    pub fn start(
        purpose: DialogPurpose,
        start_dir: Option<PathBuf>,
        file_name: &str,
    ) -> Option<PendingDialog> {
        if std::env::var_os(NO_NATIVE_DIALOG_ENV).is_some_and(|v| !v.is_empty() && v != "0")
            || !native_dialogs_reachable()
        {
            return None;
        }
        let (tx, rx) = channel();
        let name = file_name.to_string();
        let spawned = std::thread::Builder::new()
            .name("phasewright-dialog".into())
            .spawn(move || {
                let mut d = match purpose {
                    DialogPurpose::Export(_, format) => rfd::FileDialog::new()
                        .add_filter(export_filter(format), &[export_extension(format)]),
                    _ => rfd::FileDialog::new().add_filter("phasewright session", &["json"]),
                };
                if let Some(dir) = start_dir {
                    d = d.set_directory(dir);
                }
                let chosen = match purpose {
                    DialogPurpose::Open => d.pick_file(),
                    DialogPurpose::SaveAs | DialogPurpose::Export(..) => {
                        d.set_file_name(name).save_file()
                    }
                };
                let _ = tx.send(chosen);
            });
        spawned.ok().map(|_| PendingDialog {
            purpose,
            started: Instant::now(),
            rx,
        })
    }

    /// The outcome once the dialog has closed.
    pub fn poll(&self) -> Option<DialogOutcome> {
        match self.rx.try_recv() {
            Ok(Some(p)) => Some(DialogOutcome::Chosen(p)),
            Ok(None) if self.started.elapsed() < DIALOG_MIN_HUMAN => {
                Some(DialogOutcome::Unavailable)
            }
            Ok(None) => Some(DialogOutcome::Cancelled),
            Err(std::sync::mpsc::TryRecvError::Empty) => None,
            Err(std::sync::mpsc::TryRecvError::Disconnected) => Some(DialogOutcome::Unavailable),
        }
    }
}

/// The file extension an export writes.
pub fn export_extension(format: crate::render::ExportFormat) -> &'static str {
    use crate::render::{ExportFormat, FigureFormat};
    match format {
        ExportFormat::Figure(FigureFormat::Svg) => "svg",
        ExportFormat::Figure(FigureFormat::Png) => "png",
        ExportFormat::Csv(_) => "csv",
        ExportFormat::Json(_) => "json",
    }
}

fn export_filter(format: crate::render::ExportFormat) -> &'static str {
    use crate::render::{ExportFormat, FigureFormat};
    match format {
        ExportFormat::Figure(FigureFormat::Svg) => "SVG figure",
        ExportFormat::Figure(FigureFormat::Png) => "PNG image",
        ExportFormat::Csv(_) => "CSV table",
        ExportFormat::Json(_) => "JSON table",
    }
}

/// A file name for an export of `view`: "sweep.png", "portrait-wells.csv".
pub fn export_file_name(view: crate::render::View, format: crate::render::ExportFormat) -> String {
    use crate::render::{ExportFormat, PortraitTable, View};
    let table = match (view, format) {
        (View::Portrait, ExportFormat::Csv(t) | ExportFormat::Json(t)) => match t {
            PortraitTable::Equilibria => "-equilibria",
            PortraitTable::Wells => "-wells",
            PortraitTable::Orbits => "-orbits",
            PortraitTable::Samples => "-samples",
        },
        _ => "",
    };
    format!("{}{table}.{}", view.name(), export_extension(format))
}

/// Environment variable naming the user's documents folder (freedesktop user directories).
pub const DOCUMENTS_ENV: &str = "XDG_DOCUMENTS_DIR";
/// Longest file-name stem made from a session title (characters).
const SLUG_MAX: usize = 60;
/// How many numbered names Save as… tries before giving up on a free one.
const FRESH_NAME_TRIES: usize = 10_000;

/// The folder a new session file is offered in: `$XDG_DOCUMENTS_DIR` if set,
/// else `~/Documents` if it exists, else the working directory.
pub fn documents_dir() -> PathBuf {
    if let Some(d) = std::env::var_os(DOCUMENTS_ENV).filter(|d| !d.is_empty()) {
        return PathBuf::from(d);
    }
    if let Some(home) = std::env::var_os("HOME").filter(|d| !d.is_empty()) {
        let docs = PathBuf::from(home).join("Documents");
        if docs.is_dir() {
            return docs;
        }
    }
    std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."))
}

/// A safe file-name stem from a session title: lowercase ASCII letters and
/// digits, every other run of characters one hyphen, at most 60 characters;
/// "session" when nothing is left ("Imperfect strut (P = 0.52)" →
/// "imperfect-strut-p-0-52").
pub fn file_slug(title: &str) -> String {
    let mut slug = String::new();
    for c in title.chars() {
        if c.is_ascii_alphanumeric() {
            if slug.len() >= SLUG_MAX {
                break;
            }
            slug.push(c.to_ascii_lowercase());
        } else if !slug.is_empty() && !slug.ends_with('-') {
            slug.push('-');
        }
    }
    let slug = slug.trim_end_matches('-');
    if slug.is_empty() {
        "session".into()
    } else {
        slug.to_string()
    }
}

/// `dir/stem.json`, or `dir/stem-2.json`, `dir/stem-3.json` … whichever does not exist yet.
pub fn fresh_path(dir: &Path, stem: &str) -> PathBuf {
    let first = dir.join(format!("{stem}.json"));
    if !first.exists() {
        return first;
    }
    (2..FRESH_NAME_TRIES)
        .map(|n| dir.join(format!("{stem}-{n}.json")))
        .find(|p| !p.exists())
        .unwrap_or(first)
}

/// Whether `path` is one of the examples shipped with the program: a file in
/// the source tree's `sessions/` folder under an example's name, or a file
/// under an example's name whose text is that example's text.
pub fn is_bundled_example(path: &Path) -> bool {
    let Some(name) = path.file_name().and_then(|n| n.to_str()) else {
        return false;
    };
    let Some((_, text)) = EXAMPLES.iter().find(|(n, _)| *n == name) else {
        return false;
    };
    let shipped = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sessions")
        .join(name);
    let same_file = match (path.canonicalize(), shipped.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    same_file || std::fs::read_to_string(path).is_ok_and(|t| t == *text)
}

/// Where Save as… offers to write: the session's own file when it has one of
/// the user's, else a new file in the documents folder named after the title.
pub fn save_as_suggestion(file: Option<&Path>, bundled: bool, title: &str) -> PathBuf {
    match file {
        Some(f) if !bundled => f.to_path_buf(),
        _ => fresh_path(&documents_dir(), &file_slug(title)),
    }
}
