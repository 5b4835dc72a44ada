//! The mismatch sweep (`tankwave_stage::mismatch`) against the handbook
//! relations of VSWR, reflection and mismatch loss, and against the closed
//! form of a resistive source into a mismatched load.

use std::path::PathBuf;

use num_complex::Complex64;
use tankwave_circuit::{Overrides, StageSource};
use tankwave_stage::mismatch::{
    delivered_fraction, gamma_magnitude, load_impedance, solve_load, steady_freq, sweep, vswr_of,
    Circle,
};

#[test]
fn vswr_reflection_and_mismatch_loss() {
    // D. M. Pozar, Microwave Engineering, 4th ed., §2.3 (docs/check-values.md,
    // "Mismatch"): |Γ| = (S − 1)/(S + 1); delivered fraction 1 − |Γ|²
    // (S = 2: 1/3 and 8/9, 0.512 dB mismatch loss; S = 3: 1/2 and 3/4,
    // 1.249 dB; S = 1.5: 1/5 and 24/25, 0.177 dB). Exact arithmetic: 1e-12.
    for (s, g, frac, loss_db) in [
        (1.5, 0.2, 0.96, 0.177),
        (2.0, 1.0 / 3.0, 8.0 / 9.0, 0.512),
        (3.0, 0.5, 0.75, 1.249),
    ] {
        assert!((gamma_magnitude(s) - g).abs() < 1e-12);
        assert!((vswr_of(g) - s).abs() < 1e-12);
        assert!((delivered_fraction(g) - frac).abs() < 1e-12);
        // the dB figures are given to three decimals: 5e-4 is their rounding
        assert!((-10.0 * frac.log10() - loss_db).abs() < 5e-4);
    }
    // Z = Z0 (1 + Γ)/(1 − Γ): Γ = 1/3 at 0° is 100 Ω, at 180° 25 Ω, and
    // Γ = j/3 lies on the S = 2 circle: its Γ back from Z is the same
    let z = load_impedance(50.0, Complex64::new(1.0 / 3.0, 0.0));
    assert!((z - Complex64::new(100.0, 0.0)).norm() < 1e-12);
    let z = load_impedance(50.0, Complex64::new(-1.0 / 3.0, 0.0));
    assert!((z - Complex64::new(25.0, 0.0)).norm() < 1e-12);
    let g = Complex64::new(0.0, 1.0 / 3.0);
    let z = load_impedance(50.0, g);
    assert!(((z - 50.0) / (z + 50.0) - g).norm() < 1e-12);
}

const SOURCE: &str = "voltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
    resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
    analyze steady freq=1MHz harmonics=4 method=balance\n\
    require pout >= 0.2W\n";

#[test]
fn resistive_source_into_mismatched_loads() {
    // A 10 V sine behind Rs = Z0 = 50 Ω: available power |Vs|²/(8 Rs) =
    // 0.25 W, and a load of reflection Γ takes P = P_avs (1 − |Γ|²) (Pozar
    // §2.3, docs/check-values.md, "Mismatch"). The network is linear and
    // harmonic balance solves it exactly up to the Newton tolerance: 1e-6.
    let stage = tankwave_stage::load_source(
        StageSource::from_text("m.tank", SOURCE),
        &Overrides::default(),
    )
    .expect("loads");
    let circles = [
        Circle {
            vswr: 1.5,
            phases: 8,
        },
        Circle {
            vswr: 2.0,
            phases: 8,
        },
        Circle {
            vswr: 3.0,
            phases: 8,
        },
    ];
    let s = sweep(&stage.circuit, &circles, None).expect("the sweep runs");
    assert_eq!(s.reference_ohm, 50.0);
    assert_eq!(s.points.len(), 24, "every load is reported");
    assert_eq!(s.unsolved, 0);
    for p in &s.points {
        let m = p.metrics.as_ref().expect("solved");
        let expect = 0.25 * delivered_fraction(gamma_magnitude(p.vswr));
        let pout = m.output.as_ref().expect("output").p1_w;
        assert!(
            (pout - expect).abs() <= 1e-6 * expect,
            "S = {} at {}°: {pout} W, expected {expect} W",
            p.vswr,
            p.phase_deg
        );
        // the source sees the load itself: its input VSWR is the circle's
        let vswr = m.drive.as_ref().and_then(|d| d.vswr).expect("input VSWR");
        assert!(
            (vswr - p.vswr).abs() <= 1e-6 * p.vswr,
            "{vswr} vs {}",
            p.vswr
        );
    }
    // pout ≥ 0.2 W: 0.24 W at S = 1.5, 0.222 W at S = 2, 0.1875 W at S = 3
    let w = &s.worst[0];
    assert!(!w.pass);
    assert_eq!(s.points[w.at].vswr, 3.0);
    assert!((w.verdict.value.unwrap() - 0.1875).abs() < 1e-6);
    let s = sweep(&stage.circuit, &circles[..2], None).expect("the sweep runs");
    assert!(s.worst[0].pass, "S ≤ 2 keeps at least 0.222 W");
}

#[test]
fn class_c_demo_survives_a_mismatch_circle() {
    // The class-C demo on the S = 2 circle at 6 phases: every load solves
    // (warm-started from its neighbour) and reports its figures; the output
    // power at every load stays within what a lossless network can deliver.
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../netlists/ism-13m56-classc.tank");
    let c = tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("loads")
        .circuit;
    let s = sweep(
        &c,
        &[Circle {
            vswr: 2.0,
            phases: 6,
        }],
        None,
    )
    .expect("runs");
    assert_eq!(s.points.len(), 6);
    for p in &s.points {
        let m = p
            .metrics
            .as_ref()
            .unwrap_or_else(|| panic!("{:?}", p.failure));
        let pout = m.output.as_ref().expect("output").p1_w;
        assert!(pout > 0.0 && pout <= m.pdc_w + m.drive.as_ref().map_or(0.0, |d| d.pin_w));
        assert_eq!(p.verdicts.len(), c.requirements.len());
    }
    assert_eq!(s.worst.len(), c.requirements.len());
}

#[test]
fn a_stage_without_an_output_resistor_is_refused() {
    let text = SOURCE
        .replace("output rload\n", "")
        .replace("require pout >= 0.2W\n", "");
    let stage = tankwave_stage::load_source(
        StageSource::from_text("m.tank", &text),
        &Overrides::default(),
    )
    .expect("loads");
    let e = sweep(
        &stage.circuit,
        &[Circle {
            vswr: 2.0,
            phases: 4,
        }],
        None,
    )
    .unwrap_err();
    assert!(e.is_input(), "{e}");
}

/// The class-C demo's stage file.
fn class_c_demo() -> tankwave_circuit::Circuit {
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../netlists/ism-13m56-classc.tank");
    tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("loads")
        .circuit
}

#[test]
fn warm_sweep_gives_the_cold_solves_figures_within_the_accuracy_target() {
    // Every load of a warm-started sweep (each load from its neighbour's
    // solved state) against the same load solved cold. Both are refined by
    // method=auto until their estimated error meets the file's target
    // (docs/analyses.md, "Accuracy of the steady state"): each is within the
    // target of the exact orbit, so the two differ by at most twice it. The
    // VSWR 3 circle at 8 phases: the loads farthest apart the sweep meets.
    let c = class_c_demo();
    let freq = steady_freq(&c).expect("steady");
    let circles = [Circle {
        vswr: 3.0,
        phases: 8,
    }];
    let s = sweep(&c, &circles, None).expect("runs");
    assert_eq!(s.points.len(), 8, "every load is reported");
    assert_eq!(s.unsolved, 0, "every load solves warm");
    let mut compared = 0;
    let mut worst = (0.0f64, 0.0f64);
    for p in &s.points {
        let warm = p.metrics.as_ref().expect("solved");
        let ew = p.accuracy.as_ref().expect("auto's estimate");
        assert!(ew.met, "warm at {}°: {ew:?}", p.phase_deg);
        // stability is reported per load
        let mu = p.floquet_largest.expect("verified");
        assert!(mu < 1.0, "{mu}");
        let Ok(cold) = solve_load(&c, p.z, freq, None, None) else {
            // a load that does not solve cold is reported by the cold arm;
            // the warm figures have nothing to be compared with there
            continue;
        };
        compared += 1;
        let ec = cold.accuracy.as_ref().expect("auto's estimate");
        assert!(ec.met, "cold at {}°: {ec:?}", p.phase_deg);
        let (pw, pc) = (
            warm.output.as_ref().expect("output").p1_w,
            cold.metrics.output.as_ref().expect("output").p1_w,
        );
        let dp = (pw - pc).abs() / pc;
        worst.0 = worst.0.max(dp);
        assert!(
            dp <= 2.0 * ew.target.power_rel,
            "P1 at {}°: warm {pw} W, cold {pc} W ({dp:.2e} relative)",
            p.phase_deg
        );
        // the harmonic levels the estimate holds to level_error= (above
        // −100 dBc, resolved in both)
        let hw = &warm.output.as_ref().expect("output").harmonics;
        let hc = &cold.metrics.output.as_ref().expect("output").harmonics;
        for (a, b) in hw.iter().zip(hc).skip(1) {
            let (Some(la), Some(lb)) = (a.dbc, b.dbc) else {
                continue;
            };
            if la.min(lb) < ew.target.harmonics_above_dbc {
                continue;
            }
            worst.1 = worst.1.max((la - lb).abs());
            assert!(
                (la - lb).abs() <= 2.0 * ew.target.harmonic_db,
                "harmonic {} at {}°: warm {la} dBc, cold {lb} dBc",
                a.n,
                p.phase_deg
            );
        }
        // the same stability verdict
        assert!(cold.floquet_largest.expect("verified") < 1.0);
    }
    eprintln!(
        "{compared} loads compared: P1 apart by {:.1e} at most, harmonic levels by {:.3} dB",
        worst.0, worst.1
    );
    assert!(compared >= 6, "only {compared} loads solved cold");
}
