//! Helpers shared by the explorer's harness tests.

use egui_kittest::Harness;
use phasewright::gui::Explorer;
use std::time::Duration;

/// Run frames until the worker has answered the newest job and the tables show it.
pub fn settle(h: &mut Harness<'static, Explorer>) {
    for _ in 0..20 {
        h.run_steps(2);
        let done = h.state_mut().wait_for_worker(Duration::from_secs(20));
        h.run_steps(2);
        if done && !h.state().busy() {
            return;
        }
    }
}
