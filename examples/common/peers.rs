//! Running the benchmark peers beside a Rust benchmark.
//!
//! The project ships its own peer scripts under `examples/peers/`
//! (`practitioner_stack.py`: NumPy, SciPy and contourpy, set up with
//! `python3 -m pip install numpy scipy contourpy`; `drive_rk4.py`: NumPy
//! alone); the benchmark's own one always runs. A second script outside the
//! repository (`../shared/bench/script_stack.py` or `drive_peer.py`, or the
//! path in the benchmark's environment variable) runs as well when it is
//! present, so that both figures can be printed side by side. A peer prints
//! one JSON object on its last line, or `name value` lines.
//! `PHASEWRIGHT_BENCH_NO_PYTHON=1` skips every peer.

use std::path::{Path, PathBuf};
use std::process::Command;

/// One peer's answer: where it came from and its JSON object.
pub struct PeerRun {
    pub label: String,
    pub figures: serde_json::Value,
}

impl PeerRun {
    pub fn get(&self, key: &str) -> Option<f64> {
        self.figures.get(key).and_then(|v| v.as_f64())
    }
}

/// Which scripts a benchmark runs: its own (a file under `examples/peers/`)
/// and, when present, one outside the repository.
pub struct Peers {
    /// File name under `examples/peers/`.
    pub own: &'static str,
    /// Path relative to the repository, when there is one to look for.
    pub outside: Option<&'static str>,
    /// The environment variable that names another path for the outside one.
    pub outside_env: &'static str,
    /// The pip command that sets the Python packages up.
    pub setup: &'static str,
}

/// The peers of the analysis benchmarks.
pub const STACK: Peers = Peers {
    own: "practitioner_stack.py",
    outside: Some("../shared/bench/script_stack.py"),
    outside_env: "PHASEWRIGHT_PEER_BENCH",
    setup: "python3 -m pip install numpy scipy contourpy",
};

fn peer_scripts(peers: &Peers) -> Vec<(String, PathBuf)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut scripts = vec![(
        format!("own peer (examples/peers/{})", peers.own),
        root.join("examples/peers").join(peers.own),
    )];
    let outside = std::env::var_os(peers.outside_env)
        .map(PathBuf::from)
        .or_else(|| peers.outside.map(|p| root.join(p)));
    if let Some(outside) = outside.filter(|p| p.exists()) {
        let name = outside
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        scripts.push((format!("outside peer (shared/bench/{name})"), outside));
    }
    scripts
}

/// Runs every peer of the analysis benchmarks with `args`.
#[allow(dead_code)]
pub fn run_peers(args: &[&str]) -> Vec<PeerRun> {
    run_peers_of(&STACK, args, args)
}

/// Runs the own peer with `args` and the outside one (if present) with
/// `outside_args`; a peer that cannot run is reported on stderr with the
/// set-up hint and left out.
pub fn run_peers_of(peers: &Peers, args: &[&str], outside_args: &[&str]) -> Vec<PeerRun> {
    if std::env::var_os("PHASEWRIGHT_BENCH_NO_PYTHON").is_some() {
        return Vec::new();
    }
    let mut runs = Vec::new();
    for (i, (label, path)) in peer_scripts(peers).into_iter().enumerate() {
        let args = if i == 0 { args } else { outside_args };
        match run_one(&path, args, peers.setup) {
            Ok(figures) => runs.push(PeerRun { label, figures }),
            Err(why) => eprintln!("{label} not run: {why}"),
        }
    }
    runs
}

/// The figures a peer printed: its last line as JSON, else every
/// `name number` line.
fn figures(text: &str) -> Result<serde_json::Value, String> {
    let last = text.lines().last().unwrap_or("");
    if let Ok(v) = serde_json::from_str::<serde_json::Value>(last) {
        return Ok(v);
    }
    let mut map = serde_json::Map::new();
    for line in text.lines() {
        let mut words = line.split_whitespace();
        if let (Some(name), Some(value), None) = (words.next(), words.next(), words.next()) {
            if let Ok(x) = value.parse::<f64>() {
                map.insert(name.to_string(), serde_json::json!(x));
            }
        }
    }
    if map.is_empty() {
        Err("peer output is neither JSON nor `name value` lines".to_string())
    } else {
        Ok(serde_json::Value::Object(map))
    }
}

fn run_one(path: &Path, args: &[&str], setup: &str) -> Result<serde_json::Value, String> {
    let out = Command::new("python3")
        .arg(path)
        .args(args)
        .output()
        .map_err(|e| format!("python3: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        let last = err.lines().last().unwrap_or("").to_string();
        return Err(format!(
            "{} failed ({last}); set up with `{setup}`",
            path.display()
        ));
    }
    figures(&String::from_utf8_lossy(&out.stdout))
}
