//! Why a stage gave no results: [`StageError`] keeps what each layer
//! reported (the diagnostics with their sources, the device, solver and
//! measurement errors) as typed values, so that the caller can render them
//! and choose an exit code from [`StageError::is_input`].

use std::sync::Arc;

use tankwave_circuit::{Diagnostic, SourceMap};
use tankwave_devices::DeviceError;
use tankwave_measure::MeasureError;
use tankwave_solve::SolveError;

/// Why a stage file (or a variant of it) produced no results.
#[derive(Debug, thiserror::Error)]
pub enum StageError {
    /// The file has errors: every diagnostic (errors and warnings, in file
    /// order) and the sources to render them with.
    #[error("does not elaborate: {}", first_error(diagnostics))]
    Input {
        /// Every diagnostic of parsing and elaboration.
        diagnostics: Vec<Diagnostic>,
        /// The texts of the files read.
        sources: Arc<SourceMap>,
    },
    /// The file read cleanly but holds no statement (empty, blank or only comments).
    #[error("the file holds no statements (it is empty or only comments)")]
    Blank,
    /// The file has `require` statements but nothing to measure them on.
    #[error(
        "the file has `require` statements but no `analyze steady`: requirements are \
         measured on the periodic steady state"
    )]
    RequirementsWithoutSteady,
    /// A variant of a study or tuning run needs a steady state the file does not ask for.
    #[error("the file has no `analyze steady`")]
    NoSteady,
    /// The drive of a reduced-drive search could not be scaled.
    #[error(transparent)]
    Drive(#[from] crate::drive::DriveError),
    /// The element models could not be instantiated.
    #[error("cannot build the devices: {0}")]
    Devices(#[source] DeviceError),
    /// An analysis failed.
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// The steady state solved but could not be measured.
    #[error("measuring the steady state: {0}")]
    Measure(#[source] MeasureError),
    /// A mismatch sweep cannot be set up for this stage (no output
    /// resistor, a bad circle).
    #[error("mismatch sweep: {0}")]
    Mismatch(String),
    /// A load-pull cannot be set up for this stage (the transistor named
    /// is not a bjt, a grid point with no load to realise).
    #[error("load-pull: {0}")]
    LoadPull(String),
    /// The caller stopped the solve ([`crate::SolveOptions::cancel`]) before it ended.
    #[error("the solve was stopped before it ended")]
    Cancelled,
    /// `analyze heat` cannot build its thermal network from what the file
    /// gives (a missing thermal resistance or heat capacity).
    #[error("analyze heat: {what}")]
    HeatSetup {
        /// What is missing or wrong.
        what: String,
    },
    /// The electrothermal iteration failed without a runaway.
    #[error("analyze heat: {what}")]
    Heat {
        /// What failed.
        what: String,
    },
    /// Thermal runaway: no self-consistent temperature below the junction
    /// limit, or a heat feedback loop gain of 1 or more.
    #[error(
        "thermal runaway at {element}: {why}; there the junction is at {:.1} °C and \
         dissipates {dissipation_w:.3} W (loop gain {loop_gain:.2}); {trail}",
        temperature_k - 273.15
    )]
    Runaway {
        /// The hottest transistor.
        element: String,
        /// Its junction temperature where the runaway is found, K.
        temperature_k: f64,
        /// Its dissipation there, W.
        dissipation_w: f64,
        /// The loop gain of the heat feedback there.
        loop_gain: f64,
        /// Why this is a runaway.
        why: String,
        /// The rounds of the iteration up to the runaway.
        trail: Box<crate::heat::RunawayTrail>,
    },
    /// A two-tone test cannot be set up or measured for this stage.
    #[error("two-tone test: {0}")]
    TwoTone(String),
    /// A keying cannot be set up or measured for this stage.
    #[error("keying: {0}")]
    Keying(String),
}

impl StageError {
    /// Whether the input is at fault (the file, or what it asks for) rather
    /// than the solver: the command line exits 2 for these, 3 for the others.
    pub fn is_input(&self) -> bool {
        matches!(
            self,
            StageError::Input { .. }
                | StageError::Blank
                | StageError::RequirementsWithoutSteady
                | StageError::NoSteady
                | StageError::Drive(_)
                | StageError::Mismatch(_)
                | StageError::LoadPull(_)
                | StageError::HeatSetup { .. }
                | StageError::TwoTone(_)
                | StageError::Keying(_)
        )
    }
}

/// The message of the first error among `d` ("error" if none is marked so).
fn first_error(d: &[Diagnostic]) -> &str {
    d.iter()
        .find(|x| x.is_error())
        .map(|x| x.message.as_str())
        .unwrap_or("error")
}
