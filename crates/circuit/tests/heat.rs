//! `analyze heat` and the heat-path part parameters: what elaborates, and
//! what is refused with which code.

use tankwave_circuit::*;

const STAGE: &str = "part qq npn { transport { sat_current=1fA beta=50 beta_reverse=1 } \
    thermal { junction_case=2 case_ambient=1.5 junction_heat=0.05 case_heat=2 case_sink=0.4 } \
    ratings { tj_max=150degC } }\n\
    part dd diode { junction { sat_current=1pA } }\n\
    voltage vs vcc gnd dc=12V\n\
    resistor rb vcc b 1kOhm\n\
    diode d1 b gnd part=dd\n\
    bjt q1 c=vcc b=b e=gnd part=qq\n\
    analyze steady freq=1MHz harmonics=4\n";

fn load(extra: &str) -> Result<Elaborated, LoadError> {
    load_str("t.tank", &format!("{STAGE}{extra}"), &Overrides::default())
}

fn codes(extra: &str) -> Vec<String> {
    match load(extra) {
        Ok(_) => Vec::new(),
        Err(e) => e
            .diagnostics
            .iter()
            .filter(|d| d.is_error())
            .map(|d| d.code.to_string())
            .collect(),
    }
}

#[test]
fn a_full_heat_analysis_elaborates() {
    let e = load("analyze heat sink=[q1, d1] sink_ambient=2.5 sink_heat=150 transmit=10s mark=50ms space=20ms\n")
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    let c = &e.circuit;
    let h = c
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Heat(h) => Some(h),
            _ => None,
        })
        .expect("analyze heat");
    assert_eq!(h.sink.len(), 2);
    assert_eq!(h.sink_ambient, Some(2.5));
    assert_eq!(h.sink_heat, 150.0);
    assert_eq!(h.transmit, Some(10.0));
    assert!((h.mark - 0.05).abs() < 1e-15 && (h.space - 0.02).abs() < 1e-15);
    assert_eq!(h.rounds, 30);
    let p = c
        .models
        .iter()
        .find_map(|m| match &m.params {
            ModelParams::Bjt(p) => Some(p),
            _ => None,
        })
        .unwrap();
    assert_eq!((p.heat_junction, p.heat_case, p.rth_cs), (0.05, 2.0, 0.4));
    // without keying, the mark is the whole transmission
    let e = load("analyze heat transmit=60s\n").unwrap();
    let h = e.circuit.analyses.iter().find_map(|a| match a {
        Analysis::Heat(h) => Some(h.clone()),
        _ => None,
    });
    assert_eq!(h.map(|h| (h.mark, h.space)), Some((60.0, 0.0)));
}

#[test]
fn bad_heat_analyses_are_refused_with_their_code() {
    assert_eq!(
        codes("analyze heat sink=[rb] sink_ambient=1\n"),
        ["element-kind"]
    );
    assert_eq!(codes("analyze heat sink=[q1]\n"), ["missing-option"]);
    assert_eq!(codes("analyze heat sink_ambient=1\n"), ["missing-option"]);
    assert_eq!(codes("analyze heat mark=1s\n"), ["missing-option"]);
    assert_eq!(
        codes("analyze heat sink=[q1, q1] sink_ambient=1\n"),
        ["bad-value"]
    );
    assert_eq!(codes("analyze heat rounds=1\n"), ["bad-value"]);
    assert_eq!(
        codes("analyze heat sink_ambient=-1 sink=q1\n"),
        ["bad-value"]
    );
    assert_eq!(
        codes("analyze heat\nanalyze heat\n"),
        ["duplicate-statement"]
    );
    assert_eq!(codes("analyze heat rounds=1000\n"), ["too-large"]);
    assert_eq!(
        codes("analyze heat transmit=1000s mark=1us space=1us\n"),
        ["too-large"]
    );
    // a transistor on the sink needs its junction–case resistance, and some
    // transistor needs a heat path
    let text = STAGE.replace("junction_case=2 ", "");
    for extra in ["analyze heat sink=q1 sink_ambient=1\n", "analyze heat\n"] {
        let e = load_str("t.tank", &format!("{text}{extra}"), &Overrides::default())
            .expect_err("refused");
        let d = e
            .diagnostics
            .iter()
            .find(|d| d.is_error())
            .expect("an error");
        assert_eq!(d.code, "missing-part-param", "{extra}: {}", d.message);
    }
    // an analyze heat needs the steady state it is solved with
    let text = STAGE.replace("analyze steady freq=1MHz harmonics=4\n", "analyze heat\n");
    let e = load_str("t.tank", &text, &Overrides::default()).expect_err("refused");
    assert!(e.diagnostics.iter().any(|d| d.code == "missing-option"));
}

/// A thermistor (a resistor with `ntc_b=`) may sit on the heatsink; a
/// plain resistor may not, and a B constant beyond real thermistors is
/// refused where it is written.
#[test]
fn thermistors_on_the_heatsink() {
    let e =
        load("resistor rt b gnd 10kOhm ntc_b=3950\nanalyze heat sink=[q1, rt] sink_ambient=2\n")
            .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    let h = e
        .circuit
        .analyses
        .iter()
        .find_map(|a| match a {
            Analysis::Heat(h) => Some(h.clone()),
            _ => None,
        })
        .expect("analyze heat");
    assert_eq!(h.sink.len(), 2);
    assert_eq!(
        codes("resistor rt b gnd 10kOhm\nanalyze heat sink=[q1, rt] sink_ambient=2\n"),
        ["element-kind"]
    );
    let bad = load("resistor rt b gnd 10kOhm ntc_b=1e6\n").expect_err("refused");
    let d = bad
        .diagnostics
        .iter()
        .find(|d| d.is_error())
        .expect("an error");
    assert_eq!(d.code, "bad-value", "{}", d.message);
    // the message names the option
    assert!(d.message.contains("ntc_b"), "{}", d.message);
    assert_eq!(codes("capacitor cx b gnd 1nF ntc_b=3950\n").len(), 1);
}

/// A transmission followed over time needs every heat capacity of the
/// path; a file that lacks one is refused at the statement, not at solve
/// time.
#[test]
fn a_transmission_needs_every_heat_capacity() {
    // the demo part gives them all, and the sink gets sink_heat=
    assert!(codes("analyze heat sink=q1 sink_ambient=2 sink_heat=100 transmit=10s\n").is_empty());
    // without sink_heat= the sink has none (the part's case is its own node)
    assert_eq!(
        codes("analyze heat sink=q1 sink_ambient=2 transmit=10s\n"),
        ["missing-option"]
    );
    // without junction_heat= / case_heat= in the part
    for word in ["junction_heat=0.05 ", "case_heat=2 "] {
        let text = STAGE.replace(word, "");
        let e = load_str(
            "t.tank",
            &format!("{text}analyze heat sink=q1 sink_ambient=2 sink_heat=100 transmit=10s\n"),
            &Overrides::default(),
        )
        .expect_err("refused");
        let d = e
            .diagnostics
            .iter()
            .find(|d| d.is_error())
            .expect("an error");
        assert_eq!(d.code, "missing-part-param", "{word}: {}", d.message);
        assert!(
            d.message.contains(word.split('=').next().unwrap()),
            "{}",
            d.message
        );
        // with no transmission, the capacities are not needed
        assert!(load_str(
            "t.tank",
            &format!("{text}analyze heat sink=q1 sink_ambient=2\n"),
            &Overrides::default()
        )
        .is_ok());
    }
}
