//! `analyze heat` on the demo pair of netlists/heat/: the fixed-bias stage
//! runs away, the same stage biased by a diode on its heatsink settles; the
//! settled temperatures against the thermal network's closed form, the
//! iteration's convergence, and the heating of a keyed transmission.

use std::path::PathBuf;

use tankwave_circuit::{Analysis, BjtParams, Circuit, ModelParams, Overrides};
use tankwave_stage::{solve, SolveOptions, StageError};

fn demo(name: &str) -> Circuit {
    let f = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../netlists/heat")
        .join(name);
    tankwave_stage::load(&f, &[], &Overrides::default())
        .expect("the demo stage loads")
        .circuit
}

fn part(c: &Circuit, name: &str) -> BjtParams {
    c.models
        .iter()
        .find_map(|m| match &m.params {
            ModelParams::Bjt(p) if m.name == name => Some(p.clone()),
            _ => None,
        })
        .expect("the part")
}

#[test]
fn fixed_bias_runs_away_with_where_and_why() {
    let c = demo("heat-7m1-fixed-bias.tank");
    let e = solve(&c, &SolveOptions::default()).expect_err("a runaway");
    // a finding about the stage, not about the file: exit 3, not 2
    assert!(!e.is_input());
    match e {
        StageError::Runaway {
            element,
            temperature_k,
            dissipation_w,
            loop_gain,
            ..
        } => {
            assert_eq!(element, "q1");
            assert!(temperature_k > 298.15 && temperature_k.is_finite());
            assert!(dissipation_w > 0.0 && dissipation_w.is_finite());
            // Either criterion of a runaway: a loop gain of 1 or more, or a
            // junction past its 150 °C rating (+ the 10 K one step may overshoot).
            assert!(
                loop_gain >= 1.0 || temperature_k > 423.15,
                "gain {loop_gain}, {temperature_k} K"
            );
        }
        other => panic!("expected a runaway, got {other}"),
    }
}

#[test]
fn diode_bias_settles_where_the_network_says() {
    let c = demo("heat-7m1-diode-bias.tank");
    let r = solve(&c, &SolveOptions::default()).expect("the stage settles");
    let h = r.heat.as_ref().expect("a heat outcome");
    assert!(
        h.loop_gain < 1.0 && h.loop_gain.is_finite(),
        "{}",
        h.loop_gain
    );
    let q1 = h.devices.iter().find(|d| d.name == "q1").expect("q1");
    let d1 = h.devices.iter().find(|d| d.name == "dbias").expect("dbias");
    // The settled temperatures are the network's steady rise for the
    // settled dissipation (series resistances add, superposition on the
    // shared sink; docs/check-values.md "Heat flow"):
    // T_q1 = T_a + P_q1 (θ_JC + θ_CS) + (P_q1 + P_d) θ_SA, T_d = T_a + (P_q1 + P_d) θ_SA.
    let p = part(&c, "tw_hf25_mounted");
    let spec = c
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Heat(h) => Some(h.clone()),
            _ => None,
        })
        .expect("analyze heat");
    let rsa = spec.sink_ambient.expect("sink_ambient");
    let sink = h.ambient_k + (q1.dissipation_w + d1.dissipation_w.max(0.0)) * rsa;
    let tq = sink + q1.dissipation_w * (p.rth_jc + p.rth_cs);
    // The iteration stops when F(x) − x ≤ 0.01 K; the temperatures are those
    // the last solve ran at, so they are within 0.01 K of the network's answer
    // for that solve's dissipation.
    assert!(
        (q1.temperature_k - tq).abs() <= 0.0101,
        "{} vs {tq}",
        q1.temperature_k
    );
    assert!(
        (d1.temperature_k - sink).abs() <= 0.0101,
        "{} vs {sink}",
        d1.temperature_k
    );
    // It converged: the last round's change is within the tolerance, and
    // each round after the first moved less than the one before (a
    // contraction, loop gain < 1).
    let changes: Vec<f64> = h.rounds.iter().map(|r| r.change_k).collect();
    assert!(*changes.last().unwrap() <= tankwave_stage::heat::HEAT_TOLERANCE_K);
    assert!(changes.len() >= 2, "{changes:?}");
    for w in changes.windows(2) {
        assert!(w[1] < w[0], "{changes:?}");
    }
    // The figure the report and `require tj` read is the settled one.
    let m = &r.steady.as_ref().expect("steady").metrics;
    let t = m.transistors.iter().find(|t| t.element == "q1").unwrap();
    assert_eq!(t.tj_k, Some(q1.temperature_k));
    // The keyed transmission: the peak lies between the ambient and the
    // continuous key-down temperature (the keyed average power is below
    // the key-down power), and no later than the end.
    let (peak, at) = q1.peak.expect("a peak");
    assert!(peak > h.ambient_k && peak < q1.temperature_k, "{peak}");
    let curve = h.heating.as_ref().expect("a heating curve");
    assert!(at <= curve.keying.length * (1.0 + 1e-12));
    assert_eq!(t.tj_peak_k, Some(peak));
    assert!(r.verdicts.iter().all(|v| v.pass), "{:?}", r.verdicts);
}
