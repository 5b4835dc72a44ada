//! Periodic steady state: harmonic balance vs shooting vs a plain transient
//! of 10 periods, on a diode rectifier and a class-C bipolar stage.
//!
//! Balance runs twice: with the default automatic raise of K (32 → until the
//! top tenth of the harmonics is below 1e-6 of the fundamental, capped at 128)
//! and at a fixed K = 32. Shooting and the transient use 256 steps per period.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use tankwave_circuit::ir::*;
use tankwave_circuit::{Integration, SteadyMethod};
use tankwave_devices::instantiate;
use tankwave_solve::*;

#[path = "../tests/support/mod.rs"]
mod support;
use support::*;

/// Half-wave peak rectifier at 1 MHz: 5 V sine, diode, 1 kΩ ‖ 10 nF.
fn rectifier() -> (B, f64) {
    let f = 1e6;
    let mut b = B::new();
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(5.0, f)),
        },
        0.0,
    );
    b.diode(
        "d1",
        "in",
        "out",
        DiodeParams {
            sat_current: 1e-14,
            cj0: 2e-12,
            transit: 1e-9,
            ..DiodeParams::default()
        },
    );
    b.r("rl", "out", "gnd", 1e3);
    b.cap("cl", "out", "gnd", 10e-9);
    (b, f)
}

/// The class-C demo stage of tests/balance_bjt.rs (13.56 MHz, invented model).
fn class_c() -> (B, f64) {
    let f = 13.56e6;
    let rq = |l: f64, q: f64| 2.0 * std::f64::consts::PI * f * l / q;
    let mut b = B::new();
    b.vdc("vsup", "vcc", "gnd", 13.8);
    b.vsrc(
        "vdrv",
        "src",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(20.0, f)),
        },
        50.0,
    );
    b.cap("cmin", "src", "gnd", 704e-12);
    b.ind("lmin", "src", "bin", 176e-9, rq(176e-9, 150.0));
    b.cap("cin", "bin", "base", 100e-9);
    b.r("rbias", "base", "gnd", 10.0);
    b.c.models.push(Model {
        name: "tw_hf25".into(),
        params: ModelParams::Bjt(BjtParams {
            sat_current: 5e-12,
            gain_fwd: 50.0,
            gain_rev: 3.0,
            early_fwd: 100.0,
            early_rev: 8.0,
            knee_fwd: 3.0,
            knee_rev: 0.3,
            leak_be: 20e-12,
            leak_be_emission: 1.8,
            leak_bc: 5e-12,
            leak_bc_emission: 2.0,
            r_base: 0.6,
            r_collector: 0.08,
            r_emitter: 0.04,
            cj_be: 1.5e-9,
            vj_be: 0.75,
            grading_be: 0.35,
            cj_bc: 220e-12,
            vj_bc: 0.6,
            grading_bc: 0.4,
            transit_fwd: 0.5e-9,
            transit_rev: 50e-9,
            ..BjtParams::default()
        }),
        origin: Origin::default(),
    });
    let model = b.c.models.len() - 1;
    let (c, bb) = (b.node("coll"), b.node("base"));
    b.c.elements.push(Element {
        name: "q1".into(),
        kind: ElementKind::Bjt {
            c,
            b: bb,
            e: None,
            model,
            area: 1.0,
        },
        origin: Origin::default(),
    });
    b.ind("rfc", "vcc", "coll", 4.7e-6, 0.05);
    b.cap("cblk", "coll", "p1", 100e-9);
    b.cap("c1", "p1", "gnd", 7.81e-9);
    b.ind("lpi", "p1", "out", 73.6e-9, rq(73.6e-9, 200.0));
    b.cap("c2", "out", "gnd", 2.35e-9);
    b.r("rload", "out", "gnd", 50.0);
    (b, f)
}

fn steady_params(f: f64, method: SteadyMethod, raise: bool) -> SteadyParams {
    let mut p = SteadyParams {
        freq: f,
        harmonics: 32,
        method,
        steps_per_period: 256,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = raise;
    p
}

fn bench_stage(c: &mut Criterion, name: &str, (b, f): (B, f64)) {
    let d = instantiate(&b.c).expect("devices");
    let mut g = c.benchmark_group(name);
    g.sample_size(10)
        .measurement_time(std::time::Duration::from_secs(4));
    for (label, method, raise) in [
        ("balance auto-K", SteadyMethod::Balance, true),
        ("balance K=32", SteadyMethod::Balance, false),
        ("shooting 256 steps", SteadyMethod::Shooting, false),
    ] {
        let p = steady_params(f, method, raise);
        let s = steady(&b.c, &d, &p).expect("steady");
        eprintln!("{name} / {label}: {:?}", s.info);
        g.bench_function(label, |bch| {
            bch.iter(|| black_box(steady(&b.c, &d, &p).expect("steady")))
        });
    }
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
    bench_stage(c, "diode rectifier", rectifier());
    bench_stage(c, "class-C stage", class_c());
}

criterion_group!(balance_benches, benches);
criterion_main!(balance_benches);
