//! tankwave-devices: element models written once against the charge-oriented
//! device contract ([`contract`]).
//!
//! This crate owns the equations of every element (resistor, capacitor,
//! inductor, coupling, sources and their waveforms, diode, bipolar transistor)
//! and the allocation of unknowns ([`instantiate`]). It must not assemble or
//! solve matrices: that belongs to the solver crate.
//!
//! Conventions shared by every model (details in each module):
//! * unknowns are the node voltages first (in `circuit.nodes` order), then the
//!   extra unknowns allocated by [`instantiate`] in element order (branch
//!   currents of voltage sources and inductors, internal nodes of devices),
//!   named by [`names`] (`V[node]`, `I[element]`);
//! * `F(x,t) = i(x,t) + dq/dt = 0`, each node row the sum of currents leaving
//!   the node through the devices;
//! * source and branch sign conventions: see [`linear`].
//!
//! ```
//! // A source driving an RC: unknowns are the two node voltages, then the
//! // source's branch current.
//! let text = "voltage vs in gnd dc=5V\nresistor r1 in out 1kOhm\ncapacitor c1 out gnd 1nF\n";
//! let c = tankwave_circuit::load_str("rc.tank", text, &Default::default())
//!     .expect("a valid stage")
//!     .circuit;
//! let d = tankwave_devices::instantiate(&c).expect("devices");
//! assert_eq!(d.n_unknowns, 3);
//! assert!(d.names.iter().any(|n| n == "I[vs]"));
//! ```
#![deny(missing_docs)]

pub mod bjt;
pub mod contract;
pub mod diode;
pub mod error;
pub mod figure;
pub mod instance;
pub mod junction;
pub mod linear;
pub mod measured;
pub mod names;
pub mod waveform;
pub use contract::*;
pub use error::DeviceError;
pub use figure::OpFigure;
pub use instance::{instantiate, instantiate_at};
