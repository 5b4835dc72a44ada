//! The ratings a designer checks, on the 13.56 MHz class-C demo
//! (netlists/ism-13m56-classc.tank) with its part given every rating: the
//! collector–emitter rating its base return selects, the collector–base
//! and reverse base–emitter voltages, and a capacitor's RMS current, each
//! as a stress row with the fraction used, and `require stress` failing on
//! the one that is exceeded.

mod common;

use tankwave_measure::base_return::{BaseReturn, VceRating};
use tankwave_measure::{StressQuantity, StressRow};
use tankwave_stage::{solve, SolveOptions};

/// The demo inline, its part's ratings extended by `ratings`, `extra`
/// statements added.
fn stage(ratings: &str, extra: &str) -> String {
    common::inline(
        "ism-13m56-classc.tank",
        |part| {
            common::edit(
                part,
                "ratings     { vce_max=36V",
                &format!("ratings     {{ {ratings} vce_max=36V"),
            )
        },
        &[],
        false,
        extra,
    )
}

fn row<'a>(rows: &'a [StressRow], element: &str, q: StressQuantity) -> &'a StressRow {
    rows.iter()
        .find(|r| r.element == element && r.quantity == q)
        .unwrap_or_else(|| panic!("{element} {q:?}"))
}

#[test]
fn every_rating_is_a_stress_row_against_the_right_limit() {
    let text = stage(
        "vce_resistor_max=60V vce_resistor_at=100Ohm vce_short_max=65V vcb_max=50V vbe_reverse_max=5V",
        "capacitor ctest p1 gnd 1pF current_rating=1mA\nrequire stress <= 100%\n",
    );
    let c = common::circuit(&text);
    let r = solve(&c, &SolveOptions::default()).expect("the stage solves");
    let s = r.steady.as_ref().expect("a steady state");
    let m = &s.metrics;
    // The base returns to ground through rbias, 10 Ω (the demo's `rb`):
    // within the 100 Ω the resistor rating is given at, so V_CER = 60 V
    // applies, not the open-base 36 V.
    let vce = row(&m.stress, "q1", StressQuantity::VcePeak);
    assert_eq!(vce.rating, Some(60.0));
    let basis = vce.basis.expect("a basis: the part gives several ratings");
    assert_eq!(basis.rating, VceRating::Resistor);
    assert_eq!(basis.base_return, BaseReturn::Resistor(10.0));
    assert!((vce.fraction.unwrap() - vce.value / 60.0).abs() < 1e-15);
    // The collector–base peak, from the period's node voltages directly.
    let node = |n: &str| c.nodes.iter().position(|x| x == n).expect("node");
    let (coll, base) = (&s.solution.x[node("coll")], &s.solution.x[node("base")]);
    let vcb = coll
        .iter()
        .zip(base)
        .map(|(a, b)| a - b)
        .fold(f64::NEG_INFINITY, f64::max);
    let row_cb = row(&m.stress, "q1", StressQuantity::VcbPeak);
    assert!(
        (row_cb.value - vcb).abs() <= 1e-9 * vcb,
        "{} vs {vcb}",
        row_cb.value
    );
    assert_eq!(row_cb.rating, Some(50.0));
    // The base swings to −5.2 V: over the 5 V reverse rating, flagged.
    let vbe = row(&m.stress, "q1", StressQuantity::VbeReverse);
    assert!(vbe.value > 5.0 && vbe.fraction.unwrap() > 1.0, "{vbe:?}");
    // A capacitor's RMS current against its current rating.
    let cap = row(&m.stress, "ctest", StressQuantity::RmsCurrent);
    assert_eq!(cap.rating, Some(1e-3));
    assert!((cap.fraction.unwrap() - cap.value / 1e-3).abs() < 1e-12 * cap.fraction.unwrap());
    // `require stress` fails, on the worst of them.
    let v = r
        .verdicts
        .iter()
        .find(|v| v.metric == "stress")
        .expect("the verdict");
    assert!(!v.pass, "{v:?}");
}

/// With the base shorted at d.c. (a 0.1 Ω choke in place of the 10 Ω
/// resistor) the shorted-base rating applies; with a 1 kΩ return, beyond
/// the resistor rating's 100 Ω, the open-base rating does.
#[test]
fn the_base_return_picks_the_collector_emitter_rating() {
    for (rb, want, kind) in [
        (
            "resistor  rbias base  gnd   rb",
            65.0,
            VceRating::ShortedBase,
        ),
        (
            "resistor  rbias base  gnd   1kOhm",
            36.0,
            VceRating::OpenBase,
        ),
    ] {
        let mut text = stage(
            "vce_resistor_max=60V vce_resistor_at=100Ohm vce_short_max=65V",
            "",
        );
        if kind == VceRating::ShortedBase {
            text = text.replace(rb, "inductor  rbias base  gnd   4.7uH r=0.1Ohm");
        } else {
            text = text.replace("resistor  rbias base  gnd   rb", rb);
        }
        let c = common::circuit(&text);
        let r = solve(&c, &SolveOptions::default()).expect("the stage solves");
        let m = &r.steady.as_ref().expect("a steady state").metrics;
        let vce = row(&m.stress, "q1", StressQuantity::VcePeak);
        assert_eq!(vce.rating, Some(want), "{rb}");
        assert_eq!(vce.basis.map(|b| b.rating), Some(kind), "{rb}");
    }
}

/// The stage mirrored for a pnp transistor (the same part as pnp, the
/// supply and the drive negated) is the npn stage with every voltage and
/// current negated: each stress row (the table gives magnitudes in the
/// device's own sense) must come out the same, against the same rating.
/// Tolerance: the two solves follow the same equations with every sign
/// flipped (checked stamp by stamp in crates/devices/tests/bjt_stamps.rs,
/// `pnp_mirrors_npn`), so they differ only by rounding and by where the
/// solver's iterations stop: within the steady state's accuracy target
/// (power_error = 1e-4 relative, docs/analyses.md) on powers, and well
/// within 1e-3 of the value on peaks (the peaks of two orbits that agree to
/// shooting's 1e-7 tolerance).
#[test]
fn a_pnp_mirror_of_the_stage_has_the_same_stresses() {
    let ratings = "vce_resistor_max=60V vce_resistor_at=100Ohm vce_short_max=65V vcb_max=50V vbe_reverse_max=5V";
    let npn = stage(ratings, "");
    let pnp = common::edit(
        common::edit(
            common::edit(npn.clone(), "part tw_hf25 npn", "part tw_hf25 pnp"),
            "let vcc  = 13.8V",
            "let vcc  = -13.8V",
        ),
        "wave=sine(amp=drive, freq=f0,",
        "wave=sine(amp=drive, freq=f0, phase=180deg,",
    );
    let solved = |text: &str| {
        let c = common::circuit(text);
        solve(&c, &SolveOptions::default())
            .expect("the stage solves")
            .steady
            .expect("a steady state")
            .metrics
    };
    let (a, b) = (solved(&npn), solved(&pnp));
    let (pa, pb) = (
        a.output.as_ref().unwrap().p1_w,
        b.output.as_ref().unwrap().p1_w,
    );
    assert!(
        (pa - pb).abs() <= 1e-4 * pa,
        "output power {pa} W vs {pb} W"
    );
    let (ea, eb) = (a.efficiency.unwrap(), b.efficiency.unwrap());
    assert!((ea - eb).abs() <= 1e-4 * ea, "efficiency {ea} vs {eb}");
    assert!(b.transistors[0].pnp && !a.transistors[0].pnp);
    assert_eq!(a.stress.len(), b.stress.len());
    for (x, y) in a.stress.iter().zip(&b.stress) {
        assert_eq!((&x.element, x.quantity), (&y.element, y.quantity));
        assert!(x.value > 0.0, "{x:?}");
        assert!(
            (x.value - y.value).abs() <= 1e-3 * x.value,
            "{} {:?}: npn {} vs pnp {}",
            x.element,
            x.quantity,
            x.value,
            y.value
        );
        assert_eq!(x.rating, y.rating, "{x:?}");
        assert_eq!(x.basis, y.basis, "{x:?}");
    }
}
