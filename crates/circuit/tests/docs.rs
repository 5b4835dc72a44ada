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
    let mut text = String::from("voltage v1 a gnd dc=1V\nresistor r1 a b 1\nresistor rb b gnd 1\ncapacitor ctun a gnd 1nF\ninductor l1 a c 1uH r=1\nresistor r3 c gnd 1\nlet rb = 1\nlet vcc = 1\n");
    for section in ["### mask", "### Studies"] {
        let s = d.find(section).expect("section");
        let block = &d[s..];
        let open = block.find("```\n").expect("block") + 4;
        let close = block[open..].find("```").expect("end") + open;
        text.push_str(&block[open..close]);
    }
    let e = load_str("examples.tank", &text, &Overrides::default())
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics));
    assert_eq!(e.circuit.masks[0].rules.len(), 8);
    assert_eq!(e.circuit.study.vary.len(), 4);
}

fn read_doc(name: &str) -> String {
    std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../docs")
            .join(name),
    )
    .unwrap_or_else(|e| panic!("docs/{name}: {e}"))
}

/// The text between `<!-- parameters: KEY -->` and the next `<!-- end -->`.
fn marked(doc: &str, key: &str) -> String {
    let open = format!("<!-- parameters: {key} -->\n");
    let a = doc.find(&open).unwrap_or_else(|| panic!("marker {open}")) + open.len();
    let b = doc[a..].find("<!-- end -->").expect("end marker") + a;
    doc[a..b].to_string()
}

#[test]
fn models_md_parameter_tables_are_the_declaration() {
    use tankwave_circuit::models::{docs_table, BJT_PARAMS, DIODE_PARAMS};
    let d = read_doc("models.md");
    let bjt = docs_table(BJT_PARAMS);
    let diode = docs_table(DIODE_PARAMS);
    assert_eq!(
        marked(&d, "bipolar"),
        bjt,
        "regenerate from models::docs_table:\n{bjt}"
    );
    assert_eq!(
        marked(&d, "diode"),
        diode,
        "regenerate from models::docs_table:\n{diode}"
    );
}

/// Every (name, kind) row of docs/vocabulary.md's tables: `| \`name\` | kind | why |`.
fn vocabulary() -> std::collections::BTreeSet<(String, String)> {
    read_doc("vocabulary.md")
        .lines()
        .filter_map(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            if cells.len() < 4 {
                return None;
            }
            let name = cells[1].strip_prefix('`')?.strip_suffix('`')?;
            Some((name.to_string(), cells[2].to_string()))
        })
        .collect()
}

#[test]
fn vocabulary_md_lists_exactly_the_words_the_language_accepts() {
    use std::collections::BTreeSet;
    use tankwave_circuit::models::{blocks, BJT_PARAMS, DIODE_PARAMS};
    use tankwave_circuit::options;
    use tankwave_netlist::vocab;
    let listed = vocabulary();
    let of = |kind: &str| -> BTreeSet<String> {
        listed
            .iter()
            .filter(|(_, k)| k == kind)
            .map(|(n, _)| n.clone())
            .collect()
    };
    let set = |v: Vec<&str>| -> BTreeSet<String> { v.into_iter().map(str::to_string).collect() };
    assert_eq!(
        of("statement"),
        set(vocab::OTHER_STATEMENTS.to_vec()),
        "statement keywords"
    );
    assert_eq!(
        of("element"),
        set(vocab::ELEMENT_KINDS.to_vec()),
        "element kinds"
    );
    assert_eq!(
        of("waveform"),
        set(vocab::WAVEFORMS.iter().map(|(n, _)| *n).collect()),
        "waveforms"
    );
    assert_eq!(
        of("waveform argument"),
        set(vocab::WAVEFORMS
            .iter()
            .flat_map(|(_, a)| a.iter().copied())
            .collect()),
        "waveform arguments"
    );
    assert_eq!(of("analysis"), set(options::analysis::kinds()), "analyses");
    assert_eq!(of("option"), set(options::all_option_names()), "options");
    assert_eq!(
        of("option word"),
        set(options::all_option_words()),
        "option words"
    );
    assert_eq!(
        of("part kind"),
        set(vocab::PART_KINDS.to_vec()),
        "part kinds"
    );
    let mut bl = blocks(BJT_PARAMS);
    bl.extend(blocks(DIODE_PARAMS));
    assert_eq!(of("part block"), set(bl), "part blocks");
    let mut params: Vec<&str> = BJT_PARAMS.iter().map(|p| p.name).collect();
    params.extend(DIODE_PARAMS.iter().map(|p| p.name));
    assert_eq!(of("part parameter"), set(params), "part parameters");
    // The word kept free for the keying waveform is not taken.
    assert!(listed.iter().all(|(n, _)| n != "keyed"));
}

/// The `require` table of docs/language.md lists exactly the figures of the
/// catalogue a requirement may name, in its order, each with its label and
/// the element it may be about.
#[test]
fn require_table_is_the_figure_catalogue() {
    use tankwave_circuit::{About, Figure};
    let d = doc();
    let rows: Vec<&str> = d
        .lines()
        .skip_while(|l| !l.starts_with("### require"))
        .skip_while(|l| !l.starts_with("| figure |"))
        .skip(2)
        .take_while(|l| l.starts_with('|'))
        .collect();
    let figures: Vec<Figure> = Figure::ALL
        .iter()
        .copied()
        .filter(|f| f.word().is_some())
        .collect();
    assert_eq!(rows.len(), figures.len(), "one row per figure:\n{rows:#?}");
    for (row, f) in rows.iter().zip(&figures) {
        let cells: Vec<&str> = row.split('|').map(str::trim).collect();
        let word = f.word().unwrap_or_default();
        assert!(
            cells[1].starts_with(&format!("`{word}")) && cells[1].ends_with(f.label()),
            "row {row} should name `{word}` — {}",
            f.label()
        );
        let element = match f.about() {
            About::Transistor => "bjt",
            About::RatedPart => "rated resistor, capacitor or inductor",
            _ => "–",
        };
        assert_eq!(cells[3], element, "element column of {word}");
    }
    // and docs/vocabulary.md gives the reason for each word
    let vocab = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../docs/vocabulary.md"),
    )
    .expect("docs/vocabulary.md");
    let listed: std::collections::BTreeSet<&str> = vocab
        .lines()
        .filter_map(|l| {
            let c: Vec<&str> = l.split('|').map(str::trim).collect();
            (c.len() > 3 && c[2] == "figure").then(|| c[1].trim_matches('`'))
        })
        .collect();
    let words: std::collections::BTreeSet<&str> = Figure::words().collect();
    assert_eq!(listed, words, "figures in docs/vocabulary.md");
}
