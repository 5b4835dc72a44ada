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
//!
//! ```
//! use tankwave_design::{load_line, LoadLineParams};
//! // 10 W from 13.8 V with 1 V saturation, class B (180° conduction):
//! // R = (13.8 − 1)² / (2 · 10 W) = 8.19 Ω, ideal efficiency π/4 × 12.8/13.8.
//! let l = load_line(13.8, 10.0, 1.0, &LoadLineParams::default()).unwrap();
//! assert!((l.resistance_ohm - 8.192).abs() < 1e-9);
//! let eta = std::f64::consts::PI / 4.0 * 12.8 / 13.8;
//! assert!((l.efficiency - eta).abs() < 1e-9);
//! ```
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
