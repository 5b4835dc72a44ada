//! Timing helpers of the root bench binaries: the median of repeated runs,
//! since the machines are noisy and only ratios in one run are read.

use std::time::Instant;

/// The median of `v` (the upper one of an even count).
pub fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

/// The median wall time of `repeats` runs of `f`, s.
pub fn time<F: FnMut()>(repeats: usize, mut f: F) -> f64 {
    median(
        (0..repeats)
            .map(|_| {
                let s = Instant::now();
                f();
                s.elapsed().as_secs_f64()
            })
            .collect(),
    )
}
