//! What can go wrong in a fit, with the numbers that explain it.

/// Errors of reading curves and fitting them. Every one is a problem with
/// the input (the command exits 2): nothing is written.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// A curve file that cannot be read as a curve.
    #[error("{file}:{line}: {msg}")]
    Input {
        /// File name as given.
        file: String,
        /// Line in the file (1-based).
        line: usize,
        /// What is wrong.
        msg: String,
    },
    /// No curve was given at all.
    #[error("no curves given: name at least one curve file")]
    NoCurves,
    /// A curve the model cannot follow: its residual stays above the limit.
    #[error(
        "{file}:{line}: the {curve} curve cannot be fitted: RMS error {rms_pct:.1} % is above the {limit_pct:.0} % limit (worst point here, {worst_pct:.1} %); check the units and that the points belong to one device"
    )]
    CannotFit {
        /// File of the curve.
        file: String,
        /// Line of the worst point.
        line: usize,
        /// Curve kind word.
        curve: &'static str,
        /// RMS relative error, %.
        rms_pct: f64,
        /// Worst relative error, %.
        worst_pct: f64,
        /// The limit, %.
        limit_pct: f64,
    },
    /// The model could not be evaluated at a point even after fitting.
    #[error("{file}:{line}: the model reaches no bias for this point ({why})")]
    NoBias {
        /// File of the curve.
        file: String,
        /// Line of the point.
        line: usize,
        /// What the bias search found.
        why: String,
    },
}
