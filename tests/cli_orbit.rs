//! The `orbit` subcommand of the built binary: measurements against closed
//! forms, CSV samples, and clear refusals of bad input.

use std::f64::consts::PI;
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

fn json(o: &Output) -> serde_json::Value {
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(o));
    serde_json::from_slice(&o.stdout).expect("stdout is JSON")
}

#[test]
fn pendulum_orbit_from_ninety_degrees_reports_the_4k_period() {
    // T = 4K(1/√2) = 7.416298709205488 (A&S 17.6; from memory, checked in tests/orbits.rs).
    let o = run(&[
        "orbit",
        "--formula",
        "p^2/2 - cos(q)",
        "--q0",
        "1.5707963267948966",
        "--p0",
        "0",
        "--json",
    ]);
    let v = json(&o);
    let period = v["period"].as_f64().unwrap();
    assert!(
        (period - 7.416298709205488).abs() / 7.416298709205488 < 1e-10,
        "T = {period}"
    );
    assert_eq!(v["closed"], true);
    assert_eq!(v["stop_reason"], "closed");
    assert_eq!(v["motion"], "libration");
    assert_eq!(v["method"], "nystrom6");
    let frequency = v["frequency"].as_f64().unwrap();
    assert!((frequency * period - 2.0 * PI).abs() < 1e-12);
    assert!(v["action"].as_f64().unwrap() > 0.0);
    assert!(v["relative_energy_error"].as_f64().unwrap() < 1e-10);
    assert!(v["steps"].as_u64().unwrap() > 100);
}

#[test]
fn an_orbit_that_does_not_close_reports_a_null_period() {
    // H = p²/2 − q⁴ escapes (common practice): no period, stops at the bounds.
    let o = run(&[
        "orbit",
        "--formula",
        "p^2/2 - q^4",
        "--q0",
        "1",
        "--p0",
        "1",
        "--json",
    ]);
    let v = json(&o);
    assert!(v["period"].is_null());
    assert_eq!(v["closed"], false);
    assert!(
        ["left-bounds", "non-finite"].contains(&v["stop_reason"].as_str().unwrap()),
        "{v}"
    );
}

#[test]
fn csv_output_lists_samples_on_the_energy_level() {
    // Harmonic oscillator H = (p² + q²)/2 over a given duration: H stays 1/2 (closed form).
    let o = run(&[
        "orbit",
        "--formula",
        "(p^2 + q^2)/2",
        "--q0",
        "1",
        "--p0",
        "0",
        "--duration",
        "-6",
        "--method",
        "gauss6",
        "--csv",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = String::from_utf8(o.stdout).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("t,q,p,E"));
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
        .collect();
    assert!(rows.len() > 20);
    for r in &rows {
        assert_eq!(r.len(), 4);
        assert!((r[3] - 0.5).abs() < 1e-12, "{r:?}");
        assert!((r[1] - r[0].cos()).abs() < 1e-9, "{r:?}");
    }
    assert!(
        (rows.last().unwrap()[0] + 6.0).abs() < 1e-12,
        "ends at t = −6"
    );
}

#[test]
fn a_session_file_supplies_the_system_and_the_seeded_start() {
    // The tilted lattice's first seeded orbit starts at (0.6, 0) inside a well.
    let file = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("sessions")
        .join("tilted-lattice.json");
    let o = run(&["orbit", &file.to_string_lossy(), "--json"]);
    let v = json(&o);
    assert_eq!(v["q0"], 0.6);
    assert_eq!(v["formula"], "p^2/2 - V0*cos(q) - F*q");
    let o = run(&[
        "orbit",
        &file.to_string_lossy(),
        "--q0",
        "0.1",
        "--p0",
        "0.1",
        "--set",
        "F=0",
        "--json",
    ]);
    let v = json(&o);
    assert_eq!(v["closed"], true, "{v}");
    assert_eq!(v["parameters"]["F"], 0.0);
}

#[test]
fn bad_orbit_input_exits_2_naming_the_flag() {
    let cases: [(&[&str], &str); 5] = [
        (&["--q0", "0.5", "--p0", "0", "--method", "rk4"], "yoshida6"),
        (&["--q0", "0.5"], "--p0"),
        (&["--q0", "50", "--p0", "0"], "--q0/--p0"),
        (
            &["--q0", "0.5", "--p0", "0", "--duration", "0"],
            "--duration",
        ),
        (&["--q0", "0.5", "--p0", "0", "--step", "0"], "--step"),
    ];
    for (extra, needle) in cases {
        let mut args = vec!["orbit", "--formula", "p^2/2 - cos(q)"];
        args.extend_from_slice(extra);
        let o = run(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        let err = stderr(&o);
        assert!(err.contains(needle), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    let o = run(&[
        "orbit",
        "--formula",
        "q*p + q^2",
        "--q0",
        "0.5",
        "--p0",
        "0",
        "--method",
        "verlet",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("T(p) + V(q)"), "{}", stderr(&o));
}

#[test]
fn a_product_of_momenta_is_still_integrated_by_the_nystrom_method() {
    // p*p/2 + q*q/2 is the harmonic oscillator, T quadratic in p, separable
    // (common practice): auto picks the sixth-order Nyström splitting.
    let o = run(&[
        "orbit",
        "--formula",
        "p*p/2 + q*q/2",
        "--q0",
        "1",
        "--p0",
        "0",
        "--json",
    ]);
    let v = json(&o);
    assert_eq!(v["method"], "nystrom6");
    let period = v["period"].as_f64().unwrap();
    assert!((period - 2.0 * PI).abs() < 1e-10, "T = {period}");
}
