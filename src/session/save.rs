//! Saving a session: a new file is written beside the target and renamed
//! over it, so that a failed save never destroys the old one.

use super::Session;
use std::fmt;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Why a save failed, with the file it was writing.
#[derive(Debug)]
pub struct SaveError {
    pub path: PathBuf,
    pub source: io::Error,
}

impl fmt::Display for SaveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "cannot save {}: {}", self.path.display(), self.source)
    }
}

impl std::error::Error for SaveError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        Some(&self.source)
    }
}

/// Write `session` to `path` atomically (see [`write_atomic`]).
pub fn save_atomic(path: &Path, session: &Session) -> Result<(), SaveError> {
    let text = session.to_json_pretty();
    write_atomic(path, |w| {
        w.write_all(text.as_bytes())?;
        w.write_all(b"\n")
    })
}

static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// Replace `path` with what `write` produces, so that a crash or an error
/// midway never leaves a half-written file: write a temporary file in the
/// same folder, flush and sync it, then rename it over the target. On any
/// error the temporary file is removed and the old file is untouched.
pub fn write_atomic(
    path: &Path,
    write: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> Result<(), SaveError> {
    let err = |source| SaveError {
        path: path.to_path_buf(),
        source,
    };
    let name = path.file_name().ok_or_else(|| {
        err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "the path does not name a file",
        ))
    })?;
    // Renaming over a device, a pipe or a folder would replace it (as root,
    // even /dev/null); a session goes only onto a regular file or a new name.
    if let Ok(meta) = std::fs::metadata(path)
        && !meta.is_file()
    {
        return Err(err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "the path names a folder, device or pipe, not a file; choose a file name",
        )));
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let tmp = dir.join(format!(
        ".{}.{}-{}.tmp",
        name.to_string_lossy(),
        std::process::id(),
        TEMP_COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    let result = (|| -> io::Result<()> {
        let file = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)?;
        let mut buf = io::BufWriter::new(file);
        write(&mut buf)?;
        let file = buf.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        drop(file);
        std::fs::rename(&tmp, path)?;
        // Make the rename itself durable where the platform allows it.
        if let Ok(d) = std::fs::File::open(&dir) {
            let _ = d.sync_all();
        }
        Ok(())
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(err(e));
    }
    Ok(())
}
