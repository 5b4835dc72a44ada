//! Cost of measuring one period: a stage-sized circuit (a supply, a
//! transistor, a tank of L and C, a load and a drive) at N = 256 samples and
//! K = 32 harmonics, and the same at N = 4096, then judging a mask.

use std::f64::consts::PI;
use std::hint::black_box;
#[allow(unused_imports)]
use tankwave_circuit::handle::*;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use tankwave_circuit::Figure;
use tankwave_circuit::{
    BjtParams, Bound, Circuit, Cmp, Element, ElementKind, Metric, Model, ModelParams, Origin,
    Requirement, Waveform,
};
use tankwave_measure::{evaluate, measure, MeasureParams, PeriodData};

fn el(name: &str, kind: ElementKind) -> Element {
    Element {
        name: name.into(),
        kind,
        origin: Origin::default(),
    }
}

fn stage() -> Circuit {
    let src = |p, rs| ElementKind::VoltageSource {
        p,
        n: NodeId::GROUND,
        wave: Waveform::default(),
        rs,
    };
    Circuit {
        temperature_k: 298.15,
        nodes: ["vcc", "c", "out", "b", "in"].map(String::from).to_vec(),
        elements: vec![
            el("vcc", src(NodeId::node(0), 0.0)),
            el(
                "q1",
                ElementKind::Bjt {
                    c: NodeId::node(1),
                    b: NodeId::node(3),
                    e: NodeId::GROUND,
                    model: ModelId::new(0),
                    area: 1.0,
                },
            ),
            el(
                "ltank",
                ElementKind::Inductor {
                    a: NodeId::node(1),
                    b: NodeId::node(2),
                    l: 1e-6,
                    series_r: 0.0,
                    rating_a: Some(5.0),
                },
            ),
            el(
                "ctank",
                ElementKind::Capacitor {
                    a: NodeId::node(2),
                    b: NodeId::GROUND,
                    c: 1e-9,
                    rating_v: Some(500.0),
                    rating_a: None,
                },
            ),
            el(
                "rl",
                ElementKind::Resistor {
                    a: NodeId::node(2),
                    b: NodeId::GROUND,
                    r: 50.0,
                    rating_w: Some(100.0),
                    ntc_b: None,
                },
            ),
            el("drive", src(NodeId::node(4), 50.0)),
        ],
        models: vec![Model {
            name: "m".into(),
            params: ModelParams::Bjt(BjtParams {
                rth_ja: 5.0,
                max_vce: 60.0,
                ..Default::default()
            }),
            origin: Origin::default(),
        }],
        output: Some(ElementId::new(4)),
        input: Some(ElementId::new(5)),
        requirements: vec![Requirement {
            metric: Metric::of(Figure::Harmonics),
            cmp: Cmp::Le,
            bound: Bound::BuiltinMask("us_amateur".into()),
            text: String::new(),
            origin: Origin::default(),
        }],
        ..Default::default()
    }
}

fn wave(n: usize, phase: f64, h: f64) -> Vec<f64> {
    (0..n)
        .map(|k| {
            let x = 2.0 * PI * k as f64 / n as f64 + phase;
            x.cos() + h * (2.0 * x).cos() + 0.3 * h * (3.0 * x).sin()
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let circuit = stage();
    let mut g = c.benchmark_group("measure_period");
    for n in [256usize, 4096] {
        let v: Vec<Vec<f64>> = (0..5).map(|k| wave(n, 0.3 * k as f64, 0.01)).collect();
        let i: Vec<Vec<Vec<f64>>> = circuit
            .elements
            .iter()
            .enumerate()
            .map(|(e, el)| {
                (0..el.kind.terminals().len())
                    .map(|t| wave(n, 0.1 * (e + t) as f64, 0.02))
                    .collect()
            })
            .collect();
        g.bench_with_input(BenchmarkId::from_parameter(n), &n, |b, _| {
            b.iter(|| {
                let m = measure(
                    &PeriodData {
                        node_floors: &[],
                        circuit: &circuit,
                        freq: 7.1e6,
                        node_voltages: &v,
                        terminal_currents: &i,
                        transport_currents: &[],
                        harmonics: 32,
                    },
                    &MeasureParams::default(),
                )
                .unwrap();
                black_box(evaluate(&circuit, &m))
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
