//! Matrix-free shooting (Newton–Krylov on the monodromy operator) against
//! shooting with the dense monodromy matrix, and the Arnoldi Floquet
//! multipliers against the dense eigenvalues of `Φ`, on two class-C stages
//! of our own (the demo stage of tests/support and a copy with every part
//! 5 % larger) sharing a supply through 0.1 Ω and feeding one 25 Ω load
//! through 0.5 Ω each: coupled, so neither splits into independent pieces.
//! Both modes solve the same discrete equations (the TR-BDF2 period map), so
//! they must agree to the shooting tolerance, not to a discretisation error.

mod support;
use num_complex::Complex64;
use support::*;
use tankwave_circuit::ir::Waveform;
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

/// One class-C stage with parts scaled by `m`, node names ending in `k`.
fn stage(b: &mut B, k: &str, m: f64) {
    let n = |s: &str| format!("{s}{k}");
    b.vsrc(
        &n("vdrv"),
        &n("src"),
        "gnd",
        Waveform {
            dc: 0.0,
            shape: Some(sine(20.0, CLASS_C_F0)),
        },
        50.0,
    );
    b.cap(&n("cmin"), &n("src"), "gnd", 704e-12 * m);
    b.ind(
        &n("lmin"),
        &n("src"),
        &n("bin"),
        176e-9 * m,
        r_of_q(176e-9 * m, 150.0),
    );
    b.cap(&n("cin"), &n("bin"), &n("base"), 100e-9);
    b.r(&n("rbias"), &n("base"), "gnd", 10.0 * m);
    b.bjt(&n("q"), &n("coll"), &n("base"), "gnd", tw_hf25());
    b.ind(&n("rfc"), "vcc", &n("coll"), 4.7e-6 * m, 0.05);
    b.cap(&n("cblk"), &n("coll"), &n("p1"), 100e-9);
    b.cap(&n("c1"), &n("p1"), "gnd", 7.81e-9 * m);
    b.ind(
        &n("lpi"),
        &n("p1"),
        &n("out"),
        73.6e-9 * m,
        r_of_q(73.6e-9 * m, 200.0),
    );
    b.cap(&n("c2"), &n("out"), "gnd", 2.35e-9 * m);
    b.r(&n("rcomb"), &n("out"), "sum", 0.5);
}

fn pair() -> B {
    let mut b = B::new();
    b.vdc("vsup", "vs", "gnd", 13.8);
    b.r("rsup", "vs", "vcc", 0.1);
    stage(&mut b, "a", 1.0);
    stage(&mut b, "b", 1.05);
    b.r("rload", "sum", "gnd", 25.0);
    b
}

fn params(mode: ShootingMode) -> SteadyParams {
    let mut p = SteadyParams {
        freq: CLASS_C_F0,
        harmonics: 24,
        method: SteadyMethod::Shooting,
        ..SteadyParams::default()
    };
    p.shooting.mode = mode;
    p
}

#[test]
fn matrix_free_shooting_agrees_with_the_dense_monodromy_matrix() {
    let b = pair();
    let d = instantiate(&b.c).expect("devices");
    let dense = steady(&b.c, &d, &params(ShootingMode::Dense)).expect("dense shooting");
    let free = steady(&b.c, &d, &params(ShootingMode::MatrixFree)).expect("matrix-free shooting");
    let fi = free.info.shooting.expect("shooting info");
    assert!(fi.matrix_free && fi.krylov_products > 0, "{fi:?}");
    assert!(!dense.info.shooting.expect("info").matrix_free);
    // Each solution's start state is within one tolerance unit
    // (rel_tolerance·peak + floor) of the fixed point of the same discrete
    // period map (shooting's update test), so the two differ by at most two
    // units at the period start; over the period a deviation of the start
    // state is carried by Φ(t), whose entries on this damped stage stay
    // below 5 (a stable orbit): 10 units in all.
    let rel = dense.info.tolerance;
    let mut worst = 0.0f64;
    for k in 0..d.n_unknowns {
        let peak = dense.x[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let unit = rel * peak
            + if d.names[k].starts_with("I[") {
                1e-12
            } else {
                1e-9
            };
        worst = worst.max(max_diff(&dense.x[k], &free.x[k]) / unit);
    }
    assert!(
        worst <= 10.0,
        "the two modes differ by {worst:.2} tolerance units"
    );
}

#[test]
fn arnoldi_multipliers_match_the_dense_eigenvalues_of_the_monodromy_matrix() {
    let b = pair();
    let d = instantiate(&b.c).expect("devices");
    assert!(d.n_unknowns > 20, "{} unknowns", d.n_unknowns);
    let sol = steady(&b.c, &d, &params(ShootingMode::Dense)).expect("shooting");
    // The check integrates the same period from the same state in both
    // modes: Φ carried densely (eigenvalues by a Schur decomposition) or the
    // per-step factors kept (Arnoldi on v ↦ Φv).
    let mut by_dense = sol.clone();
    by_dense.info.floquet = None;
    let by_free = by_dense.clone();
    let a = floquet::verify(&b.c, &d, &params(ShootingMode::Dense), by_dense).expect("dense");
    let f = floquet::verify(&b.c, &d, &params(ShootingMode::MatrixFree), by_free).expect("free");
    let mu = |s: &PeriodicSolution| -> Vec<Complex64> {
        s.info
            .floquet
            .as_ref()
            .expect("multipliers")
            .multipliers
            .iter()
            .map(|(re, im)| Complex64::new(*re, *im))
            .collect()
    };
    let (md, mf) = (mu(&a), mu(&f));
    assert_eq!(md.len(), floquet::SHOWN);
    assert_eq!(mf.len(), floquet::SHOWN);
    // Arnoldi stops when the wanted values move by less than
    // ARNOLDI_SETTLED (3e-8) of the largest between two looks; rounding of
    // the two recursions is far smaller. 1e-6 leaves room for the last
    // movement being smaller than the remaining error (common practice: a
    // factor 30).
    for (x, y) in md.iter().zip(&mf) {
        // conjugate pairs may come in either order
        let best = mf
            .iter()
            .map(|z| (z - x).norm())
            .fold(f64::INFINITY, f64::min);
        assert!(
            best < 1e-6,
            "dense {x}, nearest Arnoldi {y}: off by {best:e}"
        );
    }
    let (la, lf) = (
        a.info.floquet.as_ref().unwrap().largest,
        f.info.floquet.as_ref().unwrap().largest,
    );
    assert!((la - lf).abs() < 1e-6 && la < 1.0, "{la} vs {lf}");
}
