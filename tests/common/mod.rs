//! Helpers shared by the core's integration tests.
#![allow(dead_code)]

use phasewright::core::system::System;
use phasewright::core::window::Window;

/// A system from a formula without parameters; a test formula that does not compile fails the test.
pub fn system(src: &str) -> System {
    match System::from_source(src, &[]) {
        Ok(s) => s,
        Err(e) => panic!("test formula {src} does not compile: {e}"),
    }
}

/// A checked window; a bad test window fails the test.
pub fn window(qmin: f64, qmax: f64, pmin: f64, pmax: f64) -> Window {
    match Window::new(qmin, qmax, pmin, pmax) {
        Ok(w) => w,
        Err(e) => panic!("test window: {e}"),
    }
}

/// The built binary run with `args`.
pub fn run_binary(args: &[&str]) -> std::process::Output {
    match std::process::Command::new(env!("CARGO_BIN_EXE_phasewright"))
        .args(args)
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("the binary does not run: {e}"),
    }
}

/// What a run printed on stderr.
pub fn stderr_of(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}
