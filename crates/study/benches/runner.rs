//! Runner throughput with a synthetic CPU-bound work closure: 1 vs 2 threads
//! (the speed-up is the ratio of the two times), and the per-variant cost at
//! 1 000 vs 16 000 variants with records streamed to a sink that drops them
//! (flat per-variant cost: nothing accumulates).

use std::collections::BTreeMap;
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use tankwave_circuit::{MonteCarlo, Origin, StudySpec, Sweep, Vary, VaryTarget};
use tankwave_study::{
    run_study, Outcome, Plan, Record, RecordSink, StudyError, StudyParams, Variant, WarmStart,
};

/// A sink that serialises each record (as the file sink does) and drops it.
struct Discard(u64);

impl RecordSink for Discard {
    fn record(&mut self, r: &Record) -> Result<(), StudyError> {
        self.0 += serde_json::to_vec(r).map(|v| v.len() as u64).unwrap_or(0);
        Ok(())
    }
}

/// About `iters` multiply-adds of a damped oscillator, standing in for a solve.
fn burn(v: &Variant, iters: u32) -> Result<Outcome, String> {
    let k = v.values.values().sum::<f64>();
    let (mut x, mut y) = (1.0f64, 0.0f64);
    for _ in 0..iters {
        let nx = x - 1e-3 * (k * y + 1e-4 * x);
        y += 1e-3 * nx;
        x = nx;
    }
    let mut metrics = BTreeMap::new();
    metrics.insert("x".to_string(), black_box(x));
    metrics.insert("y".to_string(), y);
    Ok(Outcome {
        metrics,
        verdicts: BTreeMap::new(),
        warm: Some(vec![x, y]),
    })
}

fn plan(points: usize, runs: usize) -> Plan {
    let spec = StudySpec {
        vary: vec![Vary {
            target: VaryTarget::Param("k".to_string()),
            sweep: Sweep::Linear {
                from: 1.0,
                to: 2.0,
                points,
            },
            origin: Origin::default(),
        }],
        montecarlo: Some(MonteCarlo { runs, seed: 1 }),
        ..Default::default()
    };
    Plan::new(&spec, &[]).expect("valid plan")
}

fn threads(c: &mut Criterion) {
    let p = plan(64, 4); // 256 variants, ~20 µs of work each
    let mut g = c.benchmark_group("runner_threads");
    g.throughput(Throughput::Elements(p.len()));
    g.sample_size(20);
    for t in [1usize, 2] {
        g.bench_with_input(BenchmarkId::from_parameter(t), &t, |b, &t| {
            let params = StudyParams {
                threads: Some(t),
                ..Default::default()
            };
            b.iter(|| {
                let mut sink = Discard(0);
                let work = |v: &Variant, _: Option<&WarmStart>| burn(v, 20_000);
                run_study(&p, &params, work, &mut sink, &|_| {}).expect("runs");
                black_box(sink.0)
            })
        });
    }
    g.finish();
}

fn scaling(c: &mut Criterion) {
    let mut g = c.benchmark_group("runner_variants");
    g.sample_size(10);
    for n in [1_000usize, 16_000] {
        let p = plan(n / 4, 4);
        g.throughput(Throughput::Elements(p.len()));
        g.bench_with_input(BenchmarkId::from_parameter(n), &n, |b, _| {
            let params = StudyParams {
                threads: Some(2),
                ..Default::default()
            };
            b.iter(|| {
                let mut sink = Discard(0);
                let work = |v: &Variant, _: Option<&WarmStart>| burn(v, 200);
                run_study(&p, &params, work, &mut sink, &|_| {}).expect("runs");
                black_box(sink.0)
            })
        });
    }
    g.finish();
}

criterion_group!(benches, threads, scaling);
criterion_main!(benches);
