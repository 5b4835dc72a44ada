//! A measured one-port read with `outside=short`: held as its impedance
//! matrix (docs/analyses.md, "Measured networks"), every port a short out
//! of its file's band.
//!
//! The files are written by scikit-rf (tests/reference/touchstone/gen.py,
//! docs/check-values.md "Touchstone files"), both on a 0.25 MHz grid from
//! 0.25 to 60 MHz:
//!
//! * `rls1`: a lossy choke, R = 8 Ω in series with L = 2.2 µH,
//!   Z = R + jωL (circuit theory; common practice);
//! * `tank1`: L = 1 µH, C = 470 pF and R = 500 Ω in parallel, whose
//!   inductor shorts DC: Z = 1/(1/R + jωC + 1/(jωL)), exactly rational
//!   with Z(0) = 0.

use num_complex::Complex64;
use std::f64::consts::PI;
use tankwave_circuit::{Circuit, ElementKind, SteadyMethod};
use tankwave_devices::DeviceSet;
use tankwave_solve::*;

mod measured_support;
use measured_support::node;

/// The drive of the clipper.
const SOURCE: &str = "voltage vs in gnd dc=1V wave=sine(amp=3V, freq=2MHz) internal=10Ohm";

fn stage(load: &str, extra: &str) -> (Circuit, DeviceSet) {
    measured_support::stage(SOURCE, load, extra)
}

fn shorted(file: &str) -> String {
    format!("measured ant load gnd \"{file}\" outside=short\n")
}

/// The same choke from elements.
const RL: &str = "resistor r load m 8Ohm\ninductor l m gnd 2.2uH\n";

fn ac_at(load: &str, freqs: &[f64]) -> Vec<Complex64> {
    measured_support::ac_at(SOURCE, load, freqs)
}

fn fit_of(c: &Circuit) -> std::sync::Arc<tankwave_circuit::rational::Fitted> {
    c.elements
        .iter()
        .find_map(|e| match &e.kind {
            ElementKind::Measured { network, .. } => network.fit.clone(),
            _ => None,
        })
        .expect("a fitted model for the time-domain analysis")
}

#[test]
fn ac_in_band_is_the_file_and_a_short_beyond_it() {
    // In band, at the file's own points: the choke from elements, to the
    // file's 17 digits and the S-to-Z conversion (1e-9, as for the
    // admittance form in measured.rs).
    let freqs: Vec<f64> = (1..=60).map(|m| 1e6 * m as f64).collect();
    let a = ac_at(&shorted("rls1_ri_v1.s1p"), &freqs);
    let b = ac_at(RL, &freqs);
    for ((f, va), vb) in freqs.iter().zip(&a).zip(&b) {
        assert!((va - vb).norm() <= 1e-9 * vb.norm(), "{f} Hz: {va} vs {vb}");
        // and the divider of circuit theory: V = Z/(Z + 11 Ω) per volt
        let z = Complex64::new(8.0, 2.0 * PI * f * 2.2e-6);
        let v = z / (z + 11.0);
        assert!((va - v).norm() <= 1e-9 * v.norm(), "{f} Hz: {va} vs {v}");
    }
    // Beyond the band (below 0.25 MHz, above 60 MHz) the port is a short:
    // zero volts while the choke from elements has a voltage.
    let beyond = [0.1e6, 80e6, 200e6];
    let a = ac_at(&shorted("rls1_ri_v1.s1p"), &beyond);
    let b = ac_at(RL, &beyond);
    for ((f, va), vb) in beyond.iter().zip(&a).zip(&b) {
        assert!(vb.norm() > 0.1, "{f} Hz: the choke has {vb} V");
        assert!(va.norm() <= 1e-15, "{f} Hz: {va} V across a short");
    }
}

#[test]
fn the_bias_point_is_a_short_that_carries_the_dc_current() {
    // 1 V DC behind 10 Ω + 1 Ω into the short: 0 V across the port and
    // 1/11 A through it (Ohm's law), in the port's current unknown.
    let (c, d) = stage(&shorted("rls1_ri_v1.s1p"), "resistor rin in load 1Ohm\n");
    let op = operating_point(&c, &d, &OpParams::default()).unwrap();
    let v = op.x[node(&c, "load")];
    assert!(v.abs() <= 1e-12, "{v} V across the short");
    let k = op.names.iter().position(|n| n == "I[ant:i1]").unwrap();
    let i = op.x[k];
    assert!((i - 1.0 / 11.0).abs() <= 1e-12, "{i} A through the short");
}

#[test]
fn harmonic_balance_with_the_choke_is_a_short_at_dc_and_z_at_each_harmonic() {
    // A half-wave diode clipper into the choke at 2 MHz, 16 harmonics
    // (2..32 MHz, every one a point of the file), DC the short. What must
    // hold: the load's DC voltage is zero while a DC current flows, its
    // terminal current (the port-current unknown) is the diode's at every
    // sample (KCL), and each harmonic k ≥ 1 of the load voltage is
    // Z(k·f0) = R + jkω0L times that current's harmonic.
    let hb = "analyze steady freq=2MHz harmonics=16 method=balance\n";
    let diode = "diode d1 in load part=dm\n";
    let (c, d) = stage(&shorted("rls1_ri_v1.s1p"), &format!("{hb}{diode}"));
    let p = balance_2mhz();
    let s = steady(&c, &d, &p).unwrap();
    let k = node(&c, "load");
    let v = &s.x[k];
    let ant = c.elements.iter().position(|e| e.name == "ant").unwrap();
    let d1 = c.elements.iter().position(|e| e.name == "d1").unwrap();
    let i_ant = &s.terminal_currents[ant][0];
    let i_d = &s.terminal_currents[d1][1];
    let ipk = i_d.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    assert!(ipk > 0.05, "the clipper drives the load: {ipk} A");
    for (a, b) in i_ant.iter().zip(i_d) {
        // balance's tolerance, 1e-6 of each row's largest term (as in measured.rs)
        assert!((a + b).abs() <= 1e-5 * ipk, "{a} A vs {b} A");
    }
    let n = v.len() as f64;
    let harmonic = |w: &[f64], h: usize| -> Complex64 {
        w.iter()
            .enumerate()
            .map(|(i, x)| x * Complex64::from_polar(2.0 / n, -2.0 * PI * h as f64 * i as f64 / n))
            .sum()
    };
    let v0: f64 = v.iter().sum::<f64>() / n;
    let i0: f64 = i_ant.iter().sum::<f64>() / n;
    assert!(
        i0.abs() > 0.01,
        "a DC current flows through the short: {i0} A"
    );
    let vpk = v.iter().fold(0.0f64, |a, x| a.max(x.abs()));
    assert!(v0.abs() <= 1e-6 * vpk, "{v0} V of DC across the short");
    for h in 1..=8 {
        let z = Complex64::new(8.0, 2.0 * PI * 2e6 * h as f64 * 2.2e-6);
        let (vh, ih) = (harmonic(v, h), harmonic(i_ant, h));
        assert!(
            (vh - z * ih).norm() <= 1e-5 * vpk,
            "harmonic {h}: {vh} V vs {} V",
            z * ih
        );
    }
}

#[test]
fn the_fit_keeps_the_short_at_dc_and_is_passive() {
    // A transient in the file makes elaboration fit Z(s) of the tank. Its
    // data are exactly rational (one pole pair, Z(0) = 0), so the fit
    // recovers them to rounding, and the model's value at 0 Hz is the
    // short the rule names.
    let tr = "analyze transient stop=1us step=10ns\n";
    let (c, _) = stage(&shorted("tank1_ri_v1.s1p"), tr);
    let fit = fit_of(&c);
    assert!(fit.info.worst_error < 1e-9, "{:?}", fit.info);
    // Z_fit(0) is held to the short by construction (D follows the
    // residues): rounding of the band's largest |Z| (500 Ω at resonance).
    assert!(
        fit.dc[0].abs() <= 1e-12 * 500.0,
        "Z_fit(0) = {} Ω",
        fit.dc[0]
    );
    assert_eq!(fit.dc_rule, vec![0.0]);
    assert!(fit.model.is_stable());
    // Passive: a one-port impedance is passive when Re Z(jω) ≥ 0 at every
    // ω (positive-real; common practice). Checked here on a grid of our
    // own, 1 Hz to 10 GHz, 50 points a decade, and at infinity (D), to the
    // rounding of the band's largest |Z|.
    for m in 0..=500 {
        let f = 10f64.powf(m as f64 / 50.0);
        let z = fit.model.admittance(f)[0];
        assert!(z.re >= -1e-12 * 500.0, "Re Z_fit({f} Hz) = {} Ω", z.re);
    }
    assert!(fit.model.d[0] >= -1e-12 * 500.0, "D = {} Ω", fit.model.d[0]);
}

#[test]
fn shooting_through_the_fit_equals_the_tank_from_elements() {
    // The clipper into the tank, solved by shooting on both sides: the
    // file's network is exactly rational (one pole pair, D = 0, Z(0) = 0)
    // and the fit recovers it to rounding, so the measured element's
    // states are a linear change of variables of the tank's own unknowns
    // (the inductor's current, the node's voltage); the integration rule is
    // invariant under such a change, so both follow the same discrete
    // equations. Both are solved to shooting's tolerance (1e-7 of each
    // unknown's scale): 1e-5 of the peak, as in measured.rs.
    let sh = "analyze steady freq=2MHz harmonics=16 method=shooting\n";
    let diode = "diode d1 in load part=dm\n";
    let (cm, dm) = stage(&shorted("tank1_ri_v1.s1p"), &format!("{sh}{diode}"));
    let tank = "resistor r load gnd 500Ohm\ninductor l load gnd 1uH\ncapacitor c load gnd 470pF\n";
    let (cr, dr) = stage(tank, &format!("{sh}{diode}"));
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
    assert!(peak > 0.5, "the clipper drives the tank: {peak} V");
    for (s, (a, b)) in sm.x[km].iter().zip(&sr.x[kr]).enumerate() {
        assert!((a - b).abs() <= 1e-5 * peak, "sample {s}: {a} V vs {b} V");
    }
    // Verified like any orbit: the Floquet check ran on the fitted model.
    assert!(sm.info.floquet.is_some());
}

#[test]
fn harmonic_balance_and_shooting_agree_through_the_fit() {
    // The clipper into the tank: harmonic balance with the file's values
    // (every harmonic on a point of the file, DC the short) against
    // shooting through the fitted model of Z(s). The methods are held to
    // the acceptance figures of tests/it/agreement.rs (fundamental within
    // 0.05 dB, harmonics above −80 dBc within 0.3 dB), widened by the fit's
    // worst relative error ε (at the file's points and at 0 Hz): a relative
    // error ε in the load's impedance moves a level by at most about
    // 20·log10(1 + ε) dB, as in measured_stage.rs.
    let steady_line = "analyze steady freq=2MHz harmonics=16 method=shooting\n";
    let diode = "diode d1 in load part=dm\n";
    let (c, d) = stage(
        &shorted("tank1_ri_v1.s1p"),
        &format!("{steady_line}{diode}"),
    );
    let fit = fit_of(&c);
    let eps = fit.info.worst_error.max(fit.dc_error);
    let mut p = balance_2mhz();
    let hb = steady(&c, &d, &p).unwrap();
    p.method = SteadyMethod::Shooting;
    let sh = steady(&c, &d, &p).unwrap();
    let k = node(&c, "load");
    let (a, b) = (levels(&hb.x[k], 5), levels(&sh.x[k], 5));
    assert!(a[1] > 0.5, "a fundamental across the tank: {} V", a[1]);
    let db = |x: f64, y: f64| 20.0 * (x / y).log10();
    let widen = 20.0 * (1.0 + eps).log10();
    let d1 = db(b[1], a[1]).abs();
    assert!(d1 <= 0.05 + widen, "fundamental off by {d1} dB");
    let mut compared = 0;
    for h in 2..=5 {
        if db(a[h], a[1]) > -80.0 {
            let dh = db(b[h], a[h]).abs();
            assert!(dh <= 0.3 + widen, "harmonic {h} off by {dh} dB");
            compared += 1;
        }
    }
    assert!(compared >= 2, "the clipper makes harmonics to compare");
}

/// The amplitudes |V_h| for h = 0..=n of one period of samples (DFT).
fn levels(v: &[f64], n: usize) -> Vec<f64> {
    let len = v.len() as f64;
    (0..=n)
        .map(|h| {
            let c: Complex64 = v
                .iter()
                .enumerate()
                .map(|(i, x)| x * Complex64::from_polar(1.0, -2.0 * PI * h as f64 * i as f64 / len))
                .sum();
            if h == 0 {
                c.norm() / len
            } else {
                2.0 * c.norm() / len
            }
        })
        .collect()
}

/// Harmonic balance at the clipper's 2 MHz with its 16 harmonics held (no
/// automatic raise), as the file's `analyze steady` line asks.
fn balance_2mhz() -> SteadyParams {
    let mut p = SteadyParams {
        freq: 2e6,
        harmonics: 16,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    p
}
