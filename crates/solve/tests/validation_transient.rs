//! Transient analysis against closed-form responses.
//!
//! Closed forms: first-order step responses v = V(1 − e^(−t/τ)) and the
//! underdamped series RLC step response, from C. K. Alexander, M. N. O.
//! Sadiku, Fundamentals of Electric Circuits, ch. 7 (first-order circuits)
//! and ch. 8 (second-order circuits) — formulas from memory.

mod support;
use support::*;
use tankwave_circuit::{Integration, StartFrom};
use tankwave_devices::instantiate;
use tankwave_solve::*;

fn run(b: &B, p: &TransientParams) -> TransientResult {
    let d = instantiate(&b.c).expect("devices");
    transient(&b.c, &d, p).expect("transient")
}

/// Largest |numeric − exact| over the accepted points.
fn max_err(r: &TransientResult, k: usize, f: impl Fn(f64) -> f64) -> f64 {
    r.time
        .iter()
        .zip(&r.x)
        .map(|(t, x)| (x[k] - f(*t)).abs())
        .fold(0.0, f64::max)
}

fn params(stop: f64, step: f64, method: Integration) -> TransientParams {
    TransientParams {
        stop,
        step,
        start: StartFrom::Zero,
        method,
        ..TransientParams::default()
    }
}

#[test]
fn rc_step_response_matches_closed_form() {
    // Alexander & Sadiku ch. 7 (memory): v_C(t) = V (1 − e^(−t/RC)) from an uncharged capacitor.
    let (v, r, c) = (1.0, 1e3, 1e-6);
    let tau = r * c;
    let mut b = B::new();
    b.vdc("vin", "in", "gnd", v);
    b.r("r1", "in", "out", r);
    b.cap("c1", "out", "gnd", c);
    for m in [Integration::Trapezoidal, Integration::Bdf2] {
        let res = run(&b, &params(5.0 * tau, tau / 20.0, m));
        let k = res.index("v(out)").unwrap();
        let e = max_err(&res, k, |t| v * (1.0 - (-t / tau).exp())) / v;
        eprintln!(
            "RC {m:?}: max error {e:.3e} of V over {} steps",
            res.info.accepted
        );
        // Brief target: < 1e-4 relative at default tolerances.
        assert!(e < 1e-4, "{m:?}: {e}");
    }
}

#[test]
fn rl_step_response_matches_closed_form() {
    // Alexander & Sadiku ch. 7 (memory): i_L(t) = (V/R)(1 − e^(−tR/L)) from zero current.
    let (v, r, l) = (1.0, 10.0, 1e-3);
    let tau = l / r;
    let mut b = B::new();
    b.vdc("vin", "in", "gnd", v);
    b.r("r1", "in", "mid", r);
    b.ind("l1", "mid", "gnd", l, 0.0);
    for m in [Integration::Trapezoidal, Integration::Bdf2] {
        let res = run(&b, &params(5.0 * tau, tau / 20.0, m));
        let k = res.index("i(l1)").unwrap();
        let e = max_err(&res, k, |t| v / r * (1.0 - (-t / tau).exp())) / (v / r);
        eprintln!(
            "RL {m:?}: max error {e:.3e} of V/R over {} steps",
            res.info.accepted
        );
        assert!(e < 1e-4, "{m:?}: {e}");
    }
}

#[test]
fn underdamped_series_rlc_step_matches_closed_form() {
    // Alexander & Sadiku ch. 8 (memory): with α = R/2L, ω0 = 1/√(LC), ωd = √(ω0² − α²),
    // v_C(t) = V [1 − e^(−αt) (cos ωd t + (α/ωd) sin ωd t)] for a step from rest.
    let (v, r, l, c): (f64, f64, f64, f64) = (1.0, 10.0, 1e-3, 1e-6);
    let alpha = r / (2.0 * l);
    let w0 = 1.0 / (l * c).sqrt();
    let wd = (w0 * w0 - alpha * alpha).sqrt();
    let mut b = B::new();
    b.vdc("vin", "in", "gnd", v);
    b.r("r1", "in", "a", r);
    b.ind("l1", "a", "out", l, 0.0);
    b.cap("c1", "out", "gnd", c);
    let period = 2.0 * std::f64::consts::PI / wd;
    for m in [Integration::Trapezoidal, Integration::Bdf2] {
        let res = run(&b, &params(5.0 * period, period / 50.0, m));
        let k = res.index("v(out)").unwrap();
        let e = max_err(&res, k, |t| {
            v * (1.0 - (-alpha * t).exp() * ((wd * t).cos() + alpha / wd * (wd * t).sin()))
        }) / v;
        eprintln!(
            "RLC {m:?}: max error {e:.3e} of V over {} steps",
            res.info.accepted
        );
        assert!(e < 1e-4, "{m:?}: {e}");
    }
}

#[test]
fn trapezoidal_rule_converges_at_second_order() {
    // The trapezoidal rule has global error O(h²) (common practice; any numerical
    // analysis text): halving a fixed step should cut the error about fourfold.
    let (v, r, c) = (1.0, 1e3, 1e-6);
    let tau = r * c;
    let mut b = B::new();
    b.vdc("vin", "in", "gnd", v);
    b.r("r1", "in", "out", r);
    b.cap("c1", "out", "gnd", c);
    let mut errs = Vec::new();
    for h in [tau / 10.0, tau / 20.0, tau / 40.0, tau / 80.0] {
        let mut p = params(2.0 * tau, h, Integration::Trapezoidal);
        p.fixed_step = true;
        let res = run(&b, &p);
        let k = res.index("v(out)").unwrap();
        errs.push(max_err(&res, k, |t| v * (1.0 - (-t / tau).exp())));
    }
    eprintln!("trapezoidal fixed-step errors: {errs:?}");
    for w in errs.windows(2) {
        let ratio = w[0] / w[1];
        // Second order: ratio 4 as h → 0; 3.5..4.5 allows the O(h³) remainder at h = τ/10.
        assert!((3.5..4.5).contains(&ratio), "ratio {ratio}");
    }
}
