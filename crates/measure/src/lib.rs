//! tankwave-measure: power-stage figures, emission masks and requirement
//! verdicts from one period of a periodic steady state.
//!
//! This crate owns the measurement side of the data flow: it takes the
//! sampled period the solver produced (as a [`PeriodData`], a plain view the
//! CLI fills; this crate never depends on the solver), turns it into
//! [`Metrics`] (output power per harmonic, supply power, efficiency, PAE,
//! gain, drive impedance and VSWR, transistor figures, component stress),
//! forms the two-tone figures of a multi-tone solve ([`two_tone_metrics`]),
//! checks harmonics against emission masks ([`evaluate_mask`]), measures a
//! keyed carrier's edges, sideband spectrum and occupied bandwidth from its
//! sampled complex envelope ([`keying`]) and checks every `require`
//! statement ([`evaluate`]). It must not solve circuits and
//! does no formatting: verdicts carry typed values (a number and its
//! [`Unit`]) that the report writes. Every figure is declared once, in the
//! catalogue (`tankwave_circuit::figure_catalogue!`, computed here in
//! [`figure`]).
//! Every figure is defined in docs/measurements.md; masks in docs/masks.md.
//!
//! ```
//! use tankwave_measure::{spectrum, units};
//! // One period of 2 + 3·cos(ωt) + 0.5·cos(2ωt), 64 samples.
//! let x: Vec<f64> = (0..64)
//!     .map(|n| {
//!         let t = 2.0 * std::f64::consts::PI * n as f64 / 64.0;
//!         2.0 + 3.0 * t.cos() + 0.5 * (2.0 * t).cos()
//!     })
//!     .collect();
//! let s = spectrum(&x, 4).expect("a spectrum");
//! assert!((s.dc() - 2.0).abs() < 1e-12);
//! assert!((s.phasor(1).norm() - 3.0).abs() < 1e-12);
//! // Levels: 1 W is 30 dBm; the second harmonic is 20·log10(0.5/3) dBc.
//! assert!((units::dbm(1.0) - 30.0).abs() < 1e-12);
//! let h2 = 20.0 * (s.phasor(2).norm() / s.phasor(1).norm()).log10();
//! assert!((h2 + 15.563).abs() < 1e-3);
//! ```
#![deny(missing_docs)]

pub mod base_return;
pub mod error;
pub mod figure;
pub mod keying;
pub mod load;
pub mod mask;
pub mod metrics;
pub mod period;
pub mod spectrum;
pub mod twotone;
pub mod units;
pub mod verdict;

pub use error::MeasureError;
pub use figure::{About, Figure};
pub use keying::{
    necessary_bandwidth_hz, sideband_margin, try_keying_edges, try_sideband_spectrum, KeyingEdges,
    KeyingError, OccupiedBand, SidebandMargin, SidebandMask, SidebandParams, SidebandSpectrum,
    SpectrumWindow,
};
pub use load::{collector_loads, CollectorLoad, HarmonicLoad, LOAD_HARMONICS};
pub use mask::{evaluate_mask, HarmonicRow, MaskError, MaskEvaluation};
pub use metrics::{
    conduction, conduction_angle_deg, conduction_intervals, measure, Conduction, DriveMetrics,
    GainBasis, HarmonicPower, Impedance, KeyingFigures, MeasureParams, Metrics, Note,
    OutputMetrics, StressQuantity, StressRow, SupplyPower, TransistorMetrics,
};
pub use period::{average_absorbed, PeriodData};
pub use spectrum::{spectrum, Spectrum};
pub use twotone::{
    sweep_levels, two_tone_metrics, ImdRow, Side, ToneError, ToneLevel, ToneView, TwoToneMetrics,
};
pub use verdict::{evaluate, evaluate_one, metric_unit, Unit, Verdict};
