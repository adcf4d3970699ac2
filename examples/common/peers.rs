//! Running the benchmark peers beside a Rust benchmark.
//!
//! The project ships its own peer script, `examples/peers/practitioner_stack.py`
//! (NumPy, SciPy and contourpy, set up with
//! `python3 -m pip install numpy scipy contourpy`); it always runs. A second
//! script outside the repository (`../shared/bench/script_stack.py`, or the path
//! in `PHASEWRIGHT_PEER_BENCH`) runs as well when it is present, so that both
//! figures can be printed side by side. `PHASEWRIGHT_BENCH_NO_PYTHON=1` skips
//! every peer.

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

fn peer_scripts() -> Vec<(String, PathBuf)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut scripts = vec![(
        "own peer (examples/peers)".to_string(),
        root.join("examples/peers/practitioner_stack.py"),
    )];
    let outside = std::env::var_os("PHASEWRIGHT_PEER_BENCH")
        .map(PathBuf::from)
        .unwrap_or_else(|| root.join("../shared/bench/script_stack.py"));
    if outside.exists() {
        scripts.push(("outside peer (shared/bench)".to_string(), outside));
    }
    scripts
}

/// Runs every peer with `args`; a peer that cannot run is reported on stderr
/// with the set-up hint and left out.
pub fn run_peers(args: &[&str]) -> Vec<PeerRun> {
    if std::env::var_os("PHASEWRIGHT_BENCH_NO_PYTHON").is_some() {
        return Vec::new();
    }
    let mut runs = Vec::new();
    for (label, path) in peer_scripts() {
        match run_one(&path, args) {
            Ok(figures) => runs.push(PeerRun { label, figures }),
            Err(why) => eprintln!("{label} not run: {why}"),
        }
    }
    runs
}

fn run_one(path: &Path, args: &[&str]) -> Result<serde_json::Value, String> {
    let out = Command::new("python3")
        .arg(path)
        .args(args)
        .output()
        .map_err(|e| format!("python3: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        let last = err.lines().last().unwrap_or("").to_string();
        return Err(format!(
            "{} failed ({last}); set up with `python3 -m pip install numpy scipy contourpy`",
            path.display()
        ));
    }
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text.lines().last().unwrap_or("");
    serde_json::from_str(line).map_err(|e| format!("peer output is not JSON: {e}"))
}
