//! Benchmarks: transient of a 50-section LC ladder, operating point of a
//! 20-diode network, and dense vs sparse LU on their Jacobians.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use tankwave_circuit::ir::{DiodeParams, Waveform};
use tankwave_devices::{instantiate, DenseStamp, EvalCtx, Filter};
use tankwave_solve::linalg::{LinearSolver, RealLu};
use tankwave_solve::*;

#[path = "../tests/support/mod.rs"]
mod support;
use support::*;

/// `sections` LC sections (100 nH series, 40 pF shunt: 50 Ω, cutoff ≈ 100 MHz)
/// between a 50 Ω, 10 MHz source and a 50 Ω load; 2·sections + 2 unknowns.
fn ladder(sections: usize) -> B {
    let mut b = B::new();
    b.vsrc(
        "vs",
        "n0",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(1.0, 10e6)),
        },
        50.0,
    );
    for k in 0..sections {
        b.ind(
            &format!("l{k}"),
            &format!("n{k}"),
            &format!("n{}", k + 1),
            100e-9,
            0.0,
        );
        b.cap(&format!("c{k}"), &format!("n{}", k + 1), "gnd", 40e-12);
    }
    b.r("rl", &format!("n{sections}"), "gnd", 50.0);
    b
}

/// 20 diodes: a chain from a 12 V supply through 100 Ω, each junction node
/// loaded by 1 kΩ to ground, plus a reverse diode across every other section.
fn diodes() -> B {
    let mut b = B::new();
    b.vdc("vs", "s", "gnd", 12.0);
    b.r("r0", "s", "d0", 100.0);
    for k in 0..10 {
        let (a, c) = (format!("d{k}"), format!("d{}", k + 1));
        b.diode(&format!("df{k}"), &a, &c, DiodeParams::default());
        b.r(&format!("rg{k}"), &c, "gnd", 1e3);
        b.diode(
            &format!("dr{k}"),
            &c,
            &a,
            DiodeParams {
                sat_current: 1e-12,
                ..DiodeParams::default()
            },
        );
    }
    b
}

fn bench(c: &mut Criterion) {
    let lad = ladder(50);
    let dl = instantiate(&lad.c).unwrap();
    let dio = diodes();
    let dd = instantiate(&dio.c).unwrap();

    for (name, kind) in [
        ("dense", LinearSolver::Dense),
        ("sparse", LinearSolver::Sparse),
    ] {
        let mut p = TransientParams {
            stop: 200e-9,
            step: 1e-9,
            rel_tolerance: Some(1e-5),
            ..TransientParams::default()
        };
        p.op.linear_solver = kind;
        c.bench_function(
            &format!("transient LC ladder 50 sections 2 periods ({name})"),
            |bn| bn.iter(|| black_box(transient(&lad.c, &dl, &p).unwrap())),
        );
        let op = OpParams {
            linear_solver: kind,
            ..OpParams::default()
        };
        c.bench_function(&format!("op 20-diode network ({name})"), |bn| {
            bn.iter(|| black_box(operating_point(&dio.c, &dd, &op).unwrap()))
        });
    }

    // Factor + solve on the Jacobians alone.
    let jac = |d: &tankwave_devices::DeviceSet, x: &[f64], alpha: f64| {
        let mut st = DenseStamp::new(d.n_unknowns);
        let mut s = d.initial_state();
        d.eval_all(x, &EvalCtx::default(), &mut s, &mut st, Filter::All);
        st.g.iter()
            .zip(&st.c)
            .map(|(g, c)| g + alpha * c)
            .collect::<Vec<f64>>()
    };
    let xop = operating_point(&dio.c, &dd, &OpParams::default())
        .unwrap()
        .x;
    let jd = jac(&dd, &xop, 0.0);
    let mut cases = vec![("20-diode".to_string(), dd.n_unknowns, jd)];
    for sections in [1usize, 2, 3, 5, 10, 20, 30, 50] {
        let l = ladder(sections);
        let d = instantiate(&l.c).unwrap();
        let j = jac(&d, &vec![0.0; d.n_unknowns], 2.0 / 1e-10);
        cases.push((format!("LC ladder {sections}"), d.n_unknowns, j));
    }
    for (label, n, a) in &cases {
        let n = *n;
        for (name, kind) in [
            ("dense", LinearSolver::Dense),
            ("sparse", LinearSolver::Sparse),
        ] {
            let mut lu = RealLu::new(kind, n);
            lu.factor(a).unwrap();
            c.bench_function(
                &format!("LU factor+solve {label} n={n} ({name}, pattern reused)"),
                |bn| {
                    bn.iter(|| {
                        lu.factor(black_box(a)).unwrap();
                        let mut b = vec![1.0; n];
                        lu.solve(&mut b);
                        black_box(b)
                    })
                },
            );
        }
    }
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20).measurement_time(std::time::Duration::from_secs(3));
    targets = bench
}
criterion_main!(benches);
