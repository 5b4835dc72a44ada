//! Bench binary for envelope following (run: `cargo bench --bench envelope`).
//!
//! The self-biased keyed stage (netlists/keying/baseleak-7m1-keyed.tank,
//! invented values, 7.1 MHz carrier) keyed with one dot at 25 words per
//! minute: the dot is 1.2/25 s = 48 ms (the 50-unit reference word, from
//! memory), key-down between the 50 % points of raised-cosine edges of
//! 5 ms (common practice for clean keying, from memory), followed by one
//! dot of key-up: 96 ms, 681 600 carrier periods.
//!
//! - envelope following of the whole 96 ms, BDF2 at slow steps of 100 µs
//!   and of 50 µs (the difference of the two bounds the first's error);
//! - the plain transient (SDIRK4 at its default accuracy, 64 output steps
//!   per carrier period) of the same stage cannot run 681 600 periods in a
//!   bench, so its cost per carrier period is measured over 1000 periods
//!   key-down (drive on from the start, 20-period rise) and 1000 periods
//!   key-up (no drive), and the cost of the dot is that per-period cost
//!   times its periods (a plain transient's work is proportional to the
//!   periods it integrates, at a step bounded by the output step). The
//!   measured 1000-period times are printed too, with the ratio of the
//!   envelope run to them.
//!
//! Every figure is a ratio of times measured in the same run (medians of
//! repeats); the machines are noisy.

use std::path::PathBuf;
use tankwave_circuit::{Circuit, Overrides};
use tankwave_solve::{EnvelopeParams, TransientParams};

#[allow(dead_code)] // not every bench uses both helpers
#[path = "support/timing.rs"]
mod timing;
use timing::time;

const F0: f64 = 7.1e6;
const DOT: f64 = 1.2 / 25.0;
const EDGE: f64 = 5e-3;

fn stage(set: &[(&str, f64)]) -> Circuit {
    let f =
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("netlists/keying/baseleak-7m1-keyed.tank");
    let mut o = Overrides::default();
    for (k, v) in set {
        o.params.insert(k.to_string(), *v);
    }
    tankwave_stage::load(&f, &[], &o)
        .unwrap_or_else(|e| panic!("bench stage: {e}"))
        .circuit
}

/// The drive's raised-cosine edge over `rise`: the sine source's own
/// `rise=` ramp, so that envelope following and a plain transient see the
/// same drive.
fn edge(t: f64, rise: f64) -> f64 {
    tankwave_devices::waveform::rise_ramp(t, rise)
}

/// One dot: key-down 48 ms between the 50 % points, 5 ms edges.
fn dot(t: f64) -> f64 {
    edge(t, EDGE) - edge(t - DOT, EDGE)
}

fn main() {
    let stop = 2.0 * DOT;
    println!(
        "envelope following: one dot at 25 wpm ({:.0} ms key-down, {:.0} ms edges) and one dot \
         of key-up, {:.0} carrier periods at {:.1} MHz",
        DOT * 1e3,
        EDGE * 1e3,
        stop * F0,
        F0 / 1e6
    );
    let c = stage(&[("plain", 0.0)]);
    let d = tankwave_devices::instantiate(&c).expect("devices");
    let u = d.voltage_of(c.node("out").expect("out")).expect("unknown");
    let mut runs = Vec::new();
    for h in [100e-6, 50e-6] {
        let p = EnvelopeParams {
            freq: F0,
            harmonics: 16,
            stop,
            step: h,
            ..EnvelopeParams::default()
        };
        let mut sol = None;
        let t = time(3, || {
            sol = Some(tankwave_solve::envelope(&c, &d, &p, &dot).expect("envelope"));
        });
        let s = sol.expect("solved");
        println!(
            "  envelope, slow step {:>4.0} µs: {:>8.1} ms ({} steps, {} Newton iterations, \
             system {}, {} GMRES products)",
            h * 1e6,
            t * 1e3,
            s.info.steps,
            s.info.newton_iterations,
            s.info.system_size,
            s.info.krylov_iterations
        );
        runs.push((t, s));
    }
    let (a0, a1) = (runs[0].1.amplitude(u, 1), runs[1].1.amplitude(u, 1));
    let peak = a1.iter().fold(0.0f64, |m, v| m.max(*v));
    let diff = a0
        .iter()
        .enumerate()
        .map(|(i, v)| (v - a1[2 * i]).abs())
        .fold(0.0f64, f64::max);
    println!(
        "  output key-down {peak:.3} V; 100 µs against 50 µs: {:.2e} of it (BDF2: the 50 µs \
         run's error is about a third of that)",
        diff / peak
    );
    let periods = 1000.0;
    let mut per_period = Vec::new();
    for (what, set) in [
        ("key-down", vec![("plain", 0.0)]),
        ("key-up", vec![("plain", 0.0), ("drive", 0.0)]),
    ] {
        let c = stage(&set);
        let d = tankwave_devices::instantiate(&c).expect("devices");
        let tp = TransientParams {
            stop: periods / F0,
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
        println!(
            "  plain transient, {periods:.0} periods {what}: {:>8.1} ms, {steps} steps \
             ({:.0} per period); the 100 µs envelope run is {:.2}x it",
            t * 1e3,
            steps as f64 / periods,
            runs[0].0 / t
        );
        per_period.push(t / periods);
    }
    // the dot: key-down between the 50 % points, key-up the rest
    let down = DOT * F0;
    let up = stop * F0 - down;
    let plain = per_period[0] * down + per_period[1] * up;
    println!(
        "  plain transient of the dot, from the per-period costs: {:.0} s; envelope (100 µs) \
         {:.2e} of it, (50 µs) {:.2e} of it",
        plain,
        runs[0].0 / plain,
        runs[1].0 / plain
    );
}
