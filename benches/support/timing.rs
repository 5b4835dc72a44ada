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

/// CPU time this process has used so far (user + system), s, from
/// `/proc/self/stat` (Linux; `None` elsewhere). On a shared machine the
/// CPU time of a single-threaded solve is much less disturbed by other
/// work than its wall time; 10 ms resolution (the kernel's clock tick,
/// assumed 100 Hz: `getconf CLK_TCK` on the machines used).
pub fn cpu_seconds() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/stat").ok()?;
    // the command name (field 2) is in parentheses and may hold spaces
    let rest = &s[s.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    // fields 14 and 15 of the whole line (utime, stime) are 12 and 13 here
    let utime: f64 = f.get(11)?.parse().ok()?;
    let stime: f64 = f.get(12)?.parse().ok()?;
    Some((utime + stime) / 100.0)
}

/// Wall and CPU time of one run of `f`, s (CPU `NaN` where it cannot be read).
pub fn time_both<F: FnOnce()>(f: F) -> (f64, f64) {
    let c0 = cpu_seconds();
    let s = Instant::now();
    f();
    let wall = s.elapsed().as_secs_f64();
    let cpu = match (c0, cpu_seconds()) {
        (Some(a), Some(b)) => b - a,
        _ => f64::NAN,
    };
    (wall, cpu)
}
