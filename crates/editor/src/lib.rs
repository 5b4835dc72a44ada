//! tankwave-editor: the editor loop — a language server for stage files.
//!
//! The server speaks the Language Server Protocol (an open standard, LSP
//! 3.17) over any pair of byte streams; the `tankwave` binary hands it
//! stdin and stdout. What it answers is computed by plain functions over
//! the text, so that each can be tested without a client:
//!
//! - [`position`]: places in the protocol's UTF-16 columns to and from byte
//!   offsets;
//! - [`document`]: one open file, parsed and elaborated through
//!   tankwave-stage exactly as `lint` does, its diagnostics with the same
//!   places, codes and help;
//! - [`features`]: hover, go to definition, completion, document symbols
//!   and the figures as inlay hints, from the file's outline (built by the
//!   elaboration layer, `tankwave_circuit::outline`: this crate never reads
//!   the syntax tree);
//! - [`figures`]: the solve after a save (the one `run` does, stoppable)
//!   and its figures placed on the `analyze` and `require` lines;
//! - [`server`]: the message loop, the framing, and the background solves.
#![deny(missing_docs)]

pub mod document;
pub mod features;
pub mod figures;
pub mod position;
pub mod server;

pub use document::Document;
pub use server::{serve, Ended, ServeError, ServeParams, Server};
