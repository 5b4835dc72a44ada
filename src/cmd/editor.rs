//! `tankwave serve-editor`: the language server for stage files, speaking
//! the Language Server Protocol on stdin and stdout (tankwave-editor does
//! the work; this only wires the streams and maps the end to an exit code).

use super::common::OK;
use clap::Args;
use tankwave_editor::Ended;

/// Arguments of `serve-editor` (none: the editor starts it and talks to it).
#[derive(Args, Debug)]
pub struct ServeEditorArgs {}

/// Serve until the editor says `exit`: 0 after `shutdown`, 1 without it (as
/// the protocol asks) or when writing to the editor failed.
pub fn run(_: &ServeEditorArgs) -> i32 {
    let params = tankwave_editor::ServeParams {
        include_roots: super::common::include_roots().to_vec(),
        ..Default::default()
    };
    match tankwave_editor::serve(std::io::stdin(), std::io::stdout(), &params) {
        Ok(Ended::Clean) => OK,
        Ok(Ended::Abrupt) => 1,
        Err(e) => {
            eprintln!("error: {e}");
            1
        }
    }
}
