//! Scale bench (run: `cargo bench --bench scale`): the periodic steady state
//! of N class-C stages in one stage file (N = 1, 2, 4, 8, 16; generator in
//! benches/support/scale_gen.rs), by harmonic balance and by shooting.
//!
//! The stage files are written to a temporary directory and loaded through
//! tankwave-stage like any stage file. Every figure that matters is a ratio
//! of two times measured in this one run (N = 16 over N = 1, per method);
//! each time is the median of a few repeats (fewer for the large N).
//!
//! Set TANKWAVE_SCALE_MAX to stop at a smaller N (default 16),
//! TANKWAVE_BENCH_SIZES to a comma list of the N to run (e.g. `1,16`, as
//! the shooting_scale bench reads it; the first is the base of the ratios)
//! and TANKWAVE_SCALE_METHODS to a comma list of `balance`, `shooting`
//! (default both). TANKWAVE_BENCH_DEVICE_BAND sets
//! `BalanceParams::device_band` (0: the block-diagonal preconditioner
//! alone), to compare preconditioners in one run.
//! TANKWAVE_BENCH_SAME_K=96 raises K on every N up to 96 and no further
//! (`max_harmonics` 96, truncation limits 0): the automatic raise stops
//! where the top harmonics are small enough, which on these stages is
//! K = 96 for N ≤ 4 and K = 48 for N ≥ 8, so without it N = 1 and N = 16
//! are solved at different K.

use std::path::PathBuf;
use std::time::Instant;
use tankwave_circuit::{Overrides, SteadyMethod};
use tankwave_solve::SteadyParams;

#[path = "support/scale_gen.rs"]
mod scale_gen;

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::median;

fn main() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().expect("temporary directory");
    let max: usize = std::env::var("TANKWAVE_SCALE_MAX")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(16);
    let methods: Vec<(&str, SteadyMethod)> = [
        ("balance", SteadyMethod::Balance),
        ("shooting", SteadyMethod::Shooting),
    ]
    .into_iter()
    .filter(|(name, _)| {
        std::env::var("TANKWAVE_SCALE_METHODS")
            .map(|m| m.split(',').any(|x| x.trim() == *name))
            .unwrap_or(true)
    })
    .collect();
    println!("steady state of N class-C stages (median of repeats; 'it' = Newton iterations)");
    println!(
        "{:>4} {:>10} {:<9} {:>10} {:>6} {:>10}",
        "N", "unknowns", "method", "time s", "it", "vs N=1"
    );
    let mut first: Vec<Option<f64>> = vec![None; methods.len()];
    let mut last: Vec<(usize, f64)> = vec![(0, 0.0); methods.len()];
    let sizes: Option<Vec<usize>> = std::env::var("TANKWAVE_BENCH_SIZES")
        .ok()
        .map(|s| s.split(',').filter_map(|v| v.trim().parse().ok()).collect());
    let counts: Vec<usize> = match sizes {
        Some(s) => s,
        None => scale_gen::SCALE_COUNTS.to_vec(),
    };
    for n in counts.into_iter().filter(|&n| n <= max && n >= 1) {
        let path = scale_gen::write_scale_stage(dir.path(), &root, n).expect("write stage");
        let c = tankwave_stage::load(&path, &[], &Overrides::default())
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
            .circuit;
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let sp = c
            .analyses
            .iter()
            .find_map(SteadyParams::from_analysis)
            .expect("an analyze steady");
        let repeats = if n <= 4 { 3 } else { 1 };
        let device_band: Option<usize> = std::env::var("TANKWAVE_BENCH_DEVICE_BAND")
            .ok()
            .and_then(|s| s.trim().parse().ok());
        let same_k: Option<usize> = std::env::var("TANKWAVE_BENCH_SAME_K")
            .ok()
            .and_then(|s| s.trim().parse().ok());
        for (m, (name, method)) in methods.iter().enumerate() {
            let mut p = SteadyParams {
                method: *method,
                ..sp.clone()
            };
            if let Some(h) = device_band {
                p.balance.device_band = h;
            }
            if let Some(k) = same_k {
                p.balance.max_harmonics = k;
                p.balance.truncation_rel = 0.0;
                p.balance.truncation_abs = 0.0;
            }
            let mut times = Vec::new();
            let mut its = 0;
            let mut detail = String::new();
            for _ in 0..repeats {
                let s = Instant::now();
                match tankwave_solve::steady(&c, &d, &p) {
                    Ok(r) => {
                        its = r.info.iterations;
                        if let Some(b) = &r.info.balance {
                            detail = format!(
                                "K {:?}, {} ports, {} GMRES products in {} steps ({:.0} per step){}",
                                b.harmonics_tried,
                                b.ports,
                                b.krylov_iterations,
                                b.krylov_steps,
                                b.krylov_iterations as f64 / b.krylov_steps.max(1) as f64,
                                if b.sparse_network {
                                    ", sparse network"
                                } else {
                                    ""
                                }
                            );
                        }
                    }
                    Err(e) => {
                        println!("{n:>4} {name}: failed: {e}");
                        break;
                    }
                }
                times.push(s.elapsed().as_secs_f64());
            }
            if times.is_empty() {
                continue;
            }
            let t = median(times);
            let base = *first[m].get_or_insert(t);
            last[m] = (n, t);
            println!(
                "{:>4} {:>10} {:<9} {:>10.4} {:>6} {:>10.2}   {detail}",
                n,
                d.n_unknowns,
                name,
                t,
                its,
                t / base
            );
        }
    }
    for (m, (name, _)) in methods.iter().enumerate() {
        if let (Some(b), (n, t)) = (first[m], last[m]) {
            println!(
                "{name}: N={n} / N=1 = {:.2}x (target: N=16 within 20x)",
                t / b
            );
        }
    }
}
