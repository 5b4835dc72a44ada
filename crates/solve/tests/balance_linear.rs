//! Harmonic balance on linear circuits against the small-signal AC analysis.
//!
//! A linear circuit is solved exactly in the frequency domain by harmonic
//! balance (each harmonic is an independent phasor problem), so at the
//! fundamental it must equal the phasor solution (G + jωC)X = b of the AC
//! analysis up to rounding: 1e-9 relative is far above the rounding of two
//! LU solves of a well-conditioned 10-unknown system (~1e-14) and far below
//! any modelling difference. A drive amp·sin(ωt) has the phasor −j·amp, so
//! harmonic 1 of an unknown (amplitude phasor 2·c₁, c₁ = (1/N)Σ x_n e^(−jωt_n))
//! equals −j·amp·H, with H the AC response to a 1 V source.

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::{ElementId, Waveform};
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

/// Pi network of the check values: 2.9 Ω → 50 Ω at 7.1 MHz, Q = 10 (C. Bowick,
/// RF Circuit Design, 2nd ed., 2008, ch. 4; memory, values recomputed with numpy).
const F0: f64 = 7.1e6;
const C1: f64 = 17.0370e-9;
const C2: f64 = 4.4832e-9;
const LP: f64 = 135.430e-9;
const RS: f64 = 2.9;
const RL: f64 = 50.0;

fn pi_network(dc: f64, amp: f64) -> (B, ElementId) {
    let mut b = B::new();
    let vs = b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc,
            shape: Some(sine(amp, F0)),
        },
        0.0,
    );
    b.r("rs", "in", "a", RS);
    b.cap("c1", "a", "gnd", C1);
    b.ind("l1", "a", "b", LP, 0.0);
    b.cap("c2", "b", "gnd", C2);
    b.r("rl", "b", "gnd", RL);
    // A DC path for the bias test: a large resistor across c1 changes nothing at RF.
    b.r("rb", "a", "gnd", 1e6);
    b.c.input = Some(vs);
    (b, vs)
}

fn ac_at(b: &B, vs: ElementId, f: f64) -> AcResult {
    let d = instantiate(&b.c).unwrap();
    let p = AcParams {
        from: f,
        to: f,
        points: 1,
        source: Some(vs),
        ..AcParams::default()
    };
    ac(&b.c, &d, &p).unwrap()
}

fn hb(b: &B, harmonics: usize, reduce: bool) -> PeriodicSolution {
    let d = instantiate(&b.c).unwrap();
    let params = SteadyParams {
        freq: F0,
        harmonics,
        method: SteadyMethod::Balance,
        balance: BalanceParams {
            reduce,
            ..BalanceParams::default()
        },
        ..SteadyParams::default()
    };
    steady(&b.c, &d, &params).unwrap()
}

#[test]
fn pi_network_fundamental_equals_ac_analysis() {
    let amp = 2.0;
    let (b, vs) = pi_network(0.0, amp);
    let acr = ac_at(&b, vs, F0);
    for reduce in [true, false] {
        let sol = hb(&b, 8, reduce);
        assert_eq!(sol.info.method, SteadyMethod::Balance);
        let info = sol.info.balance.clone().unwrap();
        eprintln!(
            "pi network (reduce {reduce}): {:?} {info:?}",
            sol.info.iterations
        );
        let mut worst = 0.0f64;
        for (k, name) in acr.names.iter().enumerate() {
            let h = acr.x[0][k];
            let phasor = 2.0 * coef(&sol.x[k], 1);
            let expect = Complex64::new(0.0, -amp) * h;
            let scale = expect.norm().max(1e-3 * amp);
            let e = (phasor - expect).norm() / scale;
            worst = worst.max(e);
            assert!(
                e < 1e-9,
                "{name}: balance {phasor} vs AC {expect} (rel {e:.2e})"
            );
        }
        eprintln!("  worst relative difference from AC: {worst:.2e}");
        if reduce {
            // No nonlinear device: nothing left for Newton.
            assert_eq!(sol.info.system_size, 0);
            assert_eq!(info.ports, 0);
        } else {
            // Every unknown kept: Newton on a linear system takes one update
            // (and one more pass to confirm the update was small).
            assert!(sol.info.iterations <= 2, "{:?}", sol.info);
            assert!(sol.info.residual <= sol.info.tolerance);
        }
    }
}

#[test]
fn pi_network_transducer_gain_is_zero_db_at_design_frequency() {
    // Outside check: the matched network delivers the available power
    // P = Vs²/(8·Rs) to the load at f0 (maximum power transfer; common practice),
    // i.e. transducer gain 0 dB (Bowick ch. 4, memory; check-values.md).
    // The component values are rounded to 6 digits: allow 1e-3 dB.
    let amp = 1.0;
    let (b, _) = pi_network(0.0, amp);
    let sol = hb(&b, 4, true);
    let d = instantiate(&b.c).unwrap();
    let k = d.names.iter().position(|s| s == "V[b]").unwrap();
    let v = 2.0 * coef(&sol.x[k], 1).norm();
    let p_load = v * v / (2.0 * RL);
    let p_avail = amp * amp / (8.0 * RS);
    let g_db = 10.0 * (p_load / p_avail).log10();
    eprintln!("transducer gain at f0: {g_db:.5} dB");
    assert!(g_db.abs() < 1e-3, "{g_db}");
}

#[test]
fn dc_bias_plus_sine_gives_divider_dc_and_ac_fundamental() {
    let (dc, amp) = (1.5, 0.7);
    let (b, vs) = pi_network(dc, amp);
    let acr = ac_at(&b, vs, F0);
    let sol = hb(&b, 8, true);
    let d = instantiate(&b.c).unwrap();
    let kb = d.names.iter().position(|s| s == "V[b]").unwrap();
    let ka = d.names.iter().position(|s| s == "V[a]").unwrap();
    // DC: the inductor shorts a to b, so v(a) = v(b) = dc·(RL‖rb)/(RS + RL‖rb)
    // (voltage divider; common practice).
    let rp = RL * 1e6 / (RL + 1e6);
    let vdc = dc * rp / (RS + rp);
    for k in [ka, kb] {
        let c0 = coef(&sol.x[k], 0).re;
        assert!(
            (c0 - vdc).abs() < 1e-9 * vdc,
            "{}: {c0} vs {vdc}",
            d.names[k]
        );
        let expect = Complex64::new(0.0, -amp) * acr.x[0][k];
        let got = 2.0 * coef(&sol.x[k], 1);
        assert!(
            (got - expect).norm() < 1e-9 * expect.norm(),
            "{got} vs {expect}"
        );
        // A linear circuit driven at f0 has nothing at the other harmonics.
        for h in 2..=8 {
            let c = coef(&sol.x[k], h).norm();
            assert!(c < 1e-12 * amp, "harmonic {h}: {c}");
        }
    }
}
