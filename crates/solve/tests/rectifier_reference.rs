//! Half-wave rectifier with an RC load against a scipy reference
//! (tests/reference/solve/rectifier.py: solve_ivp Radau, rtol 1e-11, the
//! Shockley diode with the solver's junction_leak; data committed as rectifier.csv).

mod support;
use support::*;
use tankwave_circuit::ir::{DiodeParams, Waveform};
use tankwave_circuit::Integration;
use tankwave_devices::instantiate;
use tankwave_solve::*;

fn reference() -> (Vec<f64>, Vec<f64>) {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/reference/solve/rectifier.csv"
    );
    let text = std::fs::read_to_string(path).expect("reference data");
    let (mut t, mut v) = (Vec::new(), Vec::new());
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with('t'))
    {
        let mut it = line.split(',');
        t.push(it.next().unwrap().parse::<f64>().unwrap());
        v.push(it.next().unwrap().parse::<f64>().unwrap());
    }
    (t, v)
}

#[test]
fn half_wave_rectifier_matches_radau_reference() {
    let (tr, vr) = reference();
    assert_eq!(tr.len(), 5001);
    let mut b = B::new();
    b.c.temperature_k = 298.15;
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(10.0, 1e3)),
        },
        0.0,
    );
    b.diode(
        "d1",
        "in",
        "out",
        DiodeParams {
            sat_current: 1e-14,
            emission: 1.0,
            t_measured: 298.15,
            ..DiodeParams::default()
        },
    );
    b.r("rl", "out", "gnd", 1e3);
    b.cap("cl", "out", "gnd", 10e-6);
    let d = instantiate(&b.c).unwrap();
    let peak = vr.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    for m in [
        Integration::Trapezoidal,
        Integration::Bdf2,
        Integration::Sdirk4,
    ] {
        let p = TransientParams {
            stop: 5e-3,
            step: 10e-6,
            method: m,
            ..TransientParams::default()
        };
        let r = transient(&b.c, &d, &p).unwrap();
        let k = r.index("V[out]").unwrap();
        let on_grid = r.resample(&tr);
        let err = on_grid
            .iter()
            .zip(&vr)
            .map(|(x, v)| (x[k] - v).abs())
            .fold(0.0, f64::max);
        eprintln!(
            "rectifier {m:?}: {} steps ({} rejected), max error {:.3e} V = {:.3e} of the {peak:.3} V peak",
            r.info.accepted,
            r.info.rejected_lte + r.info.rejected_newton,
            err,
            err / peak
        );
        // Brief target: < 1e-4 relative at default tolerances (the reference is
        // good to ~1e-9 V: rtol 1e-9 and 1e-11 runs agree to 1.1e-9 V).
        assert!(err < 1e-4 * peak, "{m:?}: {err}");
    }
}
