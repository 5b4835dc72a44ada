//! tankwave-devices: element models written once against the charge-oriented
//! device contract ([`contract`]).
//!
//! This crate owns the equations of every element (resistor, capacitor,
//! inductor, coupling, sources and their waveforms, diode, bipolar transistor)
//! and the allocation of unknowns ([`instantiate`]). It must not assemble or
//! solve matrices: that belongs to the solver crate.
#![deny(missing_docs)]

pub mod bjt;
pub mod contract;
pub mod error;
pub mod waveform;
pub use contract::*;
pub use error::DeviceError;
