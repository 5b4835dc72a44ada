//! Cost of verifying a periodic steady state by its Floquet multipliers, as
//! a ratio to the solve itself, measured in one run (bench binary: `cargo
//! bench -p tankwave-solve --bench floquet`).
//!
//! Every steady state is verified before it is accepted
//! ([`tankwave_solve::floquet`]): one period integrated with the monodromy
//! matrix, its eigenvalues, and [`floquet::EXTRA_PERIODS`] periods more to
//! see the state repeat. For each stage and method this prints the median
//! time of the whole steady-state solve (verification included) and of the
//! verification alone on the same solution, and the ratio of the
//! verification to the rest of the solve.

use std::time::Instant;
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

#[path = "../tests/support/mod.rs"]
mod support;
use support::*;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

/// Median wall time of `f` over `repeats` runs, in seconds.
fn time<F: FnMut()>(repeats: usize, mut f: F) -> f64 {
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

fn main() {
    // `cargo bench` passes --bench; nothing else is read
    let repeats = 5;
    println!("Floquet verification against the steady-state solve (median of {repeats} runs)");
    println!(
        "{:<18} {:<10} {:>10} {:>10} {:>10} {:>12}",
        "stage", "method", "solve s", "verify s", "ratio", "largest |μ|"
    );
    for (name, b, f) in [
        ("diode rectifier", rectifier(1e6), 1e6),
        ("class-C stage", class_c(20.0), CLASS_C_F0),
    ] {
        let d = instantiate(&b.c).expect("devices");
        for (label, method) in [
            ("balance", SteadyMethod::Balance),
            ("shooting", SteadyMethod::Shooting),
        ] {
            let p = SteadyParams {
                freq: f,
                method,
                steps_per_period: 256,
                ..SteadyParams::default()
            };
            let sol = steady(&b.c, &d, &p).expect("steady");
            let largest = sol
                .info
                .floquet
                .as_ref()
                .map(|i| i.largest)
                .unwrap_or(f64::NAN);
            let t_solve = time(repeats, || {
                std::hint::black_box(steady(&b.c, &d, &p).expect("steady"));
            });
            let t_verify = time(repeats, || {
                std::hint::black_box(floquet::verify(&b.c, &d, &p, sol.clone()).expect("verified"));
            });
            // the solve without its verification
            let rest = (t_solve - t_verify).max(f64::MIN_POSITIVE);
            println!(
                "{name:<18} {label:<10} {t_solve:>10.4} {t_verify:>10.4} {:>10.2} {largest:>12.6}",
                t_verify / rest
            );
        }
    }
}
