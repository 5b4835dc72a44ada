//! Envelope following: a carrier whose amplitude changes slowly, solved by
//! harmonic balance at every step of a slow time.
//!
//! Method: E. Ngoya, R. Larchevêque, "Envelope transient analysis: a new
//! method for the transient and steady state analysis of microwave
//! communication circuits and systems", IEEE MTT-S International Microwave
//! Symposium Digest, 1996 (from memory).
//!
//! # Formulation
//! Every unknown is written with two times, the carrier's fast time `t`
//! and the envelope's slow time `τ`:
//!
//! ```text
//!   x(t, τ) = Σ_{k=−K..K} X_k(τ) e^{jkω₀t},    X_{−k} = conj X_k,   x(t) = x(t, t)
//! ```
//!
//! The circuit equation `F(x, t) = i(x, t) + dq(x)/dt = 0` becomes, per
//! harmonic `k = 0..K`, one ordinary differential equation in `τ` for the
//! phasors:
//!
//! ```text
//!   I_k(X) + S_k·a(τ) + jkω₀ Q_k(X) + dQ_k(X)/dτ = 0
//! ```
//!
//! where `I_k`, `Q_k` are the harmonics over one carrier period of the
//! currents and charges of every device at the phasors `X(τ)` (linear
//! devices exactly, nonlinear ones sampled and transformed as in
//! [`mod@super::balance`]), `S_k` the harmonics of the time-varying part of
//! the sources, and `a(τ)` the drive envelope the caller gives: it scales
//! the time-varying part of every source (exactly as
//! [`tankwave_devices::EvalCtx::wave_scale`] does), or of the one source
//! [`EnvelopeParams::keyed`] names (the others' harmonics are then a constant
//! term of every step), while the DC part stays constant. Bias networks with long time constants (a base-leak RC, a feed
//! choke) thus keep their memory through `dQ₀/dτ`, and the tank's ringing
//! through `dQ₁/dτ`; when `a` is constant the derivative vanishes and the
//! equation is harmonic balance.
//!
//! # Slow-time integration
//! The slow derivative is replaced by a stiffly stable implicit formula on a
//! uniform slow step `h` ([`EnvelopeParams::step`]):
//!
//! * backward Euler, `dQ/dτ ≈ (Qⁿ − Qⁿ⁻¹)/h`, first order (global error
//!   `O(h)`), used for the first step of BDF2 and for the sub-steps below;
//! * BDF2, `dQ/dτ ≈ (3Qⁿ − 4Qⁿ⁻¹ + Qⁿ⁻²)/(2h)`, second order (global error
//!   `O(h²)`), the default.
//!
//! Both L-stable (C. W. Gear, "Numerical initial value problems in ordinary
//! differential equations", Prentice-Hall 1971, from memory): the
//! fast-decaying modes of the circuit are damped, never made to ring. Either
//! is `α Qⁿ + Hⁿ` with `α = 1/h` or `3/(2h)` and `Hⁿ` the history, so every
//! slow step is one harmonic-balance problem whose charges see the shifted
//! frequency `s_k = α + jkω₀` instead of `jkω₀`, plus a constant term `Hⁿ`:
//! the balance machinery takes both (`Problem::shift`, `Problem::history`)
//! and solves the step by its Newton iteration (junction limiting per sample,
//! line search, dense LU or GMRES by system size). Each step starts from the
//! previous step's phasors. A step whose Newton iteration fails is done
//! again as 2, 4, … backward-Euler sub-steps (at most
//! `2^`[`EnvelopeParams::max_substeps`]), the drive taken linear between
//! the step's ends (the slow grid sees the drive only at its samples, so a
//! jump between two samples is a ramp over the step); BDF2 then goes on
//! from the ends of that step, which lie `h` apart as before.
//!
//! # Start
//! The slow time starts from the steady state at drive `a(0)`: the operating
//! point at zero drive, then harmonic balance at `a(0)` (by continuation on
//! the drive when Newton does not converge at once). For a keyed carrier,
//! `a(0) = 0` and the start is the operating point.
//!
//! # Limits
//! Every unknown is kept in the Newton system (the linear network is not
//! reduced to the nonlinear ports, since the history term touches every
//! charge), so the system has `n·(2K+1)` real unknowns, bounded as in
//! harmonic balance. The number of slow steps is bounded by
//! [`EnvelopeParams::max_steps`] and the stored phasors by
//! [`MAX_STORED`] complex numbers. A stage with an element defined only
//! over frequency (a measured network) is refused: its response at the
//! shifted frequencies is not known.

use super::balance::{
    check_params, check_size, fft_size, linear_network, reduce, zero_drive, BalanceParams, Fail,
    Fft, Linear, Problem,
};
use super::{start_time, SteadyParams};
use crate::error::When;
use crate::linalg::LinearSolver;
use crate::newton::Tolerances;
use crate::SolveError;
use num_complex::Complex64 as C64;
use tankwave_circuit::{Circuit, ElementId};
use tankwave_devices::{DenseStamp, DeviceSet, EvalCtx, UnknownId};

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };

/// Most complex phasors an envelope solution stores (kept samples ×
/// (K+1) × unknowns; 16 bytes each: 128 MB).
pub const MAX_STORED: usize = 8 << 20;

/// The slow-time integration formula.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SlowMethod {
    /// Backward Euler: first order.
    BackwardEuler,
    /// BDF2 on a uniform step, started by one backward-Euler step: second order.
    #[default]
    Bdf2,
}

/// Options of envelope following.
#[derive(Debug, Clone, PartialEq)]
pub struct EnvelopeParams {
    /// Carrier frequency `f₀`, Hz (the sources must be periodic at it).
    pub freq: f64,
    /// Harmonics K of the carrier kept at every slow step (default 16; not raised).
    pub harmonics: usize,
    /// End of the slow time, s (default 1 ms).
    pub stop: f64,
    /// Slow step `h`, s (default 1 µs); rounded down so that a whole number
    /// of steps ends at `stop`.
    pub step: f64,
    /// Slow-time formula (default BDF2).
    pub method: SlowMethod,
    /// Keep the phasors of every `keep_every`-th step (default 1; the first
    /// and the last step are always kept).
    pub keep_every: usize,
    /// Most slow steps (default 200 000); more is refused before any work.
    pub max_steps: usize,
    /// Halvings of a slow step whose Newton iteration fails (default 6: down
    /// to 64 backward-Euler sub-steps).
    pub max_substeps: u32,
    /// Newton tolerances of every step.
    pub tol: Tolerances,
    /// The per-step harmonic-balance options: `oversample`, `max_iter`,
    /// `junction_leak`, `max_halvings`, `limit`, `krylov_from`, and the
    /// continuation steps of the start (`first_step`, `min_step`,
    /// `max_levels`). `reduce`, `raise_harmonics`, `max_harmonics` and
    /// `initial` are not used.
    pub balance: BalanceParams,
    /// Linear solver of the operating point.
    pub linear_solver: LinearSolver,
    /// The one source whose time-varying part the drive envelope scales
    /// (the keyed source); the other sources keep their full time-varying
    /// part. `None` (the default): every source's time-varying part is scaled.
    pub keyed: Option<ElementId>,
    /// Unknowns whose fundamental phasor `X₁` is kept at every slow step,
    /// whatever `keep_every` says ([`EnvelopeSolution::watched`]): the
    /// output's envelope at full resolution for a spectrum, without the
    /// memory of every phasor (default none).
    pub watch: Vec<UnknownId>,
}

impl Default for EnvelopeParams {
    fn default() -> Self {
        Self {
            freq: 1e6,
            harmonics: 16,
            stop: 1e-3,
            step: 1e-6,
            method: SlowMethod::Bdf2,
            keep_every: 1,
            max_steps: 200_000,
            max_substeps: 6,
            tol: Tolerances::default(),
            balance: BalanceParams::default(),
            linear_solver: LinearSolver::default(),
            keyed: None,
            watch: Vec::new(),
        }
    }
}

/// How an envelope-following run went.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct EnvelopeInfo {
    /// Slow steps taken (not counting sub-steps).
    pub steps: usize,
    /// Slow step used, s.
    pub step: f64,
    /// Steps that had to be split into backward-Euler sub-steps.
    pub split_steps: usize,
    /// Sub-steps of those steps, in total.
    pub substeps: usize,
    /// Newton iterations over every step and sub-step.
    pub newton_iterations: usize,
    /// Most Newton iterations of one step.
    pub max_step_iterations: usize,
    /// Newton iterations of the start (steady state at `a(0)`).
    pub start_iterations: usize,
    /// Drive levels of the start's continuation (0: solved at once).
    pub start_levels: usize,
    /// Largest final residual of any step, relative (as
    /// [`super::SteadyInfo::residual`]; at most `tol.rel_tolerance`).
    pub residual: f64,
    /// Order of the real Newton system, `n·(2K+1)`.
    pub system_size: usize,
    /// GMRES products over every step (0: every step by dense LU).
    pub krylov_iterations: usize,
}

/// The phasors of every unknown along the slow time.
#[derive(Debug, Clone, PartialEq)]
pub struct EnvelopeSolution {
    /// Carrier frequency, Hz.
    pub freq: f64,
    /// Harmonics K.
    pub harmonics: usize,
    /// Slow times `τ` of the kept samples, s (the first is 0).
    pub times: Vec<f64>,
    /// The drive envelope `a(τ)` at each kept sample.
    pub drive: Vec<f64>,
    /// `[sample][k][unknown]`: the two-sided phasor `X_k(τ)`, `k = 0..=K`,
    /// so that `x(t) ≈ X₀ + Σ_k 2·Re(X_k e^{jkω₀t})` near `t = τ` (volts or
    /// amperes by the unknown's kind; `X₀` real).
    pub phasors: Vec<Vec<Vec<C64>>>,
    /// `[watched][step]`: the fundamental phasor `X₁` of each unknown of
    /// [`EnvelopeParams::watch`] at every slow step `0..=steps` (slow time
    /// `step · info.step`).
    pub watched: Vec<Vec<C64>>,
    /// How it was obtained.
    pub info: EnvelopeInfo,
}

impl EnvelopeSolution {
    /// The phasor `X_k` of unknown `u` at kept sample `sample`.
    pub fn phasor(&self, sample: usize, k: usize, u: UnknownId) -> Option<C64> {
        self.phasors.get(sample)?.get(k)?.get(u.index()).copied()
    }

    /// The waveform of unknown `u` at the times `t` (s, within `0..=stop`;
    /// clamped to it): `X₀ + Σ_k 2·Re(X_k e^{jkω₀t})`, each phasor
    /// interpolated linearly between the kept samples (an error of
    /// `Δτ²/8·|X''|` for kept samples `Δτ` apart). Empty when `u` is not an
    /// unknown of the solution.
    pub fn waveform(&self, u: UnknownId, t: &[f64]) -> Vec<f64> {
        let w = 2.0 * std::f64::consts::PI * self.freq;
        let n = self.phasors.first().map_or(0, |s| s[0].len());
        if u.index() >= n || self.times.is_empty() {
            return Vec::new();
        }
        let last = self.times.len() - 1;
        t.iter()
            .map(|&at| {
                let i = self
                    .times
                    .partition_point(|v| *v < at)
                    .clamp(1.min(last), last);
                let i0 = i.saturating_sub(1);
                let span = self.times[i] - self.times[i0];
                let f = if span > 0.0 {
                    ((at - self.times[i0]) / span).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                let (a, b) = (&self.phasors[i0], &self.phasors[i]);
                (0..=self.harmonics)
                    .map(|k| {
                        let x = a[k][u.index()] + (b[k][u.index()] - a[k][u.index()]) * f;
                        if k == 0 {
                            x.re
                        } else {
                            2.0 * (x * C64::from_polar(1.0, k as f64 * w * at)).re
                        }
                    })
                    .sum()
            })
            .collect()
    }

    /// The envelope of harmonic `k` of unknown `u` at every kept sample: the
    /// peak amplitude `2|X_k|` for `k ≥ 1`, the slowly varying mean `X₀` for
    /// `k = 0` (empty when `u` or `k` is out of range).
    pub fn amplitude(&self, u: UnknownId, k: usize) -> Vec<f64> {
        if k > self.harmonics || u.index() >= self.phasors.first().map_or(0, |s| s[0].len()) {
            return Vec::new();
        }
        self.phasors
            .iter()
            .map(|s| {
                let x = s[k][u.index()];
                if k == 0 {
                    x.re
                } else {
                    2.0 * x.norm()
                }
            })
            .collect()
    }
}

/// Envelope following of the carrier at `params.freq` whose sources' time-
/// varying part is scaled by `drive(τ)` (see the module docs): from the steady
/// state at `drive(0)` to `params.stop` in slow steps of `params.step`.
///
/// Errors: [`SolveError::BadParams`] for options out of range, a
/// non-finite drive, a stage with a measured network or a run over its
/// limits; the Newton failures of a step (after its sub-steps) name the
/// step, its slow time and drive, the unknown and the harmonic.
pub fn envelope(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &EnvelopeParams,
    drive: &dyn Fn(f64) -> f64,
) -> Result<EnvelopeSolution, SolveError> {
    let steady = check(params)?;
    if let Some(d) = devices.devices.iter().find(|d| d.frequency_domain()) {
        return Err(crate::transient::time_domain_refused(circuit, d.element()));
    }
    let bp = &steady.balance;
    let n = devices.n_unknowns;
    let kmax = params.harmonics;
    let steps = step_count(params)?;
    let h = params.stop / steps as f64;
    let kept = steps / params.keep_every + 2;
    let stored = kept.saturating_mul(kmax + 1).saturating_mul(n);
    if stored > MAX_STORED {
        return Err(SolveError::BadParams(format!(
            "envelope following: {kept} kept samples × {} harmonics × {n} unknowns = {stored} \
             phasors, over the limit of {MAX_STORED}; keep fewer samples (keep_every) or use \
             fewer harmonics",
            kmax + 1
        )));
    }
    check_size(n, kmax, bp)?;
    let period = 1.0 / params.freq;
    let t_start = start_time(circuit, period);
    let (x_op, _) = zero_drive(devices, params.tol, params.linear_solver, bp)?;
    let omega = 2.0 * std::f64::consts::PI * params.freq;
    let freqs: Vec<f64> = (0..=kmax).map(|k| k as f64 * omega).collect();
    let nfft = fft_size(kmax, bp.oversample);
    let mut fft = Fft::new(nfft);
    let mut lin = linear_network(devices, kmax, &mut fft, t_start, period, bp.junction_leak)?;
    // the sources the envelope leaves alone: their harmonics come out of
    // the scaled part and into a constant term of every step
    let fixed = match params.keyed {
        Some(e) => unscaled_sources(circuit, devices, e, &mut lin, &mut fft, t_start, period)?,
        None => Vec::new(),
    };
    let all: Vec<usize> = (0..n).collect();
    let red = reduce(&lin, &all, kmax, &freqs).map_err(|f| {
        f.into_error(
            devices,
            "envelope following",
            &format!("harmonic {}", f.harmonic),
        )
    })?;
    let mut prob = Problem::new(devices, red, kmax, nfft, freqs, t_start, &steady);
    prob.krylov = prob.size() >= bp.krylov_from;
    let mut run = Run {
        prob,
        lin: &lin,
        bp,
        rel_tolerance: params.tol.rel_tolerance,
        fixed,
        info: EnvelopeInfo {
            step: h,
            system_size: (2 * kmax + 1) * n,
            ..EnvelopeInfo::default()
        },
    };

    // the start: the steady state at a(0)
    let a0 = level(drive, 0.0)?;
    let mut x: Vec<C64> = (0..=kmax)
        .flat_map(|k| (0..n).map(move |u| (k, u)))
        .map(|(k, u)| if k == 0 { C64::new(x_op[u], 0.0) } else { ZERO })
        .collect();
    run.start(&mut x, a0)?;
    let mut out = EnvelopeSolution {
        freq: params.freq,
        harmonics: kmax,
        times: Vec::with_capacity(kept),
        drive: Vec::with_capacity(kept),
        phasors: Vec::with_capacity(kept),
        watched: vec![Vec::with_capacity(steps + 1); params.watch.len()],
        info: EnvelopeInfo::default(),
    };
    let watch = |out: &mut EnvelopeSolution, x: &[C64]| {
        for (w, u) in out.watched.iter_mut().zip(&params.watch) {
            w.push(x.get(n + u.index()).copied().unwrap_or(ZERO));
        }
    };
    out.keep(0.0, a0, &x, n, kmax)?;
    watch(&mut out, &x);

    // q1: total charges at the last step, q2: at the one before
    let mut q1 = run.charges(&x);
    let mut q2: Option<Vec<C64>> = None;
    let mut a_prev = a0;
    for step in 1..=steps {
        let tau = step as f64 * h;
        let a = level(drive, tau)?;
        let x_prev = x.clone();
        let bdf2 = params.method == SlowMethod::Bdf2;
        let tried = match (&q2, bdf2) {
            (Some(qq), true) => {
                let hist = q1
                    .iter()
                    .zip(qq)
                    .map(|(a1, a2)| (-4.0 * a1 + a2) / (2.0 * h))
                    .collect();
                run.step(&mut x, a, 1.5 / h, hist)
            }
            _ => {
                let hist = q1.iter().map(|q| -q / h).collect();
                run.step(&mut x, a, 1.0 / h, hist)
            }
        };
        if let Err(first) = tried {
            x.copy_from_slice(&x_prev);
            run.split(&mut x, &q1, h, (a_prev, a), params.max_substeps)
                .map_err(|f| {
                    let f = if matches!(f, Fail::NoConvergence { .. }) {
                        f
                    } else {
                        first
                    };
                    run.error(f, step, steps, tau, a)
                })?;
        }
        let q = run.charges(&x);
        q2 = Some(std::mem::replace(&mut q1, q));
        a_prev = a;
        watch(&mut out, &x);
        if step % params.keep_every == 0 || step == steps {
            out.keep(tau, a, &x, n, kmax)?;
        }
    }
    run.info.steps = steps;
    run.info.krylov_iterations = run.prob.krylov_iterations;
    out.info = run.info;
    Ok(out)
}

/// The options as checked, and the steady-state options the balance
/// machinery reads.
fn check(params: &EnvelopeParams) -> Result<SteadyParams, SolveError> {
    let bad = |m: String| Err(SolveError::BadParams(format!("envelope following: {m}")));
    if !(params.stop.is_finite() && params.stop > 0.0) {
        return bad(format!(
            "the stop time must be positive and finite, got {} s",
            params.stop
        ));
    }
    if !(params.step.is_finite() && params.step > 0.0) {
        return bad(format!(
            "the slow step must be positive and finite, got {} s",
            params.step
        ));
    }
    if params.keep_every == 0 {
        return bad("keep_every must be at least 1".into());
    }
    if params.max_substeps > 20 {
        return bad(format!(
            "max_substeps must be at most 20, got {}",
            params.max_substeps
        ));
    }
    let steady = SteadyParams {
        freq: params.freq,
        harmonics: params.harmonics,
        tol: params.tol,
        balance: BalanceParams {
            reduce: false,
            raise_harmonics: false,
            initial: None,
            ..params.balance.clone()
        },
        linear_solver: params.linear_solver,
        ..SteadyParams::default()
    };
    steady.check()?;
    check_params(&steady.balance)?;
    Ok(steady)
}

/// Whole slow steps from 0 to `stop` (at least one), within the cap.
fn step_count(params: &EnvelopeParams) -> Result<usize, SolveError> {
    let want = (params.stop / params.step * (1.0 - 1e-12)).ceil();
    if !(want.is_finite() && want <= params.max_steps as f64) {
        return Err(SolveError::BadParams(format!(
            "envelope following: {:.3e} s in steps of {:.3e} s is {want:.0} slow steps, \
             over the limit of {}",
            params.stop, params.step, params.max_steps
        )));
    }
    Ok((want as usize).max(1))
}

/// `drive(τ)`, refused when it is not finite.
fn level(drive: &dyn Fn(f64) -> f64, tau: f64) -> Result<f64, SolveError> {
    let a = drive(tau);
    if a.is_finite() {
        Ok(a)
    } else {
        Err(SolveError::BadParams(format!(
            "envelope following: the drive envelope is {a} at τ = {tau:.6e} s"
        )))
    }
}

impl EnvelopeSolution {
    /// Append a sample (`x[k·n + u]`), refusing a non-finite phasor.
    fn keep(
        &mut self,
        tau: f64,
        a: f64,
        x: &[C64],
        n: usize,
        kmax: usize,
    ) -> Result<(), SolveError> {
        if let Some(e) = x.iter().position(|v| !v.is_finite()) {
            return Err(SolveError::NonFinite {
                analysis: format!("envelope following (harmonic {})", e / n.max(1)),
                unknown: format!("unknown #{}", e % n.max(1)),
                when: When(Some(tau)),
            });
        }
        self.times.push(tau);
        self.drive.push(a);
        self.phasors
            .push((0..=kmax).map(|k| x[k * n..(k + 1) * n].to_vec()).collect());
        Ok(())
    }
}

/// With a keyed source `keyed`: the harmonics `[k·n + u]` of the
/// time-varying part of every other source, taken out of `lin.src_wave`
/// (which the drive scales) and returned (added unscaled to every step).
/// Refused when `keyed` is not a source with a time-varying part.
fn unscaled_sources(
    circuit: &Circuit,
    devices: &DeviceSet,
    keyed: ElementId,
    lin: &mut Linear,
    fft: &mut Fft,
    t_start: f64,
    period: f64,
) -> Result<Vec<C64>, SolveError> {
    let n = devices.n_unknowns;
    let ns = fft.len();
    let kmax = lin.src_wave.len().saturating_sub(1);
    let name = circuit
        .elements
        .get(keyed.index())
        .map(|e| e.name.clone())
        .unwrap_or_else(|| format!("element #{}", keyed.index()));
    let x0 = vec![0.0; n];
    let mut state = devices.initial_state();
    // samples of the time-varying part of the keyed source and of the others
    let mut mine = vec![vec![0.0; ns]; n];
    let mut rest = vec![vec![0.0; ns]; n];
    let mut found = false;
    for (d, &off) in devices.devices.iter().zip(&devices.state_offsets) {
        if !d.is_linear() {
            continue;
        }
        let is_keyed = d.element() == keyed;
        found |= is_keyed;
        let st = &mut state[off..off + d.state_len()];
        for sample in 0..ns {
            let t = t_start + sample as f64 * period / ns as f64;
            let at = |wave: f64, st: &mut [f64]| {
                let mut stamp = DenseStamp::new(n);
                let ctx = EvalCtx {
                    time: t,
                    dc_scale: 1.0,
                    wave_scale: wave,
                    junction_leak: 0.0,
                    limit: false,
                };
                d.eval(&x0, &ctx, st, &mut stamp);
                stamp.i
            };
            let (full, none) = (at(1.0, st), at(0.0, st));
            let dst = if is_keyed { &mut mine } else { &mut rest };
            for (r, (a, b)) in full.iter().zip(&none).enumerate() {
                dst[r][sample] += a - b;
            }
        }
    }
    if !found || mine.iter().flatten().all(|v| *v == 0.0) {
        return Err(SolveError::BadParams(format!(
            "envelope following: the keyed element '{name}' is not a source with a \
             time-varying part at {:.6e} Hz",
            1.0 / period
        )));
    }
    let mut out = vec![ZERO; (kmax + 1) * n];
    let mut coef = vec![ZERO; kmax + 1];
    for (r, w) in rest.iter().enumerate() {
        if w.iter().all(|v| *v == 0.0) {
            continue;
        }
        fft.forward(w, &mut coef);
        for (k, c) in coef.iter().enumerate() {
            out[k * n + r] = *c;
            lin.src_wave[k][r] -= *c;
        }
    }
    if out.iter().any(|v| !v.is_finite()) {
        return Err(SolveError::NonFinite {
            analysis: "envelope following (the sources that are not keyed)".into(),
            unknown: name,
            when: When(None),
        });
    }
    Ok(out)
}

/// The state of a run: the balance problem and the counters.
struct Run<'a> {
    prob: Problem<'a>,
    lin: &'a Linear,
    bp: &'a BalanceParams,
    rel_tolerance: f64,
    /// Harmonics `[k·n + u]` of the sources the drive does not scale
    /// (empty when it scales every source).
    fixed: Vec<C64>,
    info: EnvelopeInfo,
}

impl Run<'_> {
    /// Total charge harmonics `[k·n + u]` at `x`: the linear devices'
    /// `C X_k` plus the nonlinear devices' `Q_k` at the last converged iterate.
    fn charges(&self, x: &[C64]) -> Vec<C64> {
        let n = self.lin.n;
        let mut q = vec![ZERO; x.len()];
        for (k, (qk, xk)) in q.chunks_mut(n).zip(x.chunks(n)).enumerate() {
            for (r, v) in qk.iter_mut().enumerate() {
                let row = &self.lin.c[r * n..(r + 1) * n];
                let mut s = ZERO;
                for (c, xv) in row.iter().zip(xk) {
                    if *c != 0.0 {
                        s += xv * *c;
                    }
                }
                *v = s + self
                    .prob
                    .last_q
                    .get(k)
                    .and_then(|qn| qn.get(r))
                    .copied()
                    .unwrap_or(ZERO);
            }
        }
        q
    }

    /// The steady state at drive `a0` from the operating point in `x`:
    /// Newton at once, else continuation on the drive from 0.
    fn start(&mut self, x: &mut [C64], a0: f64) -> Result<(), SolveError> {
        self.prob.label = Some(format!(
            "envelope following (steady state at the start, drive {a0:.4})"
        ));
        self.prob.history = self.fixed.clone();
        let x0 = x.to_vec();
        let first = match self.prob.newton(x, a0, self.bp.max_iter) {
            Ok(c) => {
                self.info.start_iterations += c.iterations;
                return Ok(());
            }
            Err(f) => f,
        };
        x.copy_from_slice(&x0);
        let (mut s, mut frac) = (0.0f64, self.bp.first_step);
        let mut attempts = 0usize;
        while s < 1.0 {
            attempts += 1;
            let t = (s + frac).min(1.0);
            let mut xt = x.to_vec();
            match self.prob.newton(&mut xt, a0 * t, self.bp.max_iter) {
                Ok(c) => {
                    self.info.start_iterations += c.iterations;
                    self.info.start_levels += 1;
                    x.copy_from_slice(&xt);
                    s = t;
                    frac = (frac * 1.5).min(1.0);
                }
                Err(f) => {
                    frac *= 0.5;
                    if frac < self.bp.min_step || attempts >= self.bp.max_levels {
                        let f = if matches!(f, Fail::NoConvergence { .. }) {
                            f
                        } else {
                            first
                        };
                        return Err(self.prob.fail_to_error(f, a0 * t));
                    }
                }
            }
        }
        Ok(())
    }

    /// One step of shift `alpha` and history `hist` at drive `a`, from `x`.
    fn step(&mut self, x: &mut [C64], a: f64, alpha: f64, mut hist: Vec<C64>) -> Result<(), Fail> {
        if self.prob.shift != alpha && !self.prob.set_shift(alpha, self.lin) {
            return Err(Fail::Escaped { iterations: 0 });
        }
        hist.iter_mut().zip(&self.fixed).for_each(|(h, f)| *h += f);
        self.prob.history = hist;
        let c = self.prob.newton(x, a, self.bp.max_iter)?;
        self.info.newton_iterations += c.iterations;
        self.info.max_step_iterations = self.info.max_step_iterations.max(c.iterations);
        self.info.residual = self.info.residual.max(c.ratio * self.rel_tolerance);
        Ok(())
    }

    /// The step of length `h` again as 2, 4, … backward-Euler sub-steps
    /// from `x` (with the charges `q0` there), the drive taken linear between
    /// its values `ends` at the step's ends (the slow grid sees the drive
    /// only at its samples, so a jump between two samples becomes a ramp
    /// over the step), until one split succeeds or `2^max` sub-steps fail.
    fn split(
        &mut self,
        x: &mut [C64],
        q0: &[C64],
        h: f64,
        ends: (f64, f64),
        max: u32,
    ) -> Result<(), Fail> {
        let x0 = x.to_vec();
        let states0 = self.prob.states_snapshot();
        let mut last = Fail::NoConvergence {
            iterations: 0,
            worst: (0, 0),
            residual: f64::INFINITY,
        };
        for level in 1..=max {
            let m = 1usize << level;
            let hs = h / m as f64;
            x.copy_from_slice(&x0);
            self.prob.restore_states(&states0);
            let mut q = q0.to_vec();
            let mut ok = true;
            for j in 1..=m {
                let a = ends.0 + (ends.1 - ends.0) * j as f64 / m as f64;
                let hist = q.iter().map(|v| -v / hs).collect();
                self.info.substeps += 1;
                if let Err(f) = self.step(x, a, 1.0 / hs, hist) {
                    last = f;
                    ok = false;
                    break;
                }
                q = self.charges(x);
            }
            if ok {
                self.info.split_steps += 1;
                return Ok(());
            }
        }
        Err(last)
    }

    /// The solver error of a failed step.
    fn error(&mut self, f: Fail, step: usize, steps: usize, tau: f64, a: f64) -> SolveError {
        self.prob.label = Some(format!(
            "envelope following (slow step {step} of {steps} at τ = {tau:.6e} s, drive {a:.4})"
        ));
        self.prob.fail_to_error(f, a)
    }
}
