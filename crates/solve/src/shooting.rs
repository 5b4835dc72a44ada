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
//! The iteration starts from the operating point followed by a few plain
//! transient periods. Converged when every `|x_k(T) − x_k(0)|` AND every
//! component of the Newton update is within `reltol·max_n |x_k| + (vntol | abstol)`
//! (the update test catches slow modes, whose periodicity error is tiny
//! while the state is still far from the fixed point).

use crate::newton::unknown_abstol;
use crate::steady::{terminal_currents_trbdf2, PeriodicSolution, SteadyInfo, SteadyParams};
use crate::transient::{bdf2_coefficients, charged_rows, Method, Stepper, GAMMA};
use crate::SolveError;
use faer::Mat;
use tankwave_circuit::{Circuit, SteadyMethod};
use tankwave_devices::DeviceSet;

/// Periodic steady state by shooting-Newton.
pub fn shooting(
    circuit: &Circuit,
    devices: &DeviceSet,
    params: &SteadyParams,
) -> Result<PeriodicSolution, SolveError> {
    params.check()?;
    let n = devices.n_unknowns;
    let ns = params.samples();
    let period = 1.0 / params.freq;
    let h = period / ns as f64;
    let err = |e: crate::transient::StepFail| e.into_error(devices, "shooting");
    let mut st = Stepper::from_op(devices, params.tol, params.linear_solver, 0.0)?;
    // Warm up past the end of every source's start-up (delay and amplitude
    // rise), then a few periods more: the period that is shot must see the
    // sources in their periodic form.
    let settled_from = crate::balance::start_time(circuit, period);
    let startup = (settled_from / period).round();
    if !(startup.is_finite() && startup <= 100_000.0) {
        return Err(SolveError::BadParams(format!(
            "shooting: the sources become periodic only after {settled_from:.3e} s, \
             more than 100000 periods of {period:.3e} s"
        )));
    }
    let warm = params.shooting.warmup_periods + startup as usize;
    let t0 = warm as f64 * period;
    let mut x0 = match &params.shooting.initial {
        // a warm start from a solved neighbour: no warm-up periods
        Some(x) if x.len() == n && x.iter().all(|v| v.is_finite()) => x.clone(),
        _ => {
            // Start the warm-up at the first period where the sources are
            // periodic, from the operating point: the gentle start-up ramp a
            // file asks for is meant for plain transients; integrating it here
            // would only cost periods (and, cut short, land on a wrong orbit).
            let t_start = startup * period;
            let xop = st.x.clone();
            st.init_at(&xop, t_start);
            for s in 0..params.shooting.warmup_periods * ns {
                st.step_trbdf2(t_start + (s + 1) as f64 * h).map_err(err)?;
            }
            st.x.clone()
        }
    };
    let mut last = (f64::INFINITY, 0usize);
    for it in 0..params.shooting.max_iter {
        st.init_at(&x0, t0);
        // Sensitivity of q̇ is −G in rows that carry charge and 0 elsewhere.
        let mut ch = charged_rows(&st.ws.stamp);
        let mut g0 = Mat::<f64>::from_fn(
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
        let mut c0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
        let mut sens = Mat::<f64>::identity(n, n);
        let mut samples = vec![vec![0.0; ns]; n];
        let mut stage = vec![vec![0.0; ns]; n];
        for s in 0..ns {
            for (k, row) in samples.iter_mut().enumerate() {
                row[s] = st.x[k];
            }
            let t1 = t0 + (s + 1) as f64 * h;
            let tg = st.t + GAMMA * (t1 - st.t);
            // Stage 1, trapezoidal to t + γh: (G_γ + α₁C_γ) S_γ = (α₁C₀ − Ĝ₀) S₀.
            let alpha1 = 2.0 / (tg - st.t);
            let a = st.attempt(tg, Method::Trapezoidal).map_err(err)?;
            factor(&mut st, devices, tg)?;
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
            factor(&mut st, devices, t1)?;
            let mut s1 = &cg * &sg * (-a1) + &c0 * &sens * (-a2);
            st.ws.lu.solve_mat(s1.as_mut());
            sens = s1;
            ch = charged_rows(&st.ws.stamp);
            g0 = Mat::<f64>::from_fn(
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
            c0 = Mat::<f64>::from_fn(n, n, |r, c| st.ws.stamp.c_at(r, c));
            st.commit(b);
        }
        // Periodicity error.
        let r: Vec<f64> = (0..n).map(|k| st.x[k] - x0[k]).collect();
        let mut worst = (0.0f64, 0usize);
        for k in 0..n {
            let mag = samples[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let tol = params.shooting.reltol * mag + unknown_abstol(devices, &params.tol, k);
            let ratio = r[k].abs() / tol;
            if !ratio.is_finite() {
                return Err(SolveError::NonFinite {
                    analysis: "shooting".into(),
                    unknown: devices.names.get(k).cloned().unwrap_or_default(),
                    when: crate::error::When(Some(st.t)),
                });
            }
            if ratio > worst.0 {
                worst = (ratio, k);
            }
        }
        last = (r[worst.1].abs(), worst.1);
        // Newton update: (Φ − I) Δ = −r. Computed before the convergence test:
        // a slow mode (a bias network whose time constant spans hundreds of
        // periods) leaves a tiny periodicity error r but a large distance to
        // the fixed point, Δ ≈ r / (1 − λ). Converged only when both the
        // residual and the update are within tolerance.
        let mut jm = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                jm[i * n + j] = sens[(i, j)] - if i == j { 1.0 } else { 0.0 };
            }
        }
        let mut lu = crate::linalg::RealLu::new(crate::linalg::LinearSolver::Dense, n);
        lu.factor(&jm).map_err(|k| SolveError::Singular {
            analysis: "shooting (monodromy − I)".into(),
            unknown: devices.names.get(k).cloned().unwrap_or_default(),
            when: crate::error::When(Some(t0)),
        })?;
        let mut dx: Vec<f64> = r.iter().map(|v| -v).collect();
        lu.solve(&mut dx);
        let mut worst_update = 0.0f64;
        for k in 0..n {
            let mag = samples[k].iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let tol = params.shooting.reltol * mag + unknown_abstol(devices, &params.tol, k);
            let ratio = dx[k].abs() / tol;
            if !ratio.is_finite() {
                return Err(SolveError::NonFinite {
                    analysis: "shooting".into(),
                    unknown: devices.names.get(k).cloned().unwrap_or_default(),
                    when: crate::error::When(Some(st.t)),
                });
            }
            worst_update = worst_update.max(ratio);
        }
        if worst.0 <= 1.0 && worst_update <= 1.0 {
            let terminal_currents =
                terminal_currents_trbdf2(circuit, devices, &samples, &stage, params.freq)?;
            return Ok(PeriodicSolution {
                freq: params.freq,
                harmonics: params.harmonics,
                samples_per_period: ns,
                x: samples,
                terminal_currents,
                info: SteadyInfo {
                    method: SteadyMethod::Shooting,
                    fell_back_from: None,
                    iterations: it,
                    residual: worst.0,
                    system_size: n,
                    balance: None,
                },
            });
        }
        for k in 0..n {
            x0[k] += dx[k];
        }
    }
    Err(SolveError::NoConvergence {
        analysis: "shooting".into(),
        unknown: devices.names.get(last.1).cloned().unwrap_or_default(),
        iterations: params.shooting.max_iter,
        residual: last.0,
        unit: match devices.kinds.get(last.1) {
            Some(tankwave_devices::UnknownKind::Current) => "A",
            _ => "V",
        },
        when: crate::error::When(None),
    })
}

/// Factor the Jacobian the last Newton solve left in the workspace (at its converged point).
fn factor(st: &mut Stepper<'_>, devices: &DeviceSet, t: f64) -> Result<(), SolveError> {
    let Stepper { ws, .. } = st;
    ws.lu.factor(&ws.jac).map_err(|k| SolveError::Singular {
        analysis: "shooting".into(),
        unknown: devices.names.get(k).cloned().unwrap_or_default(),
        when: crate::error::When(Some(t)),
    })
}
