//! How long the worst-case inputs the caps allow take on the thread that
//! reads them (the explorer reads a file on its UI thread; the analysis runs
//! on the worker): loading a session just under the 16 MiB file cap, compiling
//! a formula at the operation cap, and refusing a 1 MB formula.
//!
//! Run: `cargo run --release --no-default-features --example bench_hostile`

use phasewright::core::formula::{Formula, MAX_SOURCE_BYTES, MAX_TAPE_OPS};
use phasewright::session::{self, MAX_FILE_BYTES, Session};
use std::time::Instant;

/// Median wall time of `runs` calls, in milliseconds.
fn median_ms(runs: usize, mut f: impl FnMut()) -> f64 {
    let mut t: Vec<f64> = (0..runs)
        .map(|_| {
            let start = Instant::now();
            f();
            start.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    t.sort_by(f64::total_cmp);
    t[t.len() / 2]
}

fn main() {
    // a formula just under the operation cap: "q*p+" repeated
    let terms = MAX_TAPE_OPS / 4 - 10;
    let formula = vec!["q*p"; terms].join("+");
    let ops = Formula::compile(&formula)
        .map(|f| f.ops().len())
        .unwrap_or(0);
    assert!(ops > 0 && formula.len() <= MAX_SOURCE_BYTES);

    // a session just under the file cap: long notes, the formula above,
    // every work amount far over its cap
    let mut s = Session::blank(&formula);
    s.levels.grid = 1_000_000;
    s.levels.count = 1_000_000;
    let base = s.to_json_pretty().len();
    s.notes = "n".repeat(MAX_FILE_BYTES - base - 1024);
    let text = s.to_json_pretty();
    assert!(text.len() <= MAX_FILE_BYTES);
    let (loaded, warnings) = session::load(&text).expect("the worst-case file loads");
    assert_eq!(loaded.levels.grid, session::MAX_GRID);

    let megabyte = "q+".repeat(512 * 1024);

    println!("worst-case inputs (median of 7 runs)");
    println!(
        "  load a {:.1} MiB session ({} warnings)       {:8.1} ms",
        text.len() as f64 / (1024.0 * 1024.0),
        warnings.len(),
        median_ms(7, || {
            let _ = session::load(&text);
        })
    );
    println!(
        "  compile a formula of {ops} operations      {:8.2} ms",
        median_ms(7, || {
            let _ = Formula::compile(&formula);
        })
    );
    println!(
        "  refuse a 1 MiB formula                      {:8.3} ms",
        median_ms(7, || {
            let _ = Formula::compile(&megabyte);
        })
    );
}
