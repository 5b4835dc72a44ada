//! tankwave-netlist (placeholder overview).
#![deny(missing_docs)]
