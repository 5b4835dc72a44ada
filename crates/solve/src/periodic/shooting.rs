//! Shooting-Newton periodic steady state (T. J. Aprille, T. N. Trick,
//! "Steady-state analysis of nonlinear circuits with periodic inputs",
//! Proc. IEEE 60(1), 1972).
//!
//! The unknown is the state `x₀` at the start of a period. One period is
//! integrated with `N` uniform TR-BDF2 steps (a trapezoidal stage to `t + γh`,
//! then a BDF2 stage; see [`mod@crate::transient`]), carrying the sensitivity
//! (monodromy) matrix `Φ = ∂x(T)/∂x₀` through both stages; Newton then solves
//! `(Φ − I) Δx₀ = −(x(T) − x₀)`. The derivative state entering each step is
//! `q̇ₙ = −i(xₙ, tₙ)` in rows that carry charge (0 in purely algebraic rows),
//! a function of `xₙ`, so with `Ĝ` the charged rows of `G`:
//! - trapezoidal stage, `α = 2/(γh)`: `(G_γ + αC_γ) S_γ = (αC₀ − Ĝ₀) S₀`;
//! - BDF2 stage: `(G₁ + a₀C₁) S₁ = −(a₁ C_γ S_γ + a₂ C₀ S₀)`.
//!
//! Why not the plain trapezoidal rule: with an even number of steps it has an
//! undamped period-2 mode in algebraic unknowns (e.g. the current of a voltage
//! source driving a capacitor), which makes `Φ − I` exactly singular. TR-BDF2
//! is L-stable and removes it while staying second order.
//!
//! The iteration runs on two grids. A coarse one (a quarter of the steps per
//! period, used when there are at least 128) carries the warm-up (a few
//! periods from the operating point) and full Newton steps from far away to
//! within 10³ tolerance units of the coarse orbit, at a quarter of the cost of
//! a fine period. The fine grid then starts from there with the coarse
//! `Φ − I` as a chord Jacobian: it differs from the fine one only by the
//! discretisation error, so each chord step shrinks the periodicity error
//! about a hundredfold without the cost of carrying `Φ` through the period;
//! `Φ` is recomputed on the fine grid only when a chord step shrinks the error
//! less than tenfold. A warm start from a solved neighbour skips the warm-up
//! and iterates on the coarse grid from its point; a start on this
//! circuit's own orbit from another grid (auto's refinement,
//! `initial_near_orbit`) only takes the coarse `Φ` there. Converged on the fine grid when
//! every `|x_k(T) − x_k(0)|` AND every component of the update is within
//! `rel_tolerance·max_n |x_k| + (voltage_floor | current_floor)`
//! (the update test catches slow modes, whose periodicity error is tiny
//! while the state is still far from the fixed point).
//!
//! **Matrix-free Newton (large circuits).** Carrying `Φ` costs `n` sensitivity
//! columns through every step (products with the sparse `C`, `Ĝ` and both
//! factorizations for each of the `n` columns). From
//! [`MATRIX_FREE_FROM`] unknowns ([`ShootingMode::Auto`]) the period instead
//! keeps, per step, the factorizations of its two stage Jacobians and the
//! sparse `C` and `Ĝ` it used (`PeriodLin`); `v ↦ Φv` is then one pass of
//! the vector through those stored factors (the two stage formulas above with
//! one column), and `(Φ − I) Δx₀ = −r` is solved by GCR with the directions
//! of earlier solves with the same operator kept ([`crate::krylov::gcr`]) in tolerance units (each unknown divided by its
//! scale, so the norm weighs volts and amperes alike) — a Newton–Krylov
//! shooting method (R. Telichevesky, K. S. Kundert, J. K. White, "Efficient
//! steady-state analysis based on matrix-free Krylov-subspace methods",
//! DAC 1995, from memory). The levels, chord steps and tests are the same:
//! a chord step reuses an older period's stored factors. A new period's
//! `Φ − I` is preconditioned by the directions the solves with the ones
//! before it found ([`crate::krylov::Recycled`]): each Newton period's
//! operator differs from the last by the change of the orbit, so most of
//! the slow Floquet modes (one Krylov direction each) are found once, not
//! again every period.

use super::sample::trbdf2_solution;
use super::{start_time, PeriodicSolution, ShootingInfo, SteadyInfo, SteadyParams};
use crate::krylov::{gcr, gcr_preconditioned, Directions, GcrParams, Recycled};
use crate::linalg::{Csr, Factors};
use crate::newton::unknown_floor;
use crate::transient::{bdf2_coefficients, Method, Stepper, GAMMA};
use crate::SolveError;
use faer::Mat;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// How shooting solves its Newton system `(Φ − I) Δx₀ = −r`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ShootingMode {
    /// Dense `Φ` below [`MATRIX_FREE_FROM`] unknowns, matrix-free from there
    /// on (default; the crossover measured in `benches/shooting_scale.rs`,
    /// docs/performance.md).
    #[default]
    Auto,
    /// Carry the dense monodromy matrix through the period and factor `Φ − I`.
    Dense,
    /// Keep the per-step factors and solve by GMRES on `v ↦ Φv` (module
    /// overview); dense all the same when the factors of a period would not
    /// fit in [`RECORD_BYTES`].
    MatrixFree,
}

/// Order from which [`ShootingMode::Auto`] goes matrix-free: between the
/// 56 unknowns where the dense `Φ` was as fast or faster and the 108 where
/// the matrix-free step was faster (docs/performance.md, "Shooting against
/// circuit size").
pub const MATRIX_FREE_FROM: usize = 70;

impl ShootingMode {
    /// The concrete mode for a system of order `n`.
    pub fn resolve(self, n: usize) -> ShootingMode {
        match self {
            ShootingMode::Auto if n < MATRIX_FREE_FROM => ShootingMode::Dense,
            ShootingMode::Auto => ShootingMode::MatrixFree,
            other => other,
        }
    }
}

/// Most memory the stored factors of one period may take, bytes (256 MiB):
/// beyond it (a very fine grid of a large circuit) shooting carries the dense
/// `Φ`, whose memory does not grow with the steps, and the Floquet check
/// integrates its own period.
pub const RECORD_BYTES: f64 = 256.0 * 1024.0 * 1024.0;

/// Whether the stored factors of a period of `ns` steps of an `n`-unknown
/// system fit in [`RECORD_BYTES`]: two factorizations and three sparse
/// matrices a step, each factor counted as at most 32 stored entries a row
/// (8 bytes, 16 with its index; a pessimistic bound for the fill of these
/// circuits' sparse LU, exact for the dense LU below `SPARSE_FROM` unknowns).
pub(crate) fn record_fits(n: usize, ns: usize) -> bool {
    let per_step = 2.0 * 16.0 * n as f64 * n.min(32) as f64 + 3.0 * 16.0 * 8.0 * n as f64;
    ns as f64 * per_step <= RECORD_BYTES
}

/// What a period carries besides the orbit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Sens {
    /// Nothing.
    None,
    /// The dense monodromy matrix.
    Dense,
    /// The per-step factors of the matrix-free operator ([`PeriodLin`]).
    Record,
}

/// One TR-BDF2 step's linearisation, as the sensitivity recursion needs it.
#[derive(Debug, Clone)]
struct StepLin {
    /// Charged-row part of `G` at the start of the step.
    g0: Csr,
    /// `C` at the start of the step.
    c0: Csr,
    /// `C` at the intermediate point.
    cg: Csr,
    /// Trapezoidal stage coefficient `2/(γh)`.
    alpha1: f64,
    /// BDF2 coefficients of the second stage (`a1`, `a2`).
    a1: f64,
    a2: f64,
    /// Factors of `G_γ + α₁C_γ` and of `G₁ + a₀C₁`.
    lu_g: Factors,
    lu_1: Factors,
}

/// The linearisation of one period: everything `v ↦ Φv` needs, without `Φ`.
#[derive(Debug, Clone)]
pub(crate) struct PeriodLin {
    n: usize,
    steps: Vec<StepLin>,
}

impl PeriodLin {
    /// Order of the operator.
    pub(crate) fn order(&self) -> usize {
        self.n
    }

    /// `out = Φ v`: `v` carried through every stored step (module overview).
    pub(crate) fn apply(&self, v: &[f64], out: &mut [f64]) {
        let n = self.n;
        let mut s0 = v.to_vec();
        let mut sg = vec![0.0; n];
        let mut cs = vec![0.0; n];
        for st in &self.steps {
            // C₀ S₀, used by both stages
            cs.fill(0.0);
            st.c0.mul_add(1.0, &s0, &mut cs);
            // (G_γ + α₁C_γ) S_γ = (α₁C₀ − Ĝ₀) S₀
            for (g, c) in sg.iter_mut().zip(&cs) {
                *g = st.alpha1 * c;
            }
            st.g0.mul_add(-1.0, &s0, &mut sg);
            st.lu_g.solve_in_place(&mut sg);
            // (G₁ + a₀C₁) S₁ = −(a₁ C_γ S_γ + a₂ C₀ S₀)
            for (o, c) in out.iter_mut().zip(&cs) {
                *o = -st.a2 * c;
            }
            st.cg.mul_add(-st.a1, &sg, out);
            st.lu_1.solve_in_place(out);
            s0.copy_from_slice(out);
        }
        out.copy_from_slice(&s0);
    }

    /// The dense `Φ` (for small systems): the identity carried through
    /// every stored step as one block of `n` columns, each step's two
    /// solves taken for the whole block (the same recursion as
    /// [`PeriodLin::apply`], column by column).
    pub(crate) fn monodromy(&self) -> Mat<f64> {
        let n = self.n;
        if n == 0 {
            return Mat::<f64>::zeros(0, 0);
        }
        // column-major n×n blocks
        let mut s0 = vec![0.0; n * n];
        for j in 0..n {
            s0[j * n + j] = 1.0;
        }
        let mut sg = vec![0.0; n * n];
        let mut s1 = vec![0.0; n * n];
        for st in &self.steps {
            sg.fill(0.0);
            for (src, dst) in s0.chunks_exact(n).zip(sg.chunks_exact_mut(n)) {
                st.c0.mul_add(st.alpha1, src, dst);
                st.g0.mul_add(-1.0, src, dst);
            }
            st.lu_g.solve_columns(&mut sg, n);
            s1.fill(0.0);
            for ((g, src), dst) in sg
                .chunks_exact(n)
                .zip(s0.chunks_exact(n))
                .zip(s1.chunks_exact_mut(n))
            {
                st.cg.mul_add(-st.a1, g, dst);
                st.c0.mul_add(-st.a2, src, dst);
            }
            st.lu_1.solve_columns(&mut s1, n);
            std::mem::swap(&mut s0, &mut s1);
        }
        Mat::<f64>::from_fn(n, n, |i, j| s0[j * n + i])
    }
}

/// One period integrated from `x0` (with [`integrate_period`] and a
/// [`Sens`], the monodromy matrix or the operator of the orbit, e.g. for a
/// check of its multipliers).
pub(crate) struct PeriodRun {
    /// Unknowns at the start of every step, `[unknown][step]`.
    pub(crate) samples: Vec<Vec<f64>>,
    /// Unknowns at every TR-BDF2 intermediate stage, `[unknown][step]`.
    pub(crate) stage: Vec<Vec<f64>>,
    /// `x(T)`.
    pub(crate) end: Vec<f64>,
    /// `Φ = ∂x(T)/∂x₀` when asked for ([`Sens::Dense`]).
    pub(crate) monodromy: Option<Mat<f64>>,
    /// The matrix-free operator when asked for ([`Sens::Record`]).
    pub(crate) lin: Option<PeriodLin>,
}

/// An earlier period on the same grid, whose points start the Newton
/// iteration of each TR-BDF2 stage of the next period: near the orbit a
/// period repeats the one before up to the deviation it starts with, so
/// the point of the guide plus the deviation the step starts from (at the
/// stage point for the step's end) is nearer the solution than the linear
/// extrapolation of the last two points, and most stages converge in one
/// Newton iteration instead of two (docs/performance.md, "Linear algebra",
/// measured on the class-C demo).
#[derive(Debug, Clone)]
pub(crate) struct Guide {
    /// Unknowns at the start of every step, `[unknown][step]`.
    samples: Vec<Vec<f64>>,
    /// Unknowns at every intermediate stage, `[unknown][step]`.
    stage: Vec<Vec<f64>>,
    /// The state at the end of the period.
    end: Vec<f64>,
}

impl Guide {
    /// The guide of a period just integrated.
    pub(crate) fn of(run: &PeriodRun) -> Guide {
        Guide::from_parts(run.samples.clone(), run.stage.clone(), run.end.clone())
    }

    /// A period's samples, stage points (`[unknown][step]`) and end.
    pub(crate) fn from_parts(samples: Vec<Vec<f64>>, stage: Vec<Vec<f64>>, end: Vec<f64>) -> Guide {
        Guide {
            samples,
            stage,
            end,
        }
    }

    /// Whether it is a period of `ns` steps of `n` unknowns.
    pub(crate) fn fits(&self, n: usize, ns: usize) -> bool {
        self.end.len() == n
            && self.samples.len() == n
            && self.stage.len() == n
            && self
                .samples
                .iter()
                .chain(&self.stage)
                .all(|r| r.len() == ns)
    }

    /// Newton's start for step `s`: its stage point (`at_stage`, `x` the
    /// state at the step's start) or its end (`x` the stage point), each
    /// the guide's point plus the deviation of `x` from the guide.
    pub(crate) fn guess(&self, s: usize, x: &[f64], at_stage: bool) -> Vec<f64> {
        (0..self.end.len())
            .map(|k| {
                let (from, to) = if at_stage {
                    (self.samples[k][s], self.stage[k][s])
                } else {
                    let next = self.samples[k].get(s + 1).copied().unwrap_or(self.end[k]);
                    (self.stage[k][s], next)
                };
                to + (x[k] - from)
            })
            .collect()
    }
}

/// The charged-row part of `G` and the whole of `C` at the stepper's last
/// evaluation, in compressed rows.
fn g_hat_and_c_sparse(st: &Stepper<'_>) -> (Csr, Csr) {
    let stamp = &st.ws.stamp;
    let ch = stamp.charged_rows();
    (stamp.pattern().to_csr(&stamp.g, |r| ch[r]), c_sparse(st))
}

/// `C` at the stepper's last evaluation, sparse.
fn c_sparse(st: &Stepper<'_>) -> Csr {
    let stamp = &st.ws.stamp;
    stamp.pattern().to_csr(&stamp.c, |_| true)
}

/// The factors just computed in the stepper's workspace.
fn snapshot(st: &Stepper<'_>, t: f64) -> Result<Factors, SolveError> {
    st.ws.lu.snapshot().ok_or_else(|| {
        SolveError::BadParams(format!("shooting: no factorization to keep at t = {t:e} s"))
    })
}

/// One period of `ns` uniform TR-BDF2 steps from `x0` at `t0` without
/// sensitivities, each stage's Newton started from `guide` where it fits
/// ([`Guide`]); `what` names the analysis in a step's failure.
#[allow(clippy::too_many_arguments)]
pub(crate) fn plain_period(
    st: &mut Stepper<'_>,
    devices: &DeviceSet,
    x0: &[f64],
    t0: f64,
    h: f64,
    ns: usize,
    guide: Option<&Guide>,
    what: &str,
) -> Result<PeriodRun, SolveError> {
    let n = devices.n_unknowns;
    let err = |e: crate::transient::StepFail| e.into_error(devices, what);
    st.init_at(x0, t0);
    let guide = guide.filter(|g| g.fits(n, ns));
    let mut samples = vec![vec![0.0; ns]; n];
    let mut stage = vec![vec![0.0; ns]; n];
    for s in 0..ns {
        for (k, row) in samples.iter_mut().enumerate() {
            row[s] = st.x[k];
        }
        let t1 = t0 + (s + 1) as f64 * h;
        let xg = st
            .step_trbdf2_from(t1, |x, at_stage| guide.map(|g| g.guess(s, x, at_stage)))
            .map_err(err)?;
        for (k, row) in stage.iter_mut().enumerate() {
            row[s] = xg[k];
        }
    }
    Ok(PeriodRun {
        samples,
        stage,
        end: st.x.clone(),
        monodromy: None,
        lin: None,
    })
}

/// Integrate one period of `ns` uniform TR-BDF2 steps from `x0` at `t0`,
/// carrying what `sens` asks for.
#[allow(clippy::too_many_arguments)]
pub(crate) fn integrate_period(
    st: &mut Stepper<'_>,
    devices: &DeviceSet,
    x0: &[f64],
    t0: f64,
    h: f64,
    ns: usize,
    sens: Sens,
    guide: Option<&Guide>,
) -> Result<PeriodRun, SolveError> {
    let n = devices.n_unknowns;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    st.init_at(x0, t0);
    let guide = guide.filter(|g| g.fits(n, ns));
    // Newton's start at step `s`'s stage point (`stage`) or end, from the
    // guide and the deviation `x` shows from it now
    let guess = |s: usize, x: &[f64], at_stage: bool| guide.map(|g| g.guess(s, x, at_stage));
    let mut samples = vec![vec![0.0; ns]; n];
    let mut stage = vec![vec![0.0; ns]; n];
    match sens {
        Sens::None => plain_period(st, devices, x0, t0, h, ns, guide, "shooting"),
        Sens::Record => {
            let (mut g0, mut c0) = g_hat_and_c_sparse(st);
            let mut steps = Vec::with_capacity(ns);
            for s in 0..ns {
                for (k, row) in samples.iter_mut().enumerate() {
                    row[s] = st.x[k];
                }
                let t1 = t0 + (s + 1) as f64 * h;
                let tg = st.t + GAMMA * (t1 - st.t);
                let alpha1 = 2.0 / (tg - st.t);
                let a = st
                    .attempt_from(tg, Method::Trapezoidal, guess(s, &st.x, true))
                    .map_err(err)?;
                factor(st, devices, tg)?;
                let lu_g = snapshot(st, tg)?;
                let cg = c_sparse(st);
                let h0 = tg - st.t;
                st.commit(a);
                for (k, row) in stage.iter_mut().enumerate() {
                    row[s] = st.x[k];
                }
                let (_, a1, a2) = bdf2_coefficients(t1 - st.t, h0);
                let b = st
                    .attempt_from(t1, Method::Bdf2, guess(s, &st.x, false))
                    .map_err(err)?;
                factor(st, devices, t1)?;
                let lu_1 = snapshot(st, t1)?;
                let (g1, c1) = g_hat_and_c_sparse(st);
                steps.push(StepLin {
                    g0: std::mem::replace(&mut g0, g1),
                    c0: std::mem::replace(&mut c0, c1),
                    cg,
                    alpha1,
                    a1,
                    a2,
                    lu_g,
                    lu_1,
                });
                st.commit(b);
            }
            Ok(PeriodRun {
                samples,
                stage,
                end: st.x.clone(),
                monodromy: None,
                lin: Some(PeriodLin { n, steps }),
            })
        }
        Sens::Dense => {
            // Sensitivity of q̇ is −G in rows that carry charge and 0 elsewhere.
            // Φ is carried as n columns (column-major blocks) through the
            // sparse C and Ĝ and both factorizations of every step: the
            // products cost the stored entries times n, not n³.
            let (mut g0, mut c0) = g_hat_and_c_sparse(st);
            let mut s0 = vec![0.0; n * n];
            for j in 0..n {
                s0[j * n + j] = 1.0;
            }
            let mut sg = vec![0.0; n * n];
            let mut s1 = vec![0.0; n * n];
            for s in 0..ns {
                for (k, row) in samples.iter_mut().enumerate() {
                    row[s] = st.x[k];
                }
                let t1 = t0 + (s + 1) as f64 * h;
                let tg = st.t + GAMMA * (t1 - st.t);
                // Stage 1, trapezoidal to t + γh: (G_γ + α₁C_γ) S_γ = (α₁C₀ − Ĝ₀) S₀.
                let alpha1 = 2.0 / (tg - st.t);
                let a = st
                    .attempt_from(tg, Method::Trapezoidal, guess(s, &st.x, true))
                    .map_err(err)?;
                factor(st, devices, tg)?;
                sg.fill(0.0);
                for (src, dst) in s0.chunks_exact(n).zip(sg.chunks_exact_mut(n)) {
                    c0.mul_add(alpha1, src, dst);
                    g0.mul_add(-1.0, src, dst);
                }
                st.ws.lu.solve_columns(&mut sg);
                let cg = c_sparse(st);
                let h0 = tg - st.t;
                st.commit(a);
                for (k, row) in stage.iter_mut().enumerate() {
                    row[s] = st.x[k];
                }
                // Stage 2, BDF2 through t, t + γh, t1:
                // (G₁ + a0·C₁) S₁ = −(a1·C_γ S_γ + a2·C₀ S₀).
                let (_, a1, a2) = bdf2_coefficients(t1 - st.t, h0);
                let b = st
                    .attempt_from(t1, Method::Bdf2, guess(s, &st.x, false))
                    .map_err(err)?;
                factor(st, devices, t1)?;
                s1.fill(0.0);
                for ((g, src), dst) in sg
                    .chunks_exact(n)
                    .zip(s0.chunks_exact(n))
                    .zip(s1.chunks_exact_mut(n))
                {
                    cg.mul_add(-a1, g, dst);
                    c0.mul_add(-a2, src, dst);
                }
                st.ws.lu.solve_columns(&mut s1);
                std::mem::swap(&mut s0, &mut s1);
                (g0, c0) = g_hat_and_c_sparse(st);
                st.commit(b);
            }
            Ok(PeriodRun {
                samples,
                stage,
                end: st.x.clone(),
                monodromy: Some(Mat::<f64>::from_fn(n, n, |i, j| s0[j * n + i])),
                lin: None,
            })
        }
    }
}

/// The Jacobian `Φ − I` of a shooting Newton step, in either form.
enum Jacobian {
    /// `Φ − I` factored densely.
    Dense(Box<crate::linalg::RealLu>),
    /// The matrix-free operator of a stored period, with the GCR directions
    /// its solves found and those of the operators before it
    /// ([`FreeKrylov`]).
    Free(PeriodLin, std::cell::RefCell<FreeKrylov>),
}

/// The Krylov memory of a matrix-free `Φ − I`.
#[derive(Default)]
struct FreeKrylov {
    /// The GCR directions its solves found (in physical units: `p` and
    /// `(Φ − I) p`), kept for the next solve with it (a chord step, the
    /// half-grid floor).
    kept: Directions,
    /// The tolerance units of its last solve (its images are orthonormal in
    /// them); empty before its first.
    units: Vec<f64>,
    /// The directions of the matrix-free Jacobians before it, on this
    /// level and the one before (each Newton period's `Φ − I` differs from
    /// the last one's by the change of the orbit): the preconditioner of
    /// its solves ([`Recycled`]). Measured on the 16-stage bench circuit
    /// (docs/performance.md, "Shooting against circuit size").
    earlier: Recycled,
}

impl Jacobian {
    /// The matrix-free `Φ − I` of `lin`, preconditioned by the directions
    /// of `previous` and of those before it, when `previous` is matrix-free.
    fn free_after(lin: PeriodLin, previous: Option<&Jacobian>) -> Jacobian {
        let mut earlier = Recycled::default();
        if let Some(Jacobian::Free(old, mem)) = previous {
            let mem = mem.borrow();
            if old.order() == lin.order() && mem.units.len() == lin.order() {
                earlier = mem.earlier.clone();
                let pairs = mem
                    .kept
                    .pairs
                    .iter()
                    .map(|(p, v)| {
                        let unit =
                            |w: &[f64]| w.iter().zip(&mem.units).map(|(a, u)| a / u).collect();
                        (unit(p), unit(v))
                    })
                    .collect();
                earlier.push(pairs, mem.units.clone(), NEWTON_KRYLOV.keep);
            }
        }
        Jacobian::Free(
            lin,
            std::cell::RefCell::new(FreeKrylov {
                earlier,
                ..FreeKrylov::default()
            }),
        )
    }
}

/// Krylov options of a matrix-free Newton step: an inexact Newton step
/// (R. S. Dembo, S. C. Eisenstat, T. Steihaug, "Inexact Newton methods",
/// SIAM J. Numer. Anal. 19(2), 1982, from memory) whose linear residual, in
/// tolerance units, is held to 1e-3 of the right-hand side (or to
/// [`NEWTON_KRYLOV_FLOOR`], whichever is larger): even along a
/// slow mode with multiplier 0.99 (error amplified 100×) the step still
/// removes nine tenths of the error, so the outer iteration keeps
/// converging, and its own tests (periodicity error and update within one
/// unit) decide when to stop. Solved by GCR ([`crate::krylov::gcr`]) with
/// the directions of the earlier solves with the same operator, up to 400
/// of them (`2 · 400 · n` values; not restarted: on the 16-stage bench
/// circuit, 212 unknowns, a solve from nothing needs 20 to 65 directions,
/// and GMRES restarted at 40 lost its basis and took up to 146 products,
/// docs/performance.md, "Shooting against circuit size").
const NEWTON_KRYLOV: GcrParams = GcrParams {
    keep: 400,
    max_iter: 400,
    rel_tolerance: 1e-3,
    abs_tolerance: NEWTON_KRYLOV_FLOOR,
};

/// The linear residual, in tolerance units (2-norm over the unknowns),
/// below which a matrix-free Newton step is solved closely enough whatever
/// the right-hand side: along a slow mode with multiplier 0.99 it leaves at
/// most 0.1 unit in the update (amplified 100×), a tenth of the update test
/// that decides convergence (common practice: the inexact step's error well
/// below the tolerance it is tested against). Near the fixed point the
/// relative 1e-3 alone asked for far less (1e-5 units on the 16-stage bench
/// circuit's last periods). Measured: docs/performance.md, "Shooting
/// against circuit size".
const NEWTON_KRYLOV_FLOOR: f64 = 1e-3;

impl Jacobian {
    /// `Δ` with `(Φ − I) Δ = −r`; `scale` the tolerance of each unknown
    /// (the matrix-free solve works in those units). Adds the operator
    /// applications to `applications`.
    fn solve(
        &self,
        r: &[f64],
        scale: &[f64],
        devices: &DeviceSet,
        t0: f64,
        applications: &mut usize,
    ) -> Result<Vec<f64>, SolveError> {
        match self {
            Jacobian::Dense(lu) => {
                let mut dx: Vec<f64> = r.iter().map(|v| -v).collect();
                lu.solve(&mut dx);
                Ok(dx)
            }
            Jacobian::Free(lin, mem) => {
                let n = lin.order();
                let b: Vec<f64> = r.iter().zip(scale).map(|(v, s)| -v / s).collect();
                let mut y = vec![0.0; n];
                let mut tmp = vec![0.0; n];
                // the kept directions in this solve's units, and back after
                let mut mem = mem.borrow_mut();
                let FreeKrylov {
                    kept,
                    units,
                    earlier,
                } = &mut *mem;
                for (p, v) in kept.pairs.iter_mut() {
                    for k in 0..n {
                        p[k] /= scale[k];
                        v[k] /= scale[k];
                    }
                }
                let mut apply = |v: &[f64], out: &mut [f64]| {
                    for k in 0..n {
                        tmp[k] = v[k] * scale[k];
                    }
                    lin.apply(&tmp, out);
                    for k in 0..n {
                        out[k] = out[k] / scale[k] - v[k];
                    }
                };
                let params = &NEWTON_KRYLOV;
                let mut info = if earlier.is_empty() {
                    gcr(&mut apply, &b, &mut y, kept, params)
                } else {
                    let mut precond = |r: &[f64], out: &mut [f64]| earlier.apply(r, scale, out);
                    gcr_preconditioned(&mut apply, Some(&mut precond), &b, &mut y, kept, params)
                };
                if !info.converged && !earlier.is_empty() {
                    // the earlier operators' directions did not help (a
                    // breakdown, or the cap): again without them, from the
                    // directions this operator has found so far (its own,
                    // still valid)
                    let spent = info.applications;
                    info = gcr(&mut apply, &b, &mut y, kept, params);
                    info.applications += spent;
                }
                for (p, v) in kept.pairs.iter_mut() {
                    for k in 0..n {
                        p[k] *= scale[k];
                        v[k] *= scale[k];
                    }
                }
                *units = scale.to_vec();
                *applications += info.applications;
                // a stagnating solve: Φ − I (nearly) singular, as the dense
                // factorization would report
                if !info.converged && !(info.residual <= 1e-2) {
                    let worst = b
                        .iter()
                        .enumerate()
                        .fold((0usize, 0.0f64), |w, (k, v)| {
                            if v.abs() > w.1 {
                                (k, v.abs())
                            } else {
                                w
                            }
                        })
                        .0;
                    return Err(SolveError::Singular {
                        analysis: "shooting (monodromy − I, matrix-free)".into(),
                        unknown: devices.names.get(worst).cloned().unwrap_or_default(),
                        cause: format!(
                            "GCR left {:.1e} of the periodicity error after {} products                              with the monodromy operator: a Floquet multiplier at or near 1                              (a level nothing fixes over a period)",
                            info.residual, info.applications
                        ),
                        when: crate::error::When(Some(t0)),
                    });
                }
                Ok(y.iter().zip(scale).map(|(v, s)| v * s).collect())
            }
        }
    }
}

/// The last period shooting integrated at its solution, for the Floquet
/// check ([`super::floquet`]), which then integrates no period of its own
/// with sensitivities.
pub(crate) struct FinalPeriod {
    /// `x(T)` of that period, from the solution's start state.
    pub(crate) end: Vec<f64>,
    /// Its time origin.
    pub(crate) t0: f64,
    /// The dense `Φ`, when that period carried it.
    pub(crate) monodromy: Option<Mat<f64>>,
    /// The matrix-free operator, otherwise.
    pub(crate) lin: Option<PeriodLin>,
    /// The period itself, to guide the check's next periods ([`Guide`]).
    pub(crate) guide: Guide,
    /// The orbit on half the grid that estimated the floor: its samples
    /// and TR-BDF2 stage points (`[unknown][step]`), when it was solved.
    pub(crate) half: Option<HalfGrid>,
}

/// One period of the orbit on half the grid: samples and stage points.
#[derive(Debug, Clone)]
pub(crate) struct HalfGrid {
    /// Unknowns at the start of every step.
    pub(crate) samples: Vec<Vec<f64>>,
    /// Unknowns at every TR-BDF2 intermediate stage.
    pub(crate) stage: Vec<Vec<f64>>,
}

/// Per-unknown tolerance: `rel_tolerance · peak over the period + absolute tolerance`.
fn scales(devices: &DeviceSet, params: &SteadyParams, run: &PeriodRun) -> Vec<f64> {
    run.samples
        .iter()
        .enumerate()
        .map(|(k, row)| {
            let mag = row.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            params.shooting.rel_tolerance * mag + unknown_floor(devices, &params.tol, k)
        })
        .collect()
}

/// Largest `|v_k| / scale_k` and its index; an error when not finite.
fn worst_ratio(
    v: &[f64],
    scale: &[f64],
    devices: &DeviceSet,
    t: f64,
) -> Result<(f64, usize), SolveError> {
    let mut worst = (0.0f64, 0usize);
    for (k, (x, s)) in v.iter().zip(scale).enumerate() {
        let ratio = x.abs() / s;
        if !ratio.is_finite() {
            return Err(SolveError::NonFinite {
                analysis: "shooting".into(),
                unknown: devices.names.get(k).cloned().unwrap_or_default(),
                when: crate::error::When(Some(t)),
            });
        }
        if ratio > worst.0 {
            worst = (ratio, k);
        }
    }
    Ok(worst)
}

/// Factor `Φ − I`.
fn factor_monodromy(
    phi: &Mat<f64>,
    devices: &DeviceSet,
    t0: f64,
) -> Result<crate::linalg::RealLu, SolveError> {
    let n = phi.nrows();
    let mut jm = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            jm[i * n + j] = phi[(i, j)] - if i == j { 1.0 } else { 0.0 };
        }
    }
    let mut lu = crate::linalg::RealLu::new(crate::linalg::LinearSolver::Dense, n);
    lu.factor(&jm).map_err(|k| SolveError::Singular {
        analysis: "shooting (monodromy − I)".into(),
        unknown: devices.names.get(k).cloned().unwrap_or_default(),
        cause: "a Floquet multiplier equal to 1: the periodic state is not isolated (a level \
                nothing fixes over a period)"
            .into(),
        when: crate::error::When(Some(t0)),
    })?;
    Ok(lu)
}

/// How far one level of the iteration goes.
struct Level {
    /// Steps per period.
    ns: usize,
    /// Stop when the scaled periodicity error and update are both below this
    /// (1 on the final level: the requested tolerance).
    target: f64,
    /// Only compute `Φ − I` at the starting point, for the next level's chord
    /// iteration, and leave the point where it is (a start on the circuit's
    /// own orbit from another grid, already closer to the fine orbit than
    /// the coarse orbit is: [`super::ShootingParams::initial_near_orbit`]).
    jacobian_only: bool,
}

/// A chord step (old `Φ − I`) must shrink the scaled periodicity error at
/// least this much, or the next period recomputes the monodromy matrix.
const CHORD_CONTRACTION: f64 = 0.1;

/// Periodicity error, in tolerance units, within which a period guides
/// the Newton starts of the next one on its grid ([`Guide`]); farther
/// from the orbit the next period starts from a point a Newton update
/// away, and linear extrapolation predicts as well.
pub(crate) const GUIDE_WITHIN: f64 = 1e4;

/// Restarts of the coarse level from the end of its best period, after a
/// Newton iterate from which a period could not be integrated. Measured
/// need: a class-C stage into 130 Ω ∥ 1.62 µH, whose full coarse Newton
/// steps reached 345 V on a 50 V swing and then a state no step could
/// integrate from.
const MAX_RESTARTS: usize = 8;

/// Scaled periodicity error of the previous period below which a chord
/// period on the final level keeps its factors for the Floquet check.
/// (1,000 was measured too, docs/performance.md, "Mismatch sweep": on the
/// class-C demo it saved nothing.)
const LIKELY_LAST: f64 = 100.0;

/// Periodic steady state by shooting-Newton.
///
/// Two levels: a coarse one (a quarter of the steps per period) does the
/// warm-up and takes Newton from far away to within 10⁻⁴ of the orbit
/// relative to the tolerance scale, cheaply; the fine one then starts from
/// there with the coarse `Φ − I` (which differs from the fine one by the
/// discretisation error) as a chord Jacobian, recomputing the monodromy
/// matrix only when the chord iteration stops contracting. Dense `Φ` or
/// matrix-free by [`ShootingMode`] (module overview).
pub fn shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    shooting_with_final(circuit, devices, params).map(|(s, _)| s)
}

/// [`shooting`], with the last period it integrated at the solution (for
/// the Floquet check). A neighbour's warm start that does not solve is not
/// the last word: shooting then starts again cold (operating point,
/// warm-up), which may still reach the orbit. A start on the circuit's own
/// orbit from another grid (`initial_near_orbit`, auto's refinement) is
/// not retried: its caller keeps the grid it had.
pub(crate) fn shooting_with_final(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<(PeriodicSolution, FinalPeriod), SolveError> {
    match shoot(circuit, devices, params) {
        Err(_) if params.shooting.initial.is_some() && !params.shooting.initial_near_orbit => {
            let mut cold = params.clone();
            cold.shooting.initial = None;
            shoot(circuit, devices, &cold)
        }
        solved => solved,
    }
}

/// [`shooting_with_final`] from the start `params` gives, without a retry.
fn shoot(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<(PeriodicSolution, FinalPeriod), SolveError> {
    params.check()?;
    if let Some(d) = devices
        .devices
        .iter()
        .find(|d| d.frequency_domain() && !d.time_model())
    {
        return Err(crate::transient::time_domain_refused(circuit, d.element()));
    }
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let keep = record_fits(n, ns);
    let free = params.shooting.mode.resolve(n) == ShootingMode::MatrixFree && keep;
    let newton_sens = if free { Sens::Record } else { Sens::Dense };
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    let warm_start = params
        .shooting
        .initial
        .as_ref()
        .filter(|x| x.len() == n && x.iter().all(|v| v.is_finite()));
    // the operating point only starts the warm-up, which a warm start skips
    let mut st = match warm_start {
        Some(_) => Stepper::from_zero(devices, params.tol, params.linear_solver, 0.0),
        None => Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?,
    };
    // Warm up past the end of every source's start-up (delay and amplitude
    // rise), then a few periods more: the period that is shot must see the
    // sources in their periodic form.
    let settled_from = start_time(circuit, period);
    let startup = (settled_from / period).round();
    if !(startup.is_finite() && startup <= 100_000.0) {
        return Err(SolveError::BadParams(format!(
            "shooting: the sources become periodic only after {settled_from:.3e} s, \
             more than 100000 periods of {period:.3e} s"
        )));
    }
    let warm = params.shooting.warmup_periods + startup as usize;
    let t0 = warm as f64 * period;
    let levels: Vec<Level> = if params.shooting.coarse_grid && ns >= 128 {
        vec![
            Level {
                ns: ns / 4,
                target: 1e3,
                jacobian_only: warm_start.is_some() && params.shooting.initial_near_orbit,
            },
            Level {
                ns,
                target: 1.0,
                jacobian_only: false,
            },
        ]
    } else {
        vec![Level {
            ns,
            target: 1.0,
            jacobian_only: false,
        }]
    };
    let mut x0 = match warm_start {
        // a warm start from a solved neighbour: no warm-up periods
        Some(x) => x.clone(),
        None => {
            // Start the warm-up at the first period where the sources are
            // periodic, from the operating point: the gentle start-up ramp a
            // file asks for is meant for plain transients; integrating it here
            // would only cost periods (and, cut short, land on a wrong orbit).
            // The warm-up only has to bring Newton near the orbit: it runs on
            // the coarse grid.
            let t_start = startup * period;
            let hw = period / levels[0].ns as f64;
            let xop = st.x.clone();
            st.init_at(&xop, t_start);
            for s in 0..params.shooting.warmup_periods * levels[0].ns {
                st.step_trbdf2(t_start + (s + 1) as f64 * hw).map_err(err)?;
            }
            st.x.clone()
        }
    };
    let mut last = (f64::INFINITY, 0usize);
    let mut report = ShootingInfo {
        coarse_steps: if levels.len() > 1 { levels[0].ns } else { 0 },
        warmup_periods: if warm_start.is_some() {
            0
        } else {
            params.shooting.warmup_periods
        },
        matrix_free: free,
        ..ShootingInfo::default()
    };
    let mut jac: Option<Jacobian> = None;
    for (li, level) in levels.iter().enumerate() {
        let h = period / level.ns as f64;
        let final_level = li + 1 == levels.len();
        let mut need_sens = jac.is_none();
        let mut prev_resid = f64::INFINITY;
        // the coarse level's best period so far (its periodicity error and
        // end state), and the restarts from it
        let mut best: Option<(f64, Vec<f64>)> = None;
        let mut restarts = 0usize;
        let mut level_iter = 0usize;
        // the last period of this level, once near the orbit
        let mut guide: Option<Guide> = None;
        loop {
            if level_iter >= params.shooting.max_iter {
                return Err(SolveError::NoConvergence {
                    analysis: if final_level {
                        "shooting".into()
                    } else {
                        "shooting (coarse grid)".into()
                    },
                    unknown: devices.names.get(last.1).cloned().unwrap_or_default(),
                    iterations: params.shooting.max_iter,
                    residual: last.0,
                    unit: match devices.kinds.get(last.1) {
                        Some(tankwave_devices::UnknownKind::Current) => "A",
                        _ => "V",
                    },
                    when: crate::error::When(None),
                });
            }
            level_iter += 1;
            if final_level {
                report.fine_periods += 1;
            } else {
                report.coarse_periods += 1;
            }
            if need_sens {
                report.monodromy_periods += 1;
            }
            // A chord period on the final level that is likely the last
            // one keeps its factors, for the Floquet check to reuse; keeping
            // them costs about half a period more (measured on the class-C
            // demo), so only where the previous period's error was within
            // LIKELY_LAST units (a chord step shrinks it about a hundredfold).
            let sens = if need_sens {
                newton_sens
            } else if final_level && keep && prev_resid <= LIKELY_LAST {
                Sens::Record
            } else {
                Sens::None
            };
            // A full Newton step from far away can overshoot to a state no
            // step integrates from, or whose monodromy matrix is singular (a
            // strongly nonlinear period map): on the coarse level the
            // iteration then starts again from the end of its best period
            // so far, a plain period further along, as a longer warm-up
            // would have.
            let may_restart = !final_level && restarts < MAX_RESTARTS && best.is_some();
            let mut restart = |x0: &mut Vec<f64>, report: &mut ShootingInfo| {
                if let Some((_, end)) = best.take() {
                    *x0 = end;
                }
                restarts += 1;
                report.restarts += 1;
            };
            let mut run = match integrate_period(
                &mut st,
                devices,
                &x0,
                t0,
                h,
                level.ns,
                sens,
                guide.as_ref(),
            ) {
                Ok(run) => run,
                Err(_) if may_restart => {
                    restart(&mut x0, &mut report);
                    need_sens = true;
                    continue;
                }
                Err(e) => return Err(e),
            };
            // `Φ − I` factored once, here, for the restart test and the update
            let factored = run
                .monodromy
                .as_ref()
                .map(|phi| factor_monodromy(phi, devices, t0));
            if may_restart && matches!(factored, Some(Err(_))) {
                restart(&mut x0, &mut report);
                need_sens = true;
                continue;
            }
            let r: Vec<f64> = run.end.iter().zip(&x0).map(|(a, b)| a - b).collect();
            let scale = scales(devices, params, &run);
            let worst = worst_ratio(&r, &scale, devices, st.t)?;
            if !final_level && best.as_ref().is_none_or(|b| worst.0 < b.0) {
                best = Some((worst.0, run.end.clone()));
            }
            last = (r[worst.1].abs(), worst.1);
            guide = (worst.0 <= GUIDE_WITHIN).then(|| Guide::of(&run));
            let mut from_this_run = false;
            if let Some(lu) = factored {
                jac = Some(Jacobian::Dense(Box::new(lu?)));
            } else if need_sens {
                if let Some(lin) = run.lin.take() {
                    jac = Some(Jacobian::free_after(lin, jac.as_ref()));
                    from_this_run = true;
                }
            }
            // Newton (or chord) update: (Φ − I) Δ = −r. Computed before the
            // convergence test: a slow mode (a bias network whose time
            // constant spans hundreds of periods) leaves a tiny periodicity
            // error r but a large distance to the fixed point, Δ ≈ r / (1 − λ).
            // Converged only when both the residual and the update are within
            // tolerance.
            let Some(f) = jac.as_ref() else {
                return Err(SolveError::BadParams(
                    "shooting: no monodromy matrix".into(),
                ));
            };
            if level.jacobian_only {
                break;
            }
            let dx = f.solve(&r, &scale, devices, t0, &mut report.krylov_products)?;
            let update = worst_ratio(&dx, &scale, devices, st.t)?.0;
            if worst.0 <= level.target && update <= level.target {
                if final_level {
                    // the numerical floor: the orbit again on half the grid
                    let half = if params.shooting.half_grid {
                        half_grid(
                            &mut st,
                            devices,
                            params,
                            &x0,
                            t0,
                            period,
                            ns,
                            f,
                            &mut report.krylov_products,
                        )
                        .ok()
                        .flatten()
                    } else {
                        None
                    };
                    let floor = match &half {
                        Some(h) => super::floor::grid_floor(
                            &run.samples,
                            &h.samples,
                            params.harmonics,
                            params.shooting.rel_tolerance,
                        ),
                        // no second grid: the spectrum's own tail
                        // (conservative; floor.rs), never no floor at all
                        _ => super::floor::tail_floor(
                            &run.samples,
                            params.harmonics,
                            params.shooting.rel_tolerance,
                        ),
                    };
                    let lin = match (run.lin.take(), from_this_run, jac) {
                        (Some(l), _, _) => Some(l),
                        (None, true, Some(Jacobian::Free(l, _))) => Some(l),
                        _ => None,
                    };
                    let last_period = FinalPeriod {
                        end: run.end.clone(),
                        t0,
                        monodromy: run.monodromy.take(),
                        lin,
                        guide: Guide::of(&run),
                        half,
                    };
                    let info = SteadyInfo {
                        method: SteadyMethod::Shooting,
                        fell_back_from: None,
                        iterations: report.coarse_periods + report.fine_periods,
                        residual: worst.0 * params.shooting.rel_tolerance,
                        tolerance: params.shooting.rel_tolerance,
                        system_size: n,
                        balance: None,
                        shooting: Some(report),
                        floquet: None,
                        floor,
                        accuracy: None,
                    };
                    let sol =
                        trbdf2_solution(circuit, devices, params, run.samples, &run.stage, info)?;
                    return Ok((sol, last_period));
                }
                // on to the next level from the improved point
                for k in 0..n {
                    x0[k] += dx[k];
                }
                break;
            }
            // A chord step that did not contract well: the next period
            // recomputes the monodromy matrix.
            // Coarse levels, far from the orbit, take full Newton steps.
            need_sens = !final_level || (!need_sens && worst.0 > CHORD_CONTRACTION * prev_resid);
            prev_resid = worst.0;
            for k in 0..n {
                x0[k] += dx[k];
            }
        }
    }
    Err(SolveError::BadParams("shooting: no level ran".into()))
}

/// The orbit on a grid of `ns/2` steps per period, warm-started from the
/// fine fixed point `x0` with the fine `Φ − I` (`fine`) as the chord
/// Jacobian (recomputed on the half grid when a chord step shrinks the
/// error less than tenfold), converged to the same tolerance: its samples
/// (`[unknown][step]`), or `None` when the half grid is too coarse to carry
/// harmonic 2 or the iteration does not converge within `max_iter` periods
/// (the floor is then not estimated).
#[allow(clippy::too_many_arguments)]
fn half_grid(
    st: &mut Stepper<'_>,
    devices: &DeviceSet,
    params: &SteadyParams,
    x0: &[f64],
    t0: f64,
    period: f64,
    ns: usize,
    fine: &Jacobian,
    products: &mut usize,
) -> Result<Option<HalfGrid>, SolveError> {
    let half = ns / 2;
    if half < 8 {
        return Ok(None);
    }
    let h = period / half as f64;
    let own_sens = match fine {
        Jacobian::Dense(_) => Sens::Dense,
        Jacobian::Free(..) => Sens::Record,
    };
    let mut x = x0.to_vec();
    let mut own: Option<Jacobian> = None;
    let mut need_sens = false;
    let mut prev = f64::INFINITY;
    let mut guide: Option<Guide> = None;
    for _ in 0..params.shooting.max_iter {
        let sens = if need_sens { own_sens } else { Sens::None };
        let run = integrate_period(st, devices, &x, t0, h, half, sens, guide.as_ref())?;
        let r: Vec<f64> = run.end.iter().zip(&x).map(|(a, b)| a - b).collect();
        let scale = scales(devices, params, &run);
        let worst = worst_ratio(&r, &scale, devices, st.t)?.0;
        guide = (worst <= GUIDE_WITHIN).then(|| Guide::of(&run));
        if let Some(phi) = &run.monodromy {
            own = Some(Jacobian::Dense(Box::new(factor_monodromy(
                phi, devices, t0,
            )?)));
        } else if let Some(lin) = run.lin {
            own = Some(Jacobian::free_after(
                lin,
                Some(own.as_ref().unwrap_or(fine)),
            ));
        }
        let jac = own.as_ref().unwrap_or(fine);
        let dx = jac.solve(&r, &scale, devices, t0, products)?;
        let update = worst_ratio(&dx, &scale, devices, st.t)?.0;
        if worst <= 1.0 && update <= 1.0 {
            return Ok(Some(HalfGrid {
                samples: run.samples,
                stage: run.stage,
            }));
        }
        need_sens = !need_sens && worst > CHORD_CONTRACTION * prev;
        prev = worst;
        for (a, d) in x.iter_mut().zip(&dx) {
            *a += d;
        }
    }
    Ok(None)
}

/// Factor the Jacobian the last Newton solve left in the workspace (at its converged point).
fn factor(st: &mut Stepper<'_>, devices: &DeviceSet, t: f64) -> Result<(), SolveError> {
    let Stepper { ws, .. } = st;
    let n = devices.n_unknowns;
    ws.factor().map_err(|k| SolveError::Singular {
        analysis: "shooting".into(),
        unknown: devices.names.get(k).cloned().unwrap_or_default(),
        cause: crate::singular::cause(&ws.dense_jac(), n, k, devices),
        when: crate::error::When(Some(t)),
    })
}

// the circuit builder of the crate's integration tests
#[cfg(test)]
#[path = "../../tests/support/mod.rs"]
mod test_support;

#[cfg(test)]
mod tests {
    use super::*;

    use super::test_support as support;

    #[test]
    fn the_blocked_monodromy_matrix_is_the_carried_one() {
        // One period of the half-wave rectifier (support::rectifier, a
        // diode that switches within the period) from the same state,
        // carried three ways: the dense Φ through every step, the stored
        // factors applied to the identity as one block, and the same applied
        // column by column. The three evaluate the same recursion in a
        // different order of sums, so they agree to rounding: 1e-10 of the
        // largest entry (64 steps of a 4-unknown system; common practice).
        let b = support::rectifier(1e6);
        let d = tankwave_devices::instantiate(&b.c).expect("devices");
        let n = d.n_unknowns;
        let (t0, ns) = (0.0, 64);
        let h = 1e-6 / ns as f64;
        let x0 = vec![0.0; n];
        let tol = crate::newton::Tolerances::default();
        let lin = crate::linalg::LinearSolver::default();
        let mut st = Stepper::from_zero(&d, tol, lin, t0);
        let dense = integrate_period(&mut st, &d, &x0, t0, h, ns, Sens::Dense, None)
            .expect("period")
            .monodromy
            .expect("Φ");
        let mut st = Stepper::from_zero(&d, tol, lin, t0);
        let rec = integrate_period(&mut st, &d, &x0, t0, h, ns, Sens::Record, None)
            .expect("period")
            .lin
            .expect("factors");
        let blocked = rec.monodromy();
        let top = (0..n)
            .flat_map(|i| (0..n).map(move |j| (i, j)))
            .fold(0.0f64, |m, (i, j)| m.max(dense[(i, j)].abs()));
        assert!(top > 0.0);
        let mut col = vec![0.0; n];
        let mut e = vec![0.0; n];
        for j in 0..n {
            e.fill(0.0);
            e[j] = 1.0;
            rec.apply(&e, &mut col);
            for i in 0..n {
                let (a, b, c) = (dense[(i, j)], blocked[(i, j)], col[i]);
                assert!(
                    (a - b).abs() <= 1e-10 * top,
                    "Φ[{i},{j}]: {a} carried, {b} blocked"
                );
                assert!(
                    (c - b).abs() <= 1e-10 * top,
                    "Φ[{i},{j}]: {c} by column, {b} blocked"
                );
            }
        }
    }

    #[test]
    fn a_guided_period_is_the_same_period_in_fewer_newton_iterations() {
        // The half-wave rectifier (a diode that switches within the period)
        // brought near its orbit by plain periods; then one more period from
        // the same state twice: Newton started by linear extrapolation, and
        // started from the period before (Guide). Both solve the same stage
        // equations to the same Newton tolerance, so their end states agree
        // within a few tolerances (common practice: two converged Newton
        // solutions of one system differ by about their tolerance, and the
        // step-to-step differences are damped over the period by this
        // dissipative circuit); the guided one takes fewer iterations.
        let b = support::rectifier(1e6);
        let d = tankwave_devices::instantiate(&b.c).expect("devices");
        let n = d.n_unknowns;
        let ns = 64;
        let period = 1e-6;
        let h = period / ns as f64;
        let tol = crate::newton::Tolerances::default();
        let lin = crate::linalg::LinearSolver::default();
        let mut st = Stepper::from_zero(&d, tol, lin, 0.0);
        let mut x = vec![0.0; n];
        let mut last = None;
        for p in 0..40 {
            let run = integrate_period(&mut st, &d, &x, p as f64 * period, h, ns, Sens::None, None)
                .expect("period");
            x = run.end.clone();
            last = Some(run);
        }
        let guide = Guide::of(&last.expect("a period"));
        let t0 = 40.0 * period;
        let count = |g: Option<&Guide>| {
            let mut st = Stepper::from_zero(&d, tol, lin, t0);
            let run = integrate_period(&mut st, &d, &x, t0, h, ns, Sens::None, g).expect("period");
            (run.end, st.newton_iterations)
        };
        let (plain, plain_its) = count(None);
        let (guided, guided_its) = count(Some(&guide));
        for k in 0..n {
            let scale = tol.rel_tolerance * plain[k].abs().max(guided[k].abs())
                + crate::newton::unknown_floor(&d, &tol, k);
            assert!(
                (plain[k] - guided[k]).abs() <= 10.0 * scale,
                "unknown {k}: {} plain, {} guided",
                plain[k],
                guided[k]
            );
        }
        assert!(
            (guided_its as f64) < 0.8 * plain_its as f64,
            "{guided_its} Newton iterations guided against {plain_its} plain"
        );
    }

    #[test]
    fn stored_factors_are_bounded_in_memory() {
        // the N = 16 bench circuit at the default grid fits (about 73 MiB)
        assert!(record_fits(212, 256));
        // the largest grid a file may ask for does not, even for the demo
        // stage (about 990 MiB): dense Φ then
        assert!(!record_fits(212, 65_536));
        assert!(!record_fits(17, 65_536));
        // the demo stage on 4,096 steps a period does (about 62 MiB)
        assert!(record_fits(17, 4_096));
        assert_eq!(
            ShootingMode::Auto.resolve(MATRIX_FREE_FROM - 1),
            ShootingMode::Dense
        );
        assert_eq!(
            ShootingMode::Auto.resolve(MATRIX_FREE_FROM),
            ShootingMode::MatrixFree
        );
        assert_eq!(ShootingMode::Dense.resolve(10_000), ShootingMode::Dense);
    }
}
