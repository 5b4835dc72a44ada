//! Periodic steady state: the types every steady method shares, the
//! dispatcher [`steady`] and the time origin of the period (`start_time`).
//!
//! Every method produces a [`PeriodicSolution`]: each unknown sampled at
//! `N` uniform points of one period `T = 1/freq`, `x[k][n] = x_k(n·T/N)`,
//! plus the current into every terminal of every element over the same
//! samples. One file per part, no file importing from a sibling that
//! imports it:
//! - [`sample`]: the one terminal-current sampler, with the derivative rule
//!   as its parameter, and the transport currents (imports no sibling);
//! - [`mod@balance`]: harmonic balance (imports `sample`);
//! - [`mod@envelope`]: envelope following, harmonic balance at every step of
//!   a slow time (imports `balance`);
//! - [`mod@multitone`]: harmonic balance under two to four tones, by
//!   artificial frequency mapping onto the balance machinery (imports `balance`);
//! - [`mod@shooting`]: Newton on the state at the period start; one period
//!   with its monodromy matrix `Φ = ∂x(T)/∂x₀` is `shooting::integrate_period`
//!   (crate-visible, for checks of the orbit's multipliers; imports `sample`);
//! - [`mod@settle`]: plain transient until one period repeats the previous one
//!   (imports `sample`);
//! - [`accuracy`]: the accuracy target of `method=auto` and the error
//!   estimate from two grids that auto refines against (imports `floor`).

pub mod accuracy;
pub mod balance;
pub mod envelope;
mod floor;
pub mod floquet;
pub mod multitone;
pub mod sample;
pub mod settle;
pub mod shooting;

pub use accuracy::{AccuracyEstimate, AccuracyParams};
pub use balance::{balance, BalanceInfo, BalanceParams, NetworkForm};
pub use envelope::{envelope, EnvelopeInfo, EnvelopeParams, EnvelopeSolution, SlowMethod};
pub use multitone::{multitone, Product, ToneDrive, ToneInfo, ToneParams, ToneSolution};
pub use sample::{terminal_currents, transport_currents};
pub use settle::settle;
pub use shooting::{shooting, ShootingMode, MATRIX_FREE_FROM};

use crate::linalg::LinearSolver;
use crate::newton::Tolerances;
use crate::SolveError;
use tankwave_circuit::ir::{ElementKind, Shape};
use tankwave_circuit::{Analysis, Circuit, ElementId, SteadyMethod, Terminal};
use tankwave_devices::{DeviceSet, UnknownId};

/// A periodic steady state sampled over one period.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodicSolution {
    /// Fundamental frequency, Hz.
    pub freq: f64,
    /// Number of harmonics K the solution is meant to carry.
    pub harmonics: usize,
    /// Samples per period N (a power of two, N > 2K).
    pub samples_per_period: usize,
    /// `x[unknown][n]`: value at `t = n·T/N` over one period.
    pub x: Vec<Vec<f64>>,
    /// `[element index in circuit.elements][terminal][n]`: current INTO the
    /// element at that terminal, `i + dq/dt` from the element's devices (the
    /// derivative taken spectrally over the period for harmonic balance, by the
    /// integration formula for shooting and settle). Empty for couplings.
    pub terminal_currents: Vec<Vec<Vec<f64>>>,
    /// `[element index][n]`: the intrinsic transport current of an element
    /// whose device has one ([`tankwave_devices::Device::transport_current`],
    /// a bipolar transistor's collector transport current), A; `None` for the
    /// others. See [`transport_currents`].
    pub transport_currents: Vec<Option<Vec<f64>>>,
    /// How it was obtained.
    pub info: SteadyInfo,
}

impl PeriodicSolution {
    /// Period, s.
    pub fn period(&self) -> f64 {
        1.0 / self.freq
    }
    /// Sample times `n·T/N`.
    pub fn times(&self) -> Vec<f64> {
        let n = self.samples_per_period;
        (0..n).map(|k| k as f64 / (n as f64 * self.freq)).collect()
    }
    /// The period of unknown `u` (empty if `u` is not of this solution).
    pub fn wave(&self, u: UnknownId) -> &[f64] {
        self.x.get(u.index()).map(|v| v.as_slice()).unwrap_or(&[])
    }
    /// The current into terminal `t` over the period, if the solution has it.
    pub fn terminal_current(&self, t: Terminal) -> Option<&[f64]> {
        self.terminal_currents
            .get(t.element().index())?
            .get(t.index())
            .map(|v| v.as_slice())
    }
    /// The transport current of element `e` over the period, if it has one.
    pub fn transport_current(&self, e: ElementId) -> Option<&[f64]> {
        self.transport_currents.get(e.index())?.as_deref()
    }
}

/// Report of a steady-state solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyInfo {
    /// Method that produced the solution.
    pub method: SteadyMethod,
    /// Method tried first that failed, if any.
    pub fell_back_from: Option<SteadyMethod>,
    /// Newton iterations (balance), simulated periods (settle), or, for
    /// shooting, the periods integrated by the iteration on both grids (Newton
    /// and chord steps; the warm-up periods are not counted).
    pub iterations: usize,
    /// Final residual, one measure for every method: the largest error of
    /// the method's convergence test relative to the size of what it tests
    /// (a dimensionless fraction; each unknown's or row's absolute floor,
    /// `voltage_floor` or `current_floor`, is counted as part of that size).
    /// For shooting and settle the error is the change of each unknown over
    /// one period, against its peak over the period (shooting) or its
    /// peak-to-peak range plus peak (settle); for harmonic balance it is the
    /// residual of each equation at each harmonic, against the largest term
    /// of that equation. Converged means `residual ≤ tolerance`.
    pub residual: f64,
    /// The relative tolerance the residual was held to (the method's
    /// `rel_tolerance`: 1e-7 shooting, 1e-6 settle and harmonic balance by default).
    pub tolerance: f64,
    /// Order of the Newton system solved (0 for settle).
    pub system_size: usize,
    /// Harmonic-balance details (harmonics used, continuation steps, …); `None` for other methods.
    pub balance: Option<BalanceInfo>,
    /// Shooting details (periods per grid, monodromy matrices); `None` for other methods.
    pub shooting: Option<ShootingInfo>,
    /// The Floquet multipliers that verified the orbit ([`floquet`]);
    /// `None` before verification, and for a stage with a measured network,
    /// which harmonic balance solves unverified (the check integrates in
    /// time; reports say the orbit's stability was not verified).
    pub floquet: Option<floquet::FloquetInfo>,
    /// The numerical floor, per unknown (`[unknown]`, V or A, a peak
    /// amplitude): harmonics of that unknown smaller than this are not
    /// resolved by the method (estimated from its own error: the truncation
    /// tail for harmonic balance, the difference from a solve on half the
    /// grid for shooting and settle; docs/measurements.md, "Numerical
    /// floor"). Empty when it was not estimated.
    pub floor: Vec<f64>,
    /// The error `method=auto` estimates its result to have, from its last
    /// grids ([`accuracy`]); `None` for the other methods, and when auto had
    /// no output element to compare, or fell back to harmonic balance.
    pub accuracy: Option<AccuracyEstimate>,
}

/// How a shooting solve went, grid by grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct ShootingInfo {
    /// Steps per period of the coarse grid (0 when it was not used).
    pub coarse_steps: usize,
    /// Periods integrated by the iteration on the coarse grid.
    pub coarse_periods: usize,
    /// Periods integrated by the iteration on the fine grid.
    pub fine_periods: usize,
    /// Periods that carried the monodromy matrix (Newton steps; the others
    /// were chord steps with an earlier one).
    pub monodromy_periods: usize,
    /// Warm-up periods run before the iteration (0 for a warm start).
    pub warmup_periods: usize,
    /// Newton steps were matrix-free ([`ShootingMode`]).
    pub matrix_free: bool,
    /// Products with the monodromy operator taken by the Krylov solver (matrix-free only).
    pub krylov_products: usize,
    /// Restarts of the coarse level from the end of its best period, after
    /// a Newton step that overshot to a state no period integrates from.
    pub restarts: usize,
}

/// Options of the plain-transient method.
#[derive(Debug, Clone, PartialEq)]
pub struct SettleParams {
    /// Most periods simulated before giving up (default 5000).
    pub max_periods: usize,
    /// Relative tolerance of the period-to-period change, against each
    /// unknown's peak-to-peak range plus its peak magnitude (default 1e-6).
    pub rel_tolerance: f64,
}

impl Default for SettleParams {
    fn default() -> Self {
        Self {
            max_periods: 5000,
            rel_tolerance: 1e-6,
        }
    }
}

/// Options of shooting.
#[derive(Debug, Clone, PartialEq)]
pub struct ShootingParams {
    /// Transient periods run from the operating point (started where the sources
    /// have become periodic), on the coarse grid, before the first Newton step
    /// (default 2).
    pub warmup_periods: usize,
    /// Newton iteration limit on each grid (default 50).
    pub max_iter: usize,
    /// Run the warm-up and the iteration from far away on a coarse grid of a
    /// quarter of the steps per period (when there are at least 128), and on
    /// the fine grid iterate with the coarse `Φ − I` as a chord Jacobian
    /// (default true). When false, every iteration is a full Newton step on
    /// the fine grid.
    pub coarse_grid: bool,
    /// Relative tolerance of the periodicity error `x(T) − x(0)` against
    /// each unknown's peak magnitude over the period (default 1e-7).
    pub rel_tolerance: f64,
    /// A warm start: the state at the start of a period from a solved
    /// neighbouring variant (same unknowns). When given (and of the right
    /// length) the warm-up periods are skipped and Newton starts from it.
    pub initial: Option<Vec<f64>>,
    /// `initial` is this circuit's own orbit solved on another grid
    /// (`method=auto`'s refinement): nearer the fine orbit than the coarse
    /// grid's orbit is, so the coarse level only takes its `Φ − I` there
    /// for the fine grid's chord steps. When false (default: a neighbouring
    /// variant's state, e.g. the next load of a mismatch sweep) the coarse
    /// level iterates from it to within 10³ tolerance units first, as it
    /// does after the warm-up.
    pub initial_near_orbit: bool,
    /// Dense monodromy matrix or matrix-free Newton–Krylov (default auto, by size).
    pub mode: ShootingMode,
    /// Solve the orbit again on half the grid for the numerical floor
    /// (default true; [`SteadyInfo::floor`] is the spectrum's tail when
    /// false). `method=auto` turns it off on a grid it refines to, whose
    /// half it has already solved.
    pub half_grid: bool,
}

impl Default for ShootingParams {
    fn default() -> Self {
        Self {
            warmup_periods: 2,
            max_iter: 50,
            coarse_grid: true,
            rel_tolerance: 1e-7,
            initial: None,
            initial_near_orbit: false,
            mode: ShootingMode::Auto,
            half_grid: true,
        }
    }
}

/// Options of a periodic steady-state solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyParams {
    /// Fundamental frequency, Hz.
    pub freq: f64,
    /// Harmonics K (default 32).
    pub harmonics: usize,
    /// Method (default auto).
    pub method: SteadyMethod,
    /// Time steps per period for shooting and settle (power of two, default 256;
    /// raised to the next power of two above 2K when smaller).
    pub steps_per_period: usize,
    /// Newton tolerances of every time step and of the operating point.
    pub tol: Tolerances,
    /// Shooting options.
    pub shooting: ShootingParams,
    /// Settle options.
    pub settle: SettleParams,
    /// Harmonic-balance options.
    pub balance: BalanceParams,
    /// Linear solver.
    pub linear_solver: LinearSolver,
    /// The accuracy `method=auto` refines its result to.
    pub accuracy: AccuracyParams,
}

impl Default for SteadyParams {
    fn default() -> Self {
        Self {
            freq: 1e6,
            harmonics: 32,
            method: SteadyMethod::Auto,
            steps_per_period: 256,
            tol: Tolerances::default(),
            shooting: ShootingParams::default(),
            settle: SettleParams::default(),
            balance: BalanceParams::default(),
            linear_solver: LinearSolver::default(),
            accuracy: AccuracyParams::default(),
        }
    }
}

impl SteadyParams {
    /// Options from an `analyze steady` statement (`None` for other analyses).
    pub fn from_analysis(a: &Analysis) -> Option<Self> {
        match a {
            Analysis::Steady {
                freq,
                harmonics,
                method,
                steps_per_period,
                accuracy,
            } => Some(Self {
                freq: *freq,
                harmonics: *harmonics,
                method: *method,
                steps_per_period: *steps_per_period,
                accuracy: AccuracyParams {
                    power_rel: accuracy.power_error,
                    harmonic_db: accuracy.level_error_db,
                    ..AccuracyParams::default()
                },
                ..Self::default()
            }),
            _ => None,
        }
    }

    /// Samples per period actually used: `steps_per_period` rounded up to a
    /// power of two and raised until it exceeds `2·harmonics`.
    pub fn samples(&self) -> usize {
        let mut n = self.steps_per_period.max(4).next_power_of_two();
        while n <= 2 * self.harmonics {
            n *= 2;
        }
        n
    }

    pub(crate) fn check(&self) -> Result<(), SolveError> {
        if !(self.freq.is_finite() && self.freq > 0.0) {
            return Err(SolveError::BadParams(format!(
                "steady-state frequency must be positive and finite, got {}",
                self.freq
            )));
        }
        if self.harmonics == 0 || self.harmonics > 1 << 16 {
            return Err(SolveError::BadParams(format!(
                "harmonics must be between 1 and 65536, got {}",
                self.harmonics
            )));
        }
        if self.steps_per_period > 1 << 20 {
            return Err(SolveError::BadParams(format!(
                "steps per period {} is too many",
                self.steps_per_period
            )));
        }
        Ok(())
    }
}

/// Periodic steady state by the method in `params` (auto: shooting refined
/// to the accuracy target, [`SteadyParams::accuracy`]; harmonic balance as
/// the fallback, recorded in [`SteadyInfo::fell_back_from`]).
pub fn steady(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    // A measured network is known exactly only over frequency: harmonic
    // balance (and auto, which picks it) uses it exactly, without the
    // Floquet check, which integrates in time; shooting and settle use its
    // fitted model (made at elaboration when the file asks for them) and
    // are verified as usual.
    if devices.devices.iter().any(|d| d.frequency_domain()) {
        match params.method {
            SteadyMethod::Balance | SteadyMethod::Auto => return balance(circuit, devices, params),
            SteadyMethod::Shooting | SteadyMethod::Settle => {
                if let Some(d) = devices
                    .devices
                    .iter()
                    .find(|d| d.frequency_domain() && !d.time_model())
                {
                    return Err(crate::transient::time_domain_refused(circuit, d.element()));
                }
            }
        }
    }
    // Every orbit is verified before it is accepted (floquet).
    let verify = |s| floquet::verify(circuit, devices, params, s);
    match params.method {
        SteadyMethod::Shooting => verified_shooting(circuit, devices, params),
        SteadyMethod::Settle => settle(circuit, devices, params).and_then(verify),
        SteadyMethod::Balance => balance(circuit, devices, params).and_then(verify),
        SteadyMethod::Auto => {
            // Shooting first: on the demo stages it is several times faster
            // than harmonic balance with its automatic raise of K (measured in
            // benches/stages.rs), and both agree within the acceptance figures
            // (tests/it/agreement.rs); refined until its estimated error meets
            // the accuracy target. Balance is the fallback; when both fail
            // the error names both.
            match refined_shooting(circuit, devices, params) {
                Ok(s) => Ok(s),
                Err(first) => match balance(circuit, devices, params).and_then(verify) {
                    Ok(mut s) => {
                        s.info.fell_back_from = Some(SteadyMethod::Shooting);
                        Ok(s)
                    }
                    Err(second) => Err(SolveError::BothFailed {
                        first: Box::new(first),
                        second: Box::new(second),
                    }),
                },
            }
        }
    }
}

/// Shooting, verified with the last period it integrated (no period of
/// its own with sensitivities in the check).
fn verified_shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    let (s, last) = shooting::shooting_with_final(circuit, devices, params)?;
    floquet::verify_with(circuit, devices, params, s, Some(last))
}

/// Shooting refined to [`SteadyParams::accuracy`] and verified
/// (docs/analyses.md, "Accuracy of the steady state"): solved on `N` steps
/// per period, whose half grid (solved for the floor) gives the first
/// estimate ([`accuracy`]); while the estimate misses the target and `2N`
/// stays within `max_steps_per_period`, solved again on `2N`, warm-started
/// from the state at the start of the last period, with `N` as its half.
/// The result carries the estimate ([`SteadyInfo::accuracy`], `met = false`
/// when the largest grid did not reach the target), the floor from its last
/// two grids and the periods of every grid in its iteration count. Without
/// an output element to compare (or a half grid) it is plain verified
/// shooting with no estimate.
fn refined_shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    let target = &params.accuracy;
    let (mut fine, mut last) = shooting::shooting_with_final(circuit, devices, params)?;
    let mut grid = params.clone();
    grid.steps_per_period = fine.samples_per_period;
    let half = last.half.take().and_then(|h| {
        let mut p = grid.clone();
        p.steps_per_period = grid.steps_per_period / 2;
        sample::trbdf2_solution(circuit, devices, &p, h.samples, &h.stage, fine.info.clone()).ok()
    });
    let mut est = half
        .as_ref()
        .and_then(|c| accuracy::estimate(circuit, devices, &fine, c, target, None));
    let mut periods = fine.info.iterations;
    while let Some(e) = &est {
        let next_n = fine.samples_per_period * 2;
        if e.met || next_n > target.max_steps_per_period {
            break;
        }
        let mut p = grid.clone();
        p.steps_per_period = next_n;
        p.shooting.half_grid = false;
        p.shooting.initial_near_orbit = true;
        p.shooting.initial = Some(
            fine.x
                .iter()
                .map(|w| w.first().copied().unwrap_or(0.0))
                .collect(),
        );
        // a finer grid that does not solve leaves the estimate as it was
        let Ok((next, next_last)) = shooting::shooting_with_final(circuit, devices, &p) else {
            break;
        };
        periods += next.info.iterations;
        let next_est = accuracy::estimate(circuit, devices, &next, &fine, target, Some(e));
        let mut coarse = std::mem::replace(&mut fine, next);
        fine.info.floor = floor::grid_floor(
            &fine.x,
            &coarse.x,
            params.harmonics,
            params.shooting.rel_tolerance,
        );
        coarse.x.clear();
        last = next_last;
        grid = p;
        est = next_est;
    }
    fine.info.iterations = periods;
    fine.info.accuracy = est;
    grid.shooting.initial = None;
    floquet::verify_with(circuit, devices, &grid, fine, Some(last))
}

/// First whole number of periods after every source's delay, rise and last
/// corner: the time origin of the period harmonic balance solves for (the
/// sources are periodic from there on). Other periodic methods can start
/// their period here too, so that all of them see the same drive.
pub(crate) fn start_time(circuit: &Circuit, period: f64) -> f64 {
    let mut t = 0.0f64;
    for el in &circuit.elements {
        let wave = match &el.kind {
            ElementKind::VoltageSource { wave, .. } | ElementKind::CurrentSource { wave, .. } => {
                wave
            }
            _ => continue,
        };
        let end = match &wave.shape {
            Some(Shape::Sine { delay, rise, .. }) => delay + rise,
            Some(Shape::Square { start: delay, .. }) => *delay,
            Some(Shape::Table(pts)) => pts.last().map(|p| p.0).unwrap_or(0.0),
            None => 0.0,
        };
        if end.is_finite() {
            t = t.max(end);
        }
    }
    let periods = (t / period).ceil();
    if periods.is_finite() && periods > 0.0 {
        periods * period
    } else {
        0.0
    }
}
