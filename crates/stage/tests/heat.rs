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

/// The diode-biased demo with its part's junction–case path replaced:
/// `from` in netlists/heat/tw-hf25-mounted.tank becomes `to`. Written to
/// a directory of its own and loaded from there.
fn demo_with_part(tag: &str, from: &str, to: &str) -> Circuit {
    let src = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../netlists");
    let dir = std::env::temp_dir().join(format!("tankwave-heat-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(dir.join("heat")).unwrap();
    std::fs::create_dir_all(dir.join("models")).unwrap();
    let part = std::fs::read_to_string(src.join("heat/tw-hf25-mounted.tank")).unwrap();
    assert!(part.contains(from), "{from}");
    std::fs::write(
        dir.join("heat/tw-hf25-mounted.tank"),
        part.replace(from, to),
    )
    .unwrap();
    for f in ["heat/heat-7m1-diode-bias.tank", "models/tw-drv.tank"] {
        std::fs::copy(src.join(f), dir.join(f)).unwrap();
    }
    let c = tankwave_stage::load(
        &dir.join("heat/heat-7m1-diode-bias.tank"),
        std::slice::from_ref(&dir),
        &Overrides::default(),
    )
    .expect("the changed demo loads")
    .circuit;
    std::fs::remove_dir_all(&dir).ok();
    c
}

#[test]
fn a_one_term_foster_ladder_is_the_same_die() {
    // One Foster term R, τ is one Cauer stage R, C = τ/R (docs/thermal.md):
    // junction_case=2 junction_heat=0.05 and foster_r1=2 foster_tau1=0.1
    // describe the same die, so the whole electrothermal result agrees to
    // rounding (the Cauer conversion of one term is exact; the iteration
    // takes the same rounds on the same numbers).
    let a = demo("heat-7m1-diode-bias.tank");
    let b = demo_with_part(
        "one",
        "junction_case=2.0 case_ambient=1.5 junction_heat=0.05",
        "foster_r1=2.0 foster_tau1=0.1 case_ambient=1.5",
    );
    let ha = solve(&a, &SolveOptions::default()).unwrap().heat.unwrap();
    let hb = solve(&b, &SolveOptions::default()).unwrap().heat.unwrap();
    let q = |h: &tankwave_stage::heat::HeatOutcome| {
        h.devices.iter().find(|d| d.name == "q1").cloned().unwrap()
    };
    let (qa, qb) = (q(&ha), q(&hb));
    assert!((qa.temperature_k - qb.temperature_k).abs() < 1e-6);
    let (pa, pb) = (qa.peak.unwrap().0, qb.peak.unwrap().0);
    assert!((pa - pb).abs() < 1e-6, "{pa} vs {pb}");
}

#[test]
fn a_three_term_foster_ladder_chains_to_the_sink() {
    // Three Foster terms converted to a Cauer ladder and chained to the
    // case: the settled junction sits ΣR_i above the case (series
    // resistances add, docs/check-values.md "Heat flow"), and the die
    // has three nodes.
    let c = demo_with_part(
        "three",
        "junction_case=2.0 case_ambient=1.5 junction_heat=0.05",
        "foster_r1=0.3 foster_tau1=1ms foster_r2=0.7 foster_tau2=20ms foster_r3=1.0 foster_tau3=0.5 case_ambient=1.5",
    );
    let r = solve(&c, &SolveOptions::default()).unwrap();
    let h = r.heat.unwrap();
    let q1 = h.devices.iter().find(|d| d.name == "q1").unwrap();
    let d1 = h.devices.iter().find(|d| d.name == "dbias").unwrap();
    assert_eq!(h.nodes.iter().filter(|n| n.starts_with("q1.")).count(), 4);
    let p = part(&c, "tw_hf25_mounted");
    let sink = d1.temperature_k;
    let want = sink + q1.dissipation_w * (2.0 + p.rth_cs);
    // 0.01 K: the iteration's stopping tolerance (as above)
    assert!(
        (q1.temperature_k - want).abs() <= 0.0101,
        "{} vs {want}",
        q1.temperature_k
    );
}

/// The thermistor-biased demo: the same stage as the fixed-bias one, its
/// base held by a divider whose lower leg has an NTC thermistor on the
/// heatsink. It settles (where the fixed-bias stage runs away), at the
/// network's temperatures, with the thermistor at the sink's temperature
/// and at the resistance its B-parameter law gives there.
#[test]
fn thermistor_bias_settles_with_its_law_at_the_sink_temperature() {
    let c = demo("heat-7m1-thermistor-bias.tank");
    let r = solve(&c, &SolveOptions::default()).expect("the stage settles");
    let h = r.heat.as_ref().expect("a heat outcome");
    assert!(
        h.loop_gain < 1.0 && h.loop_gain.is_finite(),
        "{}",
        h.loop_gain
    );
    let q1 = h.devices.iter().find(|d| d.name == "q1").expect("q1");
    let nt = h.devices.iter().find(|d| d.name == "rntc").expect("rntc");
    assert!(!nt.transistor);
    let rsa = 2.5; // sink_ambient= of the demo, K/W
                   // Superposition on the shared sink (docs/check-values.md "Heat flow"):
                   // T_sink = T_a + (P_q1 + P_ntc) θ_SA, within the iteration's 0.01 K.
    let sink = h.ambient_k + (q1.dissipation_w + nt.dissipation_w) * rsa;
    assert!(
        (nt.temperature_k - sink).abs() <= 0.0101,
        "{} vs {sink}",
        nt.temperature_k
    );
    // The B-parameter law R(T) = R25 exp(B (1/T − 1/298.15 K)) with the
    // demo's R25 = 22 Ω, B = 3950 K (Steinhart and Hart 1968, one-term form,
    // from memory; docs/check-values.md "Thermistor"), written out here.
    let want = 22.0 * (3950.0 * (1.0 / nt.temperature_k - 1.0 / 298.15)).exp();
    let got = nt
        .resistance_ohm
        .expect("a thermistor reports its resistance");
    assert!((got - want).abs() <= 1e-12 * want, "{got} vs {want}");
    // It is warmer than the ambient, so below its 25 °C value: the bias
    // falls as the sink warms, which is what keeps the stage from running away.
    assert!(
        got < 22.0 && nt.temperature_k > h.ambient_k + 5.0,
        "{got} Ω at {} K",
        nt.temperature_k
    );
    assert!(q1.temperature_k > nt.temperature_k);
    assert!(r.verdicts.iter().all(|v| v.pass), "{:?}", r.verdicts);
}
