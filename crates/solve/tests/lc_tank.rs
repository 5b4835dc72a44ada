//! A lossless LC tank ringing freely: energy under the trapezoidal rule and
//! BDF2.
//!
//! Theory (common practice in numerical analysis of ODEs; e.g. E. Hairer,
//! G. Wanner, Solving ODEs II, ch. IV–V, from memory): for the linear test
//! equation y' = λy the trapezoidal rule multiplies y by
//! (1 + λh/2)/(1 − λh/2), of modulus exactly 1 for λ = ±jω, so a lossless
//! tank keeps its energy whatever the step. BDF2 at a fixed step,
//! (3/2)y₁ − 2y₀ + ½y₋₁ = hλy₁, has the principal root
//! ξ = (2 + √(1 + 2z)) / (3 − 2z), z = jωh, with |ξ| < 1: the energy
//! (a quadratic form in the modal coordinates) shrinks by |ξ|² per step.

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::{Shape, Waveform};
use tankwave_circuit::Integration;
use tankwave_devices::instantiate;
use tankwave_solve::*;

const L: f64 = 1e-6;
const C: f64 = 1e-9;
const I0: f64 = 0.1;

/// Tank on node `t`: L and C to ground, a current source feeding I0 into the
/// node until `t_off`, then nothing (a short linear ramp).
fn tank(t_off: f64) -> B {
    let mut b = B::new();
    b.ind("l1", "t", "gnd", L, 0.0);
    b.cap("c1", "t", "gnd", C);
    b.isrc(
        "i0",
        "gnd",
        "t",
        Waveform {
            dc: 0.0,
            shape: Some(Shape::Table(vec![(0.0, I0), (t_off, 0.0)])),
        },
    );
    b
}

fn energy(r: &TransientResult, s: usize) -> f64 {
    let v = r.x[s][r.index("V[t]").unwrap()];
    let i = r.x[s][r.index("I[l1]").unwrap()];
    0.5 * C * v * v + 0.5 * L * i * i
}

#[test]
fn trapezoidal_keeps_tank_energy_over_1000_periods() {
    let period = 2.0 * std::f64::consts::PI * (L * C).sqrt();
    let t_off = period / 1000.0;
    let b = tank(t_off);
    let d = instantiate(&b.c).unwrap();
    let p = TransientParams {
        stop: 1000.0 * period + t_off,
        step: period / 20.0,
        method: Integration::Trapezoidal,
        rel_tolerance: Some(1e-4),
        ..TransientParams::default()
    };
    let r = transient(&b.c, &d, &p).unwrap();
    // The step after the source's last corner is one backward-Euler restart step
    // (which dissipates about (ωh)² of the energy); trapezoidal steps follow it.
    let s0 = r.time.iter().position(|&t| t >= t_off).unwrap() + 1;
    let e0 = energy(&r, s0);
    let worst = (s0..r.time.len())
        .map(|s| (energy(&r, s) / e0 - 1.0).abs())
        .fold(0.0, f64::max);
    eprintln!(
        "trapezoidal: {} steps over 1000 periods, worst relative energy change {worst:.3e}",
        r.info.accepted
    );
    // Exact conservation in exact arithmetic; 1e-6 is the brief's bound and leaves
    // room for rounding over ~1e5 steps.
    assert!(worst < 1e-6, "{worst}");
    assert!(e0 > 0.4 * L * I0 * I0, "the tank was energised: {e0}");
}

#[test]
fn bdf2_damps_tank_energy_as_its_root_predicts() {
    let w = 1.0 / (L * C).sqrt();
    let period = 2.0 * std::f64::consts::PI / w;
    let steps_per_period = 100usize;
    let h = period / steps_per_period as f64;
    let b = tank(h);
    let d = instantiate(&b.c).unwrap();
    let p = TransientParams {
        stop: 200.0 * period,
        step: h,
        method: Integration::Bdf2,
        fixed_step: true,
        ..TransientParams::default()
    };
    let r = transient(&b.c, &d, &p).unwrap();
    // Compare after the parasitic root (|ξ₂| ≈ 1/3) has died out.
    let s1 = 2 * steps_per_period;
    let nsteps = 100 * steps_per_period;
    let ratio = energy(&r, s1 + nsteps) / energy(&r, s1);
    let z = Complex64::new(0.0, w * h);
    let xi = (2.0 + (1.0 + 2.0 * z).sqrt()) / (3.0 - 2.0 * z);
    let expected = xi.norm().powi(2 * nsteps as i32);
    eprintln!(
        "BDF2 at {steps_per_period} steps/period: energy ratio over {nsteps} steps {ratio:.9}, theory {expected:.9}"
    );
    assert!(
        expected < 0.99,
        "the test must see real damping: {expected}"
    );
    // The discrete solution is exactly geometric in the principal root; 1e-6
    // allows rounding and the (1/3)^200 parasitic remnant.
    assert!(
        (ratio / expected - 1.0).abs() < 1e-6,
        "{ratio} vs {expected}"
    );
}
