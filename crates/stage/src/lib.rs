//! tankwave-stage: one stage file from text to figures.
//!
//! The crates before this one each do one step (parse and elaborate, build
//! the element models, solve, measure, plan studies). This crate wires them
//! for a stage, once, so that the command line, the benches, the fuzz target
//! and the tests all run the same pipeline:
//!
//! - [`load()`]: the stage file (or text, via [`load_source`]) read with
//!   its includes and elaborated with the `--set` overrides into a checked
//!   circuit, keeping the warnings ([`Stage`]);
//! - [`solve()`]: every analysis the file declares, or only what its
//!   requirements need ([`Scope`]), the steady state optionally
//!   warm-started, measured ([`measure()`]) and its requirements evaluated,
//!   into [`StageResults`]; [`Caps`] bound the work for unchecked input;
//! - [`mask_evaluations`]: the emission masks the requirements name;
//! - [`mismatch`]: the output load moved around circles of constant VSWR,
//!   each load solved with a warm start, the worst case of each requirement;
//! - [`scale_drive`]: the drive of a reduced-drive search;
//! - [`variant`]: the per-variant work of studies and tuning runs, and
//!   [`record`]: the layout of a study record.
//!
//! Every failure is a [`StageError`] that keeps what the failing layer
//! reported (diagnostics with their sources, device, solver and
//! measurement errors); [`StageError::is_input`] tells bad input from a
//! solver failure. Nothing here prints or formats for people: that is the
//! report crate and the command line.
//!
//! ```
//! use tankwave_circuit::{Overrides, StageSource};
//! use tankwave_stage::{load_source, solve, Scope, SolveOptions};
//!
//! // A 10 V sine behind 50 Ω into a 50 Ω load: half the source voltage
//! // across the load, so 5 V peak and (5 V)² / (2 · 50 Ω) = 0.25 W.
//! let text = "voltage vdrv src gnd wave=sine(amp=10V, freq=1MHz) internal=50Ohm\n\
//!             resistor rload src gnd 50Ohm\noutput rload\ninput vdrv\n\
//!             analyze steady freq=1MHz harmonics=4\nrequire pout >= 0.2W\n";
//! let stage = load_source(StageSource::from_text("t.tank", text), &Overrides::default())?;
//! let r = solve(&stage.circuit, &SolveOptions::scope(Scope::Requirements))?;
//! let pout = r.steady.as_ref().and_then(|s| s.metrics.output.as_ref()).map(|o| o.p1_w);
//! assert!((pout.unwrap() - 0.25).abs() < 1e-3);
//! assert!(r.verdicts.iter().all(|v| v.pass));
//! # Ok::<(), tankwave_stage::StageError>(())
//! ```
#![deny(missing_docs)]

pub mod drive;
pub mod error;
pub mod heat;
pub mod keying;
pub mod load;
pub mod loadpull;
pub mod masks;
pub mod mismatch;
pub mod record;
pub mod solve;
pub mod twotone;
pub mod variant;

pub use drive::{apply_context, scale_drive, DriveError};
pub use error::StageError;
pub use load::{input_files, load, load_source, Stage};
pub use masks::{mask_evaluations, MaskEvaluations, MaskFailure};
pub use solve::{
    collector_loads, measure, solve, Caps, Observer, Scope, SolveOptions, StageResults,
    SteadyOutcome,
};
pub use tankwave_circuit::StageSource;
pub use variant::{solve_variant, study_outcome, tune_figures, VariantSolution};
