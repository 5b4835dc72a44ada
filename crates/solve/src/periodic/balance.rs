//! Harmonic balance: the periodic steady state solved in the frequency domain.
//!
//! Method: M. S. Nakhla, J. Vlach, "A piecewise harmonic balance technique for
//! determination of periodic response of nonlinear systems", IEEE Trans.
//! Circuits Syst. 23(2), 1976; K. S. Kundert, A. Sangiovanni-Vincentelli,
//! "Simulation of nonlinear circuits in the frequency domain", IEEE Trans.
//! CAD 5(4), 1986.
//!
//! # Formulation
//! Every unknown is a truncated Fourier series at the fundamental `f0 = 1/T`,
//! `x(t) = X₀ + Σ_{k=1..K} 2·Re(X_k e^{jkωt})` (two-sided coefficients,
//! `X_{−k} = conj X_k`). `K` is [`SteadyParams::harmonics`] (the stage
//! language's default is 32). The circuit equations
//! `i(x, t) + dq(x)/dt = 0` become, per harmonic `k = 0..K`,
//!
//! ```text
//!   R_k = Y_k X_k + S_k + I_k(X) + jkω Q_k(X) = 0,    Y_k = G_lin + jkω C_lin
//! ```
//!
//! where `G_lin`, `C_lin` are the (constant) Jacobians of the linear devices,
//! `S_k` the coefficients of the linear devices' currents at `x = 0` (the
//! independent sources), and `I_k`, `Q_k` the coefficients of the nonlinear
//! devices' currents and charges.
//!
//! * **Linear part, exact in the frequency domain.** The unknowns touched by
//!   a nonlinear device (its terminals and internal nodes, found from which
//!   rows and columns it stamps) are the *ports* `P`; the others `O` are
//!   eliminated per harmonic with the Schur complement
//!   `Ŷ_k = Y_PP − Y_PO Y_OO⁻¹ Y_OP`, `Ŝ_k = S_P − Y_PO Y_OO⁻¹ S_O`, and
//!   recovered after convergence by back-substitution
//!   `X_O = −Y_OO⁻¹ (Y_OP X_P + S_O)`. When `Y_OO` is singular at some harmonic
//!   (or [`BalanceParams::reduce`] is off) every unknown is kept as a port.
//! * **Sources.** The linear devices are evaluated at `x = 0` over one period
//!   at `t_s + n·T/N`, where `t_s` is the first whole number of periods after
//!   every source's delay, rise or last breakpoint; the samples are
//!   transformed. The time-varying part is scaled by the drive level `s`
//!   (continuation), exactly as [`EvalCtx::wave_scale`] does. A source that is
//!   not periodic at `f0` is refused.
//! * **Nonlinear part.** The port waveforms are synthesised at `N` samples
//!   per period, `N` the smallest power of two ≥ `oversample·K` (default
//!   4·K, at least 8), so products up to the fourth order of the band-limited
//!   waveform do not alias onto the kept harmonics. The nonlinear devices are
//!   evaluated at every sample (with per-sample limiting while iterating, see
//!   below; the converged iterate has none); `i`, `q`, `G`, `C` are
//!   transformed with a real FFT. Harmonics above `K` (and the Nyquist bin of
//!   the `N`-point transform) are dropped.
//! * **Real unknowns.** Per port: `X₀` (real), then `Re X_k`, `Im X_k` for
//!   `k = 1..K`; the Newton system has `p·(2K+1)` real unknowns. `R₀` is real;
//!   `Re R_k`, `Im R_k` give the other rows.
//! * **Jacobian (conversion matrices).** With `Ĝ_m`, `Ĉ_m` the coefficients
//!   of `G(t)`, `C(t)` (`m = −2K..2K`), `δI_k = Σ_l Ĝ_{k−l} δX_l`; for the
//!   real unknowns `δX_l = a + jb` this gives
//!   `∂R_k/∂a_l = Ĝ_{k−l} + Ĝ_{k+l} + jkω(Ĉ_{k−l} + Ĉ_{k+l}) + [k=l] Ŷ_k` and
//!   `∂R_k/∂b_l = j(Ĝ_{k−l} − Ĝ_{k+l}) − kω(Ĉ_{k−l} − Ĉ_{k+l}) + [k=l] jŶ_k`
//!   (for `l = 0` only `Ĝ_k + jkωĈ_k`). It is the exact derivative of the
//!   discrete residual. Below [`BalanceParams::krylov_from`] real unknowns it
//!   is assembled over the devices' (row, column) pattern only and factored
//!   by dense LU with partial pivoting; from there on it is never formed:
//!   the step is solved by restarted GMRES ([`crate::krylov::gmres`], right-preconditioned) with the
//!   product `J v` computed per harmonic (`Ŷ_k V_k`) plus `G(t) v(t)`,
//!   `C(t) v(t)` sample by sample on the evaluation grid (the same numbers as
//!   the conversion matrices), and a block-diagonal preconditioner, one
//!   `p×p` LU per harmonic of `Ŷ_k + Ĝ₀ + jω_k Ĉ₀` (P. Feldmann,
//!   R. C. Melville, D. Long, CICC 1996, from memory), to which each group
//!   of ports the nonlinear devices join adds its own conversion matrix
//!   within a band of harmonics, by the Woodbury identity with one band LU
//!   per group (`balance_devices.rs`, [`BalanceParams::device_band`]): a
//!   transistor conducting for a third of the cycle is far from its period
//!   average, and that preconditioner alone took 100 to 450 GMRES
//!   products per Newton step on the scale bench's stages. The frequency of each
//!   harmonic slot is data (`Problem::freqs`), so another frequency set
//!   reuses the blocks: several tones mapped onto one artificial
//!   fundamental ([`mod@super::multitone`]). When GMRES does not reach
//!   its tolerance the step falls back to the dense LU (below its limit).
//!   In the product and the blocks the linear network is the dense `Ŷ_k`
//!   (`p²` per harmonic) or, for a steady state whose count of operations
//!   says so, sparse: its blocks with one sparse LU of `Y_OO` per harmonic
//!   for the product, and one sparse LU per harmonic of the whole network
//!   with the devices' averages on the ports for the preconditioner (the
//!   same block, by the Schur complement), linear in the circuit's size
//!   ([`BalanceParams::network`]).
//!
//! # Convergence aids
//! 1. Start from the operating point at zero drive (the exact solution at
//!    `s = 0`), and first try Newton at full drive directly.
//! 2. On failure, continuation on the drive: `s` from 0 to 1 in steps starting
//!    at [`BalanceParams::first_step`], grown 1.5× after a success and halved
//!    after a failure, down to [`BalanceParams::min_step`]; each level starts
//!    from a linear extrapolation of the two previous levels.
//! 3. Damping in the time domain: every sample of the nonlinear evaluation
//!    keeps its own junction-limiting state ([`BalanceParams::limit`]), so a
//!    Newton step that would throw a junction far into forward bias is cut
//!    back sample by sample exactly as in a DC Newton iteration (the device
//!    then stamps its linearisation about the limited voltage); while no
//!    junction is limited, a backtracking line search on the scaled residual
//!    norm halves the step up to [`BalanceParams::max_halvings`] times.
//!
//! # Convergence test
//! Per port row `r` and harmonic `k`: `|R_rk| ≤ rel_tolerance·s_r + abs`, where `s_r`
//! is the largest magnitude over the harmonics of any term of that row
//! (`Ŷ X`, `Ŝ`, `I`, `kωQ`) and `abs` is `current_floor` for a node row (A) or
//! `voltage_floor` for a branch row (V); and the last full Newton update within
//! `rel_tolerance·max_k |X_k| + (voltage_floor | current_floor)` for every port.
//! [`SteadyInfo::residual`] is the largest `|R_rk|/tol` times `rel_tolerance`:
//! the harmonic residual relative to the size of its row's terms (the floor
//! counted in), at most [`SteadyInfo::tolerance`] = `rel_tolerance` when converged.
//!
//! # Harmonic count
//! After convergence, the top tenth of the kept harmonics (at least one) of
//! every voltage unknown is compared with `max(truncation_rel · A₁,
//! truncation_abs)`, `A₁` the largest fundamental amplitude of any voltage
//! unknown. When exceeded and [`BalanceParams::raise_harmonics`] is on, `K`
//! is doubled (up to [`BalanceParams::max_harmonics`]) and the solve repeated
//! from the previous solution. The ratio achieved is reported in
//! [`BalanceInfo::truncation`].
//!
//! # Output
//! The [`PeriodicSolution`] samples every unknown at `N_out` points per
//! period (`params.samples()`, raised to a power of two above `2K`); the
//! terminal currents of every element are computed from the converged
//! harmonics (`I_k + jkωQ_k` of the element's devices, `k ≤ K`), so they obey
//! KCL at every node and every sample to within the harmonic residual.

#[path = "balance_devices.rs"]
mod devices;
#[path = "balance_sparse.rs"]
mod sparse;

use super::sample::{sample_currents, transport_currents, Derivative, Grid};
use super::{start_time, PeriodicSolution, SteadyInfo, SteadyParams};
use crate::error::When;
use crate::linalg::{DenseLu, LinearSolver, RealLu};
use crate::op::{solve_op, OpParams};
use crate::SolveError;
use faer::Mat;
use num_complex::Complex64 as C64;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use std::sync::Arc;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::{DenseStamp, DeviceSet, EvalCtx, Filter, Idx, Stamp, UnknownKind};

const J: C64 = C64 { re: 0.0, im: 1.0 };
const ZERO: C64 = C64 { re: 0.0, im: 0.0 };
/// Largest real Newton system (dense: its Jacobian takes 8·n² bytes, and
/// the LU a copy); a raise of K stops short of it, a request above it is refused.
const MAX_SYSTEM: usize = 5000;
/// Largest real Newton system solved by GMRES (it stores the devices' G(t),
/// C(t) over their pattern and the reduced network per harmonic, never the
/// Jacobian); a raise of K stops short of it, a request above it is refused.
const MAX_KRYLOV_SYSTEM: usize = 100_000;
/// Most complex entries of the reduced linear network over every harmonic,
/// `(K+1)·p²` (16 bytes each: 256 MB).
const MAX_NETWORK_ENTRIES: usize = 16 << 20;
/// Relative residual GMRES reaches in a Newton step, `‖J δ + R‖ ≤ η ‖R‖`:
/// an inexact Newton step with η this small converges as the exact one to
/// well below the Newton tolerances (common practice: η ≪ the ratio of
/// successive Newton residuals near convergence).
const KRYLOV_TOLERANCE: f64 = 1e-7;
/// Pivots below this fraction of the largest entry count as zero.
const PIVOT_FLOOR: f64 = 1e-14;
/// Relative tolerance of the source periodicity check (common practice: well
/// above the rounding of a sine's phase over many periods).
const PERIODIC_TOL: f64 = 1e-9;

/// Options of harmonic balance (the harmonic count itself is
/// [`SteadyParams::harmonics`]).
#[derive(Debug, Clone, PartialEq)]
pub struct BalanceParams {
    /// Samples per period of the nonlinear evaluation: the smallest power of
    /// two ≥ `oversample·K`, at least 8 (default 4).
    pub oversample: usize,
    /// Newton iteration limit per drive level (default 50).
    pub max_iter: usize,
    /// Use continuation on the drive when the direct solve fails (default true).
    pub continuation: bool,
    /// First drive step of the continuation, fraction of full drive (default 0.25).
    pub first_step: f64,
    /// Smallest drive step before giving up (default 1/1024).
    pub min_step: f64,
    /// Most drive levels attempted, successful or not (default 400).
    pub max_levels: usize,
    /// Double K while the top harmonics are not negligible (default true).
    pub raise_harmonics: bool,
    /// Cap on the raised K (default 128). K is also never raised past a Newton
    /// system of 100 000 real unknowns (ports × (2K+1); 5000 when GMRES is
    /// off, see [`BalanceParams::krylov_from`]) nor a reduced linear network of
    /// more than 16 Mi complex entries over the harmonics.
    pub max_harmonics: usize,
    /// Top-harmonic limit relative to the largest fundamental (default 1e-5,
    /// i.e. 100 dB down: 20 dB below the -80 dBc floor the reports resolve).
    pub truncation_rel: f64,
    /// Absolute top-harmonic limit, V (default 1e-9).
    pub truncation_abs: f64,
    /// Reduce the linear network to the nonlinear device ports (default true).
    pub reduce: bool,
    /// Junction conductance the devices add, S (default 1e-12).
    pub junction_leak: f64,
    /// Line-search halvings per Newton step before the level fails (default 12).
    pub max_halvings: usize,
    /// Junction limiting at every sample of the nonlinear evaluation (default
    /// true): each sample keeps its own limiting state, as a DC Newton would,
    /// and convergence needs no sample limited.
    pub limit: bool,
    /// Real Newton system size from which the step is solved by GMRES with a
    /// block-diagonal preconditioner instead of a dense LU of the Jacobian
    /// (default [`KRYLOV_FROM`], measured: docs/performance.md).
    pub krylov_from: usize,
    /// The form of the linear network in the GMRES Newton step: its dense
    /// reduction to the ports, or its sparse blocks and LU per harmonic
    /// (module docs); [`NetworkForm::Auto`] (default) takes the one with
    /// fewer operations per product.
    pub network: NetworkForm,
    /// The band of each nonlinear device's own conversion matrix that the
    /// GMRES preconditioner couples between harmonics: the coefficients
    /// `Ĝ_m`, `Ĉ_m` with `|m| ≤ device_band`, weighted by
    /// `1 − |m|/(device_band + 1)`, per group of ports the devices join, on
    /// top of the block-diagonal preconditioner (module
    /// `balance_devices`), where the network is held sparse (a stage of a
    /// few ports, dense, gets none: there they cost more than they save);
    /// 0 leaves the block-diagonal preconditioner alone (default
    /// [`DEVICE_BAND`], measured: docs/performance.md).
    pub device_band: usize,
    /// A warm start: the state at the start of a period from a solved
    /// neighbouring variant (same unknowns, as [`ShootingParams::initial`]).
    /// When given (and of the right length and finite) one period is
    /// integrated from it and its harmonics start Newton at full drive;
    /// should that fail, the solve goes on from the operating point as
    /// without it.
    ///
    /// [`ShootingParams::initial`]: super::ShootingParams::initial
    pub initial: Option<Vec<f64>>,
}

/// How the GMRES Newton step of harmonic balance holds the linear network
/// ([`BalanceParams::network`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum NetworkForm {
    /// The form with fewer operations per product, from the counts of both.
    #[default]
    Auto,
    /// The reduced network `Ŷ_k`, dense over the port pairs.
    Dense,
    /// The network's nonzeros and a sparse LU per harmonic.
    Sparse,
}

/// Default of [`BalanceParams::krylov_from`].
pub const KRYLOV_FROM: usize = 400;

/// Default of [`BalanceParams::device_band`].
pub const DEVICE_BAND: usize = 3;

impl Default for BalanceParams {
    fn default() -> Self {
        Self {
            oversample: 4,
            max_iter: 50,
            continuation: true,
            first_step: 0.25,
            min_step: 1.0 / 1024.0,
            max_levels: 400,
            raise_harmonics: true,
            max_harmonics: 128,
            truncation_rel: 1e-5,
            truncation_abs: 1e-9,
            reduce: true,
            junction_leak: 1e-12,
            max_halvings: 12,
            limit: true,
            krylov_from: KRYLOV_FROM,
            network: NetworkForm::Auto,
            device_band: DEVICE_BAND,
            initial: None,
        }
    }
}

/// Harmonic-balance details of a solve (in [`SteadyInfo::balance`]).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BalanceInfo {
    /// Harmonics K of the returned solution.
    pub harmonics: usize,
    /// Every K solved, in order (more than one when K was raised).
    pub harmonics_tried: Vec<usize>,
    /// Samples per period of the nonlinear evaluation (FFT size) at the returned K.
    pub fft_size: usize,
    /// Unknowns kept in the Newton system (touched by nonlinear devices, or all).
    pub ports: usize,
    /// Whether the linear network was reduced to the ports.
    pub reduced: bool,
    /// Drive levels solved by continuation, over every K tried (0: every K
    /// converged at full drive directly).
    pub continuation_steps: usize,
    /// Line-search step halvings in total.
    pub line_search_cuts: usize,
    /// Largest top-band harmonic over its limit (≤ 1: truncation negligible).
    pub truncation: f64,
    /// GMRES products over every Newton step (0: every step by dense LU).
    pub krylov_iterations: usize,
    /// Newton steps solved by GMRES (every K tried), with those whose
    /// GMRES did not converge (and fell back to dense LU, or failed).
    pub krylov_steps: usize,
    /// Whether the GMRES steps of the returned K held the linear network
    /// sparse ([`BalanceParams::network`]).
    pub sparse_network: bool,
}

/// Periodic steady state by harmonic balance.
///
/// Uses `params.freq`, `params.harmonics` (K, raised automatically, see the
/// module docs), `params.tol`, `params.balance`; the solution is sampled at
/// `params.samples()` points per period (more if K was raised).
pub fn balance(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    let bp = &params.balance;
    check_params(bp)?;
    let n = devices.n_unknowns;
    let period = 1.0 / params.freq;
    let t_start = start_time(circuit, period);
    // Operating point at zero drive: the exact solution at s = 0.
    let (x_op, ports_structural) = zero_drive(devices, params.tol, params.linear_solver, bp)?;

    let mut k = params.harmonics.max(1);
    let mut tried = Vec::new();
    let mut total_iter = 0usize;
    let mut cuts = 0usize;
    let mut levels = 0usize;
    let mut krylov = 0usize;
    let mut krylov_steps = 0usize;
    let mut best: Option<Solved> = None;
    let mut warm: Option<Vec<Vec<C64>>> = bp
        .initial
        .as_deref()
        .filter(|x| x.len() == n && x.iter().all(|v| v.is_finite()))
        .and_then(|x0| warm_harmonics(devices, params, x0, t_start, k));
    loop {
        tried.push(k);
        let attempt = solve_k(
            devices,
            params,
            k,
            t_start,
            &x_op,
            &ports_structural,
            warm.as_deref(),
        );
        let solved = match attempt {
            Ok(s) => s,
            Err((e, its, c)) => {
                total_iter += its;
                cuts += c;
                match best {
                    // A raised K failed: keep the last converged solution.
                    Some(b) => {
                        tried.pop();
                        let t = Totals {
                            iterations: total_iter,
                            cuts,
                            levels,
                            krylov,
                            krylov_steps,
                        };
                        return finish(circuit, devices, params, b, tried, t);
                    }
                    None => return Err(e),
                }
            }
        };
        total_iter += solved.iterations;
        cuts += solved.cuts;
        levels += solved.continuation_steps;
        krylov += solved.krylov_iterations;
        krylov_steps += solved.krylov_steps;
        let next = (2 * k).min(bp.max_harmonics);
        let fits = fits(solved.ports, next, bp);
        let more = solved.truncation > 1.0 && bp.raise_harmonics && k < bp.max_harmonics && fits;
        warm = Some(solved.x_full.clone());
        best = Some(solved);
        if !more {
            break;
        }
        k = (2 * k).min(bp.max_harmonics);
    }
    match best {
        Some(b) => {
            let t = Totals {
                iterations: total_iter,
                cuts,
                levels,
                krylov,
                krylov_steps,
            };
            finish(circuit, devices, params, b, tried, t)
        }
        None => Err(SolveError::BadParams(
            "harmonic balance: nothing solved".into(),
        )),
    }
}

pub(super) fn check_params(bp: &BalanceParams) -> Result<(), SolveError> {
    let bad = |m: String| Err(SolveError::BadParams(format!("harmonic balance: {m}")));
    if bp.oversample < 3 || bp.oversample > 64 {
        return bad(format!("oversample must be 3..64, got {}", bp.oversample));
    }
    if bp.max_iter == 0 {
        return bad("max_iter must be ≥ 1".into());
    }
    if !(bp.first_step > 0.0 && bp.first_step <= 1.0) {
        return bad(format!(
            "first_step must be in (0, 1], got {}",
            bp.first_step
        ));
    }
    if !(bp.min_step > 0.0 && bp.min_step <= bp.first_step) {
        return bad(format!(
            "min_step must be in (0, first_step], got {}",
            bp.min_step
        ));
    }
    if bp.max_harmonics == 0 || bp.max_harmonics > 1 << 12 {
        return bad(format!(
            "max_harmonics must be 1..4096, got {}",
            bp.max_harmonics
        ));
    }
    let finite_nonneg = |v: f64| v.is_finite() && v >= 0.0;
    if !(finite_nonneg(bp.truncation_rel) && finite_nonneg(bp.truncation_abs)) {
        return bad("truncation limits must be finite and ≥ 0".into());
    }
    if !(bp.junction_leak.is_finite() && bp.junction_leak >= 0.0) {
        return bad(format!(
            "junction_leak must be finite and ≥ 0, got {}",
            bp.junction_leak
        ));
    }
    Ok(())
}

/// A stamp that only records which rows and columns are touched.
struct Touched {
    hit: Vec<bool>,
}

impl Touched {
    fn mark(&mut self, i: Idx) {
        if let Some(h) = i.and_then(|k| self.hit.get_mut(k)) {
            *h = true;
        }
    }
}

impl Stamp for Touched {
    fn add_i(&mut self, row: Idx, _v: f64) {
        self.mark(row);
    }
    fn add_q(&mut self, row: Idx, _v: f64) {
        self.mark(row);
    }
    fn add_g(&mut self, row: Idx, col: Idx, _v: f64) {
        self.mark(row);
        self.mark(col);
    }
    fn add_c(&mut self, row: Idx, col: Idx, _v: f64) {
        self.mark(row);
        self.mark(col);
    }
}

/// The operating point at zero drive (every source's wave scaled to 0),
/// and the unknowns the balance keeps: the nonlinear ports when
/// `bp.reduce`, every unknown otherwise. Shared by the single- and
/// multi-tone balance.
pub(super) fn zero_drive(
    devices: &DeviceSet,
    tol: crate::newton::Tolerances,
    linear_solver: LinearSolver,
    bp: &BalanceParams,
) -> Result<(Vec<f64>, Vec<usize>), SolveError> {
    let n = devices.n_unknowns;
    let op = OpParams {
        tol,
        junction_leak: bp.junction_leak,
        wave_scale: 0.0,
        linear_solver,
        ..OpParams::default()
    };
    let mut state = devices.initial_state();
    let (x_op, _) = solve_op(devices, &op, &vec![0.0; n], &mut state)?;
    let ports = if bp.reduce {
        nonlinear_ports(devices, &x_op, bp.junction_leak)
    } else {
        (0..n).collect()
    };
    Ok((x_op, ports))
}

/// Unknowns touched by any nonlinear device (structurally, at the operating point).
pub(super) fn nonlinear_ports(devices: &DeviceSet, x_op: &[f64], junction_leak: f64) -> Vec<usize> {
    let mut t = Touched {
        hit: vec![false; devices.n_unknowns],
    };
    let mut state = devices.initial_state();
    let ctx = EvalCtx {
        junction_leak,
        limit: false,
        ..EvalCtx::default()
    };
    devices.eval_all(x_op, &ctx, &mut state, &mut t, Filter::Nonlinear);
    t.hit
        .iter()
        .enumerate()
        .filter(|(_, h)| **h)
        .map(|(k, _)| k)
        .collect()
}

/// Real FFT of one size with two-sided coefficient conventions.
pub(super) struct Fft {
    n: usize,
    fwd: Arc<dyn RealToComplex<f64>>,
    inv: Arc<dyn ComplexToReal<f64>>,
    buf: Vec<f64>,
    spec: Vec<C64>,
    scratch_f: Vec<C64>,
    scratch_i: Vec<C64>,
}

impl Fft {
    pub(super) fn new(n: usize) -> Self {
        let mut p = RealFftPlanner::<f64>::new();
        let fwd = p.plan_fft_forward(n);
        let inv = p.plan_fft_inverse(n);
        Self {
            n,
            buf: fwd.make_input_vec(),
            spec: fwd.make_output_vec(),
            scratch_f: fwd.make_scratch_vec(),
            scratch_i: inv.make_scratch_vec(),
            fwd,
            inv,
        }
    }

    /// The transform's size N.
    pub(super) fn len(&self) -> usize {
        self.n
    }

    /// `out[k] = (1/N) Σ_n x_n e^{−j2πkn/N}` for `k < out.len() ≤ N/2 + 1`.
    pub(super) fn forward(&mut self, x: &[f64], out: &mut [C64]) {
        self.buf.copy_from_slice(&x[..self.n]);
        // Lengths match by construction; an error leaves zeros (caught as a
        // non-converging residual, never a NaN).
        if self
            .fwd
            .process_with_scratch(&mut self.buf, &mut self.spec, &mut self.scratch_f)
            .is_err()
        {
            self.spec.fill(ZERO);
        }
        let s = 1.0 / self.n as f64;
        for (o, v) in out.iter_mut().zip(&self.spec) {
            *o = v * s;
        }
    }

    /// `out_n = c₀ + Σ_{k≥1} 2·Re(c_k e^{j2πkn/N})` for the given `c` (`c.len() ≤ N/2`).
    fn inverse(&mut self, c: &[C64], out: &mut [f64]) {
        self.spec.fill(ZERO);
        for (s, v) in self.spec.iter_mut().zip(c) {
            *s = *v;
        }
        self.spec[0].im = 0.0;
        if let Some(last) = self.spec.last_mut() {
            last.im = 0.0;
        }
        if self
            .inv
            .process_with_scratch(&mut self.spec, out, &mut self.scratch_i)
            .is_err()
        {
            out.fill(0.0);
        }
    }
}

/// A stamp into the port-restricted i, q (length p) and G, C, kept sparse:
/// the (row, column) pairs the nonlinear devices stamp, in the order first
/// seen (`pattern`, grown as new pairs appear), with their values per sample.
struct PortStamp<'a> {
    port_of: &'a [Option<usize>],
    i: Vec<f64>,
    q: Vec<f64>,
    /// Position of each (row, column) in `pattern`.
    index: std::collections::HashMap<(usize, usize), usize>,
    pattern: Vec<(usize, usize)>,
    g: Vec<f64>,
    c: Vec<f64>,
    escaped: bool,
}

impl PortStamp<'_> {
    fn port(&mut self, k: Idx) -> Option<Option<usize>> {
        // None: ground (dropped). Some(None): not a port (escaped).
        let k = k?;
        let p = self.port_of.get(k).copied().flatten();
        if p.is_none() {
            self.escaped = true;
        }
        Some(p)
    }
    fn clear(&mut self) {
        self.i.fill(0.0);
        self.q.fill(0.0);
        self.g.fill(0.0);
        self.c.fill(0.0);
    }
    /// Position of (r, c) in the pattern, added when new.
    fn slot(&mut self, r: usize, c: usize) -> usize {
        let next = self.pattern.len();
        let e = *self.index.entry((r, c)).or_insert(next);
        if e == next {
            self.pattern.push((r, c));
            self.g.push(0.0);
            self.c.push(0.0);
        }
        e
    }
}

impl Stamp for PortStamp<'_> {
    fn add_i(&mut self, row: Idx, v: f64) {
        if let Some(Some(r)) = self.port(row) {
            self.i[r] += v;
        }
    }
    fn add_q(&mut self, row: Idx, v: f64) {
        if let Some(Some(r)) = self.port(row) {
            self.q[r] += v;
        }
    }
    fn add_g(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(Some(r)), Some(Some(c))) = (self.port(row), self.port(col)) {
            let e = self.slot(r, c);
            self.g[e] += v;
        }
    }
    fn add_c(&mut self, row: Idx, col: Idx, v: f64) {
        if let (Some(Some(r)), Some(Some(c))) = (self.port(row), self.port(col)) {
            let e = self.slot(r, c);
            self.c[e] += v;
        }
    }
}

/// The linear network: constant Jacobians and the source coefficients.
pub(super) struct Linear {
    pub(super) n: usize,
    pub(super) g: Vec<f64>,
    pub(super) c: Vec<f64>,
    /// Source terms at zero drive (constant), per row.
    pub(super) src_dc: Vec<f64>,
    /// `[k][row]`: coefficients of the time-varying source terms at full drive.
    pub(super) src_wave: Vec<Vec<C64>>,
    /// `[k]`: what the elements defined over frequency (measured networks)
    /// add to `Y_k` at `k·f0` beyond their DC stamp, by (row, column); empty
    /// at `k = 0`, where their stamp is exact.
    pub(super) extra: Vec<std::collections::HashMap<(usize, usize), C64>>,
}

pub(super) fn linear_network(
    devices: &DeviceSet,
    kmax: usize,
    fft: &mut Fft,
    t_start: f64,
    period: f64,
    junction_leak: f64,
) -> Result<Linear, SolveError> {
    let n = devices.n_unknowns;
    let ns = fft.n;
    let x0 = vec![0.0; n];
    let mut state = devices.initial_state();
    let mut st = DenseStamp::new(n);
    let ctx = |t: f64, s: f64| EvalCtx {
        time: t,
        dc_scale: 1.0,
        wave_scale: s,
        junction_leak,
        limit: false,
    };
    devices.eval_all(&x0, &ctx(t_start, 0.0), &mut state, &mut st, Filter::Linear);
    let g = st.g.clone();
    let c = st.c.clone();
    let src_dc = st.i.clone();
    // Samples of the time-varying part over one period, and over the next one
    // (periodicity check).
    let mut wave = vec![vec![0.0; ns]; n];
    let mut worst = (0.0f64, 0usize, 0.0f64);
    let mut peak = vec![0.0f64; n];
    #[allow(clippy::needless_range_loop)] // fills `wave[row][s]` for every row
    for s in 0..ns {
        let t = t_start + s as f64 * period / ns as f64;
        st.clear();
        devices.eval_all(&x0, &ctx(t, 1.0), &mut state, &mut st, Filter::Linear);
        let a: Vec<f64> = st.i.clone();
        st.clear();
        devices.eval_all(
            &x0,
            &ctx(t + period, 1.0),
            &mut state,
            &mut st,
            Filter::Linear,
        );
        for r in 0..n {
            let v = a[r] - src_dc[r];
            if !v.is_finite() {
                return Err(SolveError::NonFinite {
                    analysis: "harmonic balance (sources)".into(),
                    unknown: devices.names.get(r).cloned().unwrap_or_default(),
                    when: When(Some(t)),
                });
            }
            wave[r][s] = v;
            peak[r] = peak[r].max(v.abs());
            let d = (st.i[r] - a[r]).abs();
            if d > worst.0 {
                worst = (d, r, t);
            }
        }
    }
    let (d, r, t) = worst;
    if d > PERIODIC_TOL * peak.get(r).copied().unwrap_or(0.0).max(1e-300) && d > 0.0 {
        return Err(SolveError::BadParams(format!(
            "harmonic balance: the source in the equation of {} is not periodic at {:.6e} Hz \
             (changes by {d:.3e} from t = {t:.6e} s to one period later)",
            devices.names.get(r).cloned().unwrap_or_default(),
            1.0 / period
        )));
    }
    let mut src_wave = vec![vec![ZERO; n]; kmax + 1];
    let mut coef = vec![ZERO; kmax + 1];
    for r in 0..n {
        if peak[r] == 0.0 {
            continue;
        }
        fft.forward(&wave[r], &mut coef);
        for k in 0..=kmax {
            src_wave[k][r] = coef[k];
        }
    }
    let mut extra = vec![std::collections::HashMap::new(); kmax + 1];
    for (k, e) in extra.iter_mut().enumerate().skip(1) {
        let f = k as f64 / period;
        for d in &devices.devices {
            let Some(entries) = d.frequency_admittance(f) else {
                return Err(SolveError::BadParams(format!(
                    "harmonic balance: measured network #{} is not defined at harmonic {k} \
                     ({f:.6e} Hz), outside its file's band (give it outside=open, outside=short, \
                     outside=hold or outside_r=, or fewer harmonics)",
                    d.element().index()
                )));
            };
            for (r, col, y) in entries {
                *e.entry((r, col)).or_insert(ZERO) += y;
            }
        }
    }
    Ok(Linear {
        n,
        g,
        c,
        src_dc,
        src_wave,
        extra,
    })
}

/// Dense complex LU with a pivot check.
fn complex_lu(m: Mat<C64>) -> Result<DenseLu<C64>, usize> {
    let n = m.nrows();
    let mut amax = 0.0f64;
    for j in 0..n {
        for i in 0..n {
            amax = amax.max(m[(i, j)].norm());
        }
    }
    if !(amax > 0.0 && amax.is_finite()) {
        return Err(0);
    }
    let lu = DenseLu::new(m);
    let u = lu.U();
    for k in 0..n {
        let pivot = u[(k, k)].norm();
        if !pivot.is_finite() || pivot <= PIVOT_FLOOR * amax {
            return Err(k);
        }
    }
    Ok(lu)
}

/// The linear network reduced to the ports, per harmonic.
pub(super) struct Reduced {
    pub(super) ports: Vec<usize>,
    pub(super) others: Vec<usize>,
    /// `[k]`: p×p row-major Ŷ_k.
    yhat: Vec<Vec<C64>>,
    /// Ŝ at zero drive (DC only), p.
    shat_dc: Vec<C64>,
    /// `[k]`: Ŝ of the time-varying part at full drive, p.
    shat_wave: Vec<Vec<C64>>,
    /// `[k]`: o×p row-major Y_OO⁻¹ Y_OP.
    z: Vec<Vec<C64>>,
    /// Y_OO⁻¹ S_O at zero drive (DC), o.
    zs_dc: Vec<C64>,
    /// `[k]`: Y_OO⁻¹ S_O of the time-varying part, o.
    zs_wave: Vec<Vec<C64>>,
}

/// Why a reduction failed: the harmonic, and the position in `O` of the
/// column without a pivot (`None` for a non-finite result).
#[derive(Debug, Clone, Copy)]
pub(super) struct ReduceFail {
    pub(super) harmonic: usize,
    pub(super) column: Option<usize>,
}

impl ReduceFail {
    /// The solver error of a linear network that cannot be reduced at the
    /// harmonic (or mixing product) `at` names: the unknown without a
    /// pivot and its likely cause.
    pub(super) fn into_error(self, devices: &DeviceSet, analysis: &str, at: &str) -> SolveError {
        SolveError::Singular {
            analysis: format!("{analysis} (linear network at {at})"),
            unknown: self
                .column
                .and_then(|c| devices.names.get(c))
                .cloned()
                .unwrap_or_else(|| "a non-finite entry".into()),
            cause: self
                .column
                .map(|c| crate::singular::guess(devices, c))
                .unwrap_or_else(|| "a non-finite value in the linear network".into()),
            when: When(None),
        }
    }
}

/// Reduce to `ports`, growing the port set by the unknowns of `O` that leave
/// `Y_OO` without a pivot (e.g. the branch current of a voltage source
/// driving a port directly) until the reduction exists.
pub(super) fn reduce_growing(
    lin: &Linear,
    ports: &[usize],
    kmax: usize,
    freqs: &[f64],
) -> Result<Reduced, ReduceFail> {
    let mut ports = ports.to_vec();
    loop {
        match reduce(lin, &ports, kmax, freqs) {
            Ok(r) => return Ok(r),
            Err(f) => {
                let mut is_port = vec![false; lin.n];
                for &p in &ports {
                    is_port[p] = true;
                }
                let others: Vec<usize> = (0..lin.n).filter(|k| !is_port[*k]).collect();
                match f.column.and_then(|c| others.get(c)) {
                    Some(&u) => {
                        ports.push(u);
                        ports.sort_unstable();
                    }
                    None => return Err(f),
                }
            }
        }
    }
}

/// Reduce to `ports`; fails on a singular `Y_OO`. `freqs[k]` is the angular
/// frequency of slot `k` (`k·ω` for one tone; any sign).
pub(super) fn reduce(
    lin: &Linear,
    ports: &[usize],
    kmax: usize,
    freqs: &[f64],
) -> Result<Reduced, ReduceFail> {
    let n = lin.n;
    let mut is_port = vec![false; n];
    for &p in ports {
        is_port[p] = true;
    }
    let others: Vec<usize> = (0..n).filter(|k| !is_port[*k]).collect();
    let (p, o) = (ports.len(), others.len());
    let mut red = Reduced {
        ports: ports.to_vec(),
        others: others.clone(),
        yhat: Vec::with_capacity(kmax + 1),
        shat_dc: vec![ZERO; p],
        shat_wave: Vec::with_capacity(kmax + 1),
        z: Vec::with_capacity(kmax + 1),
        zs_dc: vec![ZERO; o],
        zs_wave: Vec::with_capacity(kmax + 1),
    };
    for k in 0..=kmax {
        let w = freqs[k];
        let fd = &lin.extra[k];
        let y = |r: usize, c: usize| {
            let base = C64::new(lin.g[r * n + c], w * lin.c[r * n + c]);
            if fd.is_empty() {
                base
            } else {
                base + fd.get(&(r, c)).copied().unwrap_or(ZERO)
            }
        };
        let mut yhat: Vec<C64> = Vec::with_capacity(p * p);
        for &r in ports {
            for &c in ports {
                yhat.push(y(r, c));
            }
        }
        let mut shat: Vec<C64> = ports.iter().map(|&r| lin.src_wave[k][r]).collect();
        let mut z = vec![ZERO; o * p];
        let mut zs = vec![ZERO; o];
        if o > 0 {
            let yoo = Mat::<C64>::from_fn(o, o, |i, j| y(others[i], others[j]));
            let lu = complex_lu(yoo).map_err(|c| ReduceFail {
                harmonic: k,
                column: Some(c),
            })?;
            let extra = if k == 0 { 2 } else { 1 };
            let mut rhs = Mat::<C64>::from_fn(o, p + extra, |i, j| {
                let r = others[i];
                if j < p {
                    y(r, ports[j])
                } else if j == p {
                    lin.src_wave[k][r]
                } else {
                    C64::new(lin.src_dc[r], 0.0)
                }
            });
            lu.solve_in_place(rhs.as_mut());
            for i in 0..o {
                for j in 0..p {
                    z[i * p + j] = rhs[(i, j)];
                }
                zs[i] = rhs[(i, p)];
                if k == 0 {
                    red.zs_dc[i] = rhs[(i, p + 1)];
                }
            }
            // Schur complement.
            for (a, &r) in ports.iter().enumerate() {
                for (i, &oi) in others.iter().enumerate() {
                    let ypo = y(r, oi);
                    if ypo == ZERO {
                        continue;
                    }
                    for b in 0..p {
                        yhat[a * p + b] -= ypo * z[i * p + b];
                    }
                    shat[a] -= ypo * zs[i];
                    if k == 0 {
                        red.shat_dc[a] -= ypo * red.zs_dc[i];
                    }
                }
            }
        }
        if k == 0 {
            for (a, &r) in ports.iter().enumerate() {
                red.shat_dc[a] += C64::new(lin.src_dc[r], 0.0);
            }
        }
        if yhat.iter().chain(&shat).chain(&z).any(|v| !v.is_finite()) {
            return Err(ReduceFail {
                harmonic: k,
                column: None,
            });
        }
        red.yhat.push(yhat);
        red.shat_wave.push(shat);
        red.z.push(z);
        red.zs_wave.push(zs);
    }
    Ok(red)
}

/// Coefficients of the nonlinear devices at one iterate.
struct NlEval {
    /// `[k][r]`, k ≤ K.
    i: Vec<Vec<C64>>,
    q: Vec<Vec<C64>>,
    /// The (row, column) port pairs of G and C that the devices stamp.
    pattern: Vec<(usize, usize)>,
    /// `[m][e]` for the pattern entry `e`, m ≤ 2K.
    g: Vec<Vec<C64>>,
    c: Vec<Vec<C64>>,
    /// `[e][sample]`: G and C over the period, for the matrix-free product.
    gt: Vec<Vec<f64>>,
    ct: Vec<Vec<f64>>,
}

/// One harmonic-balance problem at a fixed K.
pub(super) struct Problem<'a> {
    devices: &'a DeviceSet,
    pub(super) red: Reduced,
    port_of: Vec<Option<usize>>,
    kmax: usize,
    /// Angular frequency of each harmonic slot `k = 0..=K` (`k·ω` for one
    /// tone): the blocks of the linear network, the `jω Q` terms and the
    /// preconditioner read it from here, not from `k`.
    freqs: Vec<f64>,
    t_start: f64,
    period: f64,
    junction_leak: f64,
    fft: Fft,
    tol: crate::Tolerances,
    /// Absolute residual tolerance of each port row (A for node rows, V for branch rows).
    row_abs: Vec<f64>,
    /// Absolute update tolerance of each port unknown.
    var_abs: Vec<f64>,
    max_halvings: usize,
    /// Junction limiting at every sample.
    limit: bool,
    /// Limiting state of the devices at every sample (`N × state_len`),
    /// from the last converged solve.
    states: Vec<f64>,
    /// The G, C pattern learnt so far (see [`PortStamp`]).
    index: std::collections::HashMap<(usize, usize), usize>,
    pattern: Vec<(usize, usize)>,
    /// Solve the Newton system by GMRES (see [`BalanceParams::krylov_from`]).
    pub(super) krylov: bool,
    /// GMRES products over every Newton step of this problem.
    pub(super) krylov_iterations: usize,
    /// Newton steps of this problem given to GMRES.
    pub(super) krylov_steps: usize,
    /// The band of the devices' blocks of the preconditioner
    /// ([`BalanceParams::device_band`]).
    device_band: usize,
    /// The linear network held sparse for the GMRES step
    /// ([`Problem::hold_sparse`]); `None`: the dense `Ŷ_k`.
    net: Option<sparse::SparseNet>,
    /// Whether `net` still has to be weighed against the dense form (on
    /// the first GMRES step, when the preconditioner's fill is known).
    net_auto: bool,
    /// What a person calls each slot in a message (`harmonic k` when empty).
    pub(super) slot_names: Vec<String>,
    /// A real shift `α` added to the frequency of every slot, `s_k = α + jω_k`,
    /// on the devices' charges (applied in [`Problem::eval_nl`] as `i + αq`,
    /// `G + αC`, and on the linear network by [`Problem::set_shift`]): the
    /// slow-time derivative of an envelope step ([`mod@super::envelope`]).
    /// 0 for a steady state.
    pub(super) shift: f64,
    /// A constant term of the residual per `[k·p + r]` (an envelope step's
    /// history of charges); empty for a steady state.
    pub(super) history: Vec<C64>,
    /// The nonlinear devices' charge harmonics `[k][r]` at the last
    /// converged iterate.
    pub(super) last_q: Vec<Vec<C64>>,
    /// The analysis named in errors (harmonic balance when `None`).
    pub(super) label: Option<String>,
}

/// Why a Newton solve at one drive level stopped.
#[derive(Debug, Clone)]
pub(super) enum Fail {
    NoConvergence {
        iterations: usize,
        worst: (usize, usize),
        residual: f64,
    },
    Singular {
        iterations: usize,
        slot: usize,
        /// What the numbers of the Newton matrix point to ([`crate::singular`]).
        cause: Option<String>,
    },
    NonFinite {
        iterations: usize,
        port: usize,
    },
    Escaped {
        iterations: usize,
    },
}

impl Fail {
    fn iterations(&self) -> usize {
        match self {
            Fail::NoConvergence { iterations, .. }
            | Fail::Singular { iterations, .. }
            | Fail::NonFinite { iterations, .. }
            | Fail::Escaped { iterations } => *iterations,
        }
    }
}

/// A converged Newton solve.
pub(super) struct Converged {
    pub(super) iterations: usize,
    pub(super) ratio: f64,
    pub(super) cuts: usize,
}

impl<'a> Problem<'a> {
    /// `freqs[k]`: angular frequency of slot `k = 0..=kmax`.
    pub(super) fn new(
        devices: &'a DeviceSet,
        red: Reduced,
        kmax: usize,
        nfft: usize,
        freqs: Vec<f64>,
        t_start: f64,
        params: &SteadyParams,
    ) -> Self {
        let mut port_of = vec![None; devices.n_unknowns];
        for (a, &u) in red.ports.iter().enumerate() {
            port_of[u] = Some(a);
        }
        let kind = |u: usize| devices.kinds.get(u).copied();
        let row_abs = red
            .ports
            .iter()
            .map(|&u| match kind(u) {
                Some(UnknownKind::Current) => params.tol.voltage_floor,
                _ => params.tol.current_floor,
            })
            .collect();
        let var_abs = red
            .ports
            .iter()
            .map(|&u| match kind(u) {
                Some(UnknownKind::Current) => params.tol.current_floor,
                _ => params.tol.voltage_floor,
            })
            .collect();
        Self {
            devices,
            red,
            port_of,
            kmax,
            freqs,
            t_start,
            period: 1.0 / params.freq,
            junction_leak: params.balance.junction_leak,
            fft: Fft::new(nfft),
            tol: params.tol,
            row_abs,
            var_abs,
            max_halvings: params.balance.max_halvings,
            limit: params.balance.limit,
            states: devices.initial_state().repeat(nfft),
            index: std::collections::HashMap::new(),
            pattern: Vec::new(),
            krylov: false,
            krylov_iterations: 0,
            krylov_steps: 0,
            device_band: params.balance.device_band,
            net: None,
            net_auto: false,
            slot_names: Vec::new(),
            shift: 0.0,
            history: Vec::new(),
            last_q: Vec::new(),
            label: None,
        }
    }

    /// Set the shift `α` ([`Problem::shift`]) and rebuild the linear network
    /// per slot as `G + αC + jω_k C` from `lin`. Only for a problem that
    /// keeps every unknown as a port (no reduction: the Schur complement
    /// would change with `α`) and has no element defined over frequency;
    /// returns false (and changes nothing) otherwise.
    pub(super) fn set_shift(&mut self, alpha: f64, lin: &Linear) -> bool {
        let (p, n) = (self.p(), lin.n);
        let whole = self.red.others.is_empty()
            && p == n
            && self.red.ports.iter().enumerate().all(|(a, &u)| a == u)
            && lin.extra.iter().all(|e| e.is_empty())
            && self.red.yhat.len() == self.freqs.len();
        if !whole {
            return false;
        }
        for (y, &w) in self.red.yhat.iter_mut().zip(&self.freqs) {
            for (e, v) in y.iter_mut().enumerate() {
                let (g, c) = (lin.g[e], lin.c[e]);
                *v = C64::new(g + alpha * c, w * c);
            }
        }
        self.shift = alpha;
        // the sparse network holds the unshifted blocks
        self.net = None;
        true
    }

    /// Hold the linear network `lin` sparse for the GMRES step (module
    /// [`sparse`]) as `form` asks: always for [`NetworkForm::Sparse`],
    /// never for [`NetworkForm::Dense`], and for [`NetworkForm::Auto`]
    /// while its operation count per product is below the dense blocks'
    /// (weighed on the first GMRES step). Nothing without GMRES or when a
    /// sparse LU of `Y_OO` fails.
    pub(super) fn hold_sparse(&mut self, lin: &Linear, form: NetworkForm) {
        if !self.krylov || form == NetworkForm::Dense || self.shift != 0.0 {
            return;
        }
        self.net = sparse::SparseNet::new(lin, &self.red.ports, &self.red.others, &self.freqs);
        self.net_auto = form == NetworkForm::Auto;
    }

    /// Whether the GMRES steps hold the network sparse.
    pub(super) fn holds_sparse(&self) -> bool {
        self.net.is_some()
    }

    /// The per-sample limiting states committed by the last converged solve.
    pub(super) fn states_snapshot(&self) -> Vec<f64> {
        self.states.clone()
    }

    /// Put back states from [`Problem::states_snapshot`].
    pub(super) fn restore_states(&mut self, s: &[f64]) {
        if s.len() == self.states.len() {
            self.states.copy_from_slice(s);
        }
    }

    pub(super) fn p(&self) -> usize {
        self.red.ports.len()
    }

    /// Order of the real Newton system.
    pub(super) fn size(&self) -> usize {
        self.p() * (2 * self.kmax + 1)
    }

    /// Evaluate the nonlinear devices over one period at port harmonics `x[k·p + r]`.
    fn eval_nl(&mut self, x: &[C64], states: &mut [f64]) -> Result<(NlEval, bool), Fail> {
        let p = self.p();
        let kmax = self.kmax;
        let ns = self.fft.n;
        let n = self.devices.n_unknowns;
        // Port waveforms.
        let mut wave = vec![vec![0.0; ns]; p];
        let mut coef = vec![ZERO; kmax + 1];
        for (r, wr) in wave.iter_mut().enumerate() {
            for k in 0..=kmax {
                coef[k] = x[k * p + r];
            }
            self.fft.inverse(&coef, wr);
        }
        let mut it = vec![vec![0.0; ns]; p];
        let mut qt = vec![vec![0.0; ns]; p];
        let nnz = self.pattern.len();
        let mut gt = vec![vec![0.0; ns]; nnz];
        let mut ct = vec![vec![0.0; ns]; nnz];
        let mut xs = vec![0.0; n];
        let sl = self.devices.state_len;
        let mut limited = false;
        let mut st = PortStamp {
            port_of: &self.port_of,
            i: vec![0.0; p],
            q: vec![0.0; p],
            index: std::mem::take(&mut self.index),
            pattern: std::mem::take(&mut self.pattern),
            g: vec![0.0; nnz],
            c: vec![0.0; nnz],
            escaped: false,
        };
        for s in 0..ns {
            for (r, &u) in self.red.ports.iter().enumerate() {
                xs[u] = wave[r][s];
            }
            let ctx = EvalCtx {
                time: self.t_start + s as f64 * self.period / ns as f64,
                dc_scale: 1.0,
                wave_scale: 1.0,
                junction_leak: self.junction_leak,
                limit: self.limit,
            };
            st.clear();
            let state = states.get_mut(s * sl..(s + 1) * sl).unwrap_or(&mut []);
            let info = self
                .devices
                .eval_all(&xs, &ctx, state, &mut st, Filter::Nonlinear);
            limited |= info.limited;
            for r in 0..p {
                it[r][s] = st.i[r];
                qt[r][s] = st.q[r];
            }
            // a pair first stamped at this sample was zero before it
            gt.resize(st.pattern.len(), vec![0.0; ns]);
            ct.resize(st.pattern.len(), vec![0.0; ns]);
            for (e, (g, c)) in st.g.iter().zip(&st.c).enumerate() {
                gt[e][s] = *g;
                ct[e][s] = *c;
            }
        }
        let escaped = st.escaped;
        self.index = st.index;
        self.pattern = st.pattern;
        let nnz = self.pattern.len();
        if escaped {
            return Err(Fail::Escaped { iterations: 0 });
        }
        let nonfinite = |v: &[Vec<f64>]| v.iter().position(|w| w.iter().any(|a| !a.is_finite()));
        if let Some(r) = nonfinite(&it).or(nonfinite(&qt)) {
            return Err(Fail::NonFinite {
                iterations: 0,
                port: r,
            });
        }
        if let Some(e) = nonfinite(&gt).or(nonfinite(&ct)) {
            return Err(Fail::NonFinite {
                iterations: 0,
                port: self.pattern.get(e).map_or(0, |rc| rc.0),
            });
        }
        if self.shift != 0.0 {
            // s_k = α + jω_k on the charges: α q joins the currents and α C
            // the conductances, so every later step (residual, conversion
            // matrices, matrix-free product, preconditioner) carries it
            let a = self.shift;
            for (iw, qw) in it.iter_mut().zip(&qt) {
                iw.iter_mut().zip(qw).for_each(|(i, q)| *i += a * q);
            }
            for (gw, cw) in gt.iter_mut().zip(&ct) {
                gw.iter_mut().zip(cw).for_each(|(g, c)| *g += a * c);
            }
        }
        let mut ev = NlEval {
            i: vec![vec![ZERO; p]; kmax + 1],
            q: vec![vec![ZERO; p]; kmax + 1],
            pattern: self.pattern.clone(),
            g: vec![vec![ZERO; nnz]; 2 * kmax + 1],
            c: vec![vec![ZERO; nnz]; 2 * kmax + 1],
            gt: Vec::new(),
            ct: Vec::new(),
        };
        let mut c1 = vec![ZERO; kmax + 1];
        let mut c2 = vec![ZERO; 2 * kmax + 1];
        for r in 0..p {
            self.fft.forward(&it[r], &mut c1);
            for (dst, v) in ev.i.iter_mut().zip(&c1) {
                dst[r] = *v;
            }
            self.fft.forward(&qt[r], &mut c1);
            for (dst, v) in ev.q.iter_mut().zip(&c1) {
                dst[r] = *v;
            }
        }
        for e in 0..nnz {
            if gt[e].iter().any(|v| *v != 0.0) {
                self.fft.forward(&gt[e], &mut c2);
                for (dst, v) in ev.g.iter_mut().zip(&c2) {
                    dst[e] = *v;
                }
            }
            if ct[e].iter().any(|v| *v != 0.0) {
                self.fft.forward(&ct[e], &mut c2);
                for (dst, v) in ev.c.iter_mut().zip(&c2) {
                    dst[e] = *v;
                }
            }
        }
        ev.gt = gt;
        ev.ct = ct;
        Ok((ev, limited))
    }

    /// Residual `R[k·p + r]` at drive `s`, and the per-row scale of its terms.
    fn residual(&self, x: &[C64], ev: &NlEval, s: f64) -> (Vec<C64>, Vec<f64>) {
        let p = self.p();
        let mut res = vec![ZERO; (self.kmax + 1) * p];
        let mut scale = vec![0.0f64; p];
        for k in 0..=self.kmax {
            let w = self.freqs[k];
            let y = &self.red.yhat[k];
            for r in 0..p {
                let mut yx = ZERO;
                for c in 0..p {
                    yx += y[r * p + c] * x[k * p + c];
                }
                let mut src = self.red.shat_wave[k][r] * s;
                if k == 0 {
                    src += self.red.shat_dc[r];
                }
                if let Some(h) = self.history.get(k * p + r) {
                    src += *h;
                }
                let iq = ev.i[k][r];
                let qq = J * w * ev.q[k][r];
                res[k * p + r] = yx + src + iq + qq;
                let m = yx.norm().max(src.norm()).max(iq.norm()).max(qq.norm());
                scale[r] = scale[r].max(m);
            }
        }
        (res, scale)
    }

    fn tolerances(&self, scale: &[f64]) -> Vec<f64> {
        scale
            .iter()
            .zip(&self.row_abs)
            .map(|(s, a)| self.tol.rel_tolerance * s + a)
            .collect()
    }

    /// Largest |R|/tol with its (port, harmonic) and |R|.
    fn worst(&self, res: &[C64], tol: &[f64]) -> (f64, (usize, usize), f64) {
        let p = self.p();
        let mut w = (0.0f64, (0usize, 0usize), 0.0f64);
        for (e, v) in res.iter().enumerate() {
            let r = e % p;
            let ratio = v.norm() / tol[r];
            if ratio > w.0 || ratio.is_nan() {
                w = (ratio, (r, e / p), v.norm());
            }
        }
        w
    }

    fn merit(&self, res: &[C64], tol: &[f64]) -> f64 {
        let p = self.p();
        res.iter()
            .enumerate()
            .map(|(e, v)| v.norm_sqr() / (tol[e % p] * tol[e % p]))
            .sum()
    }

    /// Real row-major Jacobian of the residual (see the module docs).
    fn jacobian(&self, ev: &NlEval) -> Vec<f64> {
        let p = self.p();
        let kmax = self.kmax;
        let m = self.size();
        let mut jac = vec![0.0; m * m];
        let ghat = |m: isize, e: usize, src: &Vec<Vec<C64>>| -> C64 {
            if m >= 0 {
                src[m as usize][e]
            } else {
                src[(-m) as usize][e].conj()
            }
        };
        for k in 0..=kmax {
            let w = self.freqs[k];
            let rows: [Option<usize>; 2] = if k == 0 {
                [Some(0), None]
            } else {
                [Some(2 * k - 1), Some(2 * k)]
            };
            for l in 0..=kmax {
                // the linear network on the diagonal blocks (dense p×p), then
                // the conversion matrices over the devices' pattern
                let ylin = (k == l).then(|| (0..p * p).map(move |e| (e / p, e % p, None::<usize>)));
                let conv = ev
                    .pattern
                    .iter()
                    .enumerate()
                    .map(|(e, &(r, c))| (r, c, Some(e)));
                for (r, c, e) in ylin.into_iter().flatten().chain(conv) {
                    let (da, db) = match e {
                        None => {
                            let y = self.red.yhat[k][r * p + c];
                            (y, (l > 0).then_some(J * y))
                        }
                        Some(e) if l == 0 => (ev.g[k][e] + J * w * ev.c[k][e], None),
                        Some(e) => {
                            let (km, kp) = (k as isize - l as isize, (k + l) as isize);
                            let gm = ghat(km, e, &ev.g);
                            let gp = ghat(kp, e, &ev.g);
                            let cm = ghat(km, e, &ev.c);
                            let cp = ghat(kp, e, &ev.c);
                            let da = gm + gp + J * w * (cm + cp);
                            let db = J * (gm - gp) - w * (cm - cp);
                            (da, Some(db))
                        }
                    };
                    {
                        let cols: [usize; 2] = if l == 0 {
                            [c, usize::MAX]
                        } else {
                            [(2 * l - 1) * p + c, 2 * l * p + c]
                        };
                        for (part, slot) in rows.iter().enumerate() {
                            let Some(slot) = slot else { continue };
                            let row = slot * p + r;
                            let pick = |v: C64| if part == 0 { v.re } else { v.im };
                            jac[row * m + cols[0]] += pick(da);
                            if let Some(db) = db {
                                jac[row * m + cols[1]] += pick(db);
                            }
                        }
                    }
                }
            }
        }
        jac
    }

    /// The Newton step by GMRES: on entry `b = −R` (real layout), on
    /// success the step. The Jacobian is never formed: its product with a
    /// vector is the linear network per harmonic plus the devices' G(t),
    /// C(t) applied sample by sample ([`Problem::jacobian_product`]); the
    /// preconditioner is block-diagonal over the harmonics (each block the
    /// linear network plus the period average of G and C, P. Feldmann,
    /// R. C. Melville, D. Long, "Efficient frequency domain analysis of large
    /// nonlinear analog circuits", CICC 1996, from memory), with each
    /// device's own coupling between harmonics added back by the blocks of
    /// module `devices` ([`BalanceParams::device_band`]). Returns false
    /// (and leaves `b`) when a block is singular or GMRES does not reach its
    /// tolerance: the caller then factors the full Jacobian.
    fn krylov_step(&mut self, ev: &NlEval, b: &mut [f64]) -> bool {
        let p = self.p();
        if let Some(net) = self.net.as_mut() {
            let g0: Vec<C64> = ev.g.first().cloned().unwrap_or_default();
            let c0: Vec<C64> = ev.c.first().cloned().unwrap_or_default();
            let ok = g0.len() == ev.pattern.len()
                && c0.len() == ev.pattern.len()
                && net.factor_preconditioner(&ev.pattern, &g0, &c0, &self.freqs);
            if !ok || (self.net_auto && !net.cheaper_than_dense()) {
                // the dense blocks from here on
                self.net = None;
            }
            self.net_auto = false;
        }
        let blocks = match self.net {
            Some(_) => Vec::new(),
            None => match self.preconditioner(ev) {
                Some(b) => b,
                None => return false,
            },
        };
        let net = self.net.as_ref();
        // harmonic k of the block-diagonal preconditioner P, in place
        let solve_k = |k: usize, zs: &mut [C64], buf: &mut Vec<C64>| match (net, blocks.get(k)) {
            (Some(net), _) => net.precondition(k, zs, buf),
            (None, Some(lu)) => {
                let mut z = Mat::<C64>::from_fn(p, 1, |r, _| zs[r]);
                lu.solve_in_place(z.as_mut());
                for (r, v) in zs.iter_mut().enumerate() {
                    *v = z[(r, 0)];
                }
            }
            (None, None) => {}
        };
        // `out = P⁻¹ v` (real layout)
        let p_inv = |v: &[f64], out: &mut [f64]| {
            let mut zs = vec![ZERO; p];
            let mut buf: Vec<C64> = Vec::new();
            for k in 0..=self.kmax {
                for r in 0..p {
                    zs[r] = if k == 0 {
                        C64::new(v[r], 0.0)
                    } else {
                        C64::new(v[(2 * k - 1) * p + r], v[2 * k * p + r])
                    };
                }
                solve_k(k, &mut zs, &mut buf);
                for r in 0..p {
                    if k == 0 {
                        out[r] = zs[r].re;
                    } else {
                        out[(2 * k - 1) * p + r] = zs[r].re;
                        out[2 * k * p + r] = zs[r].im;
                    }
                }
            }
        };
        // each device's coupling between harmonics (module `devices`)
        let conv = devices::Conversion {
            pattern: &ev.pattern,
            g: &ev.g,
            c: &ev.c,
            freqs: &self.freqs,
            // only with the network held sparse (many ports): on a stage
            // of a few ports the blocks cost more than the products they
            // save (docs/performance.md, "The devices' blocks")
            band: if self.net.is_some() {
                self.device_band
            } else {
                0
            },
        };
        let dev = devices::DeviceBlocks::new(&conv, p, self.kmax, solve_k);
        let scratch = std::cell::RefCell::new((Vec::new(), Vec::new(), Vec::new()));
        let precond = |v: &[f64], out: &mut [f64]| {
            p_inv(v, out);
            if let Some(dev) = &dev {
                // M⁻¹ v = y − P⁻¹ t, y = P⁻¹ v, t = Σ_g R_gᵀ u_g
                let mut s = scratch.borrow_mut();
                let (t, pt, buf) = &mut *s;
                t.resize(out.len(), 0.0);
                pt.resize(out.len(), 0.0);
                dev.correction(out, t, buf);
                p_inv(t, pt);
                for (o, d) in out.iter_mut().zip(pt.iter()) {
                    *o -= d;
                }
            }
        };
        let mut fft = Fft::new(self.fft.n);
        // right preconditioning: GMRES on `J M⁻¹ y = b`, then `x = M⁻¹ y`,
        // so the residual it reports is the true one, ‖b − J x‖
        let mut y = vec![0.0; b.len()];
        let mut mv = vec![0.0; b.len()];
        let info = crate::krylov::gmres(
            |v, out| {
                precond(v, &mut mv);
                self.jacobian_product(ev, &mut fft, &mv, out)
            },
            b,
            &mut y,
            &crate::krylov::GmresParams {
                rel_tolerance: KRYLOV_TOLERANCE,
                restart: 60,
                max_iter: 600,
            },
        );
        let mut x = vec![0.0; b.len()];
        precond(&y, &mut x);
        self.krylov_iterations += info.applications;
        self.krylov_steps += 1;
        // Above the dense limit there is nothing to fall back to: a step that
        // halves the linear residual still descends (the line search guards).
        let take = info.converged || (self.size() > MAX_SYSTEM && info.residual < 0.5);
        if take {
            b.copy_from_slice(&x);
        }
        take
    }

    /// Per harmonic `k`: the LU of `Ŷ_k + Ĝ₀ + jω_k Ĉ₀` (`None` when one is singular).
    fn preconditioner(&self, ev: &NlEval) -> Option<Vec<DenseLu<C64>>> {
        let p = self.p();
        (0..=self.kmax)
            .map(|k| {
                let w = self.freqs[k];
                let mut a = Mat::<C64>::from_fn(p, p, |r, c| self.red.yhat[k][r * p + c]);
                for (e, &(r, c)) in ev.pattern.iter().enumerate() {
                    a[(r, c)] += ev.g[0][e] + J * w * ev.c[0][e];
                }
                complex_lu(a).ok()
            })
            .collect()
    }

    /// `out = J v` for the real Newton layout, without forming `J`: per
    /// harmonic the reduced linear network `Ŷ_k V_k`, plus the devices'
    /// `G(t) v(t)` and `C(t) v(t)` on the evaluation grid transformed back
    /// (`δI_k + jω_k δQ_k`). On the grid of `N ≥ 4K` samples this is
    /// exactly the product with the conversion-matrix Jacobian of
    /// [`Problem::jacobian`] (no aliasing onto the kept harmonics).
    fn jacobian_product(&self, ev: &NlEval, fft: &mut Fft, v: &[f64], out: &mut [f64]) {
        let p = self.p();
        let kmax = self.kmax;
        let ns = fft.n;
        // v as complex harmonics [k·p + r]
        let mut xc = vec![ZERO; (kmax + 1) * p];
        xc[..p]
            .iter_mut()
            .zip(&v[..p])
            .for_each(|(x, a)| *x = C64::new(*a, 0.0));
        for k in 1..=kmax {
            let (re, im) = (
                &v[(2 * k - 1) * p..2 * k * p],
                &v[2 * k * p..(2 * k + 1) * p],
            );
            for ((x, a), b) in xc[k * p..(k + 1) * p].iter_mut().zip(re).zip(im) {
                *x = C64::new(*a, *b);
            }
        }
        let mut acc = vec![ZERO; (kmax + 1) * p];
        if let Some(net) = &self.net {
            // Ŷ_k V_k from the sparse blocks (module `sparse`)
            let mut buf: Vec<C64> = Vec::new();
            for k in 0..=kmax {
                let r = k * p..(k + 1) * p;
                net.apply(k, &xc[r.clone()], &mut acc[r], &mut buf);
            }
        }
        for k in 0..=kmax {
            if self.net.is_some() {
                break;
            }
            let xk = &xc[k * p..(k + 1) * p];
            for (a, yrow) in acc[k * p..(k + 1) * p]
                .iter_mut()
                .zip(self.red.yhat[k].chunks_exact(p.max(1)))
            {
                let (mut sr, mut si) = (0.0, 0.0);
                for (y, x) in yrow.iter().zip(xk) {
                    sr += y.re * x.re - y.im * x.im;
                    si += y.re * x.im + y.im * x.re;
                }
                *a = C64::new(sr, si);
            }
        }
        let mut coef = vec![ZERO; kmax + 1];
        let mut vt = vec![vec![0.0; ns]; p];
        for (r, w) in vt.iter_mut().enumerate() {
            for (k, c) in coef.iter_mut().enumerate() {
                *c = xc[k * p + r];
            }
            fft.inverse(&coef, w);
        }
        let mut it = vec![vec![0.0; ns]; p];
        let mut qt = vec![vec![0.0; ns]; p];
        for (e, &(r, c)) in ev.pattern.iter().enumerate() {
            let x = &vt[c];
            for ((d, g), xs) in it[r].iter_mut().zip(&ev.gt[e]).zip(x) {
                *d += g * xs;
            }
            for ((d, g), xs) in qt[r].iter_mut().zip(&ev.ct[e]).zip(x) {
                *d += g * xs;
            }
        }
        for r in 0..p {
            fft.forward(&it[r], &mut coef);
            for k in 0..=kmax {
                acc[k * p + r] += coef[k];
            }
            fft.forward(&qt[r], &mut coef);
            for k in 0..=kmax {
                acc[k * p + r] += J * self.freqs[k] * coef[k];
            }
        }
        out[..p]
            .iter_mut()
            .zip(&acc[..p])
            .for_each(|(o, a)| *o = a.re);
        for k in 1..=kmax {
            for r in 0..p {
                let a = acc[k * p + r];
                out[(2 * k - 1) * p + r] = a.re;
                out[2 * k * p + r] = a.im;
            }
        }
    }

    /// Newton with line search at drive `s` from `x` (updated in place).
    pub(super) fn newton(
        &mut self,
        x: &mut [C64],
        s: f64,
        max_iter: usize,
    ) -> Result<Converged, Fail> {
        let p = self.p();
        let m = self.size();
        let kmax = self.kmax;
        let with_iter = |f: Fail, it: usize| match f {
            Fail::NonFinite { port, .. } => Fail::NonFinite {
                iterations: it,
                port,
            },
            Fail::Escaped { .. } => Fail::Escaped { iterations: it },
            other => other,
        };
        // Limiting state of every sample, committed only on convergence.
        let mut states = self.states.clone();
        let (mut ev, mut limited) = self.eval_nl(x, &mut states).map_err(|f| with_iter(f, 0))?;
        let (mut res, mut scale) = self.residual(x, &ev, s);
        let mut update_ok = false;
        let mut cuts = 0usize;
        let mut lu = RealLu::new(LinearSolver::Dense, m);
        let mut last = (f64::INFINITY, (0usize, 0usize), f64::INFINITY);
        for it in 0..=max_iter {
            let tol = self.tolerances(&scale);
            let worst = self.worst(&res, &tol);
            if !worst.0.is_finite() {
                return Err(Fail::NonFinite {
                    iterations: it,
                    port: worst.1 .0,
                });
            }
            last = worst;
            if update_ok && !limited && worst.0 <= 1.0 {
                self.states = states;
                self.last_q = std::mem::take(&mut ev.q);
                return Ok(Converged {
                    iterations: it,
                    ratio: worst.0,
                    cuts,
                });
            }
            if it == max_iter {
                break;
            }
            let mut dx = vec![0.0; m];
            for k in 0..=kmax {
                for r in 0..p {
                    let v = res[k * p + r];
                    if k == 0 {
                        dx[r] = -v.re;
                    } else {
                        dx[(2 * k - 1) * p + r] = -v.re;
                        dx[2 * k * p + r] = -v.im;
                    }
                }
            }
            let solved_by_krylov = self.krylov && self.krylov_step(&ev, &mut dx);
            if !solved_by_krylov && m > MAX_SYSTEM {
                return Err(Fail::NoConvergence {
                    iterations: it + 1,
                    worst: last.1,
                    residual: last.2,
                });
            }
            if !solved_by_krylov {
                let jac = self.jacobian(&ev);
                lu.factor(&jac).map_err(|slot| Fail::Singular {
                    iterations: it,
                    slot,
                    cause: crate::singular::cause_mapped(
                        &jac,
                        m,
                        |j| self.red.ports.get(j % p.max(1)).copied().unwrap_or(0),
                        self.devices,
                    ),
                })?;
                lu.solve(&mut dx);
            }
            if let Some(e) = dx.iter().position(|v| !v.is_finite()) {
                return Err(Fail::NonFinite {
                    iterations: it,
                    port: e % p.max(1),
                });
            }
            let step: Vec<C64> = (0..=kmax)
                .flat_map(|k| (0..p).map(move |r| (k, r)))
                .map(|(k, r)| {
                    if k == 0 {
                        C64::new(dx[r], 0.0)
                    } else {
                        C64::new(dx[(2 * k - 1) * p + r], dx[2 * k * p + r])
                    }
                })
                .collect();
            // Line search on the scaled residual norm (weights fixed at this
            // iterate). While a junction is limited the residual is a
            // linearisation, not comparable across iterates: take the full step.
            let merit0 = self.merit(&res, &tol);
            let mut alpha = 1.0f64;
            let mut halvings = 0usize;
            let (xt, st_t, evt, lim_t, rest, scalet) = loop {
                let xt: Vec<C64> = x.iter().zip(&step).map(|(a, d)| a + d * alpha).collect();
                let mut st_t = states.clone();
                match self.eval_nl(&xt, &mut st_t) {
                    Ok((evt, lim_t)) => {
                        let (rt, sct) = self.residual(&xt, &evt, s);
                        let mt = self.merit(&rt, &tol);
                        let take = limited || lim_t || worst.0 <= 1.0 || mt < merit0;
                        if mt.is_finite() && take {
                            break (xt, st_t, evt, lim_t, rt, sct);
                        }
                    }
                    Err(Fail::Escaped { .. }) => return Err(Fail::Escaped { iterations: it }),
                    Err(_) => {}
                }
                halvings += 1;
                cuts += 1;
                if halvings > self.max_halvings {
                    return Err(Fail::NoConvergence {
                        iterations: it + 1,
                        worst: last.1,
                        residual: last.2,
                    });
                }
                alpha *= 0.5;
            };
            // Update test on the applied step (a cut step never counts as converged).
            update_ok = alpha == 1.0;
            if update_ok {
                for r in 0..p {
                    let mag = (0..=kmax)
                        .map(|k| xt[k * p + r].norm() * if k == 0 { 1.0 } else { 2.0 })
                        .fold(0.0f64, f64::max);
                    let lim = self.tol.rel_tolerance * mag + self.var_abs[r];
                    let d = (0..=kmax)
                        .map(|k| step[k * p + r].norm())
                        .fold(0.0f64, f64::max);
                    if d > lim {
                        update_ok = false;
                    }
                }
            }
            x.copy_from_slice(&xt);
            states = st_t;
            ev = evt;
            limited = lim_t;
            res = rest;
            scale = scalet;
        }
        Err(Fail::NoConvergence {
            iterations: max_iter,
            worst: last.1,
            residual: last.2,
        })
    }

    /// Harmonics of every unknown `[k][unknown]` from the port harmonics at full drive.
    pub(super) fn full_solution(&self, xp: &[C64]) -> Vec<Vec<C64>> {
        let p = self.p();
        let n = self.devices.n_unknowns;
        let o = self.red.others.len();
        let mut out = vec![vec![ZERO; n]; self.kmax + 1];
        for (k, row) in out.iter_mut().enumerate() {
            for (a, &u) in self.red.ports.iter().enumerate() {
                row[u] = xp[k * p + a];
            }
            for (i, &u) in self.red.others.iter().enumerate() {
                let mut v = self.red.zs_wave[k][i];
                if k == 0 {
                    v += self.red.zs_dc[i];
                }
                for b in 0..p {
                    v += self.red.z[k][i * p + b] * xp[k * p + b];
                }
                row[u] = -v;
            }
            let _ = o;
            row.iter_mut().take(n).for_each(|v| {
                if k == 0 {
                    v.im = 0.0;
                }
            });
        }
        out
    }

    /// The name of slot `k` in a message.
    fn slot_name(&self, k: usize) -> String {
        self.slot_names
            .get(k)
            .cloned()
            .unwrap_or_else(|| format!("harmonic {k}"))
    }

    pub(super) fn fail_to_error(&self, f: Fail, s: f64) -> SolveError {
        let analysis = if let Some(l) = &self.label {
            l.clone()
        } else if self.slot_names.is_empty() {
            format!(
                "harmonic balance (K = {}, drive {:.2}%)",
                self.kmax,
                100.0 * s
            )
        } else {
            format!(
                "multi-tone harmonic balance ({} mixing products, drive {:.2}%)",
                self.kmax + 1,
                100.0 * s
            )
        };
        let name = |a: usize| {
            self.red
                .ports
                .get(a)
                .and_then(|&u| self.devices.names.get(u))
                .cloned()
                .unwrap_or_else(|| format!("port #{a}"))
        };
        match f {
            Fail::NoConvergence {
                iterations,
                worst,
                residual,
            } => SolveError::NoConvergence {
                analysis,
                unknown: format!("{} at {}", name(worst.0), self.slot_name(worst.1)),
                iterations,
                residual,
                unit: match self
                    .red
                    .ports
                    .get(worst.0)
                    .and_then(|&u| self.devices.kinds.get(u))
                {
                    Some(UnknownKind::Current) => "V",
                    _ => "A",
                },
                when: When(None),
            },
            Fail::Singular { slot, cause, .. } => {
                let p = self.p().max(1);
                let (sl, a) = (slot / p, slot % p);
                let (k, part) = if sl == 0 {
                    (0, "")
                } else {
                    (
                        sl.div_ceil(2),
                        if sl % 2 == 1 { " (real)" } else { " (imag)" },
                    )
                };
                SolveError::Singular {
                    analysis,
                    unknown: format!("{} at {}{part}", name(a), self.slot_name(k)),
                    cause: cause.unwrap_or_else(|| {
                        self.red
                            .ports
                            .get(a)
                            .map(|&u| crate::singular::guess(self.devices, u))
                            .unwrap_or_default()
                    }),
                    when: When(None),
                }
            }
            Fail::NonFinite { port, .. } => SolveError::NonFinite {
                analysis,
                unknown: name(port),
                when: When(None),
            },
            Fail::Escaped { .. } => SolveError::BadParams(format!(
                "{analysis}: a nonlinear device stamped an unknown outside its ports"
            )),
        }
    }
}

/// A converged solve at one K.
struct Solved {
    kmax: usize,
    nfft: usize,
    ports: usize,
    reduced: bool,
    /// `[k][unknown]` at full drive.
    x_full: Vec<Vec<C64>>,
    iterations: usize,
    cuts: usize,
    ratio: f64,
    continuation_steps: usize,
    truncation: f64,
    system_size: usize,
    krylov_iterations: usize,
    krylov_steps: usize,
    /// The GMRES steps held the network sparse.
    sparse_network: bool,
    t_start: f64,
}

/// Largest real Newton system for the options: the GMRES limit when GMRES
/// takes over below the dense limit, else the dense limit.
fn max_system(bp: &BalanceParams) -> usize {
    if bp.krylov_from <= MAX_SYSTEM {
        MAX_KRYLOV_SYSTEM
    } else {
        MAX_SYSTEM
    }
}

/// Whether `p` ports at `kmax` harmonics fit the limits (checked before
/// anything of that size is allocated).
fn fits(p: usize, kmax: usize, bp: &BalanceParams) -> bool {
    let size = p.saturating_mul(2 * kmax + 1);
    let entries = p.saturating_mul(p).saturating_mul(kmax + 1);
    size <= max_system(bp) && entries <= MAX_NETWORK_ENTRIES
}

pub(super) fn check_size(p: usize, kmax: usize, bp: &BalanceParams) -> Result<(), SolveError> {
    if fits(p, kmax, bp) {
        return Ok(());
    }
    Err(SolveError::BadParams(format!(
        "harmonic balance: the Newton system would have {} unknowns ({p} ports × {} \
         real harmonic terms) and the linear network {} entries over the harmonics; \
         the limits are {} unknowns and {MAX_NETWORK_ENTRIES} entries; use fewer harmonics",
        p.saturating_mul(2 * kmax + 1),
        2 * kmax + 1,
        p.saturating_mul(p).saturating_mul(kmax + 1),
        max_system(bp),
    )))
}

/// FFT size of the nonlinear evaluation for `k` harmonics.
pub(super) fn fft_size(k: usize, oversample: usize) -> usize {
    (oversample * k).max(8).next_power_of_two()
}

type Attempt = Result<Solved, (SolveError, usize, usize)>;

/// Solve at `kmax` harmonics, from `warm` (`[k][unknown]`, any K) if given.
fn solve_k(
    devices: &DeviceSet,
    params: &SteadyParams,
    kmax: usize,
    t_start: f64,
    x_op: &[f64],
    ports_structural: &[usize],
    warm: Option<&[Vec<C64>]>,
) -> Attempt {
    let bp = &params.balance;
    let n = devices.n_unknowns;
    let period = 1.0 / params.freq;
    let omega = 2.0 * std::f64::consts::PI * params.freq;
    let freqs: Vec<f64> = (0..=kmax).map(|k| k as f64 * omega).collect();
    let nfft = fft_size(kmax, bp.oversample);
    let mut fft = Fft::new(nfft);
    let lin = linear_network(devices, kmax, &mut fft, t_start, period, bp.junction_leak)
        .map_err(|e| (e, 0, 0))?;
    let all: Vec<usize> = (0..n).collect();
    check_size(ports_structural.len(), kmax, bp).map_err(|e| (e, 0, 0))?;
    let singular = |f: ReduceFail| {
        let at = format!("harmonic {}", f.harmonic);
        (f.into_error(devices, "harmonic balance", &at), 0, 0)
    };
    let reduce_all = || {
        check_size(n, kmax, bp).map_err(|e| (e, 0, 0))?;
        reduce(&lin, &all, kmax, &freqs).map_err(singular)
    };
    let red = match reduce_growing(&lin, ports_structural, kmax, &freqs) {
        Ok(r) => r,
        Err(_) => reduce_all()?,
    };
    let reduced = !red.others.is_empty();
    check_size(red.ports.len(), kmax, bp).map_err(|e| (e, 0, 0))?;
    let krylov = red.ports.len() * (2 * kmax + 1) >= bp.krylov_from;
    let mut prob = Problem::new(devices, red, kmax, nfft, freqs.clone(), t_start, params);
    prob.krylov = krylov;
    prob.hold_sparse(&lin, bp.network);
    let attempt = run_levels(&mut prob, params, x_op, warm);
    let attempt = match attempt {
        Err((Fail::Escaped { .. }, _, _)) if reduced => {
            // A device stamped outside the structural ports: keep every unknown.
            let red = reduce_all()?;
            let krylov = red.ports.len() * (2 * kmax + 1) >= bp.krylov_from;
            prob = Problem::new(devices, red, kmax, nfft, freqs.clone(), t_start, params);
            prob.krylov = krylov;
            prob.hold_sparse(&lin, bp.network);
            run_levels(&mut prob, params, x_op, warm)
        }
        other => other,
    };
    let (xp, iterations, cuts, ratio, steps) = match attempt {
        Ok(v) => v,
        Err((f, s, its)) => {
            let e = prob.fail_to_error(f, s);
            return Err((e, its, 0));
        }
    };
    let x_full = prob.full_solution(&xp);
    if let Some((k, u)) = x_full
        .iter()
        .enumerate()
        .find_map(|(k, row)| row.iter().position(|v| !v.is_finite()).map(|u| (k, u)))
    {
        return Err((
            SolveError::NonFinite {
                analysis: format!("harmonic balance (harmonic {k})"),
                unknown: devices.names.get(u).cloned().unwrap_or_default(),
                when: When(None),
            },
            iterations,
            cuts,
        ));
    }
    let truncation = truncation_ratio(devices, &x_full, bp);
    let reduced = !prob.red.others.is_empty();
    Ok(Solved {
        kmax,
        nfft,
        ports: prob.p(),
        reduced,
        system_size: prob.size(),
        krylov_iterations: prob.krylov_iterations,
        krylov_steps: prob.krylov_steps,
        sparse_network: prob.holds_sparse(),
        x_full,
        iterations,
        cuts,
        ratio,
        continuation_steps: steps,
        truncation,
        t_start,
    })
}

/// Harmonics `[k][unknown]` (k ≤ `kmax`) of one period integrated from the
/// state `x0` at `t_start` (a warm start), on a grid of 4K steps (at least
/// 64) by TR-BDF2; `None` when a step fails.
fn warm_harmonics(
    devices: &DeviceSet,
    params: &SteadyParams,
    x0: &[f64],
    t_start: f64,
    kmax: usize,
) -> Option<Vec<Vec<C64>>> {
    let n = devices.n_unknowns;
    let ns = fft_size(kmax, 4).max(64);
    let h = 1.0 / (params.freq * ns as f64);
    let mut st =
        crate::transient::Stepper::from_zero(devices, params.tol, params.linear_solver, t_start);
    st.init_at(x0, t_start);
    let mut wave = vec![vec![0.0; ns]; n];
    for s in 0..ns {
        for (w, v) in wave.iter_mut().zip(&st.x) {
            w[s] = *v;
        }
        st.step_trbdf2(t_start + (s + 1) as f64 * h).ok()?;
    }
    let mut fft = Fft::new(ns);
    let mut coef = vec![ZERO; kmax + 1];
    let mut out = vec![vec![ZERO; n]; kmax + 1];
    for (u, w) in wave.iter().enumerate() {
        fft.forward(w, &mut coef);
        for (row, c) in out.iter_mut().zip(&coef) {
            row[u] = *c;
        }
    }
    out.iter().flatten().all(|v| v.is_finite()).then_some(out)
}

/// Port harmonics `[k·p + r]` from harmonics of every unknown (any K, zero-padded).
fn port_start(prob: &Problem<'_>, full: &[Vec<C64>]) -> Vec<C64> {
    let p = prob.p();
    let mut x = vec![ZERO; (prob.kmax + 1) * p];
    for (k, row) in full.iter().enumerate().take(prob.kmax + 1) {
        for (a, &u) in prob.red.ports.iter().enumerate() {
            x[k * p + a] = row.get(u).copied().unwrap_or(ZERO);
        }
    }
    x
}

pub(super) type LevelOut = (Vec<C64>, usize, usize, f64, usize);

/// Direct solve at full drive, then continuation on the drive. On failure
/// returns the last failure, the drive level it happened at, and the iterations spent.
pub(super) fn run_levels(
    prob: &mut Problem<'_>,
    params: &SteadyParams,
    x_op: &[f64],
    warm: Option<&[Vec<C64>]>,
) -> Result<LevelOut, (Fail, f64, usize)> {
    let bp = &params.balance;
    let p = prob.p();
    let op_full: Vec<Vec<C64>> = vec![x_op.iter().map(|v| C64::new(*v, 0.0)).collect()];
    let x0 = port_start(prob, &op_full);
    if p == 0 {
        return Ok((Vec::new(), 0, 0, 0.0, 0));
    }
    let mut iters = 0usize;
    let mut cuts = 0usize;
    // 1. Direct, from the warm start (raised K) or the operating point.
    let mut x = match warm {
        Some(w) => port_start(prob, w),
        None => x0.clone(),
    };
    // A warm start from a converged solution at a smaller K is close: its
    // junction voltages are right, and limiting against the fresh (zero)
    // per-sample states would only hold them back. The line search still guards.
    prob.limit = bp.limit && warm.is_none();
    let first = prob.newton(&mut x, 1.0, bp.max_iter);
    prob.limit = bp.limit;
    let first_fail = match first {
        Ok(c) => return Ok((x, c.iterations, c.cuts, c.ratio, 0)),
        Err(f) => {
            iters += f.iterations();
            if matches!(f, Fail::Escaped { .. }) {
                return Err((f, 1.0, iters));
            }
            f
        }
    };
    if !bp.continuation {
        return Err((first_fail, 1.0, iters));
    }
    // 2. Continuation on the drive from the operating point.
    let mut s_cur = 0.0f64;
    let mut x_cur = x0;
    let mut prev: Option<(f64, Vec<C64>)> = None;
    let mut step = bp.first_step;
    let mut levels = 0usize;
    let mut attempts = 0usize;
    loop {
        attempts += 1;
        let s_try = (s_cur + step).min(1.0);
        let mut xt = match &prev {
            Some((s_prev, x_prev)) if s_cur > *s_prev => {
                let f = (s_try - s_cur) / (s_cur - s_prev);
                x_cur
                    .iter()
                    .zip(x_prev)
                    .map(|(a, b)| a + (a - b) * f)
                    .collect()
            }
            _ => x_cur.clone(),
        };
        match prob.newton(&mut xt, s_try, bp.max_iter) {
            Ok(c) => {
                iters += c.iterations;
                cuts += c.cuts;
                levels += 1;
                prev = Some((s_cur, std::mem::take(&mut x_cur)));
                x_cur = xt;
                s_cur = s_try;
                if s_cur >= 1.0 {
                    return Ok((x_cur, iters, cuts, c.ratio, levels));
                }
                step = (step * 1.5).min(1.0);
            }
            Err(f) => {
                iters += f.iterations();
                if matches!(f, Fail::Escaped { .. }) {
                    return Err((f, s_try, iters));
                }
                step *= 0.5;
                if step < bp.min_step || attempts >= bp.max_levels {
                    return Err((f, s_try, iters));
                }
            }
        }
    }
}

/// Largest top-band harmonic of any voltage unknown over its limit.
fn truncation_ratio(devices: &DeviceSet, x: &[Vec<C64>], bp: &BalanceParams) -> f64 {
    let kmax = x.len().saturating_sub(1);
    if kmax == 0 {
        return 0.0;
    }
    let volts: Vec<usize> = (0..devices.n_unknowns)
        .filter(|&u| devices.kinds.get(u) != Some(&UnknownKind::Current))
        .collect();
    let fund = volts
        .iter()
        .map(|&u| 2.0 * x[1][u].norm())
        .fold(0.0f64, f64::max);
    let band = (kmax / 10).max(1);
    let top = volts
        .iter()
        .flat_map(|&u| (kmax + 1 - band..=kmax).map(move |k| 2.0 * x[k][u].norm()))
        .fold(0.0f64, f64::max);
    let lim = (bp.truncation_rel * fund).max(bp.truncation_abs);
    if lim > 0.0 {
        top / lim
    } else if top > 0.0 {
        f64::INFINITY
    } else {
        0.0
    }
}

/// Work summed over every K tried.
struct Totals {
    iterations: usize,
    cuts: usize,
    levels: usize,
    krylov: usize,
    krylov_steps: usize,
}

/// Build the [`PeriodicSolution`] from a converged solve.
fn finish(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
    sol: Solved,
    tried: Vec<usize>,
    totals: Totals,
) -> Result<PeriodicSolution, SolveError> {
    let n = devices.n_unknowns;
    let kmax = sol.kmax;
    let mut nout = params.samples();
    while nout <= 2 * kmax {
        nout *= 2;
    }
    let mut out_fft = Fft::new(nout);
    let mut coef = vec![ZERO; kmax + 1];
    let mut x = vec![vec![0.0; nout]; n];
    for (u, xu) in x.iter_mut().enumerate() {
        for (c, row) in coef.iter_mut().zip(&sol.x_full) {
            *c = row[u];
        }
        out_fft.inverse(&coef, xu);
    }
    let terminal_currents = currents(circuit, devices, params, &sol, &mut out_fft)?;
    let bad = x.iter().position(|v| v.iter().any(|a| !a.is_finite()));
    if let Some(u) = bad {
        return Err(SolveError::NonFinite {
            analysis: "harmonic balance (waveforms)".into(),
            unknown: devices.names.get(u).cloned().unwrap_or_default(),
            when: When(None),
        });
    }
    let transport_currents = transport_currents(circuit, devices, &x, params.freq);
    let floor = super::floor::tail_floor(&x, kmax, params.tol.rel_tolerance);
    Ok(PeriodicSolution {
        freq: params.freq,
        harmonics: kmax,
        samples_per_period: nout,
        x,
        terminal_currents,
        transport_currents,
        info: SteadyInfo {
            method: SteadyMethod::Balance,
            fell_back_from: None,
            iterations: totals.iterations,
            residual: sol.ratio * params.tol.rel_tolerance,
            tolerance: params.tol.rel_tolerance,
            system_size: sol.system_size,
            balance: Some(BalanceInfo {
                harmonics: kmax,
                harmonics_tried: tried,
                fft_size: sol.nfft,
                ports: sol.ports,
                reduced: sol.reduced,
                continuation_steps: totals.levels,
                line_search_cuts: totals.cuts,
                truncation: sol.truncation,
                krylov_iterations: totals.krylov,
                krylov_steps: totals.krylov_steps,
                sparse_network: sol.sparse_network,
            }),
            shooting: None,
            floquet: None,
            floor,
            accuracy: None,
        },
    })
}

/// Current into every terminal of every element, `I_k + jkωQ_k` of the
/// element's devices for `k ≤ K`, sampled on the output grid.
fn currents(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
    sol: &Solved,
    out_fft: &mut Fft,
) -> Result<Vec<Vec<Vec<f64>>>, SolveError> {
    let n = devices.n_unknowns;
    let kmax = sol.kmax;
    let ns = sol.nfft;
    let mut fft = Fft::new(ns);
    // Every unknown on the evaluation grid.
    let mut coef = vec![ZERO; kmax + 1];
    let mut xt = vec![vec![0.0; ns]; n];
    for (u, xu) in xt.iter_mut().enumerate() {
        for (c, row) in coef.iter_mut().zip(&sol.x_full) {
            *c = row[u];
        }
        fft.inverse(&coef, xu);
    }
    let grid = Grid {
        x: &xt,
        t0: sol.t_start,
        period: 1.0 / params.freq,
        junction_leak: params.balance.junction_leak,
    };
    let mut rule = Harmonics {
        fft,
        out: out_fft,
        omega: 2.0 * std::f64::consts::PI * params.freq,
        ci: vec![ZERO; kmax + 1],
        cq: vec![ZERO; kmax + 1],
        coef,
    };
    let mut cur = sample_currents(
        circuit,
        devices,
        &grid,
        &mut rule,
        "harmonic balance (terminal currents)",
    )?;
    measured_currents(circuit, params.freq, sol, rule.out, &mut cur)?;
    Ok(cur)
}

/// The terminal currents of every measured network, from its admittance at
/// each harmonic: `I_i,k = Σ_j Y_ij(k·f0) V_j,k` into the positive terminal
/// of port `i` (and out of its negative one), `V_j,k` the harmonic `k` of
/// port `j`'s voltage; at `k = 0` the element's DC stamp
/// ([`tankwave_circuit::touchstone::MeasuredNetwork::dc_admittance`]). A
/// network held as an impedance matrix is left as sampled.
fn measured_currents(
    circuit: &Circuit,
    freq: f64,
    sol: &Solved,
    out: &mut Fft,
    cur: &mut [Vec<Vec<f64>>],
) -> Result<(), SolveError> {
    let volt = |row: &[C64], node: tankwave_circuit::NodeId| {
        tankwave_devices::UnknownId::voltage(node)
            .and_then(|u| row.get(u.index()).copied())
            .unwrap_or(ZERO)
    };
    for (id, el) in circuit.element_ids() {
        let tankwave_circuit::ElementKind::Measured { ports, network } = &el.kind else {
            continue;
        };
        // Held as an impedance matrix, the element's terminal currents are
        // its port-current unknowns, which the device's own stamp already
        // gave exactly at every harmonic.
        if network.form() == tankwave_circuit::touchstone::Form::Impedance {
            continue;
        }
        let np = ports.len();
        let mut coef = vec![vec![ZERO; sol.kmax + 1]; np];
        for (k, row) in sol.x_full.iter().enumerate().take(sol.kmax + 1) {
            let f = k as f64 * freq;
            // at 0 Hz the element's own DC stamp (its fitted model's, if any)
            let y = if k == 0 {
                network
                    .dc_admittance()
                    .map(|v| v.into_iter().map(|g| C64::new(g, 0.0)).collect::<Vec<_>>())
            } else {
                network.admittance(f)
            };
            let Some(y) = y else {
                return Err(SolveError::BadParams(format!(
                    "harmonic balance: measured network '{}' is not defined at {f:.6e} Hz",
                    el.name
                )));
            };
            let v: Vec<C64> = ports
                .iter()
                .map(|(p, n)| volt(row, *p) - volt(row, *n))
                .collect();
            for (i, c) in coef.iter_mut().enumerate() {
                c[k] = (0..np).map(|j| y[i * np + j] * v[j]).sum();
            }
        }
        let Some(slot) = cur.get_mut(id.index()) else {
            continue;
        };
        for (i, c) in coef.iter().enumerate() {
            let mut samples = vec![0.0; out.n];
            out.inverse(c, &mut samples);
            if let Some(t) = slot.get_mut(2 * i) {
                t.clone_from(&samples);
            }
            if let Some(t) = slot.get_mut(2 * i + 1) {
                *t = samples.iter().map(|v| -v).collect();
            }
        }
    }
    Ok(())
}

/// The derivative rule of harmonic balance: `I_k + jkωQ_k` for `k ≤ K` from
/// the samples of the evaluation grid, resampled on the output grid.
struct Harmonics<'f> {
    fft: Fft,
    out: &'f mut Fft,
    omega: f64,
    ci: Vec<C64>,
    cq: Vec<C64>,
    coef: Vec<C64>,
}

impl Derivative<'_> for Harmonics<'_> {
    fn out_len(&self, _ns: usize) -> usize {
        self.out.n
    }
    fn current(&mut self, i: &[f64], q: &[f64], _: &[f64]) -> Vec<f64> {
        self.fft.forward(i, &mut self.ci);
        self.fft.forward(q, &mut self.cq);
        for (k, c) in self.coef.iter_mut().enumerate() {
            *c = self.ci[k] + J * (k as f64 * self.omega) * self.cq[k];
        }
        let mut cur = vec![0.0; self.out.n];
        self.out.inverse(&self.coef, &mut cur);
        cur
    }
}
