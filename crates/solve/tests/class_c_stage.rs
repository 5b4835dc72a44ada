//! A class-C bipolar stage (invented values): shooting and settle must reach
//! the same periodic state, and the transistor's terminal currents must obey
//! KCL at every sample (a three-terminal device is charge-neutral:
//! i_c + i_b + i_e = 0; common practice).

mod support;
use support::*;
use tankwave_circuit::ir::{BjtParams, Waveform};
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

const F: f64 = 7e6;

fn stage() -> B {
    let mut b = B::new();
    b.vdc("vcc", "vcc", "gnd", 12.0);
    b.vsrc(
        "vin",
        "drv",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(1.5, F)),
        },
        10.0,
    );
    b.r("rb", "drv", "base", 5.0);
    b.r("rbe", "base", "gnd", 100.0);
    b.bjt(
        "q1",
        "coll",
        "base",
        "emit",
        BjtParams {
            sat_current: 1e-14,
            gain_fwd: 50.0,
            cj_be: 100e-12,
            cj_bc: 30e-12,
            transit_fwd: 0.3e-9,
            r_base: 1.0,
            ..BjtParams::default()
        },
    );
    // A small emitter resistor keeps the emitter off ground, so all three
    // terminal currents are computed from the device (none by difference).
    b.r("re", "emit", "gnd", 0.2);
    b.ind("lchoke", "vcc", "coll", 10e-6, 0.05);
    b.cap("cc", "coll", "out", 10e-9);
    // Output tank at F across the 50 Ω load.
    b.ind("lt", "out", "gnd", 0.5e-6, 0.0);
    b.cap(
        "ct",
        "out",
        "gnd",
        1.0 / ((2.0 * std::f64::consts::PI * F).powi(2) * 0.5e-6),
    );
    b.r("rl", "out", "gnd", 50.0);
    b
}

#[test]
fn class_c_shooting_and_settle_agree() {
    let b = stage();
    let d = instantiate(&b.c).unwrap();
    let mut p = SteadyParams {
        freq: F,
        harmonics: 16,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    let shoot = steady(&b.c, &d, &p).unwrap();
    p.method = SteadyMethod::Settle;
    let set = steady(&b.c, &d, &p).unwrap();
    let k = d.names.iter().position(|s| s == "V[out]").unwrap();
    let kc = d.names.iter().position(|s| s == "V[coll]").unwrap();
    let peak = shoot.x[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let dev = max_diff(&shoot.x[k], &set.x[k]);
    let vc_max = shoot.x[kc].iter().fold(f64::MIN, |m, v| m.max(*v));
    eprintln!(
        "class C: shooting {} iterations (n = {}), settle {} periods; output peak {peak:.3} V, \
         collector max {vc_max:.3} V; max difference {dev:.3e} V",
        shoot.info.iterations, shoot.info.system_size, set.info.iterations
    );
    assert!(peak > 1.0, "the stage delivers output: {peak}");
    // Settle stops at a period-to-period change of 1e-6 of (range + peak); the
    // slowest mode (choke with coupling capacitor) contracts slowly, so its
    // distance to the fixed point can be tens of times that: allow 1e-4 of the peak.
    assert!(dev < 1e-4 * peak, "{dev}");

    // KCL at the transistor: the three terminal currents sum to zero.
    let q = b.c.element("q1").unwrap();
    let tc = &shoot.terminal_currents[q.index()];
    assert_eq!(tc.len(), 3);
    let icmax = tc[0].iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let worst = (0..shoot.samples_per_period)
        .map(|n| (tc[0][n] + tc[1][n] + tc[2][n]).abs())
        .fold(0.0, f64::max);
    eprintln!("KCL at q1: worst |ic + ib + ie| = {worst:.3e} A of {icmax:.3e} A");
    // The terminal currents use the integrator's own dq/dt, so KCL at the
    // internal base node holds to the Newton tolerance (rel_tolerance 1e-6 on each
    // equation's terms); allow 1e-6 of the peak.
    assert!(worst <= 1e-6 * icmax, "{worst}");
    // Class C: the collector conducts for part of the cycle only.
    let on = tc[0].iter().filter(|&&i| i > 0.05 * icmax).count();
    assert!(on < shoot.samples_per_period / 2, "conducting samples {on}");
}
