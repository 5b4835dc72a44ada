//! Helpers shared by the stage tests that vary a demo's transistor part.
#![allow(dead_code)]

use std::path::PathBuf;

use tankwave_circuit::{Circuit, Overrides};

/// The demo stage files.
pub fn netlists() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../netlists")
}

/// A demo file's text.
pub fn read(path: &str) -> String {
    std::fs::read_to_string(netlists().join(path)).expect("a demo file")
}

/// The demo `stage` (a file under netlists/) with its `include` lines
/// replaced by the text of the 25 W part, edited by `part`, and of the
/// other files in `includes`; its `require` lines dropped unless
/// `requires`; `extra` statements appended.
pub fn inline(
    stage: &str,
    part: impl Fn(String) -> String,
    includes: &[&str],
    requires: bool,
    extra: &str,
) -> String {
    let p = part(read("models/tw-hf25.tank"));
    let others: String = includes.iter().map(|f| read(f) + "\n").collect();
    let demo: String = read(stage)
        .lines()
        .filter(|l| !l.starts_with("include") && (requires || !l.starts_with("require")))
        .map(|l| format!("{l}\n"))
        .collect();
    format!("{p}\n{others}\n{demo}\n{extra}")
}

/// `text` with `from` replaced by `to`, which must be there.
pub fn edit(text: String, from: &str, to: &str) -> String {
    assert!(text.contains(from), "{from}");
    text.replace(from, to)
}

/// Elaborate a stage text, panicking with its diagnostics.
pub fn circuit(text: &str) -> Circuit {
    tankwave_circuit::load_str("demo.tank", text, &Overrides::default())
        .unwrap_or_else(|e| panic!("{:#?}", e.diagnostics))
        .circuit
}
