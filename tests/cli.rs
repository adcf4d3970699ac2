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

fn json(o: &Output) -> serde_json::Value {
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(o));
    serde_json::from_slice(&o.stdout).expect("stdout is JSON")
}

fn sessions_dir() -> std::path::PathBuf {
    std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sessions")
}

#[test]
fn flags_override_a_sessions_values() {
    let file = sessions_dir().join("tilted-lattice.json");
    let file = file.to_string_lossy();
    let o = run(&[
        "analyze",
        &file,
        "--set",
        "F=0.5",
        "--window",
        "-1,2,-0.5,0.5",
        "--json",
    ]);
    let v = json(&o);
    assert_eq!(v["parameters"]["F"], 0.5);
    assert_eq!(v["parameters"]["V0"], 1.0);
    assert_eq!(v["window"]["qmin"], -1.0);
    assert_eq!(v["window"]["pmax"], 0.5);
    assert_eq!(v["formula"], "p^2/2 - V0*cos(q) - F*q");

    let o = run(&["analyze", &file, "--formula", "p^2/2 + V0*q^2/2", "--json"]);
    let v = json(&o);
    assert_eq!(v["formula"], "p^2/2 + V0*q^2/2");
    // F is listed by the session but the new formula does not use it: a warning.
    assert!(stderr(&o).contains("`F`"), "{}", stderr(&o));
}

#[test]
fn set_outside_a_sessions_range_widens_the_range() {
    let file = sessions_dir().join("loaded-strut.json");
    let o = run(&[
        "analyze",
        &file.to_string_lossy(),
        "--set",
        "P=7.5",
        "--json",
    ]);
    assert_eq!(json(&o)["parameters"]["P"], 7.5);
}

#[test]
fn formula_parameters_without_set_get_the_default_with_a_warning() {
    let o = run(&["analyze", "--formula", "p^2/2 - k*cos(q)", "--json"]);
    assert_eq!(json(&o)["parameters"]["k"], 1.0);
    assert!(stderr(&o).contains("`k`"), "{}", stderr(&o));
    let o = run(&[
        "analyze",
        "--formula",
        "p^2/2 - k*cos(q)",
        "--set",
        "k=2",
        "--json",
    ]);
    assert_eq!(json(&o)["parameters"]["k"], 2.0);
    assert!(stderr(&o).is_empty(), "{}", stderr(&o));
}

#[test]
fn a_bad_session_file_exits_2_naming_the_field() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("bad.json");
    std::fs::write(
        &path,
        r#"{"format": "phasewright-session", "version": 1, "formula": "p^2/2",
            "view": {"qmin": 1, "qmax": 0, "pmin": -1, "pmax": 1}}"#,
    )
    .expect("write");
    for cmd in ["analyze", "open"] {
        let o = run(&[cmd, &path.to_string_lossy()]);
        assert_eq!(o.status.code(), Some(2), "{cmd}");
        let err = stderr(&o);
        assert!(err.contains("bad.json"), "{err}");
        assert!(err.contains("window.qmin"), "{err}");
    }
}

#[test]
fn the_table_names_its_sections() {
    let o = run(&["analyze", "--formula", "p^2/2 + q^2/2"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let out = String::from_utf8_lossy(&o.stdout);
    for section in [
        "H(q, p) = p^2/2 + q^2/2",
        "Equilibria",
        "Wells",
        "Separatrix connections",
    ] {
        assert!(out.contains(section), "{out}");
    }
}

#[test]
fn pendulum_has_centers_at_even_and_saddles_at_odd_multiples_of_pi() {
    // H = p²/2 − cos q: equilibria where sin q = 0, p = 0; centers at 2πn with
    // eigenvalues ±i (ω² = cos 0 = 1), saddles at (2n+1)π with eigenvalues ±1
    // (closed form of the linearisation). The separatrix through the saddles is
    // at H = 1, so the well at 0 escapes at energy 1 (the pendulum separatrix
    // energy, common practice).
    use std::f64::consts::PI;
    let o = run(&[
        "analyze",
        "--formula",
        "p^2/2 - cos(q)",
        "--window",
        "-7,7,-3,3",
        "--json",
    ]);
    let v = json(&o);
    let eq = v["equilibria"].as_array().expect("equilibria[]");
    let expected = [
        (-2.0 * PI, "center"),
        (-PI, "saddle"),
        (0.0, "center"),
        (PI, "saddle"),
        (2.0 * PI, "center"),
    ];
    assert_eq!(eq.len(), expected.len(), "{eq:?}");
    let num = |x: &serde_json::Value| x.as_f64().expect("a number");
    for (e, (q, kind)) in eq.iter().zip(expected) {
        assert!((num(&e["q"]) - q).abs() < 1e-8, "{e}");
        assert!(num(&e["p"]).abs() < 1e-8, "{e}");
        assert_eq!(e["kind"], kind, "{e}");
        let energy = if kind == "center" { -1.0 } else { 1.0 };
        assert!((num(&e["energy"]) - energy).abs() < 1e-12, "{e}");
        let ev = &e["eigenvalues"];
        let (re, im) = if kind == "center" {
            (0.0, 1.0)
        } else {
            (1.0, 0.0)
        };
        let mut pair: Vec<(f64, f64)> = (0..2).map(|i| (num(&ev[i][0]), num(&ev[i][1]))).collect();
        pair.sort_by(|a, b| (a.0 + a.1).total_cmp(&(b.0 + b.1)));
        for ((r, i), sign) in pair.iter().zip([-1.0, 1.0]) {
            assert!((r - sign * re).abs() < 1e-9, "{e}");
            assert!((i - sign * im).abs() < 1e-9, "{e}");
        }
    }
    let wells = v["wells"].as_array().expect("wells[]");
    let at_zero = wells
        .iter()
        .find(|w| num(&w["q"]).abs() < 1e-8)
        .expect("a well at the center q = 0");
    assert!((num(&at_zero["energy"]) + 1.0).abs() < 1e-12);
    assert!(
        (num(&at_zero["escape_energy"]) - 1.0).abs() < 1e-9,
        "{at_zero}"
    );
    assert!(v["connections"].is_array());
}

#[test]
fn a_bare_file_argument_is_opened_like_open_and_a_bad_one_exits_2() {
    // `phasewright FILE` checks the file before any window opens, as `open` does.
    let o = run(&["no-such-session.json"]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(e.contains("no-such-session.json"), "{e}");
    let o = run(&["open", "no-such-session.json"]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn a_formula_starting_with_a_minus_sign_is_a_value_not_a_flag() {
    // H = −cos q + p²/2: the pendulum, center at q = 0 (common practice).
    let o = run(&[
        "analyze",
        "--formula",
        "-cos(q) + p^2/2",
        "--window",
        "-1,1,-1,1",
        "--json",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    let eq = v["equilibria"].as_array().expect("equilibria");
    assert_eq!(eq.len(), 1);
    assert_eq!(eq[0]["kind"], "center");
    assert!(eq[0]["q"].as_f64().expect("q").abs() < 1e-12);
}
