//! Periodic steady state by shooting and by settling, against phasor
//! analysis and against each other.
//!
//! Phasor analysis of a sine-driven series RLC: V_C = V / (1 + jωRC − ω²LC)
//! (any circuits text, e.g. C. K. Alexander, M. N. O. Sadiku, Fundamentals of
//! Electric Circuits, ch. 9–10, memory). A drive amp·sin(ωt) gives
//! v(t) = Im(H·amp·e^(jωt)).
//!
//! Discretisation: shooting and settle integrate with N uniform TR-BDF2
//! steps per period, a second-order method (R. E. Bank et al., IEEE Trans.
//! CAD 4(4), 1985): the error against the phasor solution falls about
//! fourfold when N doubles, which the first test checks.

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::Waveform;
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

const R: f64 = 10.0;
const L: f64 = 10e-6;
const C: f64 = 2.533e-9;
const F: f64 = 1e6;
const AMP: f64 = 1.0;

fn rlc() -> B {
    let mut b = B::new();
    let vs = b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(AMP, F)),
        },
        0.0,
    );
    b.r("r1", "in", "a", R);
    b.ind("l1", "a", "out", L, 0.0);
    b.cap("c1", "out", "gnd", C);
    b.c.input = Some(vs);
    b
}

fn phasor(w_reactive: f64) -> Complex64 {
    let jw = Complex64::new(0.0, w_reactive);
    1.0 / (1.0 + jw * R * C + jw * jw * L * C)
}

fn compare(sol: &PeriodicSolution, k: usize, h: Complex64) -> f64 {
    let w = 2.0 * std::f64::consts::PI * F;
    sol.times()
        .iter()
        .zip(&sol.x[k])
        .map(|(t, v)| (v - (h * AMP * Complex64::new(0.0, w * t).exp()).im).abs())
        .fold(0.0, f64::max)
}

#[test]
fn shooting_rlc_matches_phasor_analysis() {
    let b = rlc();
    let d = instantiate(&b.c).unwrap();
    let k = d.names.iter().position(|s| s == "V[out]").unwrap();
    let w = 2.0 * std::f64::consts::PI * F;
    let peak = phasor(w).norm() * AMP;
    let mut errs = Vec::new();
    let mut sol256 = None;
    for steps in [256usize, 512] {
        let mut params = SteadyParams {
            freq: F,
            harmonics: 8,
            method: SteadyMethod::Shooting,
            steps_per_period: steps,
            ..SteadyParams::default()
        };
        // Full Newton on the fine grid only: on a linear circuit one update
        // reaches the fixed point (a second period confirms it).
        params.shooting.coarse_grid = false;
        let sol = steady(&b.c, &d, &params).unwrap();
        assert_eq!(sol.samples_per_period, steps);
        assert_eq!(sol.info.method, SteadyMethod::Shooting);
        assert!(sol.info.iterations <= 2, "{:?}", sol.info);
        // The default two-grid iteration (coarse Newton, fine chord steps)
        // reaches the same fixed point: each solution is within its stopping
        // test, rel_tolerance·peak + voltage_floor = 1e-7·peak + 1e-9 V, of the fixed point
        // (the chord steps contract about a hundredfold, so the distance left
        // after the last update is below that update); twice that bounds the
        // difference.
        params.shooting.coarse_grid = true;
        let two = steady(&b.c, &d, &params).unwrap();
        let diff = max_diff(&two.x[k], &sol.x[k]);
        eprintln!(
            "two-grid shooting, N = {steps}: {} periods, difference from full Newton {diff:.2e} V",
            two.info.iterations
        );
        assert!(diff <= 2.0 * (1e-7 * peak + 1e-9), "{diff}");
        let e = compare(&sol, k, phasor(w));
        eprintln!(
            "shooting RLC, N = {steps}: {} iterations, residual {:.2e}; error vs phasor {e:.3e} V (peak {peak:.3} V)",
            sol.info.iterations, sol.info.residual
        );
        errs.push(e);
        if steps == 256 {
            sol256 = Some(sol);
        }
    }
    // Default N = 256 (ωh ≈ 0.025): a second-order method's relative error is of
    // order (ωh)²/12 ≈ 5e-5, amplified near resonance by Q ≈ 6.3 to ≈ 3e-4
    // (measured 3.1e-4); allow 1e-3 of the peak.
    assert!(errs[0] < 1e-3 * peak, "{}", errs[0]);
    // Second order: doubling N cuts the error about fourfold (3–5 allows the
    // periodicity tolerance and higher-order terms).
    let ratio = errs[0] / errs[1];
    assert!((3.0..5.0).contains(&ratio), "ratio {ratio}");

    // Terminal currents: the resistor's (algebraic) current equals the
    // capacitor's (its charge differentiated by the integration formula, as the
    // solver did) to the Newton tolerance.
    let sol = sol256.unwrap();
    let ir = &sol.terminal_currents[1][0]; // r1, first terminal (node in): current into r1
    let ic = &sol.terminal_currents[3][0]; // c1, first terminal (node out)
    let ipk = ir.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let dev = max_diff(ir, ic);
    eprintln!("series current: resistor vs capacitor terminal current {dev:.3e} A of {ipk:.3e} A");
    assert!(dev < 1e-6 * ipk, "{dev}");
    // The grounded terminal of c1 carries the opposite current.
    for (a, b) in sol.terminal_currents[3][0]
        .iter()
        .zip(&sol.terminal_currents[3][1])
    {
        assert!((a + b).abs() <= 1e-12 * ipk);
    }
}

#[test]
fn settle_rlc_agrees_with_shooting() {
    let b = rlc();
    let d = instantiate(&b.c).unwrap();
    let mut params = SteadyParams {
        freq: F,
        harmonics: 8,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    let shoot = steady(&b.c, &d, &params).unwrap();
    params.method = SteadyMethod::Settle;
    let set = steady(&b.c, &d, &params).unwrap();
    let k = d.names.iter().position(|s| s == "V[out]").unwrap();
    let dev = max_diff(&shoot.x[k], &set.x[k]);
    eprintln!(
        "settle RLC: {} periods; max difference from shooting {dev:.3e} V",
        set.info.iterations
    );
    // Same discretisation: only the settle tolerance (1e-6 of the range, per period,
    // divided by 1 − ρ with ρ = e^(−RT/2L) ≈ 0.61 per period) separates them.
    assert!(dev < 1e-5, "{dev}");
}

#[test]
fn shooting_and_settle_agree_on_a_diode_rectifier() {
    let b = rectifier(F);
    let d = instantiate(&b.c).unwrap();
    let mut params = SteadyParams {
        freq: F,
        harmonics: 16,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    // No warm-up periods: Newton starts from the operating point (output at 0 V)
    // and has to find the periodic state itself.
    params.shooting.warmup_periods = 0;
    let shoot = steady(&b.c, &d, &params).unwrap();
    params.method = SteadyMethod::Settle;
    let set = steady(&b.c, &d, &params).unwrap();
    let k = d.names.iter().position(|s| s == "V[out]").unwrap();
    let mean = shoot.x[k].iter().sum::<f64>() / shoot.x[k].len() as f64;
    let dev = max_diff(&shoot.x[k], &set.x[k]);
    eprintln!(
        "rectifier: shooting {} Newton iterations (system {}), settle {} periods; mean output {mean:.4} V; max difference {dev:.3e} V",
        shoot.info.iterations, shoot.info.system_size, set.info.iterations
    );
    assert!(mean > 3.0 && mean < 5.0, "a rectified output: {mean}");
    // Settle stops when a period changes by < 1e-6 of (range + peak) ≈ 5e-6 V; with
    // the load's contraction ρ = e^(−T/RC) ≈ 0.905 per period the distance to the
    // fixed point is up to ρ/(1 − ρ) ≈ 10 times that.
    assert!(dev < 1e-4, "{dev}");
    assert!(shoot.info.iterations >= 1);
}

#[test]
fn samples_rise_above_twice_the_harmonics() {
    let mut params = SteadyParams {
        harmonics: 8,
        ..SteadyParams::default()
    };
    assert_eq!(params.samples(), 256);
    params.harmonics = 200;
    assert_eq!(params.samples(), 512);
    params.steps_per_period = 100;
    params.harmonics = 8;
    assert_eq!(params.samples(), 128);
}

/// An RC low-pass driven by a sine at F plus a second sine at `f2`, solved by
/// settle at F (fundamental period 1/F).
fn two_tone_settle(f2: f64) -> SolveError {
    let mut b = B::new();
    let tone = |f: f64| Waveform {
        dc: 0.0,
        shape: Some(sine(1.0, f)),
    };
    let vs = b.vsrc("va", "a", "gnd", tone(F), 0.0);
    b.vsrc("vb", "in", "a", tone(f2), 0.0);
    // RC = 0.1 µs: the start-up transient is gone within one period of F
    b.r("r1", "in", "out", 100.0);
    b.cap("c1", "out", "gnd", 1e-9);
    b.c.input = Some(vs);
    let d = instantiate(&b.c).unwrap();
    let mut params = SteadyParams {
        freq: F,
        harmonics: 8,
        method: SteadyMethod::Settle,
        ..SteadyParams::default()
    };
    params.settle.max_periods = 40;
    steady(&b.c, &d, &params).unwrap_err()
}

#[test]
fn settle_names_a_subharmonic_when_the_state_repeats_every_two_periods() {
    // A tone at F/2 makes every waveform repeat every 2 periods of F exactly
    // (the sum of periodic signals has the least common period).
    let e = two_tone_settle(F / 2.0);
    let SolveError::NotSettled {
        repeats_every,
        relative_change,
        ..
    } = &e
    else {
        panic!("{e}");
    };
    assert_eq!(*repeats_every, Some(2), "{e}");
    assert!(*relative_change > 1e-2, "{e}");
    assert!(e.to_string().contains("subharmonic at 1/2"), "{e}");
}

#[test]
fn settle_calls_an_incommensurate_state_not_periodic() {
    // A tone at √2·F never lines up with the period of F, nor with 2–4 of them.
    let e = two_tone_settle(std::f64::consts::SQRT_2 * F);
    let SolveError::NotSettled {
        repeats_every,
        relative_change,
        ..
    } = &e
    else {
        panic!("{e}");
    };
    assert_eq!(*repeats_every, None, "{e}");
    // the F·√2 tone through the RC (corner 1.6 MHz) changes by a large part of
    // the swing from one period of F to the next
    assert!(*relative_change > 1e-2, "{e}");
    assert!(
        e.to_string()
            .contains("not periodic at the drive frequency"),
        "{e}"
    );
}

/// Every method reports the same convergence measure: the relative residual
/// of its convergence test (a fraction of the size of what it tests), at most
/// the relative tolerance it met, which is reported beside it. A converged
/// settle used to report the ratio to its tolerance (about 0.99, which read
/// as a 99 % error); now it reports about 1e-6 and its tolerance 1e-6.
#[test]
fn every_method_reports_a_relative_residual_within_its_tolerance() {
    let b = rectifier(F);
    let d = instantiate(&b.c).unwrap();
    let defaults = SteadyParams::default();
    for (method, tolerance) in [
        (SteadyMethod::Shooting, defaults.shooting.rel_tolerance),
        (SteadyMethod::Settle, defaults.settle.rel_tolerance),
        (SteadyMethod::Balance, defaults.tol.rel_tolerance),
    ] {
        let params = SteadyParams {
            freq: F,
            harmonics: 16,
            method,
            ..SteadyParams::default()
        };
        let sol = steady(&b.c, &d, &params).unwrap();
        let info = &sol.info;
        eprintln!(
            "{method:?}: residual {:.2e}, tolerance {:.0e}",
            info.residual, info.tolerance
        );
        assert_eq!(info.method, method);
        assert_eq!(info.tolerance, tolerance, "{method:?}");
        assert!(
            info.residual >= 0.0 && info.residual <= info.tolerance,
            "{method:?}: {info:?}"
        );
    }
    // the documented defaults (docs/analyses.md)
    assert_eq!(defaults.shooting.rel_tolerance, 1e-7);
    assert_eq!(defaults.settle.rel_tolerance, 1e-6);
    assert_eq!(defaults.tol.rel_tolerance, 1e-6);
}

/// The half-wave rectifier of `support::rectifier` with its load resistor
/// set to `r` Ω.
fn rectifier_loaded(r: f64) -> B {
    let mut b = rectifier(F);
    for el in &mut b.c.elements {
        if el.name == "rl" {
            if let tankwave_circuit::ir::ElementKind::Resistor { r: v, .. } = &mut el.kind {
                *v = r;
            }
        }
    }
    b
}

#[test]
fn a_neighbours_warm_start_iterates_on_the_coarse_grid_and_a_refinements_does_not() {
    // The rectifier with a 2 kΩ load, started from the orbit of the 1 kΩ
    // one: a neighbour's state, far from this orbit (its mean output moves
    // by tens of millivolts, hundreds of thousands of tolerance units).
    // Taken as a neighbour, Newton iterates on the coarse grid first; only
    // a start on the circuit's own orbit (auto's refinement,
    // `initial_near_orbit`) may skip that and take just one coarse Φ.
    let near = rectifier_loaded(1e3);
    let dn = instantiate(&near.c).unwrap();
    let mut params = SteadyParams {
        freq: F,
        harmonics: 16,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    let from = steady(&near.c, &dn, &params).unwrap();
    let b = rectifier_loaded(2e3);
    let d = instantiate(&b.c).unwrap();
    params.shooting.initial = Some(from.x.iter().map(|w| w[0]).collect());
    let as_neighbour = steady(&b.c, &d, &params).unwrap();
    params.shooting.initial_near_orbit = true;
    let as_orbit = steady(&b.c, &d, &params).unwrap();
    let (sn, so) = (
        as_neighbour.info.shooting.expect("shooting"),
        as_orbit.info.shooting.expect("shooting"),
    );
    eprintln!("as a neighbour's state: {sn:?}\nas the orbit's: {so:?}");
    assert_eq!(sn.warmup_periods, 0, "{sn:?}");
    assert!(
        sn.coarse_periods >= 2,
        "a neighbour's start iterates: {sn:?}"
    );
    assert_eq!(so.coarse_periods, 1, "an orbit's start takes one Φ: {so:?}");
    // Both end within one tolerance unit (1e-7 of the peak + 1e-9 V) of the
    // fixed point of the same period map; over the period the output's
    // deviation is carried by its RC decay (multiplier e^(−T/RC) < 1): two
    // units apart at most, four allowed for the floor of the other unknowns.
    let k = d.names.iter().position(|s| s == "V[out]").unwrap();
    let peak = as_orbit.x[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let unit = as_orbit.info.tolerance * peak + 1e-9;
    let dev = max_diff(&as_neighbour.x[k], &as_orbit.x[k]);
    eprintln!("V[out] apart by {dev:.3e} V, a unit {unit:.3e} V");
    assert!(dev <= 4.0 * unit, "{dev} V against a unit of {unit} V");
}

#[test]
fn a_warm_start_that_does_not_solve_is_retried_cold() {
    // A neighbour's state of a different circuit can be so far off that
    // no period integrates from it (here every unknown at 1e300 V or A: the
    // first step overflows). That is not the circuit's
    // failure: shooting starts again cold (operating point, warm-up) and
    // must land on the cold solution, for plain shooting and for auto's
    // refinement alike (common practice: a warm start may only save work).
    let b = rectifier_loaded(1e3);
    let d = instantiate(&b.c).unwrap();
    for method in [SteadyMethod::Shooting, SteadyMethod::Auto] {
        let mut params = SteadyParams {
            freq: F,
            harmonics: 16,
            method,
            ..SteadyParams::default()
        };
        let cold = steady(&b.c, &d, &params).unwrap();
        params.shooting.initial = Some(vec![1e300; d.n_unknowns]);
        let warm = steady(&b.c, &d, &params)
            .unwrap_or_else(|e| panic!("{method:?}: the cold retry did not solve: {e}"));
        let sh = warm.info.shooting.expect("shooting");
        assert_eq!(
            sh.warmup_periods,
            SteadyParams::default().shooting.warmup_periods,
            "{method:?}: the retry warms up as a cold start does: {sh:?}"
        );
        // the same computation as the cold solve: identical samples
        assert_eq!(warm.x, cold.x, "{method:?}");
    }
}
