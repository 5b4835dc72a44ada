//! tankwave-design: design helpers for tuned HF bipolar power stages.
//!
//! This crate owns the closed-form synthesis a designer does before
//! simulating: the collector load line ([`loadline`]), lossless L, pi and T
//! matching networks ([`matching`]), Butterworth and Chebyshev low-pass
//! ladders from the published prototype values ([`lowpass`]), and feed-choke
//! and blocking-capacitor sizing ([`choke`]). Every network comes out as a
//! [`network::Network`] that can be analysed by chain-matrix arithmetic and
//! written as a stage-file fragment ready to paste.
//!
//! [`render`] writes each design and verification as text for people
//! (aligned tables, the fragment, the sources); the binary prints it.
//!
//! It must not run the simulator except to verify a design: [`verify`]
//! builds a circuit around a network (source with the design's source
//! resistance, load resistor) and checks it with tankwave's own AC analysis.
//!
//! Every function validates its inputs and returns a [`DesignError`] carrying
//! the offending numbers; no result ever holds a NaN.
#![deny(missing_docs)]

pub mod choke;
pub mod error;
pub mod loadline;
pub mod lowpass;
pub mod matching;
pub mod network;
pub mod render;
pub mod si;
pub mod verify;

pub use choke::{design_choke, ChokeDesign, ChokeParams};
pub use error::DesignError;
pub use loadline::{load_line, pulse_coefficients, LoadLine, LoadLineParams};
pub use lowpass::{
    attenuation_db, design_lowpass, prototype, FilterKind, FirstElement, HarmonicAttenuation,
    LowpassDesign, LowpassParams, Prototype,
};
pub use matching::{design_match, Absorption, ComplexValue, MatchDesign, MatchParams, MatchShape};
pub use network::{ElementStress, HarmonicGain, Naming, Network, NetworkElement, Part, Placement};
pub use render::{choke_text, loadline_text, lowpass_text, match_text, verification_text};
pub use si::format_si;
pub use verify::{
    circuit_for, fragment_harness, verify_fragment, verify_lowpass, verify_match, verify_network,
    Verification, VerifyParams, VerifyPoint,
};
