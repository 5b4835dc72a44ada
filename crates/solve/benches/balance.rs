//! Periodic steady state: harmonic balance vs shooting vs a plain transient
//! of 10 periods, on a diode rectifier and a class-C bipolar stage.
//!
//! Balance runs twice: with the default automatic raise of K (32 → until the
//! top tenth of the harmonics is below 1e-6 of the fundamental, capped at 128)
//! and at a fixed K = 32. The automatic raise runs twice: with the Newton
//! step by GMRES from 400 real unknowns (the default) and by dense LU only
//! (`krylov_from` off), so the two are compared in one run, and a third
//! time by GMRES with the block-diagonal preconditioner alone
//! (`device_band` 0, no device blocks). Shooting and the transient use 256
//! steps per period.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use tankwave_circuit::{Integration, SteadyMethod};
use tankwave_devices::instantiate;
use tankwave_solve::*;

#[path = "../tests/support/mod.rs"]
mod support;
use support::*;

/// The rectifier of tests/support at 1 MHz.
fn rectifier_stage() -> (B, f64) {
    (rectifier(1e6), 1e6)
}

/// The class-C demo stage of tests/support (13.56 MHz, invented model), 20 V drive.
fn class_c_stage() -> (B, f64) {
    (class_c(20.0), CLASS_C_F0)
}

fn steady_params(f: f64, method: SteadyMethod, raise: bool, krylov: bool) -> SteadyParams {
    let mut p = SteadyParams {
        freq: f,
        harmonics: 32,
        method,
        steps_per_period: 256,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = raise;
    if !krylov {
        p.balance.krylov_from = usize::MAX;
    }
    p
}

fn bench_stage(c: &mut Criterion, name: &str, (b, f): (B, f64)) {
    let d = instantiate(&b.c).expect("devices");
    let mut g = c.benchmark_group(name);
    g.sample_size(10)
        .measurement_time(std::time::Duration::from_secs(4));
    for (label, method, raise, krylov, blocks) in [
        ("balance auto-K", SteadyMethod::Balance, true, true, true),
        (
            "balance auto-K, no device blocks",
            SteadyMethod::Balance,
            true,
            true,
            false,
        ),
        (
            "balance auto-K, dense LU only",
            SteadyMethod::Balance,
            true,
            false,
            true,
        ),
        ("balance K=32", SteadyMethod::Balance, false, true, true),
        (
            "shooting 256 steps",
            SteadyMethod::Shooting,
            false,
            true,
            true,
        ),
    ] {
        let mut p = steady_params(f, method, raise, krylov);
        if !blocks {
            p.balance.device_band = 0;
        }
        let s = steady(&b.c, &d, &p).expect("steady");
        eprintln!("{name} / {label}: {:?}", s.info);
        g.bench_function(label, |bch| {
            bch.iter(|| black_box(steady(&b.c, &d, &p).expect("steady")))
        });
    }
    // A warm start from the solved state (a study's neighbouring variant):
    // balance at K = 32 from it, against the cold solve above.
    let mut p = steady_params(f, SteadyMethod::Balance, false, true);
    let cold = steady(&b.c, &d, &p).expect("steady");
    p.balance.initial = Some(cold.x.iter().map(|u| u[0]).collect());
    let s = steady(&b.c, &d, &p).expect("steady");
    eprintln!("{name} / balance K=32 warm-started: {:?}", s.info);
    g.bench_function("balance K=32 warm-started", |bch| {
        bch.iter(|| black_box(steady(&b.c, &d, &p).expect("steady")))
    });
    let tp = TransientParams {
        stop: 10.0 / f,
        step: 1.0 / (256.0 * f),
        method: Integration::Trapezoidal,
        ..TransientParams::default()
    };
    g.bench_function("transient 10 periods", |bch| {
        bch.iter(|| black_box(transient(&b.c, &d, &tp).expect("transient")))
    });
    g.finish();
}

fn benches(c: &mut Criterion) {
    bench_stage(c, "diode rectifier", rectifier_stage());
    bench_stage(c, "class-C stage", class_c_stage());
}

criterion_group!(balance_benches, benches);
criterion_main!(balance_benches);
