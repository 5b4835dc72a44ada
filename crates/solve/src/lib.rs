//! tankwave-solve: the circuit solver core.
//!
//! Owns MNA assembly, Newton–Raphson with device limiting and stepping
//! fallbacks, and the analyses: operating point ([`operating_point`]),
//! transient ([`transient()`]), small-signal AC ([`ac()`]) and periodic steady
//! state ([`steady()`]: shooting, settle, and the hook for harmonic balance).
//! Every analysis reaches the circuit only through
//! [`tankwave_devices::DeviceSet`] and the charge-oriented device contract:
//! no analysis holds its own copy of a device equation. It never prints or
//! formats reports; errors are typed ([`SolveError`]) and say what failed and
//! where. See docs/analyses.md for methods, defaults and tolerances.
#![deny(missing_docs)]
// Negated comparisons are deliberate: `!(x <= tol)` is true for NaN, so a
// non-finite value is never taken as converged. Index loops walk several
// parallel arrays (x, residual, Jacobian rows) at once.
#![allow(clippy::neg_cmp_op_on_partial_ord, clippy::needless_range_loop)]

pub mod ac;
pub mod balance;
pub mod error;
pub mod linalg;
mod newton;
pub mod op;
pub mod shooting;
mod spectral;
pub mod steady;
pub mod transient;

pub use ac::{ac, AcParams, AcResult};
pub use balance::{balance, BalanceInfo, BalanceParams};
pub use error::{SolveError, When};
pub use linalg::LinearSolver;
pub use newton::Tolerances;
pub use op::{operating_point, DeviceOp, NewtonInfo, OpParams, OpResult, Strategy};
pub use shooting::shooting;
pub use steady::{
    settle, steady, terminal_currents, PeriodicSolution, SettleParams, ShootingInfo,
    ShootingParams, SteadyInfo, SteadyParams,
};
pub use transient::{transient, TransientInfo, TransientParams, TransientResult};
