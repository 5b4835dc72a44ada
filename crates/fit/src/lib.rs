//! tankwave-fit: bipolar transistor model parameters fitted to the curves a
//! data sheet gives (current gain, base–emitter voltage, junction
//! capacitances, transition frequency, saturation voltage).
//!
//! - [`curve`]: the CSV curve files, their columns and units, with every
//!   bad input reported with file and line;
//! - [`model`]: the model's value of each curve, from the equations of
//!   `tankwave_devices::bjt`;
//! - [`knob`]: the parameters a fit moves, their bounds and transform;
//! - [`mod@fit`]: the staged Levenberg–Marquardt fit and the flat directions;
//! - [`part`]: the `part` block written for a stage file;
//! - [`report`], [`plot`]: the fit report and the data-against-model plots;
//! - [`power`]: the fitted model checked against large-signal output power
//!   and efficiency in a test stage.
//!
//! Nothing here reads or writes files: the caller hands in the text of
//! each curve file and writes what comes back.
#![deny(missing_docs)]

pub mod curve;
pub mod error;
pub mod fit;
pub mod knob;
pub mod model;
pub mod part;
pub mod plot;
pub mod power;
pub mod report;

pub use curve::{Curve, CurveKind};
pub use error::FitError;
pub use fit::{fit, FitParams, FitResult};
