//! Facts of the trade as checks on the demo stages (common practice, no
//! published source): a grounded-emitter stage whose base returns to ground
//! through a resistor alone conducts for less than half of each cycle, and a
//! feed choke's reactance at the operating frequency is many times the
//! collector load resistance.

use std::path::PathBuf;
use tankwave_circuit::{Circuit, ElementKind, Overrides};
use tankwave_solve::SteadyParams;

fn load(name: &str) -> Circuit {
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("netlists")
        .join(name);
    tankwave_circuit::load_file(&f, &Overrides::default())
        .unwrap()
        .circuit
}

fn steady(c: &Circuit) -> tankwave_solve::PeriodicSolution {
    let d = tankwave_devices::instantiate(c).unwrap();
    let p = c
        .analyses
        .iter()
        .find_map(SteadyParams::from_analysis)
        .unwrap();
    tankwave_solve::steady(c, &d, &p).unwrap()
}

/// Fundamental phasor amplitude of one period of samples.
fn fundamental(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    let (mut re, mut im) = (0.0, 0.0);
    for (i, x) in v.iter().enumerate() {
        let ph = 2.0 * std::f64::consts::PI * i as f64 / n;
        re += x * ph.cos();
        im += x * ph.sin();
    }
    2.0 * (re * re + im * im).sqrt() / n
}

#[test]
fn self_biased_class_c_stage_conducts_for_less_than_half_a_cycle() {
    // the 13.56 MHz demo: emitter grounded, base returned to ground through rbias alone
    let c = load("ism-13m56-classc.tank");
    let s = steady(&c);
    let q = c.element("q1").unwrap();
    let ic = &s.terminal_currents[q][0];
    let angle = tankwave_measure::conduction_angle_deg(ic, 0.05);
    assert!(angle < 180.0, "conduction angle {angle:.1} deg");
}

#[test]
fn every_demo_choke_has_many_times_the_collector_load_reactance() {
    for name in [
        "ism-13m56-classc.tank",
        "cw-7m1-classb.tank",
        "driver-3m6-transformer.tank",
    ] {
        let c = load(name);
        let s = steady(&c);
        let w = 2.0 * std::f64::consts::PI * s.freq;
        for (qi, e) in c.elements.iter().enumerate() {
            let ElementKind::Bjt { c: coll, .. } = e.kind else {
                continue;
            };
            // collector load resistance seen at the fundamental: |Vc1| / |Ic1|
            let vc: Vec<f64> = (0..s.samples_per_period)
                .map(|i| coll.map(|k| s.x[k][i]).unwrap_or(0.0))
                .collect();
            let r_load = fundamental(&vc) / fundamental(&s.terminal_currents[qi][0]);
            // the feed choke: an inductor from the collector node to a node held by a source
            let chokes: Vec<f64> = c
                .elements
                .iter()
                .filter_map(|x| match x.kind {
                    ElementKind::Inductor { a, b, l, .. } if a == coll || b == coll => Some(l),
                    _ => None,
                })
                .collect();
            assert!(!chokes.is_empty(), "{name}: no feed choke at the collector");
            for l in chokes {
                let x = w * l;
                // "many times": 10x for a tuned stage's feed choke and 4x for a
                // broadband transformer's primary, the rules of thumb used to size
                // them (common practice)
                let factor = if name.contains("transformer") {
                    4.0
                } else {
                    10.0
                };
                assert!(
                    x >= factor * r_load,
                    "{name}: choke reactance {x:.1} ohm vs collector load {r_load:.2} ohm"
                );
                eprintln!("{name}: choke {x:.1} ohm, collector load {r_load:.2} ohm");
            }
        }
    }
}
