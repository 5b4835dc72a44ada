//! A measured one-port (a Touchstone file of a known R–L–C network, written
//! by scikit-rf: tests/reference/touchstone/gen.py, docs/check-values.md
//! "Touchstone files") against the same network built from a resistor, an
//! inductor and a capacitor: the same AC response and the same
//! harmonic-balance steady state; with its fitted model, the same shooting
//! steady state.
//!
//! The network: R = 20 Ω in series with L = 1.2 µH, that in parallel with
//! C = 150 pF. Its DC resistance is R, so `outside_r=20Ohm` makes the
//! measured element exact at 0 Hz too.

use num_complex::Complex64;
use std::f64::consts::PI;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;
use tankwave_solve::*;

mod measured_support;
use measured_support::node;

const R: f64 = 20.0;
const L: f64 = 1.2e-6;
const C: f64 = 150e-12;

/// The drive of the clipper.
const SOURCE: &str = "voltage vs in gnd wave=sine(amp=3V, freq=2MHz) internal=10Ohm";

fn stage(load: &str, extra: &str) -> (Circuit, DeviceSet) {
    measured_support::stage(SOURCE, load, extra)
}

const RLC: &str = "resistor r load m 20Ohm\ninductor l m gnd 1.2uH\ncapacitor c load gnd 150pF\n";

fn measured(file: &str) -> String {
    format!("measured ant load gnd \"{file}\" outside_r=20Ohm\n")
}

/// The load's admittance, S (circuit theory).
fn y_load(f: f64) -> Complex64 {
    let w = 2.0 * PI * f;
    Complex64::new(0.0, w * C) + Complex64::new(R, w * L).inv()
}

fn ac_at(load: &str, freqs: &[f64]) -> Vec<Complex64> {
    measured_support::ac_at(SOURCE, load, freqs)
}

#[test]
fn ac_at_the_file_points_equals_the_rlc() {
    // At the file's own points there is no interpolation: only the 17
    // significant digits the library wrote, and the S-to-Y conversion.
    let freqs: Vec<f64> = (1..=60).map(|m| 1e6 * m as f64).collect();
    let a = ac_at(&measured("rlc1g_ri_v1.s1p"), &freqs);
    let b = ac_at(RLC, &freqs);
    for ((f, va), vb) in freqs.iter().zip(&a).zip(&b) {
        assert!((va - vb).norm() <= 1e-9 * vb.norm(), "{f} Hz: {va} vs {vb}");
    }
}

#[test]
fn ac_between_points_is_within_the_interpolation_bound() {
    // Between points, linear interpolation of Y errs by at most
    // h²/8·max|Y''| (h the point spacing; textbook bound of linear
    // interpolation). The load sees a source admittance Ys = 1/(10+1) S, so
    // V = I/(Ys + Y) moves by |ΔY|/|Ys + Y| relative, to first order.
    let file = "rlc1_ri_v1.s1p"; // 1..60 MHz, h = 59/120 MHz
    let h = 59e6 / 120.0;
    let freqs: Vec<f64> = (0..40).map(|m| 1.2e6 + 1.37e6 * m as f64).collect();
    let a = ac_at(&measured(file), &freqs);
    let b = ac_at(RLC, &freqs);
    let ys = Complex64::new(1.0 / 11.0, 0.0);
    let mut worst: f64 = 0.0;
    for ((f, va), vb) in freqs.iter().zip(&a).zip(&b) {
        // |Y''| over the interval around f, from the closed form
        // Y'' = (2πL)²·2/(R + jωL)³·(−1) (the capacitor's part is linear).
        let ypp = |f: f64| {
            2.0 * (2.0 * PI * L).powi(2) / Complex64::new(R, 2.0 * PI * f * L).norm().powi(3)
        };
        let max_ypp = (0..=8)
            .map(|s| ypp(f - h + s as f64 * h / 4.0))
            .fold(0.0, f64::max);
        let dy = h * h / 8.0 * max_ypp;
        let bound = dy / (ys + y_load(*f)).norm() * 1.01; // 1 % for the first-order step
        let rel = (va - vb).norm() / vb.norm();
        assert!(rel <= bound, "{f} Hz: {rel:.3e} > {bound:.3e}");
        worst = worst.max(rel / bound);
    }
    // The bound is not loose by orders of magnitude: interpolation is what
    // is measured here.
    assert!(worst > 0.05, "worst share of the bound {worst}");
}

#[test]
fn harmonic_balance_equals_the_rlc() {
    // A half-wave diode clipper into the load at 2 MHz, 16 harmonics: every
    // harmonic (2..32 MHz) is a point of the file and DC is outside_r=20 Ω,
    // the network's exact DC resistance, so both circuits have the same
    // equations to the 17 digits of the file. Both are solved to the
    // balance's relative residual 1e-6 of each row's largest term; the
    // waveforms then agree to that tolerance times the largest voltage.
    let hb = "analyze steady freq=2MHz harmonics=16 method=balance\n";
    let diode = "diode d1 in load part=dm\n";
    let (cm, dm) = stage(&measured("rlc1g_ri_v1.s1p"), &format!("{hb}{diode}"));
    let (cr, dr) = stage(RLC, &format!("{hb}{diode}"));
    let mut p = SteadyParams {
        freq: 2e6,
        harmonics: 16,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    let sm = steady(&cm, &dm, &p).unwrap();
    let sr = steady(&cr, &dr, &p).unwrap();
    let (km, kr) = (node(&cm, "load"), node(&cr, "load"));
    let peak = sr.x[kr].iter().fold(0.0f64, |a, v| a.max(v.abs()));
    assert!(peak > 1.0, "the clipper drives the load: {peak} V");
    let tol = 1e-6 * peak;
    for (s, (a, b)) in sm.x[km].iter().zip(&sr.x[kr]).enumerate() {
        assert!((a - b).abs() <= tol, "sample {s}: {a} V vs {b} V");
    }
    // The load's current (its terminal current, from Y at each harmonic)
    // equals the diode's, which feeds it alone.
    let ant = cm.elements.iter().position(|e| e.name == "ant").unwrap();
    let d1 = cm.elements.iter().position(|e| e.name == "d1").unwrap();
    let i_ant = &sm.terminal_currents[ant][0];
    let i_d = &sm.terminal_currents[d1][1];
    let ipk = i_d.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    for (a, b) in i_ant.iter().zip(i_d) {
        // Into the load's top terminal = out of the diode's cathode.
        assert!((a + b).abs() <= 1e-5 * ipk, "{a} A vs {b} A");
    }
    // No Floquet check of an orbit with a measured network (it integrates
    // in time): none is claimed.
    assert!(sm.info.floquet.is_none());
}

#[test]
fn time_domain_analyses_refuse_a_measured_network_without_its_fit() {
    // The file asks for no time-domain analysis, so elaboration made no
    // fitted model: the solver refuses the time-domain methods.
    let (c, d) = stage(&measured("rlc1g_ri_v1.s1p"), "resistor rin in load 1Ohm\n");
    let p = SteadyParams {
        freq: 2e6,
        harmonics: 8,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    let e = steady(&c, &d, &p).unwrap_err().to_string();
    assert!(e.contains("has no fitted time-domain model"), "{e}");
    let e = transient(&c, &d, &TransientParams::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("has no fitted time-domain model"), "{e}");
}

#[test]
fn shooting_with_the_fitted_model_equals_the_rlc() {
    // The same diode clipper, solved by shooting. The file's network is
    // exactly rational (Y = sC + 1/(R + sL): one real pole −R/L, E = C)
    // and its DC rule (outside_r=20Ohm) is its exact DC value, so vector
    // fitting recovers it to rounding and the measured element's states
    // are a linear change of variables of the R–L–C's own unknowns; the
    // integration rule is invariant under such a change, so both circuits
    // follow the same discrete equations. Both are solved to shooting's
    // tolerance (1e-7 of each unknown's scale); 1e-5 of the peak voltage
    // leaves room for that and the file's 17 digits.
    let sh = "analyze steady freq=2MHz harmonics=16 method=shooting\n";
    let diode = "diode d1 in load part=dm\n";
    let (cm, dm) = stage(&measured("rlc1g_ri_v1.s1p"), &format!("{sh}{diode}"));
    let (cr, dr) = stage(RLC, &format!("{sh}{diode}"));
    let fit = cm
        .elements
        .iter()
        .find_map(|e| match &e.kind {
            tankwave_circuit::ElementKind::Measured { network, .. } => network.fit.clone(),
            _ => None,
        })
        .expect("a fitted model for the time-domain analysis");
    // The data are exact: the fit's error is rounding (far below 1e-9).
    assert!(fit.info.worst_error < 1e-9, "{:?}", fit.info);
    assert!(fit.dc_error < 1e-9, "{}", fit.dc_error);
    let p = SteadyParams {
        freq: 2e6,
        harmonics: 16,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    let sm = steady(&cm, &dm, &p).unwrap();
    let sr = steady(&cr, &dr, &p).unwrap();
    let (km, kr) = (node(&cm, "load"), node(&cr, "load"));
    let peak = sr.x[kr].iter().fold(0.0f64, |a, v| a.max(v.abs()));
    assert!(peak > 1.0, "the clipper drives the load: {peak} V");
    for (s, (a, b)) in sm.x[km].iter().zip(&sr.x[kr]).enumerate() {
        assert!((a - b).abs() <= 1e-5 * peak, "sample {s}: {a} V vs {b} V");
    }
    // Verified like any orbit: the Floquet check ran on the fitted model.
    assert!(sm.info.floquet.is_some());
}

#[test]
fn harmonic_balance_with_a_fitted_element_still_uses_the_file() {
    // With a time-domain analysis in the file the element carries its
    // fitted model, yet harmonic balance adds Y(f) − Y_fit(f) at every
    // harmonic: it solves the same equations as without the fit, so both
    // agree to the balance's tolerance (1e-6 of the peak, as above).
    let hb = "analyze steady freq=2MHz harmonics=16 method=balance\n";
    let tr = "analyze transient stop=1us step=10ns\n";
    let diode = "diode d1 in load part=dm\n";
    let (ca, da) = stage(&measured("rlc1_ri_v1.s1p"), &format!("{hb}{diode}"));
    let (cb, db) = stage(&measured("rlc1_ri_v1.s1p"), &format!("{hb}{tr}{diode}"));
    let mut p = SteadyParams {
        freq: 2e6,
        harmonics: 16,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    let sa = steady(&ca, &da, &p).unwrap();
    let sb = steady(&cb, &db, &p).unwrap();
    let k = node(&ca, "load");
    let peak = sa.x[k].iter().fold(0.0f64, |a, v| a.max(v.abs()));
    for (a, b) in sa.x[k].iter().zip(&sb.x[k]) {
        assert!((a - b).abs() <= 1e-6 * peak, "{a} V vs {b} V");
    }
}
