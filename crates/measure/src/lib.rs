//! tankwave-measure: power-stage figures, emission masks and requirement
//! verdicts from one period of a periodic steady state.
//!
//! This crate owns the measurement side of the data flow: it takes the
//! sampled period the solver produced (as a [`PeriodData`], a plain view the
//! CLI fills; this crate never depends on the solver), turns it into
//! [`Metrics`] (output power per harmonic, supply power, efficiency, PAE,
//! gain, drive impedance and VSWR, transistor figures, component stress),
//! checks harmonics against emission masks ([`evaluate_mask`]) and checks
//! every `require` statement ([`evaluate`]). It must not solve circuits and
//! does no formatting beyond short human-readable value strings in verdicts.
//! Every figure is defined in docs/measurements.md; masks in docs/masks.md.
#![deny(missing_docs)]

pub mod error;
pub mod mask;
pub mod metrics;
pub mod period;
pub mod spectrum;
pub mod units;
pub mod verdict;

pub use error::MeasureError;
pub use mask::{evaluate_mask, HarmonicRow, MaskError, MaskEvaluation};
pub use metrics::{
    conduction_angle_deg, conduction_intervals, measure, DriveMetrics, GainBasis, HarmonicPower,
    Impedance, MeasureParams, Metrics, Note, OutputMetrics, StressQuantity, StressRow, SupplyPower,
    TransistorMetrics,
};
pub use period::PeriodData;
pub use spectrum::{spectrum, Spectrum};
pub use verdict::{evaluate, evaluate_one, Unit, Verdict};
