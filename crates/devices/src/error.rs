//! Typed errors of device construction.
//!
//! Devices are built once from an elaborated [`tankwave_circuit::Circuit`];
//! anything that would later produce a NaN or an undefined equation is refused
//! here with the offending numbers.

use thiserror::Error;

/// Why a device could not be built.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DeviceError {
    /// A parameter value is outside its valid range.
    #[error("element `{element}`: parameter `{param}` = {value} is invalid ({reason})")]
    BadParameter {
        /// Element (or model) name.
        element: String,
        /// Parameter name (stage-file spelling where there is one).
        param: &'static str,
        /// The value given.
        value: f64,
        /// What the valid range is.
        reason: &'static str,
    },
    /// A terminal or element reference points outside the circuit.
    #[error("element `{element}`: {what} index {index} does not exist (circuit has {available})")]
    BadReference {
        /// Element name.
        element: String,
        /// What was referenced (`node`, `element`, `model`).
        what: &'static str,
        /// The index found.
        index: usize,
        /// How many there are.
        available: usize,
    },
    /// An element refers to something of the wrong kind (e.g. a coupling to a resistor).
    #[error("element `{element}`: {reason}")]
    WrongKind {
        /// Element name.
        element: String,
        /// What is wrong.
        reason: String,
    },
    /// The element kind has no model in this build.
    #[error("element `{element}`: {kind} elements are not supported yet")]
    Unsupported {
        /// Element name.
        element: String,
        /// Statement keyword of the kind.
        kind: &'static str,
    },
}
