//! Parser tests: statement shapes, values with prefixes and units,
//! expressions, includes, recovery after errors.

use std::io::Write;
use tankwave_netlist::ast::*;
use tankwave_netlist::expr::{eval_const, EvalError};
use tankwave_netlist::{parse_file, parse_str, Unit};

fn one(text: &str) -> Stmt {
    let p = parse_str("t.tank", text);
    assert!(p.diagnostics.is_empty(), "{:#?}", p.diagnostics);
    assert_eq!(p.statements.len(), 1);
    p.statements[0].stmt.clone()
}

fn let_value(text: &str) -> Result<f64, EvalError> {
    match one(&format!("let x = {text}\n")) {
        Stmt::Let { value, .. } => eval_const(&value),
        s => panic!("{s:?}"),
    }
}

#[test]
fn element_statement_shape() {
    match one("inductor lpi p1 out 0.56uH q=180 q_at=13.56MHz\n") {
        Stmt::Element(e) => {
            assert_eq!(e.kind, ElemKeyword::Inductor);
            assert_eq!(e.name.name, "lpi");
            let nodes: Vec<&str> = e.nodes.iter().map(|n| n.name.as_str()).collect();
            assert_eq!(nodes, vec!["p1", "out"]);
            assert_eq!(
                e.value.as_ref().and_then(|v| v.literal_unit()),
                Some(Some(Unit::Henry))
            );
            let keys: Vec<&str> = e.options.iter().map(|o| o.key.name.as_str()).collect();
            assert_eq!(keys, vec!["q", "q_at"]);
        }
        s => panic!("{s:?}"),
    }
    match one("bjt q1 c=coll b=base e=gnd part=hfnpn\n") {
        Stmt::Element(e) => assert_eq!(e.options.len(), 4),
        s => panic!("{s:?}"),
    }
}

#[test]
fn values_with_prefixes_and_units() {
    // Prefix values: BIPM SI Brochure 9th ed. (2019), table 7.
    assert_eq!(let_value("13.56MHz"), Ok(13.56e6));
    assert_eq!(let_value("2.2kOhm"), Ok(2200.0));
    assert_eq!(let_value("47Ω"), Ok(47.0));
    assert_eq!(let_value("1.8nF"), Ok(1.8e-9));
    assert_eq!(let_value("33uH"), Ok(33e-6));
    assert_eq!(let_value("33µH"), Ok(33e-6));
    assert_eq!(let_value("100fF"), Ok(100e-15));
    assert_eq!(let_value("3pF"), Ok(3e-12));
    assert_eq!(let_value("2GHz"), Ok(2e9));
    assert_eq!(let_value("1T"), Ok(1e12));
    assert_eq!(let_value("40us"), Ok(40e-6));
    assert_eq!(let_value("5mA"), Ok(5e-3));
    assert_eq!(let_value("65%"), Ok(0.65));
    assert_eq!(let_value("-43dBc"), Ok(-43.0));
    // 0 dBm = 1 mW (definition of dBm).
    assert_eq!(let_value("0dBm"), Ok(1e-3));
    // 25 degC = 298.15 K (SI Brochure 9th ed., 2.3.1).
    assert_eq!(let_value("25degC"), Ok(298.15));
    assert_eq!(let_value("1e-3"), Ok(1e-3));
    assert_eq!(let_value("1.5e3k"), Ok(1.5e6));
}

#[test]
fn expressions() {
    assert_eq!(let_value("(1 + 2 * 3)"), Ok(7.0));
    assert_eq!(let_value("((1 + 2) * 3)"), Ok(9.0));
    assert_eq!(let_value("(2 ^ 10)"), Ok(1024.0));
    assert_eq!(let_value("(-3 ^ 2)"), Ok(-9.0));
    assert_eq!(let_value("(10 / 4)"), Ok(2.5));
    assert_eq!(let_value("(1nF + 1nF)"), Ok(2e-9));
    assert_eq!(let_value("(max(1, 7, 3) - min(4, 2))"), Ok(5.0));
    assert_eq!(let_value("(abs(-2) * sqrt(9))"), Ok(6.0));
    assert_eq!(
        let_value("(1/(2*pi*1MHz*50))"),
        Ok(1.0 / (2.0 * std::f64::consts::PI * 1e6 * 50.0))
    );
    assert!(matches!(
        let_value("(1 / 0)"),
        Err(EvalError::DivZero { .. })
    ));
    assert!(matches!(
        let_value("(sqrt(-1))"),
        Err(EvalError::NotFinite { .. })
    ));
    assert!(matches!(
        let_value("(ln(0))"),
        Err(EvalError::NotFinite { .. })
    ));
    assert!(matches!(
        let_value("(10 ^ 400)"),
        Err(EvalError::NotFinite { .. })
    ));
    assert!(matches!(
        let_value("(y + 1)"),
        Err(EvalError::Unknown { .. })
    ));
}

#[test]
fn newlines_inside_brackets_continue_the_statement() {
    let p = parse_str(
        "t.tank",
        "part m npn {\n  transport {\n    beta=50\n    sat_current=1e-14A\n  }\n}\nlet x = (1 +\n  2)\n",
    );
    assert!(p.diagnostics.is_empty(), "{:#?}", p.diagnostics);
    assert_eq!(p.statements.len(), 2);
    match &p.statements[0].stmt {
        Stmt::Part(m) => assert_eq!(m.blocks[0].params.len(), 2),
        s => panic!("{s:?}"),
    }
}

#[test]
fn mask_rules_and_requirements() {
    match one("mask m {\n harmonics 2 to 10 below 43dB\n harmonics from 11 at_most 1mW\n frequency 30MHz to 1GHz stricter(below 60dB, at_most -13dBm)\n all looser(below (43 + 10*log10(pcarrier)), below 50dB) when carrier 0Hz to 30MHz\n}\n") {
        Stmt::Mask(m) => {
            assert_eq!(m.rules.len(), 4);
            assert!(matches!(m.rules[0].range, RangeAst::Harmonics { to: Some(_), .. }));
            assert!(matches!(m.rules[1].range, RangeAst::Harmonics { to: None, .. }));
            assert!(matches!(m.rules[2].limit, LimitAst::Stricter(ref v, _) if v.len() == 2));
            assert!(matches!(m.rules[3].range, RangeAst::All));
            assert!(m.rules[3].carrier.is_some());
        }
        s => panic!("{s:?}"),
    }
    match one("require vce_peak [q1] <= 36V\n") {
        Stmt::Require(r) => {
            assert_eq!(r.metric.name, "vce_peak");
            assert_eq!(r.element.map(|e| e.name), Some("q1".to_string()));
            assert_eq!(r.cmp, CmpAst::Le);
        }
        s => panic!("{s:?}"),
    }
    match one("require harmonic 3 <= -50dBc\n") {
        Stmt::Require(r) => assert!(r.number.is_some() && r.element.is_none()),
        s => panic!("{s:?}"),
    }
}

#[test]
fn sweeps() {
    assert!(matches!(
        one("vary rb from 10Ohm to 100Ohm points 7 log\n"),
        Stmt::Vary {
            sweep: SweepAst::Points { log: true, .. },
            ..
        }
    ));
    assert!(
        matches!(one("vary vcc [12V, 13.8V, 15V]\n"), Stmt::Vary { sweep: SweepAst::List(ref v), .. } if v.len() == 3)
    );
    assert!(matches!(
        one("vary r1 from 1 to 2 step 0.5\n"),
        Stmt::Vary {
            sweep: SweepAst::Step { .. },
            ..
        }
    ));
    assert!(matches!(
        one("tune rb from 5Ohm to 200Ohm\n"),
        Stmt::Tune { .. }
    ));
    assert!(matches!(
        one("tolerance ctun 5% gaussian\n"),
        Stmt::Tolerance {
            distribution: Some(_),
            ..
        }
    ));
}

#[test]
fn recovery_reports_every_broken_statement() {
    let p = parse_str(
        "t.tank",
        "resistor r1 a\nfoo\nresistor r2 a gnd 5Ohm\nlet = 3\ncapacitor c1 a gnd 1nF extra\n",
    );
    let lines: Vec<u32> = p.diagnostics.iter().map(|d| d.line).collect();
    assert_eq!(lines, vec![1, 2, 4, 5]);
    assert_eq!(p.statements.len(), 1, "the good statement is kept");
    let d = &p.diagnostics[0];
    assert_eq!((d.code, d.column), ("syntax", 14));
    assert_eq!(d.message, "expected a second node name, got end of line");
}

#[test]
fn includes_resolve_relative_and_detect_cycles() {
    let dir = tempfile::tempdir().expect("tempdir");
    let sub = dir.path().join("parts");
    std::fs::create_dir(&sub).expect("mkdir");
    let mut f = std::fs::File::create(sub.join("a.tank")).expect("create");
    writeln!(f, "resistor ra x gnd 1Ohm\ninclude \"b.tank\"").expect("write");
    let mut f = std::fs::File::create(sub.join("b.tank")).expect("create");
    writeln!(f, "resistor rb x gnd 1Ohm\ninclude \"a.tank\"").expect("write");
    let mut f = std::fs::File::create(dir.path().join("top.tank")).expect("create");
    writeln!(f, "# top\ninclude \"parts/a.tank\"\nresistor rt x gnd 1Ohm").expect("write");
    let p = parse_file(dir.path().join("top.tank"));
    let names: Vec<String> = p
        .statements
        .iter()
        .filter_map(|s| match &s.stmt {
            Stmt::Element(e) => Some(e.name.name.clone()),
            _ => None,
        })
        .collect();
    assert_eq!(
        names,
        vec!["ra", "rb", "rt"],
        "included statements spliced in place"
    );
    assert_eq!(p.diagnostics.len(), 1);
    let d = &p.diagnostics[0];
    assert_eq!(d.code, "include-cycle");
    assert!(d.file.ends_with("b.tank"));
    assert_eq!((d.line, d.column), (2, 1));
    assert_eq!(d.message, "include cycle: a.tank -> b.tank -> a.tank");
    assert_eq!(d.included_from.len(), 2, "b from a, a from top");
    assert!(d.included_from[1].0.ends_with("top.tank"));
    assert_eq!(d.included_from[1].1, 2);
}

#[test]
fn non_utf8_is_a_diagnostic() {
    let p = tankwave_netlist::parse_bytes("b.tank", b"resistor r1 a gnd 5\xff\n");
    assert_eq!(p.diagnostics.len(), 1);
    assert_eq!(p.diagnostics[0].code, "not-utf8");
    assert_eq!((p.diagnostics[0].line, p.diagnostics[0].column), (1, 20));
}
