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
