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
//! and only takes the coarse `Φ` at its point. Converged on the fine grid when
//! every `|x_k(T) − x_k(0)|` AND every component of the update is within
//! `rel_tolerance·max_n |x_k| + (voltage_floor | current_floor)`
//! (the update test catches slow modes, whose periodicity error is tiny
//! while the state is still far from the fixed point).

use super::sample::trbdf2_solution;
use super::{start_time, PeriodicSolution, ShootingInfo, SteadyInfo, SteadyParams};
use crate::newton::unknown_floor;
use crate::transient::{bdf2_coefficients, charged_rows, Method, Stepper, GAMMA};
use crate::SolveError;
use faer::Mat;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// One period integrated from `x0` (with [`integrate_period`] and
/// `with_sens`, the monodromy matrix of the orbit, e.g. for a check of its
/// multipliers).
pub(crate) struct PeriodRun {
    /// Unknowns at the start of every step, `[unknown][step]`.
    pub(crate) samples: Vec<Vec<f64>>,
    /// Unknowns at every TR-BDF2 intermediate stage, `[unknown][step]`.
    pub(crate) stage: Vec<Vec<f64>>,
    /// `x(T)`.
    pub(crate) end: Vec<f64>,
    /// `Φ = ∂x(T)/∂x₀` when asked for.
    pub(crate) monodromy: Option<Mat<f64>>,
}

/// The charged-row part of `G` and the whole of `C` at the stepper's last evaluation.
fn g_hat_and_c(st: &Stepper<'_>, n: usize) -> (Mat<f64>, Mat<f64>) {
    let ch = charged_rows(&st.ws.stamp);
    let g = Mat::<f64>::from_fn(
        n,
        n,
        |r, c| {
            if ch[r] {
                st.ws.stamp.g_at(r, c)
            } else {
                0.0
            }
        },
    );
    let c = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
    (g, c)
}

/// Integrate one period of `ns` uniform TR-BDF2 steps from `x0` at `t0`,
/// with the monodromy matrix when `with_sens`.
pub(crate) fn integrate_period(
    st: &mut Stepper<'_>,
    devices: &DeviceSet,
    x0: &[f64],
    t0: f64,
    h: f64,
    ns: usize,
    with_sens: bool,
) -> Result<PeriodRun, SolveError> {
    let n = devices.n_unknowns;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    st.init_at(x0, t0);
    let mut samples = vec![vec![0.0; ns]; n];
    let mut stage = vec![vec![0.0; ns]; n];
    if !with_sens {
        for s in 0..ns {
            for (k, row) in samples.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            let xg = st.step_trbdf2(t0 + (s + 1) as f64 * h).map_err(err)?;
            for (k, row) in stage.iter_mut().enumerate() {
                row[s] = xg[k];
            }
        }
        return Ok(PeriodRun {
            samples,
            stage,
            end: st.x.clone(),
            monodromy: None,
        });
    }
    // Sensitivity of q̇ is −G in rows that carry charge and 0 elsewhere.
    let (mut g0, mut c0) = g_hat_and_c(st, n);
    let mut sens = Mat::<f64>::identity(n, n);
    for s in 0..ns {
        for (k, row) in samples.iter_mut().enumerate() {
            row[s] = st.x[k];
        }
        let t1 = t0 + (s + 1) as f64 * h;
        let tg = st.t + GAMMA * (t1 - st.t);
        // Stage 1, trapezoidal to t + γh: (G_γ + α₁C_γ) S_γ = (α₁C₀ − Ĝ₀) S₀.
        let alpha1 = 2.0 / (tg - st.t);
        let a = st.attempt(tg, Method::Trapezoidal).map_err(err)?;
        factor(st, devices, tg)?;
        let m = Mat::<f64>::from_fn(n, n, |r, c| alpha1 * c0[(r, c)] - g0[(r, c)]);
        let mut sg = &m * &sens;
        st.ws.lu.solve_mat(sg.as_mut());
        let cg = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
        let h0 = tg - st.t;
        st.commit(a);
        for (k, row) in stage.iter_mut().enumerate() {
            row[s] = st.x[k];
        }
        // Stage 2, BDF2 through t, t + γh, t1:
        // (G₁ + a0·C₁) S₁ = −(a1·C_γ S_γ + a2·C₀ S₀).
        let (_, a1, a2) = bdf2_coefficients(t1 - st.t, h0);
        let b = st.attempt(t1, Method::Bdf2).map_err(err)?;
        factor(st, devices, t1)?;
        let mut s1 = &cg * &sg * (-a1) + &c0 * &sens * (-a2);
        st.ws.lu.solve_mat(s1.as_mut());
        sens = s1;
        (g0, c0) = g_hat_and_c(st, n);
        st.commit(b);
    }
    Ok(PeriodRun {
        samples,
        stage,
        end: st.x.clone(),
        monodromy: Some(sens),
    })
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
    /// iteration, and leave the point where it is (a warm start, already
    /// closer to the fine orbit than the coarse orbit is).
    jacobian_only: bool,
}

/// A chord step (old `Φ − I`) must shrink the scaled periodicity error at
/// least this much, or the next period recomputes the monodromy matrix.
const CHORD_CONTRACTION: f64 = 0.1;

/// Periodic steady state by shooting-Newton.
///
/// Two levels: a coarse one (a quarter of the steps per period) does the
/// warm-up and takes Newton from far away to within 10⁻⁴ of the orbit
/// relative to the tolerance scale, cheaply; the fine one then starts from
/// there with the coarse `Φ − I` (which differs from the fine one by the
/// discretisation error) as a chord Jacobian, recomputing the monodromy
/// matrix only when the chord iteration stops contracting.
pub fn shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    if let Some(d) = devices.devices.iter().find(|d| d.frequency_domain()) {
        return Err(crate::transient::time_domain_refused(circuit, d.element()));
    }
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    let mut st = Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?;
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
    let warm_start = params
        .shooting
        .initial
        .as_ref()
        .filter(|x| x.len() == n && x.iter().all(|v| v.is_finite()));
    let levels: Vec<Level> = if params.shooting.coarse_grid && ns >= 128 {
        vec![
            Level {
                ns: ns / 4,
                target: 1e3,
                jacobian_only: warm_start.is_some(),
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
        ..ShootingInfo::default()
    };
    let mut lu: Option<crate::linalg::RealLu> = None;
    for (li, level) in levels.iter().enumerate() {
        let h = period / level.ns as f64;
        let final_level = li + 1 == levels.len();
        let mut need_sens = lu.is_none();
        let mut prev_resid = f64::INFINITY;
        let mut level_iter = 0usize;
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
            let run = integrate_period(&mut st, devices, &x0, t0, h, level.ns, need_sens)?;
            let r: Vec<f64> = run.end.iter().zip(&x0).map(|(a, b)| a - b).collect();
            let scale = scales(devices, params, &run);
            let worst = worst_ratio(&r, &scale, devices, st.t)?;
            last = (r[worst.1].abs(), worst.1);
            if let Some(phi) = &run.monodromy {
                lu = Some(factor_monodromy(phi, devices, t0)?);
            }
            // Newton (or chord) update: (Φ − I) Δ = −r. Computed before the
            // convergence test: a slow mode (a bias network whose time
            // constant spans hundreds of periods) leaves a tiny periodicity
            // error r but a large distance to the fixed point, Δ ≈ r / (1 − λ).
            // Converged only when both the residual and the update are within
            // tolerance.
            let Some(f) = lu.as_ref() else {
                return Err(SolveError::BadParams(
                    "shooting: no monodromy matrix".into(),
                ));
            };
            if level.jacobian_only {
                break;
            }
            let mut dx: Vec<f64> = r.iter().map(|v| -v).collect();
            f.solve(&mut dx);
            let update = worst_ratio(&dx, &scale, devices, st.t)?.0;
            if worst.0 <= level.target && update <= level.target {
                if final_level {
                    // the numerical floor: the orbit again on half the grid
                    let half = half_grid(&mut st, devices, params, &x0, t0, period, ns, f);
                    let floor = match half {
                        Ok(Some(h)) => super::floor::grid_floor(
                            &run.samples,
                            &h,
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
                    };
                    return trbdf2_solution(
                        circuit,
                        devices,
                        params,
                        run.samples,
                        &run.stage,
                        info,
                    );
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
            need_sens = !final_level
                || (run.monodromy.is_none() && worst.0 > CHORD_CONTRACTION * prev_resid);
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
    fine: &crate::linalg::RealLu,
) -> Result<Option<Vec<Vec<f64>>>, SolveError> {
    let half = ns / 2;
    if half < 8 {
        return Ok(None);
    }
    let h = period / half as f64;
    let mut x = x0.to_vec();
    let mut own: Option<crate::linalg::RealLu> = None;
    let mut need_sens = false;
    let mut prev = f64::INFINITY;
    for _ in 0..params.shooting.max_iter {
        let run = integrate_period(st, devices, &x, t0, h, half, need_sens)?;
        let r: Vec<f64> = run.end.iter().zip(&x).map(|(a, b)| a - b).collect();
        let scale = scales(devices, params, &run);
        let worst = worst_ratio(&r, &scale, devices, st.t)?.0;
        if let Some(phi) = &run.monodromy {
            own = Some(factor_monodromy(phi, devices, t0)?);
        }
        let lu = own.as_ref().unwrap_or(fine);
        let mut dx: Vec<f64> = r.iter().map(|v| -v).collect();
        lu.solve(&mut dx);
        let update = worst_ratio(&dx, &scale, devices, st.t)?.0;
        if worst <= 1.0 && update <= 1.0 {
            return Ok(Some(run.samples));
        }
        need_sens = run.monodromy.is_none() && worst > CHORD_CONTRACTION * prev;
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
    ws.lu.factor(&ws.jac).map_err(|k| SolveError::Singular {
        analysis: "shooting".into(),
        unknown: devices.names.get(k).cloned().unwrap_or_default(),
        cause: crate::singular::cause(&ws.jac, n, k, devices),
        when: crate::error::When(Some(t)),
    })
}
