//! The safe basins on the command line: `basin`, `erosion`, their flags and
//! figures, against closed forms of the double well.

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

const DRIVEN: &str = "p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)";

fn driven(extra: &[&str]) -> Vec<String> {
    let mut v: Vec<String> = [
        "--formula",
        DRIVEN,
        "--set",
        "W=1.2",
        "--period",
        "2*pi/W",
        "--damping",
        "0.088",
        "--amplitude",
        "F",
        "--window",
        "-1.9,1.9,-1.2,1.2",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    v.extend(extra.iter().map(|s| s.to_string()));
    v
}

fn run_with(cmd: &str, args: &[String]) -> Output {
    let mut all = vec![cmd];
    all.extend(args.iter().map(String::as_str));
    run(&all)
}

/// At zero drive each well's safe set is its lobe of the separatrix, area
/// 4/3 each (closed form 2∫₀^√2 q√(1 − q²/2) dq), so the JSON gives
/// integrity 1 and an area near 4/3 on a 100 × 100 lattice.
#[test]
fn basin_json_at_zero_drive_gives_the_lobe_area() {
    let o = run_with(
        "basin",
        &driven(&["--set", "F=0", "--grid", "100", "--periods", "10", "--json"]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let wells = v["wells"].as_array().unwrap();
    assert_eq!(wells.len(), 2);
    for w in wells {
        let area = w["safe_area"].as_f64().unwrap();
        assert!((area - 4.0 / 3.0).abs() < 0.02, "{area}");
        assert_eq!(w["integrity"].as_f64().unwrap(), 1.0);
    }
    assert_eq!(v["lattice"], 100);
    assert_eq!(v["periods"], 10);
}

/// The CSV mask has one row per start; its safe starts are the lobe's
/// (H₀ < 0, closed form) at zero drive.
#[test]
fn basin_csv_is_the_mask() {
    let o = run_with(
        "basin",
        &driven(&["--set", "F=0", "--grid", "20", "--periods", "5", "--csv"]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let mut lines = text.lines();
    let header = lines.next().unwrap();
    assert!(header.starts_with("q,p,well"), "{header}");
    let rows: Vec<Vec<f64>> = lines
        .map(|l| {
            l.split(',')
                .map(|c| c.parse().unwrap_or(f64::NAN))
                .collect()
        })
        .collect();
    assert_eq!(rows.len(), 400);
    for r in &rows {
        let (q, p) = (r[0], r[1]);
        let h0 = p * p / 2.0 - q * q / 2.0 + q.powi(4) / 4.0;
        assert_eq!(r[4] == 1.0, h0 < 0.0, "q = {q}, p = {p}");
    }
}

/// The erosion curve: integrity 1 at F = 0, the Melnikov threshold of the
/// double well on the axis (closed form δ·4cosh(πω/2)/(3√2πω),
/// Guckenheimer & Holmes 1983 §4.5), and a figure with the dashed
/// threshold line.
#[test]
fn erosion_text_json_and_figure() {
    let dir = tempfile::tempdir().unwrap();
    let args = driven(&[
        "--param",
        "F",
        "--from",
        "0",
        "--to",
        "0.3",
        "--values",
        "4",
        "--grid",
        "30",
        "--periods",
        "20",
    ]);
    let mut json = args.clone();
    json.push("--json".into());
    let o = run_with("erosion", &json);
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 4);
    assert_eq!(pts[0]["integrity"][0].as_f64().unwrap(), 1.0);
    let want = 0.088 * 4.0 * (PI * 0.6).cosh() / (3.0 * 2f64.sqrt() * PI * 1.2);
    let t = v["threshold"].as_f64().unwrap();
    assert!((t - want).abs() < 1e-6 * want, "{t} vs {want}");
    let text = stdout(&run_with("erosion", &args));
    assert!(text.contains("Melnikov threshold"), "{text}");
    assert!(text.contains("licensed"), "{text}");
    let svg = dir.path().join("erosion.svg");
    let mut fig = args.clone();
    fig.extend(["-o".to_string(), svg.display().to_string()]);
    let o = run_with("erosion", &fig);
    assert!(o.status.success(), "{}", stderr(&o));
    let body = std::fs::read_to_string(&svg).unwrap();
    assert!(body.contains("class=\"threshold\""), "threshold line drawn");
    assert!(body.contains("stroke-dasharray"), "dashed");
}

/// `render --view basin` draws the mask as cells, and bad input gets a
/// message naming the flag.
#[test]
fn render_basin_and_bad_flags() {
    let dir = tempfile::tempdir().unwrap();
    let png = dir.path().join("basin.png");
    // the example session on a small lattice (its 200 × 200 is benchmark work)
    let example = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/sessions/driven-resonator.json"
    ))
    .unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&example).unwrap();
    v["basin"]["lattice"] = serde_json::json!(24);
    v["basin"]["periods"] = serde_json::json!(5);
    let session = dir.path().join("small.json");
    std::fs::write(&session, v.to_string()).unwrap();
    let svg = dir.path().join("basin.svg");
    let o = run(&[
        "render",
        session.to_str().unwrap(),
        "--figure",
        "basin",
        "--set",
        "F=0.1",
        "-o",
        svg.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let body = std::fs::read_to_string(&svg).unwrap();
    assert!(body.contains("class=\"cells\""), "cells drawn");
    assert!(body.contains("separatrix"), "separatrix behind");
    let o = run_with(
        "basin",
        &driven(&[
            "--grid",
            "24",
            "--periods",
            "4",
            "-o",
            png.to_str().unwrap(),
        ]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::metadata(&png).unwrap().len() > 1000);
    for (flags, word) in [
        (vec!["--grid", "2"], "--grid 2"),
        (vec!["--periods", "0"], "--periods 0"),
        (vec!["--well", "1"], "well"),
    ] {
        let o = run_with("basin", &driven(&flags));
        assert_eq!(o.status.code(), Some(2), "{flags:?}");
        assert!(stderr(&o).contains(word), "{flags:?}: {}", stderr(&o));
    }
    let o = run_with("erosion", &driven(&["--from", "0.2", "--to", "0.2"]));
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("range"), "{}", stderr(&o));
    // no drive at all
    let o = run(&["basin", "--formula", "p^2/2 - q^2/2 + q^4/4"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("drive"), "{}", stderr(&o));
}
