//! SVG plots of a stage and of a study, drawn with plotters' SVG backend.
//!
//! Every public function returns the SVG document as a `String` (the caller
//! writes files whole, see [`crate::files`]); none writes files or prints.
//! Each figure carries a title that says what it shows and which stage file
//! it came from, axis labels with units, and one `<g class="series">` group
//! per data series (with `data-label` naming it), so readers, tests and
//! style sheets can find the series. Series are told apart without colour:
//! the palette ([`series_style`], documented in docs/plots.md) varies
//! lightness strongly and adds dash patterns and marker shapes.
//!
//! Plots:
//! - [`period_plot`] / [`period_plots`]: one steady-state period of each
//!   transistor (v_ce, i_c, v_be, output voltage) with the conduction interval shaded;
//! - [`spectrum_plot`]: output harmonics in dBc against an emission mask;
//! - [`startup_plot`]: transient start-up of the output voltage with its
//!   per-period peak envelope;
//! - [`ac_plot`]: AC magnitude and phase;
//! - [`sweep_plot`]: a figure against a parameter, one curve per value of a second;
//! - [`histogram_plot`]: Monte Carlo histogram with the requirement limit;
//! - [`surface_plot`] / [`tuning_curve_plot`]: the tuning objective around the optimum;
//! - [`smith_plot`]: loads, contours and an optimum on a Smith chart (hand-written SVG);
//! - [`temperature_plot`]: device temperatures against time or against the
//!   round of the electrothermal iteration, with the ratings.
//!
//! Bad input (empty or non-finite data, an element that is not a transistor,
//! a solution of the wrong shape) gives a [`PlotError`], never a panic.

mod ac;
mod canvas;
mod heat;
mod period;
pub mod smith;
mod spectrum;
mod startup;
mod study;
mod surface;

pub use ac::ac_plot;
pub use canvas::{series_style, Marker, SeriesStyle, DISTINCT_STYLES, PALETTE};
pub use heat::{temperature_plot, TemperatureSeries};
pub use period::{conduction_intervals, period_plot, period_plots};
pub use smith::{smith_plot, Contour, SmithChart, SmithPoint};
pub use spectrum::{label_box, place_labels, spectrum_plot};
pub use startup::{
    peak_envelope, startup_plot, startup_plot_series, startup_settling, EnvelopePoint,
};
pub use study::{histogram_plot, sweep_plot, Curve, HistogramSpec, Limit, SweepCurves};
pub use surface::{surface_plot, tuning_curve_plot, Surface};

use thiserror::Error;

/// Options shared by every plot.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotParams {
    /// Name of the stage file (or study) the data came from, shown in every title.
    pub source: String,
    /// Width of the figure in pixels (default 900; at least 320 is used).
    pub width: u32,
    /// Conduction threshold as a fraction of the peak collector current, the
    /// same rule and default (0.05) as `tankwave_measure::MeasureParams`.
    pub conduction_threshold: f64,
}

impl Default for PlotParams {
    fn default() -> Self {
        Self {
            source: String::new(),
            width: 900,
            conduction_threshold: tankwave_measure::MeasureParams::default().conduction_threshold,
        }
    }
}

impl PlotParams {
    /// Parameters naming `source` in the titles, defaults otherwise.
    pub fn for_source(source: impl Into<String>) -> Self {
        Self {
            source: source.into(),
            ..Self::default()
        }
    }
}

/// Why a plot could not be drawn.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum PlotError {
    /// There is no data to plot.
    #[error("{what}: nothing to plot")]
    Empty {
        /// What was empty.
        what: String,
    },
    /// A value is NaN or infinite.
    #[error("{what}: value {value} at index {index} is not finite")]
    NotFinite {
        /// Which data.
        what: String,
        /// Index of the first bad value.
        index: usize,
        /// The value.
        value: f64,
    },
    /// A value is too large in magnitude to draw (beyond ±1e200).
    #[error("{what}: value {value:e} at index {index} is too large to plot")]
    TooLarge {
        /// Which data.
        what: String,
        /// Index of the first bad value.
        index: usize,
        /// The value.
        value: f64,
    },
    /// A logarithmic axis got a value that is not positive.
    #[error(
        "{what}: value {value} at index {index} is not positive, so it cannot go on a log axis"
    )]
    NotPositive {
        /// Which data.
        what: String,
        /// Index of the first bad value.
        index: usize,
        /// The value.
        value: f64,
    },
    /// Two inputs that must have the same length do not.
    #[error("{what}: expected {expected} values, found {found}")]
    Shape {
        /// Which data.
        what: String,
        /// Length expected.
        expected: usize,
        /// Length found.
        found: usize,
    },
    /// An element index outside the circuit.
    #[error("no element with index {index} (the circuit has {count})")]
    NoElement {
        /// The index asked for.
        index: usize,
        /// Elements in the circuit.
        count: usize,
    },
    /// The element is not a bipolar transistor.
    #[error("element {element} is a {kind}, not a bipolar transistor")]
    NotTransistor {
        /// Element name.
        element: String,
        /// Its statement keyword.
        kind: String,
    },
    /// A parameter of the plot itself is unusable.
    #[error("{what}: {why}")]
    BadParameter {
        /// Which parameter.
        what: String,
        /// Why.
        why: String,
    },
    /// The drawing library reported an error.
    #[error("drawing failed: {0}")]
    Draw(String),
}

/// Largest magnitude a plotted value may have (common practice: far beyond
/// any circuit quantity, far enough below f64::MAX that spans stay finite).
pub(crate) const MAX_MAGNITUDE: f64 = 1e200;

/// Check that every value is finite and of drawable magnitude.
pub(crate) fn check_finite(what: &str, v: &[f64]) -> Result<(), PlotError> {
    if let Some(index) = v.iter().position(|x| !x.is_finite()) {
        return Err(PlotError::NotFinite {
            what: what.to_string(),
            index,
            value: v.get(index).copied().unwrap_or(f64::NAN),
        });
    }
    if let Some(index) = v.iter().position(|x| x.abs() > MAX_MAGNITUDE) {
        return Err(PlotError::TooLarge {
            what: what.to_string(),
            index,
            value: v.get(index).copied().unwrap_or(f64::NAN),
        });
    }
    Ok(())
}

/// The title line: what, then the file.
pub(crate) fn title_of(what: &str, p: &PlotParams) -> String {
    if p.source.is_empty() {
        what.to_string()
    } else {
        format!("{what} — {}", p.source)
    }
}
