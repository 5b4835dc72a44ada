//! Periodic steady state: the result type every steady method returns, the
//! dispatcher [`steady`], and the plain-transient method (settle).
//!
//! Every method produces a [`PeriodicSolution`]: each unknown sampled at
//! `N` uniform points of one period `T = 1/freq`, `x[k][n] = x_k(n·T/N)`,
//! plus the current into every terminal of every element over the same
//! samples. Methods:
//! - shooting ([`mod@crate::shooting`]): Newton on the state at the period start;
//! - settle: plain transient until one period repeats the previous one;
//! - balance: harmonic balance ([`mod@crate::balance`]), called through `run_balance`.

use crate::error::When;
use crate::linalg::LinearSolver;
use crate::newton::{unknown_floor, Tolerances};
use crate::transient::Stepper;
use crate::SolveError;
use tankwave_circuit::{Analysis, Circuit, SteadyMethod};
use tankwave_devices::{DeviceSet, EvalCtx, Idx, Stamp};

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
    /// Final residual: largest scaled periodicity error (shooting, settle) or
    /// harmonic residual (balance); ≤ 1 means within tolerance.
    pub residual: f64,
    /// Order of the Newton system solved (0 for settle).
    pub system_size: usize,
    /// Harmonic-balance details (harmonics used, continuation steps, …); `None` for other methods.
    pub balance: Option<crate::balance::BalanceInfo>,
    /// Shooting details (periods per grid, monodromy matrices); `None` for other methods.
    pub shooting: Option<ShootingInfo>,
    /// The Floquet multipliers that verified the orbit ([`crate::floquet`]);
    /// `None` only before verification.
    pub floquet: Option<crate::floquet::FloquetInfo>,
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
}

impl Default for ShootingParams {
    fn default() -> Self {
        Self {
            warmup_periods: 2,
            max_iter: 50,
            coarse_grid: true,
            rel_tolerance: 1e-7,
            initial: None,
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
    pub balance: crate::balance::BalanceParams,
    /// Linear solver.
    pub linear_solver: LinearSolver,
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
            balance: crate::balance::BalanceParams::default(),
            linear_solver: LinearSolver::default(),
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
            } => Some(Self {
                freq: *freq,
                harmonics: *harmonics,
                method: *method,
                steps_per_period: *steps_per_period,
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

/// Periodic steady state by the method in `params` (auto: harmonic balance
/// first, shooting as the fallback, recorded in [`SteadyInfo::fell_back_from`]).
pub fn steady(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    // Every orbit is verified before it is accepted (crate::floquet).
    let verify = |s| crate::floquet::verify(circuit, devices, params, s);
    match params.method {
        SteadyMethod::Shooting => {
            crate::shooting::shooting(circuit, devices, params).and_then(verify)
        }
        SteadyMethod::Settle => settle(circuit, devices, params).and_then(verify),
        SteadyMethod::Balance => run_balance(circuit, devices, params).and_then(verify),
        SteadyMethod::Auto => {
            // Shooting first: on the demo stages it is several times faster
            // than harmonic balance with its automatic raise of K (measured in
            // benches/stages.rs), and both agree within the acceptance figures
            // (tests/it/agreement.rs). Balance is the fallback; when both fail
            // the error names both.
            match crate::shooting::shooting(circuit, devices, params).and_then(verify) {
                Ok(s) => Ok(s),
                Err(first) => match run_balance(circuit, devices, params).and_then(verify) {
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

/// Harmonic balance hook: [`crate::balance::balance`].
fn run_balance(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    crate::balance::balance(circuit, devices, params)
}

/// Plain transient at `N` fixed TR-BDF2 steps per period (the discretisation
/// shooting uses, so both reach the same discrete solution) from the
/// operating point until the largest period-to-period change is within
/// tolerance; the last period is the result.
pub fn settle(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let h = period / ns as f64;
    let mut st = Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?;
    // the last few periods, newest last, for the repeat test on failure
    let mut history: std::collections::VecDeque<Vec<Vec<f64>>> =
        std::collections::VecDeque::with_capacity(MAX_REPEAT + 1);
    let mut last_change = (f64::INFINITY, 0.0, 0usize, 0.0);
    for p in 0..params.settle.max_periods {
        let mut cur = vec![vec![0.0; ns]; n];
        let mut stage = vec![vec![0.0; ns]; n];
        for s in 0..ns {
            for (k, row) in cur.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            // Land exactly on the period grid to avoid drift of t.
            let t1 = (p * ns + s + 1) as f64 * h;
            let xg = st
                .step_trbdf2(t1)
                .map_err(|e| e.into_error(devices, "settle"))?;
            for (k, row) in stage.iter_mut().enumerate() {
                row[s] = xg[k];
            }
        }
        if let Some(pv) = history.back() {
            let worst = period_change(devices, params, &cur, pv);
            last_change = (worst.1, worst.3, worst.2, worst.4);
            if worst.0 <= 1.0 {
                let terminal_currents =
                    terminal_currents_trbdf2(circuit, devices, &cur, &stage, params.freq)?;
                let transport_currents = transport_currents(circuit, devices, &cur, params.freq);
                return Ok(PeriodicSolution {
                    freq: params.freq,
                    harmonics: params.harmonics,
                    samples_per_period: ns,
                    x: cur,
                    terminal_currents,
                    transport_currents,
                    info: SteadyInfo {
                        method: SteadyMethod::Settle,
                        fell_back_from: None,
                        iterations: p + 1,
                        residual: worst.0,
                        system_size: 0,
                        balance: None,
                        shooting: None,
                        floquet: None,
                    },
                });
            }
        }
        if history.len() > MAX_REPEAT {
            history.pop_front();
        }
        history.push_back(cur);
    }
    // Not periodic at the drive frequency: does the end repeat every m periods?
    let repeats_every = history.back().and_then(|last| {
        (2..=MAX_REPEAT).find(|&m| {
            history.len() > m
                && period_change(devices, params, last, &history[history.len() - 1 - m]).0
                    <= REPEAT_TOLERANCES
        })
    });
    Err(SolveError::NotSettled {
        periods: params.settle.max_periods,
        change: last_change.0,
        tolerance: last_change.1,
        unknown: devices
            .names
            .get(last_change.2)
            .cloned()
            .unwrap_or_default(),
        repeats_every,
        relative_change: last_change.3,
    })
}

/// Longest repeat (in periods) looked for when settle fails.
const MAX_REPEAT: usize = 4;

/// A repeat every m periods counts when the change over m periods is within
/// this many settle tolerances (the settle tolerance is for the fundamental
/// period; a subharmonic state reached after the same number of periods is
/// settled less tightly, and 100 tolerances, 1e-4 of the swing at the default,
/// still tells a repeating state from a drifting or chaotic one).
const REPEAT_TOLERANCES: f64 = 100.0;

/// Largest change between two periods against the settle tolerance:
/// (ratio, change, unknown, tolerance, change / (range + peak)), tolerance
/// `rel_tolerance·(range + peak) + current_floor`.
fn period_change(
    devices: &DeviceSet,
    params: &SteadyParams,
    cur: &[Vec<f64>],
    pv: &[Vec<f64>],
) -> (f64, f64, usize, f64, f64) {
    let mut worst = (0.0f64, 0.0f64, 0usize, 0.0f64, 0.0f64);
    for (k, (row, old)) in cur.iter().zip(pv).enumerate() {
        let (lo, hi) = row
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(*v), b.max(*v))
            });
        let mag = lo.abs().max(hi.abs());
        let tol = params.settle.rel_tolerance * ((hi - lo) + mag)
            + unknown_floor(devices, &params.tol, k);
        let ch = row
            .iter()
            .zip(old)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        let ratio = ch / tol;
        if !(ratio <= worst.0) {
            let size = (hi - lo) + mag;
            let rel = if size > 0.0 { ch / size } else { 0.0 };
            worst = (ratio, ch, k, tol, rel);
        }
    }
    worst
}

/// A stamp that keeps only the currents and charges (shared by every
/// periodic method that evaluates devices at samples of a period).
pub(crate) struct IqStamp {
    pub(crate) i: Vec<f64>,
    pub(crate) q: Vec<f64>,
}

impl Stamp for IqStamp {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(r) = row.and_then(|r| self.i.get_mut(r)) {
            *r += v;
        }
    }
    fn add_q(&mut self, row: Idx, v: f64) {
        if let Some(r) = row.and_then(|r| self.q.get_mut(r)) {
            *r += v;
        }
    }
    fn add_g(&mut self, _row: Idx, _col: Idx, _v: f64) {}
    fn add_c(&mut self, _row: Idx, _col: Idx, _v: f64) {}
}

impl IqStamp {
    /// A zeroed stamp for `n` unknowns.
    pub(crate) fn new(n: usize) -> Self {
        Self {
            i: vec![0.0; n],
            q: vec![0.0; n],
        }
    }

    /// Evaluate one element's devices alone at `x`, `ctx`, and hand
    /// `(terminal, i, q)` of every terminal on an unknown to `put`.
    pub(crate) fn element_terminals(
        &mut self,
        el: &ElementDevices<'_>,
        x: &[f64],
        ctx: &EvalCtx,
        state: &mut [f64],
        mut put: impl FnMut(usize, f64, f64),
    ) {
        self.i.fill(0.0);
        self.q.fill(0.0);
        for &di in &el.devs {
            let Some(d) = el.devices.devices.get(di) else {
                continue;
            };
            let off = el.devices.state_offsets.get(di).copied().unwrap_or(0);
            let sl = state.get_mut(off..off + d.state_len()).unwrap_or(&mut []);
            d.eval(x, ctx, sl, self);
        }
        for (j, t) in el.terms.iter().enumerate() {
            if let Some(k) = t {
                put(
                    j,
                    self.i.get(*k).copied().unwrap_or(0.0),
                    self.q.get(*k).copied().unwrap_or(0.0),
                );
            }
        }
    }
}

/// The devices of one circuit element and the unknowns of its terminals.
pub(crate) struct ElementDevices<'a> {
    devices: &'a DeviceSet,
    /// Indices into `devices.devices` of the element's devices.
    devs: Vec<usize>,
    /// The unknown of each terminal (`None` for ground).
    pub(crate) terms: Vec<Idx>,
}

impl<'a> ElementDevices<'a> {
    /// Element `ei` of the circuit, with terminals `terms`.
    pub(crate) fn new(devices: &'a DeviceSet, ei: usize, terms: Vec<Idx>) -> Self {
        let devs = devices
            .devices
            .iter()
            .enumerate()
            .filter(|(_, d)| d.element() == ei)
            .map(|(k, _)| k)
            .collect();
        Self {
            devices,
            devs,
            terms,
        }
    }
}

/// Current into every terminal of every element over one period, from
/// samples `x[unknown][n]` of a periodic solution at `freq`.
///
/// Each element's devices are evaluated alone at every sample; the current
/// into a terminal on node `k` is `i_k + dq_k/dt` (row `k` is the KCL sum of
/// currents leaving node `k` through the device, i.e. entering the device).
/// `dq/dt` is the spectral derivative over the period (exact for a
/// band-limited periodic solution; the Nyquist bin is dropped). A grounded
/// terminal carries minus the sum of the others (the element's charge is
/// neutral). Couplings have no terminals and get an empty entry.
pub fn terminal_currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    freq: f64,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    element_currents(circuit, devices, x, None, freq)
}

/// The intrinsic transport current of every element whose device has one
/// ([`tankwave_devices::Device::transport_current`]), at each sample of
/// `x[unknown][n]` over one period at `freq`; `None` for the other elements
/// (and for an element whose devices give a non-finite value or more than
/// one transport current). Evaluated exactly at the samples (no limiting).
pub fn transport_currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    freq: f64,
) -> Vec<Option<Vec<f64>>> {
    let ns = x.first().map(|v| v.len()).unwrap_or(0);
    let period = 1.0 / freq;
    let mut xs = vec![0.0; x.len()];
    (0..circuit.elements.len())
        .map(|ei| {
            let mut devs = devices.devices.iter().filter(|d| d.element() == ei);
            let dev = devs.next()?;
            if devs.next().is_some() || ns == 0 {
                return None;
            }
            let mut out = Vec::with_capacity(ns);
            for s in 0..ns {
                for (k, v) in xs.iter_mut().enumerate() {
                    *v = x.get(k).and_then(|r| r.get(s)).copied().unwrap_or(0.0);
                }
                let ctx = EvalCtx {
                    time: s as f64 * period / ns as f64,
                    limit: false,
                    ..EvalCtx::default()
                };
                out.push(dev.transport_current(&xs, &ctx).filter(|v| v.is_finite())?);
            }
            Some(out)
        })
        .collect()
}

/// Terminal currents of a periodic solution found with TR-BDF2 steps
/// (shooting, settle): like [`terminal_currents`], but `dq/dt` at each sample
/// is the BDF2 stage formula through the previous sample, the stage point
/// `stage[k][n−1]` (at `t_{n−1} + γh`) and the sample itself — the derivative
/// the integrator used, so every node's KCL (internal device nodes included)
/// holds to the Newton tolerance, which the spectral derivative of a sharp
/// conduction pulse would not give.
pub(crate) fn terminal_currents_trbdf2(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    stage: &[Vec<f64>],
    freq: f64,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    element_currents(circuit, devices, x, Some(stage), freq)
}

fn element_currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    x: &[Vec<f64>],
    stage: Option<&[Vec<f64>]>,
    freq: f64,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    let n = devices.n_unknowns;
    let ns = x.first().map(|v| v.len()).unwrap_or(0);
    if x.len() != n || x.iter().any(|v| v.len() != ns) || ns == 0 {
        return Err(SolveError::BadParams(format!(
            "terminal currents need {n} unknowns sampled alike, got {}",
            x.len()
        )));
    }
    let period = 1.0 / freq;
    let mut state = devices.initial_state();
    let mut out = Vec::with_capacity(circuit.elements.len());
    let mut xs = vec![0.0; n];
    let mut stamp = IqStamp::new(n);
    let mut fft = crate::spectral::Deriv::new(ns);
    for (ei, el) in circuit.elements.iter().enumerate() {
        let terms = el.kind.terminals();
        if terms.is_empty() {
            out.push(Vec::new());
            continue;
        }
        let ed = ElementDevices::new(devices, ei, terms.clone());
        // i and q of the rows of this element's terminals, per sample (and q
        // at the stage points when given).
        let mut iv = vec![vec![0.0; ns]; terms.len()];
        let mut qv = vec![vec![0.0; ns]; terms.len()];
        let mut qg = vec![vec![0.0; ns]; terms.len()];
        if let Some(stage) = stage {
            for s in 0..ns {
                for k in 0..n {
                    xs[k] = stage[k][s];
                }
                let ctx = EvalCtx {
                    time: (s as f64 + crate::transient::GAMMA) * period / ns as f64,
                    limit: false,
                    ..EvalCtx::default()
                };
                stamp.element_terminals(&ed, &xs, &ctx, &mut state, |j, _, q| {
                    qg[j][s] = q;
                });
            }
        }
        for s in 0..ns {
            for k in 0..n {
                xs[k] = x[k][s];
            }
            let ctx = EvalCtx {
                time: s as f64 * period / ns as f64,
                limit: false,
                ..EvalCtx::default()
            };
            stamp.element_terminals(&ed, &xs, &ctx, &mut state, |j, i, q| {
                iv[j][s] = i;
                qv[j][s] = q;
            });
        }
        let mut cur = Vec::with_capacity(terms.len());
        let h = period / ns as f64;
        let (a0, a1, a2) = crate::transient::bdf2_coefficients(
            (1.0 - crate::transient::GAMMA) * h,
            crate::transient::GAMMA * h,
        );
        for j in 0..terms.len() {
            let dq = match stage {
                None => fft.derivative(&qv[j], freq),
                Some(_) => (0..ns)
                    .map(|s| {
                        let p = (s + ns - 1) % ns;
                        a0 * qv[j][s] + a1 * qg[j][p] + a2 * qv[j][p]
                    })
                    .collect(),
            };
            let c: Vec<f64> = iv[j].iter().zip(&dq).map(|(a, b)| a + b).collect();
            cur.push(c);
        }
        // Grounded terminals: minus the sum of the others.
        let grounded: Vec<usize> = (0..terms.len()).filter(|&j| terms[j].is_none()).collect();
        if grounded.len() == 1 {
            let g = grounded[0];
            for s in 0..ns {
                let sum: f64 = (0..terms.len())
                    .filter(|&j| j != g)
                    .map(|j| cur[j][s])
                    .sum();
                cur[g][s] = -sum;
            }
        }
        if let Some((j, _)) = cur
            .iter()
            .enumerate()
            .find(|(_, c)| c.iter().any(|v| !v.is_finite()))
        {
            return Err(SolveError::NonFinite {
                analysis: "terminal currents".into(),
                unknown: format!("terminal {} of {}", j + 1, el.name),
                when: When(None),
            });
        }
        out.push(cur);
    }
    Ok(out)
}
