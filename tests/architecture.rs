//! The boundary check: the computational core never reaches a view crate, the
//! command-line parser or the file system.

use std::path::{Path, PathBuf};

/// Names that must not appear anywhere in `src/core` (code or comments).
const FORBIDDEN: &[&str] = &["egui", "eframe", "egui_plot", "rfd", "clap", "std::fs"];

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let entries = match std::fs::read_dir(dir) {
        Ok(e) => e,
        Err(e) => panic!("cannot list {}: {e}", dir.display()),
    };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|x| x == "rs") {
            out.push(path);
        }
    }
}

/// Names that must not appear in the layers between the core and the explorer
/// (figures, scenes, the session format, the view requests).
const GUI_NAMES: &[&str] = &["egui", "eframe", "egui_plot", "rfd"];

/// Forbidden names found in `text`, as whole words (so "rfd" does not match inside "surfdata").
fn offences(text: &str) -> Vec<(usize, &'static str)> {
    offences_of(text, FORBIDDEN)
}

fn offences_of(text: &str, names: &[&'static str]) -> Vec<(usize, &'static str)> {
    let mut found = Vec::new();
    for (n, line) in text.lines().enumerate() {
        for &name in names {
            let mut from = 0;
            while let Some(i) = line[from..].find(name) {
                let at = from + i;
                let before = line[..at].chars().next_back();
                let after = line[at + name.len()..].chars().next();
                let word = |c: Option<char>| c.is_some_and(|c| c.is_alphanumeric() || c == '_');
                if !word(before) && !word(after) {
                    found.push((n + 1, name));
                }
                from = at + name.len();
            }
        }
    }
    found
}

/// Every forbidden name in `files`, as "path:line mentions name".
fn scan(files: &[PathBuf], names: &[&'static str]) -> Vec<String> {
    let mut bad = Vec::new();
    for f in files {
        let text = match std::fs::read_to_string(f) {
            Ok(t) => t,
            Err(e) => panic!("cannot read {}: {e}", f.display()),
        };
        for (line, name) in offences_of(&text, names) {
            bad.push(format!("{}:{line} mentions {name}", f.display()));
        }
    }
    bad
}

#[test]
fn core_never_mentions_view_crates_clap_or_the_file_system() {
    let core = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("src")
        .join("core");
    let mut files = Vec::new();
    rust_files(&core, &mut files);
    assert!(
        files.iter().any(|f| f.ends_with("system.rs")),
        "src/core not found at {}",
        core.display()
    );
    let bad = scan(&files, FORBIDDEN);
    assert!(
        bad.is_empty(),
        "the core must stay free of views and files:\n{}",
        bad.join("\n")
    );
}

#[test]
fn figures_scenes_sessions_and_requests_never_mention_the_gui() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = vec![src.join("scene.rs"), src.join("numbers.rs")];
    for dir in ["render", "session", "request"] {
        rust_files(&src.join(dir), &mut files);
    }
    assert!(
        files.len() >= 10,
        "render/, session/ or request/ not found under {}",
        src.display()
    );
    let bad = scan(&files, GUI_NAMES);
    assert!(
        bad.is_empty(),
        "figures, scenes, sessions and requests must not know the explorer:\n{}",
        bad.join("\n")
    );
}

#[test]
fn the_scan_catches_what_it_should_and_only_that() {
    // the detector itself, on known text
    assert_eq!(offences("use egui::Ui;"), vec![(1, "egui")]);
    assert_eq!(
        offences("let x = 1;\nlet t = std::fs::read(p);"),
        vec![(2, "std::fs")]
    );
    assert_eq!(offences("use clap::Parser;"), vec![(1, "clap")]);
    assert!(offences("egui_plot::Line").contains(&(1, "egui_plot")));
    assert!(offences("let surfdata = eclapse; // rfdx").is_empty());
}
