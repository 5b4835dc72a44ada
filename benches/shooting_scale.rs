//! Shooting's cost against circuit size and the cost of a warm-started
//! variant (bench binary: `cargo bench --bench shooting_scale`).
//!
//! Machines are noisy, so every figure that matters is a ratio of two times
//! measured in the same run (medians of a few repeats).
//!
//! - **Size:** the N class-C stages of the scale bench
//!   (benches/support/scale_gen.rs, a scenario of our own: one supply
//!   through 0.1 Ω, one 50 Ω load, part values spread by ±5 %, so nothing
//!   splits them into independent pieces). Shooting is timed with the monodromy matrix formed densely and
//!   matrix-free (Newton–Krylov), N = 1, 2, 4, 8, 16, as a ratio to N = 1.
//!   The matrix-free solve's periods and Krylov (GCR) products (operator
//!   applications) per size follow, to show how the Krylov work grows.
//!   `TANKWAVE_BENCH_SIZES=1,16` picks the sizes, `TANKWAVE_BENCH_MODES=free`
//!   (or `dense`) one mode (for profiling), `TANKWAVE_BENCH_WARM=0` skips
//!   the warm variant.
//! - **Warm variant:** the class-C demo solved (shooting, verification
//!   included), then a neighbour (drive +2 %) solved cold and warm-started
//!   from the demo's periodic state, against one plain transient period
//!   (the demo's own 300-period transient at the default accuracy, per
//!   period).

use std::path::PathBuf;
use tankwave_circuit::{Circuit, Overrides, StageSource, SteadyMethod};
use tankwave_solve::{ShootingMode, SteadyParams, TransientParams};

// this bench loads the text itself; the file writer is the scale bench's
#[allow(dead_code)]
#[path = "support/scale_gen.rs"]
mod scale_gen;

/// The scale bench's N stages (benches/support/scale_gen.rs), with the
/// invented transistor model inlined in place of its include.
#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::{cpu_seconds, time};

fn n_stages(n: usize, model: &str) -> String {
    scale_gen::scale_stage_text(n).replace("include \"tw-hf25.tank\"", model)
}

fn load(text: &str, o: &Overrides) -> Circuit {
    tankwave_stage::load_source(StageSource::from_text("n-stages.tank", text), o)
        .unwrap_or_else(|e| panic!("{e}"))
        .circuit
}

fn main() {
    // `cargo bench` passes --bench; nothing else is read
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let model =
        std::fs::read_to_string(root.join("netlists/models/tw-hf25.tank")).expect("model file");
    let sizes: Vec<usize> = std::env::var("TANKWAVE_BENCH_SIZES")
        .ok()
        .map(|s| s.split(',').filter_map(|v| v.trim().parse().ok()).collect())
        .unwrap_or_else(|| vec![1, 2, 4, 8, 16]);
    let modes = std::env::var("TANKWAVE_BENCH_MODES").unwrap_or_default();
    let run_mode = |m: ShootingMode| match modes.as_str() {
        "dense" => m == ShootingMode::Dense,
        "free" => m == ShootingMode::MatrixFree,
        _ => true,
    };
    let mut krylov = Vec::new();
    println!(
        "shooting against circuit size (wall: median of 3 to 30 runs, at least 1 s in all; \
         CPU: their mean, the solves being single-threaded; ratio to N = 1 per mode)"
    );
    println!(
        "{:>4} {:>9} {:>12} {:>8} {:>9} {:>14} {:>8} {:>9} {:>11}",
        "N",
        "unknowns",
        "dense Φ s",
        "ratio",
        "CPU ratio",
        "matrix-free s",
        "ratio",
        "CPU ratio",
        "auto"
    );
    let mut base = [0.0f64; 2];
    let mut base_cpu = [0.0f64; 2];
    for &n in &sizes {
        let c = load(&n_stages(n, &model), &Overrides::default());
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let sp = c
            .analyses
            .iter()
            .find_map(SteadyParams::from_analysis)
            .expect("analyze steady");
        let mut t = [0.0f64; 2];
        let mut cpu = [0.0f64; 2];
        for (i, mode) in [ShootingMode::Dense, ShootingMode::MatrixFree]
            .into_iter()
            .enumerate()
        {
            let mut p = sp.clone();
            p.method = SteadyMethod::Shooting;
            p.shooting.mode = mode;
            if !run_mode(mode) {
                t[i] = f64::NAN;
                cpu[i] = f64::NAN;
                continue;
            }
            let first = std::time::Instant::now();
            match tankwave_solve::shooting(&c, &d, &p) {
                Err(e) => {
                    eprintln!("N = {n}, {mode:?}: {e}");
                    t[i] = f64::NAN;
                    cpu[i] = f64::NAN;
                    continue;
                }
                Ok(sol) if mode == ShootingMode::MatrixFree => {
                    krylov.push((n, sol.info.shooting));
                }
                Ok(_) => {}
            }
            let repeats = ((1.0 / first.elapsed().as_secs_f64()).ceil() as usize).clamp(3, 30);
            let c0 = cpu_seconds();
            t[i] = time(repeats, || {
                std::hint::black_box(tankwave_solve::shooting(&c, &d, &p).expect("shooting"));
            });
            cpu[i] = match (c0, cpu_seconds()) {
                (Some(a), Some(b)) => (b - a) / repeats as f64,
                _ => f64::NAN,
            };
        }
        if n == sizes[0] {
            base = t;
            base_cpu = cpu;
        }
        println!(
            "{n:>4} {:>9} {:>12.4} {:>8.2} {:>9.2} {:>14.4} {:>8.2} {:>9.2} {:>11?}",
            d.n_unknowns,
            t[0],
            t[0] / base[0],
            cpu[0] / base_cpu[0],
            t[1],
            t[1] / base[1],
            cpu[1] / base_cpu[1],
            ShootingMode::Auto.resolve(d.n_unknowns)
        );
    }

    // the Krylov work of the matrix-free solves
    println!(
        "\nmatrix-free: Newton periods (coarse, fine; with stored factors) and Krylov (GCR) \
         products (with the half-grid floor's), per Newton period"
    );
    println!(
        "{:>4} {:>8} {:>8} {:>10} {:>9} {:>11}",
        "N", "coarse", "fine", "factored", "products", "per period"
    );
    for (n, info) in &krylov {
        if let Some(i) = info {
            println!(
                "{n:>4} {:>8} {:>8} {:>10} {:>9} {:>11.1}",
                i.coarse_periods,
                i.fine_periods,
                i.monodromy_periods,
                i.krylov_products,
                i.krylov_products as f64 / (i.coarse_periods + i.fine_periods).max(1) as f64
            );
        }
    }
    if std::env::var("TANKWAVE_BENCH_WARM").is_ok_and(|v| v == "0") {
        return;
    }

    // warm-started variant against a cold solve and one plain period
    let text = std::fs::read_to_string(root.join("netlists/ism-13m56-classc.tank"))
        .expect("class-C demo")
        .replace("include \"models/tw-hf25.tank\"", &model);
    let c = load(&text, &Overrides::default());
    let d = tankwave_devices::instantiate(&c).expect("devices");
    let mut sp = c
        .analyses
        .iter()
        .find_map(SteadyParams::from_analysis)
        .expect("analyze steady");
    sp.method = SteadyMethod::Shooting;
    let sol = tankwave_solve::steady(&c, &d, &sp).expect("cold");
    let x0: Vec<f64> = sol.x.iter().map(|r| r[0]).collect();
    let mut o = Overrides::default();
    o.params.insert("drive".into(), 20.0 * 1.02);
    let cn = load(&text, &o);
    let dn = tankwave_devices::instantiate(&cn).expect("devices");
    let mut warm = sp.clone();
    warm.shooting.initial = Some(x0);
    let cold_info = tankwave_solve::steady(&cn, &dn, &sp).expect("cold").info;
    let warm_info = tankwave_solve::steady(&cn, &dn, &warm).expect("warm").info;
    // the steady state as a study variant gets it: verification included
    let t_cold = time(5, || {
        std::hint::black_box(tankwave_solve::steady(&cn, &dn, &sp).expect("cold"));
    });
    let t_warm = time(5, || {
        std::hint::black_box(tankwave_solve::steady(&cn, &dn, &warm).expect("warm"));
    });
    // the warm solve without its verification
    let t_warm_shoot = time(5, || {
        std::hint::black_box(tankwave_solve::shooting(&cn, &dn, &warm).expect("warm"));
    });
    // one plain transient period: the stage's own transient analysis (300
    // periods from the operating point at the default accuracy) per period
    let tp = cn
        .analyses
        .iter()
        .find_map(TransientParams::from_analysis)
        .expect("analyze transient");
    let periods = tp.stop * sp.freq;
    let mut steps = 0;
    let t_tran = time(1, || {
        steps = tankwave_solve::transient(&cn, &dn, &tp)
            .expect("transient")
            .info
            .accepted;
    });
    let t_period = t_tran / periods;
    println!(
        "\nclass-C demo, drive +2 %, steady state by shooting ({} steps per period)",
        sp.samples()
    );
    println!("  cold: {:?}", cold_info.shooting);
    println!(
        "  warm (from the demo's solution): {:?}",
        warm_info.shooting
    );
    println!(
        "  plain transient: {periods:.0} periods, {steps} accepted steps ({:.0} per period) in {t_tran:.3} s",
        steps as f64 / periods
    );
    println!(
        "  cold {t_cold:.4} s, warm {t_warm:.4} s, one plain period {t_period:.5} s: \
         warm/cold {:.3}, warm/period {:.2}",
        t_warm / t_cold,
        t_warm / t_period
    );
    println!(
        "  of the warm solve, shooting alone {t_warm_shoot:.4} s ({:.2}), its Floquet check the rest",
        t_warm_shoot / t_warm
    );
}
