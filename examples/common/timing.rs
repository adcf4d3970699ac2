//! Wall-clock timing shared by the benchmarks.

use std::time::Instant;

/// Median and minimum wall time in ms over `repeat` runs after one warm-up.
/// On a shared machine the median includes time-slicing by other processes;
/// the minimum is closer to the cost of the work itself.
pub fn time_ms(repeat: usize, mut f: impl FnMut()) -> Timing {
    f();
    let mut t: Vec<f64> = (0..repeat)
        .map(|_| {
            let s = Instant::now();
            f();
            s.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    t.sort_by(f64::total_cmp);
    Timing {
        median: t[t.len() / 2],
        min: t[0],
    }
}

#[derive(Clone, Copy)]
pub struct Timing {
    pub median: f64,
    pub min: f64,
}

impl std::fmt::Display for Timing {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:8.3} ms (min {:7.3})", self.median, self.min)
    }
}
