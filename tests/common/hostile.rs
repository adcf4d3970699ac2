//! Shared pieces of the hostile-input tests: the case count taken from the
//! environment, and a watchdog that turns a hang into a failure naming the input.

use std::collections::HashMap;
use std::sync::{Mutex, OnceLock};
use std::thread::ThreadId;
use std::time::{Duration, Instant};

/// Environment variable giving the number of generated cases per property.
pub const CASES_ENV: &str = "PHASEWRIGHT_FUZZ_CASES";

/// Cases per property when the environment does not say: sized so that the
/// whole test run stays short on two cores.
pub const DEFAULT_CASES: u32 = 1_500;

/// Longest time one call may take before the watchdog stops the run. Every
/// input is capped before work starts (64 KiB formulas, 16 MiB sessions,
/// 20 000 operations), so a call that takes this long is a hang, not a slow case.
pub const DEADLINE: Duration = Duration::from_secs(20);

/// The number of cases per property: `$PHASEWRIGHT_FUZZ_CASES` or [`DEFAULT_CASES`].
pub fn cases() -> u32 {
    std::env::var(CASES_ENV)
        .ok()
        .and_then(|v| v.trim().parse().ok())
        .filter(|&n: &u32| n > 0)
        .unwrap_or(DEFAULT_CASES)
}

type Running = Mutex<HashMap<ThreadId, (Instant, String)>>;

fn running() -> &'static Running {
    static RUNNING: OnceLock<Running> = OnceLock::new();
    static WATCHDOG: OnceLock<()> = OnceLock::new();
    let map = RUNNING.get_or_init(|| Mutex::new(HashMap::new()));
    WATCHDOG.get_or_init(|| {
        std::thread::spawn(|| {
            loop {
                std::thread::sleep(Duration::from_millis(200));
                let Some(map) = RUNNING.get() else { continue };
                let late = map.lock().ok().and_then(|m| {
                    m.values()
                        .find(|(t, _)| t.elapsed() > DEADLINE)
                        .map(|(t, what)| (t.elapsed(), what.clone()))
                });
                if let Some((took, what)) = late {
                    // straight to stderr: the test harness captures eprintln! in
                    // threads a test spawns, and an abort would drop that copy
                    use std::io::Write;
                    let _ = writeln!(
                        std::io::stderr(),
                        "HANG: one call has run for {took:?} (deadline {DEADLINE:?}) on input:\n{what}"
                    );
                    std::process::abort();
                }
            }
        });
    });
    map
}

/// Run `f` under the watchdog; `describe` names the input if it hangs.
pub fn bounded<T>(describe: impl FnOnce() -> String, f: impl FnOnce() -> T) -> T {
    let id = std::thread::current().id();
    let start = Instant::now();
    if let Ok(mut m) = running().lock() {
        let mut what = describe();
        if what.len() > 2_000 {
            let mut cut = 2_000;
            while !what.is_char_boundary(cut) {
                cut -= 1;
            }
            what.truncate(cut);
            what.push_str("…");
        }
        m.insert(id, (start, what));
    }
    // removed on the way out, also when `f` panics (a failed assertion is not a hang)
    struct Done(ThreadId);
    impl Drop for Done {
        fn drop(&mut self) {
            if let Ok(mut m) = running().lock() {
                m.remove(&self.0);
            }
        }
    }
    let _done = Done(id);
    f()
}
