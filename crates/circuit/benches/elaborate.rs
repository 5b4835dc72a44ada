//! Parse + elaborate throughput on generated ladder stages of 5,000, 10,000
//! and 20,000 elements (to show linear scaling), reported as elements/s and
//! bytes/s. Also elaboration alone (parse once, elaborate many).

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use std::hint::black_box;
use tankwave_circuit::{elaborate, Overrides};
use tankwave_netlist::parse_str;

/// A ladder of `n` elements: series resistors with shunt capacitors and some
/// lossy inductors, driven by one source; uses parameters and expressions.
fn generate(n: usize) -> String {
    let mut s = String::with_capacity(n * 40);
    s.push_str("title \"generated ladder\"\nlet rs = 10Ohm\nlet cs = 1nF\nlet f0 = 10MHz\n");
    s.push_str("voltage vin n0 gnd wave=sine(amp=1V, freq=f0) internal=50Ohm\n");
    let mut made = 1;
    let mut i = 0;
    while made < n {
        match i % 3 {
            0 => s.push_str(&format!("resistor r{i} n{i} n{} rs\n", i + 1)),
            1 => s.push_str(&format!("inductor l{i} n{i} n{} 1.5uH r=(rs/100)\n", i + 1)),
            _ => s.push_str(&format!("resistor r{i} n{i} n{} 22Ohm rating=1W\n", i + 1)),
        }
        made += 1;
        if made < n {
            s.push_str(&format!("capacitor c{i} n{} gnd (cs*2)\n", i + 1));
            made += 1;
        }
        i += 1;
    }
    s.push_str(&format!(
        "resistor rend n{i} gnd 50Ohm\noutput rend\ninput vin\nanalyze steady freq=f0\n"
    ));
    s
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("parse_and_elaborate");
    g.sample_size(10);
    for n in [5_000usize, 10_000, 20_000] {
        let text = generate(n);
        // Sanity: the generated file is valid.
        let parsed = parse_str("gen.tank", &text);
        let e = elaborate(&parsed, &Overrides::default()).expect("generated file is valid");
        let elements = e.circuit.elements.len() as u64;
        g.throughput(Throughput::Elements(elements));
        g.bench_with_input(BenchmarkId::new("elements", n), &text, |b, t| {
            b.iter(|| {
                let p = parse_str("gen.tank", black_box(t));
                elaborate(&p, &Overrides::default()).expect("valid")
            })
        });
        g.throughput(Throughput::Bytes(text.len() as u64));
        g.bench_with_input(BenchmarkId::new("bytes", n), &text, |b, t| {
            b.iter(|| {
                let p = parse_str("gen.tank", black_box(t));
                elaborate(&p, &Overrides::default()).expect("valid")
            })
        });
        g.throughput(Throughput::Elements(elements));
        g.bench_with_input(BenchmarkId::new("elaborate_only", n), &parsed, |b, p| {
            b.iter(|| elaborate(black_box(p), &Overrides::default()).expect("valid"))
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
