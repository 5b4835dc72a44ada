//! Property tests, as the parser is fuzzed: any bytes on the server's input,
//! well-framed messages with random methods and parameters, and random
//! texts with random positions never panic the server; it goes on answering
//! after each, and every place it reports lies within the text.

use proptest::prelude::*;
use serde_json::{json, Value};
use std::io::{BufRead, BufReader, Cursor, Read};
use tankwave_editor::{serve, Document, Ended};

fn frame(v: &Value) -> Vec<u8> {
    let body = v.to_string();
    let mut out = format!("Content-Length: {}\r\n\r\n", body.len()).into_bytes();
    out.extend_from_slice(body.as_bytes());
    out
}

/// Every message the server wrote, read back with the protocol's framing.
fn messages(out: &[u8]) -> Vec<Value> {
    let mut r = BufReader::new(out);
    let mut v = Vec::new();
    loop {
        let mut len = None;
        loop {
            let mut line = String::new();
            if r.read_line(&mut line).unwrap_or(0) == 0 {
                return v;
            }
            let line = line.trim_end();
            if line.is_empty() {
                break;
            }
            if let Some(n) = line.strip_prefix("Content-Length:") {
                len = n.trim().parse::<usize>().ok();
            }
        }
        let mut body = vec![0; len.expect("every message the server writes has a length")];
        r.read_exact(&mut body).expect("a whole body");
        v.push(serde_json::from_slice(&body).expect("the server writes JSON"));
    }
}

fn run(input: Vec<u8>) -> (Ended, Vec<Value>) {
    let mut out = Vec::new();
    let ended = serve(Cursor::new(input), &mut out, &Default::default())
        .expect("writing to a Vec never fails");
    (ended, messages(&out))
}

fn init() -> Value {
    json!({"jsonrpc": "2.0", "id": 0, "method": "initialize", "params": {"capabilities": {}}})
}

/// A last request after the hostile ones: answered means the server went on.
fn probe() -> Value {
    json!({"jsonrpc": "2.0", "id": 999_999, "method": "textDocument/documentSymbol",
        "params": {"textDocument": {"uri": "file:///p/x.tank"}}})
}

fn json_value() -> impl Strategy<Value = Value> {
    let leaf = prop_oneof![
        Just(Value::Null),
        any::<bool>().prop_map(Value::Bool),
        any::<i64>().prop_map(|n| json!(n)),
        any::<f64>()
            .prop_map(|f| serde_json::Number::from_f64(f).map_or(Value::Null, Value::Number)),
        ".{0,12}".prop_map(Value::String),
        Just(json!("file:///p/x.tank")),
        Just(json!({"line": 4294967295u32, "character": 4294967295u32})),
    ];
    leaf.prop_recursive(4, 32, 6, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 0..4).prop_map(Value::Array),
            prop::collection::btree_map(
                prop_oneof![
                    Just("textDocument".to_string()),
                    Just("uri".to_string()),
                    Just("position".to_string()),
                    Just("text".to_string()),
                    Just("contentChanges".to_string()),
                    Just("range".to_string()),
                    "[a-z]{1,6}",
                ],
                inner,
                0..4
            )
            .prop_map(|m| Value::Object(m.into_iter().collect())),
        ]
    })
}

const METHODS: &[&str] = &[
    "initialize",
    "initialized",
    "textDocument/didOpen",
    "textDocument/didChange",
    "textDocument/didClose",
    "textDocument/hover",
    "textDocument/definition",
    "textDocument/completion",
    "textDocument/documentSymbol",
    "textDocument/inlayHint",
    "$/cancelRequest",
    "workspace/unknown",
    "",
];

/// Stage-file pieces for random texts (tokens and troublemakers, as the
/// parser's fuzz test uses).
const PIECES: &[&str] = &[
    "resistor r1 a gnd 50Ω\n",
    "inductor l1 a b 4.7µH\n",
    "let f0 = 13.56MHz\n",
    "voltage v1 a gnd dc=f0 wave=sine(amp=1V, freq=f0)\n",
    "part p npn { transport { beta=",
    "bjt q1 c=a b=b e=gnd part=p\n",
    "analyze ",
    "require pout >= 1W\n",
    "include \"nowhere.tank\"\n",
    "\u{feff}",
    "𝄞",
    "\r",
    "\r\n",
    "\n",
    "=",
    "(",
    "}",
    "#",
    "\"",
    "\u{0}",
    "\u{1b}]0;x\u{7}",
];

fn text() -> impl Strategy<Value = String> {
    prop::collection::vec(prop::sample::select(PIECES), 0..24).prop_map(|v| v.concat())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    /// Any bytes: the loop ends at the end of the input, having written
    /// only well-framed JSON.
    #[test]
    fn any_bytes(bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        let mut input = frame(&init());
        input.extend_from_slice(&bytes);
        let (ended, out) = run(input);
        prop_assert_eq!(ended, Ended::Abrupt);
        prop_assert!(out.iter().any(|m| m["id"] == 0), "initialize answered");
    }

    /// Well-framed messages with random methods and parameters, then a
    /// probe: the probe is answered.
    #[test]
    fn random_messages(msgs in prop::collection::vec(
        (prop::sample::select(METHODS), json_value(), prop::option::of(any::<i32>())), 0..12)
    ) {
        let mut input = frame(&init());
        for (method, params, id) in msgs {
            let mut m = json!({"jsonrpc": "2.0", "method": method, "params": params});
            if let Some(id) = id {
                m["id"] = json!(id.unsigned_abs() % 1000 + 1);
            }
            input.extend(frame(&m));
        }
        input.extend(frame(&json!({"jsonrpc": "2.0", "method": "textDocument/didOpen",
            "params": {"textDocument": {"uri": "file:///p/x.tank", "languageId": "t",
                "version": 1, "text": "resistor r1 a gnd 5F\n"}}})));
        input.extend(frame(&probe()));
        let (_, out) = run(input);
        prop_assert!(out.iter().any(|m| m["id"] == 999_999), "the probe is answered: {:?}", out);
    }

    /// Random texts and positions: every feature answers without a panic,
    /// and every range it reports lies within the text.
    #[test]
    fn random_texts_and_places(t in text(), line in 0u32..40, col in 0u32..200) {
        let uri = lsp_types::Url::parse("file:///p/x.tank").expect("uri");
        let d = Document::new(uri, t.clone());
        let lines = t.split_inclusive(['\n', '\r']).count().max(1) as u32;
        let pos = lsp_types::Position::new(line, col);
        let inside = |r: &lsp_types::Range| r.start <= r.end && r.end.line <= lines;
        for x in d.lsp_diagnostics() {
            prop_assert!(inside(&x.range), "{:?}", x);
        }
        let _ = tankwave_editor::features::hover(&d, pos);
        let _ = tankwave_editor::features::definition(&d, pos);
        let _ = tankwave_editor::features::completion(&d, pos);
        for s in tankwave_editor::features::symbols(&d) {
            prop_assert!(inside(&s.range) && inside(&s.selection_range), "{:?}", s);
        }
        let _ = tankwave_editor::features::inlay_hints(&d);
        // a position maps to an offset on a character boundary
        let off = d.lines.offset(&d.text, pos);
        prop_assert!(d.text.is_char_boundary(off));
    }
}
