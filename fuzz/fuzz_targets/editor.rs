//! Fuzz target `editor`: arbitrary bytes as what an editor sends the
//! language server (tankwave-editor's message loop, with its framing),
//! after a valid `initialize`. The loop must end at the end of the input
//! without a panic; solves after a save are bounded by
//! `tankwave_stage::Caps`, as in the `stage` target.
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::io::Cursor;
use tankwave_editor::{serve, ServeParams};
use tankwave_stage::Caps;

const INIT: &str = r#"{"jsonrpc":"2.0","id":0,"method":"initialize","params":{"capabilities":{}}}"#;

fuzz_target!(|data: &[u8]| {
    let mut input = format!("Content-Length: {}\r\n\r\n{INIT}", INIT.len()).into_bytes();
    input.extend_from_slice(data);
    let params = ServeParams {
        caps: Some(Caps::default()),
        ..ServeParams::default()
    };
    let mut out = Vec::new();
    // writing to a Vec cannot fail; any other error is a finding
    serve(Cursor::new(input), &mut out, &params).expect("the loop ends cleanly");
});
