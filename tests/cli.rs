//! The built binary: exit codes, messages on stderr, and the analysis it
//! prints checked against closed forms.

use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
        .expect("the binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn bad_formula_exits_2_with_its_column() {
    let o = run(&["analyze", "--formula", "p^2/2 - cos(q", "--json"]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    assert!(err.contains("column"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(o.stdout.is_empty());
}

#[test]
fn bad_window_exits_2_naming_the_window() {
    for w in ["1,0,0,1", "a,b,c,d", "-1,1,-1", "-1,1,-1,inf"] {
        let o = run(&["analyze", "--formula", "p^2/2 - cos(q)", "--window", w]);
        assert_eq!(o.status.code(), Some(2), "window {w}");
        let err = stderr(&o);
        assert!(err.contains("--window"), "{err}");
        assert!(!err.contains("panicked"), "{err}");
    }
}

#[test]
fn bad_set_exits_2() {
    for s in ["k", "k=abc", "zz=1", "=1"] {
        let o = run(&["analyze", "--formula", "p^2/2 - k*cos(q)", "--set", s]);
        assert_eq!(o.status.code(), Some(2), "--set {s}");
        assert!(stderr(&o).contains("--set"), "{}", stderr(&o));
    }
}

#[test]
fn missing_session_file_exits_2_with_the_path() {
    let o = run(&["analyze", "/no/such/session.json"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("/no/such/session.json"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn no_system_given_exits_2() {
    let o = run(&["analyze"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--formula"), "{}", stderr(&o));
}

#[test]
fn unknown_subcommand_exits_2() {
    let o = run(&["frobnicate"]);
    assert_eq!(o.status.code(), Some(2));
}
