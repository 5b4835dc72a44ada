//! Harmonic balance (stub, replaced below).
use crate::steady::{PeriodicSolution, SteadyParams};
use crate::SolveError;
use tankwave_circuit::Circuit;
use tankwave_devices::DeviceSet;

/// Options of harmonic balance.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BalanceParams {}

/// Report of a harmonic-balance solve.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BalanceInfo {}

/// Periodic steady state by harmonic balance.
pub fn balance(
    _circuit: &Circuit,
    _devices: &DeviceSet,
    _params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    Err(SolveError::NotAvailable("harmonic balance".to_string()))
}
