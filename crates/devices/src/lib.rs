//! tankwave-devices: element models written once against the charge-oriented
//! device contract ([`contract`]).
#![deny(missing_docs)]

pub mod bjt;
pub mod contract;
pub use contract::*;
