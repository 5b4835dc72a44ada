//! Bench binary for whole stages (run: `cargo bench --bench stages`).
//!
//! Machines are noisy, so every figure that matters is a ratio of two times
//! measured in the same run, and each time is the median of several repeats.
//! Prints, for every demo stage in netlists/:
//!
//! - the steady state (method auto) against a plain transient of 10 carrier
//!   periods at the default accuracy, and against the settled brute-force
//!   transient (method settle), as ratios;
//! - for the class-C demo, the transient over 300 periods with its step count;
//! - a Monte Carlo study of the class-C demo on 1 and 2 threads (the
//!   per-variant work of `tankwave study`, from tankwave-stage): variants per
//!   second and the speed-up.
//!
//! - the convergence sweep over the class-C stage (drive 0.05x..3x, supply
//!   5..30 V, load 2 ohm..1 kohm, reactive loads at VSWR 3, bias resistor
//!   1 ohm..1 kohm; 290 variants): fraction solved, slowest variant, no NaN.
//!
//! Set TANKWAVE_BENCH_VARIANTS to change the study size (default 1000).

use std::path::{Path, PathBuf};
use std::time::Instant;
use tankwave_circuit::{Circuit, Overrides, StageSource, SteadyMethod};
use tankwave_solve::{SteadyParams, TransientParams};
use tankwave_stage::{Scope, SolveOptions};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::time;

fn load(p: &Path) -> Circuit {
    tankwave_stage::load(p, &[], &Overrides::default())
        .unwrap_or_else(|e| panic!("{}: {e}", p.display()))
        .circuit
}

fn steady_params(c: &Circuit) -> SteadyParams {
    c.analyses
        .iter()
        .find_map(SteadyParams::from_analysis)
        .expect("an analyze steady")
}

fn main() {
    // `cargo bench` passes --bench; nothing else is accepted
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let mut files: Vec<PathBuf> = std::fs::read_dir(root.join("netlists"))
        .expect("netlists/")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|e| e == "tank"))
        .collect();
    files.sort();
    println!("steady state vs plain transient (median of 3 runs each)");
    println!(
        "{:<34} {:>10} {:>12} {:>8} {:>12} {:>10} {:>8}",
        "stage", "steady s", "10 periods s", "ratio", "settled s", "periods", "ratio"
    );
    for f in &files {
        let c = load(f);
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let sp = steady_params(&c);
        let mut method = String::new();
        let t_steady = time(3, || {
            let s = tankwave_solve::steady(&c, &d, &sp).expect("steady");
            method = format!("{:?}", s.info.method);
        });
        let tp = TransientParams {
            stop: 10.0 / sp.freq,
            step: 1.0 / (sp.freq * 64.0),
            ..TransientParams::default()
        };
        let t_tran = time(3, || {
            tankwave_solve::transient(&c, &d, &tp).expect("transient");
        });
        let settle = SteadyParams {
            method: SteadyMethod::Settle,
            ..sp.clone()
        };
        let mut periods = 0;
        let t_settle = time(1, || match tankwave_solve::steady(&c, &d, &settle) {
            Ok(s) => periods = s.info.iterations,
            Err(e) => eprintln!("settle failed on {}: {e}", f.display()),
        });
        println!(
            "{:<34} {:>10.4} {:>12.4} {:>8.2} {:>12.3} {:>10} {:>8.1}   ({method})",
            f.file_name().unwrap().to_string_lossy(),
            t_steady,
            t_tran,
            t_steady / t_tran,
            t_settle,
            periods,
            t_settle / t_steady
        );
    }

    let classc = load(&root.join("netlists/ism-13m56-classc.tank"));
    let d = tankwave_devices::instantiate(&classc).expect("devices");
    let f0 = steady_params(&classc).freq;
    let tp = TransientParams {
        stop: 300.0 / f0,
        step: 1.0 / (f0 * 64.0),
        ..TransientParams::default()
    };
    // the default rule (SDIRK4 at its own tolerance) against the trapezoidal
    // rule at its own, in the same run
    println!();
    let mut t_by = Vec::new();
    for method in [
        tankwave_circuit::Integration::Sdirk4,
        tankwave_circuit::Integration::Trapezoidal,
    ] {
        let tp = TransientParams {
            method,
            ..tp.clone()
        };
        let mut steps = 0;
        let t300 = time(1, || {
            let r = tankwave_solve::transient(&classc, &d, &tp).expect("transient");
            steps = r.info.accepted;
        });
        println!(
            "class-C demo, transient over 300 periods by {method:?} (tolerance {:.0e}): {t300:.3} s, {steps} accepted steps ({:.0} per period)",
            tp.tolerance(),
            steps as f64 / 300.0
        );
        t_by.push(t300);
    }
    println!("time ratio SDIRK4 / trapezoidal: {:.2}", t_by[0] / t_by[1]);

    let n: usize = std::env::var("TANKWAVE_BENCH_VARIANTS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(1000);
    let source = StageSource::read(&root.join("netlists/ism-13m56-classc.tank"), &[]);
    let mut spec = classc.study.clone();
    spec.tolerances = ["c1", "c2", "lpi", "rbias"]
        .iter()
        .map(|e| tankwave_circuit::Tolerance {
            element: classc.element(e).expect("element"),
            fraction: 0.05,
            distribution: tankwave_circuit::Distribution::Gaussian,
        })
        .collect();
    spec.montecarlo = Some(tankwave_circuit::MonteCarlo { runs: n, seed: 1 });
    let names: Vec<&str> = classc.elements.iter().map(|e| e.name.as_str()).collect();
    let plan = tankwave_study::Plan::new(&spec, &names).expect("plan");
    // the work of `tankwave study` for one variant (warm starts included)
    let work = |v: &tankwave_study::Variant, w: Option<&tankwave_study::WarmStart>| {
        tankwave_stage::study_outcome(&source, &Overrides::default(), v, w)
    };
    let mut rates = Vec::new();
    for threads in [1usize, 2] {
        let params = tankwave_study::StudyParams {
            threads: Some(threads),
            ..Default::default()
        };
        let mut sink = tankwave_study::SummaryBuilder::default();
        struct Sink<'a>(&'a mut tankwave_study::SummaryBuilder);
        impl tankwave_study::RecordSink for Sink<'_> {
            fn record(
                &mut self,
                r: &tankwave_study::Record,
            ) -> Result<(), tankwave_study::StudyError> {
                self.0.add(r);
                Ok(())
            }
        }
        let s = Instant::now();
        let info = tankwave_study::run_study(&plan, &params, work, &mut Sink(&mut sink), &|_| {})
            .expect("study");
        let dt = s.elapsed().as_secs_f64();
        let rate = info.recorded as f64 / dt;
        rates.push(rate);
        println!(
            "Monte Carlo of the class-C demo, {} variants on {threads} thread(s): {dt:.2} s, {rate:.1} variants/s, {} failed",
            info.recorded, info.failed
        );
    }
    println!("speed-up of 2 threads over 1: {:.2}x", rates[1] / rates[0]);

    convergence_sweep(&root);
}

fn convergence_sweep(root: &Path) {
    let source = StageSource::read(&root.join("tests/data/sweep/classc-load.tank"), &[]);
    let mut variants: Vec<Vec<(&str, f64)>> = Vec::new();
    for d in [0.05, 0.2, 0.5, 0.8, 1.0, 1.5, 2.0, 3.0] {
        for v in [5.0, 9.0, 13.8, 20.0, 30.0] {
            for r in [2.0, 5.0, 20.0, 50.0, 200.0, 1000.0] {
                variants.push(vec![("drive", 20.0 * d), ("vcc", v), ("rload", r)]);
            }
        }
    }
    for k in 0..30 {
        // VSWR 3 circle: |G| = 0.5 around 50 ohm
        let g =
            num_complex::Complex64::from_polar(0.5, 2.0 * std::f64::consts::PI * k as f64 / 30.0);
        let z = (1.0 + g) / (1.0 - g) * 50.0;
        variants.push(vec![("rload", z.re), ("xload", z.im)]);
    }
    for rb in [
        1.0, 2.0, 5.0, 10.0, 22.0, 47.0, 100.0, 220.0, 470.0, 1000.0, 1.5, 3.3, 6.8, 15.0, 33.0,
        68.0, 150.0, 330.0, 680.0, 820.0,
    ] {
        variants.push(vec![("rb", rb)]);
    }
    let mut solved = 0;
    let mut slowest = 0.0f64;
    for v in &variants {
        let mut o = Overrides::default();
        for (k, x) in v {
            o.params.insert((*k).to_string(), *x);
        }
        let c = tankwave_stage::load_source(source.clone(), &o)
            .expect("elaborates")
            .circuit;
        let t = Instant::now();
        match tankwave_stage::solve(&c, &SolveOptions::scope(Scope::Requirements)) {
            Ok(r) => {
                let s = r.steady.expect("a steady state");
                assert!(
                    s.solution.x.iter().flatten().all(|x| x.is_finite()),
                    "NaN in {v:?}"
                );
                solved += 1;
            }
            Err(e) => eprintln!("{v:?}: {e}"),
        }
        slowest = slowest.max(t.elapsed().as_secs_f64());
    }
    println!(
        "\nconvergence sweep of the class-C stage: {solved} of {} variants solved ({:.1} %), slowest {slowest:.2} s",
        variants.len(),
        100.0 * solved as f64 / variants.len() as f64
    );
}
