//! The nastiest inputs found or designed while hardening the two doors, kept
//! as files: `tests/corpus/formulas/NAME.formula` (the exact bytes of a
//! formula) and `tests/corpus/sessions/NAME.json` (a session file), each with
//! `NAME.expect` beside it holding the exact outcome, one line each:
//! `error: MESSAGE` for a refusal, `ok` for a success, then `warning: MESSAGE`
//! for every warning in order. `PHASEWRIGHT_CORPUS_BLESS=1` rewrites the
//! `.expect` files from the current outcome (review the diff before committing).

use phasewright::core::formula::Formula;
use phasewright::session;
use std::path::{Path, PathBuf};

const BLESS_ENV: &str = "PHASEWRIGHT_CORPUS_BLESS";

fn corpus(kind: &str, ext: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/corpus")
        .join(kind);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == ext))
        .collect();
    files.sort();
    assert!(
        files.len() >= 10,
        "the {kind} corpus has {} files",
        files.len()
    );
    files
}

/// Compare `outcome` with the `.expect` file beside `input` (or write it when blessing).
fn compare(input: &Path, outcome: &str, failures: &mut Vec<String>) {
    let expect = input.with_extension("expect");
    if std::env::var_os(BLESS_ENV).is_some() {
        if let Err(e) = std::fs::write(&expect, outcome) {
            failures.push(format!("{}: {e}", expect.display()));
        }
        return;
    }
    match std::fs::read_to_string(&expect) {
        Ok(want) if want == outcome => {}
        Ok(want) => failures.push(format!(
            "{}:\n  expected:\n{want}\n  got:\n{outcome}",
            input.display()
        )),
        Err(e) => failures.push(format!("{}: {e}", expect.display())),
    }
}

#[test]
fn formula_corpus_gives_the_recorded_messages() {
    let mut failures = Vec::new();
    for path in corpus("formulas", "formula") {
        let bytes = std::fs::read(&path).unwrap_or_default();
        let src = String::from_utf8_lossy(&bytes);
        let outcome = match Formula::compile(&src) {
            Err(e) => format!("error: {e}\n"),
            Ok(f) => {
                let mut s = "ok\n".to_string();
                for w in f.warnings() {
                    s.push_str(&format!("warning: {w}\n"));
                }
                s
            }
        };
        compare(&path, &outcome, &mut failures);
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn session_corpus_gives_the_recorded_messages() {
    let mut failures = Vec::new();
    for path in corpus("sessions", "json") {
        let bytes = std::fs::read(&path).unwrap_or_default();
        let text = String::from_utf8_lossy(&bytes);
        let outcome = match session::load(&text) {
            Err(e) => format!("error: {e}\n"),
            Ok((_, warnings)) => {
                let mut s = "ok\n".to_string();
                for w in warnings {
                    s.push_str(&format!("warning: {w}\n"));
                }
                s
            }
        };
        compare(&path, &outcome, &mut failures);
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
