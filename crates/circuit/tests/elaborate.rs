//! Elaboration of valid stage files: values, units, expressions, overrides,
//! topology warnings.

use approx::assert_relative_eq;
use std::path::Path;
use tankwave_circuit::*;

fn class_c() -> Parsed {
    parse_file(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/class_c.tank"))
}

fn load(text: &str) -> Elaborated {
    match load_str("t.tank", text, &Overrides::default()) {
        Ok(e) => e,
        Err(e) => panic!("{:#?}", e.diagnostics),
    }
}

fn elem<'a>(c: &'a Circuit, name: &str) -> &'a ElementKind {
    &c.elements[c.element(name).expect("element")].kind
}

#[test]
fn class_c_stage_elaborates() {
    let p = class_c();
    assert!(p.diagnostics.is_empty(), "{:#?}", p.diagnostics);
    let e = elaborate(&p, &Overrides::default()).expect("valid");
    let c = &e.circuit;
    assert_eq!(
        c.nodes,
        vec!["vcc", "src", "base", "coll", "p1", "out"],
        "first-appearance order"
    );
    assert_eq!(c.elements.len(), 11);
    // 25 degC = 298.15 K (SI Brochure 9th ed., 2.3.1: T/K = t/degC + 273.15).
    assert_eq!(c.temperature_k, 298.15);
    let f0 = 13.56e6;
    // Inductor loss from Q: r = 2 pi f L / Q (definition of Q of a series RL), f from analyze steady.
    match elem(c, "lpi") {
        ElementKind::Inductor { l, series_r, .. } => {
            assert_relative_eq!(*l, 0.56e-6, max_relative = 1e-15);
            assert_relative_eq!(
                *series_r,
                2.0 * std::f64::consts::PI * f0 * 0.56e-6 / 180.0,
                max_relative = 1e-12
            );
        }
        k => panic!("{k:?}"),
    }
    match elem(c, "cld") {
        ElementKind::Capacitor { c, .. } => assert_relative_eq!(*c, 680e-12, max_relative = 1e-15),
        k => panic!("{k:?}"),
    }
    match elem(c, "vdrv") {
        ElementKind::VoltageSource { wave, rs, .. } => {
            assert_eq!(*rs, 50.0);
            assert_eq!(
                wave.shape,
                Some(Shape::Sine {
                    amp: 4.0,
                    freq: f0,
                    phase: 0.0,
                    offset: 0.0,
                    delay: 0.0,
                    rise: 0.0
                })
            );
        }
        k => panic!("{k:?}"),
    }
    assert_eq!(c.output, c.element("rload"));
    assert_eq!(c.input, c.element("vdrv"));
    let m = &c.models[0];
    match &m.params {
        ModelParams::Bjt(b) => {
            assert!(!b.pnp);
            assert_eq!(b.gain_fwd, 60.0);
            assert_relative_eq!(b.cj_bc, 120e-12, max_relative = 1e-15);
            assert_relative_eq!(b.max_tj, 423.15, max_relative = 1e-15);
            assert_eq!(b.early_fwd, f64::INFINITY, "unset parameters keep defaults");
        }
        p => panic!("{p:?}"),
    }
    assert_relative_eq!(
        c.params["cres"],
        1.0 / (2.0 * std::f64::consts::PI * f0 * 50.0),
        max_relative = 1e-15
    );
    assert_eq!(c.analyses.len(), 4);
    let mask = &c.masks[0];
    assert_eq!(mask.rules.len(), 4);
    // -13 dBm = 10^(-1.3) mW (definition of dBm).
    assert_eq!(
        mask.rules[2].limit,
        Limit::Watts(LimitExpr::Const(1e-3 * 10f64.powf(-1.3)))
    );
    assert_eq!(mask.rules[3].carrier, Some((0.0, 30e6)));
    assert_eq!(
        mask.rules[3].limit,
        Limit::Lenient(vec![
            Limit::Dbc(LimitExpr::LogCarrier { a: -43.0, b: -10.0 }),
            Limit::Dbc(LimitExpr::Const(-50.0))
        ])
    );
    assert_eq!(c.requirements.len(), 7);
    assert_eq!(c.requirements[0].bound, Bound::Mask(0));
    assert_eq!(c.requirements[2].bound, Bound::Value(0.6));
    assert_eq!(
        c.requirements[3].metric,
        Metric::about(tankwave_circuit::Figure::VcePeak, c.element("q1"))
    );
    assert_eq!(c.requirements[4].bound, Bound::Value(423.15));
    assert_eq!(c.requirements[6].metric, Metric::harmonic(3));
    assert_eq!(c.requirements[1].text, "require pout >= 20W");
    assert_eq!(
        c.study.vary[0].sweep,
        Sweep::Log {
            from: 10.0,
            to: 100.0,
            points: 7
        }
    );
    assert_eq!(c.study.vary[1].sweep, Sweep::List(vec![12.0, 13.8, 15.0]));
    assert_eq!(c.study.tolerances[0].distribution, Distribution::Gaussian);
    assert_eq!(c.study.montecarlo, Some(MonteCarlo { runs: 500, seed: 7 }));
    assert!(e.warnings.is_empty(), "{:#?}", e.warnings);
}

#[test]
fn parse_once_elaborate_with_overrides() {
    let p = class_c();
    let mut ov = Overrides::default();
    ov.params.insert("rb".into(), 47.0);
    ov.params.insert("f0".into(), 7e6);
    ov.element_values.insert("ctun".into(), 2.2e-9);
    ov.element_factors.insert("ctun".into(), 1.05);
    ov.element_factors.insert("rload".into(), 2.0);
    let c = elaborate(&p, &ov).expect("valid").circuit;
    match elem(&c, "rbias") {
        ElementKind::Resistor { r, .. } => assert_eq!(*r, 47.0),
        k => panic!("{k:?}"),
    }
    match elem(&c, "ctun") {
        ElementKind::Capacitor { c, .. } => {
            assert_relative_eq!(*c, 2.2e-9 * 1.05, max_relative = 1e-15)
        }
        k => panic!("{k:?}"),
    }
    match elem(&c, "rload") {
        ElementKind::Resistor { r, .. } => assert_eq!(*r, 100.0),
        k => panic!("{k:?}"),
    }
    // Parameters depending on an overridden one follow it.
    assert_relative_eq!(
        c.params["cres"],
        1.0 / (2.0 * std::f64::consts::PI * 7e6 * 50.0),
        max_relative = 1e-15
    );
    // And the steady analysis (freq=f0) too.
    assert!(c.analyses.contains(&Analysis::Steady {
        freq: 7e6,
        harmonics: 32,
        method: SteadyMethod::Auto,
        steps_per_period: 256,
        accuracy: tankwave_circuit::ir::SteadyAccuracy::default(),
    }));

    let mut bad = Overrides::default();
    bad.params.insert("rbb".into(), 1.0);
    bad.element_values.insert("nothing".into(), 1.0);
    let d = elaborate(&p, &bad).expect_err("unknown overrides");
    let codes: Vec<&str> = d.iter().map(|d| d.code).collect();
    assert_eq!(codes, vec!["bad-override", "bad-override"]);
    assert_eq!(d[0].help.as_deref(), Some("did you mean 'rb'?"));

    // --set on an element's name says how to make its value a parameter.
    let el = c.elements.first().expect("an element").name.clone();
    let mut on_element = Overrides::default();
    on_element.params.insert(el.clone(), 1.0);
    let d = elaborate(&p, &on_element).expect_err("an element is not a parameter");
    let help = d[0].help.as_deref().unwrap_or_default();
    assert!(
        help.contains("is an element") && help.contains(&format!("let {el}_value")),
        "{help}"
    );
}

/// An unknown mask with no near name lists the built-in masks.
#[test]
fn an_unknown_mask_lists_the_built_in_ones() {
    let text = "resistor r1 a gnd 50Ohm\nvoltage v1 a gnd dc=1V\noutput r1\nanalyze steady freq=1MHz\nrequire harmonics <= zzzzzzzz\n";
    let e = match load_str("m.tank", text, &Overrides::default()) {
        Ok(_) => panic!("an unknown mask elaborates"),
        Err(e) => e,
    };
    let m = e
        .diagnostics
        .iter()
        .find(|d| d.code == "unknown-mask")
        .expect("unknown-mask");
    let help = m.help.as_deref().unwrap_or_default();
    for b in tankwave_circuit::builtin::builtin_names() {
        assert!(help.contains(&b), "{help}");
    }
}

#[test]
fn expressions_and_parameters_defined_later() {
    let e = load(
        "let a = (2 + 3 * 4)\nlet b = (-2^2)\nlet c = (2^3^2)\nlet d = (min(3, 1, 2) + max(1, 5) + abs(-2))\n\
         let e = (sqrt(16) + ln(exp(2)) + log10(1000) + atan(1) * 4 / pi)\nlet g = (later * 2)\nlet later = 1.5k\n\
         let h = (10nF * 2)\nlet t = (sin(pi / 2) + cos(0) + tan(0))\n\
         voltage v1 a gnd dc=1V\nresistor r1 a gnd (later / 3)\n",
    );
    let p = &e.circuit.params;
    assert_eq!(p["a"], 14.0, "precedence: * before +");
    assert_eq!(p["b"], -4.0, "unary minus binds looser than ^");
    assert_eq!(p["c"], 512.0, "^ is right-associative");
    assert_eq!(p["d"], 8.0);
    assert_relative_eq!(p["e"], 4.0 + 2.0 + 3.0 + 1.0, max_relative = 1e-15);
    assert_eq!(p["g"], 3000.0, "a parameter may be used before its let");
    assert_relative_eq!(p["h"], 20e-9, max_relative = 1e-15);
    assert_relative_eq!(p["t"], 2.0, max_relative = 1e-15);
    match elem(&e.circuit, "r1") {
        ElementKind::Resistor { r, .. } => assert_eq!(*r, 500.0),
        k => panic!("{k:?}"),
    }
}

#[test]
fn bare_prefix_takes_the_slot_unit_and_units_must_fit() {
    let e = load("voltage v1 a gnd dc=1\nresistor r1 a gnd 4.7k\ncapacitor c1 a gnd 10n\ninductor l1 a b 2.5u r=0.1\nresistor r2 b gnd 1\n");
    match elem(&e.circuit, "c1") {
        ElementKind::Capacitor { c, .. } => assert_relative_eq!(*c, 10e-9, max_relative = 1e-15),
        k => panic!("{k:?}"),
    }
    match elem(&e.circuit, "r1") {
        ElementKind::Resistor { r, .. } => assert_eq!(*r, 4700.0),
        k => panic!("{k:?}"),
    }
    let err = load_str(
        "t.tank",
        "voltage v1 a gnd dc=1A\nresistor r1 a gnd 5F\n",
        &Overrides::default(),
    )
    .expect_err("mismatch");
    let msgs: Vec<&str> = err.diagnostics.iter().map(|d| d.message.as_str()).collect();
    assert_eq!(
        msgs,
        vec![
            "voltage dc needs V, got A",
            "resistor value needs Ohm, got F"
        ]
    );
}

#[test]
fn every_problem_is_collected() {
    let text = "resistor r1 a gnd -1Ohm\ncapacitor c1 a gnd 1H\ninductor l1 a gnd 0uH\nfoo bar\nrequire pout >= 1V\n";
    let err = load_str("t.tank", text, &Overrides::default()).expect_err("errors");
    let codes: Vec<&str> = err.diagnostics.iter().map(|d| d.code).collect();
    assert_eq!(
        codes,
        vec![
            "bad-value",
            "unit-mismatch",
            "bad-value",
            "unknown-statement",
            "unit-mismatch"
        ]
    );
    let lines: Vec<u32> = err.diagnostics.iter().map(|d| d.line).collect();
    assert_eq!(lines, vec![1, 2, 3, 4, 5]);
}

#[test]
fn dangling_node_is_a_warning() {
    let e = load("voltage v1 a gnd dc=1V\nresistor r1 a gnd 1Ohm\nresistor r2 a stub 1Ohm\n");
    assert_eq!(e.warnings.len(), 1);
    assert_eq!(e.warnings[0].code, "dangling-node");
    assert_eq!(
        e.warnings[0].message,
        "node 'stub' is connected only to resistor r2"
    );
}

#[test]
fn lossy_parts_break_loops_and_bjt_junctions_give_dc_paths() {
    // An inductor with series r across an ideal source is fine.
    load("voltage v1 a gnd dc=1V\ninductor l1 a gnd 1uH r=0.1Ohm\n");
    // A base reached only through a capacitor still has a DC path through the junctions.
    load(
        "voltage v1 vcc gnd dc=12V\nvoltage v2 src gnd wave=sine(amp=1V, freq=1MHz, phase=90) internal=50Ohm\ncapacitor c1 src base 10nF\n\
         inductor l1 vcc coll 10uH\nbjt q1 c=coll b=base e=gnd part=m\npart m npn { transport { sat_current=1fA beta=100 beta_reverse=1 } }\n",
    );
    let e = load("voltage v2 src gnd wave=sine(amp=1V, freq=1MHz, phase=90deg) internal=50Ohm\nresistor r1 src gnd 1\n");
    match elem(&e.circuit, "v2") {
        ElementKind::VoltageSource {
            wave:
                Waveform {
                    shape: Some(Shape::Sine { phase, .. }),
                    ..
                },
            ..
        } => {
            assert_relative_eq!(*phase, std::f64::consts::FRAC_PI_2, max_relative = 1e-15)
        }
        k => panic!("{k:?}"),
    }
}

#[test]
fn coupling_and_sweeps() {
    let e = load(
        "voltage v1 a gnd dc=0 internal=1\ninductor l1 a gnd 1uH\ninductor l2 b gnd 4uH\nresistor r1 b gnd 50\ncoupling k1 l1 l2 k=0.98\n\
         vary r1 from 10 to 50 step 10\nvary l1 from 1uH to 2uH points 3\ntolerance r1 1%\nanalyze ac from=1MHz to=2MHz points=3 source=v1 impedance=r1\n",
    );
    let c = &e.circuit;
    match elem(c, "k1") {
        ElementKind::Coupling { inductors, k } => {
            assert_eq!(
                inductors,
                &vec![c.element("l1").unwrap(), c.element("l2").unwrap()]
            );
            assert_eq!(inductors[0].index(), 1);
            assert_eq!(*k, 0.98);
        }
        k => panic!("{k:?}"),
    }
    assert_eq!(c.study.vary[0].target, VaryTarget::Element("r1".into()));
    assert_eq!(
        c.study.vary[0].sweep.values(),
        vec![10.0, 20.0, 30.0, 40.0, 50.0]
    );
    assert_eq!(
        c.study.vary[1].sweep,
        Sweep::Linear {
            from: 1e-6,
            to: 2e-6,
            points: 3
        }
    );
    assert_eq!(c.study.tolerances[0].fraction, 0.01);
    assert_eq!(c.study.tolerances[0].distribution, Distribution::Uniform);
    let (v1, r1) = (c.element("v1"), c.element("r1"));
    assert_eq!(r1.map(|e| e.index()), Some(3));
    assert!(matches!(
        c.analyses[0],
        Analysis::Ac {
            source,
            impedance_at,
            ..
        } if source == v1 && impedance_at == r1
    ));
}

/// The mask written here has the shape of the 47 CFR §97.307(d) row for
/// transmitters installed on or before 2003-01-01 below 30 MHz: at least 40 dB
/// below the fundamental and at most 50 mW, but only 30 dB below for a mean
/// power under 5 W (the rule as read for check-values.md and
/// `crates/measure/tests/masks.rs`).
#[test]
fn carrier_power_conditions_in_masks() {
    let e = load(
        "voltage v1 a gnd dc=1V\nresistor r1 a gnd 1\n\
         mask old { all if_carrier_below(5W, below 30dB, stricter(below 40dB, at_most 50mW)) when carrier 0Hz to 29.999MHz }\n",
    );
    let r = &e.circuit.masks[0].rules[0];
    assert_eq!(r.range, MaskRange::Any);
    assert_eq!(
        r.limit,
        Limit::IfCarrierBelow {
            watts: 5.0,
            then: Box::new(Limit::Dbc(LimitExpr::Const(-30.0))),
            otherwise: Box::new(Limit::All(vec![
                Limit::Dbc(LimitExpr::Const(-40.0)),
                Limit::Watts(LimitExpr::Const(0.05))
            ])),
        }
    );
    // At 100 W, 50 mW is 10·log10(0.05/100) = −33 dB under the carrier, looser than
    // 40 dB, so −40 dBc applies; at 1 W (under 5 W) the 30 dB row applies. The values
    // are exact decimals through one log10: 1e-12 relative is rounding.
    assert_relative_eq!(r.limit.allowed_dbc(100.0), -40.0, max_relative = 1e-12);
    assert_relative_eq!(r.limit.allowed_dbc(1.0), -30.0, max_relative = 1e-12);
}

#[test]
fn builtin_mask_names_resolve_when_present() {
    // Whatever the built-in list holds, each name must be accepted by require.
    for name in builtin::builtin_names() {
        let text =
            format!("voltage v1 a gnd dc=1V\nresistor r1 a gnd 1\nrequire harmonics <= {name}\n");
        let e = load(&text);
        assert_eq!(
            e.circuit.requirements[0].bound,
            Bound::BuiltinMask(name.clone())
        );
    }
}

#[test]
fn a_broken_declaration_is_not_reported_again_where_used() {
    // The part block never closes; the bjt that uses it must not add "no part named 'm'".
    let text = "voltage v1 a gnd dc=1V\nresistor r1 a gnd 1\npart m npn {\n transport { beta=50 }\nbjt q1 c=a b=a e=gnd part=m\n\
                resistor r2 a gnd (x\noutput r2\nrequire vce_peak q1 <= 10V\n";
    let err = load_str("t.tank", text, &Overrides::default()).expect_err("errors");
    let codes: Vec<&str> = err.diagnostics.iter().map(|d| d.code).collect();
    assert_eq!(
        codes,
        vec!["unclosed-bracket", "unclosed-bracket"],
        "{:#?}",
        err.diagnostics
    );
}

/// Every option that takes a word, from the declaration: each of its words
/// gives a circuit, and a misspelt word (one letter dropped) is an
/// `unknown-keyword` error at the word, naming the word meant, never a
/// default.
#[test]
fn every_option_word_is_read_and_a_misspelt_one_is_an_error() {
    use tankwave_circuit::options::analysis;
    let plain = "voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\n";
    // a keying keys the input's sine into the output resistor
    let keyed = "voltage v1 a gnd wave=sine(amp=1V, freq=7MHz)\nresistor r1 a gnd 50Ohm\n\
                 output r1\ninput v1\n";
    let required = |kind: &str| match kind {
        "transient" => "stop=1us",
        "ac" => "from=1MHz to=2MHz",
        "steady" => "freq=1MHz",
        "keying" => "wpm=20",
        _ => "",
    };
    let mut checked = 0;
    for (kind, table) in analysis::ALL {
        let base = if *kind == "keying" { keyed } else { plain };
        let at_line = base.lines().count() as u32 + 1;
        for o in table.iter() {
            for w in o.words() {
                let line = format!("analyze {kind} {} {}={w}", required(kind), o.name);
                load(&format!("{base}{line}\n"));
                let bad: String = w.chars().take(w.chars().count() - 1).collect();
                let line = format!("analyze {kind} {} {}={bad}", required(kind), o.name);
                let err = load_str("t.tank", &format!("{base}{line}\n"), &Overrides::default())
                    .expect_err(&line);
                let d = &err.diagnostics[0];
                assert_eq!(d.code, "unknown-keyword", "{line}");
                assert_eq!(
                    (d.line, d.column as usize),
                    (at_line, line.rfind('=').unwrap() + 2),
                    "{line}"
                );
                assert_eq!(
                    d.help.as_deref(),
                    Some(format!("did you mean '{w}'?").as_str()),
                    "{line}"
                );
                checked += 1;
            }
        }
    }
    // start (2), transient method (3), scale (2), steady method (4),
    // keying pattern (2) and shape (3).
    assert_eq!(checked, 16);
}

/// Defaults come from the declaration: an analysis with only its required
/// options gets the table's numbers and words.
#[test]
fn defaults_are_the_declared_ones() {
    use tankwave_circuit::options::{analysis, Default};
    let e = load("voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\nanalyze ac from=1MHz to=2MHz\nanalyze steady freq=1MHz\n");
    let num = |o: &tankwave_circuit::options::OptionSpec| match o.default {
        Default::Number(v) => v as usize,
        d => panic!("{d:?}"),
    };
    match &e.circuit.analyses[0] {
        Analysis::Ac { points, scale, .. } => {
            assert_eq!(*points, num(&analysis::POINTS));
            assert_eq!(*scale, Scale::Linear);
        }
        a => panic!("{a:?}"),
    }
    match &e.circuit.analyses[1] {
        Analysis::Steady {
            harmonics,
            steps_per_period,
            method,
            ..
        } => {
            assert_eq!(*harmonics, num(&analysis::HARMONICS));
            assert_eq!(*steps_per_period, num(&analysis::STEPS));
            assert_eq!(*method, SteadyMethod::Auto);
        }
        a => panic!("{a:?}"),
    }
}

/// `analyze loadpull`: its defaults, the transistor found when there is
/// one, and a region reaching outside |Γ| ≤ 0.98, a malformed center or a
/// missing transistor refused at the place written.
#[test]
fn load_pull_region_and_transistor() {
    let base = "part p npn { transport { sat_current=1e-14A beta=100 beta_reverse=1 } }\n\
                voltage v1 c gnd dc=10V\n\
                resistor rb b gnd 1kOhm\n\
                bjt q1 c=c b=b e=gnd part=p\n\
                analyze steady freq=1MHz\n";
    let e = load(&format!("{base}analyze loadpull reference=10Ohm\n"));
    let spec = e
        .circuit
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::LoadPull(s) => Some(s.clone()),
            _ => None,
        })
        .expect("a load-pull");
    assert_eq!(spec.center, (0.0, 0.0));
    assert_eq!(spec.radius, 0.5);
    assert_eq!(spec.points, 11);
    assert_eq!(spec.reference, 10.0);
    assert_eq!(spec.transistor, e.circuit.element("q1").expect("q1"));
    let refused = |line: &str, code: &str, column: u32| {
        let err = load_str("t.tank", &format!("{base}{line}\n"), &Overrides::default())
            .expect_err("refused");
        let d = &err.diagnostics[0];
        assert_eq!(
            (d.code, d.line, d.column),
            (code, 6, column),
            "{line}: {d:#?}"
        );
    };
    // |center| + radius = 0.5 + 0.6 > 0.98: at the radius
    refused(
        "analyze loadpull reference=10Ohm center=[0.3, 0.4] radius=0.6",
        "bad-value",
        59,
    );
    refused(
        "analyze loadpull reference=10Ohm center=[0.3]",
        "bad-value",
        42,
    );
    refused("analyze loadpull radius=0.2", "missing-option", 9);
    refused(
        "analyze loadpull reference=10Ohm transistor=rb",
        "element-kind",
        45,
    );
}
