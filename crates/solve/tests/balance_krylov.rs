//! Harmonic balance with the Newton step solved by GMRES (block-diagonal
//! preconditioner, matrix-free Jacobian product; the linear network held
//! as its dense reduction to the ports and as its sparse blocks) against the
//! same solve by dense LU, on the class-C demo stage of tests/support
//! (invented values) and the rectifier. Both paths solve the same discrete equations to the same
//! Newton tolerance (rel_tolerance 1e-6 of each row's terms), and GMRES
//! leaves a linear residual of 1e-7 of the Newton residual per step, so the
//! harmonics agree to the Newton tolerance: within 1e-5 of the largest
//! fundamental (ten times the tolerance, for the two independent stopping
//! points; common practice).

mod support;
use num_complex::Complex64 as C64;
use support::*;
use tankwave_circuit::SteadyMethod;
use tankwave_devices::instantiate;
use tankwave_solve::*;

fn fundamental(x: &[f64]) -> C64 {
    let n = x.len() as f64;
    x.iter()
        .enumerate()
        .map(|(i, v)| C64::from_polar(*v * 2.0 / n, -2.0 * std::f64::consts::PI * i as f64 / n))
        .sum()
}

fn compare(b: &B, f: f64, k: usize) {
    let d = instantiate(&b.c).expect("devices");
    let mut p = SteadyParams {
        freq: f,
        harmonics: k,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    p.balance.krylov_from = usize::MAX;
    let dense = steady(&b.c, &d, &p).expect("dense solve");
    p.balance.krylov_from = 0;
    p.balance.network = NetworkForm::Dense;
    let krylov = steady(&b.c, &d, &p).expect("GMRES solve");
    let info = krylov.info.balance.as_ref().expect("balance info");
    assert!(info.krylov_iterations > 0, "GMRES was not used: {info:?}");
    assert!(!info.sparse_network);
    assert_eq!(
        dense.info.balance.as_ref().map(|i| i.krylov_iterations),
        Some(0)
    );
    assert!(krylov.info.residual <= krylov.info.tolerance);
    // the same GMRES step with the network held sparse: the same
    // preconditioner and product up to rounding, so the same solution
    p.balance.network = NetworkForm::Sparse;
    let sparse = steady(&b.c, &d, &p).expect("GMRES solve, sparse network");
    let info = sparse.info.balance.as_ref().expect("balance info");
    assert!(info.sparse_network, "{info:?}");
    assert!(sparse.info.residual <= sparse.info.tolerance);
    let scale = dense
        .x
        .iter()
        .map(|u| fundamental(u).norm())
        .fold(0.0f64, f64::max);
    assert!(scale > 0.1, "a driven stage: {scale}");
    for (label, other) in [("GMRES", &krylov), ("GMRES, sparse network", &sparse)] {
        for (u, (a, b)) in dense.x.iter().zip(&other.x).enumerate() {
            assert_eq!(a.len(), b.len());
            for (s, (va, vb)) in a.iter().zip(b).enumerate() {
                assert!(
                    (va - vb).abs() <= 1e-5 * scale,
                    "{}: sample {s}: dense {va} vs {label} {vb}",
                    d.names[u]
                );
            }
        }
    }
}

#[test]
fn gmres_step_matches_dense_step_on_class_c() {
    compare(&class_c(20.0), CLASS_C_F0, 32);
}

#[test]
fn gmres_step_matches_dense_step_on_rectifier() {
    compare(&rectifier(1e6), 1e6, 16);
}

/// A warm start (the state at the start of the period of a solved
/// neighbour, here the same stage) is honoured: the solve lands on the same
/// periodic state (to the Newton tolerance, as above) in fewer Newton
/// iterations than from the operating point, and a warm start of the wrong
/// length is ignored.
#[test]
fn warm_start_is_honoured() {
    let b = class_c(20.0);
    let d = instantiate(&b.c).expect("devices");
    let mut p = SteadyParams {
        freq: CLASS_C_F0,
        harmonics: 32,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    let cold = steady(&b.c, &d, &p).expect("cold solve");
    p.balance.initial = Some(cold.x.iter().map(|u| u[0]).collect());
    let warm = steady(&b.c, &d, &p).expect("warm solve");
    assert!(
        warm.info.iterations < cold.info.iterations,
        "warm {} vs cold {} iterations",
        warm.info.iterations,
        cold.info.iterations
    );
    let scale = cold
        .x
        .iter()
        .map(|u| fundamental(u).norm())
        .fold(0.0f64, f64::max);
    for (a, b) in cold.x.iter().zip(&warm.x) {
        for (va, vb) in a.iter().zip(b) {
            assert!((va - vb).abs() <= 1e-5 * scale, "{va} vs {vb}");
        }
    }
    p.balance.initial = Some(vec![0.0; 3]);
    let ignored = steady(&b.c, &d, &p).expect("bad warm start ignored");
    assert_eq!(ignored.info.iterations, cold.info.iterations);
}

/// The devices' blocks of the GMRES preconditioner
/// (`BalanceParams::device_band`, on by default where the network is held
/// sparse) on the class-C demo stage at K = 64, every Newton step by GMRES
/// on the sparse network: the same periodic state as the block-diagonal
/// preconditioner alone (to the Newton tolerance, as above), in fewer
/// GMRES products per Newton step. On the dense network form (a stage of
/// a few ports, where they cost more than they save) the band is not used:
/// the same products with it as without.
#[test]
fn device_blocks_cut_gmres_products_on_class_c() {
    let b = class_c(20.0);
    let d = instantiate(&b.c).expect("devices");
    let mut p = SteadyParams {
        freq: CLASS_C_F0,
        harmonics: 64,
        method: SteadyMethod::Balance,
        ..SteadyParams::default()
    };
    p.balance.raise_harmonics = false;
    p.balance.krylov_from = 0;
    p.balance.network = NetworkForm::Dense;
    let dense_with = steady(&b.c, &d, &p).expect("GMRES, dense network, band asked");
    p.balance.device_band = 0;
    let dense_without = steady(&b.c, &d, &p).expect("GMRES, dense network, no band");
    let products = |s: &PeriodicSolution| s.info.balance.as_ref().map(|i| i.krylov_iterations);
    assert_eq!(
        products(&dense_with),
        products(&dense_without),
        "the band is not used on the dense network form"
    );
    p.balance.device_band = SteadyParams::default().balance.device_band;
    p.balance.network = NetworkForm::Sparse;
    assert!(p.balance.device_band > 0, "the blocks are on by default");
    let with = steady(&b.c, &d, &p).expect("GMRES with the device blocks");
    p.balance.device_band = 0;
    let without = steady(&b.c, &d, &p).expect("GMRES, block-diagonal alone");
    let per_step = |s: &PeriodicSolution| {
        let i = s.info.balance.as_ref().expect("balance info");
        assert!(i.krylov_steps > 0, "GMRES was not used: {i:?}");
        i.krylov_iterations as f64 / i.krylov_steps as f64
    };
    let (a, b0) = (per_step(&with), per_step(&without));
    eprintln!("GMRES products per Newton step: {a:.1} with the blocks, {b0:.1} without");
    assert!(
        a < b0,
        "{a} products per step with the blocks, {b0} without"
    );
    assert!(with.info.residual <= with.info.tolerance);
    let scale = without
        .x
        .iter()
        .map(|u| fundamental(u).norm())
        .fold(0.0f64, f64::max);
    for (u, (x, y)) in without.x.iter().zip(&with.x).enumerate() {
        for (s, (va, vb)) in x.iter().zip(y).enumerate() {
            assert!(
                (va - vb).abs() <= 1e-5 * scale,
                "{}: sample {s}: {va} without the blocks vs {vb} with",
                d.names[u]
            );
        }
    }
}
