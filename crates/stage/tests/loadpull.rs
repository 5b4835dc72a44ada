//! Load-pull (`tankwave_stage::loadpull`) against the analytic load-pull
//! contours of an ideal current-source device (S. C. Cripps, "A theory for
//! the prediction of GaAs FET load-pull power contours", IEEE MTT-S 1983,
//! from memory; docs/check-values.md, "Load-pull").

use num_complex::Complex64;
use tankwave_circuit::{Analysis, Circuit, Overrides, StageSource};
use tankwave_stage::loadpull::{load_pull, LoadPull};

/// Supply, V.
const VDC: f64 = 50.0;
/// Fundamental of the collector current, peak A: β · (base current's sine
/// amplitude) = 100 · 2.5 mA.
const I1: f64 = 0.25;

/// An ideal current-source device: a bipolar transistor with no
/// capacitance, no Early effect and no high-injection knee, driven by a
/// current source at its base (class A: dc = sine amplitude = 2.5 mA, so
/// i_c = β·i_b swings 0 to I_max = 0.5 A), with a clamp diode (10 mA
/// saturation current) across it so that v_ce cannot swing below about
/// −0.2 V: its voltage limit is v_ce ≈ 0, its current limit I_max. The
/// load power is what the load takes (`pout_w`), since the device is the
/// transistor and its clamp together. Harmonics are shorted at the collector by
/// 1 µF (0.08 Ω at 2 MHz against loads of tens of ohms), the supply comes
/// through 10 mH (63 kΩ at 1 MHz). 1 MΩ from base to ground (0.75 µA of
/// 2.5 mA, 0.03 %) gives the base a DC path at zero drive; the nominal load
/// is 200 Ω through 10 µF.
fn cripps_stage(grid: &str) -> Circuit {
    ideal_stage(
        "current   ib   gnd  base dc=2.5mA wave=sine(amp=2.5mA, freq=f0)\n",
        grid,
    )
}

/// The ideal device of [`cripps_stage`] with the base drive `drive` (one
/// or more statements).
fn ideal_stage(drive: &str, grid: &str) -> Circuit {
    let text = format!(
        "title \"ideal current-source device\"\n\
         part ideal npn {{ transport {{ sat_current=1e-14A beta=100 beta_reverse=1 }} }}\n\
         part clamp diode {{ junction {{ sat_current=10mA }} }}\n\
         let f0 = 1MHz\n\
         voltage   vcc  vcc  gnd dc={VDC}V\n\
         {drive}\
         resistor  rbb  base gnd 1MOhm\n\
         bjt       q1   c=coll b=base e=gnd part=ideal\n\
         diode     dcl  gnd  coll part=clamp\n\
         inductor  lrfc vcc  coll 10mH\n\
         capacitor csh  coll gnd  1uF\n\
         capacitor cb   coll out 10uF\n\
         resistor  rl   out  gnd 200Ohm\n\
         analyze steady freq=f0 harmonics=16 method=balance\n\
         analyze loadpull {grid}\n"
    );
    tankwave_stage::load_source(
        StageSource::from_text("cripps.tank", &text),
        &Overrides::default(),
    )
    .expect("the check stage loads")
    .circuit
}

fn run(c: &Circuit) -> LoadPull {
    let spec = c
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::LoadPull(s) => Some(s.clone()),
            _ => None,
        })
        .expect("an analyze loadpull");
    load_pull(c, &spec).expect("the load-pull runs")
}

/// Cripps's power at load Z: current-limited P = ½ I1² R for |Z| ≤ R_opt,
/// voltage-limited P = ½ V1² R / |Z|² for |Z| ≥ R_opt, with R_opt = V1/I1.
fn cripps_power(z: Complex64, v1: f64) -> f64 {
    let r_opt = v1 / I1;
    if z.norm() <= r_opt {
        0.5 * I1 * I1 * z.re
    } else {
        0.5 * v1 * v1 * z.re / z.norm_sqr()
    }
}

#[test]
fn load_pull_of_an_ideal_device_follows_the_cripps_contours() {
    // Z0 = R_opt = V_dc / I1 = 200 Ω: the boundary |Z| = R_opt is the
    // imaginary axis of Γ, current-limited to its left, voltage-limited to
    // its right.
    let c = cripps_stage("reference=200Ohm radius=0.6 points=9");
    let pull = run(&c);
    assert_eq!(pull.unsolved, 0, "every load solves");
    assert_eq!(pull.points.len(), 49, "the 9×9 grid cut to the disc");
    let r_opt = VDC / I1;
    // Tolerance 1.5 %: the clamp and the transistor's saturation hold
    // v_ce within 0.2 V of zero instead of at zero (the knee), which moves
    // the voltage swing by at most 0.2 V of 50 V, 0.4 %, and the
    // voltage-limited power by 0.8 %, and rounds the corner where the two
    // limits meet (|Z| = R_opt) by as much; the 1 µF harmonic short leaves
    // harmonic voltages below 0.1 % of the fundamental; the truncation at 16
    // harmonics and the Newton tolerance are far smaller.
    for p in &pull.points {
        let f = p.figures.expect("solved");
        let want = cripps_power(p.z, VDC);
        assert!(
            (f.pout_w / want - 1.0).abs() <= 0.015,
            "Γ = {} (|Z| = {:.1} Ω): {} W against Cripps's {} W",
            p.gamma,
            p.z.norm(),
            f.pout_w,
            want
        );
    }
    // The optimum is R_opt itself (Γ = 0) with P_opt = ½ I1² R_opt = 6.25 W,
    // found within one grid step (0.15 in Γ) and 1.5 % (as above).
    let best = pull.best_power.expect("an optimum");
    assert!(best.gamma.norm() <= 0.15, "optimum at Γ = {}", best.gamma);
    let p_opt = 0.5 * I1 * I1 * r_opt;
    assert!(
        (best.value / p_opt - 1.0).abs() <= 0.015,
        "optimum {} W against {p_opt} W",
        best.value
    );
}

/// Class B: the base driven by a sine of 5 mA peak with its negative half
/// taken by a clamp diode, so i_c = β·max(i_b, 0) is a half sine of peak
/// I_max = 0.5 A: fundamental I1 = I_max/2 = 0.25 A, DC I_max/π. With the
/// harmonics shorted, into Z = R + jX the fundamental voltage is I1·|Z|
/// until it reaches V_dc (S. C. Cripps, RF Power Amplifiers for Wireless
/// Communications, 2nd ed., 2006, ch. 3, from memory; docs/check-values.md,
/// "Class B into a complex load"):
/// - current-limited, |Z| ≤ R_opt = V_dc/I1 = 200 Ω: P = ½ I1² R, and the
///   collector efficiency P/(V_dc I_max/π) = (π/4)·I1 R/V_dc, π/4 at R_opt;
/// - voltage-limited, |Z| ≥ R_opt: P = ½ V_dc² R/|Z|².
#[test]
fn class_b_into_a_complex_load_follows_the_load_line() {
    let c = ideal_stage(
        "part bclamp diode { junction { sat_current=1nA } }\n\
         diode     dbc  gnd  base part=bclamp\n\
         current   ib   gnd  base wave=sine(amp=5mA, freq=f0)\n",
        "reference=200Ohm radius=0.6 points=7",
    );
    let pull = run(&c);
    assert_eq!(pull.unsolved, 0, "every load solves");
    let r_opt = VDC / I1;
    let i_max = 2.0 * I1;
    // Tolerance 1.5 % on power, as for class A (the clamp at v_ce ≈ 0,
    // within 0.2 V of 50 V); the efficiency in the current-limited region
    // to 1 %: the DC current I_max/π is exact for a half sine, and the
    // base clamp's reverse current (its saturation current, 1 nA) is 2e-7 of
    // the 5 mA drive.
    let mut in_current_region = 0;
    for p in &pull.points {
        let f = p.figures.expect("solved");
        let want = cripps_power(p.z, VDC);
        assert!(
            (f.pout_w / want - 1.0).abs() <= 0.015,
            "Γ = {} (Z = {:.1} Ω): {} W against the load line's {} W",
            p.gamma,
            p.z,
            f.pout_w,
            want
        );
        if p.z.norm() <= 0.9 * r_opt {
            let eta = want / (VDC * i_max / std::f64::consts::PI);
            assert!(
                (f.efficiency / eta - 1.0).abs() <= 0.01,
                "Γ = {}: efficiency {} against {eta}",
                p.gamma,
                f.efficiency
            );
            in_current_region += 1;
        }
    }
    assert!(
        in_current_region >= 5,
        "{in_current_region} loads checked for efficiency"
    );
    // at R_opt (Γ = 0): π/4
    let o = pull
        .points
        .iter()
        .find(|p| p.gamma.norm() < 1e-12)
        .and_then(|p| p.figures)
        .expect("Γ = 0 on the grid");
    assert!(
        (o.efficiency / (std::f64::consts::PI / 4.0) - 1.0).abs() <= 0.015,
        "efficiency at R_opt {}",
        o.efficiency
    );
}

/// The realisation itself, on the class-C demo: with the fundamental-only
/// admittance in place the collector sees Z(Γ) at f0 and its own network at
/// harmonics 2..5 (the impedance of the network with the transistor
/// removed, as the collector load figures are checked), each to 1e-6
/// relative: harmonic balance satisfies the linear network exactly at each
/// harmonic up to its Newton tolerance (1e-6 relative at most,
/// docs/analyses.md).
#[test]
fn the_collector_sees_the_pulled_load_at_f0_and_its_network_at_harmonics() {
    use tankwave_circuit::ElementKind;
    use tankwave_stage::loadpull::{
        collector_port, network_impedance, with_fundamental_admittance,
    };
    let f = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../netlists/ism-13m56-classc.tank");
    let c = tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("the demo loads")
        .circuit;
    let q = c.element("q1").expect("q1");
    assert!(matches!(c.elements[q].kind, ElementKind::Bjt { .. }));
    let f0 = 13.56e6;
    let port = collector_port(&c, q).expect("a collector");
    let y_net = 1.0 / network_impedance(&c, q, f0).expect("the network's impedance");
    let d0 = tankwave_devices::instantiate(&c).expect("devices");
    let harmonics: Vec<f64> = (2..=5).map(|n| n as f64 * f0).collect();
    let z_net = tankwave_solve::impedance_without(&c, &d0, q, port, &harmonics).expect("AC");
    for gamma in [Complex64::new(0.2, 0.1), Complex64::new(-0.3, -0.2)] {
        let z = 4.0 * (1.0 + gamma) / (1.0 - gamma);
        let pulled = with_fundamental_admittance(&c, port, 1.0 / z - y_net, f0);
        let d = tankwave_devices::instantiate(&pulled).expect("devices");
        let p = pulled
            .analyses
            .iter()
            .find_map(tankwave_solve::SteadyParams::from_analysis)
            .expect("a steady state");
        let s = tankwave_solve::steady(&pulled, &d, &p).expect("the pulled stage solves");
        let loads = tankwave_stage::collector_loads(&pulled, &s).expect("measured");
        let l = loads.iter().find(|l| l.element_id == q).expect("q1's load");
        let mut checked = 0;
        for h in &l.harmonics {
            let Some(zm) = h.z else { continue };
            checked += 1;
            let zm = Complex64::new(zm.re, zm.im);
            let want = if h.n == 1 { z } else { z_net[h.n - 2] };
            let err = (zm - want).norm() / want.norm();
            assert!(
                err <= 1e-6,
                "Γ = {gamma}, harmonic {}: the collector sees {zm} Ω, expected {want} Ω ({err:e})",
                h.n
            );
        }
        assert!(l.harmonics[0].z.is_some(), "the fundamental is resolved");
        assert!(
            checked >= 4,
            "Γ = {gamma}: only {checked} harmonics resolved"
        );
    }
}
