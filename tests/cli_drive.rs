//! The driven views on the command line: the drive flags, the `melnikov`
//! subcommand, and the drive section of a session file.

use std::f64::consts::PI;
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
        .expect("the binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

const DOUBLE_WELL: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";

/// The threshold F/δ of the driven double well at ω = 1 is
/// 4 cosh(π/2) / (3√2 π) (Guckenheimer & Holmes, *Nonlinear Oscillations,
/// Dynamical Systems, and Bifurcations of Vector Fields*, 1983, §4.5).
#[test]
fn melnikov_threshold_of_the_driven_double_well() {
    let o = run(&[
        "melnikov",
        "--formula",
        DOUBLE_WELL,
        "--set",
        "W=1",
        "--set",
        "F=0.3",
        "--damping",
        "0.25",
        "--period",
        "2*pi/W",
        "--json",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        !stderr(&o).contains("frozen"),
        "a drive was given: {}",
        stderr(&o)
    );
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let ratio = v["threshold_ratio"].as_f64().unwrap();
    let want = 4.0 * (PI / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI);
    assert!((ratio - want).abs() <= 1e-8 * want, "{ratio} vs {want}");
    let amp = v["threshold_amplitude"].as_f64().unwrap();
    assert!((amp - 0.25 * want).abs() <= 1e-8 * want);
    assert_eq!(v["amplitude"], "F", "F is found as the drive's amplitude");
    // above the threshold (F = 0.3 > 0.188) each loop's M has two simple zeros
    for c in v["connections"].as_array().unwrap() {
        assert_eq!(c["zeros"].as_array().unwrap().len(), 2);
    }
    // the text names the threshold and carries the caution
    let t = run(&[
        "melnikov",
        "--formula",
        DOUBLE_WELL,
        "--set",
        "W=1",
        "--set",
        "F=0.3",
        "--damping",
        "0.25",
        "--period",
        "2*pi/W",
    ]);
    let text = stdout(&t);
    assert!(text.contains("exceeds 0.188255"), "{text}");
    assert!(text.contains("not a design margin"), "{text}");
}

#[test]
fn bad_drive_flags_say_what_and_where() {
    let base = ["melnikov", "--formula", DOUBLE_WELL];
    let cases: [(&[&str], &str); 5] = [
        (&["--period", "0"], "--period: must be greater than 0"),
        (&["--period", "2*pi/q"], "--period: may use the parameters"),
        (
            &["--period", "2*pi/W", "--damping", "-1"],
            "--damping: must be at least 0",
        ),
        (&["--period", "2*pi/("], "--period:"),
        (&["--period", "6", "--amplitude", "G"], "--amplitude"),
    ];
    for (extra, want) in cases {
        let mut args: Vec<&str> = base.to_vec();
        args.extend_from_slice(extra);
        let o = run(&args);
        assert_eq!(o.status.code(), Some(2), "{extra:?}");
        assert!(stderr(&o).contains(want), "{extra:?}: {}", stderr(&o));
    }
    // without any drive the request says what is missing
    let o = run(&base);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("no drive"), "{}", stderr(&o));
    // W and F both remove t at 0, but only F enters H affinely; an H where
    // two parameters could switch the drive off asks for a name, and one
    // where none can says so
    for (formula, want) in [
        ("p^2/2 + q^2/2 - A*B*q*cos(t)", "several parameters"),
        (
            "p^2/2 + q^2/2 - A*q*cos(t) - B*q*sin(t)",
            "no parameter switches",
        ),
    ] {
        let o = run(&["melnikov", "--formula", formula, "--period", "2*pi"]);
        assert_eq!(o.status.code(), Some(2));
        assert!(stderr(&o).contains(want), "{}", stderr(&o));
    }
}

#[test]
fn a_session_file_with_a_bad_drive_names_the_field() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.json");
    let text = format!(
        r#"{{"format": "phasewright-session", "version": 1, "formula": "{DOUBLE_WELL}",
            "parameters": [{{"name": "F", "value": 0.3, "min": 0, "max": 1}},
                           {{"name": "W", "value": 1, "min": 0.1, "max": 3}}],
            "drive": {{"period": "2*pi/W", "damping": "-0.5"}}}}"#
    );
    std::fs::write(&path, text).unwrap();
    let o = run(&["analyze", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("drive.damping"), "{}", stderr(&o));
    // a parameter used only by the drive's expressions is not reported unused
    let text = format!(
        r#"{{"format": "phasewright-session", "version": 1, "formula": "{DOUBLE_WELL}",
            "parameters": [{{"name": "F", "value": 0.3, "min": 0, "max": 1}},
                           {{"name": "W", "value": 1, "min": 0.1, "max": 3}},
                           {{"name": "delta", "value": 0.25, "min": 0, "max": 1}}],
            "drive": {{"period": "2*pi/W", "damping": "delta"}}}}"#
    );
    std::fs::write(&path, text).unwrap();
    let o = run(&["melnikov", path.to_str().unwrap(), "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!stderr(&o).contains("delta"), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(v["damping"].as_f64(), Some(0.25));
}
