//! Shooting's cost against circuit size and the cost of a warm-started
//! variant (bench binary: `cargo bench --bench shooting_scale`).
//!
//! Machines are noisy, so every figure that matters is a ratio of two times
//! measured in the same run (medians of a few repeats).
//!
//! - **Size:** N copies of the class-C demo stage (netlists/) in one file,
//!   a scenario of our own: they share one supply through 0.1 Ω, feed one
//!   load of 50/N Ω through 0.5 Ω each (a plain parallel combiner) and differ
//!   by ±5 % in their part values, so nothing splits them into independent
//!   pieces. Shooting is timed with the monodromy matrix formed densely and
//!   matrix-free (Newton–Krylov), N = 1, 2, 4, 8, 16, as a ratio to N = 1.
//! - **Warm variant:** the class-C demo solved (shooting, verification
//!   included), then a neighbour (drive +2 %) solved cold and warm-started
//!   from the demo's periodic state, against one plain transient period
//!   (the demo's own 300-period transient at the default accuracy, per
//!   period).

use std::path::PathBuf;
use std::time::Instant;
use tankwave_circuit::{Circuit, Overrides, StageSource, SteadyMethod};
use tankwave_solve::{ShootingMode, SteadyParams, TransientParams};

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

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

/// ±5 % spread of stage `k` of `n`: −5 % for the first, +5 % for the last.
fn spread(k: usize, n: usize) -> f64 {
    if n == 1 {
        1.0
    } else {
        1.0 - 0.05 + 0.1 * k as f64 / (n - 1) as f64
    }
}

/// N class-C stages side by side (module overview), with the invented
/// transistor model of the demos inlined.
pub fn n_stages(n: usize, model: &str) -> String {
    let mut s = String::from("title \"N class-C stages into one load\"\n");
    s.push_str(model);
    s.push_str(
        "\nlet f0 = 13.56MHz\nlet vcc = 13.8V\nlet drive = 20V\n\
         voltage vsup vs gnd dc=vcc\nresistor rsup vs vcc 0.1Ohm\n",
    );
    for k in 0..n {
        let m = spread(k, n);
        let r = |v: f64| format!("{:.6e}", v * m);
        s.push_str(&format!(
            "voltage vdrv{k} src{k} gnd wave=sine(amp=drive, freq=f0, rise=(20/f0)) internal=50Ohm\n\
             capacitor cmin{k} src{k} gnd {}\n\
             inductor lmin{k} src{k} bin{k} {} q=150\n\
             capacitor cin{k} bin{k} base{k} 100nF\n\
             resistor rbias{k} base{k} gnd {}\n\
             bjt q{k} c=coll{k} b=base{k} e=gnd part=tw_hf25\n\
             inductor rfc{k} vcc coll{k} {} r=0.05Ohm\n\
             capacitor cblk{k} coll{k} p1_{k} 100nF\n\
             capacitor c1_{k} p1_{k} gnd {}\n\
             inductor lpi{k} p1_{k} out{k} {} q=200\n\
             capacitor c2_{k} out{k} gnd {}\n\
             resistor rcomb{k} out{k} sum 0.5Ohm\n",
            r(704e-12),
            r(176e-9),
            r(10.0),
            r(4.7e-6),
            r(7.81e-9),
            r(73.6e-9),
            r(2.35e-9),
        ));
    }
    s.push_str(&format!(
        "resistor rload sum gnd {:.6e}\noutput rload\ninput vdrv0\n\
         analyze steady freq=f0 harmonics=24\n",
        50.0 / n as f64
    ));
    s
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
    println!("shooting against circuit size (median of 3 runs; ratio to N = 1 per mode)");
    println!(
        "{:>4} {:>9} {:>12} {:>8} {:>14} {:>8} {:>8}",
        "N", "unknowns", "dense Φ s", "ratio", "matrix-free s", "ratio", "auto"
    );
    let mut base = [0.0f64; 2];
    for &n in &sizes {
        let c = load(&n_stages(n, &model), &Overrides::default());
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let sp = c
            .analyses
            .iter()
            .find_map(SteadyParams::from_analysis)
            .expect("analyze steady");
        let mut t = [0.0f64; 2];
        for (i, mode) in [ShootingMode::Dense, ShootingMode::MatrixFree]
            .into_iter()
            .enumerate()
        {
            let mut p = sp.clone();
            p.method = SteadyMethod::Shooting;
            p.shooting.mode = mode;
            if let Err(e) = tankwave_solve::shooting(&c, &d, &p) {
                eprintln!("N = {n}, {mode:?}: {e}");
                t[i] = f64::NAN;
                continue;
            }
            t[i] = time(3, || {
                std::hint::black_box(tankwave_solve::shooting(&c, &d, &p).expect("shooting"));
            });
        }
        if n == sizes[0] {
            base = t;
        }
        println!(
            "{n:>4} {:>9} {:>12.4} {:>8.2} {:>14.4} {:>8.2} {:>8?}",
            d.n_unknowns,
            t[0],
            t[0] / base[0],
            t[1],
            t[1] / base[1],
            ShootingMode::Auto.resolve(d.n_unknowns)
        );
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
