//! tankwave-circuit: elaboration of a parsed stage file into a checked circuit.
//!
//! Owns the meaning of the stage-file language: parameter evaluation with
//! overrides, node numbering, part binding (the part parameters are declared
//! once, in `models`), value and unit checks, masks, requirements, study
//! statements and topology checks; and the `upgrade` of files written in the
//! retired spellings. It does not parse
//! text (that is tankwave-netlist) and does not solve anything.
//!
//! ```
//! use tankwave_circuit::{load_str, Overrides};
//! let text = "voltage v1 a gnd dc=1V\nresistor r1 a gnd 50Ohm\n";
//! let e = load_str("t.tank", text, &Overrides::default()).unwrap();
//! assert_eq!(e.circuit.elements.len(), 2);
//! ```
#![deny(missing_docs)]

pub mod bounds;
pub mod builtin;
pub mod elaborate;
pub mod figure;
pub mod handle;
pub mod ir;
pub mod keying;
pub mod models;
pub mod options;
pub mod outline;
pub mod param_units;
pub mod rational;
pub mod si;
pub mod source;
mod topology;
pub mod touchstone;
pub mod unit;
pub mod upgrade;

pub use elaborate::{elaborate, load_file, load_str, Elaborated, LoadError};
pub use figure::{About, Figure};
pub use ir::*;
pub use source::StageSource;
/// Escaping of text for the terminal (control characters, bidi overrides),
/// shared with later layers so that they never need the parser crate.
pub use tankwave_netlist::escape;
/// The suffixes (unit, or SI prefix and unit) a number may carry, from the
/// parser's one table; re-exported for completion.
pub use tankwave_netlist::units::suffix_spellings;
/// The words of the language (statement keywords, element kinds, waveforms,
/// part kinds), declared once in the parser; re-exported for completion.
pub use tankwave_netlist::vocab;
/// The resource limits on untrusted input (how many diagnostics are shown, …).
pub use tankwave_netlist::LIMITS;
pub use tankwave_netlist::{parse_file, parse_str, Diagnostic, Parsed, Severity, SourceMap};
/// Places in the source (a file and a byte range), for later layers that
/// point into the text (diagnostics, the editor server's outline).
pub use tankwave_netlist::{FileId, Span};
pub use unit::Unit;
