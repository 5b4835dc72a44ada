//! Transient analysis: SDIRK4 (the default; five-stage, order 4, with an
//! embedded order-3 error estimate), the trapezoidal rule or BDF2, with an
//! adaptive step from a local-error estimate on the charges and fluxes `q`.
//!
//! Each step solves, by Newton, `i(x₁, t₁) + α·q(x₁) + h = 0` where the
//! integration formula gives `α` and the history `h`:
//! - backward Euler (first step from a zero start and after every breakpoint):
//!   `q̇₁ = (q₁ − q₀)/h`;
//! - trapezoidal: `q̇₁ = 2(q₁ − q₀)/h − q̇₀`;
//! - BDF2 with variable step (`ρ = h₁/h₀`):
//!   `q̇₁ = [(1+2ρ) q₁ − (1+ρ)² q₀ + ρ² q₋₁] / (h₁(1+ρ))`.
//!
//! Local truncation error, per row of `q`, from divided differences of the
//! accepted charges (`q''' ≈ 6·q[t₁,t₀,t₋₁,t₋₂]`): trapezoidal `h³q'''/12`,
//! BDF2 `h₁²(h₁+h₀)² q''' / (6(2h₁+h₀))`, backward Euler `h² q''/2`. A step is
//! accepted when every row's estimate is within `rel_tolerance·max|q_r| + charge_floor`
//! (max over the run so far); the next step is `h·clamp(0.9·err^(−1/3), 0.2, 2)`.
//! Device breakpoints are landed on exactly, and the integration restarts
//! there (one backward-Euler step of 1e-3 of the output step, then the chosen method).

use crate::linalg::LinearSolver;
use crate::newton::{self, Failure, System, Tolerances, Workspace};
use crate::op::{self, NewtonInfo, OpParams};
use crate::SolveError;
use tankwave_circuit::{Analysis, Circuit, Integration, StartFrom};
use tankwave_devices::{DeviceSet, EvalCtx, Filter};

/// Options of a transient analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct TransientParams {
    /// End time, s.
    pub stop: f64,
    /// Output step, s: the step of [`TransientResult::uniform`] and the default largest step.
    pub step: f64,
    /// Largest internal step, s (default: `step`).
    pub max_step: Option<f64>,
    /// Start from the operating point or from zero.
    pub start: StartFrom,
    /// Integration method.
    pub method: Integration,
    /// Relative tolerance of the local error per step, against each
    /// charge's running peak; `None`: the method's own
    /// ([`default_rel_tolerance`]).
    pub rel_tolerance: Option<f64>,
    /// Absolute tolerance of the local truncation error, C or Wb (default 1e-15).
    pub charge_floor: f64,
    /// Newton tolerances per step.
    pub newton: Tolerances,
    /// Newton iterations per step before the step is cut (default 30).
    pub max_newton: usize,
    /// Smallest step before giving up, s (default `stop·1e-15`).
    pub min_step: Option<f64>,
    /// Fixed-step mode: every step is `min(step, max_step)` (no error control, breakpoints not landed on).
    pub fixed_step: bool,
    /// Operating-point options (start from op).
    pub op: OpParams,
}

impl Default for TransientParams {
    fn default() -> Self {
        Self {
            stop: 1e-6,
            step: 1e-9,
            max_step: None,
            start: StartFrom::OperatingPoint,
            method: Integration::Sdirk4,
            rel_tolerance: None,
            charge_floor: 1e-15,
            newton: Tolerances::default(),
            max_newton: 30,
            min_step: None,
            fixed_step: false,
            op: OpParams::default(),
        }
    }
}

/// The local-error tolerance of each integration method when the analysis
/// leaves it out. Trapezoidal rule and BDF2: 1e-8, chosen so every
/// validation circuit, the driven resonant RLC included, stays within 1e-4
/// of its closed form (their global error scales about as
/// `rel_tolerance^(2/3)`). SDIRK4: 1e-5, where its estimate is that of the
/// embedded order-3 solution while the step carries the order-4 one; on the
/// class-C demo over 300 periods it holds the output envelope to 3.7e-7 of
/// a converged SDIRK4 run (the trapezoidal rule at 1e-8: 1.1e-5) with 161
/// steps per period (docs/analyses.md, "Achieved accuracy";
/// docs/performance.md, "Plain transient").
pub fn default_rel_tolerance(method: Integration) -> f64 {
    match method {
        Integration::Trapezoidal | Integration::Bdf2 => 1e-8,
        Integration::Sdirk4 => 1e-5,
    }
}

impl TransientParams {
    /// The local-error tolerance in force: the one given, else the method's.
    pub fn tolerance(&self) -> f64 {
        self.rel_tolerance
            .unwrap_or_else(|| default_rel_tolerance(self.method))
    }

    /// Options from an `analyze transient` statement (`None` for other analyses).
    pub fn from_analysis(a: &Analysis) -> Option<Self> {
        match a {
            Analysis::Transient {
                stop,
                step,
                max_step,
                start,
                method,
                rel_tolerance,
            } => {
                let d = Self::default();
                Some(Self {
                    stop: *stop,
                    step: *step,
                    max_step: *max_step,
                    start: *start,
                    method: *method,
                    rel_tolerance: *rel_tolerance,
                    ..d
                })
            }
            _ => None,
        }
    }
}

/// Counters of a transient run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransientInfo {
    /// Accepted steps.
    pub accepted: usize,
    /// Steps rejected for truncation error.
    pub rejected_lte: usize,
    /// Steps cut because Newton failed.
    pub rejected_newton: usize,
    /// Newton iterations over all steps.
    pub newton_iterations: usize,
    /// Operating point report (start from op).
    pub op: Option<NewtonInfo>,
}

/// Every unknown at every accepted time point.
#[derive(Debug, Clone, PartialEq)]
pub struct TransientResult {
    /// Names of the unknowns.
    pub names: Vec<String>,
    /// Accepted times, s, increasing (the first is 0).
    pub time: Vec<f64>,
    /// `x[step][unknown]`.
    pub x: Vec<Vec<f64>>,
    /// Indices into `time` where the integration restarted (breakpoints); interpolation does not cross them.
    pub restarts: Vec<usize>,
    /// Counters.
    pub info: TransientInfo,
}

impl TransientResult {
    /// Index of the unknown a person named (`--probe V[out]`); code takes
    /// the index from a handle ([`tankwave_devices::DeviceSet::voltage_of`], …).
    pub fn index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    /// The accepted values of unknown `k`.
    pub fn waveform(&self, k: usize) -> Vec<f64> {
        self.x
            .iter()
            .map(|v| v.get(k).copied().unwrap_or(0.0))
            .collect()
    }

    /// Values of every unknown at times `grid` (`[point][unknown]`) by cubic
    /// Lagrange interpolation through the four nearest accepted points of the
    /// same integration segment (lower order where the segment is shorter).
    /// Times outside the run are clamped to its ends.
    pub fn resample(&self, grid: &[f64]) -> Vec<Vec<f64>> {
        let m = self.time.len();
        let nu = self.names.len();
        let mut out = Vec::with_capacity(grid.len());
        if m == 0 {
            return vec![vec![0.0; nu]; grid.len()];
        }
        for &tg in grid {
            let tg = tg.clamp(self.time[0], self.time[m - 1]);
            // Interval i with time[i] <= tg <= time[i+1].
            let i = match self.time.partition_point(|&t| t <= tg) {
                0 => 0,
                p => (p - 1).min(m.saturating_sub(2)),
            };
            if m == 1 {
                out.push(self.x[0].clone());
                continue;
            }
            // Segment bounds around interval i.
            let seg_lo = self
                .restarts
                .iter()
                .copied()
                .filter(|&r| r <= i)
                .max()
                .unwrap_or(0);
            let seg_hi = self
                .restarts
                .iter()
                .copied()
                .filter(|&r| r > i)
                .min()
                .unwrap_or(m - 1);
            let lo = i.saturating_sub(1).max(seg_lo);
            let hi = (lo + 3).min(seg_hi);
            let lo = hi.saturating_sub(3).max(seg_lo);
            let idx: Vec<usize> = (lo..=hi).collect();
            let mut v = vec![0.0; nu];
            for &a in &idx {
                let mut w = 1.0;
                for &b in &idx {
                    if a != b {
                        w *= (tg - self.time[b]) / (self.time[a] - self.time[b]);
                    }
                }
                for (k, vk) in v.iter_mut().enumerate() {
                    *vk += w * self.x[a][k];
                }
            }
            out.push(v);
        }
        out
    }

    /// Resample onto `0, step, 2·step, …` up to the last time: `(times, values[point][unknown])`.
    pub fn uniform(&self, step: f64) -> (Vec<f64>, Vec<Vec<f64>>) {
        let end = self.time.last().copied().unwrap_or(0.0);
        if !(step > 0.0) {
            return (Vec::new(), Vec::new());
        }
        let n = (end / step * (1.0 + 1e-12)).floor() as usize;
        let grid: Vec<f64> = (0..=n).map(|k| k as f64 * step).collect();
        let v = self.resample(&grid);
        (grid, v)
    }
}

/// Fraction of a TR-BDF2 step taken by its trapezoidal stage, `2 − √2`.
pub(crate) const GAMMA: f64 = 2.0 - std::f64::consts::SQRT_2;

/// Variable-step BDF2 coefficients `(a0, a1, a2)` for `q̇₁ = a0 q₁ + a1 q₀ + a2 q₋₁`
/// with `h1 = t₁ − t₀`, `h0 = t₀ − t₋₁`.
pub(crate) fn bdf2_coefficients(h1: f64, h0: f64) -> (f64, f64, f64) {
    let rho = h1 / h0;
    (
        (1.0 + 2.0 * rho) / (h1 * (1.0 + rho)),
        -(1.0 + rho) / h1,
        rho * rho / (h1 * (1.0 + rho)),
    )
}

/// Integration formula of one step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Method {
    BackwardEuler,
    Trapezoidal,
    Bdf2,
    /// Five-stage L-stable SDIRK of order 4 ([`SDIRK4_A`]).
    Sdirk4,
}

/// The diagonal γ of the SDIRK4 tableau.
pub(crate) const SDIRK4_GAMMA: f64 = 0.25;
/// Stage times `c` of SDIRK4 (row sums of [`SDIRK4_A`]).
pub(crate) const SDIRK4_C: [f64; 5] = [0.25, 0.75, 11.0 / 20.0, 0.5, 1.0];
/// The coefficients `a_ij` of the five-stage, L-stable, stiffly accurate
/// SDIRK method of order 4 with γ = 1/4 (E. Hairer, G. Wanner, Solving
/// Ordinary Differential Equations II, 2nd ed., Springer 1996, §IV.6,
/// Table 6.5 "SDIRK4"; from memory, every order condition up to 4 checked
/// exactly by a test). Stiffly accurate: the weights `b` are the last row.
pub(crate) const SDIRK4_A: [[f64; 5]; 5] = [
    [0.25, 0.0, 0.0, 0.0, 0.0],
    [0.5, 0.25, 0.0, 0.0, 0.0],
    [17.0 / 50.0, -1.0 / 25.0, 0.25, 0.0, 0.0],
    [371.0 / 1360.0, -137.0 / 2720.0, 15.0 / 544.0, 0.25, 0.0],
    [25.0 / 24.0, -49.0 / 48.0, 125.0 / 16.0, -85.0 / 12.0, 0.25],
];
/// Weights of the embedded order-3 solution of SDIRK4 (same source); the
/// difference to the order-4 weights estimates the local error.
pub(crate) const SDIRK4_B_HAT: [f64; 5] =
    [59.0 / 48.0, -17.0 / 96.0, 225.0 / 32.0, -85.0 / 12.0, 0.0];

/// A step that failed.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct StepFail {
    pub failure: Failure,
    pub time: f64,
}

impl StepFail {
    pub fn into_error(self, devices: &DeviceSet, analysis: &str) -> SolveError {
        newton::to_error(self.failure, devices, analysis, Some(self.time))
    }
}

/// A solved stage: the unknowns, their charges `q(x)` and the device state.
type Stage = (Vec<f64>, Vec<f64>, Vec<f64>);

/// A solved but not yet accepted step.
#[derive(Debug, Clone)]
pub(crate) struct Attempt {
    pub t: f64,
    pub h: f64,
    pub method: Method,
    pub x: Vec<f64>,
    pub q: Vec<f64>,
    pub qdot: Vec<f64>,
    pub state: Vec<f64>,
}

/// The integrator state, shared by transient, settle and shooting.
#[derive(Debug)]
pub(crate) struct Stepper<'a> {
    pub devices: &'a DeviceSet,
    pub tol: Tolerances,
    pub max_newton: usize,
    pub junction_leak: f64,
    pub ws: Workspace,
    pub state: Vec<f64>,
    pub t: f64,
    pub x: Vec<f64>,
    pub q: Vec<f64>,
    pub qdot: Vec<f64>,
    /// `q̇` is consistent with `x` (false after a zero start until one step is taken).
    pub qdot_valid: bool,
    /// Previous point (q, x, step that led to the current point), for BDF2 and prediction.
    pub prev: Option<(Vec<f64>, Vec<f64>, f64)>,
    pub newton_iterations: usize,
    hist: Vec<f64>,
}

impl<'a> Stepper<'a> {
    fn blank(devices: &'a DeviceSet, tol: Tolerances, lin: LinearSolver) -> Self {
        let n = devices.n_unknowns;
        Self {
            devices,
            tol,
            max_newton: 30,
            junction_leak: 1e-12,
            ws: Workspace::new(n, lin),
            state: devices.initial_state(),
            t: 0.0,
            x: vec![0.0; n],
            q: vec![0.0; n],
            qdot: vec![0.0; n],
            qdot_valid: false,
            prev: None,
            newton_iterations: 0,
            hist: vec![0.0; n],
        }
    }

    /// Start from the operating point at time `t0`.
    pub fn from_op(
        devices: &'a DeviceSet,
        tol: Tolerances,
        lin: LinearSolver,
        t0: f64,
    ) -> Result<Self, SolveError> {
        let p = OpParams {
            tol,
            time: t0,
            linear_solver: lin,
            ..OpParams::default()
        };
        Self::from_op_params(devices, &p).map(|(s, _)| s)
    }

    fn from_op_params(
        devices: &'a DeviceSet,
        p: &OpParams,
    ) -> Result<(Self, NewtonInfo), SolveError> {
        let mut s = Self::blank(devices, p.tol, p.linear_solver);
        s.junction_leak = p.junction_leak;
        let x0 = vec![0.0; devices.n_unknowns];
        let (x, info) = op::solve_op(devices, p, &x0, &mut s.state)?;
        s.init_at(&x, p.time);
        Ok((s, info))
    }

    /// Start from all-zero unknowns at time `t0` (the first step is backward Euler).
    pub fn from_zero(devices: &'a DeviceSet, tol: Tolerances, lin: LinearSolver, t0: f64) -> Self {
        let mut s = Self::blank(devices, tol, lin);
        let x = vec![0.0; devices.n_unknowns];
        s.init_at(&x, t0);
        s.qdot_valid = false;
        s.qdot.fill(0.0);
        s
    }

    fn ctx(&self, t: f64, limit: bool) -> EvalCtx {
        EvalCtx {
            time: t,
            dc_scale: 1.0,
            wave_scale: 1.0,
            junction_leak: self.junction_leak,
            limit,
        }
    }

    /// Set the point `(x, t)` with a consistent `q̇ = −i(x, t)`; forget history.
    pub fn init_at(&mut self, x: &[f64], t: f64) {
        let ctx = self.ctx(t, false);
        let mut st = self.state.clone();
        self.ws
            .stamp
            .eval(self.devices, x, &ctx, &mut st, Filter::All);
        self.t = t;
        self.x.copy_from_slice(x);
        self.q.copy_from_slice(&self.ws.stamp.q);
        // q̇ = −i in rows that carry charge; rows without any (algebraic
        // equations: source branches, resistive nodes) have q̇ = 0 exactly, so
        // an inconsistency in them is not carried from step to step.
        let charged = self.ws.stamp.charged_rows();
        for r in 0..self.qdot.len() {
            self.qdot[r] = if charged[r] { -self.ws.stamp.i[r] } else { 0.0 };
        }
        self.qdot_valid = true;
        self.prev = None;
    }

    /// The method actually used for a step requested as `m`.
    pub fn effective(&self, m: Method) -> Method {
        if m == Method::Sdirk4 {
            // self-starting: no stage uses q̇ of the previous point
            return m;
        }
        if !self.qdot_valid {
            return Method::BackwardEuler;
        }
        match m {
            Method::Bdf2 if self.prev.is_none() => Method::Trapezoidal,
            other => other,
        }
    }

    /// Solve one step to `t1` with method `m` (adjusted by [`Self::effective`]) without accepting it.
    pub fn attempt(&mut self, t1: f64, m: Method) -> Result<Attempt, StepFail> {
        self.attempt_from(t1, m, None)
    }

    /// [`Stepper::attempt`] with Newton started from `guess` (when given,
    /// of the right length) instead of the linear extrapolation of the last
    /// two points: e.g. the same point of the period before, on a periodic
    /// orbit (`periodic::shooting`).
    pub(crate) fn attempt_from(
        &mut self,
        t1: f64,
        m: Method,
        guess: Option<Vec<f64>>,
    ) -> Result<Attempt, StepFail> {
        let n = self.devices.n_unknowns;
        let h = t1 - self.t;
        let method = self.effective(m);
        if method == Method::Sdirk4 {
            return self.attempt_sdirk4(t1).map(|(a, _)| a);
        }
        let alpha = match method {
            Method::BackwardEuler => {
                for r in 0..n {
                    self.hist[r] = -self.q[r] / h;
                }
                1.0 / h
            }
            Method::Trapezoidal => {
                for r in 0..n {
                    self.hist[r] = -2.0 / h * self.q[r] - self.qdot[r];
                }
                2.0 / h
            }
            Method::Bdf2 => {
                let (qp, _, h0) =
                    self.prev
                        .as_ref()
                        .map(|p| (&p.0, &p.1, p.2))
                        .ok_or(StepFail {
                            failure: Failure::Singular(0, None),
                            time: t1,
                        })?;
                let (a0, a1, a2) = bdf2_coefficients(h, h0);
                for r in 0..n {
                    self.hist[r] = a1 * self.q[r] + a2 * qp[r];
                }
                a0
            }
            Method::Sdirk4 => 0.0,
        };
        // Predictor: the guess, or linear extrapolation.
        let x1 = match guess.filter(|g| g.len() == n) {
            Some(g) => g,
            None => {
                let mut x1 = self.x.clone();
                if let Some((_, xp, hp)) = &self.prev {
                    if *hp > 0.0 {
                        let r = h / hp;
                        for k in 0..n {
                            x1[k] += (self.x[k] - xp[k]) * r;
                        }
                    }
                }
                x1
            }
        };
        let hist = std::mem::take(&mut self.hist);
        let solved = self.solve_stage(t1, alpha, &hist, x1);
        self.hist = hist;
        let (x1, q1, state) = solved?;

        let qdot: Vec<f64> = (0..n).map(|r| alpha * q1[r] + self.hist[r]).collect();
        Ok(Attempt {
            t: t1,
            h,
            method,
            x: x1,
            q: q1,
            qdot,
            state,
        })
    }

    /// Solve `i(x, t) + alpha·q(x) + hist = 0` for `x` by Newton from
    /// `guess`, retrying once from the current point when the guess fails;
    /// returns `(x, q(x), device state)`.
    fn solve_stage(
        &mut self,
        t: f64,
        alpha: f64,
        hist: &[f64],
        guess: Vec<f64>,
    ) -> Result<Stage, StepFail> {
        let mut x1 = guess;
        let mut state = self.state.clone();
        let sys = System {
            devices: self.devices,
            ctx: self.ctx(t, true),
            alpha,
            hist: Some(hist),
            gshunt: 0.0,
            tol: self.tol,
            max_iter: self.max_newton,
        };
        let c = match newton::solve(&sys, &mut self.ws, &mut x1, &mut state) {
            Ok(c) => c,
            Err(failure) => {
                // Retry from the last point (the predictor may have overshot).
                let mut x2 = self.x.clone();
                let mut st2 = self.state.clone();
                match newton::solve(&sys, &mut self.ws, &mut x2, &mut st2) {
                    Ok(c) => {
                        x1 = x2;
                        state = st2;
                        c
                    }
                    Err(_) => return Err(StepFail { failure, time: t }),
                }
            }
        };
        self.newton_iterations += c.iterations;
        Ok((x1, self.ws.stamp.q.clone(), state))
    }

    /// One SDIRK4 step to `t1` ([`SDIRK4_A`]), not yet accepted, with the
    /// per-row local error estimate `h·Σ (b_j − b̂_j)·K_j` of the charges,
    /// where `K_j = q̇` at stage `j`. Each stage solves
    /// `i(X_j, t₀ + c_j h) + K_j = 0` with
    /// `K_j = (q(X_j) − q₀ − h Σ_{l<j} a_jl K_l)/(γ h)`.
    pub fn attempt_sdirk4(&mut self, t1: f64) -> Result<(Attempt, Vec<f64>), StepFail> {
        let n = self.devices.n_unknowns;
        let h = t1 - self.t;
        let alpha = 1.0 / (SDIRK4_GAMMA * h);
        let mut ks: Vec<Vec<f64>> = Vec::with_capacity(SDIRK4_C.len());
        let mut hist = vec![0.0; n];
        // Known points as (time in units of h from t₀, x): the previous
        // point, the current one, then each stage as it is solved; every
        // stage starts from the straight line through the two known points
        // nearest its time (the stage times are not monotone).
        let mut known: Vec<(f64, Vec<f64>)> = Vec::with_capacity(SDIRK4_C.len() + 2);
        if let Some((_, xp, hp)) = &self.prev {
            if *hp > 0.0 {
                known.push((-hp / h, xp.clone()));
            }
        }
        known.push((0.0, self.x.clone()));
        let mut last = None;
        for (i, row) in SDIRK4_A.iter().enumerate() {
            for (r, hr) in hist.iter_mut().enumerate() {
                let mut acc = self.q[r];
                for (a, k) in row.iter().zip(&ks).take(i) {
                    acc += h * a * k[r];
                }
                *hr = -alpha * acc;
            }
            let ti = if i + 1 == SDIRK4_C.len() {
                t1
            } else {
                self.t + SDIRK4_C[i] * h
            };
            let guess = stage_guess(&known, SDIRK4_C[i]);
            let (x, q, state) = self.solve_stage(ti, alpha, &hist, guess)?;
            let k: Vec<f64> = (0..n).map(|r| alpha * q[r] + hist[r]).collect();
            ks.push(k);
            known.push((SDIRK4_C[i], x.clone()));
            last = Some((x, q, state));
        }
        let (x, q, state) = last.ok_or(StepFail {
            failure: Failure::Singular(0, None),
            time: t1,
        })?;
        let b = &SDIRK4_A[SDIRK4_A.len() - 1];
        let err: Vec<f64> = (0..n)
            .map(|r| {
                h * b
                    .iter()
                    .zip(&SDIRK4_B_HAT)
                    .zip(&ks)
                    .map(|((bj, bh), k)| (bj - bh) * k[r])
                    .sum::<f64>()
            })
            .collect();
        let qdot = ks.pop().unwrap_or_else(|| vec![0.0; n]);
        Ok((
            Attempt {
                t: t1,
                h,
                method: Method::Sdirk4,
                x,
                q,
                qdot,
                state,
            },
            err,
        ))
    }

    /// Accept an attempt.
    pub fn commit(&mut self, a: Attempt) {
        let old_q = std::mem::replace(&mut self.q, a.q);
        let old_x = std::mem::replace(&mut self.x, a.x);
        self.prev = Some((old_q, old_x, a.h));
        self.qdot = a.qdot;
        self.qdot_valid = true;
        self.state = a.state;
        self.t = a.t;
    }

    /// One TR-BDF2 step to `t1` (R. E. Bank, W. M. Coughran, W. Fichtner,
    /// E. H. Grosse, D. J. Rose, R. K. Smith, "Transient simulation of silicon
    /// devices and circuits", IEEE Trans. CAD 4(4), 1985): a trapezoidal stage
    /// to `t + γh`, `γ = 2 − √2`, then a BDF2 stage through `t`, `t + γh`, `t1`.
    /// Second order and L-stable: unlike the plain trapezoidal rule it leaves
    /// no undamped (−1)ⁿ mode in algebraic unknowns, so a periodic solution
    /// of the discrete equations is unique.
    /// Returns the unknowns at the intermediate point `t + γh`.
    pub fn step_trbdf2(&mut self, t1: f64) -> Result<Vec<f64>, StepFail> {
        self.step_trbdf2_from(t1, |_, _| None)
    }

    /// [`Stepper::step_trbdf2`] with each stage's Newton started from
    /// `guess(x, at_stage)` where it gives a point (`x` the state the stage
    /// starts from, `at_stage` true for the intermediate point) instead of
    /// the linear extrapolation ([`Stepper::attempt_from`]).
    pub(crate) fn step_trbdf2_from(
        &mut self,
        t1: f64,
        guess: impl Fn(&[f64], bool) -> Option<Vec<f64>>,
    ) -> Result<Vec<f64>, StepFail> {
        let tg = self.t + GAMMA * (t1 - self.t);
        let a = self.attempt_from(tg, Method::Trapezoidal, guess(&self.x, true))?;
        self.commit(a);
        let xg = self.x.clone();
        let b = self.attempt_from(t1, Method::Bdf2, guess(&self.x, false))?;
        self.commit(b);
        Ok(xg)
    }

    /// Forget the history (after a breakpoint): the next step is backward Euler.
    pub fn restart(&mut self) {
        self.prev = None;
        self.qdot_valid = false;
    }
}

/// The value at time `c` (in units of the step from its start) on the
/// straight line through the two points of `known` nearest `c`; the one
/// point's value when there is only one.
fn stage_guess(known: &[(f64, Vec<f64>)], c: f64) -> Vec<f64> {
    let mut order: Vec<usize> = (0..known.len()).collect();
    order.sort_by(|&a, &b| (known[a].0 - c).abs().total_cmp(&(known[b].0 - c).abs()));
    match order.as_slice() {
        [] => Vec::new(),
        [only] => known[*only].1.clone(),
        [a, b, ..] => {
            let (ca, xa) = (&known[*a].0, &known[*a].1);
            let (cb, xb) = (&known[*b].0, &known[*b].1);
            if (ca - cb).abs() < 1e-12 {
                return xa.clone();
            }
            let w = (c - cb) / (ca - cb);
            xa.iter()
                .zip(xb)
                .map(|(va, vb)| vb + w * (va - vb))
                .collect()
        }
    }
}

/// The error of a time-domain analysis (transient, shooting, settle) asked
/// of a circuit with a measured network, which needs a fitted time-domain
/// model this build does not have.
pub fn time_domain_refused(circuit: &Circuit, e: tankwave_circuit::ElementId) -> SolveError {
    let name = circuit
        .elements
        .get(e.index())
        .map(|x| x.name.as_str())
        .unwrap_or("?");
    SolveError::BadParams(format!(
        "measured network '{name}' has no fitted time-domain model (it is made when the \
         stage file asks for a transient, shooting or settle; use AC or harmonic balance)"
    ))
}

/// Run a transient analysis.
pub fn transient(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &TransientParams,
) -> Result<TransientResult, SolveError> {
    transient_observed(circuit, devices, params, &|_| {})
}

/// Run a transient analysis, telling `progress` the fraction of the stop
/// time reached (0 to 1) as steps are accepted: at most once per thousandth
/// of the run, so a caller's progress display stays cheap. The solver prints
/// nothing itself.
pub fn transient_observed(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &TransientParams,
    progress: &(dyn Fn(f64) + Sync),
) -> Result<TransientResult, SolveError> {
    if let Some(d) = devices
        .devices
        .iter()
        .find(|d| d.frequency_domain() && !d.time_model())
    {
        return Err(time_domain_refused(circuit, d.element()));
    }
    let p = params;
    let mut told = 0.0f64;
    let bad = |m: String| Err(SolveError::BadParams(m));
    if !(p.stop.is_finite() && p.stop > 0.0) {
        return bad(format!("stop time must be positive, got {}", p.stop));
    }
    if !(p.step.is_finite() && p.step > 0.0) {
        return bad(format!("step must be positive, got {}", p.step));
    }
    let hmax = p.max_step.unwrap_or(p.step);
    if !(hmax.is_finite() && hmax > 0.0) {
        return bad(format!("max_step must be positive, got {hmax}"));
    }
    if !(p.tolerance() > 0.0 && p.tolerance() < 1.0) {
        return bad(format!(
            "rel_tolerance must be in (0, 1), got {}",
            p.tolerance()
        ));
    }
    if p.fixed_step && p.stop / hmax.min(p.step) > 1e9 {
        return bad("more than 1e9 fixed steps".into());
    }
    let hmin = p.min_step.unwrap_or(p.stop * 1e-15).max(f64::MIN_POSITIVE);
    let n = devices.n_unknowns;
    let method = match p.method {
        Integration::Trapezoidal => Method::Trapezoidal,
        Integration::Bdf2 => Method::Bdf2,
        Integration::Sdirk4 => Method::Sdirk4,
    };

    let (mut st, op_info) = match p.start {
        StartFrom::OperatingPoint => {
            let op = OpParams {
                tol: p.newton,
                time: 0.0,
                ..p.op.clone()
            };
            let (s, info) = Stepper::from_op_params(devices, &op)?;
            (s, Some(info))
        }
        StartFrom::Zero => (
            Stepper::from_zero(devices, p.newton, p.op.linear_solver, 0.0),
            None,
        ),
    };
    st.max_newton = p.max_newton;
    st.junction_leak = p.op.junction_leak;

    // Breakpoints.
    let mut bps = Vec::new();
    if !p.fixed_step {
        for d in &devices.devices {
            d.breakpoints(0.0, p.stop, &mut bps);
        }
    }
    let eps = p.stop * 1e-12;
    bps.retain(|b| b.is_finite() && *b > eps && *b < p.stop - eps);
    bps.push(p.stop);
    bps.sort_by(|a, b| a.total_cmp(b));
    bps.dedup_by(|a, b| (*a - *b).abs() <= eps);

    let mut res = TransientResult {
        names: devices.names.clone(),
        time: vec![0.0],
        x: vec![st.x.clone()],
        restarts: vec![0],
        info: TransientInfo {
            accepted: 0,
            rejected_lte: 0,
            rejected_newton: 0,
            newton_iterations: 0,
            op: op_info,
        },
    };
    let hstart = hmax.min(p.step);
    let h_restart = hstart * 1e-3;
    let mut h = if p.fixed_step { hstart } else { h_restart };
    // Segment history of (t, q) for the error estimate.
    let mut seg: Vec<(f64, Vec<f64>)> = vec![(0.0, st.q.clone())];
    let mut qmax: Vec<f64> = st.q.iter().map(|v| v.abs()).collect();
    let mut bi = 0usize;
    let mut since_restart = 0usize;
    while st.t < p.stop - eps {
        while bi < bps.len() && bps[bi] <= st.t + eps {
            bi += 1;
        }
        let next_bp = bps.get(bi).copied().unwrap_or(p.stop);
        let room = next_bp - st.t;
        let mut hh = h.min(hmax);
        if p.fixed_step {
            hh = hstart.min(room);
        } else if room <= hh * 1.01 {
            hh = room;
        } else if room < 2.0 * hh {
            hh = room / 2.0;
        }
        let t1 = if (room - hh).abs() <= eps {
            next_bp
        } else {
            st.t + hh
        };
        let attempted = if method == Method::Sdirk4 {
            st.attempt_sdirk4(t1).map(|(a, e)| (a, Some(e)))
        } else {
            st.attempt(t1, method).map(|a| (a, None))
        };
        let (a, embedded) = match attempted {
            Ok(a) => a,
            Err(f) => {
                res.info.rejected_newton += 1;
                if p.fixed_step {
                    return Err(f.into_error(devices, "transient"));
                }
                h = hh / 8.0;
                if h < hmin {
                    let worst = match &f.failure {
                        Failure::NoConvergence { worst, .. } => *worst,
                        Failure::Singular(k, _) | Failure::NonFinite(k) => *k,
                    };
                    return Err(SolveError::StepTooSmall {
                        time: st.t,
                        step: h,
                        min_step: hmin,
                        reason: format!("Newton failed: {}", f.into_error(devices, "transient")),
                        unknown: devices.names.get(worst).cloned().unwrap_or_default(),
                    });
                }
                continue;
            }
        };
        if let Some(k) = a.x.iter().position(|v| !v.is_finite()) {
            return Err(SolveError::NonFinite {
                analysis: "transient".into(),
                unknown: devices.names.get(k).cloned().unwrap_or_default(),
                when: crate::error::When(Some(t1)),
            });
        }
        // Truncation error.
        let mut grow = 2.0;
        if !p.fixed_step {
            // the order of the error estimate: the local error is O(h^(order+1))
            let order = match a.method {
                Method::BackwardEuler => 1,
                Method::Sdirk4 => 3,
                _ => 2,
            };
            let est = match embedded {
                Some(e) => Some(e),
                None => lte(&seg, &a, order, st.prev.as_ref().map(|p| p.2)),
            };
            if let Some((ratios, worst)) = est.map(|e| worst_ratio(&e, &qmax, &a.q, p)) {
                let fac = 0.9 * ratios.max(1e-12).powf(-1.0 / (order as f64 + 1.0));
                if ratios > 1.0 {
                    res.info.rejected_lte += 1;
                    h = hh * fac.clamp(0.1, 0.5);
                    if h < hmin {
                        return Err(SolveError::StepTooSmall {
                            time: st.t,
                            step: h,
                            min_step: hmin,
                            reason: format!("truncation error {ratios:.3e} × tolerance"),
                            unknown: devices.names.get(worst).cloned().unwrap_or_default(),
                        });
                    }
                    continue;
                }
                grow = fac.clamp(0.2, 2.0);
            }
        }
        // Accept.
        let hit_bp = (a.t - next_bp).abs() <= eps;
        let q1 = a.q.clone();
        st.commit(a);
        res.info.accepted += 1;
        let reached = (st.t / p.stop).clamp(0.0, 1.0);
        if reached - told >= 1e-3 {
            told = reached;
            progress(reached);
        }
        res.time.push(st.t);
        res.x.push(st.x.clone());
        for (m, v) in qmax.iter_mut().zip(&q1) {
            *m = m.max(v.abs());
        }
        since_restart += 1;
        seg.push((st.t, q1));
        if seg.len() > 4 {
            seg.remove(0);
        }
        if p.fixed_step {
            continue;
        }
        h = if since_restart <= 3 && method != Method::Sdirk4 {
            hh * 2.0_f64.min(grow.max(1.0))
        } else {
            hh * grow
        };
        if hit_bp && st.t < p.stop - eps {
            st.restart();
            seg.clear();
            seg.push((st.t, st.q.clone()));
            res.restarts.push(res.time.len() - 1);
            since_restart = 0;
            h = h_restart.min(h);
        }
    }
    let _ = n;
    res.info.newton_iterations = st.newton_iterations;
    Ok(res)
}

/// Per-row local truncation error of attempt `a` given the segment history.
fn lte(seg: &[(f64, Vec<f64>)], a: &Attempt, order: usize, h0: Option<f64>) -> Option<Vec<f64>> {
    let mut pts: Vec<(f64, &[f64])> = seg.iter().map(|(t, q)| (*t, q.as_slice())).collect();
    pts.push((a.t, a.q.as_slice()));
    let need = order + 2;
    if pts.len() < need {
        return None;
    }
    let pts = &pts[pts.len() - need..];
    let n = a.q.len();
    let h = a.h;
    let mut out = vec![0.0; n];
    for (r, o) in out.iter_mut().enumerate() {
        // Divided differences of order `order + 1`.
        let mut dd: Vec<f64> = pts.iter().map(|p| p.1[r]).collect();
        for lvl in 1..need {
            for j in 0..need - lvl {
                dd[j] = (dd[j + 1] - dd[j]) / (pts[j + lvl].0 - pts[j].0);
            }
        }
        let d = dd[0];
        *o = match a.method {
            Method::BackwardEuler => h * h * d,
            Method::Trapezoidal => 0.5 * h * h * h * d,
            Method::Bdf2 => {
                let h0 = h0.unwrap_or(h);
                h * h * (h + h0) * (h + h0) / (2.0 * h + h0) * d
            }
            // estimated from its embedded solution, never from differences
            Method::Sdirk4 => 0.0,
        };
    }
    Some(out)
}

fn worst_ratio(e: &[f64], qmax: &[f64], q1: &[f64], p: &TransientParams) -> (f64, usize) {
    let mut w = (0.0f64, 0usize);
    for r in 0..e.len() {
        let tol = p.tolerance() * qmax[r].max(q1[r].abs()) + p.charge_floor;
        let ratio = e[r].abs() / tol;
        if !(ratio <= w.0) {
            w = (ratio, r);
        }
    }
    w
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every order condition of a Runge–Kutta method up to order 4 (the
    /// eight rooted trees; Hairer, Nørsett, Wanner, Solving ODEs I, §II.2,
    /// table 2.2, from memory): the SDIRK4 weights meet all of them, the
    /// embedded weights those up to order 3 and not all of order 4.
    #[test]
    fn sdirk4_tableau_meets_the_order_conditions() {
        let a = &SDIRK4_A;
        let c: Vec<f64> = a.iter().map(|r| r.iter().sum()).collect();
        for (ci, cc) in c.iter().zip(SDIRK4_C) {
            assert!((ci - cc).abs() < 1e-15, "row sum {ci} vs c {cc}");
        }
        let n = c.len();
        let mv = |v: &[f64]| -> Vec<f64> {
            (0..n)
                .map(|i| (0..n).map(|j| a[i][j] * v[j]).sum())
                .collect()
        };
        let ac = mv(&c);
        let c2: Vec<f64> = c.iter().map(|x| x * x).collect();
        let conditions = |b: &[f64]| -> Vec<f64> {
            let s = |v: &[f64]| -> f64 { b.iter().zip(v).map(|(x, y)| x * y).sum() };
            let ones = vec![1.0; n];
            let c3: Vec<f64> = c.iter().map(|x| x * x * x).collect();
            let cac: Vec<f64> = c.iter().zip(&ac).map(|(x, y)| x * y).collect();
            vec![
                s(&ones),
                s(&c),
                s(&c2),
                s(&ac),
                s(&c3),
                s(&cac),
                s(&mv(&c2)),
                s(&mv(&ac)),
            ]
        };
        let want = [
            1.0,
            0.5,
            1.0 / 3.0,
            1.0 / 6.0,
            0.25,
            0.125,
            1.0 / 12.0,
            1.0 / 24.0,
        ];
        let b = &a[n - 1];
        for (k, (g, w)) in conditions(b).iter().zip(want).enumerate() {
            assert!(
                (g - w).abs() < 1e-13,
                "order-4 weights, condition {k}: {g} vs {w}"
            );
        }
        let bh = conditions(&SDIRK4_B_HAT);
        for k in 0..4 {
            assert!(
                (bh[k] - want[k]).abs() < 1e-13,
                "embedded, condition {k}: {}",
                bh[k]
            );
        }
        assert!(
            (4..8).any(|k| (bh[k] - want[k]).abs() > 1e-3),
            "the embedded solution must be of order 3 exactly"
        );
    }
}
