//! Plotting a study of 1,000 variants: the Monte Carlo histogram of one
//! figure and the sweep curves (a figure against one parameter, one curve
//! per value of a second) built from synthetic records, and both together.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use tankwave_report::plot::{self, HistogramSpec, Limit, PlotParams, SweepCurves};

/// 1,000 synthetic variants: (C1, C2, output power) on a 40 × 25 grid with
/// a smooth response plus a deterministic wobble.
fn records() -> Vec<(f64, f64, f64)> {
    let mut out = Vec::with_capacity(1000);
    for i in 0..40 {
        for j in 0..25 {
            let c1 = 200e-12 + i as f64 * 10e-12;
            let c2 = 100e-12 + j as f64 * 10e-12;
            let p = 20.0 - ((c1 - 400e-12) / 100e-12).powi(2) - ((c2 - 220e-12) / 80e-12).powi(2)
                + 0.2 * ((i * 7 + j * 13) as f64).sin();
            out.push((c1, c2, p));
        }
    }
    out
}

fn study(records: &[(f64, f64, f64)], p: &PlotParams) -> (String, String) {
    let values: Vec<f64> = records.iter().map(|r| r.2).collect();
    let hist = plot::histogram_plot(
        &values,
        &HistogramSpec {
            title: "Output power over 1000 variants".into(),
            name: "output power".into(),
            unit: "W".into(),
            limit: Some(Limit {
                value: 18.0,
                label: "pout >= 18 W".into(),
                pass_above: true,
            }),
            bins: None,
        },
        p,
    )
    .expect("histogram");
    let curves = SweepCurves {
        title: "Output power against C1".into(),
        x_name: "C1".into(),
        x_unit: "F".into(),
        y_name: "output power".into(),
        y_unit: "W".into(),
        curves: SweepCurves::group(records, "C2", "F"),
        limit: Some((18.0, "pout >= 18 W".into())),
    };
    let sweep = plot::sweep_plot(&curves, p).expect("sweep");
    (hist, sweep)
}

fn bench(c: &mut Criterion) {
    let r = records();
    let p = PlotParams::for_source("bench-study.tw");
    let values: Vec<f64> = r.iter().map(|x| x.2).collect();
    c.bench_function("histogram of 1000 variants", |b| {
        b.iter(|| {
            plot::histogram_plot(
                black_box(&values),
                &HistogramSpec {
                    title: "Output power".into(),
                    name: "output power".into(),
                    unit: "W".into(),
                    limit: None,
                    bins: None,
                },
                &p,
            )
        })
    });
    c.bench_function("sweep curves of 1000 variants (25 curves)", |b| {
        b.iter(|| {
            let curves = SweepCurves {
                title: "Output power against C1".into(),
                x_name: "C1".into(),
                x_unit: "F".into(),
                y_name: "output power".into(),
                y_unit: "W".into(),
                curves: SweepCurves::group(black_box(&r), "C2", "F"),
                limit: None,
            };
            plot::sweep_plot(&curves, &p)
        })
    });
    c.bench_function("study of 1000 variants (histogram + sweep curves)", |b| {
        b.iter(|| study(black_box(&r), &p))
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
