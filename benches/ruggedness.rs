//! Bench binary for the mismatch sweep (run: `cargo bench --bench
//! ruggedness`).
//!
//! The class-C demo (netlists/ism-13m56-classc.tank) with its output load
//! moved around 3 circles (VSWR 1.5, 2, 3) × 24 phases, 72 loads, solved
//! two ways in the same run:
//!
//! - the sweep as `analyze ruggedness` runs it
//!   (`tankwave_stage::mismatch::sweep_from`): each load warm-started from
//!   the solved state of its neighbour on the circle (the nominal stage for
//!   the first of each circle);
//! - 72 independent cold solves of the same loads
//!   (`tankwave_stage::mismatch::solve_load` with no warm start).
//!
//! Both arms run twice: with the file's `analyze steady` (method auto:
//! shooting refined to the accuracy target and verified, balance as the
//! fallback), and with plain shooting on the file's 256 steps per period,
//! which shows the part of a load's cost a warm start can shorten. Every
//! figure is a ratio of times measured in the same run (one run of each
//! arm: a sweep takes tens of seconds); the machines are noisy.

use num_complex::Complex64;
use std::path::PathBuf;
use tankwave_circuit::{Analysis, Circuit, Overrides, SteadyMethod};
use tankwave_stage::mismatch::{
    gamma_magnitude, load_impedance, solve_load, steady_freq, sweep_from, Circle,
};
use tankwave_stage::{solve, Scope, SolveOptions};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::time_both;

/// The warm-started sweep and the 72 cold solves of `c`, timed once each
/// (a sweep takes tens of seconds; the two arms run back to back).
fn arms(c: &Circuit, circles: &[Circle], label: &str) {
    let freq = steady_freq(c).expect("a steady state");
    let nominal = solve(c, &SolveOptions::scope(Scope::Requirements)).expect("nominal");
    let warm0 = nominal.steady.as_ref().map(|s| s.warm_start());
    let mut warm_iters = 0;
    let mut warm_unsolved = 0;
    let (t_warm, c_warm) = time_both(|| {
        let s = sweep_from(c, circles, None, warm0.as_deref(), None).expect("sweep");
        warm_iters = s.points.iter().map(|p| p.iterations).sum::<usize>();
        warm_unsolved = s.unsolved;
    });
    let z0 = 50.0;
    let mut cold_iters = 0;
    let mut cold_unsolved = 0;
    let (t_cold, c_cold) = time_both(|| {
        for circle in circles {
            let g = gamma_magnitude(circle.vswr);
            for k in 0..circle.phases {
                let phi = 360.0 * k as f64 / circle.phases as f64;
                let z = load_impedance(z0, Complex64::from_polar(g, phi.to_radians()));
                match solve_load(c, z, freq, None, None) {
                    Ok(s) => cold_iters += s.iterations,
                    Err(_) => cold_unsolved += 1,
                }
            }
        }
    });
    println!("  {label}:");
    println!(
        "    warm-started sweep:          {:>8.1} ms wall, {:>8.1} ms CPU ({warm_iters} periods/iterations in all, {warm_unsolved} unsolved)",
        t_warm * 1e3,
        c_warm * 1e3
    );
    println!(
        "    72 independent cold solves:  {:>8.1} ms wall, {:>8.1} ms CPU ({cold_iters} periods/iterations in all, {cold_unsolved} unsolved)",
        t_cold * 1e3,
        c_cold * 1e3
    );
    println!(
        "    cold / warm: {:.2}x wall, {:.2}x CPU",
        t_cold / t_warm,
        c_cold / c_warm
    );
}

fn main() {
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists/ism-13m56-classc.tank");
    let c = tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("the demo loads")
        .circuit;
    let circles: Vec<Circle> = [1.5, 2.0, 3.0]
        .iter()
        .map(|&vswr| Circle { vswr, phases: 24 })
        .collect();
    println!("mismatch sweep of the class-C demo, 3 circles x 24 phases = 72 loads");
    arms(
        &c,
        &circles,
        "as the file asks (method=auto: shooting refined to the accuracy target, verified)",
    );
    // the same with plain shooting on the file's 256 steps per period: the
    // part of a load's cost the warm start can shorten
    let mut shoot = c.clone();
    for a in &mut shoot.analyses {
        if let Analysis::Steady { method, .. } = a {
            *method = SteadyMethod::Shooting;
        }
    }
    arms(
        &shoot,
        &circles,
        "method=shooting on 256 steps per period (no refinement)",
    );
}
