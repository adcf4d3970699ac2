//! The desktop explorer (eframe/egui). Thin: it shows core results and turns
//! user actions into session edits; it computes no physics itself.

use std::path::PathBuf;

/// Open the explorer window, with the session at `initial` or the built-in example.
pub fn run(initial: Option<PathBuf>) -> Result<(), String> {
    let _ = initial;
    Err("the desktop explorer is not built yet".into())
}
