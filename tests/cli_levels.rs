//! `phasewright levels`: the built binary's levels against the Morse closed
//! form, its tables, and its messages for bad input.

mod common;
use common::{run_binary as run, stderr_of as stderr};
use std::process::Output;

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

const MORSE: &str = "p^2/2 + 8*(1-exp(-0.5*q))^2";
/// The done-when command without its output flag.
const MORSE_ARGS: [&str; 7] = [
    "levels",
    "--formula",
    MORSE,
    "--hbar",
    "0.1",
    "--window",
    "-2,40,-5,5",
];

#[test]
fn morse_levels_are_all_80_bound_levels_of_the_closed_form() {
    // D = 8, a = 0.5, m = 1, ħ = 0.1: ħω = 0.2, Eₙ = ħω(n + ½) − [ħω(n + ½)]²/(4D)
    // and ⌊√(2mD)/(aħ) + ½⌋ = 80 bound levels (P. M. Morse, Phys. Rev. 34
    // (1929) 57).
    let o = run(&[&MORSE_ARGS[..], &["--json"]].concat());
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON");
    assert_eq!(v["hbar"], 0.1);
    assert_eq!(v["formula"], MORSE);
    let wells = v["wells"].as_array().expect("wells");
    assert_eq!(wells.len(), 1);
    let w = &wells[0];
    assert_eq!(w["count"], 80);
    let levels = w["levels"].as_array().expect("levels");
    assert_eq!(levels.len(), 80);
    for (n, l) in levels.iter().enumerate() {
        assert_eq!(l["n"], n);
        let x = 0.2 * (n as f64 + 0.5);
        let exact = x - x * x / 32.0;
        let e = l["energy"].as_f64().expect("energy");
        assert!((e - exact).abs() < 1e-10, "n = {n}: {e} vs {exact}");
    }
    assert!(w["splitting"].is_null());
}

#[test]
fn csv_and_text_list_the_levels_with_the_caution() {
    let o = run(&[&MORSE_ARGS[..], &["--csv"]].concat());
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let csv = stdout(&o);
    let lines: Vec<&str> = csv.lines().collect();
    assert!(
        lines[0].starts_with("well,center_q,center_p,n,energy"),
        "{}",
        lines[0]
    );
    assert_eq!(lines.len(), 1 + 80);
    let o = run(&MORSE_ARGS);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("80 bound levels"), "{text}");
    assert!(
        text.contains("not measured or spectroscopic values"),
        "{text}"
    );
}

#[test]
fn a_symmetric_double_well_reports_its_splitting_in_both_wells() {
    let o = run(&[
        "levels",
        "--formula",
        "p^2/2 + 4*(q^2-1)^2",
        "--hbar",
        "0.2",
        "--window",
        "-2,2,-4,4",
        "--json",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON");
    let wells = v["wells"].as_array().expect("wells");
    assert_eq!(wells.len(), 2);
    let s: Vec<f64> = wells
        .iter()
        .map(|w| w["splitting"]["splitting"].as_f64().expect("splitting"))
        .collect();
    assert!(s[0] > 0.0 && (s[0] - s[1]).abs() <= 1e-9 * s[0], "{s:?}");
}

#[test]
fn the_example_session_gives_its_dozen_levels() {
    let path =
        std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sessions/bond-ladder.json");
    let o = run(&["levels", path.to_str().expect("path"), "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON");
    assert_eq!(v["wells"][0]["count"], 12);
}

#[test]
fn bad_hbar_and_missing_hbar_exit_2_with_a_message() {
    for (h, says) in [
        ("0", "positive"),
        ("-1", "positive"),
        ("abc(", "--hbar abc("),
        ("0.1*q", "not q, p or t"),
    ] {
        let o = run(&["levels", "--formula", MORSE, "--hbar", h]);
        assert_eq!(o.status.code(), Some(2), "--hbar {h}");
        let err = stderr(&o);
        assert!(err.contains(says) && err.contains("--hbar"), "{err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    let o = run(&["levels", "--formula", MORSE]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("give --hbar"), "{}", stderr(&o));
    // No well in view: a saddle alone.
    let o = run(&["levels", "--formula", "p^2/2 - q^2/2", "--hbar", "0.1"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("no center in view"), "{}", stderr(&o));
}

#[test]
fn a_degenerate_minimum_is_a_well_and_an_inflection_is_not() {
    // H = p²/2 + q⁴/4: the bottom q = 0 is degenerate (V'' = 0) but a well;
    // its levels follow Eₙ = [ħ(n + ½)/c]^(4/3), c = 4J/π with J = √2·K(½)/3
    // (the closed form worked out in tests/levels.rs), K from the ellip crate.
    let o = run(&[
        "levels",
        "--formula",
        "p^2/2 + q^4/4",
        "--hbar",
        "0.5",
        "--window",
        "-3,3,-5,5",
        "--json",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("JSON");
    let levels = v["wells"][0]["levels"].as_array().expect("levels");
    let c = 4.0 * 2.0_f64.sqrt() * ellip::ellipk(0.5).expect("K") / (3.0 * std::f64::consts::PI);
    assert!(levels.len() > 10);
    for (n, l) in levels.iter().enumerate() {
        let exact = (0.5 * (n as f64 + 0.5) / c).powf(4.0 / 3.0);
        let e = l["energy"].as_f64().expect("energy");
        assert!((e - exact).abs() < 1e-10 * exact, "n = {n}: {e} vs {exact}");
    }
    // V = q³ has a degenerate point that is no well: nothing to quantize.
    let o = run(&["levels", "--formula", "p^2/2 + q^3", "--hbar", "0.1"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("no center in view"), "{}", stderr(&o));
}
