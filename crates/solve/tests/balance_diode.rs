//! Harmonic balance on diode circuits against shooting and plain transient
//! (settle), plus consistency checks on the returned solution.
//!
//! Reference methods: shooting-Newton (T. J. Aprille, T. N. Trick, Proc. IEEE
//! 60(1), 1972) and settle both integrate with the trapezoidal rule at N
//! uniform steps per period. Its known error on a component at harmonic k is
//! of order (kωh)²/12 with h = T/N (frequency warping of the bilinear map,
//! common practice): at N = 1024 and k = 32 that is (2π·32/1024)²/12 ≈ 0.3 %,
//! i.e. 0.03 dB, well inside the 0.3 dB asked of every harmonic above
//! −80 dBc; the fundamental's share, (2π/1024)²/12 ≈ 3e-6, is far inside
//! 0.05 dB. The tests also show the difference shrinking as N grows, which
//! is what a discretisation error of the reference does.

mod support;
use support::*;
use tankwave_circuit::ir::{DiodeParams, Shape, Waveform};
use tankwave_circuit::{NodeId, SteadyMethod};
use tankwave_devices::{instantiate, DeviceSet};
use tankwave_solve::*;

const F: f64 = 1e6;

fn diode_model() -> DiodeParams {
    DiodeParams {
        sat_current: 1e-14,
        cj0: 2e-12,
        transit: 1e-9,
        ..DiodeParams::default()
    }
}

fn sine_src(a: f64) -> Waveform {
    Waveform {
        dc: 0.0,
        shape: Some(sine(a, F)),
    }
}

/// Clipper: 3 V sine behind 1 kΩ into a diode (2 Ω series) to ground, 100 pF across it.
fn clipper() -> B {
    let mut b = B::new();
    b.vsrc("vs", "in", "gnd", sine_src(3.0), 0.0);
    b.r("r1", "in", "out", 1e3);
    b.diode(
        "d1",
        "out",
        "gnd",
        DiodeParams {
            r_series: 2.0,
            ..diode_model()
        },
    );
    b.cap("c1", "out", "gnd", 100e-12);
    b
}

fn params(method: SteadyMethod, k: usize, steps: usize) -> SteadyParams {
    SteadyParams {
        freq: F,
        harmonics: k,
        method,
        steps_per_period: steps,
        ..SteadyParams::default()
    }
}

fn run(b: &B, p: &SteadyParams) -> (DeviceSet, PeriodicSolution) {
    let d = instantiate(&b.c).unwrap();
    let s = steady(&b.c, &d, p).unwrap();
    (d, s)
}

fn element(b: &B, name: &str) -> usize {
    b.c.elements.iter().position(|e| e.name == name).unwrap()
}

/// (fundamental difference dB, worst difference dB over harmonics 2..=kmax
/// above −80 dBc, how many such harmonics) between two waveforms.
fn spectral_diff(a: &[f64], b: &[f64], kmax: usize) -> (f64, f64, usize) {
    let (fa, fb) = (amp(a, 1), amp(b, 1));
    let fund = 20.0 * (fa / fb).log10();
    let mut worst = 0.0f64;
    let mut count = 0;
    for k in 2..=kmax {
        let (ha, hb) = (amp(a, k), amp(b, k));
        if 20.0 * (hb / fb).log10() > -80.0 {
            count += 1;
            worst = worst.max((20.0 * (ha / hb).log10()).abs());
        }
    }
    (fund, worst, count)
}

/// Picks one waveform out of a solution.
type Wave = dyn Fn(&DeviceSet, &PeriodicSolution) -> Vec<f64>;

fn check_against(
    name: &str,
    b: &B,
    reference: SteadyMethod,
    steps: &[usize],
    waves: &[(&str, &Wave)],
) {
    let (d, hb) = run(b, &params(SteadyMethod::Balance, 32, 256));
    let info = hb.info.balance.clone().unwrap();
    eprintln!(
        "{name}: balance {} iterations, residual {:.2e}, system {}, {info:?}",
        hb.info.iterations, hb.info.residual, hb.info.system_size
    );
    assert_eq!(hb.info.method, SteadyMethod::Balance);
    assert!(hb.info.residual <= hb.info.tolerance);
    for (wname, wave) in waves {
        let mut prev_worst = f64::INFINITY;
        for &n in steps {
            let (_, r) = run(b, &params(reference, 32, n));
            let (fund, worst, count) = spectral_diff(&wave(&d, &hb), &wave(&d, &r), 32);
            eprintln!(
                "  {wname} vs {reference:?} at {n} steps: fundamental {fund:+.5} dB, \
                 worst of {count} harmonics above -80 dBc {worst:.5} dB"
            );
            assert!(count >= 5, "a harmonic-rich waveform");
            // Trapezoidal reference error: see the module docs.
            assert!(fund.abs() < 0.05, "{fund}");
            assert!(worst < 0.3, "{worst}");
            // The gap is the reference's discretisation: it shrinks as N grows.
            assert!(worst < prev_worst, "{worst} vs {prev_worst}");
            prev_worst = worst;
        }
    }
}

fn node_wave(name: &'static str) -> impl Fn(&DeviceSet, &PeriodicSolution) -> Vec<f64> {
    move |d: &DeviceSet, s: &PeriodicSolution| {
        let k = d.names.iter().position(|n| n == name).unwrap();
        s.x[k].clone()
    }
}

#[test]
fn rectifier_balance_matches_shooting() {
    let b = rectifier(F);
    let d1 = element(&b, "d1");
    let out = node_wave("V[out]");
    let diode_current =
        move |_: &DeviceSet, s: &PeriodicSolution| s.terminal_currents[d1][0].clone();
    check_against(
        "rectifier",
        &b,
        SteadyMethod::Shooting,
        &[512, 1024],
        &[("V[out]", &out), ("diode current", &diode_current)],
    );
}

#[test]
fn clipper_balance_matches_shooting_and_settle() {
    let b = clipper();
    let out = node_wave("V[out]");
    let r1 = element(&b, "r1");
    let current = move |_: &DeviceSet, s: &PeriodicSolution| s.terminal_currents[r1][0].clone();
    check_against(
        "clipper",
        &b,
        SteadyMethod::Shooting,
        &[512, 1024],
        &[("V[out]", &out), ("r1 current", &current)],
    );
    // Settle: the load time constant is 0.1 µs = T/10, so the plain transient
    // settles in a few periods and its settle tolerance (1e-6 of the range) is
    // far below the harmonics compared.
    check_against(
        "clipper",
        &b,
        SteadyMethod::Settle,
        &[512, 1024],
        &[("V[out]", &out)],
    );
}

#[test]
fn returned_solution_obeys_kcl_and_is_band_limited() {
    let b = rectifier(F);
    let p = params(SteadyMethod::Balance, 32, 256);
    let (d, s) = run(&b, &p);
    let kmax = s.harmonics;
    let ns = s.samples_per_period;
    assert!(ns.is_power_of_two() && ns > 2 * kmax);
    // KCL at every node and sample: the residual of every harmonic is within
    // rel_tolerance·scale + current_floor of its row, so the sum over 2K+1 harmonics is
    // within (2K+1)·(rel_tolerance·Ipeak + current_floor), Ipeak bounding every term of the row.
    let ipk = s
        .terminal_currents
        .iter()
        .flatten()
        .flatten()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let tol = (2 * kmax + 1) as f64 * (p.tol.rel_tolerance * ipk + p.tol.current_floor);
    let mut worst = 0.0f64;
    for node in 0..d.n_nodes {
        for n in 0..ns {
            let mut sum = 0.0;
            for (ei, el) in b.c.elements.iter().enumerate() {
                for (j, t) in el.kind.terminals().iter().enumerate() {
                    if *t == NodeId::node(node) {
                        sum += s.terminal_currents[ei][j][n];
                    }
                }
            }
            worst = worst.max(sum.abs());
        }
    }
    eprintln!("KCL: worst {worst:.3e} A (bound {tol:.3e} A, peak current {ipk:.3e} A)");
    assert!(worst <= tol, "{worst} > {tol}");
    // Tellegen's theorem (follows from KCL; common practice): the mean power
    // delivered by the source equals the mean power absorbed by the others.
    let v = |name: &str| s.x[d.names.iter().position(|x| x == name).unwrap()].clone();
    let (vin, vout) = (v("V[in]"), v("V[out]"));
    let mean = |f: &dyn Fn(usize) -> f64| (0..ns).map(f).sum::<f64>() / ns as f64;
    let tc = &s.terminal_currents;
    let (vs, d1, rl, cl) = (
        element(&b, "vs"),
        element(&b, "d1"),
        element(&b, "rl"),
        element(&b, "cl"),
    );
    let p_src = mean(&|n| -vin[n] * tc[vs][0][n]);
    let p_d = mean(&|n| vin[n] * tc[d1][0][n] + vout[n] * tc[d1][1][n]);
    let p_r = mean(&|n| vout[n] * tc[rl][0][n]);
    let p_c = mean(&|n| vout[n] * tc[cl][0][n]);
    eprintln!(
        "power: source {p_src:.6e} W, diode {p_d:.6e} W, load {p_r:.6e} W, capacitor {p_c:.3e} W"
    );
    assert!(p_src > 0.0 && p_r > 0.0 && p_d > 0.0);
    let vpk = vin.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    assert!(
        (p_src - p_d - p_r - p_c).abs() <= vpk * tol,
        "power balance"
    );
    // A capacitor absorbs no mean power (Parseval: Σ Re(V_k conj(jkωC V_k)) = 0).
    assert!(p_c.abs() <= 1e-9 * p_r, "{p_c}");
    // Band limit: nothing above K in the returned samples (Parseval: the
    // sample energy equals that of harmonics 0..K), to rounding.
    for u in 0..d.n_unknowns {
        let energy: f64 = s.x[u].iter().map(|v| v * v).sum::<f64>() / ns as f64;
        let inband: f64 = coef(&s.x[u], 0).norm_sqr()
            + (1..=kmax)
                .map(|k| 2.0 * coef(&s.x[u], k).norm_sqr())
                .sum::<f64>();
        assert!(
            (energy - inband).abs() <= 1e-12 * energy.max(1e-30),
            "{}",
            d.names[u]
        );
    }
}

#[test]
fn reduced_and_full_formulations_agree() {
    let b = clipper();
    let mut p = params(SteadyMethod::Balance, 16, 256);
    p.balance.raise_harmonics = false;
    let (d, red) = run(&b, &p);
    p.balance.reduce = false;
    let (_, full) = run(&b, &p);
    let ri = red.info.balance.clone().unwrap();
    let fi = full.info.balance.clone().unwrap();
    eprintln!(
        "reduced {ri:?} size {}; full {fi:?} size {}",
        red.info.system_size, full.info.system_size
    );
    assert!(ri.reduced && !fi.reduced);
    assert!(ri.ports < fi.ports && fi.ports == d.n_unknowns);
    // Both converge to the same equations within rel_tolerance = 1e-6 of the residual
    // scale; the waveforms may differ by that order relative to their peak.
    for u in 0..d.n_unknowns {
        let pk = red.x[u].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let dev = red.x[u]
            .iter()
            .zip(&full.x[u])
            .fold(0.0f64, |m, (a, c)| m.max((a - c).abs()));
        assert!(dev <= 1e-5 * pk + 1e-9, "{}: {dev} of {pk}", d.names[u]);
    }
}

#[test]
fn continuation_on_drive_reaches_the_same_solution() {
    let b = rectifier(F);
    let mut p = params(SteadyMethod::Balance, 16, 256);
    p.balance.raise_harmonics = false;
    let (d, direct) = run(&b, &p);
    // Too few iterations for the direct solve at full drive: the solver must
    // walk the drive up from the operating point.
    p.balance.max_iter = 4;
    let (_, cont) = run(&b, &p);
    let ci = cont.info.balance.clone().unwrap();
    eprintln!(
        "direct {} iterations; continuation {} iterations over {} levels",
        direct.info.iterations, cont.info.iterations, ci.continuation_steps
    );
    assert_eq!(direct.info.balance.clone().unwrap().continuation_steps, 0);
    assert!(ci.continuation_steps >= 2, "{ci:?}");
    for u in 0..d.n_unknowns {
        let pk = direct.x[u].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let dev = direct.x[u]
            .iter()
            .zip(&cont.x[u])
            .fold(0.0f64, |m, (a, c)| m.max((a - c).abs()));
        assert!(dev <= 1e-5 * pk + 1e-9, "{}: {dev} of {pk}", d.names[u]);
    }
}

#[test]
fn harmonics_are_raised_until_the_top_ones_are_negligible() {
    let b = clipper();
    let mut p = params(SteadyMethod::Balance, 4, 256);
    p.balance.max_harmonics = 256;
    let (_, s) = run(&b, &p);
    let info = s.info.balance.clone().unwrap();
    eprintln!("{info:?}");
    assert_eq!(info.harmonics_tried.first(), Some(&4));
    assert!(info.harmonics_tried.windows(2).all(|w| w[1] == 2 * w[0]));
    assert_eq!(s.harmonics, *info.harmonics_tried.last().unwrap());
    assert_eq!(info.harmonics, s.harmonics);
    // Stopped because the top tenth fell below the truncation limit (1e-5 of the largest fundamental by default) (or at the cap).
    assert!(info.truncation <= 1.0 || s.harmonics == 256, "{info:?}");
    // With raising off, K stays and the truncation figure says it is not negligible.
    p.balance.raise_harmonics = false;
    let (_, s4) = run(&b, &p);
    let i4 = s4.info.balance.unwrap();
    assert_eq!(i4.harmonics_tried, vec![4]);
    assert!(i4.truncation > 1.0, "{i4:?}");
}

#[test]
fn auto_uses_shooting_and_falls_back_to_balance() {
    let b = clipper();
    let mut p = params(SteadyMethod::Auto, 16, 256);
    p.balance.raise_harmonics = false;
    let (_, s) = run(&b, &p);
    assert_eq!(s.info.method, SteadyMethod::Shooting);
    assert_eq!(s.info.fell_back_from, None);
    // Make shooting fail (no Newton iteration allowed): auto says it fell back.
    p.shooting.max_iter = 0;
    let (_, s) = run(&b, &p);
    assert_eq!(s.info.method, SteadyMethod::Balance);
    assert_eq!(s.info.fell_back_from, Some(SteadyMethod::Shooting));
    // Both fail: the error carries both reasons.
    p.balance.max_iter = 1;
    p.balance.continuation = false;
    let d = instantiate(&b.c).unwrap();
    match steady(&b.c, &d, &p) {
        Err(e @ SolveError::BothFailed { .. }) => {
            let m = e.to_string();
            assert!(
                m.contains("shooting") && m.contains("harmonic balance"),
                "{m}"
            );
        }
        other => panic!("expected both methods to fail, got {other:?}"),
    }
}

#[test]
fn failures_are_typed_errors() {
    let b = clipper();
    let d = instantiate(&b.c).unwrap();
    let mut p = params(SteadyMethod::Balance, 16, 256);
    p.balance.max_iter = 1;
    p.balance.continuation = false;
    match steady(&b.c, &d, &p) {
        Err(SolveError::NoConvergence {
            analysis,
            unknown,
            iterations,
            residual,
            ..
        }) => {
            eprintln!("{analysis} / {unknown} / {iterations} / {residual}");
            assert!(analysis.contains("drive 100.00%"), "{analysis}");
            assert!(unknown.contains("harmonic"), "{unknown}");
            assert!(residual.is_finite() && residual > 0.0);
        }
        other => panic!("expected no convergence, got {other:?}"),
    }
    // A source at 1.5 f0 is not periodic over the analysis period.
    let mut b2 = B::new();
    b2.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(Shape::Sine {
                amp: 1.0,
                freq: 1.5 * F,
                phase: 0.0,
                offset: 0.0,
                delay: 0.0,
                rise: 0.0,
            }),
        },
        0.0,
    );
    b2.r("r1", "in", "gnd", 50.0);
    let d2 = instantiate(&b2.c).unwrap();
    let p2 = params(SteadyMethod::Balance, 8, 256);
    match steady(&b2.c, &d2, &p2) {
        Err(SolveError::BadParams(m)) => assert!(m.contains("not periodic"), "{m}"),
        other => panic!("expected a periodicity error, got {other:?}"),
    }
    // A Newton system too large to factor densely is refused with the
    // numbers when GMRES is turned off ...
    let mut p4 = params(SteadyMethod::Balance, 4000, 256);
    p4.balance.krylov_from = usize::MAX;
    match steady(&b.c, &d, &p4) {
        Err(SolveError::BadParams(m)) => assert!(m.contains("16002 unknowns"), "{m}"),
        other => panic!("expected a size error, got {other:?}"),
    }
    // ... and above the GMRES limit (100 000 real unknowns) in any case.
    let p5 = params(SteadyMethod::Balance, 30000, 256);
    match steady(&b.c, &d, &p5) {
        Err(SolveError::BadParams(m)) => assert!(m.contains("120002 unknowns"), "{m}"),
        other => panic!("expected a size error, got {:?}", other.map(|s| s.info)),
    }
    // Bad options are refused, not panicked on.
    let mut p3 = params(SteadyMethod::Balance, 8, 256);
    p3.balance.oversample = 1;
    assert!(matches!(
        steady(&b.c, &d, &p3),
        Err(SolveError::BadParams(_))
    ));
}

#[test]
fn delayed_and_rising_drive_is_taken_after_its_rise() {
    // A sine with a delay and a rise: the steady state is that of the full
    // sine (the rise is over after a whole number of periods); identical to
    // the same source without delay/rise once the phase is matched.
    let mut b = clipper();
    let k = element(&b, "vs");
    if let tankwave_circuit::ir::ElementKind::VoltageSource { wave, .. } = &mut b.c.elements[k].kind
    {
        wave.shape = Some(Shape::Sine {
            amp: 3.0,
            freq: F,
            phase: 0.0,
            offset: 0.0,
            delay: 2.0 / F,
            rise: 3.5 / F,
        });
    }
    let mut p = params(SteadyMethod::Balance, 16, 256);
    p.balance.raise_harmonics = false;
    let (d, s) = run(&b, &p);
    let (_, s0) = run(&clipper(), &p);
    for u in 0..d.n_unknowns {
        let pk = s0.x[u].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let dev = s.x[u]
            .iter()
            .zip(&s0.x[u])
            .fold(0.0f64, |m, (a, c)| m.max((a - c).abs()));
        assert!(dev <= 1e-9 * pk + 1e-12, "{}: {dev}", d.names[u]);
    }
}
