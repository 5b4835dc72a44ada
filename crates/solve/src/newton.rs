//! Newton–Raphson on the assembled MNA system, shared by every analysis.
//!
//! The residual solved is `f(x) = i(x) + α·q(x) + h + g_s·x_v`, where `α` and
//! the history vector `h` come from the integration formula (both zero for
//! DC) and `g_s` is an optional shunt conductance from every node voltage to
//! ground (junction-leak stepping). The Jacobian is `G + α·C + g_s·I_v`.
//!
//! Convergence needs, at once: no device reported a limited junction, every
//! update small, `|Δx_k| ≤ rel_tolerance·max(|x_k|) + (voltage_floor | current_floor)` by the
//! unknown's kind, and every residual small, `|f_r| ≤ rel_tolerance·s_r + (current_floor |
//! voltage_floor)` where `s_r = Σ_c |J_rc x_c| + |α q_r| + |h_r|` is the size of the
//! terms in that equation (a node equation is in amperes, a branch equation
//! in volts).

use crate::assemble::SparseStamp;
use crate::linalg::{LinearSolver, RealLu};
use tankwave_devices::{DeviceSet, EvalCtx, Filter, UnknownKind};

/// Newton convergence tolerances.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    /// Relative tolerance on updates and residuals (default 1e-6).
    pub rel_tolerance: f64,
    /// Absolute tolerance on node voltages and branch-equation residuals, V (default 1e-9).
    pub voltage_floor: f64,
    /// Absolute tolerance on branch currents and node-equation residuals, A (default 1e-12).
    pub current_floor: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Self {
            rel_tolerance: 1e-6,
            voltage_floor: 1e-9,
            current_floor: 1e-12,
        }
    }
}

/// Work arrays reused across Newton iterations and time steps. The
/// Jacobian is held on the stamp's sparse pattern ([`crate::assemble`]), so
/// an iteration costs the stored entries, not `n²`.
#[derive(Debug)]
pub(crate) struct Workspace {
    pub stamp: SparseStamp,
    /// `G + αC (+ g_s I_v)` at the positions of `stamp.pattern()`.
    pub jac: Vec<f64>,
    pub f: Vec<f64>,
    pub lu: RealLu,
    pub dx: Vec<f64>,
    /// Size of the terms of every equation (the residual test).
    size: Vec<f64>,
}

impl Workspace {
    pub fn new(n: usize, kind: LinearSolver) -> Self {
        Self {
            stamp: SparseStamp::new(n),
            jac: Vec::new(),
            f: vec![0.0; n],
            lu: RealLu::new(kind, n),
            dx: vec![0.0; n],
            size: vec![0.0; n],
        }
    }

    /// Factor the Jacobian held in `jac`.
    pub fn factor(&mut self) -> Result<(), usize> {
        self.lu.factor_pattern(self.stamp.pattern(), &self.jac)
    }

    /// The Jacobian as a row-major dense matrix (for the diagnosis of a
    /// singular one, [`crate::singular::cause`]).
    pub fn dense_jac(&self) -> Vec<f64> {
        self.stamp.pattern().to_dense(&self.jac)
    }
}

/// The system a Newton solve works on.
#[derive(Debug, Clone, Copy)]
pub(crate) struct System<'a> {
    pub devices: &'a DeviceSet,
    pub ctx: EvalCtx,
    pub alpha: f64,
    pub hist: Option<&'a [f64]>,
    pub gshunt: f64,
    pub tol: Tolerances,
    pub max_iter: usize,
}

/// Why a Newton solve stopped without converging.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Failure {
    /// Iteration limit reached: worst equation, its residual, iterations.
    NoConvergence {
        worst: usize,
        residual: f64,
        iterations: usize,
        /// Set when the last residual was within tolerance: what kept Newton
        /// from stopping (an update still too large, or a limited junction).
        stalled: Option<Stall>,
    },
    /// No pivot for this unknown, and what the numbers point to
    /// ([`crate::singular`]; `None` when the matrix was not kept).
    Singular(usize, Option<String>),
    /// A non-finite value in this unknown.
    NonFinite(usize),
}

/// Why a Newton iteration whose residual is within tolerance did not stop.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Stall {
    /// The unknown with the largest update against its tolerance.
    pub unknown: usize,
    /// That update.
    pub update: f64,
    /// Its tolerance.
    pub tol: f64,
    /// A device still limited a junction step in the last iteration.
    pub limited: bool,
}

/// Outcome of a converged solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Converged {
    pub iterations: usize,
    /// Largest residual magnitude at the solution (mixed units, for reports).
    pub residual: f64,
}

/// Evaluate the residual and Jacobian of `sys` at `x` into `ws`. Returns
/// whether a device limited.
pub(crate) fn load(sys: &System<'_>, ws: &mut Workspace, x: &[f64], state: &mut [f64]) -> bool {
    let n = sys.devices.n_unknowns;
    let info = ws.stamp.eval(sys.devices, x, &sys.ctx, state, Filter::All);
    for r in 0..n {
        let mut f = ws.stamp.i[r] + sys.alpha * ws.stamp.q[r];
        if let Some(h) = sys.hist {
            f += h[r];
        }
        ws.f[r] = f;
    }
    ws.jac.clear();
    ws.jac.extend(
        ws.stamp
            .g
            .iter()
            .zip(&ws.stamp.c)
            .map(|(g, c)| g + sys.alpha * c),
    );
    if sys.gshunt != 0.0 {
        for k in 0..sys.devices.n_nodes.min(n) {
            ws.f[k] += sys.gshunt * x[k];
            ws.jac[ws.stamp.pattern().diag(k)] += sys.gshunt;
        }
    }
    info.limited
}

/// Scaled residual check; returns (all within tolerance, worst row, worst |f|, worst ratio).
fn residual_ok(sys: &System<'_>, ws: &mut Workspace, x: &[f64]) -> (bool, usize, f64, f64) {
    let n = sys.devices.n_unknowns;
    let mut ok = true;
    let (mut worst, mut worst_ratio, mut worst_f) = (0usize, -1.0f64, 0.0f64);
    // Σ_c |J_rc x_c| of every row, summed in column order as a dense pass would
    ws.size.fill(0.0);
    for (p, r, c) in ws.stamp.pattern().entries() {
        ws.size[r] += (ws.jac[p] * x[c]).abs();
    }
    for r in 0..n {
        let mut s = ws.size[r];
        s += (sys.alpha * ws.stamp.q[r]).abs() + ws.stamp.i[r].abs();
        if let Some(h) = sys.hist {
            s += h[r].abs();
        }
        let abs = match sys.devices.kinds.get(r) {
            Some(UnknownKind::Current) => sys.tol.voltage_floor,
            _ => sys.tol.current_floor,
        };
        let tol = sys.tol.rel_tolerance * s + abs;
        let f = ws.f[r].abs();
        let ratio = f / tol;
        if !(ratio <= 1.0) {
            ok = false;
        }
        if !(ratio <= worst_ratio) {
            worst_ratio = ratio;
            worst = r;
            worst_f = f;
        }
    }
    (ok, worst, worst_f, worst_ratio)
}

/// Absolute tolerance of unknown `k` (by its kind).
pub(crate) fn unknown_floor(devices: &DeviceSet, tol: &Tolerances, k: usize) -> f64 {
    match devices.kinds.get(k) {
        Some(UnknownKind::Current) => tol.current_floor,
        _ => tol.voltage_floor,
    }
}

/// Tolerance units of the last update within which the next Newton
/// iteration reuses the factors of the one before (a chord step) instead of
/// factoring its own Jacobian. With the default relative tolerance of 1e-6,
/// 100 units move a junction voltage of 0.7 V by 70 µV, which changes its
/// conductance by 0.3 %: the chord step then contracts like Newton's to
/// within that fraction, and the convergence test (residual and update
/// within one unit) is the same as for a Newton step (common practice of
/// stiff integrators, which keep their iteration matrix while it contracts;
/// E. Hairer, G. Wanner, Solving ODEs II, ch. IV.8, from memory).
/// Measured: docs/performance.md, "Linear algebra".
pub(crate) const CHORD_WITHIN: f64 = 100.0;

/// A chord step must at least halve the update, or the next iteration
/// factors its own Jacobian.
const CHORD_HALVING: f64 = 0.5;

/// Newton–Raphson from `x` (updated in place), with chord steps near the
/// solution ([`CHORD_WITHIN`]). On success `ws.stamp` holds the device
/// evaluation at the returned `x` (and `ws.lu` the factors of the last
/// Jacobian factored, not necessarily the one at `x`: callers that need
/// those factor them again).
pub(crate) fn solve(
    sys: &System<'_>,
    ws: &mut Workspace,
    x: &mut [f64],
    state: &mut [f64],
) -> Result<Converged, Failure> {
    let n = sys.devices.n_unknowns;
    let mut update_ok = false;
    let mut last = (0usize, f64::INFINITY);
    // the last update's worst component against its tolerance: (unknown, |Δx|, tol, ratio)
    let mut worst_update = (0usize, 0.0f64, 1.0f64, 0.0f64);
    let mut stalled = None;
    // the worst update ratio of the iteration before the last, and whether
    // the last iteration was a chord step
    let mut before_last = f64::INFINITY;
    let mut last_chord = false;
    for it in 0..=sys.max_iter {
        let limited = load(sys, ws, x, state);
        if let Some(k) = ws.f.iter().position(|v| !v.is_finite()) {
            return Err(Failure::NonFinite(k));
        }
        let (res_ok, worst, worst_f, _) = residual_ok(sys, ws, x);
        last = (worst, worst_f);
        stalled = (it > 0 && res_ok).then_some(Stall {
            unknown: worst_update.0,
            update: worst_update.1,
            tol: worst_update.2,
            limited,
        });
        if it > 0 && !limited && res_ok && update_ok {
            let residual = ws.f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            return Ok(Converged {
                iterations: it,
                residual,
            });
        }
        if it == sys.max_iter {
            break;
        }
        // A chord step (the factors of the iteration before) once the
        // last update was within CHORD_WITHIN tolerance units, unless the
        // last chord step did not at least halve the update.
        let prev = worst_update.3;
        let chord =
            it > 0 && prev <= CHORD_WITHIN && !(last_chord && prev > CHORD_HALVING * before_last);
        if !chord {
            ws.factor().map_err(|k| {
                Failure::Singular(
                    k,
                    Some(crate::singular::cause(&ws.dense_jac(), n, k, sys.devices)),
                )
            })?;
        }
        before_last = prev;
        last_chord = chord;
        for r in 0..n {
            ws.dx[r] = -ws.f[r];
        }
        ws.lu.solve(&mut ws.dx);
        update_ok = true;
        worst_update = (0, 0.0, 1.0, 0.0);
        for k in 0..n {
            let d = ws.dx[k];
            if !d.is_finite() {
                return Err(Failure::NonFinite(k));
            }
            let xn = x[k] + d;
            let tol = sys.tol.rel_tolerance * x[k].abs().max(xn.abs())
                + unknown_floor(sys.devices, &sys.tol, k);
            if d.abs() > tol {
                update_ok = false;
            }
            if d.abs() / tol > worst_update.3 {
                worst_update = (k, d.abs(), tol, d.abs() / tol);
            }
            x[k] = xn;
        }
    }
    Err(Failure::NoConvergence {
        worst: last.0,
        residual: last.1,
        iterations: sys.max_iter,
        stalled,
    })
}

/// Turn a [`Failure`] into a [`crate::SolveError`].
pub(crate) fn to_error(
    f: Failure,
    devices: &DeviceSet,
    analysis: &str,
    time: Option<f64>,
) -> crate::SolveError {
    let name = |k: usize| {
        devices
            .names
            .get(k)
            .cloned()
            .unwrap_or_else(|| format!("unknown #{k}"))
    };
    let when = crate::error::When(time);
    match f {
        Failure::NoConvergence {
            iterations,
            stalled: Some(st),
            ..
        } => crate::SolveError::NewtonStalled {
            analysis: analysis.to_string(),
            iterations,
            reason: if st.limited && st.update <= st.tol {
                "a junction voltage step was still being limited".to_string()
            } else {
                format!(
                    "the update of {} is still {:.3e} {} (tolerance {:.3e})",
                    name(st.unknown),
                    st.update,
                    match devices.kinds.get(st.unknown) {
                        Some(UnknownKind::Current) => "A",
                        _ => "V",
                    },
                    st.tol
                )
            },
            when,
        },
        Failure::NoConvergence {
            worst,
            residual,
            iterations,
            stalled: None,
        } => crate::SolveError::NoConvergence {
            analysis: analysis.to_string(),
            unknown: name(worst),
            iterations,
            residual,
            unit: match devices.kinds.get(worst) {
                Some(UnknownKind::Current) => "V",
                _ => "A",
            },
            when,
        },
        Failure::Singular(k, cause) => crate::SolveError::Singular {
            analysis: analysis.to_string(),
            unknown: name(k),
            cause: cause.unwrap_or_else(|| crate::singular::guess(devices, k)),
            when,
        },
        Failure::NonFinite(k) => crate::SolveError::NonFinite {
            analysis: analysis.to_string(),
            unknown: name(k),
            when,
        },
    }
}
