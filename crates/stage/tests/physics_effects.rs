//! What each power-device effect does to the class-B demo stage
//! (netlists/cw-7m1-classb.tank at 7.1 MHz): its part with and without the
//! epitaxial collector (quasi-saturation), avalanche multiplication,
//! current crowding and excess phase, each on its own and all together.
//! The numbers are in docs/models.md ("Effect on a stage"); this test
//! prints them (`cargo test -p tankwave-stage --test physics_effects --
//! --nocapture`) and checks what the physics says about their direction.

mod common;

use tankwave_stage::{solve, SolveOptions};

/// The demo with its included files written inline and `extra` added to
/// the transistor's part (inside its braces), after `replace` in it.
fn stage(extra: &str, replace: Option<(&str, &str)>) -> String {
    common::inline(
        "cw-7m1-classb.tank",
        |part| {
            let mut part = match replace {
                Some((from, to)) => common::edit(part, from, to),
                None => part,
            };
            let end = part.rfind('}').expect("the part's closing brace");
            part.insert_str(end, &format!("  {extra}\n"));
            part
        },
        &["models/tw-drv.tank"],
        true,
        "",
    )
}

#[derive(Debug, Clone, Copy)]
struct Figures {
    pout_w: f64,
    efficiency: f64,
    vce_min_v: f64,
    conduction_deg: f64,
    ic_peak_a: f64,
}

fn figures(text: &str) -> Figures {
    let c = common::circuit(text);
    let r = solve(&c, &SolveOptions::default()).expect("the stage solves");
    let m = &r.steady.as_ref().expect("a steady state").metrics;
    let q = &m.transistors[0];
    Figures {
        pout_w: m.output.as_ref().expect("an output").p1_w,
        efficiency: m.efficiency.expect("an efficiency"),
        vce_min_v: q.vce_min_v,
        conduction_deg: q.conduction_deg,
        ic_peak_a: q.ic_peak_a,
    }
}

const EPI: &str = "epi { resistance=0.5Ohm doping_factor=1e-11 stored_charge=2e-9 }";
const AVALANCHE: &str = "avalanche { cb_voltage=60V exponent=4 voltage_tempco=0.001 }";
const CROWDING: (&str, &str) = (
    "resistance  { base=0.6Ohm",
    "resistance  { base_half_current=0.2A base_min=0.15Ohm base=0.6Ohm",
);
const PHASE: (&str, &str) = ("transit=0.5ns", "transit=0.5ns excess_phase=30deg");

#[test]
fn each_effect_moves_the_figures_the_way_the_physics_says() {
    let none = figures(&stage("", None));
    let epi = figures(&stage(EPI, None));
    let avalanche = figures(&stage(AVALANCHE, None));
    let crowding = figures(&stage("", Some(CROWDING)));
    let phase = figures(&stage("", Some(PHASE)));
    let all_text = stage(&format!("{EPI}\n  {AVALANCHE}"), Some(CROWDING))
        .replace("transit=0.5ns", "transit=0.5ns excess_phase=30deg");
    let all = figures(&all_text);
    println!("| part | output power | collector efficiency | lowest v_ce | conduction angle | peak i_c |");
    println!("| --- | --- | --- | --- | --- | --- |");
    for (name, f) in [
        ("no effect (the demo's part)", none),
        ("epi layer (quasi-saturation)", epi),
        ("avalanche", avalanche),
        ("current crowding", crowding),
        ("excess phase", phase),
        ("all four", all),
    ] {
        println!(
            "| {name} | {:.2} W | {:.1} % | {:.3} V | {:.0} deg | {:.2} A |",
            f.pout_w,
            f.efficiency * 100.0,
            f.vce_min_v,
            f.conduction_deg,
            f.ic_peak_a
        );
    }
    // Quasi-saturation: the epi layer drops voltage the collector swing
    // loses, so the lowest v_ce rises and the efficiency falls.
    assert!(epi.vce_min_v > none.vce_min_v + 0.05, "{epi:?} vs {none:?}");
    assert!(epi.efficiency < none.efficiency, "{epi:?} vs {none:?}");
    // Weak avalanche at a peak v_ce of about 2 V_CC far below BV_CBO adds a
    // few per cent of multiplication at most: the figures barely move.
    assert!(
        (avalanche.pout_w / none.pout_w - 1.0).abs() < 0.02,
        "{avalanche:?}"
    );
    // Excess phase of 30 deg at 1/(2π τ_F) = 318 MHz is 0.7 deg at 7.1 MHz:
    // below a per cent.
    assert!((phase.pout_w / none.pout_w - 1.0).abs() < 0.01, "{phase:?}");
    // Crowding only lowers the base resistance: the same drive gets more
    // base current in, the output does not fall.
    assert!(
        crowding.pout_w >= none.pout_w * 0.999,
        "{crowding:?} vs {none:?}"
    );
    for f in [none, epi, avalanche, crowding, phase, all] {
        assert!(
            f.pout_w.is_finite() && f.pout_w > 0.0 && f.efficiency < 1.0,
            "{f:?}"
        );
    }
}
