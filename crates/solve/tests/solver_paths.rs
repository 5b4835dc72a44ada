//! Solver options that must not change answers: the sparse LU path, the op
//! fallbacks (junction_leak and source stepping), transient resampling, and error
//! reporting for bad parameters.

mod support;
use support::*;
use tankwave_circuit::ir::{DiodeParams, Waveform};
use tankwave_circuit::StartFrom;
use tankwave_devices::instantiate;
use tankwave_solve::*;

fn diode_chain() -> B {
    let mut b = B::new();
    b.vdc("vs", "s", "gnd", 20.0);
    b.r("r0", "s", "a", 100.0);
    b.diode("d1", "a", "b", DiodeParams::default());
    b.diode("d2", "b", "c", DiodeParams::default());
    b.r("r1", "c", "gnd", 1e3);
    b.r("r2", "b", "gnd", 5e2);
    b
}

#[test]
fn sparse_and_dense_lu_give_the_same_operating_point_and_transient() {
    let b = diode_chain();
    let d = instantiate(&b.c).unwrap();
    let dense = operating_point(
        &b.c,
        &d,
        &OpParams {
            linear_solver: LinearSolver::Dense,
            ..OpParams::default()
        },
    )
    .unwrap();
    let sparse = operating_point(
        &b.c,
        &d,
        &OpParams {
            linear_solver: LinearSolver::Sparse,
            ..OpParams::default()
        },
    )
    .unwrap();
    for (a, s) in dense.x.iter().zip(&sparse.x) {
        // Same Newton path up to rounding in the factorisation.
        assert!((a - s).abs() <= 1e-9 * a.abs().max(1e-3), "{a} vs {s}");
    }

    let mut rc = B::new();
    rc.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(1.0, 1e6)),
        },
        50.0,
    );
    rc.cap("c1", "in", "gnd", 1e-9);
    rc.ind("l1", "in", "out", 1e-6, 0.0);
    rc.r("rl", "out", "gnd", 50.0);
    let dr = instantiate(&rc.c).unwrap();
    let mut p = TransientParams {
        stop: 3e-6,
        step: 1e-8,
        ..TransientParams::default()
    };
    p.op.linear_solver = LinearSolver::Dense;
    let a = transient(&rc.c, &dr, &p).unwrap();
    p.op.linear_solver = LinearSolver::Sparse;
    let s = transient(&rc.c, &dr, &p).unwrap();
    assert_eq!(a.time.len(), s.time.len());
    let k = a.index("V[out]").unwrap();
    let dev =
        a.x.iter()
            .zip(&s.x)
            .map(|(x, y)| (x[k] - y[k]).abs())
            .fold(0.0, f64::max);
    assert!(dev < 1e-9, "{dev}");
}

#[test]
fn op_fallbacks_reach_the_plain_newton_answer() {
    let b = diode_chain();
    let d = instantiate(&b.c).unwrap();
    let plain = operating_point(&b.c, &d, &OpParams::default()).unwrap();
    assert_eq!(plain.info.strategy, Strategy::Newton);
    // Too few iterations for plain Newton from zero (it needs more than 4 here):
    // the fallbacks, each stage starting close to its answer, get there.
    let few = OpParams {
        max_iter: 4,
        ..OpParams::default()
    };
    let r = operating_point(&b.c, &d, &few).unwrap();
    eprintln!(
        "plain: {} iterations; with max_iter 4: {:?}, {} iterations",
        plain.info.iterations, r.info.strategy, r.info.iterations
    );
    assert!(plain.info.iterations > 4);
    assert_ne!(r.info.strategy, Strategy::Newton);
    for (a, s) in plain.x.iter().zip(&r.x) {
        // Both converged to Newton tolerance (rel_tolerance 1e-6).
        assert!((a - s).abs() <= 4e-6 * a.abs().max(1e-3), "{a} vs {s}");
    }
    // Source stepping alone.
    let src = OpParams {
        max_iter: 4,
        leak_stepping: false,
        ..OpParams::default()
    };
    let r2 = operating_point(&b.c, &d, &src).unwrap();
    assert!(matches!(r2.info.strategy, Strategy::SourceStepping { .. }));
    // Nothing allowed: the error names an unknown and the iteration count.
    let none = OpParams {
        max_iter: 4,
        leak_stepping: false,
        source_stepping: false,
        ..OpParams::default()
    };
    let e = operating_point(&b.c, &d, &none).unwrap_err();
    assert!(
        matches!(e, SolveError::NoConvergence { iterations: 4, .. }),
        "{e:?}"
    );
    eprintln!("{e}");
}

#[test]
fn resampling_a_smooth_waveform_is_accurate() {
    // RC charging from zero: resampled values against the closed form
    // v = 1 − e^(−t/τ) (Alexander & Sadiku ch. 7, memory). Cubic interpolation
    // between accepted points adds an error of order h⁴ v''''/384, far below
    // the integration error.
    let tau = 1e-3;
    let mut b = B::new();
    b.vdc("vin", "in", "gnd", 1.0);
    b.r("r1", "in", "out", 1e3);
    b.cap("c1", "out", "gnd", 1e-6);
    let d = instantiate(&b.c).unwrap();
    let r = transient(
        &b.c,
        &d,
        &TransientParams {
            stop: 3.0 * tau,
            step: tau / 10.0,
            start: StartFrom::Zero,
            ..TransientParams::default()
        },
    )
    .unwrap();
    let (t, v) = r.uniform(tau / 100.0);
    assert_eq!(t.len(), 301);
    let k = r.index("V[out]").unwrap();
    let e = t
        .iter()
        .zip(&v)
        .map(|(t, x)| (x[k] - (1.0 - (-t / tau).exp())).abs())
        .fold(0.0, f64::max);
    assert!(e < 1e-4, "{e}");
}

#[test]
fn bad_transient_parameters_are_refused() {
    let b = diode_chain();
    let d = instantiate(&b.c).unwrap();
    for p in [
        TransientParams {
            stop: -1.0,
            ..TransientParams::default()
        },
        TransientParams {
            step: 0.0,
            ..TransientParams::default()
        },
        TransientParams {
            stop: f64::NAN,
            ..TransientParams::default()
        },
        TransientParams {
            rel_tolerance: Some(2.0),
            ..TransientParams::default()
        },
    ] {
        assert!(matches!(
            transient(&b.c, &d, &p),
            Err(SolveError::BadParams(_))
        ));
    }
    let s = SteadyParams {
        freq: 0.0,
        ..SteadyParams::default()
    };
    assert!(matches!(
        steady(&b.c, &d, &s),
        Err(SolveError::BadParams(_))
    ));
}

#[test]
fn shooting_with_sparse_lu_matches_dense() {
    let mut b = B::new();
    b.vsrc(
        "vs",
        "in",
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(2.0, 1e6)),
        },
        5.0,
    );
    b.diode("d1", "in", "out", DiodeParams::default());
    b.cap("c1", "out", "gnd", 1e-9);
    b.ind("l1", "out", "gnd", 25e-6, 1.0);
    b.r("rl", "out", "gnd", 200.0);
    let d = instantiate(&b.c).unwrap();
    let mut p = SteadyParams {
        freq: 1e6,
        harmonics: 8,
        method: tankwave_circuit::SteadyMethod::Shooting,
        linear_solver: LinearSolver::Dense,
        ..SteadyParams::default()
    };
    let a = steady(&b.c, &d, &p).unwrap();
    p.linear_solver = LinearSolver::Sparse;
    let s = steady(&b.c, &d, &p).unwrap();
    let dev =
        a.x.iter()
            .flatten()
            .zip(s.x.iter().flatten())
            .map(|(x, y)| (x - y).abs())
            .fold(0.0, f64::max);
    // Same equations and Newton path; only rounding in the factorisations differs
    // (Newton stops within rel_tolerance 1e-6, so allow 1e-7 V on volt-level signals).
    assert!(dev < 1e-7, "{dev}");
}
