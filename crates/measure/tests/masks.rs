//! Built-in emission masks at published worked points, mask evaluation and
//! requirement verdicts around their boundaries.
//!
//! Sources (check-values.md, emission table): 47 CFR §97.307(d) and (e)
//! (read); ITU Radio Regulations Appendix 3 / ITU-R SM.329 category A,
//! amateur row below 30 MHz (secondary source) and general row (memory).

use tankwave_circuit::builtin::{builtin_mask, builtin_names};
#[allow(unused_imports)]
use tankwave_circuit::handle::*;
use tankwave_circuit::Figure;
use tankwave_circuit::{
    Bound, Circuit, Cmp, Limit, LimitExpr, Mask, MaskRange, MaskRule, Metric, Origin, Requirement,
};
use tankwave_measure::mask::{allowed_dbc, evaluate_mask};
use tankwave_measure::{
    evaluate, HarmonicPower, MaskError, Metrics, OutputMetrics, StressQuantity, StressRow,
    TransistorMetrics, Unit,
};

fn allowed(name: &str, f0: f64, p: f64) -> Option<f64> {
    let m = builtin_mask(name).unwrap_or_else(|| panic!("no mask {name}"));
    allowed_dbc(&m, 2, f0, p).unwrap()
}

fn close(a: Option<f64>, b: f64) -> bool {
    // Limits are sums of logs of exact decimal numbers: 1e-9 dB is rounding.
    a.is_some_and(|a| (a - b).abs() < 1e-9)
}

fn db(x: f64) -> f64 {
    10.0 * x.log10()
}

#[test]
fn names_are_unique_and_resolvable() {
    let names = builtin_names();
    for n in [
        "us_amateur_hf",
        "us_amateur_hf_pre2003",
        "us_amateur_vhf",
        "us_amateur_vhf_low_power",
        "us_amateur",
        "us_amateur_pre2003",
        "itu_amateur_hf",
        "itu_general",
        "itu_amateur",
    ] {
        assert_eq!(names.iter().filter(|x| *x == n).count(), 1, "{n}");
    }
    assert!(builtin_mask("no_such_mask").is_none());
}

/// 47 CFR §97.307(d), installed after 2003-01-01, below 30 MHz: 43 dB below
/// the fundamental at any power (read).
#[test]
fn us_hf_is_minus_43_dbc() {
    for p in [0.1, 1.0, 100.0, 1500.0] {
        assert!(close(allowed("us_amateur_hf", 7.1e6, p), -43.0), "{p} W");
    }
    // Above 30 MHz this row does not apply.
    assert_eq!(allowed("us_amateur_hf", 30e6, 100.0), None);
    assert!(close(allowed("us_amateur_hf", 29.999_999e6, 100.0), -43.0));
}

/// 47 CFR §97.307(d), installed on or before 2003-01-01: at most 50 mW and
/// 40 dB below; 30 dB below for a mean power under 5 W (read).
#[test]
fn us_hf_pre2003_rows() {
    let a = |p| allowed("us_amateur_hf_pre2003", 3.6e6, p);
    assert!(close(a(1.0), -30.0));
    assert!(close(a(4.999), -30.0));
    assert!(close(a(5.0), -40.0)); // 5 W is not "less than 5 W"
    assert!(close(a(100.0), -40.0)); // 50 mW = −33 dBc at 100 W: −40 dBc rules
    assert!(close(a(500.0), -40.0)); // 50 mW = −40 dBc exactly at 500 W
    assert!(close(a(1000.0), db(0.05 / 1000.0))); // −43.01: the 50 mW cap rules
    assert!(close(a(1500.0), db(0.05 / 1500.0)));
}

/// 47 CFR §97.307(e), 30–225 MHz: 60 dB below; at 25 W or less, at most
/// 25 µW and 40 dB below, need not be below 10 µW (read).
#[test]
fn us_vhf_rows() {
    let a = |p| allowed("us_amateur_vhf", 146e6, p);
    assert!(close(a(100.0), -60.0));
    assert!(close(a(25.0), -60.0)); // 25 µW = −60 dBc at 25 W: the branches meet
    assert!(close(a(24.999), db(25e-6 / 24.999)));
    assert!(close(a(20.0), db(25e-6 / 20.0))); // −59.03 dBc
    assert!(close(a(1.0), db(25e-6))); // −46.02 dBc
    assert!(close(a(0.25), -40.0)); // 25 µW = −40 dBc: both bounds meet
    assert!(close(a(0.1), -40.0)); // −40 dBc = 10 µW
    assert!(close(a(0.05), db(10e-6 / 0.05))); // need not be below 10 µW: −36.99 dBc
                                               // Just below 25 W the level is continuous with the 60 dB row.
    assert!((a(24.999_999).unwrap() + 60.0).abs() < 1e-6);
    // The low-power mask on its own applies the ≤ 25 W branch at any power.
    assert!(close(
        allowed("us_amateur_vhf_low_power", 50e6, 100.0),
        db(25e-6 / 100.0)
    ));
    // Range edges: 30 MHz and 225 MHz included, 225.000001 MHz not.
    assert!(close(allowed("us_amateur_vhf", 30e6, 100.0), -60.0));
    assert!(close(allowed("us_amateur_vhf", 225e6, 100.0), -60.0));
    assert_eq!(allowed("us_amateur_vhf", 225.000_001e6, 100.0), None);
    assert_eq!(allowed("us_amateur_vhf", 29e6, 100.0), None);
}

/// ITU RR Appendix 3 amateur row below 30 MHz: 43 + 10 log10(P) dB below,
/// need not exceed 50 dB. Worked: 1 W → 43 dB; 100 W → 50 dB, i.e. 0 dBm
/// (check-values.md; secondary source).
#[test]
fn itu_amateur_hf_worked_points() {
    let a = |p| allowed("itu_amateur_hf", 14.2e6, p);
    assert!(close(a(1.0), -43.0));
    assert!(close(a(100.0), -50.0));
    assert!(
        (db(100.0 / 1e-3) + a(100.0).unwrap()).abs() < 1e-9,
        "0 dBm at 100 W"
    );
    assert!(close(a(5.0), -43.0 - db(5.0))); // −49.99: just under the 50 dB cap
    assert!(close(a(1000.0), -50.0));
    assert!(close(a(0.5), -43.0 + db(2.0)));
    assert_eq!(a(0.5).map(|x| x > -43.0), Some(true));
    assert_eq!(allowed("itu_amateur_hf", 50e6, 100.0), None);
}

/// ITU RR Appendix 3 general row: 43 + 10 log10(P) dBc or 70 dBc, whichever is
/// less stringent (memory).
#[test]
fn itu_general_worked_points() {
    let a = |p| allowed("itu_general", 100e6, p);
    assert!(close(a(1.0), -43.0));
    assert!(close(a(100.0), -63.0));
    assert!(close(a(1000.0), -70.0));
    assert!(close(a(1e5), -70.0));
}

/// Combined masks pick the row by the FUNDAMENTAL frequency, whatever the
/// harmonic's own frequency (check-values.md).
#[test]
fn combined_masks_pick_row_by_fundamental() {
    let us = builtin_mask("us_amateur").unwrap();
    // 14 MHz: harmonic 3 at 42 MHz still gets the HF −43 dBc.
    assert!(close(allowed_dbc(&us, 3, 14e6, 100.0).unwrap(), -43.0));
    assert!(close(
        allowed_dbc(&us, 2, 29.999_999e6, 100.0).unwrap(),
        -43.0
    ));
    assert!(close(allowed_dbc(&us, 2, 30e6, 100.0).unwrap(), -60.0));
    assert!(close(allowed_dbc(&us, 2, 144e6, 100.0).unwrap(), -60.0));
    assert_eq!(allowed_dbc(&us, 2, 430e6, 100.0).unwrap(), None);
    let old = builtin_mask("us_amateur_pre2003").unwrap();
    assert!(close(allowed_dbc(&old, 2, 7e6, 2.0).unwrap(), -30.0));
    assert!(close(
        allowed_dbc(&old, 2, 50e6, 2.0).unwrap(),
        db(25e-6 / 2.0)
    ));
    let itu = builtin_mask("itu_amateur").unwrap();
    assert!(close(allowed_dbc(&itu, 2, 7e6, 100.0).unwrap(), -50.0));
    assert!(close(allowed_dbc(&itu, 2, 50e6, 100.0).unwrap(), -63.0));
}

fn output(p1: f64, dbcs: &[f64], f0: f64) -> OutputMetrics {
    let mut harmonics = vec![HarmonicPower {
        resolved: true,
        n: 1,
        freq_hz: f0,
        power_w: p1,
        dbm: db(p1 / 1e-3),
        dbc: Some(0.0),
        voltage_v: 0.0,
        current_a: 0.0,
    }];
    for (i, d) in dbcs.iter().enumerate() {
        let p = p1 * 10f64.powf(d / 10.0);
        harmonics.push(HarmonicPower {
            resolved: true,
            n: i + 2,
            freq_hz: (i + 2) as f64 * f0,
            power_w: p,
            dbm: db(p / 1e-3),
            dbc: Some(*d),
            voltage_v: 0.0,
            current_a: 0.0,
        });
    }
    OutputMetrics {
        floor_dbc: None,
        element: "rl".into(),
        element_id: ElementId::new(0),
        harmonics,
        p1_w: p1,
        p1_dbm: db(p1 / 1e-3),
        harmonic_power_w: 0.0,
        dc_power_w: 0.0,
        total_power_w: p1,
        thd: Some(0.0),
    }
}

fn transistor(name: &str, id: usize, vce: f64, tj: Option<f64>) -> TransistorMetrics {
    TransistorMetrics {
        element: name.into(),
        element_id: ElementId::new(id),
        pnp: false,
        conduction_deg: 150.0,
        conduction_pulses: 1,
        conduction_notches: 0,
        vce_peak_v: vce,
        vce_min_v: 1.0,
        vbe_reverse_v: 2.0,
        ic_peak_a: 3.0,
        ic_mean_a: 0.8,
        dissipation_w: 8.0,
        rth_k_per_w: tj.map(|_| 5.0),
        tj_k: tj,
        tj_peak_k: None,
        multiplication_peak: None,
    }
}

fn metrics(p1: f64, dbcs: &[f64], f0: f64) -> Metrics {
    Metrics {
        freq_hz: f0,
        harmonics: dbcs.len() + 1,
        samples: 64,
        output: Some(output(p1, dbcs, f0)),
        supplies: vec![],
        pdc_w: p1 / 0.7,
        efficiency: Some(0.7),
        pae: Some(0.65),
        drive: None,
        gain_db: Some(12.0),
        gain_basis: None,
        transistors: vec![
            transistor("q1", 1, 30.0, Some(350.0)),
            transistor("q2", 2, 34.0, None),
        ],
        stress: vec![StressRow {
            element: "c1".into(),
            element_id: ElementId::new(3),
            quantity: StressQuantity::PeakVoltage,
            value: 80.0,
            unit: "V".into(),
            rating: Some(100.0),
            fraction: Some(0.8),
            basis: None,
        }],
        notes: vec![tankwave_measure::Note {
            figure: "tj q2".into(),
            reason: "model of q2 gives no thermal resistance".into(),
        }],
        two_tone: None,
        keying: None,
    }
}

fn req(metric: Metric, cmp: Cmp, bound: Bound) -> Requirement {
    Requirement {
        metric,
        cmp,
        bound,
        text: "require ...".into(),
        origin: Origin::default(),
    }
}

fn builtin(name: &str) -> Bound {
    Bound::BuiltinMask(name.into())
}

fn circuit_with(reqs: Vec<Requirement>) -> Circuit {
    let mut c = Circuit::default();
    for name in ["rl", "q1", "q2", "c1"] {
        c.elements.push(tankwave_circuit::Element {
            name: name.into(),
            kind: tankwave_circuit::ElementKind::Resistor {
                a: NodeId::GROUND,
                b: NodeId::GROUND,
                r: 1.0,
                rating_w: None,
                ntc_b: None,
            },
            origin: Origin::default(),
        });
    }
    c.requirements = reqs;
    c
}

/// Verdicts at and just around the −43 dBc boundary of us_amateur_hf and the
/// 0 dBm (−50 dBc) boundary of itu_amateur_hf at 100 W. "At least 43 dB
/// below" passes at exactly 43 dB.
#[test]
fn mask_verdicts_around_boundaries() {
    let c = circuit_with(vec![req(
        Metric::of(Figure::Harmonics),
        Cmp::Le,
        builtin("us_amateur_hf"),
    )]);
    for (level, pass) in [
        (-43.0, true),
        (-43.01, true),
        (-42.99, false),
        (-60.0, true),
    ] {
        let m = metrics(100.0, &[-70.0, level, -80.0], 7.1e6);
        let v = &evaluate(&c, &m)[0];
        assert_eq!(v.pass, pass, "{level} dBc");
        assert_eq!(v.harmonics.len(), 3);
        assert_eq!(v.element.as_deref(), Some("harmonic 3"));
        assert!((v.margin.unwrap() - (-43.0 - level)).abs() < 1e-9);
        assert_eq!(v.limit, Some(-43.0));
        assert_eq!(v.unit, Unit::Dbc);
    }
    let c = circuit_with(vec![req(
        Metric::of(Figure::Harmonics),
        Cmp::Le,
        builtin("itu_amateur_hf"),
    )]);
    for (level, pass) in [(-50.0, true), (-49.99, false), (-50.01, true)] {
        let m = metrics(100.0, &[level], 14e6);
        let v = &evaluate(&c, &m)[0];
        assert_eq!(v.pass, pass, "{level} dBc");
    }
    // pre-2003 at 4.9 W vs 5 W: −35 dBc passes below 5 W (30 dB needed), fails at 5 W (40 dB).
    let c = circuit_with(vec![req(
        Metric::of(Figure::Harmonics),
        Cmp::Le,
        builtin("us_amateur_hf_pre2003"),
    )]);
    assert!(evaluate(&c, &metrics(4.9, &[-35.0], 3.6e6))[0].pass);
    assert!(!evaluate(&c, &metrics(5.0, &[-35.0], 3.6e6))[0].pass);
    // Single-harmonic requirement against a mask.
    let c = circuit_with(vec![req(
        Metric::harmonic(2),
        Cmp::Le,
        builtin("us_amateur"),
    )]);
    let v = &evaluate(&c, &metrics(100.0, &[-61.0, -30.0], 146e6))[0];
    assert!(v.pass && (v.margin.unwrap() - 1.0).abs() < 1e-9);
}

/// Mask evaluation details: worst harmonic, rows without a rule, errors.
#[test]
fn mask_evaluation_rows_and_errors() {
    let mask = Mask {
        name: "own".into(),
        rules: vec![
            MaskRule {
                range: MaskRange::Harmonics {
                    from: 2,
                    to: Some(3),
                },
                carrier: None,
                limit: Limit::Dbc(LimitExpr::Const(-40.0)),
            },
            MaskRule {
                range: MaskRange::Frequency {
                    from: 20e6,
                    to: 25e6,
                },
                carrier: None,
                limit: Limit::Watts(LimitExpr::Const(1e-3)),
            },
        ],
        origin: Origin::default(),
    };
    let out = output(10.0, &[-45.0, -41.0, -30.0], 7e6);
    let ev = evaluate_mask(&mask, &out, 7e6).unwrap();
    assert_eq!(ev.rows.len(), 3);
    // Harmonic 3 at 21 MHz: both rules, 1 mW = −40 dBc at 10 W, margin 1 dB.
    assert!((ev.rows[1].allowed_dbc.unwrap() + 40.0).abs() < 1e-9);
    assert_eq!(ev.worst_row().unwrap().n, 3);
    // Harmonic 4 at 28 MHz: no rule covers it.
    assert_eq!(ev.rows[2].allowed_dbc, None);
    assert!(ev.rows[2].pass && ev.pass);
    // No carrier, no coverage: typed errors.
    let dead = output(0.0, &[-45.0], 7e6);
    assert_eq!(
        evaluate_mask(&mask, &dead, 7e6).unwrap_err(),
        MaskError::NoCarrier { p1_w: 0.0 }
    );
    let us = builtin_mask("us_amateur").unwrap();
    assert!(matches!(
        evaluate_mask(&us, &out, 430e6).unwrap_err(),
        MaskError::NotCovered { .. }
    ));
}

/// Scalar requirements: margins in the natural unit, positive = passing;
/// per-transistor figures take the worst element; unmeasured = fail with reason.
#[test]
fn scalar_verdicts() {
    let c = circuit_with(vec![
        req(Metric::of(Figure::Pout), Cmp::Ge, Bound::Value(20.0)),
        req(Metric::of(Figure::Efficiency), Cmp::Ge, Bound::Value(0.75)),
        req(
            Metric::about(Figure::VcePeak, None),
            Cmp::Le,
            Bound::Value(36.0),
        ),
        req(
            Metric::about(Figure::VcePeak, Some(ElementId::new(1))),
            Cmp::Le,
            Bound::Value(36.0),
        ),
        req(
            Metric::about(Figure::Tj, Some(ElementId::new(2))),
            Cmp::Le,
            Bound::Value(423.15),
        ),
        req(
            Metric::about(Figure::Tj, None),
            Cmp::Le,
            Bound::Value(423.15),
        ),
        req(
            Metric::about(Figure::Stress, None),
            Cmp::Le,
            Bound::Value(0.8),
        ),
        req(
            Metric::about(Figure::Stress, None),
            Cmp::Lt,
            Bound::Value(0.8),
        ),
        req(Metric::of(Figure::InputVswr), Cmp::Le, Bound::Value(2.0)),
        req(Metric::harmonic(3), Cmp::Le, Bound::Value(-40.0)),
        req(Metric::harmonic(9), Cmp::Le, Bound::Value(-40.0)),
        req(Metric::of(Figure::Harmonics), Cmp::Le, Bound::Value(-45.0)),
        req(Metric::of(Figure::Pout), Cmp::Le, builtin("us_amateur_hf")),
        req(Metric::of(Figure::Harmonics), Cmp::Le, builtin("nope")),
        req(
            Metric::of(Figure::Harmonics),
            Cmp::Le,
            builtin("us_amateur"),
        ),
        req(Metric::of(Figure::Gain), Cmp::Gt, Bound::Value(12.0)),
    ]);
    let m = metrics(25.0, &[-50.0, -42.0], 7e6);
    let v = evaluate(&c, &m);
    assert_eq!(v.len(), 16);
    assert!(v[0].pass && (v[0].margin.unwrap() - 5.0).abs() < 1e-12);
    assert_eq!(v[0].unit.show(v[0].value.unwrap()), "25.00 W");
    assert!(!v[1].pass && (v[1].margin.unwrap() + 0.05).abs() < 1e-12);
    assert_eq!(
        v[1].unit.show_margin(v[1].margin.unwrap()),
        "-5.00 % points"
    );
    // Worst of q1 (30 V) and q2 (34 V).
    assert!(v[2].pass && v[2].element.as_deref() == Some("q2"));
    assert!((v[2].margin.unwrap() - 2.0).abs() < 1e-12);
    assert!(v[3].pass && (v[3].margin.unwrap() - 6.0).abs() < 1e-12);
    // q2 has no thermal resistance: not measured, failing, with the reason.
    assert!(!v[4].pass);
    assert_eq!(
        v[4].not_measured.as_deref(),
        Some("model of q2 gives no thermal resistance")
    );
    // Over all transistors, Tj is reported where it exists (q1: 350 K).
    assert!(v[5].pass && (v[5].margin.unwrap() - 73.15).abs() < 1e-9);
    // Stress exactly at the limit: <= passes, < fails.
    assert!(v[6].pass && !v[7].pass);
    // No drive: VSWR not measured.
    assert!(!v[8].pass && v[8].not_measured.is_some());
    assert!(v[9].pass && (v[9].margin.unwrap() - 2.0).abs() < 1e-9);
    assert!(v[10].not_measured.as_deref().unwrap().contains("beyond"));
    assert!(!v[11].pass && v[11].harmonics.len() == 2);
    assert!(v[12]
        .not_measured
        .as_deref()
        .unwrap()
        .contains("only to harmonics"));
    assert!(v[13].not_measured.as_deref().unwrap().contains("nope"));
    assert_eq!(v[13].mask.as_deref(), Some("nope"));
    assert_eq!(
        (v[2].cmp.as_str(), v[2].unit.show(v[2].limit.unwrap())),
        ("<=", "36.00 V".to_string())
    );
    assert_eq!(v[6].element.as_deref(), Some("c1 peak voltage"));
    assert!(!v[14].pass && v[14].harmonics.len() == 2);
    // Strict comparison at equality fails.
    assert!(!v[15].pass && v[15].margin == Some(0.0));
    // Fundamental out of every row: the mask cannot judge, the verdict fails.
    let v = evaluate(&c, &metrics(25.0, &[-80.0, -80.0], 430e6));
    assert!(!v[14].pass && v[14].not_measured.as_deref().unwrap().contains("no rule"));
}

/// The floor rule (docs/measurements.md, "Numerical floor"; common
/// practice: a level the method cannot resolve is only known to lie below
/// its floor). Harmonic 3 is below a −90 dBc floor: a limit at −80 dBc is met
/// (judged by the floor), one at −100 dBc is not a pass, for the mask and the
/// single-harmonic requirement alike, and a lower bound never passes.
#[test]
fn an_unresolved_harmonic_passes_only_a_limit_its_floor_meets() {
    let mut m = metrics(100.0, &[-50.0, -150.0], 7.1e6);
    let o = m.output.as_mut().unwrap();
    o.floor_dbc = Some(-90.0);
    o.harmonics[2].resolved = false;
    o.harmonics[2].dbc = None;
    let judge = |lim: f64, cmp: Cmp| {
        let c = circuit_with(vec![req(Metric::harmonic(3), cmp, Bound::Value(lim))]);
        evaluate(&c, &m)[0].clone()
    };
    let v = judge(-80.0, Cmp::Le);
    assert!(v.pass && v.not_measured.is_none(), "{v:?}");
    assert_eq!(v.value, Some(-90.0));
    let v = judge(-100.0, Cmp::Le);
    assert!(!v.pass, "{v:?}");
    assert!(v
        .not_measured
        .as_deref()
        .unwrap()
        .contains("numerical floor"));
    assert!(!judge(-200.0, Cmp::Ge).pass);
    // a mask over harmonics 2 and 3
    let mask = |lim: f64| Mask {
        name: "own".into(),
        rules: vec![MaskRule {
            range: MaskRange::Harmonics {
                from: 2,
                to: Some(3),
            },
            carrier: None,
            limit: Limit::Dbc(LimitExpr::Const(lim)),
        }],
        origin: Origin::default(),
    };
    let o = m.output.as_ref().unwrap();
    let ev = evaluate_mask(&mask(-45.0), o, 7.1e6).unwrap();
    let row = &ev.rows[1];
    assert!(ev.pass && row.pass && !row.resolved);
    // the floor is judged, but it is not a measurement: JSON has null
    assert_eq!(row.judged_dbc, -90.0);
    assert_eq!(row.measured_dbc, None);
    assert_eq!(row.floor_dbc, Some(-90.0));
    let ev = evaluate_mask(&mask(-95.0), o, 7.1e6).unwrap();
    // harmonic 2 at −50 dBc fails on its own; harmonic 3 cannot be resolved
    assert!(!ev.rows[1].pass && !ev.rows[1].resolved);
    let ev = evaluate_mask(&mask(-40.0), o, 7.1e6).unwrap();
    assert!(ev.pass);
}
