//! tankwave-circuit: elaboration of a parsed stage file into a checked circuit.
#![deny(missing_docs)]

pub mod builtin;
pub mod ir;
pub use ir::*;
