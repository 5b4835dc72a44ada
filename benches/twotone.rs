//! Bench binary for the two-tone test (run: `cargo bench --bench twotone`).
//!
//! The class-B linear demo (netlists/linear/ssb-7m1-classb.tank) with its
//! drive written as two sources in series, one tone each, so that both
//! methods see the same circuit:
//!
//! - multi-tone harmonic balance (order 7, 113 mixing products) at tone
//!   spacings of 10 kHz, 1 kHz and 100 Hz: its time does not depend on the
//!   spacing;
//! - the brute-force alternative, a plain transient (SDIRK4 at its default
//!   accuracy, 64 output steps per carrier period) over one spacing period
//!   (1/spacing) from the operating point, at 10 kHz and 5 kHz: its time
//!   grows as 1/spacing. One spacing period is a lower bound on what the
//!   brute force needs (the bias network has not settled by then), so the
//!   ratio is in the transient's favour.
//!
//! Every figure is a ratio of times measured in the same run (medians of
//! repeats); the machines are noisy.

use std::path::PathBuf;
use tankwave_circuit::{Circuit, Overrides, StageSource};
use tankwave_solve::{ToneParams, TransientParams};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::time;

const F0: f64 = 7.1e6;

/// The demo with its includes inlined, its two-tone test and requirements
/// dropped, and the drive split into two series sources at f0 ∓ spacing/2.
fn stage(spacing: f64) -> Circuit {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists");
    let demo = std::fs::read_to_string(root.join("linear/ssb-7m1-classb.tank")).expect("demo");
    let mut text = String::new();
    for line in demo.lines() {
        if let Some(inc) = line.strip_prefix("include \"../") {
            let model = inc.trim_end_matches('"');
            text.push_str(&std::fs::read_to_string(root.join(model)).expect("model"));
            text.push('\n');
        } else if line.starts_with("voltage   vdrv") {
            text.push_str(&format!(
                "voltage vdrv src mid wave=sine(amp=(drive/2), freq={}) internal=50Ohm\n\
                 voltage vdrv2 mid gnd wave=sine(amp=(drive/2), freq={})\n",
                F0 - spacing / 2.0,
                F0 + spacing / 2.0
            ));
        } else if !(line.starts_with("analyze twotone") || line.starts_with("require")) {
            text.push_str(line);
            text.push('\n');
        }
    }
    let src = StageSource::from_text("twotone-bench.tank", &text);
    tankwave_stage::load_source(src, &Overrides::default())
        .unwrap_or_else(|e| panic!("bench stage: {e}"))
        .circuit
}

fn main() {
    println!("two-tone test of the class-B linear demo, order 7");
    let mut balance = Vec::new();
    for spacing in [10e3, 1e3, 100.0] {
        let c = stage(spacing);
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let p = ToneParams {
            tones: vec![F0 - spacing / 2.0, F0 + spacing / 2.0],
            order: 7,
            ..ToneParams::default()
        };
        let mut info = None;
        let t = time(3, || {
            info = Some(
                tankwave_solve::multitone(&c, &d, &p)
                    .expect("multi-tone")
                    .info,
            );
        });
        let info = info.expect("solved");
        println!(
            "  balance, spacing {spacing:>7.0} Hz: {:>8.1} ms ({} Newton iterations, system {}, {} GMRES products)",
            t * 1e3,
            info.iterations,
            info.system_size,
            info.krylov_iterations
        );
        balance.push((spacing, t));
    }
    for spacing in [10e3, 5e3] {
        let c = stage(spacing);
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let tp = TransientParams {
            stop: 1.0 / spacing,
            step: 1.0 / (F0 * 64.0),
            ..TransientParams::default()
        };
        let mut steps = 0;
        let t = time(1, || {
            steps = tankwave_solve::transient(&c, &d, &tp)
                .expect("transient")
                .info
                .accepted;
        });
        let tb = balance
            .iter()
            .find(|(s, _)| *s == spacing)
            .map(|b| b.1)
            .unwrap_or(balance[0].1);
        println!(
            "  transient over one spacing period ({spacing:.0} Hz, {:.0} carrier periods): {:>8.1} ms, {steps} steps; {:.0}x the balance",
            F0 / spacing,
            t * 1e3,
            t / tb
        );
    }
}
