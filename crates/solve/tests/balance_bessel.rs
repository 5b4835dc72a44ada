//! Outside check of the nonlinear machinery: an ideal exponential diode
//! driven directly by a cosine voltage.
//!
//! With v(t) = V cos ωt across a junction i = IS (e^(v/Vt) − 1), the
//! generating function of the modified Bessel functions,
//! e^(x cos θ) = I₀(x) + 2 Σ_{k≥1} I_k(x) cos kθ (M. Abramowitz, I. A.
//! Stegun, Handbook of Mathematical Functions, 1964, eq. 9.6.34), gives the
//! current's spectrum in closed form with x = V/Vt:
//! mean IS (I₀(x) − 1), amplitude of harmonic k 2·IS·I_k(x).
//! I_k is summed from its power series (same handbook, eq. 9.6.10),
//! I_k(x) = Σ_m (x/2)^(2m+k) / (m! (m+k)!), to full double precision.
//! Vt = kT/q with the exact CODATA 2018 constants (check-values.md).

mod support;
use support::*;
use tankwave_circuit::ir::{DiodeParams, Shape, Waveform};
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

/// Modified Bessel function of the first kind, integer order, by its power series.
fn bessel_i(k: usize, x: f64) -> f64 {
    let h = x / 2.0;
    let mut term = h.powi(k as i32) / (1..=k).map(|j| j as f64).product::<f64>();
    let mut sum = 0.0;
    for m in 0..200 {
        sum += term;
        if term < 1e-18 * sum {
            break;
        }
        term *= h * h / ((m + 1) as f64 * (m + 1 + k) as f64);
    }
    sum
}

#[test]
fn cosine_driven_junction_current_matches_bessel_series() {
    let f = 1e6;
    let is = 1e-9;
    // Thermal voltage at the builder's circuit temperature (298.15 K).
    let vt = vt(B::new().c.temperature_k);
    for v_amp in [0.05, 0.1, 0.2] {
        let mut bb = B::new();
        bb.vsrc(
            "vs",
            "a",
            "gnd",
            Waveform {
                dc: 0.0,
                shape: Some(Shape::Sine {
                    amp: v_amp,
                    freq: f,
                    phase: std::f64::consts::FRAC_PI_2,
                    offset: 0.0,
                    delay: 0.0,
                    rise: 0.0,
                }),
            },
            0.0,
        );
        bb.diode(
            "d1",
            "a",
            "gnd",
            DiodeParams {
                sat_current: is,
                ..DiodeParams::default()
            },
        );
        let d = instantiate(&bb.c).unwrap();
        let mut p = SteadyParams {
            freq: f,
            harmonics: 32,
            method: SteadyMethod::Balance,
            ..SteadyParams::default()
        };
        // No junction shunt conductance: the closed form has none.
        p.balance.junction_leak = 0.0;
        let s = steady(&bb.c, &d, &p).unwrap();
        let el = bb.c.elements.iter().position(|e| e.name == "d1").unwrap();
        let i = &s.terminal_currents[el][0];
        let x = v_amp / vt;
        let mean = is * (bessel_i(0, x) - 1.0);
        let got0 = coef(i, 0).re;
        eprintln!("V = {v_amp} V (x = {x:.4}): mean {got0:.9e} vs {mean:.9e} A");
        // The voltage is pinned by the source, so the current comes from exact
        // samples of an entire function: only FFT rounding separates them.
        assert!((got0 - mean).abs() < 1e-9 * mean, "{got0} vs {mean}");
        for k in 1..=10 {
            let expect = 2.0 * is * bessel_i(k, x);
            let got = 2.0 * coef(i, k).norm();
            let e = (got - expect).abs();
            assert!(
                e < 1e-9 * mean + 1e-6 * expect,
                "harmonic {k}: {got:.9e} vs {expect:.9e}"
            );
        }
    }
}
