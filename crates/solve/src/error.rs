//! Typed errors of every analysis: what failed and where (unknown, time,
//! iteration, the numbers that explain it).

use std::fmt;

/// An optional simulation time, shown as ` at t = … s` when present.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct When(pub Option<f64>);

impl fmt::Display for When {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Some(t) => write!(f, " at t = {t:.6e} s"),
            None => Ok(()),
        }
    }
}

/// Everything a solver can report instead of a result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    /// Both steady-state methods of `method=auto` failed.
    #[error("steady state: shooting failed ({first}); harmonic balance failed too ({second})")]
    BothFailed {
        /// The shooting error.
        first: Box<SolveError>,
        /// The harmonic-balance error.
        second: Box<SolveError>,
    },
    /// Newton did not converge within its iteration limit.
    #[error(
        "{analysis}: Newton did not converge in {iterations} iterations{when}; \
         largest residual {residual:.3e} {unit} in the equation of {unknown}"
    )]
    NoConvergence {
        /// Which analysis (and strategy) failed.
        analysis: String,
        /// Name of the unknown whose equation has the largest scaled residual.
        unknown: String,
        /// Iterations spent.
        iterations: usize,
        /// That residual, in `unit`.
        residual: f64,
        /// `A` for a node equation, `V` for a branch equation.
        unit: &'static str,
        /// Simulation time, if any.
        when: When,
    },
    /// Newton's residual is within tolerance but the iteration did not
    /// settle: its updates stay large (they oscillate) or a device keeps
    /// limiting a junction step.
    #[error(
        "{analysis}: Newton did not converge in {iterations} iterations{when}; \
         the residual is within tolerance but {reason}"
    )]
    NewtonStalled {
        /// Which analysis failed.
        analysis: String,
        /// Iterations spent.
        iterations: usize,
        /// What kept it from stopping, with the unknown and the numbers.
        reason: String,
        /// Simulation time, if any.
        when: When,
    },
    /// The Jacobian has no usable pivot.
    #[error("{analysis}: singular matrix{when}: no pivot for {unknown} (a floating node or a loop of voltage sources and inductors?)")]
    Singular {
        /// Which analysis failed.
        analysis: String,
        /// Name of the unknown whose column has no pivot.
        unknown: String,
        /// Simulation time, if any.
        when: When,
    },
    /// A NaN or infinity appeared.
    #[error("{analysis}: non-finite value in {unknown}{when}")]
    NonFinite {
        /// Which analysis failed.
        analysis: String,
        /// The unknown (or quantity) that went non-finite.
        unknown: String,
        /// Simulation time, if any.
        when: When,
    },
    /// The transient step fell below its minimum.
    #[error(
        "transient: time step {step:.3e} s fell below the minimum {min_step:.3e} s at t = {time:.6e} s \
         ({reason}, worst unknown {unknown})"
    )]
    StepTooSmall {
        /// Time reached.
        time: f64,
        /// The step that was about to be tried.
        step: f64,
        /// The minimum step.
        min_step: f64,
        /// Why the steps were cut (Newton failure or truncation error).
        reason: String,
        /// The unknown most responsible.
        unknown: String,
    },
    /// A periodic steady state by plain transient did not settle.
    #[error(
        "settle: not settled after {periods} periods; period-to-period change {change:.3e} \
         (tolerance {tolerance:.3e}) in {unknown}"
    )]
    NotSettled {
        /// Periods simulated.
        periods: usize,
        /// The last period-to-period change of the worst unknown (its units).
        change: f64,
        /// Its tolerance.
        tolerance: f64,
        /// The worst unknown.
        unknown: String,
    },
    /// Invalid analysis parameters.
    #[error("invalid analysis parameters: {0}")]
    BadParams(String),
    /// The requested method is not available in this build.
    #[error("{0} is not available")]
    NotAvailable(String),
}
