//! tankwave-solve: the circuit solver core.
//!
//! Owns MNA assembly, Newton–Raphson with device limiting and stepping
//! fallbacks, and the analyses: operating point ([`operating_point`]),
//! transient ([`transient()`]), small-signal AC ([`ac()`]) and periodic steady
//! state ([`steady()`]: harmonic balance, shooting and settle).
//! Every analysis reaches the circuit only through
//! [`tankwave_devices::DeviceSet`] and the charge-oriented device contract:
//! no analysis holds its own copy of a device equation. It never prints or
//! formats reports; errors are typed ([`SolveError`]) and say what failed and
//! where. See docs/analyses.md for methods, defaults and tolerances.
//!
//! ```
//! // A sine into an RC low-pass, solved for its periodic steady state.
//! let text = "voltage vs in gnd wave=sine(amp=1V, freq=1MHz)\n\
//!             resistor r1 in out 100Ohm\n\
//!             capacitor c1 out gnd 1nF\n\
//!             analyze steady freq=1MHz harmonics=4\n";
//! let c = tankwave_circuit::load_str("rc.tank", text, &Default::default())
//!     .expect("a valid stage")
//!     .circuit;
//! let d = tankwave_devices::instantiate(&c).expect("devices");
//! let p = c
//!     .analyses
//!     .iter()
//!     .find_map(tankwave_solve::SteadyParams::from_analysis)
//!     .expect("an analyze steady");
//! let s = tankwave_solve::steady(&c, &d, &p).expect("solved");
//! assert!(s.info.residual <= s.info.tolerance);
//! // |H| = 1/√(1 + (ωRC)²) at 1 MHz, RC = 100 ns (common practice): the output
//! // peaks near 0.85 V; 256 steps per period leave an error near 5e-5 of it.
//! let k = d.names.iter().position(|n| n == "V[out]").unwrap();
//! let peak = s.x[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
//! let h = 1.0 / (1.0 + (2.0 * std::f64::consts::PI * 1e6 * 100e-9f64).powi(2)).sqrt();
//! assert!((peak - h).abs() < 1e-3);
//! ```
#![deny(missing_docs)]
// Negated comparisons are deliberate: `!(x <= tol)` is true for NaN, so a
// non-finite value is never taken as converged. Index loops walk several
// parallel arrays (x, residual, Jacobian rows) at once.
#![allow(clippy::neg_cmp_op_on_partial_ord, clippy::needless_range_loop)]

pub mod ac;
mod assemble;
pub mod error;
pub mod krylov;
pub mod linalg;
mod newton;
pub mod op;
pub mod periodic;
pub use periodic::floquet;
pub mod singular;
mod spectral;
pub mod thermal;
pub mod transient;

pub use ac::{ac, impedance_without, AcParams, AcResult};
pub use error::{SolveError, When};
pub use linalg::LinearSolver;
pub use newton::Tolerances;
pub use op::{operating_point, DeviceOp, NewtonInfo, OpParams, OpResult, Strategy};
pub use periodic::{
    balance, envelope, multitone, settle, shooting, steady, terminal_currents, transport_currents,
    BalanceInfo, BalanceParams, EnvelopeInfo, EnvelopeParams, EnvelopeSolution, NetworkForm,
    PeriodicSolution, SettleParams, ShootingInfo, ShootingMode, ShootingParams, SlowMethod,
    SteadyInfo, SteadyParams, ToneDrive, ToneInfo, ToneParams, ToneSolution,
};
pub use thermal::{
    heat_run, CauerLadder, FosterLadder, Heating, Keying, Modes, ThermalError, ThermalLink,
    ThermalNetwork,
};
pub use transient::{
    default_rel_tolerance, transient, transient_observed, TransientInfo, TransientParams,
    TransientResult,
};
