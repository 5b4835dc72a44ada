//! docs/language.md stays true: every diagnostic code is documented, no
//! undocumented code is listed, and the complete example elaborates.

use std::path::Path;
use tankwave_circuit::{load_str, Overrides};
use tankwave_netlist::CODES;

fn doc() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("../../docs/language.md"))
        .expect("docs/language.md")
}

#[test]
fn every_code_is_documented_and_only_those() {
    let d = doc();
    let table: Vec<String> = d
        .lines()
        .skip_while(|l| !l.starts_with("## Diagnostics"))
        .filter_map(|l| {
            l.strip_prefix("| `")
                .and_then(|r| r.split('`').next())
                .map(str::to_string)
        })
        .collect();
    let codes: Vec<String> = CODES.iter().map(|(c, _)| c.to_string()).collect();
    assert_eq!(
        table, codes,
        "the docs table lists exactly the codes, in order"
    );
}

#[test]
fn the_complete_example_elaborates() {
    let d = doc();
    let start = d.find("## A complete example").expect("section");
    let block = &d[start..];
    let open = block.find("```\n").expect("code block") + 4;
    let close = block[open..].find("```").expect("end of block") + open;
    let e = load_str("example.tank", &block[open..close], &Overrides::default())
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    assert_eq!(e.circuit.elements.len(), 11);
    assert_eq!(e.circuit.requirements.len(), 4);
    assert!(e.warnings.is_empty());
}

#[test]
fn the_mask_and_study_examples_parse() {
    let d = doc();
    let mut text = String::from("vsource v1 a gnd dc=1V\nresistor r1 a b 1\nresistor rb b gnd 1\ncapacitor ctun a gnd 1nF\ninductor l1 a c 1uH r=1\nresistor r3 c gnd 1\nlet rb = 1\nlet vcc = 1\n");
    for section in ["### mask", "### Studies"] {
        let s = d.find(section).expect("section");
        let block = &d[s..];
        let open = block.find("```\n").expect("block") + 4;
        let close = block[open..].find("```").expect("end") + open;
        text.push_str(&block[open..close]);
    }
    let e = load_str("examples.tank", &text, &Overrides::default())
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    assert_eq!(e.circuit.masks[0].rules.len(), 7);
    assert_eq!(e.circuit.study.vary.len(), 4);
}
