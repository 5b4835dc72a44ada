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
    #[error(
        "steady state: shooting failed ({first}); harmonic balance failed too ({second}); \
         method=settle shows whether the stage reaches a periodic state at all"
    )]
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
    #[error("{analysis}: singular matrix{when}: no pivot for {unknown}: {cause}")]
    Singular {
        /// Which analysis failed.
        analysis: String,
        /// Name of the unknown whose column has no pivot.
        unknown: String,
        /// What the numbers point to ([`crate::singular`]).
        cause: String,
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
         (tolerance {tolerance:.3e}) in {unknown}{}",
        not_settled_diagnosis(*repeats_every, *relative_change)
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
        /// When the last periods repeat every `m` > 1 periods (within 100
        /// settle tolerances) though not every period: that `m`.
        repeats_every: Option<usize>,
        /// That change against the unknown's peak-to-peak range plus peak
        /// over the last period.
        relative_change: f64,
    },
    /// A steady state that Newton found but that is not a stable periodic
    /// orbit (see [`crate::floquet`]): never reported as a result.
    #[error("{analysis}: no verified periodic state: {reason}; method=settle shows what the stage does instead")]
    NotPeriodic {
        /// The method that found the orbit.
        analysis: String,
        /// Why it was refused, with the numbers.
        reason: String,
    },
    /// Invalid analysis parameters.
    #[error("invalid analysis parameters: {0}")]
    BadParams(String),
    /// The requested method is not available in this build.
    #[error("{0} is not available")]
    NotAvailable(String),
}

/// Above this relative period-to-period change after the whole settle run,
/// the state is called not periodic rather than slow (a slowly settling
/// state changes by far less than a percent per period by then).
const NOT_PERIODIC_CHANGE: f64 = 1e-2;

/// What a settle failure says about the stage.
fn not_settled_diagnosis(repeats_every: Option<usize>, relative_change: f64) -> String {
    match repeats_every {
        Some(m) => format!(
            "; the last periods repeat every {m} periods instead: the stage is not periodic at \
             the drive frequency but has a subharmonic at 1/{m} of it (a parametric or \
             parasitic oscillation)"
        ),
        None if relative_change > NOT_PERIODIC_CHANGE => format!(
            "; that is {:.0} % of its size over a period (peak-to-peak plus peak): the stage is not periodic at the drive frequency \
             (a self-oscillation or an irregular state) rather than slow to settle",
            100.0 * relative_change
        ),
        None => String::new(),
    }
}
